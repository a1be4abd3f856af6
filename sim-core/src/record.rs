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
pub(crate) type Sample = [f64; 7];

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
///
/// A bounded recorder thins by whole cycles: when full it drops every
/// other recorded cycle (all its samples) and from then on records every
/// 2ᵏ-th cycle whole. Every kept cycle therefore keeps its turn-on sample
/// and its true shape, so neither a plot nor a settling measure sees a
/// stretch made of pieces of different cycles.
#[derive(Debug, Clone)]
pub struct Recorder {
    samples: Vec<Sample>,
    cycle_starts: Vec<f64>,
    /// Index in `samples` of each kept cycle's turn-on sample (aligned
    /// with `cycle_starts`, except a kept cycle still waiting for it).
    cycle_first: Vec<usize>,
    /// Interior samples per interval.
    pub per_interval: usize,
    cap: usize,
    cycle_stride: u64,
    cycles_seen: u64,
    /// The current cycle is recorded.
    keep_cycle: bool,
    /// The next sample is the current cycle's turn-on sample.
    pending_start: bool,
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
            cycle_first: Vec::new(),
            per_interval,
            cap,
            cycle_stride: 1,
            cycles_seen: 0,
            keep_cycle: true,
            pending_start: false,
        }
    }

    /// Whether the coming interval should be recorded: every interval of
    /// a kept cycle, none of a cycle thinned out.
    pub fn wants_interval(&mut self) -> bool {
        self.keep_cycle
    }

    /// Adds a sample.
    pub fn push(&mut self, s: Sample) {
        if self.pending_start {
            self.cycle_first.push(self.samples.len());
            self.pending_start = false;
        }
        self.samples.push(s);
        if self.cap > 0 && self.samples.len() >= self.cap {
            self.thin();
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
                if self.pending_start {
                    // The last cycle's end is this cycle's turn-on.
                    self.cycle_first.push(self.samples.len() - 1);
                    self.pending_start = false;
                }
                return;
            }
        }
        self.push(s);
    }

    /// Marks the start of a switching cycle. A bounded recorder that has
    /// filled up records only every 2ᵏ-th cycle (whole), so a
    /// million-cycle start-up holds no per-cycle list either.
    pub fn cycle_start(&mut self, t: f64) {
        let c = self.cycles_seen;
        self.cycles_seen += 1;
        self.keep_cycle = c.is_multiple_of(self.cycle_stride);
        self.pending_start = false;
        if self.keep_cycle {
            self.cycle_starts.push(t);
            self.pending_start = true;
        }
    }

    /// The turn-on sample of the latest recorded cycle and how many cycles
    /// ago (0: the cycle now running or just finished) that cycle began.
    pub fn latest_turn_on(&self) -> Option<(u64, Sample)> {
        let k = *self.cycle_first.last()?;
        let kept = self.cycle_first.len() as u64;
        // Kept cycles are 0, s, 2s, ... (s the stride), in order.
        let ordinal = (kept - 1) * self.cycle_stride;
        let ago = self.cycles_seen.saturating_sub(1).saturating_sub(ordinal);
        Some((ago, self.samples[k]))
    }

    /// Halves the held samples: every other recorded cycle is dropped
    /// whole (the first kept), and the cycle stride doubles. A single
    /// cycle too long for the cap keeps every other sample instead.
    fn thin(&mut self) {
        while self.samples.len() >= self.cap {
            if self.cycle_starts.len() < 2 {
                keep_every_other(&mut self.samples);
                for f in &mut self.cycle_first {
                    *f /= 2;
                }
                continue;
            }
            let n = self.samples.len();
            let mut kept = Vec::with_capacity(self.cap);
            let mut firsts = Vec::with_capacity(self.cycle_first.len() / 2 + 1);
            for (j, &a) in self.cycle_first.iter().enumerate() {
                if j % 2 == 1 {
                    continue;
                }
                let b = self.cycle_first.get(j + 1).copied().unwrap_or(n);
                firsts.push(kept.len());
                kept.extend_from_slice(&self.samples[a..b]);
            }
            // The cycle now running, if its turn-on is recorded, is the
            // last of `cycle_first`; one still waiting is the last start.
            let running = self.cycle_starts.len() - 1;
            if running % 2 == 1 {
                self.keep_cycle = false;
                self.pending_start = false;
            }
            self.samples.clear();
            self.samples.extend_from_slice(&kept);
            self.cycle_first = firsts;
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

/// Distance below which a start-up counts as settled: the inductor and
/// LED currents at a turn-on within this fraction of the steady LED
/// average, and the LED and input-node voltages within this fraction of
/// their steady values (0.1 %).
pub const SETTLED_FRACTION: f64 = 1e-3;

impl Waveform {
    /// Rows of the turn-on samples, one per recorded cycle start (the
    /// first sample at or after each start time).
    pub fn turn_on_rows(&self) -> Vec<usize> {
        let t = self.data.column(COL_TIME);
        let n = t.len();
        let mut out = Vec::with_capacity(self.cycle_starts_s.len());
        let mut k = 0;
        for &ts in &self.cycle_starts_s {
            while k < n && t[k] < ts {
                k += 1;
            }
            if k < n {
                out.push(k);
            }
        }
        out
    }

    fn row(&self, k: usize) -> Sample {
        let mut s = [0.0; 7];
        for (c, v) in s.iter_mut().enumerate() {
            *v = self.data[[k, c]];
        }
        s
    }

    /// The turn-on samples of the recorded cycles.
    pub fn turn_on_samples(&self) -> Vec<Sample> {
        self.turn_on_rows()
            .into_iter()
            .map(|k| self.row(k))
            .collect()
    }
}

/// Relative distance of a turn-on sample from the nearest of the steady
/// orbit's turn-on samples: the inductor and LED currents against
/// `current_ref_a`, the LED and input-node voltages against their steady
/// values (the largest of the four). Infinite when there is no steady
/// sample.
pub fn distance_from_steady(s: &Sample, steady_on: &[Sample], current_ref_a: f64) -> f64 {
    let i_ref = current_ref_a.abs().max(1e-9);
    steady_on
        .iter()
        .map(|q| {
            let di = (s[COL_IL] - q[COL_IL])
                .abs()
                .max((s[COL_ILED] - q[COL_ILED]).abs())
                / i_ref;
            let dv = |c: usize| (s[c] - q[c]).abs() / q[c].abs().max(1e-9);
            di.max(dv(COL_VLED)).max(dv(COL_VIN))
        })
        .fold(f64::INFINITY, f64::min)
}

/// The settling time of a start-up: from its first sample to the first
/// recorded turn-on after which every recorded turn-on lies within
/// `fraction` of the steady orbit (see [`distance_from_steady`]). `None`
/// when the last recorded turn-on is not within it (the recording ended
/// before settling) or nothing was recorded. Both engines' start-ups are
/// measured by this one rule, from their recorded samples.
pub fn settle_time_s(
    startup: &Waveform,
    steady: &Waveform,
    current_ref_a: f64,
    fraction: f64,
) -> Option<f64> {
    if startup.is_empty() {
        return None;
    }
    let steady_on = steady.turn_on_samples();
    let on = startup.turn_on_samples();
    let last_out = on
        .iter()
        .rposition(|s| distance_from_steady(s, &steady_on, current_ref_a) > fraction);
    let t0 = startup.data[[0, COL_TIME]];
    match last_out {
        None => on.first().map(|s| s[COL_TIME] - t0),
        Some(k) if k + 1 < on.len() => Some(on[k + 1][COL_TIME] - t0),
        Some(_) => None,
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

    /// Thinning drops whole cycles: every cycle left holds all its
    /// samples, starting with its turn-on sample at its start time, and
    /// the latest kept turn-on is reported with how long ago it began.
    /// (Thinning by samples and by intervals kept pieces of different
    /// cycles, e.g. only every on-interval.)
    #[test]
    fn thinning_keeps_whole_cycles() {
        let per_cycle = 7;
        let mut r = Recorder::new(0, 500);
        for c in 0..10_000u32 {
            let t0 = f64::from(c);
            r.cycle_start(t0);
            for j in 0..per_cycle {
                if r.wants_interval() {
                    let t = t0 + f64::from(j) / f64::from(per_cycle);
                    r.push_unless_repeat([t, f64::from(c), f64::from(j), 0.0, 0.0, 0.0, 1.0]);
                }
            }
            let (ago, on) = r.latest_turn_on().unwrap();
            assert_eq!(on[0].to_bits(), (f64::from(c) - ago as f64).to_bits());
            assert!(r.samples.len() < 500);
        }
        let w = r.finish();
        let rows = w.turn_on_rows();
        assert_eq!(rows.len(), w.cycle_starts_s.len());
        for (k, &row) in rows.iter().enumerate() {
            let c = w.data[[row, COL_IL]];
            assert!((w.data[[row, COL_TIME]] - w.cycle_starts_s[k]).abs() < 1e-12);
            assert!(
                w.data[[row, COL_ILED]].abs() < 1e-12,
                "cycle {c} starts mid-cycle"
            );
            let end = rows.get(k + 1).copied().unwrap_or(w.len());
            assert_eq!(end - row, per_cycle as usize, "cycle {c} is not whole");
            for j in row..end {
                assert!((w.data[[j, COL_IL]] - c).abs() < 1e-12);
            }
        }
    }
}
