#!/usr/bin/env bash
# The scheduler test: on a one-node Slurm cluster (.ci/slurm/up.sh), run the demo nightly config
# as an array of 4 theory shards that run concurrently (--cpus-per-task=1) and a merge that
# depends on them (afterok), and check
#   1. every shard and the merge COMPLETED, and at least two shards overlapped in time;
#   2. the merged grid.csv, summary.json and objects.csv equal an unsharded run's, byte for byte;
#   3. with one shard made to fail, the merge job is CANCELLED (not left pending).
# Usage: shards-test.sh DWARFBOUND_BINARY. Exit 0 pass, 10 skipped (Slurm unavailable), else fail.
set -uo pipefail
BIN=$(readlink -f "$1")
here=$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)
repo=$(cd "$here/../.." && pwd)
say() { printf '[slurm] %s\n' "$*"; }
work=$(mktemp -d /tmp/dwarfbound-slurm-XXXXXX)
export SLURM_CI_PIDS="$work/pids"
"$here/up.sh"
rc=$?
if [ "$rc" -eq 10 ]; then rm -rf "$work"; exit 10; fi
[ "$rc" -eq 0 ] || { "$here/down.sh"; exit 1; }
trap '"$here/down.sh"' EXIT

# A config over the demo catalogues with a grid big enough that shards overlap in time.
mkdir -p "$work/sharded" "$work/single"
for d in sharded single; do
  cat >"$work/$d/nightly.toml" <<EOF
output = "out"
[[catalogue]]
path = "$repo/catalogs-demo/vlm_stars.csv"
[[catalogue]]
path = "$repo/catalogs-demo/brown_dwarfs.csv"
[[catalogue]]
path = "$repo/catalogs-demo/white_dwarfs.csv"
[grid]
upsilon = "-0.3:0.6:121"
tau = "-0.3:0.3:81"
EOF
done

# wait_jobs ID...: poll until the jobs have left the queue (sbatch --wait polls too slowly).
wait_jobs() {
  local deadline=$((SECONDS + 900))
  while [ -n "$(squeue -h -j "$(IFS=,; echo "$*")" 2>/dev/null)" ]; do
    [ $SECONDS -lt $deadline ] || { say "timeout"; scancel "$@"; return 1; }
    sleep 1
  done
}
state() { scontrol -o show job "$1" | grep -oE 'JobState=[A-Z_]+' | sort -u | paste -s -d' '; }

cd "$work/sharded" || exit 1
# \$SLURM_ARRAY_TASK_ID is escaped: the job's shell expands it, not this one.
A=$(sbatch --parsable --array=1-4 --cpus-per-task=1 --job-name=dwarfbound-shard \
      --output="$work/shard-%A_%a.out" \
      --wrap "echo start \$(date +%s%N); $BIN run nightly.toml --shard \$SLURM_ARRAY_TASK_ID/4; rc=\$?; echo end \$(date +%s%N); exit \$rc")
M=$(sbatch --parsable --dependency=afterok:"$A" --job-name=dwarfbound-merge \
      --output="$work/merge-%j.out" --wrap "$BIN merge 'out/shards/'*-of-4")
say "array job $A (4 shards), merge job $M"
wait_jobs "$A" "$M" || exit 1
shards=$(state "$A"); merge=$(state "$M")
say "shards: $shards; merge: $merge"
fail=0
[ "$shards" = "JobState=COMPLETED" ] || { say "FAIL: a shard did not complete"; cat "$work"/shard-*.out; fail=1; }
[ "$merge" = "JobState=COMPLETED" ] || { say "FAIL: the merge did not complete"; cat "$work"/merge-*.out; fail=1; }
# Overlap: each shard printed its start and end (ns); sorted by start, some shard must start
# before the one before it has ended.
overlap=$(for f in "$work"/shard-"$A"_*.out; do
            printf '%s %s\n' "$(sed -n 's/^start //p' "$f")" "$(sed -n 's/^end //p' "$f")"
          done | sort -n | awk 'NR > 1 && $1 < prev_end { o = 1 } { prev_end = $2 } END { print o + 0 }')
if [ "$overlap" = 1 ]; then
  say "at least two shards ran at the same time"
else
  say "FAIL: the shards ran one after another"
  fail=1
fi

cd "$work/single" && "$BIN" run nightly.toml >/dev/null 2>&1 || { say "FAIL: unsharded run"; fail=1; }
for f in grid.csv summary.json objects.csv; do
  if cmp -s <(grep -v 'generated' "$work/sharded/out/latest/$f") <(grep -v 'generated' "$work/single/out/latest/$f"); then
    say "$f: merged shards = unsharded run"
  else
    say "FAIL: $f differs between the merged shards and the unsharded run"; fail=1
  fi
done

# A failing shard (a config that does not exist in the job's folder) cancels the merge.
mkdir -p "$work/broken" && cd "$work/broken" || exit 1
A2=$(sbatch --parsable --array=1-2 --cpus-per-task=1 --output="$work/broken-%A_%a.out" \
       --wrap "$BIN run missing.toml --shard \$SLURM_ARRAY_TASK_ID/2")
M2=$(sbatch --parsable --dependency=afterok:"$A2" --output="$work/broken-merge-%j.out" \
       --wrap "$BIN merge 'out/shards/'*-of-2")
wait_jobs "$A2" "$M2" || exit 1
m2=$(state "$M2")
if [ "$m2" = "JobState=CANCELLED" ]; then
  say "a failed shard cancelled the dependent merge"
else
  say "FAIL: after a failed shard the merge is $m2, expected CANCELLED"; fail=1
fi
[ "$fail" -eq 0 ] && say "scheduler test passed"
cd / && rm -rf "$work"
exit "$fail"
