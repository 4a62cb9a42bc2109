//! Shared systematics as nuisance parameters: one unknown offset δ common to every object that
//! faces the same bound, with a Gaussian prior δ ~ N(0, σ²), eliminated at every grid point.
//!
//! A term is given as "−2 ln L as a function of the shared nuisance value, evaluated on demand"
//! (any `Fn(f64) -> f64`): the mass bounds pass Σ_c −2 ln L_c(B + δ) from their class curves, and
//! any other term with a shared scale (a fractional radius systematic, say) can pass its own
//! closure. Two eliminations are offered:
//!
//! - **profile** (the default): min_δ [f(δ) + (δ/σ)²]. Δχ² regions of the profiled χ² are the
//!   frequentist regions with the nuisance treated as a constrained parameter; for a Gaussian
//!   prior and a likelihood linear in δ they are exact (Wilks' theorem applies unchanged), and
//!   the profile never depends on a prior over ϒ, τ.
//! - **marginalise**: −2 ln ∫ N(δ; 0, σ²) exp(−f(δ)/2) dδ by adaptive Gauss–Hermite quadrature
//!   centred at the mode and scaled by the curvature there (Liu & Pierce 1994, Biometrika 81,
//!   624), which stays accurate when many objects make the integrand much narrower than σ.
//!
//! The minimum over δ is found by a scan with golden-section refinement ([`eliminate`], any
//! term) or by Newton steps with the term's exact slope and curvature
//! ([`eliminate_newton_value`], a smooth term that supplies them, converged to rounding level so
//! that the result does not depend on where the search starts). A Newton search on finite
//! differences of values, used before for the white-dwarf radius term, stopped where the
//! differenced slope vanished (up to 6e-7 above the minimum on the demo) and was removed.
//!
//! ```
//! use dwarfbound::confront::nuisance::{eliminate, NuisanceMethod, SharedNuisance};
//! // A quadratic term f(δ) = ((δ − 1)/s)²: profiling gives (1/(s² + σ²)) exactly.
//! let (s, sigma) = (0.5, 1.0);
//! let n = SharedNuisance { sigma, method: NuisanceMethod::Profile, reach_sigma: 8.0 };
//! let e = eliminate(&|d: f64| ((d - 1.0) / s).powi(2), &n);
//! assert!((e.minus_two_ln_l - 1.0 / (s * s + sigma * sigma)).abs() < 1e-9);
//! ```

/// How a shared nuisance is removed from the likelihood.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NuisanceMethod {
    /// Minimise over δ with the prior as a penalty (δ/σ)² (default).
    Profile,
    /// Integrate over δ against its Gaussian prior.
    Marginalise,
}

impl NuisanceMethod {
    /// Name used in configuration files, `summary.json` and reports.
    pub fn name(self) -> &'static str {
        match self {
            NuisanceMethod::Profile => "profile",
            NuisanceMethod::Marginalise => "marginalise",
        }
    }

    /// Parses a configuration value (`profile`, `marginalise` or `marginalize`).
    pub fn from_name(s: &str) -> Option<Self> {
        match s {
            "profile" => Some(NuisanceMethod::Profile),
            "marginalise" | "marginalize" => Some(NuisanceMethod::Marginalise),
            _ => None,
        }
    }
}

/// One shared nuisance: its prior width and how it is eliminated.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SharedNuisance {
    /// Prior standard deviation σ (same unit as δ; > 0).
    pub sigma: f64,
    /// Profile or marginalise.
    pub method: NuisanceMethod,
    /// δ is searched (and the terms must be evaluable) on [−reach σ, +reach σ]; a prior penalty
    /// of reach² beyond it makes larger shifts irrelevant (default 8).
    pub reach_sigma: f64,
}

/// The result of eliminating δ at one point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Eliminated {
    /// −2 ln L after profiling or marginalising (prior included).
    pub minus_two_ln_l: f64,
    /// The δ that minimises f(δ) + (δ/σ)² (the profiled shift; also the centre of the
    /// marginalisation).
    pub delta_hat: f64,
    /// f(δ̂): the data term alone at the profiled shift.
    pub data_term: f64,
}

