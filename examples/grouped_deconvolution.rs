//! Measures what the grouped form of the mass-function fit (`calibrated::Grouping`) changes: the deconvolved mass function of the stars and brown dwarfs
//! of a four-column catalogue (`id,class,mass,mass_err`, e.g. the invented scale catalogue of
//! `tools/make_scale_catalogue.py`) on the mass grid `[lo, hi]` M☉, exact and grouped, with the
//! exact fit's own bootstrap error (objects resampled with replacement, seeded).
//!
//! ```text
//! cargo run --example grouped_deconvolution -- CATALOGUE.csv LO HI BOOTSTRAPS [STEP:SIGMA_STEP ...]
//! cargo run --example grouped_deconvolution -- /tmp/scale_1000000.csv 0 0.17495 10 0.1:0.05 0.2:0.05
//! ```
//!
//! The grid `[0, 0.17495]` is the one `confront` uses for the MMHB of the seed-12 scale
//! catalogues with the default grid. Prints per setting the rows held and the
//! largest change of a cell's weight in units of its bootstrap standard deviation (cells above
//! 10⁻⁴ of the largest weight).

use std::time::Instant;

use dwarfbound::confront::calibrated::{deconvolve, DeconvolveOptions, Grouping, MassFunction};
use dwarfbound::confront::reduce::SplitMix64;

fn read_objects(path: &str, lo: f64, hi: f64) -> Vec<(f64, f64, f64)> {
    let text = std::fs::read_to_string(path).expect("catalogue readable");
    text.lines()
        .filter_map(|l| {
            let f: Vec<&str> = l.split(',').collect();
            if f.len() != 4 || !(f[1] == "hburning" || f[1] == "brown_dwarf") {
                return None;
            }
            let (m, e) = (f[2].parse::<f64>().ok()?, f[3].parse::<f64>().ok()?);
            (m >= lo && m <= hi && e > 0.0).then_some((m, e, e))
        })
        .collect()
}

fn fit(objects: &[(f64, f64, f64)], lo: f64, hi: f64, grouping: Grouping) -> (MassFunction, f64) {
    let t = Instant::now();
    let opts = DeconvolveOptions {
        grouping,
        ..DeconvolveOptions::default()
    };
    let phi = deconvolve(objects, (lo, hi), &opts).expect("usable grid");
    (phi, t.elapsed().as_secs_f64())
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    if args.len() < 4 {
        eprintln!(
            "usage: grouped_deconvolution CATALOGUE.csv LO HI BOOTSTRAPS [STEP:SIGMA_STEP ...]"
        );
        std::process::exit(2);
    }
    let lo: f64 = args[1].parse().expect("LO");
    let hi: f64 = args[2].parse().expect("HI");
    let n_boot: usize = args[3].parse().expect("BOOTSTRAPS");
    let objects = read_objects(&args[0], lo, hi);
    let exact_only = Grouping {
        exact_up_to: usize::MAX,
        ..Grouping::default()
    };
    let (exact, secs) = fit(&objects, lo, hi, exact_only.clone());
    let n_obj = objects.len();
    println!(
        "exact: {} objects, {} rows, {} iterations, {secs:.1} s",
        exact.n_objects, exact.n_rows, exact.iterations
    );
    let mut rng = SplitMix64::new(20261205);
    let mut boots: Vec<Vec<f64>> = Vec::new();
    for _ in 0..n_boot {
        let sample: Vec<(f64, f64, f64)> = (0..n_obj)
            .map(|_| objects[((rng.next_f64() * n_obj as f64) as usize).min(n_obj - 1)])
            .collect();
        boots.push(fit(&sample, lo, hi, exact_only.clone()).0.weights);
    }
    let sd: Vec<f64> = (0..exact.weights.len())
        .map(|k| {
            let v: Vec<f64> = boots.iter().map(|b| b[k]).collect();
            let mean = v.iter().sum::<f64>() / v.len() as f64;
            (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (v.len() as f64 - 1.0)).sqrt()
        })
        .collect();
    let top = exact.weights.iter().cloned().fold(0.0, f64::max);
    let used: Vec<usize> = (0..sd.len())
        .filter(|&k| exact.weights[k] > 1e-4 * top && sd[k] > 0.0)
        .collect();
    let mut rel_sd: Vec<f64> = used.iter().map(|&k| sd[k] / exact.weights[k]).collect();
    rel_sd.sort_by(f64::total_cmp);
    if !rel_sd.is_empty() {
        println!(
            "bootstrap ({n_boot}): median sd/phi {:.4}",
            rel_sd[rel_sd.len() / 2]
        );
    }
    for setting in &args[4..] {
        let (c, r) = setting.split_once(':').expect("STEP:SIGMA_STEP");
        let grouping = Grouping {
            exact_up_to: 0,
            mass_step_sigma: c.parse().expect("STEP"),
            sigma_step: r.parse().expect("SIGMA_STEP"),
        };
        let (g, secs) = fit(&objects, lo, hi, grouping);
        let z = used
            .iter()
            .map(|&k| (g.weights[k] - exact.weights[k]).abs() / sd[k])
            .fold(0.0, f64::max);
        let rel = used
            .iter()
            .map(|&k| (g.weights[k] / exact.weights[k] - 1.0).abs())
            .fold(0.0, f64::max);
        println!(
            "grouped {c}:{r}: {} rows for {} objects, {} iterations, {secs:.1} s, max |dphi|/sd {z:.4}, max rel {rel:.2e}",
            g.n_rows, g.n_objects, g.iterations
        );
    }
}
