//! Regression tests from a first-use review of the CLI. Each test states the behaviour that was
//! observed, the expected one and the outside reference it relies on.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn demo(name: &str) -> String {
    root()
        .join("catalogs-demo")
        .join(name)
        .display()
        .to_string()
}

fn bin(args: &[&str], cwd: &Path) -> Output {
    Command::new(env!("CARGO_BIN_EXE_dwarfbound"))
        .current_dir(cwd)
        .args(args)
        .output()
        .unwrap()
}

fn text(o: &Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

fn confront(args: &[&str], out: &Path) -> Output {
    let mut all = vec!["confront"];
    all.extend_from_slice(args);
    all.extend(["--out", out.to_str().unwrap()]);
    bin(&all, &root())
}

fn summary(out: &Path) -> serde_json::Value {
    serde_json::from_slice(&std::fs::read(out.join("summary.json")).unwrap()).unwrap()
}

/// Reads objects.csv into (header, rows).
fn objects(out: &Path) -> (Vec<String>, Vec<Vec<String>>) {
    let mut r = csv::Reader::from_path(out.join("objects.csv")).unwrap();
    let h = r.headers().unwrap().iter().map(String::from).collect();
    let rows = r
        .records()
        .map(|x| x.unwrap().iter().map(String::from).collect())
        .collect();
    (h, rows)
}

fn col(h: &[String], name: &str) -> usize {
    h.iter().position(|c| c == name).unwrap()
}

fn interval95(out: &Path) -> (f64, f64) {
    let s = summary(out);
    let i = &s["upsilon_interval_at_tau0"]["cl95"];
    (i["lower"].as_f64().unwrap(), i["upper"].as_f64().unwrap())
}

/// A nightly config over the demo catalogues in `dir` (small grid).
fn config(dir: &Path, name: &str, with_next_night: bool, extra: &str) -> PathBuf {
    let mut text = format!(
        "output = \"out\"\n[[catalogue]]\npath = \"{}\"\n[[catalogue]]\npath = \"{}\"\n\
         [[catalogue]]\npath = \"{}\"\n",
        demo("vlm_stars.csv"),
        demo("brown_dwarfs.csv"),
        demo("white_dwarfs.csv")
    );
    if with_next_night {
        text.push_str(&format!(
            "[[catalogue]]\npath = \"{}\"\n",
            demo("next_night.csv")
        ));
    }
    text.push_str("[grid]\nupsilon = \"-0.3:0.6:19\"\ntau = \"-0.3:0.3:13\"\n");
    text.push_str(extra);
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p
}

// Finding 1. Source: convergence of the same computation under grid refinement (the interval
// of bounds.md §8.4 must not depend on the grid spacing beyond its stated precision).
// Observed (white dwarfs of the demo, τ = 0): 10 Υ points → [-0.0034, 0.0025];
// 201 points on [-0.1, 0.1] → [-0.0249, 0.0092]. The radius term is interpolated linearly
// along Υ in `tau0_slice`, which makes coarse-grid intervals several times too narrow.
#[test]
fn upsilon_interval_does_not_depend_on_grid_spacing() {
    let coarse = tempfile::tempdir().unwrap();
    let fine = tempfile::tempdir().unwrap();
    let wd = demo("white_dwarfs.csv");
    let o = confront(&[&wd, "--upsilon=-0.3:0.6:10", "--tau", "0"], coarse.path());
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let o = confront(&[&wd, "--upsilon=-0.1:0.1:201", "--tau", "0"], fine.path());
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let (cl, cu) = interval95(coarse.path());
    let (fl, fu) = interval95(fine.path());
    let width = fu - fl;
    assert!(
        (cl - fl).abs() < 0.25 * width && (cu - fu).abs() < 0.25 * width,
        "coarse [{cl}, {cu}] vs fine [{fl}, {fu}]"
    );
}

// Finding 2. Source: the demo truth (catalogs-demo/README.md: radii drawn from the standard-
// gravity relation at the true mass) and an independent Python integration with generate.py's
// own R(M): marginalising HFC-W0159's radius over its split-normal mass (1.3832 −0.0722
// +0.0347 M☉) gives a predictive z ≈ +0.86σ; at the nominal mass alone it is +7.57σ, which is
// what objects.csv reports.
#[test]
fn radius_tension_accounts_for_the_mass_error() {
    let out = tempfile::tempdir().unwrap();
    let o = confront(
        &[&demo("white_dwarfs.csv"), "--upsilon", "0", "--tau", "0"],
        out.path(),
    );
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let (h, rows) = objects(out.path());
    let r = rows
        .iter()
        .find(|r| r[col(&h, "id")] == "HFC-W0159")
        .unwrap();
    let z: f64 = r[col(&h, "radius_sigma_standard")].parse().unwrap();
    assert!(z.abs() < 3.0, "HFC-W0159 radius tension {z}σ");
}

// Finding 3. Source: bounds.md §8.4: p_cat = 1 − (1 − P_min)^N_inf with N_inf the informative
// objects "(those not skipped in §8.5)". One star with P ≈ 1.1e-4 at the best fit plus 1000 stars
// that are skipped everywhere: N_inf = 1, p_cat ≈ 1.1e-4 < 0.0455 → not consistent.
// Observed: n_informative = 1001, p_catalogue = 0.106, consistent_cl95 = true.
#[test]
fn sidak_counts_only_objects_that_are_not_skipped() {
    let dir = tempfile::tempdir().unwrap();
    let mut csv = String::from("id,class,mass,mass_err\nLOW,hburning,0.0382,0.0005\n");
    for i in 0..1000 {
        csv.push_str(&format!("S{i:04},hburning,0.5,0.005\n"));
    }
    let cat = dir.path().join("sidak.csv");
    std::fs::write(&cat, csv).unwrap();
    let out = dir.path().join("out");
    let o = confront(
        &[
            cat.to_str().unwrap(),
            "--upsilon=-0.3:0.6:10",
            "--tau=-0.3:0.3:7",
        ],
        &out,
    );
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let c = &summary(&out)["consistency"];
    assert_eq!(c["n_informative"].as_u64(), Some(1), "{c}");
    assert_eq!(c["consistent_cl95"].as_bool(), Some(false), "{c}");
}

// Finding 4. Source: README ("merge … runs the comparison once: the result equals the unsharded
// run") and issue 5 (exit 3 when an alarm rule fires). Observed: merge always treats the result as
// a first run: since_previous.previous = null, no alarm, exit 0, `latest` untouched.
#[test]
fn merged_shards_keep_the_nightly_difference_and_alarm() {
    let dir = tempfile::tempdir().unwrap();
    let first = config(dir.path(), "nightly.toml", false, "");
    let o = bin(&["run", first.to_str().unwrap()], dir.path());
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let next = config(dir.path(), "next.toml", true, "");
    let next_s = next.to_str().unwrap();
    for i in 1..=2 {
        let o = bin(&["run", next_s, "--shard", &format!("{i}/2")], dir.path());
        assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    }
    let merged = dir.path().join("merged");
    let s1 = dir.path().join("out/shards/1-of-2");
    let s2 = dir.path().join("out/shards/2-of-2");
    let o = bin(
        &[
            "merge",
            s1.to_str().unwrap(),
            s2.to_str().unwrap(),
            "--out",
            merged.to_str().unwrap(),
        ],
        dir.path(),
    );
    // The unsharded `run next.toml` exits 3 here (new tension HFC-V0302).
    assert_eq!(o.status.code(), Some(3), "{}", text(&o));
}

// Finding 5. Source: the terminal of the same run ("since the previous run: this is the first
// run"). Observed: report.md of the first run says "Nothing changed: same objects, same
// tensions, same allowed region." (the same text appears in every merged report).
#[test]
fn first_run_report_does_not_claim_nothing_changed() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = config(dir.path(), "nightly.toml", false, "");
    let o = bin(&["run", cfg.to_str().unwrap()], dir.path());
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let md = std::fs::read_to_string(dir.path().join("out/latest/report.md")).unwrap();
    assert!(
        !md.contains("Nothing changed"),
        "first run's report claims nothing changed since a previous run"
    );
}

