//! The report on a synthetic input: files exist and are well-formed, user text is escaped, the
//! page is self-contained, bytes are deterministic, and headless Chromium opens the page cleanly.
//!
//! The input is invented for these tests (an analytic paraboloid Δχ² on a 41×31 grid, made-up
//! bound curves and object ids); none of it is a measurement.
//!
//! Set `DWARFBOUND_REPORT_DEMO_DIR=/some/dir` to keep a copy of the rendered files for viewing.

use std::path::Path;
use std::process::Command;

use dwarfbound::report::*;

const NASTY_ID: &str = "<b>x&y</b>";

/// Paraboloid Δχ² (a tilted ellipse around (0.05, −0.02)), zero at its centre.
fn paraboloid(u: f64, t: f64) -> f64 {
    let a = (u - 0.05) / 0.12;
    let b = (t + 0.02) / 0.05;
    a * a + b * b + 0.8 * a * b
}

fn grid() -> (Vec<f64>, Vec<f64>) {
    let upsilon: Vec<f64> = (0..41).map(|k| -0.5 + 0.025 * k as f64).collect();
    let tau: Vec<f64> = (0..31).map(|k| -0.3 + 0.02 * k as f64).collect();
    (upsilon, tau)
}

fn synthetic_map() -> AllowedMap {
    let (upsilon, tau) = grid();
    let mut delta = Vec::new();
    let mut class_tau = Vec::new();
    let mut class_ups = Vec::new();
    for &t in &tau {
        for &u in &upsilon {
            // A corner without a model, as near an existence bound.
            let missing = u < -0.45 && t > 0.2;
            delta.push(if missing {
                None
            } else {
                Some(paraboloid(u, t))
            });
            class_tau.push(if missing {
                None
            } else {
                Some(((t + 0.03) / 0.045).powi(2))
            });
            class_ups.push(if missing {
                None
            } else {
                Some(((u - 0.06) / 0.11).powi(2) + ((t + 0.01) / 0.2).powi(2))
            });
        }
    }
    // The best fit is the grid minimum.
    let (mut best, mut best_v) = ((0.0, 0.0), f64::INFINITY);
    for (k, v) in delta.iter().enumerate() {
        if let Some(v) = v {
            if *v < best_v {
                best_v = *v;
                best = (upsilon[k % upsilon.len()], tau[k / upsilon.len()]);
            }
        }
    }
    AllowedMap {
        upsilon,
        tau,
        delta_chi2: delta,
        levels: Level::two_parameter_defaults(),
        class_outlines: vec![
            ClassOutline {
                class_label: "hburning".into(),
                delta_chi2: class_tau,
            },
            ClassOutline {
                class_label: "white_dwarf".into(),
                delta_chi2: class_ups,
            },
        ],
        best_fit: best,
        standard_gravity: (0.0, 0.0),
        anisotropy_name: "quadratic in density".into(),
        disfavoured_below_upsilon: Some((-4.0 / 9.0, "relativistic existence bound".into())),
    }
}

fn synthetic_curves() -> BoundsCurves {
    let upsilon: Vec<f64> = (0..41).map(|k| -0.5 + 0.025 * k as f64).collect();
    let mut series = Vec::new();
    for &tau in &[-0.2, -0.1, 0.0, 0.1, 0.2] {
        series.push(BoundSeries {
            bound_label: "MMHB".into(),
            unit: "M☉".into(),
            tau,
            values: upsilon
                .iter()
                .map(|&u| Some(0.075 * (1.0 + 0.05 * u) * (1.0 + tau)))
                .collect(),
        });
    }
    for &tau in &[-0.2, -0.1, 0.0, 0.1, 0.2] {
        series.push(BoundSeries {
            bound_label: "Chandrasekhar mass".into(),
            unit: "M☉".into(),
            tau,
            values: upsilon
                .iter()
                .map(|&u| {
                    // A gap, as where the solver has no model.
                    if u < -0.45 && tau > 0.15 {
                        None
                    } else {
                        Some(1.44 * (1.0 - 0.4 * u) * (1.0 + 0.5 * tau))
                    }
                })
                .collect(),
        });
    }
    BoundsCurves { upsilon, series }
}

