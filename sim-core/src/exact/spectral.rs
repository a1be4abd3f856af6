//! Eigen-decomposition of a region's state matrix, for cheap exact
//! propagation.
//!
//! When `M = V Λ V⁻¹` is well conditioned, `e^{Mt} z = V e^{Λt} V⁻¹ z`:
//! four complex exponentials and two small matrix-vector products, with
//! no series and no squaring, whatever the stiffness. States a circuit
//! does not have (zero rows and columns) are kept out of the decomposition.
//! A matrix that is defective or nearly so (e.g. a lossless inductor, whose
//! current ramps linearly) gives `None`, and the caller uses the Taylor
//! exponential of [`crate::exact::propagate`] instead.

use crate::model::circuit::{Aug, AugMatrix, N_AUG, X_ONE};
use nalgebra::{Complex, SMatrix, SVector};

type CMatrix = SMatrix<Complex<f64>, N_AUG, N_AUG>;
type CVector = SVector<Complex<f64>, N_AUG>;

/// A diagonalization of a state matrix.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Spectral {
    lambda: CVector,
    v: CMatrix,
    w: CMatrix,
    /// The same in real arithmetic when every eigenvalue is real.
    real: Option<RealSpectral>,
}

/// A diagonalization with real eigenvalues and eigenvectors.
#[derive(Debug, Clone, Copy, PartialEq)]
struct RealSpectral {
    lambda: [f64; N_AUG],
    v: AugMatrix,
    w: AugMatrix,
}

impl Spectral {
    /// Decomposes `m`, or `None` when the eigenvectors are ill-conditioned.
    pub fn new(m: &AugMatrix) -> Option<Spectral> {
        let norm = m.abs().max();
        if !norm.is_finite() || norm == 0.0 {
            return None;
        }
        // States that do not exist: zero row and zero column. Park them on
        // a distinct eigenvalue with a known eigenvector.
        let mut absent = [false; N_AUG];
        let mut masked = *m;
        let sigma = -1e3 * (norm + 1.0);
        for k in 0..N_AUG {
            if k != X_ONE
                && m.row(k).iter().all(|&v| v == 0.0)
                && m.column(k).iter().all(|&v| v == 0.0)
            {
                absent[k] = true;
                masked[(k, k)] = sigma;
            }
        }
        let eig = masked.complex_eigenvalues();
        let mut lambda = CVector::zeros();
        let mut v = CMatrix::zeros();
        // Active eigenvalues: those not parked at sigma.
        let mut active: [Complex<f64>; N_AUG] = [Complex::new(0.0, 0.0); N_AUG];
        let mut n_active = 0;
        for e in eig.iter() {
            if (e - Complex::new(sigma, 0.0)).norm() > 1e-6 * sigma.abs() {
                if n_active == N_AUG {
                    return None;
                }
                active[n_active] = *e;
                n_active += 1;
            }
        }
        let n_absent = absent.iter().filter(|&&a| a).count();
        if n_active + n_absent != N_AUG {
            return None;
        }
        let mc: CMatrix = m.map(|x| Complex::new(x, 0.0));
        let mut col = 0;
        for k in 0..N_AUG {
            if absent[k] {
                v[(k, col)] = Complex::new(1.0, 0.0);
                lambda[col] = Complex::new(0.0, 0.0);
                col += 1;
            }
        }
        for &lam in active.iter().take(n_active) {
            let vec = eigenvector(&mc, lam, norm, &absent)?;
            v.set_column(col, &vec);
            lambda[col] = lam;
            col += 1;
        }
        let w = v.try_inverse()?;
        // Conditioning and reconstruction checks.
        let cond = v.map(|c| c.norm()).max() * w.map(|c| c.norm()).max();
        if cond.is_nan() || cond >= 1e6 {
            return None;
        }
        let rebuilt = v * CMatrix::from_diagonal(&lambda) * w;
        let err = (rebuilt - mc).map(|c| c.norm()).max();
        if err.is_nan() || err > 1e-11 * norm {
            return None;
        }
        let real = (lambda.iter().all(|l| l.im == 0.0)
            && v.iter().all(|c| c.im == 0.0)
            && w.iter().all(|c| c.im == 0.0))
        .then(|| RealSpectral {
            lambda: [lambda[0].re, lambda[1].re, lambda[2].re, lambda[3].re],
            v: v.map(|c| c.re),
            w: w.map(|c| c.re),
        });
        Some(Spectral { lambda, v, w, real })
    }

