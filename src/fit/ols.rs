//! Least squares by Householder QR (never the normal equations): ordinary least squares and two-stage
//! least squares, with classical and heteroskedasticity-robust covariance matrices.
//!
//! Every design matrix here has the intercept (a column of ones) first. The other columns are centred
//! on their means before the factorisation, which removes the worst of the ill-conditioning between the
//! intercept and regressors far from zero (a year column, say); the estimates and covariances are then
//! mapped back to the original parametrisation exactly (β = S β_c, V = S V_c Sᵀ, where S is the identity
//! with −mean_j in row 0, column j). Both OLS and 2SLS are equivariant under that linear change of
//! variables, so nothing is approximated.
//!
//! Robust standard errors are HC1: White's (1980) heteroskedasticity-consistent "HC0" sandwich
//! (XᵀX)⁻¹ Xᵀ diag(e²) X (XᵀX)⁻¹ scaled by n/(n−k), the degrees-of-freedom correction MacKinnon and
//! White (1985) call HC1. For 2SLS the first-stage fitted regressors X̂ take the place of X and e are the
//! structural residuals y − Xβ.

use nalgebra::{DMatrix, DVector};

/// Why a regression could not be computed (the caller adds the file and equation).
#[derive(Debug, Clone, PartialEq)]
pub enum LsError {
    /// Fewer observations than needed: `needed` is parameters + 1 (one degree of freedom for σ²).
    TooFew { observations: usize, needed: usize },
    /// Column `index` of the design (or of the instrument matrix when `instrument` is true) is
    /// constant or a linear combination of the columns before it.
    Collinear { index: usize, instrument: bool },
    /// The arithmetic produced a non-finite number (should not happen with finite, full-rank data).
    NonFinite,
}

/// The result of one least-squares fit, in the caller's parametrisation.
#[derive(Debug, Clone)]
pub struct LsFit {
    /// Coefficients, in the order of the design's columns.
    pub beta: Vec<f64>,
    /// Classical covariance s²(XᵀX)⁻¹ (2SLS: s²(X̂ᵀX̂)⁻¹).
    pub cov: DMatrix<f64>,
    /// HC1 robust covariance.
    pub cov_hc1: DMatrix<f64>,
    /// Residuals y − Xβ in observation order (2SLS: structural residuals).
    pub residuals: Vec<f64>,
    /// Residual sum of squares.
    pub ssr: f64,
    /// Total sum of squares about the mean of y.
    pub sst: f64,
    /// Σ y² (the scale for "perfect fit up to rounding").
    pub sum_y2: f64,
    /// Number of observations.
    pub n: usize,
    /// Number of coefficients.
    pub k: usize,
}

impl LsFit {
    /// 1 − SSR/SST (for 2SLS this can be negative; it is still what is reported).
    pub fn r_squared(&self) -> f64 {
        if self.sst > 0.0 {
            1.0 - self.ssr / self.sst
        } else {
            f64::NAN
        }
    }

    /// sqrt(SSR / (n − k)).
    pub fn residual_sd(&self) -> f64 {
        (self.ssr / (self.n - self.k) as f64).sqrt()
    }

    /// Durbin and Watson (1950): Σ(e_t − e_{t−1})² / Σ e_t² (undefined, NaN, for a fit that is perfect
    /// up to rounding, SSR ≤ 1e-26 · Σy²).
    pub fn durbin_watson(&self) -> f64 {
        let num: f64 = self
            .residuals
            .windows(2)
            .map(|w| (w[1] - w[0]).powi(2))
            .sum();
        if self.ssr > 1e-26 * self.sum_y2 {
            num / self.ssr
        } else {
            f64::NAN
        }
    }

    /// Classical standard errors.
    pub fn std_errors(&self) -> Vec<f64> {
        (0..self.k)
            .map(|j| self.cov[(j, j)].max(0.0).sqrt())
            .collect()
    }

    /// HC1 robust standard errors.
    pub fn robust_std_errors(&self) -> Vec<f64> {
        (0..self.k)
            .map(|j| self.cov_hc1[(j, j)].max(0.0).sqrt())
            .collect()
    }
}

