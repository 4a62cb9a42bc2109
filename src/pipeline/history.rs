//! Run history: dated run folders, the `latest` link, and the difference from the previous run.
//!
//! Each nightly run writes into `<output>/runs/<UTC timestamp>/`; only when every file is in
//! place is `<output>/latest` switched to it (a symlink replaced by an atomic rename), so a run
//! killed at any moment leaves the previous `latest` intact and readable.
//!
//! The difference is computed from the two runs' own `summary.json` and `objects.csv`, so it
//! works across tool versions and needs no state beyond the files a researcher can read.
//!
//! ```
//! let (date, stamp) = dwarfbound::pipeline::history::utc_stamp(0);
//! assert_eq!(date, "1970-01-01T00:00:00Z");
//! assert_eq!(stamp, "19700101T000000Z");
//! ```

use serde::Serialize;
use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

use crate::output::OutputError;

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

/// One object's state in a run, as read back from `objects.csv`.
#[derive(Debug, Clone, PartialEq)]
pub struct ObjectState {
    /// Row of `objects.csv` as column → text, for change detection.
    pub fields: BTreeMap<String, String>,
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
    /// 95.45 % Υ interval at τ = 0, before and now ([lower, upper], `None` = open).
    pub interval_before: Option<[Option<f64>; 2]>,
    /// 95.45 % Υ interval at τ = 0 now.
    pub interval_now: Option<[Option<f64>; 2]>,
    /// Largest move of an interval end (infinite if an end opened or closed).
    pub interval_shift: Option<f64>,
    /// 95.45 % allowed fraction of the grid, before and now.
    pub area_before: Option<f64>,
    /// 95.45 % allowed fraction now.
    pub area_now: Option<f64>,
    /// Alarm rules that fired, in words.
    pub alarms: Vec<String>,
}

/// Reads `objects.csv` of a run into key → state (key = `source_file:id`).
pub fn read_objects(run_dir: &Path) -> BTreeMap<String, ObjectState> {
    match std::fs::read(run_dir.join("objects.csv")) {
        Ok(bytes) => parse_objects(&bytes),
        Err(_) => BTreeMap::new(),
    }
}

/// Parses the bytes of an `objects.csv` into key → state (key = `source_file:id`).
pub fn parse_objects(bytes: &[u8]) -> BTreeMap<String, ObjectState> {
    let mut out = BTreeMap::new();
    let mut rdr = csv::Reader::from_reader(bytes);
    let headers = match rdr.headers() {
        Ok(h) => h.clone(),
        Err(_) => return out,
    };
    for rec in rdr.records().flatten() {
        let fields: BTreeMap<String, String> = headers
            .iter()
            .zip(rec.iter())
            .map(|(h, v)| (h.to_string(), v.to_string()))
            .collect();
        // Identity across runs: the catalogue's file name (not its path, which may be written
        // differently from night to night) and the object's id.
        let file = fields.get("source_file").cloned().unwrap_or_default();
        let name = Path::new(&file)
            .file_name()
            .map(|n| n.to_string_lossy().to_string())
            .unwrap_or(file);
        let key = format!("{}:{}", name, fields.get("id").cloned().unwrap_or_default());
        let sigma_standard = fields
            .get("sigma_standard")
            .and_then(|s| s.parse::<f64>().ok());
        out.insert(
            key,
            ObjectState {
                fields,
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

/// A column of an `objects.csv` row under its current name, or under the name it had before
/// (a previous run written by an older version).
fn field<'a>(s: &'a ObjectState, column: &str) -> Option<&'a String> {
    s.fields
        .get(column)
        .or_else(|| super::names::old_name(column).and_then(|old| s.fields.get(old)))
}

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
        if VALUE_COLUMNS.iter().any(|c| field(a, c) != field(b, c)) {
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
                    "the 95.45 % Υ interval at τ = 0 moved by {s:.4} (tolerance {})",
                    alarms.interval_shift
                )
            } else {
                "an end of the 95.45 % Υ interval at τ = 0 opened or closed".to_string()
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
        if self.previous.is_none() {
            return vec![
                "This is the first run of this job: there is no previous run to compare with."
                    .to_string(),
            ];
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
                    "95.45 % Υ interval at τ = 0: [{}, {}] → [{}, {}]",
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
        for a in &self.alarms {
            out.push(format!("ALARM: {a}"));
        }
        out
    }
}
