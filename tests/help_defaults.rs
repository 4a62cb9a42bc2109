//! Help that teaches: every subcommand's `--help` ends with worked examples that parse and name
//! files that exist, and `dwarfbound defaults` prints a config that `run` accepts and that gives
//! `confront`'s result on the same files.

mod common;

use std::path::Path;

use clap::Parser;
use common::{bin, demo, path_str, root, text};
use dwarfbound::cli::Cli;

const SUBCOMMANDS: [&str; 6] = ["vet", "predict", "confront", "run", "merge", "defaults"];

/// The `dwarfbound …` lines of the "Examples" block closing a subcommand's help.
fn example_lines(help: &str) -> Vec<String> {
    let block = help
        .split("Examples")
        .nth(1)
        .unwrap_or_else(|| panic!("no Examples block in:\n{help}"));
    block
        .lines()
        .filter_map(|l| {
            let l = l.trim();
            let at = l.find("dwarfbound ")?;
            // Only command lines: they start with the command or a shell loop running it.
            (at == 0 || l.starts_with("for ")).then(|| {
                let cmd = &l[at..];
                cmd.split(';')
                    .next()
                    .unwrap_or(cmd)
                    .split(" >")
                    .next()
                    .unwrap()
                    .to_string()
            })
        })
        .collect()
}

/// Source: the brief of this feature (two or three worked examples on the demo files). Each
/// example must parse with the real argument parser, and every file it names must exist in
/// the repository (paths under `reports/` are outputs, `$i` and globs are shell).
#[test]
fn every_help_ends_with_examples_that_parse_on_existing_files() {
    for sub in SUBCOMMANDS {
        let o = bin(&[sub, "--help"], &root());
        assert_eq!(o.status.code(), Some(0), "{}", text(&o));
        let help = String::from_utf8_lossy(&o.stdout).to_string();
        let examples = example_lines(&help);
        assert!(
            (2..=4).contains(&examples.len()),
            "{sub}: {} examples:\n{help}",
            examples.len()
        );
        for ex in examples {
            let words: Vec<&str> = ex.split_whitespace().collect();
            if words.iter().any(|w| w.contains('*') || w.contains('$')) {
                continue;
            }
            Cli::try_parse_from(&words).unwrap_or_else(|e| panic!("{sub}: `{ex}`: {e}"));
            for w in &words {
                let looks_like_input = w.starts_with("catalogs-demo/");
                if looks_like_input {
                    assert!(root().join(w).exists(), "{sub}: `{ex}` names missing {w}");
                }
            }
        }
    }
}

/// Path of the newest run of a nightly output folder (its `latest`).
fn latest(output: &Path) -> std::path::PathBuf {
    std::fs::canonicalize(output.join("latest")).unwrap()
}

/// Acceptance: the TOML of `defaults`, with a `[[catalogue]]` list and an output folder added,
/// is a valid `run` config whose result equals `confront`'s on the same files (byte for byte
/// in objects.csv and grid.csv; summary.json equal but for the run-to-run difference). Source: the definition of the command.
#[test]
fn defaults_plus_catalogues_is_a_run_config_equal_to_confront() {
    let dir = tempfile::tempdir().unwrap();
    let o = bin(&["defaults"], dir.path());
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let defaults = String::from_utf8(o.stdout).unwrap();
    let files = ["vlm_stars.csv", "brown_dwarfs.csv", "white_dwarfs.csv"];
    let mut cfg = format!("output = \"nightly\"\n{defaults}\n");
    for f in files {
        cfg.push_str(&format!("[[catalogue]]\npath = \"{}\"\n", demo(f)));
    }
    let cfg_path = dir.path().join("run.toml");
    std::fs::write(&cfg_path, cfg).unwrap();
    let o = bin(&["run", path_str(&cfg_path)], dir.path());
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));

    let out = dir.path().join("confront");
    let mut args: Vec<String> = vec!["confront".into()];
    args.extend(files.map(demo));
    args.extend(["--out".into(), path_str(&out).into()]);
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    let o = bin(&args, dir.path());
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));

    let run_dir = latest(&dir.path().join("nightly"));
    // summary.json: equal except the run-to-run difference, which only `run` writes.
    let mut a = common::summary(&run_dir);
    let b = common::summary(&out);
    assert!(a
        .as_object_mut()
        .unwrap()
        .remove("since_previous")
        .is_some());
    assert_eq!(
        a, b,
        "summary.json differs between run (defaults) and confront"
    );
    for f in ["objects.csv", "grid.csv"] {
        let a = std::fs::read(run_dir.join(f)).unwrap();
        let b = std::fs::read(out.join(f)).unwrap();
        assert!(a == b, "{f} differs between run (defaults) and confront");
    }
}
