//! Checks of the structure part of the theory (Lane–Emden, white dwarfs, break-up period)
//! against published tables, closed forms, CODATA/IAU constants and an independent scipy
//! integration (`tools/reference_lane_emden.py`). Each check names its source.

use dwarfbound::theory::error::TheoryError;
use dwarfbound::theory::lane_emden::{
    solve_lane_emden, LaneEmdenOptions, LaneEmdenSolution, ModifiedLaneEmden, SurfaceMethod,
};
use dwarfbound::theory::rotation::{breakup_period_s, BreakupModel, ROCHE_EQUATORIAL_TO_POLAR};
use dwarfbound::theory::white_dwarf::{
    chandrasekhar_mass_msun, density_unit_kg_m3, length_unit_m, mass_unit_msun, omega3,
    radius_direct_rsun, ChandrasekharEos, WdMassRadius, WdTableOptions, POST_NEWTONIAN_COMPACTNESS,
};
use dwarfbound::theory::Anisotropy;
use proptest::prelude::*;
use std::sync::OnceLock;

const KM_PER_RSUN: f64 = 6.957e5; // IAU 2015 B3 nominal R☉ in km
const RJ_IN_RSUN: f64 = 7.1492e7 / 6.957e8; // IAU 2015 B3 nominal R_J / R☉

fn standard_table() -> &'static WdMassRadius {
    static T: OnceLock<WdMassRadius> = OnceLock::new();
    T.get_or_init(|| {
        WdMassRadius::new(0.0, 0.0, Anisotropy::None, &WdTableOptions::default()).unwrap()
    })
}

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

fn le(n: f64, upsilon: f64, tau: f64, ans: Anisotropy) -> LaneEmdenSolution {
    solve_lane_emden(n, upsilon, tau, ans).unwrap()
}

// ---------------------------------------------------------------------------------------------
// Standard Lane–Emden constants.

#[test]
fn standard_lane_emden_against_chandrasekhar_1939_table_4() {
    // Chandrasekhar 1939, *An Introduction to the Study of Stellar Structure*, Ch. IV, Table 4
    // (printed digits as quoted in docs/structure.md §3.6, there marked "from memory"; the
    // same columns in Horedt 2004, *Polytropes*). Tolerance: the printed rounding, and 1e-6.
    let table = [
        // n, ξ1, ω_n = −ξ1²θ′(ξ1), ρ_c/ρ̄
        (1.5, 3.65375, 2.71406, 5.99071),
        (2.0, 4.35287, 2.41105, 11.40254),
        (3.0, 6.89685, 2.01824, 54.1825),
        (4.0, 14.97155, 1.79723, 622.408),
    ];
    for (n, xi1, omega, contrast) in table {
        let s = le(n, 0.0, 0.0, Anisotropy::None);
        // half a unit in the last printed digit, relative, or 1e-6 when the table is finer
        let tol = |v: f64, decimals: i32| (0.5 * 10f64.powi(-decimals) / v).max(1e-6);
        assert!(rel(s.xi1, xi1) <= tol(xi1, 5), "n = {n}: ξ1 = {}", s.xi1);
        assert!(
            rel(s.omega, omega) <= tol(omega, 5),
            "n = {n}: ω = {}",
            s.omega
        );
        let dec = if contrast > 100.0 { 3 } else { 4 };
        assert!(
            rel(s.density_contrast(), contrast) <= tol(contrast, dec),
            "n = {n}: ρc/ρ̄ = {}",
            s.density_contrast()
        );
        // standard gravity: ω = −ξ1²θ′(ξ1) (docs/structure.md §3.4)
        assert!(rel(s.surface_slope, s.omega) < 1e-12);
    }
}

#[test]
fn standard_lane_emden_closed_forms_n0_n1() {
    // Closed forms (common practice, no source; docs/structure.md §3.6): n = 0, θ = 1 − ξ²/6,
    // ξ1 = √6, ω = 2√6; n = 1, θ = sin ξ/ξ, ξ1 = ω = π, ρc/ρ̄ = π²/3.
    let s0 = le(0.0, 0.0, 0.0, Anisotropy::None);
    assert!(rel(s0.xi1, 6f64.sqrt()) < 1e-9, "{}", s0.xi1);
    assert!(rel(s0.omega, 2.0 * 6f64.sqrt()) < 1e-9, "{}", s0.omega);
    let s1 = le(1.0, 0.0, 0.0, Anisotropy::None);
    let pi = std::f64::consts::PI;
    assert!(rel(s1.xi1, pi) < 1e-9, "{}", s1.xi1);
    assert!(rel(s1.omega, pi) < 1e-9, "{}", s1.omega);
    assert!(rel(s1.density_contrast(), pi * pi / 3.0) < 1e-9);
}

#[test]
fn standard_derived_constants_n_n_w_n_gamma() {
    // N_{3/2}, N_3, W_{3/2}, W_3 as tabulated (Chandrasekhar 1939 Ch. IV, quoted in
    // docs/structure.md §3.6 "from memory": 0.42422, 0.36394, 0.77014, 11.05066) and this work's
    // digits there (0.42421668, 0.36393906, 0.77014037, 11.050681; computed).
    let s15 = le(1.5, 0.0, 0.0, Anisotropy::None);
    let s3 = le(3.0, 0.0, 0.0, Anisotropy::None);
    assert!(rel(s15.n_n(), 0.42421668) < 2e-8);
    assert!(rel(s3.n_n(), 0.36393906) < 2e-8);
    assert!(rel(s15.w_n(), 0.77014037) < 2e-8);
    assert!(rel(s3.w_n(), 11.050681) < 1e-7);
    assert!(rel(s15.n_n(), 0.42422) < 1e-5);
    assert!(rel(s3.n_n(), 0.36394) < 1e-5);
    assert!(rel(s15.w_n(), 0.77014) < 1e-5);
    // γ of docs/bounds.md §1: (5ξ1/(8π))(4πω)^{1/3} = 2.3572859062 at n = 3/2 (computed there).
    let pi = std::f64::consts::PI;
    let gamma_formula = 5.0 * s15.xi1 / (8.0 * pi) * (4.0 * pi * s15.omega).cbrt();
    assert!(rel(s15.gamma(), gamma_formula) < 1e-13);
    assert!(rel(s15.gamma(), 2.3572859062) < 1e-9);
}

