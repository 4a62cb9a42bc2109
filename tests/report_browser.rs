//! The demo report in a real browser, and every reference a reader can follow.
//!
//! - The committed demo report (`reports/demo/`, kept equal to what the README's first command
//!   writes by `.ci/run`) is opened in headless Chromium at 1400 px wide: a screenshot is taken,
//!   the rendered page holds every figure (the zoomed map included), and no console message
//!   appears (the page has no scripts, so any message is an error: a failed load, bad markup).
//! - Every `<a href>` and `src` of the page resolves inside the output folder (or is an anchor
//!   of the page itself), and every `docs/<file>.md` reference, with its `§` section or `#`
//!   anchor, names a file and a section anchor that exist in the repository.
//! - No file of `src/`, `README.md` or the generated report points at `bounds.md` or
//!   `structure.md` other than the repository's own `docs/` copies.
//!
//! Chromium is looked up as `$CHROMIUM`, then `chromium`, `chromium-browser`, `google-chrome`,
//! `chrome-headless-shell` on the PATH; without one the browser test says so and passes
//! (install: `apt-get install -y chromium`).

mod common;

use std::path::{Path, PathBuf};
use std::process::Command;

use common::root;

fn demo_dir() -> PathBuf {
    root().join("reports/demo")
}

fn chromium() -> Option<PathBuf> {
    if let Some(p) = std::env::var_os("CHROMIUM") {
        return Some(PathBuf::from(p));
    }
    let path = std::env::var_os("PATH")?;
    [
        "chromium",
        "chromium-browser",
        "google-chrome",
        "chrome-headless-shell",
    ]
    .iter()
    .flat_map(|name| std::env::split_paths(&path).map(move |d| d.join(name)))
    .find(|p| p.is_file())
}

/// Anchor prefix of a docs file's numbered sections (docs/README.md, "Reading a reference").
fn section_prefix(file: &str) -> Option<&'static str> {
    match file {
        "structure.md" => Some("s"),
        "bounds.md" => Some("b"),
        "white-dwarfs.md" => Some("w"),
        "rotation.md" => Some("r"),
        _ => None,
    }
}

/// Every `docs/<file>.md` reference in `text`, with its anchor when it names a section
/// (`§8.4` → `b8-4`, `#b8-4` → `b8-4`); problems are returned as messages.
fn check_docs_references(text: &str, origin: &str) -> (usize, Vec<String>) {
    let docs = root().join("docs");
    let mut problems = Vec::new();
    let mut count = 0;
    for (at, _) in text.match_indices("docs/") {
        let rest = &text[at + 5..];
        let name_len = rest
            .find(|c: char| !(c.is_ascii_lowercase() || c == '-' || c == '.' || c == '_'))
            .unwrap_or(rest.len());
        let name = rest[..name_len].trim_end_matches('.');
        if !name.ends_with(".md") {
            continue; // "docs/" alone, or a folder mention
        }
        count += 1;
        let path = docs.join(name);
        let Ok(body) = std::fs::read_to_string(&path) else {
            problems.push(format!("{origin}: docs/{name} does not exist"));
            continue;
        };
        let after = rest[name.len()..].trim_start_matches(['`', ')', ']', '*']);
        let anchor = if let Some(a) = after.strip_prefix('#') {
            Some(
                a.chars()
                    .take_while(|c| c.is_ascii_alphanumeric() || *c == '-')
                    .collect::<String>(),
            )
        } else {
            let after = after.trim_start_matches([',', ' ']);
            after.strip_prefix('§').map(|s| {
                let number: String = s
                    .trim_start()
                    .chars()
                    .take_while(|c| c.is_ascii_digit() || *c == '.')
                    .collect();
                let number = number.trim_end_matches('.').replace('.', "-");
                format!("{}{number}", section_prefix(name).unwrap_or("?"))
            })
        };
        if let Some(a) = anchor {
            if !body.contains(&format!("id=\"{a}\"")) {
                problems.push(format!("{origin}: docs/{name} has no anchor #{a}"));
            }
        }
    }
    (count, problems)
}