// Finding 6. Source: POSIX file-creation semantics (a file created by the process gets
// 0666 & !umask). Observed: every output but report.* is 0600 (tempfile's default), so a group
// or a web server cannot read the report folder.
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

// Finding 7. Source: bounds.md §8.4 ("open" = the slice does not close that end). With no τ = 0
// row there is no slice; observed: "[open, open]" with "the grid does not close that end, so no
// bound on that side follows", and "No single object moves the … interval" (never computed).
#[test]
fn missing_tau0_row_is_not_reported_as_open_interval() {
    let out = tempfile::tempdir().unwrap();
    let o = confront(
        &[
            &demo("white_dwarfs.csv"),
            "--upsilon=-0.3:0.6:10",
            "--tau=0.05:0.3:6",
        ],
        out.path(),
    );
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let md = std::fs::read_to_string(out.path().join("report.md")).unwrap();
    assert!(
        !md.contains("\\[open, open\\]"),
        "interval reported as open"
    );
    assert!(
        !md.contains("No single object moves"),
        "drivers reported although never computed"
    );
}

// Finding 10. Source: issue 6 ("identical accepted rows" across formats) and README ("FITS … NaN
// as missing"). astropy 8.0.2 writes a float NaN into ECSV as `nan` and into a VOTable as `NaN`;
// the VOTable row is accepted (NaN = missing), the ECSV row is quarantined ("radius: not finite").
#[test]
fn nan_in_an_optional_column_is_treated_alike_in_ecsv_and_votable() {
    let dir = tempfile::tempdir().unwrap();
    let ecsv = dir.path().join("t.ecsv");
    std::fs::write(
        &ecsv,
        "# %ECSV 1.0\n# ---\n# datatype:\n# - {name: id, datatype: string}\n\
         # - {name: class, datatype: string}\n# - {name: mass, unit: solMass, datatype: float64}\n\
         # - {name: mass_err, unit: solMass, datatype: float64}\n\
         # - {name: radius, unit: km, datatype: float64}\n# schema: astropy-2.0\n\
         id class mass mass_err radius\nA hburning 0.09 0.003 nan\n",
    )
    .unwrap();
    let vot = dir.path().join("t.vot");
    std::fs::write(
        &vot,
        "<?xml version=\"1.0\" encoding=\"utf-8\"?>\n<VOTABLE version=\"1.4\" \
         xmlns=\"http://www.ivoa.net/xml/VOTable/v1.3\">\n<RESOURCE type=\"results\">\n<TABLE>\n\
         <FIELD ID=\"id\" arraysize=\"*\" datatype=\"char\" name=\"id\"/>\n\
         <FIELD ID=\"class\" arraysize=\"*\" datatype=\"char\" name=\"class\"/>\n\
         <FIELD ID=\"mass\" datatype=\"double\" name=\"mass\" unit=\"solMass\"/>\n\
         <FIELD ID=\"mass_err\" datatype=\"double\" name=\"mass_err\" unit=\"solMass\"/>\n\
         <FIELD ID=\"radius\" datatype=\"double\" name=\"radius\" unit=\"km\"/>\n\
         <DATA><TABLEDATA>\n<TR><TD>A</TD><TD>hburning</TD><TD>0.09</TD><TD>0.003</TD><TD>NaN</TD></TR>\n\
         </TABLEDATA></DATA>\n</TABLE>\n</RESOURCE>\n</VOTABLE>\n",
    )
    .unwrap();
    let accepted = |file: &Path, sub: &str| -> usize {
        let out = dir.path().join(sub);
        let o = bin(
            &[
                "vet",
                file.to_str().unwrap(),
                "--out",
                out.to_str().unwrap(),
            ],
            dir.path(),
        );
        assert_eq!(o.status.code(), Some(0), "{}", text(&o));
        csv::Reader::from_path(out.join("accepted.csv"))
            .unwrap()
            .records()
            .count()
    };
    assert_eq!(accepted(&vot, "vot"), 1, "VOTable reference");
    assert_eq!(accepted(&ecsv, "ecsv"), 1, "ECSV differs from VOTable");
}

