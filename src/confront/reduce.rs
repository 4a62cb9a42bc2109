//! The one-dimensional reduction of a catalogue class to a log-likelihood curve in the bound.
//!
//! Every object of a class depends on a grid point (ϒ, τ) only through the class's one scalar
//! bound B, so L_c(B) = Σ_i ln P_i(B) is tabulated once on N_B nodes and every grid point is a
//! spline evaluation: no object × grid term (`docs/bounds.md` §8.5). Objects that cannot
//! contribute over the tabulated range are skipped (their total effect is bounded and
//! reported), objects too sharp for the node spacing are summed exactly, and the achieved
//! interpolation error is measured against the exact sum at seeded pseudo-random B.
//! [`SharedFloorCurve`] is the variant of §8.2 where one theory error ε is common to every
//! object of a bound.
//!
//! ```
//! use dwarfbound::confront::prob::{MassKind, Measurement, Side};
//! use dwarfbound::confront::reduce::{ClassCurve, ReduceOptions};
//! let stars: Vec<Measurement> = (0..50)
//!     .map(|i| Measurement {
//!         mass_msun: 0.07 + 0.001 * i as f64,
//!         kind: MassKind::Measured { lo: 0.003, hi: 0.004 },
//!         side: Side::AtLeast,
//!         scale: 1.0,
//!     })
//!     .collect();
//! let curve = ClassCurve::build(&stars, 0.005, (0.07, 0.08), &ReduceOptions::default()).unwrap();
//! assert!((curve.eval(0.075) - curve.exact(0.075)).abs() < 1e-8);
//! assert!(curve.achieved_error() < 1e-8);
//! ```

use std::sync::atomic::{AtomicUsize, Ordering};

use rayon::prelude::*;

use super::prob::{
    check_u32_positions, effective_floor_msun, ln_prob_consistent, validate_floor,
    ClassMeasurements, MassKind, Measurement, PreparedLnP, Side, StatsError,
};

/// Settings of the reduction; the defaults are those of `docs/bounds.md` §8.5.
#[derive(Debug, Clone, PartialEq)]
pub struct ReduceOptions {
    /// Number of uniform tabulation nodes N_B (default 257).
    pub n_nodes: usize,
    /// Padding of the bound range on each side, as a fraction of its width (default 0.01).
    pub pad_fraction: f64,
    /// An object is skipped when ln P_i > −ε_skip over the whole range (default 1e-13).
    pub eps_skip: f64,
    /// An object whose smoothing width in B is below this many node spacings is summed exactly
    /// at every evaluation instead of being tabulated (default 8; a cubic spline cannot follow
    /// a near-step).
    pub sharp_nodes: f64,
    /// Number of seeded pseudo-random B values for the achieved-error measurement (default 300;
    /// 0 skips the measurement, and the achieved error is then NaN, "not measured").
    pub n_check: usize,
    /// If set, the node count is doubled (2n − 1, so old nodes stay) until the measured error
    /// in ln L is at most this, up to `max_nodes` (default 2.5e-7, i.e. 1e-6 in Δχ²). `None`
    /// keeps exactly `n_nodes`.
    pub target_error: Option<f64>,
    /// Ceiling of the refinement (default 4097).
    pub max_nodes: usize,
    /// Seed of those values (deterministic, no global RNG).
    pub check_seed: u64,
}

impl Default for ReduceOptions {
    fn default() -> Self {
        Self {
            n_nodes: 257,
            pad_fraction: 0.01,
            eps_skip: 1e-13,
            sharp_nodes: 8.0,
            n_check: 300,
            check_seed: 0x00C0_FFEE_D1CE_5EED,
            target_error: Some(2.5e-7),
            max_nodes: 4097,
        }
    }
}

/// Where one object stands in a class over a bound range.
enum Standing {
    /// A limit in the uninformative direction (P = 1).
    Uninformative,
    /// ln P > −ε_skip over the whole range: it cannot matter anywhere.
    Skipped,
    /// It can constrain some bound in the range.
    Informative,
}

/// Classifies one object over the bound range [b_lo, b_hi] (`docs/bounds.md` §8.5).
fn classify(m: &Measurement, floor_msun: f64, (b_lo, b_hi): (f64, f64), eps_skip: f64) -> Standing {
    if !m.informative() {
        return Standing::Uninformative;
    }
    // P_i is monotone in B: its smallest value over the range is at the far end.
    let worst_b = match m.side {
        Side::AtLeast => b_hi,
        Side::AtMost => b_lo,
    };
    if ln_prob_consistent(m, worst_b, floor_msun) > -eps_skip {
        Standing::Skipped
    } else {
        Standing::Informative
    }
}

/// The bound range padded by `opts.pad_fraction` of its width on each side.
fn padded_range(
    bound_range_msun: (f64, f64),
    opts: &ReduceOptions,
) -> Result<(f64, f64), StatsError> {
    let (lo, hi) = check_range(bound_range_msun)?;
    let width = hi - lo;
    let pad = if width > 0.0 {
        opts.pad_fraction * width
    } else {
        opts.pad_fraction * lo.abs().max(1e-3)
    };
    Ok((lo - pad, hi + pad))
}

/// The floor checked and the range checked and not empty: what every reduction of a class
/// over a range first needs.
fn usable_range(floor_msun: f64, range_msun: (f64, f64)) -> Result<(f64, f64), StatsError> {
    validate_floor(floor_msun)?;
    let (b_lo, b_hi) = check_range(range_msun)?;
    if b_hi <= b_lo {
        return Err(StatsError::InvalidInput(format!(
            "tabulation range [{b_lo}, {b_hi}] M☉ is empty"
        )));
    }
    Ok((b_lo, b_hi))
}

