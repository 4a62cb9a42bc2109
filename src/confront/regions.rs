//! Confidence regions and absolute consistency from a χ² surface over the (ϒ, τ) grid.
//!
//! This module turns χ² = −2 ln L into what a report states (`docs/bounds.md` §8.4, §8.7): the
//! best grid point, the Δχ² thresholds, the bounding box of the region allowed at each level,
//! the one-parameter interval in ϒ on the τ = 0 slice (ends located on a finer sub-grid and by
//! linear interpolation of the crossing; an end the slice does not close is open, never the grid
//! edge), the Šidák test of whether any grid point is consistent at all, the crowding warning,
//! and the optional population-aware term.
//!
//! ```
//! use dwarfbound::confront::regions::{interval_from_slice, Level};
//! // A parabola χ² = ((ϒ − 0.1)/0.05)² on a fine axis: the 95.45 % interval is 0.1 ± 0.1.
//! let x: Vec<f64> = (0..=400).map(|i| -0.5 + 0.0025 * i as f64).collect();
//! let chi2: Vec<f64> = x.iter().map(|u| ((u - 0.1) / 0.05f64).powi(2)).collect();
//! let iv = interval_from_slice(&x, &chi2, Level::Cl95.dchi2(1)).unwrap();
//! assert!((iv.lower.unwrap() - 0.0).abs() < 1e-5 && (iv.upper.unwrap() - 0.2).abs() < 1e-5);
//! ```

use std::f64::consts::FRAC_1_SQRT_2;

use statrs::distribution::{ChiSquared, ContinuousCDF};

use super::prob::{ln_normal_cdf, ln_prob_consistent, tension_sigma, Measurement, StatsError};

/// The three conventional confidence levels, defined as the probability inside ±kσ of a
/// Gaussian (k = 1, 2, 3): 68.27 %, 95.45 %, 99.73 %.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Level {
    /// 1σ, 68.27 %.
    Cl68,
    /// 2σ, 95.45 %.
    Cl95,
    /// 3σ, 99.73 %.
    Cl997,
}

impl Level {
    /// All three, in increasing order.
    pub const ALL: [Level; 3] = [Level::Cl68, Level::Cl95, Level::Cl997];

    /// k of the ±kσ definition.
    pub fn n_sigma(self) -> f64 {
        match self {
            Level::Cl68 => 1.0,
            Level::Cl95 => 2.0,
            Level::Cl997 => 3.0,
        }
    }

    /// Coverage probability erf(k/√2).
    pub fn probability(self) -> f64 {
        libm::erf(self.n_sigma() * FRAC_1_SQRT_2)
    }

    /// The key used in `summary.json` (`cl68`, `cl95`, `cl997`).
    pub fn key(self) -> &'static str {
        match self {
            Level::Cl68 => "cl68",
            Level::Cl95 => "cl95",
            Level::Cl997 => "cl997",
        }
    }

    /// Δχ² threshold for `dof` jointly estimated parameters. Exact for 1 dof (k²) and 2 dof
    /// (−2 ln(1 − p), with 1 − p = erfc(k/√2) computed without cancellation): 1, 4, 9 and
    /// 2.2957, 6.1801, 11.8292 (Particle Data Group, Review of Particle Physics, "Statistics",
    /// table of Δχ² for m parameters; Press et al., Numerical Recipes, §15.6). Other dof use
    /// statrs's χ² quantile.
    pub fn dchi2(self, dof: u32) -> f64 {
        let k = self.n_sigma();
        match dof {
            1 => k * k,
            2 => -2.0 * (libm::erfc(k * FRAC_1_SQRT_2)).ln(),
            _ => chi2_quantile(self.probability(), dof),
        }
    }
}

/// Δχ² threshold at coverage `probability` for `dof` parameters (`docs/bounds.md` §8.4 also lists
/// 90 / 95 / 99 %: 2.7055 / 3.8415 / 6.6349 for 1 dof, 4.6052 / 5.9915 / 9.2103 for 2 dof).
/// 1 dof: [Φ⁻¹((1+p)/2)]²; 2 dof: −2 ln(1 − p); otherwise statrs's χ² quantile.
pub fn dchi2_threshold(probability: f64, dof: u32) -> Result<f64, StatsError> {
    if !(probability > 0.0 && probability < 1.0) || dof == 0 {
        return Err(StatsError::InvalidInput(format!(
            "a Δχ² threshold needs 0 < p < 1 and dof ≥ 1 (p = {probability}, dof = {dof})"
        )));
    }
    Ok(match dof {
        1 => {
            let z = super::prob::normal_quantile_from_ln((0.5 * (1.0 + probability)).ln());
            z * z
        }
        2 => -2.0 * (-probability).ln_1p(),
        _ => chi2_quantile(probability, dof),
    })
}