// Finding 12. Source: bounds.md §5 ("Objects with no age: included, flagged age_unknown") and the
// demo's own objects.csv (199 age_unknown objects with in_fit = true). Observed warning:
// "23 object(s) left out of the MMHB test (younger than 1 Gyr or without an age …)".
#[test]
fn left_out_warning_does_not_blame_objects_without_an_age() {
    let out = tempfile::tempdir().unwrap();
    let o = confront(
        &[
            &demo("vlm_stars.csv"),
            &demo("brown_dwarfs.csv"),
            "--upsilon",
            "0",
            "--tau",
            "0",
        ],
        out.path(),
    );
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let md = std::fs::read_to_string(out.path().join("report.md")).unwrap();
    assert!(!md.contains("or without an age"), "misleading warning");
}

// Finding 13. Source: README, objects.csv `flags` (`young`, `age_unknown`,
// `limit_uninformative`). Observed: "young (age 0.026 Gyr < 1 Gyr); young".
#[test]
fn flags_are_the_documented_tokens() {
    let out = tempfile::tempdir().unwrap();
    let o = confront(
        &[&demo("brown_dwarfs.csv"), "--upsilon", "0", "--tau", "0"],
        out.path(),
    );
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let (h, rows) = objects(out.path());
    for r in &rows {
        for f in r[col(&h, "flags")].split(';').map(str::trim) {
            assert!(
                f.is_empty() || ["young", "age_unknown", "limit_uninformative"].contains(&f),
                "{}: flag `{f}`",
                r[0]
            );
        }
    }
}

