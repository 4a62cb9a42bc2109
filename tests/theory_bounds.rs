//! Checks of the bounds module (MMHB models A and B, anchoring, Schönberg–Chandrasekhar
//! fraction) against values outside the project. Each check names its source and status, as in
//! `docs/bounds.md`: "verified" (agrees with a published value), "computed" (recomputed by the
//! independent scipy script behind `docs/bounds.md`, no published value), "from memory" (a published
//! value recalled, not re-read).

use dwarfbound::theory::mmhb::*;

fn rel(a: f64, b: f64) -> f64 {
    ((a - b) / b).abs()
}

fn assert_rel(what: &str, got: f64, want: f64, tol: f64) {
    assert!(
        rel(got, want) <= tol,
        "{what}: got {got:.12e}, want {want:.12e}, rel err {:.3e} > {tol:.1e}",
        rel(got, want)
    );
}

fn standard() -> PolytropeConstants {
    // ξ1, ω: Chandrasekhar 1939 / Horedt 2004 (verified in docs/bounds.md §1); J_9.73: computed there.
    PolytropeConstants::standard_n15_default_k()
}

#[test]
fn model_a_composition_and_exponents() {
    let p = ModelAParams::default();
    // docs/bounds.md §9 (computed; Burrows & Liebert quote α = 4.82, from memory).
    assert_rel("alpha", p.alpha(), 4.821_428_6, 1e-7);
    assert_rel("alpha vs B&L 4.82 (from memory)", p.alpha(), 4.82, 1e-3);
    // docs/bounds.md §9, computed from CODATA 2018 (B&L round it to 1e13, from memory).
    assert_rel(
        "C_P",
        degenerate_pressure_constant_cgs(),
        9.906_181e12,
        1e-6,
    );
    let x = p.exponents();
    // docs/bounds.md §2.3 / §9 (closed-form exponents, computed).
    assert_rel("p", x.p, 10.735_238_1, 1e-8);
    assert_rel("E", x.e, 16.174_285_7, 1e-8);
    assert_rel("D", x.d, 5.486_666_7, 1e-8);
    assert_rel("beta", x.beta, 4.414_286, 1e-6);
    assert_rel("E/p", x.e_over_p, 1.506_654, 1e-6);
    assert_rel("D/p", x.d_over_p, 0.511_088, 1e-5);
    assert_rel("1/p", x.one_over_p, 0.093_151, 1e-5);
    assert_rel("p = p_HB - p_e", x.p_hb - x.p_e, x.p, 1e-15);
    assert_rel("psi*", p.psi_star(), 0.027_536_73, 1e-6);
    assert_rel("k = 1.5u + s", p.k_index(), 9.73, 1e-15);
    // Standard-gravity δ, γ: docs/bounds.md §1 (computed).
    assert_rel("delta", standard().delta(), 5.990_704_516_3, 1e-9);
    assert_rel("gamma", standard().gamma(), 2.357_285_906_2, 1e-9);
}

#[test]
fn model_a_standard_gravity_closed_form_and_numeric_route() {
    let p = ModelAParams::default();
    let closed = model_a(&standard(), &p, 1.0).unwrap();
    let numeric = model_a_numeric(&standard(), &p, 1.0).unwrap();
    // docs/bounds.md §2.3 (computed): 0.09938334 M☉ by both routes.
    assert_rel("MMHB_A closed form", closed.mmhb_msun, 0.099_383_34, 1e-6);
    assert_rel(
        "MMHB_A numeric route",
        numeric.mmhb_msun,
        0.099_383_34,
        1e-6,
    );
    assert_rel(
        "closed vs numeric",
        numeric.mmhb_msun,
        closed.mmhb_msun,
        1e-8,
    );
    assert_rel("psi* numeric", numeric.psi_star, closed.psi_star, 1e-6);
    // At the minimum the two luminosities balance.
    let st = closed.at_minimum;
    assert_rel(
        "L_HB = L_e at the minimum",
        st.burning_luminosity_erg_s,
        st.surface_luminosity_erg_s,
        1e-10,
    );
    // docs/bounds.md §2.5 diagnostics (computed, quoted to 2–3 digits).
    assert_rel("R at minimum", st.radius_cm, 5.45e9, 5e-3);
    assert_rel("R at minimum (R_sun)", st.radius_rsun(), 0.078, 1e-2);
    assert_rel("rho_c at minimum", st.central_density_g_cm3, 1.75e3, 5e-3);
    assert_rel("T_c at minimum", st.central_temperature_k, 1.10e6, 5e-3);
    assert_rel("T_eff at minimum", st.effective_temperature_k, 500.0, 1e-2);
    assert_rel("L at minimum", st.surface_luminosity_erg_s, 1.3e27, 4e-2);
    assert_rel("L at minimum (L_sun)", st.luminosity_lsun(), 3.5e-7, 3e-2);
}