/// A class's objects sorted as [`ClassCurve::build`] sorts them, without tabulating the curve:
/// what the counts and the Šidák test's N_inf need (`docs/bounds.md` §8.4) where the likelihood
/// itself is another term's (`mass_terms::BoundTerm`). One ln P per object, where the curve
/// costs one per object and node.
#[derive(Debug, Clone, PartialEq)]
pub struct ClassCounts {
    informative_indices: Vec<usize>,
    n_skipped: usize,
    n_uninformative: usize,
}

impl ClassCounts {
    /// Sorts `measurements` (all objects of the class, in the caller's order) over the class's
    /// bound range padded as [`ClassCurve::build`] pads it, with the class's theory floor;
    /// the same informative and skipped objects as the curve's.
    pub fn new<'a>(
        measurements: impl Into<ClassMeasurements<'a>>,
        floor_msun: f64,
        bound_range_msun: (f64, f64),
        opts: &ReduceOptions,
    ) -> Result<Self, StatsError> {
        let measurements = measurements.into();
        let range = usable_range(floor_msun, padded_range(bound_range_msun, opts)?)?;
        let mut counts = Self {
            informative_indices: Vec::new(),
            n_skipped: 0,
            n_uninformative: 0,
        };
        for (i, m) in measurements.iter().enumerate() {
            m.validate(i)?;
            match classify(&m, floor_msun, range, opts.eps_skip) {
                Standing::Uninformative => counts.n_uninformative += 1,
                Standing::Skipped => counts.n_skipped += 1,
                Standing::Informative => counts.informative_indices.push(i),
            }
        }
        Ok(counts)
    }

    /// Positions (in the caller's slice) of the informative objects, ascending: the N_inf of
    /// the Šidák test.
    pub fn informative_indices(&self) -> &[usize] {
        &self.informative_indices
    }

    /// Number of informative objects.
    pub fn n_informative(&self) -> usize {
        self.informative_indices.len()
    }

    /// Number of informative objects that cannot matter anywhere over the range.
    pub fn n_skipped(&self) -> usize {
        self.n_skipped
    }

    /// Number of limits in the uninformative direction.
    pub fn n_uninformative(&self) -> usize {
        self.n_uninformative
    }
}

/// The tabulated log-likelihood curve L_c(B) of one class (per-object theory floor, §8.1–8.2).
///
/// Only the measurements it reads again are held: those of the informative objects (the
/// tabulated and sharp ones are positions into them) and of the skipped ones, each in the
/// caller's order. The uninformative limits, and the caller's whole list, are not copied (a
/// class of a large catalogue is mostly objects far from the bound).
#[derive(Debug)]
pub struct ClassCurve {
    b_lo_msun: f64,
    b_hi_msun: f64,
    floor_msun: f64,
    floor_replaced: bool,
    n_nodes: usize,
    spline: CubicSpline,
    /// The informative objects' measurements, in `informative_indices` order.
    informative: Box<[Measurement]>,
    /// The skipped objects' measurements, in `skipped_indices` order.
    skipped: Box<[Measurement]>,
    /// Positions in `informative` of the tabulated objects, ascending.
    smooth: Vec<u32>,
    /// Positions in `informative` of the objects summed exactly at every evaluation, ascending.
    sharp: Vec<u32>,
    informative_indices: Vec<usize>,
    skipped_indices: Vec<usize>,
    n_uninformative: usize,
    eps_skip: f64,
    achieved_error: f64,
    out_of_range_calls: AtomicUsize,
}

