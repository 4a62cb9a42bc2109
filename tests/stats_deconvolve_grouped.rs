//! The grouped form of the mass-function fit (`calibrated::Grouping`): exact below
//! its threshold, the same fit when every group is one object, rows that do not grow when the
//! catalogue is repeated, and a change far inside the fit's statistical error on a catalogue of
//! the scale benchmark's kind. The catalogues are invented (seeded draws), not measurements.

use dwarfbound::confront::calibrated::{deconvolve, DeconvolveOptions, Grouping, MassFunction};
use dwarfbound::confront::reduce::SplitMix64;

fn normal(rng: &mut SplitMix64) -> f64 {
    // Box–Muller.
    let u1 = rng.next_f64().max(1e-300);
    let u2 = rng.next_f64();
    (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
}

/// Stars uniform in 0.09–0.6 M☉ and brown dwarfs uniform in 0.01–0.075 M☉ (3 : 1.25, as in
/// `tools/make_scale_catalogue.py`), 1–8 % errors, measured masses kept in the grid
/// [0, 0.175] M☉, errors rounded to 3 significant digits like the scale catalogue's.
fn scale_like(n: usize, seed: u64) -> Vec<(f64, f64, f64)> {
    let mut rng = SplitMix64::new(seed);
    let mut out = Vec::with_capacity(n);
    while out.len() < n {
        let m = if rng.next_f64() < 0.6 / 0.85 {
            0.09 + 0.51 * rng.next_f64()
        } else {
            0.01 + 0.065 * rng.next_f64()
        };
        let frac = 0.01 + 0.07 * rng.next_f64();
        let sigma = frac * m;
        let observed = (m + sigma * normal(&mut rng)).max(0.2 * m);
        let digits = 10f64.powi(2 - sigma.log10().floor() as i32);
        let sigma = (sigma * digits).round() / digits;
        if observed <= 0.175 {
            out.push((observed, sigma, sigma));
        }
    }
    out
}

fn fit(objects: &[(f64, f64, f64)], grouping: Grouping) -> MassFunction {
    let opts = DeconvolveOptions {
        grouping,
        ..DeconvolveOptions::default()
    };
    deconvolve(objects, (0.0, 0.175), &opts).expect("usable grid")
}

fn exact() -> Grouping {
    Grouping {
        exact_up_to: usize::MAX,
        ..Grouping::default()
    }
}

fn grouped() -> Grouping {
    Grouping {
        exact_up_to: 0,
        ..Grouping::default()
    }
}

#[test]
fn up_to_the_threshold_the_fit_is_the_exact_one() {
    // Source: the design (every object its own row up to `exact_up_to`), to the bit.
    let objs = scale_like(3000, 1);
    let default = fit(&objs, Grouping::default());
    let exact = fit(&objs, exact());
    assert_eq!(default.n_rows, exact.n_rows);
    assert_eq!(default.weights, exact.weights);
}

#[test]
fn groups_of_one_object_give_the_exact_fit() {
    // Source: the mean of one object is the object; only the order of the EM's sums differs
    // (groups are summed in key order), so the weights agree to rounding.
    let objs: Vec<(f64, f64, f64)> = (0..400)
        .map(|i| {
            let s = 0.002 * 1.2f64.powi(i % 12);
            (0.02 + 0.13 * (i as f64 + 0.5) / 400.0, s, 1.3 * s)
        })
        .collect();
    let g = Grouping {
        mass_step_sigma: 1e-6,
        sigma_step: 1e-6,
        ..grouped()
    };
    let (a, b) = (fit(&objs, exact()), fit(&objs, g));
    assert_eq!(b.n_rows, objs.len(), "every object its own group");
    assert_eq!(a.iterations, b.iterations);
    for (x, y) in a.weights.iter().zip(&b.weights) {
        assert!((x - y).abs() <= 1e-12 * x.abs().max(1e-300), "{x} vs {y}");
    }
}

#[test]
fn repeating_the_catalogue_adds_no_rows() {
    // Source: the design — rows are per group, so memory does not grow with N for a given
    // population; the weights are the same fit (counts ×4) to rounding of the group means.
    let objs = scale_like(20_000, 2);
    let four: Vec<(f64, f64, f64)> = (0..4).flat_map(|_| objs.iter().copied()).collect();
    let (a, b) = (fit(&objs, grouped()), fit(&four, grouped()));
    assert_eq!(a.n_rows, b.n_rows);
    assert_eq!(b.n_objects, 4 * a.n_objects);
    assert!(a.n_rows < objs.len(), "{} rows", a.n_rows);
    for (x, y) in a.weights.iter().zip(&b.weights) {
        assert!((x - y).abs() <= 1e-9 * x.max(1e-12), "{x} vs {y}");
    }
}

#[test]
fn grouped_fit_moves_far_less_than_its_counting_error() {
    // The yardstick is the Poisson error of each cell's weight, √(w/N) (common practice, no
    // source). The fit's own bootstrap error is smaller, the smoothing averaging neighbouring
    // cells (0.2–0.7 × √(w/N), median 0.45, on the scale catalogue's 10⁵ and 10⁶ objects),
    // so the line of 0.03 is about 0.07 bootstrap σ. Measured: max |Δw| / √(w/N) = 0.003
    // (mass step 0.1 σ, σ step 5 %).
    let objs = scale_like(40_000, 3);
    let (a, b) = (fit(&objs, exact()), fit(&objs, grouped()));
    let n = a.n_objects as f64;
    let top = a.weights.iter().cloned().fold(0.0, f64::max);
    let mut worst: f64 = 0.0;
    for (x, y) in a.weights.iter().zip(&b.weights) {
        if *x > 1e-3 * top {
            worst = worst.max((x - y).abs() / (x / n).sqrt());
        }
    }
    eprintln!(
        "grouped: {} rows for {} objects; max |Δw| / Poisson error {worst:.4}",
        b.n_rows, b.n_objects
    );
    assert!(worst < 0.03, "{worst}");
    assert!(b.n_rows < a.n_rows, "{} vs {}", b.n_rows, a.n_rows);
}

#[test]
fn zero_widths_are_grouped_without_failing() {
    // Source: the design (a zero width has its own σ cell; both zero: steps of the cell).
    let objs: Vec<(f64, f64, f64)> = (0..300)
        .map(|i| {
            let m = 0.02 + 0.1 * (i as f64) / 300.0;
            match i % 3 {
                0 => (m, 0.0, 0.004),
                1 => (m, 0.003, 0.0),
                _ => (m, 0.0, 0.0),
            }
        })
        .collect();
    let g = fit(&objs, grouped());
    let total: f64 = g.weights.iter().sum();
    assert!((total - 1.0).abs() < 1e-12, "{total}");
    assert!(g.weights.iter().all(|w| w.is_finite() && *w >= 0.0));
}

#[test]
fn grouping_steps_must_be_positive() {
    // Source: the design (a zero step would put every mass in one group, or divide by zero).
    let objs = scale_like(100, 4);
    for (c, r) in [
        (0.0, 0.05),
        (0.1, 0.0),
        (f64::NAN, 0.05),
        (0.1, f64::INFINITY),
    ] {
        let opts = DeconvolveOptions {
            grouping: Grouping {
                exact_up_to: 0,
                mass_step_sigma: c,
                sigma_step: r,
            },
            ..DeconvolveOptions::default()
        };
        assert!(deconvolve(&objs, (0.0, 0.175), &opts).is_err(), "{c} {r}");
    }
}
