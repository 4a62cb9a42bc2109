//! `dwarfbound predict`: see the README for what it does.

use super::{CliError, Exit, PredictArgs};

/// Runs `predict`.
pub fn run(_args: PredictArgs) -> Result<Exit, CliError> {
    Err(CliError::internal("`predict` is not built yet"))
}