/// Relative size below which a pivot of R counts as zero (the column is collinear).
const RANK_TOL: f64 = 1e-10;

/// Centres every column but the first (the intercept) and returns the means (0 for the intercept).
fn centre(x: &DMatrix<f64>) -> (DMatrix<f64>, Vec<f64>) {
    let mut xc = x.clone();
    let mut means = vec![0.0; x.ncols()];
    for (j, m) in means.iter_mut().enumerate().skip(1) {
        *m = x.column(j).iter().sum::<f64>() / x.nrows() as f64;
        for v in xc.column_mut(j).iter_mut() {
            *v -= *m;
        }
    }
    (xc, means)
}

/// Thin Householder QR of a centred design, with a rank check column by column.
fn thin_qr(xc: &DMatrix<f64>, instrument: bool) -> Result<(DMatrix<f64>, DMatrix<f64>), LsError> {
    for j in 0..xc.ncols() {
        // an all-zero (constant before centring) column would give a zero Householder axis
        if xc.column(j).norm() == 0.0 {
            return Err(LsError::Collinear {
                index: j,
                instrument,
            });
        }
    }
    let qr = xc.clone().qr();
    let r = qr.r();
    let q = qr.q();
    for j in 0..xc.ncols() {
        let scale = xc.column(j).norm();
        let pivot = r[(j, j)].abs();
        if pivot.is_nan() || pivot <= RANK_TOL * scale {
            return Err(LsError::Collinear {
                index: j,
                instrument,
            });
        }
    }
    Ok((q, r))
}

/// Inverse of an upper-triangular matrix with non-zero diagonal, by back substitution.
fn upper_inverse(r: &DMatrix<f64>) -> Result<DMatrix<f64>, LsError> {
    let k = r.nrows();
    r.solve_upper_triangular(&DMatrix::identity(k, k))
        .ok_or(LsError::NonFinite)
}

/// Maps centred-parametrisation results back: β = S β_c and V = S V_c Sᵀ.
fn uncentre(
    beta_c: &DVector<f64>,
    cov_c: &DMatrix<f64>,
    means: &[f64],
) -> (Vec<f64>, DMatrix<f64>) {
    let k = beta_c.len();
    let mut s = DMatrix::<f64>::identity(k, k);
    for (j, m) in means.iter().enumerate().skip(1) {
        s[(0, j)] = -m;
    }
    let beta = &s * beta_c;
    let cov = &s * cov_c * s.transpose();
    (beta.iter().copied().collect(), cov)
}

/// Shared tail of OLS and 2SLS: given Q̂, R̂ of the (projected, centred) regressors, the centred
/// structural design and y, computes coefficients, residuals and both covariances.
fn finish(
    q: &DMatrix<f64>,
    r: &DMatrix<f64>,
    xc: &DMatrix<f64>,
    means: &[f64],
    y: &DVector<f64>,
) -> Result<LsFit, LsError> {
    let (n, k) = (xc.nrows(), xc.ncols());
    let rinv = upper_inverse(r)?;
    let beta_c = &rinv * (q.transpose() * y);
    let resid = y - xc * &beta_c;
    let ssr = resid.norm_squared();
    let ybar = y.iter().sum::<f64>() / n as f64;
    let sst = y.iter().map(|v| (v - ybar).powi(2)).sum::<f64>();
    let s2 = ssr / (n - k) as f64;
    let bread = &rinv * rinv.transpose();
    let cov_c = &bread * s2;
    // HC0 = R⁻¹ (Qᵀ diag(e²) Q) R⁻ᵀ; HC1 = n/(n−k) · HC0
    let mut b = q.clone();
    for (i, e) in resid.iter().enumerate() {
        for v in b.row_mut(i).iter_mut() {
            *v *= e;
        }
    }
    let meat = b.transpose() * &b;
    let hc0_c = &rinv * meat * rinv.transpose();
    let hc1_c = hc0_c * (n as f64 / (n - k) as f64);
    let (beta, cov) = uncentre(&beta_c, &cov_c, means);
    let (_, cov_hc1) = uncentre(&beta_c, &hc1_c, means);
    let fit = LsFit {
        beta,
        cov,
        cov_hc1,
        residuals: resid.iter().copied().collect(),
        ssr,
        sst,
        sum_y2: y.norm_squared(),
        n,
        k,
    };
    let finite = fit.beta.iter().all(|v| v.is_finite())
        && fit.cov.iter().all(|v| v.is_finite())
        && fit.cov_hc1.iter().all(|v| v.is_finite())
        && fit.ssr.is_finite();
    if finite {
        Ok(fit)
    } else {
        Err(LsError::NonFinite)
    }
}

