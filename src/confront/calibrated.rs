//! The calibrated likelihood for crowded bounds: each object's class label given its measured
//! mass, with the true-mass distribution estimated from the data instead of assumed flat.
//!
//! The product of consistency probabilities (`prob.rs`) is the likelihood of the labels with a
//! flat prior on every true mass; when many objects of two classes crowd a bound with unequal
//! densities on its two sides it pulls the fit toward the sparser side. Here a smooth mass
//! function φ(m) of *all* objects of the classes that meet at the bound (whatever their labels)
//! is deconvolved once on a uniform mass grid, independently of ϒ and τ, by the EM iteration of
//! a mixture with fixed components — Richardson–Lucy (Lucy 1974, AJ 79, 745), the
//! one-dimensional case of extreme deconvolution (Bovy, Hogg & Roweis 2011, AoAS 5, 1657) —
//! with a Gaussian smoothing step after each iteration (smoothed EM, Silverman, Jones, Wilson &
//! Nychka 1990, JRSS B 52, 271). Each object's probability of its label is then
//!
//! P_i(B) = ∫ L_i(m) φ(m) Φ(±(m − B)/s) dm / ∫ L_i(m) φ(m) dm,
//!
//! L_i the object's measurement likelihood (split normal), s the per-object scatter of the
//! bound. P_i depends on the grid point only through B, so the class is still tabulated once in
//! B ([`CalibratedCurve`]) and every grid point is an interpolation.
//!
//! At a one-sided edge (every object facing the bound on the same side of it, e.g. white dwarfs
//! below the Chandrasekhar mass) P_i is replaced by the likelihood of the population truncated
//! at each object's own bound, with the truncated distribution's normalisation
//! (docs/bounds.md#b8-12).
//!
//! **Stopping and smoothing rule.** φ starts flat; each iteration is one EM step followed by a
//! Gaussian smoothing of width `smoothing` × the median measurement error of the objects used
//! (default ¼: structure finer than a quarter of a typical error cannot be recovered and is not
//! needed by posteriors that are a full error wide); the iteration stops when the mean
//! log-likelihood per object changes by less than `tol` (1e-7) or after `max_iter` (200) steps.
//!
//! **Grouped rows (above 16 384 objects; a deliberate, measured approximation).** Each EM step
//! reads every object's kernel row (its likelihood averaged over the cells within ±6σ, ~110 cells), so the
//! exact fit holds memory in proportion to the catalogue (325 MB at 10⁶ objects). Above
//! [`Grouping::exact_up_to`] objects (16 384) the objects are grouped instead, in one pass, by
//! σ₋ and σ₊ on a logarithmic grid (5 % steps) and by measured mass in steps of 0.1 σ; each
//! non-empty group is one row, computed at its members' mean (mass, σ₋, σ₊) and weighted by
//! their count — the EM of the grouped data. The mean keeps the error second order in the
//! spread inside a group (its first-order terms cancel); a single-member group is its object.
//! The number of groups is bounded by the grids, not by N: per σ-cell at most
//! (grid width)/(0.1 σ) mass steps of rows ~12 σ/h cells long, i.e. about 12 × 600/0.1 cells
//! whatever σ is. Up to the threshold every object has its own row and the result is the
//! exact fit, to the bit. Measured on the invented scale catalogue (10⁶ objects, 350 088 in
//! the MMHB's fit): DEVELOPERS.md, "What remains for memory independent of N".
//!
//! ```
//! use dwarfbound::confront::calibrated::{deconvolve, DeconvolveOptions};
//! // 2000 exact-ish masses uniform on [0.05, 0.10] with 0.002 errors: φ is flat inside.
//! let objs: Vec<(f64, f64, f64)> =
//!     (0..2000).map(|i| (0.05 + 0.05 * (i as f64 + 0.5) / 2000.0, 0.002, 0.002)).collect();
//! let phi = deconvolve(&objs, (0.03, 0.12), &DeconvolveOptions::default()).unwrap();
//! let ratio = phi.density(0.065) / phi.density(0.085);
//! assert!((ratio - 1.0).abs() < 0.05, "{ratio}");
//! ```

use rayon::prelude::*;

use super::prob::{
    check_u32_positions, ln_prob_consistent, normal_cdf, ClassMeasurements, MassKind, Measurement,
    Side, StatsError,
};
use super::reduce::{CubicSpline, NeumaierSum, SplineEnd};

/// Settings of the deconvolution (defaults documented in the module text).
#[derive(Debug, Clone, PartialEq)]
pub struct DeconvolveOptions {
    /// Cells of the uniform mass grid (default 600).
    pub n_cells: usize,
    /// Largest number of EM iterations (default 200).
    pub max_iter: usize,
    /// Stop when the mean log-likelihood per object changes by less than this (1e-7).
    pub tol: f64,
    /// Smoothing width as a fraction of the median measurement error (default 0.25).
    pub smoothing: f64,
    /// Each object's likelihood is cut at this many σ on each side (default 6).
    pub window_sigma: f64,
    /// When the fit holds one row per group of similar objects instead of one per object
    /// (see [`Grouping`]).
    pub grouping: Grouping,
}

impl Default for DeconvolveOptions {
    fn default() -> Self {
        Self {
            n_cells: 600,
            max_iter: 200,
            tol: 1e-7,
            smoothing: 0.25,
            window_sigma: 6.0,
            grouping: Grouping::default(),
        }
    }
}

/// Above `exact_up_to` objects, the grouped form of the EM's sufficient
/// statistics (see the module text, "Grouped rows"). Objects are grouped by σ₋ and σ₊ on a
/// logarithmic grid of relative step `sigma_step` and by measured mass in steps of
/// `mass_step_sigma` × the lower edge of the smaller σ-cell; each non-empty group is one kernel
/// row, computed at the group's mean mass and mean widths and weighted by its count.
#[derive(Debug, Clone, PartialEq)]
pub struct Grouping {
    /// Up to this many objects every object has its own row (the exact fit, default 16 384:
    /// about 15 MB of rows); above it the objects are grouped.
    pub exact_up_to: usize,
    /// Mass step of a group in units of its σ (default 0.1).
    pub mass_step_sigma: f64,
    /// Relative step of the logarithmic σ₋ and σ₊ grids (default 0.05, i.e. 5 %).
    pub sigma_step: f64,
}

impl Grouping {
    /// The fit chosen by name (`--mass-function-fit`, the nightly config's
    /// `mass_function_fit`): `auto` (exact up to 16 384 objects in one fit, grouped above),
    /// `exact` (one row per object whatever the catalogue's size: memory and time grow with it)
    /// or `grouped` (always grouped, also for a small catalogue); `None` for another name.
    pub fn from_name(name: &str) -> Option<Self> {
        let auto = Self::default();
        match name {
            "auto" => Some(auto),
            "exact" => Some(Self {
                exact_up_to: usize::MAX,
                ..auto
            }),
            "grouped" => Some(Self {
                exact_up_to: 0,
                ..auto
            }),
            _ => None,
        }
    }

    /// The choice's name, as [`Grouping::from_name`] takes it (`exact up to N` for another
    /// threshold set in code).
    pub fn name(&self) -> String {
        match self.exact_up_to {
            0 => "grouped".into(),
            usize::MAX => "exact".into(),
            n if n == Self::default().exact_up_to => "auto".into(),
            n => format!("exact up to {n}"),
        }
    }
}

impl Default for Grouping {
    fn default() -> Self {
        Self {
            exact_up_to: 16_384,
            mass_step_sigma: 0.1,
            sigma_step: 0.05,
        }
    }
}

/// One group of the grouped form: its key, count and the sums of its members' (mass, σ₋, σ₊).
#[derive(Debug, Clone, Copy)]
struct GroupSums {
    key: (i32, i32, i64),
    count: u64,
    sum: [f64; 3],
}

/// The grouping key of an object: (σ₋ cell, σ₊ cell, mass step). A zero width has its own
/// σ cell (`i32::MIN`); the mass step is `mass_step_sigma` × the smaller positive σ-cell edge,
/// or × the mass-grid cell `h` when both widths are zero (the row is then a step at m0).
fn group_key(m: f64, lo: f64, hi: f64, grid_lo: f64, h: f64, g: &Grouping) -> (i32, i32, i64) {
    let ln_step = g.sigma_step.ln_1p();
    let cell = |s: f64| {
        if s > 0.0 {
            (s.ln() / ln_step).floor() as i32
        } else {
            i32::MIN
        }
    };
    let (ka, kb) = (cell(lo), cell(hi));
    let edge = match (ka, kb) {
        (i32::MIN, i32::MIN) => h,
        (i32::MIN, k) | (k, i32::MIN) => (k as f64 * ln_step).exp(),
        (a, b) => (a.min(b) as f64 * ln_step).exp(),
    };
    let km = ((m - grid_lo) / (g.mass_step_sigma * edge)).floor() as i64;
    (ka, kb, km)
}

/// Groups `objects` (one pass, in order) and returns each non-empty group's sums, sorted by key
/// so that the rows and the EM's sums do not depend on hashing.
fn group_objects(
    objects: impl Iterator<Item = (f64, f64, f64)>,
    grid_lo: f64,
    h: f64,
    g: &Grouping,
) -> Vec<GroupSums> {
    let mut map: std::collections::HashMap<(i32, i32, i64), (u64, [f64; 3])> =
        std::collections::HashMap::new();
    for (m, a, b) in objects {
        let e = map
            .entry(group_key(m, a, b, grid_lo, h, g))
            .or_insert((0, [0.0; 3]));
        e.0 += 1;
        e.1[0] += m;
        e.1[1] += a;
        e.1[2] += b;
    }
    let mut groups: Vec<GroupSums> = map
        .into_iter()
        .map(|(key, (count, sum))| GroupSums { key, count, sum })
        .collect();
    groups.sort_unstable_by_key(|g| g.key);
    groups
}

/// A deconvolved mass function on a uniform grid: probability per cell.
#[derive(Debug, Clone)]
pub struct MassFunction {
    /// Lower edge of the grid, M☉ (class units).
    pub lo_msun: f64,
    /// Cell width, M☉.
    pub cell_msun: f64,
    /// Probability of each cell (sums to 1).
    pub weights: Vec<f64>,
    /// Objects that entered the estimate.
    pub n_objects: usize,
    /// Kernel rows held by the fit: one per object on the exact path, one per group on the
    /// grouped path (what its memory grows with).
    pub n_rows: usize,
    /// Whether the objects were grouped (more than [`Grouping::exact_up_to`] of them): the
    /// report says so, since the grouped fit is an approximation.
    pub grouped: bool,
    /// EM iterations done.
    pub iterations: usize,
    /// Whether the stopping rule was met before `max_iter`.
    pub converged: bool,
    /// Smoothing width used, M☉.
    pub smoothing_msun: f64,
}

