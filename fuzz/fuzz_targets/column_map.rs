#![no_main]
// Fuzz target: arbitrary text as a column map (TOML), then applied to a small table.
use dwarfbound::catalogue::table::{Cell, ColumnMeta, RawRow, RawTable};
use dwarfbound::catalogue::{vet_table, ColumnMap};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let Ok(map) = ColumnMap::from_toml_str(text, "fuzz.map.toml") else {
        return;
    };
    let names = [
        "id",
        "class",
        "mass",
        "mass_err",
        "m",
        "e",
        "designation",
        "type",
    ];
    let table = RawTable {
        columns: names
            .iter()
            .map(|n| ColumnMeta {
                name: n.to_string(),
                ..Default::default()
            })
            .collect(),
        rows: vec![RawRow {
            row_number: 1,
            cells: vec![
                Cell::Text("A".into()),
                Cell::Text("BD".into()),
                Cell::Number(0.05),
                Cell::Number(0.005),
                Cell::Text("55".into()),
                Cell::Text("4".into()),
                Cell::Missing,
                Cell::Text("brown_dwarf".into()),
            ],
        }],
        malformed: Vec::new(),
    };
    if let Ok((objects, quarantine, tally)) = vet_table("fuzz", &table, Some(&map)) {
        assert_eq!(tally.rows_in, objects.len() + quarantine.len());
    }
});
