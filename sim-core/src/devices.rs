//! Nonlinear device curves (LED string, Shockley diode) and their
//! piecewise-linear fits.
//!
//! The exact engine needs every element linear between events, so an
//! exponential curve v = count·(n·Vt·ln(1 + i/Is) + Rs·i) is replaced by a
//! continuous chain of chords ([`PwlCurve`]) over the current range the
//! circuit actually visits; crossing from one chord to the next is an
//! event like any other. The exact curve ([`ExpDevice`]) is kept for the
//! reference engine and to measure the fit error.

use crate::units::{thermal_voltage_v, BOLTZMANN_J_PER_K, ELEMENTARY_CHARGE_C, ZERO_CELSIUS_K};

/// Default band gap of an LED junction's temperature law, eV: gallium
/// nitride at room temperature, 3.4 eV (**from memory**). With XTI = 3 it
/// gives an InGaN LED at 2.6–3.1 V of junction voltage a forward-voltage
/// coefficient of about −1 to −3 mV/K, the range datasheets show.
pub(crate) const LED_BANDGAP_EV: f64 = 3.4;
/// Default saturation-current temperature exponent XTI of an LED (the
/// pn-junction value 3, **from memory**).
pub(crate) const LED_IS_TEMP_EXPONENT: f64 = 3.0;
/// Default band gap of the Shockley diode's temperature law, eV: a
/// Schottky barrier, about 0.69 eV (**from memory**). A silicon pn diode
/// is 1.11 eV with XTI = 3 (**from memory**).
pub(crate) const DIODE_BANDGAP_EV: f64 = 0.69;
/// Default saturation-current temperature exponent XTI of the Shockley
/// diode (Schottky barrier: 2, **from memory**).
pub(crate) const DIODE_IS_TEMP_EXPONENT: f64 = 2.0;
/// Temperature a saturation current holds at unless the scenario says
/// otherwise, °C (the usual datasheet temperature).
pub(crate) const DEFAULT_REFERENCE_C: f64 = 25.0;

/// How a junction's saturation current follows its temperature (Sze,
/// *Physics of Semiconductor Devices*, the diode saturation current's
/// temperature dependence):
/// Is(T) = Is(T0)·(T/T0)^(XTI/n)·exp((E_g/(n·k))·(1/T0 − 1/T)).
///
/// At a fixed current well above Is this makes the junction voltage fall
/// with temperature: dV/dT = (V − E_g/q − XTI·k·T/q)/T.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct JunctionLaw {
    /// Temperature the given saturation current holds at, °C.
    pub reference_temperature_c: f64,
    /// Band-gap energy E_g, eV.
    pub bandgap_ev: f64,
    /// Temperature exponent XTI.
    pub is_temp_exponent: f64,
}

/// A junction's temperature data as a scenario gives them (each optional).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct JunctionInputs {
    /// Temperature the saturation current holds at, °C.
    pub reference_temperature_c: Option<f64>,
    /// Band gap, eV.
    pub bandgap_ev: Option<f64>,
    /// Temperature exponent XTI.
    pub is_temp_exponent: Option<f64>,
    /// Datasheet forward-voltage coefficient of one junction, V/K.
    pub tempco_v_per_k: Option<f64>,
    /// Current at which the coefficient is stated, A.
    pub tempco_current_a: Option<f64>,
}

impl JunctionLaw {
    /// The law from the scenario's data: the band gap is given, derived
    /// from a datasheet coefficient (see [`bandgap_from_tempco_ev`]), or
    /// the default; likewise the exponent and reference temperature.
    /// `is0`, `n`: the saturation current at the reference temperature
    /// and the emission coefficient.
    pub fn resolve(
        inputs: &JunctionInputs,
        is0: f64,
        n: f64,
        default_bandgap_ev: f64,
        default_exponent: f64,
    ) -> JunctionLaw {
        let t0 = inputs
            .reference_temperature_c
            .unwrap_or(DEFAULT_REFERENCE_C);
        let xti = inputs.is_temp_exponent.unwrap_or(default_exponent);
        let eg = match (
            inputs.bandgap_ev,
            inputs.tempco_v_per_k,
            inputs.tempco_current_a,
        ) {
            (Some(eg), _, _) => eg,
            (None, Some(tc), Some(i)) => bandgap_from_tempco_ev(is0, n, t0, xti, tc, i),
            _ => default_bandgap_ev,
        };
        JunctionLaw {
            reference_temperature_c: t0,
            bandgap_ev: eg,
            is_temp_exponent: xti,
        }
    }

    /// The saturation current at `temperature_c`, A, of a junction with
    /// saturation current `is0` at the reference temperature and
    /// emission coefficient `n`.
    pub fn saturation_current_a(&self, is0: f64, n: f64, temperature_c: f64) -> f64 {
        let t0 = self.reference_temperature_c + ZERO_CELSIUS_K;
        let t = temperature_c + ZERO_CELSIUS_K;
        // E_g/k in kelvin: eV → J is the elementary charge.
        let eg_over_k = self.bandgap_ev * ELEMENTARY_CHARGE_C / BOLTZMANN_J_PER_K;
        let ln_ratio =
            (self.is_temp_exponent / n) * (t / t0).ln() + (eg_over_k / n) * (1.0 / t0 - 1.0 / t);
        is0 * ln_ratio.exp()
    }
}

