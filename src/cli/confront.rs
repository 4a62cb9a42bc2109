//! `dwarfbound confront`: vet the catalogues, predict the bounds over a grid, confront, report.

use super::{CliError, ConfrontArgs, Exit};
use crate::pipeline::cache::Cache;
use crate::pipeline::confront::{
    run_confrontation, CatalogueInput, ConfrontOutcome, ConfrontSettings, ObjectsFormat,
    PipelineError, StatisticsSettings, TheorySource,
};
use crate::pipeline::defaults::{DEFAULT_TAU, DEFAULT_UPSILON};
use crate::pipeline::history::{now_unix_s, utc_stamp};
use crate::theory::point::TheorySettings;

impl From<PipelineError> for CliError {
    fn from(e: PipelineError) -> Self {
        match e {
            PipelineError::Catalogue(c) => c.into(),
            PipelineError::Internal(m) => CliError::internal(m),
            other => CliError::usage(other.to_string().replace('\n', " ")),
        }
    }
}

/// Prints the few lines a researcher reads first.
pub(super) fn print_outcome(o: &ConfrontOutcome, out: &std::path::Path) {
    let s = &o.summary;
    let (rin, racc, rq) = o.rows;
    println!("catalogues: {rin} rows in, {racc} accepted, {rq} quarantined");
    if s["consistency"]["n_informative"].as_u64() == Some(0) {
        // A flat likelihood has no best fit, interval or verdict worth a line.
        println!("no object constrains the bounds on this grid: nothing is tested");
    } else {
        print_findings(o);
    }
    if let Some(note) = &o.cache_note {
        eprintln!("dwarfbound: note: {note}");
    }
    println!(
        "theory grid: {}",
        if o.theory_from_cache {
            "reused from the cache"
        } else {
            "computed"
        }
    );
    println!("wrote {}/report.html and the other outputs", out.display());
}

/// The best fit, the headline interval, standard gravity's standing and the tensions.
fn print_findings(o: &ConfrontOutcome) {
    let s = &o.summary;
    let bf = &s["best_fit"];
    let plateau = match (bf["unique"].as_bool(), bf["points_within_0_01"].as_u64()) {
        (Some(false), Some(n)) => format!("; not unique: {n} grid points within Δχ² 0.01"),
        _ => String::new(),
    };
    println!(
        "best fit: ϒ = {}, τ = {} (−2 ln L = {:.4}{plateau})",
        bf["upsilon"],
        bf["tau"],
        bf["minus_two_ln_l"].as_f64().unwrap_or(f64::NAN)
    );
    let iv = &s["upsilon_interval_at_tau0"]["cl95"];
    let end = |v: &serde_json::Value| match v.as_f64() {
        Some(x) => format!("{x:.4}"),
        None => "open".to_string(),
    };
    println!(
        "95.45 % interval in ϒ at τ = 0: [{}, {}]",
        end(&iv["lower"]),
        end(&iv["upper"])
    );
    let sg = &s["standard_gravity"]["allowed_cl95"];
    println!(
        "standard gravity (ϒ = τ = 0) {}",
        match sg.as_bool() {
            Some(true) => "lies inside the 95.45 % region",
            Some(false) => "lies OUTSIDE the 95.45 % region",
            None => "is not on the grid",
        }
    );
    if !o.consistent {
        println!("WARNING: no grid point is consistent with the catalogues at 95.45 % (see the report for the objects responsible)");
    }
    if o.tensions.is_empty() {
        println!("tensions: none above the threshold");
    } else {
        println!("tensions at standard gravity:");
        for (id, class, z) in &o.tensions {
            println!("  {id:<16} {class:<12} {z:.2}σ");
        }
    }
}

/// Parses a mass window `LO:HI` in M☉.
pub(super) fn parse_window(text: &str) -> Result<(f64, f64), CliError> {
    let bad = || {
        CliError::usage(format!(
            "--population-window `{text}` is not LO:HI in Msun with 0 < LO < HI (e.g. 0.04:0.11)"
        ))
    };
    let (a, b) = text.split_once(':').ok_or_else(bad)?;
    let (lo, hi): (f64, f64) = (
        a.trim().parse().map_err(|_| bad())?,
        b.trim().parse().map_err(|_| bad())?,
    );
    if lo.is_finite() && hi.is_finite() && 0.0 < lo && lo < hi {
        Ok((lo, hi))
    } else {
        Err(bad())
    }
}

/// Runs `confront`.
pub fn run(args: ConfrontArgs) -> Result<Exit, CliError> {
    let format = args.read.format()?;
    let theory = TheorySettings {
        anisotropy: args.theory.anisotropy,
        mmhb_model: args.theory.mmhb_model,
        ..TheorySettings::default()
    };
    if !(args.tension_sigma.is_finite() && args.tension_sigma > 0.0) {
        return Err(CliError::usage("--tension-sigma must be a positive number"));
    }
    let mut statistics = StatisticsSettings {
        tension_sigma: args.tension_sigma,
        ..StatisticsSettings::default()
    };
    statistics.engine.include_young = args.include_young;
    statistics.engine.radius.model = args.wd_model;
    statistics.engine.radius.mass_prior = args.wd_mass_prior;
    statistics.engine.radius.floor_fit = args.wd_floor_size;
    statistics.engine.radius.include_model_masses = args.include_model_masses;
    statistics.engine.radius.include_out_of_domain = args.include_out_of_domain;
    if let Some(w) = &args.population_window {
        statistics.engine.population_window_msun = Some(parse_window(w)?);
    }
    crate::pipeline::config::apply_statistics_choices(
        &mut statistics.engine,
        match args.floor {
            super::FloorArg::Shared => "shared",
            super::FloorArg::PerObject => "per-object",
        },
        match args.nuisance {
            super::NuisanceArg::Profile => "profile",
            super::NuisanceArg::Marginalise => "marginalise",
        },
        match args.likelihood {
            super::LikelihoodArg::Auto => "auto",
            super::LikelihoodArg::Product => "product",
            super::LikelihoodArg::Calibrated => "calibrated",
        },
        match args.mass_function_fit {
            super::MassFunctionFitArg::Auto => "auto",
            super::MassFunctionFitArg::Exact => "exact",
            super::MassFunctionFitArg::Grouped => "grouped",
        },
    )
    .map_err(|(key, msg)| CliError::usage(format!("--{} {msg}", key.replace('_', "-"))))?;
    let settings = ConfrontSettings {
        catalogues: args
            .catalogs
            .iter()
            .map(|p| CatalogueInput {
                path: p.clone(),
                map: args.read.map.clone(),
                format,
                table: args.read.table.clone(),
            })
            .collect(),
        upsilon: args.theory.upsilon.unwrap_or(DEFAULT_UPSILON),
        tau: args.theory.tau.unwrap_or(DEFAULT_TAU),
        theory,
        statistics,
        objects_format: match args.objects_format {
            super::ObjectsFormatArg::Csv => ObjectsFormat::Csv,
            super::ObjectsFormatArg::Parquet => ObjectsFormat::Parquet,
        },
    };
    let cache = args.cache.as_deref().map(Cache::new);
    let (generated_at, _) = utc_stamp(now_unix_s());
    let outcome = run_confrontation(
        &settings,
        &args.out,
        TheorySource::Compute {
            cache: cache.as_ref(),
        },
        &generated_at,
        None,
    )?;
    print_outcome(&outcome, &args.out);
    Ok(Exit::Ok)
}
