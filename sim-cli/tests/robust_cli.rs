//! Robustness of the binary against its surroundings: a closed standard
//! output, two studies in one folder, planted symlinks at temporary
//! names, requests too large for the machine, unbounded input files.

mod common;

use common::{chopwave, scenario, scratch, text};
use std::path::Path;
use std::process::{Child, Command, Output, Stdio};
use std::time::{Duration, Instant};

/// Waits for a child at most `limit`, killing it past that (a test that
/// would hang on the old code fails instead).
fn wait_limited(child: Child, limit: Duration) -> Output {
    let pid = child.id();
    let (tx, rx) = std::sync::mpsc::channel();
    // Collected on a thread, so a large output never blocks the child.
    std::thread::spawn(move || {
        let _ = tx.send(child.wait_with_output());
    });
    match rx.recv_timeout(limit) {
        Ok(o) => o.unwrap(),
        Err(_) => {
            let _ = Command::new("kill").arg("-9").arg(pid.to_string()).status();
            panic!("still running after {limit:?}");
        }
    }
}

fn run_limited(args: &[&str], limit: Duration) -> Output {
    let child = chopwave()
        .args(args)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    wait_limited(child, limit)
}

/// Runs with standard output a pipe whose reader is already gone, as in
/// `chopwave … | true`: every write to it fails at once.
fn run_closed_stdout(args: &[&str]) -> Output {
    let (reader, writer) = std::io::pipe().unwrap();
    drop(reader);
    let child = chopwave()
        .args(args)
        .stdout(writer)
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    wait_limited(child, Duration::from_secs(120))
}

fn assert_quiet_end(o: &Output, what: &str) {
    let err = text(&o.stderr);
    assert_eq!(o.status.code(), Some(0), "{what}: {err}");
    for bad in ["panicked", "internal error", "Broken pipe", "backtrace"] {
        assert!(!err.contains(bad), "{what}: stderr says `{bad}`: {err}");
    }
}

#[test]
fn a_closed_standard_output_ends_quietly_and_keeps_the_files() {
    let d = scratch("closed");
    assert_quiet_end(&run_closed_stdout(&["template"]), "template");
    let csv = d.join("run.csv");
    let o = run_closed_stdout(&[
        "run",
        &scenario("cabin-light-9-32v.json"),
        "--no-startup",
        "--csv",
        &csv.display().to_string(),
    ]);
    assert_quiet_end(&o, "run");
    assert!(csv.exists(), "the run's CSV is written");
    let o = run_closed_stdout(&["check", &scenario("cabin-light-9-32v.json")]);
    assert_quiet_end(&o, "check");
    // --strict still decides the exit code when nothing could be printed.
    let o = run_closed_stdout(&[
        "run",
        &scenario("undersized-inductor-dcm.json"),
        "--strict",
        "--no-startup",
    ]);
    assert_eq!(o.status.code(), Some(3), "{}", text(&o.stderr));
    assert!(!text(&o.stderr).contains("internal error"));
    // A study writes its tables whatever happens to standard output.
    let out = d.join("study");
    let o = run_closed_stdout(&[
        "sweep",
        &scenario("cabin-light-9-32v.json"),
        "--vary",
        "supply.voltage_v=10,13.8",
        "--no-plots",
        "--out",
        &out.display().to_string(),
    ]);
    assert_quiet_end(&o, "sweep");
    for f in [
        "cabin-light-9-32v-sweep.csv",
        "cabin-light-9-32v-sweep.json",
    ] {
        assert!(out.join(f).exists(), "{f} written");
    }
    assert!(
        !out.join("cabin-light-9-32v-sweep-journal.jsonl").exists(),
        "the finished study's journal is removed"
    );
    // A study with a failed point keeps its exit code (1) and message.
    let o = run_closed_stdout(&[
        "sweep",
        &scenario("cabin-light-9-32v.json"),
        "--vary",
        "supply.voltage_v=5,13.8",
        "--no-plots",
        "--out",
        &out.display().to_string(),
    ]);
    assert_eq!(o.status.code(), Some(1), "{}", text(&o.stderr));
    assert!(text(&o.stderr).contains("1 of 2 points failed"));
    assert!(!text(&o.stderr).contains("internal error"));
}

/// The interrupted-study command of `study_cli.rs`: a sweep on the
/// reference engine, slow enough to be running while a second starts.
fn slow_sweep(out: &Path, vary: &str) -> Vec<String> {
    common::slow_sweep(out, vary, 1, &[])
}