/// The band gap, eV, for which a junction (saturation current `is0` at
/// `reference_c`, emission coefficient `n`, exponent `xti`) has the
/// forward-voltage coefficient `tempco_v_per_k` at `current_a` and the
/// reference temperature. From the model v_j = n·Vt·ln(1 + i/Is(T)):
/// dv_j/dT = (v_j − f·(XTI·Vt + E_g/q))/T with f = i/(i + Is), so
/// E_g/q = (v_j − T·dv_j/dT)/f − XTI·Vt.
pub fn bandgap_from_tempco_ev(
    is0: f64,
    n: f64,
    reference_c: f64,
    xti: f64,
    tempco_v_per_k: f64,
    current_a: f64,
) -> f64 {
    let vt = thermal_voltage_v(reference_c);
    let t0 = reference_c + ZERO_CELSIUS_K;
    let vj = n * vt * (current_a / is0).ln_1p();
    let f = current_a / (current_a + is0);
    (vj - tempco_v_per_k * t0) / f - xti * vt
}

/// Most straight segments a piecewise-linear curve may have.
pub(crate) const MAX_SEGMENTS: usize = 64;

/// Share of a fitted range's top below which a range reaching towards
/// zero current is covered by the tail segment (see [`PwlCurve::fit`]).
pub(crate) const TAIL_SHARE: f64 = 0.01;

/// A string of identical junctions as plain numbers (what an exponential
/// LED load or a Shockley diode states), from which [`ExpDevice::at_temperature`]
/// builds the curve.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct JunctionString {
    /// Number of junctions in series.
    pub count: u32,
    /// Saturation current Is of one junction at the law's reference
    /// temperature, A.
    pub saturation_current_a: f64,
    /// Emission coefficient n (dimensionless).
    pub emission_coefficient: f64,
    /// Series resistance of one junction, ohms.
    pub series_resistance_ohm: f64,
    /// Junction temperature, °C.
    pub temperature_c: f64,
}

/// A string of `count` identical exponential junctions in series:
/// v(i) = count·(n·Vt·ln(1 + i/Is) + Rs·i).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ExpDevice {
    /// Number of junctions in series.
    pub count: f64,
    /// Saturation current Is of one junction, A.
    pub saturation_current_a: f64,
    /// n·Vt of one junction, V.
    pub n_vt_v: f64,
    /// Series resistance of one junction, ohms.
    pub series_resistance_ohm: f64,
}

impl ExpDevice {
    /// The string at `junction.temperature_c`: n·Vt at that temperature
    /// and the saturation current moved there from the law's reference
    /// temperature by `law`.
    pub fn at_temperature(junction: &JunctionString, law: &JunctionLaw) -> ExpDevice {
        ExpDevice {
            count: f64::from(junction.count),
            saturation_current_a: law.saturation_current_a(
                junction.saturation_current_a,
                junction.emission_coefficient,
                junction.temperature_c,
            ),
            n_vt_v: junction.emission_coefficient * thermal_voltage_v(junction.temperature_c),
            series_resistance_ohm: junction.series_resistance_ohm,
        }
    }

    /// Voltage across the string at a current, V. Currents below
    /// −Is/2 are clamped there (the junction cannot carry more reverse current).
    pub fn voltage_v(&self, current_a: f64) -> f64 {
        let i = current_a.max(-0.5 * self.saturation_current_a);
        self.count
            * (self.n_vt_v * (i / self.saturation_current_a).ln_1p()
                + self.series_resistance_ohm * i)
    }

    /// ∫₀ⁱ v di of the string, V·A (for `current_a` ≥ 0).
    pub fn integral_v_a(&self, current_a: f64) -> f64 {
        let (i, is) = (current_a.max(0.0), self.saturation_current_a);
        // ∫ ln(1 + i/Is) di = (Is + i)·ln(1 + i/Is) − i.
        self.count
            * (self.n_vt_v * ((is + i) * (i / is).ln_1p() - i)
                + 0.5 * self.series_resistance_ohm * i * i)
    }

    /// dv/di of the string, ohms.
    pub fn slope_ohm(&self, current_a: f64) -> f64 {
        let i = current_a.max(-0.5 * self.saturation_current_a);
        self.count * (self.n_vt_v / (self.saturation_current_a + i) + self.series_resistance_ohm)
    }

