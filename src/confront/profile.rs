//! Profile-likelihood intervals and a flat-prior posterior over the (ϒ, τ) grid, the two other
//! one-parameter readings researchers expect beside the τ = 0 slice.
//!
//! - **Profile.** The interval of ϒ over τ is {ϒ : min_τ χ²(ϒ, τ) − min χ² ≤ k²}, and likewise
//!   for τ over ϒ (one-parameter thresholds 1, 4, 9). The minimum over the other axis is taken
//!   on its grid nodes and refined by the parabola through the smallest node and its two
//!   neighbours (exact for a surface quadratic in that parameter); ends are located by linear
//!   interpolation of the crossing, and an end reached at the grid edge is open.
//! - **Posterior.** Flat priors on the grid's ϒ and τ ranges, so the posterior density is
//!   ∝ exp(−χ²/2) there (zero at points without a model); integrals use the trapezoid rule on
//!   the grid. Credible regions are highest-posterior-density (HPD) sets of grid points; the
//!   marginal credible interval of each parameter is the HPD interval of its marginal density
//!   (piecewise linear between nodes), open where it reaches the grid edge.
//!
//! For a Gaussian surface the profile and the marginal intervals coincide (±kσ of each
//! parameter) and the 2-parameter HPD region is the Δχ² ≤ 2.2957 / 6.1801 / 11.8292 ellipse.
//!
//! ```
//! use dwarfbound::confront::profile::{posterior, profile_intervals};
//! // χ² = (ϒ/0.1)² + (τ/0.05)² on a fine grid: every 95.45 % interval is ±2σ.
//! let u: Vec<f64> = (0..=240).map(|i| -0.6 + 0.005 * i as f64).collect();
//! let t: Vec<f64> = (0..=120).map(|j| -0.3 + 0.005 * j as f64).collect();
//! let chi2: Vec<f64> = t.iter()
//!     .flat_map(|&tt| u.iter().map(move |&uu| (uu / 0.1f64).powi(2) + (tt / 0.05f64).powi(2)))
//!     .collect();
//! let p = profile_intervals(&u, &t, &chi2).unwrap();
//! assert!((p.upsilon[1].upper.unwrap() - 0.2).abs() < 1e-3);
//! let post = posterior(&u, &t, &chi2).unwrap();
//! assert!((post.tau[1].lower.unwrap() + 0.1).abs() < 2e-3);
//! ```

use super::prob::StatsError;
use super::regions::{interval_from_slice, Interval, Level};

/// Profile intervals of each parameter over the other, at the three levels of [`Level::ALL`].
#[derive(Debug, Clone, PartialEq)]
pub struct ProfileIntervals {
    /// min over τ of χ² at each ϒ node (+∞ where no τ has a model).
    pub upsilon_profile: Vec<f64>,
    /// min over ϒ of χ² at each τ node.
    pub tau_profile: Vec<f64>,
    /// ϒ intervals (one-parameter Δχ² ≤ 1, 4, 9 of the profile); `None` ends are open.
    pub upsilon: [Interval; 3],
    /// τ intervals.
    pub tau: [Interval; 3],
}

/// Minimum of a row of χ² values on `x`, refined by the parabola through the smallest finite
/// node and its neighbours when both are finite and the parabola is convex. Exact for a
/// quadratic; never above the smallest node.
fn refined_min(x: &[f64], y: &[f64]) -> f64 {
    let Some((j, yj)) = y
        .iter()
        .copied()
        .enumerate()
        .filter(|(_, v)| v.is_finite())
        .fold(None, |acc: Option<(usize, f64)>, (k, v)| match acc {
            Some((_, b)) if b <= v => acc,
            _ => Some((k, v)),
        })
    else {
        return f64::INFINITY;
    };
    if j == 0 || j + 1 >= y.len() || !y[j - 1].is_finite() || !y[j + 1].is_finite() {
        return yj;
    }
    let (x0, x1, x2) = (x[j - 1], x[j], x[j + 1]);
    let (y0, y1, y2) = (y[j - 1], yj, y[j + 1]);
    // Divided differences: y = y1 + b (x − x1) + a (x − x1)(x − x0)… written in Newton form.
    let d01 = (y1 - y0) / (x1 - x0);
    let d12 = (y2 - y1) / (x2 - x1);
    let a = (d12 - d01) / (x2 - x0);
    if a <= 0.0 || !a.is_finite() {
        return yj;
    }
    // Slope at x1 of the interpolating parabola, then the vertex value y1 − slope²/(4a).
    let slope = d01 + a * (x1 - x0);
    let v = y1 - slope * slope / (4.0 * a);
    if v.is_finite() {
        v.min(yj)
    } else {
        yj
    }
}