impl MassFunction {
    /// Density φ(m) per M☉ (0 outside the grid).
    pub fn density(&self, m_msun: f64) -> f64 {
        let k = ((m_msun - self.lo_msun) / self.cell_msun).floor();
        if k < 0.0 || k as usize >= self.weights.len() {
            return 0.0;
        }
        self.weights[k as usize] / self.cell_msun
    }

    fn centre(&self, k: usize) -> f64 {
        self.lo_msun + (k as f64 + 0.5) * self.cell_msun
    }

    /// Density per M☉ at `m_msun`, linear between cell centres (flat within half a cell of
    /// the grid's ends, 0 outside it): for a caller that weighs nodes finer than a cell and
    /// should not see the cells' steps.
    pub fn density_linear(&self, m_msun: f64) -> f64 {
        let n = self.weights.len();
        let x = (m_msun - self.lo_msun) / self.cell_msun;
        if n == 0 || !(0.0..=n as f64).contains(&x) {
            return 0.0;
        }
        let t = (x - 0.5).clamp(0.0, (n - 1) as f64);
        let k = (t as usize).min(n.saturating_sub(2));
        let f = t - k as f64;
        let next = self.weights.get(k + 1).copied().unwrap_or(self.weights[k]);
        ((1.0 - f) * self.weights[k] + f * next) / self.cell_msun
    }

    /// The same mass function smoothed by a Gaussian of 1σ `width_msun` on its grid, each
    /// cell's probability spread over the grid's cells only (renormalised, so the total is
    /// kept), as the deconvolution's own smoothing step does.
    pub fn smoothed(&self, width_msun: f64) -> MassFunction {
        let smoother = GaussianSmoother::new(width_msun / self.cell_msun, self.weights.len());
        MassFunction {
            weights: smoother.apply(&self.weights),
            smoothing_msun: self.smoothing_msun.hypot(width_msun.max(0.0)),
            ..self.clone()
        }
    }
}

/// ∫_{−∞}^{x} of a split-normal likelihood in the true mass m, peak at `m0`, widths `lo` below
/// and `hi` above, normalised to 1 (a step at m0 when both widths are 0).
fn split_cdf(x: f64, m0: f64, lo: f64, hi: f64) -> f64 {
    let tot = lo + hi;
    if tot <= 0.0 {
        return if x > m0 {
            1.0
        } else if x < m0 {
            0.0
        } else {
            0.5
        };
    }
    let (wl, wh) = (lo / tot, hi / tot);
    if x <= m0 {
        if lo > 0.0 {
            2.0 * wl * normal_cdf((x - m0) / lo)
        } else {
            0.0
        }
    } else if hi > 0.0 {
        wl + 2.0 * wh * (normal_cdf((x - m0) / hi) - 0.5)
    } else {
        1.0
    }
}

/// The rows the EM reads: (first cell, values) per object, or per group on the grouped path.
type KernelRows = Vec<(usize, Vec<f64>)>;

/// One object's likelihood averaged over each cell of a grid: (first cell, values). Empty when
/// the object's window misses the grid.
fn kernel_row(
    m0: f64,
    lo: f64,
    hi: f64,
    grid_lo: f64,
    h: f64,
    n: usize,
    window: f64,
) -> (usize, Vec<f64>) {
    let a = ((m0 - window * lo - grid_lo) / h).floor().max(0.0);
    let b = ((m0 + window * hi - grid_lo) / h).floor();
    if b < 0.0 || a >= n as f64 {
        return (0, Vec::new());
    }
    let (a, b) = (a as usize, (b as usize).min(n - 1));
    let mut prev = split_cdf(grid_lo + a as f64 * h, m0, lo, hi);
    let mut row = Vec::with_capacity(b + 1 - a);
    for k in a..=b {
        let next = split_cdf(grid_lo + (k + 1) as f64 * h, m0, lo, hi);
        row.push(((next - prev) / h).max(0.0));
        prev = next;
    }
    (a, row)
}

/// Deconvolves the mass function of `objects` = (mass, σ₋, σ₊) in M☉ on the grid `domain`
/// (smoothed EM, see the module text). Objects whose likelihood window misses the domain are
/// left out.
pub fn deconvolve(
    objects: &[(f64, f64, f64)],
    domain_msun: (f64, f64),
    opts: &DeconvolveOptions,
) -> Result<MassFunction, StatsError> {
    deconvolve_passes(objects.len(), || objects.iter().copied(), domain_msun, opts)
}

/// [`deconvolve`] of the `n_objects` objects that `objects()` yields, in the same order at each
/// call: the grouped fit reads them in a few passes and never holds them (at 10⁶ objects the
/// list was 9 MB at the run's peak); the exact fit, a few thousand objects, collects them.
fn deconvolve_passes<I>(
    n_objects: usize,
    objects: impl Fn() -> I,
    domain_msun: (f64, f64),
    opts: &DeconvolveOptions,
) -> Result<MassFunction, StatsError>
where
    I: Iterator<Item = (f64, f64, f64)>,
{
    let (lo, hi) = domain_msun;
    if !(lo.is_finite() && hi.is_finite() && hi > lo) || opts.n_cells < 8 {
        return Err(StatsError::InvalidInput(format!(
            "deconvolution grid [{lo}, {hi}] M☉ with {} cells is not usable",
            opts.n_cells
        )));
    }
    let g = &opts.grouping;
    let positive = |x: f64| x > 0.0 && x.is_finite();
    if !(positive(g.mass_step_sigma) && positive(g.sigma_step)) {
        return Err(StatsError::InvalidInput(format!(
            "grouping steps {} σ in mass and {} in ln σ must be positive",
            g.mass_step_sigma, g.sigma_step
        )));
    }
    let n = opts.n_cells;
    let h = (hi - lo) / n as f64;
    // Exact: one row per object, weight 1. Grouped: one row per group at its
    // members' mean, weighted by its count.
    let (rows, weights): (KernelRows, Option<Vec<f64>>) = if n_objects <= opts.grouping.exact_up_to
    {
        let rows = objects()
            .collect::<Vec<_>>()
            .par_iter()
            .map(|&(m, a, b)| kernel_row(m, a, b, lo, h, n, opts.window_sigma))
            .filter(|(_, r)| r.iter().any(|&v| v > 0.0))
            .collect();
        (rows, None)
    } else {
        let groups = group_objects(objects(), lo, h, &opts.grouping);
        let (rows, weights): (Vec<_>, Vec<f64>) = groups
            .par_iter()
            .map(|g| {
                let c = g.count as f64;
                let (m, a, b) = (g.sum[0] / c, g.sum[1] / c, g.sum[2] / c);
                (kernel_row(m, a, b, lo, h, n, opts.window_sigma), c)
            })
            .filter(|((_, r), _)| r.iter().any(|&v| v > 0.0))
            .unzip();
        (rows, Some(weights))
    };
    let mut sig: Vec<f64> = objects()
        .filter(|(m, _, _)| *m >= lo && *m <= hi)
        .map(|(_, a, b)| 0.5 * (a + b))
        .collect();
    sig.sort_by(f64::total_cmp);
    let median = sig.get(sig.len() / 2).copied().unwrap_or(0.0);
    let smoothing_msun = opts.smoothing * median;
    let smoother = GaussianSmoother::new(smoothing_msun / h, n);
    // Start from the smoothed histogram of the measured masses (plus a flat tenth, so no cell
    // starts at zero): EM converges in far fewer steps than from a flat start.
    let mut start = vec![0.1 * n_objects.max(1) as f64 / n as f64; n];
    for (m, _, _) in objects() {
        let k = ((m - lo) / h).floor();
        if k >= 0.0 && (k as usize) < n {
            start[k as usize] += 1.0;
        }
    }
    let mut phi = GaussianSmoother::new(median / h, n).apply(&start);
    let total: f64 = phi.iter().sum();
    phi.iter_mut().for_each(|v| *v /= total);
    let n_rows = rows.len();
    let n_obj = weights
        .as_ref()
        .map_or(n_rows, |w| w.iter().sum::<f64>() as usize);
    let mut prev_ll = f64::NEG_INFINITY;
    let mut iterations = 0;
    let mut converged = false;
    if n_obj == 0 {
        return Ok(MassFunction {
            lo_msun: lo,
            cell_msun: h,
            weights: phi,
            n_objects: 0,
            n_rows,
            grouped: weights.is_some(),
            iterations,
            converged: true,
            smoothing_msun,
        });
    }
    while iterations < opts.max_iter {
        iterations += 1;
        // Fixed chunks, summed in order: the result does not depend on the thread count.
        let chunk = 256;
        // A weight of 1 (the exact path) multiplies exactly, so that path's sums are the
        // same bits as before the grouped form existed.
        let partials: Vec<(Vec<f64>, f64)> = rows
            .par_chunks(chunk)
            .enumerate()
            .map(|(c, rs)| {
                let mut acc = vec![0.0; n];
                let mut ll = 0.0;
                for (i, (a, r)) in rs.iter().enumerate() {
                    let w = weights.as_ref().map_or(1.0, |w| w[c * chunk + i]);
                    let denom: f64 = r.iter().zip(&phi[*a..]).map(|(k, p)| k * p).sum();
                    if denom > 0.0 {
                        ll += w * denom.ln();
                        // Zipped slices, not indices: without bounds checks the update of the
                        // cells vectorises (the same operations per cell, so the same bits).
                        let cells = acc[*a..].iter_mut().zip(&phi[*a..]);
                        for ((x, p), k) in cells.zip(r) {
                            *x += w * (k * p / denom);
                        }
                    }
                }
                (acc, ll)
            })
            .collect();
        let mut acc = vec![0.0; n];
        let mut ll = 0.0;
        for (p, l) in partials {
            for (x, y) in acc.iter_mut().zip(p) {
                *x += y;
            }
            ll += l;
        }
        let mut next = smoother.apply(&acc);
        let total: f64 = next.iter().sum();
        if total.is_nan() || total <= 0.0 {
            break;
        }
        next.iter_mut().for_each(|v| *v /= total);
        phi = next;
        let mean_ll = ll / n_obj as f64;
        if (mean_ll - prev_ll).abs() < opts.tol {
            converged = true;
            break;
        }
        prev_ll = mean_ll;
    }
    Ok(MassFunction {
        lo_msun: lo,
        cell_msun: h,
        weights: phi,
        n_objects: n_obj,
        n_rows,
        grouped: weights.is_some(),
        iterations,
        converged,
        smoothing_msun,
    })
}

