//! The command-line shell: argument parsing, exit codes and one-line error messages.
//!
//! Each subcommand lives in its own file and only wires library calls together; no physics and
//! no statistics are computed here. Exit codes are part of the user-facing contract and are
//! listed in the README.

use clap::{Args, Parser, Subcommand};
use std::path::PathBuf;
use std::str::FromStr;

use crate::catalogue::table::Format;
use crate::theory::mmhb::MmhbModel;
use crate::theory::{Anisotropy, Axis};

mod confront;
mod merge;
mod predict;
mod run;
mod vet;

/// Process exit codes (documented in the README).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Exit {
    /// Success.
    Ok = 0,
    /// Internal error: a bug, please report it.
    Internal = 1,
    /// Bad usage, unreadable or invalid input or config.
    Usage = 2,
    /// `run` found something new that needs a human (new tension, moved region).
    Alarm = 3,
    /// `vet --strict` quarantined rows.
    Quarantined = 4,
}

/// An error that ends the command: its exit code and a one-line message with context.
#[derive(Debug)]
pub struct CliError {
    /// Which exit code to use.
    pub exit: Exit,
    /// One line, naming the file, row and column where they are known.
    pub message: String,
}

impl CliError {
    /// Bad usage or invalid input (exit 2).
    pub fn usage(message: impl Into<String>) -> Self {
        Self {
            exit: Exit::Usage,
            message: message.into(),
        }
    }
    /// A bug (exit 1).
    pub fn internal(message: impl Into<String>) -> Self {
        Self {
            exit: Exit::Internal,
            message: message.into(),
        }
    }
}

impl From<crate::output::OutputError> for CliError {
    fn from(e: crate::output::OutputError) -> Self {
        // An unwritable output folder is the user's environment, not a bug.
        CliError::usage(e.to_string())
    }
}

/// dwarfbound: which (ϒ, τ) do your very-low-mass stars, brown dwarfs and white dwarfs still allow?
#[derive(Debug, Parser)]
#[command(name = "dwarfbound", version, about, long_about = None)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// Worked examples closing `vet --help` (run from the repository root, on the demo files).
const VET_EXAMPLES: &str = "\
Examples (from the repository root, on the invented demo catalogues):
  dwarfbound vet catalogs-demo/vlm_stars.csv catalogs-demo/brown_dwarfs.csv
      vet two catalogues; prints rows in/accepted/quarantined per class and writes
      reports/vet/accepted.csv and reports/vet/quarantine.csv
  dwarfbound vet catalogs-demo/messy_survey.csv --map catalogs-demo/messy_survey.map.toml --out reports/vet-messy
      rename and convert a survey's own columns with a column map: 48 rows in, 40 accepted,
      8 quarantined, each with its reason in quarantine.csv
  dwarfbound vet catalogs-demo/messy_survey.csv --map catalogs-demo/messy_survey.map.toml --strict --json
      the same summary as JSON; exit code 4 because rows were quarantined (for scripts)";