    /// The current at which `voltage_v(i) + extra_ohm·i = v`, A: the string
    /// in series with an extra resistance, driven by a voltage.
    pub fn current_a(&self, v: f64, extra_ohm: f64) -> f64 {
        // Per junction: n·Vt·w + R·Is·(e^w − 1) = u, with w = ln(1 + i/Is).
        // The left side is convex and increasing in w, so Newton from an
        // upper bound converges monotonically.
        let u = v / self.count;
        let r = self.series_resistance_ohm + extra_ohm / self.count;
        let is = self.saturation_current_a;
        let nvt = self.n_vt_v;
        if r <= 0.0 {
            return is * (u / nvt).exp_m1();
        }
        let f = |w: f64| nvt * w + r * is * w.exp_m1() - u;
        let mut w = if u >= 0.0 {
            (u / nvt).min((u / (r * is)).ln_1p())
        } else {
            // Below zero volts: the root is negative; start at the larger of
            // the two one-term solutions (both upper bounds of the root).
            (u / nvt).max((u / (r * is)).max(-0.999_999).ln_1p())
        };
        for _ in 0..100 {
            let fw = f(w);
            let dfw = nvt + r * is * w.exp();
            let step = fw / dfw;
            w -= step;
            if step.abs() <= 1e-15 * w.abs().max(1.0) {
                break;
            }
        }
        is * w.exp_m1()
    }
}

/// A continuous, increasing piecewise-linear voltage-current curve that
/// carries no current below its knee (the first segment's intercept).
///
/// Segment `k` is v = `v0_v[k]` + `r_ohm[k]`·i for currents from
/// `upper_a[k-1]` (0 for the first) to `upper_a[k]` (unbounded for the last).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PwlCurve {
    /// Number of conducting segments (1..=MAX_SEGMENTS).
    pub segments: usize,
    /// Intercept of each segment's line at zero current, V.
    pub v0_v: [f64; MAX_SEGMENTS],
    /// Slope of each segment, ohms.
    pub r_ohm: [f64; MAX_SEGMENTS],
    /// Upper current bound of each segment but the last, A.
    pub upper_a: [f64; MAX_SEGMENTS],
    /// Currents the fit was made for, A (widened by 5 % of the span each
    /// side of the currents asked for).
    pub range_a: (f64, f64),
    /// Lowest current from which the voltage error bound holds, A: the
    /// bottom of `range_a`, or, when the range reaches below 1 % of its
    /// top, that 1 % (the tail segment below it is fitted by its mean; see
    /// [`PwlCurve::fit`]).
    pub bound_from_a: f64,
    /// For a fit with its visited extremes at tangent points (see
    /// [`PwlCurve::fit`]): the lowest and highest currents asked for, A, and
    /// the natural log of the breakpoint ratio; `None` otherwise.
    pub aligned: Option<(f64, f64, f64)>,
}

/// Share of a geometric cell's log span, from its bottom, where the chord
/// of c·ln(i) over [a, e^L·a] is parallel to the curve: at
/// i* = a·(e^L − 1)/L (about the middle, ½ + L/24).
fn tangent_share(log_ratio: f64) -> f64 {
    if log_ratio < 1e-6 {
        return 0.5 + log_ratio / 24.0;
    }
    (log_ratio.exp_m1() / log_ratio).ln() / log_ratio
}

/// How far (in shares of a cell's log span) the visited extremes may move
/// from an aligned fit's tangent points before the fit is made again: the
/// voltage error there changes by about c·(share·L)²/2, a few 1e-4 of the
/// fit's tolerance.
const ALIGN_SLACK: f64 = 0.05;

impl PwlCurve {
    /// A single straight line v = knee + r·i above the knee.
    pub fn line(knee_v: f64, r_ohm: f64) -> PwlCurve {
        let mut c = PwlCurve {
            segments: 1,
            v0_v: [0.0; MAX_SEGMENTS],
            r_ohm: [0.0; MAX_SEGMENTS],
            upper_a: [f64::INFINITY; MAX_SEGMENTS],
            range_a: (0.0, f64::INFINITY),
            bound_from_a: 0.0,
            aligned: None,
        };
        c.v0_v[0] = knee_v;
        c.r_ohm[0] = r_ohm;
        c
    }

    /// A continuous fit of `dev` over the current range `lo_a..hi_a`
    /// (widened by 5 % of its span each side), with as few segments as keep
    /// the voltage error within `tol_v` (at most `max_segments`) from
    /// [`Self::bound_from_a`] up.
    ///
    /// Breakpoints are spaced geometrically, which makes the chord error
    /// of the logarithmic part the same on every segment; every chord is
    /// then raised by its mean shortfall over the segment's currents
    /// (chords of a concave curve lie below it), which keeps the curve
    /// continuous and makes the error alternate ± with **zero mean** over
    /// each segment. Raising by half the largest shortfall instead would
    /// give a slightly smaller worst error but leave the whole curve about
    /// a sixth of the largest shortfall low on average, a bias that every
    /// integral sees (measured: 8e-4 on a Schottky diode's conduction loss
    /// at 1 mV). The worst error is then the mean shortfall, which is what
    /// `tol_v` bounds. The last segment extends upward without bound.
    ///
    /// A range reaching below 1 % of its top (the current falls to zero
    /// each cycle, DCM) gets its chords from that 1 % up and one **tail**
    /// segment from zero current to there. No straight line follows the
    /// logarithm down to zero current (the exact voltage keeps falling in
    /// ln i), so the tail is chosen for what the circuit sees: continuous
    /// with the chord above it and with the exact curve's integral ∫v di
    /// over its span, so the voltage error averages to zero over the
    /// currents it covers. A current swept through the tail by the
    /// inductor (L·di/dt = −v) then spends the exact curve's time there to
    /// first order in the error, where extending the lowest chord down
    /// would leave a one-sided error of about count·n·Vt over 1 % of the
    /// current (a floor of a few 1e-5 of the period on the DCM idle time).
    /// The tail is steeper than the chord above it, so the curve stays
    /// concave, and its intercept is the knee.
    pub fn fit(dev: &ExpDevice, lo_a: f64, hi_a: f64, max_segments: usize, tol_v: f64) -> PwlCurve {
        Self::fit_with_slope(dev, lo_a, hi_a, max_segments, tol_v, f64::INFINITY)
    }

