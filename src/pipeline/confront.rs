//! One confrontation, start to finish: vet the catalogues, get the theory grid (from the cache
//! when it is there), compare, and write every output file of `../shared/CONVENTIONS.md` into
//! one folder. Shared by `dwarfbound confront` and the nightly `run`.
//!
//! This file only wires the stages' public APIs together and turns their results into output
//! rows; the physics lives in [`crate::theory`], the statistics in [`crate::confront`], the
//! drawing and the documents in [`crate::report`].

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde_json::{json, Value};

use crate::catalogue::table::{Format, ReadOptions};
use crate::catalogue::{
    export, vet_files, CatalogueError, CatalogueObject, ColumnMap, MassLimit, ObjectClass, Vetted,
};
use crate::confront::drivers::{leave_one_out, DriverOptions, SliceClass};
use crate::confront::engine::{self, BoundSurface, Confrontation, EngineOptions, Term};
use crate::confront::prob::{Measurement, StatsError};
use crate::confront::reduce::{CubicSpline, SplineEnd};
use crate::confront::regions::{
    self, absolute_consistency, crowding, map_regions, CrowdingOptions, Level, MapRegions,
    UpsilonSlice,
};
use crate::output::{write_atomic, OutputError};
use crate::pipeline::cache::{sha256_hex, Cache, Lookup};
use crate::report::{self, tables::Cell};
use crate::theory::grid::{self, GridOptions, Shard, TheoryGrid};
use crate::theory::point::{standard_point, PointBounds, TheorySettings};
use crate::theory::Axis;

/// One catalogue to read, with its own column map and format.
#[derive(Debug, Clone)]
pub struct CatalogueInput {
    /// The file.
    pub path: PathBuf,
    /// Its column map, if any.
    pub map: Option<PathBuf>,
    /// Format override.
    pub format: Option<Format>,
    /// FITS HDU / VOTable TABLE (name or index); `None`: the map's choice or the first table.
    pub table: Option<String>,
}

/// Statistics choices of a confrontation.
#[derive(Debug, Clone)]
pub struct StatisticsSettings {
    /// Objects above this tension (σ) at standard gravity are listed as tensions.
    pub tension_sigma: f64,
    /// Age rule and tabulation of the comparison.
    pub engine: EngineOptions,
}

impl Default for StatisticsSettings {
    fn default() -> Self {
        Self {
            tension_sigma: 3.0,
            engine: EngineOptions::default(),
        }
    }
}

/// Everything a confrontation needs.
#[derive(Debug, Clone)]
pub struct ConfrontSettings {
    /// Catalogues in order.
    pub catalogues: Vec<CatalogueInput>,
    /// Υ axis.
    pub upsilon: Axis,
    /// τ axis.
    pub tau: Axis,
    /// Theory settings.
    pub theory: TheorySettings,
    /// Statistics settings.
    pub statistics: StatisticsSettings,
}

/// A failure of the pipeline, with the exit code class it maps to.
#[derive(Debug, thiserror::Error)]
pub enum PipelineError {
    /// A catalogue or map problem (exit 2).
    #[error(transparent)]
    Catalogue(#[from] CatalogueError),
    /// Invalid settings or grid (exit 2).
    #[error("{0}")]
    Settings(String),
    /// Output could not be written (exit 2).
    #[error(transparent)]
    Output(#[from] OutputError),
    /// A bug or an unexpected numerical failure (exit 1).
    #[error("internal error: {0}")]
    Internal(String),
}

impl From<StatsError> for PipelineError {
    fn from(e: StatsError) -> Self {
        PipelineError::Internal(e.to_string())
    }
}

impl From<engine::EngineError> for PipelineError {
    fn from(e: engine::EngineError) -> Self {
        PipelineError::Internal(e.to_string())
    }
}

/// What a confrontation found, for the caller's summary line and exit code.
#[derive(Debug, Clone)]
pub struct ConfrontOutcome {
    /// The `summary.json` document.
    pub summary: Value,
    /// Whether some grid point is consistent at 95.45 % (Šidák test).
    pub consistent: bool,
    /// Objects in tension at standard gravity: (id, class, σ).
    pub tensions: Vec<(String, String, f64)>,
    /// Whether the theory grid came from the cache.
    pub theory_from_cache: bool,
    /// Rows in/accepted/quarantined over all catalogues.
    pub rows: (usize, usize, usize),
    /// The difference from the previous run (nightly runs only).
    pub difference: Option<super::history::RunDifference>,
}

/// Vets every catalogue (each with its own map) into one result.
pub fn vet_all(inputs: &[CatalogueInput]) -> Result<Vetted, PipelineError> {
    let mut all = Vetted::default();
    for c in inputs {
        let map = match &c.map {
            Some(p) => Some(ColumnMap::load(p)?),
            None => None,
        };
        let opts = ReadOptions {
            format: c.format,
            table: c.table.clone(),
        };
        let v = vet_files(std::slice::from_ref(&c.path), map.as_ref(), &opts)?;
        all.objects.extend(v.objects);
        all.quarantine.extend(v.quarantine);
        all.tallies.extend(v.tallies);
    }
    Ok(all)
}

/// The theory grid, from the cache when a verified entry exists. Returns the grid and whether
/// it came from the cache, plus a note when a corrupt entry was discarded.
pub fn theory_grid(
    upsilon: Axis,
    tau: Axis,
    theory: &TheorySettings,
    shard: Option<Shard>,
    cache: Option<&Cache>,
) -> Result<(TheoryGrid, bool, Option<String>), PipelineError> {
    let options = GridOptions {
        with_wd_tables: true,
        shard,
        quiet: false,
    };
    let key = Cache::key(&grid::cache_key_text(&upsilon, &tau, theory, &options));
    let mut note = None;
    if let Some(cache) = cache {
        match cache.load(&key) {
            Lookup::Hit(bytes) => match TheoryGrid::from_json_bytes(&bytes) {
                Ok(g) => return Ok((g, true, None)),
                Err(e) => note = Some(format!("cache entry unreadable, rebuilt: {e}")),
            },
            Lookup::Corrupt(why) => note = Some(format!("cache entry discarded, rebuilt: {why}")),
            Lookup::Missing => {}
        }
    }
    let g = grid::compute(upsilon, tau, theory, &options)
        .map_err(|e| PipelineError::Settings(e.to_string()))?;
    if let Some(cache) = cache {
        let bytes = g
            .to_json_bytes()
            .map_err(|e| PipelineError::Internal(e.to_string()))?;
        cache.store(&key, &bytes)?;
    }
    Ok((g, false, note))
}

/// The theory grid seen as the comparator's [`BoundSurface`].
pub struct GridSurface<'a> {
    grid: &'a TheoryGrid,
    upsilon: Vec<f64>,
    tau: Vec<f64>,
}

impl<'a> GridSurface<'a> {
    /// Wraps a complete grid.
    pub fn new(grid: &'a TheoryGrid) -> Self {
        let upsilon = (0..grid.upsilon.count)
            .map(|i| grid::grid_value(&grid.upsilon, i))
            .collect();
        let tau = (0..grid.tau.count)
            .map(|i| grid::grid_value(&grid.tau, i))
            .collect();
        Self { grid, upsilon, tau }
    }
}

impl BoundSurface for GridSurface<'_> {
    fn upsilon(&self) -> &[f64] {
        &self.upsilon
    }
    fn tau(&self) -> &[f64] {
        &self.tau
    }
    fn mmhb_msun(&self, i: usize) -> Option<f64> {
        self.grid.point(i)?.mmhb.ok().map(|m| m.value_msun)
    }
    fn chandrasekhar_mu2_msun(&self, i: usize) -> Option<f64> {
        self.grid.point(i)?.chandrasekhar.ok().map(|c| c.value_msun)
    }
    fn wd_radii_rsun(&self, i: usize, queries: &[(f64, f64)]) -> Vec<Option<f64>> {
        match self.grid.wd_table(i) {
            Some(crate::theory::point::Outcome::Ok(t)) => queries
                .iter()
                .map(|&(m, mu_e)| t.radius_rsun(m, mu_e).ok())
                .collect(),
            _ => vec![None; queries.len()],
        }
    }
}

