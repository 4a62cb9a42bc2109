#!/usr/bin/env bash
# Benchmark of the theory engine against scipy on the same equations.
#
#   benches/run.sh            # 201 × 201 grids
#   benches/run.sh 101        # smaller grids
#
# Runs examples/bench.rs in the dev profile (our crate is compiled at opt-level 3 there; the
# release profile would rebuild every dependency at full optimisation) and
# tools/bench_reference.py (scipy solve_ivp, DOP853, same tolerances), then prints the ratios.
# Needs python3 with scipy and numpy (`pip install scipy numpy`). Timings on a shared machine
# vary; both sides run in the same invocation so that the ratio sees the same load.
set -euo pipefail
cd "$(dirname "$0")/.."
N="${1:-201}"

if ! python3 -c 'import scipy, numpy' 2>/dev/null; then
    echo "installing scipy and numpy for the reference (pip)" >&2
    python3 -m pip install --quiet scipy numpy
fi

rust_out="$(mktemp)"
py_out="$(mktemp)"
trap 'rm -f "$rust_out" "$py_out"' EXIT

echo "== dwarfbound (cargo run --example bench -- $N) =="
cargo run --quiet --example bench -- "$N" | tee "$rust_out"
echo
echo "== scipy reference (tools/bench_reference.py) =="
python3 tools/bench_reference.py 30 | tee "$py_out"
echo

python3 - "$rust_out" "$py_out" "$N" <<'PY'
import sys

def results(path):
    out = {}
    for line in open(path, encoding="utf-8"):
        if line.startswith("RESULT "):
            _, key, value = line.split()
            out[key] = float(value)
    return out

r, p, n = results(sys.argv[1]), results(sys.argv[2]), int(sys.argv[3])
print("== ratios (scipy time / dwarfbound time; target >= 200 per solve) ==")
names = {"le_n15": "n = 1.5", "le_n15_jk": "n = 1.5 with J_9.73", "le_n3": "n = 3"}
for key, what in names.items():
    rk = f"{key}_us"
    if rk in r and f"scipy_{key}_us" in p:
        print(f"  one solve, {what:20s}: {p[f'scipy_{key}_us'] / r[rk]:5.0f}x"
              f"  ({p[f'scipy_{key}_us'] / 1e3:.2f} ms vs {r[rk]:.1f} us)")
if "grid_scalar_s" in r and "scipy_grid_le_only_s" in p:
    scale = (n * n) / (201 * 201)
    print(f"  {n}x{n} scalar grid: {r['grid_scalar_s']:.2f} s on {int(r.get('threads', 0))} threads"
          f" (target <= 3 s for 201x201); scipy Lane-Emden solves alone, one core, extrapolated:"
          f" {p['scipy_grid_le_only_s'] * scale:.0f} s -> {p['scipy_grid_le_only_s'] * scale / r['grid_scalar_s']:.0f}x")
if "grid_scalar_cpu_s" in r:
    print(f"  {n}x{n} scalar grid: {r['grid_scalar_cpu_s']:.2f} CPU-s -> {r['grid_scalar_cpu_s'] / 2:.2f} s on 2 idle cores")
if "grid_with_wd_s" in r:
    print(f"  {n}x{n} grid with white-dwarf tables: {r['grid_with_wd_s']:.2f} s (target <= 10 s for 201x201)")
if "grid_with_wd_cpu_s" in r:
    print(f"  {n}x{n} grid with white-dwarf tables: {r['grid_with_wd_cpu_s']:.2f} CPU-s -> {r['grid_with_wd_cpu_s'] / 2:.2f} s on 2 idle cores")
for key in sorted(k for k in r if "interp_err" in k):
    print(f"  {key}: {r[key]:.2e}")
if "wd_table_err" in r:
    print(f"  white-dwarf table R(M) vs direct solves: {r['wd_table_err']:.2e}")
PY