#[test]
fn j_9_73_standard_gravity_bounds_md() {
    // docs/bounds.md §1 sanity condition (computed there): J_9.73 = 0.2096067060 at ϒ = τ = 0.
    let s = ModifiedLaneEmden::new(1.5, 0.0, 0.0, Anisotropy::None)
        .unwrap()
        .solve(&LaneEmdenOptions::with_extra_powers(&[9.73]))
        .unwrap();
    let j = s.extra_integral(9.73).unwrap();
    assert!(rel(j, 0.2096067060) < 1e-9, "{j}");
    // k = n reproduces ω (identity).
    let s = ModifiedLaneEmden::new(1.5, 0.3, 0.0, Anisotropy::None)
        .unwrap()
        .solve(&LaneEmdenOptions::with_extra_powers(&[1.5, 0.0]))
        .unwrap();
    assert!(rel(s.extra_integral(1.5).unwrap(), s.omega) < 1e-12);
    // k = 0 gives ξ1³/3 (identity).
    assert!(rel(s.extra_integral(0.0).unwrap(), s.xi1.powi(3) / 3.0) < 1e-11);
}

// ---------------------------------------------------------------------------------------------
// Modified system.

#[test]
fn n0_closed_form_with_upsilon_and_tau() {
    // docs/structure.md §3.6 (verified there): n = 0, ansatz (a): θ = 1 − aξ², a = (1 + 3ϒ/2 − τ)/6,
    // ξ1 = √(6/(1 + 3ϒ/2 − τ)), ω = ξ1³/3 (interior only).
    for (u, t) in [(0.3, 0.0), (-0.2, 0.2), (0.6, -0.2), (-0.5, -0.1)] {
        let s = le(0.0, u, t, Anisotropy::DensitySquared);
        let xi1 = (6.0 / (1.0 + 1.5 * u - t)).sqrt();
        assert!(rel(s.xi1, xi1) < 1e-9, "ϒ = {u}, τ = {t}: {}", s.xi1);
        assert!(rel(s.omega, xi1.powi(3) / 3.0) < 1e-9);
    }
}

#[test]
fn modified_values_of_structure_md_3_6() {
    // docs/structure.md §3.6, computed there (ansatz a), quoted to 8 figures: tolerance 1e-7.
    let cases = [
        (1.5, 0.3, 0.0, 4.1591831, 2.6682050),
        (1.5, -0.2, 0.2, 3.4012517, 3.4962697),
        (3.0, 0.3, 0.0, 8.3275789, 2.1768167),
        (3.0, -0.2, 0.2, 5.4472210, 2.2410477),
    ];
    for (n, u, t, xi1, omega) in cases {
        let s = le(n, u, t, Anisotropy::DensitySquared);
        assert!(rel(s.xi1, xi1) < 1e-7, "{n} {u} {t}: ξ1 = {}", s.xi1);
        assert!(rel(s.omega, omega) < 1e-7, "{n} {u} {t}: ω = {}", s.omega);
    }
    // docs/bounds.md §1 table (n = 3/2, τ = 0; computed there, 7 figures).
    let rows = [
        (-0.3, 3.175945, 2.818503, 3.788603, 2.074973, 0.392823),
        (-0.1, 3.492462, 2.740094, 5.182130, 2.260408, 0.251027),
        (0.027, 3.697819, 2.708130, 6.223668, 2.383978, 0.200370),
        (0.1, 3.818229, 2.694127, 6.887260, 2.457356, 0.178552),
        (0.3, 4.159183, 2.668205, 8.988426, 2.668176, 0.135493),
    ];
    for (u, xi1, omega, delta, gamma, j) in rows {
        let s = ModifiedLaneEmden::new(1.5, u, 0.0, Anisotropy::None)
            .unwrap()
            .solve(&LaneEmdenOptions::with_extra_powers(&[9.73]))
            .unwrap();
        // printed to 6 decimals: half a unit of the last digit
        let ok = |a: f64, b: f64| (a - b).abs() <= 5.000_1e-7;
        assert!(ok(s.xi1, xi1), "ϒ = {u}");
        assert!(ok(s.omega, omega), "ϒ = {u}");
        assert!(ok(s.density_contrast(), delta), "ϒ = {u}");
        assert!(ok(s.gamma(), gamma), "ϒ = {u}");
        assert!(ok(s.extra_integral(9.73).unwrap(), j), "ϒ = {u}");
    }
}

#[test]
fn surface_slope_identities_of_structure_md_3_4() {
    // docs/structure.md §3.4 (computed there): n = 3, ϒ = 0.3, τ = 0.2 ansatz b: ω = 3.04219,
    // −ξ1²θ′ = 2.43376 = (1 − τ)ω; n = 1, ϒ = 0.3: ω = 2.9421, −ξ1²θ′ = 1.5400 = ω/D(ξ1).
    let s = le(3.0, 0.3, 0.2, Anisotropy::Gradient);
    assert!((s.omega - 3.04219).abs() < 5e-6);
    assert!((s.surface_slope - 2.43376).abs() < 5e-6);
    assert!(rel(s.surface_slope, 0.8 * s.omega) < 1e-12);
    let s = le(1.0, 0.3, 0.0, Anisotropy::None);
    assert!((s.omega - 2.9421).abs() < 5e-5);
    assert!((s.surface_slope - 1.5400).abs() < 5e-5);
    let d = 1.0 + 0.3 * s.xi1 * s.xi1 / 4.0;
    assert!(rel(s.surface_slope, s.omega / d) < 1e-12);
}

