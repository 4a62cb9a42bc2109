#!/usr/bin/env python3
"""Seeded generator of the invented catalogues of the scale benchmark (benches/run.sh).

Four columns, id,class,mass,mass_err (M_sun), the smallest catalogue `confront` accepts. Stars
(`hburning`) have true masses uniform in 0.09-0.6 Msun, brown dwarfs uniform in 0.01-0.075 Msun,
white dwarfs normal around 0.62 Msun (sd 0.05, kept in 0.40-1.00); every mass has a 1-8 %
Gaussian error. One row in 5000 is deliberately bad (a mass that is not a number, or a brown
dwarf of 0.5 Msun) so that the quarantine path is part of what is timed. INVENTED DATA: not
measurements.

Usage: python3 tools/make_scale_catalogue.py --n 1000000 [--seed 12] --out FILE.csv [--parquet FILE.parquet]
The CSV needs the standard library only and is byte-identical for a given seed and size; the
Parquet copy (same rows, mass columns as float64, text columns as strings) needs Python polars.
"""

import argparse
import random


def rows(n: int, seed: int):
    rng = random.Random(seed)
    for i in range(n):
        u = rng.random()
        if u < 0.60:
            cls, m = "hburning", rng.uniform(0.09, 0.6)
        elif u < 0.85:
            cls, m = "brown_dwarf", rng.uniform(0.01, 0.075)
        else:
            cls = "white_dwarf"
            while True:
                m = rng.gauss(0.62, 0.05)
                if 0.40 <= m <= 1.00:
                    break
        frac = rng.uniform(0.01, 0.08)
        observed = max(m + rng.gauss(0.0, frac * m), 0.2 * m)
        mass, err = f"{observed:.5g}", f"{frac * m:.3g}"
        if i % 5000 == 4999:
            if (i // 5000) % 2 == 0:
                mass = "n/a"
            else:
                cls, mass = "brown_dwarf", "0.5"
        yield f"SC-{i + 1:07d}", cls, mass, err


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=100_000, help="number of objects (default 100000)")
    ap.add_argument("--seed", type=int, default=12, help="random seed (default 12)")
    ap.add_argument("--out", required=True, help="output CSV")
    ap.add_argument("--parquet", help="also write the same rows as Parquet (needs polars)")
    a = ap.parse_args()
    data = list(rows(a.n, a.seed))
    with open(a.out, "w", encoding="utf-8", newline="\n") as f:
        f.write("# Invented catalogue for the scale benchmark (tools/make_scale_catalogue.py); not measurements.\n")
        f.write("id,class,mass,mass_err\n")
        for r in data:
            f.write(",".join(r) + "\n")
    if a.parquet:
        import polars as pl

        def num(s: str):
            try:
                return float(s)
            except ValueError:
                return None

        pl.DataFrame(
            {
                "id": [r[0] for r in data],
                "class": [r[1] for r in data],
                "mass": [num(r[2]) for r in data],
                "mass_err": [num(r[3]) for r in data],
            },
            schema={"id": pl.String, "class": pl.String, "mass": pl.Float64, "mass_err": pl.Float64},
        ).write_parquet(a.parquet)


if __name__ == "__main__":
    main()
