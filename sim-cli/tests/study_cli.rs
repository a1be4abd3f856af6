//! The study commands as a user runs them: `sweep`, `boundary`,
//! `spread` and `merge`, their files, exit codes and messages.

mod common;

use common::{png_size, read, run, run_owned, scenario, scratch, text};
use std::path::Path;
use std::process::Command;

#[test]
fn sweep_writes_rows_and_plots() {
    let d = scratch("sweep");
    let out = d.display().to_string();
    let o = run(&[
        "sweep",
        &scenario("cabin-light-9-32v.json"),
        "--vary",
        "supply.voltage_v=range:5",
        "--out",
        &out,
    ]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let stdout = text(&o.stdout);
    assert!(
        stdout.contains("5 points over supply.voltage_v"),
        "{stdout}"
    );
    assert!(stdout.contains("Cautions"), "{stdout}");
    let csv = std::fs::read_to_string(d.join("cabin-light-9-32v-sweep.csv")).unwrap();
    let lines: Vec<&str> = csv.lines().collect();
    assert_eq!(lines.len(), 6);
    assert!(lines[0].starts_with("index,supply.voltage_v,status,"));
    assert!(
        lines[1].starts_with("0,9,ok,") || lines[1].starts_with("0,9.0,ok,"),
        "{}",
        lines[1]
    );
    let json: serde_json::Value =
        serde_json::from_slice(&read(&d.join("cabin-light-9-32v-sweep.json"))).unwrap();
    assert_eq!(json["manifest"]["points"], 5);
    assert_eq!(json["rows"].as_array().unwrap().len(), 5);
    for p in ["current", "operation"] {
        let f = d.join(format!("cabin-light-9-32v-sweep-{p}.png"));
        assert_eq!(png_size(&f), (1600, 1000));
    }
}

#[test]
fn failed_points_set_the_exit_code_and_keep_their_rows() {
    let d = scratch("fail");
    let out = d.display().to_string();
    // At 5 V the current cannot reach the upper threshold: invalid point.
    let o = run(&[
        "sweep",
        &scenario("cabin-light-9-32v.json"),
        "--vary",
        "supply.voltage_v=5,13.8",
        "--out",
        &out,
        "--no-plots",
        "-q",
    ]);
    assert_eq!(o.status.code(), Some(1), "{}", text(&o.stderr));
    assert!(text(&o.stderr).contains("1 of 2 points failed"));
    let csv = std::fs::read_to_string(d.join("cabin-light-9-32v-sweep.csv")).unwrap();
    let row0 = csv.lines().nth(1).unwrap();
    assert!(
        row0.contains(",failed,") && row0.contains("invalid point"),
        "{row0}"
    );
    assert!(csv.lines().nth(2).unwrap().contains(",ok,"));
}

#[test]
fn bad_vary_is_bad_input() {
    for spec in [
        "supply.voltage_v",
        "inductor.inductanse_h=1u:2u:3",
        "supply.voltage_v=1:2:0",
    ] {
        let o = run(&[
            "sweep",
            &scenario("headlamp-4cell.json"),
            "--vary",
            spec,
            "-q",
        ]);
        assert_eq!(o.status.code(), Some(2), "{spec}: {}", text(&o.stderr));
        assert!(text(&o.stderr).contains(spec), "{}", text(&o.stderr));
    }
}

#[test]
fn sweep_shards_merge_to_the_same_files() {
    let d = scratch("shards");
    let whole = d.join("whole");
    let parts = d.join("parts");
    let merged = d.join("merged");
    let args = |out: &Path, shard: Option<&str>| {
        let mut a = vec![
            "sweep".to_string(),
            scenario("cabin-light-9-32v.json"),
            "--vary".into(),
            "supply.voltage_v=9:32:10".into(),
            "--vary".into(),
            "inductor.inductance_h=47u,68u".into(),
            "--out".into(),
            out.display().to_string(),
            "-q".into(),
        ];
        if let Some(s) = shard {
            a.extend(["--shard".into(), s.into(), "--no-plots".into()]);
        }
        a
    };
    let o = run(&args(&whole, None)
        .iter()
        .map(String::as_str)
        .collect::<Vec<_>>());
    assert!(o.status.success(), "{}", text(&o.stderr));
    for s in ["1/3", "2/3", "3/3"] {
        let o = run(&args(&parts, Some(s))
            .iter()
            .map(String::as_str)
            .collect::<Vec<_>>());
        assert!(o.status.success(), "{}", text(&o.stderr));
    }
    let mut files: Vec<String> = std::fs::read_dir(&parts)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "json"))
        .map(|p| p.display().to_string())
        .collect();
    files.sort();
    files.reverse();
    assert_eq!(files.len(), 3);
    let mut a = vec!["merge", "--out"];
    let m = merged.display().to_string();
    a.push(&m);
    a.extend(files.iter().map(String::as_str));
    let o = run(&a);
    assert!(o.status.success(), "{}", text(&o.stderr));
    for f in [
        "cabin-light-9-32v-sweep.csv",
        "cabin-light-9-32v-sweep.json",
        "cabin-light-9-32v-sweep-mode-map.png",
        "cabin-light-9-32v-sweep-efficiency-map.png",
    ] {
        assert!(read(&whole.join(f)) == read(&merged.join(f)), "{f} differs");
    }
    // Two shards only: refused as bad input.
    let o = run(&["merge", "--out", &m, &files[0], &files[1]]);
    assert_eq!(o.status.code(), Some(2));
}

