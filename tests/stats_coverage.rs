//! Coverage of the 95.45 % ϒ interval on seeded synthetic catalogues (docs/bounds.md §8.7 and the
//! confrontation issue's check), through the whole statistical chain: class curves, cubic
//! interpolation of the bound along ϒ, the 10× sub-grid slice and the interval ends.
//!
//! The bound is a simple invented function B(ϒ) = 0.075 (1 + 0.1 ϒ + 0.02 ϒ²) M☉ (no theory
//! needed), the truth is ϒ = 0 (B = 0.075 M☉), true masses are flat on each side of the bound
//! with 1–8 % Gaussian errors, the class label is the truth's side of the bound, and the floor is
//! small (the synthetic bound is exact).

use rayon::prelude::*;

use dwarfbound::confront::prob::{MassKind, Measurement, Side};
use dwarfbound::confront::reduce::{ClassCurve, CubicSpline, ReduceOptions, SplitMix64};
use dwarfbound::confront::regions::{crowding, upsilon_slice, CrowdingOptions, PopulationTerm};

const FLOOR_MSUN: f64 = 2e-4;
const WINDOW_MSUN: (f64, f64) = (0.05, 0.10);

fn bound(u: f64) -> f64 {
    0.075 * (1.0 + 0.1 * u + 0.02 * u * u)
}

