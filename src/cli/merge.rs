//! `dwarfbound merge`: see the README for what it does.

use super::{CliError, Exit, MergeArgs};

/// Runs `merge`.
pub fn run(_args: MergeArgs) -> Result<Exit, CliError> {
    Err(CliError::internal("`merge` is not built yet"))
}