fn synthetic_input(consistent: bool) -> ReportInput {
    ReportInput {
        title: "dwarfbound report — synthetic test input".into(),
        generated_at: "2000-01-01T00:00:00Z".into(),
        version: "0.1.0".into(),
        model: ModelDescription {
            structure: "synthetic: no structure model was solved for this test".into(),
            anisotropy_ansatz: "quadratic in density".into(),
            mmhb_model: "synthetic".into(),
            mmhb_mode: "anchored".into(),
            mmhb_anchor: "0.075 M☉ (invented for the test)".into(),
            theory_floor: "per object".into(),
            white_dwarf: "Newtonian order".into(),
            likelihood: "product of consistency probabilities".into(),
            extra: vec![("Note".into(), "all numbers invented".into())],
        },
        grid: GridDescription {
            upsilon: AxisSpec {
                start: -0.5,
                stop: 0.5,
                count: 41,
            },
            tau: AxisSpec {
                start: -0.3,
                stop: 0.3,
                count: 31,
            },
            anisotropy: "quadratic in density".into(),
            points_without_model: synthetic_map()
                .delta_chi2
                .iter()
                .filter(|v| v.is_none())
                .count(),
        },
        catalogues: vec![CatalogueSummary {
            path: "catalogs-demo/<script>alert(1)</script>.csv".into(),
            rows_in: 12,
            rows_accepted: 11,
            rows_quarantined: 1,
            sha256: "0".repeat(64),
        }],
        best_fit: BestFit {
            upsilon: 0.05,
            tau: -0.02,
            minus_two_ln_l: 3.25,
            on_grid_edge: false,
            not_unique: None,
        },
        allowed: vec![
            AllowedRange {
                level: "68.27 %".into(),
                upsilon_min: Some(-0.1),
                upsilon_max: Some(0.2),
                tau_min: Some(-0.08),
                tau_max: Some(0.04),
                fraction_of_grid: 0.05,
            },
            AllowedRange {
                level: "95.45 %".into(),
                upsilon_min: Some(-0.2),
                upsilon_max: Some(0.3),
                tau_min: Some(-0.14),
                tau_max: Some(0.1),
                fraction_of_grid: 0.14,
            },
            AllowedRange {
                level: "99.73 %".into(),
                upsilon_min: Some(-0.3),
                upsilon_max: Some(0.42),
                tau_min: Some(-0.2),
                tau_max: Some(0.16),
                fraction_of_grid: 0.27,
            },
        ],
        upsilon_interval_at_tau0: vec![
            UpsilonInterval {
                level: "68.27 %".into(),
                lower: Some(-0.04),
                upper: Some(0.14),
            },
            UpsilonInterval {
                level: "95.45 %".into(),
                lower: Some(-0.13),
                upper: Some(0.23),
            },
            UpsilonInterval {
                level: "99.73 %".into(),
                lower: None,
                upper: Some(0.32),
            },
        ],
        standard_gravity: StandardGravityStatus {
            allowed_cl95: Some(true),
            minus_two_ln_l: Some(3.6),
            delta_chi2: Some(0.35),
        },
        consistency: Consistency {
            consistent,
            p_catalogue: if consistent { 0.41 } else { 2.3e-6 },
            n_informative: 9,
            worst_objects: vec![WorstObject {
                id: NASTY_ID.into(),
                class: "hburning".into(),
                probability: 2.6e-7,
            }],
        },
        tensions: TensionTable {
            threshold_sigma: 3.0,
            rows: vec![TensionRow {
                id: NASTY_ID.into(),
                class: "hburning".into(),
                mass_text: "0.052 ± 0.002 M☉".into(),
                sigma_standard_gravity: 5.1,
                sigma_best_fit: Some(4.9),
                two_sided: false,
            }],
        },
        drivers: vec![
            DriverRow {
                rank: 1,
                id: "demo-wd-3".into(),
                class: "white_dwarf".into(),
                shift: Shift::EndOpensOrCloses,
                test: "mass–radius (two-sided)".into(),
                sigma_best_fit: Some(1.2),
            },
            DriverRow {
                rank: 2,
                id: "demo|pipe".into(),
                class: "brown_dwarf".into(),
                shift: Shift::Finite(0.013),
                test: "mass bound (one-sided)".into(),
                sigma_best_fit: None,
            },
        ],
        side_by_side: None,
        class_contributions: vec![
            ClassContribution {
                class: "hburning".into(),
                n_objects: 5,
                n_informative: 4,
                minus_two_ln_l_at_best_fit: 1.5,
                summary: "constrains τ; almost blind to ϒ (synthetic)".into(),
            },
            ClassContribution {
                class: "white_dwarf".into(),
                n_objects: 6,
                n_informative: 5,
                minus_two_ln_l_at_best_fit: 1.75,
                summary: "carries most of the information on ϒ (synthetic)".into(),
            },
        ],
        reduction_error: Some(ReductionError {
            terms: vec![TermTabulation {
                bound: "MMHB".into(),
                likelihood: "product".into(),
                data_nodes: 257,
                table_nodes: Some(257),
                check_points: 300,
                max_abs_delta_chi2: 6.5e-8,
            }],
        }),
        warnings: vec![
            Warning::Crowding {
                n_hburning: 41,
                n_brown_dwarf: 37,
            },
            Warning::PostNewtonianWhiteDwarf {
                ids: vec!["demo-wd-3".into()],
                compactness_threshold: 5e-4,
            },
            Warning::BelowRelativisticExistenceBound {
                upsilon_bound: -4.0 / 9.0,
                source: "Babichev et al. 2016".into(),
            },
        ],
        cautions: vec!["Synthetic input: every number here is invented.".into()],
        since_previous: None,
    }
}

