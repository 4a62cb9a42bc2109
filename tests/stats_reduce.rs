//! The one-dimensional reduction against the direct object × grid sum, and the shared-floor
//! variant against closed forms.

use dwarfbound::confront::prob::{ln_normal_cdf, ln_prob_consistent, MassKind, Measurement, Side};
use rayon::prelude::*;

use dwarfbound::confront::reduce::{
    bound_range, ClassCounts, ClassCurve, ReduceOptions, SharedFloorCurve, SharedFloorOptions,
    SplitMix64,
};

/// Standard normal deviate by Box–Muller (Box & Muller 1958, Ann. Math. Statist. 29, 610).
fn normal(rng: &mut SplitMix64) -> f64 {
    let u1 = 1.0 - rng.next_f64();
    let u2 = rng.next_f64();
    (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
}

/// Synthetic bound surfaces (smooth, invented for the test): the MMHB moves ~1 % per unit ϒ and
/// ~10 % per 0.1 in τ, the Chandrasekhar mass moves strongly with ϒ (as docs/bounds.md §0 describes).
fn mmhb(u: f64, t: f64) -> f64 {
    0.075 * (1.0 + 0.01 * u + 1.0 * t + 0.5 * t * t)
}
fn mch(u: f64, t: f64) -> f64 {
    1.4563 * (1.0 + 0.1 * u - 0.02 * u * u + 0.3 * t)
}

/// A wide Chandrasekhar-mass range (±35 % in ϒ, ±18 % in τ), for the refinement test.
fn mch_wide(u: f64, t: f64) -> f64 {
    1.4563 * (1.0 + 0.35 * u - 0.1 * u * u + 0.9 * t)
}

/// A seeded synthetic catalogue: 60 % hburning, 15 % brown dwarfs, 25 % white dwarfs; 30 % of
/// the measured masses have split errors; a few limits; white dwarfs with μe = 2 or 2.1.
fn catalogue(n: usize, seed: u64) -> [Vec<Measurement>; 3] {
    let mut rng = SplitMix64::new(seed);
    let (mut hb, mut bd, mut wd) = (Vec::new(), Vec::new(), Vec::new());
    for _ in 0..n {
        let r = rng.next_f64();
        let split = rng.next_f64() < 0.3;
        let (class, truth, rel) = if r < 0.6 {
            (
                0,
                0.075 + 0.3 * rng.next_f64().powi(2),
                0.02 + 0.06 * rng.next_f64(),
            )
        } else if r < 0.75 {
            (
                1,
                0.02 + 0.055 * rng.next_f64(),
                0.02 + 0.08 * rng.next_f64(),
            )
        } else {
            (2, 0.5 + 0.95 * rng.next_f64(), 0.01 + 0.04 * rng.next_f64())
        };
        let sigma = rel * truth;
        let (lo, hi) = if split {
            (
                sigma * (0.5 + rng.next_f64()),
                sigma * (0.5 + rng.next_f64()),
            )
        } else {
            (sigma, sigma)
        };
        let mass = truth + sigma * normal(&mut rng);
        let limit_draw = rng.next_f64();
        let kind = if limit_draw < 0.02 {
            MassKind::UpperLimit {
                sigma: Some(0.5 * sigma),
            }
        } else if limit_draw < 0.04 {
            MassKind::LowerLimit { sigma: None }
        } else {
            MassKind::Measured { lo, hi }
        };
        let side = if class == 0 {
            Side::AtLeast
        } else {
            Side::AtMost
        };
        let scale = if class == 2 && rng.next_f64() < 0.3 {
            4.0 / (2.1f64 * 2.1)
        } else {
            1.0
        };
        let m = Measurement {
            mass_msun: mass,
            kind,
            side,
            scale,
        };
        [&mut hb, &mut bd, &mut wd][class].push(m);
    }
    [hb, bd, wd]
}

#[test]
fn reduction_matches_direct_sum_on_a_grid() {
    // Source: docs/bounds.md §8.5 — the reduction is an identity up to interpolation; the reference
    // is the direct N × G sum of the same ln P. Bound: |Δχ²_reduced − Δχ²_direct| ≤ 1e-6 at
    // N_B = 257 (the spec measured 6.5e-8 on 10⁵ objects).
    let classes = catalogue(2400, 20_240_601);
    let floors = [0.005, 0.005, 0.03];
    let ups: Vec<f64> = (0..26).map(|i| -0.5 + 0.04 * f64::from(i)).collect();
    let taus: Vec<f64> = (0..26).map(|j| -0.2 + 0.016 * f64::from(j)).collect();
    let bound = |c: usize, u: f64, t: f64| if c == 2 { mch(u, t) } else { mmhb(u, t) };
    // Exactly N_B = 257 nodes, no automatic refinement.
    let opts = ReduceOptions {
        target_error: None,
        ..ReduceOptions::default()
    };
    let mut curves = Vec::new();
    for c in 0..3 {
        let values: Vec<f64> = ups
            .iter()
            .flat_map(|&u| taus.iter().map(move |&t| bound(c, u, t)))
            .collect();
        let range = bound_range(&values).unwrap();
        let curve = ClassCurve::build(&classes[c], floors[c], range, &opts).unwrap();
        assert!(
            curve.n_informative() > 20,
            "class {c} has too few informative objects"
        );
        assert!(
            curve.achieved_error() < 2.5e-7,
            "class {c}: {}",
            curve.achieved_error()
        );
        curves.push(curve);
    }
    assert!(
        curves.iter().any(|c| c.n_skipped() > 0),
        "the catalogue should exercise skipping"
    );
    let points: Vec<(f64, f64)> = ups
        .iter()
        .flat_map(|&u| taus.iter().map(move |&t| (u, t)))
        .collect();
    let (direct, reduced): (Vec<f64>, Vec<f64>) = points
        .par_iter()
        .map(|&(u, t)| {
            let mut d = 0.0;
            let mut r = 0.0;
            for c in 0..3 {
                let b = bound(c, u, t);
                d += classes[c]
                    .iter()
                    .map(|m| ln_prob_consistent(m, b, floors[c]))
                    .sum::<f64>();
                r += curves[c].eval(b);
            }
            (-2.0 * d, -2.0 * r)
        })
        .unzip();
    let min_d = direct.iter().copied().fold(f64::INFINITY, f64::min);
    let min_r = reduced.iter().copied().fold(f64::INFINITY, f64::min);
    let worst = direct
        .iter()
        .zip(&reduced)
        .map(|(d, r)| ((d - min_d) - (r - min_r)).abs())
        .fold(0.0, f64::max);
    eprintln!("max |Δχ²_reduced − Δχ²_direct| = {worst:e}");
    assert!(worst <= 1e-6, "max |Δχ² error| = {worst:e}");
    assert!(curves.iter().all(|c| c.out_of_range_calls() == 0));
}

#[test]
fn refinement_meets_the_target_on_a_wide_range() {
    // Source: docs/bounds.md §8.5 — the error falls as h⁴, so doubling the node density until the
    // measured error meets the target must end below it; checked against the exact sum.
    let classes = catalogue(1500, 7);
    let values: Vec<f64> = (0..41)
        .flat_map(|i| {
            (0..41).map(move |j| mch_wide(-0.5 + 0.025 * f64::from(i), -0.2 + 0.01 * f64::from(j)))
        })
        .collect();
    let range = bound_range(&values).unwrap();
    let plain = ReduceOptions {
        target_error: None,
        ..ReduceOptions::default()
    };
    let coarse = ClassCurve::build(&classes[2], 0.03, range, &plain).unwrap();
    let refined = ClassCurve::build(&classes[2], 0.03, range, &ReduceOptions::default()).unwrap();
    assert!(
        coarse.achieved_error() > 2.5e-7,
        "the wide range should need refinement"
    );
    assert!(refined.n_nodes() > 257);
    assert!(
        refined.achieved_error() <= 2.5e-7,
        "{}",
        refined.achieved_error()
    );
    for k in 0..=50 {
        let b = range.0 + (range.1 - range.0) * f64::from(k) / 50.0;
        assert!((refined.eval(b) - refined.exact(b)).abs() < 1e-6);
    }
    // The refinement reuses the previous round's node sums and check sums: the curve must be
    // the one tabulated directly at the final node count, to the bit (common practice, no
    // source: a cache must not change what it caches).
    let direct = ClassCurve::build(
        &classes[2],
        0.03,
        range,
        &ReduceOptions {
            n_nodes: refined.n_nodes(),
            target_error: None,
            ..ReduceOptions::default()
        },
    )
    .unwrap();
    assert_eq!(
        direct.achieved_error().to_bits(),
        refined.achieved_error().to_bits()
    );
    for k in 0..=500 {
        let b = range.0 + (range.1 - range.0) * f64::from(k) / 500.0;
        assert_eq!(
            direct.eval(b).to_bits(),
            refined.eval(b).to_bits(),
            "at {b}"
        );
    }
}

#[test]
fn skipped_objects_are_bounded_and_counted() {
    // Source: docs/bounds.md §8.5 step 2 — skipping loses at most N_skipped × ε_skip in ln L.
    let far: Vec<Measurement> = (0..500)
        .map(|i| Measurement {
            mass_msun: 0.2 + 0.001 * f64::from(i),
            kind: MassKind::Measured {
                lo: 0.002,
                hi: 0.003,
            },
            side: Side::AtLeast,
            scale: 1.0,
        })
        .collect();
    let curve = ClassCurve::build(&far, 0.005, (0.07, 0.08), &ReduceOptions::default()).unwrap();
    assert_eq!(curve.n_skipped(), 500);
    assert_eq!(curve.n_informative(), 0);
    assert!(curve.eval(0.075).abs() <= curve.skip_error_bound());
    assert!(curve.exact(0.075).abs() <= curve.skip_error_bound());
}

#[test]
fn class_counts_sort_objects_as_the_curve_does() {
    // The counts (and the Šidák test's N_inf) come from `ClassCounts` without tabulating;
    // they must be the curve's (common practice, no source: a shortcut gives what the long way
    // gives). Seeded synthetic catalogue with limits and split errors, three classes, each
    // against its own bound range.
    let [hb, bd, wd] = catalogue(4000, 31);
    let grid: Vec<(f64, f64)> = (0..21)
        .flat_map(|i| (0..21).map(move |j| (-0.3 + 0.045 * i as f64, -0.1 + 0.01 * j as f64)))
        .collect();
    let mmhb_values: Vec<f64> = grid.iter().map(|&(u, t)| mmhb(u, t)).collect();
    let mch_values: Vec<f64> = grid.iter().map(|&(u, t)| mch(u, t)).collect();
    let opts = ReduceOptions::default();
    for (ms, values, floor) in [
        (&hb, &mmhb_values, 0.005),
        (&bd, &mmhb_values, 0.005),
        (&wd, &mch_values, 0.03),
    ] {
        let range = bound_range(values).unwrap();
        let curve = ClassCurve::build(ms, floor, range, &opts).unwrap();
        let counts = ClassCounts::new(ms, floor, range, &opts).unwrap();
        assert_eq!(counts.informative_indices(), curve.informative_indices());
        assert_eq!(counts.n_skipped(), curve.n_skipped());
        assert_eq!(counts.n_uninformative(), curve.n_uninformative());
        assert!(counts.n_informative() > 0);
    }
}

#[test]
fn shared_floor_single_objects_match_gaussian_convolution() {
    // Source: ∫ φ(ε) Φ((m − B − σ_th ε)/σ) dε = Φ((m − B)/√(σ² + σ_th²)) (convolution of
    // Gaussians); for a hard upper limit ∫ φ(ε) 1[L ≥ B + σ_th ε] dε = Φ((L − B)/σ_th).
    let th = 0.005;
    let star = Measurement {
        mass_msun: 0.078,
        kind: MassKind::Measured {
            lo: 0.003,
            hi: 0.003,
        },
        side: Side::AtLeast,
        scale: 1.0,
    };
    let limit = Measurement {
        mass_msun: 0.071,
        kind: MassKind::UpperLimit { sigma: None },
        side: Side::AtLeast,
        scale: 1.0,
    };
    let opts = ReduceOptions::default();
    let shared = SharedFloorOptions::default();
    let one = SharedFloorCurve::build(&[&[star]], th, (0.065, 0.085), &opts, &shared).unwrap();
    let lim = SharedFloorCurve::build(&[&[limit]], th, (0.065, 0.085), &opts, &shared).unwrap();
    assert_eq!(
        lim.class_curves()[0].n_sharp(),
        1,
        "a hard limit must be summed exactly"
    );
    for k in 0..=40 {
        let b = 0.065 + 0.0005 * f64::from(k);
        let expect = ln_normal_cdf((0.078 - b) / (0.003f64.hypot(th)));
        assert!(
            (one.eval(b) - expect).abs() < 2e-7,
            "b={b}: {} vs {expect}",
            one.eval(b)
        );
        assert!((one.exact(b) - expect).abs() < 1e-9);
        let expect = ln_normal_cdf((0.071 - b) / th);
        assert!(
            (lim.exact(b) - expect).abs() < 1e-6 * expect.abs().max(1e-3),
            "b={b}"
        );
        assert!(
            (lim.eval(b) - expect).abs() < 1e-6 * expect.abs().max(1e-3),
            "b={b}"
        );
    }
}

#[test]
fn shared_floor_is_less_confident_than_per_object_for_many_objects() {
    // Source: docs/bounds.md §8.2 — independent per-object ε's average out, a shared ε does not; so
    // for many stars just above the bound the shared ℓ falls more slowly as B rises past them.
    let stars: Vec<Measurement> = (0..100)
        .map(|i| Measurement {
            mass_msun: 0.076 + 0.00004 * f64::from(i),
            kind: MassKind::Measured {
                lo: 0.001,
                hi: 0.0015,
            },
            side: Side::AtLeast,
            scale: 1.0,
        })
        .collect();
    let th = 0.005;
    let opts = ReduceOptions {
        target_error: Some(1e-6),
        ..ReduceOptions::default()
    };
    let per = ClassCurve::build(&stars, th, (0.07, 0.09), &opts).unwrap();
    let shared = SharedFloorCurve::build(
        &[&stars],
        th,
        (0.07, 0.09),
        &opts,
        &SharedFloorOptions::default(),
    )
    .unwrap();
    assert!(
        shared.achieved_error() < 1e-5,
        "{}",
        shared.achieved_error()
    );
    let drop_per = per.eval(0.070) - per.eval(0.085);
    let drop_shared = shared.eval(0.070) - shared.eval(0.085);
    assert!(drop_shared < 0.2 * drop_per, "{drop_shared} vs {drop_per}");
    for k in 0..=4 {
        let b = 0.07 + 0.005 * f64::from(k);
        assert!((shared.eval(b) - shared.exact(b)).abs() <= shared.achieved_error() + 1e-9);
    }
}
