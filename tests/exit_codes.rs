//! User errors exit 2, never 1 ("a bug"): an output path that is a folder, and a shard grid
//! holding an implausible bound. Source: the README's exit-code table.

mod common;

use common::{bin, config, demo, path_str, text};

#[test]
fn an_output_file_that_is_a_folder_exits_2_naming_it() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    std::fs::create_dir_all(out.join("report.html")).unwrap();
    let o = bin(
        &[
            "confront",
            &demo("vlm_stars.csv"),
            "--upsilon=-0.3:0.6:5",
            "--tau=0",
            "--out",
            path_str(&out),
        ],
        dir.path(),
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));
    assert!(text(&o).contains("report.html"), "{}", text(&o));
    assert!(!text(&o).contains("bug"), "{}", text(&o));
}

#[test]
fn a_shard_holding_an_implausible_bound_exits_2() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = config(dir.path(), false, "");
    for i in 1..=2 {
        let o = bin(
            &["run", path_str(&cfg), "--shard", &format!("{i}/2")],
            dir.path(),
        );
        assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    }
    let shard = dir.path().join("out/shards/1-of-2/theory-shard.json");
    let json = std::fs::read_to_string(&shard).unwrap();
    let at = json.find("\"value_msun\":").unwrap() + "\"value_msun\":".len();
    let end = at + json[at..].find([',', '}']).unwrap();
    std::fs::write(&shard, format!("{}1e308{}", &json[..at], &json[end..])).unwrap();
    let o = bin(
        &[
            "merge",
            path_str(&dir.path().join("out/shards/1-of-2")),
            path_str(&dir.path().join("out/shards/2-of-2")),
        ],
        dir.path(),
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));
    assert!(text(&o).contains("not a plausible mass"), "{}", text(&o));
}