    /// [`Self::fit`], for an LED with an output capacitor across it: with a
    /// finite `slope_tol` and a range not reaching down to 1 % of its top,
    /// the lowest and highest currents asked for sit at tangent points of
    /// their geometric cells (where the chord is parallel to the curve), and
    /// the cells are narrow enough that each chord's slope is within
    /// `slope_tol` (relative) of the curve's own slope (its dynamic
    /// resistance) over the cell, as long as the segment cap allows: what
    /// an output capacitor's LED ripple depends on. `f64::INFINITY` bounds
    /// the voltage error only.
    pub fn fit_with_slope(
        dev: &ExpDevice,
        lo_a: f64,
        hi_a: f64,
        max_segments: usize,
        tol_v: f64,
        slope_tol: f64,
    ) -> PwlCurve {
        let mut hi = hi_a.max(1e-9);
        let mut lo = lo_a.clamp(0.0, hi);
        let span = (hi - lo).max(0.02 * hi);
        lo = (lo - 0.05 * span).max(0.0);
        hi += 0.05 * span;
        let start = lo.max(TAIL_SHARE * hi_a.max(1e-9));
        let max_k = max_segments.clamp(1, MAX_SEGMENTS);
        // The tail takes one of the segments allowed.
        let tail = start > lo && max_k >= 2;
        let max_main = if tail { max_k - 1 } else { max_k };
        let log_span = (hi / start).ln();
        // Mean shortfall of the chord of c·ln(i) over [a, r·a] below the
        // curve, c = count·n·Vt, averaged over the current:
        // (1/(b − a))∫c·ln i di − c·(ln a + ln b)/2
        //   = c·(r·ln r/(r − 1) − 1 − ln r/2)  (independent of a);
        // it exceeds half the largest shortfall, so it is the worst error
        // once the chord is raised by it.
        let c = dev.count * dev.n_vt_v;
        let mean_shortfall = |ln_r: f64| {
            if ln_r < 1e-4 {
                // Series: c·ln²r/12 (the mean of a parabola's sag is 2/3 of
                // its largest, ln²r/8).
                return c * ln_r * ln_r / 12.0;
            }
            c * (ln_r * (1.0 + 1.0 / ln_r.exp_m1()) - 1.0 - 0.5 * ln_r)
        };
        let mut pts = [0.0; MAX_SEGMENTS + 1];
        let mut aligned = None;
        let mut k = 0;
        let mut shift = 0.0;
        if !tail && slope_tol.is_finite() && lo_a > 0.0 && hi_a > lo_a {
            // The lowest and highest currents asked for at tangent points
            // of their cells: the error there is the same and stationary,
            // so the voltage difference between them (what sets an output
            // capacitor's LED ripple) is exact, and the chord's slope there
            // is the curve's, with small misplacements counting only to
            // second order.
            let span = (hi_a / lo_a).ln();
            // The chord of c·ln(i) over [a, e^L·a] has slope
            // c·L/(a·(e^L − 1)); the curve's slope c/i + R falls from c/a + R
            // to c·e^(−L)/a + R over the cell. Worst relative difference, on
            // a cell starting a whole cell below the widened range's bottom
            // (no cell starts lower; c/i weighs most there).
            let r_ser = dev.count * dev.series_resistance_ohm;
            let slope_err = |l: f64| {
                let a = lo * (-l).exp();
                let g = |i: f64| c / (i + dev.saturation_current_a) + r_ser;
                let chord = (dev.voltage_v(a * l.exp()) - dev.voltage_v(a)) / (a * l.exp_m1());
                let (ga, gb) = (g(a), g(a * l.exp()));
                ((ga - chord) / ga).max((chord - gb) / gb)
            };
            let mut n = 1;
            while n < max_main
                && (mean_shortfall(span / n as f64) > tol_v
                    || slope_err(span / n as f64) > slope_tol)
            {
                n += 1;
            }
            let l = span / n as f64;
            let theta = tangent_share(l);
            let j_lo = ((lo / lo_a).ln() / l + theta).floor();
            let j_hi = ((hi / lo_a).ln() / l + theta).floor() + 1.0;
            let cells = j_hi - j_lo;
            if mean_shortfall(l) <= tol_v && cells >= 1.0 && cells <= max_main as f64 {
                k = cells as usize;
                shift = mean_shortfall(l);
                for (j, p) in pts.iter_mut().enumerate().take(k + 1) {
                    *p = lo_a * ((j_lo + j as f64 - theta) * l).exp();
                }
                aligned = Some((lo_a, hi_a, l));
            }
        }
        if aligned.is_none() {
            k = 1;
            while k < max_main && mean_shortfall(log_span / k as f64) > tol_v {
                k += 1;
            }
            let ratio = (log_span / k as f64).exp();
            shift = mean_shortfall(log_span / k as f64);
            for (j, p) in pts.iter_mut().enumerate().take(k + 1) {
                *p = start * ratio.powi(j as i32);
            }
            pts[k] = hi;
        }
        let mut curve = PwlCurve::line(0.0, 0.0);
        curve.range_a = (lo, hi);
        curve.bound_from_a = start;
        curve.aligned = aligned;
        let first = usize::from(tail);
        curve.segments = k + first;
        for j in 0..k {
            let (a, b) = (pts[j], pts[j + 1]);
            let (va, vb) = (dev.voltage_v(a), dev.voltage_v(b));
            let r = (vb - va) / (b - a);
            curve.r_ohm[j + first] = r;
            curve.v0_v[j + first] = va - r * a + shift;
            curve.upper_a[j + first] = if j + 1 < k { b } else { f64::INFINITY };
        }
        if tail {
            // v0·s + r·s²/2 = ∫₀ˢ v di and v0 + r·s = v_fit(s).
            let v_s = dev.voltage_v(start) + shift;
            let r = 2.0 * (v_s * start - dev.integral_v_a(start)) / (start * start);
            curve.r_ohm[0] = r;
            curve.v0_v[0] = v_s - r * start;
            curve.upper_a[0] = start;
        }
        curve
    }

