//! `dwarfbound vet` end to end: the binary on small fixture catalogues in `tests/fixtures/vet/`
//! (invented data), checking exit codes, written files, quarantine reasons and that the counts
//! reconcile. Expected conversions use the IAU 2015 Resolution B3 nominal values
//! (R☉ = 6.957e8 m; M_J/M☉ = (GM)_J/(GM)☉ = 1.2668653e17 / 1.3271244e20).

mod common;

use std::path::{Path, PathBuf};

use common::{bin, col, path_str, read_csv, root};

/// A fixture of `tests/fixtures/vet/`.
fn fixture(name: &str) -> PathBuf {
    common::fixture("vet", name)
}

struct Run {
    code: i32,
    stdout: String,
    stderr: String,
}

fn vet(args: &[&str], out: &Path) -> Run {
    let mut all = vec!["vet"];
    all.extend_from_slice(args);
    all.extend(["--out", path_str(out)]);
    let o = bin(&all, &root());
    let r = Run {
        code: o.status.code().unwrap_or(-1),
        stdout: String::from_utf8_lossy(&o.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&o.stderr).into_owned(),
    };
    assert!(!r.stderr.contains("panicked"), "panic: {}", r.stderr);
    r
}

const MJUP_MSUN: f64 = 1.266_865_3e17 / 1.327_124_4e20;

#[test]
fn good_catalogue_is_accepted_whole_and_converted() {
    let out = tempfile::tempdir().unwrap();
    let good = fixture("good.csv");
    let r = vet(&[path_str(&good)], out.path());
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(
        r.stdout.contains("7 rows in, 7 accepted, 0 quarantined"),
        "{}",
        r.stdout
    );
    assert!(r.stdout.contains("white_dwarf"), "{}", r.stdout);
    let (h, rows) = read_csv(&out.path().join("accepted.csv"));
    assert_eq!(
        h,
        [
            "id",
            "class",
            "mass",
            "mass_err_lo",
            "mass_err_hi",
            "mass_limit",
            "radius",
            "radius_err",
            "age",
            "age_err",
            "rotation_period",
            "rotation_period_err",
            "mu_e",
            "teff",
            "teff_err",
            "core",
            "envelope",
            "radius_model",
            "mass_method",
            "ref",
            "source_file",
            "source_row"
        ]
    );
    assert_eq!(rows.len(), 7);
    let g2 = &rows[1];
    // 97 400 km in nominal solar radii (IAU 2015 B3: R☉ = 6.957e8 m).
    let radius: f64 = g2[col(&h, "radius")].parse().unwrap();
    assert!((radius - 97_400e3 / 6.957e8).abs() < 1e-15);
    // 0.5 d = 12 h.
    assert_eq!(g2[col(&h, "rotation_period")], "12");
    assert_eq!(g2[col(&h, "source_row")], "2");
    assert_eq!(rows[0][col(&h, "ref")], "fictional, sample A");
    assert_eq!(rows[3][col(&h, "mass_limit")], "upper");
    assert_eq!(rows[3][col(&h, "mass_err_lo")], "");
    assert_eq!(rows[0][col(&h, "mass_err_lo")], "0.004");
    let (qh, q) = read_csv(&out.path().join("quarantine.csv"));
    assert_eq!(qh, ["file", "row", "id", "column", "reason"]);
    assert!(q.is_empty());
}

#[test]
fn accepted_csv_vets_again_to_the_same_objects() {
    let out1 = tempfile::tempdir().unwrap();
    let out2 = tempfile::tempdir().unwrap();
    assert_eq!(vet(&[path_str(&fixture("good.csv"))], out1.path()).code, 0);
    let first = out1.path().join("accepted.csv");
    assert_eq!(vet(&[path_str(&first)], out2.path()).code, 0);
    let (h, a) = read_csv(&first);
    let (_, b) = read_csv(&out2.path().join("accepted.csv"));
    let keep = col(&h, "source_file");
    let strip = |rows: Vec<Vec<String>>| -> Vec<Vec<String>> {
        rows.into_iter().map(|r| r[..keep].to_vec()).collect()
    };
    assert_eq!(strip(a), strip(b));
}

