//! Δχ² thresholds, allowed regions, one-parameter intervals, Šidák consistency, crowding and
//! leave-one-out drivers, each against a closed form or a brute-force recomputation.

use dwarfbound::confront::drivers::{leave_one_out, DriverOptions, SliceClass};
use dwarfbound::confront::prob::{ln_prob_consistent, MassKind, Measurement, Side};
use dwarfbound::confront::reduce::{ClassCurve, CubicSpline, ReduceOptions};
use dwarfbound::confront::regions::{
    absolute_consistency, crowding, dchi2_threshold, interval_from_slice, map_regions, refine_axis,
    sidak_p, upsilon_slice, CrowdingOptions, Level, PopulationTerm,
};
use statrs::distribution::{ChiSquared, ContinuousCDF};

fn sym(mass: f64, sigma: f64, side: Side) -> Measurement {
    Measurement {
        mass_msun: mass,
        kind: MassKind::Measured {
            lo: sigma,
            hi: sigma,
        },
        side,
        scale: 1.0,
    }
}

#[test]
fn delta_chi2_thresholds() {
    // Source: PDG Review of Particle Physics, "Statistics" (Δχ² for m = 1, 2 parameters), as
    // quoted to four decimals in docs/bounds.md §8.4; Numerical Recipes §15.6.
    let two = [2.2957, 6.1801, 11.8292];
    for (level, expect) in Level::ALL.iter().zip(two) {
        assert!(
            (level.dchi2(2) - expect).abs() < 5e-5,
            "{level:?}: {}",
            level.dchi2(2)
        );
        assert_eq!(level.dchi2(1), level.n_sigma().powi(2));
    }
    // The same from statrs's χ² quantile (independent implementation).
    for level in Level::ALL {
        for dof in [1u32, 2] {
            let q = ChiSquared::new(f64::from(dof))
                .unwrap()
                .inverse_cdf(level.probability());
            assert!(
                (q - level.dchi2(dof)).abs() < 1e-6 * q,
                "{level:?} dof {dof}: {q}"
            );
        }
    }
    // Other levels (docs/bounds.md §8.4: 90 / 95 / 99 %).
    for (p, one, two) in [
        (0.90, 2.7055, 4.6052),
        (0.95, 3.8415, 5.9915),
        (0.99, 6.6349, 9.2103),
    ] {
        assert!((dchi2_threshold(p, 1).unwrap() - one).abs() < 5e-5);
        assert!((dchi2_threshold(p, 2).unwrap() - two).abs() < 5e-5);
    }
    // Three parameters, PDG table (3.53 / 8.02 / 14.2; from memory).
    for (level, expect, half_unit) in [
        (Level::Cl68, 3.53, 0.005),
        (Level::Cl95, 8.02, 0.005),
        (Level::Cl997, 14.2, 0.05),
    ] {
        assert!(
            (level.dchi2(3) - expect).abs() <= half_unit,
            "{}",
            level.dchi2(3)
        );
    }
    assert!(dchi2_threshold(1.0, 2).is_err());
    assert_eq!(Level::Cl95.key(), "cl95");
    assert!((Level::Cl95.probability() - 0.954_499_736_103_641_6).abs() < 1e-15);
}

