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
