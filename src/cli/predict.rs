//! `dwarfbound predict`: the theory alone. At one (ϒ, τ) it prints every bound and the
//! Lane–Emden constants (text, or `--json` with the keys documented in the README); with
//! `--out DIR` (a grid or a single point) it writes `bounds.csv` and the bounds figure. A thin
//! shell: the numbers, the files and both printouts come from [`crate::pipeline::predict`].

use super::{CliError, Exit, PredictArgs};
use crate::pipeline::predict::{
    grid_json, grid_text, json_text, point_json, point_text, predict_grid, predict_point,
};
use crate::theory::point::TheorySettings;
use crate::theory::Axis;

/// Runs `predict`.
pub fn run(args: PredictArgs) -> Result<Exit, CliError> {
    let one = Axis {
        start: 0.0,
        stop: 0.0,
        count: 1,
    };
    let upsilon = args.theory.upsilon.unwrap_or(one);
    let tau = args.theory.tau.unwrap_or(one);
    let settings = TheorySettings {
        anisotropy: args.theory.anisotropy,
        mmhb_model: args.theory.mmhb_model,
        ..TheorySettings::default()
    };
    let text = match &args.out {
        Some(dir) => {
            let g = predict_grid(upsilon, tau, &settings, dir)?;
            if args.json {
                json_text(&grid_json(&g, &settings))?
            } else {
                grid_text(&g, &settings)
            }
        }
        None => {
            if upsilon.count != 1 || tau.count != 1 {
                return Err(CliError::usage(
                    "a grid (start:stop:count) needs --out DIR for bounds.csv and the figure",
                ));
            }
            let p = predict_point(&settings, upsilon.start, tau.start)?;
            if args.json {
                json_text(&point_json(&p, &settings))?
            } else {
                point_text(&p, &settings)
            }
        }
    };
    emit(&text)?;
    Ok(Exit::Ok)
}

/// Writes to stdout; a closed pipe (`| head`) ends the output quietly.
fn emit(text: &str) -> Result<(), CliError> {
    use std::io::Write;
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|_| out.flush()) {
        Ok(()) => Ok(()),
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(()),
        Err(e) => Err(CliError::internal(format!("cannot write to stdout: {e}"))),
    }
}
