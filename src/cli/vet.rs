//! `dwarfbound vet`: read and vet catalogues, write `accepted.csv` and `quarantine.csv`, print
//! a summary.
//!
//! Only wiring: reading, vetting, summarising and CSV formatting live in
//! [`crate::catalogue`]. Exit 0 on success, 2 on a whole-file problem (one line naming the file
//! and column), 4 with `--strict` when any row was quarantined (the files are written first).
//!
//! ```text
//! dwarfbound vet catalogs-demo/messy.csv --map catalogs-demo/messy.map.toml --out reports/vet
//! ```

use super::{CliError, Exit, ReadArgs, VetArgs};
use crate::catalogue::export::{accepted_csv, quarantine_csv};
use crate::catalogue::summary::VetSummary;
use crate::catalogue::table::{Format, ReadOptions};
use crate::catalogue::{vet_files, CatalogueError, ColumnMap};
use crate::output::write_atomic;

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
        let format = match &self.format {
            Some(f) => Some(Format::from_name(f).ok_or_else(|| {
                CliError::usage(format!(
                    "--format `{f}` is not one of csv, parquet, fits, votable, ecsv"
                ))
            })?),
            None => None,
        };
        Ok((
            map,
            ReadOptions {
                format,
                table: None,
            },
        ))
    }
}

/// Runs `vet`.
pub fn run(args: VetArgs) -> Result<Exit, CliError> {
    let (map, opts) = args.read.resolve()?;
    let vetted = vet_files(&args.catalogs, map.as_ref(), &opts)?;

    // Place for the "tension with standard gravity" flags of `../shared/CONVENTIONS.md`: once
    // the theory module can evaluate the standard-gravity bounds, each accepted object will be
    // compared with them here and flagged in the summary. Nothing is computed or printed for it
    // until then.

    let accepted = accepted_csv(&vetted.objects)
        .map_err(|e| CliError::internal(format!("formatting accepted.csv: {e}")))?;
    let quarantined = quarantine_csv(&vetted.quarantine)
        .map_err(|e| CliError::internal(format!("formatting quarantine.csv: {e}")))?;
    let accepted_path = args.out.join("accepted.csv");
    let quarantine_path = args.out.join("quarantine.csv");
    write_atomic(&accepted_path, &accepted)?;
    write_atomic(&quarantine_path, &quarantined)?;

    let summary = VetSummary::from_vetted(&vetted);
    if args.json {
        let text = serde_json::to_string_pretty(&summary)
            .map_err(|e| CliError::internal(format!("formatting the JSON summary: {e}")))?;
        println!("{text}");
    } else {
        print!("{}", summary.to_text());
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
