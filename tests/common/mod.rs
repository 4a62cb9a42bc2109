//! What the end-to-end tests share: running the binary, the demo catalogues and fixtures, a
//! nightly config over the demo, and reading the written CSV and JSON files back.
//!
//! Each test file that runs the binary declares `mod common;` and uses what it needs, so the
//! helpers are written once and behave alike everywhere (the binary always runs with an
//! explicit working folder; output folders are passed as `--out`).
//!
//! ```ignore
//! mod common;
//! let out = tempfile::tempdir().unwrap();
//! let o = common::confront(&[&common::demo("brown_dwarfs.csv"), "--upsilon", "0"], out.path());
//! assert_eq!(o.status.code(), Some(0), "{}", common::text(&o));
//! let (header, rows) = common::read_csv(&out.path().join("objects.csv"));
//! ```

// Every test binary compiles this module but uses only part of it.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use dwarfbound::catalogue::table::{read_table, RawTable, ReadOptions};
use dwarfbound::catalogue::CatalogueError;

/// The repository root (the crate's manifest folder): relative demo and fixture paths in the
/// tests are relative to it.
pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Absolute path of a demo catalogue in `catalogs-demo/`, as a string for the command line.
pub fn demo(name: &str) -> String {
    root()
        .join("catalogs-demo")
        .join(name)
        .display()
        .to_string()
}

/// A file in a folder under `tests/fixtures/`, e.g. `fixture("vet", "good.csv")`.
pub fn fixture(folder: &str, name: &str) -> PathBuf {
    root().join("tests/fixtures").join(folder).join(name)
}

/// Reads a catalogue with the library's reader, choosing a table (FITS HDU, VOTable TABLE) by
/// name or index when asked.
pub fn read_with_table(path: &Path, table: Option<&str>) -> Result<RawTable, CatalogueError> {
    let opts = ReadOptions {
        table: table.map(str::to_string),
        ..Default::default()
    };
    read_table(path, &opts)
}

/// The binary, not yet run (for tests that need to kill it or set its environment).
pub fn command() -> Command {
    Command::new(env!("CARGO_BIN_EXE_dwarfbound"))
}

/// Runs the binary with `args` in the folder `cwd` and waits for it.
pub fn bin(args: &[&str], cwd: &Path) -> Output {
    command()
        .current_dir(cwd)
        .args(args)
        .output()
        .expect("run dwarfbound")
}

/// `dwarfbound confront ARGS --out OUT`, run from the repository root.
pub fn confront(args: &[&str], out: &Path) -> Output {
    let mut all = vec!["confront"];
    all.extend_from_slice(args);
    all.extend(["--out", path_str(out)]);
    bin(&all, &root())
}

/// Standard output then standard error, for assertion messages and text checks.
pub fn text(o: &Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

/// A path as a command-line argument (test paths are UTF-8).
pub fn path_str(path: &Path) -> &str {
    path.to_str().expect("UTF-8 test path")
}

/// `summary.json` of an output folder.
pub fn summary(out: &Path) -> serde_json::Value {
    serde_json::from_slice(&std::fs::read(out.join("summary.json")).unwrap()).unwrap()
}

/// Reads a CSV file into its header and rows of strings.
pub fn read_csv(path: &Path) -> (Vec<String>, Vec<Vec<String>>) {
    let mut r = csv::Reader::from_path(path).unwrap();
    let header = r.headers().unwrap().iter().map(String::from).collect();
    let rows = r
        .records()
        .map(|rec| rec.unwrap().iter().map(String::from).collect())
        .collect();
    (header, rows)
}

/// Index of the column `name` in a CSV header.
pub fn col(header: &[String], name: &str) -> usize {
    header
        .iter()
        .position(|h| h == name)
        .unwrap_or_else(|| panic!("no column `{name}` in {header:?}"))
}

/// The columns `names` of every row of an output folder's `objects.csv`, by object id (the id
/// column is `id`; ids are unique within these tests' catalogues).
pub fn object_columns(
    out: &Path,
    names: &[&str],
) -> std::collections::BTreeMap<String, Vec<String>> {
    let (h, rows) = read_csv(&out.join("objects.csv"));
    let idx: Vec<usize> = names.iter().map(|n| col(&h, n)).collect();
    let i_id = col(&h, "id");
    rows.iter()
        .map(|r| (r[i_id].clone(), idx.iter().map(|&i| r[i].clone()).collect()))
        .collect()
}

/// Writes a nightly config into `dir` over the three demo catalogues (plus `next_night.csv`
/// when asked; the file is then `next.toml`, else `nightly.toml`), on a small grid that keeps
/// the tests quick, with `extra` TOML appended.
pub fn config(dir: &Path, with_next_night: bool, extra: &str) -> PathBuf {
    let mut text = format!(
        "output = \"out\"\n\
         [[catalogue]]\npath = \"{}\"\n\
         [[catalogue]]\npath = \"{}\"\n\
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
    let name = if with_next_night {
        "next.toml"
    } else {
        "nightly.toml"
    };
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p
}

/// An invented object with a symmetric mass error, an age of 5 Gyr and nothing else measured:
/// the synthetic catalogues of the statistics tests (id `o<id>`, source row `id`).
pub fn measured_object(
    id: usize,
    class: dwarfbound::catalogue::ObjectClass,
    mass_msun: f64,
    sigma_msun: f64,
) -> dwarfbound::catalogue::CatalogueObject {
    use dwarfbound::catalogue::{CatalogueObject, MassLimit, ObjectDetails, OptF64};
    CatalogueObject {
        id: format!("o{id}").into(),
        class,
        mass_msun,
        mass_err_lo_msun: OptF64::some(sigma_msun),
        mass_err_hi_msun: OptF64::some(sigma_msun),
        mass_limit: MassLimit::None,
        mass_method: Default::default(),
        details: ObjectDetails {
            age_gyr: OptF64::some(5.0),
            ..Default::default()
        }
        .into(),
        source_file: "synthetic".into(),
        source_row: u32::try_from(id).expect("a test catalogue of fewer than 2^32 objects"),
    }
}
