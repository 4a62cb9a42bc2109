//! Run history: dated run folders, the `latest` link, and the difference from the previous run.
//!
//! Each nightly run writes into `<output>/runs/<UTC timestamp>/`; only when every file is in
//! place is `<output>/latest` switched to it (a symlink replaced by an atomic rename), so a run
//! killed at any moment leaves the previous `latest` intact and readable.
//!
//! The difference is computed from the two runs' own `summary.json` and `objects.csv`, so it
//! works across tool versions and needs no state beyond the files a researcher can read.
//!
//! Housekeeping: a run holds a lock inside its own folder while it writes and leaves a
//! completion marker ([`COMPLETE_MARKER`]) when every file is in place, so the next run can
//! tell a folder left by a killed run (no marker, no live lock) from one still being written
//! and remove it ([`sweep_partial_runs`]); [`retention_plan`] picks the oldest complete runs
//! beyond `--keep N`.
//!
//! ```
//! let (date, stamp) = dwarfbound::pipeline::history::utc_stamp(0);
//! assert_eq!(date, "1970-01-01T00:00:00Z");
//! assert_eq!(stamp, "19700101T000000Z");
//! ```

use serde::Serialize;
use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

use super::lock::{self, LOCK_FILE};
use crate::output::{write_atomic, OutputError};

/// File written into a run folder once every output is in place, before `latest` is switched
/// to it. Hidden: it is bookkeeping, not a result.
pub const COMPLETE_MARKER: &str = ".complete";

/// Formats Unix seconds as (ISO 8601 UTC, compact folder-name stamp).
pub fn utc_stamp(unix_s: i64) -> (String, String) {
    // Civil-from-days (H. Hinnant's public-domain algorithm): avoids a date crate for one format.
    let days = unix_s.div_euclid(86_400);
    let secs = unix_s.rem_euclid(86_400);
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let y = yoe + era * 400;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = if m <= 2 { y + 1 } else { y };
    let (hh, mm, ss) = (secs / 3600, (secs % 3600) / 60, secs % 60);
    (
        format!("{y:04}-{m:02}-{d:02}T{hh:02}:{mm:02}:{ss:02}Z"),
        format!("{y:04}{m:02}{d:02}T{hh:02}{mm:02}{ss:02}Z"),
    )
}

/// Current Unix time in seconds.
pub fn now_unix_s() -> i64 {
    std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs() as i64)
        .unwrap_or(0)
}

/// Creates a fresh run folder under `<output>/runs/`, unique even for two runs in one second.
pub fn new_run_dir(output: &Path, stamp: &str) -> Result<PathBuf, OutputError> {
    let runs = output.join("runs");
    std::fs::create_dir_all(&runs).map_err(|e| OutputError::new(&runs, e))?;
    for k in 0..1000 {
        let name = if k == 0 {
            stamp.to_string()
        } else {
            format!("{stamp}-{k}")
        };
        let dir = runs.join(name);
        match std::fs::create_dir(&dir) {
            Ok(()) => return Ok(dir),
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => continue,
            Err(e) => return Err(OutputError::new(&dir, e)),
        }
    }
    Err(OutputError::new(
        &runs,
        std::io::Error::other("too many runs in one second"),
    ))
}

/// Marks a run folder complete (see [`COMPLETE_MARKER`]).
pub fn mark_complete(run_dir: &Path, completed_at: &str) -> Result<(), OutputError> {
    write_atomic(
        &run_dir.join(COMPLETE_MARKER),
        format!("completed {completed_at}\n").as_bytes(),
    )
}

/// Sort key of a run folder's name, `YYYYMMDDTHHMMSSZ` or `YYYYMMDDTHHMMSSZ-k` (the k-th run
/// started in that second); `None` for any other name, which housekeeping never touches.
fn run_order(name: &str) -> Option<(&str, u32)> {
    let (stamp, k) = match name.split_once('-') {
        Some((s, k)) => (s, k.parse().ok()?),
        None => (name, 0),
    };
    let b = stamp.as_bytes();
    let digits = |r: std::ops::Range<usize>| b[r].iter().all(u8::is_ascii_digit);
    (b.len() == 16 && b[8] == b'T' && b[15] == b'Z' && digits(0..8) && digits(9..15))
        .then_some((stamp, k))
}