/// Scan points per σ of the coarse search before the golden-section refinement.
const SCAN_PER_SIGMA: f64 = 4.0;
/// Gauss–Hermite order of the marginalisation.
const HERMITE_ORDER: usize = 24;

/// Eliminates the shared nuisance from the term `f` (−2 ln L as a function of δ).
///
/// The profile is found by a scan on a uniform grid of spacing σ/4 over ±reach·σ followed by a
/// golden-section search in the bracketing cells (the objective is convex for sums of
/// log-concave probabilities plus the quadratic prior, and close to it otherwise). Non-finite
/// values of `f` are treated as +∞.
pub fn eliminate(f: &dyn Fn(f64) -> f64, n: &SharedNuisance) -> Eliminated {
    let sigma = n.sigma;
    let g = |d: f64| penalised(f, sigma, d);
    let steps = ((2.0 * n.reach_sigma * SCAN_PER_SIGMA).ceil() as usize).max(4);
    let h = 2.0 * n.reach_sigma * sigma / steps as f64;
    let x = |k: usize| -n.reach_sigma * sigma + h * k as f64;
    let mut best = (0usize, f64::INFINITY);
    for k in 0..=steps {
        let v = g(x(k));
        if v < best.1 {
            best = (k, v);
        }
    }
    let (a, b) = (x(best.0.saturating_sub(1)), x((best.0 + 1).min(steps)));
    let (mut delta_hat, mut gmin) = golden_section(&g, a, b, 1e-10 * sigma);
    if best.1 < gmin {
        delta_hat = x(best.0);
        gmin = best.1;
    }
    let data_term = f(delta_hat);
    let minus_two_ln_l = match n.method {
        NuisanceMethod::Profile => gmin,
        NuisanceMethod::Marginalise => marginalise(&g, delta_hat, gmin, sigma, n.reach_sigma),
    };
    Eliminated {
        minus_two_ln_l,
        delta_hat,
        data_term,
    }
}

/// Golden-section search (Kiefer 1953) for the minimum of `g` on [a, b], stopping when the
/// bracket is narrower than `tol` (at most 60 steps): (x, g(x)) of the better inner point.
pub(crate) fn golden_section(g: &dyn Fn(f64) -> f64, a: f64, b: f64, tol: f64) -> (f64, f64) {
    let (mut a, mut b) = (a, b);
    let r = 0.5 * (5f64.sqrt() - 1.0);
    let (mut c, mut d) = (b - r * (b - a), a + r * (b - a));
    let (mut gc, mut gd) = (g(c), g(d));
    for _ in 0..60 {
        if gc < gd {
            b = d;
            d = c;
            gd = gc;
            c = b - r * (b - a);
            gc = g(c);
        } else {
            a = c;
            c = d;
            gc = gd;
            d = a + r * (b - a);
            gd = g(d);
        }
        if (b - a).abs() <= tol {
            break;
        }
    }
    if gc < gd {
        (c, gc)
    } else {
        (d, gd)
    }
}

/// The eliminated value once the Newton search has found (δ̂, g(δ̂)).
fn finish_smooth(f: &dyn Fn(f64) -> f64, n: &SharedNuisance, d: f64, g0: f64) -> f64 {
    match n.method {
        NuisanceMethod::Profile => g0,
        NuisanceMethod::Marginalise => {
            marginalise(&|x| penalised(f, n.sigma, x), d, g0, n.sigma, n.reach_sigma)
        }
    }
}

/// g(δ) = f(δ) + (δ/σ)², +∞ where f is not finite.
fn penalised(f: &dyn Fn(f64) -> f64, sigma: f64, d: f64) -> f64 {
    let v = f(d);
    if v.is_finite() {
        v + (d / sigma).powi(2)
    } else {
        f64::INFINITY
    }
}

