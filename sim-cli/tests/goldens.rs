//! Golden outputs: the bytes `chopwave` writes for every bundled scenario
//! (`run` as text and as JSON) and for one sweep, one spread and one
//! boundary search, compared with the files recorded under
//! `sim-cli/tests/goldens/`.
//!
//! These pin behaviour while the code is reshaped: a refactoring must leave
//! every byte alone. A change that is meant to move a figure re-records the
//! goldens on purpose, and its commit says which figures moved and why:
//!
//! ```sh
//! CHOPWAVE_BLESS=1 cargo test -p sim-cli --test goldens
//! ```

mod common;

use common::{scratch, workspace_root};
use std::path::{Path, PathBuf};

fn golden_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/goldens")
}

/// Runs `chopwave` from the workspace root (so scenario paths in the
/// output are the relative ones the goldens hold) and returns its stdout;
/// panics with its stderr if it did not exit 0.
fn chopwave(args: &[&str]) -> Vec<u8> {
    let out = common::chopwave()
        .current_dir(workspace_root())
        .arg("--quiet")
        .args(args)
        .output()
        .expect("the chopwave binary runs");
    assert!(
        out.status.success(),
        "chopwave {args:?} failed ({}):\n{}",
        out.status,
        common::stderr(&out)
    );
    out.stdout
}

/// Compares `actual` with the golden file `name`, or records it when
/// `CHOPWAVE_BLESS` is set. Returns a description of the mismatch.
fn compare(name: &str, actual: &[u8]) -> Option<String> {
    let path = golden_dir().join(name);
    if std::env::var_os("CHOPWAVE_BLESS").is_some() {
        std::fs::create_dir_all(golden_dir()).unwrap();
        std::fs::write(&path, actual).unwrap();
        return None;
    }
    let expected = match std::fs::read(&path) {
        Ok(b) => b,
        Err(e) => {
            return Some(format!(
                "{name}: no golden ({e}); record with CHOPWAVE_BLESS=1"
            ))
        }
    };
    if expected == actual {
        return None;
    }
    let (exp, act) = (
        String::from_utf8_lossy(&expected),
        String::from_utf8_lossy(actual),
    );
    let first = exp
        .lines()
        .zip(act.lines())
        .enumerate()
        .find(|(_, (e, a))| e != a);
    Some(match first {
        Some((i, (e, a))) => format!(
            "{name}: line {} differs\n  golden: {e}\n  now:    {a}",
            i + 1
        ),
        None => format!(
            "{name}: lengths differ ({} golden lines, {} now)",
            exp.lines().count(),
            act.lines().count()
        ),
    })
}

fn assert_all(mismatches: Vec<Option<String>>) {
    let bad: Vec<String> = mismatches.into_iter().flatten().collect();
    assert!(
        bad.is_empty(),
        "{} golden output(s) changed:\n{}",
        bad.len(),
        bad.join("\n")
    );
}

/// Every file a study wrote into `dir`, in name order (the lock file, which
/// holds a process id, aside).
fn study_files(dir: &Path) -> Vec<(String, Vec<u8>)> {
    let mut files: Vec<(String, Vec<u8>)> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap())
        .filter(|e| e.file_type().unwrap().is_file())
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| !n.ends_with(".lock"))
        .map(|n| {
            let bytes = std::fs::read(dir.join(&n)).unwrap();
            (n, bytes)
        })
        .collect();
    files.sort();
    files
}

#[test]
fn every_bundled_scenario_runs_to_its_golden_text_and_json() {
    let mut names: Vec<String> = std::fs::read_dir(workspace_root().join("scenarios"))
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".json"))
        .collect();
    names.sort();
    assert!(names.len() >= 6, "bundled scenarios: {names:?}");
    let mut results = Vec::new();
    for name in &names {
        let file = format!("scenarios/{name}");
        let stem = name.trim_end_matches(".json");
        results.push(compare(
            &format!("{stem}.run.txt"),
            &chopwave(&["run", &file]),
        ));
        results.push(compare(
            &format!("{stem}.run.json"),
            &chopwave(&["run", "--json", &file]),
        ));
    }
    assert_all(results);
}

#[test]
fn a_sweep_writes_its_golden_table() {
    let out = scratch("sweep");
    let stdout = chopwave(&[
        "sweep",
        "scenarios/grow-light-48v.json",
        "--vary",
        "supply.voltage_v=40:56:5",
        "--no-plots",
        "--out",
        out.to_str().unwrap(),
    ]);
    let mut results = vec![compare("sweep.stdout.txt", &stdout)];
    let files = study_files(&out);
    assert_eq!(
        files.len(),
        2,
        "sweep files: {:?}",
        files.iter().map(|f| &f.0).collect::<Vec<_>>()
    );
    for (name, bytes) in files {
        results.push(compare(&format!("sweep.{name}"), &bytes));
    }
    let _ = std::fs::remove_dir_all(&out);
    assert_all(results);
}

#[test]
fn a_spread_writes_its_golden_tables() {
    let out = scratch("spread");
    let stdout = chopwave(&[
        "spread",
        "scenarios/cabin-light-9-32v.json",
        "--samples",
        "24",
        "--seed",
        "7",
        "--threads",
        "2",
        "--no-plots",
        "--out",
        out.to_str().unwrap(),
    ]);
    let mut results = vec![compare("spread.stdout.txt", &stdout)];
    let files = study_files(&out);
    assert_eq!(
        files.len(),
        3,
        "spread files: {:?}",
        files.iter().map(|f| &f.0).collect::<Vec<_>>()
    );
    for (name, bytes) in files {
        results.push(compare(&format!("spread.{name}"), &bytes));
    }
    let _ = std::fs::remove_dir_all(&out);
    assert_all(results);
}

#[test]
fn a_boundary_search_gives_its_golden_answer() {
    let out = scratch("boundary");
    let args = [
        "boundary",
        "scenarios/undersized-inductor-dcm.json",
        "--vary",
        "inductor.inductance_h=1u:200u",
        "--no-plots",
        "--out",
        out.to_str().unwrap(),
    ];
    let text = chopwave(&args);
    let mut with_json = args.to_vec();
    with_json.push("--json");
    let json = chopwave(&with_json);
    let _ = std::fs::remove_dir_all(&out);
    assert_all(vec![
        compare("boundary.stdout.txt", &text),
        compare("boundary.stdout.json", &json),
    ]);
}
