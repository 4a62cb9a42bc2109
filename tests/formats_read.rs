//! FITS, VOTable and ECSV readers against astropy, the outside reference.
//!
//! `tools/make_format_fixtures.py` has astropy 8.0.2 write the fixtures of
//! `tests/fixtures/formats/` and record in `expected.json` every column name, unit string (as
//! astropy wrote it) and cell, checked there against astropy's own reading of each file. These
//! tests read the same files with our readers and compare cell by cell. Broken variants must
//! give an error that names the file, never a panic.

mod common;

use dwarfbound::catalogue::table::{Cell, RawTable};
use dwarfbound::catalogue::CatalogueError;
use serde_json::Value;

/// Reads a fixture of `tests/fixtures/formats/`, from the table asked for.
fn read(name: &str, table: Option<&str>) -> Result<RawTable, CatalogueError> {
    common::read_with_table(&common::fixture("formats", name), table)
}

fn expected() -> Value {
    let text = std::fs::read_to_string(common::fixture("formats", "expected.json"))
        .expect("expected.json");
    serde_json::from_str(&text).expect("expected.json parses")
}

/// Whether one cell matches astropy's expectation (see the script's docstring for the encoding).
fn cell_matches(expected: &Value, got: &Cell) -> bool {
    match (expected, got) {
        (Value::Null, Cell::Missing) => true,
        (Value::Number(n), Cell::Number(x)) => n.as_f64() == Some(*x),
        (Value::Bool(b), Cell::Text(t)) => t == &b.to_string(),
        (Value::String(s), Cell::Number(x)) => s == "NaN" && x.is_nan(),
        (Value::String(s), Cell::Text(t)) => s == t,
        _ => false,
    }
}

/// Compares one file (`name`, optionally `#table`) with its expectation.
fn check_file(key: &str, exp: &Value) {
    let file = key.split('#').next().unwrap();
    let table = exp["table"].as_str();
    let got = read(file, table).unwrap_or_else(|e| panic!("{key}: {e}"));
    let columns = exp["columns"].as_array().unwrap();
    let names: Vec<&str> = got.columns.iter().map(|c| c.name.as_str()).collect();
    let expected_names: Vec<&str> = columns
        .iter()
        .map(|c| c["name"].as_str().unwrap())
        .collect();
    assert_eq!(names, expected_names, "{key}: column names");
    for (meta, c) in got.columns.iter().zip(columns) {
        assert_eq!(
            meta.unit.as_deref(),
            c["unit"].as_str(),
            "{key}: unit of {}",
            meta.name
        );
        assert_eq!(
            meta.ucd.as_deref(),
            c["ucd"].as_str(),
            "{key}: ucd of {}",
            meta.name
        );
    }
    let rows = exp["rows"].as_array().unwrap();
    assert_eq!(got.rows.len(), rows.len(), "{key}: row count");
    for (i, (row, exp_row)) in got.rows.iter().zip(rows).enumerate() {
        assert_eq!(
            row.row_number,
            i + 1,
            "{key}: row numbers are 1-based and in file order"
        );
        for ((cell, e), name) in row
            .cells
            .iter()
            .zip(exp_row.as_array().unwrap())
            .zip(&names)
        {
            assert!(
                cell_matches(e, cell),
                "{key}: row {} column {name}: astropy wrote {e}, we read {cell:?}",
                i + 1
            );
        }
    }
    assert!(got.malformed.is_empty(), "{key}: {:?}", got.malformed);
}

fn check_all_with_prefix(prefix: &str) {
    let exp = expected();
    assert_eq!(exp["astropy_version"], "8.0.2");
    let files = exp["files"].as_object().unwrap();
    let mut n = 0;
    for (key, e) in files.iter().filter(|(k, _)| k.starts_with(prefix)) {
        check_file(key, e);
        n += 1;
    }
    assert!(n > 0, "no fixture starts with {prefix}");
}

#[test]
fn catalogue_fits_matches_astropy() {
    check_all_with_prefix("catalogue.fits");
}

#[test]
fn types_fits_matches_astropy() {
    // Includes the second HDU: unsigned integers through TZERO, TSCAL/TZERO scaling, TNULL.
    check_all_with_prefix("types.fits");
}

#[test]
fn catalogue_ecsv_matches_astropy() {
    check_all_with_prefix("catalogue.ecsv");
}

#[test]
fn types_ecsv_matches_astropy_space_and_comma() {
    check_all_with_prefix("types.ecsv");
    check_all_with_prefix("types_comma.ecsv");
}

#[test]
fn catalogue_votables_match_astropy() {
    // unit and ucd attributes as written; Jupiter masses come as astropy's `1.8981246e+27kg`.
    check_all_with_prefix("catalogue_tabledata.vot");
    check_all_with_prefix("catalogue_binary2.vot");
}

