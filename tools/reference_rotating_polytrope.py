#!/usr/bin/env python3
"""Independent reference for the slow-rotation coefficients of dwarfbound.

Standard gravity (Upsilon = tau = 0): integrates Chandrasekhar's first-order equations for a
rigidly rotating polytrope (Chandrasekhar 1933, MNRAS 93, 390) in his own second-order form,

    psi0'' + (2/xi) psi0'                  = -n theta^(n-1) psi0 + 1,   psi0 ~ xi^2/6,
    psi2'' + (2/xi) psi2' - 6 psi2 / xi^2  = -n theta^(n-1) psi2,       psi2 ~ xi^2,

together with the Lane-Emden equation and the mass perturbation m0' = n xi^2 theta^(n-1) psi0,
using scipy.integrate.solve_ivp with DOP853 (rtol 1e-13, atol 1e-15). The surface is reached by
switching the independent variable to theta once theta < 0.05 and integrating down to theta = 0
exactly (the Rust code stops on an event and takes a Newton step, and integrates the P2 part in
the variable chi = D psi). From the surface values it writes

    A2 psi2(xi1) with A2 = -(5/6) xi1^2 / (3 psi2(xi1) + xi1 psi2'(xi1))  (exterior ~ xi^-3),
    k2 = -6 A2 psi2(xi1)/xi1^2 - 1  (the second-degree Love number, twice the apsidal constant),
    d ln M/dv = m0(xi1)/omega and d ln R/dv = psi0(xi1)/(xi1 |theta'(xi1)|)  (fixed rho_c, K).

Modified theory (Upsilon, tau != 0, see docs/rotation.md section 1.2): the spherical part only,
from a direct non-linear solution of the spherically averaged equation

    theta' = p [-mu - c xi^3 theta^n + v xi^3 / 3] / (xi^2 D),  D = 1 + kappa (n Upsilon/4) xi^2 theta^(n-1),

at v = +-h and +-2h, differentiated by a Richardson-extrapolated central difference (error
O(h^4)). That shares no linearisation with the Rust code: only the equations of the theory.

Writes tests/fixtures/rotating_polytrope_reference.csv. Run from the repository root:

    pip install scipy numpy
    python3 tools/reference_rotating_polytrope.py

Written and last run with scipy 1.17.1 and numpy 2.4.6 (the versions are also recorded in the
CSV header at run time).
"""

import csv
import io
import math
import os
import sys

import numpy as np
import scipy
from scipy.integrate import solve_ivp

RTOL = 1e-13
ATOL = 1e-15
XI0 = 1e-4
SWITCH = 0.05


def pw(t, k):
    t = max(t, 0.0)
    if k == 0.0:
        return 1.0
    return t**k


def linear_standard(n):
    """Chandrasekhar's first-order equations at standard gravity; surface values."""

    def f_xi(xi, y):
        theta, mu, p0, dp0, m0, p2, dp2 = y
        w = n * pw(theta, n - 1.0)
        return [
            -mu / (xi * xi),
            xi * xi * pw(theta, n),
            dp0,
            -2.0 * dp0 / xi - w * p0 + 1.0,
            xi * xi * w * p0,
            dp2,
            -2.0 * dp2 / xi + 6.0 * p2 / (xi * xi) - w * p2,
        ]

    x2 = XI0 * XI0
    a = 1.0 / 6.0
    y0 = [
        1.0 - a * x2 + n / 120.0 * x2 * x2,
        XI0**3 / 3.0 - n / 30.0 * XI0**5,
        x2 / 6.0,
        XI0 / 3.0,
        n * x2 * x2 * XI0 / 30.0,
        x2,
        2.0 * XI0,
    ]

    def near_surface(xi, y):
        return y[0] - SWITCH

    near_surface.terminal = True
    near_surface.direction = -1
    r1 = solve_ivp(f_xi, (XI0, 1e4), y0, method="DOP853", rtol=RTOL, atol=ATOL,
                   events=near_surface, first_step=XI0)
    if r1.status != 1:
        raise RuntimeError(f"no switch point for n = {n}")
    xi_s = r1.t_events[0][0]
    theta_s = r1.y_events[0][0][0]
    z0 = [xi_s] + list(r1.y_events[0][0][1:])

    def f_theta(theta, z):
        xi = z[0]
        d = f_xi(xi, [theta] + list(z[1:]))
        dt = d[0]
        return [1.0 / dt] + [x / dt for x in d[1:]]

    r2 = solve_ivp(f_theta, (theta_s, 0.0), z0, method="DOP853", rtol=RTOL, atol=ATOL)
    if r2.status != 0:
        raise RuntimeError(f"swap failed for n = {n}")
    xi1, omega, p0, dp0, m0, p2, dp2 = r2.y[:, -1]
    slope = omega / (xi1 * xi1)
    # Two routes to the mass perturbation: the integral above and Gauss's law on the
    # perturbed equation, xi^2 psi0' = -m0 + xi^3/3 (their agreement checks the run).
    m0_gauss = -xi1 * xi1 * dp0 + xi1**3 / 3.0
    if abs(m0_gauss - m0) > 1e-9 * abs(m0):
        raise RuntimeError(f"n = {n}: m0 {m0} vs {m0_gauss}")
    a2 = -5.0 / 6.0 * xi1 * xi1 / (3.0 * p2 + xi1 * dp2)
    a2_psi2 = a2 * p2
    return {
        "xi1": xi1,
        "omega": omega,
        "psi0_surface": p0,
        "m0_surface": m0,
        "mass_coefficient": m0 / omega,
        "mean_radius_coefficient": p0 / (xi1 * slope),
        "a2_psi2": a2_psi2,
        "love_k2": -6.0 * a2_psi2 / (xi1 * xi1) - 1.0,
    }


