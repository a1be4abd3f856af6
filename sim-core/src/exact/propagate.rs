//! Exact propagation of a linear region: matrix exponentials, the energy
//! Gramian and event location.
//!
//! Inside one region the augmented state obeys `z' = M z`, so
//! `z(t) = e^{Mt} z(0)` exactly (nalgebra's scaling-and-squaring Padé
//! exponential). Every power in the circuit is a quadratic form in `z`, so
//! all energies over an interval follow from the Gramian
//! `G(h) = ∫₀ʰ z zᵀ dt`, computed by Van Loan's block exponential
//! (C. F. Van Loan, "Computing integrals involving the matrix exponential",
//! IEEE Trans. Automatic Control 23(3), 1978) on a short sub-interval and
//! then doubled: `G(2h) = G(h) + Φ(h) G(h) Φ(h)ᵀ`.
//!
//! Events are zeros of affine functions `w·z(t)`; they are bracketed by a
//! forward scan whose steps are bounded by the circuit's fastest
//! oscillation and by the time each function would need to reach zero at
//! its present slope, checked for double crossings with a cubic Hermite
//! bound, and refined by safeguarded Newton iteration on the closed form.

use crate::exact::spectral::Spectral;
use crate::model::circuit::{Aug, AugMatrix, Row, N_AUG};
use nalgebra::SMatrix;

mod scan;
#[cfg(test)]
mod tests;

pub use scan::{first_event, EventFn, ScanResult, ScanStart, MAX_EVENTS};

/// Time resolution of event location, s.
pub(crate) const EVENT_TIME_TOL_S: f64 = 1e-14;

/// Counts of the work done, for statistics and benchmarks.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, serde::Serialize)]
pub struct WorkCounts {
    /// Matrix exponentials of the 4x4 state matrix.
    pub exponentials: u64,
    /// Gramian evaluations (8x8 block exponentials).
    pub gramians: u64,
    /// Timer-length intervals done as one precomputed affine update.
    pub timer_updates: u64,
}

/// `e^{M t}`.
#[inline]
pub fn transition(m: &AugMatrix, t: f64, work: &mut WorkCounts) -> AugMatrix {
    work.exponentials += 1;
    (m * t).exp()
}

/// How a region's trajectory is evaluated: the state matrix and, when it
/// diagonalizes well, its eigen-decomposition (used first).
#[derive(Debug, Clone, Copy)]
pub struct Flow<'a> {
    /// The augmented state matrix.
    pub m: &'a AugMatrix,
    /// Its eigen-decomposition, if well conditioned.
    pub spectral: Option<&'a Spectral>,
    /// A precomputed `(t, e^{M t})` for the interval's full length when a
    /// timer ends it: advancing by exactly that `t` is one matrix-vector
    /// product.
    pub timer: Option<(f64, &'a AugMatrix)>,
}

impl Flow<'_> {
    /// `e^{M t} z`.
    #[inline]
    pub fn advance(&self, t: f64, z: &Aug, work: &mut WorkCounts) -> Aug {
        if let Some((t_full, phi)) = self.timer {
            // Exactly the full length (the scan's last step lands on it).
            if t.to_bits() == t_full.to_bits() {
                work.timer_updates += 1;
                return phi * z;
            }
        }
        match self.spectral {
            Some(s) => {
                work.exponentials += 1;
                s.advance(t, z)
            }
            None => advance(self.m, t, z, work),
        }
    }

    /// `e^{M t}` column by column, each the flow of a unit vector: the
    /// same arithmetic as [`Flow::advance`], so a state advanced by the
    /// matrix agrees with one advanced directly.
    pub fn transition_matrix(&self, t: f64, work: &mut WorkCounts) -> AugMatrix {
        let mut phi = AugMatrix::zeros();
        for c in 0..N_AUG {
            let mut e = Aug::zeros();
            e[c] = 1.0;
            phi.set_column(c, &self.advance(t, &e, work));
        }
        phi
    }
}

