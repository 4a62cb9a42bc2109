//! Drivers and the floor comparison under the likelihood the run uses, each against a
//! brute-force recomputation: with per-object floors and the product likelihood the in-fit
//! leave-one-out equals the exact product-form one; with the shared systematic each driver's
//! shift equals the interval of the catalogue confronted again without that object (to first
//! order in the shared shift), and so does each white dwarf's with the shared radius scale
//! (re-fitted without it); and the τ = 0 slice with the other floor treatment (mass floors and
//! the radius scale) equals the slice of a run made with that treatment.
//!
//! Surface: MMHB = 0.075 (1 + 0.2 ϒ + 0.5 τ), Chandrasekhar mass = 1.40 (1 − 0.3 ϒ + 0.1 τ)
//! (invented slopes, as in `tests/stats_calibration.rs`).

mod common;

use dwarfbound::catalogue::{CatalogueObject, ObjectClass, OptF64};
use dwarfbound::confront::drivers::{
    radius_drivers, slice_drivers, slice_drivers_in_fit, DriverOptions,
};
use dwarfbound::confront::engine::{confront, BoundSurface, EngineOptions};
use dwarfbound::confront::mass_terms::{LikelihoodChoice, Systematics};
use dwarfbound::confront::slice::{tau0_slice, tau0_slice_other_floor};
use dwarfbound::confront::tension::TensionTest;
use dwarfbound::confront::wd_radius::{RadiusMassPrior, WdQuery, WdRadiusModel, WdStandard};

struct Surface {
    u: Vec<f64>,
    t: Vec<f64>,
}

impl BoundSurface for Surface {
    fn upsilon(&self) -> &[f64] {
        &self.u
    }
    fn tau(&self) -> &[f64] {
        &self.t
    }
    fn mmhb_msun(&self, i: usize) -> Option<f64> {
        let nu = self.u.len();
        Some(0.075 * (1.0 + 0.2 * self.u[i % nu] + 0.5 * self.t[i / nu]))
    }
    fn chandrasekhar_mu2_msun(&self, i: usize) -> Option<f64> {
        let nu = self.u.len();
        Some(1.40 * (1.0 - 0.3 * self.u[i % nu] + 0.1 * self.t[i / nu]))
    }
    fn wd_radii_rsun(&self, _i: usize, q: &[(f64, f64)]) -> Vec<Option<f64>> {
        vec![None; q.len()]
    }
    fn wd_standard_radii(&self, q: &[WdQuery]) -> Vec<Option<WdStandard>> {
        vec![None; q.len()]
    }
}

fn surface() -> Surface {
    Surface {
        u: (0..=12).map(|i| -0.3 + 0.05 * f64::from(i)).collect(),
        t: (0..=8).map(|j| -0.2 + 0.05 * f64::from(j)).collect(),
    }
}

fn object(id: usize, class: ObjectClass, mass: f64, sigma: f64) -> CatalogueObject {
    common::measured_object(id, class, mass, sigma)
}

/// A few objects near both bounds, so that several of them move the τ = 0 interval.
fn catalogue() -> Vec<CatalogueObject> {
    let spec = [
        (ObjectClass::HBurning, 0.0745, 0.002),
        (ObjectClass::HBurning, 0.078, 0.003),
        (ObjectClass::HBurning, 0.090, 0.004),
        (ObjectClass::BrownDwarf, 0.0735, 0.002),
        (ObjectClass::BrownDwarf, 0.070, 0.003),
        (ObjectClass::WhiteDwarf, 1.38, 0.02),
        (ObjectClass::WhiteDwarf, 1.33, 0.03),
        (ObjectClass::WhiteDwarf, 1.20, 0.02),
    ];
    spec.iter()
        .enumerate()
        .map(|(k, &(c, m, s))| object(k, c, m, s))
        .collect()
}

