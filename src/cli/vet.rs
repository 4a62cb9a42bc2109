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
use crate::catalogue::export::{quarantine_csv, write_accepted};
use crate::catalogue::summary::VetSummary;
use crate::catalogue::table::ReadOptions;
use crate::catalogue::{vet_files, CatalogueError, ColumnMap};
use crate::output::{write_atomic, AtomicFile};

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
    let vetted = vet_files(&args.catalogs, map.as_ref(), &opts)?;

    // Flag objects in tension with standard gravity under the default model, as a first look;
    // `confront` does the full comparison.
    let tensions =
        crate::pipeline::confront::standard_gravity_tensions(&vetted.objects, TENSION_SIGMA)?;

    let quarantined = quarantine_csv(&vetted.quarantine)
        .map_err(|e| CliError::internal(format!("formatting quarantine.csv: {e}")))?;
    let accepted_path = args.out.join("accepted.csv");
    let quarantine_path = args.out.join("quarantine.csv");
    // Streamed into its temporary file, then renamed into place like every output.
    let mut accepted = AtomicFile::create(&accepted_path)?;
    write_accepted(&mut accepted, &vetted.objects)
        .map_err(|e| CliError::internal(format!("writing accepted.csv: {e}")))?;
    accepted.commit()?;
    write_atomic(&quarantine_path, &quarantined)?;

    let summary = VetSummary::from_vetted(&vetted);
    let tension_rows: Vec<serde_json::Value> = tensions
        .iter()
        .map(|&(k, z)| {
            let o = &vetted.objects[k];
            serde_json::json!({"id": o.id, "class": o.class.label(), "source_file": o.source_file, "sigma": z})
        })
        .collect();
    if args.json {
        let mut value = serde_json::to_value(&summary)
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
            for &(k, z) in &tensions {
                let o = &vetted.objects[k];
                println!(
                    "  {:<16} {:<12} {z:.2}σ  ({})",
                    o.id,
                    o.class.label(),
                    o.source_file
                );
            }
        }
        println!(
            "wrote {} ({} objects) and {} ({} rows)",
            accepted_path.display(),
            vetted.objects.len(),
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
