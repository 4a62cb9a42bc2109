//! `dwarfbound run CONFIG.toml`: the nightly job (see [`crate::pipeline::nightly`]).

use super::{CliError, Exit, RunArgs};
use crate::pipeline::nightly::{run_nightly, NightlyError, NightlyOptions};
use crate::theory::grid::Shard;

impl From<NightlyError> for CliError {
    fn from(e: NightlyError) -> Self {
        match e {
            NightlyError::Pipeline(p) => p.into(),
            other => CliError::usage(other.to_string().replace('\n', " ")),
        }
    }
}

/// Runs `run`.
pub fn run(args: RunArgs) -> Result<Exit, CliError> {
    let shard = match &args.shard {
        Some(s) => Some(Shard::parse(s).map_err(|e| CliError::usage(format!("--shard: {e}")))?),
        None => None,
    };
    let report = run_nightly(
        &args.config,
        &NightlyOptions {
            shard,
            wait: args.wait,
            break_lock: args.break_lock,
            keep: args.keep,
        },
    )?;
    finish(&report)
}

/// Prints a nightly report and chooses the exit code (3 when an alarm fired); shared by `run`
/// and `merge`.
pub(super) fn finish(report: &crate::pipeline::nightly::NightlyReport) -> Result<Exit, CliError> {
    if let Some(pid) = report.took_over_lock_from {
        eprintln!(
            "dwarfbound: note: took over the stale lock of a run that no longer exists (pid {pid})"
        );
    }
    for line in &report.housekeeping {
        eprintln!("dwarfbound: note: {line}");
    }
    let Some(outcome) = &report.outcome else {
        if let Some(note) = &report.cache_note {
            eprintln!("dwarfbound: note: {note}");
        }
        println!(
            "wrote the theory shard into {} (combine the shards with `dwarfbound merge`)",
            report.run_dir.display()
        );
        return Ok(Exit::Ok);
    };
    super::confront::print_outcome(outcome, &report.run_dir);
    if let Some(d) = &outcome.difference {
        let lines = d.lines();
        match &d.previous {
            None => println!("since the previous run: this is the first run"),
            Some(_) if lines.is_empty() => println!("since the previous run: nothing changed"),
            Some(_) => {
                println!("since the previous run:");
                for l in lines {
                    println!("  {l}");
                }
            }
        }
    }
    if report.alarms.is_empty() {
        Ok(Exit::Ok)
    } else {
        eprintln!("dwarfbound: alarm: {}", report.alarms.join("; "));
        Ok(Exit::Alarm)
    }
}
