//! Every bound over a (Υ, τ) grid, in parallel, with failures recorded per point.
//!
//! One job: evaluate [`PointBounds`] at every point of a rectangular grid (or a contiguous shard
//! of it) and keep the white-dwarf mass–radius tables the confrontation needs, in a
//! [`TheoryGrid`] that serialises to deterministic bytes for the content-addressed cache.
//!
//! Layout: points are **row-major with τ outer and Υ inner**: index = i_τ · n_Υ + i_Υ, and the
//! values are [`grid_value`] (an axis value, with rounding residues of zero made exactly 0). A
//! shard `I/N` (1-based) owns the contiguous index range ⌊(I−1)T/N⌋ .. ⌊IT/N⌋ of the T points;
//! it solves the interpolation nodes its points need (every shard solves all white-dwarf node
//! tables, a small share of the work, so that shards stay independent), and
//! [`TheoryGrid::merge`] joins shards into a grid identical to an unsharded run.
//!
//! Shortcuts, each exact or measured:
//! * gradient ansatz: only τ = 0 is solved (once per Υ column) and every τ follows from the
//!   exact rescaling G → (1 − τ)G (`structure.md` §2.2, §3.7);
//! * the Schönberg–Chandrasekhar fraction exists only at τ = 0 (`bounds.md` §7.2), so it is
//!   solved along the τ = 0 row alone and refused with its reason elsewhere;
//! * white-dwarf tables are solved on a sub-grid of nodes (every `numerics.wd_grid_stride`-th
//!   point of each axis, and the last) and interpolated in (Υ, τ) in between by tensor-product
//!   cubic Lagrange polynomials of ln(m/(m_Ch − m)) and ln η at each tabulated x_c, with the
//!   point's own exact m_Ch = ω₃(Υ, τ); points whose stencil
//!   touches a node without a model are solved exactly. The interpolation error is measured at
//!   build time against exact tables at cell centres and stored ([`InterpolationCheck`]);
//! * likewise, with `numerics.scalar_grid_stride` > 1, the break-up reference radius correction
//!   (full EOS over polytrope, ≈ 0.998) and the SC factor are interpolated between solved nodes
//!   (default 1: every point solved).
//!
//! ```
//! use dwarfbound::theory::grid::{compute, GridOptions};
//! use dwarfbound::theory::point::TheorySettings;
//! use dwarfbound::theory::Axis;
//!
//! let upsilon = Axis { start: -0.1, stop: 0.1, count: 3 };
//! let tau = Axis { start: 0.0, stop: 0.0, count: 1 };
//! let grid = compute(upsilon, tau, &TheorySettings::default(), &GridOptions::default()).unwrap();
//! assert_eq!(grid.points.len(), 3);
//! let standard = grid.point(grid.index(1, 0)).unwrap();
//! assert_eq!(standard.mmhb.ok().unwrap().value_msun, 0.075);
//! let bytes = grid.to_json_bytes().unwrap();
//! assert_eq!(dwarfbound::theory::grid::TheoryGrid::from_json_bytes(&bytes).unwrap(), grid);
//! ```

use std::collections::{BTreeMap, BTreeSet};
use std::io::IsTerminal;
use std::ops::Range;

use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::output::fmt_f64;
use crate::theory::point::{
    Failure, LaneEmdenPair, Outcome, PointBounds, PointEvaluator, SettingsError, TheorySettings,
};
use crate::theory::white_dwarf::WdMassRadius;
use crate::theory::{Anisotropy, Axis};

/// The format tag of serialised grids; bumped when the layout changes.
pub const GRID_FORMAT: &str = "dwarfbound-theory-grid-1";

/// Largest number of points in one grid (a guard against typos such as `0:1:1e9`).
pub const MAX_GRID_POINTS: usize = 4_000_000;

/// A grid that cannot be built, read or merged.
#[derive(Debug, thiserror::Error)]
pub enum GridError {
    /// The settings are invalid.
    #[error(transparent)]
    Settings(#[from] SettingsError),
    /// An axis is unusable.
    #[error("invalid grid axis {axis}: {why}")]
    Axis {
        /// `upsilon` or `tau`.
        axis: &'static str,
        /// What is wrong.
        why: String,
    },
    /// A shard specification is unusable.
    #[error("invalid shard: {0}")]
    Shard(String),
    /// Serialised bytes could not be read.
    #[error("cannot read theory grid: {0}")]
    Format(String),
    /// Shards that do not fit together.
    #[error("cannot merge theory grids: {0}")]
    Merge(String),
}

/// Shard `index` of `count` (1-based), e.g. `2/4`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub struct Shard {
    /// Which shard, 1 ≤ index ≤ count.
    pub index: usize,
    /// How many shards.
    pub count: usize,
}

impl Shard {
    /// Parses `I/N` with 1 ≤ I ≤ N.
    pub fn parse(text: &str) -> Result<Shard, GridError> {
        let bad = || GridError::Shard(format!("`{text}` is not I/N with 1 ≤ I ≤ N (e.g. 2/4)"));
        let (i, n) = text.split_once('/').ok_or_else(bad)?;
        let index: usize = i.trim().parse().map_err(|_| bad())?;
        let count: usize = n.trim().parse().map_err(|_| bad())?;
        if index == 0 || count == 0 || index > count {
            return Err(bad());
        }
        Ok(Shard { index, count })
    }

    /// The contiguous row-major index range this shard owns out of `total` points.
    pub fn range(&self, total: usize) -> Range<usize> {
        let lo = ((self.index - 1) as u128 * total as u128 / self.count as u128) as usize;
        let hi = (self.index as u128 * total as u128 / self.count as u128) as usize;
        lo..hi
    }
}

impl std::fmt::Display for Shard {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}/{}", self.index, self.count)
    }
}

/// How to build a grid.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct GridOptions {
    /// Also build the white-dwarf mass–radius tables.
    pub with_wd_tables: bool,
    /// Compute only this shard.
    pub shard: Option<Shard>,
    /// Never show a progress bar (one is shown only when stderr is a terminal anyway).
    pub quiet: bool,
}

/// The measured error of an interpolation in (Υ, τ) between solved nodes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct InterpolationCheck {
    /// What was compared.
    pub quantity: String,
    /// Number of off-node points compared with an exact solve.
    pub samples: usize,
    /// Largest |interpolated/exact − 1| over the samples (and, for tables, over the test masses).
    pub max_relative_error: f64,
    /// Υ of the worst sample (absent without samples).
    pub worst_upsilon: Option<f64>,
    /// τ of the worst sample.
    pub worst_tau: Option<f64>,
}