#[test]
fn gradient_ansatz_is_an_exact_rescaling_of_g() {
    // docs/structure.md §2.2 / docs/bounds.md §1 (exact identity): G → (1 − τ)G, so ξ1 ∝ (1−τ)^{-1/2},
    // ω and J_k ∝ (1−τ)^{-3/2}. The direct integration must agree to 1e-10.
    let opts = LaneEmdenOptions::with_extra_powers(&[9.73]);
    for n in [1.0, 1.5, 3.0] {
        for u in [-0.5, -0.2, 0.0, 0.3, 0.6] {
            let base = ModifiedLaneEmden::new(n, u, 0.0, Anisotropy::None)
                .unwrap()
                .solve(&opts)
                .unwrap();
            for t in [-0.2, 0.1, 0.2, 0.5] {
                let direct = ModifiedLaneEmden::new(n, u, t, Anisotropy::Gradient)
                    .unwrap()
                    .solve(&opts)
                    .unwrap();
                let scaled = base.rescaled_to_gradient(t).unwrap();
                let s = 1.0 - t;
                assert!(rel(direct.xi1, scaled.xi1) < 1e-10, "{n} {u} {t}");
                assert!(rel(direct.omega, scaled.omega) < 1e-10, "{n} {u} {t}");
                assert!(rel(direct.surface_slope, scaled.surface_slope) < 1e-10);
                let jd = direct.extra_integral(9.73).unwrap();
                let js = scaled.extra_integral(9.73).unwrap();
                assert!(rel(jd, js) < 1e-9, "{n} {u} {t}: {jd} {js}");
                assert!(rel(scaled.xi1, base.xi1 / s.sqrt()) < 1e-15);
            }
        }
    }
}

#[test]
fn against_independent_scipy_reference() {
    // tests/fixtures/lane_emden_reference.csv, written by tools/reference_lane_emden.py
    // (scipy solve_ivp DOP853, rtol 1e-12, atol 1e-14, surface by variable swap).
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/lane_emden_reference.csv"
    );
    let mut rdr = csv::ReaderBuilder::new()
        .comment(Some(b'#'))
        .from_path(path)
        .unwrap();
    let mut rows = 0;
    for rec in rdr.records() {
        let rec = rec.unwrap();
        let f = |i: usize| rec[i].parse::<f64>().unwrap();
        let (n, u, t) = (f(0), f(1), f(2));
        let ans = match &rec[3] {
            "density-squared" => Anisotropy::DensitySquared,
            "gradient" => Anisotropy::Gradient,
            other => panic!("unknown ansatz {other}"),
        };
        let k = f(7);
        let s = ModifiedLaneEmden::new(n, u, t, ans)
            .unwrap()
            .solve(&LaneEmdenOptions::with_extra_powers(&[k]))
            .unwrap();
        assert!(
            rel(s.xi1, f(4)) < 1e-8,
            "{n} {u} {t} {ans:?}: ξ1 {} vs {}",
            s.xi1,
            f(4)
        );
        assert!(
            rel(s.omega, f(5)) < 1e-8,
            "{n} {u} {t} {ans:?}: ω {} vs {}",
            s.omega,
            f(5)
        );
        assert!(rel(s.surface_slope, f(6)) < 1e-8, "{n} {u} {t} {ans:?}");
        assert!(
            rel(s.extra_integral(k).unwrap(), f(8)) < 1e-8,
            "{n} {u} {t} {ans:?}: J"
        );
        rows += 1;
    }
    assert_eq!(rows, 72);
}

#[test]
fn surface_methods_agree() {
    // docs/structure.md §6 item 2 (computed there): event-plus-Newton and variable-swap surface
    // location agree to ≤ 1e-10 on n ∈ {3/2, 3}, ϒ ∈ {−0.5, −0.2, 0, 0.1, 0.3, 0.6},
    // τ ∈ {−0.2, 0, 0.2}.
    let mut en = LaneEmdenOptions::with_extra_powers(&[9.73]);
    en.surface = SurfaceMethod::EventNewton;
    let sw = LaneEmdenOptions::with_extra_powers(&[9.73]);
    for n in [1.5, 3.0] {
        for u in [-0.5, -0.2, 0.0, 0.1, 0.3, 0.6] {
            for t in [-0.2, 0.0, 0.2] {
                for ans in [Anisotropy::DensitySquared, Anisotropy::Gradient] {
                    let le = ModifiedLaneEmden::new(n, u, t, ans).unwrap();
                    let a = le.solve(&en).unwrap();
                    let b = le.solve(&sw).unwrap();
                    assert!(rel(a.xi1, b.xi1) < 1e-10, "{n} {u} {t} {ans:?}");
                    assert!(rel(a.omega, b.omega) < 1e-10, "{n} {u} {t} {ans:?}");
                    let (ja, jb) = (a.extra_integrals[0].1, b.extra_integrals[0].1);
                    assert!(rel(ja, jb) < 1e-10, "{n} {u} {t} {ans:?}");
                }
            }
        }
    }
}

// ---------------------------------------------------------------------------------------------
// Typed errors at the existence bounds.