/// Mass-conserving Gaussian smoothing on a finite grid: each cell's content is spread with a
/// Gaussian renormalised to the cells inside the grid, so nothing leaks at the edges.
struct GaussianSmoother {
    kernel: Vec<f64>,
    half: usize,
    norms: Vec<f64>,
}

impl GaussianSmoother {
    fn new(width_cells: f64, n: usize) -> Self {
        if width_cells.is_nan() || width_cells <= 0.05 {
            return Self {
                kernel: vec![1.0],
                half: 0,
                norms: vec![1.0; n],
            };
        }
        let half = (4.0 * width_cells).ceil() as usize;
        let kernel: Vec<f64> = (0..=2 * half)
            .map(|j| {
                let d = j as f64 - half as f64;
                (-0.5 * (d / width_cells).powi(2)).exp()
            })
            .collect();
        let norms = (0..n)
            .map(|src| {
                (0..=2 * half)
                    .filter(|&j| {
                        let t = src as isize + j as isize - half as isize;
                        t >= 0 && (t as usize) < n
                    })
                    .map(|j| kernel[j])
                    .sum()
            })
            .collect();
        Self {
            kernel,
            half,
            norms,
        }
    }

    fn apply(&self, v: &[f64]) -> Vec<f64> {
        let n = v.len();
        let mut out = vec![0.0; n];
        for (src, &x) in v.iter().enumerate() {
            if x == 0.0 {
                continue;
            }
            let x = x / self.norms[src];
            for (j, &k) in self.kernel.iter().enumerate() {
                let t = src as isize + j as isize - self.half as isize;
                if t >= 0 && (t as usize) < n {
                    out[t as usize] += x * k;
                }
            }
        }
        out
    }
}

/// Settings of the calibrated class curve.
#[derive(Debug, Clone, PartialEq)]
pub struct CalibratedOptions {
    /// The deconvolution.
    pub deconvolve: DeconvolveOptions,
    /// Whether a one-sided edge uses the truncated-population probabilities
    /// (docs/bounds.md#b8-12; default true; false keeps the label probabilities alone, for
    /// the coverage comparison).
    pub edge_truncation: bool,
}

impl Default for CalibratedOptions {
    fn default() -> Self {
        Self {
            deconvolve: DeconvolveOptions::default(),
            edge_truncation: true,
        }
    }
}

/// The likelihood of a one-sided edge as the truncation point of the population.
///
/// When every object facing a bound must lie on the same side of it (only white dwarfs at the
/// Chandrasekhar mass, say), the label probability P_i(B) of the module text can only grow as
/// the bound moves away from the data. At the true edge each object near it keeps P_i < 1 (its
/// posterior, with φ smoothed, leaks past the edge), the shortfalls add up over objects, and Δχ²
/// at the truth is no longer χ²-distributed: the interval under-covers more the more objects
/// sit at the edge. The fix is to write the likelihood of the masses under the population model
/// *truncated* at the bound, with the truncated distribution's normalisation (the likelihood of
/// a truncation point, Hall 1982, Ann. Stat. 10, 556; the same model gives the neutron-star
/// maximum mass in Alsing, Silva & Berti 2018, MNRAS 478, 1377). Each object has its own bound
/// B + ε, ε ~ N(0, s²) the per-object scatter, and its true mass is drawn from φ truncated
/// there:
///
/// f(m | B) = φ(m) G(m, B),  G(m, B) = ∫ N(ε; 0, s²) 1[m ≤ B + ε] / F(B + ε) dε,
///
/// F(x) = ∫_{m ≤ x} φ (mirrored, m ≥ B + ε, for a lower edge). Relative to the untruncated
/// model each object's likelihood is multiplied by P̃_i(B) = ∫ post_i(m) G(m, B) dm, which
/// replaces P_i. Where the whole population lies inside the cut (F = 1) this is P_i again;
/// near the edge 1/F ≥ 1 gives back exactly the probability that truncating a population
/// removes from its tail, so the likelihood is flat once the bound has passed the data instead of
/// rising to the grid edge; and a population lying beyond the bound is still penalised as
/// before, because the truncated model cannot put mass where F vanishes. G is tabulated per
/// node on the mass grid (ε on the same cells), so the cost per object and node stays
/// O(window).
#[derive(Debug, Clone)]
struct EdgeKernel {
    side: Side,
    /// Half-width W in cells of the kernel window around the node's cell.
    half: usize,
    /// Per node: G on the far allowed side (constant there).
    far: Vec<f64>,
    /// Per node: G at cells K − W ..= K + W, K the node's cell.
    window: Vec<Vec<f64>>,
}

/// ε weights on the cell grid: ω_j for j = −D..=D (tails folded into the end cells).
fn epsilon_weights(scatter: f64, h: f64, d_half: usize) -> Vec<f64> {
    if scatter <= 0.0 || d_half == 0 {
        return vec![1.0];
    }
    let d = d_half as isize;
    (-d..=d)
        .map(|j| {
            let lo = if j == -d {
                0.0
            } else {
                normal_cdf((j as f64 - 0.5) * h / scatter)
            };
            let hi = if j == d {
                1.0
            } else {
                normal_cdf((j as f64 + 0.5) * h / scatter)
            };
            hi - lo
        })
        .collect()
}

impl EdgeKernel {
    /// G(k, B) for every cell k, B = a cut at fractional cell position `pos` (cell centres at
    /// integers): a cut at x keeps cell k with weight a = clamp(½ + (x − k), 0, 1) (upper edge)
    /// or clamp(½ − (x − k), 0, 1) (lower edge).
    fn kernel_at(phi: &[f64], side: Side, omega: &[f64], pos: f64) -> Vec<f64> {
        let n = phi.len();
        let d = (omega.len() / 2) as f64;
        // cumulative: cum[k] = Σ_{k' < k} φ
        let mut cum = vec![0.0; n + 1];
        for k in 0..n {
            cum[k + 1] = cum[k] + phi[k];
        }
        let total = cum[n];
        let keep = |k: usize, x: f64| -> f64 {
            let t = x - k as f64;
            match side {
                Side::AtMost => (0.5 + t).clamp(0.0, 1.0),
                Side::AtLeast => (0.5 - t).clamp(0.0, 1.0),
            }
        };
        let mass_kept = |x: f64| -> f64 {
            // Σ_k φ_k keep(k, x): full cells on the allowed side, the fractional cell(s) at x.
            let f = (x + 0.5).floor();
            let kk = f.clamp(0.0, n as f64) as usize;
            let frac = if f >= 0.0 && (f as usize) < n {
                phi[f as usize] * keep(f as usize, x)
            } else {
                0.0
            };
            match side {
                Side::AtMost => cum[kk] + frac,
                Side::AtLeast => {
                    let above = if f + 1.0 <= n as f64 && f + 1.0 >= 0.0 {
                        total - cum[(f + 1.0) as usize]
                    } else if f + 1.0 < 0.0 {
                        total
                    } else {
                        0.0
                    };
                    above + frac
                }
            }
        };
        let mut g = vec![0.0; n];
        let tiny = 1e-300;
        for (j, w) in omega.iter().enumerate() {
            let x = pos + j as f64 - d;
            let f = mass_kept(x);
            if f <= tiny {
                continue;
            }
            let c = w / f;
            for (k, gk) in g.iter_mut().enumerate() {
                let a = keep(k, x);
                if a > 0.0 {
                    *gk += c * a;
                }
            }
        }
        g
    }
}

/// Below this, the calibrated P (whose posterior is cut at ±6σ and so ends abruptly) is
/// continued by the flat-prior tail, shifted to join it: ln P = ln P_flat(B) + (ln P − ln P_flat)
/// at the last node above the switch. ln P then stays finite, monotone and smooth far on the
/// wrong side, where the calibrated value carries no information anyway.
const TAIL_SWITCH: f64 = 1e-6;

/// One object on the calibrated path: only what its tables are recomputed from. Its
/// posterior over the mass cells and its P at the nodes (about a kilobyte per object) are
/// rebuilt on demand ([`CalibratedCurve::object_table`]), so memory does not grow with the
/// catalogue by more than this record per object. On this path the measurement is always a
/// measured mass with its two widths, so it is kept as those numbers and made again
/// ([`CalObject::measurement`], the same bits): 48 bytes, against 64 with the general
/// [`Measurement`] and a `usize` position (a curve holds one per calibrated object, and a run
/// holds two curves at once: the main one and the other floor's).
#[derive(Debug, Clone)]
struct CalObject {
    mass_msun: f64,
    lo: f64,
    hi: f64,
    scale: f64,
    /// ln P − ln P_flat where the tail takes over (0 if it never does on the nodes).
    tail_offset: f64,
    /// Position in the caller's list of the class.
    index: u32,
    side: Side,
}

impl CalObject {
    /// The record of the measured object at `index`; `None` for a limit (never on this path).
    fn new(index: u32, m: &Measurement, tail_offset: f64) -> Option<Self> {
        let MassKind::Measured { lo, hi } = m.kind else {
            return None;
        };
        Some(Self {
            mass_msun: m.mass_msun,
            lo,
            hi,
            scale: m.scale,
            tail_offset,
            index,
            side: m.side,
        })
    }

    /// The measurement it was made from, to the bit.
    fn measurement(&self) -> Measurement {
        Measurement {
            mass_msun: self.mass_msun,
            kind: MassKind::Measured {
                lo: self.lo,
                hi: self.hi,
            },
            side: self.side,
            scale: self.scale,
        }
    }

    /// Its position in the class, for the searches by position.
    fn position(&self) -> usize {
        self.index as usize
    }
}

/// What each mass cell contributes to an object's P at one bound
/// ([`CalibratedCurve::cell_probabilities`]).
enum CellProbabilities {
    /// The truncated-population kernel G(k, b) of a one-sided edge.
    Edge(Vec<f64>),
    /// The probability of each label for a true mass at the cell's centre.
    Label {
        at_least: Vec<f64>,
        at_most: Vec<f64>,
    },
}

/// One object as the tabulation has it in hand: its table, ln P beyond its nodes where that
/// is constant ([`ObjectTable::constant_ends`]) and ln P at the check points.
struct Tabulated {
    object: CalObject,
    table: ObjectTable,
    ends: (Option<f64>, Option<f64>),
    at_checks: Vec<f64>,
}