/// The run folders under `<output>/runs/` whose names are run stamps, oldest first.
fn run_folders(output: &Path) -> Vec<PathBuf> {
    let Ok(entries) = std::fs::read_dir(output.join("runs")) else {
        return Vec::new();
    };
    let mut named: Vec<(String, PathBuf)> = entries
        .filter_map(Result::ok)
        .filter(|e| e.file_type().is_ok_and(|t| t.is_dir()))
        .filter_map(|e| Some((e.file_name().to_str()?.to_string(), e.path())))
        .filter(|(n, _)| run_order(n).is_some())
        .collect();
    named.sort_by(|a, b| run_order(&a.0).cmp(&run_order(&b.0)));
    named.into_iter().map(|(_, p)| p).collect()
}

/// What a run folder is, as seen by the next run.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RunFolderState {
    /// Every file is in place.
    Complete,
    /// A live run (or one on another host) holds its lock: being written, never touched.
    Running,
    /// Left by a killed run: no completion marker and no live lock.
    Partial,
}

/// Classifies a run folder. A folder with neither marker nor lock file was written before run
/// folders had them (or by a run killed before it took its lock): it counts as complete when
/// its last outputs (`summary.json`, `report.html`) are there, else as partial.
pub fn run_folder_state(dir: &Path) -> RunFolderState {
    if dir.join(COMPLETE_MARKER).is_file() {
        RunFolderState::Complete
    } else if lock::is_held(dir) {
        RunFolderState::Running
    } else if dir.join(LOCK_FILE).exists() {
        // The lock of a run that died before finishing.
        RunFolderState::Partial
    } else if dir.join("summary.json").is_file() && dir.join("report.html").is_file() {
        RunFolderState::Complete
    } else {
        RunFolderState::Partial
    }
}

fn same_folder(a: &Path, b: Option<&PathBuf>) -> bool {
    let canon = |p: &Path| std::fs::canonicalize(p).unwrap_or_else(|_| p.to_path_buf());
    b.is_some_and(|b| canon(a) == canon(b))
}

/// Removes the run folders of `<output>/runs/` left by killed runs (never the one `latest`
/// points to, never one being written). Call it holding the output folder's lock. Returns one
/// line per folder, removed or not, for stderr and the report.
pub fn sweep_partial_runs(output: &Path) -> Vec<String> {
    let latest = latest_run(output);
    let mut notes = Vec::new();
    for dir in run_folders(output) {
        if same_folder(&dir, latest.as_ref()) || run_folder_state(&dir) != RunFolderState::Partial {
            continue;
        }
        notes.push(match std::fs::remove_dir_all(&dir) {
            Ok(()) => format!(
                "removed the partial run folder {} (a run killed before it completed)",
                dir.display()
            ),
            Err(e) => format!(
                "could not remove the partial run folder {}: {e}",
                dir.display()
            ),
        });
    }
    notes
}

/// The complete run folders to remove, oldest first, so that `keep` runs remain once the run
/// about to start is published (it counts as one of them and is never among these). Folders
/// being written and names that are not run stamps are never chosen.
pub fn retention_plan(output: &Path, keep: usize) -> Vec<PathBuf> {
    let complete: Vec<PathBuf> = run_folders(output)
        .into_iter()
        .filter(|d| run_folder_state(d) == RunFolderState::Complete)
        .collect();
    let excess = (complete.len() + 1).saturating_sub(keep.max(1));
    complete.into_iter().take(excess).collect()
}

/// Removes the folders of a [`retention_plan`] made with `keep` (skipping the one `latest`
/// points to, whatever happened since the plan was made). Returns one line per folder.
pub fn apply_retention(output: &Path, plan: &[PathBuf], keep: usize) -> Vec<String> {
    let latest = latest_run(output);
    plan.iter()
        .filter(|d| !same_folder(d, latest.as_ref()))
        .map(|d| match std::fs::remove_dir_all(d) {
            Err(e) if e.kind() != std::io::ErrorKind::NotFound => {
                format!("could not remove the old run folder {}: {e}", d.display())
            }
            _ => format!("removed the old run folder {} (keep {keep})", d.display()),
        })
        .collect()
}