/// White-dwarf tables of a grid: solved on nodes, interpolated elsewhere (see the module docs).
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct WdGrid {
    /// Fine Υ indices of the nodes.
    pub upsilon_nodes: Vec<usize>,
    /// Fine τ indices of the nodes; empty for the gradient ansatz, whose tables are solved at
    /// τ = 0 and rescaled exactly.
    pub tau_nodes: Vec<usize>,
    /// Node tables, τ-node outer, Υ-node inner (one row at τ = 0 for the gradient ansatz).
    pub node_tables: Vec<Outcome<WdMassRadius>>,
    /// Points of this grid (fine index) whose table was solved directly, because a node of
    /// their interpolation stencil has no model or the interpolated table was not valid.
    pub exact_tables: BTreeMap<usize, Outcome<WdMassRadius>>,
    /// The node tables as interpolation variables (ln(m/(m_Ch − m)) then ln η), built once on
    /// first use; not serialised.
    #[serde(skip)]
    node_values: std::sync::OnceLock<Vec<Option<Vec<f64>>>>,
}

impl PartialEq for WdGrid {
    fn eq(&self, other: &Self) -> bool {
        self.upsilon_nodes == other.upsilon_nodes
            && self.tau_nodes == other.tau_nodes
            && self.node_tables == other.node_tables
            && self.exact_tables == other.exact_tables
    }
}

impl WdGrid {
    /// Interpolation variables of every node table: z = ln(m/(m_Ch − m)) keeps the relative
    /// precision of m at low mass and of the deficit m_Ch − m near the Chandrasekhar mass,
    /// where R ∝ √(m_Ch − m); it is invariant under the gradient rescaling. Then ln η.
    fn node_values(&self) -> &[Option<Vec<f64>>] {
        self.node_values.get_or_init(|| {
            self.node_tables
                .iter()
                .map(|t| {
                    let t = t.ok()?;
                    let m_ch = t.mass_ch_dimless();
                    Some(
                        t.mass_dimless()
                            .iter()
                            .map(|m| (m / (m_ch - m)).ln())
                            .chain(t.radius_dimless().iter().map(|x| x.ln()))
                            .collect(),
                    )
                })
                .collect()
        })
    }
}

/// Every bound over a grid (or a shard of it).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TheoryGrid {
    /// [`GRID_FORMAT`].
    pub format: String,
    /// The Υ axis.
    pub upsilon: Axis,
    /// The τ axis.
    pub tau: Axis,
    /// The settings every point was computed with.
    pub settings: TheorySettings,
    /// The shard, if this is one.
    pub shard: Option<Shard>,
    /// Row-major index of `points[0]`.
    pub first_index: usize,
    /// The points of `first_index ..`, row-major (τ outer, Υ inner).
    pub points: Vec<PointBounds>,
    /// Measured errors of every interpolation between solved nodes that this grid used (the
    /// break-up reference correction, the SC factor, white-dwarf radii), one entry per
    /// quantity; empty when every value was solved directly.
    pub interpolation_checks: Vec<InterpolationCheck>,
    /// White-dwarf tables, when asked for.
    pub white_dwarfs: Option<WdGrid>,
}

/// The canonical description of a grid computation for a content-addressed cache key: the
/// settings' [`TheorySettings::cache_key_text`], the axes, the shard and whether white-dwarf
/// tables are included.
pub fn cache_key_text(
    upsilon: &Axis,
    tau: &Axis,
    settings: &TheorySettings,
    options: &GridOptions,
) -> String {
    format!(
        "{}grid.format = {GRID_FORMAT}\ngrid.upsilon = {:?}:{:?}:{}\ngrid.tau = {:?}:{:?}:{}\ngrid.shard = {}\ngrid.wd_tables = {}\n",
        settings.cache_key_text(),
        upsilon.start,
        upsilon.stop,
        upsilon.count,
        tau.start,
        tau.stop,
        tau.count,
        options
            .shard
            .map(|s| s.to_string())
            .unwrap_or_else(|| "all".into()),
        options.with_wd_tables
    )
}

fn check_axis(name: &'static str, a: &Axis) -> Result<(), GridError> {
    let why = if a.count == 0 {
        Some("count must be ≥ 1".to_string())
    } else if !(a.start.is_finite() && a.stop.is_finite()) {
        Some("ends must be finite".to_string())
    } else if a.count > 1 && a.start >= a.stop {
        Some(format!("start {} must be below stop {}", a.start, a.stop))
    } else if a.count == 1 && a.start != a.stop {
        Some("a one-point axis needs start = stop".to_string())
    } else {
        None
    };
    match why {
        Some(why) => Err(GridError::Axis { axis: name, why }),
        None => Ok(()),
    }
}

/// The i-th value of a grid axis: [`Axis::value`], except that a value within a few rounding
/// errors of zero is exactly 0 (so that `-0.9:0.3:5` has the standard-gravity point Υ = 0, not
/// −1.1e-16, and a τ = 0 row is recognised). Every point of a grid carries this value.
pub fn grid_value(axis: &Axis, i: usize) -> f64 {
    let v = axis.value(i);
    let span = axis.start.abs().max(axis.stop.abs());
    if v.abs() <= 8.0 * f64::EPSILON * span {
        0.0
    } else {
        v
    }
}

/// Node indices of an axis of `count` points: every `stride`-th and the last; every point when
/// that would leave fewer than four nodes for a longer axis (a cubic stencil needs four).
fn axis_nodes(count: usize, stride: usize) -> Vec<usize> {
    let mut v: Vec<usize> = (0..count).step_by(stride.max(1)).collect();
    if v.last() != Some(&(count - 1)) {
        v.push(count - 1);
    }
    if v.len() < 4 && v.len() < count {
        return (0..count).collect();
    }
    v
}

/// Positions (into `nodes`) of the interpolation stencil of fine index `i`: the node itself, or
/// the four nearest nodes around its interval (shifted inwards at the ends; fewer if the axis
/// has fewer nodes).
fn stencil(nodes: &[usize], i: usize) -> Vec<usize> {
    match nodes.binary_search(&i) {
        Ok(p) => vec![p],
        Err(p) => {
            // nodes[p-1] < i < nodes[p]
            let k = nodes.len().min(4);
            let start = p.saturating_sub(2).min(nodes.len() - k);
            (start..start + k).collect()
        }
    }
}