/// The cells' contributions an object of label side `side` reads, from its first cell on.
fn cell_row(side: Side, cells: &CellProbabilities, first: usize) -> &[f64] {
    let all = match cells {
        CellProbabilities::Edge(k) => k,
        CellProbabilities::Label { at_least, at_most } => match side {
            Side::AtLeast => at_least,
            Side::AtMost => at_most,
        },
    };
    all.get(first..).unwrap_or(&[])
}

/// One object's tables, rebuilt from its measurement and the mass function whenever needed.
#[derive(Debug)]
struct ObjectTable {
    /// First mass cell of its posterior.
    first_cell: usize,
    /// Posterior probability of each cell from `first_cell`.
    posterior: Vec<f64>,
    /// First node with a tabulated P, and P there onwards.
    first_node: isize,
    p_nodes: Vec<f64>,
}

impl ObjectTable {
    /// ln P before the first and after the last tabulated node, where P is its end value and
    /// that value is above the tail switch (so that ln P does not depend on the bound there);
    /// `None` for an end on the tail, or without nodes.
    fn constant_ends(&self) -> (Option<f64>, Option<f64>) {
        let end = |p: Option<&f64>| p.filter(|&&p| p >= TAIL_SWITCH).map(|p| p.ln());
        (end(self.p_nodes.first()), end(self.p_nodes.last()))
    }
}

/// One object of a [`CalibratedCurve`] as a function of the bound, with its table built once
/// ([`CalibratedCurve::object`]).
#[derive(Debug)]
pub struct ObjectCurve<'a> {
    curve: &'a CalibratedCurve,
    what: ObjectWhat<'a>,
}

