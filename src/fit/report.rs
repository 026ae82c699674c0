//! The result types of `fit` (serialised as the JSON documented on the interface page).

use serde::Serialize;

use super::{FitForm, FitMethod};

/// One estimated coefficient.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Term {
    /// `intercept`, `price` / `lagged_price`, or a shifter's column name.
    pub name: String,
    /// The coefficient.
    pub estimate: f64,
    /// Classical standard error.
    pub std_error: f64,
    /// HC1 heteroskedasticity-robust standard error.
    pub robust_std_error: f64,
    /// estimate / std_error.
    pub t: f64,
    /// Mean of the regressor over the equation's sample (1 for the intercept; mean of ln P in log form).
    pub regressor_mean: f64,
}

/// One estimated equation.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EquationFit {
    /// `ols` or `2sls`.
    pub method: FitMethod,
    /// `quantity` or `ln(quantity)`.
    pub dependent: String,
    /// Coefficients in design order.
    pub terms: Vec<Term>,
    /// 1 − SSR/SST.
    pub r_squared: f64,
    /// sqrt(SSR/(n − k)), in the units of the dependent variable.
    pub residual_sd: f64,
    /// Durbin–Watson statistic of the residuals in season order.
    pub durbin_watson: f64,
    /// Price elasticity at the sample means (linear: slope·mean price/mean quantity; log: the slope).
    pub elasticity_at_means: f64,
    /// Number of seasons used.
    pub observations: usize,
    /// First and last season used.
    pub first_season: i64,
    /// Last season used.
    pub last_season: i64,
    /// Mean of the price regressor in levels (the lagged price for supply).
    pub mean_price: f64,
    /// Mean of the quantity in levels.
    pub mean_quantity: f64,
    /// Which robust covariance: always `HC1`.
    pub robust_kind: String,
    /// Excluded instruments (2SLS only).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub instruments: Vec<String>,
}

impl EquationFit {
    /// The coefficient on the price (or lagged price).
    pub fn slope(&self) -> f64 {
        self.terms[1].estimate
    }

    /// Intercept with every shifter held at its sample mean (γ + Σ φ_j · mean_j).
    pub fn intercept_at_shifter_means(&self) -> f64 {
        self.terms[0].estimate
            + self.terms[2..]
                .iter()
                .map(|t| t.estimate * t.regressor_mean)
                .sum::<f64>()
    }
}

/// Where the data came from.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DataInfo {
    /// The file label given to [`fit_text`].
    pub file: String,
    /// SHA-256 of the CSV text, lower-case hex.
    pub sha256: String,
    /// Number of seasons in the file.
    pub seasons: usize,
    /// Last season in the file.
    pub last_season: i64,
    /// Price in the last season (becomes `initial_price` in the market file).
    pub last_price: f64,
}

/// The result of `fit`: JSON `{"demand": {...}, "supply": {...}, ...}`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FitReport {
    /// The demand equation.
    pub demand: EquationFit,
    /// The supply equation.
    pub supply: EquationFit,
    /// Levels or logs.
    pub form: FitForm,
    /// Source data.
    pub data: DataInfo,
}
