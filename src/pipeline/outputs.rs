//! The files one confrontation writes beside its report: `objects.csv`, `grid.csv` and
//! `summary.json` (the keys the README documents), from an [`OutputContext`] that borrows every
//! result of the run. Selection and formatting only: every number was computed upstream.
//!
//! Grid vectors follow the program's one index order, τ outer and ϒ inner (`j · n_ϒ + i`),
//! which is also the row order of `grid.csv`.
//!
//! ```text
//! run_confrontation ──► OutputContext ──► objects.csv / grid.csv / summary.json
//!                                     └─► report_input::report_parts ──► (objects dropped)
//!                                                                    ──► write_report_parts
//! ```

use std::collections::BTreeMap;

use serde_json::{json, Value};

use super::error::PipelineError;
use super::settings::{ConfrontSettings, ObjectsFormat};
use super::surface::GridSurface;
use crate::catalogue::{CatalogueObject, OptF64, Vetted};
use crate::confront::drivers::SliceDriver;
use crate::confront::engine::{BoundSurface, Confrontation, EngineOptions, Term};
use crate::confront::mass_terms::Systematics;
use crate::confront::profile::{Posterior, ProfileIntervals};
use crate::confront::regions::Interval;
use crate::confront::regions::{AbsoluteConsistency, Crowding, Level, MapRegions};
use crate::confront::slice::SliceResult;
use crate::confront::spin::{SlowRotationStatus, SpinVerdict};
use crate::confront::tension::{
    mass_sigma_in_fit, sigma_from_ln_p_in_fit, ReferencePoint, Tension, TensionTest, TestKey,
    Verdicts,
};
use crate::report::{
    self,
    tables::{Cell, CsvRows},
};
use crate::theory::grid::TheoryGrid;
use crate::theory::Axis;
use rayon::prelude::*;

/// Columns of the per-object table (`objects.csv` / `objects.parquet`) under their current
/// names; the deprecated old names of renamed columns follow them (see [`objects_header`]).
pub(crate) const OBJECTS_COLUMNS: [&str; 34] = [
    "id",
    "class",
    "source_file",
    "source_row",
    "mass_msun",
    "mass_err_lo_msun",
    "mass_err_hi_msun",
    "mass_limit",
    "radius_rsun",
    "radius_err_rsun",
    "age_gyr",
    "mu_e",
    "in_fit",
    "flags",
    "bound_standard_msun",
    "bound_best_msun",
    "sigma_standard",
    "sigma_best",
    "radius_sigma_standard",
    "driver_rank",
    "driver_shift",
    "driver_end_opens_or_closes",
    "sigma_best_in_fit",
    "radius_sigma_best",
    "driver_test",
    "rotation_period_h",
    "rotation_period_err_h",
    "breakup_period_standard_h",
    "breakup_period_best_h",
    "spin_sigma_standard",
    "spin_sigma_best",
    "spin_radius_source",
    "spin_v",
    "spin_correction",
];

/// The Parquet type of each column of [`OBJECTS_COLUMNS`].
#[derive(Debug, Clone, Copy)]
enum ColumnKind {
    Text,
    Int,
    Float,
    Bool,
}

const OBJECTS_KINDS: [ColumnKind; 34] = {
    use ColumnKind::{Bool, Float, Int, Text};
    [
        Text, Text, Text, Int, Float, Float, Float, Text, Float, Float, Float, Float, Bool, Text,
        Float, Float, Float, Float, Float, Int, Float, Bool, Float, Float, Text, Float, Float,
        Float, Float, Float, Float, Text, Float, Float,
    ]
};

/// The per-object table's header: [`OBJECTS_COLUMNS`], then the deprecated old name of each
/// renamed column (written for one version), with the column each copies and its kind.
fn objects_header() -> (Vec<String>, Vec<(usize, f64)>, Vec<ColumnKind>) {
    let deprecated = super::names::csv_text_deprecated("objects.csv", &OBJECTS_COLUMNS);
    let mut header: Vec<String> = OBJECTS_COLUMNS.iter().map(|c| c.to_string()).collect();
    let mut kinds = OBJECTS_KINDS.to_vec();
    let mut copies = Vec::new();
    for (at, rn) in deprecated {
        header.push(rn.old.to_string());
        kinds.push(OBJECTS_KINDS[at]);
        copies.push((at, rn.old_per_new));
    }
    (header, copies, kinds)
}

