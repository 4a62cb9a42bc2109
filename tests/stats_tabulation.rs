//! The tabulated calibrated likelihood against its direct sums: the batched direct sum used to
//! measure the error equals the one-bound direct sum, and a bound term's reported error is the
//! error of the term as the fit reads it (the table of the eliminated shift against the
//! elimination of the direct sums), not the data table's error far from the profiled shift.
//! Source of the checks: the definitions in src/confront/calibrated.rs and mass_terms.rs
//! (common practice, no source: an interpolated table is checked against direct evaluation).
//! The objects are invented (seeded synthetic draw), not measurements.

use dwarfbound::confront::calibrated::{CalibratedCurve, CalibratedOptions};
use dwarfbound::confront::engine::Term;
use dwarfbound::confront::mass_terms::{BoundTerm, LikelihoodChoice, MassTermOptions, Systematics};
use dwarfbound::confront::nuisance::eliminate;
use dwarfbound::confront::prob::{
    ClassMeasurements, MassKind, Measurement, MeasurementSource, Side,
};
use dwarfbound::confront::reduce::SplitMix64;

fn draw(n: usize, lo: f64, hi: f64, rel_err: f64, side: Side, seed: u64) -> Vec<Measurement> {
    let mut rng = SplitMix64::new(seed);
    (0..n)
        .map(|_| {
            let m = lo + (hi - lo) * rng.next_f64();
            let s = rel_err * m * (0.5 + rng.next_f64());
            Measurement {
                mass_msun: m,
                kind: MassKind::Measured { lo: s, hi: 1.2 * s },
                side,
                scale: 1.0,
            }
        })
        .collect()
}

/// Stars above and brown dwarfs below an MMHB near 0.075 M☉ (two-sided).
fn mmhb_classes() -> (Vec<Measurement>, Vec<Measurement>) {
    (
        draw(300, 0.074, 0.10, 0.04, Side::AtLeast, 11),
        draw(150, 0.05, 0.076, 0.04, Side::AtMost, 12),
    )
}

/// White dwarfs below a Chandrasekhar mass (one-sided edge), several near 1.3 M☉.
fn wd_class() -> Vec<Measurement> {
    draw(120, 0.9, 1.33, 0.02, Side::AtMost, 13)
}

#[test]
fn batched_direct_sums_equal_the_direct_sum_to_the_bit() {
    let (hb, bd) = mmhb_classes();
    let wd = wd_class();
    let opts = CalibratedOptions::default();
    let two = CalibratedCurve::build(&[&hb, &bd], 0.002, (0.06, 0.095), &opts).unwrap();
    let edge = CalibratedCurve::build(&[&wd], 0.012, (1.1, 1.6), &opts).unwrap();
    for (c, (a, z)) in [(&two, (0.055, 0.1)), (&edge, (1.05, 1.65))] {
        let bs: Vec<f64> = (0..23).map(|k| a + (z - a) * k as f64 / 22.0).collect();
        let batched = c.exact_at(&bs);
        for (b, x) in bs.iter().zip(&batched) {
            assert_eq!(x.to_bits(), c.exact(*b).to_bits(), "B = {b}");
        }
    }
}

#[test]
fn an_object_asked_once_equals_its_whole_table_to_the_bit() {
    // `objects.csv` and the drivers' weights ask for one object's P at one or two bounds and
    // form only the nodes read (common practice, no source: a shortcut must give what the full
    // table gives), inside the tabulated range, outside it, and for a one-sided edge.
    let (hb, bd) = mmhb_classes();
    let wd = wd_class();
    let opts = CalibratedOptions::default();
    let two = CalibratedCurve::build(&[&hb, &bd], 0.002, (0.06, 0.095), &opts).unwrap();
    let edge = CalibratedCurve::build(&[&wd], 0.012, (1.1, 1.6), &opts).unwrap();
    let mut checked = 0;
    for (c, n_classes, (a, z)) in [(&two, 2, (0.05, 0.11)), (&edge, 1, (1.0, 1.7))] {
        for class in 0..n_classes {
            for i in c.informative_indices(class) {
                let (full, light) = (c.object(class, i), c.object_light(class, i));
                for k in 0..=60 {
                    let b = a + (z - a) * f64::from(k) / 60.0;
                    assert_eq!(
                        full.ln_p(b).to_bits(),
                        light.ln_p(b).to_bits(),
                        "class {class} object {i} at B = {b}"
                    );
                    checked += 1;
                }
            }
        }
    }
    assert!(checked > 10_000, "{checked}");
}