#[test]
fn typed_errors_at_existence_bounds() {
    // docs/structure.md §1.4: ansatz a needs ϒ > −2(1 − τ)/3; ansatz b and isotropic ϒ > −2/3.
    for (u, t, ans) in [
        (-2.0 / 3.0, 0.0, Anisotropy::None),
        (-0.7, 0.0, Anisotropy::None),
        (-0.55, 0.2, Anisotropy::DensitySquared),
        (-2.0 * 0.8 / 3.0 - 1e-12, 0.2, Anisotropy::DensitySquared),
        (-0.67, 0.5, Anisotropy::Gradient),
        (0.0, 1.0, Anisotropy::DensitySquared),
    ] {
        let e = ModifiedLaneEmden::new(1.5, u, t, ans).unwrap_err();
        assert!(
            matches!(e, TheoryError::NoRegularCentre { .. }),
            "{u} {t}: {e}"
        );
    }
    // Just inside the bound a star exists (docs/structure.md §1.4: n = 3/2, ϒ = −0.6666: ξ1 → 2.54,
    // ω → 3.30; n = 3: ξ1 → 3.92, ω → 1.681; computed there).
    let s = le(1.5, -0.6666, 0.0, Anisotropy::None);
    assert!(
        (s.xi1 - 2.54).abs() < 0.01 && (s.omega - 3.30).abs() < 0.01,
        "{s:?}"
    );
    assert!(s.below_relativistic_bound);
    let s = le(3.0, -0.6666, 0.0, Anisotropy::None);
    assert!(
        (s.xi1 - 3.92).abs() < 0.01 && (s.omega - 1.681).abs() < 0.001,
        "{s:?}"
    );
    // Relativistic bound ϒ > −4/9 (Babichev et al. 2016): a warning, not an error.
    assert!(le(1.5, -0.45, 0.0, Anisotropy::None).below_relativistic_bound);
    assert!(!le(1.5, -0.44, 0.0, Anisotropy::None).below_relativistic_bound);
    // 0 < n < 1 with ϒ ≠ 0 (docs/structure.md §1.3, §3.5.5), n ≥ 5, τ ≠ 0 without ansatz, τ ≥ 1 (b).
    assert!(matches!(
        ModifiedLaneEmden::new(0.5, -0.1, 0.0, Anisotropy::None),
        Err(TheoryError::UnsupportedIndex { .. })
    ));
    assert!(matches!(
        ModifiedLaneEmden::new(5.0, 0.0, 0.0, Anisotropy::None),
        Err(TheoryError::UnsupportedIndex { .. })
    ));
    assert!(matches!(
        ModifiedLaneEmden::new(1.5, 0.0, 0.1, Anisotropy::None),
        Err(TheoryError::InvalidParameter { .. })
    ));
    assert!(matches!(
        ModifiedLaneEmden::new(1.5, 0.0, 1.0, Anisotropy::Gradient),
        Err(TheoryError::InvalidParameter { .. })
    ));
    assert!(matches!(
        ModifiedLaneEmden::new(1.5, f64::NAN, 0.0, Anisotropy::None),
        Err(TheoryError::InvalidParameter { .. })
    ));
    // Very large ϒ: θ ∝ ξ^{−4/3} creeps towards 0 without a surface (n = 3/2; from the
    // asymptotic form of the §3.2 system, θ′ ≈ −(4/3)θ/ξ when the ϒ terms dominate).
    assert!(matches!(
        solve_lane_emden(1.5, 50.0, 0.0, Anisotropy::None),
        Err(TheoryError::NoSurface { .. })
    ));
    // 0 < n < 1 at ϒ = 0 is fine.
    let s = le(0.5, 0.0, 0.0, Anisotropy::None);
    assert!(s.xi1 > 2.4 && s.xi1 < 3.2);
}

#[test]
fn vanishing_denominator_is_a_typed_error() {
    // n = 1: D = 1 + ϒξ²/4 vanishes at ξ = 2/√(−ϒ) (docs/structure.md §1.3). In the supported
    // domain the surface comes first (as the spec found), so the guard is checked on the
    // right-hand side itself: at and beyond that ξ the derivatives are refused with the reason.
    let le = ModifiedLaneEmden::new(1.0, -0.5, 0.0, Anisotropy::None).unwrap();
    let xi0 = 2.0 / 0.5f64.sqrt();
    assert!((le.denominator(xi0, 0.5)).abs() < 1e-15);
    for xi in [xi0, xi0 * 1.01] {
        match le.derivatives(xi, 0.5, 1.0) {
            Err(TheoryError::DenominatorVanishes { xi: at, d }) => {
                assert_eq!(at, xi);
                assert!(d <= 1e-9);
            }
            other => panic!("{other:?}"),
        }
    }
    assert!(le.derivatives(xi0 * 0.99, 0.5, 1.0).is_ok());
    // …and the solve itself stays regular with D(ξ1) → 0 as the bound nears (D(ξ1) ≈ 0.004
    // at ϒ = −0.66, docs/structure.md §1.3, computed there): −ξ1²θ′ = ω/D(ξ1) becomes large.
    let s = solve_lane_emden(1.0, -0.66, 0.0, Anisotropy::None).unwrap();
    let d1 = 1.0 - 0.66 * s.xi1 * s.xi1 / 4.0;
    assert!((d1 - 0.004).abs() < 0.0015, "{d1}");
    assert!(rel(s.surface_slope, s.omega / d1) < 1e-6);
}

// ---------------------------------------------------------------------------------------------
// White dwarfs.

