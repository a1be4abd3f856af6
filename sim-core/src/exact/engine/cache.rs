//! The exact engine's region cache (each region's linear model,
//! decomposition, events and timer transitions, kept until the curve
//! fits change) and the curve re-fits that empty it.

use super::*;

/// Regions remembered with their matrices and eigen-decompositions.
pub(super) const CACHE_SIZE: usize = 64;

/// A cache key no region packs to.
pub(super) const NO_KEY: u32 = u32::MAX;

/// A region packed into one word for the cache lookup: the two switches
/// in the low bits, then the diode, LED (one more than the segment, 0 for
/// none) and inductance segments a byte each. The LED byte stays below
/// 0xFF (there are at most [`crate::devices::MAX_SEGMENTS`] segments), so
/// no region packs to [`NO_KEY`].
pub(super) fn region_key(r: Region) -> u32 {
    let led = r.led_segment.map_or(0, |k| u32::from(k) + 1) & 0xFF;
    u32::from(r.switch_on)
        | (u32::from(r.conducting) << 1)
        | (u32::from(r.diode_segment) * KEY_DIODE_STEP)
        | (led * KEY_LED_STEP)
        | (u32::from(r.l_segment) * KEY_L_STEP)
}

/// One diode segment up in [`region_key`].
pub(super) const KEY_DIODE_STEP: u32 = 1 << 8;
/// One LED segment up in [`region_key`].
pub(super) const KEY_LED_STEP: u32 = 1 << 16;
/// One inductance segment up in [`region_key`].
pub(super) const KEY_L_STEP: u32 = 1 << 24;

/// One remembered region.
#[derive(Debug, Clone, Copy)]
pub(super) struct CacheEntry {
    pub(super) lin: Linear,
    pub(super) spectral: Option<Spectral>,
    pub(super) events: EventSet,
}

impl ExactEngine {
    /// Re-fits the exponential curves when the currents the last cycle
    /// visited left the fitted range or use under half of it, so the fit
    /// follows the exponential curve cycle by cycle and settles with the
    /// circuit.
    pub(super) fn refit(&mut self) {
        if self.freeze_fits {
            self.led_range = (f64::INFINITY, f64::NEG_INFINITY);
            self.diode_range = (f64::INFINITY, f64::NEG_INFINITY);
            return;
        }
        let (segs, tol) = (self.curve_segments, self.curve_tolerance_v);
        let mut changed = false;
        let merge = |a: (f64, f64), b: (f64, f64)| {
            if a.0.is_finite() {
                (a.0.min(b.0), a.1.max(b.1))
            } else {
                a
            }
        };
        self.led_range = merge(self.led_range, self.cover[0]);
        self.diode_range = merge(self.diode_range, self.cover[1]);
        if let Some(dev) = self.circuit.led_exact {
            let (lo, hi) = self.led_range;
            // A current a hair below zero where it reached zero is zero.
            if lo.is_finite() && self.circuit.led.needs_refit(lo.max(0.0), hi) {
                self.circuit.led = PwlCurve::fit_with_slope(
                    &dev,
                    lo.max(0.0),
                    hi,
                    segs,
                    tol,
                    self.curve_slope_tolerance,
                );
                changed = true;
            }
        }
        if let Some(dev) = self.circuit.diode_exact {
            let (lo, hi) = self.diode_range;
            if lo.is_finite() && self.circuit.diode.needs_refit(lo.max(0.0), hi) {
                self.circuit.diode = PwlCurve::fit(&dev, lo.max(0.0), hi, segs, tol);
                changed = true;
            }
        }
        self.led_range = (f64::INFINITY, f64::NEG_INFINITY);
        self.diode_range = (f64::INFINITY, f64::NEG_INFINITY);
        if changed {
            self.refits += 1;
            // Every cached model was built from the old fits.
            self.cache_keys = [NO_KEY; CACHE_SIZE];
            // Segment indices refer to the new fits.
            self.set_region(self.circuit.region_for(self.cmd.switch_on, &self.x));
        }
    }

    /// Makes every later LED and diode fit cover these currents (A, low
    /// and high) as well as those each cycle visits, and re-fits now if
    /// the present fits miss them: for currents found by measuring (an
    /// extreme inside an interval that the per-interval estimate missed),
    /// so the next fit's error bound holds there.
    pub fn cover_currents(&mut self, led_a: (f64, f64), diode_a: (f64, f64)) {
        let merge = |a: (f64, f64), b: (f64, f64)| (a.0.min(b.0), a.1.max(b.1));
        self.cover = [merge(self.cover[0], led_a), merge(self.cover[1], diode_a)];
        let frozen = std::mem::replace(&mut self.freeze_fits, false);
        self.led_range = self.cover[0];
        self.diode_range = self.cover[1];
        self.refit();
        self.freeze_fits = frozen;
    }

    /// The cache slot holding a region's linear model and decomposition,
    /// filling it if needed.
    pub(super) fn model_slot(&mut self, region: Region) -> usize {
        let key = self.region_key;
        debug_assert_eq!(key, region_key(region));
        // In a periodic orbit each region is followed by the same one: try
        // the slot that followed the last one used, then the last one
        // itself (a timer interval in the region a threshold ended), before
        // scanning.
        let next = self.cache_successor[self.cache_last];
        let k = if self.cache_keys[next] == key {
            next
        } else if self.cache_keys[self.cache_last] == key {
            self.cache_last
        } else if let Some(k) = self.cache_keys.iter().position(|k| *k == key) {
            k
        } else {
            let lin = self.circuit.linearize(region);
            let spectral = Spectral::new(&lin.m);
            let events = region_events(&self.circuit, region, &lin);
            let k = self.cache_next;
            self.cache[k] = Some(CacheEntry {
                lin,
                spectral,
                events,
            });
            self.cache_keys[k] = key;
            self.cache_next = (self.cache_next + 1) % CACHE_SIZE;
            k
        };
        self.cache_successor[self.cache_last] = k;
        self.cache_last = k;
        k
    }
}
