//! `dwarfbound run` and `merge`: cache reuse, the run-to-run difference and its alarm (also after
//! a merge, and never claimed on a first run), a run killed mid-write, lock contention and stale
//! locks, shards, and config errors.

mod common;

use std::path::{Path, PathBuf};
use std::process::Output;

use common::{bin, command, config, demo, path_str, text};

/// Runs the demo config with `extra` appended: it must exit 2 with a message naming `key`.
fn assert_config_error_names(dir: &Path, extra: &str, key: &str) {
    let cfg = config(dir, false, extra);
    let o = bin(&["run", path_str(&cfg)], dir);
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));
    assert!(text(&o).contains(key), "{}", text(&o));
}

/// `dwarfbound run CFG` in `dir`, which must succeed; returns the run for its text.
fn run_ok(dir: &Path, cfg: &Path) -> Output {
    let o = bin(&["run", path_str(cfg)], dir);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    o
}

#[test]
fn second_run_reuses_the_cache_and_next_night_raises_the_alarm() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = config(dir.path(), false, "");
    let first = run_ok(dir.path(), &cfg);
    assert!(text(&first).contains("theory grid: computed"));
    let second = run_ok(dir.path(), &cfg);
    assert!(
        text(&second).contains("theory grid: reused from the cache"),
        "{}",
        text(&second)
    );
    assert!(text(&second).contains("nothing changed"));

    let next = config(dir.path(), true, "");
    let third = bin(&["run", next.to_str().unwrap()], dir.path());
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
    run_ok(dir.path(), &cfg);
    let latest = dir.path().join("out/latest");
    let before = std::fs::read_link(&latest).unwrap();
    let summary_before = std::fs::read(latest.join("summary.json")).unwrap();

    let killed = command()
        .current_dir(dir.path())
        .args(["run", path_str(&cfg)])
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
    let after = run_ok(dir.path(), &cfg);
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
    let o = bin(&["run", cfg.to_str().unwrap()], dir.path());
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));
    assert!(
        text(&o).contains("locked by another dwarfbound run"),
        "{}",
        text(&o)
    );
}

/// Runs `cfg` in `dir` as `n` shards, then merges them: into `out` when given, else published as
/// the next run. Returns the merge.
fn shard_and_merge(dir: &Path, cfg: &str, n: usize, out: Option<&Path>) -> Output {
    let mut args = vec!["merge".to_string()];
    for i in 1..=n {
        let o = bin(&["run", cfg, "--shard", &format!("{i}/{n}")], dir);
        assert_eq!(o.status.code(), Some(0), "{}", text(&o));
        args.push(
            dir.join(format!("out/shards/{i}-of-{n}"))
                .display()
                .to_string(),
        );
    }
    if let Some(out) = out {
        args.extend(["--out".to_string(), out.display().to_string()]);
    }
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    bin(&args, dir)
}

#[test]
fn four_shards_merged_equal_the_single_run_byte_for_byte() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = config(dir.path(), false, "");
    run_ok(dir.path(), &cfg);
    let merged = dir.path().join("merged");
    let o = shard_and_merge(dir.path(), path_str(&cfg), 4, Some(&merged));
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    // An unsharded run now compares with the same previous run as the merge did.
    run_ok(dir.path(), &cfg);
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
            command()
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
    let o = bin(&["run", &cfg_s, "--shard", "1/4"], dir.path());
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
    let o = bin(&args, dir.path());
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    assert_eq!(bin(&["run", &cfg_s], dir.path()).status.code(), Some(0));
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
    run_ok(dir.path(), &cfg);
    let before = std::fs::read_link(dir.path().join("out/latest")).unwrap();
    let next = config(dir.path(), true, "");
    let o = shard_and_merge(dir.path(), path_str(&next), 3, None);
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
    assert_config_error_names(
        dir.path(),
        "[statistics]\ntension_sigmaa = 3\n",
        "tension_sigmaa",
    );
    let o = bin(&["run", "no/such/config.toml"], dir.path());
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));
}

// Source: README ("merge … runs the comparison once: the result equals the unsharded run") and
// the `run` exit code 3 when an alarm rule fires. The regression treated every merge as a first
// run: since_previous.previous = null, no alarm, exit 0, `latest` untouched.
#[test]
fn merged_shards_keep_the_nightly_difference_and_alarm() {
    let dir = tempfile::tempdir().unwrap();
    let first = config(dir.path(), false, "");
    run_ok(dir.path(), &first);
    let next = config(dir.path(), true, "");
    let merged = dir.path().join("merged");
    let o = shard_and_merge(dir.path(), path_str(&next), 2, Some(&merged));
    // The unsharded `run next.toml` exits 3 here (new tension HFC-V0302).
    assert_eq!(o.status.code(), Some(3), "{}", text(&o));
}