#[derive(Debug)]
enum ObjectWhat<'a> {
    /// On the calibrated path, with its table (`None` if its posterior vanished on the grid).
    Calibrated(&'a CalObject, Option<ObjectTable>),
    /// As `Calibrated`, with P at the nodes formed only where asked: the posterior (in a table
    /// without `p_nodes`) and how each node's value is formed.
    Light(&'a CalObject, Option<(ObjectTable, ObjectNodes)>),
    /// On the flat-prior product formula.
    Flat(&'a Measurement),
    /// Not informative over the range: ln P = 0.
    Uninformative,
}

impl ObjectCurve<'_> {
    /// ln P of the object at bound `b_msun` (class units), the same to the bit as
    /// [`CalibratedCurve::ln_p`].
    pub fn ln_p(&self, b_msun: f64) -> f64 {
        let c = self.curve;
        match &self.what {
            ObjectWhat::Calibrated(o, tab) => c.ln_p_object(o, tab.as_ref(), b_msun),
            ObjectWhat::Light(o, None) => {
                ln_prob_consistent(&o.measurement(), b_msun, c.scatter_msun)
            }
            ObjectWhat::Light(o, Some((tab, nodes))) => c.ln_p_light(o, tab, nodes, b_msun),
            ObjectWhat::Flat(m) => ln_prob_consistent(m, b_msun, c.scatter_msun),
            ObjectWhat::Uninformative => 0.0,
        }
    }
}

/// Objects whose tables are built at a time while the curve is tabulated: enough to keep
/// both cores busy, few enough that the tables in hand stay a few megabytes.
const TABULATION_CHUNK: usize = 4096;

/// Maps a measurement to class units: (mass, σ₋, σ₊), widths 0 for a limit.
fn unit(m: &Measurement) -> (f64, f64, f64) {
    match m.kind {
        MassKind::Measured { lo, hi } => (m.mass_msun / m.scale, lo / m.scale, hi / m.scale),
        _ => (m.mass_msun / m.scale, 0.0, 0.0),
    }
}

/// The calibrated log-likelihood of one or more classes that meet at a bound, tabulated in B
/// (class units) at the centres of the mass-function cells that fall in the requested range.
#[derive(Debug)]
pub struct CalibratedCurve {
    phi: MassFunction,
    scatter_msun: f64,
    node_first_cell: usize,
    n_nodes: usize,
    spline: CubicSpline,
    /// Per class: its own share of the tabulated curve.
    class_splines: Vec<CubicSpline>,
    /// Per class (in the order given): objects on the calibrated path.
    objects: Vec<Vec<CalObject>>,
    /// Per class: objects kept on the flat-prior product formula (limits, errors too wide for
    /// the grid), as (index, measurement).
    flat: Vec<Vec<(usize, Measurement)>>,
    achieved_error: f64,
    /// The truncated-population kernel of a one-sided edge; `None` when classes on both sides
    /// meet at the bound.
    edge: Option<EdgeKernel>,
    /// ε weights of the per-object scatter on the cell grid (for direct evaluation).
    omega: Vec<f64>,
    /// Each object's likelihood window, σ (the deconvolution's).
    window_sigma: f64,
    /// Half-width D of the Gaussian step table, cells.
    d_half: usize,
    /// Gaussian step table T[d] = Φ(d h / s) for d in −D..=D.
    step_table: Vec<f64>,
}

impl CalibratedCurve {
    /// Builds the curve of the classes in `classes` (all objects of each, in the caller's
    /// order; class units, i.e. masses and widths divided by each object's scale), over the
    /// bound range `range_msun` (not padded), with per-object scatter `scatter_msun` of the
    /// bound (≥ 0).
    ///
    /// The class sums at the nodes (and the direct sums that measure the achieved error) are
    /// accumulated object by object in a fixed order, [`TABULATION_CHUNK`] objects' tables at
    /// a time, which are then dropped: the result is the same to the bit as holding every
    /// table, and the memory does not grow with the number of objects beyond one small record
    /// each. Each class is a slice or a [`ClassMeasurements`] (measurements made on demand:
    /// only the objects kept below are copied).
    pub fn build<'a, C>(
        classes: &[C],
        scatter_msun: f64,
        range_msun: (f64, f64),
        opts: &CalibratedOptions,
    ) -> Result<Self, StatsError>
    where
        C: Into<ClassMeasurements<'a>> + Copy,
    {
        let classes: Vec<ClassMeasurements<'a>> = classes.iter().map(|&c| c.into()).collect();
        Self::build_from(&classes, scatter_msun, range_msun, opts)
    }

    /// [`CalibratedCurve::build`] once its classes are views.
    fn build_from(
        classes: &[ClassMeasurements<'_>],
        scatter_msun: f64,
        range_msun: (f64, f64),
        opts: &CalibratedOptions,
    ) -> Result<Self, StatsError> {
        let (b_lo, b_hi) = range_msun;
        if !(b_lo.is_finite() && b_hi.is_finite() && b_hi > b_lo && b_lo > 0.0) {
            return Err(StatsError::InvalidInput(format!(
                "calibrated range [{b_lo}, {b_hi}] M☉ is not usable"
            )));
        }
        if !(scatter_msun.is_finite() && scatter_msun >= 0.0) {
            return Err(StatsError::InvalidFloor {
                floor_msun: scatter_msun,
            });
        }
        for c in classes {
            check_u32_positions(c.len(), "in one class")?;
        }
        let dopts = &opts.deconvolve;
        let w = dopts.window_sigma;
        // Candidates: informative measured objects that matter somewhere in the range.
        let tiny = 1e-13;
        let mut cand_sigma: Vec<f64> = Vec::new();
        let flat_floor = scatter_msun;
        for ms in classes {
            for m in ms.iter() {
                if !m.informative() || !matches!(m.kind, MassKind::Measured { .. }) {
                    continue;
                }
                let worst = match m.side {
                    Side::AtLeast => b_hi,
                    Side::AtMost => b_lo,
                };
                if ln_prob_consistent(&m, worst, flat_floor) <= -tiny {
                    let (_, a, b) = unit(&m);
                    cand_sigma.push(a.max(b));
                }
            }
        }
        cand_sigma.sort_by(f64::total_cmp);
        let q90 = cand_sigma
            .get((cand_sigma.len() * 9) / 10)
            .copied()
            .unwrap_or(0.01 * b_hi);
        drop(cand_sigma);
        let margin = w * q90 + 4.0 * scatter_msun;
        let dom = ((b_lo - margin).max(0.0), b_hi + margin);
        let in_domain = || {
            classes
                .iter()
                .flat_map(|ms| ms.iter())
                .filter(|m| matches!(m.kind, MassKind::Measured { .. }))
                .map(|m| unit(&m))
                .filter(|&(m, _, _)| m >= dom.0 && m <= dom.1)
        };
        let phi = deconvolve_passes(in_domain().count(), in_domain, dom, dopts)?;
        // A one-sided edge: every object facing the bound must lie on the same side of it.
        let mut sides = classes.iter().flat_map(|ms| ms.iter()).map(|m| m.side);
        let edge_side = sides
            .next()
            .filter(|&first| opts.edge_truncation && sides.all(|s| s == first));
        let h = phi.cell_msun;
        let n_cells = phi.weights.len();
        // Nodes: cell centres inside [b_lo − h, b_hi + h].
        let node_first_cell = (((b_lo - dom.0) / h).floor() as usize).saturating_sub(1);
        let node_last_cell = ((((b_hi - dom.0) / h).ceil() as usize) + 1).min(n_cells - 1);
        let n_nodes = node_last_cell + 1 - node_first_cell;
        let d_half = if scatter_msun > 0.0 {
            ((6.0 * scatter_msun / h).ceil() as usize).max(1)
        } else {
            0
        };
        let step_table: Vec<f64> = (0..=2 * d_half)
            .map(|j| {
                let d = j as f64 - d_half as f64;
                if scatter_msun > 0.0 {
                    normal_cdf(d * h / scatter_msun)
                } else {
                    0.5
                }
            })
            .collect();
        let edge = edge_side.map(|side| {
            let omega = epsilon_weights(scatter_msun, h, d_half);
            let half = d_half + 1;
            let per_node: Vec<(f64, Vec<f64>)> = (0..n_nodes)
                .into_par_iter()
                .map(|g| {
                    let kc = node_first_cell + g;
                    let full = EdgeKernel::kernel_at(&phi.weights, side, &omega, kc as f64);
                    let far_cell = match side {
                        Side::AtMost => kc.checked_sub(half + 1),
                        Side::AtLeast => Some(kc + half + 1).filter(|&k| k < n_cells),
                    };
                    let far = far_cell.map_or(0.0, |k| full[k]);
                    let win = (0..=2 * half)
                        .map(|j| {
                            let k = kc as isize + j as isize - half as isize;
                            if k >= 0 && (k as usize) < n_cells {
                                full[k as usize]
                            } else {
                                0.0
                            }
                        })
                        .collect();
                    (far, win)
                })
                .collect();
            let (far, window) = per_node.into_iter().unzip();
            EdgeKernel {
                side,
                half,
                far,
                window,
            }
        });
        let mut curve = Self {
            phi,
            scatter_msun,
            node_first_cell,
            n_nodes,
            spline: CubicSpline::natural(&[b_lo, b_hi], &[0.0, 0.0])?,
            class_splines: Vec::new(),
            objects: Vec::new(),
            flat: Vec::new(),
            achieved_error: f64::NAN,
            edge,
            omega: epsilon_weights(scatter_msun, h, d_half),
            window_sigma: w,
            d_half,
            step_table,
        };
        let xs: Vec<f64> = (0..n_nodes).map(|g| curve.node_b(g)).collect();
        // Achieved error: spline against the direct sum (each object's posterior integrated at
        // the exact B) at a dozen node midpoints spread over the range. The direct sums are
        // accumulated in the same pass as the node sums, while each object's table is in hand.
        let check_bs: Vec<f64> = (0..n_nodes.saturating_sub(1))
            .step_by((n_nodes / 12).max(1))
            .map(|g| 0.5 * (xs[g] + xs[g + 1]))
            .collect();
        // What each cell contributes to P at each check point, computed once per point (the
        // same terms, to the bit, as evaluating each object's cells there: one normal CDF per
        // cell and object was half of the build at 10⁵ objects).
        let check_cells: Vec<CellProbabilities> = check_bs
            .par_iter()
            .map(|&b| curve.cell_probabilities(b))
            .collect();
        // Per class: the node sums (per node) and the direct sums (per check point).
        let mut node_totals: Vec<Vec<f64>> = Vec::new();
        let mut check_totals: Vec<Vec<f64>> = Vec::new();
        let mut objects = Vec::new();
        let mut flat = Vec::new();
        for ms in classes {
            let mut cal_idx = Vec::new();
            let mut fl = Vec::new();
            for (i, m) in ms.iter().enumerate() {
                if !m.informative() {
                    continue;
                }
                let worst = match m.side {
                    Side::AtLeast => b_hi,
                    Side::AtMost => b_lo,
                };
                if ln_prob_consistent(&m, worst, flat_floor) > -tiny {
                    continue;
                }
                let (m0, a, b) = unit(&m);
                let inside = matches!(m.kind, MassKind::Measured { .. })
                    && m0 + w * b <= dom.1
                    && (m0 - w * a >= dom.0 || dom.0 == 0.0);
                if inside {
                    cal_idx.push(i);
                } else {
                    fl.push((i, m));
                }
            }
            let mut node_acc = vec![NeumaierSum::default(); n_nodes];
            let mut check_acc = vec![NeumaierSum::default(); check_bs.len()];
            let mut cal: Vec<CalObject> = Vec::new();
            for chunk in cal_idx.chunks(TABULATION_CHUNK) {
                // Each object's table, with (while its posterior is in hand) its ln P at the
                // check points and, beyond its tabulated nodes, where P is its end value above
                // the tail switch, that ln P once (the same values, to the bit, as evaluated
                // node by node: most of the node sums at 10⁶ objects).
                let done: Vec<Option<Tabulated>> = chunk
                    .par_iter()
                    .map(|&i| {
                        let m = ms.get(i)?;
                        let table = curve.object_table(&m)?;
                        // Positions fit in 32 bits: longer classes are refused above.
                        let object = CalObject::new(i as u32, &m, curve.tail_offset(&m, &table))?;
                        let at_checks = curve.ln_ps_from_cells(
                            &object,
                            table.first_cell,
                            &table.posterior,
                            &check_cells,
                            &check_bs,
                        );
                        Some(Tabulated {
                            ends: table.constant_ends(),
                            object,
                            table,
                            at_checks,
                        })
                    })
                    .collect();
                node_acc.par_iter_mut().enumerate().for_each(|(g, acc)| {
                    let b = curve.node_b(g);
                    for d in done.iter().flatten() {
                        acc.add(curve.ln_p_at_node(d, g, b));
                    }
                });
                for d in done.iter().flatten() {
                    for (acc, &x) in check_acc.iter_mut().zip(&d.at_checks) {
                        acc.add(x);
                    }
                }
                cal.extend(done.into_iter().flatten().map(|d| d.object));
            }
            // Objects whose posterior vanished on the grid fall back to the flat prior.
            let kept: std::collections::BTreeSet<usize> =
                cal.iter().map(CalObject::position).collect();
            for &i in &cal_idx {
                if !kept.contains(&i) {
                    fl.extend(ms.get(i).map(|m| (i, m)));
                }
            }
            fl.sort_by_key(|x| x.0);
            node_acc.par_iter_mut().enumerate().for_each(|(g, acc)| {
                let b = curve.node_b(g);
                for (_, m) in &fl {
                    acc.add(ln_prob_consistent(m, b, scatter_msun));
                }
            });
            for (acc, &b) in check_acc.iter_mut().zip(&check_bs) {
                for (_, m) in &fl {
                    acc.add(ln_prob_consistent(m, b, scatter_msun));
                }
            }
            node_totals.push(node_acc.iter().map(NeumaierSum::total).collect());
            check_totals.push(check_acc.iter().map(NeumaierSum::total).collect());
            objects.push(cal);
            flat.push(fl);
        }
        curve.objects = objects;
        curve.flat = flat;
        let n_classes = curve.objects.len();
        let ys: Vec<f64> = (0..n_nodes)
            .map(|g| node_totals.iter().map(|v| v[g]).sum())
            .collect();
        curve.spline = CubicSpline::new(&xs, &ys, SplineEnd::NotAKnot)?;
        curve.class_splines = (0..n_classes)
            .map(|c| CubicSpline::new(&xs, &node_totals[c], SplineEnd::NotAKnot))
            .collect::<Result<_, _>>()?;
        curve.achieved_error = check_bs
            .iter()
            .enumerate()
            .map(|(k, &b)| {
                let exact: f64 = check_totals.iter().map(|v| v[k]).sum();
                (curve.spline.eval(b) - exact).abs()
            })
            .fold(0.0, f64::max);
        Ok(curve)
    }

    fn node_b(&self, g: usize) -> f64 {
        self.phi.centre(self.node_first_cell + g)
    }

    /// An object's posterior over the mass cells and its P at the nodes; `None` when its
    /// posterior vanishes on the grid (such an object is kept on the flat-prior formula).
    fn object_table(&self, m: &Measurement) -> Option<ObjectTable> {
        let (first, post) = self.object_posterior(m)?;
        let (first_node, p_nodes) = match &self.edge {
            Some(e) => tabulate_object_edge(first, &post, self.node_first_cell, e),
            None => {
                // P̃_i at every node of the curve where it is not constant.
                let nodes = self.object_nodes(m.side, first, &post);
                let p_nodes = nodes.p_all(&post, &self.step_table);
                (nodes.g0, p_nodes)
            }
        };
        Some(ObjectTable {
            first_cell: first,
            posterior: post,
            first_node,
            p_nodes,
        })
    }

    /// The nodes at which an object's P is not constant, for its posterior `post` from cell
    /// `first` (this curve's nodes and step table width).
    fn object_nodes(&self, side: Side, first: usize, post: &[f64]) -> ObjectNodes {
        ObjectNodes::new(
            side,
            first,
            post,
            self.node_first_cell,
            self.n_nodes,
            self.d_half,
        )
    }

    /// An object's posterior over the mass cells: (first cell, probabilities); `None` when it
    /// vanishes on the grid.
    fn object_posterior(&self, m: &Measurement) -> Option<(usize, Vec<f64>)> {
        let h = self.phi.cell_msun;
        let n_cells = self.phi.weights.len();
        let (m0, a, b) = unit(m);
        let (first, row) = kernel_row(m0, a, b, self.phi.lo_msun, h, n_cells, self.window_sigma);
        let mut post: Vec<f64> = row
            .iter()
            .zip(&self.phi.weights[first..])
            .map(|(k, p)| k * p)
            .collect();
        let tot: f64 = post.iter().sum();
        if tot.is_nan() || tot <= 0.0 {
            return None;
        }
        post.iter_mut().for_each(|v| *v /= tot);
        Some((first, post))
    }

    /// Probability that a true mass `d` above the bound is still above it with the per-object
    /// scatter: Φ(d/s), or a linear step one cell wide without scatter.
    fn step_probability(&self, d: f64) -> f64 {
        let h = self.phi.cell_msun;
        if self.scatter_msun > 0.0 {
            normal_cdf(d / self.scatter_msun)
        } else if d.abs() < 0.5 * h {
            0.5 + d / h
        } else if d > 0.0 {
            1.0
        } else {
            0.0
        }
    }

    /// What a mass cell contributes to P at bound `b`, for every cell: the edge kernel G(k, b)
    /// at a one-sided edge, else the probability of each label for a true mass at the cell's
    /// centre (the terms of [`CalibratedCurve::ln_p_direct_with`], computed once per b).
    fn cell_probabilities(&self, b: f64) -> CellProbabilities {
        if let Some(k) = self.edge_kernel_at(b) {
            return CellProbabilities::Edge(k);
        }
        let step = |d: f64| self.step_probability(d);
        let (at_least, at_most) = (0..self.phi.weights.len())
            .map(|k| {
                let c = self.phi.centre(k);
                (step(c - b), step(b - c))
            })
            .unzip();
        CellProbabilities::Label { at_least, at_most }
    }

    /// ln P of an object from its posterior at each of `bs`, the cells' contributions given
    /// (`cells[k]` belongs to `bs[k]`): the same value, to the bit, as
    /// [`CalibratedCurve::ln_p_with_kernel`] or [`CalibratedCurve::ln_p_direct_with`]. Four
    /// bounds at a time: four running sums side by side, each over the cells in order (the
    /// same values as one bound at a time), which the processor overlaps instead of waiting on
    /// one sum.
    fn ln_ps_from_cells(
        &self,
        o: &CalObject,
        first: usize,
        post: &[f64],
        cells: &[CellProbabilities],
        bs: &[f64],
    ) -> Vec<f64> {
        let mut out = Vec::with_capacity(bs.len());
        for (cells4, bs4) in cells.chunks(4).zip(bs.chunks(4)) {
            let rows: Vec<&[f64]> = cells4.iter().map(|c| cell_row(o.side, c, first)).collect();
            let len = rows.iter().map(|r| r.len()).fold(post.len(), usize::min);
            let row = |k: usize| &rows[k.min(rows.len() - 1)][..len];
            let (r0, r1, r2, r3) = (row(0), row(1), row(2), row(3));
            let mut p = [0.0f64; 4];
            for (j, &w) in post[..len].iter().enumerate() {
                p[0] += w * r0[j];
                p[1] += w * r1[j];
                p[2] += w * r2[j];
                p[3] += w * r3[j];
            }
            for ((c, &b), &p) in cells4.iter().zip(bs4).zip(&p) {
                out.push(self.ln_p_from_cell_sum(o, c, p, b));
            }
        }
        out
    }

    /// ln P from Σ posterior × cell contribution: capped at 1 for label probabilities, then
    /// joined to the flat-prior tail below the switch.
    fn ln_p_from_cell_sum(&self, o: &CalObject, cells: &CellProbabilities, p: f64, b: f64) -> f64 {
        let p = match cells {
            CellProbabilities::Edge(_) => p,
            CellProbabilities::Label { .. } => p.min(1.0),
        };
        regularise(p, &o.measurement(), b, self.scatter_msun, o.tail_offset)
    }

    /// The direct sums L(b) = Σ ln P_i(b) over every class at each of `bs`, as
    /// [`CalibratedCurve::exact`] gives them, in one pass over the objects that rebuilds only
    /// each object's posterior (not its table at the nodes): what measuring the error of the
    /// tabulated curve at a few dozen bounds chosen after the build costs, O(N × window) per
    /// bound.
    pub fn exact_at(&self, bs: &[f64]) -> Vec<f64> {
        let cells: Vec<CellProbabilities> =
            bs.par_iter().map(|&b| self.cell_probabilities(b)).collect();
        let mut totals = vec![0.0; bs.len()];
        for class in 0..self.objects.len() {
            for (t, x) in totals
                .iter_mut()
                .zip(self.exact_class_at(class, bs, &cells))
            {
                *t += x;
            }
        }
        totals
    }

    /// The direct sums of one class at each of `bs` (`cells` holds each bound's cell
    /// contributions): every calibrated object's posterior rebuilt ([`TABULATION_CHUNK`]
    /// objects at a time, in parallel) and integrated at each bound, then the flat-prior
    /// objects, each bound's terms summed in object order (compensated).
    fn exact_class_at(&self, class: usize, bs: &[f64], cells: &[CellProbabilities]) -> Vec<f64> {
        let mut acc = vec![NeumaierSum::default(); bs.len()];
        if let (Some(cal), Some(fl)) = (self.objects.get(class), self.flat.get(class)) {
            for chunk in cal.chunks(TABULATION_CHUNK) {
                let rows: Vec<Vec<f64>> = chunk
                    .par_iter()
                    .map(|o| match self.object_posterior(&o.measurement()) {
                        Some((first, post)) => self.ln_ps_from_cells(o, first, &post, cells, bs),
                        None => bs
                            .iter()
                            .map(|&b| ln_prob_consistent(&o.measurement(), b, self.scatter_msun))
                            .collect(),
                    })
                    .collect();
                for row in rows {
                    for (a, x) in acc.iter_mut().zip(row) {
                        a.add(x);
                    }
                }
            }
            for (a, &b) in acc.iter_mut().zip(bs) {
                for (_, m) in fl {
                    a.add(ln_prob_consistent(m, b, self.scatter_msun));
                }
            }
        }
        acc.iter().map(NeumaierSum::total).collect()
    }

    /// ln P − ln P_flat at the last node above the switch, where the flat-prior tail joins
    /// (0 if P never crosses the switch on the nodes).
    fn tail_offset(&self, m: &Measurement, t: &ObjectTable) -> f64 {
        let ps = &t.p_nodes;
        let join = (0..ps.len()).find(|&j| {
            ps[j] >= TAIL_SWITCH
                && ((j + 1 < ps.len() && ps[j + 1] < TAIL_SWITCH)
                    || (j > 0 && ps[j - 1] < TAIL_SWITCH))
        });
        match join {
            Some(j) => {
                let g = (t.first_node + j as isize) as usize;
                let b = self.phi.centre(self.node_first_cell + g);
                ps[j].ln() - ln_prob_consistent(m, b, self.scatter_msun)
            }
            None => 0.0,
        }
    }

    /// ln P of an object being tabulated at node `g` (bound value `b`): inside its span P at that node (what
    /// [`between_nodes`] gives at a whole position, p(j)·1 + p(j+1)·0, is p(j) to the bit, and
    /// its `floor` and conversions were most of the node sums' cost); beyond it, the end's ln P
    /// taken once where it is constant ([`ObjectTable::constant_ends`]), else as any bound.
    fn ln_p_at_node(&self, d: &Tabulated, g: usize, b: f64) -> f64 {
        let t = &d.table;
        let rel = g as isize - t.first_node;
        let last = t.p_nodes.len() as isize - 1;
        if rel > 0 && rel < last {
            let o = &d.object;
            return regularise(
                t.p_nodes[rel as usize],
                &o.measurement(),
                b,
                self.scatter_msun,
                o.tail_offset,
            );
        }
        let constant = if rel <= 0 { d.ends.0 } else { d.ends.1 };
        constant.unwrap_or_else(|| self.ln_p_cal(&d.object, t, g as f64, b))
    }

    /// ln P of a calibrated object at fractional node position `t` (bound value `b`).
    fn ln_p_cal(&self, o: &CalObject, tab: &ObjectTable, t: f64, b: f64) -> f64 {
        let p = between_nodes(t, tab.first_node, tab.p_nodes.len(), |j| tab.p_nodes[j]);
        regularise(p, &o.measurement(), b, self.scatter_msun, o.tail_offset)
    }

    /// Fractional node position of bound `b`, if it lies within the nodes.
    fn node_position(&self, b: f64) -> Option<f64> {
        let t = (b - self.node_b(0)) / self.phi.cell_msun;
        (t >= 0.0 && t <= (self.n_nodes - 1) as f64).then_some(t)
    }

    /// ln P of a calibrated object at a bound outside the nodes, from its posterior directly.
    fn ln_p_off_nodes(&self, o: &CalObject, tab: &ObjectTable, b: f64) -> f64 {
        match self.edge_kernel_at(b) {
            Some(k) => self.ln_p_with_kernel(o, tab, &k, b),
            None => self.ln_p_direct_with(o, tab, b),
        }
    }

    /// The edge kernel G(k, b) over every cell at an arbitrary bound b (direct evaluation).
    fn edge_kernel_at(&self, b: f64) -> Option<Vec<f64>> {
        self.edge.as_ref().map(|e| {
            let pos = (b - self.phi.lo_msun) / self.phi.cell_msun - 0.5;
            EdgeKernel::kernel_at(&self.phi.weights, e.side, &self.omega, pos)
        })
    }

    fn ln_p_with_kernel(&self, o: &CalObject, tab: &ObjectTable, kernel: &[f64], b: f64) -> f64 {
        let p: f64 = tab
            .posterior
            .iter()
            .zip(&kernel[tab.first_cell..])
            .map(|(w, g)| w * g)
            .sum();
        regularise(p, &o.measurement(), b, self.scatter_msun, o.tail_offset)
    }

    /// ln P at an arbitrary b from the posterior in `tab`, without an edge kernel.
    fn ln_p_direct_with(&self, o: &CalObject, tab: &ObjectTable, b: f64) -> f64 {
        let mut p = 0.0;
        for (j, w) in tab.posterior.iter().enumerate() {
            let c = self.phi.centre(tab.first_cell + j);
            let d = match o.side {
                Side::AtLeast => c - b,
                Side::AtMost => b - c,
            };
            p += w * self.step_probability(d);
        }
        regularise(
            p.min(1.0),
            &o.measurement(),
            b,
            self.scatter_msun,
            o.tail_offset,
        )
    }

    /// L(B) = Σ ln P_i(B) over the informative objects of every class: the spline inside the
    /// tabulated range, the direct sum outside it.
    pub fn eval(&self, b_msun: f64) -> f64 {
        let (a, z) = self.spline.domain();
        if b_msun >= a && b_msun <= z {
            self.spline.eval(b_msun)
        } else {
            self.exact(b_msun)
        }
    }

    /// The sum of L over one class only (position in the `classes` given to `build`): its
    /// spline inside the tabulated range, the direct sum outside.
    pub fn eval_class(&self, class: usize, b_msun: f64) -> f64 {
        let (a, z) = self.spline.domain();
        if b_msun >= a && b_msun <= z {
            if let Some(s) = self.class_splines.get(class) {
                return s.eval(b_msun);
            }
        }
        self.exact_class(class, b_msun)
    }

    /// The direct sum of one class at one bound ([`CalibratedCurve::exact_at`]'s per-class
    /// sum).
    fn exact_class(&self, class: usize, b_msun: f64) -> f64 {
        let cells = [self.cell_probabilities(b_msun)];
        self.exact_class_at(class, &[b_msun], &cells)[0]
    }

    /// ln P of a calibrated object at bound `b` from its table (`None`: its posterior vanished
    /// on the grid, so it is on the flat-prior formula).
    fn ln_p_object(&self, o: &CalObject, tab: Option<&ObjectTable>, b: f64) -> f64 {
        // Not `None` for an object kept at build (its table is rebuilt identically).
        let Some(tab) = tab else {
            return ln_prob_consistent(&o.measurement(), b, self.scatter_msun);
        };
        match self.node_position(b) {
            Some(t) => self.ln_p_cal(o, tab, t, b),
            None => self.ln_p_off_nodes(o, tab, b),
        }
    }

    /// The exact sum: every object's posterior integrated at B directly (cost O(N × window)).
    pub fn exact(&self, b_msun: f64) -> f64 {
        (0..self.objects.len())
            .map(|c| self.exact_class(c, b_msun))
            .sum()
    }

    /// ln P of object `index` (position in its class's list) of class `class` at bound `b`;
    /// 0 for an object that is not informative over the range. Rebuilds the object's posterior:
    /// a caller asking about one object at many bounds holds [`CalibratedCurve::object`].
    pub fn ln_p(&self, class: usize, index: usize, b_msun: f64) -> f64 {
        self.object_light(class, index).ln_p(b_msun)
    }

    /// As [`CalibratedCurve::object`] for a caller with one or two queries: the object's
    /// posterior is built, but P only at the nodes a query reads (the same values to the bit);
    /// the whole table at the nodes was most of the cost of `objects.csv`'s σ in the fit and
    /// of the drivers' candidate weights at 10⁶ objects. At a one-sided edge it is the table.
    pub fn object_light(&self, class: usize, index: usize) -> ObjectCurve<'_> {
        if self.edge.is_some() {
            return self.object(class, index);
        }
        let found = self.objects.get(class).and_then(|cal| {
            cal.binary_search_by_key(&index, CalObject::position)
                .ok()
                .map(|k| &cal[k])
        });
        match found {
            Some(o) => {
                let m = &o.measurement();
                let prepared = self.object_posterior(m).map(|(first, post)| {
                    let nodes = self.object_nodes(m.side, first, &post);
                    let tab = ObjectTable {
                        first_cell: first,
                        posterior: post,
                        first_node: nodes.g0,
                        p_nodes: Vec::new(),
                    };
                    (tab, nodes)
                });
                ObjectCurve {
                    curve: self,
                    what: ObjectWhat::Light(o, prepared),
                }
            }
            None => self.object(class, index),
        }
    }

    /// [`CalibratedCurve::ln_p_object`] of a light object: inside the nodes the interpolation
    /// of [`CalibratedCurve::ln_p_cal`] between the two values it reads, each formed as the
    /// table forms it; outside, the same direct evaluation from the posterior.
    fn ln_p_light(&self, o: &CalObject, tab: &ObjectTable, nodes: &ObjectNodes, b: f64) -> f64 {
        match self.node_position(b) {
            Some(t) => {
                let p = between_nodes(t, nodes.g0, nodes.len(), |j| {
                    nodes.p(j, &tab.posterior, &self.step_table)
                });
                regularise(p, &o.measurement(), b, self.scatter_msun, o.tail_offset)
            }
            None => self.ln_p_off_nodes(o, tab, b),
        }
    }

    /// Object `index` of class `class` as a function of the bound, its table built once here:
    /// the leave-one-out drivers ask about one object at every point of the fine axis. (A
    /// shared cache of rebuilt tables did this before; behind a lock, with thousands of
    /// candidates evicting each other, it cost more than the tables at 10⁵ objects.)
    pub fn object(&self, class: usize, index: usize) -> ObjectCurve<'_> {
        let what = match self.objects.get(class) {
            None => ObjectWhat::Uninformative,
            Some(cal) => match cal.binary_search_by_key(&index, CalObject::position) {
                Ok(k) => {
                    let o = &cal[k];
                    ObjectWhat::Calibrated(o, self.object_table(&o.measurement()))
                }
                Err(_) => match self.flat[class].binary_search_by_key(&index, |f| f.0) {
                    Ok(k) => ObjectWhat::Flat(&self.flat[class][k].1),
                    Err(_) => ObjectWhat::Uninformative,
                },
            },
        };
        ObjectCurve { curve: self, what }
    }

    /// Positions of the informative objects of class `class` (calibrated and flat), ascending;
    /// merged when asked rather than held (8 bytes per informative object at a large run's
    /// peak).
    pub fn informative_indices(&self, class: usize) -> Vec<usize> {
        let (cal, flat) = match (self.objects.get(class), self.flat.get(class)) {
            (Some(c), Some(f)) => (c.as_slice(), f.as_slice()),
            _ => return Vec::new(),
        };
        let mut out = Vec::with_capacity(cal.len() + flat.len());
        let (mut c, mut f) = (
            cal.iter().map(CalObject::position).peekable(),
            flat.iter().map(|x| x.0).peekable(),
        );
        while let (Some(&a), Some(&b)) = (c.peek(), f.peek()) {
            if a < b {
                out.push(a);
                c.next();
            } else {
                out.push(b);
                f.next();
            }
        }
        out.extend(c);
        out.extend(f);
        out
    }

    /// Objects kept on the flat-prior formula (limits, or errors too wide for the grid).
    pub fn n_flat(&self) -> usize {
        self.flat.iter().map(Vec::len).sum()
    }

    /// The deconvolved mass function.
    pub fn mass_function(&self) -> &MassFunction {
        &self.phi
    }

    /// Measured |spline − exact| in ln L at node midpoints.
    pub fn achieved_error(&self) -> f64 {
        self.achieved_error
    }

    /// Tabulated range of B, M☉.
    pub fn range_msun(&self) -> (f64, f64) {
        self.spline.domain()
    }

    /// Number of tabulation nodes.
    pub fn n_nodes(&self) -> usize {
        self.n_nodes
    }
}

