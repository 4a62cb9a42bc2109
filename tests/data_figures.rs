//! The data-against-theory figures on invented input: the white-dwarf mass–radius diagram
//! (hover titles per point, escaped ids, tension highlight, every flag drawn) and the Δχ²
//! profile along τ = 0, as files and inside the report pages.
//!
//! The white dwarfs and curves are invented for these tests (a power law R ∝ M^(−1/3), the
//! non-relativistic degenerate scaling, Chandrasekhar 1939, scaled to about 0.013 R☉ at 0.6 M☉);
//! none of it is a measurement. Set `DWARFBOUND_REPORT_DEMO_DIR=/some/dir` to keep the PNGs.

use std::path::Path;

use dwarfbound::report::*;

/// R ∝ M^(−1/3) (non-relativistic degenerate electrons, Chandrasekhar 1939), 0.0130 R☉ at 0.6.
fn power_law(m: f64, scale: f64) -> f64 {
    0.0130 * scale * (m / 0.6f64).powf(-1.0 / 3.0)
}

fn diagram() -> WdMassRadius {
    let flags = [
        WdPointFlag::InTest,
        WdPointFlag::ModelMass,
        WdPointFlag::NoTeff,
        WdPointFlag::Elm,
        WdPointFlag::OutsideModel,
    ];
    let mut points: Vec<WdPoint> = (0..20)
        .map(|k| {
            let m = 0.3 + 0.045 * k as f64;
            WdPoint {
                id: format!("WD {k:02}"),
                mass_msun: m,
                mass_err_msun: Some((0.02, 0.03)),
                radius_rsun: power_law(m, 1.0 + 0.02 * ((k % 5) as f64 - 2.0)),
                radius_err_rsun: Some(0.0004),
                teff_k: (k % 5 != 2).then_some(8000.0 + 1000.0 * k as f64),
                sigma: Some(0.4 * ((k % 5) as f64 - 2.0)),
                flag: flags[k % 5],
            }
        })
        .collect();
    points.push(WdPoint {
        id: "<b>x&y</b>".into(),
        mass_msun: 0.62,
        mass_err_msun: None,
        radius_rsun: 0.0175,
        radius_err_rsun: Some(0.0005),
        teff_k: Some(12000.0),
        sigma: Some(7.5),
        flag: WdPointFlag::InTest,
    });
    let run = |scale: f64| -> Vec<(f64, f64)> {
        (0..=100)
            .map(|i| {
                let m = 0.2 + 0.01 * i as f64;
                (m, power_law(m, scale))
            })
            .collect()
    };
    let mut curves = Vec::new();
    for (k, scale) in [0.97, 1.0, 1.06, 1.15].into_iter().enumerate() {
        for best_fit in [false, true] {
            curves.push(ModelCurve {
                label: format!("curve {k}"),
                runs: vec![run(scale * if best_fit { 0.97 } else { 1.0 })],
                best_fit,
                colour_index: k,
            });
        }
    }
    WdMassRadius {
        points,
        curves,
        n_colours: 4,
        best_fit: (0.03, -0.01),
        tension_sigma: 3.0,
        model_note: "invented power law".into(),
    }
}

/// Δχ² = (ϒ/0.02)², a Gaussian profile: its 1, 4, 9 crossings are ±0.02, ±0.04, ±0.06
/// (closed form).
fn profile() -> ProfileTau0 {
    let upsilon: Vec<f64> = (0..=400).map(|k| -0.2 + 0.001 * k as f64).collect();
    let delta_chi2 = upsilon.iter().map(|u| (u / 0.02).powi(2)).collect();
    let labels = ["68.27 %", "95.45 %", "99.73 %"];
    ProfileTau0 {
        upsilon,
        delta_chi2,
        thresholds: labels
            .iter()
            .zip([1.0, 4.0, 9.0])
            .map(|(l, v)| (l.to_string(), v))
            .collect(),
        intervals: labels
            .iter()
            .zip([0.02, 0.04, 0.06])
            .map(|(l, e)| (l.to_string(), Some(-e), Some(e)))
            .collect(),
        profile_over_tau: vec![],
    }
}

fn keep(name: &str, bytes: &[u8]) {
    if let Ok(dir) = std::env::var("DWARFBOUND_REPORT_DEMO_DIR") {
        std::fs::create_dir_all(&dir).unwrap();
        std::fs::write(Path::new(&dir).join(name), bytes).unwrap();
    }
}

