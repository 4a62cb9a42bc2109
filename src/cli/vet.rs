//! `dwarfbound vet`: see the README for what it does.

use super::{CliError, Exit, VetArgs};

/// Runs `vet`.
pub fn run(_args: VetArgs) -> Result<Exit, CliError> {
    Err(CliError::internal("`vet` is not built yet"))
}
