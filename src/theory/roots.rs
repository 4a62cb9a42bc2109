//! Bracketed root finding and bounded minimisation (Brent's methods), shared by the ODE event
//! location, the MMHB model and the Schönberg–Chandrasekhar fit.
//! Crate-internal: `brent_root(|x| x * x - 2.0, 0.0, 2.0, 1e-15, 100)` returns √2 (see the
//! unit tests below).

/// Brent's root finder (Brent 1973, *Algorithms for Minimization without Derivatives*, ch. 4):
/// a root of `f` in [a, b] where f(a), f(b) differ in sign, to absolute tolerance `xtol`.
/// Hand-written: ~40 lines, and the crate candidates bring far more than a bracketed root.
pub(crate) fn brent_root<F: FnMut(f64) -> f64>(
    mut f: F,
    a: f64,
    b: f64,
    xtol: f64,
    max_iter: usize,
) -> Option<f64> {
    let (fa, fb) = (f(a), f(b));
    match brent_root_bracketed(f, a, fa, b, fb, xtol, max_iter) {
        (x, true) => Some(x),
        (_, false) => None,
    }
}

/// As [`brent_root`] with f(a) and f(b) already known (an ODE event has them from the step).
/// Returns the best estimate and whether it converged within `max_iter`; a bracket that is not
/// one (same signs, non-finite values) returns (b, false).
pub(crate) fn brent_root_bracketed<F: FnMut(f64) -> f64>(
    mut f: F,
    a: f64,
    fa: f64,
    b: f64,
    fb: f64,
    xtol: f64,
    max_iter: usize,
) -> (f64, bool) {
    let (mut a, mut b, mut fa, mut fb) = (a, b, fa, fb);
    if !(fa.is_finite() && fb.is_finite()) || fa * fb > 0.0 {
        return (b, false);
    }
    if fa == 0.0 {
        return (a, true);
    }
    if fb == 0.0 {
        return (b, true);
    }
    let (mut c, mut fc) = (a, fa);
    let mut d = b - a;
    let mut e = d;
    for _ in 0..max_iter {
        if (fb > 0.0) == (fc > 0.0) {
            c = a;
            fc = fa;
            d = b - a;
            e = d;
        }
        if fc.abs() < fb.abs() {
            a = b;
            b = c;
            c = a;
            fa = fb;
            fb = fc;
            fc = fa;
        }
        let tol1 = 2.0 * f64::EPSILON * b.abs() + 0.5 * xtol;
        let xm = 0.5 * (c - b);
        if xm.abs() <= tol1 || fb == 0.0 {
            return (b, true);
        }
        if e.abs() >= tol1 && fa.abs() > fb.abs() {
            let s = fb / fa;
            let (mut p, mut q);
            if a == c {
                p = 2.0 * xm * s;
                q = 1.0 - s;
            } else {
                let q0 = fa / fc;
                let r = fb / fc;
                p = s * (2.0 * xm * q0 * (q0 - r) - (b - a) * (r - 1.0));
                q = (q0 - 1.0) * (r - 1.0) * (s - 1.0);
            }
            if p > 0.0 {
                q = -q;
            }
            p = p.abs();
            let min1 = 3.0 * xm * q - (tol1 * q).abs();
            let min2 = (e * q).abs();
            if 2.0 * p < min1.min(min2) {
                e = d;
                d = p / q;
            } else {
                d = xm;
                e = d;
            }
        } else {
            d = xm;
            e = d;
        }
        a = b;
        fa = fb;
        b += if d.abs() > tol1 { d } else { tol1.copysign(xm) };
        fb = f(b);
        if !fb.is_finite() {
            return (b, false);
        }
    }
    (b, false)
}

/// Brent's bounded minimiser (Brent 1973, ch. 5; golden section with parabolic steps): returns
/// (x, f(x)) at a local minimum of `f` on [lo, hi], x to relative tolerance `rel_tol`.
pub(crate) fn brent_minimize<F: FnMut(f64) -> f64>(
    mut f: F,
    lo: f64,
    hi: f64,
    rel_tol: f64,
    max_iter: usize,
) -> Option<(f64, f64)> {
    const CGOLD: f64 = 0.381_966_011_250_105_1;
    const ABS_TOL: f64 = 1e-14;
    let (mut a, mut b) = (lo.min(hi), lo.max(hi));
    let mut x = a + CGOLD * (b - a);
    let (mut w, mut v) = (x, x);
    let mut fx = f(x);
    let (mut fw, mut fv) = (fx, fx);
    let (mut d, mut e) = (0.0_f64, 0.0_f64);
    for _ in 0..max_iter {
        let xm = 0.5 * (a + b);
        let tol1 = rel_tol * x.abs() + ABS_TOL;
        let tol2 = 2.0 * tol1;
        if (x - xm).abs() <= tol2 - 0.5 * (b - a) {
            return if fx.is_finite() { Some((x, fx)) } else { None };
        }
        let mut golden = true;
        if e.abs() > tol1 {
            let r = (x - w) * (fx - fv);
            let mut q = (x - v) * (fx - fw);
            let mut p = (x - v) * q - (x - w) * r;
            q = 2.0 * (q - r);
            if q > 0.0 {
                p = -p;
            }
            q = q.abs();
            let etemp = e;
            e = d;
            if !(p.abs() >= (0.5 * q * etemp).abs() || p <= q * (a - x) || p >= q * (b - x)) {
                d = p / q;
                let u = x + d;
                if u - a < tol2 || b - u < tol2 {
                    d = tol1.copysign(xm - x);
                }
                golden = false;
            }
        }
        if golden {
            e = if x >= xm { a - x } else { b - x };
            d = CGOLD * e;
        }
        let u = if d.abs() >= tol1 {
            x + d
        } else {
            x + tol1.copysign(d)
        };
        let fu = f(u);
        if fu <= fx {
            if u >= x {
                a = x;
            } else {
                b = x;
            }
            v = w;
            w = x;
            x = u;
            fv = fw;
            fw = fx;
            fx = fu;
        } else {
            if u < x {
                a = u;
            } else {
                b = u;
            }
            if fu <= fw || w == x {
                v = w;
                w = u;
                fv = fw;
                fw = fu;
            } else if fu <= fv || v == x || v == w {
                v = u;
                fv = fu;
            }
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn brent_root_finds_cubic_root() {
        let r = brent_root(|x| x * x * x - 2.0, 0.0, 2.0, 1e-15, 100).unwrap();
        assert!((r - 2f64.cbrt()).abs() < 1e-14);
    }

    #[test]
    fn brent_minimize_finds_parabola_minimum() {
        let (x, fx) = brent_minimize(|x| (x - 0.3).powi(2) + 1.0, -1.0, 2.0, 1e-10, 200).unwrap();
        assert!((x - 0.3).abs() < 1e-8);
        assert!((fx - 1.0).abs() < 1e-15);
    }
}
