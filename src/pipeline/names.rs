//! One name per quantity in the machine-readable outputs, and the old names kept for one version.
//!
//! Every key of `summary.json`, the predict JSON and every CSV column names its unit (`_msun`,
//! `_rsun`, `_gyr`, `_h`, `_min`, `_s`) and one quantity has one name in every file. Keys renamed
//! to reach that are listed once, in [`RENAMED`]; the writers emit the new name and, for one
//! version, the old one beside it (CSV: an extra column at the end; JSON: a second key), so a
//! script reading the old name keeps working while it is updated. The README lists the same
//! renames under "Deprecated names".
//!
//! ```
//! use dwarfbound::pipeline::names::{old_name, RENAMED};
//! assert_eq!(old_name("breakup_period_h"), Some("breakup_period_min_h"));
//! assert!(RENAMED.iter().all(|r| r.new != r.old));
//! ```

use serde_json::{Map, Value};

use crate::report::tables::Cell;

/// One renamed key: where it appears, its new and old names, and the factor that turns a value
/// under the new name into one under the old (the old grid column was in minutes, the new one is
/// in hours).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rename {
    /// The file(s) the key appears in, for the README and the final list.
    pub file: &'static str,
    /// The name written from now on.
    pub new: &'static str,
    /// The name written alongside for one version, then dropped.
    pub old: &'static str,
    /// value(old) = value(new) × this.
    pub old_per_new: f64,
}

const fn r(file: &'static str, new: &'static str, old: &'static str) -> Rename {
    Rename {
        file,
        new,
        old,
        old_per_new: 1.0,
    }
}

/// Every rename of this version (deprecated names are written alongside until the next one).
pub const RENAMED: &[Rename] = &[
    // objects.csv: the columns carry their unit, as the catalogue's canonical fields do in the code.
    r("objects.csv", "mass_msun", "mass"),
    r("objects.csv", "mass_err_lo_msun", "mass_err_lo"),
    r("objects.csv", "mass_err_hi_msun", "mass_err_hi"),
    r("objects.csv", "radius_rsun", "radius"),
    r("objects.csv", "radius_err_rsun", "radius_err"),
    r("objects.csv", "age_gyr", "age"),
    r("objects.csv", "bound_standard_msun", "bound_standard"),
    r("objects.csv", "bound_best_msun", "bound_best"),
    // The break-up period: `min_h` read as "minutes, hours"; it is the period itself, in hours.
    r(
        "bounds.csv, predict JSON",
        "breakup_period_h",
        "breakup_period_min_h",
    ),
    Rename {
        file: "grid.csv",
        new: "breakup_period_h",
        old: "breakup_period_minutes",
        old_per_new: 60.0,
    },
    // The Newtonian Chandrasekhar mass at μe = 2: one name (bounds.csv's) everywhere.
    r(
        "predict JSON",
        "chandrasekhar_newtonian_mu_e2_msun",
        "chandrasekhar_newtonian_msun",
    ),
    // The white-dwarf radius floor: the name of summary.json and the run config.
    r(
        "predict JSON (white_dwarf)",
        "wd_radius_floor_fraction",
        "radius_floor_fraction",
    ),
];

/// The deprecated name of `new`, if it was renamed in this version.
pub fn old_name(new: &str) -> Option<&'static str> {
    RENAMED.iter().find(|r| r.new == new).map(|r| r.old)
}

/// The renames that apply to one file (matched by the `file` label).
fn for_file(file: &str) -> impl Iterator<Item = &'static Rename> + '_ {
    RENAMED.iter().filter(move |r| r.file.contains(file))
}

/// The deprecated columns of one table written as cells a row at a time (`grid.csv`): for each
/// renamed column of `file` present in the header, a column under its old name holding the same
/// values, scaled where the unit changed ([`DeprecatedColumns::extend_row`]).
#[derive(Debug)]
pub struct DeprecatedColumns(Vec<(usize, &'static Rename)>);

/// Appends to `header` the old name of each renamed column of `file` it holds (found as
/// [`csv_text_deprecated`] finds them), and gives the columns to add to each row.
pub fn deprecated_columns(file: &str, header: &mut Vec<String>) -> DeprecatedColumns {
    let names: Vec<&str> = header.iter().map(String::as_str).collect();
    let columns = csv_text_deprecated(file, &names);
    header.extend(columns.iter().map(|(_, rn)| rn.old.to_string()));
    DeprecatedColumns(columns)
}

impl DeprecatedColumns {
    /// Appends one row's deprecated cells: each a copy of its renamed column's cell, scaled
    /// where the unit changed.
    pub fn extend_row(&self, row: &mut Vec<Cell>) {
        for &(at, rn) in &self.0 {
            let cell = match row.get(at) {
                Some(Cell::Float(x)) => Cell::Float(x.map(|v| v * rn.old_per_new)),
                Some(other) => other.clone(),
                None => Cell::Text(String::new()),
            };
            row.push(cell);
        }
    }
}

/// The same for CSV written as text records (`bounds.csv`): the extra column names, and per
/// row the extra cells.
pub fn csv_text_deprecated(file: &str, header: &[&str]) -> Vec<(usize, &'static Rename)> {
    for_file(file)
        .filter_map(|rn| header.iter().position(|h| *h == rn.new).map(|at| (at, rn)))
        .collect()
}

/// Adds, for each renamed key of `file` present in `object`, the old key with the same value
/// (scaled where the unit changed). Keys already present are left alone.
pub fn json_with_deprecated(file: &str, object: &mut Map<String, Value>) {
    for rn in for_file(file) {
        let Some(v) = object.get(rn.new).cloned() else {
            continue;
        };
        let old = match (v.as_f64(), rn.old_per_new) {
            (Some(x), k) if k != 1.0 => serde_json::json!(x * k),
            _ => v,
        };
        object.entry(rn.old.to_string()).or_insert(old);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_new_name_carries_a_unit_or_is_dimensionless_by_name() {
        // Common practice, no source: a unit suffix or an explicit dimensionless word.
        for rn in RENAMED {
            assert!(
                ["_msun", "_rsun", "_gyr", "_h", "_fraction"]
                    .iter()
                    .any(|u| rn.new.ends_with(u)),
                "{}",
                rn.new
            );
        }
    }

    #[test]
    fn csv_gets_the_old_column_scaled() {
        let mut header = vec!["upsilon".to_string(), "breakup_period_h".to_string()];
        let mut row = vec![Cell::float(0.0), Cell::float(0.5)];
        deprecated_columns("grid.csv", &mut header).extend_row(&mut row);
        assert_eq!(header[2], "breakup_period_minutes");
        // 0.5 h = 30 min (definition of the hour).
        assert_eq!(row[2], Cell::float(30.0));
    }
}