fn check_grid(upsilon: &[f64], tau: &[f64], chi2: &[f64]) -> Result<(), StatsError> {
    let (nu, nt) = (upsilon.len(), tau.len());
    if nu == 0 || nt == 0 || chi2.len() != nu * nt {
        return Err(StatsError::InvalidInput(format!(
            "χ² map has {} values for a {nu} × {nt} grid",
            chi2.len()
        )));
    }
    for (name, a) in [("ϒ", upsilon), ("τ", tau)] {
        if a.iter().any(|v| !v.is_finite()) || a.windows(2).any(|w| w[1] <= w[0]) {
            return Err(StatsError::InvalidInput(format!(
                "the {name} axis must be finite and strictly increasing"
            )));
        }
    }
    if !chi2.iter().any(|c| c.is_finite()) {
        return Err(StatsError::InvalidInput(
            "no grid point has a finite χ²".into(),
        ));
    }
    Ok(())
}

fn intervals_of(x: &[f64], profile: &[f64]) -> Result<[Interval; 3], StatsError> {
    let open = Interval {
        lower: None,
        upper: None,
        disjoint: false,
    };
    if !profile.iter().any(|c| c.is_finite()) {
        return Ok([open; 3]);
    }
    let mut out = [open; 3];
    for (o, l) in out.iter_mut().zip(Level::ALL) {
        *o = interval_from_slice(x, profile, l.dchi2(1))?;
    }
    Ok(out)
}

/// Profile intervals of ϒ (over τ) and of τ (over ϒ) from a χ² map `chi2[j·n_ϒ + i]` (τ outer,
/// ϒ inner; non-finite = no model).
pub fn profile_intervals(
    upsilon: &[f64],
    tau: &[f64],
    chi2: &[f64],
) -> Result<ProfileIntervals, StatsError> {
    check_grid(upsilon, tau, chi2)?;
    let nu = upsilon.len();
    let upsilon_profile: Vec<f64> = (0..nu)
        .map(|i| {
            let col: Vec<f64> = (0..tau.len()).map(|j| chi2[j * nu + i]).collect();
            refined_min(tau, &col)
        })
        .collect();
    let tau_profile: Vec<f64> = (0..tau.len())
        .map(|j| refined_min(upsilon, &chi2[j * nu..(j + 1) * nu]))
        .collect();
    Ok(ProfileIntervals {
        upsilon: intervals_of(upsilon, &upsilon_profile)?,
        tau: intervals_of(tau, &tau_profile)?,
        upsilon_profile,
        tau_profile,
    })
}

/// One highest-posterior-density region of the grid: its bounding box and size.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HpdRegion {
    /// Smallest ϒ in the region.
    pub upsilon_min: f64,
    /// Largest ϒ in the region.
    pub upsilon_max: f64,
    /// Smallest τ in the region.
    pub tau_min: f64,
    /// Largest τ in the region.
    pub tau_max: f64,
    /// Grid points in the region.
    pub n_points: usize,
    /// Those points over all grid points.
    pub fraction_of_grid: f64,
    /// Δχ² of the least probable point inside (for a Gaussian surface: 2.2957, 6.1801,
    /// 11.8292), which says how the region compares with the Δχ² map.
    pub delta_chi2_at_edge: f64,
}

/// The flat-prior posterior over the grid.
#[derive(Debug, Clone, PartialEq)]
pub struct Posterior {
    /// Marginal density of ϒ at each ϒ node (normalised to 1 over the ϒ range).
    pub marginal_upsilon: Vec<f64>,
    /// Marginal density of τ at each τ node.
    pub marginal_tau: Vec<f64>,
    /// HPD intervals of the marginal of ϒ at the three levels; `None` ends are open.
    pub upsilon: [Interval; 3],
    /// HPD intervals of the marginal of τ.
    pub tau: [Interval; 3],
    /// Two-parameter HPD regions at the three levels.
    pub regions: [HpdRegion; 3],
    /// Whether the data barely inform ϒ's marginal ([`prior_dominated`]).
    pub upsilon_prior_dominated: bool,
    /// Whether the data barely inform τ's marginal.
    pub tau_prior_dominated: bool,
}