/// A smooth term's value and its first two derivatives in δ at one point: what
/// [`eliminate_newton_value`] needs from each evaluation (`Default`: a term that adds nothing).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Local {
    /// f(δ): −2 ln L of the data (non-finite where the term does not exist).
    pub value: f64,
    /// f′(δ).
    pub slope: f64,
    /// f″(δ).
    pub curvature: f64,
    /// Σ of the magnitudes of everything added up into `slope`: its rounding error is a few ε
    /// times this, which tells the search when the slope has nothing more to say.
    pub slope_magnitude: f64,
}

/// Newton steps of the analytic search per elimination before it gives up (and falls back to
/// the scan); quadratic convergence from anywhere in the prior's range takes 4–7.
const NEWTON_MAX_STEPS: usize = 40;
/// The analytic search stops when the next Newton step is below this fraction of the posterior
/// width (and of σ): g is then within ~1e-20 of its minimum, far below its own rounding, so δ̂
/// and g(δ̂) no longer depend on where the search started.
const NEWTON_STEP_TOL: f64 = 1e-10;
/// … or when |g′| is within this many ε of the magnitude of what it was summed from (the slope
/// is rounding noise; common practice, no source).
const SLOPE_ROUNDING_EPS: f64 = 64.0;

/// [`eliminate`]'s −2 ln L and δ̂ for a smooth term that also supplies its first and second
/// derivatives (`local`; `f` is the same term's value alone, bit for bit `local(δ).value`):
/// Newton's method with the exact curvature, converged to rounding level, so that δ̂ and the
/// eliminated value do not depend on the starting point `start` (a caller that knows a nearby
/// δ̂, say of the same objects but one, starts there and saves most of the steps).
///
/// The search is safeguarded: every step at most 2σ, δ kept on ±reach·σ, and where a step fails
/// (non-finite values, no positive curvature, no convergence in 40 steps) it falls back to the
/// scan [`eliminate`]. Where a full step raises g by more than rounding (1e-9 relative), the
/// step is halved (backtracking); once the slope has changed sign between two points, the
/// minimum is bracketed and a step leaving the bracket is replaced by its midpoint. It stops
/// when |step| ≤ 1e-10 of the posterior width √(2/g″) (and of σ) or |g′| is at rounding
/// level — each evaluation gives value, slope and curvature, about 5 evaluations in all.
pub fn eliminate_newton_value(
    local: &dyn Fn(f64) -> Local,
    f: &dyn Fn(f64) -> f64,
    n: &SharedNuisance,
    start: f64,
) -> (f64, f64) {
    match newton_analytic(local, n, start) {
        Some((d, g0)) => (finish_smooth(f, n, d, g0), d),
        None => {
            let e = eliminate(f, n);
            (e.minus_two_ln_l, e.delta_hat)
        }
    }
}

/// g = f + (δ/σ)² with its slope, curvature and the slope's magnitude.
fn penalised_local(local: &dyn Fn(f64) -> Local, sigma: f64, d: f64) -> Local {
    let l = local(d);
    let s2 = sigma * sigma;
    if l.value.is_finite() {
        Local {
            value: l.value + (d / sigma).powi(2),
            slope: l.slope + 2.0 * d / s2,
            curvature: l.curvature + 2.0 / s2,
            slope_magnitude: l.slope_magnitude + (2.0 * d / s2).abs(),
        }
    } else {
        Local {
            value: f64::INFINITY,
            ..l
        }
    }
}