/// Lagrange weights for the nodes at `xs`, evaluated at x.
fn lagrange_weights(xs: &[f64], x: f64) -> Vec<f64> {
    (0..xs.len())
        .map(|j| {
            let mut w = 1.0;
            for (l, xl) in xs.iter().enumerate() {
                if l != j {
                    w *= (x - xl) / (xs[j] - xl);
                }
            }
            w
        })
        .collect()
}

/// A progress bar on stderr only when it is a terminal (and not `quiet`).
fn progress(len: u64, quiet: bool) -> indicatif::ProgressBar {
    if quiet || !std::io::stderr().is_terminal() {
        return indicatif::ProgressBar::hidden();
    }
    let pb = indicatif::ProgressBar::new(len);
    pb.set_style(
        indicatif::ProgressStyle::with_template(
            "{msg:>22} [{bar:40}] {pos}/{len} ({elapsed}, eta {eta})",
        )
        .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
    );
    pb
}

/// Node values on a 2-D node grid, keyed by (τ-node position, Υ-node position).
type NodeValues<T> = BTreeMap<(usize, usize), Result<T, Failure>>;

/// Tensor-product interpolation of vector values at fine point (iu, it) from node values
/// (`get(τ-node position, Υ-node position)`). `None` if a stencil node is missing or failed.
fn interpolate_2d<'a>(
    get: impl Fn(usize, usize) -> Option<&'a [f64]>,
    upsilon: &Axis,
    tau: &Axis,
    u_nodes: &[usize],
    t_nodes: &[usize],
    iu: usize,
    it: usize,
) -> Option<Vec<f64>> {
    let su = stencil(u_nodes, iu);
    let st = stencil(t_nodes, it);
    let wu = lagrange_weights(
        &su.iter()
            .map(|&p| grid_value(upsilon, u_nodes[p]))
            .collect::<Vec<_>>(),
        grid_value(upsilon, iu),
    );
    let wt = lagrange_weights(
        &st.iter()
            .map(|&p| grid_value(tau, t_nodes[p]))
            .collect::<Vec<_>>(),
        grid_value(tau, it),
    );
    let mut out: Option<Vec<f64>> = None;
    for (a, &pt) in st.iter().enumerate() {
        for (b, &pu) in su.iter().enumerate() {
            let v = get(pt, pu)?;
            let w = wt[a] * wu[b];
            match &mut out {
                None => out = Some(v.iter().map(|x| w * x).collect()),
                Some(o) => {
                    if o.len() != v.len() {
                        return None;
                    }
                    for (oi, vi) in o.iter_mut().zip(v) {
                        *oi += w * vi;
                    }
                }
            }
        }
    }
    out.filter(|o| o.iter().all(|x| x.is_finite()))
}

/// Getter over a [`NodeValues`] map for [`interpolate_2d`].
fn from_map<'a>(values: &'a NodeValues<Vec<f64>>) -> impl Fn(usize, usize) -> Option<&'a [f64]> {
    move |pt, pu| values.get(&(pt, pu))?.as_ref().ok().map(|v| v.as_slice())
}

/// Node positions needed by the stencils of the fine points in `range`.
fn needed_nodes(
    range: &Range<usize>,
    n_u: usize,
    u_nodes: &[usize],
    t_nodes: &[usize],
) -> BTreeSet<(usize, usize)> {
    let mut rows: BTreeSet<usize> = BTreeSet::new();
    let mut cols: BTreeSet<usize> = BTreeSet::new();
    for i in range.clone() {
        rows.insert(i / n_u);
        cols.insert(i % n_u);
    }
    let mut need = BTreeSet::new();
    let t_pos: BTreeSet<usize> = rows.iter().flat_map(|&it| stencil(t_nodes, it)).collect();
    let u_pos: BTreeSet<usize> = cols.iter().flat_map(|&iu| stencil(u_nodes, iu)).collect();
    for &pt in &t_pos {
        for &pu in &u_pos {
            need.insert((pt, pu));
        }
    }
    need
}

