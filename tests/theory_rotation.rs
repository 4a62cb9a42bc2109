//! Rotation: slow-rotation first-order coefficients (Chandrasekhar 1933 expansion on the modified
//! Lane–Emden equation) and the break-up period curve.

use dwarfbound::constants::{GM_SUN_NOMINAL_M3_S2, R_JUP_EQ_NOMINAL_M, R_SUN_NOMINAL_M};
use dwarfbound::theory::lane_emden::ModifiedLaneEmden;
use dwarfbound::theory::ode::{solve, OdeOptions, Stop};
use dwarfbound::theory::rotation::{breakup_curve, breakup_period_s, BreakupModel};
use dwarfbound::theory::slow_rotation::{
    rotation_parameter_v, slow_rotation, SlowRotationError, FIRST_ORDER_MAX_FRACTION_OF_BREAKUP,
};
use dwarfbound::theory::white_dwarf::{WdMassRadius, WdTableOptions};
use dwarfbound::theory::Anisotropy;
use std::f64::consts::PI;

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

/// n = 1 in standard gravity has closed forms (Chandrasekhar 1933's expansion, solved by hand):
/// θ = sin ξ/ξ, ψ₀ = 1 − sin ξ/ξ, ψ₂ = 15 j₂(ξ) (spherical Bessel), ξ₁ = π. Then ψ₀(π) = 1,
/// ψ₀′(π) = 1/π, m₀ = π³/3 − π²ψ₀′(π) = π³/3 − π, and 3j₂(π) + πj₂′(π) = 1 so
/// A₂ = −5π²/(6·15) = −π²/18 and A₂ψ₂(π) = −5/2. With |θ′(π)| = 1/π the surface moves by
/// v(1 − (5/2)P₂(μ)) ξ₁: R_eq = R(1 + 9v/4), R_pole = R(1 − 3v/2).
#[test]
fn n1_closed_forms() {
    let s = slow_rotation(1.0, 0.0, 0.0, Anisotropy::None).unwrap();
    assert!(rel(s.xi1, PI) < 1e-10);
    assert!((s.psi0_surface - 1.0).abs() < 1e-9, "{}", s.psi0_surface);
    assert!(rel(s.m0_surface, PI.powi(3) / 3.0 - PI) < 1e-9);
    assert!(rel(s.mass_coefficient, PI * PI / 3.0 - 1.0) < 1e-9);
    assert!(rel(s.mean_radius_coefficient, 1.0) < 1e-9);
    let shape = s.shape.unwrap();
    assert!(rel(shape.a2_psi2, -2.5) < 1e-8, "{}", shape.a2_psi2);
    assert!(rel(shape.equatorial_radius_coefficient, 2.25) < 1e-8);
    assert!(rel(shape.polar_radius_coefficient, -1.5) < 1e-8);
}

/// The spherical (ψ₀) part, checked against a direct numerical solution: the non-linear
/// spherically averaged equation θ′ = p[−μ − cξ³θⁿ + vξ³/3]/(ξ²D) solved at v = ±h, with the
/// central-difference slope of ln M and ln R (the ψ₀ part is exact at first order, the P₂ part
/// adds nothing to mass or volume there). Independent of the linearised system: it integrates
/// the full equation with its own right-hand side.
fn direct_slopes(n: f64, u: f64, t: f64, a: Anisotropy) -> (f64, f64) {
    let le = ModifiedLaneEmden::new(n, u, t, a).unwrap();
    let (p, c, kappa) = le.coefficients();
    let surface = |v: f64| -> (f64, f64) {
        let f = |xi: f64, y: &[f64; 2]| -> Result<[f64; 2], String> {
            let th = y[0].max(0.0);
            let tn = th.powf(n);
            let tn1 = if th > 0.0 { th.powf(n - 1.0) } else { 0.0 };
            let d = 1.0 + kappa * n * u / 4.0 * xi * xi * tn1;
            let num = -y[1] - c * xi.powi(3) * tn + v * xi.powi(3) / 3.0;
            Ok([p * num / (xi * xi * d), xi * xi * tn])
        };
        let x0 = 1e-4;
        let a0 = p * (1.0 / 3.0 + c) / 2.0 - p * v / 6.0;
        let y0 = [1.0 - a0 * x0 * x0, x0.powi(3) / 3.0];
        let mut ev = |_x: f64, y: &[f64; 2]| y[0];
        let sol = solve(
            f,
            x0,
            y0,
            1e4,
            &OdeOptions::new(1e-13, 1e-15, x0),
            Some(&mut ev),
        )
        .unwrap();
        assert_eq!(sol.stop, Stop::Event);
        (sol.y[1], sol.x)
    };
    let h = 3e-6;
    let (mp, rp) = surface(h);
    let (mm, rm) = surface(-h);
    let (m0, r0) = surface(0.0);
    ((mp - mm) / (2.0 * h) / m0, (rp - rm) / (2.0 * h) / r0)
}

