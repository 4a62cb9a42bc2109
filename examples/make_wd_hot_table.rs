//! Writes `assets/wd_hot_table.csv`, the standard-gravity finite-temperature white-dwarf radii
//! that `dwarfbound::theory::hot_wd::table` embeds.
//!
//! Run in the dev profile, where our crate is compiled at opt-level 3 (Cargo.toml):
//!
//! ```text
//! cargo run --example make_wd_hot_table            # writes assets/wd_hot_table.csv
//! cargo run --example make_wd_hot_table -- OUT.csv # writes elsewhere
//! ```
//!
//! The grid is `TableSpec::standard()` and every node is a full hot solve with
//! `HotOptions::default()`; the output is byte-identical on every run (rows in grid order).

use std::path::PathBuf;
use std::time::Instant;

use dwarfbound::output::write_atomic;
use dwarfbound::theory::hot_wd::table::{generate_csv, nodes, TableSpec};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let out = std::env::args()
        .nth(1)
        .map(PathBuf::from)
        .unwrap_or_else(|| {
            PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("assets/wd_hot_table.csv")
        });
    let spec = TableSpec::standard();
    let start = Instant::now();
    let csv = generate_csv(&spec)?;
    write_atomic(&out, csv.as_bytes())?;
    let secs = start.elapsed().as_secs_f64();
    let n = nodes(&spec).len();
    println!(
        "{n} nodes in {secs:.1} s ({:.3} s per node over {} threads) -> {}",
        secs / n as f64,
        rayon::current_num_threads(),
        out.display()
    );
    Ok(())
}