#[test]
fn chandrasekhar_mass_standard_gravity() {
    // docs/structure.md §4.1 (verified there): with CODATA 2018 and M☉ = (GM)☉/G,
    // M_Ch = 5.82519/μ_e² M☉; textbook ≈ 5.83/μ_e² (Chandrasekhar 1939, Ch. XI) and 5.836/μ_e²
    // (Shapiro & Teukolsky 1983, quoted from memory in the spec): within 0.2 %.
    for mu_e in [1.0, 2.0, 8.0 / 7.0, 2.154] {
        let m = chandrasekhar_mass_msun(0.0, 0.0, Anisotropy::None, mu_e).unwrap();
        assert!(rel(m, 5.82519 / (mu_e * mu_e)) < 1e-5, "{m}");
        assert!(rel(m * mu_e * mu_e, 5.83) < 2e-3);
        assert!(rel(m * mu_e * mu_e, 5.836) < 2e-3);
    }
    assert!(
        (chandrasekhar_mass_msun(0.0, 0.0, Anisotropy::None, 2.0).unwrap() - 1.456298).abs() < 2e-6
    );
    // Units of §4.2–4.3 (computed there from the same constants): ρ₀ = 9.73932e8 μ_e kg m⁻³,
    // ℓ = 7769.06 km/μ_e, 𝓜 = 2.88628 M☉/μ_e², and 𝓜·ω₃ = M_Ch (identity).
    assert!(rel(density_unit_kg_m3(2.0), 2.0 * 9.73932e8) < 1e-6);
    assert!(rel(length_unit_m(2.0), 7769.06e3 / 2.0) < 1e-6);
    assert!(rel(mass_unit_msun(2.0), 2.88628 / 4.0) < 1e-5);
    let w3 = omega3(0.0, 0.0, Anisotropy::None).unwrap();
    let mch = chandrasekhar_mass_msun(0.0, 0.0, Anisotropy::None, 2.0).unwrap();
    assert!(rel(mass_unit_msun(2.0) * w3, mch) < 1e-12);
}

#[test]
fn chandrasekhar_mass_modified() {
    // docs/structure.md §4.1 examples (computed there; μ_e = 2, ansatz a, printed to 5 figures).
    let cases = [
        (-0.5, 0.0, 1.2748),
        (-0.2, 0.0, 1.3829),
        (0.1, 0.0, 1.4938),
        (0.3, 0.0, 1.57072), // also the §0 headline value
        (0.6, 0.0, 1.6919),
        (0.0, 0.2, 1.6911),
        (0.0, -0.2, 1.2841),
    ];
    for (u, t, m) in cases {
        let got = chandrasekhar_mass_msun(u, t, Anisotropy::DensitySquared, 2.0).unwrap();
        assert!((got - m).abs() < 5.0001e-5, "ϒ = {u}, τ = {t}: {got}");
    }
    // Ansatz b: the τ = 0 value times (1 − τ)^{−3/2} (docs/structure.md §2.2, exact); 2.035 M☉ at
    // τ = 0.2 (§2.3, computed).
    for (u, t) in [(0.0, 0.2), (0.3, 0.2), (-0.2, -0.2)] {
        let b = chandrasekhar_mass_msun(u, t, Anisotropy::Gradient, 2.0).unwrap();
        let a0 = chandrasekhar_mass_msun(u, 0.0, Anisotropy::None, 2.0).unwrap();
        assert!(rel(b, a0 / (1.0 - t) / (1.0 - t).sqrt()) < 1e-10);
    }
    let b = chandrasekhar_mass_msun(0.0, 0.2, Anisotropy::Gradient, 2.0).unwrap();
    assert!((b - 2.035).abs() < 5e-4);
}

#[test]
fn full_eos_radii_of_structure_md_4_4() {
    // docs/structure.md §4.4, μ_e = 2, standard gravity (computed there): R = 14657 / 8840.9 /
    // 5716.4 / 4165.0 / 1985.8 km and ρ_c = 1.907e5 / 3.207e6 / 2.828e7 / 1.182e8 / 2.284e9
    // g cm⁻³ at 0.2 / 0.6 / 1.0 / 1.2 / 1.4 M☉.
    let t = standard_table();
    let rows = [
        (0.2, 14657.0, 1.907e5),
        (0.6, 8840.9, 3.207e6),
        (1.0, 5716.4, 2.828e7),
        (1.2, 4165.0, 1.182e8),
        (1.4, 1985.8, 2.284e9),
    ];
    for (m, r_km, rho_c_cgs) in rows {
        let r = t.radius(m, 2.0).unwrap();
        assert!(
            rel(r.radius_rsun * KM_PER_RSUN, r_km) < 1e-4,
            "{m}: {}",
            r.radius_rsun
        );
        assert!(rel(r.central_density_kg_m3 * 1e-3, rho_c_cgs) < 2e-3, "{m}");
    }
    // Modified examples (docs/structure.md §4.4, computed there): R(1.0 M☉) = 6074.0 km at ϒ = 0.1,
    // 5025.7 km at ϒ = −0.2, 7064.5 km at τ = 0.2 (ansatz a).
    for (u, tau, r_km) in [(0.1, 0.0, 6074.0), (-0.2, 0.0, 5025.7), (0.0, 0.2, 7064.5)] {
        let tab = WdMassRadius::new(
            u,
            tau,
            Anisotropy::DensitySquared,
            &WdTableOptions::default(),
        )
        .unwrap();
        let r = tab.radius_rsun(1.0, 2.0).unwrap() * KM_PER_RSUN;
        assert!(rel(r, r_km) < 1e-4, "ϒ = {u}, τ = {tau}: {r}");
    }
}

#[test]
fn table_agrees_with_direct_root_search() {
    // Internal consistency (no outside source): table interpolation against a bracketing root
    // search with full solves, M ≤ 1.4 M☉.
    let t = standard_table();
    let eos = ChandrasekharEos::new(0.0, 0.0, Anisotropy::None).unwrap();
    for m in [0.01, 0.2, 0.6, 1.0, 1.2, 1.4] {
        let direct = radius_direct_rsun(&eos, t.mass_ch_dimless(), m, 2.0).unwrap();
        let table = t.radius_rsun(m, 2.0).unwrap();
        assert!(rel(table, direct) < 1e-7, "{m}: {table} vs {direct}");
    }
}