fn chi2_quantile(probability: f64, dof: u32) -> f64 {
    match ChiSquared::new(f64::from(dof)) {
        Ok(d) => d.inverse_cdf(probability),
        Err(_) => f64::NAN,
    }
}

/// The best grid point of a χ² map.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BestFit {
    /// Index along the ϒ axis.
    pub i_upsilon: usize,
    /// Index along the τ axis.
    pub j_tau: usize,
    /// ϒ there.
    pub upsilon: f64,
    /// τ there.
    pub tau: f64,
    /// χ² there (−2 ln L), the `minus_two_ln_l` of `summary.json`.
    pub chi2_min: f64,
}

impl BestFit {
    /// Whether the best point lies on the edge of an `n_upsilon` × `n_tau` grid, so that the
    /// minimum may lie outside it (a single τ value has no τ edge).
    pub fn on_grid_edge(&self, n_upsilon: usize, n_tau: usize) -> bool {
        self.i_upsilon == 0
            || self.i_upsilon + 1 == n_upsilon
            || (n_tau > 1 && (self.j_tau == 0 || self.j_tau + 1 == n_tau))
    }
}

/// Bounding box of the grid points allowed at one level (`summary.json` `allowed.<level>`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AllowedBox {
    /// Smallest allowed ϒ.
    pub upsilon_min: f64,
    /// Largest allowed ϒ.
    pub upsilon_max: f64,
    /// Smallest allowed τ.
    pub tau_min: f64,
    /// Largest allowed τ.
    pub tau_max: f64,
    /// Allowed points over all grid points.
    pub fraction_of_grid: f64,
    /// Number of allowed points.
    pub n_points: usize,
}

/// Everything the two-parameter map gives.
///
/// Grid vectors here use the one index order of the whole program (the theory grid's, the
/// comparator's [`crate::confront::engine::BoundSurface`], `grid.csv` and the report's maps):
/// τ outer, ϒ inner, index `j_tau · n_upsilon + i_upsilon`.
#[derive(Debug, Clone, PartialEq)]
pub struct MapRegions {
    /// The best grid point.
    pub best: BestFit,
    /// Δχ² at every grid point, τ outer and ϒ inner (index j·n_ϒ + i); +∞ where χ² was not
    /// finite.
    pub delta_chi2: Vec<f64>,
    /// Allowed region per level, in the order of [`Level::ALL`], for 2 dof.
    pub allowed: [AllowedBox; 3],
    /// Grid points whose χ² was not finite (no model there); never allowed.
    pub n_invalid: usize,
    /// The grid points within [`INDISTINGUISHABLE_DCHI2`] of the best one, the best included.
    pub near_best: AllowedBox,
    /// Whether the best fit names a place: every point of `near_best` is the best point or one
    /// of its eight neighbours, or `near_best` holds less than [`NOT_UNIQUE_SHARE`] of the
    /// points allowed at 68.27 % (a peaked likelihood on a grid much finer than its width). A
    /// likelihood flat over part of the grid (objects that all agree with every point there)
    /// has a lowest point that is rounding noise, and the report says so instead of printing it
    /// as a finding.
    pub best_unique: bool,
}

impl MapRegions {
    /// Whether grid point (i, j) is allowed at `level` (2 dof).
    pub fn allowed_at(
        &self,
        i_upsilon: usize,
        j_tau: usize,
        n_upsilon: usize,
        level: Level,
    ) -> bool {
        self.delta_chi2
            .get(j_tau * n_upsilon + i_upsilon)
            .is_some_and(|&d| d <= level.dchi2(2))
    }
}

/// Δχ² below which a grid point cannot be told from the best one: 0.1σ in one parameter
/// (a choice; the demo's best fit has no other point within it, an uninformative catalogue has
/// a plateau of them).
pub const INDISTINGUISHABLE_DCHI2: f64 = 0.01;