#[test]
fn burrows_liebert_scaling_coefficients() {
    // docs/bounds.md §2.2 steps 2–4: coefficients of R, ρ_c, T_c in m = M/M☉, μ_e and ψ, computed;
    // Burrows & Liebert 1993 quote 2.80e9 cm, 1.28e5 g cm⁻³, 7.68e8 K (from memory), reproduced
    // to 0.6 %, 3 % and 1.3 % (docs/bounds.md §6).
    let p = ModelAParams::default();
    let st = p.state(&standard(), 1.0, 0.0, 1.0);
    let mu_e = p.mu_e();
    let r_coef = st.radius_cm * mu_e.powf(5.0 / 3.0);
    let rho_coef = st.central_density_g_cm3 / mu_e.powi(5);
    assert_rel("R coefficient (computed)", r_coef, 2.7823e9, 1e-4);
    assert_rel("rho_c coefficient (computed)", rho_coef, 1.3203e5, 1e-4);
    assert_rel("R coefficient vs B&L (from memory)", r_coef, 2.80e9, 0.007);
    assert_rel(
        "rho_c coefficient vs B&L (from memory)",
        rho_coef,
        1.28e5,
        0.035,
    );
    let psi = 0.1;
    let st = p.state(&standard(), 1.0, psi, 1.0);
    let t_coef =
        st.central_temperature_k * (1.0 + p.alpha() * psi).powi(2) / (psi * mu_e.powf(8.0 / 3.0));
    assert_rel("T_c coefficient (computed)", t_coef, 7.7836e8, 1e-4);
    assert_rel(
        "T_c coefficient vs B&L (from memory)",
        t_coef,
        7.68e8,
        0.015,
    );
}

#[test]
fn model_a_injected_constant_vectors() {
    // docs/bounds.md §2.4: solver-independent test vectors (computed).
    let p = ModelAParams::default();
    for (xi1, omega, j, want, want_phi) in [
        (
            3.726_828_81,
            2.632_633_47,
            0.220_087_04,
            0.095_603_62,
            0.961_968_33,
        ),
        (
            3.471_066_05,
            2.985_460_63,
            0.188_646_04,
            0.111_678_12,
            1.123_710_73,
        ),
    ] {
        let le = PolytropeConstants {
            xi1,
            omega,
            j_k: j,
            k: 9.73,
        };
        let a = model_a(&le, &p, 1.0).unwrap();
        let n = model_a_numeric(&le, &p, 1.0).unwrap();
        assert_rel("injected MMHB_A", a.mmhb_msun, want, 1e-6);
        assert_rel(
            "injected MMHB_A, numeric vs closed",
            n.mmhb_msun,
            a.mmhb_msun,
            1e-8,
        );
        let phi = phi_a(&le, &standard(), &p, 1.0).unwrap();
        assert_rel("injected Phi_A", phi, want_phi, 1e-7);
        let raw_ratio = a.mmhb_msun / model_a(&standard(), &p, 1.0).unwrap().mmhb_msun;
        assert_rel("Phi_A exponents vs raw ratio", phi, raw_ratio, 1e-12);
    }
}

#[test]
fn phi_a_independent_of_surface_constants() {
    // docs/bounds.md §2.4/§2.5: Φ_A does not depend on ε₀, b₁, κ_R, ν, μ_ph (exact, computed).
    let le = PolytropeConstants {
        xi1: 3.726_828_81,
        omega: 2.632_633_47,
        j_k: 0.220_087_04,
        k: 9.73,
    };
    let base = ModelAParams::default();
    let changed = ModelAParams {
        eps0_erg_g_s: 1e-8,
        b1: 2.0,
        kappa_r_cm2_g: 0.03,
        nu: 1.45,
        mu_photosphere: Some(2.3),
        ..base
    };
    let r = |p: &ModelAParams| {
        model_a(&le, p, 1.0).unwrap().mmhb_msun / model_a(&standard(), p, 1.0).unwrap().mmhb_msun
    };
    assert_rel(
        "Phi_A independent of surface fit",
        r(&changed),
        r(&base),
        1e-12,
    );
}

#[test]
fn surface_treatment_spread() {
    // docs/bounds.md §2.5 (computed): b₁ = 2.0 / 2.5 / 2.87 / 3.25 gives 0.0903 / 0.0958 / 0.0994 / 0.1027.
    for (b1, want) in [(2.0, 0.0903), (2.5, 0.0958), (2.87, 0.0994), (3.25, 0.1027)] {
        let p = ModelAParams {
            b1,
            ..ModelAParams::default()
        };
        let m = model_a(&standard(), &p, 1.0).unwrap().mmhb_msun;
        assert_rel("MMHB_A vs b1", m, want, 6e-4);
    }
}