/// The run folder that `<output>/latest` points to, if any.
pub fn latest_run(output: &Path) -> Option<PathBuf> {
    let link = output.join("latest");
    let target = std::fs::read_link(&link).ok()?;
    let full = if target.is_absolute() {
        target
    } else {
        output.join(target)
    };
    full.is_dir().then_some(full)
}

/// Points `<output>/latest` at `run_dir` atomically (new symlink, then rename over the old one).
pub fn publish_latest(output: &Path, run_dir: &Path) -> Result<(), OutputError> {
    let rel = run_dir
        .strip_prefix(output)
        .map(Path::to_path_buf)
        .unwrap_or_else(|_| run_dir.to_path_buf());
    let tmp = output.join(format!(".latest-{}.tmp", std::process::id()));
    let _ = std::fs::remove_file(&tmp);
    #[cfg(unix)]
    std::os::unix::fs::symlink(&rel, &tmp).map_err(|e| OutputError::new(&tmp, e))?;
    #[cfg(not(unix))]
    return Err(OutputError::new(
        &tmp,
        std::io::Error::other("run history needs symlinks (Unix)"),
    ));
    let link = output.join("latest");
    std::fs::rename(&tmp, &link).map_err(|e| OutputError::new(&link, e))?;
    Ok(())
}

/// One object's state in a run, as read back from `objects.csv`: what the comparison between
/// runs reads, and nothing more (the whole row as a map of column → text was ~6 kB per object:
/// a nightly run of 10⁵ objects peaked at 1.2 GB holding two runs' rows).
#[derive(Debug, Clone, PartialEq)]
pub struct ObjectState {
    /// The catalogue values compared between runs ([`VALUE_COLUMNS`], in that order), each as
    /// its length and text (`len:text`) or `-` where the file has no such column.
    pub values: String,
    /// Tension at standard gravity, σ.
    pub sigma_standard: Option<f64>,
}

/// What changed since the previous run.
#[derive(Debug, Clone, Default, Serialize, PartialEq)]
pub struct RunDifference {
    /// Folder of the previous run, if there was one.
    pub previous: Option<String>,
    /// Objects present now but not before (catalogue file and id).
    pub added: Vec<String>,
    /// Objects present before but not now.
    pub removed: Vec<String>,
    /// Objects whose catalogue values changed.
    pub changed: Vec<String>,
    /// Tensions now that were not tensions before: (object, σ now).
    pub new_tensions: Vec<(String, f64)>,
    /// Tensions before that are no longer tensions.
    pub resolved_tensions: Vec<String>,
    /// 95.45 % ϒ interval at τ = 0, before and now ([lower, upper], `None` = open).
    pub interval_before: Option<[Option<f64>; 2]>,
    /// 95.45 % ϒ interval at τ = 0 now.
    pub interval_now: Option<[Option<f64>; 2]>,
    /// Largest move of an interval end (infinite if an end opened or closed).
    pub interval_shift: Option<f64>,
    /// 95.45 % allowed fraction of the grid, before and now.
    pub area_before: Option<f64>,
    /// 95.45 % allowed fraction now.
    pub area_now: Option<f64>,
    /// Changes of statistical method between the two runs, per bound, in words: the likelihood
    /// (the automatic rule may choose differently as the catalogue grows) and the mass-function
    /// fit (exact, or grouped above 16 384 objects). Part of a change of the results is then the
    /// method's, not the data's.
    pub method_changes: Vec<String>,
    /// Alarm rules that fired, in words.
    pub alarms: Vec<String>,
    /// Housekeeping of the run history done by this run, in words: partial run folders of
    /// killed runs removed, old runs removed by `--keep`.
    pub housekeeping: Vec<String>,
}

/// Reads `objects.csv` of a run into key → state (key = `source_file:id`), streaming the file.
pub fn read_objects(run_dir: &Path) -> BTreeMap<String, ObjectState> {
    match std::fs::File::open(run_dir.join("objects.csv")) {
        Ok(f) => parse_objects(std::io::BufReader::new(f)),
        Err(_) => BTreeMap::new(),
    }
}