/// The search of [`eliminate_newton_value`]: (δ̂, g(δ̂)), or `None` where it must fall back to
/// the scan.
fn newton_analytic(
    local: &dyn Fn(f64) -> Local,
    n: &SharedNuisance,
    start: f64,
) -> Option<(f64, f64)> {
    let sigma = n.sigma;
    let reach = n.reach_sigma * sigma;
    let g = |d: f64| penalised_local(local, sigma, d);
    let mut d = start.clamp(-reach, reach);
    let mut here = g(d);
    // Points known to lie below (slope < 0) and above (slope > 0) the minimum.
    let (mut below, mut above): (Option<f64>, Option<f64>) = (None, None);
    for _ in 0..NEWTON_MAX_STEPS {
        let ok = here.value.is_finite()
            && here.slope.is_finite()
            && here.curvature.is_finite()
            && here.curvature > 0.0;
        if !ok {
            return None;
        }
        let newton = -here.slope / here.curvature;
        let width = (2.0 / here.curvature).sqrt();
        if newton.abs() <= NEWTON_STEP_TOL * width.min(sigma)
            || here.slope.abs() <= SLOPE_ROUNDING_EPS * f64::EPSILON * here.slope_magnitude
        {
            return Some((d, here.value));
        }
        if here.slope < 0.0 {
            below = Some(below.map_or(d, |b: f64| b.max(d)));
        } else {
            above = Some(above.map_or(d, |a: f64| a.min(d)));
        }
        let mut nd = (d + newton.clamp(-2.0 * sigma, 2.0 * sigma)).clamp(-reach, reach);
        if let (Some(lo), Some(hi)) = (below, above) {
            if !(nd > lo && nd < hi) {
                nd = 0.5 * (lo + hi);
            }
        }
        if nd == d {
            // At the edge of the search range and pushing outwards (or the bracket has
            // closed to one float): the constrained minimum.
            return Some((d, here.value));
        }
        let mut next = g(nd);
        let mut halvings = 0;
        while !(next.value.is_finite()
            && next.value <= here.value + 1e-9 * (1.0 + here.value.abs()))
        {
            halvings += 1;
            if halvings > 50 {
                return None;
            }
            nd = d + 0.5 * (nd - d);
            if nd == d {
                return Some((d, here.value));
            }
            next = g(nd);
        }
        d = nd;
        here = next;
    }
    None
}

/// −2 ln [ (1/(√(2π)σ)) ∫ exp(−g(δ)/2) dδ ] with g = f + (δ/σ)², by Gauss–Hermite quadrature
/// centred at the mode δ̂ with the Laplace scale s = √(2/g''(δ̂)) (adaptive Gauss–Hermite).
fn marginalise(g: &dyn Fn(f64) -> f64, mode: f64, gmin: f64, sigma: f64, reach: f64) -> f64 {
    // Curvature from a central difference at a step small against the posterior width.
    let mut step = 1e-3 * sigma;
    let mut curv = f64::NAN;
    for _ in 0..8 {
        let c = (g(mode + step) - 2.0 * gmin + g(mode - step)) / (step * step);
        if c.is_finite() && c > 0.0 {
            curv = c;
            if 2.0 / c > (10.0 * step).powi(2) {
                break;
            }
        }
        step *= 0.1;
    }
    let s = if curv.is_finite() && curv > 0.0 {
        (2.0 / curv).sqrt().min(reach * sigma)
    } else {
        sigma
    };
    let (nodes, weights) = gauss_hermite(HERMITE_ORDER);
    // ∫ e^{−g/2} dδ = √2 s Σ w_k e^{x_k²} e^{−g(δ̂ + √2 s x_k)/2}; factor e^{−gmin/2} out.
    let mut acc = 0.0;
    for (&xk, &wk) in nodes.iter().zip(&weights) {
        let d = mode + std::f64::consts::SQRT_2 * s * xk;
        let v = g(d);
        if v.is_finite() {
            acc += wk * (xk * xk - 0.5 * (v - gmin)).exp();
        }
    }
    let integral_ln = (std::f64::consts::SQRT_2 * s * acc).ln() - 0.5 * gmin;
    let norm_ln = -(2.0 * std::f64::consts::PI).sqrt().ln() - sigma.ln();
    -2.0 * (integral_ln + norm_ln)
}