// Source: the terminal of the same run ("since the previous run: this is the first run"). The
// regression's report.md of a first run said "Nothing changed: same objects, same tensions, same
// allowed region." (and so did every merged report).
#[test]
fn first_run_report_does_not_claim_nothing_changed() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = config(dir.path(), false, "");
    run_ok(dir.path(), &cfg);
    let md = std::fs::read_to_string(dir.path().join("out/latest/report.md")).unwrap();
    assert!(
        !md.contains("Nothing changed"),
        "first run's report claims nothing changed since a previous run"
    );
}

// Source: README exit codes (an invalid config → exit 2 naming the key). The regression ran
// `age_min_mmhb_gyr = nan` with exit 0, disabled the age cut and wrote null.
#[test]
fn non_finite_config_value_is_rejected() {
    let dir = tempfile::tempdir().unwrap();
    assert_config_error_names(
        dir.path(),
        "[statistics]\nage_min_mmhb_gyr = nan\n",
        "age_min_mmhb_gyr",
    );
}

// Source: README ("A lock left by a run that was killed is detected … and taken over with a
// note"). A run killed between creating the lock and writing its pid leaves an empty lock file;
// the regression made every later run exit 2 "locked by another dwarfbound run (pid 0)", and
// `--wait` wait forever.
#[test]
fn an_empty_stale_lock_file_does_not_block_forever() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = config(dir.path(), false, "");
    std::fs::create_dir_all(dir.path().join("out")).unwrap();
    std::fs::write(dir.path().join("out/.dwarfbound.lock"), "").unwrap();
    run_ok(dir.path(), &cfg);
}

/// Writes a config over the three demo catalogues with the given ϒ axis (τ: three points).
fn grid_config(dir: &Path, name: &str, upsilon: &str) -> PathBuf {
    let text = format!(
        "output = \"out\"\n\
         [[catalogue]]\npath = \"{}\"\n\
         [[catalogue]]\npath = \"{}\"\n\
         [[catalogue]]\npath = \"{}\"\n\
         [grid]\nupsilon = \"{upsilon}\"\ntau = \"-0.3:0.3:3\"\n",
        demo("vlm_stars.csv"),
        demo("brown_dwarfs.csv"),
        demo("white_dwarfs.csv")
    );
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p
}

/// The theory cache entries of the folder, sorted.
fn cache_entries(dir: &Path) -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(dir.join("out/cache"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "theory"))
        .collect();
    v.sort();
    v
}

#[test]
fn a_valid_cache_entry_of_another_grid_is_not_reused_and_the_note_says_why() {
    // Issue 13, item 4: an entry with a valid checksum but another config's grid (45 instead
    // of 46 ϒ points) must not be served.
    let dir = tempfile::tempdir().unwrap();
    let c45 = grid_config(dir.path(), "g45.toml", "-0.3:0.6:45");
    let c46 = grid_config(dir.path(), "g46.toml", "-0.3:0.6:46");
    let first = bin(&["run", c45.to_str().unwrap()], dir.path());
    assert_eq!(first.status.code(), Some(0), "{}", text(&first));
    let [e45] = cache_entries(dir.path()).try_into().unwrap();
    let second = bin(&["run", c46.to_str().unwrap()], dir.path());
    assert_eq!(second.status.code(), Some(0), "{}", text(&second));
    let e46 = cache_entries(dir.path())
        .into_iter()
        .find(|p| *p != e45)
        .unwrap();
    // The 45-point entry, checksum and all, filed under the 46-point grid's key.
    std::fs::copy(&e45, &e46).unwrap();

    let third = bin(&["run", c46.to_str().unwrap()], dir.path());
    assert_eq!(third.status.code(), Some(0), "{}", text(&third));
    let stdout = String::from_utf8_lossy(&third.stdout);
    let stderr = String::from_utf8_lossy(&third.stderr);
    assert!(stdout.contains("theory grid: computed"), "{stdout}");
    let note: Vec<&str> = stderr
        .lines()
        .filter(|l| l.contains("theory cache entry"))
        .collect();
    assert_eq!(note.len(), 1, "one line on stderr: {stderr}");
    assert!(note[0].contains("discarded and rebuilt"), "{}", note[0]);
    assert!(
        note[0].contains("upsilon.count: entry has 45, wanted 46"),
        "{}",
        note[0]
    );
    let md = std::fs::read_to_string(dir.path().join("out/latest/report.md")).unwrap();
    assert!(
        md.contains("upsilon.count: entry has 45, wanted 46"),
        "{md}"
    );
    // The run's own outputs agree with its config.
    let s: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.path().join("out/latest/summary.json")).unwrap())
            .unwrap();
    assert_eq!(s["grid"]["upsilon"]["count"], 46);
    let grid_rows = std::fs::read_to_string(dir.path().join("out/latest/grid.csv"))
        .unwrap()
        .lines()
        .count();
    assert_eq!(grid_rows, 1 + 46 * 3);

    // The rebuilt entry is the right one and is reused, silently.
    let fourth = bin(&["run", c46.to_str().unwrap()], dir.path());
    assert_eq!(fourth.status.code(), Some(0), "{}", text(&fourth));
    assert!(text(&fourth).contains("theory grid: reused from the cache"));
    assert!(
        !text(&fourth).contains("theory cache entry"),
        "{}",
        text(&fourth)
    );
}

