//! The spin test end to end: the break-up test per object (objects.csv, grid.csv, the report's
//! "what each class constrains"), the slow-rotation flags, and the minimum-period curves of
//! `predict --json`.

mod common;

use std::path::Path;

use common::{bin, col, confront, path_str, read_csv, root, text};

/// Writes `body` as a catalogue in `dir` and confronts it on `grid` into `dir/out`.
fn run(dir: &Path, body: &str, grid: &[&str]) -> std::path::PathBuf {
    let cat = dir.join("spins.csv");
    std::fs::write(&cat, body).unwrap();
    let out = dir.join("out");
    let mut args = vec![path_str(&cat)];
    args.extend_from_slice(grid);
    let o = confront(&args, &out);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    out
}

fn field(h: &[String], rows: &[Vec<String>], id: &str, name: &str) -> String {
    let row = rows
        .iter()
        .find(|r| r[col(h, "id")] == id)
        .unwrap_or_else(|| panic!("{id} not in objects.csv"));
    row[col(h, name)].clone()
}

// Acceptance of issue 14. Invented objects (not measurements): a white dwarf spinning in 13 s
// at 1.22 M☉ and one in 70 s at 1.27 M☉. Both must be confronted without error, each must get
// a break-up period and a radius source (periods in hours, the default unit), and the report must say what each constrains. Sources:
// the Roche break-up period P = 2π(3/2)^{3/2}√(R³/GM) (docs/rotation.md §2) with a massive white
// dwarf's radius of a few thousand km gives a few seconds, so both spin slower than break-up
// and the test constrains little; the threshold of first order is v ≤ 0.1 v_crit
// (docs/rotation.md §1.4), i.e. P ≥ √10 P_break ≈ 3.2 P_break: 13 s is within it only if
// P_break < 4.1 s, 70 s is within it for P_break < 22 s.
#[test]
fn fast_white_dwarfs_are_confronted_and_the_report_says_what_they_constrain() {
    let dir = tempfile::tempdir().unwrap();
    let out = run(
        dir.path(),
        "id,class,mass,mass_err,teff,teff_err,rotation_period,mass_method\n\
         WD-13s,white_dwarf,1.22,0.02,20000,500,0.0036111111111,dynamical\n\
         WD-70s,white_dwarf,1.27,0.02,20000,500,0.019444444444,dynamical\n",
        &["--upsilon=-0.2:0.2:5", "--tau=-0.1:0.1:3"],
    );
    let (h, rows) = read_csv(&out.join("objects.csv"));
    for id in ["WD-13s", "WD-70s"] {
        let p_obs: f64 = field(&h, &rows, id, "rotation_period_h").parse().unwrap();
        let p_break: f64 = field(&h, &rows, id, "breakup_period_standard_h")
            .parse()
            .unwrap();
        assert!(
            p_break > 0.0 && p_break < p_obs,
            "{id}: {p_break} h vs {p_obs} h"
        );
        // Several seconds: a massive white dwarf (Roche formula, radius of a few 1000 km).
        assert!(
            (1.0..15.0).contains(&(p_break * 3600.0)),
            "{id}: {p_break} h"
        );
        assert_eq!(
            field(&h, &rows, id, "spin_radius_source"),
            "finite-temperature"
        );
        let z: f64 = field(&h, &rows, id, "spin_sigma_standard").parse().unwrap();
        assert!(z < -2.0, "{id}: spin tension {z}");
    }
    let p13: f64 = field(&h, &rows, "WD-13s", "breakup_period_standard_h")
        .parse()
        .unwrap();
    let flags13 = field(&h, &rows, "WD-13s", "flags");
    let flags70 = field(&h, &rows, "WD-70s", "flags");
    if p13 * 3600.0 > 13.0 / 10f64.sqrt() {
        assert!(flags13.contains("spin_beyond_first_order"), "{flags13}");
    }
    assert!(flags70.contains("spin_corrected"), "{flags70}");
    let change: f64 = field(&h, &rows, "WD-70s", "spin_correction")
        .parse()
        .unwrap();
    assert!(change > 0.0 && change < 0.01, "{change}");
    // grid.csv carries the term; the report names both objects in the spin row.
    let (gh, grows) = read_csv(&out.join("grid.csv"));
    let k = col(&gh, "minus_two_ln_l_spin");
    assert!(grows.iter().all(|r| !r[k].is_empty()));
    let md = std::fs::read_to_string(out.join("report.md")).unwrap();
    let row = md
        .lines()
        .find(|l| l.starts_with("| spin |"))
        .expect("a spin row in what each class constrains");
    for id in ["WD-13s", "WD-70s"] {
        assert!(row.contains(id), "{row}");
    }
    assert!(
        row.contains("constrains nothing") || row.contains("constrains little"),
        "{row}"
    );
    assert!(row.contains("Jain, Kouvaris"), "{row}");
}

