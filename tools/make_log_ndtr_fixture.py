#!/usr/bin/env python3
"""Reference values of ln Phi(z), the log of the standard normal CDF, from scipy.special.log_ndtr.

Writes tests/fixtures/confront/log_ndtr_scipy.csv (columns z, log_ndtr) that tests/stats_prob.rs
checks dwarfbound's ln Phi against to 1e-12 relative: a uniform grid on [-40, 40] (step 1/64),
every branch edge of the approximation with its neighbours one ulp away, and log-spaced deep
tails out to |z| = 1e8. Values are written with repr (shortest round-trip), so the file holds
exactly the doubles scipy returned.

Usage: python3 tools/make_log_ndtr_fixture.py [--out FILE.csv]
Needs numpy and scipy (pip install scipy).
"""

import argparse

import numpy as np
from scipy.special import log_ndtr


def points() -> list:
    zs = set(float(k) / 64.0 for k in range(-40 * 64, 40 * 64 + 1))
    for edge in (0.66291, 5.656854248, 30.0, 37.0, 38.0):
        for sign in (-1.0, 1.0):
            e = sign * edge
            zs.update([e, float(np.nextafter(e, -np.inf)), float(np.nextafter(e, np.inf))])
    for z in np.logspace(np.log10(40.0), 8.0, 200):
        zs.add(-float(z))
    for z in np.logspace(-12, 0, 60):
        zs.update([float(z), -float(z)])
    zs.add(0.0)
    return sorted(zs)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", default="tests/fixtures/confront/log_ndtr_scipy.csv")
    a = ap.parse_args()
    zs = points()
    vals = log_ndtr(np.array(zs))
    with open(a.out, "w") as f:
        f.write("z,log_ndtr\n")
        for z, v in zip(zs, vals):
            f.write(f"{z!r},{float(v)!r}\n")


if __name__ == "__main__":
    main()
