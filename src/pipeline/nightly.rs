//! The nightly job: one config file in, a dated run folder out, `latest` switched only when the
//! run is complete, and the difference from the previous run with its alarms.
//!
//! Sharding splits the theory grid (the expensive part) into contiguous slices computed by
//! independent jobs (`--shard I/N`, e.g. a batch-scheduler array); `merge` joins the slices
//! and runs the comparison once, so the merged result is the unsharded result byte for byte.
//!
//! ```no_run
//! use dwarfbound::pipeline::nightly::{run_nightly, NightlyOptions};
//! let report = run_nightly(std::path::Path::new("catalogs-demo/nightly.toml"), &NightlyOptions::default()).unwrap();
//! println!("alarms: {:?}", report.alarms);
//! ```

use std::path::{Path, PathBuf};

use super::cache::Cache;
use super::config::{resolve, Config, ConfigError};
use super::confront::{
    run_confrontation, theory_grid, CatalogueInput, ConfrontOutcome, ConfrontSettings,
    NightlyContext, PipelineError, StatisticsSettings, TheorySource,
};
use super::history::{self, now_unix_s, utc_stamp};
use super::lock::{FolderLock, LockError};
use crate::catalogue::table::Format;
use crate::output::write_atomic;
use crate::theory::grid::{Shard, TheoryGrid};
use crate::theory::mmhb::{MmhbMode, MmhbModel, ParseMmhbModelError};
use crate::theory::point::TheorySettings;
use crate::theory::{Anisotropy, Axis, ParseAnisotropyError};

/// Options of one `run` invocation.
#[derive(Debug, Clone, Default)]
pub struct NightlyOptions {
    /// Compute only this shard of the theory grid.
    pub shard: Option<Shard>,
    /// Wait for another run's lock instead of failing.
    pub wait: bool,
    /// Remove the folder's lock first, whoever holds it (the human's override).
    pub break_lock: bool,
    /// Retention (`--keep N`): overrides the config's `keep`.
    pub keep: Option<usize>,
}

/// `--break-lock`: removes the lock of `dir` and says on stderr whose it was.
fn break_lock_if_asked(dir: &Path, asked: bool) -> Result<(), LockError> {
    if asked {
        if let Some(holder) = super::lock::break_lock(dir)? {
            eprintln!(
                "dwarfbound: note: removed the lock of {} on request (it said: {holder})",
                dir.display()
            );
        }
    }
    Ok(())
}