    /// Whether currents visited over `lo_a..hi_a` call for a new fit: they
    /// left the fitted range, or use under half of it (a tighter fit needs
    /// fewer segments).
    pub fn needs_refit(&self, lo_a: f64, hi_a: f64) -> bool {
        let (a, b) = self.range_a;
        if !b.is_finite() || hi_a.is_nan() || hi_a <= 0.0 {
            return false;
        }
        let off_tangent =
            |at: f64, asked: f64, l: f64| at > 0.0 && (at / asked).ln().abs() > ALIGN_SLACK * l;
        let moved = match self.aligned {
            Some((lo, hi, l)) => off_tangent(lo_a, lo, l) || off_tangent(hi_a, hi, l),
            None => false,
        };
        lo_a < a || hi_a > b || (hi_a - lo_a.max(0.0)) < 0.5 * (b - a) || moved
    }

    /// The knee voltage: no current flows below it, V.
    pub fn knee_v(&self) -> f64 {
        self.v0_v[0]
    }

    /// Segment holding a current (currents at or below zero give 0).
    pub fn segment_for_current(&self, i_a: f64) -> usize {
        let mut k = 0;
        while k + 1 < self.segments && i_a > self.upper_a[k] {
            k += 1;
        }
        k
    }

    /// Segment holding a voltage above the knee, or `None` below it.
    pub fn segment_for_voltage(&self, v: f64) -> Option<usize> {
        if v < self.knee_v() {
            return None;
        }
        let mut k = 0;
        while k + 1 < self.segments && v > self.v0_v[k] + self.r_ohm[k] * self.upper_a[k] {
            k += 1;
        }
        Some(k)
    }

    /// Voltage at a current on the curve, V (the knee for zero current).
    pub fn voltage_v(&self, i_a: f64) -> f64 {
        let k = self.segment_for_current(i_a);
        self.v0_v[k] + self.r_ohm[k] * i_a
    }