#[test]
fn model_b_standard_gravity_and_ignition_table() {
    let p = ModelBParams::default();
    let b = model_b(&standard(), &p).unwrap();
    // docs/bounds.md §3 / §9 (computed).
    assert_rel("MMHB_B at 3e6 K", b.mmhb_msun, 0.108_993_29, 1e-6);
    assert_rel("C_T", b.c_t_k, 5.7622e7, 1e-4);
    for (t_ign, want) in [
        (2.0e6, 0.0804),
        (2.5e6, 0.0951),
        (3.0e6, 0.1090),
        (3.5e6, 0.1224),
    ] {
        let p = ModelBParams {
            ignition_temperature_k: t_ign,
            ..p
        };
        assert_rel(
            "MMHB_B vs T_ign",
            model_b(&standard(), &p).unwrap().mmhb_msun,
            want,
            6e-4,
        );
    }
    // Φ_B = ω/ω₀ (exact identity, docs/bounds.md §3).
    let le = PolytropeConstants {
        xi1: 3.471_066_05,
        omega: 2.985_460_63,
        j_k: 0.188_646_04,
        k: 9.73,
    };
    assert_rel(
        "Phi_B = omega ratio",
        phi_b(&le, &standard()).unwrap(),
        le.omega / standard().omega,
        1e-13,
    );
}

#[test]
fn g_rescaling_laws() {
    // docs/bounds.md §1/§2.4: for G_eff = sG, ξ1 → ξ1 s^{-1/2}, ω → ω s^{-3/2}, J → J s^{-3/2};
    // then Φ_A = s^{-E/p} and Φ_B = s^{-3/2} (exact laws, computed to 1e-10 there).
    let p = ModelAParams::default();
    let x = p.exponents();
    let s0 = standard();
    for s in [0.8_f64, 0.9, 1.1, 1.2] {
        let le = PolytropeConstants {
            xi1: s0.xi1 / s.sqrt(),
            omega: s0.omega * s.powf(-1.5),
            j_k: s0.j_k * s.powf(-1.5),
            k: s0.k,
        };
        let phi = phi_a(&le, &s0, &p, 1.0).unwrap();
        assert_rel("Phi_A = s^(-E/p)", phi, s.powf(-x.e_over_p), 1e-12);
        let raw =
            model_a(&le, &p, 1.0).unwrap().mmhb_msun / model_a(&s0, &p, 1.0).unwrap().mmhb_msun;
        assert_rel("raw ratio = s^(-E/p)", raw, s.powf(-x.e_over_p), 1e-12);
        // Photospheric gravity scaled by s as well (docs/bounds.md §2.6): (1-τ)^{-1.400196}.
        let phi_g = phi_a(&le, &s0, &p, s).unwrap();
        assert_rel(
            "Phi_A, scaled photospheric g",
            phi_g,
            s.powf(-1.400_196),
            1e-6,
        );
        let raw_g =
            model_a(&le, &p, s).unwrap().mmhb_msun / model_a(&s0, &p, 1.0).unwrap().mmhb_msun;
        assert_rel("raw ratio, scaled photospheric g", raw_g, phi_g, 1e-12);
        assert_rel(
            "Phi_B = s^(-3/2)",
            phi_b(&le, &s0).unwrap(),
            s.powf(-1.5),
            1e-12,
        );
    }
}