// Source: the break-up floor of the reference object, a cold 0.08 M☉ hydrogen-rich body
// (μe = 8/7) in the Roche model: 22.3 min (the theory check values, docs/rotation.md §2; the
// trade's ≈ 22 min, common practice, no source). A brown dwarf of that mass with a negligible
// mass error observed exactly at that period sits on the bound: P = 1/2, z = 0 (Φ(0) = 1/2).
// One observed at 10 min spins faster than break-up: z = (22.3 − 10)/(0.15 × 22.3) = 3.7 with
// the 15 % floor of the cold hydrogen-rich radius (by hand).
#[test]
fn the_reference_object_floor_is_the_per_object_break_up_period() {
    let dir = tempfile::tempdir().unwrap();
    let out = run(
        dir.path(),
        "id,class,mass,mass_err,age,rotation_period\n\
         BD-floor,brown_dwarf,0.08,0.00001,5,0.37166666667\n\
         BD-too-fast,brown_dwarf,0.08,0.00001,5,0.16666666667\n\
         BD-slow,brown_dwarf,0.06,0.003,5,1.2\n",
        &["--upsilon", "0", "--tau", "0"],
    );
    let (h, rows) = read_csv(&out.join("objects.csv"));
    let p: f64 = field(&h, &rows, "BD-floor", "breakup_period_standard_h")
        .parse()
        .unwrap();
    assert!((p * 60.0 - 22.3).abs() < 0.05, "{} min", p * 60.0);
    assert_eq!(field(&h, &rows, "BD-floor", "spin_radius_source"), "cold");
    let z: f64 = field(&h, &rows, "BD-floor", "spin_sigma_standard")
        .parse()
        .unwrap();
    assert!(z.abs() < 0.05, "{z}");
    let z: f64 = field(&h, &rows, "BD-too-fast", "spin_sigma_standard")
        .parse()
        .unwrap();
    assert!((z - 3.68).abs() < 0.05, "{z}");
    // A brown dwarf spinning in 1.2 h (periods are in hours by default): far on the safe side.
    let z: f64 = field(&h, &rows, "BD-slow", "spin_sigma_standard")
        .parse()
        .unwrap();
    assert!(z < -5.0, "{z}");
    let flags = field(&h, &rows, "BD-slow", "flags");
    assert!(flags.contains("spin_radius_cold"), "{flags}");
}

// Sources: the theory check values of the reference object (22.3 min at 0.08 M☉, μe = 8/7) and
// of the 0.6 M☉ white dwarf (34.0 s, μe = 2), both in the Roche model (docs/rotation.md §2).
#[test]
fn predict_json_has_the_minimum_period_curves() {
    let o = bin(
        &["predict", "--upsilon", "0", "--tau", "0", "--json"],
        &root(),
    );
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let doc: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let c = &doc["breakup_curves"];
    let at = |class: &str, key: &str, m: f64| -> f64 {
        let masses = c[class]["mass_msun"].as_array().unwrap();
        let k = masses
            .iter()
            .position(|x| (x.as_f64().unwrap() - m).abs() < 1e-12)
            .unwrap();
        c[class][key][k].as_f64().unwrap()
    };
    assert!((at("brown_dwarf", "breakup_period_min", 0.08) - 22.3).abs() < 0.05);
    assert!((at("brown_dwarf", "breakup_period_h", 0.08) * 60.0 - 22.3).abs() < 0.05);
    assert!((at("white_dwarf", "breakup_period_s", 0.6) - 34.0).abs() < 0.05);
    // The period falls with mass along the degenerate sequence (R decreases with M).
    let p: Vec<f64> = c["white_dwarf"]["breakup_period_s"]
        .as_array()
        .unwrap()
        .iter()
        .filter_map(|x| x.as_f64())
        .collect();
    assert!(p.windows(2).all(|w| w[1] < w[0]), "{p:?}");
}

// Source: README (`predict --out` writes the break-up figure beside the bounds figure).
#[test]
fn predict_out_writes_the_break_up_figure() {
    let dir = tempfile::tempdir().unwrap();
    let o = bin(
        &[
            "predict",
            "--upsilon=-0.1:0.1:3",
            "--tau",
            "0",
            "--out",
            path_str(dir.path()),
        ],
        &root(),
    );
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let svg = std::fs::read_to_string(dir.path().join("breakup.svg")).unwrap();
    assert!(svg.starts_with("<svg") && svg.contains("break-up period"));
    let png = std::fs::read(dir.path().join("breakup.png")).unwrap();
    assert!(png.starts_with(b"\x89PNG"));
}

/// A surface whose cold radius is a cubic in ϒ, R(M, ϒ) = 0.1 R☉ (M/0.06)^{−1/3}
/// (1 + 0.8ϒ + 0.6ϒ² − 0.5ϒ³), at a constant MMHB: the not-a-knot spline along the coarse row
/// reproduces a cubic exactly, so the spin term evaluated on the fine axis must equal the test
/// evaluated directly with the radius at each fine ϒ (closed form, by construction).
struct SwellingRadius;

fn swelling_radius_rsun(mass_msun: f64, upsilon: f64) -> f64 {
    let u = upsilon;
    0.1 * (mass_msun / 0.06).powf(-1.0 / 3.0) * (1.0 + 0.8 * u + 0.6 * u * u - 0.5 * u * u * u)
}

