//! `dwarfbound run` and `merge`: cache reuse, the run-to-run difference and its alarm, a run
//! killed mid-write, lock contention, shards, and config errors.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn demo(name: &str) -> String {
    root()
        .join("catalogs-demo")
        .join(name)
        .display()
        .to_string()
}

/// Writes a config into `dir` over the demo catalogues (a small grid keeps the test quick).
fn config(dir: &Path, with_next_night: bool, extra: &str) -> PathBuf {
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

fn run(args: &[&str], cwd: &Path) -> Output {
    Command::new(env!("CARGO_BIN_EXE_dwarfbound"))
        .current_dir(cwd)
        .args(args)
        .output()
        .unwrap()
}

fn text(o: &Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

#[test]
fn second_run_reuses_the_cache_and_next_night_raises_the_alarm() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = config(dir.path(), false, "");
    let cfg_s = cfg.to_str().unwrap();
    let first = run(&["run", cfg_s], dir.path());
    assert_eq!(first.status.code(), Some(0), "{}", text(&first));
    assert!(text(&first).contains("theory grid: computed"));
    let second = run(&["run", cfg_s], dir.path());
    assert_eq!(second.status.code(), Some(0), "{}", text(&second));
    assert!(
        text(&second).contains("theory grid: reused from the cache"),
        "{}",
        text(&second)
    );
    assert!(text(&second).contains("nothing changed"));

    let next = config(dir.path(), true, "");
    let third = run(&["run", next.to_str().unwrap()], dir.path());
    assert_eq!(third.status.code(), Some(3), "{}", text(&third));
    let latest = dir.path().join("out/latest");
    let md = std::fs::read_to_string(latest.join("report.md")).unwrap();
    let section = md
        .split("Since the previous run")
        .nth(1)
        .expect("difference section");
    assert!(
        section.contains("new tension: next_night.csv:HFC-V0302"),
        "{section}"
    );
    let s: serde_json::Value =
        serde_json::from_slice(&std::fs::read(latest.join("summary.json")).unwrap()).unwrap();
    assert_eq!(s["since_previous"]["added"].as_array().unwrap().len(), 7);
    assert!(s["since_previous"]["alarms"][0]
        .as_str()
        .unwrap()
        .contains("HFC-V0302"));
}

#[test]
fn a_run_killed_mid_write_leaves_latest_intact() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = config(dir.path(), false, "");
    let cfg_s = cfg.to_str().unwrap();
    assert_eq!(run(&["run", cfg_s], dir.path()).status.code(), Some(0));
    let latest = dir.path().join("out/latest");
    let before = std::fs::read_link(&latest).unwrap();
    let summary_before = std::fs::read(latest.join("summary.json")).unwrap();

    let killed = Command::new(env!("CARGO_BIN_EXE_dwarfbound"))
        .current_dir(dir.path())
        .args(["run", cfg_s])
        .env("DWARFBOUND_TEST_ABORT_MID_WRITE", "1")
        .output()
        .unwrap();
    assert!(!killed.status.success(), "the hook aborts the process");
    assert_eq!(std::fs::read_link(&latest).unwrap(), before);
    assert_eq!(
        std::fs::read(latest.join("summary.json")).unwrap(),
        summary_before
    );
    // The next run takes over the dead run's lock and completes.
    let after = run(&["run", cfg_s], dir.path());
    assert_eq!(after.status.code(), Some(0), "{}", text(&after));
    assert!(text(&after).contains("stale lock"), "{}", text(&after));
    assert_ne!(std::fs::read_link(&latest).unwrap(), before);
}

#[test]
fn a_locked_output_folder_is_refused_with_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = config(dir.path(), false, "");
    let out = dir.path().join("out");
    std::fs::create_dir_all(&out).unwrap();
    // A live process (this test) holds the lock.
    std::fs::write(
        out.join(dwarfbound::pipeline::lock::LOCK_FILE),
        format!("{}\n", std::process::id()),
    )
    .unwrap();
    let o = run(&["run", cfg.to_str().unwrap()], dir.path());
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));
    assert!(
        text(&o).contains("locked by another dwarfbound run"),
        "{}",
        text(&o)
    );
}

fn shards(dir: &Path, cfg: &str, n: usize) -> Vec<String> {
    (1..=n)
        .map(|i| {
            let o = run(&["run", cfg, "--shard", &format!("{i}/{n}")], dir);
            assert_eq!(o.status.code(), Some(0), "{}", text(&o));
            dir.join(format!("out/shards/{i}-of-{n}"))
                .display()
                .to_string()
        })
        .collect()
}

