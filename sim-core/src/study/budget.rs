//! What a request will cost before it runs: memory, output size and
//! points, estimated from the scenario and the study's size, and the
//! budget they are held to.
//!
//! Every setting can be inside its own documented range while a
//! combination is not (recorded cycles × samples per interval, a grid of
//! two long axes, a billion Monte Carlo samples): such a request would
//! fill memory or disk, or run for days, before saying anything. The
//! estimate is an upper bound made from the settings alone (no run); a
//! request above the [`Budget`] is refused with a [`BudgetError`] naming
//! the fields that drive it, and a caller may raise the budget on
//! explicit request.

use crate::scenario::Scenario;

/// Bytes of one recorded waveform sample (seven `f64` columns).
pub(crate) const SAMPLE_BYTES: u64 = 7 * 8;

/// Bytes of one sample in the waveform CSV, at most (seven numbers of up
/// to 24 characters and their separators).
pub(crate) const CSV_SAMPLE_BYTES: u64 = 7 * 25;

/// Samples the bounded start-up recorder holds at most.
pub(crate) const STARTUP_SAMPLES: u64 = 400_000;

/// Bytes a study row takes in memory, per metric column (a cell and its
/// share of the row's bookkeeping), at most.
pub(crate) const ROW_BYTES_PER_COLUMN: u64 = 32;

/// Bytes a study row's text takes in the table files and the journal,
/// per metric column (JSON name and value, CSV value), at most.
pub(crate) const ROW_TEXT_BYTES_PER_COLUMN: u64 = 40;

/// Fixed bytes per row (index, inputs, status, error text).
pub(crate) const ROW_FIXED_BYTES: u64 = 512;

/// The most a request may use. The defaults fit an ordinary desktop and
/// every bundled example many times over.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Budget {
    /// Memory, bytes.
    pub memory_bytes: u64,
    /// Output written to files, bytes.
    pub output_bytes: u64,
    /// Points of one study (each a full simulation).
    pub points: u64,
}

impl Default for Budget {
    fn default() -> Self {
        Budget {
            memory_bytes: 4 << 30,
            output_bytes: 16 << 30,
            points: 1_000_000,
        }
    }
}

/// What a request is estimated to need (upper bounds).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Estimate {
    /// Memory, bytes.
    pub memory_bytes: u64,
    /// Output written to files, bytes.
    pub output_bytes: u64,
    /// Simulations run (1 for a single run).
    pub points: u64,
    /// What drives the memory figure, in words naming the fields.
    pub memory_from: String,
    /// What drives the output figure.
    pub output_from: String,
    /// What drives the point count.
    pub points_from: String,
}

/// A request above its budget.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("{what}: about {needed_text}, above the budget of {budget_text}, from {from}")]
pub struct BudgetError {
    /// `memory`, `output` or `points`.
    pub what: &'static str,
    /// The estimate.
    pub needed: u64,
    /// The budget.
    pub budget: u64,
    /// The estimate in words (with its unit).
    pub needed_text: String,
    /// The budget in words.
    pub budget_text: String,
    /// The fields and options behind the figure, and what to change.
    pub from: String,
}

/// A byte count in words (binary prefixes), e.g. `1.0 GiB`.
pub(crate) fn bytes_text(b: u64) -> String {
    const UNITS: [&str; 6] = ["B", "KiB", "MiB", "GiB", "TiB", "PiB"];
    let mut v = b as f64;
    let mut k = 0;
    while v >= 1024.0 && k + 1 < UNITS.len() {
        v /= 1024.0;
        k += 1;
    }
    if k == 0 {
        format!("{b} B")
    } else {
        format!("{v:.1} {}", UNITS[k])
    }
}

/// Intervals between events in one switching cycle, at most: on, off,
/// idle and a blanking or delay, plus a chord boundary of each fitted
/// curve (LED and diode) crossed on the way up and down.
pub(crate) fn intervals_per_cycle(s: &Scenario) -> u64 {
    4 + 4 * u64::from(s.simulation.curve_segments)
}

/// Samples one run records at most over its measured cycles.
pub fn recorded_samples(s: &Scenario) -> u64 {
    let sim = &s.simulation;
    u64::from(sim.record_cycles)
        .saturating_mul(intervals_per_cycle(s))
        .saturating_mul(u64::from(sim.samples_per_interval) + 2)
}

/// Memory of one run: its measured recording and, when asked for, the
/// bounded start-up recording.
fn run_memory(s: &Scenario) -> u64 {
    let startup = if s.simulation.record_startup {
        STARTUP_SAMPLES * SAMPLE_BYTES
    } else {
        0
    };
    recorded_samples(s)
        .saturating_mul(SAMPLE_BYTES)
        .saturating_add(startup)
}

fn recording_words(s: &Scenario) -> String {
    let sim = &s.simulation;
    format!(
        "simulation.record_cycles = {} × simulation.samples_per_interval = {} (up to {} \
         intervals per cycle with simulation.curve_segments = {})",
        sim.record_cycles,
        sim.samples_per_interval,
        intervals_per_cycle(s),
        sim.curve_segments
    )
}