/// Builds the grid (or the shard of it that `options` names).
pub fn compute(
    upsilon: Axis,
    tau: Axis,
    settings: &TheorySettings,
    options: &GridOptions,
) -> Result<TheoryGrid, GridError> {
    check_axis("upsilon", &upsilon)?;
    check_axis("tau", &tau)?;
    let (n_u, n_t) = (upsilon.count, tau.count);
    let total = n_u
        .checked_mul(n_t)
        .filter(|t| *t <= MAX_GRID_POINTS)
        .ok_or_else(|| GridError::Axis {
            axis: "upsilon×tau",
            why: format!("more than {MAX_GRID_POINTS} points"),
        })?;
    let range = options.shard.map_or(0..total, |s| s.range(total));
    let evaluator = PointEvaluator::new(settings)?.with_sc_reference();
    let ev = &evaluator;
    let gradient = settings.anisotropy == Anisotropy::Gradient;
    let num = &settings.numerics;

    // Work estimate for the progress bar.
    let su_nodes = axis_nodes(n_u, num.breakup_grid_stride);
    let st_nodes = axis_nodes(n_t, num.breakup_grid_stride);
    let sc_nodes = axis_nodes(n_u, num.sc_grid_stride);
    let breakup_need = needed_nodes(&range, n_u, &su_nodes, &st_nodes);
    let wd_u_nodes = axis_nodes(n_u, settings.numerics.wd_grid_stride);
    let wd_t_nodes = if gradient {
        Vec::new()
    } else {
        axis_nodes(n_t, settings.numerics.wd_grid_stride)
    };
    let wd_node_count = if options.with_wd_tables {
        wd_u_nodes.len() * wd_t_nodes.len().max(1)
    } else {
        0
    };
    let pb = progress(
        (range.len() + breakup_need.len() + wd_node_count) as u64,
        options.quiet,
    );

    // 1. Lane–Emden solutions per point (gradient: per column at τ = 0, then rescaled).
    pb.set_message("Lane–Emden");
    let le: Vec<LaneEmdenPair> = if gradient {
        let cols: Vec<LaneEmdenPair> = (0..n_u)
            .into_par_iter()
            .map(|iu| ev.lane_emden_tau0(grid_value(&upsilon, iu)))
            .collect();
        range
            .clone()
            .into_par_iter()
            .map(|i| {
                pb.inc(1);
                PointEvaluator::rescale_gradient(&cols[i % n_u], grid_value(&tau, i / n_u))
            })
            .collect()
    } else {
        range
            .clone()
            .into_par_iter()
            .map(|i| {
                pb.inc(1);
                ev.lane_emden(grid_value(&upsilon, i % n_u), grid_value(&tau, i / n_u))
            })
            .collect()
    };
    let le_at =
        |i: usize| -> Option<&LaneEmdenPair> { range.contains(&i).then(|| &le[i - range.start]) };

    // 2. Break-up reference correction on nodes, then per point.
    pb.set_message("break-up reference");
    let node_list: Vec<(usize, usize)> = breakup_need.iter().copied().collect();
    let breakup_nodes: NodeValues<Vec<f64>> = node_list
        .par_iter()
        .map(|&(pt, pu)| {
            let (iu, it) = (su_nodes[pu], st_nodes[pt]);
            let (u, t) = (grid_value(&upsilon, iu), grid_value(&tau, it));
            let own;
            let pair = match le_at(it * n_u + iu) {
                Some(p) => p,
                None => {
                    own = ev.lane_emden(u, t);
                    &own
                }
            };
            let r = match &pair.n15 {
                Err(e) => Err(Failure::from(e)),
                Ok(s) => ev
                    .breakup_correction(u, t, s)
                    .map(|c| vec![c])
                    .map_err(Failure::from),
            };
            pb.inc(1);
            ((pt, pu), r)
        })
        .collect();
    let breakup: Vec<Outcome<crate::theory::point::BreakupValues>> = range
        .clone()
        .into_par_iter()
        .map(|i| {
            let (iu, it) = (i % n_u, i / n_u);
            let pair = &le[i - range.start];
            let s15 = match &pair.n15 {
                Err(e) => return Outcome::Failed(e.into()),
                Ok(s) => s,
            };
            let on_node =
                su_nodes.binary_search(&iu).is_ok() && st_nodes.binary_search(&it).is_ok();
            let interp = interpolate_2d(
                from_map(&breakup_nodes),
                &upsilon,
                &tau,
                &su_nodes,
                &st_nodes,
                iu,
                it,
            );
            let (corr, interpolated) = match interp {
                Some(v) => (Ok(v[0]), !on_node),
                None => (
                    ev.breakup_correction(grid_value(&upsilon, iu), grid_value(&tau, it), s15),
                    false,
                ),
            };
            corr.and_then(|c| ev.breakup_values(s15, c, interpolated))
                .into()
        })
        .collect();

    // 3. Schönberg–Chandrasekhar factor on a (Υ, τ) node lattice (every `sc_grid_stride`-th
    //    value of each axis), interpolated in between; exact where a stencil node has no value.
    //    Gradient ansatz: the factor does not depend on τ (an exact identity), so one row of
    //    Υ-nodes at τ = 0 serves every τ.
    pb.set_message("Schönberg–Chandrasekhar");
    let one_row = Axis {
        start: 0.0,
        stop: 0.0,
        count: 1,
    };
    let (sc_t_axis, sc_t_nodes) = if gradient {
        (&one_row, vec![0])
    } else {
        // The τ = 0 row is always a node row: the standard-gravity values stay exact.
        let mut nodes = axis_nodes(n_t, num.sc_grid_stride);
        if let Some(it0) = (0..n_t).find(|&it| grid_value(&tau, it) == 0.0) {
            if let Err(k) = nodes.binary_search(&it0) {
                nodes.insert(k, it0);
            }
        }
        (&tau, nodes)
    };
    let sc_need: Vec<(usize, usize)> = if gradient {
        let cols: BTreeSet<usize> = range
            .clone()
            .flat_map(|i| stencil(&sc_nodes, i % n_u))
            .collect();
        cols.into_iter().map(|pu| (0, pu)).collect()
    } else {
        needed_nodes(&range, n_u, &sc_nodes, &sc_t_nodes)
            .into_iter()
            .collect()
    };
    let sc_node_values: NodeValues<Vec<f64>> = sc_need
        .par_iter()
        .map(|&(pt, pu)| {
            let u = grid_value(&upsilon, sc_nodes[pu]);
            let t = grid_value(sc_t_axis, sc_t_nodes[pt]);
            let r = ev.sc_ratio(u, t);
            (
                (pt, pu),
                r.as_result().map(|v| vec![*v]).map_err(Clone::clone),
            )
        })
        .collect();
    let sc_at = |iu: usize, it: usize| -> Outcome<crate::theory::point::ScValues> {
        let it_sc = if gradient { 0 } else { it };
        let on_node =
            sc_nodes.binary_search(&iu).is_ok() && sc_t_nodes.binary_search(&it_sc).is_ok();
        match interpolate_2d(
            from_map(&sc_node_values),
            &upsilon,
            sc_t_axis,
            &sc_nodes,
            &sc_t_nodes,
            iu,
            it_sc,
        ) {
            Some(v) => Outcome::Ok(ev.sc_values(v[0], !on_node)),
            None => ev.sc(grid_value(&upsilon, iu), grid_value(&tau, it)),
        }
    };

    // 4. Assemble.
    pb.set_message("assembling");
    let points: Vec<PointBounds> = range
        .clone()
        .into_par_iter()
        .zip(breakup.into_par_iter())
        .map(|(i, b)| {
            let (iu, it) = (i % n_u, i / n_u);
            let (u, t) = (grid_value(&upsilon, iu), grid_value(&tau, it));
            let sc = sc_at(iu, it);
            ev.assemble(u, t, &le[i - range.start], sc, b, None)
        })
        .collect();

    // 5. Measured errors of the scalar interpolations, at cell centres.
    let mut interpolation_checks = Vec::new();
    if su_nodes.len() < n_u || st_nodes.len() < n_t {
        let samples = cell_centres(&su_nodes, &st_nodes, &range, n_u, 4);
        let results: Vec<(f64, usize)> = samples
            .par_iter()
            .filter_map(|&i| {
                let p = &points[i - range.start];
                let b = p.breakup.ok()?;
                if !b.interpolated {
                    return None;
                }
                let s15 = le[i - range.start].n15.as_ref().ok()?;
                let exact = ev.breakup_correction(p.upsilon, p.tau, s15).ok()?;
                Some(((b.polytrope_correction / exact - 1.0).abs(), i))
            })
            .collect();
        interpolation_checks.push(summarise(
            "break-up reference radius correction",
            &results,
            &upsilon,
            &tau,
            n_u,
        ));
    }
    if sc_nodes.len() < n_u || (!gradient && sc_t_nodes.len() < n_t) {
        let t_nodes: Vec<usize> = if gradient {
            (0..n_t).collect()
        } else {
            sc_t_nodes.clone()
        };
        let samples = cell_centres(&sc_nodes, &t_nodes, &range, n_u, 4);
        let results: Vec<(f64, usize)> = samples
            .par_iter()
            .filter_map(|&i| {
                let sc = points[i - range.start].sc.ok()?;
                if !sc.interpolated {
                    return None;
                }
                let p = &points[i - range.start];
                let exact = *ev.sc_ratio(p.upsilon, p.tau).ok()?;
                Some(((sc.ratio / exact - 1.0).abs(), i))
            })
            .collect();
        interpolation_checks.push(summarise(
            "Schönberg–Chandrasekhar factor",
            &results,
            &upsilon,
            &tau,
            n_u,
        ));
    }

    let mut grid = TheoryGrid {
        format: GRID_FORMAT.to_string(),
        upsilon,
        tau,
        settings: *settings,
        shard: options.shard,
        first_index: range.start,
        points,
        interpolation_checks,
        white_dwarfs: None,
    };

    // 6. White-dwarf tables.
    if options.with_wd_tables {
        pb.set_message("white-dwarf tables");
        let (wd, check) = build_wd_grid(&grid, ev, &wd_u_nodes, &wd_t_nodes, &pb);
        grid.white_dwarfs = Some(wd);
        grid.interpolation_checks.extend(check);
    }
    pb.finish_and_clear();
    Ok(grid)
}

