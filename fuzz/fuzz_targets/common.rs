// Shared by the reader targets: the input bytes are written to a file with the format's
// extension (the readers take paths), read, and vetted; rows in must equal accepted +
// quarantined. A panic or an abort is the crash libFuzzer reports.
use std::path::PathBuf;
use std::sync::OnceLock;

use dwarfbound::catalogue::table::{read_table, ReadOptions};
use dwarfbound::catalogue::vet_table;

fn scratch(ext: &str) -> PathBuf {
    static DIR: OnceLock<PathBuf> = OnceLock::new();
    let dir = DIR.get_or_init(|| {
        let d = std::env::temp_dir().join(format!("dwarfbound-fuzz-{}", std::process::id()));
        std::fs::create_dir_all(&d).expect("scratch folder");
        d
    });
    dir.join(format!("input.{ext}"))
}

pub fn read_and_vet(data: &[u8], ext: &str) {
    let path = scratch(ext);
    std::fs::write(&path, data).expect("write scratch input");
    if let Ok(table) = read_table(&path, &ReadOptions::default()) {
        for row in &table.rows {
            assert_eq!(row.cells.len(), table.columns.len());
        }
        if let Ok((objects, quarantine, tally)) = vet_table("input", &table, None) {
            assert_eq!(tally.rows_in, objects.len() + quarantine.len());
            assert_eq!(tally.rows_in, table.rows.len());
        }
    }
}