/// Share of the 68.27 % region (two parameters) above which the points within
/// [`INDISTINGUISHABLE_DCHI2`] of the best make it not unique. For a Gaussian χ² the share is
/// (0.1/1.515)² = 0.44 % whatever the grid (ellipses with semi-axes 0.1σ and 1.515σ); for a
/// likelihood Gaussian in one direction and flat in the other it is 0.1/1.515 = 6.6 %, and for
/// a plateau most of the region. 2 % lies between (a choice).
pub const NOT_UNIQUE_SHARE: f64 = 0.02;

/// Best fit, Δχ² and the allowed boxes of a χ² map `chi2[j·n_ϒ + i]` (τ outer, ϒ inner) on
/// axes `upsilon`, `tau` (two-parameter thresholds, as in the paper's statistics section).
/// Non-finite entries (grid points without a model) are never best and never allowed. Ties for
/// the best point go to the smallest ϒ, then the smallest τ, whatever the storage order.
pub fn map_regions(upsilon: &[f64], tau: &[f64], chi2: &[f64]) -> Result<MapRegions, StatsError> {
    let (nu, nt) = (upsilon.len(), tau.len());
    if nu == 0 || nt == 0 || chi2.len() != nu * nt {
        return Err(StatsError::InvalidInput(format!(
            "χ² map has {} values for a {nu} × {nt} grid",
            chi2.len()
        )));
    }
    // (i_upsilon, j_tau, χ²) of the best point so far.
    let mut best: Option<(usize, usize, f64)> = None;
    for (k, &c) in chi2.iter().enumerate() {
        let (i, j) = (k % nu, k / nu);
        let better = |(bi, bj, b): (usize, usize, f64)| c < b || (c == b && (i, j) < (bi, bj));
        if c.is_finite() && best.is_none_or(better) {
            best = Some((i, j, c));
        }
    }
    let Some((i_best, j_best, chi2_min)) = best else {
        return Err(StatsError::InvalidInput(
            "no grid point has a finite χ²".into(),
        ));
    };
    let delta_chi2: Vec<f64> = chi2
        .iter()
        .map(|&c| {
            if c.is_finite() {
                c - chi2_min
            } else {
                f64::INFINITY
            }
        })
        .collect();
    let n_invalid = chi2.iter().filter(|c| !c.is_finite()).count();
    let within = |thr: f64| {
        let mut b = AllowedBox {
            upsilon_min: f64::INFINITY,
            upsilon_max: f64::NEG_INFINITY,
            tau_min: f64::INFINITY,
            tau_max: f64::NEG_INFINITY,
            fraction_of_grid: 0.0,
            n_points: 0,
        };
        for (k, &d) in delta_chi2.iter().enumerate() {
            if d <= thr {
                let (u, t) = (upsilon[k % nu], tau[k / nu]);
                b.upsilon_min = b.upsilon_min.min(u);
                b.upsilon_max = b.upsilon_max.max(u);
                b.tau_min = b.tau_min.min(t);
                b.tau_max = b.tau_max.max(t);
                b.n_points += 1;
            }
        }
        b.fraction_of_grid = b.n_points as f64 / (nu * nt) as f64;
        b
    };
    let allowed = Level::ALL.map(|level| within(level.dchi2(2)));
    let near_best = within(INDISTINGUISHABLE_DCHI2);
    let beside_best = delta_chi2.iter().enumerate().all(|(k, &d)| {
        d > INDISTINGUISHABLE_DCHI2
            || ((k % nu).abs_diff(i_best) <= 1 && (k / nu).abs_diff(j_best) <= 1)
    });
    let best_unique =
        beside_best || (near_best.n_points as f64) < NOT_UNIQUE_SHARE * allowed[0].n_points as f64;
    Ok(MapRegions {
        best: BestFit {
            i_upsilon: i_best,
            j_tau: j_best,
            upsilon: upsilon[i_best],
            tau: tau[j_best],
            chi2_min,
        },
        delta_chi2,
        allowed,
        n_invalid,
        near_best,
        best_unique,
    })
}

/// A one-parameter interval; `None` marks an end the slice does not close (open).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Interval {
    /// Lower end, or `None` if allowed up to the first point of the axis.
    pub lower: Option<f64>,
    /// Upper end, or `None` if allowed up to the last point of the axis.
    pub upper: Option<f64>,
    /// True when the allowed set has gaps: the interval is then the hull of its pieces.
    pub disjoint: bool,
}