#[test]
fn messy_catalogue_quarantines_the_bad_rows_with_reasons() {
    let out = tempfile::tempdir().unwrap();
    let messy = fixture("messy.csv");
    let map = fixture("messy.map.toml");
    let r = vet(&[path_str(&messy), "--map", path_str(&map)], out.path());
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(
        r.stdout.contains("12 rows in, 3 accepted, 9 quarantined"),
        "{}",
        r.stdout
    );
    let (h, acc) = read_csv(&out.path().join("accepted.csv"));
    let ids: Vec<&str> = acc.iter().map(|r| r[0].as_str()).collect();
    assert_eq!(ids, ["M-01", "M-02", "M-03"]);
    let m01: f64 = acc[0][col(&h, "mass")].parse().unwrap();
    assert!((m01 - 55.0 * MJUP_MSUN).abs() < 1e-15);
    let lo: f64 = acc[0][col(&h, "mass_err_lo")].parse().unwrap();
    let hi: f64 = acc[0][col(&h, "mass_err_hi")].parse().unwrap();
    assert!((lo - 4.0 * MJUP_MSUN).abs() < 1e-15 && (hi - 6.0 * MJUP_MSUN).abs() < 1e-15);
    assert_eq!(acc[1][col(&h, "class")], "hburning");

    let (_, q) = read_csv(&out.path().join("quarantine.csv"));
    let got: Vec<(String, String, String, String)> = q
        .into_iter()
        .map(|r| (r[1].clone(), r[2].clone(), r[3].clone(), r[4].clone()))
        .collect();
    let want = [
        ("4", "M-04", "m_jup", "not a number"),
        ("5", "M-05", "type", "unknown class label"),
        ("6", "M-01", "designation", "duplicate id within catalogue"),
        (
            "7",
            "M-07",
            "m_jup",
            "above 0.2 Msun, implausible for a brown_dwarf",
        ),
        (
            "8",
            "M-08",
            "m_lo",
            "only one of mass_err_lo and mass_err_hi given",
        ),
        ("9", "M-09", "m_lo", "not positive"),
        (
            "10",
            "M-10",
            "(row)",
            "malformed row: expected 6 fields, found 4",
        ),
        ("11", "M-11", "m_jup", "missing mass"),
        ("12", "M-12", "m_lo", "not positive"),
    ];
    let want: Vec<(String, String, String, String)> = want
        .iter()
        .map(|(a, b, c, d)| (a.to_string(), b.to_string(), c.to_string(), d.to_string()))
        .collect();
    assert_eq!(got, want);
}

#[test]
fn strict_exits_4_after_writing_files() {
    let out = tempfile::tempdir().unwrap();
    let args = [
        path_str(&fixture("messy.csv")).to_string(),
        "--map".into(),
        path_str(&fixture("messy.map.toml")).into(),
    ];
    let mut strict: Vec<&str> = args.iter().map(String::as_str).collect();
    strict.push("--strict");
    let r = vet(&strict, out.path());
    assert_eq!(r.code, 4, "{}", r.stderr);
    let (_, q) = read_csv(&out.path().join("quarantine.csv"));
    assert_eq!(q.len(), 9);
    // Without --strict the same run is a success; a clean catalogue passes --strict.
    let plain: Vec<&str> = args.iter().map(String::as_str).collect();
    assert_eq!(vet(&plain, out.path()).code, 0);
    assert_eq!(
        vet(&[path_str(&fixture("good.csv")), "--strict"], out.path()).code,
        0
    );
}