impl dwarfbound::confront::engine::BoundSurface for SwellingRadius {
    fn upsilon(&self) -> &[f64] {
        &[-0.3, -0.2, -0.1, 0.0, 0.1, 0.2, 0.3, 0.4, 0.5]
    }
    fn tau(&self) -> &[f64] {
        &[0.0]
    }
    fn mmhb_msun(&self, _i: usize) -> Option<f64> {
        Some(0.075)
    }
    fn chandrasekhar_mu2_msun(&self, _i: usize) -> Option<f64> {
        Some(1.4563)
    }
    fn wd_radii_rsun(&self, i: usize, q: &[(f64, f64)]) -> Vec<Option<f64>> {
        let u = self.upsilon()[i];
        q.iter()
            .map(|&(m, _)| Some(swelling_radius_rsun(m, u)))
            .collect()
    }
    fn wd_standard_radii(
        &self,
        q: &[dwarfbound::confront::wd_radius::WdQuery],
    ) -> Vec<Option<dwarfbound::confront::wd_radius::WdStandard>> {
        vec![None; q.len()]
    }
}

/// Invented object (not a measurement): a 0.06 ± 0.003 M☉ brown dwarf spinning in 0.8 h,
/// 1σ period error 0.01 h. On [`SwellingRadius`] its break-up period is ≈ 40 min at ϒ = 0 and
/// grows as R^{3/2} with ϒ, so the spin test closes the upper end of the ϒ interval alone.
fn swelling_spinner() -> dwarfbound::catalogue::CatalogueObject {
    use dwarfbound::catalogue::{CatalogueObject, ObjectClass, OptF64};
    let mut o = CatalogueObject {
        id: "BD-spin".into(),
        source_file: "a.csv".into(),
        source_row: 1,
        ..common::measured_object(1, ObjectClass::BrownDwarf, 0.06, 0.003)
    };
    let d = o.details_mut();
    d.rotation_period_h = OptF64::some(0.8);
    d.rotation_period_err_h = OptF64::some(0.01);
    o
}

// Source: the closed-form radius of [`SwellingRadius`] (a cubic in ϒ, reproduced exactly by the
// not-a-knot spline), so the fine-axis spin term must equal the direct evaluation to rounding;
// linear interpolation of the coarse term, the previous method, misses it by far more.
#[test]
fn spin_term_on_the_fine_axis_equals_a_direct_evaluation() {
    use dwarfbound::confront::engine::{confront as run_engine, EngineOptions};
    use dwarfbound::confront::slice::tau0_slice;
    let objects = [swelling_spinner()];
    let conf = run_engine(&objects, &SwellingRadius, &EngineOptions::default()).unwrap();
    assert_eq!(conf.spins.len(), 1);
    assert!((conf.spins[0].period_err_s - 36.0).abs() < 1e-12);
    let s = tau0_slice(&conf, &SwellingRadius).unwrap().unwrap();
    let fine = &s.slice.upsilon_fine;
    let (k, values) = &s.spin_fine_per_object[0];
    assert_eq!(*k, 0);
    let spin = &conf.spins[0];
    let mut worst_linear: f64 = 0.0;
    let axis = [-0.3, -0.2, -0.1, 0.0, 0.1, 0.2, 0.3, 0.4, 0.5];
    let direct = |u: f64| {
        let cold: Vec<Option<f64>> = spin
            .queries()
            .map(|(m, _)| Some(swelling_radius_rsun(m, u)))
            .collect();
        -2.0 * spin.at(&cold).ln_p.unwrap()
    };
    for (j, &u) in fine.iter().enumerate() {
        let want = direct(u);
        assert!(
            (values[j] - want).abs() < 1e-9 * want.max(1.0),
            "ϒ = {u}: {} vs {want}",
            values[j]
        );
        assert!((s.spin_fine[j] - values[j]).abs() < 1e-12);
        // What linear interpolation between the coarse points gave.
        let i = axis.partition_point(|&a| a <= u).clamp(1, axis.len() - 1);
        let t = (u - axis[i - 1]) / (axis[i] - axis[i - 1]);
        let linear = direct(axis[i - 1]) + t * (direct(axis[i]) - direct(axis[i - 1]));
        worst_linear = worst_linear.max((linear - want).abs());
    }
    assert!(worst_linear > 1e-3, "{worst_linear}");
}

// Source: leave-one-out is exact for the spin term (a sum over objects with nothing shared,
// docs/rotation.md §3): without its only spin test the slice of [`SwellingRadius`] is flat in ϒ,
// so removing it opens the upper end (an infinite shift), and the drivers name the spin test.
#[test]
fn spin_tests_are_leave_one_out_drivers() {
    use dwarfbound::confront::drivers::{slice_drivers_in_fit, spin_drivers, DriverOptions};
    use dwarfbound::confront::engine::{confront as run_engine, EngineOptions};
    use dwarfbound::confront::slice::tau0_slice;
    use dwarfbound::confront::tension::TensionTest;
    let objects = [swelling_spinner()];
    let conf = run_engine(&objects, &SwellingRadius, &EngineOptions::default()).unwrap();
    let s = tau0_slice(&conf, &SwellingRadius).unwrap().unwrap();
    let opts = DriverOptions::default();
    let alone = spin_drivers(&s, &opts).unwrap();
    assert_eq!(alone.len(), 1);
    assert_eq!(alone[0].0, 0);
    assert!(alone[0].1.is_infinite(), "{alone:?}");
    let drivers = slice_drivers_in_fit(&conf, &objects, &s, &opts).unwrap();
    let d = drivers.iter().find(|d| d.object == 0).unwrap();
    assert_eq!(d.test, TensionTest::Spin);
    assert!(d.shift.is_infinite());
}

