//! Recorded waveforms.
//!
//! A [`Waveform`] is an `ndarray` table, one row per sample and one column
//! per [`COLUMNS`] entry. Samples fall at every event (twice, before and
//! after, where a signal jumps: see [`Recorder::push_unless_repeat`]) and
//! at evenly spaced points in between.
//! The start-up recorder keeps memory bounded by dropping every other
//! sample and thinning later intervals whenever it is full.

use ndarray::Array2;

/// Column names and units of a [`Waveform`], in order.
pub const COLUMNS: [(&str, &str); 7] = [
    ("time", "s"),
    ("inductor_current", "A"),
    ("led_current", "A"),
    ("led_voltage", "V"),
    ("switch_node_voltage", "V"),
    ("input_node_voltage", "V"),
    ("switch_on", "1"),
];

/// Column index of time.
pub const COL_TIME: usize = 0;
/// Column index of the inductor current.
pub const COL_IL: usize = 1;
/// Column index of the LED current.
pub const COL_ILED: usize = 2;
/// Column index of the LED voltage.
pub const COL_VLED: usize = 3;
/// Column index of the switch-node voltage.
pub const COL_VSW: usize = 4;
/// Column index of the input-node voltage.
pub const COL_VIN: usize = 5;
/// Column index of the switch state (1 on, 0 off).
pub const COL_SWITCH: usize = 6;

/// One recorded sample.
pub type Sample = [f64; 7];

/// A recorded stretch of waveforms.
#[derive(Debug, Clone, PartialEq)]
pub struct Waveform {
    /// Samples × [`COLUMNS`].
    pub data: Array2<f64>,
    /// Start times of the switching cycles covered, s (every one, except
    /// in a bounded recording that filled up: then every 2ᵏ-th).
    pub cycle_starts_s: Vec<f64>,
}

impl Waveform {
    /// Number of samples.
    pub fn len(&self) -> usize {
        self.data.nrows()
    }
    /// No samples.
    pub fn is_empty(&self) -> bool {
        self.data.nrows() == 0
    }
    /// One column as a view.
    pub fn column(&self, c: usize) -> ndarray::ArrayView1<'_, f64> {
        self.data.column(c)
    }
}

/// Collects samples; allocation happens only here, never in the unrecorded
/// hot loop.
#[derive(Debug, Clone)]
pub struct Recorder {
    samples: Vec<Sample>,
    cycle_starts: Vec<f64>,
    /// Interior samples per interval.
    pub per_interval: usize,
    cap: usize,
    stride: u64,
    intervals: u64,
    cycle_stride: u64,
    cycles_seen: u64,
}

impl Recorder {
    /// A recorder with `per_interval` interior samples per interval and
    /// at most `cap` samples held (0: unbounded).
    pub fn new(per_interval: usize, cap: usize) -> Recorder {
        Recorder {
            // A bounded recorder reserves its cap at once (address space
            // only until written), so growing never copies the buffer.
            samples: Vec::with_capacity(cap),
            cycle_starts: Vec::new(),
            per_interval,
            cap,
            stride: 1,
            intervals: 0,
            cycle_stride: 1,
            cycles_seen: 0,
        }
    }

    /// Whether the coming interval should be recorded (thinning when full).
    pub fn wants_interval(&mut self) -> bool {
        self.intervals += 1;
        self.intervals.is_multiple_of(self.stride)
    }

    /// Adds a sample.
    pub fn push(&mut self, s: Sample) {
        self.samples.push(s);
        if self.cap > 0 && self.samples.len() >= self.cap {
            keep_every_other(&mut self.samples);
            self.stride *= 2;
        }
    }