/// Nodes and weights of n-point Gauss–Hermite quadrature for ∫ e^{−x²} f(x) dx, by Newton
/// iteration on the orthonormal Hermite recurrence (Press et al., Numerical Recipes, 3rd ed.,
/// §4.6, routine `gauher`).
pub fn gauss_hermite(n: usize) -> (Vec<f64>, Vec<f64>) {
    let pim4 = std::f64::consts::PI.powf(-0.25);
    let mut x = vec![0.0; n];
    let mut w = vec![0.0; n];
    let m = n.div_ceil(2);
    let nf = n as f64;
    let mut z = 0.0;
    for i in 0..m {
        z = match i {
            0 => (2.0 * nf + 1.0).sqrt() - 1.85575 * (2.0 * nf + 1.0).powf(-0.16667),
            1 => z - 1.14 * nf.powf(0.426) / z,
            2 => 1.86 * z - 0.86 * x[0],
            3 => 1.91 * z - 0.91 * x[1],
            _ => 2.0 * z - x[i - 2],
        };
        let mut pp = 0.0;
        for _ in 0..100 {
            let mut p1 = pim4;
            let mut p2 = 0.0;
            for j in 0..n {
                let p3 = p2;
                p2 = p1;
                let jf = j as f64;
                p1 = z * (2.0 / (jf + 1.0)).sqrt() * p2 - (jf / (jf + 1.0)).sqrt() * p3;
            }
            pp = (2.0 * nf).sqrt() * p2;
            let z1 = z;
            z = z1 - p1 / pp;
            if (z - z1).abs() <= 1e-14 {
                break;
            }
        }
        x[i] = z;
        x[n - 1 - i] = -z;
        w[i] = 2.0 / (pp * pp);
        w[n - 1 - i] = w[i];
    }
    (x, w)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Σ w_k = √π and Σ w_k x_k² = √π/2 (moments of e^{−x²}; closed form).
    #[test]
    fn hermite_moments() {
        let (x, w) = gauss_hermite(HERMITE_ORDER);
        let s0: f64 = w.iter().sum();
        let s2: f64 = x.iter().zip(&w).map(|(x, w)| w * x * x).sum();
        let s4: f64 = x.iter().zip(&w).map(|(x, w)| w * x.powi(4)).sum();
        let rp = std::f64::consts::PI.sqrt();
        assert!((s0 - rp).abs() < 1e-12);
        assert!((s2 - rp / 2.0).abs() < 1e-12);
        assert!((s4 - 0.75 * rp).abs() < 1e-11);
    }

    /// The analytic search on a quadratic, f(δ) = ((δ − 1)/s)²: the profile is 1/(s² + σ²) and
    /// δ̂ = σ²/(s² + σ²) (closed form), reached in one Newton step from any start; on a
    /// non-quadratic mixture it agrees with the scan and with itself from other starts; a term
    /// without positive curvature falls back to the scan.
    #[test]
    fn analytic_search() {
        let (s, sigma) = (0.5, 1.0);
        let n = SharedNuisance {
            sigma,
            method: NuisanceMethod::Profile,
            reach_sigma: 8.0,
        };
        let quad = |d: f64| Local {
            value: ((d - 1.0) / s).powi(2),
            slope: 2.0 * (d - 1.0) / (s * s),
            curvature: 2.0 / (s * s),
            slope_magnitude: (2.0 * (d - 1.0) / (s * s)).abs(),
        };
        for start in [-3.0, 0.0, 0.7, 5.0] {
            let (v, d) = eliminate_newton_value(&quad, &|d| quad(d).value, &n, start);
            let v_exact = 1.0 / (s * s + sigma * sigma);
            let d_exact = sigma * sigma / (s * s + sigma * sigma);
            assert!((v - v_exact).abs() < 1e-15, "{v} vs {v_exact}");
            assert!((d - d_exact).abs() < 1e-15, "{d} vs {d_exact}");
        }
        // −2 ln of a two-component mixture in (1 + δ) (as in the test above), derivatives by
        // the quotient rule.
        let mix = |d: f64| -> Local {
            let (mut value, mut slope, mut curvature) = (0.0, 0.0, 0.0);
            for &(r, e) in &[(1.03, 0.02), (0.97, 0.03), (1.08, 0.05)] {
                let (mut l, mut l1, mut l2) = (0.0, 0.0, 0.0);
                for (w, k) in [(0.7, 1.0), (0.3, 1.02)] {
                    let u = (r - k * (1.0 + d)) / e;
                    let t = w * (-0.5 * u * u).exp();
                    let p = u * k / e;
                    l += t;
                    l1 += t * p;
                    l2 += t * (p * p - k * k / (e * e));
                }
                value += -2.0 * f64::ln(l);
                slope += -2.0 * l1 / l;
                curvature += -2.0 * l2 / l + 2.0 * (l1 / l).powi(2);
            }
            Local {
                value,
                slope,
                curvature,
                slope_magnitude: slope.abs(),
            }
        };
        let n = SharedNuisance { sigma: 0.025, ..n };
        let calls = std::cell::Cell::new(0usize);
        let counted = |d: f64| {
            calls.set(calls.get() + 1);
            mix(d)
        };
        let (v0, d0) = eliminate_newton_value(&counted, &|d| mix(d).value, &n, 0.0);
        assert!(calls.get() <= 10, "{} evaluations", calls.get());
        let scan = eliminate(&|d| mix(d).value, &n);
        assert!((scan.minus_two_ln_l - v0).abs() < 1e-7);
        for start in [-0.2, 0.05, 0.2] {
            let (v, d) = eliminate_newton_value(&mix, &|d| mix(d).value, &n, start);
            assert!((v - v0).abs() <= 4.0 * f64::EPSILON * v0.abs());
            assert!((d - d0).abs() <= 1e-9 * n.sigma);
        }
        // Marginalising: the quadrature is centred at the same mode, so it agrees with the
        // scan's marginalisation as the profile does.
        let marg = SharedNuisance {
            method: NuisanceMethod::Marginalise,
            ..n
        };
        let (v, _) = eliminate_newton_value(&mix, &|d| mix(d).value, &marg, 0.0);
        let scan = eliminate(&|d| mix(d).value, &marg);
        assert!(
            (scan.minus_two_ln_l - v).abs() < 1e-7,
            "{} vs {v}",
            scan.minus_two_ln_l
        );
        // Concave everywhere: no Newton step is safe, the scan decides (bit for bit).
        let n = SharedNuisance { sigma: 1.0, ..n };
        let concave = |d: f64| Local {
            value: -3.0 * d * d,
            slope: -6.0 * d,
            curvature: -6.0,
            slope_magnitude: (6.0 * d).abs(),
        };
        let (v, d) = eliminate_newton_value(&concave, &|d| concave(d).value, &n, 0.0);
        let scan = eliminate(&|d| concave(d).value, &n);
        assert_eq!((v, d), (scan.minus_two_ln_l, scan.delta_hat));
    }

    /// Marginalising a Gaussian data term over a Gaussian prior: the convolution of two
    /// normals, −2 ln N(μ; 0, s² + σ²) relative to the data normalisation (closed form).
    #[test]
    fn marginal_of_gaussian_term() {
        let (mu, s, sigma) = (0.3, 0.05, 0.2);
        let f = |d: f64| {
            ((d - mu) / s).powi(2) - 2.0 * (1.0 / ((2.0 * std::f64::consts::PI).sqrt() * s)).ln()
        };
        let n = SharedNuisance {
            sigma,
            method: NuisanceMethod::Marginalise,
            reach_sigma: 8.0,
        };
        let e = eliminate(&f, &n);
        let v = s * s + sigma * sigma;
        let exact = mu * mu / v + (2.0 * std::f64::consts::PI * v).ln();
        assert!(
            (e.minus_two_ln_l - exact).abs() < 1e-8,
            "{} {}",
            e.minus_two_ln_l,
            exact
        );
        assert!((e.delta_hat - mu * sigma * sigma / v).abs() < 1e-7);
    }
}
