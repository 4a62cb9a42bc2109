//! Benchmark of the theory engine (run by `benches/run.sh`, which also runs the scipy reference
//! `tools/bench_reference.py` on the same equations and prints the ratios).
//!
//! Run in the dev profile, where our crate is compiled at opt-level 3 (Cargo.toml):
//!
//! ```text
//! cargo run --example bench            # full: 201×201 grids
//! cargo run --example bench -- 51      # smaller grids
//! ```
//!
//! Prints `RESULT <key> <value>` lines for the script and a readable summary.

use std::time::Instant;

use dwarfbound::theory::grid::{compute, GridOptions, TheoryGrid};
use dwarfbound::theory::lane_emden::{LaneEmdenOptions, ModifiedLaneEmden};
use dwarfbound::theory::point::TheorySettings;
use dwarfbound::theory::white_dwarf::{radius_direct_rsun, ChandrasekharEos, WdMassRadius};
use dwarfbound::theory::{Anisotropy, Axis};

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    v[v.len() / 2]
}

/// Median wall time of one solve, µs, over `reps` solves timed one by one.
fn time_solve(n: f64, extra: &[f64], xi_start: f64, reps: usize) -> (f64, f64, f64) {
    let le = ModifiedLaneEmden::new(n, 0.1, 0.1, Anisotropy::DensitySquared).expect("valid");
    let opts = LaneEmdenOptions {
        rtol: 1e-10,
        atol: 1e-12,
        xi_start,
        extra_powers: extra.to_vec(),
        ..LaneEmdenOptions::default()
    };
    let mut times = Vec::with_capacity(reps);
    let mut last = None;
    for _ in 0..reps {
        let t = Instant::now();
        let s = le.solve(&opts).expect("solves");
        times.push(t.elapsed().as_secs_f64() * 1e6);
        last = Some(s);
    }
    let s = last.expect("at least one rep");
    (median(times), s.xi1, s.omega)
}

/// CPU time of this process (all threads), seconds, from /proc/self/stat (Linux; clock ticks of
/// 1/100 s, the usual USER_HZ). `None` elsewhere.
fn cpu_seconds() -> Option<f64> {
    let stat = std::fs::read_to_string("/proc/self/stat").ok()?;
    let rest = &stat[stat.rfind(')')? + 2..];
    let fields: Vec<&str> = rest.split_whitespace().collect();
    // After the command name: state is field 3, utime field 14, stime field 15 (1-based).
    let utime: f64 = fields.get(11)?.parse().ok()?;
    let stime: f64 = fields.get(12)?.parse().ok()?;
    Some((utime + stime) / 100.0)
}

fn grid_run(label: &str, n: usize, settings: &TheorySettings, wd: bool) -> TheoryGrid {
    let upsilon = Axis {
        start: -0.3,
        stop: 0.6,
        count: n,
    };
    let tau = Axis {
        start: -0.3,
        stop: 0.3,
        count: n,
    };
    let cpu0 = cpu_seconds();
    let t = Instant::now();
    let g = compute(
        upsilon,
        tau,
        settings,
        &GridOptions {
            with_wd_tables: wd,
            shard: None,
            quiet: true,
        },
    )
    .expect("grid");
    let secs = t.elapsed().as_secs_f64();
    let cpu = cpu_seconds().zip(cpu0).map(|(b, a)| b - a);
    let t = Instant::now();
    let bytes = g.to_json_bytes().expect("serialises");
    let ser = t.elapsed().as_secs_f64();
    println!("RESULT {label}_s {secs:.3}");
    if let Some(cpu) = cpu {
        println!("RESULT {label}_cpu_s {cpu:.2}");
        println!(
            "  {label}: {cpu:.2} CPU-seconds (all threads): {:.2} s of wall time on 2 otherwise idle cores",
            cpu / 2.0
        );
    }
    println!(
        "  {label}: {n}×{n} points in {secs:.2} s; {} without a full model; cache bytes {:.1} MB (serialised in {ser:.2} s)",
        g.points_without_model(),
        bytes.len() as f64 / 1e6
    );
    for c in &g.interpolation_checks {
        println!(
            "  {label}: interpolation of {}: max relative error {:.2e} over {} off-node samples (worst at ϒ = {:?}, τ = {:?})",
            c.quantity, c.max_relative_error, c.samples, c.worst_upsilon, c.worst_tau
        );
        let key = if c.quantity.starts_with("break-up") {
            "breakup"
        } else if c.quantity.starts_with("white-dwarf") {
            "wd"
        } else {
            "sc"
        };
        println!(
            "RESULT {label}_interp_err_{key} {:.3e}",
            c.max_relative_error
        );
    }
    g
}

fn main() {
    let n: usize = std::env::args()
        .nth(1)
        .and_then(|s| s.parse().ok())
        .unwrap_or(201);
    let threads = rayon::current_num_threads();
    println!("RESULT threads {threads}");
    println!("dwarfbound theory benchmark (dev profile, our crate at opt-level 3; {threads} rayon threads)");

    // One modified Lane–Emden solve, ϒ = 0.1, τ = 0.1 (density-squared), rtol 1e-10, atol 1e-12,
    // from ξ0 = 1e-4 like the scipy script and the grid.
    for (key, nn, extra) in [
        ("le_n15", 1.5, &[][..]),
        ("le_n15_jk", 1.5, &[9.73][..]),
        ("le_n3", 3.0, &[][..]),
    ] {
        let (us, xi1, omega) = time_solve(nn, extra, 1e-4, 2001);
        println!("RESULT {key}_us {us:.2}");
        println!("  one solve {key}: median {us:.1} µs (ξ1 = {xi1:.10}, ω = {omega:.10})");
    }

    // White-dwarf table: cost and its own accuracy against direct root searches.
    let settings = TheorySettings::default();
    let opts = settings.wd_table_options();
    let t = Instant::now();
    let table = WdMassRadius::new(0.0, 0.0, Anisotropy::None, &opts).expect("table");
    let table_ms = t.elapsed().as_secs_f64() * 1e3;
    let eos = ChandrasekharEos::new(0.0, 0.0, Anisotropy::None).expect("eos");
    let mut worst: f64 = 0.0;
    for m in [0.05, 0.2, 0.6, 1.0, 1.2, 1.35] {
        let a = table.radius_rsun(m, 2.0).expect("radius");
        let b = radius_direct_rsun(&eos, table.mass_ch_dimless(), m, 2.0).expect("direct");
        worst = worst.max((a / b - 1.0).abs());
    }
    println!("RESULT wd_table_ms {table_ms:.2}");
    println!("RESULT wd_table_err {worst:.3e}");
    println!(
        "  one white-dwarf table ({} models, {} per decade): {table_ms:.1} ms; R(M) from it vs direct solves at 0.05–1.35 M☉: max relative error {worst:.2e}",
        table.log10_xc().len(),
        opts.points_per_decade
    );

    // Grids.
    let g = grid_run("grid_scalar", n, &settings, false);
    let _ = g;
    let gradient = TheorySettings {
        anisotropy: Anisotropy::Gradient,
        ..settings
    };
    grid_run("grid_scalar_gradient", n, &gradient, false);
    let mut exact = settings;
    exact.numerics.breakup_grid_stride = 1;
    exact.numerics.sc_grid_stride = 1;
    grid_run("grid_scalar_all_solved", n, &exact, false);
    grid_run("grid_with_wd", n, &settings, true);
}
