//! One confrontation, start to finish: vet the catalogues, get the theory grid (from the cache
//! when it is there), compare, and write every output file into one folder. Shared by
//! `dwarfbound confront` and the nightly `run`.
//!
//! This file only wires the stages' public APIs together: the physics lives in
//! [`crate::theory`], the statistics in [`crate::confront`], the output files in
//! [`super::outputs`] and [`super::report_input`], the drawing and the documents in
//! [`crate::report`].
//!
//! ```no_run
//! use dwarfbound::pipeline::confront::{
//!     run_confrontation, CatalogueInput, ConfrontSettings, StatisticsSettings, TheorySource,
//! };
//! use dwarfbound::theory::point::TheorySettings;
//! use dwarfbound::theory::Axis;
//! let settings = ConfrontSettings {
//!     catalogues: vec![CatalogueInput {
//!         path: "catalogs-demo/vlm_stars.csv".into(),
//!         map: None,
//!         format: None,
//!         table: None,
//!     }],
//!     upsilon: Axis { start: -0.3, stop: 0.3, count: 13 },
//!     tau: Axis { start: -0.1, stop: 0.1, count: 9 },
//!     theory: TheorySettings::default(),
//!     statistics: StatisticsSettings::default(),
//!     objects_format: Default::default(),
//! };
//! let outcome = run_confrontation(
//!     &settings,
//!     std::path::Path::new("/tmp/out"),
//!     TheorySource::Compute { cache: None },
//!     "2026-01-01T00:00:00Z",
//!     None,
//! )
//! .unwrap();
//! println!("consistent: {}", outcome.consistent);
//! ```

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde_json::Value;

use super::cache::{self, Cache, Lookup};
use super::outputs::OutputContext;
use super::surface::{class_bounds, GridSurface};
use crate::catalogue::table::ReadOptions;
use crate::catalogue::{export, vet_files, CatalogueError, ColumnMap, Vetted};
use crate::confront::drivers::{slice_drivers_in_fit_and_ln_p_at, DriverOptions};
use crate::confront::engine::{self, BoundSurface, EngineOptions};
use crate::confront::profile::{posterior, profile_intervals};
use crate::confront::regions::map_regions;
use crate::confront::slice::{tau0_slice, tau0_slice_other_floor};
use crate::confront::tension::{
    consistency_at_best, crowding_at, mass_tensions, object_verdicts, tensions_above, TensionTest,
};
use crate::output::{write_atomic, AtomicFile, OutputError};
use crate::theory::grid::{self, GridIdentity, GridOptions, Shard, TheoryGrid};
use crate::theory::point::{standard_point, PointBounds, TheorySettings};
use crate::theory::Axis;

pub use super::error::PipelineError;
pub use super::settings::{CatalogueInput, ConfrontSettings, ObjectsFormat, StatisticsSettings};

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
    /// One line when a cache entry was discarded (corrupt, or computed for another grid or
    /// settings) and rebuilt; the report's notes carry it too.
    pub cache_note: Option<String>,
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
        crate::catalogue::vet::append(&mut all.objects, v.objects);
        crate::catalogue::vet::append(&mut all.quarantine, v.quarantine);
        all.tallies.extend(v.tallies);
    }
    // Held until every output is written: no spare capacity (see `vet_files`).
    all.objects.shrink_to_fit();
    Ok(all)
}

/// How a nightly or confront run computes its theory grid (the options its cache key covers).
fn grid_options(shard: Option<Shard>) -> GridOptions {
    GridOptions {
        with_wd_tables: true,
        shard,
        quiet: false,
    }
}

/// The cache key [`theory_grid`] files the grid of these axes and settings under (so that
/// retention can spare the entry a run has just used).
pub fn theory_cache_key(
    upsilon: &Axis,
    tau: &Axis,
    theory: &TheorySettings,
    shard: Option<Shard>,
) -> String {
    Cache::key(&GridIdentity::new(upsilon, tau, theory, &grid_options(shard)).to_json())
}