#[test]
fn four_shards_merged_equal_the_single_run_byte_for_byte() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = config(dir.path(), false, "");
    let cfg_s = cfg.to_str().unwrap();
    assert_eq!(run(&["run", cfg_s], dir.path()).status.code(), Some(0));
    let merged = dir.path().join("merged");
    let mut args = vec!["merge".to_string()];
    args.extend(shards(dir.path(), cfg_s, 4));
    args.extend(["--out".to_string(), merged.display().to_string()]);
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    let o = run(&args, dir.path());
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    // An unsharded run now compares with the same previous run as the merge did.
    assert_eq!(run(&["run", cfg_s], dir.path()).status.code(), Some(0));
    let latest = dir.path().join("out/latest");
    for f in ["grid.csv", "summary.json", "objects.csv"] {
        assert!(
            std::fs::read(latest.join(f)).unwrap() == std::fs::read(merged.join(f)).unwrap(),
            "{f} differs between the merged shards and the single run"
        );
    }
}

/// Shards of one grid started at the same moment in one output folder (an array job on two or
/// more CPUs) all succeed and merge to the unsharded result; a second copy of the same shard
/// refuses while the first holds it.
#[test]
fn concurrent_shards_all_succeed_and_merge_to_the_single_run() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = config(dir.path(), false, "");
    let cfg_s = cfg.to_str().unwrap().to_string();
    let n = 4;
    let procs: Vec<std::process::Child> = (1..=n)
        .map(|i| {
            Command::new(env!("CARGO_BIN_EXE_dwarfbound"))
                .current_dir(dir.path())
                .args(["run", &cfg_s, "--shard", &format!("{i}/{n}")])
                .stdout(std::process::Stdio::piped())
                .stderr(std::process::Stdio::piped())
                .spawn()
                .unwrap()
        })
        .collect();
    for p in procs {
        let o = p.wait_with_output().unwrap();
        assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    }
    // A live holder of shard 1's lock: a second copy of that shard refuses with a clear message.
    let holder = dwarfbound::pipeline::lock::FolderLock::acquire(
        &dir.path().join("out/shards/1-of-4"),
        false,
    )
    .unwrap();
    let o = run(&["run", &cfg_s, "--shard", "1/4"], dir.path());
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));
    assert!(text(&o).contains("locked"), "{}", text(&o));
    drop(holder);
    let merged = dir.path().join("merged");
    let mut args = vec!["merge".to_string()];
    args.extend((1..=n).map(|i| {
        dir.path()
            .join(format!("out/shards/{i}-of-{n}"))
            .display()
            .to_string()
    }));
    args.extend(["--out".to_string(), merged.display().to_string()]);
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    let o = run(&args, dir.path());
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    assert_eq!(run(&["run", &cfg_s], dir.path()).status.code(), Some(0));
    let latest = dir.path().join("out/latest");
    assert!(
        std::fs::read(latest.join("grid.csv")).unwrap()
            == std::fs::read(merged.join("grid.csv")).unwrap(),
        "grid.csv differs between concurrently computed shards and the single run"
    );
}

#[test]
fn merged_shards_are_published_as_the_next_run_with_its_alarm() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = config(dir.path(), false, "");
    assert_eq!(
        run(&["run", cfg.to_str().unwrap()], dir.path())
            .status
            .code(),
        Some(0)
    );
    let before = std::fs::read_link(dir.path().join("out/latest")).unwrap();
    let next = config(dir.path(), true, "");
    let mut args = vec!["merge".to_string()];
    args.extend(shards(dir.path(), next.to_str().unwrap(), 3));
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    let o = run(&args, dir.path());
    assert_eq!(o.status.code(), Some(3), "{}", text(&o));
    assert!(text(&o).contains("HFC-V0302"), "{}", text(&o));
    assert_ne!(
        std::fs::read_link(dir.path().join("out/latest")).unwrap(),
        before
    );
}

#[test]
fn config_errors_exit_2_and_name_the_key() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = config(dir.path(), false, "[statistics]\ntension_sigmaa = 3\n");
    let o = run(&["run", cfg.to_str().unwrap()], dir.path());
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));
    assert!(text(&o).contains("tension_sigmaa"), "{}", text(&o));
    let o = run(&["run", "no/such/config.toml"], dir.path());
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));
}