    /// `e^{M t} z`.
    #[inline]
    pub fn advance(&self, t: f64, z: &Aug) -> Aug {
        if let Some(r) = &self.real {
            let mut c = r.w * z;
            for k in 0..N_AUG {
                // The constant's mode and an absent state's sit at exactly
                // zero: e^0 = 1 needs no exponential.
                if r.lambda[k] != 0.0 {
                    c[k] *= (r.lambda[k] * t).exp();
                }
            }
            return r.v * c;
        }
        let zc: CVector = z.map(|x| Complex::new(x, 0.0));
        let mut c = self.w * zc;
        for k in 0..N_AUG {
            let l = self.lambda[k];
            if l.im == 0.0 {
                c[k] *= (l.re * t).exp();
            } else {
                c[k] *= (l * t).exp();
            }
        }
        let y = self.v * c;
        y.map(|c| c.re)
    }
}

/// Eigenvector for `lam` by inverse iteration, zero on absent states.
fn eigenvector(
    m: &CMatrix,
    lam: Complex<f64>,
    norm: f64,
    absent: &[bool; N_AUG],
) -> Option<CVector> {
    let shift = lam + Complex::new(1e-9 * (lam.norm() + norm), 0.0);
    let a = m - CMatrix::identity() * shift;
    let lu = a.lu();
    let mut x = CVector::from_element(Complex::new(1.0, 0.0));
    for (k, &ab) in absent.iter().enumerate() {
        if ab {
            x[k] = Complex::new(0.0, 0.0);
        }
        // A mildly varied start avoids being orthogonal to the eigenvector.
        x[k] *= Complex::new(1.0 + 0.1 * k as f64, 0.0);
    }
    for _ in 0..3 {
        let mut y = lu.solve(&x)?;
        for (k, &ab) in absent.iter().enumerate() {
            if ab {
                y[k] = Complex::new(0.0, 0.0);
            }
        }
        let n = y.map(|c| c.norm()).max();
        if !(n.is_finite() && n > 0.0) {
            return None;
        }
        x = y / Complex::new(n, 0.0);
    }
    Some(x)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn matches_pade_on_a_stiff_oscillating_matrix() {
        // i_L, v_Co and v_Cin with a fast input-capacitor mode and an L-C ring.
        let mut m = AugMatrix::zeros();
        let vals = [
            [-3.1e3, -1.47e4, 1.47e4, 0.0],
            [4.5e5, -9.0e5, 0.0, 0.0],
            [-1.0e5, 0.0, -2.0e7, 2.4e8],
        ];
        for i in 0..3 {
            for j in 0..4 {
                m[(i, j)] = vals[i][j];
            }
        }
        let s = Spectral::new(&m).expect("diagonalizable");
        let z = Aug::new(0.7, 9.1, 11.9, 1.0);
        for &t in &[1e-9, 1e-7, 3e-6, 2e-5] {
            let want = (m * t).exp() * z;
            let got = s.advance(t, &z);
            for i in 0..4 {
                assert_relative_eq!(got[i], want[i], max_relative = 1e-10, epsilon = 1e-10);
            }
        }
    }

    #[test]
    fn handles_absent_states_and_rejects_ramps() {
        // Only the inductor: i' = -R/L i + V/L.
        let mut m = AugMatrix::zeros();
        m[(0, 0)] = -1e3;
        m[(0, 3)] = 2e5;
        let s = Spectral::new(&m).expect("diagonalizable");
        let z = Aug::new(0.3, 0.0, 0.0, 1.0);
        let got = s.advance(4e-6, &z);
        let want = (m * 4e-6).exp() * z;
        assert_relative_eq!(got[0], want[0], max_relative = 1e-12);
        assert!(got[1].abs() < 1e-15 && got[2].abs() < 1e-15);
        // Lossless: i' = V/L, a Jordan block: not diagonalizable.
        m[(0, 0)] = 0.0;
        assert!(Spectral::new(&m).is_none());
    }
}
