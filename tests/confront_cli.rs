//! `dwarfbound confront` end to end: every output file of the README, the documented
//! summary.json keys, a hand-computable probability, the "no grid point is consistent" case,
//! and the permissions of the written files.

mod common;

use common::{col, confront, demo, read_csv, root, summary, text};

const FILES: [&str; 11] = [
    "report.html",
    "report.md",
    "summary.json",
    "objects.csv",
    "grid.csv",
    "allowed.svg",
    "allowed.png",
    "bounds.svg",
    "bounds.png",
    "quarantine.csv",
    "report.md",
];

#[test]
fn demo_catalogues_write_every_output_with_the_documented_keys() {
    let dir = tempfile::tempdir().unwrap();
    let o = confront(
        &[
            "catalogs-demo/vlm_stars.csv",
            "catalogs-demo/brown_dwarfs.csv",
            "catalogs-demo/white_dwarfs.csv",
            "catalogs-demo/messy_survey.csv",
            "--map",
            "catalogs-demo/messy_survey.map.toml",
            "--upsilon=-0.3:0.6:19",
            "--tau=-0.3:0.3:13",
        ],
        dir.path(),
    );
    // One map for all files: the demo files lack the messy file's columns, so exit 2 naming them.
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));

    let o = confront(
        &[
            "catalogs-demo/vlm_stars.csv",
            "catalogs-demo/brown_dwarfs.csv",
            "catalogs-demo/white_dwarfs.csv",
            "--upsilon=-0.3:0.6:19",
            "--tau=-0.3:0.3:13",
        ],
        dir.path(),
    );
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    for f in FILES {
        let p = dir.path().join(f);
        assert!(p.metadata().unwrap().len() > 0, "{f} missing or empty");
    }
    let s = summary(dir.path());
    // Keys that scripts may rely on (the summary.json contract in the README).
    for k in [
        "version",
        "catalogues",
        "grid",
        "best_fit",
        "allowed",
        "upsilon_interval_at_tau0",
        "standard_gravity",
        "tensions",
        "drivers",
    ] {
        assert!(s.get(k).is_some(), "summary.json lacks `{k}`");
    }
    for c in s["catalogues"].as_array().unwrap() {
        let (i, a, q) = (
            c["rows_in"].as_u64().unwrap(),
            c["rows_accepted"].as_u64().unwrap(),
            c["rows_quarantined"].as_u64().unwrap(),
        );
        assert_eq!(i, a + q);
        assert!(c["path"].is_string());
    }
    for axis in ["upsilon", "tau"] {
        for k in ["start", "stop", "count"] {
            assert!(s["grid"][axis][k].is_number(), "grid.{axis}.{k}");
        }
    }
    assert_eq!(s["grid"]["anisotropy"], "density-squared");
    for k in ["upsilon", "tau", "minus_two_ln_l"] {
        assert!(s["best_fit"][k].is_number(), "best_fit.{k}");
    }
    for level in ["cl68", "cl95", "cl997"] {
        for k in [
            "upsilon_min",
            "upsilon_max",
            "tau_min",
            "tau_max",
            "fraction_of_grid",
        ] {
            assert!(s["allowed"][level].get(k).is_some(), "allowed.{level}.{k}");
        }
        let iv = &s["upsilon_interval_at_tau0"][level];
        assert!(iv["lower"].is_number() || iv["lower"].is_null());
        assert!(iv["upper"].is_number() || iv["upper"].is_null());
    }
    assert!(s["standard_gravity"]["allowed_cl95"].is_boolean());
    assert!(s["standard_gravity"]["minus_two_ln_l"].is_number());
    // The demo was drawn in standard gravity (catalogs-demo/README.md): it must be allowed.
    assert_eq!(s["standard_gravity"]["allowed_cl95"], true);
    assert_eq!(s["consistency"]["consistent_cl95"], true);
    let grid = std::fs::read_to_string(dir.path().join("grid.csv")).unwrap();
    assert_eq!(grid.lines().count(), 1 + 19 * 13);
    assert!(!grid.contains("NaN") && !grid.contains("inf"));
    let objects = std::fs::read_to_string(dir.path().join("objects.csv")).unwrap();
    // 300 stars, 103 brown dwarfs and 303 white dwarfs (catalogs-demo/README.md).
    assert_eq!(objects.lines().count(), 1 + 706);
    let html = std::fs::read_to_string(dir.path().join("report.html")).unwrap();
    assert!(html.contains("idealised"), "the report states the caution");
    assert!(!html.contains("http://") && !html.contains("https://"));
}