/// The theory grid, from the cache when a verified entry computed for exactly these axes and
/// settings exists. Returns the grid and whether it came from the cache, plus a one-line note
/// when an entry was discarded (corrupt, or computed for another grid) and rebuilt.
pub fn theory_grid(
    upsilon: Axis,
    tau: Axis,
    theory: &TheorySettings,
    shard: Option<Shard>,
    cache: Option<&Cache>,
) -> Result<(TheoryGrid, bool, Option<String>), PipelineError> {
    let request = GridRequest {
        upsilon,
        tau,
        theory,
        shard,
        cache,
    };
    cached_theory_grid(&request).or_computed(&request)
}

/// One theory grid to look up in the cache and, failing that, to compute: its axes, settings and
/// shard, and the cache (if any) it is read from and stored in.
#[derive(Debug, Clone, Copy)]
pub struct GridRequest<'a> {
    /// The ϒ axis.
    pub upsilon: Axis,
    /// The τ axis.
    pub tau: Axis,
    /// The theory settings.
    pub theory: &'a TheorySettings,
    /// The shard of the grid, if only part of it is wanted.
    pub shard: Option<Shard>,
    /// The theory cache.
    pub cache: Option<&'a Cache>,
}

impl GridRequest<'_> {
    /// The grid's identity, whose JSON is the cache entry's description (and so its key).
    fn identity(&self) -> GridIdentity {
        GridIdentity::new(
            &self.upsilon,
            &self.tau,
            self.theory,
            &grid_options(self.shard),
        )
    }
}

/// What the theory cache held for a grid ([`cached_theory_grid`]).
pub enum CachedGrid {
    /// A verified entry for exactly these axes and settings.
    Hit(Box<TheoryGrid>),
    /// None to use: the grid must be computed. The one-line note says why an entry was
    /// discarded, if one was.
    Miss(Option<String>),
}

/// The theory grid from the cache alone (never computed here): cheap enough to read while the
/// catalogues are vetted, and nothing is lost if they turn out unusable.
pub fn cached_theory_grid(request: &GridRequest<'_>) -> CachedGrid {
    let Some(cache) = request.cache else {
        return CachedGrid::Miss(None);
    };
    let identity = request.identity();
    let description = identity.to_json();
    let key = Cache::key(&description);
    let discarded = |why: String| {
        CachedGrid::Miss(Some(format!(
            "theory cache entry {} discarded and rebuilt: {why}",
            cache.entry_path(&key).display()
        )))
    };
    match cache.load(&key, &description) {
        Lookup::Hit(bytes) => match TheoryGrid::from_json_bytes(&bytes) {
            // The grid's own fields must say the same as the recorded description.
            Ok(g) if g.identity() == identity => CachedGrid::Hit(Box::new(g)),
            Ok(g) => discarded(cache::describe_difference(
                &g.identity().to_json(),
                &description,
            )),
            Err(e) => discarded(format!("unreadable grid: {e}")),
        },
        Lookup::Corrupt(why) | Lookup::Mismatch(why) => discarded(why),
        Lookup::Missing => CachedGrid::Miss(None),
    }
}

impl CachedGrid {
    /// The grid found, or else the grid of `request` computed (and stored in its cache, if it
    /// has one): [`theory_grid`]'s answer, with the note of a discarded entry kept.
    pub fn or_computed(
        self,
        request: &GridRequest<'_>,
    ) -> Result<(TheoryGrid, bool, Option<String>), PipelineError> {
        let note = match self {
            CachedGrid::Hit(g) => return Ok((*g, true, None)),
            CachedGrid::Miss(note) => note,
        };
        let g = grid::compute(
            request.upsilon,
            request.tau,
            request.theory,
            &grid_options(request.shard),
        )
        .map_err(|e| PipelineError::Settings(e.to_string()))?;
        if let Some(cache) = request.cache {
            let description = request.identity().to_json();
            let bytes = g
                .to_json_bytes()
                .map_err(|e| PipelineError::Internal(e.to_string()))?;
            cache.store(&Cache::key(&description), &description, &bytes)?;
        }
        Ok((g, false, note))
    }
}