impl Interval {
    /// Whether `x` lies inside (an open end extends to infinity on its side).
    pub fn contains(&self, x: f64) -> bool {
        self.lower.is_none_or(|l| x >= l) && self.upper.is_none_or(|u| x <= u)
    }
}

/// The interval {x : Δχ²(x) ≤ `dchi2_max`} of a χ² slice on increasing abscissae `x`, with
/// Δχ² relative to the slice's own minimum. Each end is the linear interpolation of the crossing
/// between the last excluded and first allowed point; an end reached at the first or last point
/// is open. If the allowed set has gaps the hull is returned and `disjoint` is set.
pub fn interval_from_slice(
    x: &[f64],
    chi2: &[f64],
    dchi2_max: f64,
) -> Result<Interval, StatsError> {
    if x.is_empty() || x.len() != chi2.len() {
        return Err(StatsError::InvalidInput(format!(
            "slice has {} abscissae and {} χ² values",
            x.len(),
            chi2.len()
        )));
    }
    let min = chi2
        .iter()
        .copied()
        .filter(|c| c.is_finite())
        .fold(f64::INFINITY, f64::min);
    if !min.is_finite() {
        return Err(StatsError::InvalidInput(
            "no point of the slice has a finite χ²".into(),
        ));
    }
    let delta: Vec<f64> = chi2
        .iter()
        .map(|&c| {
            if c.is_finite() {
                c - min
            } else {
                f64::INFINITY
            }
        })
        .collect();
    let inside = |k: usize| delta[k] <= dchi2_max;
    let first = (0..x.len()).find(|&k| inside(k)).unwrap_or(0);
    let last = (0..x.len()).rev().find(|&k| inside(k)).unwrap_or(0);
    let crossing = |out: usize, inn: usize| {
        let (d_out, d_in) = (delta[out], delta[inn]);
        if !d_out.is_finite() || d_out <= d_in {
            x[inn]
        } else {
            x[inn] + (dchi2_max - d_in) / (d_out - d_in) * (x[out] - x[inn])
        }
    };
    Ok(Interval {
        lower: (first > 0).then(|| crossing(first - 1, first)),
        upper: (last + 1 < x.len()).then(|| crossing(last + 1, last)),
        disjoint: (first..=last).any(|k| !inside(k)),
    })
}

/// A coarse axis refined `factor` times: (n − 1)·factor + 1 points, the coarse nodes included
/// exactly (the 10× ϒ sub-grid of `docs/bounds.md` §8.4).
pub fn refine_axis(axis: &[f64], factor: usize) -> Result<Vec<f64>, StatsError> {
    if axis.len() < 2
        || factor == 0
        || axis
            .windows(2)
            .any(|w| w[1].partial_cmp(&w[0]) != Some(std::cmp::Ordering::Greater))
    {
        return Err(StatsError::InvalidInput(
            "an axis to refine needs ≥ 2 strictly increasing points and a factor ≥ 1".into(),
        ));
    }
    let mut fine = Vec::with_capacity((axis.len() - 1) * factor + 1);
    for w in axis.windows(2) {
        for s in 0..factor {
            fine.push(w[0] + (w[1] - w[0]) * (s as f64 / factor as f64));
        }
    }
    fine.push(axis[axis.len() - 1]);
    Ok(fine)
}

/// The τ = 0 slice evaluated on a refined ϒ axis, with its intervals at the three levels.
#[derive(Debug, Clone, PartialEq)]
pub struct UpsilonSlice {
    /// The refined ϒ axis.
    pub upsilon_fine: Vec<f64>,
    /// χ² at each point of it.
    pub chi2_fine: Vec<f64>,
    /// ϒ of the slice minimum.
    pub best_upsilon: f64,
    /// The slice minimum.
    pub chi2_min: f64,
    /// Intervals at 68.27 / 95.45 / 99.73 % (1 dof: Δχ² ≤ 1, 4, 9), in [`Level::ALL`] order.
    pub intervals: [Interval; 3],
}