/// Which test an object is in tension with.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TensionTest {
    /// Its class's mass bound (one-sided).
    MassBound,
    /// The white-dwarf mass–radius relation (two-sided).
    MassRadius,
}

impl TensionTest {
    /// Name in outputs.
    pub fn name(self) -> &'static str {
        match self {
            TensionTest::MassBound => "mass_bound",
            TensionTest::MassRadius => "mass_radius",
        }
    }
}

/// An object in tension with standard gravity.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tension {
    /// Index of the object.
    pub object: usize,
    /// Tension in σ (signed for the radius test: positive = larger than predicted).
    pub sigma: f64,
    /// Which test.
    pub test: TensionTest,
}

/// Two-sided tension of a white dwarf's radius with the standard-gravity mass–radius relation:
/// z = (R_obs − R(m)) / √(σ_R² + (f R)² + (dR/dM σ_M)²), the mass error propagated through the
/// local slope (first order; the fit itself marginalises over the mass exactly).
fn radius_tension(
    table: &crate::theory::white_dwarf::WdMassRadius,
    o: &CatalogueObject,
    r_obs: f64,
    r_err: f64,
    mu_e: f64,
    eopts: &EngineOptions,
) -> Option<f64> {
    let m = o.mass_msun;
    let rp = table.radius_rsun(m, mu_e).ok()?;
    let sigma_m = match (o.mass_err_lo_msun, o.mass_err_hi_msun) {
        (Some(a), Some(b)) => 0.5 * (a + b),
        (Some(a), None) | (None, Some(a)) => a,
        (None, None) => 0.0,
    };
    let h = 1e-4 * m;
    let slope = match (
        table.radius_rsun(m + h, mu_e),
        table.radius_rsun(m - h, mu_e),
    ) {
        (Ok(a), Ok(b)) => (a - b) / (2.0 * h),
        (Err(_), Ok(b)) => (rp - b) / h,
        _ => 0.0,
    };
    let s2 =
        r_err * r_err + (eopts.wd_radius_floor_fraction * rp).powi(2) + (slope * sigma_m).powi(2);
    Some((r_obs - rp) / s2.sqrt())
}

/// Per-object results at the two reference points.
#[derive(Debug, Clone)]
struct ObjectRow {
    bound_standard: Option<f64>,
    bound_best: Option<f64>,
    sigma_standard: Option<f64>,
    sigma_best: Option<f64>,
    ln_p_best: Option<f64>,
    radius_sigma_standard: Option<f64>,
    /// Two-sided radius tension at the best fit (enters the verdict).
    radius_sigma_best: Option<f64>,
    driver_rank: Option<usize>,
    driver_shift: Option<f64>,
}

fn class_bound(term: Term, p: &PointBounds) -> Option<f64> {
    match term {
        Term::WhiteDwarfMass => p.chandrasekhar.ok().map(|c| c.value_msun),
        Term::HBurning | Term::BrownDwarf => p.mmhb.ok().map(|m| m.value_msun),
        Term::WhiteDwarfRadius => None,
    }
}

/// Transposes a τ-major grid vector (index j·n_Υ + i) to Υ-major (i·n_τ + j), with +∞ for
/// points without a model, as [`map_regions`] expects.
fn upsilon_major(v: &[Option<f64>], nu: usize, nt: usize) -> Vec<f64> {
    let mut out = vec![f64::INFINITY; nu * nt];
    for j in 0..nt {
        for i in 0..nu {
            out[i * nt + j] = v[j * nu + i].unwrap_or(f64::INFINITY);
        }
    }
    out
}

/// Δχ² of a τ-major vector relative to its own minimum (None where no model).
pub(crate) fn delta_of_pub(v: &[Option<f64>]) -> Vec<Option<f64>> {
    delta_of(v)
}

fn delta_of(v: &[Option<f64>]) -> Vec<Option<f64>> {
    let min = v.iter().flatten().copied().fold(f64::INFINITY, f64::min);
    v.iter().map(|c| c.map(|c| c - min)).collect()
}

/// The τ = 0 slice of the joint likelihood on a 10× finer Υ axis (`bounds.md` §8.4), with the
/// class bounds along it for the driver analysis.
pub(crate) struct SliceResult {
    pub(crate) slice: UpsilonSlice,
    /// Per mass term: bound along the fine axis.
    bounds_fine: Vec<(Term, Vec<f64>)>,
    /// Per white dwarf with a radius: its −2 ln L along the fine axis.
    radius_fine: Vec<(usize, Vec<f64>)>,
}