#[test]
fn spread_with_command_line_limits_and_shards() {
    let d = scratch("spread");
    let whole = d.join("whole");
    let parts = d.join("parts");
    let base = |out: &Path| {
        vec![
            "spread".to_string(),
            scenario("cabin-light-9-32v.json"),
            "--samples".into(),
            "12".into(),
            "--seed".into(),
            "4".into(),
            "--spec".into(),
            "max_ripple_pct=45".into(),
            "--spec".into(),
            "no_dcm".into(),
            "--out".into(),
            out.display().to_string(),
            "-q".into(),
        ]
    };
    let o = run(&base(&whole).iter().map(String::as_str).collect::<Vec<_>>());
    assert!(o.status.success(), "{}", text(&o.stderr));
    let stdout = text(&o.stdout);
    assert!(stdout.contains("12 samples (seed 4)"), "{stdout}");
    assert!(stdout.contains("LED ripple at most 45 %"), "{stdout}");
    assert!(stdout.contains("yield:"), "{stdout}");
    let summary: serde_json::Value =
        serde_json::from_slice(&read(&whole.join("cabin-light-9-32v-spread-summary.json")))
            .unwrap();
    assert_eq!(summary["points"], 12);
    assert_eq!(
        png_size(&whole.join("cabin-light-9-32v-spread-histograms.png")),
        (1600, 1000)
    );
    let mut files = Vec::new();
    for s in ["1/2", "2/2"] {
        let mut a = base(&parts);
        a.extend(["--shard".into(), s.into()]);
        let o = run(&a.iter().map(String::as_str).collect::<Vec<_>>());
        assert!(o.status.success(), "{}", text(&o.stderr));
        let k = &s[..1];
        files.push(
            parts
                .join(format!("cabin-light-9-32v-spread-shard-{k}-of-2.json"))
                .display()
                .to_string(),
        );
    }
    let m = d.join("merged").display().to_string();
    let o = run(&["merge", "--out", &m, &files[1], &files[0], "--no-plots"]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    for f in [
        "cabin-light-9-32v-spread.csv",
        "cabin-light-9-32v-spread.json",
        "cabin-light-9-32v-spread-summary.json",
    ] {
        assert!(
            read(&whole.join(f)) == read(&d.join("merged").join(f)),
            "{f} differs"
        );
    }
    // A limit the scenario format does not know is named.
    let o = run(&[
        "spread",
        &scenario("cabin-light-9-32v.json"),
        "--spec",
        "max_rippel_pct=3",
        "-q",
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        text(&o.stderr).contains("max_rippel_pct"),
        "{}",
        text(&o.stderr)
    );
}

#[test]
fn corners_name_the_worst_corner() {
    let d = scratch("corners");
    let o = run(&[
        "spread",
        &scenario("cabin-light-9-32v.json"),
        "--corners",
        "--out",
        &d.display().to_string(),
        "--no-plots",
        "-q",
    ]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let s = text(&o.stdout);
    assert!(s.contains("32 corners of 5 toleranced inputs"), "{s}");
    assert!(s.contains("worst: inductor.inductance_h"), "{s}");
}

#[test]
fn boundary_prints_value_side_and_margin() {
    // undersized-inductor-dcm runs in DCM at its 6.8 µH: the boundary
    // lies above it.
    let o = run(&[
        "boundary",
        &scenario("undersized-inductor-dcm.json"),
        "--vary",
        "inductor.inductance_h=2u:60u",
        "--json",
    ]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let b: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let v = b["value"].as_f64().unwrap();
    assert!(v > 6.8e-6 && v < 60e-6, "{v}");
    assert_eq!(b["nominal_ccm"], false);
    assert_eq!(b["ccm_above"], true);
    let (lo, hi) = (
        b["bracket"][0].as_f64().unwrap(),
        b["bracket"][1].as_f64().unwrap(),
    );
    assert!((hi - lo) / v <= 1e-3);
    // The run one step either side of the boundary has the mode it says.
    for (f, want) in [(0.99, "dcm"), (1.01, "ccm")] {
        let set = format!("inductor.inductance_h={}", v * f);
        let o = run(&[
            "run",
            &scenario("undersized-inductor-dcm.json"),
            "--set",
            &set,
            "--json",
        ]);
        let r: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
        let mode = r["conduction_mode"].as_str().unwrap();
        assert!(
            mode == want || mode == "boundary",
            "at {f}·boundary: {mode}"
        );
    }
    // No crossing in the bracket: bad input, explained.
    let o = run(&[
        "boundary",
        &scenario("undersized-inductor-dcm.json"),
        "--vary",
        "inductor.inductance_h=1u:3u",
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(
        text(&o.stderr).contains("both ends are DCM"),
        "{}",
        text(&o.stderr)
    );
}

/// The command of an interrupted-study test: a supply sweep of the
/// grow-light scenario on the reference engine (tens of milliseconds a
/// point), long enough to stop midway on any machine.
fn slow_sweep(out: &Path, points: usize, extra: &[&str]) -> Vec<String> {
    common::slow_sweep(out, &format!("supply.voltage_v=range:{points}"), 2, extra)
}

/// The complete lines of a journal (every one must parse), allowing one
/// partly written last line, which is dropped.
fn journal_lines(p: &Path) -> Vec<serde_json::Value> {
    let text = String::from_utf8(read(p)).expect("the journal is UTF-8");
    let Some(end) = text.rfind('\n') else {
        return vec![];
    };
    text[..end]
        .split('\n')
        .enumerate()
        .map(|(k, l)| {
            serde_json::from_str(l).unwrap_or_else(|e| panic!("journal line {}: {e}", k + 1))
        })
        .collect()
}

/// Every file in `dir` is whole: a temporary file never stands alone, and
/// every CSV and JSON file parses.
fn check_files_whole(dir: &Path) {
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        let name = p.file_name().unwrap().to_string_lossy().into_owned();
        // `.NAME.PID.tmp` is write_atomic's temporary name for NAME.
        if let Some(inner) = name.strip_prefix('.').and_then(|n| n.strip_suffix(".tmp")) {
            let real = inner.rsplit_once('.').map_or(inner, |(a, _)| a);
            assert!(dir.join(real).exists(), "{name} is the only copy of {real}");
            continue;
        }
        if name.ends_with(".json") {
            serde_json::from_slice::<serde_json::Value>(&read(&p))
                .unwrap_or_else(|e| panic!("{name}: {e}"));
        } else if name.ends_with(".csv") {
            let t = String::from_utf8(read(&p)).unwrap();
            let width = t.lines().next().unwrap().split(',').count();
            assert!(t.ends_with('\n'), "{name} ends mid-line");
            for l in t.lines() {
                assert!(l.split(',').count() >= width, "{name}: short line {l}");
            }
        }
    }
}

#[test]
fn a_killed_sweep_keeps_its_rows_and_resumes_to_the_same_files() {
    let d = scratch("killed");
    let (full, cut) = (d.join("full"), d.join("cut"));
    let points = 40;
    let o = run_owned(&slow_sweep(&full, points, &[]));
    assert!(o.status.success(), "{}", text(&o.stderr));
    let csv = "grow-light-48v-sweep.csv";
    let json = "grow-light-48v-sweep.json";
    let journal = "grow-light-48v-sweep-journal.jsonl";
    assert!(
        !full.join(journal).exists(),
        "a finished study removes its journal"
    );
    let whole: serde_json::Value = serde_json::from_slice(&read(&full.join(json))).unwrap();
    let rows = whole["rows"].as_array().unwrap();
    assert_eq!(rows.len(), points);

    // Start the same sweep, wait (polling, generous timeout) until its
    // journal holds a few rows, then kill it outright.
    let args = slow_sweep(&cut, points, &[]);
    let mut child = Command::new(env!("CARGO_BIN_EXE_chopwave"))
        .args(&args)
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    let t0 = std::time::Instant::now();
    loop {
        let kept = std::fs::read(cut.join(journal))
            .map(|b| b.iter().filter(|&&c| c == b'\n').count())
            .unwrap_or(0);
        if kept >= 4 {
            break;
        }
        assert!(
            child.try_wait().unwrap().is_none(),
            "the sweep ended before it could be killed"
        );
        assert!(
            t0.elapsed().as_secs() < 300,
            "no rows in the journal after 300 s"
        );
        std::thread::sleep(std::time::Duration::from_millis(5));
    }
    child.kill().unwrap();
    child.wait().unwrap();

    check_files_whole(&cut);
    assert!(
        !cut.join(csv).exists(),
        "the table is written only at the end"
    );
    let lines = journal_lines(&cut.join(journal));
    assert_eq!(lines[0]["journal"], "chopwave-journal-1");
    assert_eq!(lines[0]["manifest"], whole["manifest"]);
    let kept = &lines[1..];
    assert!(
        kept.len() >= 3 && kept.len() < points,
        "{} rows",
        kept.len()
    );
    for l in kept {
        let k = l["row"]["index"].as_u64().unwrap() as usize;
        // Every kept row equals the full run's, to the last printed digit
        // (the table adds each point's verdict, derived from the row).
        let mut want = rows[k].clone();
        if let Some(o) = want.as_object_mut() {
            o.remove("verdict");
            o.remove("warnings");
        }
        assert_eq!(l["row"], want, "row {k}");
    }

    // A resume with other options is refused and leaves the journal be.
    let other = slow_sweep(&cut, points, &["--cold", "--resume"]);
    let o = run_owned(&other);
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    assert!(
        text(&o.stderr).contains("belongs to a different study"),
        "{}",
        text(&o.stderr)
    );
    assert_eq!(journal_lines(&cut.join(journal)).len(), lines.len());

    // Resumed, the study writes the very files one uninterrupted run did.
    let o = run_owned(&slow_sweep(&cut, points, &["--resume"]));
    assert!(o.status.success(), "{}", text(&o.stderr));
    for f in [csv, json] {
        assert!(read(&full.join(f)) == read(&cut.join(f)), "{f} differs");
    }
    assert!(!cut.join(journal).exists());
}

#[test]
fn the_time_limit_writes_what_finished_and_exits_4() {
    let d = scratch("limit");
    let o = run_owned(&slow_sweep(&d, 400, &["--stop-after", "0.3"]));
    assert_eq!(o.status.code(), Some(4), "{}", text(&o.stderr));
    let err = text(&o.stderr);
    assert!(err.contains("time limit of 0.3 s reached"), "{err}");
    assert!(err.contains("--resume"), "{err}");
    assert!(
        text(&o.stdout).contains("INCOMPLETE"),
        "{}",
        text(&o.stdout)
    );
    let t: serde_json::Value =
        serde_json::from_slice(&read(&d.join("grow-light-48v-sweep.json"))).unwrap();
    let inc = &t["manifest"]["incomplete"];
    let ran = inc["ran"].as_u64().unwrap() as usize;
    assert_eq!(inc["of"], 400);
    assert!(ran < 400, "{ran}");
    assert_eq!(t["rows"].as_array().unwrap().len(), ran);
    let csv = std::fs::read_to_string(d.join("grow-light-48v-sweep.csv")).unwrap();
    assert_eq!(csv.lines().count(), ran + 1);
    // The journal is kept (for --resume) and holds the same rows.
    assert_eq!(
        journal_lines(&d.join("grow-light-48v-sweep-journal.jsonl")).len(),
        ran + 1
    );
    check_files_whole(&d);

    // A spread: the summary says how many samples ran of how many.
    let o = run(&[
        "spread",
        &scenario("cabin-light-9-32v.json"),
        "--samples",
        "1000000",
        "--stop-after",
        "0.2",
        "--out",
        &d.display().to_string(),
        "-q",
    ]);
    assert_eq!(o.status.code(), Some(4), "{}", text(&o.stderr));
    let sum: serde_json::Value =
        serde_json::from_slice(&read(&d.join("cabin-light-9-32v-spread-summary.json"))).unwrap();
    assert_eq!(sum["incomplete"]["of"], 1_000_000);
    assert_eq!(sum["incomplete"]["ran"], sum["points"]);
    assert!(!d.join("cabin-light-9-32v-spread-histograms.png").exists());

    // A boundary search out of time says so with the same exit code.
    let o = run(&[
        "boundary",
        &scenario("undersized-inductor-dcm.json"),
        "--vary",
        "inductor.inductance_h=2u:60u",
        "--stop-after",
        "1e-9",
    ]);
    assert_eq!(o.status.code(), Some(4), "{}", text(&o.stderr));
    assert!(text(&o.stderr).contains("time limit reached"));
    // Not a number of seconds: bad input.
    let o = run(&[
        "sweep",
        &scenario("headlamp-4cell.json"),
        "--vary",
        "supply.voltage_v=range:3",
        "--stop-after",
        "0",
    ]);
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    assert!(text(&o.stderr).contains("--stop-after"));
}

#[test]
fn points_that_hit_the_scenario_caps_become_failed_rows() {
    let d = scratch("caps");
    for (set, says) in [
        ("simulation.max_cycles=3", "no steady state after 3 cycles"),
        ("simulation.max_time_s=2u", "simulated time limit"),
    ] {
        let o = run(&[
            "sweep",
            &scenario("cabin-light-9-32v.json"),
            "--vary",
            "supply.voltage_v=9,13.8,32",
            "--set",
            set,
            "--out",
            &d.display().to_string(),
            "--no-plots",
            "-q",
        ]);
        assert_eq!(o.status.code(), Some(1), "{set}: {}", text(&o.stderr));
        assert!(text(&o.stderr).contains("3 of 3 points failed"));
        let t: serde_json::Value =
            serde_json::from_slice(&read(&d.join("cabin-light-9-32v-sweep.json"))).unwrap();
        let rows = t["rows"].as_array().unwrap();
        assert_eq!(rows.len(), 3);
        for r in rows {
            assert_eq!(r["status"], "failed");
            let e = r["error"].as_str().unwrap();
            assert!(e.contains(says), "{set}: {e}");
        }
    }
}

/// One entry point: a sweep point is the run of the scenario set to the
/// point's value, to the bit. The grow-light bar has an X7R output
/// capacitor derated by DC bias and LEDs whose forward voltage falls as
/// their junction warms, so its figures come from the bias/temperature
/// loop; a sweep point that ran the circuit at its nominal values read
/// 701 mA at 48 V where `run` read 698 mA. Every metric of each row (part
/// losses included) must equal `run --json --set` at that supply, bit for
/// bit (an independent path: text overrides through the scenario loader,
/// one process per value, against the sweep's points).
#[test]
fn a_sweep_point_equals_run_with_the_value_set() {
    let out = scratch("one-entry");
    let file = scenario("grow-light-48v.json");
    let o = run(&[
        "--quiet",
        "sweep",
        &file,
        "--vary",
        "supply.voltage_v=40,48",
        "--no-plots",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", text(&o.stderr));
    let table: serde_json::Value =
        serde_json::from_slice(&read(&out.join("grow-light-48v-sweep.json"))).unwrap();
    let rows = table["rows"].as_array().unwrap();
    assert_eq!(rows.len(), 2);
    for row in rows {
        let v = row["inputs"][0].as_f64().unwrap();
        let o = run(&[
            "--quiet",
            "run",
            &file,
            "--json",
            "--set",
            &format!("supply.voltage_v={v}"),
        ]);
        assert!(o.status.success(), "{}", text(&o.stderr));
        let report: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
        // The loop really ran (the case this test is about).
        assert!(report["iteration"]["runs"].as_u64().unwrap() > 1, "{v} V");
        let metrics = row["metrics"].as_object().unwrap();
        assert!(metrics.len() > 30);
        for (name, cell) in metrics {
            let mut at = &report;
            for part in name.split('.') {
                at = &at[part];
            }
            match (cell.as_f64(), at.as_f64()) {
                (Some(a), Some(b)) => assert_eq!(
                    a.to_bits(),
                    b.to_bits(),
                    "{name} at {v} V: sweep {a}, run {b}"
                ),
                _ => assert_eq!(cell, at, "{name} at {v} V"),
            }
        }
    }
    let _ = std::fs::remove_dir_all(&out);
}
