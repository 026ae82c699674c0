//! The result types of `fit` (serialised as the JSON documented on the interface page).

use serde::Serialize;

use super::{FitForm, FitMethod, SupplyModel};

/// One estimated coefficient.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Term {
    /// `intercept`, `price` / `lagged_price` / `lagged_quantity`, or a shifter's column name.
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

/// How a shifter of an equation is held in the written market file.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ShifterUse {
    /// Column name.
    pub name: String,
    /// Its coefficient in the equation.
    pub coefficient: f64,
    /// Mean over the equation's sample.
    pub sample_mean: f64,
    /// Sample variance over the equation's sample (divisor n − 1).
    pub sample_variance: f64,
    /// The value the market file holds it at.
    pub held_at: f64,
    /// Declared stochastic: held at its sample mean, its contribution's variance goes into the shocks.
    pub stochastic: bool,
    /// In words: "its value in season 2024", "its sample mean (stochastic)", ...
    pub held_how: String,
}

impl ShifterUse {
    /// Variance of the shifter's fitted contribution, coefficient² × sample variance.
    pub fn contribution_variance(&self) -> f64 {
        self.coefficient * self.coefficient * self.sample_variance
    }
}

/// One estimated equation.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EquationFit {
    /// `ols` or `2sls`.
    pub method: FitMethod,
    /// `quantity`, `ln(quantity)`, or the balance-sheet column's name (`use`, `production`, `area`).
    pub dependent: String,
    /// Coefficients in design order: the core terms (intercept, price, ...) then the shifters.
    pub terms: Vec<Term>,
    /// 1 − SSR/SST.
    pub r_squared: f64,
    /// sqrt(SSR/(n − k)), in the units of the dependent variable.
    pub residual_sd: f64,
    /// Durbin–Watson statistic of the residuals in season order.
    pub durbin_watson: f64,
    /// Price elasticity at the sample means (linear: slope·mean price/mean quantity; log: the slope);
    /// for partial adjustment the short-run elasticity.
    pub elasticity_at_means: f64,
    /// Number of seasons used.
    pub observations: usize,
    /// First and last season used.
    pub first_season: i64,
    /// Last season used.
    pub last_season: i64,
    /// Mean of the price regressor in levels (the lagged price for supply).
    pub mean_price: f64,
    /// Mean of the dependent quantity in levels.
    pub mean_quantity: f64,
    /// Which robust covariance: always `HC1`.
    pub robust_kind: String,
    /// Excluded instruments (2SLS only).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub instruments: Vec<String>,
    /// How each shifter is held in the market file (same order as the shifter terms).
    pub shifters: Vec<ShifterUse>,
    /// Number of terms before the shifters (2, or 3 with `lagged_quantity`).
    #[serde(skip)]
    pub core_terms: usize,
}

impl EquationFit {
    /// The coefficient on the price (or lagged price).
    pub fn slope(&self) -> f64 {
        self.terms[1].estimate
    }

    /// Intercept with every shifter held where the market file holds it (γ + Σ φ_j · held_j).
    pub fn held_intercept(&self) -> f64 {
        self.terms[0].estimate
            + self
                .shifters
                .iter()
                .map(|s| s.coefficient * s.held_at)
                .sum::<f64>()
    }

    /// Intercept with every shifter held at its sample mean (γ + Σ φ_j · mean_j).
    pub fn intercept_at_shifter_means(&self) -> f64 {
        self.terms[0].estimate
            + self
                .shifters
                .iter()
                .map(|s| s.coefficient * s.sample_mean)
                .sum::<f64>()
    }

    /// Variance added to the equation's shock by its stochastic shifters.
    pub fn stochastic_variance(&self) -> f64 {
        self.shifters
            .iter()
            .filter(|s| s.stochastic)
            .map(ShifterUse::contribution_variance)
            .sum()
    }

    /// The shock's standard deviation: residual variance plus the stochastic shifters' variance.
    pub fn shock_sd(&self) -> f64 {
        (self.residual_sd * self.residual_sd + self.stochastic_variance()).sqrt()
    }
}

/// Partial adjustment of supply (Nerlove 1958): Q_t = γ + δ·P_{t−1} + θ·Q_{t−1}.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PartialAdjustment {
    /// θ, the weight of last season's quantity.
    pub theta: f64,
    /// Its classical standard error.
    pub theta_std_error: f64,
    /// λ = 1 − θ, the share of the gap to the desired quantity closed in a season (the adaptive
    /// expectations weight of the written market).
    pub adjustment: f64,
    /// Short-run price elasticity at the means (δ·P̄/Q̄; log form: δ).
    pub short_run_elasticity: f64,
    /// Long-run elasticity = short-run / (1 − θ).
    pub long_run_elasticity: f64,
    /// Long-run slope b = δ / (1 − θ) (log form: the long-run elasticity).
    pub long_run_slope: f64,
}