#[test]
fn spherical_part_matches_a_direct_solution_at_small_v() {
    for (n, u, t, a) in [
        (1.5, 0.0, 0.0, Anisotropy::None),
        (3.0, 0.0, 0.0, Anisotropy::None),
        (1.5, 0.3, 0.0, Anisotropy::None),
        (1.5, -0.2, 0.2, Anisotropy::DensitySquared),
        (3.0, 0.1, -0.1, Anisotropy::DensitySquared),
        (1.5, 0.3, 0.2, Anisotropy::Gradient),
    ] {
        let s = slow_rotation(n, u, t, a).unwrap();
        let (dm, dr) = direct_slopes(n, u, t, a);
        // Central differences at h = 3e-6: truncation ~h²/v_crit² and rounding ~1e-13/h, both
        // below 1e-6 (n = 3 has v_crit ≈ 3.6e-3).
        assert!(
            rel(s.mass_coefficient, dm) < 1e-6,
            "mass n={n} ϒ={u} τ={t}: {} vs {dm}",
            s.mass_coefficient
        );
        assert!(
            rel(s.mean_radius_coefficient, dr) < 1e-6,
            "radius n={n} ϒ={u} τ={t}: {} vs {dr}",
            s.mean_radius_coefficient
        );
    }
}

/// Gradient ansatz: all forces are scaled by (1 − τ) inside matter (the theory notes, anisotropy section: exact),
/// which a rescaling ξ → √(1 − τ) ξ removes; the fractional first-order changes are the τ = 0
/// ones exactly.
#[test]
fn gradient_ansatz_rescaling_identity() {
    for (n, u) in [(1.5, 0.0), (1.5, 0.3), (3.0, -0.2)] {
        let s0 = slow_rotation(n, u, 0.0, Anisotropy::Gradient).unwrap();
        for t in [-0.3, 0.2, 0.5] {
            let s = slow_rotation(n, u, t, Anisotropy::Gradient).unwrap();
            assert!(rel(s.mass_coefficient, s0.mass_coefficient) < 1e-9);
            assert!(rel(s.mean_radius_coefficient, s0.mean_radius_coefficient) < 1e-9);
            let (a, b) = (s.shape.unwrap(), s0.shape.unwrap());
            assert!(rel(a.a2_psi2, b.a2_psi2) < 1e-9);
            assert!(rel(s.xi1 * (1.0 - t).sqrt(), s0.xi1) < 1e-10);
        }
    }
}

/// Standard gravity, n = 1, 1.5, 2 and 3, and modified points: the fixture
/// tests/fixtures/rotating_polytrope_reference.csv, written by
/// tools/reference_rotating_polytrope.py (scipy solve_ivp DOP853, rtol 1e-13). Its `linear` rows
/// integrate Chandrasekhar's (1933) first-order equations in his own second-order form (ψ₀, ψ₂,
/// surface by a variable swap to θ); its `direct` rows differentiate a non-linear spherical solve
/// at v = ±h, ±2h (Richardson). Agreement ≤ 1e-8 for everything the bounds use, and for A₂ψ₂(ξ₁).
#[test]
fn against_independent_scipy_reference() {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/rotating_polytrope_reference.csv"
    );
    let mut rdr = csv::ReaderBuilder::new()
        .comment(Some(b'#'))
        .from_path(path)
        .unwrap();
    let (mut linear, mut direct) = (0, 0);
    for rec in rdr.records() {
        let rec = rec.unwrap();
        let f = |i: usize| rec[i].parse::<f64>().ok();
        let (n, u, t) = (f(0).unwrap(), f(1).unwrap(), f(2).unwrap());
        let ans = match &rec[3] {
            "none" => Anisotropy::None,
            "density-squared" => Anisotropy::DensitySquared,
            "gradient" => Anisotropy::Gradient,
            other => panic!("unknown ansatz {other}"),
        };
        let s = slow_rotation(n, u, t, ans).unwrap();
        let what = format!("n={n} ϒ={u} τ={t} {ans:?} {}", &rec[4]);
        assert!(rel(s.xi1, f(5).unwrap()) < 1e-9, "{what}: ξ₁ {}", s.xi1);
        assert!(rel(s.omega, f(6).unwrap()) < 1e-9, "{what}: ω {}", s.omega);
        assert!(
            rel(s.mass_coefficient, f(9).unwrap()) < 1e-8,
            "{what}: d ln M/dv {} vs {:?}",
            s.mass_coefficient,
            f(9)
        );
        assert!(
            rel(s.mean_radius_coefficient, f(10).unwrap()) < 1e-8,
            "{what}: d ln R/dv {} vs {:?}",
            s.mean_radius_coefficient,
            f(10)
        );
        match &rec[4] {
            "linear" => {
                linear += 1;
                assert!(rel(s.psi0_surface, f(7).unwrap()) < 1e-9, "{what}: ψ₀");
                assert!(rel(s.m0_surface, f(8).unwrap()) < 1e-9, "{what}: m₀");
                let a2 = s.shape.unwrap().a2_psi2;
                assert!(rel(a2, f(11).unwrap()) < 1e-8, "{what}: A₂ψ₂ {a2}");
            }
            _ => direct += 1,
        }
    }
    assert!(
        linear >= 4 && direct >= 10,
        "{linear} linear, {direct} direct rows"
    );
    // n = 3: the mass does not depend on ρ_c, so there is no fixed-mass radius coefficient; a
    // spinning star holds more mass at fixed ρ_c, its equator moves out and its pole in.
    let s3 = slow_rotation(3.0, 0.0, 0.0, Anisotropy::None).unwrap();
    assert!(s3.radius_at_fixed_mass_coefficient.is_none());
    for n in [1.5, 3.0] {
        let s = slow_rotation(n, 0.0, 0.0, Anisotropy::None).unwrap();
        let shape = s.shape.unwrap();
        assert!(s.mass_coefficient > 0.0);
        assert!(shape.equatorial_radius_coefficient > 0.0 && shape.polar_radius_coefficient < 0.0);
    }
}