/// The one-parameter ϒ interval at τ = 0 (`docs/bounds.md` §8.4): `chi2_at(ϒ)` is evaluated on the
/// `axis` refined `refine` times (10 in the spec). The caller builds it from the class curves
/// and the bounds interpolated along ϒ, e.g. with [`crate::confront::reduce::CubicSpline`]:
/// χ²(ϒ) = −2 Σ_c L_c(B_c(ϒ, 0)).
pub fn upsilon_slice(
    axis: &[f64],
    refine: usize,
    chi2_at: impl Fn(f64) -> f64 + Sync,
) -> Result<UpsilonSlice, StatsError> {
    use rayon::prelude::*;
    let upsilon_fine = refine_axis(axis, refine)?;
    let chi2_fine: Vec<f64> = upsilon_fine.par_iter().map(|&u| chi2_at(u)).collect();
    slice_from_values(upsilon_fine, chi2_fine)
}

/// As [`upsilon_slice`] with the χ² values already computed on `upsilon_fine`.
pub fn slice_from_values(
    upsilon_fine: Vec<f64>,
    chi2_fine: Vec<f64>,
) -> Result<UpsilonSlice, StatsError> {
    let intervals = [
        interval_from_slice(&upsilon_fine, &chi2_fine, Level::Cl68.dchi2(1))?,
        interval_from_slice(&upsilon_fine, &chi2_fine, Level::Cl95.dchi2(1))?,
        interval_from_slice(&upsilon_fine, &chi2_fine, Level::Cl997.dchi2(1))?,
    ];
    let (k, chi2_min) = chi2_fine
        .iter()
        .copied()
        .enumerate()
        .filter(|(_, c)| c.is_finite())
        .fold(
            (0, f64::INFINITY),
            |acc, (k, c)| if c < acc.1 { (k, c) } else { acc },
        );
    Ok(UpsilonSlice {
        best_upsilon: upsilon_fine[k],
        chi2_min,
        upsilon_fine,
        chi2_fine,
        intervals,
    })
}

/// Šidák-corrected probability that the smallest of `n_informative` independent object
/// probabilities is as small as `p_min`: p_cat = 1 − (1 − P_min)^N (`docs/bounds.md` §8.4), computed
/// as −expm1(N ln(1 − P_min)) so that tiny values keep their digits. N = 0 gives 1.
pub fn sidak_p(p_min: f64, n_informative: usize) -> f64 {
    if n_informative == 0 {
        return 1.0;
    }
    -(n_informative as f64 * (-p_min.clamp(0.0, 1.0)).ln_1p()).exp_m1()
}

/// The absolute-consistency verdict at the best fit.
#[derive(Debug, Clone, PartialEq)]
pub struct AbsoluteConsistency {
    /// Number of informative objects N_inf.
    pub n_informative: usize,
    /// ln of the smallest object probability (kept in logs: it can be far below 1e-308).
    pub ln_p_min: f64,
    /// Šidák p_cat.
    pub p_cat: f64,
    /// False when p_cat < 1 − 0.9545: no grid point is consistent at 95.45 %, and every output
    /// must say so.
    pub consistent_cl95: bool,
    /// The objects with the smallest P, smallest first: (caller's key, ln P).
    pub worst: Vec<(usize, f64)>,
}

/// Šidák test over the informative objects' ln P at the best fit, given as (caller's key,
/// ln P) pairs; names the `n_worst` objects with the smallest P (ties by key, so deterministic).
pub fn absolute_consistency(ln_p_at_best: &[(usize, f64)], n_worst: usize) -> AbsoluteConsistency {
    let order = |a: &(usize, f64), b: &(usize, f64)| a.1.total_cmp(&b.1).then(a.0.cmp(&b.0));
    // The smallest and the `n_worst` smallest, kept in order as they are met: a sorted copy of
    // every pair was one more list of all informative objects at a large run's peak.
    let mut smallest: Option<(usize, f64)> = None;
    let mut worst: Vec<(usize, f64)> = Vec::with_capacity(n_worst.min(ln_p_at_best.len()) + 1);
    for &x in ln_p_at_best {
        if smallest.is_none_or(|s| order(&x, &s).is_lt()) {
            smallest = Some(x);
        }
        if worst.len() < n_worst || worst.last().is_some_and(|w| order(&x, w).is_lt()) {
            let at = worst.partition_point(|w| order(w, &x).is_le());
            worst.insert(at, x);
            worst.truncate(n_worst);
        }
    }
    let ln_p_min = smallest.map_or(0.0, |w| w.1);
    let n = ln_p_at_best.len();
    let p_cat = sidak_p(ln_p_min.exp(), n);
    AbsoluteConsistency {
        n_informative: n,
        ln_p_min,
        p_cat,
        consistent_cl95: p_cat >= 1.0 - Level::Cl95.probability(),
        worst,
    }
}