fn options(systematics: Systematics) -> EngineOptions {
    let mut o = EngineOptions::default();
    o.mass_terms.systematics = systematics;
    o.mass_terms.likelihood = LikelihoodChoice::Product;
    o
}

#[test]
fn in_fit_drivers_equal_the_exact_product_leave_one_out_with_per_object_floors() {
    let s = surface();
    let objects = catalogue();
    let opts = options(Systematics::PerObject);
    let conf = confront(&objects, &s, &opts).unwrap();
    let slice = tau0_slice(&conf, &s).unwrap().unwrap();
    let d = DriverOptions::default();
    let exact = slice_drivers(&conf, &objects, &slice, &opts, &d).unwrap();
    let fit = slice_drivers_in_fit(&conf, &objects, &slice, &d).unwrap();
    let exact: Vec<(usize, f64)> = exact.into_iter().filter(|e| e.1 > 0.0).collect();
    assert!(!fit.is_empty(), "some object must drive the interval");
    assert_eq!(exact.len(), fit.len());
    for (e, f) in exact.iter().zip(&fit) {
        assert_eq!(e.0, f.object);
        assert!(
            (e.1 - f.shift).abs() < 1e-9 || (e.1.is_infinite() && f.shift.is_infinite()),
            "object {}: {} vs {}",
            e.0,
            e.1,
            f.shift
        );
    }
}

#[test]
fn in_fit_drivers_match_a_rerun_without_the_object_under_the_shared_systematic() {
    let s = surface();
    let objects = catalogue();
    let opts = options(Systematics::Shared);
    let conf = confront(&objects, &s, &opts).unwrap();
    let slice = tau0_slice(&conf, &s).unwrap().unwrap();
    let fit = slice_drivers_in_fit(&conf, &objects, &slice, &DriverOptions::default()).unwrap();
    assert!(!fit.is_empty());
    let base = slice.slice.intervals[1];
    for d in fit.iter().filter(|d| d.shift.is_finite()) {
        // Brute force: the whole comparison again without the object, the shared shift
        // re-profiled. They differ only by the tabulation of the eliminated term.
        let rest: Vec<CatalogueObject> = objects
            .iter()
            .enumerate()
            .filter(|(k, _)| *k != d.object)
            .map(|(_, o)| o.clone())
            .collect();
        let c2 = confront(&rest, &s, &opts).unwrap();
        let s2 = tau0_slice(&c2, &s).unwrap().unwrap();
        let iv = s2.slice.intervals[1];
        let shift = |a: Option<f64>, b: Option<f64>| match (a, b) {
            (Some(a), Some(b)) => (a - b).abs(),
            (None, None) => 0.0,
            _ => f64::INFINITY,
        };
        let brute = shift(base.lower, iv.lower).max(shift(base.upper, iv.upper));
        assert!(
            (brute - d.shift).abs() <= 1e-4,
            "object {}: in fit {} vs rerun {brute}",
            d.object,
            d.shift
        );
    }
}

#[test]
fn other_floor_slice_equals_a_run_with_that_floor() {
    let s = surface();
    let objects = catalogue();
    for (run, other) in [
        (Systematics::Shared, Systematics::PerObject),
        (Systematics::PerObject, Systematics::Shared),
    ] {
        let conf = confront(&objects, &s, &options(run)).unwrap();
        let main = tau0_slice(&conf, &s).unwrap().unwrap();
        let (which, alt) =
            tau0_slice_other_floor(&conf, &objects, &s, &options(run), &main).unwrap();
        assert_eq!(which, other);
        let direct_conf = confront(&objects, &s, &options(other)).unwrap();
        let direct = tau0_slice(&direct_conf, &s).unwrap().unwrap();
        for (a, b) in alt.slice.chi2_fine.iter().zip(&direct.slice.chi2_fine) {
            assert!((a - b).abs() < 1e-9, "{a} vs {b}");
        }
    }
}