/// The trend of yields (supply = area × trend yield).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct YieldTrend {
    /// The yield column.
    pub column: String,
    /// `linear` (yield = a + b·season) or `log` (ln yield = a + b·season).
    pub form: String,
    /// a (at season 0, so mostly a number to read with b).
    pub intercept: f64,
    /// b per season.
    pub slope: f64,
    /// Classical standard error of b.
    pub slope_std_error: f64,
    /// Residual sd (yield units, or log units for `log`).
    pub residual_sd: f64,
    /// Trend yield in the projection season.
    pub at_projection: f64,
    /// Coefficient of variation of yield about its trend, the market file's `yield_cv`.
    pub yield_cv: f64,
    /// Seasons used.
    pub observations: usize,
}

/// Trade volumes in the balance sheet (the open-economy market section is not written yet).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TradeSummary {
    /// Mean imports over the sample (0 without an imports column).
    pub imports_mean: f64,
    /// Mean exports over the sample.
    pub exports_mean: f64,
    /// Seasons with imports > 0.
    pub import_seasons: usize,
    /// Seasons with exports > 0.
    pub export_seasons: usize,
    /// Parity gaps against a world price column (`--world-price`), ready for a `[trade]` section.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub parity: Option<TradeParity>,
}

/// What a `[trade]` section would hold, from the data (the open-economy model is not built yet).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TradeParity {
    /// The world price column.
    pub column: String,
    /// Its sample mean.
    pub world_price: f64,
    /// Its coefficient of variation (sample sd / mean).
    pub world_price_cv: f64,
    /// Its lag-1 autocorrelation.
    pub world_price_persistence: f64,
    /// Median of P_t − W_t over the seasons with imports (the import parity gap), if any.
    pub import_cost: Option<f64>,
    /// Median of W_t − P_t over the seasons with exports (the export parity gap), if any.
    pub export_cost: Option<f64>,
}

/// The balance-sheet columns and the identity check.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BalanceInfo {
    /// production + imports − exports − stock change = use was checked row by row.
    pub identity_checked: bool,
    /// Largest |production + imports − exports − stock change − use| over the rows.
    pub largest_gap: f64,
    /// Relative tolerance used (of max(|use|, |production|)).
    pub tolerance: f64,
    /// Mean stock change (0 without a stock-change column).
    pub stock_change_mean: f64,
    /// Trade volumes, when an imports or exports column was given.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub trade: Option<TradeSummary>,
}

/// Where the data came from.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DataInfo {
    /// The file label given to [`fit_text`](super::fit_text).
    pub file: String,
    /// SHA-256 of the CSV text, lower-case hex.
    pub sha256: String,
    /// Number of seasons in the file.
    pub seasons: usize,
    /// Last season in the file.
    pub last_season: i64,
    /// Price in the last season (becomes `initial_price` in the market file).
    pub last_price: f64,
    /// Field delimiter used (`,`, `;` or a tab).
    pub delimiter: String,
}

/// Simulated statistic beside the history's.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CheckRow {
    /// `price_cv`, `quantity_cv`, `price_autocorrelation`, `quantity_autocorrelation`.
    pub statistic: String,
    /// The history's value.
    pub history: f64,
    /// 5 % quantile over the simulated histories.
    pub p05: f64,
    /// Median.
    pub p50: f64,
    /// 95 % quantile.
    pub p95: f64,
    /// The history's value lies outside [p05, p95].
    pub outside: bool,
}

/// The written market simulated over histories as long as the data, beside the data.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HistoryCheck {
    /// Simulated histories that finished (diverged ones are counted below and left out).
    pub replications: usize,
    /// Seasons per simulated history (the data's length).
    pub periods: usize,
    /// Seed of the simulation.
    pub seed: u64,
    /// Simulated histories that diverged.
    pub diverged: usize,
    /// One row per statistic.
    pub rows: Vec<CheckRow>,
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
    /// `lagged-price` or `partial-adjustment`.
    pub supply_model: SupplyModel,
    /// Partial adjustment's θ and elasticities.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub partial_adjustment: Option<PartialAdjustment>,
    /// Yield trend when supply is area × trend yield.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub yield_trend: Option<YieldTrend>,
    /// Balance-sheet check.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub balance: Option<BalanceInfo>,
    /// The season the deterministic shifters are held at (`null`: their sample means).
    pub projection_season: Option<i64>,
    /// What the written market leaves out, and other things the analyst should know.
    pub notes: Vec<String>,
    /// The written market simulated against the history (filled by [`check_history`](super::check_history)).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub history_check: Option<HistoryCheck>,
    /// Source data.
    pub data: DataInfo,
    /// The history's price series (for the check against history).
    #[serde(skip)]
    pub history_price: Vec<f64>,
    /// The history's harvest series: production, quantity, or area × yield.
    #[serde(skip)]
    pub history_quantity: Vec<f64>,
    /// Last observed value of the supply equation's dependent variable (partial adjustment's start).
    #[serde(skip)]
    pub last_supply_quantity: f64,
}