#[test]
fn anchoring_and_modes() {
    let le = PolytropeConstants {
        xi1: 3.726_828_81,
        omega: 2.632_633_47,
        j_k: 0.220_087_04,
        k: 9.73,
    };
    // Default: model A, anchored at 0.075 M☉ with a 0.005 M☉ floor (docs/bounds.md §4; anchor from
    // evolutionary models, from memory).
    let cfg = MmhbConfig::default();
    let b = evaluate(&cfg, &le, &standard(), 1.0).unwrap();
    assert_eq!(b.mode_name, "anchored");
    assert_eq!(b.model.name(), "luminosity-balance");
    assert_eq!(b.anchor_msun, Some(0.075));
    assert_eq!(b.floor_msun, 0.005);
    assert_rel("anchored value", b.value_msun, 0.075 * 0.961_968_33, 1e-7);
    let b0 = evaluate(&cfg, &standard(), &standard(), 1.0).unwrap();
    assert_rel(
        "anchored standard gravity = anchor",
        b0.value_msun,
        0.075,
        1e-15,
    );
    // Raw modes carry the raw floors 0.012 (A) / 0.014 (B) of docs/bounds.md §4.
    let raw_a = evaluate(
        &MmhbConfig {
            mode: MmhbMode::Raw,
            ..cfg
        },
        &standard(),
        &standard(),
        1.0,
    )
    .unwrap();
    assert_eq!(raw_a.mode_name, "raw");
    assert_eq!(raw_a.floor_msun, 0.012);
    assert_rel("raw A", raw_a.value_msun, 0.099_383_34, 1e-6);
    let raw_b = evaluate(
        &MmhbConfig {
            mode: MmhbMode::Raw,
            model: MmhbModel::IgnitionTemperature,
            ..cfg
        },
        &standard(),
        &standard(),
        1.0,
    )
    .unwrap();
    assert_eq!(raw_b.floor_msun, 0.014);
    assert_rel("raw B", raw_b.value_msun, 0.108_993_29, 1e-6);
    // Optional model-difference term |Φ_A − Φ_B|·M_anchor in quadrature (docs/bounds.md §4).
    let le2 = PolytropeConstants {
        xi1: 3.471_066_05,
        omega: 2.985_460_63,
        j_k: 0.188_646_04,
        k: 9.73,
    };
    let with_diff = evaluate(
        &MmhbConfig {
            model_difference_in_floor: true,
            ..cfg
        },
        &le2,
        &standard(),
        1.0,
    )
    .unwrap();
    let diff = (1.123_710_73 - le2.omega / standard().omega).abs() * 0.075;
    assert_rel(
        "model difference",
        with_diff.model_difference_msun.unwrap(),
        diff,
        1e-6,
    );
    assert_rel(
        "floor with model difference",
        with_diff.floor_msun,
        0.005f64.hypot(diff),
        1e-6,
    );
    // Bad input is a typed error, never NaN.
    let bad = PolytropeConstants {
        omega: f64::NAN,
        ..standard()
    };
    assert!(evaluate(&cfg, &bad, &standard(), 1.0).is_err());
    assert!(evaluate(&cfg, &standard(), &standard(), 0.0).is_err());
}

mod schonberg_chandrasekhar {
    use super::assert_rel;
    use dwarfbound::theory::mmhb::BoundError;
    use dwarfbound::theory::schonberg::*;
    use dwarfbound::theory::Anisotropy;

    const UPSILONS: [f64; 7] = [-0.3, -0.1, -0.05, 0.027, 0.05, 0.1, 0.3];

    #[test]
    fn bonnor_ebert_constant() {
        // Verified: Bonnor 1956 (MNRAS 116, 351) / Ebert 1955 give 1.40 at ζ = 6.451;
        // docs/bounds.md §7.1 / §9 give 1.397660 at 6.450751 (computed).
        let be = bonnor_ebert(0.0).unwrap();
        assert_rel("C_BE", be.c_be, 1.397_660, 1e-6);
        assert_rel("zeta_BE", be.zeta, 6.450_751, 1e-6);
        assert_rel("C_BE vs Bonnor/Ebert 1.40", be.c_be, 1.40, 2.5e-3);
        assert_rel("zeta_BE vs Bonnor/Ebert 6.451", be.zeta, 6.451, 1e-4);
    }

    #[test]
    fn standard_gravity_fit_values() {
        // docs/bounds.md §7.1 (computed): q_fit for an n = 3 envelope.
        for (lambda, want) in [
            (0.3, 0.025_13),
            (0.46, 0.064_61),
            (0.5, 0.078_33),
            (0.6, 0.120_40),
            (1.0, 0.359_17),
        ] {
            let fit =
                core_envelope_fit(lambda, 0.0, 3.0, InterfaceCondition::ContinuousPTilde).unwrap();
            assert_rel("q_fit", fit.q, want, 1e-3);
            assert!(
                (6.4..9.0).contains(&fit.zeta_f),
                "maximum near the Bonnor-Ebert point: {}",
                fit.zeta_f
            );
        }
        // Other envelope indices at λ = 0.5 (docs/bounds.md §7.1, computed): 0.379 λ², 0.286 λ².
        for (n, want) in [(2.5, 0.379), (3.25, 0.286)] {
            let fit = core_envelope_fit(0.5, 0.0, n, InterfaceCondition::ContinuousPTilde).unwrap();
            assert_rel("q_fit/lambda^2 vs n_env", fit.q / 0.25, want, 1.5e-3);
        }
    }