#[test]
fn a_second_study_into_a_busy_folder_is_refused() {
    let d = scratch("two");
    let mut first = chopwave()
        .args(slow_sweep(&d, "supply.voltage_v=range:400"))
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    let journal = d.join("grow-light-48v-sweep-journal.jsonl");
    let start = Instant::now();
    while !journal.exists() {
        assert!(start.elapsed() < Duration::from_secs(120), "no journal");
        std::thread::sleep(Duration::from_millis(20));
    }
    let before = std::fs::read(&journal).unwrap();
    // Another study of the same scenario into the same folder.
    let o = chopwave()
        .args(slow_sweep(&d, "supply.voltage_v=40,44"))
        .output()
        .unwrap();
    let still_running = first.try_wait().unwrap().is_none();
    let _ = first.kill();
    let _ = first.wait();
    assert!(still_running, "the first study was still running");
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    let err = text(&o.stderr);
    assert!(err.contains("another chopwave study"), "{err}");
    // The first study's journal was not replaced: it still starts with
    // the same header and kept its rows.
    let after = std::fs::read(&journal).unwrap();
    assert!(after.starts_with(&before[..before.len().min(200)]));
    // The lock dies with its process: no stale lock blocks the next
    // study; but a journal of another study is not thrown away.
    let o = chopwave()
        .args(slow_sweep(&d, "supply.voltage_v=40,44"))
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    assert!(text(&o.stderr).contains("different study"));
    // Nor by a third, different again; once the journal is removed the
    // folder is free.
    let o = chopwave()
        .args(slow_sweep(&d, "supply.voltage_v=range:3"))
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    std::fs::remove_file(&journal).unwrap();
    let o = chopwave()
        .args(slow_sweep(&d, "supply.voltage_v=range:3"))
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", text(&o.stderr));
}

/// The pid the next process will most likely get, on Linux.
fn next_pids() -> std::ops::Range<u32> {
    let last: u32 = std::fs::read_to_string("/proc/sys/kernel/ns_last_pid")
        .ok()
        .and_then(|t| t.trim().parse().ok())
        .unwrap_or(0);
    last + 1..last + 400
}

#[cfg(unix)]
#[test]
fn planted_symlinks_at_temporary_names_are_not_followed() {
    use std::os::unix::fs::symlink;
    let d = scratch("symlink");
    let victim = d.join("victim.txt");
    std::fs::write(&victim, "precious").unwrap();
    let out = d.join("out");
    std::fs::create_dir_all(&out).unwrap();
    // Every name the hand-rolled writer used: `.NAME.PID.tmp` and the
    // write probe `.chopwave-probe.PID.tmp`, for the coming pids.
    for pid in next_pids() {
        for name in [
            format!(".run.csv.{pid}.tmp"),
            format!(".chopwave-probe.{pid}.tmp"),
        ] {
            symlink(&victim, out.join(name)).unwrap();
        }
    }
    let csv = out.join("run.csv");
    let o = chopwave()
        .args([
            "run",
            &scenario("cabin-light-9-32v.json"),
            "--no-startup",
            "-q",
            "--csv",
            &csv.display().to_string(),
        ])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", text(&o.stderr));
    assert_eq!(std::fs::read_to_string(&victim).unwrap(), "precious");
    let meta = std::fs::symlink_metadata(&csv).unwrap();
    assert!(meta.file_type().is_file(), "the CSV is a plain file");
    // The CSV reads back with the csv crate: a header and rows of seven
    // numbers each.
    let mut r = csv::Reader::from_path(&csv).unwrap();
    assert_eq!(r.headers().unwrap().len(), 7);
    let mut rows = 0;
    for rec in r.records() {
        let rec = rec.unwrap();
        assert_eq!(rec.len(), 7);
        for cell in rec.iter() {
            assert!(cell.parse::<f64>().unwrap().is_finite(), "{cell}");
        }
        rows += 1;
    }
    assert!(rows > 10);
}

#[test]
fn study_csv_with_commas_and_quotes_reads_back() {
    let d = scratch("csvq");
    // A failed point's error message holds commas and quotes.
    let o = chopwave()
        .args([
            "sweep",
            &scenario("cabin-light-9-32v.json"),
            "--vary",
            "supply.voltage_v=5,13.8",
            "--no-plots",
            "-q",
            "--out",
            &d.display().to_string(),
        ])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(1), "{}", text(&o.stderr));
    let json: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(d.join("cabin-light-9-32v-sweep.json")).unwrap(),
    )
    .unwrap();
    let mut r = csv::Reader::from_path(d.join("cabin-light-9-32v-sweep.csv")).unwrap();
    let head: Vec<String> = r.headers().unwrap().iter().map(String::from).collect();
    let err_col = head.iter().position(|h| h == "error").unwrap();
    let recs: Vec<csv::StringRecord> = r.records().map(Result::unwrap).collect();
    assert_eq!(recs.len(), 2);
    let message = json["rows"][0]["error"].as_str().unwrap();
    assert!(message.contains(','), "{message}");
    assert_eq!(&recs[0][err_col], message);
    for rec in &recs {
        assert_eq!(rec.len(), head.len());
    }
    // Numbers read back exactly.
    let v_col = head.iter().position(|h| h == "supply.voltage_v").unwrap();
    let v: f64 = recs[1][v_col].parse().unwrap();
    assert_eq!(v.to_bits(), 13.8f64.to_bits());
}

