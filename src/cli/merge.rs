//! `dwarfbound merge DIR...`: combine theory shards (`run --shard I/N`) into one result.

use super::{CliError, Exit, MergeArgs};
use crate::pipeline::nightly::merge_shards;

/// Runs `merge`.
pub fn run(args: MergeArgs) -> Result<Exit, CliError> {
    let report = merge_shards(&args.dirs, args.out.as_deref(), args.break_lock)?;
    super::run::finish(&report)
}