/// The Δχ² equivalent below which a marginal counts as prior-dominated ([`prior_dominated`];
/// a choice: one σ in one parameter).
pub const PRIOR_DOMINATED_DCHI2: f64 = 1.0;

/// Whether a marginal density on ≥ 2 nodes stays within a factor e^{−1/2} of its largest value
/// everywhere — the data move it by less than the equivalent of Δχ² = 1
/// ([`PRIOR_DOMINATED_DCHI2`]) over the whole axis (a choice). Its HPD interval then shows the
/// grid's range and the flat prior, not the data: a credible "bound" from an uninformative
/// catalogue is exactly what a reader must not take for a measurement.
pub fn prior_dominated(marginal: &[f64]) -> bool {
    let max = marginal.iter().copied().fold(0.0, f64::max);
    let floor = (-0.5 * PRIOR_DOMINATED_DCHI2).exp() * max;
    marginal.len() >= 2 && max > 0.0 && max.is_finite() && marginal.iter().all(|&v| v >= floor)
}

/// Trapezoid weights of an axis (a single node weighs 1).
fn trapezoid_weights(x: &[f64]) -> Vec<f64> {
    let n = x.len();
    if n == 1 {
        return vec![1.0];
    }
    (0..n)
        .map(|k| {
            let left = if k > 0 { x[k] - x[k - 1] } else { 0.0 };
            let right = if k + 1 < n { x[k + 1] - x[k] } else { 0.0 };
            0.5 * (left + right)
        })
        .collect()
}

/// Integral of the part of a piecewise-linear density above level `h`.
fn mass_above(x: &[f64], f: &[f64], h: f64) -> f64 {
    x.windows(2)
        .zip(f.windows(2))
        .map(|(xs, fs)| {
            let dx = xs[1] - xs[0];
            let (lo, hi) = (fs[0].min(fs[1]), fs[0].max(fs[1]));
            if lo >= h {
                0.5 * (fs[0] + fs[1]) * dx
            } else if hi <= h {
                0.0
            } else {
                let len = dx * (hi - h) / (hi - lo);
                0.5 * len * (hi + h)
            }
        })
        .sum()
}

