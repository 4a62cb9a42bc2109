//! Broken FITS, VOTable and ECSV files: every one is an error naming the file, never a panic.
//!
//! The broken fixtures come from `tools/make_format_fixtures.py` (astropy 8.0.2 output, then cut
//! or edited); the truncation and corruption sweeps derive more from the good fixtures here.

mod common;

use std::path::{Path, PathBuf};

use common::read_with_table;
use dwarfbound::catalogue::CatalogueError;

/// A fixture of `tests/fixtures/formats/`.
fn fixture(name: &str) -> PathBuf {
    common::fixture("formats", name)
}

/// Reads a fixture that must fail; returns the message after checking it names the file.
fn error_of(name: &str, table: Option<&str>) -> String {
    let path = fixture(name);
    let err = read_with_table(&path, table).expect_err(name);
    let message = err.to_string();
    assert!(
        message.contains(&path.display().to_string()),
        "{name}: message does not name the file: {message}"
    );
    assert!(
        matches!(err, CatalogueError::Invalid { .. }),
        "{name}: {err:?}"
    );
    message
}

#[test]
fn truncated_fits_is_refused() {
    let m = error_of("broken/truncated.fits", None);
    assert!(m.contains("truncated"), "{m}");
}

#[test]
fn fits_with_a_bad_card_is_refused() {
    let m = error_of("broken/bad_card.fits", None);
    assert!(m.contains("NAXIS2") && m.contains("'twelve'"), "{m}");
}

#[test]
fn malformed_votable_is_refused() {
    error_of("broken/malformed.vot", None);
}

#[test]
fn ecsv_header_line_must_match_the_yaml() {
    let m = error_of("broken/wrong_header.ecsv", None);
    assert!(m.contains("column-name line") && m.contains("kind"), "{m}");
}

#[test]
fn unknown_tables_are_refused_with_what_exists() {
    let m = error_of("catalogue.fits", Some("NOPE"));
    assert!(m.contains("NOPE") && m.contains("CATALOGUE"), "{m}");
    let m = error_of("catalogue.fits", Some("0"));
    assert!(m.contains("not a binary table"), "{m}");
    let m = error_of("catalogue.fits", Some("7"));
    assert!(m.contains("no HDU number 7"), "{m}");
    let m = error_of("types_tabledata.vot", Some("nope"));
    assert!(
        m.contains("nope") && m.contains("types") && m.contains("second"),
        "{m}"
    );
    let m = error_of("types_tabledata.vot", Some("2"));
    assert!(m.contains("no TABLE number 2"), "{m}");
}

#[test]
fn not_the_announced_format_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    for name in ["x.fits", "x.vot", "x.ecsv"] {
        let path = dir.path().join(name);
        std::fs::write(&path, "id,mass\nA,1\n").unwrap();
        let err = read_with_table(&path, None).expect_err(name);
        assert!(err.to_string().contains(name), "{err}");
    }
    let path = dir.path().join("empty.fits");
    std::fs::write(&path, b"").unwrap();
    assert!(read_with_table(&path, None).is_err());
}

/// Truncates `name` at many lengths; each must read or fail cleanly (no panic), and lengths
/// that cut into the table's rows must fail.
fn truncation_sweep(name: &str, step: usize, must_fail_below: usize) {
    let bytes = std::fs::read(fixture(name)).unwrap();
    let dir = tempfile::tempdir().unwrap();
    let ext = Path::new(name).extension().unwrap().to_str().unwrap();
    let path = dir.path().join(format!("cut.{ext}"));
    let mut lengths: Vec<usize> = (0..bytes.len()).step_by(step).collect();
    lengths.extend([1, 79, 80, 2879, 2880, 2881, bytes.len() - 1]);
    for len in lengths.into_iter().filter(|&l| l < bytes.len()) {
        std::fs::write(&path, &bytes[..len]).unwrap();
        let result = read_with_table(&path, None);
        if len < must_fail_below {
            assert!(result.is_err(), "{name} cut at {len} bytes was accepted");
        }
    }
}

#[test]
fn truncated_fits_never_panics() {
    // catalogue.fits: primary header block, table header block, then 12 rows of data.
    let bytes = std::fs::read(fixture("catalogue.fits")).unwrap();
    let data_start = 2 * 2880;
    let row_bytes = 5 + 11 + 5 * 8;
    truncation_sweep("catalogue.fits", 37, data_start + 12 * row_bytes);
    assert!(bytes.len() >= data_start + 12 * row_bytes);
    truncation_sweep("types.fits", 53, 2 * 2880);
}

#[test]
fn truncated_votable_and_ecsv_never_panic() {
    truncation_sweep("catalogue_tabledata.vot", 7, 0);
    truncation_sweep("catalogue_binary2.vot", 7, 0);
    truncation_sweep("types_binary.vot", 11, 0);
    truncation_sweep("catalogue.ecsv", 3, 0);
}

/// Deterministic pseudo-random corruption (64-bit LCG, Knuth's MMIX constants).
fn corrupt(bytes: &[u8], seed: u64, flips: usize) -> Vec<u8> {
    let mut state = seed;
    let mut out = bytes.to_vec();
    for _ in 0..flips {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        let at = (state >> 33) as usize % out.len();
        out[at] = (state >> 17) as u8;
    }
    out
}

#[test]
fn corrupted_files_never_panic() {
    let dir = tempfile::tempdir().unwrap();
    for name in [
        "catalogue.fits",
        "types.fits",
        "catalogue_tabledata.vot",
        "types_binary2.vot",
        "types.ecsv",
    ] {
        let bytes = std::fs::read(fixture(name)).unwrap();
        let ext = Path::new(name).extension().unwrap().to_str().unwrap();
        let path = dir.path().join(format!("bad.{ext}"));
        for seed in 0..150 {
            std::fs::write(&path, corrupt(&bytes, seed, 1 + seed as usize % 8)).unwrap();
            // Either outcome is fine; reaching the next iteration means no panic.
            let _ = read_with_table(&path, None);
        }
    }
}