impl ClassCurve {
    /// Reduces one class: `measurements` (all objects of the class, in the caller's order),
    /// the class's theory floor (a value ≤ 0 becomes 1e-6 of the bound; see
    /// [`ClassCurve::floor_replaced`]) and the range [min, max] of the class's bound over the
    /// grid, which is padded by `opts.pad_fraction` of its width.
    pub fn build<'a>(
        measurements: impl Into<ClassMeasurements<'a>>,
        floor_msun: f64,
        bound_range_msun: (f64, f64),
        opts: &ReduceOptions,
    ) -> Result<Self, StatsError> {
        Self::build_on_range(
            measurements,
            floor_msun,
            padded_range(bound_range_msun, opts)?,
            opts,
        )
    }

    /// As [`ClassCurve::build`] with the tabulation range taken as given (no padding).
    pub fn build_on_range<'a>(
        measurements: impl Into<ClassMeasurements<'a>>,
        floor_msun: f64,
        range_msun: (f64, f64),
        opts: &ReduceOptions,
    ) -> Result<Self, StatsError> {
        let measurements = measurements.into();
        let (b_lo, b_hi) = usable_range(floor_msun, range_msun)?;
        check_u32_positions(measurements.len(), "in one class")?;
        if opts.n_nodes < 4 {
            return Err(StatsError::InvalidInput(format!(
                "at least 4 tabulation nodes are needed, got {}",
                opts.n_nodes
            )));
        }
        let mut curve = Self {
            b_lo_msun: b_lo,
            b_hi_msun: b_hi,
            floor_msun,
            floor_replaced: floor_msun <= 0.0,
            n_nodes: opts.n_nodes,
            spline: CubicSpline::linear_placeholder(b_lo, b_hi),
            informative: Box::default(),
            skipped: Box::default(),
            smooth: Vec::new(),
            sharp: Vec::new(),
            informative_indices: Vec::new(),
            skipped_indices: Vec::new(),
            n_uninformative: 0,
            eps_skip: opts.eps_skip,
            achieved_error: f64::NAN,
            out_of_range_calls: AtomicUsize::new(0),
        };
        let b_abs = b_lo.abs().max(b_hi.abs());
        // (position in `informative`, smoothing width) of each informative object that is not
        // skipped; positions fit in a u32 (checked above).
        let mut kept: Vec<(u32, f64)> = Vec::new();
        let mut informative: Vec<Measurement> = Vec::new();
        let mut skipped: Vec<Measurement> = Vec::new();
        // One pass: each measurement is checked where it is sorted (a view makes it anew at
        // every pass over the class).
        for (i, m) in measurements.iter().enumerate() {
            m.validate(i)?;
            match classify(&m, floor_msun, (b_lo, b_hi), opts.eps_skip) {
                Standing::Uninformative => curve.n_uninformative += 1,
                Standing::Skipped => {
                    curve.skipped_indices.push(i);
                    skipped.push(m);
                }
                Standing::Informative => {
                    curve.informative_indices.push(i);
                    kept.push((
                        informative.len() as u32,
                        smoothing_width_in_bound(&m, b_abs, floor_msun),
                    ));
                    informative.push(m);
                }
            }
        }
        curve.informative = informative.into_boxed_slice();
        curve.skipped = skipped.into_boxed_slice();
        // Tabulate; with a target error, double the node density until it is met. A doubling
        // keeps every node of the previous round (node k of n is node 2k of 2n − 1, to the
        // bit), so while the smooth objects stay the same their sums there, and the exact sums
        // at the (seeded, so unchanged) check points, are reused: the same values, half the
        // evaluations or less.
        let mut n = opts.n_nodes;
        let check_points = check_points(opts, b_lo, b_hi);
        let mut previous: Option<(Vec<bool>, Vec<f64>, Vec<f64>)> = None;
        loop {
            let step = (b_hi - b_lo) / (n - 1) as f64;
            curve.smooth.clear();
            curve.sharp.clear();
            let mut is_smooth = Vec::with_capacity(kept.len());
            for &(at, width) in &kept {
                if width < opts.sharp_nodes * step {
                    curve.sharp.push(at);
                    is_smooth.push(false);
                } else {
                    curve.smooth.push(at);
                    is_smooth.push(true);
                }
            }
            let reuse = previous
                .take()
                .filter(|(was, old, _)| *was == is_smooth && 2 * old.len() - 1 == n);
            let prepared: Vec<PreparedLnP> = curve
                .smooth
                .iter()
                .map(|&at| PreparedLnP::new(&curve.informative[at as usize], floor_msun))
                .collect();
            let nodes: Vec<f64> = (0..n).map(|k| node(b_lo, b_hi, n, k)).collect();
            let values: Vec<f64> = nodes
                .par_iter()
                .enumerate()
                .map(|(k, &b)| match &reuse {
                    Some((_, old, _)) if k % 2 == 0 => old[k / 2],
                    _ => sum_prepared(&prepared, b),
                })
                .collect();
            curve.spline = CubicSpline::new(&nodes, &values, SplineEnd::NotAKnot)?;
            curve.n_nodes = n;
            let exact: Vec<f64> = match reuse {
                Some((_, _, exact)) => exact,
                None => check_points
                    .par_iter()
                    .map(|&b| sum_prepared(&prepared, b))
                    .collect(),
            };
            curve.achieved_error = max_error(&check_points, &exact, |b| curve.spline.eval(b));
            previous = Some((is_smooth, values, exact));
            let good_enough = match opts.target_error {
                Some(target) => curve.achieved_error.is_nan() || curve.achieved_error <= target,
                None => true,
            };
            if good_enough || 2 * n - 1 > opts.max_nodes {
                break;
            }
            n = 2 * n - 1;
        }
        // Held as long as the comparison: no growth slack.
        curve.smooth.shrink_to_fit();
        curve.sharp.shrink_to_fit();
        curve.informative_indices.shrink_to_fit();
        curve.skipped_indices.shrink_to_fit();
        Ok(curve)
    }

    /// The informative measurements at `positions`, in that order.
    fn at<'a>(&'a self, positions: &'a [u32]) -> impl Iterator<Item = &'a Measurement> + 'a {
        positions.iter().map(|&at| &self.informative[at as usize])
    }

    /// L_c(B): the spline plus the exact sum over sharp objects inside the tabulated range; the
    /// exact sum over every object (skipped ones included) outside it.
    pub fn eval(&self, b_msun: f64) -> f64 {
        if b_msun >= self.b_lo_msun && b_msun <= self.b_hi_msun {
            self.spline.eval(b_msun) + sum_ln_p(self.at(&self.sharp), b_msun, self.floor_msun)
        } else {
            self.out_of_range_calls.fetch_add(1, Ordering::Relaxed);
            self.exact(b_msun)
        }
    }

    /// The exact Σ ln P_i(B) over every informative object, skipped ones included (the
    /// reference the reduction is measured against; cost O(N)).
    pub fn exact(&self, b_msun: f64) -> f64 {
        let mut acc = NeumaierSum::default();
        for m in self
            .at(&self.smooth)
            .chain(self.at(&self.sharp))
            .chain(self.skipped.iter())
        {
            acc.add(ln_prob_consistent(m, b_msun, self.floor_msun));
        }
        acc.total()
    }

    /// Largest |spline − exact sum| in ln L over the seeded check values of B (NaN when
    /// `n_check` was 0). The error in a Δχ² built from this curve is at most four times this
    /// (χ² = −2 ln L, and a difference of two values).
    pub fn achieved_error(&self) -> f64 {
        self.achieved_error
    }

    /// Number of tabulation nodes actually used (≥ `n_nodes` when refinement was needed).
    pub fn n_nodes(&self) -> usize {
        self.n_nodes
    }

    /// Where each sharp object's probability changes, in class-bound units (mass or limit over
    /// the object's scale): the breakpoints a quadrature across B must respect.
    pub fn sharp_transitions_msun(&self) -> impl Iterator<Item = f64> + '_ {
        self.at(&self.sharp).map(|m| m.mass_msun / m.scale)
    }

    /// Upper bound on |ln L| lost by skipping objects: N_skipped × ε_skip (`docs/bounds.md` §8.5).
    pub fn skip_error_bound(&self) -> f64 {
        self.skipped_indices.len() as f64 * self.eps_skip
    }

    /// The tabulated range [B_lo, B_hi] in M☉, padding included.
    pub fn range_msun(&self) -> (f64, f64) {
        (self.b_lo_msun, self.b_hi_msun)
    }

    /// Number of informative objects kept (tabulated or summed exactly).
    pub fn n_informative(&self) -> usize {
        self.informative_indices.len()
    }

    /// Number of informative objects skipped as negligible over the range.
    pub fn n_skipped(&self) -> usize {
        self.skipped_indices.len()
    }

    /// Number of objects summed exactly at each evaluation because they are sharper than the
    /// node spacing allows.
    pub fn n_sharp(&self) -> usize {
        self.sharp.len()
    }

    /// Number of limits in the uninformative direction (P = 1; listed, never in ℓ).
    pub fn n_uninformative(&self) -> usize {
        self.n_uninformative
    }

    /// Positions (in the caller's slice) of the informative objects kept, ascending. These are
    /// the N_inf of the Šidák test (`docs/bounds.md` §8.4).
    pub fn informative_indices(&self) -> &[usize] {
        &self.informative_indices
    }

    /// Positions of the skipped objects, ascending.
    pub fn skipped_indices(&self) -> &[usize] {
        &self.skipped_indices
    }

    /// True when the class floor was ≤ 0 and 1e-6 of the bound was used instead: the caller
    /// must warn (`docs/bounds.md` §8.1).
    pub fn floor_replaced(&self) -> bool {
        self.floor_replaced
    }

    /// The class floor as given, M☉.
    pub fn floor_msun(&self) -> f64 {
        self.floor_msun
    }

    /// How many evaluations fell outside the tabulated range and used the exact sum.
    pub fn out_of_range_calls(&self) -> usize {
        self.out_of_range_calls.load(Ordering::Relaxed)
    }
}