/// Box–Muller normal deviate (Box & Muller 1958).
fn normal(rng: &mut SplitMix64) -> f64 {
    let u1 = 1.0 - rng.next_f64();
    let u2 = rng.next_f64();
    (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
}

/// `n` objects with true masses in `span`: stars uniform above the bound, brown dwarfs uniform
/// below, with densities in the ratio `stars_per_bd` : 1.
fn draw(
    seed: u64,
    n: usize,
    stars_per_bd: f64,
    span: (f64, f64),
) -> (Vec<Measurement>, Vec<Measurement>) {
    let mut rng = SplitMix64::new(seed);
    let b_true = bound(0.0);
    let (w_star, w_bd) = (stars_per_bd * (span.1 - b_true), b_true - span.0);
    let p_star = w_star / (w_star + w_bd);
    let (mut hb, mut bd) = (Vec::new(), Vec::new());
    for _ in 0..n {
        let star = rng.next_f64() < p_star;
        let truth = if star {
            b_true + (span.1 - b_true) * rng.next_f64()
        } else {
            span.0 + (b_true - span.0) * rng.next_f64()
        };
        let sigma = (0.01 + 0.07 * rng.next_f64()) * truth;
        let m = Measurement {
            mass_msun: truth + sigma * normal(&mut rng),
            kind: MassKind::Measured {
                lo: sigma,
                hi: sigma,
            },
            side: if star { Side::AtLeast } else { Side::AtMost },
            scale: 1.0,
        };
        if star {
            hb.push(m);
        } else {
            bd.push(m);
        }
    }
    (hb, bd)
}

struct Outcome {
    covered_product: bool,
    covered_population: bool,
    crowding_warned: bool,
}

fn run(seed: u64, n: usize, stars_per_bd: f64, span: (f64, f64)) -> Outcome {
    let (hb, bd) = draw(seed, n, stars_per_bd, span);
    let coarse: Vec<f64> = (0..=40).map(|i| -1.0 + 0.05 * f64::from(i)).collect();
    let coarse_b: Vec<f64> = coarse.iter().map(|&u| bound(u)).collect();
    let along = CubicSpline::not_a_knot(&coarse, &coarse_b).unwrap();
    let range = (bound(-1.0), bound(1.0));
    // 129 nodes, and exact sums only below 4 node spacings: interpolation errors stay below
    // ~1e-3 in ln L, far under the Δχ² = 4 threshold; no error measurement (speed).
    let opts = ReduceOptions {
        n_nodes: 129,
        sharp_nodes: 4.0,
        n_check: 0,
        target_error: None,
        ..ReduceOptions::default()
    };
    let l_hb = ClassCurve::build(&hb, FLOOR_MSUN, range, &opts).unwrap();
    let l_bd = ClassCurve::build(&bd, FLOOR_MSUN, range, &opts).unwrap();
    let product = upsilon_slice(&coarse, 10, |u| {
        let b = along.eval(u);
        -2.0 * (l_hb.eval(b) + l_bd.eval(b))
    })
    .unwrap();
    let pop = PopulationTerm::new(WINDOW_MSUN, &hb, &bd).unwrap();
    assert!(pop.covers(range.0, range.1));
    let population = upsilon_slice(&coarse, 10, |u| {
        let b = along.eval(u);
        -2.0 * (l_hb.eval(b) + l_bd.eval(b) + pop.ln_term(b))
    })
    .unwrap();
    let b_best = along.eval(product.best_upsilon);
    Outcome {
        covered_product: product.intervals[1].contains(0.0),
        covered_population: population.intervals[1].contains(0.0),
        crowding_warned: crowding(&hb, &bd, b_best, FLOOR_MSUN, &CrowdingOptions::default()).warn,
    }
}

fn fraction(outcomes: &[Outcome], f: impl Fn(&Outcome) -> bool) -> f64 {
    outcomes.iter().filter(|o| f(o)).count() as f64 / outcomes.len() as f64
}

#[test]
fn coverage_is_nominal_with_flat_density_across_the_bound() {
    // Source: docs/bounds.md §8.7 — with the true-mass density flat across the bound (1 : 1) the
    // product of consistency probabilities is the right likelihood and the Δχ²₁ ≤ 4 interval
    // should cover the truth at ≈ 95.45 %. Tolerance: binomial 3σ for 200 repetitions,
    // 3·√(0.9545·0.0455/200) = 0.044.
    let reps = 200;
    let outcomes: Vec<Outcome> = (0..reps)
        .into_par_iter()
        .map(|r| run(1000 + r as u64, 500, 1.0, WINDOW_MSUN))
        .collect();
    let coverage = fraction(&outcomes, |o| o.covered_product);
    let tolerance = 3.0 * (0.9545f64 * 0.0455 / f64::from(reps)).sqrt();
    eprintln!("flat density: coverage {coverage:.3} (nominal 0.9545 ± {tolerance:.3})");
    assert!(
        (coverage - 0.9545).abs() <= tolerance,
        "coverage {coverage}"
    );
}

#[test]
fn crowded_unequal_densities_warn_and_population_term_restores_coverage() {
    // Source: docs/bounds.md §8.7 table (4 000 objects in 0.05–0.10 M☉, bound 0.075, 1–8 % errors,
    // 100 seeds, stars : brown dwarfs = 2 : 1): the product of P covers ≈ 0.00, the
    // population-aware likelihood ≈ 0.87. Tolerances: the product's coverage must collapse
    // (< 0.2); the population-aware one within binomial 3σ of the spec's 0.87–0.89 band for
    // 100 repetitions, [0.87 − 0.10, 0.89 + 0.09]; the crowding warning must fire every time.
    //
    // As in a real catalogue the population continues beyond the analysis window: true masses
    // span 0.04–0.11 M☉ (≈ 4 000 inside 0.05–0.10), and the term counts objects whose measured
    // mass is inside the window, so scatter across its edges balances. (With the population cut
    // exactly at the window edges, measured-mass counts lose edge objects unevenly — errors
    // grow with mass — and this coverage drops to ≈ 0.7: a property of that truncation.)
    let reps = 100;
    let outcomes: Vec<Outcome> = (0..reps)
        .into_par_iter()
        .map(|r| run(5000 + r as u64, 5600, 2.0, (0.04, 0.11)))
        .collect();
    let product = fraction(&outcomes, |o| o.covered_product);
    let population = fraction(&outcomes, |o| o.covered_population);
    eprintln!("crowded 2:1: product coverage {product:.3}, population-aware {population:.3}");
    assert!(outcomes.iter().all(|o| o.crowding_warned));
    assert!(product < 0.2, "product-of-P coverage {product}");
    assert!(
        (0.77..=0.98).contains(&population),
        "population-aware coverage {population}"
    );
}