/// The surface of [`surface`] with white-dwarf radii: the cold radius 0.0125 (M/0.6)^{−1/3}
/// (1 + 0.6 ϒ) R☉ at every grid point (an invented smooth law), and the same radius at ϒ = 0 as
/// the standard one (the zero-temperature model: no finite-temperature or envelope terms).
struct WdSurface(Surface);

fn cold_radius(m: f64, upsilon: f64) -> f64 {
    0.0125 * (m / 0.6).powf(-1.0 / 3.0) * (1.0 + 0.6 * upsilon)
}

impl BoundSurface for WdSurface {
    fn upsilon(&self) -> &[f64] {
        self.0.upsilon()
    }
    fn tau(&self) -> &[f64] {
        self.0.tau()
    }
    fn mmhb_msun(&self, i: usize) -> Option<f64> {
        self.0.mmhb_msun(i)
    }
    fn chandrasekhar_mu2_msun(&self, i: usize) -> Option<f64> {
        self.0.chandrasekhar_mu2_msun(i)
    }
    fn wd_radii_rsun(&self, i: usize, q: &[(f64, f64)]) -> Vec<Option<f64>> {
        let u = self.0.u[i % self.0.u.len()];
        q.iter().map(|&(m, _)| Some(cold_radius(m, u))).collect()
    }
    fn wd_standard_radii(&self, q: &[WdQuery]) -> Vec<Option<WdStandard>> {
        q.iter()
            .map(|w| {
                let r = cold_radius(w.mass_msun, 0.0);
                Some(WdStandard {
                    radius_rsun: r,
                    cold_rsun: r,
                    hot_over_cold: 1.0,
                    envelope_fraction: 0.0,
                    dln_r_dteff_per_k: 0.0,
                })
            })
            .collect()
    }
}

/// White dwarfs far below the Chandrasekhar mass (their mass terms are flat) with radii 1–2 %
/// from the law of [`WdSurface`] at several offsets, so that each moves the τ = 0 interval
/// through its radius, and a few stars for the MMHB.
fn radius_catalogue() -> Vec<CatalogueObject> {
    let mut out: Vec<CatalogueObject> = catalogue()
        .into_iter()
        .filter(|o| o.class != ObjectClass::WhiteDwarf)
        .collect();
    for (k, &(m, offset, err)) in [
        (0.55, 0.04, 0.012),
        (0.62, -0.01, 0.015),
        (0.70, 0.02, 0.010),
        (0.80, 0.06, 0.020),
        (0.90, -0.03, 0.015),
        (0.60, 0.00, 0.010),
    ]
    .iter()
    .enumerate()
    {
        let mut o = object(100 + k, ObjectClass::WhiteDwarf, m, 0.01);
        let r = cold_radius(m, 0.0) * (1.0 + offset);
        o.details_mut().radius_rsun = OptF64::some(r);
        o.details_mut().radius_err_rsun = OptF64::some(err * r);
        out.push(o);
    }
    out
}

fn radius_options(systematics: Systematics) -> EngineOptions {
    let mut o = options(systematics);
    o.radius.model = WdRadiusModel::Cold;
    // The drivers keep the run's prior on the true masses, as a calibrated bound keeps its mass
    // function; a rerun without the object estimates the population prior again from the other
    // five (4e-5 in ϒ here). The refit of the shared scale is what is compared, so the prior
    // is the flat one, the same in both.
    o.radius.mass_prior = RadiusMassPrior::Flat;
    o
}