#[test]
fn map_regions_on_an_elliptical_bowl() {
    // Source: closed form — for χ² = 37 + ((ϒ−0.1)/0.2)² + ((τ+0.05)/0.05)² the region
    // Δχ² ≤ q is the ellipse with semi-axes 0.2√q and 0.05√q about (0.1, −0.05).
    let ups: Vec<f64> = (0..81).map(|i| -1.0 + 0.025 * f64::from(i)).collect();
    let taus: Vec<f64> = (0..81).map(|j| -0.2 + 0.005 * f64::from(j)).collect();
    let mut chi2 = Vec::new(); // τ outer, ϒ inner, as every grid vector
    for &t in &taus {
        for &u in &ups {
            chi2.push(37.0 + ((u - 0.1) / 0.2).powi(2) + ((t + 0.05) / 0.05).powi(2));
        }
    }
    chi2[0] = f64::NAN; // a grid point without a model
    chi2[5] = f64::INFINITY;
    let r = map_regions(&ups, &taus, &chi2).unwrap();
    assert_eq!(r.n_invalid, 2);
    assert!((r.best.upsilon - 0.1).abs() < 1e-12 && (r.best.tau + 0.05).abs() < 1e-12);
    assert!((r.best.chi2_min - 37.0).abs() < 1e-9);
    for (level, b) in Level::ALL.iter().zip(&r.allowed) {
        let q = level.dchi2(2);
        let (su, st) = (0.2 * q.sqrt(), 0.05 * q.sqrt());
        // Extremes of the ellipse, rounded inward to the grid (axes through the centre).
        let inside = |x: f64, c: f64, s: f64| (x - c).abs() <= s + 1e-12;
        let u_in: Vec<f64> = ups
            .iter()
            .copied()
            .filter(|&u| inside(u, 0.1, su))
            .collect();
        let t_in: Vec<f64> = taus
            .iter()
            .copied()
            .filter(|&t| inside(t, -0.05, st))
            .collect();
        assert_eq!(b.upsilon_min, u_in[0]);
        assert_eq!(b.upsilon_max, *u_in.last().unwrap());
        assert_eq!(b.tau_min, t_in[0]);
        assert_eq!(b.tau_max, *t_in.last().unwrap());
        // Fraction of grid ≈ ellipse area / grid area (π·su·st / (2 × 0.4)), to the
        // discretisation of an 81 × 81 grid.
        let area = std::f64::consts::PI * su * st / (2.0 * 0.4);
        assert!(
            (b.fraction_of_grid - area).abs() < 0.1 * area,
            "{level:?}: {} vs {area}",
            b.fraction_of_grid
        );
    }
    assert!(r.allowed_at(r.best.i_upsilon, r.best.j_tau, ups.len(), Level::Cl68));
    assert!(!r.allowed_at(0, 0, ups.len(), Level::Cl997));
    assert!(map_regions(&ups, &taus, &chi2[1..]).is_err());
    // Closed form: Δχ² ≤ 0.01 needs |ϒ − 0.1| ≤ 0.02 and |τ + 0.05| ≤ 0.005, inside the best
    // point's neighbours on this grid (steps 0.025 and 0.005): the best fit names a place.
    assert!(r.best_unique);
    assert_eq!(r.near_best.n_points, 3);
}

/// Closed form: a Gaussian χ² = (ϒ/σ)² + (τ/σ)² on a grid of forty points per σ has many points
/// within Δχ² ≤ 0.01 of its minimum (a disc of radius 0.1σ: about 45 points, beyond the best's
/// neighbours), but they are 0.44 % of the 68.27 % region (radius 1.515σ): the best fit still
/// names a place. Made flat in ϒ, the near-best band is 6.6 % of that region: not unique.
#[test]
fn a_peaked_likelihood_on_a_fine_grid_keeps_its_best_fit() {
    let s = 0.1;
    let ups: Vec<f64> = (0..321).map(|i| -0.4 + 0.0025 * f64::from(i)).collect();
    let taus = ups.clone();
    let map = |f: &dyn Fn(f64, f64) -> f64| -> Vec<f64> {
        taus.iter()
            .flat_map(|&t| ups.iter().map(move |&u| f(u, t)))
            .collect()
    };
    let peaked = map_regions(&ups, &taus, &map(&|u, t| (u / s).powi(2) + (t / s).powi(2))).unwrap();
    assert!(
        peaked.near_best.n_points > 9,
        "{}",
        peaked.near_best.n_points
    );
    assert!(peaked.best_unique);
    let ridge = map_regions(&ups, &taus, &map(&|_, t| (t / s).powi(2))).unwrap();
    assert!(!ridge.best_unique);
}