/// Rows per Parquet row group: what the writer holds in memory at once.
const PARQUET_ROW_GROUP: usize = 65_536;

/// Rows of `objects.csv` built in parallel at a time (a few MB of text in hand).
const OBJECT_ROW_BLOCK: usize = 8_192;

/// Rows of `objects.csv` one thread renders into one text (a class's repeated numbers are
/// formatted once per run; see [`CsvRows`]).
const OBJECT_ROW_RUN: usize = 256;

/// Everything the output writers need, borrowed from one confrontation.
pub(crate) struct OutputContext<'a> {
    pub settings: &'a ConfrontSettings,
    pub vetted: &'a Vetted,
    pub grid: &'a TheoryGrid,
    pub surface: &'a GridSurface<'a>,
    pub conf: &'a Confrontation,
    pub regions: &'a MapRegions,
    pub slice: Option<&'a SliceResult>,
    /// The τ = 0 slice under the other treatment of the theory floors, and that treatment.
    pub slice_other_floor: Option<(Systematics, &'a SliceResult)>,
    /// Profile intervals of ϒ over τ and of τ over ϒ.
    pub profile: &'a ProfileIntervals,
    /// The flat-prior posterior.
    pub posterior: &'a Posterior,
    /// Per object, in the order of `vetted.objects`.
    pub verdicts: &'a Verdicts,
    /// The bounds at standard gravity (each object's is made from them when written).
    pub standard_bounds: ReferencePoint,
    /// The bounds at the best fit.
    pub best_bounds: ReferencePoint,
    /// The spin tests, one per object with a rotation period and a measured mass.
    pub spin_verdicts: &'a [SpinVerdict],
    /// The drivers, by rank.
    pub drivers: &'a [SliceDriver],
    /// Each object's ln P in the fit at the best fit where the drivers' screening read it
    /// (`drivers::slice_drivers_in_fit_and_ln_p_at`), missing where it did not (made here).
    pub ln_p_in_fit_at_best: &'a [OptF64],
    pub tensions: &'a [Tension],
    pub consistency: &'a AbsoluteConsistency,
    pub crowd: Option<Crowding>,
    pub checksums: &'a BTreeMap<String, String>,
    pub eopts: &'a EngineOptions,
    pub best_index: usize,
    pub cache_note: Option<String>,
    pub since_previous: Option<Vec<String>>,
    /// Tests failing at the best fit (key as in `consistency.worst`, decoded by `TestKey`).
    pub verdict_failures: Vec<(usize, f64)>,
}

/// `{cl68: {lower, upper}, cl95: …, cl997: …}` of three intervals in [`Level::ALL`] order.
fn levels_json(iv: &[Interval; 3]) -> Value {
    let mut m = serde_json::Map::new();
    for (l, i) in Level::ALL.iter().zip(iv) {
        m.insert(
            l.key().into(),
            json!({"lower": opt_json(i.lower), "upper": opt_json(i.upper)}),
        );
    }
    Value::Object(m)
}

fn opt_json(x: Option<f64>) -> Value {
    match x {
        Some(v) if v.is_finite() => json!(v),
        _ => Value::Null,
    }
}

