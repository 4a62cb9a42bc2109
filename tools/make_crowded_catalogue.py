#!/usr/bin/env python3
"""Seeded generator of a large invented catalogue drawn in standard gravity.

Stars (`hburning`) have true masses uniform in 0.09-0.6 Msun, brown dwarfs uniform in
0.01-0.075 Msun, white dwarfs normal around 0.62 Msun (sd 0.05, kept in 0.40-1.00). Every mass
has a 1-8 % Gaussian error (the error fraction uniform in [0.01, 0.08]); ages are uniform in
1-10 Gyr so that no object is left out by the age rule. Labels are the true classes, so the
catalogue is consistent with standard gravity by construction: confronting it must not exclude
Upsilon = tau = 0 (apart from the nominal 4.55 % of seeds at the 95.45 % level).

Usage: python3 tools/make_crowded_catalogue.py [--n 100000] [--seed 1] [--out FILE.csv]
Standard library only; the output is byte-identical for a given seed and size.
"""

import argparse
import random


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=100_000, help="number of objects (default 100000)")
    ap.add_argument("--seed", type=int, default=1, help="random seed (default 1)")
    ap.add_argument("--out", default="crowded_catalogue.csv", help="output CSV")
    ap.add_argument("--fractions", default="0.60,0.25,0.15",
                    help="stars,brown dwarfs,white dwarfs (default 0.60,0.25,0.15)")
    a = ap.parse_args()
    f_star, f_bd, _ = (float(x) for x in a.fractions.split(","))
    rng = random.Random(a.seed)
    lines = ["id,class,mass,mass_err,age"]
    for i in range(a.n):
        u = rng.random()
        if u < f_star:
            cls, m = "hburning", rng.uniform(0.09, 0.6)
        elif u < f_star + f_bd:
            cls, m = "brown_dwarf", rng.uniform(0.01, 0.075)
        else:
            cls = "white_dwarf"
            while True:
                m = rng.gauss(0.62, 0.05)
                if 0.40 <= m <= 1.00:
                    break
        sigma = rng.uniform(0.01, 0.08) * m
        obs = m + rng.gauss(0.0, sigma)
        if obs <= 0.0:
            obs = 0.5 * m  # keep masses positive (rare: needs a > 12 sigma draw)
        age = rng.uniform(1.0, 10.0)
        lines.append(f"X{i:06d},{cls},{obs:.6f},{sigma:.6f},{age:.3f}")
    with open(a.out, "w", encoding="utf-8") as fh:
        fh.write("\n".join(lines) + "\n")


if __name__ == "__main__":
    main()