fn keep_copy(r: &RenderedReport, sub: &str) {
    if let Ok(dir) = std::env::var("DWARFBOUND_REPORT_DEMO_DIR") {
        let dir = Path::new(&dir).join(sub);
        std::fs::create_dir_all(&dir).unwrap();
        std::fs::write(dir.join("report.html"), &r.html).unwrap();
        std::fs::write(dir.join("report.md"), &r.markdown).unwrap();
        std::fs::write(dir.join("allowed.svg"), &r.allowed_svg).unwrap();
        std::fs::write(dir.join("allowed.png"), &r.allowed_png).unwrap();
        std::fs::write(dir.join("bounds.svg"), &r.bounds_svg).unwrap();
        std::fs::write(dir.join("bounds.png"), &r.bounds_png).unwrap();
    }
}

/// Tags open and close in order (self-closing tags count as both); enough to catch truncation or
/// a broken writer, not a full XML parser.
fn tags_balanced(xml: &str) -> bool {
    let mut stack: Vec<String> = Vec::new();
    let mut rest = xml;
    while let Some(start) = rest.find('<') {
        let Some(end) = rest[start..].find('>') else {
            return false;
        };
        let tag = &rest[start + 1..start + end];
        rest = &rest[start + end + 1..];
        if tag.starts_with('?') || tag.starts_with('!') {
            continue;
        }
        if let Some(name) = tag.strip_prefix('/') {
            if stack.pop().as_deref() != Some(name.trim()) {
                return false;
            }
        } else if !tag.ends_with('/') {
            let name = tag.split_whitespace().next().unwrap_or("").to_string();
            stack.push(name);
        }
    }
    stack.is_empty()
}

/// The PNG file signature (PNG specification, ISO/IEC 15948, section 5.2).
const PNG_SIGNATURE: &[u8] = b"\x89PNG\r\n\x1a\n";