/// Values of `attr="…"` in an HTML text.
fn attribute_values<'a>(html: &'a str, attr: &str) -> Vec<&'a str> {
    let key = format!(" {attr}=\"");
    html.match_indices(&key)
        .filter_map(|(at, _)| {
            let rest = &html[at + key.len()..];
            rest.find('"').map(|end| &rest[..end])
        })
        .collect()
}

/// An `href`/`src` of the page in `dir` resolves: an anchor of the page, a `data:` URI, or a
/// file inside the output folder or the repository (with its anchor, for docs).
fn link_problem(target: &str, dir: &Path, html: &str) -> Option<String> {
    if target.starts_with("data:") {
        return None;
    }
    if let Some(id) = target.strip_prefix('#') {
        return (!html.contains(&format!("id=\"{id}\""))).then(|| format!("#{id}: no such id"));
    }
    if target.contains("://") {
        return Some(format!(
            "{target}: points outside the output folder and the repository"
        ));
    }
    let (file, _) = target.split_once('#').unwrap_or((target, ""));
    let resolved = dir.join(file);
    let canonical = std::fs::canonicalize(&resolved).ok()?;
    let inside = canonical.starts_with(std::fs::canonicalize(dir).ok()?)
        || canonical.starts_with(std::fs::canonicalize(root()).ok()?);
    (!inside)
        .then(|| format!("{target}: outside the output folder and the repository"))
        .or_else(|| (!canonical.exists()).then(|| format!("{target}: missing")))
}

/// Width and height of a PNG, from its IHDR chunk (PNG specification, ISO/IEC 15948 §11.2.2).
fn png_size(bytes: &[u8]) -> (u32, u32) {
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n", "not a PNG");
    let be =
        |at: usize| u32::from_be_bytes([bytes[at], bytes[at + 1], bytes[at + 2], bytes[at + 3]]);
    (be(16), be(20))
}

fn headless(browser: &Path, args: &[&str]) -> std::process::Output {
    Command::new(browser)
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--hide-scrollbars",
            "--enable-logging=stderr",
            "--v=0",
            "--window-size=1400,2400",
        ])
        .args(args)
        .output()
        .expect("run chromium")
}

/// Acceptance of the report issue: the demo report in headless Chromium at 1400 px.
#[test]
fn demo_report_in_chromium_shows_every_figure_without_console_errors() {
    let Some(browser) = chromium() else {
        eprintln!("SKIPPED: no Chromium found (set $CHROMIUM or install chromium)");
        return;
    };
    let dir = demo_dir();
    let page = dir.join("report.html");
    let url = format!("file://{}", page.display());
    let tmp = tempfile::tempdir().unwrap();
    let shot = tmp.path().join("report-1400.png");

    let o = headless(
        &browser,
        &[&format!("--screenshot={}", shot.display()), &url],
    );
    let log = String::from_utf8_lossy(&o.stderr).to_string();
    assert!(shot.exists(), "no screenshot:\n{log}");
    assert_eq!(png_size(&std::fs::read(&shot).unwrap()).0, 1400);
    let console: Vec<&str> = log.lines().filter(|l| l.contains(":CONSOLE")).collect();
    assert!(
        console.is_empty(),
        "console messages:\n{}",
        console.join("\n")
    );

    // The page as the browser built it: every figure present as inline SVG, the zoom included.
    let o = headless(&browser, &["--dump-dom", &url]);
    let dom = String::from_utf8_lossy(&o.stdout).to_string();
    for title in [
        "Region of (ϒ, τ) allowed by the catalogues",
        "Zoom on the allowed region (grid resolution)",
        "Predicted bounds against ϒ",
    ] {
        assert!(
            dom.contains(title),
            "the rendered page lacks the figure `{title}`"
        );
    }
    assert!(
        dom.matches("<svg").count() >= 6,
        "fewer figures than expected"
    );
    let log = String::from_utf8_lossy(&o.stderr).to_string();
    let console: Vec<&str> = log.lines().filter(|l| l.contains(":CONSOLE")).collect();
    assert!(
        console.is_empty(),
        "console messages:\n{}",
        console.join("\n")
    );
}