#[test]
fn radius_drivers_refit_the_shared_scale_like_a_rerun_without_the_object() {
    let s = WdSurface(surface());
    let objects = radius_catalogue();
    let opts = radius_options(Systematics::Shared);
    let conf = confront(&objects, &s, &opts).unwrap();
    assert!(conf.radius_shared.is_some() && conf.radius_objects.len() == 6);
    let slice = tau0_slice(&conf, &s).unwrap().unwrap();
    let d = DriverOptions::default();
    let fit = slice_drivers_in_fit(&conf, &objects, &slice, &d).unwrap();
    // The first-order estimate: the same slice without the kept cold radii, so the scale is
    // held at its fitted value.
    let mut held = slice.clone();
    held.radius_nodes_fine = Default::default();
    let approx = radius_drivers(&conf, &held, &d).unwrap();
    let base = slice.slice.intervals[1];
    let shift = |a: Option<f64>, b: Option<f64>| match (a, b) {
        (Some(a), Some(b)) => (a - b).abs(),
        (None, None) => 0.0,
        _ => f64::INFINITY,
    };
    let mut radius_drivers_seen = 0;
    let mut largest_first_order_error: f64 = 0.0;
    for d in fit.iter().filter(|d| d.test == TensionTest::MassRadius) {
        radius_drivers_seen += 1;
        // Brute force: the whole comparison again without the object (shared scale re-fitted
        // by the engine), as in the mass-bound test above.
        let rest: Vec<CatalogueObject> = objects
            .iter()
            .enumerate()
            .filter(|(k, _)| *k != d.object)
            .map(|(_, o)| o.clone())
            .collect();
        let c2 = confront(&rest, &s, &opts).unwrap();
        let s2 = tau0_slice(&c2, &s).unwrap().unwrap();
        let iv = s2.slice.intervals[1];
        let brute = shift(base.lower, iv.lower).max(shift(base.upper, iv.upper));
        assert!(
            (brute - d.shift).abs() <= 1e-6 || (brute.is_infinite() && d.shift.is_infinite()),
            "object {}: in fit {} vs rerun {brute}",
            d.object,
            d.shift
        );
        if let Some(a) = approx.iter().find(|a| a.0 == d.object) {
            largest_first_order_error = largest_first_order_error.max((a.1 - brute).abs());
        }
    }
    assert!(radius_drivers_seen >= 3, "{fit:?}");
    println!("largest error of the held-scale estimate: {largest_first_order_error:.2e}");
    assert!(
        largest_first_order_error > 1e-4,
        "the refit must matter here: {largest_first_order_error}"
    );
}

#[test]
fn other_floor_slice_switches_the_shared_radius_scale_too() {
    let s = WdSurface(surface());
    let objects = radius_catalogue();
    for (run, other) in [
        (Systematics::Shared, Systematics::PerObject),
        (Systematics::PerObject, Systematics::Shared),
    ] {
        let conf = confront(&objects, &s, &radius_options(run)).unwrap();
        let main = tau0_slice(&conf, &s).unwrap().unwrap();
        let (which, alt) =
            tau0_slice_other_floor(&conf, &objects, &s, &radius_options(run), &main).unwrap();
        assert_eq!(which, other);
        let direct_conf = confront(&objects, &s, &radius_options(other)).unwrap();
        assert_eq!(
            direct_conf.radius_shared.is_some(),
            other == Systematics::Shared
        );
        let direct = tau0_slice(&direct_conf, &s).unwrap().unwrap();
        for (a, b) in alt.radius_total_fine.iter().zip(&direct.radius_total_fine) {
            assert!((a - b).abs() < 1e-9, "radius term {a} vs {b}");
        }
        for (a, b) in alt.slice.chi2_fine.iter().zip(&direct.slice.chi2_fine) {
            assert!((a - b).abs() < 1e-9, "{a} vs {b}");
        }
        // The radius term is not the run's: the shared scale changes it.
        let differs = alt
            .radius_total_fine
            .iter()
            .zip(&main.radius_total_fine)
            .any(|(a, b)| (a - b).abs() > 1e-3);
        assert!(differs);
    }
}