#[test]
fn writes_every_file_well_formed() {
    let dir = tempfile::tempdir().unwrap();
    let (input, map, curves) = (synthetic_input(true), synthetic_map(), synthetic_curves());
    write_report(dir.path(), &input, &map, &curves).unwrap();
    for name in REPORT_FILES {
        let p = dir.path().join(name);
        assert!(p.is_file(), "{name} missing");
        assert!(std::fs::metadata(&p).unwrap().len() > 1000, "{name} tiny");
    }
    for name in ["allowed.svg", "bounds.svg"] {
        let svg = std::fs::read_to_string(dir.path().join(name)).unwrap();
        assert!(svg.starts_with("<svg"), "{name} does not start with <svg");
        assert!(svg.trim_end().ends_with("</svg>"), "{name} not closed");
        assert!(tags_balanced(&svg), "{name} has unbalanced tags");
        assert!(!svg.contains("NaN"), "{name} holds NaN");
        // The axis labels with units are present.
        assert!(svg.contains("ϒ (dimensionless)"));
    }
    let allowed_svg = std::fs::read_to_string(dir.path().join("allowed.svg")).unwrap();
    assert!(allowed_svg.contains("τ (anisotropy strength, quadratic in density)"));
    assert!(allowed_svg.contains("standard gravity"));
    let bounds_svg = std::fs::read_to_string(dir.path().join("bounds.svg")).unwrap();
    assert!(bounds_svg.contains("MMHB (M☉)"));
    assert!(bounds_svg.contains("Chandrasekhar mass (M☉)"));
    for name in ["allowed.png", "bounds.png"] {
        let png = std::fs::read(dir.path().join(name)).unwrap();
        assert!(png.starts_with(PNG_SIGNATURE), "{name} is not a PNG");
    }
    let html = std::fs::read_to_string(dir.path().join("report.html")).unwrap();
    let body = html
        .split_once("<body>")
        .and_then(|(_, rest)| rest.split_once("</body>"))
        .map(|(body, _)| body)
        .expect("report.html has a body");
    assert!(tags_balanced(body), "report.html body has unbalanced tags");
}

#[test]
fn html_is_self_contained() {
    let r = render_report(
        &synthetic_input(true),
        &synthetic_map(),
        &synthetic_curves(),
    )
    .unwrap();
    keep_copy(&r, "consistent");
    let lower = r.html.to_lowercase();
    for bad in [
        "src=\"http",
        "src='http",
        "href=\"http",
        "href='http",
        "<script",
        "<link",
        "<img",
        "<iframe",
        "url(",
        "@import",
    ] {
        assert!(!lower.contains(bad), "report.html contains {bad}");
    }
    // Stronger: with this input, no URL at all (the inline SVG drops its namespace attribute).
    assert!(!lower.contains("http://") && !lower.contains("https://"));
    assert_eq!(lower.matches("<svg").count(), 2);
}

#[test]
fn user_text_is_escaped() {
    let r = render_report(
        &synthetic_input(false),
        &synthetic_map(),
        &synthetic_curves(),
    )
    .unwrap();
    keep_copy(&r, "inconsistent");
    assert!(!r.html.contains(NASTY_ID));
    assert!(r.html.contains("&lt;b&gt;x&amp;y&lt;/b&gt;"));
    assert!(!r.html.contains("<script>alert"));
    assert!(!r.markdown.contains(NASTY_ID));
    assert!(r.markdown.contains("\\<b\\>x\\&y\\</b\\>"));
    assert!(r.markdown.contains("demo\\|pipe"));
    // The inconsistent verdict is stated plainly in both and names the object.
    assert!(r
        .html
        .contains("No grid point is consistent with the data at 95.45 %"));
    assert!(r
        .markdown
        .contains("No grid point is consistent with the data at 95.45 %"));
    assert!(r.html.contains("role=\"alert\""));
}

#[test]
fn both_formats_carry_the_required_content() {
    let r = render_report(
        &synthetic_input(true),
        &synthetic_map(),
        &synthetic_curves(),
    )
    .unwrap();
    for (name, text) in [("html", &r.html), ("md", &r.markdown)] {
        for needle in [
            "Summary",
            "Best fit",
            "ϒ at τ = 0",
            "Standard gravity (ϒ = τ = 0)",
            "open",
            "Tensions with standard gravity",
            "Drivers",
            "What each class constrains",
            "Model and assumptions",
            "SHA-256",
            "Polytropic and analytic models are idealised; constraints depend on the stated model assumptions",
            "Wilks",
            "Newtonian order",
            "Calibration",
            "Babichev et al. 2016",
            "6.5e-8",
        ] {
            assert!(text.contains(needle), "report.{name} lacks {needle:?}");
        }
        assert_eq!(text.matches(VOLATILE_MARKER).count(), 1, "report.{name}");
        assert!(!text.contains("NaN"));
    }
}