/// Settings of the shared-floor variant (`docs/bounds.md` §8.2).
#[derive(Debug, Clone, PartialEq)]
pub struct SharedFloorOptions {
    /// Points of the uniform ε grid on [−`eps_max`, `eps_max`] (≥ 200, `docs/bounds.md` §8.2;
    /// default 401).
    pub n_eps: usize,
    /// Half-width of the ε grid in units of σ_th (default 8).
    pub eps_max: f64,
    /// Nodes of each class's zero-floor table L⁰_c, which spans the padded range plus
    /// ±eps_max·σ_th and is sharper than the per-object curve (default 1025).
    pub inner_nodes: usize,
}

impl Default for SharedFloorOptions {
    fn default() -> Self {
        Self {
            n_eps: 401,
            eps_max: 8.0,
            inner_nodes: 1025,
        }
    }
}

/// ℓ_B(B) = ln ∫ φ(ε) exp[Σ_c L⁰_c(B + σ_th ε)] dε: one theory error ε common to every object of
/// every class that uses this bound (`docs/bounds.md` §8.2, "shared"). L⁰_c are zero-floor class
/// curves (a width of 1e-6 of the bound keeps them finite); the ε integral is a uniform
/// trapezoid rule with log-sum-exp (adaptive Gauss–Kronrod with breakpoints when hard limits
/// put steps into it), and the result is itself tabulated on the outer nodes. Leave-one-out
/// removal is not exact in this mode (the ε integral does not split over objects).
#[derive(Debug)]
pub struct SharedFloorCurve {
    inner: Vec<ClassCurve>,
    floor_msun: f64,
    eps_max: f64,
    eps_offsets: Vec<f64>,
    ln_weights: Vec<f64>,
    b_lo_msun: f64,
    b_hi_msun: f64,
    outer: CubicSpline,
    outer_error: f64,
}

impl SharedFloorCurve {
    /// Builds the shared-floor curve of the classes that confront the same bound (e.g.
    /// `hburning` and `brown_dwarf` for the MMHB). `floor_msun` must be positive.
    pub fn build(
        classes: &[&[Measurement]],
        floor_msun: f64,
        bound_range_msun: (f64, f64),
        opts: &ReduceOptions,
        shared: &SharedFloorOptions,
    ) -> Result<Self, StatsError> {
        if !(floor_msun > 0.0 && floor_msun.is_finite()) {
            return Err(StatsError::InvalidFloor { floor_msun });
        }
        if shared.n_eps < 200 || shared.eps_max.is_nan() || shared.eps_max <= 0.0 {
            return Err(StatsError::InvalidInput(
                "the ε grid needs ≥ 200 points (docs/bounds.md §8.2) and a positive half-width"
                    .into(),
            ));
        }
        let (b_lo, b_hi) = padded_range(bound_range_msun, opts)?;
        let reach = shared.eps_max * floor_msun;
        let inner_opts = ReduceOptions {
            n_nodes: shared.inner_nodes,
            ..opts.clone()
        };
        let inner = classes
            .iter()
            .map(|ms| {
                ClassCurve::build_on_range(*ms, 0.0, (b_lo - reach, b_hi + reach), &inner_opts)
            })
            .collect::<Result<Vec<_>, _>>()?;
        let n = shared.n_eps;
        let d_eps = 2.0 * shared.eps_max / (n - 1) as f64;
        let mut eps_offsets = Vec::with_capacity(n);
        let mut ln_weights = Vec::with_capacity(n);
        for j in 0..n {
            let e = node(-shared.eps_max, shared.eps_max, n, j);
            let end = if j == 0 || j == n - 1 {
                0.5f64.ln()
            } else {
                0.0
            };
            eps_offsets.push(floor_msun * e);
            ln_weights.push(d_eps.ln() + end - 0.5 * e * e - super::prob::LN_SQRT_2PI);
        }
        let mut curve = Self {
            inner,
            floor_msun,
            eps_max: shared.eps_max,
            eps_offsets,
            ln_weights,
            b_lo_msun: b_lo,
            b_hi_msun: b_hi,
            outer: CubicSpline::linear_placeholder(b_lo, b_hi),
            outer_error: 0.0,
        };
        let nodes: Vec<f64> = (0..opts.n_nodes.max(4))
            .map(|k| node(b_lo, b_hi, opts.n_nodes.max(4), k))
            .collect();
        let values: Vec<f64> = nodes
            .par_iter()
            .map(|&b| curve.integrate(b, |c, x| c.eval(x)))
            .collect();
        curve.outer = CubicSpline::new(&nodes, &values, SplineEnd::NotAKnot)?;
        curve.outer_error = measure_error(opts, b_lo, b_hi, |b| {
            (curve.outer.eval(b) - curve.integrate(b, |c, x| c.eval(x))).abs()
        });
        Ok(curve)
    }

