//! Brown dwarfs and very-low-mass stars as they are: the MMHB test on real, published objects
//! with measured masses, and the age and mass-provenance rules acting on them.
//!
//! The objects are in `tests/fixtures/real/vlm_dynamical_msun.csv` (solar masses) and
//! `vlm_dynamical_mjup.csv` (Jupiter masses, as their papers give them); each row names its
//! paper and whether its numbers were re-read ("verified") or read in a secondary summary.

mod common;

use std::collections::BTreeMap;
use std::path::Path;

use common::{confront, fixture, object_columns, path_str, summary, text};

/// ϒ barely moves the anchored MMHB (docs/bounds.md §6); τ moves it by ±10 % at ±0.1.
const UPSILON: &str = "--upsilon=-0.3:0.6:46";
const TAU: &str = "--tau=-0.3:0.3:7";

/// (in_fit, flags, sigma_standard) of every object of a finished run, by id.
fn objects(out: &Path) -> BTreeMap<String, (String, String, f64)> {
    object_columns(out, &["in_fit", "flags", "sigma_standard"])
        .into_iter()
        .map(|(id, c)| {
            let z = c[2].parse().unwrap_or(f64::NAN);
            (id, (c[0].clone(), c[1].clone(), z))
        })
        .collect()
}

fn catalogues() -> (String, String) {
    let a = fixture("real", "vlm_dynamical_msun.csv");
    let b = fixture("real", "vlm_dynamical_mjup.csv");
    (path_str(&a).to_string(), path_str(&b).to_string())
}

/// Source: the fixture's papers. Dupuy & Liu 2017 (ApJS 231, 15; abstract verified) find the
/// stellar/substellar boundary at ≈ 70 M_Jup from dynamical masses; the anchored MMHB is
/// 0.075 ± 0.005 M☉ (docs/bounds.md §4). Real objects weighed by orbits must therefore agree
/// with standard gravity: the most massive old brown dwarf, ε Ind Ba (66.92 M_Jup = 0.0639 M☉,
/// 3.5 Gyr), lies 2.2 floor-σ below the anchor and is the object nearest its bound. The young
/// (Luhman 16 at 0.6–0.8 Gyr, 2MASS J0535−0546 at ~1 Myr) are left out by the 1 Gyr age cut, and
/// the companions of single-lined orbits, whose masses scale with a model mass of their primary,
/// by the provenance rule. With nothing near its bound the likelihood is flat over most of the
/// grid, and the report must say that no point is singled out rather than print a best fit.
#[test]
fn real_dynamical_masses_allow_standard_gravity_and_the_rules_act_on_them() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("vlm");
    let (a, b) = catalogues();
    let o = confront(&[&a, &b, UPSILON, TAU], &out);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let s = summary(&out);
    // Rows in = accepted + quarantined, per file (5 + 9 real objects, none bad).
    let rows: Vec<(u64, u64, u64)> = s["catalogues"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| {
            let n = |k: &str| c[k].as_u64().unwrap();
            (n("rows_in"), n("rows_accepted"), n("rows_quarantined"))
        })
        .collect();
    assert_eq!(rows, vec![(5, 5, 0), (9, 9, 0)]);
    assert_eq!(s["standard_gravity"]["allowed_cl95"], true, "{}", text(&o));
    assert_eq!(s["tensions"].as_array().map(Vec::len), Some(0));
    assert_eq!(s["consistency"]["consistent_cl95"], true);

    let objs = objects(&out);
    // Left out, with the flag that says why.
    let left_out = [
        ("Luhman 16 A", "young"),
        ("Luhman 16 B", "young"),
        ("2MASS J0535-0546 A", "young"),
        ("2MASS J0535-0546 B", "young"),
        ("NGTS J0930-18 B", "model_mass"),
        ("LHS 6343 C", "model_mass"),
        ("TOI-263 b", "model_mass"),
        ("EBLM J0555-57 Ab", "model_mass"),
    ];
    for (id, flag) in left_out {
        let (fit, flags, _) = &objs[id];
        assert_eq!(fit, "false", "{id}");
        assert!(flags.split(';').any(|f| f == flag), "{id}: {flags}");
    }
    let in_fit: Vec<&String> = objs
        .iter()
        .filter(|(_, (fit, _, _))| fit == "true")
        .map(|(id, _)| id)
        .collect();
    assert_eq!(
        in_fit,
        [
            "CM Dra A",
            "CM Dra B",
            "Gl 229 Ba",
            "Gl 229 Bb",
            "eps Ind Ba",
            "eps Ind Bb"
        ]
    );
    // ε Ind Ba: (0.0639 − 0.075)/0.005 ≈ −2.2 (negative = the consistent side); every other
    // object in the fit lies further from its bound.
    let (_, _, z_ba) = objs["eps Ind Ba"];
    assert!((z_ba + 2.2).abs() < 0.05, "{z_ba}");
    for id in &in_fit {
        if id.as_str() != "eps Ind Ba" {
            assert!(objs[*id].2 < z_ba, "{id}: {}", objs[*id].2);
        }
    }
    // A flat likelihood: no unique best fit, said in the report and on the terminal.
    assert_eq!(s["best_fit"]["unique"], false);
    assert!(s["best_fit"]["points_within_0_01"].as_u64().unwrap() > 100);
    let report = std::fs::read_to_string(out.join("report.md")).unwrap();
    assert!(report.contains("**Best fit:** not unique"), "{report}");
    assert!(!report.contains("widen the grid"));
    // Nothing informs ϒ, so its credible interval is the prior's, and says so.
    assert_eq!(s["posterior"]["upsilon_prior_dominated"], true);
    // An interval open at both ends has no end to move: the drivers section says so rather than
    // that no object moves it.
    assert!(
        report.contains("open at both ends on this grid, so there is no end"),
        "{report}"
    );
    assert!(report.contains("prior-dominated"), "{report}");
    assert!(text(&o).contains("not unique"), "{}", text(&o));
}

