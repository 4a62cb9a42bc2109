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
    // A run in the other format into the same folder leaves no stale table beside the new one
    // (an older objects.csv would be read as this run's).
    let o = confront(&args, &csv_out);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    assert!(!csv_out.join("objects.csv").exists());
    assert!(csv_out.join("objects.parquet").exists());
}