#[test]
fn too_fast_for_first_order_is_a_typed_outcome() {
    let s = slow_rotation(1.5, 0.0, 0.0, Anisotropy::None).unwrap();
    // v_max = 0.1 × the Roche break-up value 2ω/((3/2)³ξ₁³) (definition).
    let v_crit = 2.0 * s.omega / (3.375 * s.xi1.powi(3));
    assert!(rel(s.v_max, FIRST_ORDER_MAX_FRACTION_OF_BREAKUP * v_crit) < 1e-14);
    let ok = s.at(0.5 * s.v_max).unwrap();
    assert!(rel(ok.mass, 0.5 * s.v_max * s.mass_coefficient) < 1e-14);
    match s.at(2.0 * s.v_max) {
        Err(e @ SlowRotationError::TooFastForFirstOrder { .. }) => {
            assert_eq!(e.code(), "too-fast-for-first-order")
        }
        other => panic!("expected too fast, got {other:?}"),
    }
    assert!(s.at(f64::NAN).is_err() && s.at(-1.0).is_err());
    // Density-squared τ ≠ 0: the shape is not specified, the spherical part is.
    let a = slow_rotation(1.5, 0.0, 0.2, Anisotropy::DensitySquared).unwrap();
    assert!(a.shape.is_none() && a.mass_coefficient.is_finite());
    // No model below the existence bound (the theory notes, existence bounds): a typed error.
    assert!(slow_rotation(1.5, -0.7, 0.0, Anisotropy::None).is_err());
    assert!(slow_rotation(0.5, 0.0, 0.0, Anisotropy::None).is_err());
}

#[test]
fn rotation_parameter_definition() {
    // v = Ω²/(2πGρ_c), G = 6.67430e-11 (CODATA 2018).
    let v = rotation_parameter_v(3600.0, 1e5);
    let omega = 2.0 * PI / 3600.0;
    assert!(rel(v, omega * omega / (2.0 * PI * 6.674_30e-11 * 1e5)) < 1e-14);
}

