//! The white-dwarf mass–radius tables of a grid: solved on a sub-grid of nodes, interpolated
//! in (ϒ, τ) in between, solved exactly where interpolation is not possible, with the
//! interpolation error measured at build time.
//!
//! One job: build and query [`WdGrid`]. Tables are solved at every `numerics.wd_grid_stride`-th
//! point of each axis (and the last) and interpolated by tensor-product cubic Lagrange
//! polynomials of ln(m/(m_Ch − m)) and ln η at each tabulated x_c, with the point's own exact
//! m_Ch = ω₃(ϒ, τ); points whose stencil touches a node without a model are solved exactly.
//! For the gradient ansatz only τ = 0 is solved and every τ follows by the exact rescaling
//! G → (1 − τ)G.
//!
//! ```
//! use dwarfbound::theory::grid::{compute, GridOptions};
//! use dwarfbound::theory::settings::TheorySettings;
//! use dwarfbound::theory::Axis;
//!
//! let upsilon = Axis { start: -0.1, stop: 0.1, count: 3 };
//! let tau = Axis { start: 0.0, stop: 0.0, count: 1 };
//! let options = GridOptions { with_wd_tables: true, ..GridOptions::default() };
//! let grid = compute(upsilon, tau, &TheorySettings::default(), &options).unwrap();
//! let wd = grid.white_dwarfs.as_ref().unwrap();
//! assert_eq!(wd.upsilon_nodes, vec![0, 1, 2]);
//! // 0.6 M☉, μ_e = 2, standard gravity, zero-temperature Chandrasekhar EOS: ≈ 0.0124 R☉
//! // (from memory; the range is loose on purpose).
//! let r = grid.wd_radius_rsun(grid.index(1, 0), 0.6, 2.0).unwrap().unwrap();
//! assert!((0.011..0.014).contains(&r));
//! ```

use std::collections::BTreeMap;
use std::ops::Range;

use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use crate::theory::interpolate::{
    axis_nodes, cell_centres, interpolate_2d, summarise, InterpolationCheck,
};
use crate::theory::outcome::Outcome;
use crate::theory::point::{PointBounds, PointEvaluator};
use crate::theory::settings::TheorySettings;
use crate::theory::white_dwarf::WdMassRadius;
use crate::theory::{grid_value, Anisotropy, Axis};

/// The parts of a grid (or shard) that its white-dwarf tables depend on.
pub(crate) struct GridPoints<'a> {
    /// The ϒ axis.
    pub upsilon: Axis,
    /// The τ axis.
    pub tau: Axis,
    /// The settings every point was computed with.
    pub settings: &'a TheorySettings,
    /// Row-major index of `points[0]`.
    pub first_index: usize,
    /// The points of `first_index ..`.
    pub points: &'a [PointBounds],
}

impl GridPoints<'_> {
    /// The point at a row-major index, if held.
    fn point(&self, index: usize) -> Option<&PointBounds> {
        index
            .checked_sub(self.first_index)
            .and_then(|k| self.points.get(k))
    }

    /// The row-major index range held.
    fn range(&self) -> Range<usize> {
        self.first_index..self.first_index + self.points.len()
    }
}

/// White-dwarf tables of a grid: solved on nodes, interpolated elsewhere (see the module docs).
#[derive(Debug, Clone, Serialize, Deserialize)]
pub struct WdGrid {
    /// Fine ϒ indices of the nodes.
    pub upsilon_nodes: Vec<usize>,
    /// Fine τ indices of the nodes; empty for the gradient ansatz, whose tables are solved at
    /// τ = 0 and rescaled exactly.
    pub tau_nodes: Vec<usize>,
    /// Node tables, τ-node outer, ϒ-node inner (one row at τ = 0 for the gradient ansatz).
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

/// Mass fractions m/m_Ch at which interpolated and exact white-dwarf radii are compared.
const CHECK_MASS_FRACTIONS: [f64; 10] = [0.02, 0.05, 0.1, 0.2, 0.4, 0.6, 0.8, 0.9, 0.95, 0.99];

/// Solves the node tables (and the exact tables of points that cannot be interpolated) and
/// measures the interpolation error at cell centres.
pub(crate) fn build_wd_grid(
    grid: &GridPoints<'_>,
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
    let range = grid.range();
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
    grid: &GridPoints<'_>,
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
pub(crate) fn interpolate_wd(grid: &GridPoints<'_>, wd: &WdGrid, i: usize) -> Option<WdMassRadius> {
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