#[test]
fn a_corrupt_cache_entry_is_rebuilt_with_a_note() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = grid_config(dir.path(), "g.toml", "-0.3:0.6:10");
    let cfg_s = cfg.to_str().unwrap();
    let first = bin(&["run", cfg_s], dir.path());
    assert_eq!(first.status.code(), Some(0), "{}", text(&first));
    let [entry] = cache_entries(dir.path()).try_into().unwrap();
    // Flip one byte of the payload: the checksum no longer holds.
    let mut bytes = std::fs::read(&entry).unwrap();
    let last = bytes.len() - 2;
    bytes[last] ^= 0x01;
    std::fs::write(&entry, &bytes).unwrap();

    let second = bin(&["run", cfg_s], dir.path());
    assert_eq!(second.status.code(), Some(0), "{}", text(&second));
    let stderr = String::from_utf8_lossy(&second.stderr);
    let note: Vec<&str> = stderr
        .lines()
        .filter(|l| l.contains("theory cache entry"))
        .collect();
    assert_eq!(note.len(), 1, "one line on stderr: {stderr}");
    assert!(note[0].contains("discarded and rebuilt"), "{}", note[0]);
    assert!(note[0].contains("checksum mismatch"), "{}", note[0]);
    assert!(String::from_utf8_lossy(&second.stdout).contains("theory grid: computed"));
    let md = std::fs::read_to_string(dir.path().join("out/latest/report.md")).unwrap();
    assert!(md.contains("checksum mismatch"), "{md}");

    let third = bin(&["run", cfg_s], dir.path());
    assert!(text(&third).contains("theory grid: reused from the cache"));
}

// Source: the README's lock paragraph: a lock written on another host is never taken over
// automatically (its process cannot be seen from here); `--break-lock` is the human's override.
#[test]
fn a_lock_from_another_host_is_refused_until_broken_by_hand() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = config(dir.path(), false, "");
    std::fs::create_dir_all(dir.path().join("out")).unwrap();
    std::fs::write(
        dir.path().join("out/.dwarfbound.lock"),
        "pid = 4242\nhost = another-node.example\nstart_ticks = 1\n",
    )
    .unwrap();
    let o = bin(&["run", path_str(&cfg)], dir.path());
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));
    assert!(text(&o).contains("another-node.example"), "{}", text(&o));
    let o = bin(&["run", path_str(&cfg), "--break-lock"], dir.path());
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    assert!(text(&o).contains("removed the lock"), "{}", text(&o));
}

/// The run folders under `<dir>/out/runs/`, sorted by name.
fn run_folders(dir: &Path) -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(dir.join("out/runs"))
        .map(|r| r.map(|e| e.unwrap().path()).collect())
        .unwrap_or_default();
    v.sort();
    v
}

