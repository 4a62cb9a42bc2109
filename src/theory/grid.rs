//! Every bound over a (ϒ, τ) grid, in parallel, with failures recorded per point.
//!
//! One job: evaluate [`PointBounds`] at every point of a rectangular grid (or a contiguous shard
//! of it) and keep the white-dwarf mass–radius tables the confrontation needs, in a
//! [`TheoryGrid`] that serialises to deterministic bytes for the content-addressed cache.
//!
//! Layout: points are **row-major with τ outer and ϒ inner**: index = i_τ · n_ϒ + i_ϒ, and the
//! values are [`grid_value`] (an axis value, with rounding residues of zero made exactly 0). A
//! shard `I/N` (1-based) owns the contiguous index range ⌊(I−1)T/N⌋ .. ⌊IT/N⌋ of the T points;
//! it solves the interpolation nodes its points need (every shard solves all white-dwarf node
//! tables, a small share of the work, so that shards stay independent), and
//! [`TheoryGrid::merge`] joins shards into a grid identical to an unsharded run.
//!
//! Shortcuts, each exact or measured:
//! * gradient ansatz: only τ = 0 is solved (once per ϒ column) and every τ follows from the
//!   exact rescaling G → (1 − τ)G (`docs/structure.md` §2.2, §3.7);
//! * the Schönberg–Chandrasekhar fraction exists only at τ = 0 (`docs/bounds.md` §7.2), so it is
//!   solved along the τ = 0 row alone and refused with its reason elsewhere;
//! * white-dwarf tables are solved on a sub-grid of nodes and interpolated in between
//!   ([`wd_grid`](super::wd_grid));
//! * with `numerics.breakup_grid_stride` > 1 the break-up reference radius correction (full EOS
//!   over polytrope, ≈ 0.998), and with `numerics.sc_grid_stride` > 1 the SC factor, are
//!   interpolated between solved nodes ([`interpolate`](super::interpolate)).
//!
//! Every interpolation's error is measured at build time against exact solves at cell centres
//! and stored in the grid ([`InterpolationCheck`]). The shard type is in
//! [`shard`](super::shard), the settings in [`settings`](super::settings).
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

use std::collections::BTreeSet;
use std::io::IsTerminal;

use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::theory::interpolate::{
    axis_nodes, cell_centres, from_map, interpolate_2d, needed_nodes, stencil, summarise,
    NodeValues,
};
use crate::theory::outcome::{Failure, Outcome};
use crate::theory::point::{LaneEmdenPair, PointBounds, PointEvaluator};
use crate::theory::settings::{SettingsError, SettingsIdentity, TheorySettings};
use crate::theory::wd_grid::{build_wd_grid, interpolate_wd, GridPoints};
use crate::theory::white_dwarf::WdMassRadius;
use crate::theory::{Anisotropy, Axis};

pub use crate::theory::grid_value;
pub use crate::theory::interpolate::InterpolationCheck;
pub use crate::theory::shard::{Shard, ShardError};
pub use crate::theory::wd_grid::WdGrid;

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
    #[error(transparent)]
    Shard(#[from] ShardError),
    /// Serialised bytes could not be read.
    #[error("cannot read theory grid: {0}")]
    Format(String),
    /// Shards that do not fit together.
    #[error("cannot merge theory grids: {0}")]
    Merge(String),
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

/// Every bound over a grid (or a shard of it).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TheoryGrid {
    /// [`GRID_FORMAT`].
    pub format: String,
    /// The ϒ axis.
    pub upsilon: Axis,
    /// The τ axis.
    pub tau: Axis,
    /// The settings every point was computed with.
    pub settings: TheorySettings,
    /// The shard, if this is one.
    pub shard: Option<Shard>,
    /// Row-major index of `points[0]`.
    pub first_index: usize,
    /// The points of `first_index ..`, row-major (τ outer, ϒ inner).
    pub points: Vec<PointBounds>,
    /// Measured errors of every interpolation between solved nodes that this grid used (the
    /// break-up reference correction, the SC factor, white-dwarf radii), one entry per
    /// quantity; empty when every value was solved directly.
    pub interpolation_checks: Vec<InterpolationCheck>,
    /// White-dwarf tables, when asked for.
    pub white_dwarfs: Option<WdGrid>,
}

/// Everything that fixes a grid computation's result: the theory's [`SettingsIdentity`], the
/// axes, the shard, whether white-dwarf tables are included, and the grid format. A cache
/// entry records it and is used only for an exactly equal one.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct GridIdentity {
    /// [`GRID_FORMAT`].
    pub grid_format: String,
    /// The theory settings and what they fix.
    pub theory: SettingsIdentity,
    /// The ϒ axis.
    pub upsilon: Axis,
    /// The τ axis.
    pub tau: Axis,
    /// The shard, or `None` for the whole grid.
    pub shard: Option<Shard>,
    /// Whether the white-dwarf tables are included.
    pub wd_tables: bool,
}