#[test]
fn bytes_are_deterministic() {
    let a = render_report(
        &synthetic_input(true),
        &synthetic_map(),
        &synthetic_curves(),
    )
    .unwrap();
    let b = render_report(
        &synthetic_input(true),
        &synthetic_map(),
        &synthetic_curves(),
    )
    .unwrap();
    assert_eq!(a, b);
    // Only the marked line changes with the generation time.
    let mut later = synthetic_input(true);
    later.generated_at = "2001-02-03T04:05:06Z".into();
    let c = render_report(&later, &synthetic_map(), &synthetic_curves()).unwrap();
    assert_ne!(a.html, c.html);
    assert_eq!(strip_volatile(&a.html), strip_volatile(&c.html));
    assert_eq!(strip_volatile(&a.markdown), strip_volatile(&c.markdown));
}

#[test]
fn degenerate_grids_still_render() {
    // One τ row only, and an all-missing map: drawn, not a panic or an empty file.
    let mut map = synthetic_map();
    let n = map.upsilon.len();
    map.tau = vec![0.0];
    map.delta_chi2.truncate(n);
    for c in &mut map.class_outlines {
        c.delta_chi2.truncate(n);
    }
    assert!(render_allowed_svg(&map).unwrap().len() > 1000);
    keep_copy_file("one-row-allowed.png", &render_allowed_png(&map).unwrap());
    let mut empty = synthetic_map();
    empty.delta_chi2.iter_mut().for_each(|v| *v = None);
    assert!(render_allowed_png(&empty)
        .unwrap()
        .starts_with(PNG_SIGNATURE));
    let curves = BoundsCurves {
        upsilon: vec![0.0],
        series: vec![],
    };
    assert!(render_bounds_svg(&curves).unwrap().starts_with("<svg"));
}

#[test]
fn invalid_input_is_a_typed_error() {
    let mut map = synthetic_map();
    map.delta_chi2[3] = Some(f64::NAN);
    assert!(matches!(
        render_allowed_svg(&map),
        Err(ReportError::InvalidInput(_))
    ));
    let mut map = synthetic_map();
    map.delta_chi2.pop();
    assert!(matches!(
        render_allowed_svg(&map),
        Err(ReportError::InvalidInput(_))
    ));
}

/// What a headless Chromium run of one page showed.
struct ChromiumRun {
    ok: bool,
    stderr: String,
    netlog: Option<serde_json::Value>,
}

/// Runs headless Chromium on `page` with the usual screenshot flags (no sandbox, no GPU, no
/// background networking, a fresh profile) and `--log-level=0`, not 3: at level 3 Chromium drops
/// the INFO-level `CONSOLE` lines, so console errors would pass unseen. A network log records
/// every request.
fn run_chromium(chromium: &str, page: &Path, shot: &Path) -> ChromiumRun {
    let work = tempfile::tempdir().unwrap();
    let netlog = work.path().join("netlog.json");
    let out = Command::new(chromium)
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-quic",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--log-level=0",
            "--window-size=1200,900",
            "--enable-logging=stderr",
            "--v=0",
        ])
        .arg(format!(
            "--user-data-dir={}",
            work.path().join("profile").display()
        ))
        .arg(format!("--log-net-log={}", netlog.display()))
        .arg(format!("--screenshot={}", shot.display()))
        .arg(format!("file://{}", page.display()))
        .output()
        .expect("chromium runs");
    ChromiumRun {
        ok: out.status.success(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
        netlog: std::fs::read(&netlog)
            .ok()
            .and_then(|b| serde_json::from_slice(&b).ok()),
    }
}