/// P at fractional node position `t` from the `n` values of a table starting at node
/// `first_node` (value `j` from `p`): linear between nodes, constant beyond the table's ends,
/// 0 for an empty table.
fn between_nodes(t: f64, first_node: isize, n: usize, p: impl Fn(usize) -> f64) -> f64 {
    if n == 0 {
        return 0.0;
    }
    let rel = t - first_node as f64;
    let last = n as f64 - 1.0;
    if rel <= 0.0 {
        p(0)
    } else if rel >= last {
        p(n - 1)
    } else {
        // rel > 0 here, so the truncating cast is the floor (`floor` was a libm call per
        // query, 3 % of the drivers at 10⁶ objects).
        let j = rel as usize;
        let f = rel - j as f64;
        p(j) * (1.0 - f) + p(j + 1) * f
    }
}

fn regularise(p: f64, m: &Measurement, b: f64, scatter: f64, tail_offset: f64) -> f64 {
    if p >= TAIL_SWITCH {
        p.ln()
    } else {
        ln_prob_consistent(m, b, scatter) + tail_offset
    }
}

/// P̃_i at every node of the curve for a one-sided edge (`EdgeKernel`): the far allowed
/// side of the posterior times the constant G there, plus the window around the node.
fn tabulate_object_edge(
    first_cell: usize,
    post: &[f64],
    node_first_cell: usize,
    e: &EdgeKernel,
) -> (isize, Vec<f64>) {
    let len = post.len() as isize;
    let n_nodes = e.far.len();
    let w = e.half as isize;
    // prefix[j] = Σ_{k < j} post[k]
    let mut prefix = vec![0.0; post.len() + 1];
    for j in 0..post.len() {
        prefix[j + 1] = prefix[j] + post[j];
    }
    let total = prefix[post.len()];
    let p_nodes: Vec<f64> = (0..n_nodes)
        .map(|g| {
            // The node's cell in posterior indices.
            let c = (node_first_cell + g) as isize - first_cell as isize;
            let far_mass = match e.side {
                // cells k < c − W
                Side::AtMost => prefix[(c - w).clamp(0, len) as usize],
                // cells k > c + W
                Side::AtLeast => total - prefix[(c + w + 1).clamp(0, len) as usize],
            };
            let mut p = e.far[g] * far_mass;
            for (j, gk) in e.window[g].iter().enumerate() {
                let k = c + j as isize - w;
                if k >= 0 && k < len {
                    p += post[k as usize] * gk;
                }
            }
            p.max(0.0)
        })
        .collect();
    (0, p_nodes)
}