/// Settings of the crowding warning (`docs/bounds.md` §8.7).
#[derive(Debug, Clone, PartialEq)]
pub struct CrowdingOptions {
    /// Warn when more than this many informative objects of *each* class are near (default 30).
    pub min_per_class: usize,
    /// "Near" means |tension| ≤ this many σ at the best fit (default 3).
    pub z_window: f64,
}

impl Default for CrowdingOptions {
    fn default() -> Self {
        Self {
            min_per_class: 30,
            z_window: 3.0,
        }
    }
}

/// Counts behind the crowding warning.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Crowding {
    /// Informative `hburning` objects within the window of the MMHB.
    pub n_hburning_near: usize,
    /// Informative `brown_dwarf` objects within the window.
    pub n_brown_dwarf_near: usize,
    /// Both counts exceed the threshold: the product-of-P likelihood may be biased toward the
    /// sparser side and its intervals may under-cover; the report must say so.
    pub warn: bool,
}

/// How many of `measurements` (owned or borrowed, read once in order) pass `keep`: the counts
/// of [`crowding`] and [`PopulationTerm::new`].
fn count_where<I>(measurements: I, keep: impl Fn(&Measurement) -> bool) -> usize
where
    I: IntoIterator,
    I::Item: std::borrow::Borrow<Measurement>,
{
    measurements
        .into_iter()
        .filter(|m| keep(std::borrow::Borrow::borrow(m)))
        .count()
}

/// The §8.7 check: how many informative objects of each opposing MMHB class lie within
/// `z_window` σ (in the sense of their own tension, floor included) of the MMHB at the best fit.
///
/// The classes are read once, in order, as any iterator of measurements (a slice's, or
/// measurements made one at a time from the objects, so that a large catalogue's are not
/// copied for a count).
pub fn crowding<H, B>(
    hburning: H,
    brown_dwarf: B,
    mmhb_msun: f64,
    floor_msun: f64,
    opts: &CrowdingOptions,
) -> Crowding
where
    H: IntoIterator,
    H::Item: std::borrow::Borrow<Measurement>,
    B: IntoIterator,
    B::Item: std::borrow::Borrow<Measurement>,
{
    let window = SigmaWindow::new(opts.z_window);
    let near = |m: &Measurement| {
        m.informative() && window.contains(ln_prob_consistent(m, mmhb_msun, floor_msun))
    };
    let (h, b) = (count_where(hburning, near), count_where(brown_dwarf, near));
    Crowding {
        n_hburning_near: h,
        n_brown_dwarf_near: b,
        warn: h > opts.min_per_class && b > opts.min_per_class,
    }
}

/// |tension_sigma(ln P)| ≤ z, decided from ln P itself where it lies clearly inside or outside
/// [ln Φ(−z), ln Φ(z)] (σ = −Φ⁻¹(P) falls as ln P grows), and by inverting Φ only within a
/// relative 10⁻⁹ of either end: the inversion (Newton's method, several ln Φ) was most of the
/// crowding count, one per object of two classes. Newton's result is accurate to a few ulp,
/// far inside that margin, so the answer is the inversion's for every ln P
/// (`a_sigma_window_answers_as_the_inversion`).
#[derive(Debug, Clone, Copy)]
struct SigmaWindow {
    z: f64,
    /// Below: clearly |σ| > z (σ above z).
    lo_out: f64,
    /// Above (and below `hi_in`): clearly |σ| ≤ z.
    lo_in: f64,
    hi_in: f64,
    /// Above: clearly |σ| > z (σ below −z, or ln P = 0).
    hi_out: f64,
}

impl SigmaWindow {
    const MARGIN: f64 = 1e-9;

    fn new(z: f64) -> Self {
        let (a, b) = (ln_normal_cdf(-z), ln_normal_cdf(z));
        Self {
            z,
            lo_out: a - Self::MARGIN * a.abs(),
            lo_in: a + Self::MARGIN * a.abs(),
            hi_in: b - Self::MARGIN * b.abs(),
            hi_out: b + Self::MARGIN * b.abs(),
        }
    }

    fn contains(&self, ln_p: f64) -> bool {
        if ln_p > self.lo_in && ln_p < self.hi_in {
            true
        } else if ln_p < self.lo_out || ln_p > self.hi_out {
            false
        } else {
            // Near an end, at ln P = 0, or NaN.
            tension_sigma(ln_p).abs() <= self.z
        }
    }
}