fn tau0_slice(
    conf: &Confrontation,
    surface: &GridSurface<'_>,
    objects: &[CatalogueObject],
    eopts: &EngineOptions,
) -> Result<Option<SliceResult>, PipelineError> {
    let nu = conf.n_upsilon;
    let Some(j0) = surface.tau.iter().position(|&t| t == 0.0) else {
        return Ok(None);
    };
    // Use the contiguous run of Υ values that have a model on the τ = 0 row and contains the
    // most points (failures sit at the low-Υ existence bound).
    let ok: Vec<bool> = (0..nu).map(|i| conf.joint[j0 * nu + i].is_some()).collect();
    let (mut best, mut start) = ((0, 0), None);
    for (i, ok_i) in ok.iter().copied().chain(std::iter::once(false)).enumerate() {
        match (ok_i, start) {
            (true, None) => start = Some(i),
            (false, Some(s)) => {
                if i - s > best.1 - best.0 {
                    best = (s, i);
                }
                start = None;
            }
            _ => {}
        }
    }
    let (a, b) = best;
    if b - a < 2 {
        return Ok(None);
    }
    let axis: Vec<f64> = surface.upsilon[a..b].to_vec();
    let idx = |i: usize| j0 * nu + i;
    let mut splines: Vec<(Term, CubicSpline)> = Vec::new();
    for (term, _) in &conf.curves {
        let ys: Vec<f64> = (a..b)
            .map(|i| {
                let i = idx(i);
                match term {
                    Term::WhiteDwarfMass => surface.chandrasekhar_mu2_msun(i),
                    _ => surface.mmhb_msun(i),
                }
                .unwrap_or(f64::NAN)
            })
            .collect();
        splines.push((*term, CubicSpline::new(&axis, &ys, SplineEnd::NotAKnot)?));
    }
    let fine = regions::refine_axis(&axis, SLICE_REFINE)?;
    let radius_fine =
        radius_terms_on_fine_axis(conf, surface, objects, eopts, &axis, a, j0, &fine)?;
    let chi2_fine: Vec<f64> = fine
        .iter()
        .enumerate()
        .map(|(k, &u)| {
            // The mass terms with their shared systematics eliminated (and the population
            // term, if any), at the bounds interpolated along Υ.
            let at = |want: fn(Term) -> bool| {
                splines
                    .iter()
                    .find(|(t, _)| want(*t))
                    .map(|(_, sp)| sp.eval(u))
            };
            let s = conf.mass_minus_two_ln_l(
                at(|t| matches!(t, Term::HBurning | Term::BrownDwarf)),
                at(|t| t == Term::WhiteDwarfMass),
            );
            s + radius_fine.iter().map(|(_, v)| v[k]).sum::<f64>()
        })
        .collect();
    let slice = regions::slice_from_values(fine, chi2_fine)?;
    let bounds_fine = splines
        .iter()
        .map(|(t, s)| (*t, slice.upsilon_fine.iter().map(|&u| s.eval(u)).collect()))
        .collect();
    Ok(Some(SliceResult {
        slice,
        bounds_fine,
        radius_fine,
    }))
}

/// The Υ interval at τ = 0 is read on a grid this many times finer than the Υ axis
/// (`bounds.md` §8.4).
const SLICE_REFINE: usize = 10;

/// −2 ln L of each white dwarf's radius term along the fine τ = 0 axis: (object index, values).
///
/// The term is sharply curved in Υ (radii are measured to a few per cent), so interpolating it
/// between coarse grid points would overstate Δχ² between them and make the interval depend on
/// the grid spacing. The predicted radius R(M; Υ) is smooth in Υ, so it is interpolated instead
/// (not-a-knot cubic along the coarse axis, per quadrature mass node) and the likelihood is
/// evaluated exactly at every fine point. Where a node's radius is missing at a coarse point
/// (mass above the maximum), the neighbouring interval falls back to linear interpolation or
/// to "no model".
#[allow(clippy::too_many_arguments)]
fn radius_terms_on_fine_axis(
    conf: &Confrontation,
    surface: &GridSurface<'_>,
    objects: &[CatalogueObject],
    eopts: &EngineOptions,
    axis: &[f64],
    first: usize,
    j0: usize,
    fine: &[f64],
) -> Result<Vec<(usize, Vec<f64>)>, PipelineError> {
    let nu = conf.n_upsilon;
    let mut out = Vec::new();
    for u in conf.uses.iter().filter(|u| u.radius_term) {
        let o = &objects[u.index];
        let queries: Vec<(f64, f64)> = engine::radius_mass_nodes(o)
            .into_iter()
            .map(|(m, _)| (m, u.mu_e))
            .collect();
        // coarse[i][q]: radius of node q at coarse point i.
        let coarse: Vec<Vec<Option<f64>>> = (0..axis.len())
            .map(|i| surface.wd_radii_rsun(j0 * nu + first + i, &queries))
            .collect();
        let mut fine_radii: Vec<Vec<Option<f64>>> = vec![vec![None; queries.len()]; fine.len()];
        for q in 0..queries.len() {
            let ys: Vec<Option<f64>> = coarse.iter().map(|r| r[q]).collect();
            let spline = if ys.iter().all(Option::is_some) {
                let v: Vec<f64> = ys.iter().map(|y| y.unwrap_or(0.0)).collect();
                Some(CubicSpline::new(axis, &v, SplineEnd::NotAKnot)?)
            } else {
                None
            };
            for (k, &x) in fine.iter().enumerate() {
                fine_radii[k][q] = match &spline {
                    Some(sp) => Some(sp.eval(x)),
                    None => {
                        let j = axis.partition_point(|&v| v <= x).clamp(1, axis.len() - 1);
                        let t = (x - axis[j - 1]) / (axis[j] - axis[j - 1]);
                        match (ys[j - 1], ys[j]) {
                            (Some(y0), Some(y1)) => Some(y0 + t * (y1 - y0)),
                            _ => None,
                        }
                    }
                };
            }
        }
        let values: Vec<f64> = fine_radii
            .iter()
            .map(|r| -2.0 * engine::ln_radius_likelihood(o, r, eopts))
            .collect();
        out.push((u.index, values));
    }
    Ok(out)
}

/// Leave-one-out shifts of the 95.45 % Υ interval at τ = 0 from removing each white dwarf's
/// radius term (bounds.md §8.6 applied to the mass–radius test): (object index, shift), shift
/// +∞ when an end opens or closes. Exact, since the likelihood is a sum: the slice without the
/// object is the slice minus its own term on the fine axis.
fn radius_drivers(
    s: &SliceResult,
    opts: &DriverOptions,
) -> Result<Vec<(usize, f64)>, PipelineError> {
    let fine = &s.slice.upsilon_fine;
    let dchi2 = opts.level.dchi2(1);
    let baseline = regions::interval_from_slice(fine, &s.slice.chi2_fine, dchi2)?;
    let end_shift = |a: Option<f64>, b: Option<f64>| match (a, b) {
        (Some(a), Some(b)) => (a - b).abs(),
        (None, None) => 0.0,
        _ => f64::INFINITY,
    };
    let mut out = Vec::new();
    for (k, contrib) in &s.radius_fine {
        let spread = contrib.iter().copied().fold(f64::NEG_INFINITY, f64::max)
            - contrib.iter().copied().fold(f64::INFINITY, f64::min);
        if spread <= opts.candidate_min_minus_two_ln_p {
            continue; // a constant offset cannot move a Δχ² crossing
        }
        let without: Vec<f64> = s
            .slice
            .chi2_fine
            .iter()
            .zip(contrib)
            .map(|(c, r)| c - r)
            .collect();
        let iv = regions::interval_from_slice(fine, &without, dchi2)?;
        let shift = end_shift(iv.lower, baseline.lower).max(end_shift(iv.upper, baseline.upper));
        if shift > 0.0 {
            out.push((*k, shift));
        }
    }
    Ok(out)
}

