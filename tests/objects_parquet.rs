//! `confront --objects-format parquet`: objects.parquet holds the same rows and values as
//! objects.csv of the same run (the CSV is the documented contract; the Parquet copy must not
//! differ from it in anything but the encoding).

mod common;

use common::{col, confront, demo, read_csv, text};
use polars::prelude::*;

// Source: the README's objects.csv columns; the CSV written by the same command is the
// reference (common practice, no source: one table, two encodings).
#[test]
fn objects_parquet_matches_objects_csv() {
    let dir = tempfile::tempdir().unwrap();
    let (csv_out, pq_out) = (dir.path().join("csv"), dir.path().join("pq"));
    let cats = [demo("vlm_stars.csv"), demo("brown_dwarfs.csv")];
    let mut args: Vec<&str> = cats.iter().map(String::as_str).collect();
    args.extend(["--upsilon", "-0.1:0.1:3", "--tau", "0"]);
    let o = confront(&args, &csv_out);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    args.extend(["--objects-format", "parquet"]);
    let o = confront(&args, &pq_out);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    assert!(!pq_out.join("objects.csv").exists());
    // The other outputs do not depend on the table's format.
    for f in ["grid.csv", "quarantine.csv"] {
        assert_eq!(
            std::fs::read(csv_out.join(f)).unwrap(),
            std::fs::read(pq_out.join(f)).unwrap(),
            "{f}"
        );
    }

    assert_same_table(&csv_out, &pq_out);
    // A run in the other format into the same folder leaves no stale table beside the new one
    // (an older objects.csv would be read as this run's).
    let o = confront(&args, &csv_out);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    assert!(!csv_out.join("objects.csv").exists());
    assert!(csv_out.join("objects.parquet").exists());
}

/// Every cell of `objects.parquet` in `pq_out`, rendered as the CSV renders it (text as is,
/// numbers round-tripping, nulls empty), equals the same cell of `objects.csv` in `csv_out`,
/// row by row; returns the rows.
fn assert_same_table(csv_out: &std::path::Path, pq_out: &std::path::Path) -> Vec<Vec<String>> {
    let (header, rows) = read_csv(&csv_out.join("objects.csv"));
    let file = std::fs::File::open(pq_out.join("objects.parquet")).unwrap();
    let df = ParquetReader::new(file).finish().unwrap();
    assert_eq!(df.height(), rows.len());
    let names: Vec<String> = df
        .get_column_names()
        .iter()
        .map(|n| n.to_string())
        .collect();
    assert_eq!(names, header);
    // Every cell, rendered as the CSV renders it: text as is, numbers round-tripping, nulls empty.
    for name in &header {
        let c = col(&header, name);
        let column = df.column(name).unwrap().as_materialized_series().clone();
        for (k, row) in rows.iter().enumerate() {
            let v = column.get(k).unwrap();
            let rendered = match v {
                AnyValue::Null => String::new(),
                AnyValue::String(s) => s.to_string(),
                AnyValue::StringOwned(s) => s.to_string(),
                AnyValue::Int64(i) => i.to_string(),
                AnyValue::Float64(x) => dwarfbound::output::fmt_f64(Some(x)),
                AnyValue::Boolean(b) => b.to_string(),
                other => panic!("{name}: unexpected {other:?}"),
            };
            assert_eq!(rendered, row[c], "{name}, row {}", k + 1);
        }
    }
    rows
}

// Source: the catalogue's own row order (common practice, no source). `objects.csv` is
// rendered 8 192 rows at a time, the next block while one is written: with more rows than two
// blocks, every row is still there once, in catalogue order, and equal to the Parquet copy's
// (written a row group at a time, independently of those blocks). The catalogue is invented.
#[test]
fn objects_csv_keeps_every_row_in_order_across_blocks() {
    let dir = tempfile::tempdir().unwrap();
    let n = 17_000;
    let mut cat = String::from("id,class,mass,mass_err\n");
    for i in 0..n {
        let (class, mass) = if i % 3 == 0 {
            ("brown_dwarf", 0.05 + (i % 40) as f64 * 1e-3)
        } else {
            ("hburning", 0.07 + (i % 90) as f64 * 2e-3)
        };
        cat.push_str(&format!("T{i:05},{class},{mass:.4},0.005\n"));
    }
    let path = dir.path().join("invented.csv");
    std::fs::write(&path, cat).unwrap();
    let (csv_out, pq_out) = (dir.path().join("csv"), dir.path().join("pq"));
    let mut args = vec![
        path.to_str().unwrap(),
        "--upsilon",
        "-0.1:0.1:3",
        "--tau",
        "0",
    ];
    let o = confront(&args, &csv_out);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    args.extend(["--objects-format", "parquet"]);
    let o = confront(&args, &pq_out);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let rows = assert_same_table(&csv_out, &pq_out);
    let (header, _) = read_csv(&csv_out.join("objects.csv"));
    let id = col(&header, "id");
    let ids: Vec<&str> = rows.iter().map(|r| r[id].as_str()).collect();
    let expected: Vec<String> = (0..n).map(|i| format!("T{i:05}")).collect();
    assert_eq!(ids, expected);
}