/// HPD interval of a piecewise-linear density `f` on nodes `x` holding `probability` of its
/// mass: the set {f ≥ h}, h found by bisection; its hull (with `disjoint` set if it has gaps).
fn hpd_interval(x: &[f64], f: &[f64], probability: f64) -> Interval {
    let open = Interval {
        lower: None,
        upper: None,
        disjoint: false,
    };
    let total = mass_above(x, f, 0.0);
    let f_max = f.iter().copied().fold(0.0, f64::max);
    let positive = |v: f64| v > 0.0 && v.is_finite();
    if x.len() < 2 || !positive(total) || !positive(f_max) {
        return open;
    }
    let target = probability * total;
    let (mut lo, mut hi) = (0.0, f_max);
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if mass_above(x, f, mid) >= target {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    let h = lo;
    let inside = |k: usize| f[k] >= h;
    let Some(first) = (0..x.len()).find(|&k| inside(k)) else {
        return open;
    };
    let last = (0..x.len()).rev().find(|&k| inside(k)).unwrap_or(first);
    let crossing = |out: usize, inn: usize| {
        let (fo, fi) = (f[out], f[inn]);
        if fi > fo {
            x[inn] + (fi - h) / (fi - fo) * (x[out] - x[inn])
        } else {
            x[inn]
        }
    };
    Interval {
        lower: (first > 0).then(|| crossing(first - 1, first)),
        upper: (last + 1 < x.len()).then(|| crossing(last + 1, last)),
        disjoint: (first..=last).any(|k| !inside(k)),
    }
}

/// The posterior with flat priors on the grid's ϒ and τ ranges from a χ² map (τ outer, ϒ
/// inner; non-finite = no model, posterior density 0 there).
pub fn posterior(upsilon: &[f64], tau: &[f64], chi2: &[f64]) -> Result<Posterior, StatsError> {
    check_grid(upsilon, tau, chi2)?;
    let (nu, nt) = (upsilon.len(), tau.len());
    let min = chi2
        .iter()
        .copied()
        .filter(|c| c.is_finite())
        .fold(f64::INFINITY, f64::min);
    let dens: Vec<f64> = chi2
        .iter()
        .map(|&c| {
            if c.is_finite() {
                (-0.5 * (c - min)).exp()
            } else {
                0.0
            }
        })
        .collect();
    let (wu, wt) = (trapezoid_weights(upsilon), trapezoid_weights(tau));
    let normalise = |v: Vec<f64>, w: &[f64]| {
        let s: f64 = v.iter().zip(w).map(|(a, b)| a * b).sum();
        if s > 0.0 {
            v.into_iter().map(|a| a / s).collect()
        } else {
            v
        }
    };
    let marginal_upsilon = normalise(
        (0..nu)
            .map(|i| (0..nt).map(|j| wt[j] * dens[j * nu + i]).sum())
            .collect(),
        &wu,
    );
    let marginal_tau = normalise(
        (0..nt)
            .map(|j| (0..nu).map(|i| wu[i] * dens[j * nu + i]).sum())
            .collect(),
        &wt,
    );
    let levels = Level::ALL.map(|l| l.probability());
    let upsilon_iv = levels.map(|p| hpd_interval(upsilon, &marginal_upsilon, p));
    let tau_iv = levels.map(|p| hpd_interval(tau, &marginal_tau, p));

    // Two-parameter HPD sets: points by decreasing density (ties by index), each carrying its
    // cell's probability, until the level is reached; points as dense as the last one join.
    let mut order: Vec<usize> = (0..nu * nt).filter(|&k| dens[k] > 0.0).collect();
    order.sort_by(|&a, &b| dens[b].total_cmp(&dens[a]).then(a.cmp(&b)));
    let cell = |k: usize| dens[k] * wu[k % nu] * wt[k / nu];
    let total: f64 = order.iter().map(|&k| cell(k)).sum();
    let regions = levels.map(|p| {
        let mut acc = 0.0;
        let mut h = 0.0;
        for &k in &order {
            acc += cell(k);
            h = dens[k];
            if acc >= p * total {
                break;
            }
        }
        let mut r = HpdRegion {
            upsilon_min: f64::INFINITY,
            upsilon_max: f64::NEG_INFINITY,
            tau_min: f64::INFINITY,
            tau_max: f64::NEG_INFINITY,
            n_points: 0,
            fraction_of_grid: 0.0,
            delta_chi2_at_edge: -2.0 * h.ln(),
        };
        for &k in order.iter().take_while(|&&k| dens[k] >= h) {
            let (u, t) = (upsilon[k % nu], tau[k / nu]);
            r.upsilon_min = r.upsilon_min.min(u);
            r.upsilon_max = r.upsilon_max.max(u);
            r.tau_min = r.tau_min.min(t);
            r.tau_max = r.tau_max.max(t);
            r.n_points += 1;
        }
        r.fraction_of_grid = r.n_points as f64 / (nu * nt) as f64;
        r
    });
    Ok(Posterior {
        upsilon_prior_dominated: prior_dominated(&marginal_upsilon),
        tau_prior_dominated: prior_dominated(&marginal_tau),
        marginal_upsilon,
        marginal_tau,
        upsilon: upsilon_iv,
        tau: tau_iv,
        regions,
    })
}

/// How the flat prior is stated in outputs.
pub fn prior_text(upsilon: &[f64], tau: &[f64]) -> String {
    let ends = |a: &[f64]| {
        (
            a.first().copied().unwrap_or(0.0),
            a.last().copied().unwrap_or(0.0),
        )
    };
    let ((u0, u1), (t0, t1)) = (ends(upsilon), ends(tau));
    format!(
        "Flat in ϒ on [{u0}, {u1}] and flat in τ on [{t0}, {t1}] (the grid's ranges), zero where the grid has no model; posterior ∝ exp(−χ²/2), integrated by the trapezoid rule on the grid."
    )
}