#[test]
fn full_eos_low_density_limit_is_the_n32_polytrope() {
    // docs/structure.md §4.4 (verified there to 2e-7): at x_c = 1e-3 the star is an n = 3/2
    // polytrope with K_NR = (3π²)^{2/3}ħ²/[5 m_e (μ_e m_u)^{5/3}] (Chandrasekhar 1939, Ch. X),
    // so R·M^{1/3} = K_NR/(N_{3/2} G). Constants: CODATA 2018.
    use dwarfbound::constants::{G_SI, HBAR_SI, M_E_KG, M_U_KG};
    let mu_e = 2.0;
    let pi = std::f64::consts::PI;
    let k_nr = (3.0 * pi * pi).powf(2.0 / 3.0) * HBAR_SI * HBAR_SI
        / (5.0 * M_E_KG * (mu_e * M_U_KG).powf(5.0 / 3.0));
    for (u, t) in [(0.0, 0.0), (0.3, -0.2), (-0.4, 0.1)] {
        let eos = ChandrasekharEos::new(u, t, Anisotropy::DensitySquared).unwrap();
        let md = eos.model(1e-3).unwrap();
        let l = length_unit_m(mu_e);
        let r_m = l * md.radius_dimless;
        let m_kg = 4.0 * pi * density_unit_kg_m3(mu_e) * l.powi(3) * md.mass_dimless;
        let n32 = le(1.5, u, t, Anisotropy::DensitySquared).n_n();
        let expect = k_nr / (n32 * G_SI);
        assert!(rel(r_m * m_kg.cbrt(), expect) < 1e-6, "{u} {t}");
    }
}

#[test]
fn full_eos_high_density_limit_is_the_chandrasekhar_mass() {
    // docs/structure.md §4.1 (verified there): at x_c = 1e4 the full-EOS mass equals the n = 3
    // Lane–Emden value ω₃(ϒ,τ) to < 1e-7; M(x_c) ≈ M_Ch(1 − k/x_c²), k ≈ 5.5 / 7.1 / 3.5.
    for (u, t, k) in [(0.0, 0.0, 5.5), (0.3, 0.0, 7.1), (-0.2, 0.2, 3.5)] {
        let eos = ChandrasekharEos::new(u, t, Anisotropy::DensitySquared).unwrap();
        let w3 = omega3(u, t, Anisotropy::DensitySquared).unwrap();
        let m = eos.model(1e4).unwrap().mass_dimless;
        assert!(rel(m, w3) < 1e-6, "{u} {t}");
        let m100 = eos.model(100.0).unwrap().mass_dimless;
        let k_fit = (1.0 - m100 / w3) * 1e4;
        assert!((k_fit - k).abs() < 0.1, "{u} {t}: k = {k_fit}");
    }
}

#[test]
fn mu_e_scaling_is_exact() {
    // docs/structure.md §4.3 (verified there to 1e-14): R(M; μ_e) = (2/μ_e)·R_{μ_e=2}(M μ_e²/4).
    let t = standard_table();
    for mu_e in [1.0, 8.0 / 7.0, 2.154] {
        for m in [0.05, 0.3, 0.7] {
            let m2 = m * mu_e * mu_e / 4.0;
            if m2 >= t.max_mass_msun(2.0) {
                continue;
            }
            let r = t.radius_rsun(m, mu_e).unwrap();
            let r2 = t.radius_rsun(m2, 2.0).unwrap();
            assert!(rel(r, 2.0 / mu_e * r2) < 1e-12, "{mu_e} {m}");
        }
    }
}

#[test]
fn gradient_ansatz_white_dwarfs_rescale_exactly() {
    // docs/structure.md §2.2 (verified there to 1e-10): at fixed central density M → M(1−τ)^{−3/2},
    // R → R(1−τ)^{−1/2}; hence R_b(M) = R_{(ϒ,0)}(M(1−τ)^{3/2})/√(1−τ).
    for (u, tau) in [(0.0, 0.2), (0.3, -0.2), (-0.3, 0.4)] {
        let s = 1.0 - tau;
        let b = ChandrasekharEos::new(u, tau, Anisotropy::Gradient).unwrap();
        let z = ChandrasekharEos::new(u, 0.0, Anisotropy::None).unwrap();
        for x_c in [0.01, 1.0, 30.0] {
            let mb = b.model(x_c).unwrap();
            let mz = z.model(x_c).unwrap();
            assert!(rel(mb.mass_dimless, mz.mass_dimless / (s * s.sqrt())) < 1e-10);
            assert!(rel(mb.radius_dimless, mz.radius_dimless / s.sqrt()) < 1e-10);
        }
        let opts = WdTableOptions::default();
        let direct = WdMassRadius::new(u, tau, Anisotropy::Gradient, &opts).unwrap();
        let base = WdMassRadius::new(u, 0.0, Anisotropy::None, &opts).unwrap();
        let scaled = base.rescaled_to_gradient(tau).unwrap();
        assert!(rel(direct.mass_ch_dimless(), scaled.mass_ch_dimless()) < 1e-10);
        for m in [0.3, 0.8, 1.1] {
            let rd = direct.radius_rsun(m, 2.0).unwrap();
            let rs = scaled.radius_rsun(m, 2.0).unwrap();
            let rz = base.radius_rsun(m * s * s.sqrt(), 2.0).unwrap() / s.sqrt();
            assert!(rel(rd, rs) < 1e-8, "{u} {tau} {m}");
            assert!(rel(rs, rz) < 1e-12, "{u} {tau} {m}");
        }
    }
}