    /// Largest |PWL − exact| voltage over currents `lo_a..hi_a`, sampled at
    /// 64 points per segment span and at every breakpoint inside (where
    /// the raised chords err the most), V.
    pub fn max_error_v(&self, dev: &ExpDevice, lo_a: f64, hi_a: f64) -> f64 {
        if hi_a.partial_cmp(&lo_a) != Some(std::cmp::Ordering::Greater) {
            return (self.voltage_v(hi_a) - dev.voltage_v(hi_a)).abs();
        }
        let n = 64 * self.segments;
        let err = |i: f64| (self.voltage_v(i) - dev.voltage_v(i)).abs();
        // The breakpoints inside, where the raised chords err the most.
        let at_breaks = self.upper_a[..self.segments.saturating_sub(1)]
            .iter()
            .filter(|&&b| b > lo_a && b < hi_a)
            .map(|&b| err(b))
            .fold(0.0, f64::max);
        (0..=n)
            .map(|j| err(lo_a + (hi_a - lo_a) * j as f64 / n as f64))
            .fold(at_breaks, f64::max)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn led() -> ExpDevice {
        ExpDevice {
            count: 3.0,
            saturation_current_a: 1e-18,
            n_vt_v: 2.2 * 0.0285,
            series_resistance_ohm: 0.35,
        }
    }

    #[test]
    fn inverse_matches_forward() {
        let d = led();
        for &i in &[1e-9, 1e-4, 0.1, 0.7, 3.0] {
            for &extra in &[0.0, 0.05, 2.0] {
                let v = d.voltage_v(i) + extra * i;
                assert_relative_eq!(d.current_a(v, extra), i, max_relative = 1e-10);
            }
        }
    }

    #[test]
    fn slope_matches_central_difference() {
        let d = led();
        for &i in &[1e-3, 0.3, 1.2] {
            let h = 1e-6 * i;
            let fd = (d.voltage_v(i + h) - d.voltage_v(i - h)) / (2.0 * h);
            assert_relative_eq!(d.slope_ohm(i), fd, max_relative = 1e-6);
        }
    }

    #[test]
    fn fit_is_continuous_increasing_and_close() {
        let d = led();
        for &(lo, hi) in &[(0.6, 0.8), (0.0, 1.0)] {
            let c = PwlCurve::fit(&d, lo, hi, 32, 1e-3);
            for k in 0..c.segments - 1 {
                let b = c.upper_a[k];
                let left = c.v0_v[k] + c.r_ohm[k] * b;
                let right = c.v0_v[k + 1] + c.r_ohm[k + 1] * b;
                assert_relative_eq!(left, right, max_relative = 1e-12);
                assert!(c.r_ohm[k] > c.r_ohm[k + 1], "chords of a concave curve");
                assert!(c.r_ohm[k + 1] > 0.0);
            }
            assert!(c.knee_v() > 0.0);
            let err = c.max_error_v(&d, lo.max(0.01 * hi), hi);
            assert!(err <= 1.0001e-3, "fit error {err} V over {lo}..{hi} A");
        }
        let narrow = PwlCurve::fit(&d, 0.6, 0.8, 32, 1e-4);
        let err = narrow.max_error_v(&d, 0.6, 0.8);
        assert!(err <= 1.0001e-4, "{err}");
        // The error bound is used, not wasted: half the segments would miss it.
        assert!(narrow.segments > 1);
    }

    // With a slope tolerance the visited extremes sit where the chord is
    // parallel to the exponential curve (its slope c/i + R, the dynamic
    // resistance), with the same voltage error at both, and every cell's
    // chord slope is within the tolerance of the curve's over the cell.
    #[test]
    fn slope_bounded_fit_puts_the_extremes_at_tangent_points() {
        let d = led();
        let (lo, hi) = (0.62, 0.79);
        let c = d.count * d.n_vt_v;
        let g = |i: f64| c / (i + d.saturation_current_a) + d.count * d.series_resistance_ohm;
        for slope_tol in [0.05, 5e-3, 1e-3] {
            let f = PwlCurve::fit_with_slope(&d, lo, hi, 64, 5e-4, slope_tol);
            assert!(f.aligned.is_some());
            for i in [lo, hi] {
                let k = f.segment_for_current(i);
                assert_relative_eq!(f.r_ohm[k], g(i), max_relative = 1e-9);
            }
            let e = |i: f64| f.voltage_v(i) - d.voltage_v(i);
            assert!((e(lo) - e(hi)).abs() < 1e-12, "{} {}", e(lo), e(hi));
            for k in 0..f.segments {
                let a = if k == 0 { 0.0 } else { f.upper_a[k - 1] }.max(lo);
                let b = f.upper_a[k].min(hi);
                if a >= b {
                    continue;
                }
                for i in [a, b] {
                    let rel = (f.r_ohm[k] - g(i)).abs() / g(i);
                    assert!(
                        rel <= slope_tol * (1.0 + 1e-9),
                        "{slope_tol}: cell {k} of {}: {rel:e}",
                        f.segments
                    );
                }
            }
        }
        // Without one the fit is the voltage-only fit.
        let plain = PwlCurve::fit(&d, lo, hi, 64, 5e-4);
        assert!(plain.aligned.is_none());
        assert_eq!(
            plain,
            PwlCurve::fit_with_slope(&d, lo, hi, 64, 5e-4, f64::INFINITY)
        );
    }
}

/// Most user points in an inductance-versus-current curve.
pub const MAX_L_POINTS: usize = 8;
/// Straight pieces of ψ(i) the exact engine uses per interval between two
/// user points (32: on the cross-check case the LED average then agrees
/// with the continuous-L reference to 2e-6, against 6e-4 with 8 and 1.3e-4
/// with 16).
pub const L_SUBDIVISIONS: usize = 32;
/// Most constant-inductance segments (user intervals × subdivisions, plus
/// the ends).
pub(crate) const MAX_L_SEGMENTS: usize = (MAX_L_POINTS - 1) * L_SUBDIVISIONS + 2;
// Region::l_segment is a u8.
const _: () = assert!(MAX_L_SEGMENTS <= 255);

/// A soft-saturating inductor: incremental inductance L(i) = dψ/di as
/// straight lines between the part's points (held at the end values
/// beyond them, and at the first value for reverse current).
///
/// The reference engine uses L(i) itself. The exact engine needs constant
/// L between events, so each interval between points is cut into
/// [`L_SUBDIVISIONS`] segments, each with the **chord** inductance
/// Δψ/Δi of the true ψ(i) (for a straight L(i) the mean of its ends): the
/// flux is continuous and exact at every segment boundary, the current is
/// continuous, and an event fires when i_L crosses a boundary.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InductanceCurve {
    /// Point currents, A (rising).
    pub point_a: [f64; MAX_L_POINTS],
    /// Point inductances, H.
    pub point_h: [f64; MAX_L_POINTS],
    /// Points in use.
    pub points: usize,
    /// Upper current bound of each exact-engine segment but the last, A.
    pub upper_a: [f64; MAX_L_SEGMENTS],
    /// Chord inductance of each segment, H.
    pub seg_h: [f64; MAX_L_SEGMENTS],
    /// Stored energy at the lower bound of each segment (0 for the first), J.
    seg_e0_j: [f64; MAX_L_SEGMENTS],
    /// Segments in use.
    pub segments: usize,
}