/// Parses an `objects.csv` into key → state (key = `source_file:id`). A column is found under
/// its current name or, in a file written by an older version, under its old one; where a
/// name appears twice the last column counts. Rows the CSV reader cannot read are skipped.
pub fn parse_objects(reader: impl std::io::Read) -> BTreeMap<String, ObjectState> {
    let mut out = BTreeMap::new();
    let mut rdr = csv::Reader::from_reader(reader);
    let headers = match rdr.headers() {
        Ok(h) => h.clone(),
        Err(_) => return out,
    };
    let column = |name: &str| (0..headers.len()).rev().find(|&i| &headers[i] == name);
    let value_columns: Vec<Option<usize>> = VALUE_COLUMNS
        .iter()
        .map(|c| column(c).or_else(|| super::names::old_name(c).and_then(column)))
        .collect();
    let (file_col, id_col, sigma_col) = (
        column("source_file"),
        column("id"),
        column("sigma_standard"),
    );
    let mut rec = csv::StringRecord::new();
    loop {
        match rdr.read_record(&mut rec) {
            Ok(true) => {}
            Ok(false) => break,
            // A file that cannot be read further ends the list; a bad row is skipped.
            Err(e) if matches!(e.kind(), csv::ErrorKind::Io(_)) => break,
            Err(_) => continue,
        }
        let get = |c: Option<usize>| c.and_then(|i| rec.get(i));
        // Identity across runs: the catalogue's file name (not its path, which may be written
        // differently from night to night) and the object's id.
        let file = get(file_col).unwrap_or_default();
        let name = Path::new(file)
            .file_name()
            .map_or_else(|| file.to_string(), |n| n.to_string_lossy().to_string());
        let key = format!("{}:{}", name, get(id_col).unwrap_or_default());
        let mut values = String::new();
        for &c in &value_columns {
            match get(c) {
                Some(v) => {
                    values.push_str(&v.len().to_string());
                    values.push(':');
                    values.push_str(v);
                }
                None => values.push('-'),
            }
        }
        let sigma_standard = get(sigma_col).and_then(|s| s.parse::<f64>().ok());
        out.insert(
            key,
            ObjectState {
                values,
                sigma_standard,
            },
        );
    }
    out
}

fn read_summary(run_dir: &Path) -> Option<serde_json::Value> {
    let text = std::fs::read_to_string(run_dir.join("summary.json")).ok()?;
    serde_json::from_str(&text).ok()
}

fn interval95(summary: &serde_json::Value) -> Option<[Option<f64>; 2]> {
    let iv = summary.get("upsilon_interval_at_tau0")?.get("cl95")?;
    Some([
        iv.get("lower").and_then(|v| v.as_f64()),
        iv.get("upper").and_then(|v| v.as_f64()),
    ])
}

fn area95(summary: &serde_json::Value) -> Option<f64> {
    summary
        .get("allowed")?
        .get("cl95")?
        .get("fraction_of_grid")?
        .as_f64()
}

/// Per bound of `summary.json` (`statistics.bounds[]`): its likelihood and its mass-function
/// fit (`exact`/`grouped`; absent without a calibrated likelihood or in an older run).
fn methods(summary: &serde_json::Value) -> BTreeMap<String, [Option<String>; 2]> {
    let text = |v: Option<&serde_json::Value>| v.and_then(|x| x.as_str()).map(str::to_string);
    summary
        .get("statistics")
        .and_then(|s| s.get("bounds"))
        .and_then(|b| b.as_array())
        .map(|bounds| {
            bounds
                .iter()
                .filter_map(|b| {
                    let name = text(b.get("bound"))?;
                    let fit = b.get("mass_function").and_then(|m| m.get("fit"));
                    Some((name, [text(b.get("likelihood")), text(fit)]))
                })
                .collect()
        })
        .unwrap_or_default()
}