    #[test]
    fn modified_gravity_ratio_table() {
        // docs/bounds.md §7.2 table (computed), n_env = 3.
        let tables: [(&str, [f64; 7]); 4] = [
            (
                "lambda 0.5 full fit",
                [1.0922, 1.0295, 1.0146, 0.9922, 0.9857, 0.9716, 0.9178],
            ),
            (
                "lambda 0.46 full fit",
                [1.0889, 1.0285, 1.0141, 0.9925, 0.9862, 0.9726, 0.9204],
            ),
            (
                "core factor only",
                [1.0640, 1.0185, 1.0090, 0.9954, 0.9915, 0.9834, 0.9548],
            ),
            (
                "lambda 0.5 jump ignored",
                [1.1497, 1.0450, 1.0220, 0.9885, 0.9789, 0.9586, 0.8846],
            ),
        ];
        let q0 = |lambda: f64| {
            core_envelope_fit(lambda, 0.0, 3.0, InterfaceCondition::ContinuousPTilde)
                .unwrap()
                .q
        };
        let (q05, q046) = (q0(0.5), q0(0.46));
        let c0 = bonnor_ebert(0.0).unwrap().c_be;
        for (i, &u) in UPSILONS.iter().enumerate() {
            let full = |lambda: f64, c| core_envelope_fit(lambda, u, 3.0, c).unwrap().q;
            let got = [
                full(0.5, InterfaceCondition::ContinuousPTilde) / q05,
                full(0.46, InterfaceCondition::ContinuousPTilde) / q046,
                (bonnor_ebert(u).unwrap().c_be / c0).sqrt(),
                full(0.5, InterfaceCondition::ContinuousPressure) / q05,
            ];
            for ((name, want), g) in tables.iter().zip(got) {
                assert_rel(name, g, want[i], 1e-3);
            }
        }
    }

    #[test]
    fn reported_fraction_and_refusals() {
        let p = ScParams::default();
        let lambda = 0.62 / 1.33;
        // Standard gravity: the classic 0.37 λ² (Schönberg & Chandrasekhar 1942), ≈ 0.080.
        let q = sc_fraction(0.0, 0.0, &p, ScVariant::FullFit).unwrap();
        assert_rel("q_SC(0)", q.q_sc, 0.37 * lambda * lambda, 1e-14);
        assert_rel(
            "q_SC(0) ≈ 0.080 (docs/bounds.md §7, rounded)",
            q.q_sc,
            0.080,
            6e-3,
        );
        // ϒ ≠ 0: 0.37 λ² × the fit ratio at the default λ (definition, docs/bounds.md §7.2).
        let q1 = sc_fraction(0.1, 0.0, &p, ScVariant::FullFit).unwrap();
        let ratio = core_envelope_fit(lambda, 0.1, 3.0, InterfaceCondition::ContinuousPTilde)
            .unwrap()
            .q
            / core_envelope_fit(lambda, 0.0, 3.0, InterfaceCondition::ContinuousPTilde)
                .unwrap()
                .q;
        assert_rel("q_SC ratio", q1.ratio, ratio, 1e-14);
        assert!(q1.ratio < 1.0 && q1.ratio > 0.97);
        let c1 = sc_fraction(0.1, 0.0, &p, ScVariant::CoreFactorOnly).unwrap();
        assert_rel("core-factor-only ratio", c1.ratio, 0.9834, 1e-3);
        // τ ≠ 0 means the density-squared ansatz (the project's default meaning of τ).
        let t = sc_fraction(0.0, 0.1, &p, ScVariant::FullFit).unwrap();
        let t_a = sc_fraction_with(0.0, 0.1, Anisotropy::DensitySquared, &p, ScVariant::FullFit);
        assert_eq!(t, t_a.unwrap());
        // ϒ at the existence bound: typed error, never NaN.
        assert!(sc_fraction(-0.7, 0.0, &p, ScVariant::FullFit).is_err());
    }

    /// τ = 0 through the anisotropic code path is bit-for-bit the isotropic fit: same (p, c, κ)
    /// arithmetic. The numbers are the ones the isotropic code printed before anisotropy was
    /// added (regression values of this project, λ = 0.62/1.33, n_env = 3); the ratios they
    /// give are checked against the published-notes table in `modified_gravity_factor_table`.
    #[test]
    fn tau_zero_equals_the_isotropic_values_exactly() {
        let lambda = 0.62 / 1.33;
        let c = InterfaceCondition::ContinuousPTilde;
        for (u, q_before, c_be_before) in [
            (0.1, 0.06477820539521091, 1.3517541750976634),
            (0.3, 0.061286182182965374, 1.274189535378409),
            (-0.3, 0.07256981174506576, 1.5822635238586786),
        ] {
            for a in [
                Anisotropy::None,
                Anisotropy::DensitySquared,
                Anisotropy::Gradient,
            ] {
                let q = core_envelope_fit_with(lambda, u, 0.0, a, 3.0, c).unwrap().q;
                assert_eq!(q, q_before, "{a:?} ϒ = {u}");
                assert_eq!(bonnor_ebert_with(u, 0.0, a).unwrap().c_be, c_be_before);
            }
            assert_eq!(core_envelope_fit(lambda, u, 3.0, c).unwrap().q, q_before);
        }
    }