// Invented objects (not measurements). Source for the expectations: a 0.06 M☉ cold
// hydrogen-rich body breaks up at ≈ 30 min at standard gravity (between the check values 35.7
// and 25.5 min at 0.05 and 0.07 M☉, docs/rotation.md §2), and its radius grows with ϒ, so one
// spinning in 33 min (15 % floor) is on the safe side at ϒ = 0 and fails towards ϒ = 0.6. It is
// then an informative test of the Šidák count and a driver of the interval's upper end. Its
// period error (0.01 h) is written back in objects.csv.
#[test]
fn spin_enters_the_consistency_count_and_the_drivers() {
    let dir = tempfile::tempdir().unwrap();
    let out = run(
        dir.path(),
        "id,class,mass,mass_err,age,rotation_period,rotation_period_err\n\
         BD-spin,brown_dwarf,0.06,0.002,5,0.55,0.01\n\
         BD-slow,brown_dwarf,0.05,0.002,5,10,\n\
         HB-1,hburning,0.09,0.004,5,,\n",
        &["--upsilon=-0.2:0.6:9", "--tau", "0"],
    );
    let (h, rows) = read_csv(&out.join("objects.csv"));
    assert_eq!(field(&h, &rows, "BD-spin", "rotation_period_err_h"), "0.01");
    assert_eq!(field(&h, &rows, "BD-slow", "rotation_period_err_h"), "");
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
    let worst = summary["consistency"]["worst"].as_array().unwrap();
    assert!(
        worst
            .iter()
            .any(|w| w["id"] == "BD-spin" && w["test"] == "spin"),
        "{worst:?}"
    );
    // BD-slow spins far slower than break-up everywhere: not counted.
    assert!(
        !worst
            .iter()
            .any(|w| w["id"] == "BD-slow" && w["test"] == "spin"),
        "{worst:?}"
    );
    let drivers = summary["drivers"].as_array().unwrap();
    assert!(
        drivers
            .iter()
            .any(|d| d["id"] == "BD-spin" && d["test"] == "spin"),
        "{drivers:?}"
    );
    assert_eq!(field(&h, &rows, "BD-spin", "driver_test"), "spin");
}

// Source: the definition of the first-order MMHB factor at a grid point (docs/rotation.md §3):
// f = 1 + v (d ln M/dv) with the n = 3/2 coefficients of the point's (ϒ, τ) and
// v = Ω²/(2πGρ_c), ρ_c = (ξ₁³/(3ω)) · 3M/(4πR³) with the object's radius there; at ϒ = τ = 0 it
// must be the standard factor the mass test already carries (the old, ϒ = τ = 0 value), so the
// spin term adds exactly nothing there. G is CODATA 2018, M☉ and R☉ the IAU 2015 B3 nominal
// values (through the crate's constants).
#[test]
fn mmhb_slow_rotation_factor_is_taken_at_the_grid_point() {
    use dwarfbound::confront::engine::{confront as run_engine, BoundSurface, EngineOptions, Term};
    use dwarfbound::confront::prob::ln_prob_consistent;
    use dwarfbound::confront::spin::spins_at;
    use dwarfbound::theory::slow_rotation::slow_rotation;
    use dwarfbound::theory::Anisotropy;
    // 3 h: v ≈ 1.6e-3, below the first-order threshold 3.3e-3 of n = 3/2 at standard gravity
    // (at large ϒ the threshold falls below v: the factor stays the standard one there).
    let mut bd = swelling_spinner();
    bd.details_mut().rotation_period_h = dwarfbound::catalogue::OptF64::some(3.0);
    bd.details_mut().rotation_period_err_h = dwarfbound::catalogue::OptF64::NONE;
    let objects = [bd];
    let opts = EngineOptions::default();
    let surface = SwellingRadius;
    let conf = run_engine(&objects, &surface, &opts).unwrap();
    let spin = &conf.spins[0];
    let m = spin
        .mmhb
        .expect("a corrected brown dwarf carries its MMHB correction");
    let factor = |u: f64| {
        let c = slow_rotation(1.5, u, 0.0, Anisotropy::None).unwrap();
        let r = swelling_radius_rsun(0.06, u) * dwarfbound::constants::R_SUN_NOMINAL_M;
        let mass = 0.06 * dwarfbound::constants::msun_kg();
        let rho_c =
            c.xi1.powi(3) / (3.0 * c.omega) * 3.0 * mass / (4.0 * std::f64::consts::PI * r.powi(3));
        let omega = 2.0 * std::f64::consts::PI / (3.0 * 3600.0);
        let v = omega * omega / (2.0 * std::f64::consts::PI * dwarfbound::constants::G_SI * rho_c);
        // Beyond that point's first-order threshold the factor stays the standard one.
        (v <= c.v_max).then_some(1.0 + v * c.mass_coefficient)
    };
    // The standard factor is the old, ϒ = τ = 0 one.
    let f0 = factor(0.0).unwrap();
    assert!((m.factor_standard - f0).abs() < 1e-13);
    assert!((conf.uses[0].bound_scale - f0).abs() < 1e-13);
    let mut moved = 0;
    for (i, &u) in surface.upsilon().iter().enumerate() {
        let at = spins_at(&conf.spins, &surface, i)[0];
        let f = at.mmhb_factor.unwrap();
        let want = factor(u).unwrap_or(f0);
        assert!((f - want).abs() < 1e-12, "ϒ = {u}: {f} vs {want}");
        let mut scaled = m.measurement;
        scaled.scale = m.measurement.scale / m.factor_standard * f;
        let want = -2.0
            * (ln_prob_consistent(&scaled, 0.075, opts.mmhb_floor_msun)
                - ln_prob_consistent(&m.measurement, 0.075, opts.mmhb_floor_msun));
        assert!((at.mmhb_change - want).abs() < 1e-12, "ϒ = {u}");
        if u == 0.0 {
            assert_eq!(at.mmhb_change, 0.0);
        } else if factor(u).is_some() {
            assert!(
                at.mmhb_change != 0.0 && (f - m.factor_standard).abs() > 1e-5,
                "ϒ = {u}"
            );
            moved += 1;
        }
        // The grid's spin term is the break-up test plus that change.
        let grid = conf.per_term[Term::Spin as usize][i].unwrap();
        assert!((grid - (-2.0 * at.ln_p.unwrap() + at.mmhb_change)).abs() < 1e-12);
    }
    assert!(moved >= 4, "{moved} points with a point-specific factor");
}

