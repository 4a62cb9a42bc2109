//! The hostile-input corpus (issue 13): every file of `tests/hostile/files/`, written by the
//! committed generator `tools/make_hostile_corpus.py`, is run through the binary as its entry
//! in `tests/hostile/manifest.toml` says, and must meet the outcome recorded there. On every
//! entry: no hang (a 10 s guard kills the process; this is a hang detector, not a speed
//! check), never exit 1 (a bug) or an abort (134, or death by a signal), never a panic message
//! or backtrace. The expectations come from the requirements (source: issue 13 and the
//! README's exit-code contract), not from recorded output.

use std::io::Read;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

#[derive(serde::Deserialize)]
struct Manifest {
    case: Vec<Case>,
}

#[derive(serde::Deserialize)]
struct Case {
    name: String,
    item: String,
    args: Vec<String>,
    exit: i32,
    rows_in: Option<usize>,
    quarantined: Option<usize>,
    #[serde(default)]
    reasons: Vec<String>,
    #[serde(default)]
    message: Vec<String>,
    #[serde(default)]
    #[allow(dead_code)]
    note: String,
}

/// Hang guard per command.
const TIMEOUT: Duration = Duration::from_secs(10);

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Runs the binary; `None` if it had to be killed after [`TIMEOUT`].
fn run(args: &[String]) -> Option<(Option<i32>, String)> {
    let mut child = Command::new(env!("CARGO_BIN_EXE_dwarfbound"))
        .args(args)
        .current_dir(root())
        .env("RUST_BACKTRACE", "1")
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start dwarfbound");
    // Drain both pipes on threads so a chatty child never blocks on a full pipe.
    let mut out = child.stdout.take().unwrap();
    let mut err = child.stderr.take().unwrap();
    let t_out = std::thread::spawn(move || {
        let mut s = Vec::new();
        let _ = out.read_to_end(&mut s);
        s
    });
    let t_err = std::thread::spawn(move || {
        let mut s = Vec::new();
        let _ = err.read_to_end(&mut s);
        s
    });
    let start = Instant::now();
    let status = loop {
        if let Some(status) = child.try_wait().expect("wait") {
            break status;
        }
        if start.elapsed() > TIMEOUT {
            let _ = child.kill();
            let _ = child.wait();
            return None;
        }
        std::thread::sleep(Duration::from_millis(20));
    };
    let mut text = String::from_utf8_lossy(&t_out.join().unwrap()).into_owned();
    text.push_str(&String::from_utf8_lossy(&t_err.join().unwrap()));
    Some((status.code(), text))
}

/// Data rows of a CSV file written by dwarfbound (header excluded); 0 if absent.
fn csv_rows(path: &Path) -> Vec<csv::StringRecord> {
    let Ok(mut r) = csv::Reader::from_path(path) else {
        return Vec::new();
    };
    r.records()
        .map(|r| r.expect("dwarfbound's own CSV"))
        .collect()
}

#[test]
fn every_hostile_input_meets_its_manifest_entry() {
    let text = std::fs::read_to_string(root().join("tests/hostile/manifest.toml")).unwrap();
    let manifest: Manifest = toml::from_str(&text).unwrap();
    // Issue 13, "What to build" item 5: at least 60 hostile inputs.
    assert!(manifest.case.len() >= 60, "{} cases", manifest.case.len());
    let mut failures = Vec::new();
    for case in &manifest.case {
        let out = tempfile::tempdir().unwrap();
        let args: Vec<String> = case
            .args
            .iter()
            .map(|a| a.replace("{out}", &out.path().display().to_string()))
            .collect();
        let mut fail =
            |why: String| failures.push(format!("{} (item {}): {why}", case.name, case.item));
        let Some((code, output)) = run(&args) else {
            fail(format!("still running after {TIMEOUT:?}"));
            continue;
        };
        if output.contains("panicked") || output.contains("stack backtrace") {
            fail(format!("printed a panic: {output}"));
        }
        match code {
            None => fail(format!("killed by a signal: {output}")),
            Some(c) if c == 1 || c == 134 => fail(format!("exit {c}: {output}")),
            Some(c) if c != case.exit => {
                fail(format!("exit {c}, expected {}: {output}", case.exit))
            }
            _ => {}
        }
        for word in &case.message {
            if !output.contains(word.as_str()) {
                fail(format!("message lacks `{word}`: {output}"));
            }
        }
        if output
            .lines()
            .filter(|l| l.starts_with("dwarfbound:"))
            .count()
            > 1
            && case.exit == 2
        {
            fail(format!("more than one error line: {output}"));
        }
        let quarantine = csv_rows(&out.path().join("quarantine.csv"));
        let accepted = csv_rows(&out.path().join("accepted.csv"));
        if let Some(q) = case.quarantined {
            if quarantine.len() != q {
                fail(format!(
                    "{} rows quarantined, expected {q}",
                    quarantine.len()
                ));
            }
        }
        if let Some(n) = case.rows_in {
            // Rows in = accepted + quarantined, and the summary says so.
            if accepted.len() + quarantine.len() != n {
                fail(format!(
                    "{} accepted + {} quarantined, expected {n} rows in",
                    accepted.len(),
                    quarantine.len()
                ));
            }
            if !output.contains(&format!("{n} rows in")) {
                fail(format!("summary lacks `{n} rows in`: {output}"));
            }
        }
        for reason in &case.reasons {
            if !quarantine
                .iter()
                .any(|r| r.iter().any(|f| f.contains(reason.as_str())))
            {
                fail(format!("no quarantine reason contains `{reason}`"));
            }
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n\n"));
}