/// Ordinary least squares of `y` on `x` (first column of `x` must be the intercept).
pub fn ols(x: &DMatrix<f64>, y: &DVector<f64>) -> Result<LsFit, LsError> {
    let (n, k) = (x.nrows(), x.ncols());
    if n < k + 1 {
        return Err(LsError::TooFew {
            observations: n,
            needed: k + 1,
        });
    }
    let (xc, means) = centre(x);
    let (q, r) = thin_qr(&xc, false)?;
    finish(&q, &r, &xc, &means, y)
}

/// Two-stage least squares of `y` on `x` with instruments `z` (both with the intercept first; `z` must
/// contain every exogenous column of `x` as well as the excluded instruments).
///
/// Stage 1 projects the centred regressors on the column space of the centred instruments (through the
/// instruments' thin Q, X̂ = Q_z Q_zᵀ X); stage 2 is a QR least-squares fit of y on X̂. Residuals, σ² and
/// the robust meat use the structural residuals y − Xβ, the usual 2SLS convention (e.g. Wooldridge 2010,
/// Econometric Analysis of Cross Section and Panel Data, §5.2; from memory).
pub fn two_stage(x: &DMatrix<f64>, z: &DMatrix<f64>, y: &DVector<f64>) -> Result<LsFit, LsError> {
    let (n, k) = (x.nrows(), x.ncols());
    let needed = k.max(z.ncols()) + 1;
    if n < needed {
        return Err(LsError::TooFew {
            observations: n,
            needed,
        });
    }
    let (zc, _) = centre(z);
    let (qz, _) = thin_qr(&zc, true)?;
    let (xc, means) = centre(x);
    let xhat = &qz * (qz.transpose() * &xc);
    let (q, r) = thin_qr(&xhat, false)?;
    finish(&q, &r, &xc, &means, y)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn design(cols: &[&[f64]]) -> DMatrix<f64> {
        let n = cols[0].len();
        let mut x = DMatrix::from_element(n, cols.len() + 1, 1.0);
        for (j, c) in cols.iter().enumerate() {
            for i in 0..n {
                x[(i, j + 1)] = c[i];
            }
        }
        x
    }

    #[test]
    fn exact_line_is_recovered() {
        // y = 2 + 3x exactly: coefficients exact, residuals zero (common practice, no source)
        let xs = [1.0, 2.0, 4.0, 7.0, 11.0];
        let y = DVector::from_iterator(5, xs.iter().map(|x| 2.0 + 3.0 * x));
        let f = ols(&design(&[&xs]), &y).unwrap();
        assert!((f.beta[0] - 2.0).abs() < 1e-12 && (f.beta[1] - 3.0).abs() < 1e-12);
        assert!(f.ssr < 1e-20);
        assert!(f.durbin_watson().is_nan());
    }

    #[test]
    fn simple_regression_matches_closed_form() {
        // slope = Sxy/Sxx, se(slope) = s/sqrt(Sxx) (textbook simple regression formulas)
        let xs = [1.0, 2.0, 3.0, 4.0, 5.0, 6.0];
        let ys = [1.1, 1.9, 3.2, 3.9, 5.3, 5.8];
        let n = 6.0;
        let mx = xs.iter().sum::<f64>() / n;
        let my = ys.iter().sum::<f64>() / n;
        let sxx: f64 = xs.iter().map(|x| (x - mx).powi(2)).sum();
        let sxy: f64 = xs.iter().zip(&ys).map(|(x, y)| (x - mx) * (y - my)).sum();
        let b = sxy / sxx;
        let a = my - b * mx;
        let ssr: f64 = xs
            .iter()
            .zip(&ys)
            .map(|(x, y)| (y - a - b * x).powi(2))
            .sum();
        let s = (ssr / (n - 2.0)).sqrt();
        let f = ols(&design(&[&xs]), &DVector::from_row_slice(&ys)).unwrap();
        assert!((f.beta[1] - b).abs() < 1e-13);
        assert!((f.beta[0] - a).abs() < 1e-13);
        assert!((f.std_errors()[1] - s / sxx.sqrt()).abs() < 1e-13);
        let se_a = s * (1.0 / n + mx * mx / sxx).sqrt();
        assert!((f.std_errors()[0] - se_a).abs() < 1e-13);
        // HC0 for the slope: Σ (x−x̄)² e² / Sxx², HC1 multiplies by n/(n−2) (White 1980; MacKinnon–White 1985)
        let hc0: f64 = xs
            .iter()
            .zip(&ys)
            .map(|(x, y)| (x - mx).powi(2) * (y - a - b * x).powi(2))
            .sum::<f64>()
            / (sxx * sxx);
        let hc1 = (hc0 * n / (n - 2.0)).sqrt();
        assert!((f.robust_std_errors()[1] - hc1).abs() < 1e-13);
    }

    #[test]
    fn just_identified_iv_is_the_ratio_of_covariances() {
        // one endogenous regressor, one instrument: β = cov(z,y)/cov(z,x) (IV closed form)
        let zs = [1.0, 3.0, 2.0, 5.0, 4.0, 6.0, 8.0, 7.0];
        let xs = [2.1, 3.9, 3.2, 6.1, 4.8, 7.2, 8.9, 8.1];
        let ys = [5.0, 9.1, 6.9, 13.2, 10.8, 15.1, 18.8, 17.2];
        let n = zs.len() as f64;
        let m = |v: &[f64]| v.iter().sum::<f64>() / n;
        let (mz, mx, my) = (m(&zs), m(&xs), m(&ys));
        let czy: f64 = zs.iter().zip(&ys).map(|(z, y)| (z - mz) * (y - my)).sum();
        let czx: f64 = zs.iter().zip(&xs).map(|(z, x)| (z - mz) * (x - mx)).sum();
        let b = czy / czx;
        let f = two_stage(
            &design(&[&xs]),
            &design(&[&zs]),
            &DVector::from_row_slice(&ys),
        )
        .unwrap();
        assert!((f.beta[1] - b).abs() < 1e-12, "{} vs {b}", f.beta[1]);
        assert!((f.beta[0] - (my - b * mx)).abs() < 1e-12);
    }

    #[test]
    fn constant_and_duplicate_columns_are_collinear() {
        let a = [1.0, 2.0, 3.0, 4.0, 5.0];
        let c = [7.0; 5];
        let y = DVector::from_row_slice(&[1.0, 3.0, 2.0, 5.0, 4.0]);
        assert_eq!(
            ols(&design(&[&a, &c]), &y).unwrap_err(),
            LsError::Collinear {
                index: 2,
                instrument: false
            }
        );
        let twice: Vec<f64> = a.iter().map(|v| 2.0 * v).collect();
        assert_eq!(
            ols(&design(&[&a, &twice]), &y).unwrap_err(),
            LsError::Collinear {
                index: 2,
                instrument: false
            }
        );
    }

    #[test]
    fn too_few_observations() {
        let a = [1.0, 2.0];
        let y = DVector::from_row_slice(&[1.0, 3.0]);
        assert_eq!(
            ols(&design(&[&a]), &y).unwrap_err(),
            LsError::TooFew {
                observations: 2,
                needed: 3
            }
        );
    }
}