/// `e^{M t} z` without forming the matrix when `‖M t‖` is moderate.
///
/// For `‖M t‖₁ ≤ 4` the Taylor series is summed on the vector (each term a
/// 4x4 matrix-vector product) until the terms fall below round-off; beyond
/// that the matrix exponential is taken by scaling and squaring a
/// degree-12 Taylor polynomial (truncation error below 1e-17 at
/// `‖X‖₁ ≤ 1/4`) and applied.
#[inline]
pub fn advance(m: &AugMatrix, t: f64, z: &Aug, work: &mut WorkCounts) -> Aug {
    work.exponentials += 1;
    let theta = m.abs().row_sum().max() * t.abs();
    if theta <= 4.0 {
        let mut sum = *z;
        let mut term = *z;
        let zn = z.abs().max().max(f64::MIN_POSITIVE);
        for k in 1..60 {
            term = m * term * (t / k as f64);
            sum += term;
            if term.abs().max() <= 1e-17 * zn && k as f64 > theta {
                break;
            }
        }
        sum
    } else {
        expm_taylor(m, t) * z
    }
}

/// `e^{M t}` by scaling and squaring a degree-12 Taylor polynomial.
pub(crate) fn expm_taylor(m: &AugMatrix, t: f64) -> AugMatrix {
    let theta = m.abs().row_sum().max() * t.abs();
    let mut s = 0;
    let mut scale = 1.0;
    while theta * scale > 0.25 && s < 1000 {
        scale *= 0.5;
        s += 1;
    }
    let x = m * (t * scale);
    // Horner: I + X(I + X/2(I + X/3(...))).
    let id = AugMatrix::identity();
    let mut p = id;
    for k in (1..=12).rev() {
        p = id + x * p * (1.0 / k as f64);
    }
    for _ in 0..s {
        p = p * p;
    }
    p
}

/// The Gramian `∫₀ʰ z zᵀ dt` of `z' = M z` from `z0`, and `e^{Mh}`.
pub fn gramian(m: &AugMatrix, z0: &Aug, h: f64, work: &mut WorkCounts) -> (AugMatrix, AugMatrix) {
    work.gramians += 1;
    if h <= 0.0 {
        return (AugMatrix::zeros(), AugMatrix::identity());
    }
    // Sub-interval short enough that e^{-Mᵀ h} stays tame.
    let norm = m.abs().row_sum().max() * h;
    let mut halvings = 0;
    let mut hs = h;
    let mut nrm = norm;
    while nrm > 0.5 && halvings < 60 {
        hs *= 0.5;
        nrm *= 0.5;
        halvings += 1;
    }
    let p = z0 * z0.transpose();
    let scale = p.abs().max().max(f64::MIN_POSITIVE);
    let mut c = SMatrix::<f64, 8, 8>::zeros();
    c.fixed_view_mut::<N_AUG, N_AUG>(0, 0).copy_from(&(m * hs));
    c.fixed_view_mut::<N_AUG, N_AUG>(0, N_AUG)
        .copy_from(&(p * (hs / scale)));
    c.fixed_view_mut::<N_AUG, N_AUG>(N_AUG, N_AUG)
        .copy_from(&(-m.transpose() * hs));
    let e = c.exp();
    let mut phi: AugMatrix = e.fixed_view::<N_AUG, N_AUG>(0, 0).into_owned();
    let x: AugMatrix = e.fixed_view::<N_AUG, N_AUG>(0, N_AUG).into_owned();
    let mut g = x * phi.transpose() * scale;
    for _ in 0..halvings {
        g += phi * g * phi.transpose();
        phi = phi * phi;
    }
    // Symmetrize round-off.
    let g = (g + g.transpose()) * 0.5;
    (g, phi)
}

/// `r · z`, written out (the generic product's loop does not unroll).
#[inline]
pub(crate) fn dot4(r: &Row, z: &Aug) -> f64 {
    r[0] * z[0] + r[1] * z[1] + r[2] * z[2] + r[3] * z[3]
}