/// A calibrated catalogue: 40 objects crowding the MMHB from both sides and 12 white dwarfs up
/// to the Chandrasekhar mass (a one-sided edge), masses on a fixed pattern.
fn calibrated_catalogue() -> Vec<CatalogueObject> {
    let mut out = Vec::new();
    for k in 0..20 {
        let f = (k as f64 + 0.5) / 20.0;
        out.push(object(
            out.len(),
            ObjectClass::BrownDwarf,
            0.060 + 0.0145 * f,
            0.002,
        ));
        out.push(object(
            out.len(),
            ObjectClass::HBurning,
            0.0755 + 0.02 * f,
            0.003,
        ));
    }
    for k in 0..12 {
        let f = (k as f64 + 0.5) / 12.0;
        out.push(object(
            out.len(),
            ObjectClass::WhiteDwarf,
            1.0 + 0.39 * f,
            0.02,
        ));
    }
    out
}

/// The drivers of a calibrated run hold the deconvolved mass function fixed; a re-run without
/// the object estimates it again. The difference is the effect of not re-estimating it (the
/// report prints shifts to 3 significant digits, so anything above ~0.5 % shows). Measured
/// here: the heaviest of 12 white dwarfs at the Chandrasekhar edge moves the interval by 0.0662
/// with φ fixed and by 0.0712 when φ is re-estimated without it (7.6 %), the second heaviest by
/// 0.0181 against 0.0254 (40 %): at a sparsely populated edge the mass function depends visibly
/// on its top objects, and holding it fixed understates their shifts. Not re-estimated in this
/// version (docs/bounds.md#b8-6 says so); this test keeps the two within a factor of 2 so a
/// regression shows. Smaller shifts are printed but not compared.
#[test]
fn calibrated_drivers_with_the_mass_function_held_fixed_match_a_rerun() {
    let s = surface();
    let objects = calibrated_catalogue();
    let mut opts = EngineOptions::default();
    opts.mass_terms.likelihood = LikelihoodChoice::Calibrated;
    let conf = confront(&objects, &s, &opts).unwrap();
    let slice = tau0_slice(&conf, &s).unwrap().unwrap();
    let fit = slice_drivers_in_fit(&conf, &objects, &slice, &DriverOptions::default()).unwrap();
    let base = slice.slice.intervals[1];
    let mut worst: f64 = 0.0;
    let mut compared = 0;
    for d in fit.iter().filter(|d| d.shift.is_finite() && d.shift > 0.0) {
        let rest: Vec<CatalogueObject> = objects
            .iter()
            .enumerate()
            .filter(|(k, _)| *k != d.object)
            .map(|(_, o)| o.clone())
            .collect();
        let c2 = confront(&rest, &s, &opts).unwrap();
        let s2 = tau0_slice(&c2, &s).unwrap().unwrap();
        let iv = s2.slice.intervals[1];
        let shift = |a: Option<f64>, b: Option<f64>| match (a, b) {
            (Some(a), Some(b)) => (a - b).abs(),
            (None, None) => 0.0,
            _ => f64::INFINITY,
        };
        let brute = shift(base.lower, iv.lower).max(shift(base.upper, iv.upper));
        eprintln!(
            "object {} ({:?}): shift with φ fixed {:.6}, re-run with φ re-estimated {brute:.6}",
            d.object, objects[d.object].class, d.shift
        );
        if d.shift < 0.01 {
            // Shifts below a few fine-grid steps (0.005) move with the interval's interpolation
            // (measured here: up to a factor 2.5 either way for shifts of 0.0003–0.004).
            continue;
        }
        worst = worst.max((brute - d.shift).abs() / d.shift);
        compared += 1;
        assert!(
            brute <= 2.0 * d.shift + 1e-4 && d.shift <= 2.0 * brute + 1e-4,
            "object {}: in fit {} vs rerun {brute}",
            d.object,
            d.shift
        );
    }
    eprintln!("{compared} drivers compared; largest relative difference {worst:.4}");
    assert!(compared > 0, "some object must drive the interval");
}