/// The estimate of one `run`; `csv`: the recorded samples are written as
/// CSV.
pub fn run_estimate(s: &Scenario, csv: bool) -> Estimate {
    let output = if csv {
        recorded_samples(s).saturating_mul(CSV_SAMPLE_BYTES)
    } else {
        0
    };
    Estimate {
        memory_bytes: run_memory(s),
        output_bytes: output,
        points: 1,
        memory_from: recording_words(s),
        output_from: format!("the waveform CSV of {}", recording_words(s)),
        points_from: "one run".into(),
    }
}

/// The estimate of a study of `points` points with `metric_columns`
/// columns per row, run on `threads` threads; `points_from` says where
/// the count comes from, in the caller's words (e.g. the option that
/// set it).
pub fn study_estimate(
    s: &Scenario,
    points: u64,
    metric_columns: usize,
    threads: usize,
    points_from: &str,
) -> Estimate {
    let cols = metric_columns as u64;
    let row_memory = ROW_FIXED_BYTES.saturating_add(cols.saturating_mul(ROW_BYTES_PER_COLUMN));
    // The table files (CSV and JSON) and the journal each hold every row.
    let row_text = ROW_FIXED_BYTES.saturating_add(cols.saturating_mul(ROW_TEXT_BYTES_PER_COLUMN));
    let threads = threads.max(1) as u64;
    let memory = points
        .saturating_mul(row_memory)
        .saturating_add(threads.saturating_mul(run_memory(s)));
    Estimate {
        memory_bytes: memory,
        output_bytes: points.saturating_mul(row_text).saturating_mul(3),
        points,
        memory_from: format!(
            "{points_from} rows of {metric_columns} columns, and {threads} thread(s) each \
             recording {}",
            recording_words(s)
        ),
        output_from: format!("{points_from} rows in the CSV, the JSON and the journal"),
        points_from: points_from.to_string(),
    }
}

impl Estimate {
    /// Checks the estimate against `budget`; the first figure above it is
    /// the error. `raise` names how the caller lets a user raise each
    /// figure (`(memory, output, points)`, e.g. command-line options).
    pub fn check(&self, budget: &Budget, raise: [&str; 3]) -> Result<(), BudgetError> {
        let over =
            |what: &'static str, needed: u64, limit: u64, from: &str, bytes: bool, raise: &str| {
                let text = |v: u64| {
                    if bytes {
                        bytes_text(v)
                    } else {
                        format!("{v} points")
                    }
                };
                (needed > limit).then(|| BudgetError {
                    what,
                    needed,
                    budget: limit,
                    needed_text: text(needed),
                    budget_text: text(limit),
                    from: format!("{from}; lower those settings, or raise the budget with {raise}"),
                })
            };
        let first = over(
            "points",
            self.points,
            budget.points,
            &self.points_from,
            false,
            raise[2],
        )
        .or_else(|| {
            over(
                "memory",
                self.memory_bytes,
                budget.memory_bytes,
                &self.memory_from,
                true,
                raise[0],
            )
        })
        .or_else(|| {
            over(
                "output",
                self.output_bytes,
                budget.output_bytes,
                &self.output_from,
                true,
                raise[1],
            )
        });
        match first {
            Some(e) => Err(e),
            None => Ok(()),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const RAISE: [&str; 3] = ["--m", "--o", "--p"];

    #[test]
    fn the_default_template_fits_and_a_huge_recording_does_not() {
        let mut s = crate::scenario::template();
        run_estimate(&s, true)
            .check(&Budget::default(), RAISE)
            .unwrap();
        // Both in range on their own (10 000 each), 4 GB and more together.
        s.simulation.record_cycles = 10_000;
        s.simulation.samples_per_interval = 10_000;
        let e = run_estimate(&s, false)
            .check(&Budget::default(), RAISE)
            .unwrap_err();
        assert_eq!(e.what, "memory");
        // 10 000 × 10 002 samples × (4 + 4 × curve_segments) intervals ×
        // 56 bytes.
        let intervals = 4 + 4 * u64::from(s.simulation.curve_segments);
        assert_eq!(e.needed, 10_000 * 10_002 * intervals * 56);
        let m = e.to_string();
        assert!(m.contains("simulation.record_cycles"), "{m}");
        assert!(m.contains("simulation.samples_per_interval"), "{m}");
        assert!(m.contains("4.0 GiB") && m.contains("--m"), "{m}");
        // A raised budget lets it through.
        let big = Budget {
            memory_bytes: u64::MAX,
            ..Budget::default()
        };
        run_estimate(&s, false).check(&big, RAISE).unwrap();
    }

    #[test]
    fn study_points_and_rows_are_counted() {
        let s = crate::scenario::template();
        let cols = crate::study::rows::metric_columns().len();
        study_estimate(&s, 1000, cols, 2, "--vary")
            .check(&Budget::default(), RAISE)
            .unwrap();
        let e = study_estimate(&s, 1_000_000_000, cols, 2, "--samples 1000000000")
            .check(&Budget::default(), RAISE)
            .unwrap_err();
        assert_eq!(e.what, "points");
        assert!(e.to_string().contains("--samples 1000000000"), "{e}");
        // Saturating, never overflowing.
        let e = study_estimate(&s, u64::MAX, usize::MAX, usize::MAX, "x");
        assert_eq!(e.memory_bytes, u64::MAX);
    }

    #[test]
    fn bytes_in_words() {
        assert_eq!(bytes_text(512), "512 B");
        assert_eq!(bytes_text(1 << 30), "1.0 GiB");
        assert_eq!(bytes_text(3 << 19), "1.5 MiB");
    }
}