impl InductanceCurve {
    /// The curve through `points` (current A, inductance H), which must be
    /// validated: 2 to [`MAX_L_POINTS`] points, currents rising from ≥ 0,
    /// inductances positive.
    pub fn new(points: &[(f64, f64)]) -> InductanceCurve {
        let n = points.len().clamp(1, MAX_L_POINTS);
        let mut c = InductanceCurve {
            point_a: [0.0; MAX_L_POINTS],
            point_h: [0.0; MAX_L_POINTS],
            points: n,
            upper_a: [f64::INFINITY; MAX_L_SEGMENTS],
            seg_h: [0.0; MAX_L_SEGMENTS],
            seg_e0_j: [0.0; MAX_L_SEGMENTS],
            segments: 0,
        };
        for (k, &(i, l)) in points.iter().take(n).enumerate() {
            c.point_a[k] = i;
            c.point_h[k] = l;
        }
        // Segment boundaries: the first point (if above zero), then
        // L_SUBDIVISIONS steps across each interval.
        let mut bounds: Vec<f64> = Vec::with_capacity(MAX_L_SEGMENTS);
        if c.point_a[0] > 0.0 {
            bounds.push(c.point_a[0]);
        }
        for k in 0..n.saturating_sub(1) {
            let (a, b) = (c.point_a[k], c.point_a[k + 1]);
            for j in 1..=L_SUBDIVISIONS {
                bounds.push(a + (b - a) * j as f64 / L_SUBDIVISIONS as f64);
            }
        }
        let mut lo = f64::NEG_INFINITY;
        for (k, &hi) in bounds
            .iter()
            .chain(std::iter::once(&f64::INFINITY))
            .enumerate()
        {
            let l = if lo.is_finite() && hi.is_finite() {
                (c.flux_wb(hi) - c.flux_wb(lo)) / (hi - lo)
            } else if hi.is_finite() {
                // Reverse currents and up to the first bound: the chord
                // from zero current.
                if hi > 0.0 {
                    c.flux_wb(hi) / hi
                } else {
                    c.point_h[0]
                }
            } else {
                c.point_h[n - 1]
            };
            c.seg_h[k] = l;
            c.upper_a[k] = hi;
            if k > 0 {
                let prev = c.upper_a[k - 1];
                let e_prev = c.seg_e0_j[k - 1]
                    + 0.5
                        * c.seg_h[k - 1]
                        * (prev * prev
                            - if k == 1 {
                                0.0
                            } else {
                                c.upper_a[k - 2].powi(2)
                            });
                c.seg_e0_j[k] = e_prev;
            }
            c.segments = k + 1;
            lo = hi;
        }
        c
    }

    /// Incremental inductance L(i), H (continuous; the reference engine's).
    pub fn inductance_h(&self, i: f64) -> f64 {
        let n = self.points;
        if i <= self.point_a[0] {
            return self.point_h[0];
        }
        for k in 0..n - 1 {
            let (a, b) = (self.point_a[k], self.point_a[k + 1]);
            if i <= b {
                let t = (i - a) / (b - a);
                return self.point_h[k] + t * (self.point_h[k + 1] - self.point_h[k]);
            }
        }
        self.point_h[n - 1]
    }

    /// Flux linkage ψ(i) = ∫₀ⁱ L(s) ds, Wb (exact for the straight pieces).
    pub fn flux_wb(&self, i: f64) -> f64 {
        self.integral(i, |_, l| l)
    }

    /// Stored energy ∫₀ⁱ s·L(s) ds of the continuous curve, J.
    pub fn energy_continuous_j(&self, i: f64) -> f64 {
        self.integral(i, |s, l| s * l)
    }