    /// ln ∫ φ(ε) exp[Σ_c L⁰_c(B + σ_th ε)] dε. Smooth integrands use the uniform trapezoid rule
    /// (spectrally accurate for them); when sharp objects (hard limits) put near-steps into the
    /// integrand, adaptive Gauss–Kronrod with a breakpoint at every step is used instead, since
    /// a uniform rule converges only linearly across a step.
    fn integrate(&self, b: f64, class_value: impl Fn(&ClassCurve, f64) -> f64) -> f64 {
        let log_sum = |off: f64| {
            self.inner
                .iter()
                .map(|c| class_value(c, b + off))
                .sum::<f64>()
        };
        let terms: Vec<f64> = self
            .eps_offsets
            .iter()
            .zip(&self.ln_weights)
            .map(|(&off, &lw)| lw + log_sum(off))
            .collect();
        let grid = log_sum_exp(&terms);
        let eps_max = self.eps_max;
        let mut breaks: Vec<f64> = self
            .inner
            .iter()
            .flat_map(ClassCurve::sharp_transitions_msun)
            .map(|x| (x - b) / self.floor_msun)
            .filter(|e| e.abs() < eps_max)
            .collect();
        if breaks.is_empty() || breaks.len() > MAX_SHARP_BREAKPOINTS || !grid.is_finite() {
            return grid;
        }
        breaks.push(-eps_max);
        breaks.push(eps_max);
        breaks.sort_by(f64::total_cmp);
        breaks.dedup();
        // Scale by the largest grid value of the log-integrand so the exponentials stay finite.
        let shift = terms
            .iter()
            .zip(&self.ln_weights)
            .zip(&self.eps_offsets)
            .map(|((t, lw), &off)| {
                let e = off / self.floor_msun;
                t - lw - 0.5 * e * e - super::prob::LN_SQRT_2PI
            })
            .fold(f64::NEG_INFINITY, f64::max);
        let th = self.floor_msun;
        let f = |e: f64| (-0.5 * e * e - super::prob::LN_SQRT_2PI + log_sum(th * e) - shift).exp();
        shift + super::prob::adaptive_gauss_kronrod(&f, &breaks, 1e-12).ln()
    }

    /// ℓ_B(B) from the outer table (direct ε integral outside the tabulated range).
    pub fn eval(&self, b_msun: f64) -> f64 {
        if b_msun >= self.b_lo_msun && b_msun <= self.b_hi_msun {
            self.outer.eval(b_msun)
        } else {
            self.integrate(b_msun, |c, x| c.eval(x))
        }
    }

    /// The same ε integral with exact object sums inside (reference for tests; cost O(N·n_ε)).
    pub fn exact(&self, b_msun: f64) -> f64 {
        self.integrate(b_msun, |c, x| c.exact(x))
    }

    /// Bound on |eval − exact| in ln L: the inner tables' measured errors (they add inside the
    /// exponent and the log-sum-exp cannot amplify them) plus the measured outer-table error.
    pub fn achieved_error(&self) -> f64 {
        self.inner
            .iter()
            .map(ClassCurve::achieved_error)
            .sum::<f64>()
            + self.outer_error
    }

    /// The zero-floor class curves L⁰_c, in the order the classes were given.
    pub fn class_curves(&self) -> &[ClassCurve] {
        &self.inner
    }

    /// The shared floor σ_th, M☉.
    pub fn floor_msun(&self) -> f64 {
        self.floor_msun
    }

    /// The outer tabulated range, M☉.
    pub fn range_msun(&self) -> (f64, f64) {
        (self.b_lo_msun, self.b_hi_msun)
    }
}

/// Above this many sharp objects inside the ε window, the shared-floor integral keeps the
/// uniform rule (and its measured error) instead of one Gauss–Kronrod panel per step.
const MAX_SHARP_BREAKPOINTS: usize = 64;

/// The range [min, max] of the finite values of a bound over a grid, or `None` if there are none.
pub fn bound_range(values_msun: &[f64]) -> Option<(f64, f64)> {
    let mut it = values_msun.iter().copied().filter(|v| v.is_finite());
    let first = it.next()?;
    Some(it.fold((first, first), |(lo, hi), v| (lo.min(v), hi.max(v))))
}

/// Smoothing width of an object's ln P as a function of the class bound: its narrowest error
/// combined with its floor, divided by its scale.
fn smoothing_width_in_bound(m: &Measurement, b_abs: f64, floor_msun: f64) -> f64 {
    let th = effective_floor_msun(m.scale * b_abs, m.scale * floor_msun).0;
    let narrow = match m.kind {
        MassKind::Measured { lo, hi } => lo.min(hi),
        MassKind::UpperLimit { sigma } | MassKind::LowerLimit { sigma } => sigma.unwrap_or(0.0),
    };
    narrow.hypot(th) / m.scale
}

