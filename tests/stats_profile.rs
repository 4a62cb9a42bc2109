//! Profile intervals and the flat-prior posterior over the (ϒ, τ) grid, against closed forms:
//! a correlated Gaussian χ² surface (profile = marginal = ±kσ of each parameter; the
//! two-parameter highest-density region is the Δχ² ≤ −2 ln(1 − p) ellipse) and a one-sided
//! soft bound L = Φ((ϒ − a)/s), flat in τ, whose profile and marginal ends follow from
//! ∫Φ(z) dz = zΦ(z) + φ(z).

use dwarfbound::confront::profile::{posterior, profile_intervals};
use dwarfbound::confront::regions::Level;

fn axis(start: f64, step: f64, n: usize) -> Vec<f64> {
    (0..n).map(|k| start + step * k as f64).collect()
}

/// χ² of a bivariate normal with means (mx, my), widths (sx, sy) and correlation rho
/// (standard form of the bivariate normal exponent, e.g. Cowan, Statistical Data Analysis,
/// §2.6; common practice, no source needed for the algebra).
fn gauss2(x: f64, y: f64) -> f64 {
    let (mx, my, sx, sy, rho) = (0.05, -0.02, 0.1, 0.05, 0.6);
    let (u, v) = ((x - mx) / sx, (y - my) / sy);
    (u * u - 2.0 * rho * u * v + v * v) / (1.0 - rho * rho)
}

#[test]
fn gaussian_surface_profile_and_marginal_are_k_sigma() {
    let u = axis(-0.7, 0.005, 301);
    let t = axis(-0.4, 0.0025, 305);
    let chi2: Vec<f64> = t
        .iter()
        .flat_map(|&tt| u.iter().map(move |&uu| gauss2(uu, tt)))
        .collect();
    let p = profile_intervals(&u, &t, &chi2).unwrap();
    let post = posterior(&u, &t, &chi2).unwrap();
    for (n, l) in Level::ALL.iter().enumerate() {
        let k = l.n_sigma();
        // Closed form: profiling a bivariate normal over one parameter leaves (x − mx)²/σx²,
        // and its marginal is N(mx, σx²); both intervals are mx ± kσx (and likewise for τ).
        let (ul, uu) = (0.05 - 0.1 * k, 0.05 + 0.1 * k);
        let (tl, tu) = (-0.02 - 0.05 * k, -0.02 + 0.05 * k);
        let close = |got: Option<f64>, want: f64, tol: f64, what: &str| {
            let g = got.unwrap_or_else(|| panic!("{what} at {} is open", l.key()));
            assert!(
                (g - want).abs() < tol,
                "{what} at {}: {g} vs {want}",
                l.key()
            );
        };
        close(p.upsilon[n].lower, ul, 1e-3, "profile ϒ lower");
        close(p.upsilon[n].upper, uu, 1e-3, "profile ϒ upper");
        close(p.tau[n].lower, tl, 5e-4, "profile τ lower");
        close(p.tau[n].upper, tu, 5e-4, "profile τ upper");
        close(post.upsilon[n].lower, ul, 2e-3, "posterior ϒ lower");
        close(post.upsilon[n].upper, uu, 2e-3, "posterior ϒ upper");
        close(post.tau[n].lower, tl, 1e-3, "posterior τ lower");
        close(post.tau[n].upper, tu, 1e-3, "posterior τ upper");
        // The two-parameter HPD region of a Gaussian is the ellipse Δχ² ≤ −2 ln(1 − p)
        // (2.2957 / 6.1801 / 11.8292: PDG, Review of Particle Physics, "Statistics").
        let r = &post.regions[n];
        let want = l.dchi2(2);
        assert!(
            (r.delta_chi2_at_edge - want).abs() < 0.02 * want,
            "HPD edge at {}: Δχ² {} vs {want}",
            l.key(),
            r.delta_chi2_at_edge
        );
        // Its extent in ϒ is mx ± √(Δχ²) σx (the ellipse's bounding box).
        let half = want.sqrt() * 0.1;
        assert!((r.upsilon_max - (0.05 + half)).abs() < 0.011);
        assert!((r.upsilon_min - (0.05 - half)).abs() < 0.011);
    }
    // Closed form: the marginals fall to e^(−k²/2) of their peak far inside the grid, so the
    // data inform both parameters.
    assert!(!post.upsilon_prior_dominated && !post.tau_prior_dominated);
}