// Invented object (not a measurement): a 0.06 M☉ brown dwarf spinning slowly (5 h, within first
// order). On the real grid its MMHB factor is taken at each point (docs/rotation.md §3): at
// ϒ = τ = 0 the spin term adds nothing beyond the break-up test (P ≈ 1 there, so ≈ 0), and away
// from it a small, non-zero change (the factor moves by a fraction of a per cent of the MMHB).
#[test]
fn slow_spinner_gets_the_grid_points_mmhb_factor() {
    let dir = tempfile::tempdir().unwrap();
    let out = run(
        dir.path(),
        "id,class,mass,mass_err,age,rotation_period\n\
         BD-5h,brown_dwarf,0.072,0.003,5,5\n",
        &["--upsilon=-0.2:0.2:5", "--tau", "0"],
    );
    let (h, rows) = read_csv(&out.join("objects.csv"));
    let flags = field(&h, &rows, "BD-5h", "flags");
    assert!(flags.contains("spin_corrected"), "{flags}");
    let (gh, grid) = read_csv(&out.join("grid.csv"));
    let (iu, is) = (col(&gh, "upsilon"), col(&gh, "minus_two_ln_l_spin"));
    for r in &grid {
        let u: f64 = r[iu].parse().unwrap();
        let s: f64 = r[is].parse().unwrap();
        if u == 0.0 {
            assert!(s.abs() < 1e-9, "ϒ = 0: {s}");
        } else {
            assert!(s != 0.0 && s.abs() < 0.5, "ϒ = {u}: {s}");
        }
    }
}

/// A surface whose cold white-dwarf radius is a Chandrasekhar-like relation swelling with ϒ and
/// τ, R = 0.0125 R☉ (M/0.6)^{−1/3} √((1 − (M/1.44)^{4/3}) / (1 − (0.6/1.44)^{4/3}))
/// (1 + 0.5ϒ + 0.2τ), with the cold model as the standard radius and the density-squared
/// slow-rotation coefficients solved directly at each point (no table): what the white dwarf's
/// slow-rotation factor at each grid point is defined from (docs/rotation.md §3).
struct SpinningWd;

const SPINNING_WD_UPSILON: [f64; 5] = [-0.2, -0.1, 0.0, 0.1, 0.2];

fn spinning_wd_radius_rsun(mass_msun: f64, upsilon: f64, tau: f64) -> Option<f64> {
    let x = |m: f64| 1.0 - (m / 1.44).powf(4.0 / 3.0);
    (mass_msun < 1.44).then(|| {
        0.0125
            * (mass_msun / 0.6).powf(-1.0 / 3.0)
            * (x(mass_msun) / x(0.6)).sqrt()
            * (1.0 + 0.5 * upsilon + 0.2 * tau)
    })
}