/// Every link and docs reference of the generated report resolves.
#[test]
fn every_link_and_docs_reference_of_the_report_resolves() {
    let dir = demo_dir();
    let html = std::fs::read_to_string(dir.join("report.html")).unwrap();
    let mut problems = Vec::new();
    for attr in ["href", "src"] {
        for target in attribute_values(&html, attr) {
            if let Some(p) = link_problem(target, &dir, &html) {
                problems.push(format!("report.html {attr}: {p}"));
            }
        }
    }
    let mut total = 0;
    for name in ["report.html", "report.md"] {
        let text = std::fs::read_to_string(dir.join(name)).unwrap();
        let (n, p) = check_docs_references(&text, name);
        total += n;
        problems.extend(p);
    }
    // Markdown images and links: `](target)`.
    let md = std::fs::read_to_string(dir.join("report.md")).unwrap();
    for (at, _) in md.match_indices("](") {
        let rest = &md[at + 2..];
        let target = &rest[..rest.find(')').unwrap_or(0)];
        if let Some(p) = link_problem(target, &dir, &html) {
            problems.push(format!("report.md link: {p}"));
        }
    }
    assert!(total > 0, "the report cites no docs section");
    assert!(problems.is_empty(), "{}", problems.join("\n"));
}

/// Files of `dir` (recursively) whose name ends with one of `exts`.
fn files_under(dir: &Path, exts: &[&str], out: &mut Vec<PathBuf>) {
    for e in std::fs::read_dir(dir).unwrap().flatten() {
        let p = e.path();
        if p.is_dir() {
            files_under(&p, exts, out);
        } else if exts.iter().any(|x| p.to_string_lossy().ends_with(x)) {
            out.push(p);
        }
    }
}

/// Source: the report issue's acceptance (nothing points outside the repository). Every
/// mention of the notes in the code, the README and a generated report is of the `docs/` copy,
/// and every docs reference with a section names an anchor that exists.
#[test]
fn notes_are_cited_only_as_the_repository_docs() {
    let mut files = Vec::new();
    files_under(&root().join("src"), &[".rs"], &mut files);
    files.push(root().join("README.md"));
    files.push(demo_dir().join("report.html"));
    files.push(demo_dir().join("report.md"));
    let mut problems = Vec::new();
    for f in &files {
        let text = std::fs::read_to_string(f).unwrap();
        let origin = f.strip_prefix(root()).unwrap_or(f).display().to_string();
        for note in ["bounds.md", "structure.md"] {
            for (at, _) in text.match_indices(note) {
                if !text[..at].ends_with("docs/") {
                    let line = text[..at].matches('\n').count() + 1;
                    problems.push(format!("{origin}:{line}: `{note}` without docs/"));
                }
            }
        }
        problems.extend(check_docs_references(&text, &origin).1);
    }
    assert!(problems.is_empty(), "{}", problems.join("\n"));
}

/// The reference checker itself: a real section passes, a missing section or file is named
/// (anchors as docs/README.md, "Reading a reference", defines them).
#[test]
fn the_reference_checker_finds_broken_references() {
    let (n, p) = check_docs_references("see docs/bounds.md §8.4 and `docs/structure.md` §1.4", "t");
    assert_eq!((n, p.len()), (2, 0), "{p:?}");
    let (_, p) = check_docs_references("see docs/bounds.md §99.9", "t");
    assert_eq!(p.len(), 1);
    let (_, p) = check_docs_references("see docs/missing-notes.md", "t");
    assert_eq!(p.len(), 1);
    let (_, p) = check_docs_references("see docs/white-dwarfs.md#w99", "t");
    assert_eq!(p.len(), 1);
}
