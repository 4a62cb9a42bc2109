//! `dwarfbound confront`: see the README for what it does.

use super::{CliError, ConfrontArgs, Exit};

/// Runs `confront`.
pub fn run(_args: ConfrontArgs) -> Result<Exit, CliError> {
    Err(CliError::internal("`confront` is not built yet"))
}