    /// Gradient ansatz: G → (1 − τ)G everywhere inside matter (the theory notes' anisotropy section, exact), so
    /// the dimensionless core mass fraction is the τ = 0 one and C_BE = P_s M_c² G³/c_s⁸ in
    /// true-G units is C_BE(ϒ, 0)/(1 − τ)³, with ζ_BE scaled by 1/√(1 − τ). Closed-form
    /// rescaling identity, to 1e-10 (issue acceptance).
    #[test]
    fn gradient_ansatz_is_an_exact_rescaling_of_g() {
        let lambda = 0.62 / 1.33;
        let c = InterfaceCondition::ContinuousPTilde;
        for u in [-0.3, 0.0, 0.2] {
            let q0 = core_envelope_fit(lambda, u, 3.0, c).unwrap();
            let be0 = bonnor_ebert(u).unwrap();
            for t in [-0.3, 0.1, 0.3, 0.6] {
                let s = 1.0 - t;
                let q = core_envelope_fit_with(lambda, u, t, Anisotropy::Gradient, 3.0, c).unwrap();
                assert_rel("q_fit(ϒ, τ) = q_fit(ϒ, 0)", q.q, q0.q, 1e-10);
                assert_rel(
                    "ζ_f scales as 1/√(1−τ)",
                    q.zeta_f * s.sqrt(),
                    q0.zeta_f,
                    1e-6,
                );
                let be = bonnor_ebert_with(u, t, Anisotropy::Gradient).unwrap();
                assert_rel(
                    "(1−τ)³ C_BE(τ) = C_BE(0)",
                    be.c_be * s.powi(3),
                    be0.c_be,
                    1e-10,
                );
                assert_rel(
                    "√(1−τ) ζ_BE(τ) = ζ_BE(0)",
                    be.zeta * s.sqrt(),
                    be0.zeta,
                    1e-10,
                );
                let p = ScParams::default();
                for v in [ScVariant::FullFit, ScVariant::CoreFactorOnly] {
                    let r = sc_fraction_with(u, t, Anisotropy::Gradient, &p, v).unwrap();
                    let r0 = sc_fraction_with(u, 0.0, Anisotropy::Gradient, &p, v).unwrap();
                    assert_rel("SC factor independent of τ", r.ratio, r0.ratio, 1e-10);
                }
            }
        }
    }

    /// Sign behaviour. ϒ > 0 lowers the fraction and ϒ < 0 raises it (the modified-gravity factor table checked above).
    /// τ of the density-squared ansatz does the OPPOSITE of what the issue expected: τ > 0 cancels
    /// the fraction τρ/ρ̄ of gravity (density-squared ansatz), i.e. weakens the core's self-gravity
    /// most at its centre (central series φ ≈ (1 + 3ϒ/2 − τ)ζ²/6), so a larger core fits under
    /// the same envelope and q rises; τ < 0 lowers it. The gradient ansatz leaves it unchanged
    /// (previous test). Values are this implementation's (computed, no published number).
    #[test]
    fn sign_behaviour_of_upsilon_and_tau() {
        let p = ScParams::default();
        let r = |u: f64, t: f64, v| {
            sc_fraction_with(u, t, Anisotropy::DensitySquared, &p, v)
                .unwrap()
                .ratio
        };
        for v in [ScVariant::FullFit, ScVariant::CoreFactorOnly] {
            assert!(r(0.2, 0.0, v) < 1.0 && r(-0.2, 0.0, v) > 1.0, "{v:?}");
            for u in [-0.2, 0.0, 0.2] {
                let (lo, mid, hi) = (r(u, -0.1, v), r(u, 0.0, v), r(u, 0.1, v));
                assert!(lo < mid && mid < hi, "{v:?} ϒ = {u}: {lo} {mid} {hi}");
            }
        }
        // Computed here (full fit, λ = 0.62/1.33): τ = ±0.1 at ϒ = 0 moves q by +4.5 %/−3.7 %.
        assert_rel(
            "τ = 0.1",
            r(0.0, 0.1, ScVariant::FullFit),
            1.044_905_6,
            1e-6,
        );
        assert_rel(
            "τ = −0.1",
            r(0.0, -0.1, ScVariant::FullFit),
            0.962_628_3,
            1e-6,
        );
    }

    /// A number for every τ where a star exists, a typed error (never NaN) where none does.
    #[test]
    fn a_number_wherever_a_star_exists_and_a_typed_error_elsewhere() {
        let p = ScParams::default();
        let v = ScVariant::CoreFactorOnly;
        for t in [-0.5, -0.2, 0.3, 0.6] {
            for a in [Anisotropy::DensitySquared, Anisotropy::Gradient] {
                let q = sc_fraction_with(0.1, t, a, &p, v).unwrap();
                assert!(q.q_sc.is_finite() && q.q_sc > 0.0, "{a:?} τ = {t}");
            }
        }
        // No regular centre: ϒ ≤ −2(1 − τ)/3 for the density-squared ansatz (existence bound).
        let e = sc_fraction_with(-0.5, 0.3, Anisotropy::DensitySquared, &p, v).unwrap_err();
        assert_eq!(e.code(), "no-regular-centre");
        // The gradient ansatz needs τ < 1; no ansatz needs τ = 0.
        let e = sc_fraction_with(0.0, 1.0, Anisotropy::Gradient, &p, ScVariant::FullFit);
        assert_eq!(e.unwrap_err().code(), "invalid-parameter");
        let e = sc_fraction_with(0.0, 0.1, Anisotropy::None, &p, ScVariant::FullFit);
        assert_eq!(e.unwrap_err().code(), "invalid-parameter");
        let e = sc_fraction_with(0.0, f64::NAN, Anisotropy::DensitySquared, &p, v);
        assert!(matches!(e, Err(BoundError::InvalidInput { .. })));
    }
}