#[test]
fn types_votables_match_astropy_all_serialisations() {
    // TABLEDATA, BINARY2 (null flags) and BINARY (VALUES null); `#second` is the second TABLE.
    check_all_with_prefix("types_tabledata.vot");
    check_all_with_prefix("types_binary2.vot");
    check_all_with_prefix("types_binary.vot");
}

/// Cells of the named column, as numbers (`None` for missing); panics on text.
fn numbers(t: &RawTable, column: &str) -> Vec<Option<f64>> {
    let j = t.columns.iter().position(|c| c.name == column).unwrap();
    t.rows
        .iter()
        .map(|r| match &r.cells[j] {
            Cell::Missing => None,
            Cell::Number(x) => Some(*x),
            other => panic!("{column}: not a number: {other:?}"),
        })
        .collect()
}

#[test]
fn the_catalogue_reads_alike_in_every_format() {
    // Same invented catalogue written by astropy 8.0.2 as FITS, VOTable (two serialisations)
    // and ECSV: same columns, same text cells, nulls in the same places, same numbers. FITS
    // holds masses in kg (it cannot express Jupiter masses); astropy's factor is in the
    // VOTable unit string `1.8981246e+27kg` (8 significant digits, hence the tolerance).
    let fits = read("catalogue.fits", None).unwrap();
    let others = [
        read("catalogue_tabledata.vot", None).unwrap(),
        read("catalogue_binary2.vot", Some("catalogue")).unwrap(),
        read("catalogue.ecsv", None).unwrap(),
    ];
    let names = |t: &RawTable| t.columns.iter().map(|c| c.name.clone()).collect::<Vec<_>>();
    for t in &others {
        assert_eq!(names(t), names(&fits));
        assert_eq!(t.rows.len(), 12);
        for (a, b) in t.rows.iter().zip(&fits.rows) {
            for j in 0..2 {
                assert_eq!(a.cells[j], b.cells[j], "id/class row {}", a.row_number);
            }
        }
        for column in ["radius", "age"] {
            assert_eq!(numbers(t, column), numbers(&fits, column), "{column}");
        }
        let jupiter_kg: f64 = 1.8981246e27;
        for column in ["mass", "mass_err_lo", "mass_err_hi"] {
            for (x, y) in numbers(t, column).iter().zip(numbers(&fits, column)) {
                match (x, y) {
                    (None, None) => {}
                    (Some(m_jup), Some(kg)) => {
                        assert!((m_jup * jupiter_kg / kg - 1.0).abs() < 1e-8, "{column}")
                    }
                    _ => panic!("{column}: nulls differ"),
                }
            }
        }
    }
    // The nulls the script put in: mass_err_hi row 7, radius rows 4 and 10, age row 11.
    let missing: Vec<(usize, usize)> = fits
        .rows
        .iter()
        .flat_map(|r| {
            r.cells
                .iter()
                .enumerate()
                .filter(|(_, c)| **c == Cell::Missing)
                .map(move |(j, _)| (r.row_number, j))
        })
        .collect();
    assert_eq!(missing, [(4, 5), (7, 4), (10, 5), (11, 6)]);
}

#[test]
fn units_are_passed_through_as_written() {
    // Unit strings are the files' own (FITS TUNIT, VOTable unit, ECSV unit); parsing them is
    // the unit parser's job. astropy 8.0.2 spells Jupiter masses differently per format.
    let unit = |file: &str, col: &str| {
        let t = read(file, None).unwrap();
        t.columns.into_iter().find(|c| c.name == col).unwrap().unit
    };
    assert_eq!(unit("catalogue.fits", "mass").as_deref(), Some("kg"));
    assert_eq!(
        unit("catalogue_tabledata.vot", "mass").as_deref(),
        Some("1.8981246e+27kg")
    );
    assert_eq!(
        unit("catalogue.ecsv", "mass").as_deref(),
        Some("jupiterMass")
    );
    assert_eq!(unit("catalogue.ecsv", "radius").as_deref(), Some("km"));
    assert_eq!(unit("catalogue.ecsv", "id"), None);
    assert_eq!(
        unit("broken/unknown_unit.ecsv", "radius").as_deref(),
        Some("furlong")
    );
}

#[test]
fn tables_are_chosen_by_name_or_index() {
    // FITS: HDU number (primary = 0) or EXTNAME, case-insensitively; VOTable: TABLE index or name.
    assert_eq!(
        read("types.fits", Some("unsigned_scaled"))
            .unwrap()
            .columns
            .len(),
        5
    );
    assert_eq!(read("types.fits", Some("1")).unwrap().columns.len(), 8);
    assert_eq!(read("types.fits", None).unwrap().columns.len(), 8);
    assert_eq!(
        read("types_binary2.vot", Some("1")).unwrap().columns[0].name,
        "k"
    );
    assert_eq!(
        read("types_binary2.vot", Some("types"))
            .unwrap()
            .columns
            .len(),
        8
    );
}