/// A plateau (every object agrees with a whole band of the grid, as for real brown dwarfs with
/// dynamical masses) has no unique best point: closed form, χ² = max(0, τ − 0.05)² / 0.01² is
/// exactly 0 for every τ ≤ 0.05 whatever ϒ, so every such point ties with the best one.
#[test]
fn a_flat_minimum_is_not_a_unique_best_fit() {
    let ups: Vec<f64> = (0..10).map(|i| -0.3 + 0.1 * f64::from(i)).collect();
    let taus: Vec<f64> = (0..7).map(|j| -0.3 + 0.1 * f64::from(j)).collect();
    let mut chi2 = Vec::new();
    for &t in &taus {
        for _ in &ups {
            chi2.push((t - 0.05).max(0.0).powi(2) / 1e-4);
        }
    }
    let r = map_regions(&ups, &taus, &chi2).unwrap();
    assert!(!r.best_unique);
    // τ ∈ {−0.3, …, 0.0}: four rows of ten points.
    assert_eq!(r.near_best.n_points, 40);
    assert_eq!((r.near_best.tau_min, r.near_best.tau_max), (-0.3, taus[3]));
    assert_eq!(
        (r.near_best.upsilon_min, r.near_best.upsilon_max),
        (-0.3, ups[9])
    );
}

#[test]
fn slice_intervals_closed_open_and_disjoint() {
    // Source: closed form — Δχ² = ((ϒ − c)/s)² crosses q at c ± s√q.
    let x = refine_axis(
        &(0..=20)
            .map(|i| -1.0 + 0.1 * f64::from(i))
            .collect::<Vec<_>>(),
        10,
    )
    .unwrap();
    assert_eq!(x.len(), 201);
    let parabola: Vec<f64> = x
        .iter()
        .map(|u| 5.0 + ((u - 0.13) / 0.07).powi(2))
        .collect();
    for level in Level::ALL {
        let q = level.dchi2(1);
        let iv = interval_from_slice(&x, &parabola, q).unwrap();
        // Linear interpolation of a parabola between fine points: error ≤ h²/(8s²)·s/√q·… ≈ 1e-4.
        assert!(
            (iv.lower.unwrap() - (0.13 - 0.07 * q.sqrt())).abs() < 2e-4,
            "{level:?} {iv:?}"
        );
        assert!((iv.upper.unwrap() - (0.13 + 0.07 * q.sqrt())).abs() < 2e-4);
        assert!(!iv.disjoint);
    }
    // A one-sided constraint: allowed up to the axis start, so the lower end is open (None),
    // never the grid edge.
    let one_sided: Vec<f64> = x
        .iter()
        .map(|&u| {
            if u < 0.2 {
                0.0
            } else {
                ((u - 0.2) / 0.1).powi(2)
            }
        })
        .collect();
    let iv = interval_from_slice(&x, &one_sided, 4.0).unwrap();
    assert_eq!(iv.lower, None);
    assert!((iv.upper.unwrap() - 0.4).abs() < 1e-3);
    assert!(iv.contains(-5.0) && !iv.contains(0.5));
    // A flat slice is open on both sides.
    let flat = vec![3.0; x.len()];
    let iv = interval_from_slice(&x, &flat, 1.0).unwrap();
    assert_eq!((iv.lower, iv.upper), (None, None));
    // Two wells: the hull, flagged disjoint.
    let wells: Vec<f64> = x.iter().map(|u| ((u * u - 0.25) / 0.05).powi(2)).collect();
    let iv = interval_from_slice(&x, &wells, 1.0).unwrap();
    assert!(iv.disjoint);
    assert!(iv.lower.unwrap() < -0.5 && iv.upper.unwrap() > 0.5);
}