#[test]
fn white_dwarf_typed_results() {
    let t = standard_table();
    let mch = t.max_mass_msun(2.0);
    assert!(matches!(
        t.radius(mch, 2.0),
        Err(TheoryError::AboveChandrasekhar { .. })
    ));
    assert!(matches!(
        t.radius(1.6, 2.0),
        Err(TheoryError::AboveChandrasekhar { .. })
    ));
    assert!(matches!(
        t.radius(-1.0, 2.0),
        Err(TheoryError::InvalidParameter { .. })
    ));
    assert!(matches!(
        t.radius(1.0, 0.0),
        Err(TheoryError::InvalidParameter { .. })
    ));
    // Post-Newtonian flag (docs/structure.md §4.5, a chosen threshold): GM/(Rc²) = 1.0e-4, 2.6e-4,
    // 4.3e-4 at 0.6, 1.0, 1.2 M☉ (computed there); 5e-4 reached at 1.253 M☉.
    for (m, c) in [(0.6, 1.0e-4), (1.0, 2.6e-4), (1.2, 4.3e-4)] {
        let r = t.radius(m, 2.0).unwrap();
        assert!(
            (r.compactness - c).abs() < 0.051e-4,
            "{m}: {}",
            r.compactness
        );
        assert!(!r.post_newtonian_warning);
    }
    assert!(!t.radius(1.25, 2.0).unwrap().post_newtonian_warning);
    assert!(t.radius(1.26, 2.0).unwrap().post_newtonian_warning);
    assert_eq!(POST_NEWTONIAN_COMPACTNESS, 5e-4);
    // A stored table survives a JSON round trip; a corrupted one is refused on the way in.
    let json = serde_json::to_string(t).unwrap();
    let back: WdMassRadius = serde_json::from_str(&json).unwrap();
    assert_eq!(&back, t);
    let bad = json.replacen("\"mass_ch_dimless\":", "\"mass_ch_dimless\":-", 1);
    assert!(serde_json::from_str::<WdMassRadius>(&bad).is_err());
    // Very close to M_Ch the answer is still a finite model.
    let r = t.radius(mch * (1.0 - 1e-9), 2.0).unwrap();
    assert!(r.radius_rsun > 0.0 && r.radius_rsun.is_finite());
    // Existence bounds carry over (docs/structure.md §1.4).
    assert!(matches!(
        WdMassRadius::new(-0.7, 0.0, Anisotropy::None, &WdTableOptions::default()),
        Err(TheoryError::NoRegularCentre { .. })
    ));
    // M(x_c) rises monotonically at the spec's extreme test points (docs/structure.md §4.4); the
    // table constructor refuses otherwise.
    for (u, tau) in [(-0.5, 0.2), (0.6, -0.2), (-0.66, 0.0)] {
        let opts = WdTableOptions {
            points_per_decade: 8,
            ..WdTableOptions::default()
        };
        assert!(WdMassRadius::new(u, tau, Anisotropy::DensitySquared, &opts).is_ok());
    }
}

// ---------------------------------------------------------------------------------------------
// Break-up period.

#[test]
fn roche_identities() {
    // docs/structure.md §5.1 (derived, verified there): at break-up GM/R_eq² = Ω²R_eq and the
    // equipotential through the pole give R_eq = (3/2)R_p, Ω² = (8/27)GM/R_p³, κ = (3/2)^{3/2}.
    let ratio = ROCHE_EQUATORIAL_TO_POLAR;
    // Equipotential with GM = R_p = 1: −1 = −1/R_eq − ½Ω²R_eq², Ω² = 1/R_eq³.
    let omega2 = 1.0 / ratio.powi(3);
    assert!((-1.0 / ratio - 0.5 * omega2 * ratio * ratio + 1.0).abs() < 1e-15);
    assert!((omega2 - 8.0 / 27.0).abs() < 1e-15);
    let kappa = BreakupModel::Roche.kappa();
    assert!((kappa * kappa - 27.0 / 8.0).abs() < 1e-14);
    assert!((kappa - 1.8371).abs() < 5e-5);
    // docs/structure.md §5.2 table (computed there): κ = 1.8911 (same M and K), 1.891 in its prose.
    assert_eq!(BreakupModel::ScfN32.kappa(), 1.8911);
}

#[test]
fn breakup_check_values_of_structure_md_5_4() {
    // docs/structure.md §5.4 (computed there with κ = 1.8911; IAU 2015 B3 nominal R_J, R☉, (GM)☉).
    let min = |m: f64, r: f64, model| breakup_period_s(m, r, model).unwrap() / 60.0;
    let rows = [
        // M [M☉], R [R☉], Roche [min], κ = 1.8911 [min], κ = 1 [min]
        (0.07, RJ_IN_RSUN, 38.15, 39.28, 20.77),
        (0.075, 0.08, 25.32, 26.06, 13.78),
        (0.08, 0.10, 34.26, 35.27, 18.65),
    ];
    for (m, r, roche, scf, k1) in rows {
        assert!(
            (min(m, r, BreakupModel::Roche) - roche).abs() < 0.0051,
            "{m}"
        );
        assert!(
            (min(m, r, BreakupModel::ScfN32) - scf).abs() < 0.0051,
            "{m}"
        );
        let bare = min(m, r, BreakupModel::Roche) / BreakupModel::Roche.kappa();
        assert!((bare - k1).abs() < 0.0051, "{m}");
    }
    // 1 M_J with R_J: 326.7 / 336.3 min.
    let mj = dwarfbound::constants::mjup_msun();
    assert!((min(mj, RJ_IN_RSUN, BreakupModel::Roche) - 326.7).abs() < 0.051);
    assert!((min(mj, RJ_IN_RSUN, BreakupModel::ScfN32) - 336.3).abs() < 0.051);
    // White dwarfs (full EOS, μ_e = 2): 34.0 s, 13.7 s, 7.77 s at 0.6, 1.0, 1.2 M☉.
    let t = standard_table();
    for (m, p_s, tol) in [(0.6, 34.0, 0.051), (1.0, 13.7, 0.051), (1.2, 7.77, 0.0051)] {
        let r = t.radius_rsun(m, 2.0).unwrap();
        let p = breakup_period_s(m, r, BreakupModel::Roche).unwrap();
        assert!((p - p_s).abs() < tol, "{m}: {p}");
    }
    assert!(matches!(
        breakup_period_s(0.0, 1.0, BreakupModel::Roche),
        Err(TheoryError::InvalidParameter { .. })
    ));
}