/// Errors of a nightly run.
#[derive(Debug, thiserror::Error)]
pub enum NightlyError {
    /// The config file is unreadable or invalid (exit 2).
    #[error(transparent)]
    Config(#[from] ConfigError),
    /// Another run holds the output folder (exit 2).
    #[error(transparent)]
    Lock(#[from] LockError),
    /// The pipeline failed.
    #[error(transparent)]
    Pipeline(#[from] PipelineError),
}

/// What a run did.
#[derive(Debug)]
pub struct NightlyReport {
    /// The run folder (or the shard folder).
    pub run_dir: PathBuf,
    /// The confrontation's outcome (`None` for a shard).
    pub outcome: Option<ConfrontOutcome>,
    /// Alarm rules that fired (exit code 3 when not empty).
    pub alarms: Vec<String>,
    /// A stale lock of a dead run was taken over.
    pub took_over_lock_from: Option<u32>,
    /// For a shard: one line when a theory cache entry was discarded and rebuilt (a full run
    /// carries it in its outcome).
    pub cache_note: Option<String>,
    /// Housekeeping done, one line each: partial run folders of killed runs removed, old runs
    /// and cache entries removed by retention, and anything that could not be removed.
    pub housekeeping: Vec<String>,
}

/// The retention in force: `--keep` over the config's `keep`; 0 is refused, since the current
/// run is always kept.
fn retention(
    cfg_path: &Path,
    cfg: &Config,
    opts_keep: Option<usize>,
) -> Result<Option<usize>, PipelineError> {
    match opts_keep.or(cfg.keep) {
        Some(0) => Err(PipelineError::Settings(format!(
            "{}: keep: 0 would remove the current run; give at least 1 (or leave it out to keep everything)",
            cfg_path.display()
        ))),
        k => Ok(k),
    }
}

fn axis(cfg_path: &Path, key: &str, text: &str) -> Result<Axis, PipelineError> {
    text.parse::<Axis>()
        .map_err(|e| PipelineError::Settings(format!("{}: [grid] {key}: {e}", cfg_path.display())))
}

/// Turns a config into the pipeline's settings (paths resolved, globs expanded, names checked).
pub fn settings_from_config(
    cfg_path: &Path,
    cfg: &Config,
) -> Result<ConfrontSettings, PipelineError> {
    let bad = |key: &str, why: String| {
        PipelineError::Settings(format!("{}: {key}: {why}", cfg_path.display()))
    };
    let mut catalogues = Vec::new();
    for (n, c) in cfg.catalogues.iter().enumerate() {
        let pattern = resolve(cfg_path, &c.path);
        let pattern_text = pattern.to_string_lossy().to_string();
        let mut paths: Vec<PathBuf> = if pattern_text.contains(['*', '?', '[']) {
            glob::glob(&pattern_text)
                .map_err(|e| bad(&format!("catalogue[{n}].path"), e.to_string()))?
                .filter_map(Result::ok)
                .collect()
        } else {
            vec![pattern]
        };
        paths.sort();
        if paths.is_empty() {
            return Err(bad(
                &format!("catalogue[{n}].path"),
                format!("`{}` matches no file", c.path),
            ));
        }
        let format = c
            .format
            .as_deref()
            .map(str::parse::<Format>)
            .transpose()
            .map_err(|e| bad(&format!("catalogue[{n}].format"), e.to_string()))?;
        for path in paths {
            catalogues.push(CatalogueInput {
                path,
                map: c.map.as_deref().map(|m| resolve(cfg_path, m)),
                format,
                table: c.table.clone(),
            });
        }
    }
    if catalogues.is_empty() {
        return Err(bad("catalogue", "no catalogue is configured".into()));
    }
    let t = &cfg.theory;
    let anisotropy: Anisotropy = t
        .anisotropy
        .parse()
        .map_err(|e: ParseAnisotropyError| bad("theory.anisotropy", e.to_string()))?;
    let mmhb_model: MmhbModel = t
        .mmhb_model
        .parse()
        .map_err(|e: ParseMmhbModelError| bad("theory.mmhb_model", e.to_string()))?;
    let mmhb_mode = match t.mmhb_mode.as_str() {
        "anchored" => MmhbMode::Anchored {
            anchor_msun: t.mmhb_anchor_msun,
            floor_msun: t
                .mmhb_floor_msun
                .unwrap_or(crate::theory::mmhb::DEFAULT_ANCHORED_FLOOR_MSUN),
        },
        "raw" => {
            if t.mmhb_floor_msun.is_some() {
                return Err(bad(
                    "theory.mmhb_floor_msun",
                    "the raw mode uses its model's documented floor (docs/bounds.md §4); remove the key"
                        .into(),
                ));
            }
            MmhbMode::Raw
        }
        other => {
            return Err(bad(
                "theory.mmhb_mode",
                format!("`{other}` is not anchored or raw"),
            ))
        }
    };
    let theory = TheorySettings {
        anisotropy,
        mmhb_model,
        mmhb_mode,
        hydrogen_mass_fraction: t.hydrogen_fraction,
        ignition_temperature_k: t.ignition_temperature_k,
        chandrasekhar_floor_msun: t.chandrasekhar_floor_msun,
        wd_radius_floor_fraction: t.wd_radius_floor_fraction,
        ..TheorySettings::default()
    };
    theory
        .validate()
        .map_err(|e| bad("theory", e.to_string()))?;
    let st = &cfg.statistics;
    // Every number of the config must be finite and in range: a NaN would silently disable a
    // cut (e.g. NaN < age is always false).
    let checks: [(&str, f64, bool); 9] = [
        (
            "theory.mmhb_anchor_msun",
            t.mmhb_anchor_msun,
            t.mmhb_anchor_msun > 0.0,
        ),
        (
            "theory.hydrogen_fraction",
            t.hydrogen_fraction,
            t.hydrogen_fraction > 0.0 && t.hydrogen_fraction <= 1.0,
        ),
        (
            "theory.ignition_temperature_k",
            t.ignition_temperature_k,
            t.ignition_temperature_k > 0.0,
        ),
        (
            "theory.chandrasekhar_floor_msun",
            t.chandrasekhar_floor_msun,
            t.chandrasekhar_floor_msun > 0.0,
        ),
        (
            "theory.wd_radius_floor_fraction",
            t.wd_radius_floor_fraction,
            t.wd_radius_floor_fraction >= 0.0,
        ),
        (
            "statistics.tension_sigma",
            st.tension_sigma,
            st.tension_sigma > 0.0,
        ),
        (
            "statistics.age_min_mmhb_gyr",
            st.age_min_mmhb_gyr,
            st.age_min_mmhb_gyr >= 0.0,
        ),
        (
            "alarms.interval_shift",
            cfg.alarms.interval_shift,
            cfg.alarms.interval_shift >= 0.0,
        ),
        (
            "alarms.area_change",
            cfg.alarms.area_change,
            cfg.alarms.area_change >= 0.0,
        ),
    ];
    for (key, v, ok) in checks {
        if !(v.is_finite() && ok) {
            return Err(bad(key, format!("{v} is not a finite value in range")));
        }
    }
    if let Some(f) = t.mmhb_floor_msun {
        if !(f.is_finite() && f > 0.0) {
            return Err(bad(
                "theory.mmhb_floor_msun",
                format!("{f} must be a positive number"),
            ));
        }
    }
    if !(st.tension_sigma.is_finite() && st.tension_sigma > 0.0) {
        return Err(bad(
            "statistics.tension_sigma",
            "must be a positive number".into(),
        ));
    }
    let mut statistics = StatisticsSettings {
        tension_sigma: st.tension_sigma,
        ..StatisticsSettings::default()
    };
    statistics.engine.age_min_mmhb_gyr = st.age_min_mmhb_gyr;
    statistics.engine.include_young = st.include_young;
    statistics.engine.exclude_age_unknown = st.exclude_age_unknown;
    statistics.engine.radius.model = st
        .wd_radius_model
        .parse()
        .map_err(|e: String| bad("statistics.wd_radius_model", e))?;
    statistics.engine.radius.mass_prior = st
        .wd_mass_prior
        .parse()
        .map_err(|e: String| bad("statistics.wd_mass_prior", e))?;
    statistics.engine.radius.floor_fit = st
        .wd_floor_size
        .parse()
        .map_err(|e: String| bad("statistics.wd_floor_size", e))?;
    statistics.engine.radius.include_model_masses = st.include_model_masses;
    statistics.engine.radius.include_out_of_domain = st.include_out_of_domain;
    super::config::apply_statistics_choices(
        &mut statistics.engine,
        &st.floor,
        &st.nuisance,
        &st.likelihood,
        &st.mass_function_fit,
    )
    .map_err(|(key, msg)| bad(&format!("statistics.{key}"), msg))?;
    if st.population_aware {
        let [lo, hi] = st.population_window_msun;
        if !(lo.is_finite() && hi.is_finite() && 0.0 < lo && lo < hi) {
            return Err(bad(
                "statistics.population_window_msun",
                format!("[{lo}, {hi}] is not an ordered pair of positive masses"),
            ));
        }
        statistics.engine.population_window_msun = Some((lo, hi));
    }
    Ok(ConfrontSettings {
        catalogues,
        upsilon: axis(cfg_path, "upsilon", &cfg.grid.upsilon)?,
        tau: axis(cfg_path, "tau", &cfg.grid.tau)?,
        theory,
        statistics,
        // Nightly runs compare objects.csv with the previous run's.
        objects_format: Default::default(),
    })
}

/// The output folder and cache of a config.
fn folders(cfg_path: &Path, cfg: &Config) -> (PathBuf, Cache) {
    let output = resolve(cfg_path, &cfg.output);
    let cache_dir = cfg
        .cache
        .as_deref()
        .map(|c| resolve(cfg_path, c))
        .unwrap_or_else(|| output.join("cache"));
    (output, Cache::new(&cache_dir))
}

/// Name of the file a shard folder holds its slice of the theory grid in.
pub const SHARD_FILE: &str = "theory-shard.json";
/// Name of the file a shard folder records its config path in.
pub const SHARD_CONFIG_FILE: &str = "config-path.txt";

/// Runs the nightly job described by the config file.
pub fn run_nightly(cfg_path: &Path, opts: &NightlyOptions) -> Result<NightlyReport, NightlyError> {
    let cfg = Config::load(cfg_path)?;
    let settings = settings_from_config(cfg_path, &cfg)?;
    let keep = retention(cfg_path, &cfg, opts.keep)?;
    let (output, cache) = folders(cfg_path, &cfg);

    if let Some(shard) = opts.shard {
        // A shard writes only its own folder, so it locks only that folder: the shards of one
        // grid run concurrently (an array job), while a second copy of the same shard refuses.
        // The output folder's run lock is taken by the step that publishes (`run`, `merge`).
        let dir = output
            .join("shards")
            .join(format!("{}-of-{}", shard.index, shard.count));
        break_lock_if_asked(&dir, opts.break_lock)?;
        let lock = FolderLock::acquire(&dir, opts.wait)?;
        let took_over_lock_from = lock.took_over_from;
        let (grid, _, cache_note) = theory_grid(
            settings.upsilon,
            settings.tau,
            &settings.theory,
            Some(shard),
            Some(&cache),
        )?;
        let bytes = grid
            .to_json_bytes()
            .map_err(|e| PipelineError::Internal(e.to_string()))?;
        write_atomic(&dir.join(SHARD_FILE), &bytes).map_err(PipelineError::from)?;
        // The path as given: output files name catalogues by the path they were read from, so
        // `merge` (run from the same working directory) reproduces the unsharded run exactly.
        write_atomic(
            &dir.join(SHARD_CONFIG_FILE),
            format!("{}\n", cfg_path.display()).as_bytes(),
        )
        .map_err(PipelineError::from)?;
        drop(lock);
        return Ok(NightlyReport {
            run_dir: dir,
            outcome: None,
            alarms: Vec::new(),
            took_over_lock_from,
            cache_note,
            housekeeping: Vec::new(),
        });
    }

    break_lock_if_asked(&output, opts.break_lock)?;
    let lock = FolderLock::acquire(&output, opts.wait)?;
    let current_entry =
        super::confront::theory_cache_key(&settings.upsilon, &settings.tau, &settings.theory, None);
    publish_run(
        &settings,
        &cfg,
        &output,
        TheorySource::Compute {
            cache: Some(&cache),
        },
        None,
        lock,
        Retention {
            keep,
            cache: &cache,
            current_entry: Some(current_entry),
        },
    )
}

/// What `publish_run` keeps: at most `keep` runs and cache entries (all when `None`), never the
/// current run nor the cache entry it used.
struct Retention<'a> {
    keep: Option<usize>,
    cache: &'a Cache,
    current_entry: Option<String>,
}

/// The common end of `run` and `merge`: remove the partial run folders of killed runs, confront
/// into a new run folder (or `out_dir`) holding the folder's own lock while writing, compare
/// with the previous run, mark the folder complete and switch `latest` to it (not for
/// `out_dir`), apply the retention, release the lock and collect the alarms.
fn publish_run(
    settings: &ConfrontSettings,
    cfg: &Config,
    output: &Path,
    theory: TheorySource<'_>,
    out_dir: Option<&Path>,
    lock: FolderLock,
    retention: Retention<'_>,
) -> Result<NightlyReport, NightlyError> {
    let took_over_lock_from = lock.took_over_from;
    let (generated_at, stamp) = utc_stamp(now_unix_s());
    // Housekeeping under the output lock, so no other well-behaved run writes meanwhile (a run
    // started past the lock with --break-lock still holds its own folder's lock).
    let mut housekeeping = history::sweep_partial_runs(output);
    let plan = match (retention.keep, out_dir) {
        (Some(keep), None) => history::retention_plan(output, keep),
        _ => Vec::new(),
    };
    let mut report_lines = housekeeping.clone();
    if let Some(keep) = retention.keep {
        report_lines.extend(plan.iter().map(|d| {
            format!(
                "removing the old run folder {} once this run is published (keep {keep})",
                d.display()
            )
        }));
    }
    let nightly = NightlyContext {
        previous: history::latest_run(output),
        alarms: cfg.alarms.clone(),
        housekeeping: report_lines,
    };
    let (run_dir, run_lock) = match out_dir {
        Some(d) => (d.to_path_buf(), None),
        None => {
            let d = history::new_run_dir(output, &stamp).map_err(PipelineError::from)?;
            let l = FolderLock::acquire(&d, false)?;
            (d, Some(l))
        }
    };
    let outcome = match run_confrontation(settings, &run_dir, theory, &generated_at, Some(&nightly))
    {
        Ok(o) => o,
        Err(e) => {
            if out_dir.is_none() {
                // A failed run's folder holds part of its outputs: never leave it behind.
                let _ = std::fs::remove_dir_all(&run_dir);
            }
            return Err(e.into());
        }
    };
    if out_dir.is_none() {
        history::mark_complete(&run_dir, &generated_at).map_err(PipelineError::from)?;
        drop(run_lock);
        history::publish_latest(output, &run_dir).map_err(PipelineError::from)?;
        housekeeping.extend(history::apply_retention(
            output,
            &plan,
            retention.keep.unwrap_or_default(),
        ));
    }
    if let Some(keep) = retention.keep {
        housekeeping.extend(
            retention
                .cache
                .prune(keep, retention.current_entry.as_deref()),
        );
    }
    drop(lock);
    let alarms = outcome
        .difference
        .as_ref()
        .map(|d| d.alarms.clone())
        .unwrap_or_default();
    Ok(NightlyReport {
        run_dir,
        outcome: Some(outcome),
        alarms,
        took_over_lock_from,
        cache_note: None,
        housekeeping,
    })
}

/// Merges shard folders into one result. Without `out_dir` the result is published as the
/// config's next run (new run folder, difference from the previous run, `latest` switched);
/// with it, the result is written there and compared with the config's `latest` without
/// publishing. Either way the files equal those of an unsharded run made at the same moment.
pub fn merge_shards(
    dirs: &[PathBuf],
    out_dir: Option<&Path>,
    break_lock: bool,
) -> Result<NightlyReport, NightlyError> {
    let mut parts = Vec::new();
    let mut cfg_path: Option<PathBuf> = None;
    for d in dirs {
        let bytes = std::fs::read(d.join(SHARD_FILE)).map_err(|e| {
            PipelineError::Settings(format!(
                "{}: not a shard folder ({SHARD_FILE}: {e})",
                d.display()
            ))
        })?;
        parts.push(TheoryGrid::from_json_bytes(&bytes).map_err(|e| {
            PipelineError::Settings(format!("{}: {e}", d.join(SHARD_FILE).display()))
        })?);
        let p = std::fs::read_to_string(d.join(SHARD_CONFIG_FILE))
            .map(|s| PathBuf::from(s.trim()))
            .map_err(|e| {
                PipelineError::Settings(format!("{}: {SHARD_CONFIG_FILE}: {e}", d.display()))
            })?;
        match &cfg_path {
            Some(c) if *c != p => {
                return Err(PipelineError::Settings(format!(
                    "{}: shard of another config ({} vs {})",
                    d.display(),
                    p.display(),
                    c.display()
                ))
                .into())
            }
            _ => cfg_path = Some(p),
        }
    }
    let cfg_path =
        cfg_path.ok_or_else(|| PipelineError::Settings("no shard folder given".into()))?;
    let cfg = Config::load(&cfg_path)?;
    let settings = settings_from_config(&cfg_path, &cfg)?;
    let grid = TheoryGrid::merge(parts).map_err(|e| PipelineError::Settings(e.to_string()))?;
    if grid.upsilon != settings.upsilon
        || grid.tau != settings.tau
        || grid.settings.cache_key_text() != settings.theory.cache_key_text()
    {
        return Err(PipelineError::Settings(format!(
            "the shards were computed with other grid or theory settings than {} now holds",
            cfg_path.display()
        ))
        .into());
    }
    let keep = retention(&cfg_path, &cfg, None)?;
    let (output, cache) = folders(&cfg_path, &cfg);
    break_lock_if_asked(&output, break_lock)?;
    let lock = FolderLock::acquire(&output, false)?;
    publish_run(
        &settings,
        &cfg,
        &output,
        TheorySource::Given(Box::new(grid)),
        out_dir,
        lock,
        Retention {
            keep,
            cache: &cache,
            current_entry: None,
        },
    )
}