/// The method changes between two runs' summaries, in words ([`RunDifference::method_changes`]).
fn method_changes(before: &serde_json::Value, now: &serde_json::Value) -> Vec<String> {
    let (before_summary, now_summary) = (before, now);
    let (before, now) = (methods(before), methods(now));
    let word = |x: &Option<String>| x.clone().unwrap_or_else(|| "none".to_string());
    let mut out = Vec::new();
    for (bound, m_now) in &now {
        let Some(m_before) = before.get(bound) else {
            continue;
        };
        for (k, what) in ["likelihood", "mass-function fit"].iter().enumerate() {
            if m_before[k] != m_now[k] {
                out.push(format!(
                    "the {bound} bound's {what} changed from {} to {}",
                    word(&m_before[k]),
                    word(&m_now[k])
                ));
            }
        }
    }
    // The white-dwarf radius test's prior on the true mass; a run without the key is from a
    // version that used the flat prior. Named only when one of the runs estimated a population
    // prior (its bandwidth is given), i.e. when it had white dwarfs to test.
    let prior = |s: &serde_json::Value| {
        let model = s.get("model");
        let name = model
            .and_then(|m| m.get("wd_mass_prior"))
            .and_then(|x| x.as_str())
            .unwrap_or("flat")
            .to_string();
        let estimated = model
            .and_then(|m| m.get("wd_mass_prior_bandwidth_msun"))
            .is_some_and(|b| b.is_number());
        (name, estimated)
    };
    let ((p_before, e_before), (p_now, e_now)) = (prior(before_summary), prior(now_summary));
    if p_before != p_now && (e_before || e_now) {
        out.push(format!(
            "the white-dwarf radius test's prior on the true mass changed from {p_before} to {p_now}"
        ));
    }
    // The per-object radius floor's scale (fitted to each night's white dwarfs, so it can move
    // with the data alone); a run without it kept the stated floor (scale 1). Named only when
    // one of the runs fitted it and the printed scale differs.
    let scale = |s: &serde_json::Value| {
        let fitted = s.get("model").and_then(|m| m.get("wd_floor_scale"));
        let applied = fitted
            .and_then(|k| k.get("applied"))
            .and_then(|x| x.as_f64());
        (format!("{:.3}", applied.unwrap_or(1.0)), applied.is_some())
    };
    let ((k_before, f_before), (k_now, f_now)) = (scale(before_summary), scale(now_summary));
    if k_before != k_now && (f_before || f_now) {
        out.push(format!(
            "the white-dwarf radius test's per-object floor scale changed from {k_before} to {k_now}"
        ));
    }
    out
}

/// Catalogue columns compared to decide whether an object "changed".
const VALUE_COLUMNS: &[&str] = &[
    "class",
    "mass_msun",
    "mass_err_lo_msun",
    "mass_err_hi_msun",
    "mass_limit",
    "radius_rsun",
    "radius_err_rsun",
    "age_gyr",
];