fn level_key(l: Level) -> &'static str {
    l.key()
}

fn opt_json(x: Option<f64>) -> Value {
    match x {
        Some(v) if v.is_finite() => json!(v),
        _ => Value::Null,
    }
}

/// Where the theory grid comes from.
pub enum TheorySource<'a> {
    /// Compute it (through the cache, if one is given).
    Compute {
        /// The theory cache.
        cache: Option<&'a Cache>,
    },
    /// Use a grid computed elsewhere (merged shards).
    Given(Box<TheoryGrid>),
}

/// What a nightly run adds: the previous run to compare with and the alarm rules.
#[derive(Debug, Clone)]
pub struct NightlyContext {
    /// Folder of the previous run, if any.
    pub previous: Option<PathBuf>,
    /// Alarm rules.
    pub alarms: super::config::AlarmConfig,
}

/// Runs a whole confrontation and writes every output into `out_dir`.
pub fn run_confrontation(
    settings: &ConfrontSettings,
    out_dir: &Path,
    theory: TheorySource<'_>,
    generated_at: &str,
    nightly: Option<&NightlyContext>,
) -> Result<ConfrontOutcome, PipelineError> {
    // 1. Catalogues.
    let vetted = vet_all(&settings.catalogues)?;
    let mut checksums = BTreeMap::new();
    for c in &settings.catalogues {
        let bytes = std::fs::read(&c.path).map_err(|e| CatalogueError::Unreadable {
            path: c.path.clone(),
            reason: e.to_string(),
        })?;
        checksums.insert(c.path.display().to_string(), sha256_hex(&bytes));
    }

    // 2. Theory.
    let (grid, from_cache, cache_note) = match theory {
        TheorySource::Compute { cache } => theory_grid(
            settings.upsilon,
            settings.tau,
            &settings.theory,
            None,
            cache,
        )?,
        TheorySource::Given(g) => (*g, false, None),
    };
    if !grid.is_complete() {
        return Err(PipelineError::Settings(
            "the theory grid is incomplete (a shard?): merge all shards first".into(),
        ));
    }
    let standard =
        standard_point(&settings.theory).map_err(|e| PipelineError::Settings(e.to_string()))?;
    let surface = GridSurface::new(&grid);
    let mut eopts = settings.statistics.engine.clone();
    if let Some(m) = standard.mmhb.ok() {
        eopts.mmhb_floor_msun = m.floor_msun;
    }
    if let Some(c) = standard.chandrasekhar.ok() {
        eopts.chandrasekhar_floor_msun = c.floor_msun;
    }
    eopts.wd_radius_floor_fraction = settings.theory.wd_radius_floor_fraction;

    // 3. Comparison over the grid.
    let conf = engine::confront(&vetted.objects, &surface, &eopts)?;
    let (nu, nt) = (conf.n_upsilon, conf.n_tau);
    if conf.joint.iter().all(Option::is_none) {
        return Err(PipelineError::Settings(
            "no grid point has a model (every point is outside the existence bounds): widen or move the grid".into(),
        ));
    }
    let regions: MapRegions = map_regions(
        &surface.upsilon,
        &surface.tau,
        &upsilon_major(&conf.joint, nu, nt),
    )?;
    let best_index = regions.best.j_tau * nu + regions.best.i_upsilon;
    let best_point = grid
        .point(best_index)
        .ok_or_else(|| PipelineError::Internal("best point outside the grid".into()))?;
    let slice = tau0_slice(&conf, &surface, &vetted.objects, &eopts)?;

    // 4. Drivers on the τ = 0 slice.
    let mut driver_rows: Vec<(usize, f64)> = Vec::new(); // (object index, shift)
    if let Some(s) = &slice {
        let mut per_class: Vec<(Term, Vec<usize>, Vec<Measurement>)> = Vec::new();
        for (term, _) in &conf.curves {
            let idx: Vec<usize> = conf
                .uses
                .iter()
                .filter(|u| u.mass_term == Some(*term))
                .map(|u| u.index)
                .collect();
            let ms = idx.iter().map(|&k| conf.uses[k].measurement).collect();
            per_class.push((*term, idx, ms));
        }
        let classes: Vec<SliceClass<'_>> = per_class
            .iter()
            .zip(&s.bounds_fine)
            .map(|((term, _, ms), (_, b))| SliceClass {
                measurements: ms,
                floor_msun: if *term == Term::WhiteDwarfMass {
                    eopts.chandrasekhar_floor_msun
                } else {
                    eopts.mmhb_floor_msun
                },
                bound_fine_msun: b,
            })
            .collect();
        let report = leave_one_out(
            &s.slice.upsilon_fine,
            &s.slice.chi2_fine,
            &classes,
            &DriverOptions::default(),
        )?;
        for d in report.drivers {
            driver_rows.push((per_class[d.class].1[d.index], d.shift));
        }
        // White dwarfs feed the radius term too, which the mass-class analysis above does not
        // see: remove each one's radius contribution along the slice the same way (exact, since
        // the likelihood is a sum) and merge the two lists.
        let opts = DriverOptions::default();
        for (k, shift) in radius_drivers(s, &opts)? {
            match driver_rows.iter_mut().find(|(j, _)| *j == k) {
                Some(row) => row.1 = row.1.max(shift),
                None => driver_rows.push((k, shift)),
            }
        }
        driver_rows.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.cmp(&b.0)));
        driver_rows.truncate(opts.top);
    }

    // 5. Per-object tensions at standard gravity and at the best fit.
    let best_wd_table = match grid.wd_table(best_index) {
        Some(crate::theory::point::Outcome::Ok(t)) => Some(t),
        _ => None,
    };
    let mut rows: Vec<ObjectRow> = Vec::with_capacity(vetted.objects.len());
    for (k, o) in vetted.objects.iter().enumerate() {
        let u = &conf.uses[k];
        let term = match o.class {
            ObjectClass::HBurning => Term::HBurning,
            ObjectClass::BrownDwarf => Term::BrownDwarf,
            ObjectClass::WhiteDwarf => Term::WhiteDwarfMass,
        };
        let scale = u.measurement.scale;
        let bs = class_bound(term, &standard);
        let bb = class_bound(term, best_point);
        // Tensions are reported for every object, also those left out of the fit (flagged).
        let mut as_used = u.clone();
        as_used.mass_term = Some(term);
        let sigma = |b: Option<f64>| {
            b.and_then(|b| engine::tension_of(&as_used, b, &eopts))
                .filter(|z| z.is_finite())
        };
        let radius_sigma_standard = match (o.radius_rsun, o.radius_err_rsun) {
            (Some(r), Some(e)) if u.radius_term => standard
                .white_dwarf
                .as_ref()
                .and_then(|t| t.ok())
                .and_then(|t| radius_tension(t, o, r, e, u.mu_e, &eopts)),
            _ => None,
        };
        let radius_sigma_best = match (o.radius_rsun, o.radius_err_rsun, &best_wd_table) {
            (Some(r), Some(e), Some(t)) if u.radius_term => {
                radius_tension(t, o, r, e, u.mu_e, &eopts)
            }
            _ => None,
        };
        rows.push(ObjectRow {
            radius_sigma_best,
            bound_standard: bs.map(|b| b * scale),
            bound_best: bb.map(|b| b * scale),
            sigma_standard: sigma(bs),
            sigma_best: sigma(bb),
            ln_p_best: if u.mass_term.is_some() && u.measurement.informative() {
                bb.and_then(|b| engine::ln_p_object(u, b, &eopts))
            } else {
                None
            },
            radius_sigma_standard,
            driver_rank: None,
            driver_shift: None,
        });
    }
    for (rank, (k, shift)) in driver_rows.iter().enumerate() {
        rows[*k].driver_rank = Some(rank + 1);
        rows[*k].driver_shift = Some(*shift);
    }
    let thr = settings.statistics.tension_sigma;
    // Mass-bound tensions are one-sided (positive = wrong side of the bound); radius tensions
    // are two-sided, listed by their absolute value.
    let mut tensions: Vec<Tension> = Vec::new();
    for (k, r) in rows.iter().enumerate() {
        if let Some(z) = r.sigma_standard.filter(|&z| z > thr) {
            tensions.push(Tension {
                object: k,
                sigma: z,
                test: TensionTest::MassBound,
            });
        }
        if let Some(z) = r.radius_sigma_standard.filter(|z| z.abs() > thr) {
            tensions.push(Tension {
                object: k,
                sigma: z,
                test: TensionTest::MassRadius,
            });
        }
    }
    tensions.sort_by(|a, b| {
        b.sigma
            .abs()
            .total_cmp(&a.sigma.abs())
            .then(a.object.cmp(&b.object))
    });

    // 6. Absolute consistency at the best fit (Šidák) and the crowding warning.
    // N_inf counts the informative objects the reduction did not skip (bounds.md §8.4–§8.5):
    // objects that cannot constrain any grid point must not dilute the look-elsewhere factor.
    let mut counted = std::collections::BTreeSet::new();
    for (term, curve) in &conf.curves {
        let members: Vec<usize> = conf
            .uses
            .iter()
            .filter(|u| u.mass_term == Some(*term))
            .map(|u| u.index)
            .collect();
        counted.extend(curve.informative_indices().iter().map(|&j| members[j]));
    }
    let ln_ps: Vec<(usize, f64)> = rows
        .iter()
        .enumerate()
        .filter(|(k, _)| counted.contains(k))
        .filter_map(|(k, r)| r.ln_p_best.map(|l| (k, l)))
        .collect();
    // Every test in the likelihood enters the verdict: the radius tests too, each as its
    // two-sided p = 2Φ(−|z|) at the best fit (keys offset by the object count so that a white
    // dwarf's two tests stay distinct).
    let n_obj = rows.len();
    let mut ln_ps = ln_ps;
    for (k, r) in rows.iter().enumerate() {
        if let Some(z) = r.radius_sigma_best.filter(|z| z.is_finite()) {
            let ln_p = crate::confront::prob::ln_normal_cdf(-z.abs()) + std::f64::consts::LN_2;
            ln_ps.push((n_obj + k, ln_p.min(0.0)));
        }
    }
    let consistency = absolute_consistency(&ln_ps, 5);
    let verdict_failures = verdict_failures(&ln_ps, n_obj);
    let hb: Vec<Measurement> = conf
        .uses
        .iter()
        .filter(|u| u.mass_term == Some(Term::HBurning))
        .map(|u| u.measurement)
        .collect();
    let bd: Vec<Measurement> = conf
        .uses
        .iter()
        .filter(|u| u.mass_term == Some(Term::BrownDwarf))
        .map(|u| u.measurement)
        .collect();
    let crowd = best_point.mmhb.ok().map(|m| {
        crowding(
            &hb,
            &bd,
            m.value_msun,
            eopts.mmhb_floor_msun,
            &CrowdingOptions::default(),
        )
    });

    // 7. Outputs.
    std::fs::create_dir_all(out_dir).map_err(|e| OutputError::new(out_dir, e))?;
    let ctx = OutputContext {
        settings,
        vetted: &vetted,
        grid: &grid,
        surface: &surface,
        conf: &conf,
        regions: &regions,
        slice: slice.as_ref(),
        rows: &rows,
        tensions: &tensions,
        consistency: &consistency,
        crowding_warn: crowd.is_some_and(|c| c.warn),
        crowd,
        checksums: &checksums,
        eopts: &eopts,
        best_index,
        cache_note,
        since_previous: None,
        verdict_failures,
    };
    let mut ctx = ctx;
    let objects_bytes = ctx.objects_csv()?;
    let mut summary = ctx.summary_json();
    let difference = nightly.map(|n| {
        super::history::difference(
            n.previous.as_deref(),
            &super::history::parse_objects(&objects_bytes),
            &summary,
            settings.statistics.tension_sigma,
            &n.alarms,
        )
    });
    if let Some(d) = &difference {
        ctx.since_previous = Some(d.lines());
        summary["since_previous"] =
            serde_json::to_value(d).map_err(|e| PipelineError::Internal(e.to_string()))?;
    }
    write_atomic(
        &out_dir.join("quarantine.csv"),
        &export::quarantine_csv(&vetted.quarantine)
            .map_err(|e| PipelineError::Internal(e.to_string()))?,
    )?;
    write_atomic(&out_dir.join("objects.csv"), &objects_bytes)?;
    // Test hook: simulate a run killed mid-write (tests/nightly_run.rs). Harmless otherwise.
    if std::env::var_os("DWARFBOUND_TEST_ABORT_MID_WRITE").is_some() {
        std::process::abort();
    }
    write_atomic(&out_dir.join("grid.csv"), &ctx.grid_csv()?)?;
    let mut summary_bytes =
        serde_json::to_vec_pretty(&summary).map_err(|e| PipelineError::Internal(e.to_string()))?;
    summary_bytes.push(b'\n');
    write_atomic(&out_dir.join("summary.json"), &summary_bytes)?;
    super::report_input::write_report_files(&ctx, out_dir, generated_at)?;

    let rows_total = vetted.tallies.iter().fold((0, 0, 0), |acc, t| {
        (
            acc.0 + t.rows_in,
            acc.1 + t.rows_accepted,
            acc.2 + t.rows_quarantined,
        )
    });
    Ok(ConfrontOutcome {
        summary,
        consistent: consistency.consistent_cl95,
        tensions: tensions
            .iter()
            .map(|t| {
                let o = &vetted.objects[t.object];
                let what = match t.test {
                    TensionTest::MassBound => o.class.label().to_string(),
                    TensionTest::MassRadius => format!("{} (radius)", o.class.label()),
                };
                (o.id.clone(), what, t.sigma)
            })
            .collect(),
        theory_from_cache: from_cache,
        rows: rows_total,
        difference,
    })
}