/// Closed form: χ² = (τ/0.1)² (1 − ϒ/10) over ϒ ∈ [−0.3, 0.6] carries almost nothing on ϒ — its
/// marginal ∝ (1 − ϒ/10)^{−1/2} on an untruncated τ axis moves by about 5 % across the grid, far
/// inside e^{−1/2} — while τ's marginal is a Gaussian of width ≈ 0.1: ϒ is prior-dominated, τ is
/// not. With χ² = (τ/0.1)² (1 + ϒ)², ϒ's marginal ∝ 1/(1 + ϒ) moves by a factor 1.6/0.7 = 2.29 >
/// e^{1/2} across the grid: informed (though weakly: a factor (1.6/0.7)^{1/2} = 1.51 would not be).
#[test]
fn a_marginal_the_data_barely_move_is_prior_dominated() {
    let u = axis(-0.3, 0.02, 46);
    let t = axis(-0.6, 0.01, 121);
    let surface = |f: &dyn Fn(f64, f64) -> f64| -> Vec<f64> {
        t.iter()
            .flat_map(|&tt| u.iter().map(move |&uu| f(uu, tt)))
            .collect()
    };
    let flat = posterior(
        &u,
        &t,
        &surface(&|uu, tt| (tt / 0.1).powi(2) * (1.0 - uu / 10.0)),
    )
    .unwrap();
    assert!(flat.upsilon_prior_dominated);
    assert!(!flat.tau_prior_dominated);
    let informed = posterior(
        &u,
        &t,
        &surface(&|uu, tt| (tt / 0.1).powi(2) * (1.0 + uu).powi(2)),
    )
    .unwrap();
    assert!(!informed.upsilon_prior_dominated);
    assert!(!dwarfbound::confront::profile::prior_dominated(&[1.0]));
    assert!(dwarfbound::confront::profile::prior_dominated(&[1.0, 0.7]));
    assert!(!dwarfbound::confront::profile::prior_dominated(&[1.0, 0.6]));
}

/// Φ(z) from libm's erfc (Φ(z) = ½ erfc(−z/√2), Abramowitz & Stegun 26.2.29).
fn phi_cdf(z: f64) -> f64 {
    0.5 * libm::erfc(-z / std::f64::consts::SQRT_2)
}

/// ∫Φ(z) dz = zΦ(z) + φ(z) (integration by parts; common practice, no source).
fn phi_cdf_integral(z: f64) -> f64 {
    z * phi_cdf(z) + (-0.5 * z * z).exp() / (2.0 * std::f64::consts::PI).sqrt()
}

#[test]
fn one_sided_bound_flat_in_tau_opens_the_right_ends() {
    let (a, s) = (0.1, 0.05);
    let u = axis(-0.5, 0.001, 1001);
    let t = axis(-0.2, 0.1, 5);
    let chi2: Vec<f64> = t
        .iter()
        .flat_map(|_| u.iter().map(|&uu| -2.0 * phi_cdf((uu - a) / s).ln()))
        .collect();
    let p = profile_intervals(&u, &t, &chi2).unwrap();
    let post = posterior(&u, &t, &chi2).unwrap();
    let z_hi = (0.5 - a) / s;
    let total = s * (phi_cdf_integral(z_hi) - phi_cdf_integral((-0.5 - a) / s));
    for (n, l) in Level::ALL.iter().enumerate() {
        let k = l.n_sigma();
        // Profile: Δχ² = −2 ln[Φ(z)/Φ(z_hi)] = k² at the lower end; nothing closes the top.
        let target = (-0.5 * k * k).exp() * phi_cdf(z_hi);
        let (mut lo, mut hi) = (-20.0, z_hi);
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if phi_cdf(mid) < target {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        let want = a + s * lo;
        let got = p.upsilon[n].lower.expect("profile lower end closed");
        assert!((got - want).abs() < 1e-4, "profile lower {got} vs {want}");
        assert_eq!(p.upsilon[n].upper, None, "profile upper end is open");
        // Posterior: the density rises monotonically, so the HPD interval is [x*, edge] with
        // ∫_{x*}^{0.5} Φ = p ∫_{-0.5}^{0.5} Φ.
        let (mut lo, mut hi) = (-0.5f64, 0.5f64);
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            let mass = s * (phi_cdf_integral(z_hi) - phi_cdf_integral((mid - a) / s));
            if mass > l.probability() * total {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        let got = post.upsilon[n].lower.expect("posterior lower end closed");
        assert!((got - lo).abs() < 2e-3, "posterior lower {got} vs {lo}");
        assert_eq!(post.upsilon[n].upper, None, "posterior upper end is open");
        // τ is unconstrained: both readings are open on both sides.
        for iv in [p.tau[n], post.tau[n]] {
            assert_eq!((iv.lower, iv.upper), (None, None));
        }
    }
}

#[test]
fn points_without_a_model_carry_no_probability() {
    // A Gaussian in ϒ with the upper half of the grid missing (no model): the missing points
    // are neither in the profile nor in any credible region, and the upper ends close at the
    // last point with a model rather than at the grid edge.
    let u = axis(-0.5, 0.01, 101);
    let t = axis(-0.1, 0.05, 5);
    let chi2: Vec<f64> = t
        .iter()
        .flat_map(|_| {
            u.iter().map(|&uu| {
                if uu > 0.3 {
                    f64::INFINITY
                } else {
                    (uu / 0.1f64).powi(2)
                }
            })
        })
        .collect();
    let p = profile_intervals(&u, &t, &chi2).unwrap();
    assert!((p.upsilon[1].upper.unwrap() - 0.2).abs() < 2e-3);
    assert!(p.upsilon_profile.iter().skip(81).all(|v| v.is_infinite()));
    let post = posterior(&u, &t, &chi2).unwrap();
    assert!(post.regions.iter().all(|r| r.upsilon_max <= 0.3));
    assert!(post.marginal_upsilon.iter().all(|v| v.is_finite()));
}