/// Where an object's P is tabulated on the nodes and how each value is formed: P at node g
/// is Σ_k post[k] T[k − cell(g)] for "at least" (T[d] = 1 beyond the table's +D, 0 below −D,
/// so the cells above the window enter through a suffix sum), 1 − that for "at most". Kept
/// apart from the loop so that one node can be evaluated alone
/// ([`CalibratedCurve::object_light`]) with the same operations as the whole table.
#[derive(Debug)]
struct ObjectNodes {
    side: Side,
    /// suffix[j] = Σ_{k ≥ j} post[k].
    suffix: Vec<f64>,
    /// First and last node with a value (last < first: the posterior misses every node).
    g0: isize,
    g1: isize,
    /// The node range's position relative to the posterior's first cell.
    offset: isize,
    dh: isize,
    /// The constant P when the posterior lies entirely outside the nodes.
    outside: f64,
}

impl ObjectNodes {
    fn new(
        side: Side,
        first_cell: usize,
        post: &[f64],
        node_first_cell: usize,
        n_nodes: usize,
        d_half: usize,
    ) -> Self {
        let len = post.len();
        let mut suffix = vec![0.0; len + 1];
        for j in (0..len).rev() {
            suffix[j] = suffix[j + 1] + post[j];
        }
        let dh = d_half as isize;
        let node_lo = first_cell as isize - dh - 1 - node_first_cell as isize;
        let node_hi = (first_cell + len) as isize + dh + 1 - node_first_cell as isize;
        let g0 = node_lo.max(0);
        let g1 = node_hi.min(n_nodes as isize - 1);
        // Cells all below the nodes: the mass is below every B (P(m ≥ B) = 0); all above: 1.
        let p_at_least = if node_hi < 0 { 0.0 } else { 1.0 };
        let outside = match side {
            Side::AtLeast => p_at_least,
            Side::AtMost => 1.0 - p_at_least,
        };
        ObjectNodes {
            side,
            suffix,
            g0,
            g1,
            offset: node_first_cell as isize - first_cell as isize,
            dh,
            outside,
        }
    }

    /// Number of tabulated values (1 when the posterior misses every node).
    fn len(&self) -> usize {
        if self.g1 < self.g0 {
            1
        } else {
            (self.g1 - self.g0 + 1) as usize
        }
    }

    /// The `j`-th tabulated value (node g0 + j).
    fn p(&self, j: usize, post: &[f64], table: &[f64]) -> f64 {
        if self.g1 < self.g0 {
            return self.outside;
        }
        self.finish(self.sum_at(j, post, table))
    }

    /// Every tabulated value, `p(j)` for each j to the bit: four nodes' sums are advanced side
    /// by side over the cells they share. Each node's sum is a chain of dependent additions
    /// (latency-bound, the data in cache); four independent chains keep the adder busy, and each
    /// node still adds its own terms in ascending cell order.
    fn p_all(&self, post: &[f64], table: &[f64]) -> Vec<f64> {
        let n = self.len();
        if self.g1 < self.g0 {
            return vec![self.outside];
        }
        let mut out = Vec::with_capacity(n);
        let mut j = 0;
        while j + 4 <= n {
            out.extend(self.sums_at_four(j, post, table).map(|p| self.finish(p)));
            j += 4;
        }
        out.extend((j..n).map(|j| self.p(j, post, table)));
        out
    }

