//! `dwarfbound merge DIR...`: combine theory shards (`run --shard I/N`) into one result.

use super::{CliError, Exit, MergeArgs};
use crate::pipeline::nightly::merge_shards;

/// Runs `merge`.
pub fn run(args: MergeArgs) -> Result<Exit, CliError> {
    let outcome = merge_shards(&args.dirs, &args.out)?;
    super::confront::print_outcome(&outcome, &args.out);
    Ok(Exit::Ok)
}