/// Worked examples closing `predict --help`.
const PREDICT_EXAMPLES: &str = "\
Examples:
  dwarfbound predict --upsilon 0.1 --tau 0
      every bound at one point, in words (MMHB, Chandrasekhar mass, Lane–Emden constants, …)
  dwarfbound predict --upsilon 0.1 --tau 0 --json
      the same as JSON (keys in the README, \"Keys of predict --json\")
  dwarfbound predict --upsilon=-0.3:0.6:91 --tau=-0.3:0.3:61 --out reports/predict
      a grid: bounds.csv, bounds.svg and bounds.png in reports/predict
  dwarfbound defaults
      every default of the theory and the statistics, with its unit and reason";

/// Worked examples closing `confront --help`.
const CONFRONT_EXAMPLES: &str = "\
Examples (from the repository root, on the invented demo catalogues):
  dwarfbound confront catalogs-demo/vlm_stars.csv catalogs-demo/brown_dwarfs.csv catalogs-demo/white_dwarfs.csv --out reports/demo
      the default grid (ϒ -0.3:0.6:46, τ -0.3:0.3:31); open reports/demo/report.html
  dwarfbound confront catalogs-demo/white_dwarfs.csv --upsilon=-0.1:0.1:41 --tau=-0.05:0.05:21 --out reports/zoom
      a finer grid around standard gravity, as the report's zoomed map suggests
  dwarfbound confront catalogs-demo/white_dwarfs.csv --tau 0 --wd-model cold --out reports/cold
      only the τ = 0 line, with the zero-temperature radius model of earlier versions";

/// Worked examples closing `run --help`.
const RUN_EXAMPLES: &str = "\
Examples (from the repository root):
  dwarfbound run catalogs-demo/nightly.toml
      a dated run folder under reports/nightly/runs/, `latest` pointing at it, and the
      difference from the previous run; exit code 3 when an alarm fires
  dwarfbound defaults > my-run.toml
      start a config from every default: add `output = \"reports/my-run\"` as its first line
      and a [[catalogue]] list, then `dwarfbound run my-run.toml`
  for i in 1 2 3 4; do dwarfbound run catalogs-demo/nightly.toml --shard $i/4; done
      the theory grid in four shards (on four machines, say); combine with `dwarfbound merge`";

/// Worked examples closing `merge --help`.
const MERGE_EXAMPLES: &str = "\
Examples (from the repository root):
  for i in 1 2 3 4; do dwarfbound run catalogs-demo/nightly.toml --shard $i/4; done
  dwarfbound merge reports/nightly/shards/*-of-4
      publish the merged grid as the config's next run (same result as one unsharded run)
  dwarfbound merge reports/nightly/shards/*-of-4 --out reports/merged
      write the merged result into one folder instead";

/// Worked examples closing `defaults --help`.
const DEFAULTS_EXAMPLES: &str = "\
Examples:
  dwarfbound defaults
      print the defaults, each with its unit, its reason and the docs/ section explaining it
  dwarfbound defaults > my-run.toml
      a run config to edit: add `output = \"reports/my-run\"` as its first line and
        [[catalogue]]
        path = \"catalogs-demo/vlm_stars.csv\"
      then `dwarfbound run my-run.toml` gives the result of `dwarfbound confront` on that file";

/// The subcommands (their names are part of the contract listed in the README).
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Read and vet catalogues; write accepted.csv and quarantine.csv.
    #[command(after_help = VET_EXAMPLES)]
    Vet(VetArgs),
    /// Theory only: bounds at one (ϒ, τ) point or over a grid.
    #[command(after_help = PREDICT_EXAMPLES)]
    Predict(PredictArgs),
    /// Vet, predict over a grid and confront: tensions, allowed region, maps, report.
    #[command(after_help = CONFRONT_EXAMPLES)]
    Confront(ConfrontArgs),
    /// The whole pipeline from one config file, with cache and run-to-run difference.
    #[command(after_help = RUN_EXAMPLES)]
    Run(RunArgs),
    /// Combine shard outputs of a grid split with --shard I/N into one result.
    #[command(after_help = MERGE_EXAMPLES)]
    Merge(MergeArgs),
    /// Print every default of the theory and statistics (unit, reason) as a `run` config.
    #[command(after_help = DEFAULTS_EXAMPLES)]
    Defaults,
}

/// Options shared by every command that reads catalogues.
#[derive(Debug, Args, Clone)]
pub struct ReadArgs {
    /// Column map (TOML) renaming the file's columns to the canonical ones.
    #[arg(long, value_name = "MAP.toml")]
    pub map: Option<PathBuf>,
    /// File format, overriding the file extension (csv, parquet, fits, votable, ecsv).
    #[arg(long)]
    pub format: Option<String>,
    /// FITS HDU or VOTable TABLE to read, by name or 0-based index (default: the first table;
    /// overrides the column map's `[options] table`).
    #[arg(long)]
    pub table: Option<String>,
}

impl ReadArgs {
    /// `--format` as a [`Format`]. Parsed here rather than by clap so that a bad name gives the
    /// one-line error of the other reading problems.
    pub fn format(&self) -> Result<Option<Format>, CliError> {
        self.format
            .as_deref()
            .map(|f| Format::from_str(f).map_err(|e| CliError::usage(format!("--format {e}"))))
            .transpose()
    }
}

/// Arguments of `vet`.
#[derive(Debug, Args)]
pub struct VetArgs {
    /// Catalogue files.
    #[arg(required = true, value_name = "CATALOG")]
    pub catalogs: Vec<PathBuf>,
    #[command(flatten)]
    pub read: ReadArgs,
    /// Output folder for accepted.csv and quarantine.csv.
    #[arg(long, default_value = "reports/vet")]
    pub out: PathBuf,
    /// Exit with code 4 if any row was quarantined.
    #[arg(long)]
    pub strict: bool,
    /// Print the summary as JSON instead of text.
    #[arg(long)]
    pub json: bool,
}

/// Theory options shared by `predict` and `confront`.
#[derive(Debug, Args, Clone)]
pub struct TheoryArgs {
    /// ϒ: a value (`0.1`) or a grid `start:stop:count` with inclusive ends.
    #[arg(long, allow_hyphen_values = true, value_parser = Axis::from_str)]
    pub upsilon: Option<Axis>,
    /// τ: a value or a grid `start:stop:count` with inclusive ends.
    #[arg(long, allow_hyphen_values = true, value_parser = Axis::from_str)]
    pub tau: Option<Axis>,
    /// Anisotropy ansatz that τ parametrises: density-squared, gradient or none.
    #[arg(long, value_name = "ANSATZ", value_parser = Anisotropy::from_str, default_value = "density-squared")]
    pub anisotropy: Anisotropy,
    /// MMHB model: `luminosity` (model A, luminosity balance; also `luminosity-balance`, `a`) or
    /// `ignition` (model B, ignition temperature; also `ignition-temperature`, `b`); any case.
    #[arg(long, value_name = "MODEL", value_parser = MmhbModel::from_str, default_value = "luminosity")]
    pub mmhb_model: MmhbModel,
}

/// Arguments of `predict`.
#[derive(Debug, Args)]
pub struct PredictArgs {
    #[command(flatten)]
    pub theory: TheoryArgs,
    /// Print JSON instead of text (single point).
    #[arg(long)]
    pub json: bool,
    /// Output folder for a grid (bounds.csv, bounds.svg, bounds.png).
    #[arg(long)]
    pub out: Option<PathBuf>,
}

/// Arguments of `confront`.
#[derive(Debug, Args)]
pub struct ConfrontArgs {
    /// Catalogue files.
    #[arg(required = true, value_name = "CATALOG")]
    pub catalogs: Vec<PathBuf>,
    #[command(flatten)]
    pub read: ReadArgs,
    #[command(flatten)]
    pub theory: TheoryArgs,
    /// Output folder.
    #[arg(long, default_value = "reports/latest")]
    pub out: PathBuf,
    /// Theory cache folder: reuse the bounds grid when nothing that determines it changed.
    #[arg(long, value_name = "DIR")]
    pub cache: Option<PathBuf>,
    /// List objects above this tension (σ) at standard gravity.
    #[arg(long, default_value_t = 3.0, value_name = "SIGMA")]
    pub tension_sigma: f64,
    /// Keep objects younger than the age limit (1 Gyr) in the MMHB test.
    #[arg(long)]
    pub include_young: bool,
    /// Standard-gravity white-dwarf radius model of the radius test: `hot` (finite temperature,
    /// H/He layers, electrostatic term; the default) or `cold` (the zero-temperature model of
    /// earlier versions, to reproduce old results).
    #[arg(long, value_name = "MODEL", default_value = "hot")]
    pub wd_model: crate::confront::wd_radius::WdRadiusModel,
    /// Prior on each white dwarf's true mass where the radius test marginalises over it:
    /// `population` (the white dwarfs' own mass function, deconvolved from their measured
    /// masses; the default) or `flat` (earlier versions' likelihood, to reproduce old results;
    /// it biases the test toward a false signal when there are thousands of white dwarfs).
    #[arg(long, value_name = "PRIOR", default_value = "population")]
    pub wd_mass_prior: crate::confront::wd_radius::RadiusMassPrior,
    /// Size of the per-object floor of the radius test: `fitted` (the stated floor unless the
    /// white dwarfs scatter less about standard gravity than it says, at 2σ; then shrunk only
    /// to the widest floor they allow; never widened; the default) or `fixed` (the stated
    /// floor always, as earlier versions; with thousands of white dwarfs a floor larger than
    /// their real scatter pulls τ away from 0).
    #[arg(long, value_name = "SIZE", default_value = "fitted")]
    pub wd_floor_size: crate::confront::wd_radius::FloorFit,
    /// Keep objects whose mass came through a standard-gravity model (`mass_method = model`)
    /// in their tests, although that is circular.
    #[arg(long)]
    pub include_model_masses: bool,
    /// Keep white dwarfs outside the radius model's domain (extremely low mass) in the radius
    /// test where a model radius exists.
    #[arg(long)]
    pub include_out_of_domain: bool,
    /// Population-aware likelihood (docs/bounds.md §8.7) with this mass window around the
    /// MMHB, `LO:HI` in M☉ (e.g. 0.04:0.11); for catalogues crowded near the limit.
    #[arg(long, value_name = "LO:HI")]
    pub population_window: Option<String>,
    /// Theory floors of the bounds: `shared` (one shift per bound, and one 2.5 % scale on every
    /// white-dwarf radius, each a nuisance parameter; default) or `per-object` (an independent
    /// error per object, as in earlier versions).
    #[arg(long, value_enum, default_value_t = FloorArg::Shared, value_name = "MODE")]
    pub floor: FloorArg,
    /// How a shared shift is eliminated: `profile` (default) or `marginalise`.
    #[arg(long, value_enum, default_value_t = NuisanceArg::Profile, value_name = "METHOD")]
    pub nuisance: NuisanceArg,
    /// Likelihood of the class labels: `auto` (default; calibrated where many objects crowd a
    /// bound), `product` or `calibrated`.
    #[arg(long, value_enum, default_value_t = LikelihoodArg::Auto, value_name = "MODEL")]
    pub likelihood: LikelihoodArg,
    /// The calibrated likelihood's mass-function fit: `auto` (default; exact up to 16 384
    /// objects in one fit, grouped above, docs/bounds.md §8.9), `exact` (one row per object
    /// whatever the size: memory grows with the catalogue) or `grouped`.
    #[arg(long, value_enum, default_value_t = MassFunctionFitArg::Auto, value_name = "FIT")]
    pub mass_function_fit: MassFunctionFitArg,
    /// Format of the per-object table: `csv` (objects.csv, the default) or `parquet`
    /// (objects.parquet, typed and compressed; for catalogues of millions of objects).
    #[arg(long, value_enum, default_value_t = ObjectsFormatArg::Csv, value_name = "FORMAT")]
    pub objects_format: ObjectsFormatArg,
}

/// `--objects-format` values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum ObjectsFormatArg {
    /// objects.csv
    Csv,
    /// objects.parquet
    Parquet,
}

/// Arguments of `run`.
#[derive(Debug, Args)]
pub struct RunArgs {
    /// Configuration file (TOML).
    #[arg(value_name = "CONFIG.toml")]
    pub config: PathBuf,
    /// Compute only shard I of N of the grid, e.g. `2/4`.
    #[arg(long, value_name = "I/N")]
    pub shard: Option<String>,
    /// Wait for another run's lock on the output folder instead of failing.
    #[arg(long)]
    pub wait: bool,
    /// Remove the output folder's (or the shard folder's) lock first, whoever holds it: for a
    /// lock left by a dead run on another host, which is never taken over automatically.
    #[arg(long)]
    pub break_lock: bool,
    /// Keep the N newest runs in <output>/runs/ (this one included) and the N most recently used
    /// theory cache entries, removing the oldest (overrides the config's `keep`).
    #[arg(long, value_name = "N")]
    pub keep: Option<usize>,
}

/// Arguments of `merge`.
#[derive(Debug, Args)]
pub struct MergeArgs {
    /// Shard output folders.
    #[arg(required = true, value_name = "DIR")]
    pub dirs: Vec<PathBuf>,
    /// Write the merged result here instead of publishing it as the config's next run
    /// (a new run folder, compared with the previous run, `latest` switched to it).
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Remove the output folder's lock first, whoever holds it (see `run --break-lock`).
    #[arg(long)]
    pub break_lock: bool,
}

/// Runs the parsed command line and returns the exit code to use.
pub fn main_with(cli: Cli) -> Exit {
    let result = match cli.command {
        Command::Vet(a) => vet::run(a),
        Command::Predict(a) => predict::run(a),
        Command::Confront(a) => confront::run(a),
        Command::Run(a) => run::run(a),
        Command::Merge(a) => merge::run(a),
        Command::Defaults => {
            print!("{}", crate::pipeline::defaults::defaults_toml());
            Ok(Exit::Ok)
        }
    };
    match result {
        Ok(code) => code,
        Err(e) => {
            eprintln!("dwarfbound: error: {}", e.message);
            if e.exit == Exit::Internal {
                eprintln!(
                    "dwarfbound: this is a bug; please report it with the command line above"
                );
            }
            e.exit
        }
    }
}

/// `--floor` values (names as in a `run` config's `statistics.floor`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum FloorArg {
    /// One shift per bound, a nuisance parameter.
    Shared,
    /// An independent error per object.
    PerObject,
}

/// `--nuisance` values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum NuisanceArg {
    /// Minimise over the shift.
    Profile,
    /// Integrate over the shift.
    Marginalise,
}

/// `--mass-function-fit` values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum MassFunctionFitArg {
    /// Exact up to 16 384 objects in one fit, grouped above.
    Auto,
    /// One row per object, whatever the catalogue's size.
    Exact,
    /// Objects grouped by mass and error, whatever the catalogue's size.
    Grouped,
}

/// `--likelihood` values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum LikelihoodArg {
    /// Calibrated where many objects crowd a bound, else product.
    Auto,
    /// Product of one-sided probabilities.
    Product,
    /// Calibrated by a deconvolved mass function.
    Calibrated,
}