fn check_range(range: (f64, f64)) -> Result<(f64, f64), StatsError> {
    let (lo, hi) = range;
    if !(lo.is_finite() && hi.is_finite() && lo <= hi) {
        return Err(StatsError::InvalidInput(format!(
            "bound range [{lo}, {hi}] M☉ is not a finite ordered pair"
        )));
    }
    Ok((lo, hi))
}

/// k-th of n uniform nodes on [a, b], exact at both ends.
fn node(a: f64, b: f64, n: usize, k: usize) -> f64 {
    if k + 1 == n {
        b
    } else {
        a + (b - a) * (k as f64 / (n - 1) as f64)
    }
}

/// [`sum_ln_p`] of prepared objects (the same terms in the same order, so the same bits).
fn sum_prepared(objects: &[PreparedLnP], b: f64) -> f64 {
    let mut acc = NeumaierSum::default();
    for p in objects {
        acc.add(p.ln_p(b));
    }
    acc.total()
}

fn sum_ln_p<'a>(objects: impl Iterator<Item = &'a Measurement>, b: f64, floor_msun: f64) -> f64 {
    let mut acc = NeumaierSum::default();
    for m in objects {
        acc.add(ln_prob_consistent(m, b, floor_msun));
    }
    acc.total()
}

/// The seeded check points of [`measure_error`] (none when `n_check` is 0).
fn check_points(opts: &ReduceOptions, lo: f64, hi: f64) -> Vec<f64> {
    let mut rng = SplitMix64::new(opts.check_seed);
    (0..opts.n_check)
        .map(|_| lo + (hi - lo) * rng.next_f64())
        .collect()
}

/// [`measure_error`] with the exact values at the check points given: the largest
/// |approximation − exact| (NaN without check points).
fn max_error(points: &[f64], exact: &[f64], approx: impl Fn(f64) -> f64 + Sync) -> f64 {
    if points.is_empty() {
        return f64::NAN;
    }
    points
        .par_iter()
        .zip(exact)
        .map(|(&b, e)| (approx(b) - e).abs())
        .reduce(|| 0.0, f64::max)
}

fn measure_error(opts: &ReduceOptions, lo: f64, hi: f64, err: impl Fn(f64) -> f64 + Sync) -> f64 {
    let points = check_points(opts, lo, hi);
    if points.is_empty() {
        return f64::NAN;
    }
    points.par_iter().map(|&b| err(b)).reduce(|| 0.0, f64::max)
}

/// ln Σ exp(x_i), stable for terms spanning hundreds of orders of magnitude.
pub fn log_sum_exp(terms: &[f64]) -> f64 {
    let max = terms.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if !max.is_finite() {
        return max;
    }
    let mut acc = NeumaierSum::default();
    for &t in terms {
        acc.add((t - max).exp());
    }
    max + acc.total().ln()
}

/// Compensated (Kahan–Babuška–Neumaier) summation: sums of 10⁵ log-probabilities keep their
/// last digits, and the order is fixed, so results are reproducible (Neumaier 1974, ZAMM 54, 39).
#[derive(Debug, Default, Clone, Copy)]
pub struct NeumaierSum {
    sum: f64,
    compensation: f64,
}

impl NeumaierSum {
    /// Adds one term.
    pub fn add(&mut self, x: f64) {
        let t = self.sum + x;
        if self.sum.abs() >= x.abs() {
            self.compensation += (self.sum - t) + x;
        } else {
            self.compensation += (x - t) + self.sum;
        }
        self.sum = t;
    }

    /// The compensated total.
    pub fn total(&self) -> f64 {
        self.sum + self.compensation
    }
}

/// SplitMix64 (Steele, Lea & Flood 2014, OOPSLA, "Fast splittable pseudorandom number
/// generators"): a tiny seeded generator for deterministic check points and test catalogues.
/// Hand-written because `rand` is not a dependency and ten lines suffice.
#[derive(Debug, Clone)]
pub struct SplitMix64 {
    state: u64,
}

impl SplitMix64 {
    /// A generator with the given seed.
    pub fn new(seed: u64) -> Self {
        Self { state: seed }
    }

    /// Next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.state = self.state.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.state;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    /// Uniform in [0, 1) with 53 random bits.
    pub fn next_f64(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }
}

/// End condition of a cubic spline.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SplineEnd {
    /// Zero second derivative at both ends. Its error is O(h²) near the ends unless the
    /// function's own second derivative vanishes there.
    Natural,
    /// Continuous third derivative at the second and penultimate nodes: O(h⁴) everywhere, the
    /// right choice for L_c(B), whose curvature does not vanish at the range ends.
    NotAKnot,
}

/// An interpolating cubic spline on strictly increasing abscissae, used for the class curves
/// and for interpolating bounds along the ϒ axis. Outside the nodes it extends the end pieces.
#[derive(Debug, Clone)]
pub struct CubicSpline {
    x: Vec<f64>,
    y: Vec<f64>,
    second: Vec<f64>,
    uniform_step: Option<f64>,
}

impl CubicSpline {
    /// Interpolates (x_i, y_i); needs ≥ 2 points, strictly increasing finite x and finite y.
    /// Two points give the line; three points with not-a-knot give the parabola.
    pub fn new(x: &[f64], y: &[f64], end: SplineEnd) -> Result<Self, StatsError> {
        let n = x.len();
        if n < 2 || y.len() != n {
            return Err(StatsError::InvalidInput(format!(
                "a spline needs ≥ 2 points and as many values ({} abscissae, {} values)",
                n,
                y.len()
            )));
        }
        if x.iter().chain(y).any(|v| !v.is_finite()) || x.windows(2).any(|w| w[1] <= w[0]) {
            return Err(StatsError::InvalidInput(
                "spline abscissae must be finite and strictly increasing, values finite".into(),
            ));
        }
        let second = spline_second_derivatives(x, y, end);
        let step = x[1] - x[0];
        let uniform = x
            .windows(2)
            .all(|w| ((w[1] - w[0]) - step).abs() <= 1e-12 * step);
        Ok(Self {
            x: x.to_vec(),
            y: y.to_vec(),
            second,
            uniform_step: uniform.then_some(step),
        })
    }