    /// ∫₀ⁱ f(s, L(s)) ds by Simpson's rule on each straight piece (exact
    /// for integrands up to cubic, so for ψ and for s·L(s)).
    fn integral(&self, i: f64, f: impl Fn(f64, f64) -> f64) -> f64 {
        let sign = if i < 0.0 { -1.0 } else { 1.0 };
        let x = i.abs();
        let mut knots: [f64; MAX_L_POINTS + 2] = [0.0; MAX_L_POINTS + 2];
        let mut m = 1;
        for k in 0..self.points {
            let p = self.point_a[k];
            if p > 0.0 && p < x {
                knots[m] = p;
                m += 1;
            }
        }
        knots[m] = x;
        m += 1;
        let mut total = 0.0;
        for w in knots[..m].windows(2) {
            let (a, b) = (w[0], w[1]);
            let c = 0.5 * (a + b);
            let g = |s: f64| f(sign * s, self.inductance_h(s));
            total += (b - a) / 6.0 * (g(a) + 4.0 * g(c) + g(b));
        }
        sign * total
    }

    /// The exact engine's segment holding current `i`.
    pub fn segment_for(&self, i: f64) -> usize {
        (0..self.segments - 1)
            .find(|&k| i < self.upper_a[k])
            .unwrap_or(self.segments - 1)
    }

    /// Stored energy with the exact engine's constant-L segments, J.
    pub fn energy_segmented_j(&self, i: f64) -> f64 {
        let k = self.segment_for(i);
        let lo = if k == 0 { 0.0 } else { self.upper_a[k - 1] };
        self.seg_e0_j[k] + 0.5 * self.seg_h[k] * (i * i - lo * lo)
    }

    /// The smallest inductance on the curve, H.
    pub fn min_h(&self) -> f64 {
        self.point_h[..self.points]
            .iter()
            .copied()
            .fold(f64::INFINITY, f64::min)
    }
}

#[cfg(test)]
mod inductance_tests {
    use super::*;

    #[test]
    fn chords_keep_flux_and_energy_continuous() {
        let c = InductanceCurve::new(&[(0.0, 100e-6), (1.0, 80e-6), (2.0, 30e-6)]);
        assert_eq!(c.segments, 2 * L_SUBDIVISIONS + 1);
        // ψ(2) by hand: ∫ of two trapezia = 90µ·1 + 55µ·1 = 145 µWb.
        assert!((c.flux_wb(2.0) - 145e-6).abs() < 1e-15);
        // Energy continuous across every boundary, and the segmented energy
        // within 1 % of the continuous one.
        for k in 0..c.segments - 1 {
            let b = c.upper_a[k];
            let (lo, hi) = (c.energy_segmented_j(b - 1e-12), c.energy_segmented_j(b));
            assert!((hi - lo).abs() < 1e-15, "{k}");
            let e = c.energy_continuous_j(b);
            assert!((c.energy_segmented_j(b) / e - 1.0).abs() < 1e-2, "{k}");
        }
        // Above the last point L is held.
        assert!((c.inductance_h(5.0) - 30e-6).abs() < 1e-18);
        assert!((c.seg_h[c.segments - 1] - 30e-6).abs() < 1e-18);
    }
}

#[cfg(test)]
mod junction_law_tests {
    use super::*;

    #[test]
    fn saturation_current_follows_the_law_by_hand() {
        let law = JunctionLaw {
            reference_temperature_c: 25.0,
            bandgap_ev: 1.11,
            is_temp_exponent: 3.0,
        };
        // At the reference temperature nothing moves.
        let is0 = 1e-14;
        assert!((law.saturation_current_a(is0, 1.0, 25.0) / is0 - 1.0).abs() < 1e-15);
        // Silicon, n = 1, 25 → 125 °C by hand (Sze's law; CODATA 2018
        // k/q = 8.617333262e-5 V/K): (398.15/298.15)^3 ·
        // exp(1.11/8.617333262e-5 · (1/298.15 − 1/398.15)).
        let by_hand = (398.15_f64 / 298.15).powi(3)
            * (1.11_f64 / 8.617_333_262e-5 * (1.0 / 298.15 - 1.0 / 398.15)).exp();
        let got = law.saturation_current_a(is0, 1.0, 125.0) / is0;
        assert!((got / by_hand - 1.0).abs() < 1e-9, "{got} vs {by_hand}");
        // About 5 decades (from memory: Is roughly doubles every 6–7 K).
        assert!((1e4..1e6).contains(&got), "{got}");
    }

    #[test]
    fn derived_band_gap_reproduces_the_given_coefficient() {
        let (is0, n, xti, i) = (1e-18, 2.2, 3.0, 0.35);
        let eg = bandgap_from_tempco_ev(is0, n, 25.0, xti, -2e-3, i);
        let law = JunctionLaw {
            reference_temperature_c: 25.0,
            bandgap_ev: eg,
            is_temp_exponent: xti,
        };
        let v =
            |t: f64| n * thermal_voltage_v(t) * (i / law.saturation_current_a(is0, n, t)).ln_1p();
        let dv = (v(25.01) - v(24.99)) / 0.02;
        assert!((dv + 2e-3).abs() < 1e-8, "{dv}");
    }
}