/// Model A/B ratios from the project's own modified Lane–Emden solver (n = 3/2).
mod with_lane_emden {
    use super::assert_rel;
    use dwarfbound::theory::mmhb::*;
    use dwarfbound::theory::Anisotropy;

    fn solve(upsilon: f64, tau: f64, ansatz: Anisotropy) -> PolytropeConstants {
        PolytropeConstants::solve(upsilon, tau, ansatz, ModelAParams::default().k_index()).unwrap()
    }

    fn reference() -> PolytropeConstants {
        solve(0.0, 0.0, Anisotropy::None)
    }

    fn assert_abs(what: &str, got: f64, want: f64, tol: f64) {
        assert!(
            (got - want).abs() <= tol,
            "{what}: got {got:.9}, want {want}, |diff| {:.2e} > {tol:.1e}",
            (got - want).abs()
        );
    }

    #[test]
    fn standard_constants_feed_the_mmhb() {
        // docs/bounds.md §1 sanity conditions (ξ1, ω verified against Chandrasekhar 1939 / Horedt
        // 2004; δ, γ, J_9.73 computed).
        let r = reference();
        assert_rel("xi1", r.xi1, 3.653_753_736_2, 1e-9);
        assert_rel("omega", r.omega, 2.714_055_120_1, 1e-9);
        assert_rel("delta", r.delta(), 5.990_704_516_3, 1e-9);
        assert_rel("gamma", r.gamma(), 2.357_285_906_2, 1e-9);
        assert_rel("J_9.73", r.j_k, 0.209_606_706_0, 1e-8);
        let a = model_a(&r, &ModelAParams::default(), 1.0).unwrap();
        assert_rel("MMHB_A from the solver", a.mmhb_msun, 0.099_383_34, 1e-6);
    }

    #[test]
    fn lane_emden_table_of_bounds_section_1() {
        // docs/bounds.md §1 reference values (n = 3/2, τ = 0; computed), 7 significant digits.
        for (u, xi1, omega, delta, gamma, j) in [
            (-0.3, 3.175_945, 2.818_503, 3.788_603, 2.074_973, 0.392_823),
            (-0.1, 3.492_462, 2.740_094, 5.182_130, 2.260_408, 0.251_027),
            (0.027, 3.697_819, 2.708_130, 6.223_668, 2.383_978, 0.200_370),
            (0.1, 3.818_229, 2.694_127, 6.887_260, 2.457_356, 0.178_552),
            (0.3, 4.159_183, 2.668_205, 8.988_426, 2.668_176, 0.135_493),
        ] {
            let c = solve(u, 0.0, Anisotropy::None);
            assert_rel("xi1", c.xi1, xi1, 2e-6);
            assert_rel("omega", c.omega, omega, 2e-6);
            assert_rel("delta", c.delta(), delta, 2e-6);
            assert_rel("gamma", c.gamma(), gamma, 2e-6);
            assert_rel("J_9.73", c.j_k, j, 2e-6);
        }
    }

    #[test]
    fn phi_a_of_upsilon_eight_digits() {
        // docs/bounds.md §9 (computed): Φ_A at ϒ = 0.027, 0.1, −0.1.
        let p = ModelAParams::default();
        let r = reference();
        for (u, want) in [
            (0.027, 1.001_461_7),
            (0.1, 1.005_626_8),
            (-0.1, 0.994_981_6),
        ] {
            let c = solve(u, 0.0, Anisotropy::None);
            let phi = phi_a(&c, &r, &p, 1.0).unwrap();
            assert_rel("Phi_A", phi, want, 1e-7);
            let raw =
                model_a(&c, &p, 1.0).unwrap().mmhb_msun / model_a(&r, &p, 1.0).unwrap().mmhb_msun;
            assert_rel("Phi_A vs raw ratio", raw, phi, 1e-12);
        }
    }