#[test]
fn unbounded_input_files_are_refused() {
    if !Path::new("/dev/zero").exists() {
        return;
    }
    let o = run_limited(&["check", "/dev/zero"], Duration::from_secs(60));
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    assert!(
        text(&o.stderr).contains("larger than"),
        "{}",
        text(&o.stderr)
    );
    let d = scratch("merge-zero");
    let o = run_limited(
        &["merge", "/dev/zero", "--out", &d.display().to_string()],
        Duration::from_secs(120),
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
}

#[test]
fn requests_beyond_the_budget_are_refused_up_front() {
    let cabin = scenario("cabin-light-9-32v.json");
    let limit = Duration::from_secs(60);
    // Each setting in its range; together about 4 GB of samples.
    let o = run_limited(
        &[
            "run",
            &cabin,
            "--set",
            "simulation.record_cycles=10000",
            "--set",
            "simulation.samples_per_interval=10000",
        ],
        limit,
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    let err = text(&o.stderr);
    for want in [
        "simulation.record_cycles",
        "simulation.samples_per_interval",
        "4.0 GiB",
        "--memory-budget",
    ] {
        assert!(err.contains(want), "`{want}` missing: {err}");
    }
    let d = scratch("budget");
    let out = d.display().to_string();
    let o = run_limited(
        &["spread", &cabin, "--samples", "1000000000", "--out", &out],
        limit,
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    assert!(text(&o.stderr).contains("--samples 1000000000"));
    assert!(text(&o.stderr).contains("--max-points"));
    let o = run_limited(
        &[
            "sweep",
            &cabin,
            "--vary",
            "supply.voltage_v=10:30:100000",
            "--vary",
            "inductor.inductance_h=10u:100u:100",
            "--out",
            &out,
        ],
        limit,
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    assert!(text(&o.stderr).contains("supply.voltage_v (100000 values)"));
    for map in ["18446744073709551615", "100001", "50000"] {
        let o = run_limited(
            &[
                "boundary",
                &cabin,
                "--vary",
                "inductor.inductance_h=5u:200u",
                "--vary",
                "supply.voltage_v=10:30:50",
                "--map-points",
                map,
                "--out",
                &out,
            ],
            limit,
        );
        assert_eq!(o.status.code(), Some(2), "{map}: {}", text(&o.stderr));
    }
    for threads in ["1000000", "18446744073709551615"] {
        let o = run_limited(
            &[
                "sweep",
                &cabin,
                "--vary",
                "supply.voltage_v=10,12",
                "--threads",
                threads,
                "--out",
                &out,
            ],
            limit,
        );
        assert_eq!(o.status.code(), Some(2), "{threads}: {}", text(&o.stderr));
    }
    // An explicit budget lets a larger request through the check.
    let o = run_limited(
        &[
            "--max-points",
            "10",
            "sweep",
            &cabin,
            "--vary",
            "supply.voltage_v=10:14:11",
            "--out",
            &out,
        ],
        limit,
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    assert!(text(&o.stderr).contains("budget of 10 points"));
}

#[test]
fn a_shard_claiming_a_huge_study_is_refused_before_allocating() {
    let d = scratch("bigshard");
    let out = d.display().to_string();
    let cabin = scenario("cabin-light-9-32v.json");
    for k in 1..=2 {
        let o = chopwave()
            .args([
                "sweep",
                &cabin,
                "--vary",
                "supply.voltage_v=10,12",
                "--shard",
                &format!("{k}/2"),
                "--no-plots",
                "-q",
                "--out",
                &out,
            ])
            .output()
            .unwrap();
        assert!(o.status.success(), "{}", text(&o.stderr));
    }
    let files: Vec<String> = (1..=2)
        .map(|k| {
            d.join(format!("cabin-light-9-32v-sweep-shard-{k}-of-2.json"))
                .display()
                .to_string()
        })
        .collect();
    // Doctor both manifests: 1e15 points.
    for f in &files {
        let t = std::fs::read_to_string(f).unwrap();
        let t = t
            .replacen("\"points\":2", "\"points\":1000000000000000", 1)
            .replacen("\"shape\":[2]", "\"shape\":[1000000000000000]", 1);
        std::fs::write(f, t).unwrap();
    }
    let merged = d.join("merged").display().to_string();
    let o = run_limited(
        &["merge", &files[0], &files[1], "--out", &merged],
        Duration::from_secs(60),
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    // A shape that overflows when multiplied out.
    for f in &files {
        let t = std::fs::read_to_string(f).unwrap().replacen(
            "\"shape\":[1000000000000000]",
            "\"shape\":[4294967296,4294967296]",
            1,
        );
        std::fs::write(f, t).unwrap();
    }
    let o = run_limited(
        &["merge", &files[0], &files[1], "--out", &merged],
        Duration::from_secs(60),
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
}

#[test]
fn very_deep_set_paths_are_refused() {
    let deep = format!("{}x=1", "a.".repeat(60_000));
    let o = run_limited(
        &["check", &scenario("cabin-light-9-32v.json"), "--set", &deep],
        Duration::from_secs(60),
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    assert!(!text(&o.stderr).contains("internal error"));
}