def coefficients(upsilon, tau, ansatz):
    if ansatz in ("none", "density-squared"):
        return 1.0, upsilon / 2.0 - tau / 3.0, 1.0
    if ansatz == "gradient":
        return 1.0 - tau, upsilon / 2.0, 1.0 - tau
    raise ValueError(ansatz)


def nonlinear_surface(n, upsilon, tau, ansatz, v):
    """(mu(xi1), xi1) of the spherically averaged rotating star at v."""
    p, c, kappa = coefficients(upsilon, tau, ansatz)

    def dtheta(xi, theta, mu):
        d = 1.0 + kappa * n * upsilon / 4.0 * xi * xi * pw(theta, n - 1.0)
        return p * (-mu - c * xi**3 * pw(theta, n) + v * xi**3 / 3.0) / (xi * xi * d)

    def f_xi(xi, y):
        theta, mu = y
        return [dtheta(xi, theta, mu), xi * xi * pw(theta, n)]

    a = p * (1.0 / 3.0 + c) / 2.0 - p * v / 6.0
    y0 = [1.0 - a * XI0**2, XI0**3 / 3.0]

    def near_surface(xi, y):
        return y[0] - SWITCH

    near_surface.terminal = True
    near_surface.direction = -1
    r1 = solve_ivp(f_xi, (XI0, 1e4), y0, method="DOP853", rtol=RTOL, atol=ATOL,
                   events=near_surface, first_step=XI0)
    if r1.status != 1:
        raise RuntimeError(f"no switch point for {(n, upsilon, tau, ansatz, v)}")
    xi_s = r1.t_events[0][0]
    theta_s, mu_s = r1.y_events[0][0]

    def f_theta(theta, z):
        xi, mu = z
        dt = dtheta(xi, theta, mu)
        return [1.0 / dt, xi * xi * pw(theta, n) / dt]

    r2 = solve_ivp(f_theta, (theta_s, 0.0), [xi_s, mu_s], method="DOP853", rtol=RTOL, atol=ATOL)
    if r2.status != 0:
        raise RuntimeError(f"swap failed for {(n, upsilon, tau, ansatz, v)}")
    xi1, omega = r2.y[:, -1]
    return omega, xi1


def direct_slopes(n, upsilon, tau, ansatz, h):
    """Richardson-extrapolated central differences of ln M and ln R at v = 0."""
    m0, r0 = nonlinear_surface(n, upsilon, tau, ansatz, 0.0)
    vals = {}
    for k in (-2, -1, 1, 2):
        vals[k] = nonlinear_surface(n, upsilon, tau, ansatz, k * h)

    def d(i):
        g = lambda k: math.log(vals[k][i])
        d1 = (g(1) - g(-1)) / (2.0 * h)
        d2 = (g(2) - g(-2)) / (4.0 * h)
        return (4.0 * d1 - d2) / 3.0

    return {"xi1": r0, "omega": m0, "mass_coefficient": d(0), "mean_radius_coefficient": d(1)}


def main():
    out = io.StringIO()
    out.write("# Independent reference for the first-order slow-rotation coefficients "
              "(docs/rotation.md section 1).\n")
    out.write(f"# Generated by tools/reference_rotating_polytrope.py with scipy {scipy.__version__}, "
              f"numpy {np.__version__}, python {sys.version.split()[0]}; solve_ivp DOP853 "
              f"rtol {RTOL:g} atol {ATOL:g}, surface by variable swap theta < {SWITCH}.\n")
    out.write("# method linear: Chandrasekhar (1933) first-order equations, standard gravity; "
              "method direct: non-linear spherical solve at v = +-h, +-2h (Richardson). "
              "Empty cells: not computed by that method.\n")
    w = csv.writer(out, lineterminator="\n")
    cols = ["n", "upsilon", "tau", "anisotropy", "method", "xi1", "omega", "psi0_surface",
            "m0_surface", "mass_coefficient", "mean_radius_coefficient", "a2_psi2", "love_k2"]
    w.writerow(cols)

    def row(n, u, t, ansatz, method, r):
        cells = [repr(n), repr(u), repr(t), ansatz, method]
        for c in cols[5:]:
            cells.append(repr(float(r[c])) if c in r else "")
        w.writerow(cells)

    for n in (1.0, 1.5, 2.0, 3.0):
        row(n, 0.0, 0.0, "none", "linear", linear_standard(n))
    # The modified points, and standard gravity once more by the direct route (it must agree
    # with the linear one). h well below v_crit (n = 3/2: 3.3e-2, n = 3: 3.65e-3).
    points = [
        (1.5, 0.0, 0.0, "none"),
        (3.0, 0.0, 0.0, "none"),
        (1.5, 0.3, 0.0, "none"),
        (1.5, -0.2, 0.0, "none"),
        (3.0, 0.2, 0.0, "none"),
        (1.5, -0.2, 0.2, "density-squared"),
        (1.5, 0.1, -0.1, "density-squared"),
        (3.0, 0.1, -0.1, "density-squared"),
        (1.5, 0.3, 0.2, "gradient"),
        (3.0, -0.1, 0.3, "gradient"),
    ]
    for n, u, t, ansatz in points:
        h = 1e-4 if n < 2.0 else 2e-5
        row(n, u, t, ansatz, "direct", direct_slopes(n, u, t, ansatz, h))
    root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    path = os.path.join(root, "tests", "fixtures", "rotating_polytrope_reference.csv")
    tmp = path + ".tmp"
    with open(tmp, "w", encoding="utf-8") as f:
        f.write(out.getvalue())
    os.replace(tmp, path)
    print(f"wrote {path}")
    print(out.getvalue())


if __name__ == "__main__":
    main()