    #[test]
    fn phi_tables_of_the_summary() {
        // docs/bounds.md §0 (computed), printed to 4–5 decimals: tolerance half a unit of the last
        // printed digit plus slack.
        let p = ModelAParams::default();
        let r = reference();
        let rows: [(f64, f64, f64, f64); 9] = [
            // (ϒ, Φ_A, Φ_B, abs tolerance)
            (-0.5, 0.9831, 1.0918, 6e-5),
            (-0.3, 0.9871, 1.0385, 6e-5),
            (-0.1, 0.9950, 1.0096, 6e-5),
            (-0.05, 0.9974, 1.0045, 6e-5),
            (0.027, 1.00146, 0.99782, 6e-6),
            (0.05, 1.00274, 0.99608, 6e-6),
            (0.1, 1.00563, 0.99266, 6e-6),
            (0.2, 1.01181, 0.98713, 6e-6),
            (0.3, 1.01851, 0.98311, 6e-6),
        ];
        for (u, want_a, want_b, tol) in rows {
            let c = solve(u, 0.0, Anisotropy::None);
            assert_abs("Phi_A", phi_a(&c, &r, &p, 1.0).unwrap(), want_a, tol);
            assert_abs("Phi_B", phi_b(&c, &r).unwrap(), want_b, tol);
            // Opposite signs of the two models' shifts for ϒ ≠ 0 (docs/bounds.md §3).
            assert!((want_a - 1.0) * (want_b - 1.0) < 0.0);
        }
    }

    #[test]
    fn anisotropy_tables_of_section_2_6() {
        // docs/bounds.md §2.6 (computed), τ = −0.2, −0.1, 0.1, 0.2; 5 decimals.
        let p = ModelAParams::default();
        let r = reference();
        let taus = [-0.2, -0.1, 0.1, 0.2];
        let tol = 6e-6;
        let a_phi_a = [0.84205, 0.91479, 1.10120, 1.22336];
        let a_phi_b = [0.83749, 0.91215, 1.10484, 1.23211];
        let a_phi_a_u01 = [0.84939, 0.92154, 1.10481, 1.22347];
        let b_phi_a_ext = [0.75980, 0.86623, 1.17204, 1.39962];
        let b_phi_a_ph = [0.77470, 0.87507, 1.15896, 1.36676];
        let b_phi_b = [0.76073, 0.86678, 1.17121, 1.39754];
        let x = p.exponents();
        for (i, &tau) in taus.iter().enumerate() {
            let a0 = solve(0.0, tau, Anisotropy::DensitySquared);
            assert_eq!(
                anisotropy_photosphere_g_factor(Anisotropy::DensitySquared, tau),
                1.0
            );
            assert_abs(
                "(a) Phi_A",
                phi_a(&a0, &r, &p, 1.0).unwrap(),
                a_phi_a[i],
                tol,
            );
            assert_abs("(a) Phi_B", phi_b(&a0, &r).unwrap(), a_phi_b[i], tol);
            let a1 = solve(0.1, tau, Anisotropy::DensitySquared);
            assert_abs(
                "(a) Phi_A, U=0.1",
                phi_a(&a1, &r, &p, 1.0).unwrap(),
                a_phi_a_u01[i],
                tol,
            );

            let b = solve(0.0, tau, Anisotropy::Gradient);
            let gf = anisotropy_photosphere_g_factor(Anisotropy::Gradient, tau);
            assert_eq!(gf, 1.0 - tau);
            let ext = phi_a(&b, &r, &p, 1.0).unwrap();
            let ph = phi_a(&b, &r, &p, gf).unwrap();
            assert_abs("(b) Phi_A exterior g", ext, b_phi_a_ext[i], tol);
            assert_abs("(b) Phi_A photospheric g", ph, b_phi_a_ph[i], tol);
            assert_abs("(b) Phi_B", phi_b(&b, &r).unwrap(), b_phi_b[i], tol);
            // Exact laws for (b) (docs/bounds.md §2.6): (1−τ)^{−E/p}, (1−τ)^{−1.400196}, (1−τ)^{−3/2}.
            let s = 1.0 - tau;
            assert_rel("(b) law, exterior g", ext, s.powf(-x.e_over_p), 1e-9);
            assert_rel("(b) law, photospheric g", ph, s.powf(-1.400_196), 1e-6);
            assert_rel("(b) law, Phi_B", phi_b(&b, &r).unwrap(), s.powf(-1.5), 1e-9);
            // The bound used against data carries the factor it was built with.
            let cfg = MmhbConfig::default();
            let bound = evaluate(&cfg, &b, &r, gf).unwrap();
            assert_rel("anchored (b)", bound.value_msun, 0.075 * ph, 1e-12);
            assert_eq!(bound.photosphere_g_factor, gf);
        }
    }

    #[test]
    fn no_regular_centre_is_a_typed_error() {
        // docs/structure.md §1.4: ϒ ≤ −2/3 has no regular centre.
        let e = PolytropeConstants::solve(-0.7, 0.0, Anisotropy::None, 9.73).unwrap_err();
        assert_eq!(e.code(), "no-regular-centre");
    }
}