/// The cold, fully degenerate hydrogen-rich floor (μ_e = 8/7, X = 0.75) of the project's
/// structure check values (theory notes, rotation section: computed there, Roche): 35.7, 25.5,
/// 23.8, 22.3, 19.8 min at 0.05, 0.07, 0.075, 0.08, 0.09 M☉ with R = 0.856, 0.764, 0.747, 0.731,
/// 0.702 R_J. The trade quotes a floor of ≈ 22 min (common practice, no source).
#[test]
fn breakup_curve_reference_floor() {
    let table = WdMassRadius::new(0.0, 0.0, Anisotropy::None, &WdTableOptions::default()).unwrap();
    let masses = [0.05, 0.07, 0.075, 0.08, 0.09];
    let curve = breakup_curve(&table, 8.0 / 7.0, &masses, BreakupModel::Roche);
    let rj = R_JUP_EQ_NOMINAL_M / R_SUN_NOMINAL_M;
    for ((p, want_min), want_rj) in curve
        .iter()
        .zip([35.7, 25.5, 23.8, 22.3, 19.8])
        .zip([0.856, 0.764, 0.747, 0.731, 0.702])
    {
        let p = p.as_ref().unwrap();
        assert!((p.period_s / 60.0 - want_min).abs() < 0.05, "{p:?}");
        assert!((p.radius_rsun / rj - want_rj).abs() < 5e-4, "{p:?}");
        // Roche limit identity: P = 2π√(R_eq³/(GM)) with R_eq = 1.5 R_polar.
        assert!(rel(p.equatorial_radius_rsun, 1.5 * p.radius_rsun) < 1e-14);
        let r_eq = p.equatorial_radius_rsun * R_SUN_NOMINAL_M;
        let kepler = 2.0 * PI * (r_eq.powi(3) / (p.mass_msun * GM_SUN_NOMINAL_M3_S2)).sqrt();
        assert!(rel(p.period_s, kepler) < 1e-13);
    }
    assert!((curve[3].as_ref().unwrap().period_s / 60.0 - 22.0).abs() < 0.5);
    // Above the Chandrasekhar mass: a typed error, never NaN.
    let wd = breakup_curve(&table, 2.0, &[0.6, 1.5], BreakupModel::Roche);
    assert_eq!(wd[1].as_ref().unwrap_err().code(), "above-chandrasekhar");
    // 0.6 M☉, μ_e = 2: 34.0 s (theory check values, full EOS, Roche).
    assert!((wd[0].as_ref().unwrap().period_s - 34.0).abs() < 0.1);
    // ϒ enters only through R(M): P ∝ R^{3/2} at fixed M (the exterior is screened).
    let t3 = WdMassRadius::new(0.3, 0.0, Anisotropy::None, &WdTableOptions::default()).unwrap();
    let p3 = breakup_curve(&t3, 8.0 / 7.0, &[0.08], BreakupModel::Roche)[0]
        .clone()
        .unwrap();
    let p0 = curve[3].as_ref().unwrap();
    let want = p0.period_s * (p3.radius_rsun / p0.radius_rsun).powf(1.5);
    assert!(rel(p3.period_s, want) < 1e-12);
    // 26.9 min at ϒ = 0.3 (theory check values).
    assert!(
        (p3.period_s / 60.0 - 26.9).abs() < 0.1,
        "{}",
        p3.period_s / 60.0
    );
    assert!(breakup_period_s(0.08, -1.0, BreakupModel::Roche).is_err());
}

/// The P₂ part checked through the Love number it implies. The rotational l = 2 forcing is a
/// potential ∝ ξ²P₂, so the star's induced exterior potential over the applied one at the
/// surface is the second-degree Love number: k₂ = −6A₂ψ₂(ξ₁)/ξ₁² − 1 (derived in
/// docs/rotation.md). Published values, as apsidal constants k₂/2 of polytropes (Poisson & Will
/// 2014, *Gravity*, Table 2.1: 0.259909 for n = 1, 0.143279 for n = 3/2, 0.0144430 for n = 3;
/// read from a public code file that hard-codes that table, and matching the n = 1 closed form
/// (15/π² − 1)/2 = 0.2599089). Agreement is at the 6 digits printed (≤ 4e-6 relative).
#[test]
fn shape_part_gives_the_published_love_numbers() {
    let k2 = |n: f64| {
        let s = slow_rotation(n, 0.0, 0.0, Anisotropy::None).unwrap();
        -6.0 * s.shape.unwrap().a2_psi2 / (s.xi1 * s.xi1) - 1.0
    };
    assert!(rel(k2(1.0), 15.0 / (PI * PI) - 1.0) < 1e-8);
    assert!(rel(k2(1.0), 2.0 * 0.259_909) < 4e-6, "{}", k2(1.0));
    assert!(rel(k2(1.5), 2.0 * 0.143_279) < 4e-6, "{}", k2(1.5));
    assert!(rel(k2(3.0), 2.0 * 0.014_443_0) < 4e-6, "{}", k2(3.0));
}