#[test]
fn json_summary_reconciles_per_catalogue_and_class() {
    let out = tempfile::tempdir().unwrap();
    let r = vet(
        &[
            path_str(&fixture("good.csv")),
            path_str(&fixture("log_mass.csv")),
            "--json",
        ],
        out.path(),
    );
    assert_eq!(r.code, 0, "{}", r.stderr);
    let v: serde_json::Value = serde_json::from_str(&r.stdout).unwrap();
    let cats = v["catalogues"].as_array().unwrap();
    assert_eq!(cats.len(), 2);
    for c in cats {
        let n = |k: &str| c[k].as_u64().unwrap();
        assert_eq!(n("rows_in"), n("rows_accepted") + n("rows_quarantined"));
    }
    assert_eq!(cats[0]["rows_accepted"], 7);
    assert_eq!(cats[1]["rows_accepted"], 2);
    assert_eq!(v["rows_in"], 9);
    let class = |name: &str| {
        v["classes"]
            .as_array()
            .unwrap()
            .iter()
            .find(|c| c["class"] == name)
            .unwrap()
            .clone()
    };
    let wd = class("white_dwarf");
    assert_eq!(wd["count"], 4); // three in good.csv, one in log_mass.csv
    assert_eq!(wd["mass_max_msun"], 1.3);
    // Median of the white-dwarf errors 0.02, 0.05, 0.03 and 10^-0.25 ln(10) 0.01 = 0.0129…
    assert_eq!(wd["median_mass_err_msun"], 0.025);
    let bd = class("brown_dwarf");
    assert_eq!(
        (bd["count"].as_u64(), bd["limits"].as_u64()),
        (Some(3), Some(1))
    );
}

#[test]
fn log_masses_and_dex_errors_are_converted() {
    let out = tempfile::tempdir().unwrap();
    let r = vet(&[path_str(&fixture("log_mass.csv"))], out.path());
    assert_eq!(r.code, 0, "{}", r.stderr);
    let (h, acc) = read_csv(&out.path().join("accepted.csv"));
    let m: f64 = acc[0][col(&h, "mass")].parse().unwrap();
    let e: f64 = acc[0][col(&h, "mass_err_lo")].parse().unwrap();
    let want_m = 10f64.powf(-1.3);
    assert!((m - want_m).abs() < 1e-15);
    // σ_M = M ln(10) σ_log (first-order propagation).
    assert!((e - want_m * std::f64::consts::LN_10 * 0.05).abs() < 1e-15);
}

#[test]
fn parquet_catalogue_written_by_the_test_is_vetted() {
    use polars::prelude::*;
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("survey.parquet");
    let mut df = df!(
        "id" => [Some(4_295_806_720_i64), Some(17), Some(17), None],
        "class" => ["white_dwarf", "brown_dwarf", "brown_dwarf", "hburning"],
        "mass" => [Some(0.61f64), Some(0.05), Some(0.05), Some(0.1)],
        "mass_err" => [Some(0.02f64), None, Some(0.004), Some(0.01)],
    )
    .unwrap();
    let mut f = std::fs::File::create(&path).unwrap();
    ParquetWriter::new(&mut f).finish(&mut df).unwrap();
    drop(f);
    let out = dir.path().join("out");
    let r = vet(&[path_str(&path)], &out);
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(
        r.stdout.contains("4 rows in, 1 accepted, 3 quarantined"),
        "{}",
        r.stdout
    );
    let (_, acc) = read_csv(&out.join("accepted.csv"));
    assert_eq!(acc[0][0], "4295806720");
    let (_, q) = read_csv(&out.join("quarantine.csv"));
    let got: Vec<(&str, &str)> = q.iter().map(|r| (r[1].as_str(), r[4].as_str())).collect();
    assert_eq!(
        got,
        [
            ("2", "missing mass error"),
            ("3", "duplicate id within catalogue"),
            ("4", "missing id")
        ]
    );
}

