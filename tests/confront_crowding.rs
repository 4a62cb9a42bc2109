//! The calibration caveat of the product-of-probabilities likelihood end to end: many stars and
//! brown dwarfs crowding the MMHB with unequal densities (2 : 1) bias it toward the sparser side,
//! the report must warn, and the population-aware option must pull the best fit back toward the
//! truth. Source of the expected behaviour: the one-bound experiment of the project's statistics
//! notes (4 000 objects, 100 seeds: best fit 0.07387 vs 0.07489 for a true 0.075; the project
//! docs, docs/, will carry it).
//! The catalogue is invented (seeded synthetic draw), not measurements.

mod common;

use std::path::Path;

use common::{col, confront, path_str, read_csv, summary, text};
use dwarfbound::confront::reduce::SplitMix64;

fn gauss(rng: &mut SplitMix64) -> f64 {
    // Box–Muller.
    let u1 = rng.next_f64().max(1e-300);
    let u2 = rng.next_f64();
    (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
}

fn crowded_catalogue(path: &Path) {
    let mut rng = SplitMix64::new(20261202);
    let mut text = String::from(
        "# Invented synthetic catalogue (not measurements): 2:1 crowding at a true MMHB of 0.075 Msun.\nid,class,mass,mass_err,age\n",
    );
    let mut draw = |n: usize, lo: f64, hi: f64, class: &str, tag: &str, text: &mut String| {
        for k in 0..n {
            let m_true = lo + (hi - lo) * rng.next_f64();
            let sigma = m_true * (0.01 + 0.07 * rng.next_f64());
            let m = m_true + sigma * gauss(&mut rng);
            text.push_str(&format!("{tag}{k:05},{class},{m:.6},{sigma:.6},5\n"));
        }
    };
    draw(1600, 0.075, 0.100, "hburning", "S", &mut text);
    draw(800, 0.050, 0.075, "brown_dwarf", "B", &mut text);
    std::fs::write(path, text).unwrap();
}

/// The MMHB at the best fit, from summary.json and grid.csv.
fn best_fit_mmhb(out: &Path) -> f64 {
    let s = summary(out);
    let (u, t) = (
        s["best_fit"]["upsilon"].as_f64().unwrap(),
        s["best_fit"]["tau"].as_f64().unwrap(),
    );
    let (h, rows) = read_csv(&out.join("grid.csv"));
    for r in &rows {
        let (ru, rt): (f64, f64) = (
            r[col(&h, "upsilon")].parse().unwrap(),
            r[col(&h, "tau")].parse().unwrap(),
        );
        if ru == u && rt == t {
            return r[col(&h, "mmhb_msun")].parse().unwrap();
        }
    }
    panic!("best fit not in grid.csv");
}

#[test]
fn crowding_warns_and_the_population_option_reduces_the_bias() {
    let dir = tempfile::tempdir().unwrap();
    let cat = dir.path().join("crowded.csv");
    crowded_catalogue(&cat);
    let run = |out: &Path, extra: &[&str]| {
        let mut args = vec![
            path_str(&cat),
            "--upsilon=-0.05:0.05:3",
            "--tau=-0.05:0.05:41",
        ];
        args.extend_from_slice(extra);
        let o = confront(&args, out);
        assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    };
    // The comparison is of the product likelihood with and without the population term, both
    // with the per-object floor of earlier versions (the new default is checked below).
    let old = ["--floor", "per-object", "--likelihood", "product"];
    let (plain, aware) = (dir.path().join("plain"), dir.path().join("aware"));
    run(&plain, &old);
    run(
        &aware,
        &[&old[..], &["--population-window", "0.05:0.10"]].concat(),
    );
    // The default (shared floor profiled, calibrated likelihood chosen automatically here)
    // keeps the truth, standard gravity, inside the 95.45 % region (the calibration documented in docs/, statistics).
    let default = dir.path().join("default");
    run(&default, &[]);
    let d: serde_json::Value =
        serde_json::from_slice(&std::fs::read(default.join("summary.json")).unwrap()).unwrap();
    assert_eq!(d["statistics"]["bounds"][0]["likelihood"], "calibrated");
    assert_eq!(
        d["standard_gravity"]["allowed_cl95"], true,
        "{}",
        d["standard_gravity"]
    );

    let s = summary(&plain);
    assert_eq!(s["crowding_warning"], true);
    let md = std::fs::read_to_string(plain.join("report.md")).unwrap();
    assert!(
        md.to_lowercase().contains("crowd"),
        "the report warns about crowding"
    );

    let (b_plain, b_aware) = (best_fit_mmhb(&plain), best_fit_mmhb(&aware));
    eprintln!("best-fit MMHB: plain {b_plain}, population-aware {b_aware} (truth 0.075)");
    // The plain likelihood is pulled toward the sparser (brown-dwarf) side, i.e. low.
    assert!(b_plain < 0.075, "plain best-fit MMHB {b_plain}");
    assert!(
        (b_aware - 0.075).abs() < (b_plain - 0.075).abs(),
        "population-aware {b_aware} should be closer to 0.075 than plain {b_plain}"
    );
}

/// `--mass-function-fit`: forcing the grouped fit on a crowded catalogue below the threshold
/// changes the answer by far less than its statistical resolution, and the choice and the fit
/// used are on record. Reference: the exact fit of the same run (docs/bounds.md §8.9 gives the
/// measured size of the approximation, ≤ 0.06 of the mass function's bootstrap error at 10⁶
/// objects). Δχ² of standard gravity moved by 2 × 10⁻⁶ when this was written (1 914 rows for
/// 2 400 objects); the tolerance, 10⁻³, is far below any confidence level's threshold (2.30 for
/// 68 % in two parameters) — common practice, no source.
#[test]
fn the_mass_function_fit_can_be_chosen_and_is_reported() {
    let dir = tempfile::tempdir().unwrap();
    let cat = dir.path().join("crowded.csv");
    crowded_catalogue(&cat);
    let run = |fit: &str| -> serde_json::Value {
        let out = dir.path().join(fit);
        let args = [
            path_str(&cat),
            "--upsilon=-0.05:0.05:3",
            "--tau=-0.05:0.05:41",
            "--mass-function-fit",
            fit,
        ];
        let o = confront(&args, &out);
        assert_eq!(o.status.code(), Some(0), "{}", text(&o));
        summary(&out)
    };
    let (auto, exact, grouped) = (run("auto"), run("exact"), run("grouped"));
    let fit = |s: &serde_json::Value| s["statistics"]["bounds"][0]["mass_function"].clone();
    assert_eq!(auto["statistics"]["mass_function_fit_choice"], "auto");
    assert_eq!(grouped["statistics"]["mass_function_fit_choice"], "grouped");
    // 2 400 objects: auto is the exact fit, to the bit.
    assert_eq!(fit(&auto)["fit"], "exact");
    assert_eq!(fit(&auto), fit(&exact));
    assert_eq!(auto["standard_gravity"], exact["standard_gravity"]);
    assert_eq!(fit(&grouped)["fit"], "grouped");
    let rows = fit(&grouped)["rows"].as_u64().unwrap();
    assert!(
        rows < fit(&grouped)["objects"].as_u64().unwrap(),
        "{rows} rows"
    );
    let dchi2 = |s: &serde_json::Value| s["standard_gravity"]["delta_chi2"].as_f64().unwrap();
    let (e, g) = (dchi2(&exact), dchi2(&grouped));
    eprintln!("Δχ² of standard gravity: exact {e}, grouped {g} ({rows} rows)");
    assert!((e - g).abs() < 1e-3, "exact {e}, grouped {g}");
}