// Source: README ("History": a partial run folder left by a killed run is removed by the next
// run with a note). SIGKILL leaves no chance to clean up: the folder keeps its run's lock and
// has no completion marker.
#[test]
fn a_run_killed_with_sigkill_leaves_a_partial_folder_that_the_next_run_removes() {
    let dir = tempfile::tempdir().unwrap();
    let cfg = config(dir.path(), false, "");
    let mut child = command()
        .current_dir(dir.path())
        .args(["run", path_str(&cfg)])
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    // The run folder and its lock exist from before the theory grid is computed (a first run:
    // several seconds) until the run completes. Poll for them, then kill -9. The lock must hold
    // its owner's pid: a lock file still empty is respected for two seconds as one being
    // written (src/pipeline/lock.rs), so a kill in that instant would leave a folder the next
    // run rightly does not remove yet (seen once under load).
    let partial = loop {
        let found = run_folders(dir.path()).into_iter().find(|d| {
            std::fs::read_to_string(d.join(dwarfbound::pipeline::lock::LOCK_FILE))
                .is_ok_and(|t| t.starts_with("pid = ") && t.ends_with('\n'))
        });
        if let Some(d) = found {
            break d;
        }
        assert!(
            child.try_wait().unwrap().is_none(),
            "the run ended before its folder was seen"
        );
        std::thread::sleep(std::time::Duration::from_millis(5));
    };
    child.kill().unwrap();
    assert!(!child.wait().unwrap().success());
    assert!(partial.exists());
    assert!(!partial
        .join(dwarfbound::pipeline::history::COMPLETE_MARKER)
        .exists());
    assert!(!dir.path().join("out/latest").exists(), "nothing published");

    let next = run_ok(dir.path(), &cfg);
    let t = text(&next);
    assert!(t.contains("removed the partial run folder"), "{t}");
    // The only run folder left is the new, complete one (which takes the killed run's name
    // when both started in the same second).
    let runs = run_folders(dir.path());
    assert_eq!(runs.len(), 1, "{runs:?}");
    assert!(runs[0]
        .join(dwarfbound::pipeline::history::COMPLETE_MARKER)
        .exists());
    assert!(
        !runs[0].join(dwarfbound::pipeline::lock::LOCK_FILE).exists(),
        "a complete run releases its folder's lock"
    );
    // The note is in the report and in summary.json too.
    let md = std::fs::read_to_string(dir.path().join("out/latest/report.md")).unwrap();
    assert!(
        md.contains("housekeeping: removed the partial run folder"),
        "{md}"
    );
    let s: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.path().join("out/latest/summary.json")).unwrap())
            .unwrap();
    assert_eq!(
        s["since_previous"]["housekeeping"]
            .as_array()
            .unwrap()
            .len(),
        1
    );
}

// Source: README ("Retention"): `--keep N` keeps the N newest runs, the current one included,
// and the N most recently used cache entries, the current run's included.
#[test]
fn keep_removes_the_oldest_runs_and_cache_entries() {
    let dir = tempfile::tempdir().unwrap();
    let a = grid_config(dir.path(), "a.toml", "-0.3:0.6:7");
    let b = grid_config(dir.path(), "b.toml", "-0.3:0.6:8");
    run_ok(dir.path(), &a);
    run_ok(dir.path(), &b);
    let before = run_folders(dir.path());
    assert_eq!(before.len(), 2);
    assert_eq!(cache_entries(dir.path()).len(), 2);

    let o = bin(&["run", path_str(&a), "--keep", "2"], dir.path());
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    assert!(
        text(&o).contains("removed the old run folder"),
        "{}",
        text(&o)
    );
    let after = run_folders(dir.path());
    assert_eq!(after.len(), 2, "{after:?}");
    assert!(!before[0].exists(), "the oldest run is removed");
    assert!(before[1].exists());
    let latest = std::fs::canonicalize(dir.path().join("out/latest")).unwrap();
    assert_eq!(latest, std::fs::canonicalize(&after[1]).unwrap());
    assert_eq!(
        cache_entries(dir.path()).len(),
        2,
        "two entries fit in keep 2"
    );

    // The config key, at 1: only this run and its cache entry remain.
    let mut text_a = std::fs::read_to_string(&a).unwrap();
    text_a.insert_str(0, "keep = 1\n");
    std::fs::write(&a, text_a).unwrap();
    let o = run_ok(dir.path(), &a);
    assert!(text(&o).contains("reused from the cache"), "{}", text(&o));
    assert_eq!(run_folders(dir.path()).len(), 1);
    assert_eq!(cache_entries(dir.path()).len(), 1);
    // The entry kept is the one of grid a: a run of grid a reuses it.
    let o = run_ok(dir.path(), &a);
    assert!(text(&o).contains("reused from the cache"), "{}", text(&o));

    let o = bin(&["run", path_str(&a), "--keep", "0"], dir.path());
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));
    assert!(text(&o).contains("keep"), "{}", text(&o));
}