/// Largest relative error of the slow-rotation table against direct solves (what the bounds use:
/// d ln M/dv, d ln R/dv at fixed mass, the central-density contrast ξ₁³/(3ω) and v_max), over
/// off-node (ϒ, τ, n) points of the demo's grid range, for one ansatz. Returns (worst error,
/// where).
fn table_error(anisotropy: Anisotropy) -> (f64, String) {
    use dwarfbound::theory::slow_rotation_table::SlowRotationTable;
    let table = SlowRotationTable::new((-0.3, 0.6), (-0.3, 0.3), anisotropy);
    let taus: &[f64] = if anisotropy == Anisotropy::None {
        &[0.0]
    } else {
        &[-0.275, -0.125, 0.025, 0.175, 0.275]
    };
    let mut worst = (0.0, String::new());
    for &n in &[1.5, 1.125, 1.275, 1.425, 1.575, 2.025, 2.475, 2.925] {
        let mut worst_n: f64 = 0.0;
        for &t in taus {
            for &u in &[-0.275, -0.125, 0.025, 0.175, 0.325, 0.575] {
                let a = table.at(u, t, n).unwrap();
                let d = slow_rotation(n, u, t, anisotropy).unwrap();
                let contrast = |s: &dwarfbound::theory::slow_rotation::SlowRotation| {
                    s.xi1.powi(3) / (3.0 * s.omega)
                };
                let errs = [
                    ("d ln M/dv", rel(a.mass_coefficient, d.mass_coefficient)),
                    (
                        "d ln R/dv|_M",
                        rel(
                            a.radius_at_fixed_mass_coefficient.unwrap(),
                            d.radius_at_fixed_mass_coefficient.unwrap(),
                        ),
                    ),
                    ("contrast", rel(contrast(&a), contrast(&d))),
                    ("v_max", rel(a.v_max, d.v_max)),
                ];
                for (what, e) in errs {
                    worst_n = worst_n.max(e);
                    if e > worst.0 {
                        worst = (e, format!("{what} at ϒ = {u}, τ = {t}, n = {n}"));
                    }
                }
            }
        }
        println!("{anisotropy:?} n = {n}: {worst_n:.2e}");
    }
    worst
}

// Source: direct solves of the first-order equations (`slow_rotation`, itself checked above
// against the scipy reference and Chandrasekhar's n = 1 closed forms) at off-node points: cell
// centres of the lattice in ϒ and τ (steps 0.05), and indices halfway between the index nodes
// (steps 0.15) and at the node n = 3/2. The tolerance is the measured interpolation error
// (docs/rotation.md §3). The gradient ansatz (worst 8.7e-5 when measured) is left out to keep
// the test short: its table differs only in the lattice's values.
#[test]
fn slow_rotation_table_against_direct_solves() {
    let (e, at) = table_error(Anisotropy::DensitySquared);
    println!("density-squared: worst relative error {e:.3e} ({at})");
    let (i, at_i) = table_error(Anisotropy::None);
    println!("isotropic: worst relative error {i:.3e} ({at_i})");
    assert!(e < TABLE_TOLERANCE, "{e} at {at}");
    assert!(i < TABLE_TOLERANCE, "{i} at {at_i}");
}

/// The tolerance of the table check: the measured worst error (3.55e-4, density-squared, d ln M/dv
/// at ϒ = −0.275, τ = 0.275, n = 1.125), rounded up.
const TABLE_TOLERANCE: f64 = 4e-4;

// Source: the table's definition (docs/rotation.md §3): standard gravity is the direct solve, and
// on a lattice node at n = 3/2 the interpolation is the node's own solve, moved by the
// standard-gravity anchor (zero where the anisotropic solve at τ = 0 equals the isotropic one).
#[test]
fn slow_rotation_table_is_exact_on_its_anchors() {
    use dwarfbound::theory::slow_rotation_table::SlowRotationTable;
    let table = SlowRotationTable::new((-0.3, 0.6), (-0.3, 0.3), Anisotropy::DensitySquared);
    assert_eq!(table.slabs_solved(), 0);
    for n in [1.5, 1.83, 2.94] {
        let a = table.at(0.0, 0.0, n).unwrap();
        let d = slow_rotation(n, 0.0, 0.0, Anisotropy::None).unwrap();
        assert_eq!(a.mass_coefficient, d.mass_coefficient);
        assert_eq!(
            a.radius_at_fixed_mass_coefficient,
            d.radius_at_fixed_mass_coefficient
        );
        assert_eq!((a.xi1, a.omega, a.v_max), (d.xi1, d.omega, d.v_max));
    }
    // Standard gravity needs no slab.
    assert_eq!(table.slabs_solved(), 0);
    let a = table.at(0.3, -0.2, 1.5).unwrap();
    let d = slow_rotation(1.5, 0.3, -0.2, Anisotropy::DensitySquared).unwrap();
    assert!(rel(a.mass_coefficient, d.mass_coefficient) < 1e-12);
    // One slab (n = 3/2) was solved for it.
    assert_eq!(table.slabs_solved(), 1);
}