/// Compares the current run (its `objects.csv` rows and `summary.json` document) with the
/// previous run's folder and applies the alarm rules.
pub fn difference(
    previous: Option<&Path>,
    now_objects: &BTreeMap<String, ObjectState>,
    now_summary: &serde_json::Value,
    tension_sigma: f64,
    alarms: &super::config::AlarmConfig,
) -> RunDifference {
    let mut d = RunDifference {
        interval_now: interval95(now_summary),
        area_now: area95(now_summary),
        ..RunDifference::default()
    };
    let Some(prev) = previous else {
        return d;
    };
    d.previous = Some(prev.display().to_string());
    let before_objects = read_objects(prev);
    let before_summary = read_summary(prev);
    d.interval_before = before_summary.as_ref().and_then(interval95);
    d.area_before = before_summary.as_ref().and_then(area95);
    d.method_changes = before_summary
        .as_ref()
        .map(|b| method_changes(b, now_summary))
        .unwrap_or_default();

    let keys_now: BTreeSet<&String> = now_objects.keys().collect();
    let keys_before: BTreeSet<&String> = before_objects.keys().collect();
    d.added = keys_now
        .difference(&keys_before)
        .map(|k| k.to_string())
        .collect();
    d.removed = keys_before
        .difference(&keys_now)
        .map(|k| k.to_string())
        .collect();
    for k in keys_now.intersection(&keys_before) {
        let (a, b) = (&now_objects[k.as_str()], &before_objects[k.as_str()]);
        if a.values != b.values {
            d.changed.push(k.to_string());
        }
    }
    let is_tension = |s: &ObjectState| s.sigma_standard.is_some_and(|z| z > tension_sigma);
    for (k, s) in now_objects {
        let was = before_objects.get(k).is_some_and(is_tension);
        if is_tension(s) && !was {
            d.new_tensions
                .push((k.clone(), s.sigma_standard.unwrap_or(f64::NAN)));
        }
    }
    for (k, s) in &before_objects {
        if is_tension(s) && !now_objects.get(k).is_some_and(is_tension) {
            d.resolved_tensions.push(k.clone());
        }
    }
    if let (Some(a), Some(b)) = (d.interval_before, d.interval_now) {
        let end_shift = |x: Option<f64>, y: Option<f64>| match (x, y) {
            (Some(x), Some(y)) => (x - y).abs(),
            (None, None) => 0.0,
            _ => f64::INFINITY,
        };
        d.interval_shift = Some(end_shift(a[0], b[0]).max(end_shift(a[1], b[1])));
    }

    if alarms.new_tension && !d.new_tensions.is_empty() {
        let names: Vec<String> = d
            .new_tensions
            .iter()
            .map(|(k, z)| format!("{k} ({z:.2}σ)"))
            .collect();
        d.alarms.push(format!(
            "new tension above {tension_sigma}σ: {}",
            names.join(", ")
        ));
    }
    if let Some(s) = d.interval_shift {
        if s > alarms.interval_shift {
            d.alarms.push(if s.is_finite() {
                format!(
                    "the 95.45 % ϒ interval at τ = 0 moved by {s:.4} (tolerance {})",
                    alarms.interval_shift
                )
            } else {
                "an end of the 95.45 % ϒ interval at τ = 0 opened or closed".to_string()
            });
        }
    }
    if let (Some(a), Some(b)) = (d.area_before, d.area_now) {
        if (a - b).abs() > alarms.area_change {
            d.alarms.push(format!(
                "the 95.45 % allowed fraction of the grid changed from {a:.4} to {b:.4} (tolerance {})",
                alarms.area_change
            ));
        }
    }
    d
}

