//! `dwarfbound vet`: read and vet catalogues, write `accepted.csv` and `quarantine.csv`, print
//! a summary.
//!
//! Only wiring: reading, vetting, summarising and CSV formatting live in
//! [`crate::catalogue`]. Exit 0 on success, 2 on a whole-file problem (one line naming the file
//! and column), 4 with `--strict` when any row was quarantined (the files are written first).
//!
//! ```text
//! dwarfbound vet catalogs-demo/messy_survey.csv --map catalogs-demo/messy_survey.map.toml --out reports/vet
//! ```

use super::{CliError, Exit, ReadArgs, VetArgs};
use crate::catalogue::export::quarantine_csv;
use crate::catalogue::table::ReadOptions;
use crate::catalogue::{CatalogueError, ColumnMap};
use crate::output::write_atomic;
use crate::pipeline::vet_stream::vet_to_accepted;

impl From<CatalogueError> for CliError {
    fn from(e: CatalogueError) -> Self {
        let msg = e.to_string().replace('\n', " ");
        if e.is_internal() {
            CliError::internal(msg)
        } else {
            CliError::usage(msg)
        }
    }
}

impl ReadArgs {
    /// Loads the column map and turns `--format` into reader options; shared by every command
    /// that reads catalogues.
    pub fn resolve(&self) -> Result<(Option<ColumnMap>, ReadOptions), CliError> {
        let map = match &self.map {
            Some(p) => Some(ColumnMap::load(p)?),
            None => None,
        };
        let format = self.format()?;
        Ok((
            map,
            ReadOptions {
                format,
                table: self.table.clone(),
            },
        ))
    }
}

/// Tension threshold of the standard-gravity flags (`confront` makes it configurable).
const TENSION_SIGMA: f64 = 3.0;

/// Runs `vet`.
pub fn run(args: VetArgs) -> Result<Exit, CliError> {
    let (map, opts) = args.read.resolve()?;
    let accepted_path = args.out.join("accepted.csv");
    let quarantine_path = args.out.join("quarantine.csv");
    // One pass: `accepted.csv` is written, the summary gathered and objects in tension with
    // standard gravity (default model) flagged as a first look while the files are read;
    // `confront` does the full comparison.
    let streamed = vet_to_accepted(
        &args.catalogs,
        map.as_ref(),
        &opts,
        &accepted_path,
        TENSION_SIGMA,
    )?;
    let vetted = &streamed.vetted;
    let tensions = &streamed.tensions;

    let quarantined = quarantine_csv(&vetted.quarantine)
        .map_err(|e| CliError::internal(format!("formatting quarantine.csv: {e}")))?;
    streamed.accepted.commit()?;
    write_atomic(&quarantine_path, &quarantined)?;

    let summary = &streamed.summary;
    let tension_rows: Vec<serde_json::Value> = tensions
        .iter()
        .map(|t| {
            serde_json::json!({"id": t.id, "class": t.class.label(), "source_file": t.source_file, "sigma": t.sigma})
        })
        .collect();
    if args.json {
        let mut value = serde_json::to_value(summary)
            .map_err(|e| CliError::internal(format!("formatting the JSON summary: {e}")))?;
        if let Some(obj) = value.as_object_mut() {
            obj.insert(
                "standard_gravity_tensions".into(),
                serde_json::Value::Array(tension_rows),
            );
        }
        let text = serde_json::to_string_pretty(&value)
            .map_err(|e| CliError::internal(format!("formatting the JSON summary: {e}")))?;
        println!("{text}");
    } else {
        print!("{}", summary.to_text());
        if tensions.is_empty() {
            println!(
                "no object in tension above {TENSION_SIGMA}σ with standard gravity (default model)"
            );
        } else {
            println!(
                "in tension with standard gravity (default model: anchored MMHB 0.075 ± 0.005 Msun, Chandrasekhar mass 5.82519/mu_e^2 ± 0.03 Msun), above {TENSION_SIGMA}σ:"
            );
            for t in tensions {
                println!(
                    "  {:<16} {:<12} {:.2}σ  ({})",
                    t.id,
                    t.class.label(),
                    t.sigma,
                    t.source_file
                );
            }
        }
        println!(
            "wrote {} ({} objects) and {} ({} rows)",
            accepted_path.display(),
            streamed.accepted_count,
            quarantine_path.display(),
            vetted.quarantine.len()
        );
    }
    if args.strict && !vetted.quarantine.is_empty() {
        eprintln!(
            "dwarfbound: --strict: {} row(s) quarantined, see {}",
            vetted.quarantine.len(),
            quarantine_path.display()
        );
        return Ok(Exit::Quarantined);
    }
    Ok(Exit::Ok)
}