impl dwarfbound::confront::engine::BoundSurface for SpinningWd {
    fn upsilon(&self) -> &[f64] {
        &SPINNING_WD_UPSILON
    }
    fn tau(&self) -> &[f64] {
        &[0.0, 0.1]
    }
    fn mmhb_msun(&self, _i: usize) -> Option<f64> {
        Some(0.075)
    }
    fn chandrasekhar_mu2_msun(&self, _i: usize) -> Option<f64> {
        Some(1.4563)
    }
    fn wd_radii_rsun(&self, i: usize, q: &[(f64, f64)]) -> Vec<Option<f64>> {
        let (u, t) = (SPINNING_WD_UPSILON[i % 5], [0.0, 0.1][i / 5]);
        q.iter()
            .map(|&(m, _)| spinning_wd_radius_rsun(m, u, t))
            .collect()
    }
    fn wd_standard_radii(
        &self,
        q: &[dwarfbound::confront::wd_radius::WdQuery],
    ) -> Vec<Option<dwarfbound::confront::wd_radius::WdStandard>> {
        q.iter()
            .map(|q| {
                spinning_wd_radius_rsun(q.mass_msun, 0.0, 0.0).map(|r| {
                    dwarfbound::confront::wd_radius::WdStandard {
                        radius_rsun: r,
                        cold_rsun: r,
                        hot_over_cold: 1.0,
                        envelope_fraction: 0.0,
                        dln_r_dteff_per_k: 0.0,
                    }
                })
            })
            .collect()
    }
    fn slow_rotation_at(
        &self,
        i: usize,
        n: f64,
    ) -> Option<dwarfbound::theory::slow_rotation::SlowRotation> {
        let (u, t) = (SPINNING_WD_UPSILON[i % 5], [0.0, 0.1][i / 5]);
        dwarfbound::theory::slow_rotation::slow_rotation(
            n,
            u,
            t,
            dwarfbound::theory::Anisotropy::DensitySquared,
        )
        .ok()
    }
}

/// Invented object (not a measurement): a 0.9 ± 0.02 M☉ white dwarf of measured radius
/// 0.0091 ± 0.0002 R☉ spinning in 150 s (v ≈ 2e-4, within first order at every point).
fn spinning_white_dwarf() -> dwarfbound::catalogue::CatalogueObject {
    use dwarfbound::catalogue::{CatalogueObject, ObjectClass, OptF64};
    let mut o = CatalogueObject {
        id: "WD-150s".into(),
        source_file: "a.csv".into(),
        source_row: 1,
        ..common::measured_object(1, ObjectClass::WhiteDwarf, 0.9, 0.02)
    };
    let d = o.details_mut();
    d.radius_rsun = OptF64::some(0.0091);
    d.radius_err_rsun = OptF64::some(0.0002);
    d.age_gyr = OptF64::NONE;
    d.rotation_period_h = OptF64::some(150.0 / 3600.0);
    o
}

// Source: the definition of a white dwarf's slow-rotation factor at a grid point
// (docs/rotation.md §3): n_eff = (1 − 3s)/(1 − s) from the local slope s = d ln R/d ln M of the
// cold relation at the point (central difference, h = 1e-3 M, index rounded to 0.01 as the
// standard correction does), the coefficients of that polytrope at the point's (ϒ, τ), ρ_c =
// (ξ₁³/(3ω)) · 3M/(4πR³) with the measured radius, v = Ω²/(2πGρ_c), f = 1 + v (d ln R/dv)|_M.
// At ϒ = τ = 0 it must be the standard factor exactly. The radius term at each point must be the
// radius term of the predictions multiplied by f there (inside the mixture, the shared radius
// scale eliminated with them), and the τ = 0 slice must agree with the grid at its coarse points.
// G is CODATA 2018, M☉ and R☉ the IAU 2015 B3 nominal values (through the crate's constants).
#[test]
fn white_dwarf_radius_factor_is_taken_at_each_grid_point() {
    use dwarfbound::confront::engine::{confront as run_engine, BoundSurface, EngineOptions, Term};
    use dwarfbound::confront::slice::tau0_slice;
    use dwarfbound::confront::spin::SlowRotationStatus;
    use dwarfbound::confront::wd_radius::{radius_term, WdRadiusModel};
    use dwarfbound::theory::slow_rotation::slow_rotation;
    use dwarfbound::theory::Anisotropy;
    let mut opts = EngineOptions::default();
    opts.radius.model = WdRadiusModel::Cold;
    let surface = SpinningWd;
    let objects = [spinning_white_dwarf()];
    let conf = run_engine(&objects, &surface, &opts).unwrap();
    let spin = &conf.spins[0];
    assert!(
        matches!(spin.slow, SlowRotationStatus::Corrected { .. }),
        "{:?}",
        spin.slow
    );
    assert_eq!(conf.radius_objects.len(), 1);
    let definition = |i: usize| {
        let (u, t) = (SPINNING_WD_UPSILON[i % 5], [0.0, 0.1][i / 5]);
        let m = 0.9;
        let h = 1e-3 * m;
        let r = |m: f64| spinning_wd_radius_rsun(m, u, t).unwrap();
        let s = (r(m + h).ln() - r(m - h).ln()) / ((m + h).ln() - (m - h).ln());
        let n = (((1.0 - 3.0 * s) / (1.0 - s)) * 100.0).round() / 100.0;
        let c = slow_rotation(n, u, t, Anisotropy::DensitySquared).unwrap();
        let radius = 0.0091 * dwarfbound::constants::R_SUN_NOMINAL_M;
        let mass = m * dwarfbound::constants::msun_kg();
        let rho_c = c.xi1.powi(3) / (3.0 * c.omega) * 3.0 * mass
            / (4.0 * std::f64::consts::PI * radius.powi(3));
        let omega = 2.0 * std::f64::consts::PI / 150.0;
        let v = omega * omega / (2.0 * std::f64::consts::PI * dwarfbound::constants::G_SI * rho_c);
        assert!(v <= c.v_max && n < 2.95, "first order holds at every point");
        1.0 + v * c.radius_at_fixed_mass_coefficient.unwrap()
    };
    let f0 = spin.radius_factor;
    assert!((f0 - definition(2)).abs() < 1e-13, "{f0}");
    assert!(f0 > 1.0 && f0 < 1.01, "{f0}");
    let shared = conf.radius_shared.as_ref();
    let mut moved = 0;
    for i in 0..10 {
        let f = spin.radius_factor_at(&surface, i);
        assert!((f - definition(i)).abs() < 1e-13, "point {i}: {f}");
        if i == 2 {
            // Standard gravity: the standard factor itself.
            assert_eq!(f, f0);
        } else if (f - f0).abs() > 1e-7 {
            moved += 1;
        }
        // The radius term: every prediction multiplied by f at the point (the standard radii
        // carry f₀ already), the shared scale eliminated with them.
        let mut r = conf.radius_objects[0].clone();
        for s in r.standard.iter_mut().flatten() {
            s.radius_rsun *= f / f0;
        }
        let u = SPINNING_WD_UPSILON[i % 5];
        let cold = surface.wd_radii_rsun(
            i,
            &r.nodes.iter().map(|&(m, _)| (m, 2.0)).collect::<Vec<_>>(),
        );
        let want = radius_term(std::slice::from_ref(&r), &cold, u, shared).minus_two_ln_l;
        let got = conf.per_term[Term::WhiteDwarfRadius as usize][i].unwrap();
        assert!(
            (got - want).abs() < 1e-9 * want.abs().max(1.0),
            "point {i}: {got} vs {want}"
        );
        let plain = radius_term(&conf.radius_objects, &cold, u, shared).minus_two_ln_l;
        if i == 2 {
            assert_eq!(got, plain);
        } else {
            assert!(
                (got - plain).abs() > 1e-9,
                "point {i}: the factor moved nothing"
            );
        }
    }
    assert!(moved >= 8, "{moved} points with a point-specific factor");
    // The τ = 0 slice on its fine axis passes through the grid's radius term at the coarse points.
    let s = tau0_slice(&conf, &surface).unwrap().unwrap();
    for (i, &u) in SPINNING_WD_UPSILON.iter().enumerate() {
        let k = s
            .slice
            .upsilon_fine
            .iter()
            .position(|&x| (x - u).abs() < 1e-12)
            .unwrap();
        let grid = conf.per_term[Term::WhiteDwarfRadius as usize][i].unwrap();
        assert!(
            (s.radius_total_fine[k] - grid).abs() < 1e-9 * grid.abs().max(1.0),
            "ϒ = {u}: {} vs {grid}",
            s.radius_total_fine[k]
        );
    }
}