impl RunDifference {
    /// The difference in words, one line each (empty when nothing changed).
    pub fn lines(&self) -> Vec<String> {
        let housekeeping = self
            .housekeeping
            .iter()
            .map(|h| format!("housekeeping: {h}"));
        if self.previous.is_none() {
            let mut out = vec![
                "This is the first run of this job: there is no previous run to compare with."
                    .to_string(),
            ];
            out.extend(housekeeping);
            return out;
        }
        let mut out = Vec::new();
        let list = |v: &[String]| {
            const SHOWN: usize = 10;
            let mut t = v.iter().take(SHOWN).cloned().collect::<Vec<_>>().join(", ");
            if v.len() > SHOWN {
                t.push_str(&format!(
                    " … and {} more (see objects.csv)",
                    v.len() - SHOWN
                ));
            }
            t
        };
        if !self.added.is_empty() {
            out.push(format!(
                "{} object(s) added: {}",
                self.added.len(),
                list(&self.added)
            ));
        }
        if !self.removed.is_empty() {
            out.push(format!(
                "{} object(s) removed: {}",
                self.removed.len(),
                list(&self.removed)
            ));
        }
        if !self.changed.is_empty() {
            out.push(format!(
                "{} object(s) changed: {}",
                self.changed.len(),
                list(&self.changed)
            ));
        }
        for (k, z) in &self.new_tensions {
            out.push(format!("new tension: {k} at {z:.2}σ from standard gravity"));
        }
        for k in &self.resolved_tensions {
            out.push(format!("resolved tension: {k}"));
        }
        let end = |x: Option<f64>| x.map_or("open".to_string(), |v| format!("{v:.4}"));
        if let (Some(a), Some(b)) = (self.interval_before, self.interval_now) {
            if self.interval_shift.is_some_and(|s| s > 0.0) {
                out.push(format!(
                    "95.45 % ϒ interval at τ = 0: [{}, {}] → [{}, {}]",
                    end(a[0]),
                    end(a[1]),
                    end(b[0]),
                    end(b[1])
                ));
            }
        }
        if let (Some(a), Some(b)) = (self.area_before, self.area_now) {
            if a != b {
                out.push(format!(
                    "95.45 % allowed fraction of the grid: {a:.4} → {b:.4}"
                ));
            }
        }
        for m in &self.method_changes {
            out.push(format!(
                "method: {m} (docs/bounds.md §8.9; part of the change is the method's)"
            ));
        }
        for a in &self.alarms {
            out.push(format!("ALARM: {a}"));
        }
        out.extend(housekeeping);
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rows_compare_across_old_and_new_column_names_and_a_missing_column_differs() {
        // A previous run written by an older version names the columns `mass`, `age`, …; the
        // same values under the new names are no change (README "Deprecated names").
        let old = "id,class,mass,mass_err_lo,mass_err_hi,mass_limit,radius,radius_err,age,source_file,sigma_standard\n\
                   A,brown_dwarf,0.07,0.002,0.002,,,,5,cats/x.csv,1.5\n";
        let new = "id,class,mass_msun,mass_err_lo_msun,mass_err_hi_msun,mass_limit,radius_rsun,radius_err_rsun,age_gyr,source_file,sigma_standard\n\
                   A,brown_dwarf,0.07,0.002,0.002,,,,5,other/x.csv,2.5\n";
        let (a, b) = (parse_objects(old.as_bytes()), parse_objects(new.as_bytes()));
        assert_eq!(a.keys().collect::<Vec<_>>(), vec!["x.csv:A"]);
        assert_eq!(a["x.csv:A"].values, b["x.csv:A"].values);
        assert_eq!(b["x.csv:A"].sigma_standard, Some(2.5));
        // Without the age column at all, the row is not the one with an empty age.
        let no_age = "id,class,mass_msun,mass_err_lo_msun,mass_err_hi_msun,mass_limit,radius_rsun,radius_err_rsun,source_file\n\
                      A,brown_dwarf,0.07,0.002,0.002,,,,x.csv\n";
        let empty_age = "id,class,mass_msun,mass_err_lo_msun,mass_err_hi_msun,mass_limit,radius_rsun,radius_err_rsun,age_gyr,source_file\n\
                         A,brown_dwarf,0.07,0.002,0.002,,,,,x.csv\n";
        assert_ne!(
            parse_objects(no_age.as_bytes())["x.csv:A"].values,
            parse_objects(empty_age.as_bytes())["x.csv:A"].values
        );
    }

    #[test]
    fn a_change_of_method_between_runs_is_named() {
        // Two summaries as `confront` writes them (statistics.bounds[]): the MMHB's fit went
        // from exact to grouped, the Chandrasekhar bound's likelihood from product to calibrated.
        let before = serde_json::json!({"statistics": {"bounds": [
            {"bound": "mmhb", "likelihood": "calibrated", "mass_function": {"fit": "exact"}},
            {"bound": "chandrasekhar", "likelihood": "product", "mass_function": null}]}});
        let now = serde_json::json!({"statistics": {"bounds": [
            {"bound": "mmhb", "likelihood": "calibrated", "mass_function": {"fit": "grouped"}},
            {"bound": "chandrasekhar", "likelihood": "calibrated", "mass_function": {"fit": "exact"}}]}});
        assert_eq!(
            method_changes(&before, &now),
            vec![
                "the chandrasekhar bound's likelihood changed from product to calibrated",
                "the chandrasekhar bound's mass-function fit changed from none to exact",
                "the mmhb bound's mass-function fit changed from exact to grouped",
            ]
        );
        assert!(method_changes(&now, &now).is_empty());
        // An older run without the keys: only what both say is compared.
        assert!(method_changes(&serde_json::json!({}), &now).is_empty());
        // The radius test's prior: an older run (no key) used the flat one.
        let with_prior = serde_json::json!({"model": {"wd_mass_prior": "population",
            "wd_mass_prior_bandwidth_msun": 0.05}});
        assert_eq!(
            method_changes(&serde_json::json!({}), &with_prior),
            vec!["the white-dwarf radius test's prior on the true mass changed from flat to population"]
        );
        assert!(method_changes(&with_prior, &with_prior).is_empty());
        // Without white dwarfs to test (no bandwidth in either run) nothing is said.
        let untested = serde_json::json!({"model": {"wd_mass_prior": "population",
            "wd_mass_prior_bandwidth_msun": null}});
        assert!(method_changes(&serde_json::json!({}), &untested).is_empty());
        // The fitted floor's scale: an older run kept the stated floor (scale 1).
        let scaled = serde_json::json!({"model": {"wd_floor_scale": {"applied": 0.4819}}});
        assert_eq!(
            method_changes(&serde_json::json!({}), &scaled),
            vec![
                "the white-dwarf radius test's per-object floor scale changed from 1.000 to 0.482"
            ]
        );
        assert!(method_changes(&scaled, &scaled).is_empty());
        let stated = serde_json::json!({"model": {"wd_floor_scale": {"applied": 1.0}}});
        assert!(method_changes(&serde_json::json!({}), &stated).is_empty());
    }

    /// A run folder under `<output>/runs/` holding the given files.
    fn folder(output: &Path, name: &str, files: &[(&str, &str)]) -> PathBuf {
        let d = output.join("runs").join(name);
        std::fs::create_dir_all(&d).unwrap();
        for (f, text) in files {
            std::fs::write(d.join(f), text).unwrap();
        }
        d
    }

    #[test]
    fn partial_runs_are_swept_and_everything_else_is_left_alone() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path();
        let complete = folder(out, "20260101T000000Z", &[(COMPLETE_MARKER, "completed\n")]);
        // Written before run folders had markers: complete when its last outputs are there.
        let legacy = folder(
            out,
            "20260102T000000Z",
            &[("summary.json", "{}"), ("report.html", "")],
        );
        // Killed: the lock of a process that cannot exist (above Linux's pid_max, 2^22).
        let killed = folder(
            out,
            "20260103T000000Z",
            &[(LOCK_FILE, "pid = 4194305\n"), ("objects.csv", "id\n")],
        );
        let running = folder(out, "20260104T000000Z", &[]);
        let live = lock::FolderLock::acquire(&running, false).unwrap();
        // Killed between creating the folder and locking it.
        let empty = folder(out, "20260105T000000Z-1", &[]);
        let other = folder(out, "notes", &[]);
        assert_eq!(run_folder_state(&complete), RunFolderState::Complete);
        assert_eq!(run_folder_state(&legacy), RunFolderState::Complete);
        assert_eq!(run_folder_state(&killed), RunFolderState::Partial);
        assert_eq!(run_folder_state(&running), RunFolderState::Running);
        assert_eq!(run_folder_state(&empty), RunFolderState::Partial);

        let notes = sweep_partial_runs(out);
        assert_eq!(notes.len(), 2, "{notes:?}");
        assert!(notes[0].contains("20260103T000000Z") && notes[0].contains("partial"));
        assert!(!killed.exists() && !empty.exists());
        assert!(complete.exists() && legacy.exists() && running.exists() && other.exists());
        drop(live);
    }