/// Source: the fixture's papers. Kept on request (`--include-model-masses`), the two stars of
/// single-lined eclipsing binaries at the limit (EBLM J0555−57Ab, 85 ± 4 M_Jup; NGTS J0930−18 B,
/// 0.0818 M☉) bound the MMHB from above, and so τ (Φ_A ≈ 1.10 at τ = 0.1, docs/bounds.md §3):
/// standard gravity stays allowed and τ's 95.45 % profile interval closes from above inside the
/// grid. Measured: τ < 0.166 on a 10 × 31 grid (ϒ barely matters).
#[test]
fn stars_at_the_limit_kept_on_request_bound_tau_from_above() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("vlm-model");
    let (a, b) = catalogues();
    let o = confront(
        &[
            &a,
            &b,
            "--upsilon=-0.3:0.6:10",
            "--tau=-0.3:0.3:31",
            "--include-model-masses",
        ],
        &out,
    );
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let s = summary(&out);
    assert_eq!(s["standard_gravity"]["allowed_cl95"], true);
    let tau = &s["profile_intervals"]["tau"]["cl95"];
    let upper = tau["upper"].as_f64().expect("τ's upper end closes");
    assert!((0.12..0.22).contains(&upper), "{upper}");
    assert!(tau["lower"].is_null(), "{tau}");
}

/// Source: Xuan et al. 2024 (Nature; abstract verified), which resolved Gl 229 B — weighed as one
/// brown dwarf of 71.4 ± 0.6 M_Jup by Brandt et al. 2021, as that abstract quotes — into Ba and
/// Bb of 38.1 and 34.4 M_Jup. A nightly run over the real objects (brown dwarfs, stars and the
/// white dwarfs of `wd_binaries.csv`) before and after that update must name the change object
/// by object and show its consequence: the most massive old brown dwarf was the one that bounded
/// the MMHB from below, so the allowed region grows (measured on a 46 × 31 grid: 0.198 → 0.215
/// of the grid at 95.45 %) while the ϒ interval at τ = 0, set by the white dwarfs' radii, moves
/// by less than 10⁻⁴.
#[test]
fn a_real_catalogue_update_is_named_and_its_consequence_shown() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let mjup = fixture("real", "vlm_dynamical_mjup.csv");
    let resolved = std::fs::read_to_string(&mjup).unwrap();
    let before: String = resolved
        .lines()
        .filter(|l| !l.starts_with("Gl 229 B"))
        .chain(std::iter::once(
            "Gl 229 B,brown_dwarf,71.4,0.6,,,4.0,2.0,dynamical,\"Brandt et al. 2021, as quoted \
             by Xuan et al. 2024 (verified): unresolved\"",
        ))
        .map(|l| format!("{l}\n"))
        .collect();
    std::fs::write(d.join("bd.csv"), before).unwrap();
    for name in ["vlm_dynamical_msun.csv", "wd_binaries.csv"] {
        std::fs::copy(fixture("real", name), d.join(name)).unwrap();
    }
    let config = d.join("night.toml");
    std::fs::write(
        &config,
        "output = \"out\"\n\
         [[catalogue]]\npath = \"vlm_dynamical_msun.csv\"\n\
         [[catalogue]]\npath = \"bd.csv\"\n\
         [[catalogue]]\npath = \"wd_binaries.csv\"\n\
         [grid]\nupsilon = \"-0.3:0.6:46\"\ntau = \"-0.3:0.3:31\"\n",
    )
    .unwrap();
    let night = || common::bin(&["run", path_str(&config)], d);
    let first = night();
    assert_eq!(first.status.code(), Some(0), "{}", text(&first));
    std::fs::write(d.join("bd.csv"), &resolved).unwrap();
    let second = night();
    assert_eq!(second.status.code(), Some(0), "{}", text(&second));
    let s = summary(&d.join("out").join("latest"));
    let since = &s["since_previous"];
    assert_eq!(
        since["added"],
        serde_json::json!(["bd.csv:Gl 229 Ba", "bd.csv:Gl 229 Bb"])
    );
    assert_eq!(since["removed"], serde_json::json!(["bd.csv:Gl 229 B"]));
    let (before, now) = (
        since["area_before"].as_f64().unwrap(),
        since["area_now"].as_f64().unwrap(),
    );
    assert!(now > before + 0.01, "{before} → {now}");
    assert!(since["interval_shift"].as_f64().unwrap() < 1e-4, "{since}");
    assert_eq!(s["standard_gravity"]["allowed_cl95"], true);
    assert!(text(&second).contains("1 object(s) removed: bd.csv:Gl 229 B"));
}