// Acceptance of issue 14 with the radius test on the real grid (invented objects, not
// measurements): the 13 s and 70 s white dwarfs at 1.22 and 1.27 M☉, now with a measured radius,
// are confronted without error; the 70 s one is corrected at standard gravity (first order holds
// there, docs/rotation.md §1.4) and takes the radius test with its factor at each grid point,
// which needs the slow-rotation table at its effective index on a grid with τ ≠ 0.
#[test]
fn fast_white_dwarfs_with_radii_take_the_radius_test_with_their_factor() {
    let dir = tempfile::tempdir().unwrap();
    let out = run(
        dir.path(),
        "id,class,mass,mass_err,radius,radius_err,teff,teff_err,rotation_period,mass_method\n\
         WD-13s,white_dwarf,1.22,0.02,0.0058,0.0003,20000,500,0.0036111111111,dynamical\n\
         WD-70s,white_dwarf,1.27,0.02,0.0052,0.0003,20000,500,0.019444444444,dynamical\n",
        &["--upsilon=-0.2:0.2:5", "--tau=-0.1:0.1:3"],
    );
    let (h, rows) = read_csv(&out.join("objects.csv"));
    assert!(field(&h, &rows, "WD-70s", "flags").contains("spin_corrected"));
    for id in ["WD-13s", "WD-70s"] {
        assert_eq!(field(&h, &rows, id, "spin_radius_source"), "measured");
        let z: f64 = field(&h, &rows, id, "radius_sigma_standard")
            .parse()
            .unwrap_or_else(|_| panic!("{id}: no radius tension"));
        assert!(z.is_finite());
    }
    let (gh, grows) = read_csv(&out.join("grid.csv"));
    let k = col(&gh, "minus_two_ln_l_white_dwarf_radius");
    assert!(grows.iter().all(|r| r[k].parse::<f64>().is_ok()));
}