    #[test]
    fn latest_is_never_swept() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path();
        let d = folder(out, "20260101T000000Z", &[]);
        publish_latest(out, &d).unwrap();
        assert!(sweep_partial_runs(out).is_empty());
        assert!(d.exists());
    }

    #[test]
    fn retention_removes_the_oldest_complete_runs_first() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path();
        let done = [(COMPLETE_MARKER, "completed\n")];
        // Same second: the counter orders them (-2 before -10).
        let names = [
            "20260101T000000Z",
            "20260101T000000Z-2",
            "20260101T000000Z-10",
            "20260102T000000Z",
        ];
        let dirs: Vec<PathBuf> = names.iter().map(|n| folder(out, n, &done)).collect();
        folder(out, "20251231T000000Z", &[(LOCK_FILE, "pid = 4194305\n")]);
        // keep 3 = the run about to start + the 2 newest complete ones.
        assert_eq!(retention_plan(out, 3), dirs[..2].to_vec());
        assert_eq!(retention_plan(out, 1), dirs.to_vec());
        assert!(retention_plan(out, 5).is_empty());
        publish_latest(out, &dirs[0]).unwrap();
        let notes = apply_retention(out, &dirs[..2], 3);
        assert_eq!(notes.len(), 1, "latest is spared: {notes:?}");
        assert!(dirs[0].exists() && !dirs[1].exists() && dirs[2].exists());
    }
}