/// With a shared shift, only the leading candidates by the held-shift ranking are refitted
/// (at least 2 × top of them). On a crowd of white dwarfs near the Chandrasekhar mass — far
/// more candidates than that — the top ten must be those of a refit of every candidate, to the
/// bit.
#[test]
fn screened_refits_give_the_drivers_of_refitting_every_candidate() {
    let s = surface();
    // 120 white dwarfs from 1.25 to 1.42 M☉ with errors of 0.01–0.03 M☉, against the
    // Chandrasekhar mass (a fixed sequence; invented), plus the few objects of `catalogue`.
    let mut objects = catalogue();
    let mut x = 0.5_f64;
    for k in 0..120 {
        x = (x * 3.7 + 0.13).fract();
        let mass = 1.25 + 0.17 * x;
        objects.push(object(
            100 + k,
            ObjectClass::WhiteDwarf,
            mass,
            0.01 + 0.02 * x,
        ));
    }
    let opts = options(Systematics::Shared);
    let conf = confront(&objects, &s, &opts).unwrap();
    let slice = tau0_slice(&conf, &s).unwrap().unwrap();
    let screened =
        slice_drivers_in_fit(&conf, &objects, &slice, &DriverOptions::default()).unwrap();
    let every = DriverOptions {
        top: 1000,
        ..DriverOptions::default()
    };
    let mut all = slice_drivers_in_fit(&conf, &objects, &slice, &every).unwrap();
    assert!(
        all.len() > 2 * 10,
        "{} drivers: too few to screen",
        all.len()
    );
    all.truncate(10);
    assert_eq!(screened.len(), 10);
    for (a, b) in screened.iter().zip(&all) {
        assert_eq!(a.object, b.object);
        assert_eq!(a.shift.to_bits(), b.shift.to_bits(), "object {}", a.object);
    }
}

/// The ln P in the fit that the drivers' screening hands on (for `objects.csv`'s σ in the fit)
/// is [`Confrontation::ln_p_in_fit`] at the same bound, to the bit — the reference is the
/// function `objects.csv` called before — under both likelihoods and both floors; objects it
/// did not weigh are left for the caller.
#[test]
fn the_screening_hands_on_each_objects_ln_p_in_the_fit_to_the_bit() {
    use dwarfbound::confront::drivers::slice_drivers_in_fit_and_ln_p_at;
    use dwarfbound::confront::tension::ReferencePoint;
    let s = surface();
    let objects = catalogue();
    for likelihood in [LikelihoodChoice::Product, LikelihoodChoice::Calibrated] {
        for systematics in [Systematics::Shared, Systematics::PerObject] {
            let mut opts = options(systematics);
            opts.mass_terms.likelihood = likelihood;
            let conf = confront(&objects, &s, &opts).unwrap();
            let slice = tau0_slice(&conf, &s).unwrap().unwrap();
            let at = ReferencePoint {
                mmhb_msun: Some(0.0752),
                chandrasekhar_mu2_msun: Some(1.401),
            };
            let d = DriverOptions::default();
            let (drivers, ln_p) =
                slice_drivers_in_fit_and_ln_p_at(&conf, &objects, &slice, &d, &at).unwrap();
            assert_eq!(
                drivers,
                slice_drivers_in_fit(&conf, &objects, &slice, &d).unwrap()
            );
            assert_eq!(ln_p.len(), objects.len());
            let mut handed_on = 0;
            for (k, v) in ln_p.iter().enumerate() {
                let Some(v) = v.get() else { continue };
                handed_on += 1;
                let term = conf.uses[k].mass_term.unwrap();
                let b = at.class_bound(term).unwrap();
                let want = conf.ln_p_in_fit(&objects, k, b).unwrap();
                assert_eq!(v.to_bits(), want.to_bits(), "object {k}: {v} vs {want}");
            }
            assert_eq!(handed_on, objects.len(), "{likelihood:?} {systematics:?}");
        }
    }
}