#[test]
fn wd_diagram_has_one_escaped_title_per_point() {
    let d = diagram();
    let svg = render_wd_mass_radius_svg(&d).unwrap();
    let png = render_wd_mass_radius_png(&d).unwrap();
    keep("wd_mass_radius.png", &png);
    assert!(png.starts_with(b"\x89PNG"));
    assert_eq!(svg.matches("<title>").count(), d.points.len());
    // XML 1.0 predefined entities (W3C XML 1.0, section 4.6): the id is escaped, not markup.
    assert!(svg.contains("&lt;b&gt;x&amp;y&lt;/b&gt;"));
    assert!(!svg.contains("<b>x&y</b>"));
    assert!(svg.contains("σ = +7.50"));
    assert!(svg.contains("Teff not given"));
    // Deterministic bytes for identical input (our convention, no source).
    assert_eq!(svg, render_wd_mass_radius_svg(&d).unwrap());
    assert_eq!(png, render_wd_mass_radius_png(&d).unwrap());
}

#[test]
fn wd_diagram_rejects_nan() {
    let mut d = diagram();
    d.points[0].radius_rsun = f64::NAN;
    assert!(render_wd_mass_radius_svg(&d).is_err());
}

#[test]
fn profile_marks_the_closed_form_interval_ends() {
    let p = profile();
    let svg = render_profile_svg(&p).unwrap();
    let png = render_profile_png(&p).unwrap();
    keep("profile_tau0.png", &png);
    assert!(png.starts_with(b"\x89PNG"));
    for end in ["-0.02", "0.02", "-0.04", "0.04", "-0.06", "0.06"] {
        let labelled = svg.lines().any(|l| l.trim() == end);
        assert!(labelled, "interval end {end} not labelled");
    }
    let mut ragged = p.clone();
    ragged.delta_chi2.pop();
    assert!(render_profile_svg(&ragged).is_err());
}

/// Invented masses around an MMHB of 0.075 M☉ (a value of the order of evolutionary models,
/// from memory), one far above the axis and one in tension.
fn masses() -> MassBounds {
    let marks = [
        MassMark::InFit,
        MassMark::Young,
        MassMark::ModelMass,
        MassMark::LeftOut,
    ];
    let mut objects: Vec<MassObject> = (0..40)
        .map(|k| MassObject {
            id: format!("S{k:02}"),
            mass_msun: 0.078 + 0.002 * k as f64,
            mass_err_msun: Some((0.003, 0.004)),
            sigma: (Some(-0.5), Some(-0.4)),
            mark: marks[k % 4],
        })
        .collect();
    objects.push(MassObject {
        id: "far".into(),
        mass_msun: 0.6,
        mass_err_msun: None,
        sigma: (None, None),
        mark: MassMark::InFit,
    });
    objects.push(MassObject {
        id: "low".into(),
        mass_msun: 0.05,
        mass_err_msun: Some((0.002, 0.002)),
        sigma: (Some(4.8), Some(4.1)),
        mark: MassMark::InFit,
    });
    MassBounds {
        panels: vec![MassPanel {
            title: "hydrogen-burning stars".into(),
            bound_label: "MMHB".into(),
            bound_standard_msun: 0.075,
            bound_best_msun: Some(0.073),
            floor_msun: 0.005,
            objects,
        }],
        tension_sigma: 3.0,
        best_fit: (0.02, -0.03),
    }
}

#[test]
fn mass_panels_have_a_title_per_object_and_mark_tension() {
    let m = masses();
    let svg = render_mass_bounds_svg(&m).unwrap();
    let png = render_mass_bounds_png(&m).unwrap();
    keep("mass_bounds.png", &png);
    assert!(png.starts_with(b"\x89PNG"));
    assert_eq!(svg.matches("<title>").count(), m.panels[0].objects.len());
    assert!(svg.contains("low: M = 0.05 ± 0.002 M☉"));
    let mut bad = m.clone();
    bad.panels[0].bound_standard_msun = f64::NAN;
    assert!(render_mass_bounds_svg(&bad).is_err());
}

/// The profile over τ is drawn beside the τ = 0 slice, with its key, only when given (the
/// honest-inference issue's item 5 as a figure).
#[test]
fn profile_figure_shows_the_profile_over_tau_when_given() {
    let without = render_profile_svg(&profile()).unwrap();
    assert!(!without.contains("profiled"));
    let mut p = profile();
    // A wider closed-form profile: Δχ² = (ϒ/0.04)², the slice's Gaussian twice as wide.
    p.profile_over_tau = (0..=40)
        .map(|k| {
            let u = -0.2 + 0.01 * k as f64;
            (u, (u / 0.04).powi(2))
        })
        .collect();
    let with = render_profile_svg(&p).unwrap();
    assert!(with.contains("profiled") && with.contains("over τ"));
    assert!(with.contains("profiled over τ") || with.contains("along τ = 0 and profiled"));
    p.profile_over_tau.push((0.3, f64::NAN));
    assert!(render_profile_svg(&p).is_err());
}