// Source: the definition of the factor (docs/rotation.md §3) with the coefficients solved
// directly (`slow_rotation` at the point's ϒ, τ and the grid's density-squared ansatz) against
// the theory grid's surface, whose coefficients come from the interpolated table: they agree to
// the table's measured error (4e-4 of the coefficient, so of f − 1; docs/rotation.md §3), and at
// ϒ = τ = 0 the factor is the standard one exactly (the table answers there with the direct
// isotropic solve, the one the standard correction has always used). Invented object (not a
// measurement): the 70 s white dwarf at 1.27 M☉ with a measured radius of 0.0052 R☉.
#[test]
fn white_dwarf_factor_on_the_theory_grid_matches_its_definition() {
    use dwarfbound::catalogue::{
        CatalogueObject, MassLimit, MassMethod, ObjectClass, ObjectDetails, OptF64,
    };
    use dwarfbound::confront::engine::{confront as run_engine, BoundSurface, EngineOptions};
    use dwarfbound::confront::spin::SlowRotationStatus;
    use dwarfbound::pipeline::surface::GridSurface;
    use dwarfbound::theory::grid::{compute, GridOptions};
    use dwarfbound::theory::point::{standard_point, TheorySettings};
    use dwarfbound::theory::slow_rotation::slow_rotation;
    use dwarfbound::theory::{Anisotropy, Axis};
    let settings = TheorySettings::default();
    assert_eq!(settings.anisotropy, Anisotropy::DensitySquared);
    let grid = compute(
        Axis {
            start: -0.2,
            stop: 0.2,
            count: 5,
        },
        Axis {
            start: -0.1,
            stop: 0.1,
            count: 3,
        },
        &settings,
        &GridOptions {
            with_wd_tables: true,
            quiet: true,
            ..GridOptions::default()
        },
    )
    .unwrap();
    let standard = standard_point(&settings).unwrap();
    let cold = standard.white_dwarf.as_ref().and_then(|t| t.ok());
    let opts = EngineOptions::default();
    let surface = GridSurface::new(&grid, cold, opts.radius.model);
    let wd = CatalogueObject {
        id: "WD-70s".into(),
        class: ObjectClass::WhiteDwarf,
        mass_msun: 1.27,
        mass_err_lo_msun: OptF64::some(0.02),
        mass_err_hi_msun: OptF64::some(0.02),
        mass_limit: MassLimit::None,
        mass_method: MassMethod::Dynamical,
        details: ObjectDetails {
            radius_rsun: OptF64::some(0.0052),
            radius_err_rsun: OptF64::some(0.0003),
            rotation_period_h: OptF64::some(70.0 / 3600.0),
            teff_k: OptF64::some(20_000.0),
            teff_err_k: OptF64::some(500.0),
            ..Default::default()
        }
        .into(),
        source_file: "a.csv".into(),
        source_row: 1,
    };
    let conf = run_engine(&[wd], &surface, &opts).unwrap();
    let spin = &conf.spins[0];
    assert!(
        matches!(spin.slow, SlowRotationStatus::Corrected { .. }),
        "{:?} {:?}",
        spin.slow,
        conf.uses[0].flags
    );
    let (ups, taus) = (surface.upsilon().to_vec(), surface.tau().to_vec());
    let definition = |i: usize, anisotropy: Anisotropy| {
        let (u, t) = (ups[i % 5], taus[i / 5]);
        let m = 1.27;
        let h = 1e-3 * m;
        let r = surface.wd_radii_rsun(i, &[(m - h, 2.0), (m + h, 2.0)]);
        let (lo, hi) = (r[0].unwrap(), r[1].unwrap());
        let s = (hi.ln() - lo.ln()) / ((m + h).ln() - (m - h).ln());
        let n_eff = (1.0 - 3.0 * s) / (1.0 - s);
        let n = (n_eff.clamp(1.05, 2.95) * 100.0).round() / 100.0;
        let c = slow_rotation(n, u, t, anisotropy).unwrap();
        let radius = 0.0052 * dwarfbound::constants::R_SUN_NOMINAL_M;
        let mass = m * dwarfbound::constants::msun_kg();
        let rho_c = c.xi1.powi(3) / (3.0 * c.omega) * 3.0 * mass
            / (4.0 * std::f64::consts::PI * radius.powi(3));
        let omega = 2.0 * std::f64::consts::PI / 70.0;
        let v = omega * omega / (2.0 * std::f64::consts::PI * dwarfbound::constants::G_SI * rho_c);
        if v > c.v_max || n_eff >= 2.95 {
            // Beyond first order at this point: the standard factor is kept.
            spin.radius_factor
        } else {
            1.0 + v * c.radius_at_fixed_mass_coefficient.unwrap()
        }
    };
    let i_std = 7;
    assert_eq!((ups[i_std % 5], taus[i_std / 5]), (0.0, 0.0));
    assert_eq!(spin.radius_factor, definition(i_std, Anisotropy::None));
    assert_eq!(spin.radius_factor_at(&surface, i_std), spin.radius_factor);
    let mut corrected_elsewhere = 0;
    for i in (0..15).filter(|&i| i != i_std) {
        let want = definition(i, Anisotropy::DensitySquared);
        let got = spin.radius_factor_at(&surface, i);
        assert!(
            (got - want).abs() <= 4e-4 * (want - 1.0).abs() + 1e-15,
            "point {i}: {got} vs {want}"
        );
        if want != 1.0 {
            corrected_elsewhere += 1;
        }
    }
    // f − 1 runs from 1.2e-3 to 4.7e-3 over this grid (f₀ − 1 = 1.5e-3): first order holds at
    // every point.
    assert_eq!(corrected_elsewhere, 14);
}