/// Fine indices (inside `range`) near the centres of up to `per_axis`² cells of the node grid,
/// spread evenly: the points where interpolation is least accurate.
fn cell_centres(
    u_nodes: &[usize],
    t_nodes: &[usize],
    range: &Range<usize>,
    n_u: usize,
    per_axis: usize,
) -> Vec<usize> {
    let centres = |nodes: &[usize]| -> Vec<usize> {
        let cells: Vec<usize> = nodes
            .windows(2)
            .filter(|w| w[1] - w[0] >= 2)
            .map(|w| (w[0] + w[1]) / 2)
            .collect();
        if cells.is_empty() {
            // An axis without interior cells: sample its nodes (the other axis interpolates).
            return nodes.to_vec();
        }
        let take = per_axis.min(cells.len());
        (0..take)
            .map(|k| cells[k * (cells.len() - 1) / (take - 1).max(1)])
            .collect::<BTreeSet<_>>()
            .into_iter()
            .collect()
    };
    let (cu, ct) = (centres(u_nodes), centres(t_nodes));
    let mut out = Vec::new();
    for &it in &ct {
        for &iu in &cu {
            let i = it * n_u + iu;
            if range.contains(&i) {
                out.push(i);
            }
        }
    }
    out
}

fn summarise(
    quantity: &str,
    results: &[(f64, usize)],
    upsilon: &Axis,
    tau: &Axis,
    n_u: usize,
) -> InterpolationCheck {
    let worst = results
        .iter()
        .copied()
        .fold(None::<(f64, usize)>, |acc, (e, i)| match acc {
            Some((a, j)) if a > e || (a == e && j < i) => Some((a, j)),
            _ => Some((e, i)),
        });
    InterpolationCheck {
        quantity: quantity.to_string(),
        samples: results.len(),
        max_relative_error: worst.map_or(0.0, |w| w.0),
        worst_upsilon: worst.map(|(_, i)| grid_value(upsilon, i % n_u)),
        worst_tau: worst.map(|(_, i)| grid_value(tau, i / n_u)),
    }
}

/// Mass fractions m/m_Ch at which interpolated and exact white-dwarf radii are compared.
const CHECK_MASS_FRACTIONS: [f64; 10] = [0.02, 0.05, 0.1, 0.2, 0.4, 0.6, 0.8, 0.9, 0.95, 0.99];

fn build_wd_grid(
    grid: &TheoryGrid,
    ev: &PointEvaluator,
    u_nodes: &[usize],
    t_nodes: &[usize],
    pb: &indicatif::ProgressBar,
) -> (WdGrid, Option<InterpolationCheck>) {
    let (upsilon, tau) = (grid.upsilon, grid.tau);
    let n_u = upsilon.count;
    let gradient = t_nodes.is_empty();
    let rows: Vec<usize> = if gradient { vec![0] } else { t_nodes.to_vec() };
    let pairs: Vec<(usize, usize)> = (0..rows.len())
        .flat_map(|pt| (0..u_nodes.len()).map(move |pu| (pt, pu)))
        .collect();
    let opts = grid.settings.wd_table_options();
    let node_tables: Vec<Outcome<WdMassRadius>> = pairs
        .par_iter()
        .map(|&(pt, pu)| {
            let u = grid_value(&upsilon, u_nodes[pu]);
            let r = if gradient {
                WdMassRadius::new(u, 0.0, Anisotropy::Gradient, &opts)
            } else {
                WdMassRadius::new(
                    u,
                    grid_value(&tau, rows[pt]),
                    grid.settings.anisotropy,
                    &opts,
                )
            };
            pb.inc(1);
            r.into()
        })
        .collect();
    let mut wd = WdGrid {
        upsilon_nodes: u_nodes.to_vec(),
        tau_nodes: t_nodes.to_vec(),
        node_tables,
        exact_tables: BTreeMap::new(),
        node_values: std::sync::OnceLock::new(),
    };
    // Points whose interpolated table is unavailable get an exact one.
    let range = grid.first_index..grid.first_index + grid.points.len();
    let missing: Vec<usize> = range
        .clone()
        .into_par_iter()
        .filter(|&i| {
            grid.points[i - range.start].lane_emden_n3.is_ok()
                && interpolated_wd_arrays(grid, &wd, i).is_none()
        })
        .collect();
    let exact: Vec<(usize, Outcome<WdMassRadius>)> = missing
        .par_iter()
        .map(|&i| {
            let p = &grid.points[i - range.start];
            (i, ev.wd_table(p.upsilon, p.tau).into())
        })
        .collect();
    wd.exact_tables = exact.into_iter().collect();
    // Measured error at cell centres.
    let t_for_samples = if gradient {
        axis_nodes(tau.count, grid.settings.numerics.wd_grid_stride)
    } else {
        t_nodes.to_vec()
    };
    let samples = cell_centres(u_nodes, &t_for_samples, &range, n_u, 4);
    let results: Vec<(f64, usize)> = samples
        .par_iter()
        .filter_map(|&i| {
            if wd.exact_tables.contains_key(&i) {
                return None;
            }
            let p = &grid.points[i - range.start];
            let interp = interpolate_wd(grid, &wd, i)?;
            let exact = ev.wd_table(p.upsilon, p.tau).ok()?;
            let mu_e = 2.0;
            let m_ch = exact.max_mass_msun(mu_e);
            let mut worst: f64 = 0.0;
            for f in CHECK_MASS_FRACTIONS {
                let (a, b) = (
                    interp.radius_rsun(f * m_ch, mu_e).ok()?,
                    exact.radius_rsun(f * m_ch, mu_e).ok()?,
                );
                worst = worst.max((a / b - 1.0).abs());
            }
            Some((worst, i))
        })
        .collect();
    let interpolated_somewhere = u_nodes.len() < n_u || (!gradient && t_nodes.len() < tau.count);
    let check = interpolated_somewhere
        .then(|| summarise("white-dwarf radius R(M)", &results, &upsilon, &tau, n_u));
    (wd, check)
}