/// Problems a page caused: console messages (errors, uncaught exceptions, blocked loads) and
/// network requests the page itself started. Chromium's own background requests carry the
/// initiator "not an origin" in the network log and are not the page's doing.
fn page_problems(run: &ChromiumRun) -> Vec<String> {
    let mut found: Vec<String> = run
        .stderr
        .lines()
        .filter(|l| {
            l.contains(":CONSOLE")
                || l.contains("Uncaught")
                || l.contains("http://")
                || l.contains("https://")
        })
        .map(|l| format!("stderr: {l}"))
        .collect();
    let Some(log) = &run.netlog else {
        found.push("no readable network log".into());
        return found;
    };
    let start_job = log["constants"]["logEventTypes"]["URL_REQUEST_START_JOB"].as_u64();
    for e in log["events"].as_array().into_iter().flatten() {
        if e["type"].as_u64() != start_job {
            continue;
        }
        // Only the phase that carries the URL (the closing phase has no parameters).
        let Some(url) = e["params"]["url"].as_str() else {
            continue;
        };
        let initiator = e["params"]["initiator"].as_str().unwrap_or("");
        if !url.starts_with("file:") && initiator != "not an origin" {
            found.push(format!("request from the page: {url}"));
        }
    }
    found
}

/// Headless Chromium opens the page: a non-trivial screenshot, no console message, no request
/// started by the page. A control page with a script error and an external image proves the
/// checks can fail. Skips, saying so, when Chromium is absent.
#[test]
fn chromium_opens_the_report_cleanly() {
    let Some(chromium) = ["chromium", "chromium-browser"].into_iter().find(|c| {
        Command::new(c)
            .arg("--version")
            .output()
            .is_ok_and(|o| o.status.success())
    }) else {
        println!("skipped: chromium not installed");
        return;
    };
    let dir = tempfile::tempdir().unwrap();
    let (input, map, curves) = (synthetic_input(false), synthetic_map(), synthetic_curves());
    write_report(dir.path(), &input, &map, &curves).unwrap();
    let shot = dir.path().join("shot.png");
    let run = run_chromium(chromium, &dir.path().join("report.html"), &shot);
    assert!(run.ok, "chromium failed: {}", run.stderr);
    let size = std::fs::metadata(&shot).map(|m| m.len()).unwrap_or(0);
    assert!(size > 20_000, "screenshot only {size} bytes");
    let problems = page_problems(&run);
    assert!(problems.is_empty(), "report.html: {problems:#?}");

    // Control: the same checks catch a console error and an external request.
    let bad = dir.path().join("control.html");
    std::fs::write(
        &bad,
        "<!DOCTYPE html><html><body><p>control</p>\
         <img src=\"http://example.invalid/x.png\">\
         <script>undefinedFunction();</script></body></html>",
    )
    .unwrap();
    let control = page_problems(&run_chromium(chromium, &bad, &dir.path().join("c.png")));
    assert!(
        control.iter().any(|p| p.contains("Uncaught")),
        "control: console error not seen: {control:#?}"
    );
    assert!(
        control
            .iter()
            .any(|p| p.starts_with("request from the page")),
        "control: external request not seen: {control:#?}"
    );

    if let Ok(keep) = std::env::var("DWARFBOUND_REPORT_DEMO_DIR") {
        std::fs::create_dir_all(&keep).unwrap();
        std::fs::copy(&shot, Path::new(&keep).join("screenshot.png")).unwrap();
    }
}

#[test]
fn best_fit_on_standard_gravity_keeps_both_markers() {
    // Best fit exactly at (0, 0): both markers drawn (the diamond grows around the disc).
    let mut map = synthetic_map();
    map.best_fit = (0.0, 0.0);
    let svg = render_allowed_svg(&map).unwrap();
    assert!(svg.contains("standard gravity"));
    keep_copy_file("coincident-allowed.png", &render_allowed_png(&map).unwrap());
}

fn keep_copy_file(name: &str, bytes: &[u8]) {
    if let Ok(dir) = std::env::var("DWARFBOUND_REPORT_DEMO_DIR") {
        std::fs::create_dir_all(&dir).unwrap();
        std::fs::write(Path::new(&dir).join(name), bytes).unwrap();
    }
}