    /// Natural cubic spline through the points (see [`SplineEnd::Natural`]).
    pub fn natural(x: &[f64], y: &[f64]) -> Result<Self, StatsError> {
        Self::new(x, y, SplineEnd::Natural)
    }

    /// Not-a-knot cubic spline through the points (see [`SplineEnd::NotAKnot`]).
    pub fn not_a_knot(x: &[f64], y: &[f64]) -> Result<Self, StatsError> {
        Self::new(x, y, SplineEnd::NotAKnot)
    }

    fn linear_placeholder(a: f64, b: f64) -> Self {
        Self {
            x: vec![a, b],
            y: vec![0.0, 0.0],
            second: vec![0.0, 0.0],
            uniform_step: Some(b - a),
        }
    }

    /// The spline's value at `t`.
    pub fn eval(&self, t: f64) -> f64 {
        self.eval_with(&self.weights(t))
    }

    /// The part of [`CubicSpline::eval`] at `t` that depends on the knots alone: splines on the
    /// same knots (every query's radius along one grid row) are evaluated at one point with it
    /// computed once ([`CubicSpline::eval_with`], the same bits as `eval`).
    pub fn weights(&self, t: f64) -> SplineWeights {
        let n = self.x.len();
        let i = match self.uniform_step {
            // The saturating cast is the floor here: a fraction ≥ 0 truncates down, anything
            // below 0 (and NaN) gives 0, as the floor's check did (without a libm call).
            Some(h) => (((t - self.x[0]) / h) as usize).min(n - 2),
            None => self
                .x
                .partition_point(|&xi| xi <= t)
                .saturating_sub(1)
                .min(n - 2),
        };
        let h = self.x[i + 1] - self.x[i];
        let a = (self.x[i + 1] - t) / h;
        let b = 1.0 - a;
        SplineWeights {
            i,
            a,
            b,
            cubic_a: a * a * a - a,
            cubic_b: b * b * b - b,
            h,
        }
    }

    /// The spline's value with `w` from [`CubicSpline::weights`] of a spline on the same knots.
    pub fn eval_with(&self, w: &SplineWeights) -> f64 {
        w.eval_on(&self.y, &self.second)
    }

    /// Number of nodes.
    pub fn n_nodes(&self) -> usize {
        self.x.len()
    }

    /// First and last abscissa.
    pub fn domain(&self) -> (f64, f64) {
        (self.x[0], self.x[self.x.len() - 1])
    }
}

/// The second derivatives at the knots of the cubic spline through (x_i, y_i) with end
/// condition `end`: what [`CubicSpline::new`] stores, for callers that hold many splines on
/// the same knots in one flat table instead of one [`CubicSpline`] each
/// ([`SplineWeights::eval_on`]). The caller has checked what `new` checks (≥ 2 points, as many
/// values, finite, x strictly increasing).
pub fn spline_second_derivatives(x: &[f64], y: &[f64], end: SplineEnd) -> Vec<f64> {
    let n = x.len();
    let h: Vec<f64> = x.windows(2).map(|w| w[1] - w[0]).collect();
    let d: Vec<f64> = (0..n - 1).map(|i| (y[i + 1] - y[i]) / h[i]).collect();
    let mut second = vec![0.0; n];
    match (n, end) {
        (2, _) => {}
        (3, SplineEnd::NotAKnot) => {
            let c = 2.0 * (d[1] - d[0]) / (h[0] + h[1]);
            second.iter_mut().for_each(|s| *s = c);
        }
        _ => {
            let k = n - 2; // unknowns M_1 … M_{n−2}
            let mut sub = vec![0.0; k];
            let mut diag = vec![0.0; k];
            let mut sup = vec![0.0; k];
            let mut rhs = vec![0.0; k];
            for r in 0..k {
                let i = r + 1;
                sub[r] = h[i - 1];
                diag[r] = 2.0 * (h[i - 1] + h[i]);
                sup[r] = h[i];
                rhs[r] = 6.0 * (d[i] - d[i - 1]);
            }
            if end == SplineEnd::NotAKnot {
                // M_0 = ((h0+h1) M_1 − h0 M_2)/h1 folded into the first row, and the mirror
                // relation into the last one.
                let (h0, h1) = (h[0], h[1]);
                diag[0] += h0 * (h0 + h1) / h1;
                sup[0] -= h0 * h0 / h1;
                let (ha, hb) = (h[n - 3], h[n - 2]);
                diag[k - 1] += hb * (ha + hb) / ha;
                sub[k - 1] -= hb * hb / ha;
            }
            let interior = solve_tridiagonal(&sub, &diag, &sup, &rhs);
            second[1..n - 1].copy_from_slice(&interior);
            if end == SplineEnd::NotAKnot {
                let (h0, h1) = (h[0], h[1]);
                second[0] = ((h0 + h1) * second[1] - h0 * second[2]) / h1;
                let (ha, hb) = (h[n - 3], h[n - 2]);
                second[n - 1] = ((ha + hb) * second[n - 2] - hb * second[n - 3]) / ha;
            }
        }
    }
    second
}

/// Where a point falls among a spline's knots, with its interpolation weights
/// ([`CubicSpline::weights`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SplineWeights {
    i: usize,
    a: f64,
    b: f64,
    cubic_a: f64,
    cubic_b: f64,
    h: f64,
}

