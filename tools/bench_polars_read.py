#!/usr/bin/env python3
"""Reference for the catalogue rows of benches/run.sh: a bare polars read of a catalogue file.

Reads the file once untimed (file cache warm, as for dwarfbound) and then times one read with
time.perf_counter, excluding the interpreter's and polars' import. CSV is read with every
column as text (the benchmark catalogues hold deliberately bad cells, which a typed read would
refuse; dwarfbound vets the same raw text); Parquet as stored. Prints
`RESULT <key> <value>` lines: read_s (wall), cpu_s (user + system time of the read, all
threads) and the process's peak resident memory peak_mb (interpreter and polars included).

    pip install polars
    python3 tools/bench_polars_read.py FILE.csv|FILE.parquet

With `--once` it reads the file once and prints nothing: benches/run.sh times that whole process
(interpreter start, `import polars`, one read) with /usr/bin/time, as it times dwarfbound's.
"""

import resource
import sys
import time

import polars as pl


def read(path: str):
    if path.endswith(".parquet"):
        return pl.read_parquet(path)
    return pl.read_csv(path, comment_prefix="#", infer_schema=False)


def main() -> None:
    if sys.argv[1] == "--once":
        assert read(sys.argv[2]).height > 0
        return
    path = sys.argv[1]
    read(path)
    cpu = lambda: sum(resource.getrusage(resource.RUSAGE_SELF)[:2])
    c0, t0 = cpu(), time.perf_counter()
    df = read(path)
    t1, c1 = time.perf_counter(), cpu()
    assert df.height > 0
    peak_kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    print(f"RESULT read_s {t1 - t0:.6f}")
    print(f"RESULT cpu_s {c1 - c0:.6f}")
    print(f"RESULT peak_mb {peak_kb / 1024:.1f}")
    print(f"RESULT rows {df.height}")


if __name__ == "__main__":
    main()
