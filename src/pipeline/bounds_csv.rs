//! `bounds.csv`, the table `predict --out` writes: one row per grid point with every scalar
//! bound, its status and the reasons where a bound has no value.
//!
//! One job: format a computed [`TheoryGrid`] as CSV text. It computes no physics: every value
//! is read from the grid's points and written in round-trip form (empty where there is none),
//! and the status of a row only counts the failures the points carry.
//!
//! ```
//! use dwarfbound::pipeline::bounds_csv::{bounds_csv, BOUNDS_CSV_COLUMNS};
//! use dwarfbound::theory::grid::{compute, GridOptions};
//! use dwarfbound::theory::settings::TheorySettings;
//! use dwarfbound::theory::Axis;
//!
//! let one = Axis { start: 0.0, stop: 0.0, count: 1 };
//! let grid = compute(one, one, &TheorySettings::default(), &GridOptions::default()).unwrap();
//! let text = bounds_csv(&grid).unwrap();
//! assert!(text.starts_with(&BOUNDS_CSV_COLUMNS.join(",")));
//! assert_eq!(text.lines().count(), 2);
//! ```

use crate::output::fmt_f64;
use crate::theory::grid::TheoryGrid;
use crate::theory::outcome::Failure;

/// The table could not be written (the CSV writer failed; no input can cause it).
#[derive(Debug, thiserror::Error)]
#[error("cannot write bounds.csv: {0}")]
pub struct BoundsCsvError(String);

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
    "breakup_period_h",
    "breakup_radius_rjup",
    "warnings",
];

/// The grid as `bounds.csv` text: one row per point (row-major), every scalar bound in
/// round-trip form, empty where there is no value, with `status` (`ok`, `partial` or
/// `no-model`) and `reason` (the failures, `bound: code: reason`, joined by ` | `); the SC
/// fraction has its own `sc_reason`.
pub fn bounds_csv(grid: &TheoryGrid) -> Result<String, BoundsCsvError> {
    let mut w = csv::WriterBuilder::new().from_writer(Vec::new());
    let err = |e: csv::Error| BoundsCsvError(e.to_string());
    let deprecated = super::names::csv_text_deprecated("bounds.csv", &BOUNDS_CSV_COLUMNS);
    let header: Vec<&str> = BOUNDS_CSV_COLUMNS
        .iter()
        .copied()
        .chain(deprecated.iter().map(|(_, rn)| rn.old))
        .collect();
    w.write_record(&header).map_err(err)?;
    for p in &grid.points {
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
        let mut row = vec![
            f(Some(p.upsilon)),
            f(Some(p.tau)),
            grid.settings.anisotropy.name().to_string(),
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
        for (at, rn) in &deprecated {
            let old = match row[*at].parse::<f64>() {
                Ok(v) if rn.old_per_new != 1.0 => f(Some(v * rn.old_per_new)),
                _ => row[*at].clone(),
            };
            row.push(old);
        }
        w.write_record(&row).map_err(err)?;
    }
    let bytes = w.into_inner().map_err(|e| BoundsCsvError(e.to_string()))?;
    String::from_utf8(bytes).map_err(|e| BoundsCsvError(e.to_string()))
}