#[test]
fn sidak_absolute_consistency() {
    // Source: Šidák (1967), p = 1 − (1 − P_min)^N; checked against the direct power.
    assert!((sidak_p(0.01, 10) - (1.0 - 0.99f64.powi(10))).abs() < 1e-15);
    assert_eq!(sidak_p(0.3, 0), 1.0);
    // Tiny P_min keeps its digits: 1 − (1 − 1e-20)^1e5 = 1e-15 (first-order expansion).
    assert!((sidak_p(1e-20, 100_000) / 1e-15 - 1.0).abs() < 1e-9);
    // Ten ordinary objects and one mislabelled far below the MMHB (docs/bounds.md §8.4 example).
    let mut ln_p: Vec<(usize, f64)> = (0..10)
        .map(|i| (i, (0.5f64 + 0.04 * i as f64).ln()))
        .collect();
    let bad = sym(0.03, 0.002, Side::AtLeast);
    ln_p.push((42, ln_prob_consistent(&bad, 0.075, 0.005)));
    let verdict = absolute_consistency(&ln_p, 3);
    assert!(!verdict.consistent_cl95);
    assert_eq!(verdict.worst[0].0, 42);
    assert_eq!(verdict.worst.len(), 3);
    assert_eq!(verdict.n_informative, 11);
    let good = absolute_consistency(&ln_p[..10], 3);
    assert!(good.consistent_cl95);
    assert!((good.p_cat - sidak_p(0.5, 10)).abs() < 1e-12);
}

#[test]
fn crowding_warning_and_population_term() {
    // Source: docs/bounds.md §8.7 — warn when > 30 informative objects of each opposing class lie
    // within 3σ of the MMHB; the population term is −n_star ln(M_hi − B) − n_bd ln(B − M_lo).
    let hb: Vec<Measurement> = (0..40)
        .map(|i| sym(0.076 + 0.0001 * f64::from(i), 0.002, Side::AtLeast))
        .collect();
    let bd: Vec<Measurement> = (0..40)
        .map(|i| sym(0.074 - 0.0001 * f64::from(i), 0.002, Side::AtMost))
        .collect();
    let c = crowding(&hb, &bd, 0.075, 0.001, &CrowdingOptions::default());
    assert_eq!((c.n_hburning_near, c.n_brown_dwarf_near), (40, 40));
    assert!(c.warn);
    let c = crowding(&hb, &bd[..10], 0.075, 0.001, &CrowdingOptions::default());
    assert!(!c.warn);
    let far: Vec<Measurement> = (0..40).map(|_| sym(0.2, 0.002, Side::AtLeast)).collect();
    assert_eq!(
        crowding(&far, &bd, 0.075, 0.001, &CrowdingOptions::default()).n_hburning_near,
        0
    );

    let pop = PopulationTerm::new((0.05, 0.10), &hb, &bd[..25]).unwrap();
    assert_eq!((pop.n_hburning, pop.n_brown_dwarf), (40, 25));
    let b = 0.075;
    let expect = -40.0 * (0.10f64 - b).ln() - 25.0 * (b - 0.05f64).ln();
    assert!((pop.ln_term(b) - expect).abs() < 1e-12);
    assert_eq!(pop.ln_term(0.04), f64::NEG_INFINITY);
    assert!(pop.covers(0.06, 0.09) && !pop.covers(0.04, 0.09));
    assert!(PopulationTerm::new((0.1, 0.05), &hb, &bd).is_err());
}

/// A small slice problem: bound B(ϒ) = 0.075 (1 + 0.2 ϒ) on ϒ ∈ [−1, 1], a few stars and brown
/// dwarfs, one tight star that pins the upper end and one lone tight brown dwarf.
fn slice_problem() -> (Vec<f64>, Vec<f64>, [Vec<Measurement>; 2], f64) {
    let fine = refine_axis(
        &(0..=40)
            .map(|i| -1.0 + 0.05 * f64::from(i))
            .collect::<Vec<_>>(),
        10,
    )
    .unwrap();
    let bound: Vec<f64> = fine.iter().map(|u| 0.075 * (1.0 + 0.2 * u)).collect();
    let mut hb: Vec<Measurement> = (0..12)
        .map(|i| sym(0.080 + 0.002 * f64::from(i), 0.004, Side::AtLeast))
        .collect();
    hb.push(sym(0.0765, 0.0004, Side::AtLeast)); // index 12: the tight star
    hb.push(sym(0.2, 0.004, Side::AtLeast)); // index 13: far above every bound, no influence
    let bd = vec![
        sym(0.060, 0.004, Side::AtMost),
        sym(0.0725, 0.0005, Side::AtMost), // index 1: the lone tight brown dwarf
        Measurement {
            mass_msun: 0.06,
            kind: MassKind::UpperLimit { sigma: None },
            side: Side::AtMost,
            scale: 1.0,
        },
    ];
    (fine, bound, [hb, bd], 0.0005)
}