    /// Adds a sample unless it repeats the last one: the same time and
    /// every value equal to within round-off (1e-12 relative). An event
    /// where no signal jumps (a timer, a chord boundary of a fitted curve)
    /// is then sampled once, one where a signal jumps twice.
    pub fn push_unless_repeat(&mut self, s: Sample) {
        if let Some(last) = self.samples.last() {
            let close = |k: usize| (last[k] - s[k]).abs() <= 1e-12 * (last[k].abs() + s[k].abs());
            let same = last[0].to_bits() == s[0].to_bits() && (1..s.len()).all(close);
            if same {
                return;
            }
        }
        self.push(s);
    }

    /// Marks the start of a switching cycle. A bounded recorder thins the
    /// cycle starts as it thins samples (every other one kept when full),
    /// so a million-cycle start-up holds no per-cycle list either.
    pub fn cycle_start(&mut self, t: f64) {
        // Cycles 0, s, 2s, ... (s the stride) are kept: halving the list
        // keeps 0, 2s, 4s, ..., the same phase as the doubled stride.
        let c = self.cycles_seen;
        self.cycles_seen += 1;
        if !c.is_multiple_of(self.cycle_stride) {
            return;
        }
        self.cycle_starts.push(t);
        if self.cap > 0 && self.cycle_starts.len() >= self.cap {
            keep_every_other(&mut self.cycle_starts);
            self.cycle_stride *= 2;
        }
    }

    /// The samples as a waveform (the sample buffer is reused, not copied).
    pub fn finish(self) -> Waveform {
        let n = self.samples.len();
        let flat: Vec<f64> = self.samples.into_flattened();
        Waveform {
            data: Array2::from_shape_vec((n, COLUMNS.len()), flat)
                .unwrap_or_else(|_| Array2::zeros((0, COLUMNS.len()))),
            cycle_starts_s: self.cycle_starts,
        }
    }
}

/// Drops every other element (the 2nd, 4th, ...), keeping the first.
fn keep_every_other<T>(v: &mut Vec<T>) {
    let mut k = 0;
    v.retain(|_| {
        k += 1;
        k % 2 == 1
    });
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A sample repeating the last one (same time, values equal to
    /// round-off) is dropped; a jump in any value, or a later time, is kept.
    #[test]
    fn repeated_samples_are_kept_once() {
        let mut r = Recorder::new(0, 0);
        let a = [1e-3, 0.5, 0.5, 9.0, 12.0, 12.0, 1.0];
        r.push(a);
        let mut round_off = a;
        round_off[3] = 9.0 * (1.0 + 4e-16);
        r.push_unless_repeat(round_off);
        assert_eq!(r.samples.len(), 1);
        let mut jump = a;
        jump[4] = -0.4;
        r.push_unless_repeat(jump);
        assert_eq!(r.samples.len(), 2);
        let mut later = jump;
        later[0] = 1e-3 + 1e-12;
        r.push_unless_repeat(later);
        assert_eq!(r.samples.len(), 3);
    }

    /// A bounded recorder never holds more than its cap of samples or of
    /// cycle starts, however long the run, and keeps the start of the run.
    #[test]
    fn bounded_recorder_stays_bounded() {
        let cap = 100;
        let mut r = Recorder::new(0, cap);
        for c in 0..100_000u32 {
            r.cycle_start(f64::from(c));
            if r.wants_interval() {
                r.push([f64::from(c); 7]);
            }
            assert!(r.samples.len() < cap && r.cycle_starts.len() < cap);
        }
        let w = r.finish();
        assert!(w.len() >= cap / 4, "{} samples", w.len());
        assert!(w.cycle_starts_s.len() >= cap / 4);
        // Exact: these are the values pushed first.
        assert_eq!(w.cycle_starts_s[0].to_bits(), 0.0f64.to_bits());
        assert_eq!(w.data[[0, COL_TIME]].to_bits(), 0.0f64.to_bits());
        // Cycle starts thinned evenly: equally spaced.
        let gaps: Vec<f64> = w.cycle_starts_s.windows(2).map(|p| p[1] - p[0]).collect();
        assert!(gaps.iter().all(|g| (g - gaps[0]).abs() < 0.5), "{gaps:?}");
    }
}
