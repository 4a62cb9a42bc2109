#!/usr/bin/env python3
"""Seeded generator of invented white dwarfs with radii for the scale benchmark (benches/run.sh).

Columns id,class,mass,mass_err,radius,radius_err,teff,teff_err,mass_method: masses uniform in
0.5-0.9 Msun with a 0.02 Msun error, radii from the zero-temperature mass-radius relation of
Nauenberg (1972, ApJ 175, 417; mu_e = 2, M_Ch = 1.454 Msun, R = 0.0112 Rsun scale) inflated for
a warm star by 4 % +- 1.5 % per 4000 K of Teff and -+ 1.5 % per 0.15 Msun of mass about
(14000 K, 0.675 Msun) -- a linear fit to dwarfbound's own finite-temperature radii at standard
gravity, so that the catalogue is consistent with standard gravity -- and scattered by a 3 %
Gaussian error (the quoted radius error); Teff uniform in 8000-20000 K with 300 K errors,
dynamical masses. It exercises the white-dwarf radius term,
whose cost grows with grid points x white dwarfs x mass nodes. INVENTED DATA: not measurements.

Usage: python3 tools/make_wd_radius_catalogue.py --n 2000 [--seed 5] --out FILE.csv
Standard library only; byte-identical for a given seed and size.
"""

import argparse
import random

M_CH_MSUN = 1.454  # Nauenberg (1972) with mu_e = 2
R_SCALE_RSUN = 0.0112


def nauenberg_radius_rsun(m_msun: float) -> float:
    x = (m_msun / M_CH_MSUN) ** (2.0 / 3.0)
    return R_SCALE_RSUN * (1.0 / x - x) ** 0.5


def rows(n: int, seed: int):
    rng = random.Random(seed)
    for i in range(n):
        m_true = rng.uniform(0.5, 0.9)
        mass = m_true + rng.gauss(0.0, 0.02)
        teff = rng.uniform(8000.0, 20000.0)
        warm = 1.040 + 0.015 * (teff - 14000.0) / 4000.0 - 0.015 * (m_true - 0.675) / 0.15
        r_true = warm * nauenberg_radius_rsun(m_true)
        radius = r_true * (1.0 + rng.gauss(0.0, 0.03))
        yield (
            f"WR-{i + 1:06d}",
            "white_dwarf",
            f"{mass:.4f}",
            "0.0200",
            f"{radius:.6f}",
            f"{0.03 * radius:.6f}",
            f"{teff:.0f}",
            "300",
            "dynamical",
        )


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=2000, help="number of white dwarfs (default 2000)")
    ap.add_argument("--seed", type=int, default=5, help="random seed (default 5)")
    ap.add_argument("--out", required=True, help="output CSV")
    a = ap.parse_args()
    with open(a.out, "w", encoding="utf-8", newline="\n") as f:
        f.write("# Invented white dwarfs with radii for the scale benchmark"
                " (tools/make_wd_radius_catalogue.py); not measurements.\n")
        f.write("id,class,mass,mass_err,radius,radius_err,teff,teff_err,mass_method\n")
        for r in rows(a.n, a.seed):
            f.write(",".join(r) + "\n")


if __name__ == "__main__":
    main()