/// Source: the definition of the consistency probability with the standard normal CDF from
/// statrs: P = Φ((B − m)/√(σ² + σ_th²)) for a white dwarf below the Chandrasekhar mass
/// B = 5.82519/μe² M☉ (Chandrasekhar's formula with CODATA 2018 constants, μe = 2; Shapiro &
/// Teukolsky 1983 quote 5.836/μe², from memory) with the 0.03 M☉ floor.
#[test]
fn one_white_dwarf_gives_the_analytic_probability() {
    use statrs::distribution::{ContinuousCDF, Normal};
    let dir = tempfile::tempdir().unwrap();
    let o = confront(
        &[
            "tests/fixtures/confront/one_white_dwarf.csv",
            "--upsilon=-0.1:0.1:5",
            "--tau=0",
        ],
        dir.path(),
    );
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let (h, rows) = read_csv(&dir.path().join("objects.csv"));
    let get = |name: &str| -> f64 { rows[0][col(&h, name)].parse().unwrap() };
    let bound = get("bound_standard_msun");
    // The deprecated name is written alongside for one version (README, "Deprecated names").
    assert_eq!(get("bound_standard"), bound);
    assert!((bound - 1.456298).abs() < 2e-6, "M_Ch(μe = 2) = {bound}");
    let s = (0.05f64 * 0.05 + 0.03 * 0.03).sqrt();
    let p = Normal::new(0.0, 1.0).unwrap().cdf((bound - 1.30) / s);
    let z_expected = -Normal::new(0.0, 1.0).unwrap().inverse_cdf(p);
    let z = get("sigma_standard");
    assert!((z - z_expected).abs() < 1e-7, "tension {z} vs {z_expected}");
}

/// Every row quarantined: the run still writes its files, and says that nothing was tested
/// instead of naming a "best fit" at the first grid point of a flat likelihood (common
/// practice, no source).
#[test]
fn a_catalogue_without_a_usable_row_tests_nothing_and_names_no_best_fit() {
    let dir = tempfile::tempdir().unwrap();
    let cat = dir.path().join("bad.csv");
    std::fs::write(
        &cat,
        "# Invented rows, not measurements: every Teff error is zero, so every row is quarantined.\n\
         id,class,mass,mass_err,radius,radius_err,teff,teff_err\n\
         A,white_dwarf,0.6,0.02,0.012,0.0003,10000,0\n\
         B,white_dwarf,0.7,0.02,0.011,0.0003,10000,0\n",
    )
    .unwrap();
    let out = dir.path().join("out");
    let o = confront(
        &[cat.to_str().unwrap(), "--upsilon=-0.1:0.1:3", "--tau=0"],
        &out,
    );
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let stdout = String::from_utf8_lossy(&o.stdout);
    assert!(
        stdout.contains("2 rows in, 0 accepted, 2 quarantined"),
        "{stdout}"
    );
    assert!(stdout.contains("nothing is tested"), "{stdout}");
    assert!(!stdout.contains("best fit"), "{stdout}");
    let md = std::fs::read_to_string(out.join("report.md")).unwrap();
    assert!(md.contains("**Best fit:** none"), "{md}");
    assert_eq!(summary(&out)["consistency"]["n_informative"], 0);
}

#[test]
fn an_impossible_object_is_named_and_every_file_is_still_written() {
    let dir = tempfile::tempdir().unwrap();
    let o = confront(
        &[
            "tests/fixtures/confront/mislabelled.csv",
            "--upsilon=-0.2:0.2:9",
            "--tau=-0.2:0.2:9",
        ],
        dir.path(),
    );
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let stdout = String::from_utf8_lossy(&o.stdout);
    assert!(stdout.contains("no grid point is consistent"), "{stdout}");
    for f in FILES {
        assert!(dir.path().join(f).exists(), "{f}");
    }
    let s = summary(dir.path());
    assert_eq!(s["consistency"]["consistent_cl95"], false);
    assert_eq!(s["consistency"]["worst"][0]["id"], "BAD-1");
    assert_eq!(s["tensions"][0]["id"], "BAD-1");
    for f in ["report.md", "report.html"] {
        let t = std::fs::read_to_string(dir.path().join(f)).unwrap();
        assert!(t.contains("BAD-1"), "{f} names the object");
    }
}