fn term_check(classes: &[(Term, &[Measurement])], floor: f64, range: (f64, f64)) -> (f64, f64) {
    let opts = MassTermOptions {
        likelihood: LikelihoodChoice::Calibrated,
        ..MassTermOptions::default()
    };
    let t = BoundTerm::build(classes, floor, range, &opts).unwrap();
    assert_eq!(t.n_check(), 40);
    assert_eq!(t.table_nodes(), Some(257));
    let n = t.nuisance().unwrap();
    // The direct data term: every object's posterior integrated at the shifted bound.
    let c = CalibratedCurve::build(
        &classes.iter().map(|(_, m)| *m).collect::<Vec<_>>(),
        t.scatter_msun(),
        {
            let reach = n.reach_sigma * n.sigma;
            let pad = opts.reduce.pad_fraction * (range.1 - range.0);
            (range.0 - pad - reach, range.1 + pad + reach)
        },
        &opts.calibrated,
    )
    .unwrap();
    let mut rng = SplitMix64::new(99);
    let mut worst: f64 = 0.0;
    for _ in 0..12 {
        let b = range.0 + (range.1 - range.0) * rng.next_f64();
        let direct = eliminate(&|d| -2.0 * c.exact(b + d), &n).minus_two_ln_l;
        worst = worst.max((t.minus_two_ln_l(b) - direct).abs());
    }
    let reported = t.achieved_error();
    assert!(reported.is_finite());
    // 40 seeded checks against 12 others: the reported maximum is of the same order as the
    // largest difference found elsewhere (a factor 4 allows for the sampling of a maximum).
    assert!(
        worst <= 4.0 * reported + 1e-7,
        "worst {worst:e}, reported {reported:e}"
    );
    (reported, t.data_error_over_range())
}

#[test]
fn reported_error_is_that_of_the_term_the_fit_reads_two_sided() {
    let (hb, bd) = mmhb_classes();
    let (reported, over_range) = term_check(
        &[(Term::HBurning, &hb), (Term::BrownDwarf, &bd)],
        0.005,
        (0.065, 0.085),
    );
    assert!(reported <= over_range + 1e-9, "{reported:e} {over_range:e}");
}

#[test]
fn reported_error_is_that_of_the_term_the_fit_reads_one_sided_edge() {
    let wd = wd_class();
    term_check(&[(Term::WhiteDwarfMass, &wd)], 0.03, (1.15, 1.55));
}

/// The classes' measurements lent as a maker (made again at every read, as a run lends them)
/// rather than as a held list.
struct Remade(Vec<Measurement>);

impl MeasurementSource for Remade {
    fn len(&self) -> usize {
        self.0.len()
    }

    fn measurement(&self, i: usize) -> Measurement {
        self.0[i]
    }
}

/// Classes held, the same classes made, floor, bound range.
type Case<'a> = (
    Vec<(Term, &'a [Measurement])>,
    Vec<(Term, &'a Remade)>,
    f64,
    (f64, f64),
);

#[test]
fn a_term_of_measurements_made_on_demand_is_the_term_of_a_held_list_to_the_bit() {
    // A run lends the bound terms its classes as positions with each measurement made again
    // where read; every sum must then be the one over the held list, in the same order
    // (common practice, no source). Both likelihoods, both bounds, both floor treatments.
    let (hb, bd) = mmhb_classes();
    let wd = wd_class();
    let (hb_r, bd_r, wd_r) = (Remade(hb.clone()), Remade(bd.clone()), Remade(wd.clone()));
    let cases: [Case<'_>; 2] = [
        (
            vec![(Term::HBurning, &hb[..]), (Term::BrownDwarf, &bd[..])],
            vec![(Term::HBurning, &hb_r), (Term::BrownDwarf, &bd_r)],
            0.004,
            (0.07, 0.08),
        ),
        (
            vec![(Term::WhiteDwarfMass, &wd[..])],
            vec![(Term::WhiteDwarfMass, &wd_r)],
            0.03,
            (1.3, 1.5),
        ),
    ];
    for likelihood in [LikelihoodChoice::Product, LikelihoodChoice::Calibrated] {
        for systematics in [Systematics::Shared, Systematics::PerObject] {
            let opts = MassTermOptions {
                likelihood,
                systematics,
                ..MassTermOptions::default()
            };
            for (held, made, floor, range) in &cases {
                let made: Vec<(Term, ClassMeasurements<'_>)> = made
                    .iter()
                    .map(|&(t, r)| (t, ClassMeasurements::made(r)))
                    .collect();
                let a = BoundTerm::build(held, *floor, *range, &opts).unwrap();
                let b = BoundTerm::build(&made, *floor, *range, &opts).unwrap();
                assert_eq!(a.achieved_error().to_bits(), b.achieved_error().to_bits());
                assert_eq!(
                    a.data_error_over_range().to_bits(),
                    b.data_error_over_range().to_bits()
                );
                for k in 0..=40 {
                    let x = range.0 - 0.1 * (range.1 - range.0)
                        + 1.2 * (range.1 - range.0) * k as f64 / 40.0;
                    assert_eq!(a.minus_two_ln_l(x).to_bits(), b.minus_two_ln_l(x).to_bits());
                    for (p, q) in a.split(x).iter().zip(b.split(x)) {
                        assert_eq!((p.0, p.1.to_bits()), (q.0, q.1.to_bits()), "B = {x}");
                    }
                }
            }
        }
    }
}