impl SplineWeights {
    /// The value of the spline on these weights' knots whose values are `y` and second
    /// derivatives `second` ([`spline_second_derivatives`]): [`CubicSpline::eval_with`]'s
    /// arithmetic, so the same bits as holding the spline.
    pub fn eval_on(&self, y: &[f64], second: &[f64]) -> f64 {
        let i = self.i;
        self.eval_values(y[i], y[i + 1], second[i], second[i + 1])
    }

    /// The knot interval these weights are for: the spline reads knots `i` and `i + 1`.
    pub fn interval(&self) -> usize {
        self.i
    }

    /// [`SplineWeights::eval_on`] from the two knots' values and second derivatives alone (the
    /// same arithmetic, so the same bits), for a caller whose tables are not one spline's rows.
    pub fn eval_values(&self, y0: f64, y1: f64, second0: f64, second1: f64) -> f64 {
        self.a * y0
            + self.b * y1
            + (self.cubic_a * second0 + self.cubic_b * second1) * self.h * self.h / 6.0
    }
}

/// Thomas algorithm for a tridiagonal system (diagonally dominant here, no pivoting needed).
fn solve_tridiagonal(sub: &[f64], diag: &[f64], sup: &[f64], rhs: &[f64]) -> Vec<f64> {
    let n = diag.len();
    let mut c = vec![0.0; n];
    let mut d = vec![0.0; n];
    c[0] = sup[0] / diag[0];
    d[0] = rhs[0] / diag[0];
    for i in 1..n {
        let m = diag[i] - sub[i] * c[i - 1];
        c[i] = sup[i] / m;
        d[i] = (rhs[i] - sub[i] * d[i - 1]) / m;
    }
    let mut x = vec![0.0; n];
    x[n - 1] = d[n - 1];
    for i in (0..n - 1).rev() {
        x[i] = d[i] - c[i] * x[i + 1];
    }
    x
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Not-a-knot reproduces cubics exactly and natural reproduces lines (properties of the
    /// end conditions; de Boor 1978, "A practical guide to splines", ch. IV).
    #[test]
    fn spline_reproduces_polynomials() {
        let x: Vec<f64> = (0..9)
            .map(|i| f64::from(i) * 0.37 + 0.01 * f64::from(i * i))
            .collect();
        let cubic = |t: f64| 1.0 - 2.0 * t + 0.5 * t * t - 0.3 * t * t * t;
        let y: Vec<f64> = x.iter().map(|&t| cubic(t)).collect();
        let s = CubicSpline::not_a_knot(&x, &y).unwrap();
        for k in 0..50 {
            let t = -0.2 + f64::from(k) * 0.08;
            assert!((s.eval(t) - cubic(t)).abs() < 1e-11, "{t}");
        }
        let line: Vec<f64> = x.iter().map(|&t| 3.0 - t).collect();
        let s = CubicSpline::natural(&x, &line).unwrap();
        assert!((s.eval(1.234) - (3.0 - 1.234)).abs() < 1e-14);
        // Four points: not-a-knot is the interpolating cubic.
        let y4: Vec<f64> = x[..4].iter().map(|&t| cubic(t)).collect();
        let s = CubicSpline::not_a_knot(&x[..4], &y4).unwrap();
        assert!((s.eval(0.5) - cubic(0.5)).abs() < 1e-12);
    }

    #[test]
    fn splitmix_reference_output() {
        // Source: the reference C implementation of SplitMix64 (Vigna, prng.di.unimi.it,
        // splitmix64.c) from seed 0 gives 0xE220A8397B1DCDAF first (from memory).
        let mut r = SplitMix64::new(0);
        assert_eq!(r.next_u64(), 0xE220_A839_7B1D_CDAF);
    }

    #[test]
    fn weights_of_one_spline_evaluate_another_on_the_same_knots_to_the_bit() {
        // Common practice, no source: the shared part of the evaluation must give what each
        // spline's own evaluation gives. Uniform and uneven knots, points inside, on and beyond
        // the knots.
        let mut rng = SplitMix64::new(17);
        for xs in [
            (0..9)
                .map(|k| -0.3 + 0.1125 * f64::from(k))
                .collect::<Vec<f64>>(),
            vec![0.0, 0.1, 0.15, 0.4, 0.41, 0.9, 1.3],
        ] {
            let ys: Vec<Vec<f64>> = (0..5)
                .map(|_| xs.iter().map(|_| rng.next_f64()).collect())
                .collect();
            let splines: Vec<CubicSpline> = ys
                .iter()
                .map(|y| CubicSpline::new(&xs, y, SplineEnd::NotAKnot).unwrap())
                .collect();
            let (lo, hi) = (xs[0] - 0.2, xs[xs.len() - 1] + 0.2);
            let points = (0..400)
                .map(|_| lo + (hi - lo) * rng.next_f64())
                .chain(xs.iter().copied());
            // The flat form (`slice::FineRadii`): second derivatives alone, weights from a
            // spline of other values on the same knots.
            let seconds: Vec<Vec<f64>> = ys
                .iter()
                .map(|y| spline_second_derivatives(&xs, y, SplineEnd::NotAKnot))
                .collect();
            let knots = CubicSpline::new(&xs, &vec![0.0; xs.len()], SplineEnd::NotAKnot).unwrap();
            for t in points {
                let w = splines[0].weights(t);
                let flat = knots.weights(t);
                for ((sp, y), second) in splines.iter().zip(&ys).zip(&seconds) {
                    assert_eq!(sp.eval_with(&w).to_bits(), sp.eval(t).to_bits(), "t = {t}");
                    assert_eq!(
                        flat.eval_on(y, second).to_bits(),
                        sp.eval(t).to_bits(),
                        "t = {t}"
                    );
                }
            }
        }
    }
}
