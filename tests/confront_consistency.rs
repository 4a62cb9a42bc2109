//! The absolute consistency verdict of `confront` end to end: the Šidák count uses only the
//! informative objects, and a catalogue without any is never called consistent.

mod common;

use std::path::{Path, PathBuf};
use std::process::Output;

use common::{confront, path_str, summary, text};

/// Writes `csv` as a catalogue into `dir` and confronts it on a coarse 10 × 7 grid; returns the
/// run and its output folder.
fn confront_coarse(dir: &Path, csv: &str) -> (Output, PathBuf) {
    let cat = dir.join("catalogue.csv");
    std::fs::write(&cat, csv).unwrap();
    let out = dir.join("out");
    let o = confront(
        &[path_str(&cat), "--upsilon=-0.3:0.6:10", "--tau=-0.3:0.3:7"],
        &out,
    );
    (o, out)
}

// Source: the Šidák-corrected absolute test, p_cat = 1 − (1 − P_min)^N_inf with N_inf the
// informative objects (those the one-dimensional reduction does not skip). One star with
// P ≈ 1.1e-4 at the best fit plus 1000 stars that are skipped everywhere: N_inf = 1,
// p_cat ≈ 1.1e-4 < 0.0455 → not consistent. The regression gave n_informative = 1001,
// p_catalogue = 0.106, consistent_cl95 = true.
#[test]
fn sidak_counts_only_objects_that_are_not_skipped() {
    let dir = tempfile::tempdir().unwrap();
    let mut csv = String::from("id,class,mass,mass_err\nLOW,hburning,0.0382,0.0005\n");
    for i in 0..1000 {
        csv.push_str(&format!("S{i:04},hburning,0.5,0.005\n"));
    }
    let (o, out) = confront_coarse(dir.path(), &csv);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let c = &summary(&out)["consistency"];
    assert_eq!(c["n_informative"].as_u64(), Some(1), "{c}");
    assert_eq!(c["consistent_cl95"].as_bool(), Some(false), "{c}");
}

// Source: the absolute test is over the informative objects; with none there is nothing to test.
// The regression, with a header-only catalogue: "Verdict: consistent — some grid point agrees
// with every object … over 0 informative objects", best fit at the grid corner with the advice to
// widen the grid.
#[test]
fn no_informative_object_is_not_a_consistent_verdict() {
    let dir = tempfile::tempdir().unwrap();
    let (o, out) = confront_coarse(dir.path(), "id,class,mass,mass_err\n");
    if o.status.code() == Some(2) {
        return; // refusing an empty catalogue is also acceptable
    }
    let md = std::fs::read_to_string(out.join("report.md")).unwrap();
    assert!(!md.contains("**Verdict:** consistent"), "{md}");
}

// Source: the verdict counts every test in the likelihood (docs/bounds.md#b8-10). A 0.60 M☉
// white dwarf at 10 000 K has a radius near 0.013 R☉ in standard gravity (Hamada & Salpeter
// 1961 give 0.0125 R☉ for a cold 0.6 M☉ carbon star, from memory; a hot hydrogen envelope adds a
// few per cent); one listed at 0.030 ± 0.0005 R☉ fails its radius test by tens of σ at every
// grid point, while its mass (far below the Chandrasekhar mass) passes. The verdict must say
// "not consistent" and name it, with the radius test.
#[test]
fn failing_radius_test_makes_the_verdict_inconsistent_and_names_the_object() {
    let dir = tempfile::tempdir().unwrap();
    let csv = "id,class,mass,mass_err,radius,radius_err,teff,teff_err\n\
               STAR1,hburning,0.30,0.01,,,,\n\
               BD1,brown_dwarf,0.050,0.002,,,,\n\
               BIGWD,white_dwarf,0.60,0.01,0.030,0.0005,10000,200\n";
    let (o, out) = confront_coarse(dir.path(), csv);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let c = &summary(&out)["consistency"];
    assert_eq!(c["consistent_cl95"].as_bool(), Some(false), "{c}");
    let failing = c["failing"].as_array().expect("failing list");
    assert!(
        failing
            .iter()
            .any(|f| f["id"] == "BIGWD" && f["test"] == "mass_radius"),
        "{c}"
    );
    let md = std::fs::read_to_string(out.join("report.md")).unwrap();
    assert!(md.contains("not consistent"), "{md}");
    assert!(md.contains("BIGWD"), "{md}");
}