impl OutputContext<'_> {
    /// Tension of object `k` at the best fit, if it has one.
    pub(crate) fn sigma_best(&self, k: usize) -> Option<f64> {
        self.verdicts.objects[k].sigma_best.get()
    }

    /// Drivers as (rank, object index, shift), by rank.
    pub(crate) fn drivers_sorted(&self) -> Vec<(usize, usize, f64)> {
        self.drivers
            .iter()
            .enumerate()
            .map(|(r, d)| (r + 1, d.object, d.shift))
            .collect()
    }

    /// The test through which object `k` drives the interval, if it is a driver.
    pub(crate) fn driver_test(&self, k: usize) -> Option<TensionTest> {
        self.drivers.iter().find(|d| d.object == k).map(|d| d.test)
    }

    /// One-sided tension of object `k`'s mass test at the best fit under the likelihood used.
    pub(crate) fn sigma_best_in_fit(&self, k: usize) -> Option<f64> {
        if let Some(ln_p) = self.ln_p_in_fit_at_best.get(k).and_then(|v| v.get()) {
            return sigma_from_ln_p_in_fit(ln_p);
        }
        mass_sigma_in_fit(
            self.conf,
            &self.vetted.objects,
            self.surface,
            k,
            self.best_index,
        )
    }

    /// The σ of the test through which object `k` drives the interval, at the best fit: the
    /// mass test's one-sided tension under the likelihood used, or the radius test's signed,
    /// two-sided tension.
    pub(crate) fn driver_sigma(&self, k: usize) -> Option<f64> {
        match self.driver_test(k)? {
            TensionTest::MassBound => self.sigma_best_in_fit(k),
            TensionTest::MassRadius => self.verdicts.radius_sigma_best(k),
            TensionTest::Spin => self
                .spin_verdicts
                .iter()
                .find(|v| v.index == k)
                .and_then(|v| v.sigma_best),
        }
    }

    /// The standard-gravity point's status on the map.
    pub(crate) fn grid_standard_status(&self) -> report::StandardGravityStatus {
        let nu = self.conf.n_upsilon;
        let i = self.surface.upsilon().iter().position(|&u| u == 0.0);
        let j = self.surface.tau().iter().position(|&t| t == 0.0);
        match (i, j) {
            (Some(i), Some(j)) => {
                let d = self.regions.delta_chi2[j * nu + i];
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

    /// One row of the per-object table (columns [`OBJECTS_COLUMNS`]).
    fn object_row(
        &self,
        k: usize,
        driver: Option<(usize, f64)>,
        sv: Option<&SpinVerdict>,
        copies: &[(usize, f64)],
    ) -> Vec<Cell> {
        let r = &self.verdicts.objects[k];
        let driver_rank = driver.map(|d| d.0);
        let driver_shift = driver.map(|d| d.1);
        let o = self.object(k);
        let u = &self.conf.uses[k];
        let mut row = vec![
            Cell::Text(o.id.to_string()),
            Cell::Text(o.class.label().into()),
            Cell::Text(o.source_file.to_string()),
            Cell::Int(i64::from(o.source_row)),
            Cell::Float(Some(o.mass_msun)),
            Cell::Float(o.mass_err_lo_msun.get()),
            Cell::Float(o.mass_err_hi_msun.get()),
            Cell::Text(o.mass_limit.label().into()),
            Cell::Float(o.radius_rsun().get()),
            Cell::Float(o.radius_err_rsun().get()),
            Cell::Float(o.age_gyr().get()),
            Cell::Float(Some(u.mu_e)),
            Cell::Bool(Some(
                u.mass_term.is_some() && u.measurement(o).informative(),
            )),
            Cell::Text(u.flags.join(";")),
            Cell::Float(self.standard_bounds.object_bound(o, u)),
            Cell::Float(self.best_bounds.object_bound(o, u)),
            Cell::Float(r.sigma_standard.get()),
            Cell::Float(r.sigma_best.get()),
            Cell::Float(self.verdicts.radius_sigma_standard(k)),
            match driver_rank {
                Some(x) => Cell::Int(x as i64),
                None => Cell::Text(String::new()),
            },
            Cell::Float(driver_shift.filter(|s| s.is_finite())),
            Cell::Bool(driver_shift.map(|s| s.is_infinite())),
            Cell::Float(self.sigma_best_in_fit(k)),
            Cell::Float(self.verdicts.radius_sigma_best(k)),
            Cell::Text(
                self.driver_test(k)
                    .map(|t| t.name().to_string())
                    .unwrap_or_default(),
            ),
        ];
        let hours = |x: Option<f64>| x.map(|s| s / 3600.0);
        let (spin_v, spin_change) = match sv.map(|v| v.slow) {
            Some(SlowRotationStatus::Corrected { v, change }) => (Some(v), Some(change)),
            Some(SlowRotationStatus::BeyondFirstOrder { v }) => (Some(v), None),
            _ => (None, None),
        };
        row.extend([
            Cell::Float(o.rotation_period_h().get()),
            Cell::Float(o.rotation_period_err_h().get()),
            Cell::Float(hours(sv.and_then(|v| v.breakup_standard_s))),
            Cell::Float(hours(sv.and_then(|v| v.breakup_best_s))),
            Cell::Float(sv.and_then(|v| v.sigma_standard)),
            Cell::Float(sv.and_then(|v| v.sigma_best)),
            Cell::Text(sv.map_or(String::new(), |v| v.source.label().to_string())),
            Cell::Float(spin_v),
            Cell::Float(spin_change),
        ]);
        // The deprecated old names: copies of their new columns (scaled where the unit moved).
        for &(at, old_per_new) in copies {
            let cell = match &row[at] {
                Cell::Float(x) => Cell::Float(x.map(|v| v * old_per_new)),
                other => other.clone(),
            };
            row.push(cell);
        }
        row
    }

    /// The driver rank and shift of each object (most have none).
    fn drivers_by_object(&self) -> std::collections::HashMap<usize, (usize, f64)> {
        self.drivers_sorted()
            .into_iter()
            .map(|(rank, k, shift)| (k, (rank, shift)))
            .collect()
    }

    /// The spin test of each object that has one (looked up once per table, not per row).
    fn spins_by_object(&self) -> std::collections::HashMap<usize, &SpinVerdict> {
        self.spin_verdicts.iter().map(|v| (v.index, v)).collect()
    }

    /// Writes the per-object table, one row per accepted object, in `format`, row by row (CSV)
    /// or row group by row group (Parquet): the table is never held whole in memory.
    pub(crate) fn write_objects(
        &self,
        out: &mut (impl std::io::Write + Send),
        format: ObjectsFormat,
    ) -> Result<(), PipelineError> {
        let bar = crate::progress::bar(
            self.verdicts.objects.len() as u64,
            match format {
                ObjectsFormat::Csv => "writing objects.csv",
                ObjectsFormat::Parquet => "writing objects.parquet",
            },
            false,
        );
        let written = match format {
            ObjectsFormat::Csv => self.write_objects_csv(out, &bar),
            ObjectsFormat::Parquet => self.write_objects_parquet(out, &bar),
        };
        bar.finish_and_clear();
        written
    }

    fn write_objects_csv(
        &self,
        out: &mut (impl std::io::Write + Send),
        bar: &indicatif::ProgressBar,
    ) -> Result<(), PipelineError> {
        let fail = |e: std::io::Error| PipelineError::Internal(format!("writing objects.csv: {e}"));
        let (header, copies, _) = objects_header();
        let mut text = String::new();
        let header: Vec<Cell> = header.into_iter().map(Cell::Text).collect();
        CsvRows::default().push(&mut text, &header);
        out.write_all(text.as_bytes()).map_err(fail)?;
        let drivers = self.drivers_by_object();
        let spins = self.spins_by_object();
        // Rows built and rendered in parallel a block at a time, in runs of rows that each
        // thread renders into one text (each row's σ in the fit rebuilds the object's
        // calibrated table: seconds at 10⁶ objects on one thread), written in order. The next
        // block is rendered while this one is written (the writes, a copy of 260 MB into the
        // page cache at 10⁶ objects, were a serial quarter of the table's time).
        let n = self.verdicts.objects.len();
        let render = |start: usize| -> Vec<String> {
            let end = (start + OBJECT_ROW_BLOCK).min(n);
            (start..end)
                .step_by(OBJECT_ROW_RUN)
                .collect::<Vec<_>>()
                .into_par_iter()
                .map(|first| {
                    let mut rows = CsvRows::default();
                    let mut text = String::new();
                    for k in first..(first + OBJECT_ROW_RUN).min(end) {
                        let cells = self.object_row(
                            k,
                            drivers.get(&k).copied(),
                            spins.get(&k).copied(),
                            &copies,
                        );
                        rows.push(&mut text, &cells);
                    }
                    text
                })
                .collect()
        };
        let mut start = 0;
        let mut block = (n > 0).then(|| render(0));
        while let Some(runs) = block.take() {
            let end = (start + OBJECT_ROW_BLOCK).min(n);
            let (next, written) = rayon::join(
                || (end < n).then(|| render(end)),
                || {
                    runs.iter()
                        .try_for_each(|run| out.write_all(run.as_bytes()))
                        .map_err(fail)
                },
            );
            written?;
            bar.set_position(end as u64);
            block = next;
            start = end;
        }
        out.flush().map_err(fail)
    }

    fn write_objects_parquet(
        &self,
        out: &mut impl std::io::Write,
        bar: &indicatif::ProgressBar,
    ) -> Result<(), PipelineError> {
        use polars::prelude::{
            Column, DataFrame, DataType, Field, ParquetWriter, PlSmallStr, Schema,
        };
        let fail = |e: polars::error::PolarsError| {
            PipelineError::Internal(format!("writing objects.parquet: {e}"))
        };
        let dtype = |kind: ColumnKind| match kind {
            ColumnKind::Text => DataType::String,
            ColumnKind::Int => DataType::Int64,
            ColumnKind::Float => DataType::Float64,
            ColumnKind::Bool => DataType::Boolean,
        };
        let (header, copies, kinds) = objects_header();
        let schema: Schema = header
            .iter()
            .zip(&kinds)
            .map(|(name, kind)| Field::new(PlSmallStr::from(name.as_str()), dtype(*kind)))
            .collect();
        let mut writer = ParquetWriter::new(out).batched(&schema).map_err(fail)?;
        let drivers = self.drivers_by_object();
        let spins = self.spins_by_object();
        let n = self.verdicts.objects.len();
        let mut start = 0;
        while start < n || (n == 0 && start == 0) {
            let end = (start + PARQUET_ROW_GROUP).min(n);
            let mut text: Vec<Vec<Option<String>>> = vec![Vec::new(); header.len()];
            let mut int: Vec<Vec<Option<i64>>> = vec![Vec::new(); header.len()];
            let mut float: Vec<Vec<Option<f64>>> = vec![Vec::new(); header.len()];
            let mut boolean: Vec<Vec<Option<bool>>> = vec![Vec::new(); header.len()];
            let rows: Vec<Vec<Cell>> = (start..end)
                .into_par_iter()
                .map(|k| {
                    self.object_row(k, drivers.get(&k).copied(), spins.get(&k).copied(), &copies)
                })
                .collect();
            for row in rows {
                for (c, cell) in row.into_iter().enumerate() {
                    match (kinds[c], cell) {
                        (ColumnKind::Text, Cell::Text(t)) => text[c].push(Some(t)),
                        (ColumnKind::Int, Cell::Int(i)) => int[c].push(Some(i)),
                        (ColumnKind::Int, _) => int[c].push(None),
                        (ColumnKind::Float, Cell::Float(x)) => {
                            float[c].push(x.filter(|v| v.is_finite()))
                        }
                        (ColumnKind::Bool, Cell::Bool(b)) => boolean[c].push(b),
                        (kind, cell) => {
                            return Err(PipelineError::Internal(format!(
                                "objects.parquet: column {} is {kind:?}, got {cell:?}",
                                header[c]
                            )))
                        }
                    }
                }
            }
            let columns: Vec<Column> = header
                .iter()
                .enumerate()
                .map(|(c, name)| {
                    let name = PlSmallStr::from(name.as_str());
                    match kinds[c] {
                        ColumnKind::Text => Column::new(name, std::mem::take(&mut text[c])),
                        ColumnKind::Int => Column::new(name, std::mem::take(&mut int[c])),
                        ColumnKind::Float => Column::new(name, std::mem::take(&mut float[c])),
                        ColumnKind::Bool => Column::new(name, std::mem::take(&mut boolean[c])),
                    }
                })
                .collect();
            let df = DataFrame::new(end - start, columns).map_err(fail)?;
            writer.write_batch(&df).map_err(fail)?;
            bar.set_position(end as u64);
            start = end.max(start + 1);
        }
        writer.finish().map_err(fail)?;
        Ok(())
    }

    /// `grid.csv`: one row per grid point, written row by row into `out` (the rows of a
    /// 201 × 201 grid held as cells were ≈ 40 MB at the end of a run, its peak).
    pub(crate) fn write_grid_csv(
        &self,
        out: &mut impl std::io::Write,
    ) -> Result<(), PipelineError> {
        let fail = |e: std::io::Error| PipelineError::Internal(format!("writing grid.csv: {e}"));
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
            "breakup_period_h".into(),
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
        let deprecated = super::names::deprecated_columns("grid.csv", &mut header);
        let mut rows = CsvRows::default();
        let mut text = String::new();
        let header_cells: Vec<Cell> = header.iter().cloned().map(Cell::Text).collect();
        rows.push(&mut text, &header_cells);
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
                    Cell::Float(Some(self.surface.upsilon()[i])),
                    Cell::Float(Some(self.surface.tau()[j])),
                    Cell::Text(status.into()),
                    Cell::Text(reason),
                    Cell::Float(p.and_then(|p| p.mmhb.ok()).map(|m| m.value_msun)),
                    Cell::Float(p.and_then(|p| p.mmhb.ok()).map(|m| m.raw_msun)),
                    Cell::Float(p.and_then(|p| p.chandrasekhar.ok()).map(|c| c.value_msun)),
                    Cell::Float(p.and_then(|p| p.sc.ok()).map(|s| s.q_sc)),
                    Cell::Float(p.and_then(|p| p.breakup.ok()).map(|b| b.period_h)),
                ];
                for t in Term::ALL {
                    row.push(Cell::Float(self.conf.per_term[t as usize][k]));
                }
                let d = self.regions.delta_chi2[k];
                let d = d.is_finite().then_some(d);
                row.push(Cell::Float(self.conf.joint[k]));
                row.push(Cell::Float(d));
                for l in Level::ALL {
                    row.push(Cell::Bool(Some(d.is_some_and(|d| d <= l.dchi2(2)))));
                }
                deprecated.extend_row(&mut row);
                if row.len() != header.len() {
                    return Err(PipelineError::Internal(format!(
                        "grid.csv row {} has {} cells, the header has {}",
                        k + 1,
                        row.len(),
                        header.len()
                    )));
                }
                rows.push(&mut text, &row);
                if text.len() >= 1 << 16 {
                    out.write_all(text.as_bytes()).map_err(fail)?;
                    text.clear();
                }
            }
        }
        out.write_all(text.as_bytes()).map_err(fail)?;
        out.flush().map_err(fail)
    }

    /// The `summary.json` document (the keys the README documents, plus details).
    pub(crate) fn summary_json(&self) -> Value {
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
                l.key().into(),
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
                l.key().into(),
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
            .tau()
            .iter()
            .position(|&t| t == 0.0)
            .and_then(|j| {
                self.surface
                    .upsilon()
                    .iter()
                    .position(|&u| u == 0.0)
                    .map(|i| (i, j))
            });
        let standard = match sg_index {
            Some((i, j)) => {
                let d = self.regions.delta_chi2[j * self.conf.n_upsilon + i];
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
                json!({"id": o.id, "class": o.class.label(), "sigma": t.sigma, "test": t.test.name(), "sidedness": t.test.sidedness(), "source_file": o.source_file})
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
                        "test": self.driver_test(k).map(|t| t.name()),
                        "sidedness": self.driver_test(k).map(|t| t.sidedness()),
                        "sigma_best": opt_json(self.driver_sigma(k)),
                    })
                })
                .collect()
        };
        let worst: Vec<Value> = self
            .consistency
            .worst
            .iter()
            .map(|&(k, lnp)| {
                let key = TestKey::decode(k, self.vetted.objects.len());
                let o = self.object(key.object);
                let test = key.test.name();
                json!({"id": o.id, "class": o.class.label(), "probability": lnp.exp(), "test": test})
            })
            .collect();
        let failing: Vec<Value> = self
            .verdict_failures
            .iter()
            .map(|&(k, lnp)| {
                let key = TestKey::decode(k, self.vetted.objects.len());
                let o = self.object(key.object);
                let test = key.test.name();
                json!({"id": o.id, "class": o.class.label(), "test": test, "probability": lnp.exp()})
            })
            .collect();
        let best = &self.regions.best;
        let t = &self.settings.theory;
        let mmhb_mode = t.mmhb_mode.name();
        let class_counts: Vec<Value> = self
            .conf
            .class_counts
            .iter()
            .map(|(term, c)| {
                json!({
                    "class": term.name(),
                    "informative": c.n_informative(),
                    "skipped": c.n_skipped(),
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
                "wd_radius_floor_fraction": match self.eopts.radius.model {
                    crate::confront::wd_radius::WdRadiusModel::Cold => self.eopts.radius.cold_floor_fraction,
                    crate::confront::wd_radius::WdRadiusModel::Hot => self.eopts.radius.hot_floor_fraction,
                },
                "wd_radius_model": self.eopts.radius.model.name(),
                "wd_mass_prior": self.eopts.radius.mass_prior.name(),
                "wd_mass_prior_bandwidth_msun": self.conf.radius_mass_prior.as_ref().map(|p| p.bandwidth_msun()),
                "wd_floor_size": self.eopts.radius.floor_fit.name(),
                "wd_floor_scale": self.conf.radius_floor_scale.as_ref().map(|k| serde_json::json!({
                    "applied": k.applied,
                    "estimate": k.estimate,
                    "interval_2sigma": [k.interval.0, k.interval.1],
                    "delta_chi2_stated": k.delta_chi2_stated,
                })),
                "include_model_masses": self.eopts.radius.include_model_masses,
                "theory_floor": self.eopts.mass_terms.systematics.name(),
                "population_window_msun": self.eopts.population_window_msun.map(|(a, b)| vec![a, b]),
                "age_min_mmhb_gyr": self.eopts.age_min_mmhb_gyr,
                "include_young": self.eopts.include_young,
            },
            "best_fit": {
                "upsilon": best.upsilon,
                "tau": best.tau,
                "minus_two_ln_l": best.chi2_min,
                "on_grid_edge": best.on_grid_edge(self.conf.n_upsilon, self.conf.n_tau),
                "unique": self.regions.best_unique,
                "points_within_0_01": self.regions.near_best.n_points,
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
                "method": "Šidák over every test in the likelihood at the best fit: one-sided mass-bound probabilities (product form, whole floor per object), two-sided radius p-values 2Φ(−|z|) and one-sided spin (break-up) probabilities of the spin tests that can constrain some grid point",
                "failing": failing,
            },
            "statistics": self.statistics_json(),
            "upsilon_interval_at_tau0_by_floor": self.by_floor_json(),
            "profile_intervals": {
                "upsilon": levels_json(&self.profile.upsilon),
                "tau": levels_json(&self.profile.tau),
                "method": "one-parameter Δχ² ≤ 1, 4, 9 of min over the other parameter of the joint χ² on the grid (three-point parabola at the minimum); null = open (reaches the grid edge)",
            },
            "posterior": self.posterior_json(),
            "drivers_method": "leave-one-out under the likelihood used, on the τ = 0 slice: each mass-bound object removed from its bound's term with the shared shift eliminated again without it (per-object floors: its ln P subtracted; calibrated bounds: the mass function held fixed), each white dwarf's radius term removed (with the shared radius scale: the whole radius term rebuilt without it and the scale eliminated again), and each spin test removed",
            "tension_threshold_sigma": self.settings.statistics.tension_sigma,
            "tensions": tensions,
            "drivers": drivers,
            "class_counts": class_counts,
            "crowding_warning": self.crowd.is_some_and(|c| c.warn),
        })
    }
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
                    crate::confront::engine::Bound::Mmhb => p.mmhb.ok().map(|m| m.value_msun),
                    crate::confront::engine::Bound::Chandrasekhar => {
                        p.chandrasekhar.ok().map(|c| c.value_msun)
                    }
                });
                let mf = t.mass_function().map(|m| {
                    json!({
                        "objects": m.n_objects,
                        "fit": if m.grouped { "grouped" } else { "exact" },
                        "rows": m.n_rows,
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
                    "tabulation": {
                        "data_nodes": t.data_nodes(),
                        "eliminated_table_nodes": t.table_nodes(),
                        "check_points": t.n_check(),
                        "data_term_max_abs_minus_two_ln_l_error_over_whole_range":
                            opt_json(Some(t.data_error_over_range())),
                    },
                    "mass_function": mf,
                })
            })
            .collect();
        json!({
            "systematics": mt.systematics.name(),
            "nuisance_method": mt.method.name(),
            "likelihood_choice": mt.likelihood.name(),
            "mass_function_fit_choice": mt.calibrated.deconvolve.grouping.name(),
            "auto_rule": format!(
                "calibrated when at least {} objects of the bound's classes lie within {}σ of the grid's range of the bound, or at least {} when every one of them lies on the same side of it (a one-sided edge, which then uses the truncated-population probabilities)",
                mt.auto_min_near, mt.auto_z, mt.auto_min_near_edge
            ),
            "bounds": bounds,
        })
    }
}

