//! `dwarfbound run`: see the README for what it does.

use super::{CliError, Exit, RunArgs};

/// Runs `run`.
pub fn run(_args: RunArgs) -> Result<Exit, CliError> {
    Err(CliError::internal("`run` is not built yet"))
}