/// The interpolated (mass, radius) arrays of the white-dwarf table at fine index `i` and its
/// m_Ch, if every stencil node has a model and the result is a valid table (finite, positive,
/// m strictly increasing and below m_Ch).
fn interpolated_wd_arrays(
    grid: &TheoryGrid,
    wd: &WdGrid,
    i: usize,
) -> Option<(Vec<f64>, Vec<f64>, f64)> {
    let n_u = grid.upsilon.count;
    let (iu, it) = (i % n_u, i / n_u);
    let p = grid.point(i)?;
    let omega3 = p.lane_emden_n3.ok()?.omega;
    let gradient = wd.tau_nodes.is_empty();
    let values = wd.node_values();
    let nx = values.iter().flatten().next()?.len() / 2;
    let rows = if gradient { 1 } else { wd.tau_nodes.len() };
    let n_un = wd.upsilon_nodes.len();
    let get = |pt: usize, pu: usize| -> Option<&[f64]> {
        if pt >= rows {
            return None;
        }
        values
            .get(pt * n_un + pu)?
            .as_deref()
            .filter(|v| v.len() == 2 * nx)
    };
    let one_row = Axis {
        start: 0.0,
        stop: 0.0,
        count: 1,
    };
    let v = if gradient {
        interpolate_2d(get, &grid.upsilon, &one_row, &wd.upsilon_nodes, &[0], iu, 0)?
    } else {
        interpolate_2d(
            get,
            &grid.upsilon,
            &grid.tau,
            &wd.upsilon_nodes,
            &wd.tau_nodes,
            iu,
            it,
        )?
    };
    // ω₃ of the point itself is the exact m_Ch (for the gradient ansatz already rescaled).
    let mass: Vec<f64> = v[..nx]
        .iter()
        .map(|z| omega3 / (1.0 + (-z).exp()))
        .collect();
    let mut radius: Vec<f64> = v[nx..].iter().map(|x| x.exp()).collect();
    if gradient {
        let s = 1.0 - p.tau;
        if s.is_nan() || s <= 0.0 {
            return None;
        }
        radius.iter_mut().for_each(|r| *r /= s.sqrt());
    }
    let valid = mass
        .iter()
        .chain(&radius)
        .all(|x| x.is_finite() && *x > 0.0)
        && mass.windows(2).all(|w| w[1] > w[0])
        && mass.last().is_some_and(|m| *m < omega3);
    valid.then_some((mass, radius, omega3))
}

/// The interpolated white-dwarf table at fine index `i` (see [`interpolated_wd_arrays`]).
fn interpolate_wd(grid: &TheoryGrid, wd: &WdGrid, i: usize) -> Option<WdMassRadius> {
    let (mass, radius, omega3) = interpolated_wd_arrays(grid, wd, i)?;
    let p = grid.point(i)?;
    let log10_xc = wd.node_tables.iter().find_map(|t| t.ok())?.log10_xc();
    // The table type validates its parts only on deserialisation (its fields are private), so
    // the interpolated table goes through that validated path.
    let parts = WdTableParts {
        upsilon: p.upsilon,
        tau: p.tau,
        anisotropy: grid.settings.anisotropy,
        log10_xc,
        mass_dimless: &mass,
        radius_dimless: &radius,
        mass_ch_dimless: omega3,
    };
    serde_json::to_value(parts)
        .ok()
        .and_then(|v| serde_json::from_value::<WdMassRadius>(v).ok())
}

/// The serialised form of a white-dwarf table (the field names of [`WdMassRadius`]).
#[derive(Serialize)]
struct WdTableParts<'a> {
    upsilon: f64,
    tau: f64,
    anisotropy: Anisotropy,
    log10_xc: &'a [f64],
    mass_dimless: &'a [f64],
    radius_dimless: &'a [f64],
    mass_ch_dimless: f64,
}

impl TheoryGrid {
    /// Row-major index of (i_Υ, i_τ): i_τ · n_Υ + i_Υ.
    pub fn index(&self, i_upsilon: usize, i_tau: usize) -> usize {
        i_tau * self.upsilon.count + i_upsilon
    }

    /// (i_Υ, i_τ) of a row-major index.
    pub fn coords(&self, index: usize) -> (usize, usize) {
        (index % self.upsilon.count, index / self.upsilon.count)
    }

    /// Total number of points of the full grid.
    pub fn total_points(&self) -> usize {
        self.upsilon.count * self.tau.count
    }

    /// True when this holds every point of the grid.
    pub fn is_complete(&self) -> bool {
        self.first_index == 0 && self.points.len() == self.total_points()
    }

    /// The point at a row-major index, if this grid (shard) holds it.
    pub fn point(&self, index: usize) -> Option<&PointBounds> {
        index
            .checked_sub(self.first_index)
            .and_then(|k| self.points.get(k))
    }