impl OutputContext<'_> {
    /// `summary.json` key `upsilon_interval_at_tau0_by_floor`: the τ = 0 interval with the
    /// shared systematic and with per-object floors, side by side (`used` names the headline).
    fn by_floor_json(&self) -> Value {
        let used = self.eopts.mass_terms.systematics;
        let of =
            |s: Option<&SliceResult>| s.map_or(Value::Null, |s| levels_json(&s.slice.intervals));
        let this = of(self.slice);
        let other = of(self.slice_other_floor.map(|(_, s)| s));
        let (shared, per_object) = match used {
            Systematics::Shared => (this, other),
            Systematics::PerObject => (other, this),
        };
        json!({"used": used.name(), "shared": shared, "per_object": per_object})
    }

    /// `summary.json` key `posterior`: flat priors, marginal HPD intervals, 2-parameter HPD
    /// regions.
    fn posterior_json(&self) -> Value {
        let p = self.posterior;
        let mut regions = serde_json::Map::new();
        for (l, r) in Level::ALL.iter().zip(&p.regions) {
            regions.insert(
                l.key().into(),
                if r.n_points == 0 {
                    json!({"upsilon_min": null, "upsilon_max": null, "tau_min": null, "tau_max": null, "fraction_of_grid": 0.0, "delta_chi2_at_edge": null})
                } else {
                    json!({
                        "upsilon_min": r.upsilon_min,
                        "upsilon_max": r.upsilon_max,
                        "tau_min": r.tau_min,
                        "tau_max": r.tau_max,
                        "fraction_of_grid": r.fraction_of_grid,
                        "delta_chi2_at_edge": opt_json(Some(r.delta_chi2_at_edge)),
                    })
                },
            );
        }
        json!({
            "prior": crate::confront::profile::prior_text(self.surface.upsilon(), self.surface.tau()),
            "upsilon": levels_json(&p.upsilon),
            "tau": levels_json(&p.tau),
            "upsilon_prior_dominated": p.upsilon_prior_dominated,
            "tau_prior_dominated": p.tau_prior_dominated,
            "hpd_regions": Value::Object(regions),
        })
    }
}