#[test]
fn one_sided_flat_likelihood_renders() {
    // One-sided likelihoods are flat (Δχ² = 0) over wide regions and open at the grid edges;
    // the filled regions must follow the grid edge there.
    let mut map = synthetic_map();
    let (upsilon, tau) = (map.upsilon.clone(), map.tau.clone());
    map.delta_chi2 = tau
        .iter()
        .flat_map(|&t| {
            upsilon.iter().map(move |&u| {
                let a = ((t - 0.05) / 0.03).max(0.0);
                let b = ((-0.1 - u) / 0.06).max(0.0);
                Some(a * a + b * b)
            })
        })
        .collect();
    map.best_fit = (0.2, -0.1);
    let png = render_allowed_png(&map).unwrap();
    assert!(png.starts_with(PNG_SIGNATURE));
    keep_copy_file("flat-allowed.png", &png);
}

/// A small set of data figures: a parabolic profile Δχ² = (ϒ/0.05)² (closed-form crossings at
/// ±0.05, ±0.1, ±0.15), one white dwarf over a flat invented curve, one star against a bound.
fn small_data_figures() -> DataFigures {
    let upsilon: Vec<f64> = (0..=200).map(|k| -0.5 + 0.005 * k as f64).collect();
    let delta_chi2 = upsilon.iter().map(|u| (u / 0.05).powi(2)).collect();
    DataFigures {
        profile_tau0: Some(ProfileTau0 {
            upsilon,
            delta_chi2,
            thresholds: vec![("68.27 %".into(), 1.0), ("95.45 %".into(), 4.0)],
            intervals: vec![
                ("68.27 %".into(), Some(-0.05), Some(0.05)),
                ("95.45 %".into(), Some(-0.1), Some(0.1)),
            ],
            profile_over_tau: vec![(-0.5, 50.0), (0.0, 0.0), (0.5, 50.0)],
        }),
        wd_mass_radius: Some(WdMassRadius {
            points: vec![WdPoint {
                id: NASTY_ID.into(),
                mass_msun: 0.6,
                mass_err_msun: Some((0.02, 0.02)),
                radius_rsun: 0.013,
                radius_err_rsun: Some(0.0005),
                teff_k: Some(10000.0),
                sigma: Some(0.3),
                flag: WdPointFlag::InTest,
            }],
            curves: vec![ModelCurve {
                label: "Teff = 10 000 K".into(),
                runs: vec![vec![(0.4, 0.015), (0.8, 0.011)]],
                best_fit: false,
                colour_index: 0,
            }],
            n_colours: 1,
            best_fit: (0.05, -0.02),
            tension_sigma: 3.0,
            model_note: "invented".into(),
        }),
        mass_bounds: Some(MassBounds {
            panels: vec![MassPanel {
                title: "hydrogen-burning stars".into(),
                bound_label: "MMHB".into(),
                bound_standard_msun: 0.075,
                bound_best_msun: Some(0.074),
                floor_msun: 0.005,
                objects: vec![MassObject {
                    id: "S1".into(),
                    mass_msun: 0.08,
                    mass_err_msun: Some((0.002, 0.002)),
                    sigma: (Some(-1.0), Some(-1.2)),
                    mark: MassMark::InFit,
                }],
            }],
            tension_sigma: 3.0,
            best_fit: (0.05, -0.02),
        }),
    }
}

