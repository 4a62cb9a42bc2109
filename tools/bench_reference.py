#!/usr/bin/env python3
"""Speed reference for dwarfbound's benchmark: the same modified Lane-Emden equations with scipy.

Solves the first-order system of docs/structure.md section 3.2 for the density-squared
ansatz (a), (p, c, kappa) = (1, Upsilon/2 - tau/3, 1),

    theta' = -p [mu + c xi^3 theta^n] / (xi^2 [1 + kappa (n Upsilon / 4) xi^2 theta^(n-1)]),
    mu'    = xi^2 theta^n,   (and J' = xi^2 theta^k for model A's k = 9.73 when asked)

at Upsilon = 0.1, tau = 0.1 with scipy.integrate.solve_ivp, DOP853, rtol 1e-10, atol 1e-12 (the
tolerances of the Rust benchmark), from the central series at xi0 = 1e-4 to theta = 0.05 (terminal
event), then with theta as the independent variable down to theta = 0 (docs/structure.md 3.5,
method ii). Prints `RESULT <key> <value>` lines that benches/run.sh pairs with the Rust numbers:
the median wall time of one solve (n = 1.5 without and with J, n = 3), and the time of the
Lane-Emden solves of a 201 x 201 grid extrapolated from a timed 6 x 6 sub-grid (only the two
Lane-Emden solves per point; the other bounds would add to it).

    pip install scipy numpy
    python3 tools/bench_reference.py
"""

import statistics
import sys
import time

import numpy as np
import scipy
from scipy.integrate import solve_ivp

RTOL = 1e-10
ATOL = 1e-12
XI0 = 1e-4
SWITCH = 0.05
K_EXTRA = 9.73


def solve(n, upsilon, tau, with_j):
    p, c, kappa = 1.0, upsilon / 2.0 - tau / 3.0, 1.0

    def pw(t, k):
        return max(t, 0.0) ** k

    def dtheta(xi, theta, mu):
        d = 1.0 + kappa * n * upsilon / 4.0 * xi * xi * pw(theta, n - 1.0)
        return -p * (mu + c * xi**3 * pw(theta, n)) / (xi * xi * d)

    a = p * (1.0 / 3.0 + c) / 2.0
    b = n * a / 4.0 * (kappa * upsilon / 2.0 + p * (0.2 + c))
    y0 = [1.0 - a * XI0**2 + b * XI0**4, XI0**3 / 3.0 - n * a / 5.0 * XI0**5]
    if with_j:
        y0.append(XI0**3 / 3.0 - K_EXTRA * a / 5.0 * XI0**5)

    def f_xi(xi, y):
        out = [dtheta(xi, y[0], y[1]), xi * xi * pw(y[0], n)]
        if with_j:
            out.append(xi * xi * pw(y[0], K_EXTRA))
        return out

    def near_surface(xi, y):
        return y[0] - SWITCH

    near_surface.terminal = True
    near_surface.direction = -1
    r1 = solve_ivp(f_xi, (XI0, 1e4), y0, method="DOP853", rtol=RTOL, atol=ATOL,
                   events=near_surface, first_step=XI0)
    if r1.status != 1:
        raise RuntimeError("no switch point")
    z0 = [r1.t_events[0][0]] + list(r1.y_events[0][0][1:])

    def f_theta(theta, z):
        dt = dtheta(z[0], theta, z[1])
        out = [1.0 / dt, z[0] * z[0] * pw(theta, n) / dt]
        if with_j:
            out.append(z[0] * z[0] * pw(theta, K_EXTRA) / dt)
        return out

    r2 = solve_ivp(f_theta, (SWITCH, 0.0), z0, method="DOP853", rtol=RTOL, atol=ATOL)
    if r2.status != 0:
        raise RuntimeError("swap failed")
    return r2.y[0, -1], r2.y[1, -1]


def median_us(fn, reps):
    times = []
    for _ in range(reps):
        t = time.perf_counter()
        fn()
        times.append((time.perf_counter() - t) * 1e6)
    return statistics.median(times)


def main():
    reps = int(sys.argv[1]) if len(sys.argv) > 1 else 30
    print(f"scipy {scipy.__version__}, numpy {np.__version__}, python {sys.version.split()[0]}")
    for key, n, with_j in (("le_n15", 1.5, False), ("le_n15_jk", 1.5, True), ("le_n3", 3.0, False)):
        xi1, omega = solve(n, 0.1, 0.1, with_j)
        us = median_us(lambda: solve(n, 0.1, 0.1, with_j), reps)
        print(f"RESULT scipy_{key}_us {us:.1f}")
        print(f"  one solve {key}: median {us / 1e3:.2f} ms (xi1 = {xi1:.10f}, omega = {omega:.10f})")
    ups = np.linspace(-0.3, 0.6, 6)
    taus = np.linspace(-0.3, 0.3, 6)
    t = time.perf_counter()
    for tau in taus:
        for u in ups:
            solve(1.5, u, tau, True)
            solve(3.0, u, tau, False)
    sub = time.perf_counter() - t
    est = sub / 36 * 201 * 201
    print(f"RESULT scipy_grid_le_only_s {est:.1f}")
    print(f"  Lane-Emden solves of a 201 x 201 grid: {est:.0f} s, extrapolated from a 6 x 6 sub-grid "
          f"({sub:.2f} s); one core")


if __name__ == "__main__":
    main()