fn direct_chi2(
    bound: &[f64],
    classes: &[Vec<Measurement>],
    floor: f64,
    skip: Option<(usize, usize)>,
) -> Vec<f64> {
    bound
        .iter()
        .map(|&b| {
            let mut s = 0.0;
            for (c, ms) in classes.iter().enumerate() {
                for (i, m) in ms.iter().enumerate() {
                    if skip != Some((c, i)) {
                        s += ln_prob_consistent(m, b, floor);
                    }
                }
            }
            -2.0 * s
        })
        .collect()
}

#[test]
fn drivers_match_brute_force_leave_one_out() {
    // Source: docs/bounds.md §8.6 — removal is exact; the reference recomputes the slice from
    // scratch without each object and takes the interval again.
    let (fine, bound, classes, floor) = slice_problem();
    let chi2 = direct_chi2(&bound, &classes, floor, None);
    let slice_classes: Vec<SliceClass> = classes
        .iter()
        .map(|ms| SliceClass {
            measurements: ms,
            floor_msun: floor,
            bound_fine_msun: &bound,
        })
        .collect();
    let report = leave_one_out(&fine, &chi2, &slice_classes, &DriverOptions::default()).unwrap();
    let base = interval_from_slice(&fine, &chi2, 4.0).unwrap();
    assert_eq!(report.baseline, base);
    // The uninformative upper limit is never a candidate; far stars are not either.
    assert!(report
        .drivers
        .iter()
        .all(|d| !(d.class == 1 && d.index == 2)));
    assert!(report
        .drivers
        .iter()
        .all(|d| !(d.class == 0 && d.index == 13)));
    assert!(report.drivers.iter().all(|d| d.max_minus_two_ln_p > 2e-3));
    assert_eq!(report.n_candidates, 15); // every informative object but the far star
    for d in &report.drivers {
        let without = direct_chi2(&bound, &classes, floor, Some((d.class, d.index)));
        let iv = interval_from_slice(&fine, &without, 4.0).unwrap();
        let end = |a: Option<f64>, b: Option<f64>| match (a, b) {
            (Some(a), Some(b)) => (a - b).abs(),
            (None, None) => 0.0,
            _ => f64::INFINITY,
        };
        let shift = end(base.lower, iv.lower).max(end(base.upper, iv.upper));
        if shift.is_finite() {
            assert!((shift - d.shift).abs() < 1e-9, "{d:?} vs {shift}");
        } else {
            assert!(d.shift.is_infinite());
        }
    }
    // The lone tight brown dwarf holds the lower end: removing it opens it, listed first.
    assert_eq!((report.drivers[0].class, report.drivers[0].index), (1, 1));
    assert!(report.drivers[0].shift.is_infinite());
    assert_eq!(report.drivers[0].interval_without.lower, None);
    // The tight star is the largest finite driver.
    let finite: Vec<_> = report
        .drivers
        .iter()
        .filter(|d| d.shift.is_finite())
        .collect();
    assert_eq!((finite[0].class, finite[0].index), (0, 12));
    // Order: non-increasing shifts.
    assert!(report.drivers.windows(2).all(|w| w[0].shift >= w[1].shift));
}