// Finding 14. Source: bounds.md §8.1/§8.3 (an upper limit of a hydrogen-burning star is
// informative: z = (B − L)/σ_th = (0.075 − 0.3)/0.005 = −45) and README ("sigma … empty for an
// uninformative limit"). Observed: empty for U1 (0.3, upper) but −25 for U2 (0.2, upper).
#[test]
fn tension_is_written_for_every_informative_object() {
    let dir = tempfile::tempdir().unwrap();
    let cat = dir.path().join("upper.csv");
    std::fs::write(
        &cat,
        "id,class,mass,mass_err,mass_limit\nU1,hburning,0.3,,upper\nU2,hburning,0.2,,upper\n",
    )
    .unwrap();
    let out = dir.path().join("out");
    let o = confront(
        &[cat.to_str().unwrap(), "--upsilon", "0", "--tau", "0"],
        &out,
    );
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let (h, rows) = objects(&out);
    for r in &rows {
        let z = &r[col(&h, "sigma_standard")];
        assert!(!z.is_empty(), "{}: empty sigma_standard", r[0]);
    }
}

// Finding 16. Source: RULES/CONVENTIONS (invalid config → exit 2 naming the key). Observed:
// `age_min_mmhb_gyr = nan` runs with exit 0, disables the age cut and writes null.
#[test]
fn non_finite_config_value_is_rejected() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = config(
        dir.path(),
        "nightly.toml",
        false,
        "[statistics]\nage_min_mmhb_gyr = nan\n",
    );
    let o = bin(&["run", cfg.to_str().unwrap()], dir.path());
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));
    assert!(text(&o).contains("age_min_mmhb_gyr"), "{}", text(&o));
}

// Finding 17. Source: bounds.md §8.4 (the absolute test is over the informative objects; with
// none there is nothing to test). Observed with a header-only catalogue: "Verdict: consistent —
// some grid point agrees with every object … over 0 informative objects", best fit at the grid
// corner with the advice to widen the grid.
#[test]
fn no_informative_object_is_not_a_consistent_verdict() {
    let dir = tempfile::tempdir().unwrap();
    let cat = dir.path().join("empty.csv");
    std::fs::write(&cat, "id,class,mass,mass_err\n").unwrap();
    let out = dir.path().join("out");
    let o = confront(
        &[
            cat.to_str().unwrap(),
            "--upsilon=-0.3:0.6:10",
            "--tau=-0.3:0.3:7",
        ],
        &out,
    );
    if o.status.code() == Some(2) {
        return; // refusing an empty catalogue is also acceptable
    }
    let md = std::fs::read_to_string(out.join("report.md")).unwrap();
    assert!(!md.contains("**Verdict:** consistent"), "{md}");
}

// Finding 9. Source: README ("A lock left by a run that was killed is detected … and taken over
// with a note"). A run killed between creating the lock and writing its pid leaves an empty
// lock file; observed: every later run exits 2 "locked by another dwarfbound run (pid 0)", and
// `--wait` waits forever.
#[test]
fn an_empty_stale_lock_file_does_not_block_forever() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = config(dir.path(), "nightly.toml", false, "");
    std::fs::create_dir_all(dir.path().join("out")).unwrap();
    std::fs::write(dir.path().join("out/.dwarfbound.lock"), "").unwrap();
    let o = bin(&["run", cfg.to_str().unwrap()], dir.path());
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
}