/// The population-aware term of `docs/bounds.md` §8.7: within a mass window [M_lo, M_hi] around the
/// MMHB, flat true-mass densities on each side of the bound, profiled over the two densities,
/// add −n_star ln(M_hi − B) − n_bd ln(B − M_lo) to ℓ (n counted inside the window). It removes
/// the pull toward the sparser side when both classes crowd the bound; coverage at nominal
/// 95.45 % is then about 0.87–0.89 (edge estimation is not a regular problem).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PopulationTerm {
    /// Lower edge of the window, M☉.
    pub m_lo_msun: f64,
    /// Upper edge of the window, M☉.
    pub m_hi_msun: f64,
    /// Informative `hburning` objects with mass (or limit) inside the window.
    pub n_hburning: usize,
    /// Informative `brown_dwarf` objects inside the window.
    pub n_brown_dwarf: usize,
}

impl PopulationTerm {
    /// Counts the objects inside `window_msun` = (M_lo, M_hi), M_lo < M_hi. The classes are
    /// read once, in order, as any iterator of measurements (as [`crowding`] reads them).
    pub fn new<H, B>(
        window_msun: (f64, f64),
        hburning: H,
        brown_dwarf: B,
    ) -> Result<Self, StatsError>
    where
        H: IntoIterator,
        H::Item: std::borrow::Borrow<Measurement>,
        B: IntoIterator,
        B::Item: std::borrow::Borrow<Measurement>,
    {
        let (lo, hi) = window_msun;
        if !(lo.is_finite() && hi.is_finite() && lo < hi) {
            return Err(StatsError::InvalidInput(format!(
                "mass window [{lo}, {hi}] M☉ is not an ordered pair"
            )));
        }
        let inside = |m: &Measurement| m.informative() && m.mass_msun >= lo && m.mass_msun <= hi;
        let (n_hburning, n_brown_dwarf) = (
            count_where(hburning, inside),
            count_where(brown_dwarf, inside),
        );
        Ok(Self {
            m_lo_msun: lo,
            m_hi_msun: hi,
            n_hburning,
            n_brown_dwarf,
        })
    }

    /// Whether the window strictly contains [b_lo, b_hi] (the term is finite there).
    pub fn covers(&self, b_lo_msun: f64, b_hi_msun: f64) -> bool {
        self.m_lo_msun < b_lo_msun && b_hi_msun < self.m_hi_msun
    }

    /// The term added to ℓ at bound B; −∞ outside (M_lo, M_hi).
    pub fn ln_term(&self, b_msun: f64) -> f64 {
        if !(b_msun > self.m_lo_msun && b_msun < self.m_hi_msun) {
            return f64::NEG_INFINITY;
        }
        -(self.n_hburning as f64) * (self.m_hi_msun - b_msun).ln()
            - (self.n_brown_dwarf as f64) * (b_msun - self.m_lo_msun).ln()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_sigma_window_answers_as_the_inversion() {
        // Against |tension_sigma(ln P)| ≤ z itself (the definition; no other source): ln P
        // spread over the whole range, and dense around both ends of each window, where the
        // shortcut hands over to the inversion.
        let mut rng = super::super::reduce::SplitMix64::new(17);
        let mut uniform = || rng.next_f64();
        for z in [0.0, 0.5, 1.0, 2.0, 3.0, 5.0, 8.0, 30.0, -1.0] {
            let w = SigmaWindow::new(z);
            let mut lns: Vec<f64> = vec![0.0, -0.0, f64::NAN, f64::NEG_INFINITY, -1e-300];
            for end in [ln_normal_cdf(-z), ln_normal_cdf(z)] {
                for k in -2000..=2000 {
                    lns.push(end * (1.0 + k as f64 * 1e-12));
                    lns.push(end + k as f64 * f64::EPSILON * end.abs());
                }
            }
            for _ in 0..20_000 {
                lns.push(-(50.0 * uniform()).exp() + 1e-30);
                lns.push(-700.0 * uniform());
                lns.push(-(-700.0 * uniform()).exp());
            }
            for l in lns.into_iter().filter(|l| l.is_nan() || *l <= 0.0) {
                assert_eq!(
                    w.contains(l),
                    tension_sigma(l).abs() <= z,
                    "z = {z}, ln P = {l:e}"
                );
            }
        }
    }
}