/// Everything the output writers need, borrowed from one confrontation.
pub(crate) struct OutputContext<'a> {
    pub settings: &'a ConfrontSettings,
    pub vetted: &'a Vetted,
    pub grid: &'a TheoryGrid,
    pub surface: &'a GridSurface<'a>,
    pub conf: &'a Confrontation,
    pub regions: &'a MapRegions,
    pub slice: Option<&'a SliceResult>,
    rows: &'a [ObjectRow],
    pub tensions: &'a [Tension],
    pub consistency: &'a regions::AbsoluteConsistency,
    pub crowding_warn: bool,
    pub crowd: Option<regions::Crowding>,
    pub checksums: &'a BTreeMap<String, String>,
    pub eopts: &'a EngineOptions,
    pub best_index: usize,
    pub cache_note: Option<String>,
    pub since_previous: Option<Vec<String>>,
    /// Tests failing at the best fit (key as in `consistency.worst`; ≥ n_objects = radius).
    pub verdict_failures: Vec<(usize, f64)>,
}

fn limit_label(l: MassLimit) -> &'static str {
    l.label()
}

impl OutputContext<'_> {
    /// Tension of object `k` at the best fit, if it has one.
    pub(crate) fn sigma_best(&self, k: usize) -> Option<f64> {
        self.rows[k].sigma_best
    }

    /// Drivers as (rank, object index, shift), by rank.
    pub(crate) fn drivers_sorted(&self) -> Vec<(usize, usize, f64)> {
        let mut d: Vec<(usize, usize, f64)> = self
            .rows
            .iter()
            .enumerate()
            .filter_map(|(k, r)| Some((r.driver_rank?, k, r.driver_shift?)))
            .collect();
        d.sort_by_key(|x| x.0);
        d
    }

    /// The standard-gravity point's status on the map.
    pub(crate) fn grid_standard_status(&self) -> report::StandardGravityStatus {
        let (nu, nt) = (self.conf.n_upsilon, self.conf.n_tau);
        let i = self.surface.upsilon.iter().position(|&u| u == 0.0);
        let j = self.surface.tau.iter().position(|&t| t == 0.0);
        match (i, j) {
            (Some(i), Some(j)) => {
                let d = self.regions.delta_chi2[i * nt + j];
                report::StandardGravityStatus {
                    allowed_cl95: Some(d.is_finite() && d <= Level::Cl95.dchi2(2)),
                    minus_two_ln_l: self.conf.joint[j * nu + i],
                    delta_chi2: d.is_finite().then_some(d),
                }
            }
            _ => report::StandardGravityStatus {
                allowed_cl95: None,
                minus_two_ln_l: None,
                delta_chi2: None,
            },
        }
    }

    fn object(&self, k: usize) -> &CatalogueObject {
        &self.vetted.objects[k]
    }

    /// `objects.csv`: one row per accepted object.
    fn objects_csv(&self) -> Result<Vec<u8>, PipelineError> {
        let header = [
            "id",
            "class",
            "source_file",
            "source_row",
            "mass",
            "mass_err_lo",
            "mass_err_hi",
            "mass_limit",
            "radius",
            "radius_err",
            "age",
            "mu_e",
            "in_fit",
            "flags",
            "bound_standard",
            "bound_best",
            "sigma_standard",
            "sigma_best",
            "radius_sigma_standard",
            "driver_rank",
            "driver_shift",
            "driver_end_opens_or_closes",
        ];
        let rows: Vec<Vec<Cell>> = self
            .rows
            .iter()
            .enumerate()
            .map(|(k, r)| {
                let o = self.object(k);
                let u = &self.conf.uses[k];
                vec![
                    Cell::Text(o.id.clone()),
                    Cell::Text(o.class.label().into()),
                    Cell::Text(o.source_file.clone()),
                    Cell::Int(o.source_row as i64),
                    Cell::Float(Some(o.mass_msun)),
                    Cell::Float(o.mass_err_lo_msun),
                    Cell::Float(o.mass_err_hi_msun),
                    Cell::Text(limit_label(o.mass_limit).into()),
                    Cell::Float(o.radius_rsun),
                    Cell::Float(o.radius_err_rsun),
                    Cell::Float(o.age_gyr),
                    Cell::Float(Some(u.mu_e)),
                    Cell::Bool(Some(u.mass_term.is_some() && u.measurement.informative())),
                    Cell::Text(u.flags.join(";")),
                    Cell::Float(r.bound_standard),
                    Cell::Float(r.bound_best),
                    Cell::Float(r.sigma_standard),
                    Cell::Float(r.sigma_best),
                    Cell::Float(r.radius_sigma_standard),
                    match r.driver_rank {
                        Some(x) => Cell::Int(x as i64),
                        None => Cell::Text(String::new()),
                    },
                    Cell::Float(r.driver_shift.filter(|s| s.is_finite())),
                    Cell::Bool(r.driver_shift.map(|s| s.is_infinite())),
                ]
            })
            .collect();
        report::tables::csv_bytes(&header, &rows)
            .map_err(|e| PipelineError::Internal(e.to_string()))
    }

    /// `grid.csv`: one row per grid point.
    fn grid_csv(&self) -> Result<Vec<u8>, PipelineError> {
        let (nu, nt) = (self.conf.n_upsilon, self.conf.n_tau);
        let mut header: Vec<String> = vec![
            "upsilon".into(),
            "tau".into(),
            "status".into(),
            "reason".into(),
            "mmhb_msun".into(),
            "mmhb_raw_msun".into(),
            "chandrasekhar_msun".into(),
            "sc_fraction".into(),
            "breakup_period_minutes".into(),
        ];
        for t in Term::ALL {
            header.push(format!("minus_two_ln_l_{}", t.name()));
        }
        header.extend(
            [
                "minus_two_ln_l_joint",
                "delta_chi2",
                "allowed_cl68",
                "allowed_cl95",
                "allowed_cl997",
            ]
            .map(String::from),
        );
        let header_refs: Vec<&str> = header.iter().map(String::as_str).collect();
        let mut rows = Vec::with_capacity(nu * nt);
        for j in 0..nt {
            for i in 0..nu {
                let k = j * nu + i;
                let p = self.grid.point(k);
                let (status, reason) = match p.and_then(|p| p.first_failure()) {
                    Some(f) if self.conf.joint[k].is_none() => ("no-model", f.reason.clone()),
                    Some(f) => ("partial", f.reason.clone()),
                    None => ("ok", String::new()),
                };
                let mut row = vec![
                    Cell::Float(Some(self.surface.upsilon[i])),
                    Cell::Float(Some(self.surface.tau[j])),
                    Cell::Text(status.into()),
                    Cell::Text(reason),
                    Cell::Float(p.and_then(|p| p.mmhb.ok()).map(|m| m.value_msun)),
                    Cell::Float(p.and_then(|p| p.mmhb.ok()).map(|m| m.raw_msun)),
                    Cell::Float(p.and_then(|p| p.chandrasekhar.ok()).map(|c| c.value_msun)),
                    Cell::Float(p.and_then(|p| p.sc.ok()).map(|s| s.q_sc)),
                    Cell::Float(p.and_then(|p| p.breakup.ok()).map(|b| b.period_h * 60.0)),
                ];
                for t in Term::ALL {
                    row.push(Cell::Float(self.conf.per_term[t as usize][k]));
                }
                let d = self.regions.delta_chi2[i * nt + j];
                let d = d.is_finite().then_some(d);
                row.push(Cell::Float(self.conf.joint[k]));
                row.push(Cell::Float(d));
                for l in Level::ALL {
                    row.push(Cell::Bool(Some(d.is_some_and(|d| d <= l.dchi2(2)))));
                }
                rows.push(row);
            }
        }
        report::tables::csv_bytes(&header_refs, &rows)
            .map_err(|e| PipelineError::Internal(e.to_string()))
    }

    /// The `summary.json` document (keys of `../shared/CONVENTIONS.md`, plus details).
    fn summary_json(&self) -> Value {
        let catalogues: Vec<Value> = self
            .vetted
            .tallies
            .iter()
            .map(|t| {
                json!({
                    "path": t.path,
                    "rows_in": t.rows_in,
                    "rows_accepted": t.rows_accepted,
                    "rows_quarantined": t.rows_quarantined,
                    "sha256": self.checksums.get(&t.path),
                })
            })
            .collect();
        let axis = |a: &Axis| json!({"start": a.start, "stop": a.stop, "count": a.count});
        let mut allowed = serde_json::Map::new();
        for (l, b) in Level::ALL.iter().zip(&self.regions.allowed) {
            allowed.insert(
                level_key(*l).into(),
                if b.n_points == 0 {
                    json!({"upsilon_min": null, "upsilon_max": null, "tau_min": null, "tau_max": null, "fraction_of_grid": 0.0})
                } else {
                    json!({
                        "upsilon_min": b.upsilon_min,
                        "upsilon_max": b.upsilon_max,
                        "tau_min": b.tau_min,
                        "tau_max": b.tau_max,
                        "fraction_of_grid": b.fraction_of_grid,
                    })
                },
            );
        }
        let mut interval = serde_json::Map::new();
        for (n, l) in Level::ALL.iter().enumerate() {
            interval.insert(
                level_key(*l).into(),
                match self.slice {
                    Some(s) => json!({
                        "lower": opt_json(s.slice.intervals[n].lower),
                        "upper": opt_json(s.slice.intervals[n].upper),
                    }),
                    None => json!({"lower": null, "upper": null}),
                },
            );
        }
        let interval_note = match self.slice {
            Some(_) => Value::Null,
            None => json!("not computed: the grid has no tau = 0 row with a model on at least two upsilon values"),
        };
        let sg_index = self
            .surface
            .tau
            .iter()
            .position(|&t| t == 0.0)
            .and_then(|j| {
                self.surface
                    .upsilon
                    .iter()
                    .position(|&u| u == 0.0)
                    .map(|i| (i, j))
            });
        let standard = match sg_index {
            Some((i, j)) => {
                let nt = self.conf.n_tau;
                let d = self.regions.delta_chi2[i * nt + j];
                json!({
                    "on_grid": true,
                    "allowed_cl95": d.is_finite() && d <= Level::Cl95.dchi2(2),
                    "minus_two_ln_l": opt_json(self.conf.joint[j * self.conf.n_upsilon + i]),
                    "delta_chi2": opt_json(d.is_finite().then_some(d)),
                })
            }
            None => {
                json!({"on_grid": false, "allowed_cl95": null, "minus_two_ln_l": null, "delta_chi2": null})
            }
        };
        let tensions: Vec<Value> = self
            .tensions
            .iter()
            .map(|t| {
                let o = self.object(t.object);
                json!({"id": o.id, "class": o.class.label(), "sigma": t.sigma, "test": t.test.name(), "source_file": o.source_file})
            })
            .collect();
        let drivers: Vec<Value> = {
            self.drivers_sorted()
                .iter()
                .map(|&(rank, k, s)| {
                    let o = self.object(k);
                    json!({
                        "rank": rank,
                        "id": o.id,
                        "class": o.class.label(),
                        "shift": if s.is_finite() { json!(s) } else { Value::Null },
                        "end_opens_or_closes": !s.is_finite(),
                    })
                })
                .collect()
        };
        let worst: Vec<Value> = self
            .consistency
            .worst
            .iter()
            .map(|&(k, lnp)| {
                let n = self.rows.len();
                let o = self.object(k % n);
                let test = if k >= n { "mass_radius" } else { "mass_bound" };
                json!({"id": o.id, "class": o.class.label(), "probability": lnp.exp(), "test": test})
            })
            .collect();
        let failing: Vec<Value> = self
            .verdict_failures
            .iter()
            .map(|&(k, lnp)| {
                let n = self.rows.len();
                let o = self.object(k % n);
                let test = if k >= n { "mass_radius" } else { "mass_bound" };
                json!({"id": o.id, "class": o.class.label(), "test": test, "probability": lnp.exp()})
            })
            .collect();
        let best = &self.regions.best;
        let t = &self.settings.theory;
        let mmhb_mode = t.mmhb_mode.name();
        let reduction: Vec<Value> = self
            .conf
            .curves
            .iter()
            .map(|(term, c)| {
                json!({
                    "class": term.name(),
                    "nodes": self.eopts.reduce.n_nodes,
                    "informative": c.n_informative(),
                    "skipped": c.n_skipped(),
                    "max_abs_minus_two_ln_l_error": 2.0 * c.achieved_error(),
                })
            })
            .collect();
        json!({
            "version": env!("CARGO_PKG_VERSION"),
            "catalogues": catalogues,
            "grid": {
                "upsilon": axis(&self.settings.upsilon),
                "tau": axis(&self.settings.tau),
                "anisotropy": t.anisotropy.name(),
                "points_without_model": self.regions.n_invalid,
            },
            "model": {
                "mmhb_model": t.mmhb_model.name(),
                "mmhb_mode": mmhb_mode,
                "mmhb_floor_msun": self.eopts.mmhb_floor_msun,
                "chandrasekhar_mode": t.chandrasekhar_mode.name(),
                "chandrasekhar_floor_msun": self.eopts.chandrasekhar_floor_msun,
                "wd_radius_floor_fraction": self.eopts.wd_radius_floor_fraction,
                "theory_floor": self.eopts.mass_terms.systematics.name(),
                "population_window_msun": self.eopts.population_window_msun.map(|(a, b)| vec![a, b]),
                "age_min_mmhb_gyr": self.eopts.age_min_mmhb_gyr,
                "include_young": self.eopts.include_young,
            },
            "best_fit": {
                "upsilon": best.upsilon,
                "tau": best.tau,
                "minus_two_ln_l": best.chi2_min,
                "on_grid_edge": best.i_upsilon == 0 || best.i_upsilon + 1 == self.conf.n_upsilon
                    || (self.conf.n_tau > 1 && (best.j_tau == 0 || best.j_tau + 1 == self.conf.n_tau)),
            },
            "allowed": allowed,
            "upsilon_interval_at_tau0": interval,
            "upsilon_interval_at_tau0_note": interval_note,
            "standard_gravity": standard,
            "consistency": {
                "consistent_cl95": self.consistency.consistent_cl95,
                "p_catalogue": self.consistency.p_cat,
                "n_informative": self.consistency.n_informative,
                "worst": worst,
                "method": "Šidák over every test in the likelihood at the best fit: one-sided mass-bound probabilities (product form, whole floor per object) and two-sided radius p-values 2Φ(−|z|)",
                "failing": failing,
            },
            "statistics": self.statistics_json(),
            "tension_threshold_sigma": self.settings.statistics.tension_sigma,
            "tensions": tensions,
            "drivers": drivers,
            "reduction": reduction,
            "crowding_warning": self.crowding_warn,
        })
    }
}