#[test]
fn upsilon_slice_through_the_reduction_matches_the_direct_slice() {
    // Source: docs/bounds.md §8.4–8.5 — the interval from class curves and a cubic interpolation
    // of the coarse bounds along ϒ equals the interval from the direct sum on the fine axis.
    let (fine, bound, classes, floor) = slice_problem();
    let coarse: Vec<f64> = (0..=40).map(|i| -1.0 + 0.05 * f64::from(i)).collect();
    let coarse_b: Vec<f64> = coarse.iter().map(|u| 0.075 * (1.0 + 0.2 * u)).collect();
    let spline = CubicSpline::natural(&coarse, &coarse_b).unwrap();
    let range = (0.075 * 0.8, 0.075 * 1.2);
    let curves: Vec<ClassCurve> = classes
        .iter()
        .map(|ms| ClassCurve::build(ms, floor, range, &ReduceOptions::default()).unwrap())
        .collect();
    let slice = upsilon_slice(&coarse, 10, |u| {
        let b = spline.eval(u);
        -2.0 * curves.iter().map(|c| c.eval(b)).sum::<f64>()
    })
    .unwrap();
    assert_eq!(slice.upsilon_fine, fine);
    let direct = direct_chi2(&bound, &classes, floor, None);
    for level in Level::ALL {
        let a = slice.intervals[Level::ALL.iter().position(|l| *l == level).unwrap()];
        let b = interval_from_slice(&fine, &direct, level.dchi2(1)).unwrap();
        assert!(
            (a.lower.unwrap() - b.lower.unwrap()).abs() < 1e-7,
            "{level:?}: {a:?} vs {b:?}"
        );
        assert!((a.upper.unwrap() - b.upper.unwrap()).abs() < 1e-7);
    }
}

#[test]
fn map_regions_ties_go_to_the_smallest_upsilon_then_tau() {
    // The tie rule documented on map_regions (common practice, no source): a flat minimum is
    // reported at its smallest ϒ, then its smallest τ, whatever the storage order.
    let ups = [-0.2, -0.1, 0.0];
    let taus = [0.0, 0.1];
    // τ outer, ϒ inner: the minimum 1 sits at (ϒ, τ) = (−0.1, 0) and (−0.2, 0.1).
    let chi2 = [5.0, 1.0, 5.0, 1.0, 5.0, 5.0];
    let r = map_regions(&ups, &taus, &chi2).unwrap();
    assert_eq!((r.best.i_upsilon, r.best.j_tau), (0, 1));
    assert_eq!((r.best.upsilon, r.best.tau), (-0.2, 0.1));
}

/// The worst objects and the smallest P are found without sorting a copy of every pair: the
/// same verdict, to the bit, as a full sort by (ln P, key) (ties, NaN and −∞ included).
#[test]
fn absolute_consistency_matches_a_full_sort() {
    let mut state = 0x2545_f491_4f6c_dd1d_u64;
    let mut next = || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        state
    };
    for case in 0..200 {
        let n = (next() % 40) as usize;
        let pairs: Vec<(usize, f64)> = (0..n)
            .map(|_| {
                let key = (next() % 25) as usize;
                let v = match next() % 10 {
                    0 => f64::NEG_INFINITY,
                    1 => f64::NAN,
                    2 => -1.0,
                    _ => -((next() % 1000) as f64) / 37.0,
                };
                (key, v)
            })
            .collect();
        let n_worst = (case % 7) as usize;
        let mut sorted = pairs.clone();
        sorted.sort_by(|a, b| a.1.total_cmp(&b.1).then(a.0.cmp(&b.0)));
        let got = absolute_consistency(&pairs, n_worst);
        let ln_p_min = sorted.first().map_or(0.0, |w| w.1);
        assert_eq!(got.ln_p_min.to_bits(), ln_p_min.to_bits(), "case {case}");
        assert_eq!(got.n_informative, n);
        sorted.truncate(n_worst);
        let bits = |v: &[(usize, f64)]| v.iter().map(|w| (w.0, w.1.to_bits())).collect::<Vec<_>>();
        assert_eq!(bits(&got.worst), bits(&sorted), "case {case}");
    }
}