/// The whole grid of a confrontation's settings, through `cache`.
fn grid_request<'a>(settings: &'a ConfrontSettings, cache: Option<&'a Cache>) -> GridRequest<'a> {
    GridRequest {
        upsilon: settings.upsilon,
        tau: settings.tau,
        theory: &settings.theory,
        shard: None,
        cache,
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
    /// Housekeeping of the run history done for this run, one line each (the report and
    /// `since_previous` carry them).
    pub housekeeping: Vec<String>,
}

/// Runs a whole confrontation and writes every output into `out_dir`.
pub fn run_confrontation(
    settings: &ConfrontSettings,
    out_dir: &Path,
    theory: TheorySource<'_>,
    generated_at: &str,
    nightly: Option<&NightlyContext>,
) -> Result<ConfrontOutcome, PipelineError> {
    // 1. Catalogues, and the checksum of each file. Meanwhile the theory grid is read from the
    // cache, if it is there (the vetting leaves the second core idle part of the time; a grid
    // that must be computed waits until the catalogues are known to be usable).
    let tables_cache = match &theory {
        TheorySource::Compute { cache } => *cache,
        TheorySource::Given(_) => None,
    };
    let (vetted, (checksums, cached)) = rayon::join(
        || vet_all(&settings.catalogues),
        || {
            let cached = match &theory {
                TheorySource::Compute { cache } => {
                    Some(cached_theory_grid(&grid_request(settings, *cache)))
                }
                TheorySource::Given(_) => None,
            };
            (checksum_files(&settings.catalogues), cached)
        },
    );
    let vetted = vetted?;
    let checksums = checksums?;

    // 2. Theory: the grid, the standard-gravity point, and the floors the latter sets. The
    // standard white-dwarf tables the comparison will ask for are computed meanwhile (in
    // parallel, not one after another inside step 3; the same values).
    let (grid, ()) = rayon::join(
        || match theory {
            TheorySource::Given(g) => Ok((*g, false, None)),
            TheorySource::Compute { cache } => cached
                .unwrap_or(CachedGrid::Miss(None))
                .or_computed(&grid_request(settings, cache)),
        },
        || {
            super::surface::warm_standard_tables(
                &vetted.objects,
                settings.statistics.engine.radius.model,
                tables_cache,
            )
        },
    );
    let (grid, from_cache, cache_note) = grid?;
    if !grid.is_complete() {
        return Err(PipelineError::Settings(
            "the theory grid is incomplete (a shard?): merge all shards first".into(),
        ));
    }
    let standard =
        standard_point(&settings.theory).map_err(|e| PipelineError::Settings(e.to_string()))?;
    let standard_cold = standard.white_dwarf.as_ref().and_then(|t| t.ok());
    let mut eopts = engine_options(&settings.statistics.engine, &standard);
    eopts.radius.cold_floor_fraction = settings.theory.wd_radius_floor_fraction;
    let surface = GridSurface::new(&grid, standard_cold, eopts.radius.model);
    // Between stages, what the last one freed goes back to the system (`heap`): the reading's
    // and the grid parser's buffers here, each stage's temporary tables below.
    crate::heap::release_freed();

    // 3. Comparison over the grid: likelihood maps, allowed regions, the τ = 0 slice. Steps 3–6
    // share one progress bar (stderr, terminal only): each can take seconds on a large catalogue.
    let steps = crate::progress::Steps::new(5, "confronting");
    steps.step("likelihood over the grid");
    let conf = engine::confront(&vetted.objects, &surface, &eopts)?;
    if conf.joint.iter().all(Option::is_none) {
        return Err(PipelineError::Settings(
            "no grid point has a model (every point is outside the existence bounds): widen or move the grid".into(),
        ));
    }
    let joint: Vec<f64> = conf
        .joint
        .iter()
        .map(|c| c.unwrap_or(f64::INFINITY))
        .collect();
    let regions = map_regions(surface.upsilon(), surface.tau(), &joint)?;
    let best_index = regions.best.j_tau * conf.n_upsilon + regions.best.i_upsilon;
    let best_point = grid
        .point(best_index)
        .ok_or_else(|| PipelineError::Internal("best point outside the grid".into()))?;
    steps.step("τ = 0 slice");
    let slice = tau0_slice(&conf, &surface)?;
    // The same slice with the other treatment of the theory floors (shared or per object),
    // and the profile and flat-prior posterior readings of the map.
    steps.step("τ = 0 slice, other floor");
    let slice_other_floor = match &slice {
        Some(s) => Some(tau0_slice_other_floor(
            &conf,
            &vetted.objects,
            &surface,
            &eopts,
            s,
        )?),
        None => None,
    };
    crate::heap::release_freed();
    steps.step("profile and posterior");
    let profile = profile_intervals(surface.upsilon(), surface.tau(), &joint)?;
    let post = posterior(surface.upsilon(), surface.tau(), &joint)?;

    // 4. Drivers of the ϒ interval on the τ = 0 slice, under the likelihood used.
    steps.step("drivers");
    // Each object's ln P in the fit at the best fit is read from the posterior the drivers'
    // screening builds anyway (`objects.csv`'s σ in the fit; the same value to the bit: the
    // best point's class bounds are what the surface gives there).
    let (standard_bounds, best_bounds) = (class_bounds(&standard), class_bounds(best_point));
    let (drivers, ln_p_in_fit_at_best) = match &slice {
        Some(s) => slice_drivers_in_fit_and_ln_p_at(
            &conf,
            &vetted.objects,
            s,
            &DriverOptions::default(),
            &best_bounds,
        )?,
        None => (Vec::new(), Vec::new()),
    };

    // 5. Per-object verdicts at standard gravity and at the best fit; tensions.
    crate::heap::release_freed();
    steps.step("per-object verdicts");
    let verdicts = object_verdicts(
        &vetted.objects,
        &conf.uses,
        &conf.radius_objects,
        &conf.spins,
        &standard_bounds,
        &best_bounds,
        &surface,
        best_index,
        &eopts,
    );
    let tensions = tensions_above(&verdicts, settings.statistics.tension_sigma);
    let spin_verdicts =
        crate::confront::spin::spin_verdicts(&conf.spins, &conf.spin_spans, &surface, best_index);

    // 6. Absolute consistency at the best fit (Šidák) and the crowding warning.
    let (consistency, verdict_failures) = consistency_at_best(
        &conf,
        &vetted.objects,
        &best_bounds,
        &eopts,
        &verdicts,
        &spin_verdicts,
    );
    let crowd = best_point
        .mmhb
        .ok()
        .map(|m| crowding_at(&conf, &vetted.objects, m.value_msun, eopts.mmhb_floor_msun));

    steps.finish();
    crate::heap::release_freed();
    let outputs_started = std::time::Instant::now();

    // 7. Outputs.
    let mut ctx = OutputContext {
        settings,
        vetted: &vetted,
        grid: &grid,
        surface: &surface,
        conf: &conf,
        regions: &regions,
        slice: slice.as_ref(),
        slice_other_floor: slice_other_floor.as_ref().map(|(sy, s)| (*sy, s)),
        profile: &profile,
        posterior: &post,
        verdicts: &verdicts,
        standard_bounds,
        best_bounds,
        spin_verdicts: &spin_verdicts,
        drivers: &drivers,
        ln_p_in_fit_at_best: &ln_p_in_fit_at_best,
        tensions: &tensions,
        consistency: &consistency,
        crowd,
        checksums: &checksums,
        eopts: &eopts,
        best_index,
        cache_note: cache_note.clone(),
        since_previous: None,
        verdict_failures,
    };
    let written = write_outputs(&mut ctx, out_dir, generated_at, nightly)?;

    let rows_total = vetted.tallies.iter().fold((0, 0, 0), |acc, t| {
        (
            acc.0 + t.rows_in,
            acc.1 + t.rows_accepted,
            acc.2 + t.rows_quarantined,
        )
    });
    let tension_lines = tensions
        .iter()
        .map(|t| {
            let o = &vetted.objects[t.object];
            let what = match t.test {
                TensionTest::MassBound => o.class.label().to_string(),
                TensionTest::MassRadius => format!("{} (radius)", o.class.label()),
                TensionTest::Spin => format!("{} (spin)", o.class.label()),
            };
            (o.id.to_string(), what, t.sigma)
        })
        .collect();
    // The report is rendered from its own parts: the objects, the comparison and the verdicts
    // go first, so that its figures (bitmaps, SVG text) do not add to the run's peak memory
    // (at 10⁶ objects the report stage was the peak).
    drop(ctx);
    drop((verdicts, drivers, ln_p_in_fit_at_best, conf, vetted));
    drop(surface);
    drop(grid);
    written.laps.lap("report and figures");
    super::report_input::write_report_parts(&written.report, out_dir)?;
    written.laps.lap("");
    if std::env::var_os("DWARFBOUND_TIMINGS").is_some() {
        eprintln!(
            "timing: {:<28} {:7.3} s wall, process total {:.2} CPU-s",
            "outputs",
            outputs_started.elapsed().as_secs_f64(),
            crate::progress::process_cpu_s()
        );
    }
    Ok(ConfrontOutcome {
        summary: written.summary,
        consistent: consistency.consistent_cl95,
        tensions: tension_lines,
        theory_from_cache: from_cache,
        cache_note,
        rows: rows_total,
        difference: written.difference,
    })
}

/// SHA-256 of each catalogue file, keyed by its path as given.
fn checksum_files(inputs: &[CatalogueInput]) -> Result<BTreeMap<String, String>, PipelineError> {
    let mut checksums = BTreeMap::new();
    for c in inputs {
        let digest = std::fs::File::open(&c.path)
            .and_then(cache::sha256_hex_of)
            .map_err(|e| CatalogueError::Unreadable {
                path: c.path.clone(),
                reason: e.to_string(),
            })?;
        checksums.insert(c.path.display().to_string(), digest);
    }
    Ok(checksums)
}

/// The comparison's options with the theory floors of the standard-gravity point (they belong
/// to the bounds, not to the objects).
fn engine_options(base: &EngineOptions, standard: &PointBounds) -> EngineOptions {
    let mut eopts = base.clone();
    if let Some(m) = standard.mmhb.ok() {
        eopts.mmhb_floor_msun = m.floor_msun;
    }
    if let Some(c) = standard.chandrasekhar.ok() {
        eopts.chandrasekhar_floor_msun = c.floor_msun;
    }
    eopts
}

/// Writes every output file of a confrontation into `out_dir` but the report, in a fixed
/// order: quarantine, objects, grid, summary. Returns the summary document, for a nightly run
/// the difference from the previous run (which the summary and the report then carry), and the
/// report's parts.
fn write_outputs(
    ctx: &mut OutputContext<'_>,
    out_dir: &Path,
    generated_at: &str,
    nightly: Option<&NightlyContext>,
) -> Result<Written, PipelineError> {
    std::fs::create_dir_all(out_dir).map_err(|e| OutputError::new(out_dir, e))?;
    // With DWARFBOUND_TIMINGS: each output's share of the outputs stage.
    let laps = crate::progress::Laps::new("outputs");
    laps.lap(ctx.settings.objects_format.file_name());
    // The per-object table is streamed into its temporary file now and published in its turn
    // below (one row group at a time: never held whole in memory).
    let format = ctx.settings.objects_format;
    let mut objects_file = AtomicFile::create(&out_dir.join(format.file_name()))?;
    ctx.write_objects(&mut objects_file, format)?;
    laps.lap("summary, comparison, quarantine");
    let mut summary = ctx.summary_json();
    let difference = match nightly {
        Some(n) => Some(super::history::RunDifference {
            housekeeping: n.housekeeping.clone(),
            ..super::history::difference(
                n.previous.as_deref(),
                &super::history::parse_objects(&objects_file.read_back()?[..]),
                &summary,
                ctx.settings.statistics.tension_sigma,
                &n.alarms,
            )
        }),
        None => None,
    };
    if let Some(d) = &difference {
        ctx.since_previous = Some(d.lines());
        summary["since_previous"] =
            serde_json::to_value(d).map_err(|e| PipelineError::Internal(e.to_string()))?;
    }
    write_atomic(
        &out_dir.join("quarantine.csv"),
        &export::quarantine_csv(&ctx.vetted.quarantine)
            .map_err(|e| PipelineError::Internal(e.to_string()))?,
    )?;
    objects_file.commit()?;
    let stale = out_dir.join(format.other_file_name());
    match std::fs::remove_file(&stale) {
        Ok(()) => {}
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => {}
        Err(e) => return Err(OutputError::new(&stale, e).into()),
    }
    // Test hook: simulate a run killed mid-write (tests/nightly_run.rs). Harmless otherwise.
    if std::env::var_os("DWARFBOUND_TEST_ABORT_MID_WRITE").is_some() {
        std::process::abort();
    }
    laps.lap("grid.csv, summary.json");
    let mut grid_file = AtomicFile::create(&out_dir.join("grid.csv"))?;
    ctx.write_grid_csv(&mut grid_file)?;
    grid_file.commit()?;
    let mut summary_bytes =
        serde_json::to_vec_pretty(&summary).map_err(|e| PipelineError::Internal(e.to_string()))?;
    summary_bytes.push(b'\n');
    write_atomic(&out_dir.join("summary.json"), &summary_bytes)?;
    laps.lap("report input");
    let report = super::report_input::report_parts(ctx, generated_at)?;
    Ok(Written {
        summary,
        difference,
        report,
        laps,
    })
}

/// What [`write_outputs`] gives back: the summary, the nightly difference, and the report's
/// parts, rendered by the caller once the per-object state is dropped (with the outputs'
/// timing, to go on with).
struct Written {
    summary: Value,
    difference: Option<super::history::RunDifference>,
    report: super::report_input::ReportParts,
    laps: crate::progress::Laps,
}

/// Tension of each object with standard gravity (ϒ = τ = 0) under the default model (anchored
/// MMHB with its floor, Newtonian Chandrasekhar mass with its floor): (object index, σ) for
/// objects above `threshold_sigma`, largest first. Used by `vet` to flag objects before any
/// grid is computed; the age rule is not applied here (every object is flagged on its mass).
pub fn standard_gravity_tensions(
    objects: &[crate::catalogue::CatalogueObject],
    threshold_sigma: f64,
) -> Result<Vec<(usize, f64)>, PipelineError> {
    Ok(StandardGravityLook::new(threshold_sigma)?.tensions(objects))
}

/// [`standard_gravity_tensions`] prepared once (the standard point solved, the options set)
/// for objects that arrive in batches (`vet` does not hold them all): each object's tension
/// depends on that object alone, so the batches' results, re-indexed and sorted as
/// [`mass_tensions`] sorts, are the whole catalogue's.
pub struct StandardGravityLook {
    point: crate::confront::tension::ReferencePoint,
    eopts: EngineOptions,
    threshold_sigma: f64,
}

impl StandardGravityLook {
    /// Solves the standard point under the default settings.
    pub fn new(threshold_sigma: f64) -> Result<Self, PipelineError> {
        let p = standard_point(&TheorySettings::default())
            .map_err(|e| PipelineError::Settings(e.to_string()))?;
        let mut eopts = engine_options(&EngineOptions::default(), &p);
        eopts.include_young = true;
        Ok(Self {
            point: class_bounds(&p),
            eopts,
            threshold_sigma,
        })
    }

    /// (index in `objects`, σ) above the threshold, largest first (ties by index).
    pub fn tensions(&self, objects: &[crate::catalogue::CatalogueObject]) -> Vec<(usize, f64)> {
        mass_tensions(objects, &self.point, &self.eopts, self.threshold_sigma)
    }
}