/// Tests that fail at the best fit: p below the per-test Šidák level 1 − 0.9545^{1/N}, so that
/// they are exactly the tests that make the catalogue verdict fail; smallest first.
fn verdict_failures(ln_ps: &[(usize, f64)], _n_objects: usize) -> Vec<(usize, f64)> {
    let n = ln_ps.len().max(1) as f64;
    let per_test = -(Level::Cl95.probability().ln() / n).exp_m1();
    let mut out: Vec<(usize, f64)> = ln_ps
        .iter()
        .copied()
        .filter(|&(_, l)| l < per_test.ln())
        .collect();
    out.sort_by(|a, b| a.1.total_cmp(&b.1).then(a.0.cmp(&b.0)));
    out
}

impl OutputContext<'_> {
    /// `summary.json` key `statistics`: how the systematics and the labels' likelihood were
    /// treated, per bound.
    fn statistics_json(&self) -> Value {
        let mt = &self.eopts.mass_terms;
        let best = self.grid.point(self.best_index);
        let bounds: Vec<Value> = self
            .conf
            .bounds
            .iter()
            .map(|(bound, t)| {
                let b_best = best.and_then(|p| match bound {
                    engine::Bound::Mmhb => p.mmhb.ok().map(|m| m.value_msun),
                    engine::Bound::Chandrasekhar => p.chandrasekhar.ok().map(|c| c.value_msun),
                });
                let mf = t.mass_function().map(|m| {
                    json!({
                        "objects": m.n_objects,
                        "iterations": m.iterations,
                        "converged": m.converged,
                        "smoothing_msun": m.smoothing_msun,
                        "cells": m.weights.len(),
                    })
                });
                json!({
                    "bound": bound.name(),
                    "classes": t.terms().iter().map(|x| x.name()).collect::<Vec<_>>(),
                    "likelihood": t.model().name(),
                    "likelihood_rule": t.rule(),
                    "objects_near_bound": t.n_near(),
                    "shared_sigma_msun": t.nuisance().map(|n| n.sigma),
                    "per_object_scatter_msun": t.scatter_msun(),
                    "shift_at_best_fit_msun": opt_json(b_best.map(|b| t.delta_hat(b))),
                    "max_abs_minus_two_ln_l_error": opt_json(Some(t.achieved_error())),
                    "mass_function": mf,
                })
            })
            .collect();
        json!({
            "systematics": mt.systematics.name(),
            "nuisance_method": mt.method.name(),
            "likelihood_choice": mt.likelihood.name(),
            "auto_rule": format!(
                "calibrated when at least {} objects of the bound's classes lie within {}σ of the grid's range of the bound",
                mt.auto_min_near, mt.auto_z
            ),
            "bounds": bounds,
        })
    }
}