    /// Σ over the posterior's cells of P(node j | cell), before the side and the clamp: the
    /// tail beyond the step table's reach from the suffix sums, then each cell within ±D.
    fn sum_at(&self, j: usize, post: &[f64], table: &[f64]) -> f64 {
        let len = post.len();
        let dh = self.dh;
        let cell = self.g0 + j as isize + self.offset; // node's cell in post
        let mut p = self.tail_at(cell, len);
        for j in (cell - dh).max(0)..=(cell + dh).min(len as isize - 1) {
            p += post[j as usize] * table[(j - cell + dh) as usize];
        }
        p
    }

    /// The suffix-sum part of a node's sum (0 + the mass beyond the table's reach).
    fn tail_at(&self, cell: isize, len: usize) -> f64 {
        let mut p = 0.0;
        let above = cell + self.dh + 1;
        if above <= 0 {
            p += self.suffix[0];
        } else if (above as usize) < len {
            p += self.suffix[above as usize];
        }
        p
    }

    /// [`ObjectNodes::sum_at`] of nodes j … j + 3: each node's cells before the shared range,
    /// the shared range with the four sums interleaved, then each node's cells after it.
    fn sums_at_four(&self, j: usize, post: &[f64], table: &[f64]) -> [f64; 4] {
        let len = post.len() as isize;
        let dh = self.dh;
        let c0 = self.g0 + j as isize + self.offset;
        let lo = |k: isize| (c0 + k - dh).max(0);
        let hi = |k: isize| (c0 + k + dh).min(len - 1);
        let mut p = [0.0; 4];
        for (k, pk) in p.iter_mut().enumerate() {
            *pk = self.tail_at(c0 + k as isize, post.len());
        }
        let term = |k: isize, c: isize| post[c as usize] * table[(c - c0 - k + dh) as usize];
        let (shared_lo, shared_hi) = (lo(3), hi(0));
        if shared_lo > shared_hi {
            for (k, pk) in (0..4).zip(p.iter_mut()) {
                for c in lo(k)..=hi(k) {
                    *pk += term(k, c);
                }
            }
            return p;
        }
        for (k, pk) in (0..4).zip(p.iter_mut()) {
            for c in lo(k)..shared_lo {
                *pk += term(k, c);
            }
        }
        let m = (shared_hi - shared_lo + 1) as usize;
        let cells = &post[shared_lo as usize..][..m];
        let at = |k: isize| &table[(shared_lo - c0 - k + dh) as usize..][..m];
        let (t0, t1, t2, t3) = (at(0), at(1), at(2), at(3));
        for i in 0..m {
            let x = cells[i];
            p[0] += x * t0[i];
            p[1] += x * t1[i];
            p[2] += x * t2[i];
            p[3] += x * t3[i];
        }
        for (k, pk) in (0..4).zip(p.iter_mut()) {
            for c in shared_hi + 1..=hi(k) {
                *pk += term(k, c);
            }
        }
        p
    }

    /// The side's probability from the sum, clamped to [0, 1].
    fn finish(&self, p: f64) -> f64 {
        let p = match self.side {
            Side::AtLeast => p,
            Side::AtMost => (1.0 - p).max(0.0),
        };
        p.clamp(0.0, 1.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_calibrated_object_stays_compact() {
        // One per calibrated object in each curve held (two at once in a run); 64 bytes with
        // the general measurement and a `usize` position.
        assert_eq!(std::mem::size_of::<super::CalObject>(), 48);
        let m = Measurement {
            mass_msun: 0.0812,
            kind: MassKind::Measured {
                lo: 0.003,
                hi: 0.0041,
            },
            side: Side::AtMost,
            scale: 1.0 / 3.0,
        };
        let o = super::CalObject::new(7, &m, -0.25).unwrap();
        assert_eq!((o.measurement(), o.position()), (m, 7));
        let limit = Measurement {
            kind: MassKind::UpperLimit { sigma: Some(0.01) },
            ..m
        };
        assert!(super::CalObject::new(7, &limit, 0.0).is_none());
    }

    #[test]
    fn the_fit_choices_read_and_print_by_name() {
        for name in ["auto", "exact", "grouped"] {
            assert_eq!(Grouping::from_name(name).unwrap().name(), name);
        }
        assert_eq!(Grouping::from_name("auto"), Some(Grouping::default()));
        assert_eq!(
            Grouping::from_name("exact").unwrap().exact_up_to,
            usize::MAX
        );
        assert_eq!(Grouping::from_name("grouped").unwrap().exact_up_to, 0);
        assert!(Grouping::from_name("binned").is_none());
    }

    /// `n` masses evenly spread over [lo, hi] (cell midpoints), asymmetric errors of 2–6 ×
    /// `rel_err` cycling through a stride, so that neighbours differ in width.
    fn lattice(n: usize, lo: f64, hi: f64, rel_err: f64, side: Side) -> Vec<Measurement> {
        let mut out = Vec::with_capacity(n);
        for i in 0..n {
            let m = lo + (hi - lo) * (i as f64 + 0.5) / n as f64;
            let width = rel_err * m * (0.5 + ((i * 37) % 11) as f64 / 11.0);
            let kind = MassKind::Measured {
                lo: width,
                hi: 0.8 * width,
            };
            out.push(Measurement {
                mass_msun: m,
                kind,
                side,
                scale: 1.0,
            });
        }
        out
    }

    /// The per-class direct sum the slow way: each object's whole table rebuilt, its
    /// posterior integrated against the edge kernel or the step probabilities at `b` cell by
    /// cell (what `exact_class` did before it shared `exact_at`'s cell contributions).
    fn exact_class_by_tables(c: &CalibratedCurve, class: usize, b: f64) -> f64 {
        let mut acc = NeumaierSum::default();
        let kernel = c.edge_kernel_at(b);
        for o in &c.objects[class] {
            acc.add(match c.object_table(&o.measurement()) {
                Some(tab) => match &kernel {
                    Some(k) => c.ln_p_with_kernel(o, &tab, k, b),
                    None => c.ln_p_direct_with(o, &tab, b),
                },
                None => ln_prob_consistent(&o.measurement(), b, c.scatter_msun),
            });
        }
        for (_, m) in &c.flat[class] {
            acc.add(ln_prob_consistent(m, b, c.scatter_msun));
        }
        acc.total()
    }

    /// Two curves of invented objects (even lattices) with their class count and a span of
    /// bounds reaching past the tabulated range: stars and brown dwarfs meeting at an MMHB near
    /// 0.075 M☉, and white dwarfs below a one-sided edge near 1.3 M☉.
    fn two_lattice_curves() -> [(CalibratedCurve, usize, f64, f64); 2] {
        let hb = lattice(300, 0.074, 0.10, 0.04, Side::AtLeast);
        let bd = lattice(150, 0.05, 0.076, 0.04, Side::AtMost);
        let wd = lattice(120, 0.9, 1.33, 0.02, Side::AtMost);
        let opts = CalibratedOptions::default();
        let build = |classes: &[&Vec<Measurement>], scatter, range| {
            CalibratedCurve::build(classes, scatter, range, &opts).unwrap()
        };
        [
            (build(&[&hb, &bd], 0.002, (0.06, 0.095)), 2, 0.05, 0.11),
            (build(&[&wd], 0.012, (1.1, 1.6)), 1, 1.0, 1.7),
        ]
    }

    #[test]
    fn direct_sum_from_cell_contributions_equals_the_per_object_tables_to_the_bit() {
        // Common practice, no source: a shortcut must give what the long way gives. Bounds
        // inside and outside the tabulated ranges.
        let mut checked = 0;
        for (c, n_classes, a, z) in two_lattice_curves() {
            let queries = (0..n_classes).flat_map(|class| {
                (0..=16).map(move |k| (class, a + (z - a) * f64::from(k) / 16.0))
            });
            for (class, b) in queries {
                let (fast, slow) = (c.exact_class(class, b), exact_class_by_tables(&c, class, b));
                assert_eq!(fast.to_bits(), slow.to_bits(), "class {class}, B = {b}");
                checked += 1;
            }
        }
        assert_eq!(checked, 51);
    }

    #[test]
    fn bounds_four_at_a_time_equal_each_bound_alone_to_the_bit() {
        // Common practice, no source: the side-by-side sums must be the one-at-a-time sums.
        // 1 to 9 bounds (whole groups of four and remainders), inside and outside the
        // tabulated ranges, at a two-sided bound and a one-sided edge.
        for (c, _, a, z) in two_lattice_curves() {
            for n in 1..=9 {
                let bs: Vec<f64> = (0..n)
                    .map(|k| a + (z - a) * (k as f64 + 0.3) / n as f64)
                    .collect();
                let together = c.exact_at(&bs);
                for (b, t) in bs.iter().zip(&together) {
                    assert_eq!(t.to_bits(), c.exact(*b).to_bits(), "{n} bounds, B = {b}");
                }
            }
        }
    }

    #[test]
    fn every_node_at_once_equals_each_node_alone_to_the_bit() {
        // Common practice, no source: the interleaved sums must add each node's terms in the
        // same order as one node alone. Seeded posteriors of 1–150 cells, step tables of
        // half-width 0–40 cells, posteriors before, across and beyond the nodes, both sides.
        let mut rng = crate::confront::reduce::SplitMix64::new(99);
        let mut checked = 0;
        for case in 0..400 {
            let len = 1 + (rng.next_f64() * 150.0) as usize;
            let d_half = [0, 1, 3, 7, 40][case % 5];
            let mut post: Vec<f64> = (0..len).map(|_| rng.next_f64()).collect();
            let total: f64 = post.iter().sum();
            post.iter_mut().for_each(|w| *w /= total);
            let table: Vec<f64> = (0..=2 * d_half)
                .map(|j| normal_cdf((j as f64 - d_half as f64) / (0.4 * d_half as f64 + 0.5)))
                .collect();
            let first_cell = (rng.next_f64() * 300.0) as usize;
            let node_first_cell = (rng.next_f64() * 300.0) as usize;
            let n_nodes = 1 + (rng.next_f64() * 200.0) as usize;
            let side = if case % 2 == 0 {
                Side::AtLeast
            } else {
                Side::AtMost
            };
            let nodes = ObjectNodes::new(side, first_cell, &post, node_first_cell, n_nodes, d_half);
            let all = nodes.p_all(&post, &table);
            assert_eq!(all.len(), nodes.len());
            for (j, v) in all.iter().enumerate() {
                assert_eq!(
                    v.to_bits(),
                    nodes.p(j, &post, &table).to_bits(),
                    "case {case}, node {j}"
                );
                checked += 1;
            }
        }
        assert!(checked > 10_000, "{checked}");
    }
}
