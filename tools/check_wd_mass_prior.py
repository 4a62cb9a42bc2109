#!/usr/bin/env python3
"""Reproduces the tables of docs/white-dwarfs.md section 13.1: invented white dwarfs drawn in
standard gravity, confronted with the flat and the population prior on the true mass, or
(--vary floor) with the fixed and the fitted per-object radius floor.

Each case draws true masses and Teff, asks dwarfbound for its own standard-gravity radius at
each true mass (a probe run: mass error 1e-6 Msun, radius 0.012 +- 1 Rsun, so that the printed
`radius_sigma_standard` is (0.012 - R_std)/~1), scatters masses and radii around them, and
prints the Delta chi^2 of standard gravity under each prior. INVENTED DATA: not measurements.

Usage: python3 tools/check_wd_mass_prior.py [--bin target/debug/dwarfbound] [--n 5000]
       [--grid 21] [--cache DIR] [--case NAME ...] [--vary prior|floor] [--seed S] [--draws K]
Standard library only. Each case takes a few tens of seconds per prior at 5 000 objects.
"""

import argparse
import csv
import json
import os
import random
import subprocess
import tempfile

HEADER = (
    "# Invented white dwarfs (tools/check_wd_mass_prior.py); not measurements.\n"
    "id,class,mass,mass_err,radius,radius_err,teff,teff_err,mass_method,core,envelope\n"
)

# name: (population, mass error rule, floor scatter in the data, layer and Teff error stated)
CASES = {
    "peaked": ("gauss", "0.02", 0.0166, True),
    "peaked-no-floor-scatter": ("gauss", "0.02", 0.0, True),
    "peaked-unstated-layer": ("gauss", "0.02", 0.0166, False),
    "uniform": ("uniform", "0.02", 0.0166, True),
    "small-errors": ("gauss", "0.005", 0.0166, True),
    "photometric-errors": ("gauss", "spread", 0.0166, True),
}


def population(kind, n, seed):
    rng = random.Random(seed)
    out = []
    while len(out) < n:
        m = rng.gauss(0.62, 0.10) if kind == "gauss" else rng.uniform(0.5, 0.9)
        if 0.45 <= m <= 1.0:
            out.append((m, rng.uniform(8000.0, 20000.0)))
    return out


def confront(binary, cat, out, grid, cache, extra=()):
    args = [binary, "confront", cat, f"--upsilon=-0.2:0.2:{grid}", f"--tau=-0.2:0.2:{grid}",
            "--out", out, *extra]
    if cache:
        args += ["--cache", cache]
    subprocess.run(args, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)


def standard_radii(binary, objs, work, cache):
    probe = os.path.join(work, "probe.csv")
    with open(probe, "w", encoding="utf-8") as f:
        f.write(HEADER)
        for i, (m, t) in enumerate(objs):
            f.write(f"P{i:06d},white_dwarf,{m:.9f},0.000001,0.012,1.0,{t:.1f},,dynamical,co,thick\n")
    out = os.path.join(work, "probe_out")
    confront(binary, probe, out, 3, cache)
    with open(os.path.join(out, "objects.csv"), encoding="utf-8") as f:
        rows = csv.DictReader(line for line in f if not line.startswith("#"))
        by_id = {r["id"]: 0.012 - float(r["radius_sigma_standard"]) for r in rows}
    return [by_id[f"P{i:06d}"] for i in range(len(objs))]


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--bin", default=os.path.expanduser("~/.cache/dwarfbound/target/debug/dwarfbound"))
    ap.add_argument("--n", type=int, default=5000)
    ap.add_argument("--grid", type=int, default=21, help="points per axis over [-0.2, 0.2]")
    ap.add_argument("--cache", help="theory cache folder (faster reruns)")
    ap.add_argument("--seed", type=int, default=11, help="seed of the measurement noise")
    ap.add_argument("--case", nargs="*", default=list(CASES), choices=list(CASES))
    ap.add_argument("--vary", choices=["prior", "floor"], default="prior",
                    help="compare the two priors on the true mass (with the default floor) or the "
                         "fixed and fitted per-object floor (with the default prior)")
    ap.add_argument("--draws", type=int, default=1,
                    help="repeat each case with this many noise seeds (seed, seed + 1, ...) and "
                         "print how often standard gravity is excluded at 95.45 %% (two parameters, "
                         "delta chi^2 > 6.18): a coverage check")
    a = ap.parse_args()
    choices = (("--wd-mass-prior", ("flat", "population")) if a.vary == "prior"
               else ("--wd-floor-size", ("fixed", "fitted")))
    with tempfile.TemporaryDirectory() as work:
        radii = {}
        for name in a.case:
            kind, errors, floor, stated = CASES[name]
            objs = population(kind, a.n, 21)
            if kind not in radii:
                radii[kind] = standard_radii(a.bin, objs, work, a.cache)
            results = {choice: [] for choice in choices[1]}
            for draw in range(a.draws):
                rng = random.Random(a.seed + draw)
                cat = os.path.join(work, f"{name}.csv")
                with open(cat, "w", encoding="utf-8") as f:
                    f.write(HEADER)
                    for i, ((m, t), r) in enumerate(zip(objs, radii[kind])):
                        se = rng.uniform(0.005, 0.06) if errors == "spread" else float(errors)
                        mass = m + se * rng.gauss(0, 1)
                        rad = r * (1 + 0.03 * rng.gauss(0, 1) + floor * rng.gauss(0, 1))
                        layer, teff_err = ("thick", "") if stated else ("", "300")
                        f.write(f"X{i:06d},white_dwarf,{mass:.7f},{se:.5f},{rad:.8f},"
                                f"{0.03 * r:.8f},{t:.1f},{teff_err},dynamical,co,{layer}\n")
                row = [name]
                for choice in choices[1]:
                    out = os.path.join(work, f"{name}_{choice}")
                    confront(a.bin, cat, out, a.grid, a.cache, (choices[0], choice))
                    with open(os.path.join(out, "summary.json"), encoding="utf-8") as f:
                        s = json.load(f)
                    delta = s["standard_gravity"]["delta_chi2"]
                    scale = s["model"].get("wd_floor_scale")
                    results[choice].append((delta, scale["applied"] if scale else 1.0))
                    row.append(f"{choice} {delta:.2f}")
                    if a.vary == "floor" and scale:
                        row.append(f"(kappa applied {scale['applied']:.3f}, estimate "
                                   f"{scale['estimate']:.3f})")
                if a.draws == 1:
                    print("  ".join(row), flush=True)
            if a.draws > 1:
                row = [f"{name} ({a.draws} draws of {a.n})"]
                for choice, res in results.items():
                    excluded = sum(d > 6.18 for d, _ in res) / len(res)
                    mean = sum(d for d, _ in res) / len(res)
                    moved = sum(k != 1.0 for _, k in res) / len(res)
                    row.append(f"{choice}: excluded {100 * excluded:.1f} %, mean {mean:.2f}"
                               + (f", floor moved in {100 * moved:.0f} %" if a.vary == "floor" else ""))
                print("  ".join(row), flush=True)


if __name__ == "__main__":
    main()