    /// The white-dwarf table at a row-major index: `None` when tables were not built or the
    /// point is outside this shard; otherwise the table (interpolated between nodes or solved)
    /// or the reason there is none.
    pub fn wd_table(&self, index: usize) -> Option<Outcome<WdMassRadius>> {
        let wd = self.white_dwarfs.as_ref()?;
        let p = self.point(index)?;
        if let Some(f) = p.lane_emden_n3.failure() {
            return Some(Outcome::Failed(f.clone()));
        }
        if let Some(t) = wd.exact_tables.get(&index) {
            return Some(t.clone());
        }
        Some(match interpolate_wd(self, wd, index) {
            Some(t) => Outcome::Ok(t),
            None => Outcome::Failed(Failure {
                code: "internal".into(),
                reason: "white-dwarf table neither interpolated nor solved at this point".into(),
            }),
        })
    }

    /// White-dwarf radius R(M; μ_e) in R☉ at a row-major index (see [`TheoryGrid::wd_table`]).
    pub fn wd_radius_rsun(
        &self,
        index: usize,
        mass_msun: f64,
        mu_e: f64,
    ) -> Option<Result<f64, Failure>> {
        Some(match self.wd_table(index)? {
            Outcome::Ok(t) => t.radius_rsun(mass_msun, mu_e).map_err(Failure::from),
            Outcome::Failed(f) => Err(f),
        })
    }

    /// Deterministic compact JSON bytes (floats in shortest round-trip form, fields in
    /// declaration order, maps sorted).
    pub fn to_json_bytes(&self) -> Result<Vec<u8>, GridError> {
        serde_json::to_vec(self).map_err(|e| GridError::Format(e.to_string()))
    }

    /// Reads bytes written by [`TheoryGrid::to_json_bytes`]; refuses another format version.
    pub fn from_json_bytes(bytes: &[u8]) -> Result<TheoryGrid, GridError> {
        let g: TheoryGrid =
            serde_json::from_slice(bytes).map_err(|e| GridError::Format(e.to_string()))?;
        if g.format != GRID_FORMAT {
            return Err(GridError::Format(format!(
                "format `{}` is not `{GRID_FORMAT}`",
                g.format
            )));
        }
        if g.first_index + g.points.len() > g.total_points() {
            return Err(GridError::Format("more points than the axes allow".into()));
        }
        Ok(g)
    }

    /// Joins the shards of one grid (any order) into the full grid. They must share axes and
    /// settings, cover every point exactly once, and agree on the white-dwarf node tables.
    pub fn merge(mut parts: Vec<TheoryGrid>) -> Result<TheoryGrid, GridError> {
        let bad = |s: String| GridError::Merge(s);
        parts.sort_by_key(|g| g.first_index);
        let mut iter = parts.into_iter();
        let mut out = iter.next().ok_or_else(|| bad("no shards given".into()))?;
        for g in iter {
            if g.upsilon != out.upsilon || g.tau != out.tau {
                return Err(bad("shards of different grids (axes differ)".into()));
            }
            if g.settings != out.settings {
                return Err(bad("shards computed with different settings".into()));
            }
            let next = out.first_index + out.points.len();
            if g.first_index != next {
                return Err(bad(format!(
                    "shards do not tile the grid: a gap or overlap at point {next} (next shard starts at {})",
                    g.first_index
                )));
            }
            match (&mut out.white_dwarfs, g.white_dwarfs) {
                (None, None) => {}
                (Some(a), Some(b)) => {
                    if a.node_tables != b.node_tables
                        || a.upsilon_nodes != b.upsilon_nodes
                        || a.tau_nodes != b.tau_nodes
                    {
                        return Err(bad("shards disagree on the white-dwarf node tables".into()));
                    }
                    a.exact_tables.extend(b.exact_tables);
                }
                _ => return Err(bad("only some shards have white-dwarf tables".into())),
            }
            for c in g.interpolation_checks {
                match out
                    .interpolation_checks
                    .iter_mut()
                    .find(|a| a.quantity == c.quantity)
                {
                    Some(a) => {
                        if c.max_relative_error > a.max_relative_error {
                            a.max_relative_error = c.max_relative_error;
                            a.worst_upsilon = c.worst_upsilon;
                            a.worst_tau = c.worst_tau;
                        }
                        a.samples += c.samples;
                    }
                    None => out.interpolation_checks.push(c),
                }
            }
            out.points.extend(g.points);
        }
        if !out.is_complete() {
            return Err(bad(format!(
                "the shards cover points {}..{} of {}",
                out.first_index,
                out.first_index + out.points.len(),
                out.total_points()
            )));
        }
        out.shard = None;
        Ok(out)
    }

    /// The grid as `bounds.csv` text: one row per point (row-major), every scalar bound in
    /// round-trip form, empty where there is no value, with `status` (`ok`, `partial` or
    /// `no-model`) and `reason` (the failures, `bound: code: reason`, joined by ` | `); the SC
    /// fraction has its own `sc_reason`.
    pub fn bounds_csv(&self) -> Result<String, GridError> {
        let mut w = csv::WriterBuilder::new().from_writer(Vec::new());
        let err = |e: csv::Error| GridError::Format(e.to_string());
        w.write_record(BOUNDS_CSV_COLUMNS).map_err(err)?;
        for p in &self.points {
            let le15 = p.lane_emden_n15.ok();
            let le3 = p.lane_emden_n3.ok();
            let m = p.mmhb.ok();
            let c = p.chandrasekhar.ok();
            let b = p.breakup.ok();
            let named = [
                ("lane_emden_n1.5", p.lane_emden_n15.failure()),
                ("lane_emden_n3", p.lane_emden_n3.failure()),
                ("mmhb", p.mmhb.failure()),
                ("chandrasekhar", p.chandrasekhar.failure()),
                ("breakup", p.breakup.failure()),
            ];
            // Failures with the same reason are listed once, after the bounds they concern.
            let mut grouped: Vec<(Vec<&str>, &Failure)> = Vec::new();
            for (name, f) in named.iter().filter_map(|(n, f)| f.map(|f| (*n, f))) {
                match grouped.iter_mut().find(|(_, g)| *g == f) {
                    Some((names, _)) => names.push(name),
                    None => grouped.push((vec![name], f)),
                }
            }
            let failed = grouped.iter().map(|(n, _)| n.len()).sum::<usize>();
            let status = if failed == 0 {
                "ok"
            } else if failed == named.len() {
                "no-model"
            } else {
                "partial"
            };
            let failures: Vec<String> = grouped
                .iter()
                .map(|(names, f)| format!("{}: {f}", names.join(", ")))
                .collect();
            let f = |x: Option<f64>| fmt_f64(x);
            let row = vec![
                f(Some(p.upsilon)),
                f(Some(p.tau)),
                self.settings.anisotropy.name().to_string(),
                status.to_string(),
                failures.join(" | "),
                f(m.map(|m| m.value_msun)),
                f(m.map(|m| m.raw_msun)),
                f(m.map(|m| m.floor_msun)),
                f(m.map(|m| m.phi)),
                f(c.map(|c| c.value_msun)),
                f(c.map(|c| c.newtonian_mu_e2_msun)),
                f(c.map(|c| c.omega3_ratio)),
                f(c.map(|c| c.floor_msun)),
                f(le15.map(|l| l.xi1)),
                f(le15.map(|l| l.omega)),
                f(le15.and_then(|l| l.j_k)),
                f(le3.map(|l| l.xi1)),
                f(le3.map(|l| l.omega)),
                f(p.sc.ok().map(|s| s.q_sc)),
                p.sc.failure().map(|f| f.to_string()).unwrap_or_default(),
                f(b.map(|b| b.period_h)),
                f(b.map(|b| b.radius_rjup())),
                p.warnings
                    .iter()
                    .map(|w| w.code())
                    .collect::<Vec<_>>()
                    .join(" "),
            ];
            w.write_record(&row).map_err(err)?;
        }
        let bytes = w
            .into_inner()
            .map_err(|e| GridError::Format(e.to_string()))?;
        String::from_utf8(bytes).map_err(|e| GridError::Format(e.to_string()))
    }