/// Every broken input: exit 2, one line naming the file (and column where there is one).
#[test]
fn broken_inputs_exit_2_naming_file_and_column() {
    let out = tempfile::tempdir().unwrap();
    let messy = fixture("messy.csv");
    let missing = fixture("does-not-exist.csv");
    let garbage = out.path().join("garbage.csv");
    std::fs::write(&garbage, b"\xff\xfe\x00binary,\xc3\x28\n1,2\n").unwrap();
    let not_parquet = out.path().join("fake.parquet");
    std::fs::write(&not_parquet, b"id,class\n").unwrap();
    let unknown_ext = out.path().join("catalogue.txt");
    std::fs::write(&unknown_ext, b"id,class,mass,mass_err\n").unwrap();
    let cases: Vec<(Vec<String>, Vec<&str>)> = vec![
        (
            vec![path_str(&fixture("empty.csv")).into()],
            vec!["empty.csv"],
        ),
        (
            vec![path_str(&fixture("no_mass.csv")).into()],
            vec!["no_mass.csv", "`mass`"],
        ),
        (
            vec![path_str(&fixture("bad_unit.csv")).into()],
            vec!["bad_unit.csv", "`mass`", "furlong"],
        ),
        (
            vec![path_str(&fixture("wrong_dimension.csv")).into()],
            vec!["wrong_dimension.csv", "`mass`", "km", "a length"],
        ),
        (
            vec![
                path_str(&messy).into(),
                "--map".into(),
                path_str(&fixture("bad_key.map.toml")).into(),
            ],
            vec!["bad_key.map.toml", "masss"],
        ),
        (
            vec![
                path_str(&messy).into(),
                "--map".into(),
                path_str(&fixture("absent_column.map.toml")).into(),
            ],
            vec!["messy.csv", "r_km", "radius"],
        ),
        (
            vec![
                path_str(&messy).into(),
                "--map".into(),
                path_str(&missing).into(),
            ],
            vec!["does-not-exist.csv"],
        ),
        (vec![path_str(&missing).into()], vec!["does-not-exist.csv"]),
        // Without the map the messy file has none of the canonical columns.
        (vec![path_str(&messy).into()], vec!["messy.csv", "`id`"]),
        (vec![path_str(&garbage).into()], vec!["garbage.csv"]),
        (vec![path_str(&not_parquet).into()], vec!["fake.parquet"]),
        (vec![path_str(&unknown_ext).into()], vec!["catalogue.txt"]),
        (
            vec![path_str(&messy).into(), "--format".into(), "xlsx".into()],
            vec!["xlsx"],
        ),
    ];
    for (args, needles) in cases {
        let args: Vec<&str> = args.iter().map(String::as_str).collect();
        let r = vet(&args, out.path());
        assert_eq!(r.code, 2, "{args:?}: {} {}", r.stdout, r.stderr);
        let msg = r.stderr.trim();
        assert_eq!(msg.lines().count(), 1, "{args:?}: not one line: {msg}");
        for n in needles {
            assert!(msg.contains(n), "{args:?}: `{n}` not in: {msg}");
        }
    }
}

#[test]
fn format_flag_overrides_the_extension() {
    let dir = tempfile::tempdir().unwrap();
    let renamed = dir.path().join("good.dat");
    std::fs::copy(fixture("good.csv"), &renamed).unwrap();
    let r = vet(
        &[path_str(&renamed), "--format", "csv"],
        &dir.path().join("out"),
    );
    assert_eq!(r.code, 0, "{}", r.stderr);
    assert!(r.stdout.contains("7 accepted"));
}

/// `rotation_period_err` inherits the period's unit (like every error column), is converted to
/// hours, is quarantined when not positive and reads NaN as "no value" (README, catalogue
/// columns). 0.5 d = 12 h, 0.01 d = 0.24 h.
#[test]
fn rotation_period_error_inherits_the_unit_and_is_vetted() {
    let dir = tempfile::tempdir().unwrap();
    let cat = dir.path().join("spins.csv");
    std::fs::write(
        &cat,
        "id,class,mass,mass_err,rotation_period[d],rotation_period_err\n\
         S1,brown_dwarf,0.06,0.005,0.5,0.01\n\
         S2,brown_dwarf,0.06,0.005,0.5,nan\n\
         S3,brown_dwarf,0.06,0.005,0.5,-0.01\n",
    )
    .unwrap();
    let out = dir.path().join("out");
    let r = vet(&[path_str(&cat)], &out);
    assert_eq!(r.code, 0, "{} {}", r.stdout, r.stderr);
    let (h, rows) = read_csv(&out.join("accepted.csv"));
    assert_eq!(rows.len(), 2);
    let err: f64 = rows[0][col(&h, "rotation_period_err")].parse().unwrap();
    assert!((err - 0.24).abs() < 1e-14, "{err}");
    assert_eq!(rows[1][col(&h, "rotation_period_err")], "");
    let (qh, q) = read_csv(&out.join("quarantine.csv"));
    assert_eq!(q.len(), 1);
    assert_eq!(q[0][col(&qh, "column")], "rotation_period_err");
    assert_eq!(q[0][col(&qh, "reason")], "not positive");
}