#[test]
fn data_figures_appear_in_both_pages_and_as_files() {
    let data = small_data_figures();
    let input = synthetic_input(true);
    let with = render_report_with(&input, &synthetic_map(), &synthetic_curves(), &data).unwrap();
    let stems: Vec<&str> = with.data_figures.iter().map(|f| f.0).collect();
    assert_eq!(stems, ["profile_tau0", "mass_bounds", "wd_mass_radius"]);
    for stem in &stems {
        assert!(with.html.contains(&format!("id=\"figure-{stem}\"")));
        assert!(with.markdown.contains(&format!("({stem}.png)")));
    }
    // The white dwarf's id reaches the hover title escaped, never as markup.
    assert!(with.html.contains("<title>&lt;b&gt;x&amp;y&lt;/b&gt;"));
    assert!(with.data_figures.iter().all(|f| tags_balanced(&f.1)));
    let without = render_report(&input, &synthetic_map(), &synthetic_curves()).unwrap();
    assert!(without.data_figures.is_empty());
    assert!(!without.html.contains("The data against the theory"));
    let dir = tempfile::tempdir().unwrap();
    write_report_with(
        dir.path(),
        &input,
        &synthetic_map(),
        &synthetic_curves(),
        &data,
    )
    .unwrap();
    for stem in &stems {
        for ext in ["svg", "png"] {
            assert!(dir.path().join(format!("{stem}.{ext}")).is_file());
        }
    }
    // A later report without those figures in the same folder removes them: a stale figure
    // would be read as this run's (common practice, no source).
    write_report_with(
        dir.path(),
        &input,
        &synthetic_map(),
        &synthetic_curves(),
        &dwarfbound::report::DataFigures::default(),
    )
    .unwrap();
    for stem in stems {
        for ext in ["svg", "png"] {
            assert!(
                !dir.path().join(format!("{stem}.{ext}")).exists(),
                "{stem}.{ext}"
            );
        }
    }
}

#[test]
fn one_and_two_sided_tensions_never_share_a_heading() {
    // Item 6 of the honest-inference issue: a mass-bound tension (one-sided) and a radius
    // tension (two-sided, signed) go under separate headings, each saying its sidedness, and
    // the readings beside the τ = 0 slice appear with their priors.
    let mut input = synthetic_input(true);
    input.tensions.rows.push(TensionRow {
        id: "wd-radius-1".into(),
        class: "white_dwarf (mass–radius test)".into(),
        mass_text: "0.6 ± 0.01 M☉; R = 0.0125 ± 0.0003 R☉".into(),
        sigma_standard_gravity: -4.2,
        sigma_best_fit: Some(-3.9),
        two_sided: true,
    });
    let iv = |lower, upper| {
        ["68.27 %", "95.45 %", "99.73 %"]
            .iter()
            .map(|l| UpsilonInterval {
                level: (*l).into(),
                lower,
                upper,
            })
            .collect::<Vec<_>>()
    };
    input.side_by_side = Some(SideBySide {
        rows: vec![
            IntervalRow {
                parameter: "ϒ".into(),
                method: "profile over τ".into(),
                intervals: iv(Some(-0.2), None),
            },
            IntervalRow {
                parameter: "τ".into(),
                method: "posterior, marginal (highest density)".into(),
                intervals: iv(Some(-0.05), Some(0.1)),
            },
        ],
        hpd_regions: vec![],
        prior: "Flat in ϒ on [-0.3, 0.6] and flat in τ on [-0.3, 0.3].".into(),
        formulas: vec![],
    });
    let r = render_report(&input, &synthetic_map(), &synthetic_curves()).unwrap();
    for (name, text) in [("html", &r.html), ("md", &r.markdown)] {
        let one = text.find("Mass bounds (one-sided tensions)");
        let two = text.find("White-dwarf mass–radius relation (two-sided, signed tensions)");
        assert!(
            one.is_some() && two.is_some(),
            "report.{name} lacks a heading"
        );
        let (one, two) = (one.unwrap(), two.unwrap());
        let mass_row = text.find("0.052 ± 0.002").unwrap();
        let radius_row = text.find("wd-radius-1").unwrap();
        assert!(
            one < mass_row && mass_row < two && two < radius_row,
            "report.{name}"
        );
        for needle in [
            "σ at ϒ = τ = 0 (one-sided)",
            "σ at ϒ = τ = 0 (two-sided, signed)",
            "test (sidedness)",
            "mass–radius (two-sided)",
            "read three ways",
            "profile over τ",
            "Flat in ϒ on",
            "How to read them",
        ] {
            assert!(text.contains(needle), "report.{name} lacks {needle:?}");
        }
    }
}