    /// The bound curves against Υ for the τ rows `tau_rows` (fine indices): for each row,
    /// (τ, MMHB values, Chandrasekhar values, break-up periods in minutes), `None` where there is
    /// no model. For plotting; the values are those of the points.
    pub fn curves(&self, tau_rows: &[usize]) -> Vec<BoundCurves> {
        tau_rows
            .iter()
            .filter(|&&it| it < self.tau.count)
            .map(|&it| {
                let pick = |f: &dyn Fn(&PointBounds) -> Option<f64>| -> Vec<Option<f64>> {
                    (0..self.upsilon.count)
                        .map(|iu| self.point(self.index(iu, it)).and_then(f))
                        .collect()
                };
                BoundCurves {
                    tau: grid_value(&self.tau, it),
                    mmhb_msun: pick(&|p: &PointBounds| p.mmhb.ok().map(|m| m.value_msun)),
                    chandrasekhar_msun: pick(&|p: &PointBounds| {
                        p.chandrasekhar.ok().map(|c| c.value_msun)
                    }),
                    breakup_period_min: pick(&|p: &PointBounds| {
                        p.breakup.ok().map(|b| b.period_h * 60.0)
                    }),
                }
            })
            .collect()
    }

    /// Up to `max` τ rows spread evenly over the axis (first and last included), τ = 0 added
    /// when the axis has it: the rows a bounds-against-Υ figure shows.
    pub fn representative_tau_rows(&self, max: usize) -> Vec<usize> {
        let n = self.tau.count;
        let take = max.max(1).min(n);
        let mut rows: BTreeSet<usize> = (0..take)
            .map(|k| {
                if take == 1 {
                    0
                } else {
                    k * (n - 1) / (take - 1)
                }
            })
            .collect();
        if let Some(it0) = (0..n).find(|&it| grid_value(&self.tau, it) == 0.0) {
            rows.insert(it0);
        }
        rows.into_iter().collect()
    }

    /// Number of points (of this shard) with no model for at least one of the bounds that exist
    /// at every τ.
    pub fn points_without_model(&self) -> usize {
        self.points
            .iter()
            .filter(|p| p.first_failure().is_some())
            .count()
    }
}

/// Bound curves along Υ at one τ (see [`TheoryGrid::curves`]).
#[derive(Debug, Clone, PartialEq)]
pub struct BoundCurves {
    /// τ of the row.
    pub tau: f64,
    /// MMHB used against data, M☉.
    pub mmhb_msun: Vec<Option<f64>>,
    /// Chandrasekhar mass used against data (μ_e = 2), M☉.
    pub chandrasekhar_msun: Vec<Option<f64>>,
    /// Break-up period of the reference object, minutes.
    pub breakup_period_min: Vec<Option<f64>>,
}

/// Columns of `bounds.csv`, in order.
pub const BOUNDS_CSV_COLUMNS: [&str; 23] = [
    "upsilon",
    "tau",
    "anisotropy",
    "status",
    "reason",
    "mmhb_msun",
    "mmhb_raw_msun",
    "mmhb_floor_msun",
    "mmhb_phi",
    "chandrasekhar_msun",
    "chandrasekhar_newtonian_mu_e2_msun",
    "chandrasekhar_omega3_ratio",
    "chandrasekhar_floor_msun",
    "xi1_n1.5",
    "omega_n1.5",
    "j_k_n1.5",
    "xi1_n3",
    "omega_n3",
    "sc_fraction",
    "sc_reason",
    "breakup_period_min_h",
    "breakup_radius_rjup",
    "warnings",
];

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shard_ranges_tile() {
        let total = 103;
        let mut next = 0;
        for i in 1..=7 {
            let r = Shard { index: i, count: 7 }.range(total);
            assert_eq!(r.start, next);
            next = r.end;
        }
        assert_eq!(next, total);
        assert!(Shard::parse("0/3").is_err());
        assert!(Shard::parse("4/3").is_err());
        assert_eq!(Shard::parse("2/3").unwrap(), Shard { index: 2, count: 3 });
    }

    #[test]
    fn stencils_and_weights() {
        let nodes = axis_nodes(21, 8); // 0, 8, 16, 20
        assert_eq!(nodes, vec![0, 8, 16, 20]);
        assert_eq!(stencil(&nodes, 8), vec![1]);
        assert_eq!(stencil(&nodes, 3), vec![0, 1, 2, 3]);
        // Lagrange weights reproduce a cubic exactly.
        let xs = [0.0, 1.0, 2.5, 4.0];
        let w = lagrange_weights(&xs, 1.7);
        let f = |x: f64| 2.0 - x + 0.5 * x * x - 0.1 * x * x * x;
        let s: f64 = xs.iter().zip(&w).map(|(x, w)| w * f(*x)).sum();
        assert!((s - f(1.7)).abs() < 1e-13);
    }
}