/// Tension of each object with standard gravity (Υ = τ = 0) under the default model (anchored
/// MMHB with its floor, Newtonian Chandrasekhar mass with its floor): (object index, σ) for
/// objects above `threshold_sigma`, largest first. Used by `vet` to flag objects before any
/// grid is computed; the age rule is not applied here (every object is flagged on its mass).
pub fn standard_gravity_tensions(
    objects: &[CatalogueObject],
    threshold_sigma: f64,
) -> Result<Vec<(usize, f64)>, PipelineError> {
    let theory = TheorySettings::default();
    let p = standard_point(&theory).map_err(|e| PipelineError::Settings(e.to_string()))?;
    let mut eopts = EngineOptions::default();
    if let Some(m) = p.mmhb.ok() {
        eopts.mmhb_floor_msun = m.floor_msun;
    }
    if let Some(c) = p.chandrasekhar.ok() {
        eopts.chandrasekhar_floor_msun = c.floor_msun;
    }
    eopts.include_young = true;
    let uses = engine::plan(objects, &eopts);
    let mut out: Vec<(usize, f64)> = uses
        .iter()
        .filter_map(|u| {
            let term = u.mass_term?;
            let z = engine::tension_of(u, class_bound(term, &p)?, &eopts)?;
            (z.is_finite() && z > threshold_sigma).then_some((u.index, z))
        })
        .collect();
    out.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.cmp(&b.0)));
    Ok(out)
}

/// Accepts `None` for an empty map option so both callers share one parser.
pub fn parse_format(name: Option<&str>) -> Result<Option<Format>, PipelineError> {
    match name {
        None => Ok(None),
        Some(n) => Format::from_name(n).map(Some).ok_or_else(|| {
            PipelineError::Settings(format!(
                "unknown format `{n}` (csv, parquet, fits, votable, ecsv)"
            ))
        }),
    }
}