#[test]
fn outputs_are_deterministic_apart_from_the_marked_time_line() {
    let (a, b) = (tempfile::tempdir().unwrap(), tempfile::tempdir().unwrap());
    let args = [
        "catalogs-demo/brown_dwarfs.csv",
        "catalogs-demo/white_dwarfs.csv",
        "--upsilon=-0.2:0.4:7",
        "--tau=-0.2:0.2:5",
    ];
    assert_eq!(confront(&args, a.path()).status.code(), Some(0));
    assert_eq!(confront(&args, b.path()).status.code(), Some(0));
    for f in FILES {
        let (x, y) = (
            std::fs::read(a.path().join(f)).unwrap(),
            std::fs::read(b.path().join(f)).unwrap(),
        );
        if f.starts_with("report.") {
            let strip = |v: &[u8]| dwarfbound::report::strip_volatile(&String::from_utf8_lossy(v));
            assert_eq!(strip(&x), strip(&y), "{f}");
        } else {
            assert!(x == y, "{f} differs between two identical runs");
        }
    }
}

#[test]
fn bad_inputs_exit_2_without_panicking() {
    let dir = tempfile::tempdir().unwrap();
    for args in [
        vec!["no/such/file.csv"],
        vec!["catalogs-demo/vlm_stars.csv", "--upsilon=1:0:3"],
        vec![
            "catalogs-demo/vlm_stars.csv",
            "--upsilon=-0.9:-0.8:3",
            "--tau=0",
        ],
        vec!["catalogs-demo/vlm_stars.csv", "--mmhb-model", "bogus"],
    ] {
        let o = confront(&args, dir.path());
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {err}");
        assert!(!err.contains("panicked"), "{err}");
    }
}

/// `vet` flags objects in tension with standard gravity under the default model. Expected value
/// by hand from the definition of a tension (symmetric Gaussian): z = (B − m)/√(σ² + σ_th²)
/// = (0.075 − 0.058)/√(0.002² + 0.005²) = 3.1568 for HFC-V0302 (invented demo object).
#[test]
fn vet_flags_the_next_night_tension() {
    let dir = tempfile::tempdir().unwrap();
    let o = common::bin(
        &[
            "vet",
            "catalogs-demo/next_night.csv",
            "--json",
            "--out",
            common::path_str(dir.path()),
        ],
        &root(),
    );
    assert_eq!(o.status.code(), Some(0));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let t = v["standard_gravity_tensions"].as_array().unwrap();
    assert_eq!(t.len(), 1);
    assert_eq!(t[0]["id"], "HFC-V0302");
    let expected = (0.075f64 - 0.058) / (0.002f64.powi(2) + 0.005f64.powi(2)).sqrt();
    assert!((t[0]["sigma"].as_f64().unwrap() - expected).abs() < 1e-9);
}

// Source: POSIX file-creation semantics (a file created by the process gets 0666 & !umask). The
// regression wrote every output but report.* as 0600 (tempfile's default), so a group or a web
// server could not read the report folder.
#[cfg(unix)]
#[test]
fn outputs_respect_the_umask() {
    use std::os::unix::fs::PermissionsExt;
    let dir = tempfile::tempdir().unwrap();
    let reference = dir.path().join("reference.txt");
    std::fs::write(&reference, "x").unwrap();
    let want = std::fs::metadata(&reference).unwrap().permissions().mode() & 0o777;
    let out = dir.path().join("out");
    let o = confront(
        &[&demo("brown_dwarfs.csv"), "--upsilon", "0", "--tau", "0"],
        &out,
    );
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    for f in [
        "summary.json",
        "objects.csv",
        "grid.csv",
        "allowed.png",
        "report.html",
    ] {
        let mode = std::fs::metadata(out.join(f)).unwrap().permissions().mode() & 0o777;
        assert_eq!(
            mode, want,
            "{f} has mode {mode:o}, a plain file here gets {want:o}"
        );
    }
}
