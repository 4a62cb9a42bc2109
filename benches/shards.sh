#!/usr/bin/env bash
# Scaling of sharded theory grids on this machine: the wall time of one grid (default 401 × 401
# over the demo catalogues) computed as 1, 2 and 4 concurrent shards, plus the merge, so the
# overhead of sharding is known.
#
#   benches/shards.sh            # 401 × 401
#   benches/shards.sh 201        # a smaller grid
#
# Uses the dev build (as the README's commands do). Each configuration starts from an empty
# output folder (no cache). Prints a table and writes it as JSON to target/bench-shards.json.
set -euo pipefail
cd "$(dirname "$0")/.."
N="${1:-401}"
export CARGO_TARGET_DIR="${CARGO_TARGET_DIR:-$HOME/.cache/dwarfbound/target}"
cargo build --quiet
BIN="$CARGO_TARGET_DIR/debug/dwarfbound"
repo=$PWD
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
now() { date +%s.%N; }

config() { # config DIR: a nightly config over the demo catalogues on an N × N grid
  mkdir -p "$1"
  cat >"$1/nightly.toml" <<EOF
output = "out"
[[catalogue]]
path = "$repo/catalogs-demo/vlm_stars.csv"
[[catalogue]]
path = "$repo/catalogs-demo/brown_dwarfs.csv"
[[catalogue]]
path = "$repo/catalogs-demo/white_dwarfs.csv"
[grid]
upsilon = "-0.3:0.6:$N"
tau = "-0.3:0.3:$N"
EOF
}

rows=()
for shards in 1 2 4; do
  d="$work/s$shards"; config "$d"; cd "$d"
  t0=$(now)
  if [ "$shards" -eq 1 ]; then
    "$BIN" run nightly.toml >/dev/null
    t1=$(now); t2=$t1
  else
    seq 1 "$shards" | xargs -P "$shards" -I{} "$BIN" run nightly.toml --shard "{}/$shards" >/dev/null
    t1=$(now)
    "$BIN" merge out/shards/*-of-"$shards" >/dev/null
    t2=$(now)
  fi
  cd "$repo"
  rows+=("$shards $(echo "$t1 - $t0" | bc -l) $(echo "$t2 - $t1" | bc -l) $(echo "$t2 - $t0" | bc -l)")
done

python3 - "$N" "$(nproc)" "${rows[@]}" <<'PY'
import json, sys
n, cores, rows = int(sys.argv[1]), int(sys.argv[2]), [r.split() for r in sys.argv[3:]]
base = float(rows[0][3])
print(f"== {n}x{n} grid over the demo catalogues, {cores} cores, dev build ==")
print(f"{'shards':>6} {'shards wall s':>14} {'merge s':>8} {'total s':>8} {'vs 1 shard':>10}")
out = []
for s, t_sh, t_m, t_tot in rows:
    t_sh, t_m, t_tot = float(t_sh), float(t_m), float(t_tot)
    print(f"{s:>6} {t_sh:14.2f} {t_m:8.2f} {t_tot:8.2f} {t_tot / base:10.2f}")
    out.append({"shards": int(s), "shards_wall_s": t_sh, "merge_s": t_m, "total_s": t_tot})
import os; os.makedirs("target", exist_ok=True)
json.dump({"grid": n, "cores": cores, "rows": out}, open("target/bench-shards.json", "w"), indent=1)
PY
