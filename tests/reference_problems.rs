//! The reference problems of `chopwave_suite::reference_problems` (ideal
//! circuits with their closed-form answers, shared with the benchmark
//! `benches/reference_problems.rs`): every answer within its tolerance,
//! and the checker itself able to fail.

use chopwave_suite::reference_problems::{self, ReferenceProblem};

#[test]
fn every_reference_problem_meets_its_answers() {
    let problems = reference_problems::all();
    assert!(problems.len() >= 5);
    let mut wrong = Vec::new();
    for p in &problems {
        assert!(!p.answers.is_empty(), "{}", p.name);
        match p.run() {
            Ok(m) => wrong.extend(p.mismatches(&m)),
            Err(e) => wrong.push(e),
        }
    }
    assert!(wrong.is_empty(), "{}", wrong.join("\n"));
}

#[test]
fn the_checker_flags_a_figure_off_by_twice_its_tolerance() {
    // A figure moved by twice its allowed error, a figure that is not a
    // number (NaN serialises to null) and a name with no figure are each
    // reported; the true figures are not.
    let p: ReferenceProblem = reference_problems::constant_off_time_ccm();
    let m = p.run().unwrap();
    assert!(p.mismatches(&m).is_empty());
    let mut off = m;
    let a = p
        .answers
        .iter()
        .find(|a| a.figure == "switching_frequency_hz")
        .unwrap();
    off.switching_frequency_hz = a.value * (1.0 + 2.0 * a.max_relative);
    let found = p.mismatches(&off);
    assert_eq!(found.len(), 1, "{found:?}");
    assert!(found[0].contains("switching_frequency_hz"), "{found:?}");
    let mut nan = m;
    nan.duty = f64::NAN;
    assert_eq!(p.mismatches(&nan).len(), 1);
    let mut renamed = p.clone();
    renamed.answers[0].figure = "no_such_figure";
    assert!(renamed.mismatches(&m)[0].contains("no figure"));
}