#[test]
fn cold_degenerate_floor_near_22_minutes() {
    // docs/structure.md §5.4 (computed there): zero-temperature Chandrasekhar EOS with μ_e = 8/7
    // (X = 0.75): R = 0.856 / 0.764 / 0.747 / 0.731 / 0.702 R_J at 0.05 / 0.07 / 0.075 / 0.08 /
    // 0.09 M☉; at 0.08 M☉ P_min = 22.3 min (Roche), 23.0 min (κ = 1.891). The ≈ 22-minute
    // floor itself is quoted in the field (common practice, no source).
    let mu_e = 8.0 / 7.0;
    let t = standard_table();
    for (m, r_rj) in [
        (0.05, 0.856),
        (0.07, 0.764),
        (0.075, 0.747),
        (0.08, 0.731),
        (0.09, 0.702),
    ] {
        let r = t.radius_rsun(m, mu_e).unwrap() / RJ_IN_RSUN;
        assert!((r - r_rj).abs() < 5.1e-4, "{m}: {r}");
    }
    let r = t.radius_rsun(0.08, mu_e).unwrap();
    let p = breakup_period_s(0.08, r, BreakupModel::Roche).unwrap() / 60.0;
    assert!((p - 22.3).abs() < 0.051, "{p}");
    let p = breakup_period_s(0.08, r, BreakupModel::ScfN32).unwrap() / 60.0;
    assert!((p - 23.0).abs() < 0.051, "{p}");
    // Modified (docs/structure.md §5.4, computed there): 23.7 / 19.6 / 26.9 min at ϒ = 0.1 / −0.2 /
    // 0.3 and 25.8 min at τ = 0.2 (ansatz a).
    for (u, tau, p_min) in [
        (0.1, 0.0, 23.7),
        (-0.2, 0.0, 19.6),
        (0.3, 0.0, 26.9),
        (0.0, 0.2, 25.8),
    ] {
        let opts = WdTableOptions {
            log10_xc_max: 1.0,
            ..WdTableOptions::default()
        };
        let tab = WdMassRadius::new(u, tau, Anisotropy::DensitySquared, &opts).unwrap();
        let r = tab.radius_rsun(0.08, mu_e).unwrap();
        let p = breakup_period_s(0.08, r, BreakupModel::Roche).unwrap() / 60.0;
        assert!((p - p_min).abs() < 0.051, "ϒ = {u}, τ = {tau}: {p}");
    }
}

// ---------------------------------------------------------------------------------------------
// Property tests.

fn anis() -> impl Strategy<Value = Anisotropy> {
    prop_oneof![
        Just(Anisotropy::None),
        Just(Anisotropy::DensitySquared),
        Just(Anisotropy::Gradient)
    ]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(48))]

    #[test]
    fn theta_decreases_to_the_surface(n in 1.0f64..4.5, u in -0.6f64..0.8,
                                      t in -0.3f64..0.3, ans in anis()) {
        let t = if ans == Anisotropy::None { 0.0 } else { t };
        let Ok(le) = ModifiedLaneEmden::new(n, u, t, ans) else { return Ok(()); };
        let Ok(prof) = le.profile(&LaneEmdenOptions::default(), 40) else { return Ok(()); };
        let mut last = 1.0 + 1e-15;
        for p in &prof {
            prop_assert!(p.theta < last, "θ not decreasing at ξ = {}", p.xi);
            prop_assert!(p.theta >= -1e-12);
            last = p.theta;
        }
        prop_assert_eq!(prof.last().unwrap().theta, 0.0);
    }

    #[test]
    fn solutions_are_positive_and_finite(n in 1.0f64..4.5, u in -0.66f64..1.0,
                                         t in -0.5f64..0.6, ans in anis()) {
        let t = if ans == Anisotropy::None { 0.0 } else { t };
        if let Ok(s) = solve_lane_emden(n, u, t, ans) {
            for v in [s.xi1, s.omega, s.surface_slope, s.density_contrast(), s.n_n(), s.w_n()] {
                prop_assert!(v.is_finite() && v > 0.0, "{:?}", s);
            }
        }
    }

    #[test]
    fn white_dwarf_models_positive_and_finite(u in -0.66f64..1.0, t in -0.5f64..0.6,
                                              log_xc in -3.0f64..4.5, ans in anis()) {
        let t = if ans == Anisotropy::None { 0.0 } else { t };
        if let Ok(eos) = ChandrasekharEos::new(u, t, ans) {
            let md = eos.model(10f64.powf(log_xc)).unwrap();
            prop_assert!(md.mass_dimless.is_finite() && md.mass_dimless > 0.0);
            prop_assert!(md.radius_dimless.is_finite() && md.radius_dimless > 0.0);
        }
    }

    #[test]
    fn zero_upsilon_tau_is_the_standard_equation(n in 1.0f64..4.5, ans in anis()) {
        // ϒ = τ = 0 in every ansatz is the classical Lane–Emden equation θ″ + 2θ′/ξ = −θⁿ,
        // whose solution has ω = −ξ1²θ′(ξ1) (Chandrasekhar 1939, Ch. IV).
        let s = solve_lane_emden(n, 0.0, 0.0, ans).unwrap();
        let le = ModifiedLaneEmden::new(n, 0.0, 0.0, ans).unwrap();
        prop_assert_eq!(le.coefficients(), (1.0, 0.0, 1.0));
        prop_assert!(rel(s.surface_slope, s.omega) < 1e-12);
        let none = solve_lane_emden(n, 0.0, 0.0, Anisotropy::None).unwrap();
        prop_assert_eq!(s.xi1, none.xi1);
        prop_assert_eq!(s.omega, none.omega);
    }
}