impl GridIdentity {
    /// The identity of a computation about to be made.
    pub fn new(
        upsilon: &Axis,
        tau: &Axis,
        settings: &TheorySettings,
        options: &GridOptions,
    ) -> GridIdentity {
        GridIdentity {
            grid_format: GRID_FORMAT.to_string(),
            theory: settings.identity(),
            upsilon: *upsilon,
            tau: *tau,
            shard: options.shard,
            wd_tables: options.with_wd_tables,
        }
    }

    /// Compact JSON, the canonical text of a cache key (see [`SettingsIdentity::to_json`]).
    pub fn to_json(&self) -> String {
        serde_json::to_string(self).unwrap_or_else(|e| format!("{self:?} ({e})"))
    }
}

/// The canonical description of a grid computation for a content-addressed cache key:
/// [`GridIdentity`] as compact JSON, built by serde from whole structs, so that no setting can
/// be left out of it.
pub fn cache_key_text(
    upsilon: &Axis,
    tau: &Axis,
    settings: &TheorySettings,
    options: &GridOptions,
) -> String {
    GridIdentity::new(upsilon, tau, settings, options).to_json()
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

    // 3. Schönberg–Chandrasekhar factor on a (ϒ, τ) node lattice (every `sc_grid_stride`-th
    //    value of each axis), interpolated in between; exact where a stencil node has no value.
    //    Gradient ansatz: the factor does not depend on τ (an exact identity), so one row of
    //    ϒ-nodes at τ = 0 serves every τ.
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
        let (wd, check) = build_wd_grid(&grid.parts(), ev, &wd_u_nodes, &wd_t_nodes, &pb);
        grid.white_dwarfs = Some(wd);
        grid.interpolation_checks.extend(check);
    }
    pb.finish_and_clear();
    Ok(grid)
}

impl TheoryGrid {
    /// The parts the white-dwarf tables depend on.
    fn parts(&self) -> GridPoints<'_> {
        GridPoints {
            upsilon: self.upsilon,
            tau: self.tau,
            settings: &self.settings,
            first_index: self.first_index,
            points: &self.points,
        }
    }

    /// What this grid was computed for (see [`GridIdentity`]), from its own fields.
    pub fn identity(&self) -> GridIdentity {
        GridIdentity {
            grid_format: self.format.clone(),
            theory: self.settings.identity(),
            upsilon: self.upsilon,
            tau: self.tau,
            shard: self.shard,
            wd_tables: self.white_dwarfs.is_some(),
        }
    }

    /// Row-major index of (i_ϒ, i_τ): i_τ · n_ϒ + i_ϒ.
    pub fn index(&self, i_upsilon: usize, i_tau: usize) -> usize {
        i_tau * self.upsilon.count + i_upsilon
    }

    /// (i_ϒ, i_τ) of a row-major index.
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
        Some(match interpolate_wd(&self.parts(), wd, index) {
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
        let mut g: TheoryGrid =
            serde_json::from_slice(bytes).map_err(|e| GridError::Format(e.to_string()))?;
        // A JSON array gives no length ahead, so the points grew by doubling: a 201 × 201 grid
        // sat in room for 65 536 points (30 MB where 18 are used) for the whole run.
        g.points.shrink_to_fit();
        g.interpolation_checks.shrink_to_fit();
        if g.format != GRID_FORMAT {
            return Err(GridError::Format(format!(
                "format `{}` is not `{GRID_FORMAT}`",
                g.format
            )));
        }
        if g.first_index + g.points.len() > g.total_points() {
            return Err(GridError::Format("more points than the axes allow".into()));
        }
        // A grid read from a file (a shard, a cache entry) is outside input: its bounds must be
        // physical numbers before any statistics sees them.
        let plausible = |v: f64, hi: f64| v.is_finite() && v > 0.0 && v <= hi;
        for (k, p) in g.points.iter().enumerate() {
            let i = g.first_index + k;
            if let Some(m) = p.mmhb.ok() {
                if !plausible(m.value_msun, 1.0) || !plausible(m.raw_msun, 1.0) {
                    return Err(GridError::Format(format!(
                        "point {i}: MMHB {:e} M☉ is not a plausible mass (0, 1]",
                        m.value_msun
                    )));
                }
            }
            if let Some(c) = p.chandrasekhar.ok() {
                if !plausible(c.value_msun, 10.0) {
                    return Err(GridError::Format(format!(
                        "point {i}: Chandrasekhar mass {:e} M☉ is not a plausible mass (0, 10]",
                        c.value_msun
                    )));
                }
            }
            if !(p.upsilon.is_finite() && p.tau.is_finite()) {
                return Err(GridError::Format(format!("point {i}: non-finite ϒ or τ")));
            }
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

    /// The bound curves against ϒ for the τ rows `tau_rows` (fine indices): for each row,
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
    /// when the axis has it: the rows a bounds-against-ϒ figure shows.
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

/// Bound curves along ϒ at one τ (see [`TheoryGrid::curves`]).
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
