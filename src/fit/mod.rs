//! `fit`: estimate a cobweb market from a history of seasons.
//!
//! Demand: Q_t = α + β·P_t (+ demand shifters), over every season.
//! Supply: Q_t = γ + δ·P_{t−1} (+ supply shifters), over every season but the first (it has no
//! previous price); or, with [`SupplyModel::PartialAdjustment`], Q_t = γ + δ·P_{t−1} + θ·Q_{t−1}
//! (+ shifters), the partial adjustment of Nerlove (1958). With [`FitForm::Log`] prices and quantities
//! are replaced by their natural logs (constant elasticity); shifters always enter as they are in the
//! file (take logs in the file if you want them in logs).
//!
//! Which shifter goes where: a column given as a plain shifter (`--shifter COL`) enters both equations;
//! `--demand-shifter COL` only demand, `--supply-shifter COL` only supply. Supply is always estimated by
//! OLS (the lagged price is predetermined). Demand is estimated by OLS or by two-stage least squares
//! ([`FitMethod::TwoStage`]); 2SLS instruments the current price with the supply-only shifters (which
//! move the harvest but not demand), together with the exogenous demand regressors, and is refused
//! when there are no supply-only shifters.
//!
//! Balance sheets ([`Balance`]): demand is estimated on domestic use, supply on production (or on the
//! area planted, with supply = area × trend yield); the identity production + imports − exports −
//! stock change = use is checked row by row. Shifters are held at their value in the projection
//! season ([`AtSeason`]), stochastic shifters at their sample mean with their contribution's variance
//! added to the shocks. [`check_history`] simulates the written market beside the history.
//!
//! Linear algebra: Householder QR ([`ols`]); classical and HC1 robust standard errors.

mod check;
pub mod data;
mod error;
pub mod market_file;
pub mod ols;
pub mod render;
mod report;
pub mod synth;
#[cfg(test)]
mod tests;

pub use check::{check_history, history_stats, HistoryStats};
pub use error::FitError;
pub use report::{
    BalanceInfo, CheckRow, DataInfo, EquationFit, FitReport, HistoryCheck, PartialAdjustment,
    ShifterUse, Term, TradeParity, TradeSummary, YieldTrend,
};

use nalgebra::{DMatrix, DVector};
use serde::Serialize;
use sha2::{Digest, Sha256};

use data::{printable, ColumnRequest};
use ols::LsError;

/// Levels or logs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Default)]
#[serde(rename_all = "lowercase")]
pub enum FitForm {
    /// Q on P in levels.
    #[default]
    Linear,
    /// ln Q on ln P (constant elasticity).
    Log,
}

/// Estimator for the demand equation.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Default)]
pub enum FitMethod {
    /// Ordinary least squares.
    #[default]
    #[serde(rename = "ols")]
    Ols,
    /// Two-stage least squares with the supply-only shifters as instruments.
    #[serde(rename = "2sls")]
    TwoStage,
}

/// The supply equation.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Default)]
#[serde(rename_all = "kebab-case")]
pub enum SupplyModel {
    /// Q_t = γ + δ·P_{t−1} (+ shifters): naive expectations.
    #[default]
    LaggedPrice,
    /// Q_t = γ + δ·P_{t−1} + θ·Q_{t−1} (+ shifters): partial adjustment (Nerlove 1958).
    PartialAdjustment,
}

/// Where the deterministic shifters are held in the written market.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum AtSeason {
    /// The last season of the data.
    #[default]
    Last,
    /// A given season (inside the data, or beyond it for shifters that are straight lines in the season).
    Season(i64),
    /// The sample means (every shifter at its mean).
    Mean,
}

/// Trend of yields: linear or log-linear in the season.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum YieldTrendForm {
    /// yield = a + b·season.
    #[default]
    Linear,
    /// ln yield = a + b·season.
    Log,
}

/// Balance-sheet columns (all optional; `production` and `use` go together).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Balance {
    /// Production (the harvest): supply's quantity.
    pub production: Option<String>,
    /// Domestic use: demand's quantity.
    pub domestic_use: Option<String>,
    /// Imports.
    pub imports: Option<String>,
    /// Exports.
    pub exports: Option<String>,
    /// Change in stocks (closing − opening).
    pub stock_change: Option<String>,
    /// World (border) price, for the import and export parity gaps.
    pub world_price: Option<String>,
    /// Area planted or harvested: supply's response (with `yield_col`).
    pub area: Option<String>,
    /// Yield per unit area.
    pub yield_col: Option<String>,
    /// Trend of yields.
    pub yield_trend: YieldTrendForm,
    /// Relative tolerance of the identity (of max(|use|, |production|)).
    pub tolerance: f64,
}

/// Default relative tolerance of the balance-sheet identity.
pub const BALANCE_TOLERANCE: f64 = 0.005;

/// What to estimate and from which columns.
#[derive(Debug, Clone, PartialEq)]
pub struct FitOptions {
    /// Season column (consecutive integers).
    pub season: String,
    /// Price column.
    pub price: String,
    /// Quantity column (both equations unless the balance sheet names production and use).
    pub quantity: String,
    /// Shifters entering both equations.
    pub shifters: Vec<String>,
    /// Shifters entering demand only.
    pub demand_shifters: Vec<String>,
    /// Shifters entering supply only (and the instruments for 2SLS).
    pub supply_shifters: Vec<String>,
    /// Shifters whose variance enters the shocks (each must also be one of the shifters above).
    pub stochastic_shifters: Vec<String>,
    /// Levels or logs.
    pub form: FitForm,
    /// Demand estimator.
    pub method: FitMethod,
    /// Supply equation.
    pub supply_model: SupplyModel,
    /// Where the deterministic shifters are held.
    pub at_season: AtSeason,
    /// Balance-sheet columns.
    pub balance: Balance,
}

impl Default for FitOptions {
    fn default() -> Self {
        FitOptions {
            season: "season".into(),
            price: "price".into(),
            quantity: "quantity".into(),
            shifters: Vec::new(),
            demand_shifters: Vec::new(),
            supply_shifters: Vec::new(),
            stochastic_shifters: Vec::new(),
            form: FitForm::Linear,
            method: FitMethod::Ols,
            supply_model: SupplyModel::LaggedPrice,
            at_season: AtSeason::Last,
            balance: Balance {
                tolerance: BALANCE_TOLERANCE,
                ..Balance::default()
            },
        }
    }
}

/// Lower-case hex SHA-256 of some bytes.
pub fn data_sha256(bytes: &[u8]) -> String {
    Sha256::digest(bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

/// Every column with the option that names it, in request order (price first).
fn roles(opts: &FitOptions) -> Vec<(String, &'static str)> {
    let b = &opts.balance;
    let mut all: Vec<(String, &'static str)> = vec![
        (opts.season.clone(), "--season"),
        (opts.price.clone(), "--price"),
    ];
    if b.domestic_use.is_none() || (b.area.is_none() && b.production.is_none()) {
        all.push((opts.quantity.clone(), "--quantity"));
    }
    for (c, r) in [
        (&b.production, "--production"),
        (&b.domestic_use, "--use"),
        (&b.imports, "--imports"),
        (&b.exports, "--exports"),
        (&b.stock_change, "--stock-change"),
        (&b.world_price, "--world-price"),
        (&b.area, "--area"),
        (&b.yield_col, "--yield"),
    ] {
        if let Some(c) = c {
            all.push((c.clone(), r));
        }
    }
    for (list, role) in [
        (&opts.shifters, "--shifter"),
        (&opts.demand_shifters, "--demand-shifter"),
        (&opts.supply_shifters, "--supply-shifter"),
    ] {
        for c in list {
            all.push((c.clone(), role));
        }
    }
    all
}

fn check_options(opts: &FitOptions) -> Result<(), FitError> {
    let all = roles(opts);
    for (i, (c, r)) in all.iter().enumerate() {
        if let Some((_, first)) = all[..i].iter().find(|(d, _)| d == c) {
            return Err(FitError::DuplicateColumn {
                column: printable(c),
                first: first.to_string(),
                second: r.to_string(),
            });
        }
    }
    let b = &opts.balance;
    if b.production.is_some() != b.domestic_use.is_some() && b.area.is_none() {
        return Err(FitError::Options(
            "a balance sheet needs both --production COL (supply's quantity) and --use COL (demand's quantity)".into(),
        ));
    }
    if b.area.is_some() != b.yield_col.is_some() {
        return Err(FitError::Options(
            "--area and --yield go together: supply is estimated on the area and multiplied by the trend yield".into(),
        ));
    }
    if (b.imports.is_some() || b.exports.is_some() || b.stock_change.is_some())
        && (b.production.is_none() || b.domestic_use.is_none())
    {
        return Err(FitError::Options(
            "--imports, --exports and --stock-change are checked in the balance sheet production + imports − exports − stock change = use: give --production and --use too".into(),
        ));
    }
    if b.world_price.is_some() && b.imports.is_none() && b.exports.is_none() {
        return Err(FitError::Options(
            "--world-price gives the import and export parity gaps: give --imports and/or --exports too".into(),
        ));
    }
    if !(b.tolerance.is_finite() && b.tolerance >= 0.0 && b.tolerance <= 0.5) {
        return Err(FitError::Options(format!(
            "--balance-tolerance {} is outside the allowed range 0..0.5 (a share of domestic use)",
            b.tolerance
        )));
    }
    for s in &opts.stochastic_shifters {
        let known = opts
            .shifters
            .iter()
            .chain(&opts.demand_shifters)
            .chain(&opts.supply_shifters)
            .any(|c| c == s);
        if !known {
            return Err(FitError::Options(format!(
                "--stochastic-shifter `{}` is not one of the shifters; give it also as --supply-shifter, --demand-shifter or --shifter",
                printable(s)
            )));
        }
    }
    if opts.method == FitMethod::TwoStage && opts.supply_shifters.is_empty() {
        return Err(FitError::NoInstruments);
    }
    Ok(())
}

/// One equation's design before estimation.
struct Design {
    equation: &'static str,
    names: Vec<String>,
    core: usize,
    x: DMatrix<f64>,
    y: DVector<f64>,
    /// price regressor in levels, quantity in levels (for means)
    price_level: Vec<f64>,
    quantity_level: Vec<f64>,
    first_season: i64,
    last_season: i64,
    /// rows of the data the equation uses
    rows: std::ops::Range<usize>,
}

/// A design over `rows` of the data: intercept, the price (taken over `price_rows`), the lagged
/// dependent variable when `lag_dependent`, then the shifters (over `rows`).
#[allow(clippy::too_many_arguments)]
fn build(
    equation: &'static str,
    price_name: &str,
    rows: std::ops::Range<usize>,
    price_rows: std::ops::Range<usize>,
    lag_dependent: bool,
    shifters: &[(&str, &Vec<f64>)],
    price: &[f64],
    quantity: &[f64],
    seasons: &[i64],
    form: FitForm,
) -> Design {
    let n = rows.len();
    let core = if lag_dependent { 3 } else { 2 };
    let k = core + shifters.len();
    let tr = |v: f64| match form {
        FitForm::Linear => v,
        FitForm::Log => v.ln(),
    };
    let mut x = DMatrix::from_element(n, k, 1.0);
    for (i, pi) in price_rows.clone().enumerate() {
        x[(i, 1)] = tr(price[pi]);
        if lag_dependent {
            x[(i, 2)] = tr(quantity[pi]);
        }
    }
    for (j, (_, col)) in shifters.iter().enumerate() {
        for (i, r) in rows.clone().enumerate() {
            x[(i, core + j)] = col[r];
        }
    }
    let y = DVector::from_iterator(n, rows.clone().map(|r| tr(quantity[r])));
    let mut names = vec!["intercept".to_string(), price_name.to_string()];
    if lag_dependent {
        names.push("lagged_quantity".into());
    }
    names.extend(shifters.iter().map(|(s, _)| s.to_string()));
    Design {
        equation,
        names,
        core,
        x,
        y,
        price_level: price[price_rows].to_vec(),
        quantity_level: quantity[rows.clone()].to_vec(),
        first_season: seasons.get(rows.start).copied().unwrap_or(0),
        last_season: seasons
            .get(rows.end.saturating_sub(1))
            .copied()
            .unwrap_or(0),
        rows,
    }
}

fn map_ls_error(
    e: LsError,
    file: &str,
    d: &Design,
    instrument_names: &[String],
    note: &str,
) -> FitError {
    match e {
        LsError::TooFew {
            observations,
            needed,
        } => FitError::TooFewSeasons {
            file: file.into(),
            equation: d.equation.into(),
            parameters: d.names.len(),
            terms: d
                .names
                .iter()
                .map(|n| printable(n))
                .collect::<Vec<_>>()
                .join(", "),
            needed,
            observations,
            note: note.into(),
        },
        LsError::Collinear { index, instrument } => {
            let names = if instrument {
                instrument_names
            } else {
                &d.names[..]
            };
            FitError::Collinear {
                file: file.into(),
                equation: d.equation.into(),
                what: if instrument {
                    "instrument".into()
                } else {
                    "regressor".into()
                },
                column: printable(&names.get(index).cloned().unwrap_or_default()),
                before: names[..index.min(names.len())]
                    .iter()
                    .map(|n| printable(n))
                    .collect::<Vec<_>>()
                    .join(", "),
            }
        }
        LsError::NonFinite => FitError::NonFinite {
            file: file.into(),
            equation: d.equation.into(),
        },
    }
}

fn mean(v: &[f64]) -> f64 {
    if v.is_empty() {
        f64::NAN
    } else {
        v.iter().sum::<f64>() / v.len() as f64
    }
}

fn sample_variance(v: &[f64]) -> f64 {
    if v.len() < 2 {
        return 0.0;
    }
    let m = mean(v);
    v.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (v.len() - 1) as f64
}

/// Where each shifter is held: `held(name, column, rows)` → (value, how).
struct Holder<'a> {
    file: &'a str,
    seasons: &'a [i64],
    at: AtSeason,
    stochastic: &'a [String],
}

impl Holder<'_> {
    /// The projection season (None: sample means).
    fn season(&self) -> Option<i64> {
        match self.at {
            AtSeason::Last => self.seasons.last().copied(),
            AtSeason::Season(s) => Some(s),
            AtSeason::Mean => None,
        }
    }

    fn hold(
        &self,
        name: &str,
        col: &[f64],
        rows: std::ops::Range<usize>,
    ) -> Result<ShifterUse, FitError> {
        let sample = &col[rows];
        let sample_mean = mean(sample);
        let stochastic = self.stochastic.iter().any(|s| s == name);
        let (held_at, held_how) = match (stochastic, self.season()) {
            (true, _) => (
                sample_mean,
                "its sample mean (stochastic: its variance is in the shocks)".to_string(),
            ),
            (false, None) => (sample_mean, "its sample mean".to_string()),
            (false, Some(s)) => (
                self.value_in(name, col, s)?,
                format!("its value in season {s}"),
            ),
        };
        Ok(ShifterUse {
            name: name.to_string(),
            coefficient: f64::NAN,
            sample_mean,
            sample_variance: sample_variance(sample),
            held_at,
            stochastic,
            held_how,
        })
    }

    /// The column's value in season `s`: read inside the data, extended along a straight line in the
    /// season outside it (only for a column that is one, to rounding).
    fn value_in(&self, name: &str, col: &[f64], s: i64) -> Result<f64, FitError> {
        let (first, last) = (self.seasons[0], *self.seasons.last().unwrap_or(&0));
        if (first..=last).contains(&s) {
            return Ok(col[(s - first) as usize]);
        }
        let n = col.len();
        let no = || FitError::NoProjection {
            file: self.file.into(),
            column: printable(name),
            season: s,
            first,
            last,
        };
        if n < 2 {
            return Err(no());
        }
        let step = (col[n - 1] - col[0]) / (n - 1) as f64;
        let scale = col.iter().fold(0.0f64, |a, v| a.max(v.abs())).max(1.0);
        let straight = col
            .iter()
            .enumerate()
            .all(|(i, v)| (v - (col[0] + step * i as f64)).abs() <= 1e-9 * scale);
        if !straight {
            return Err(no());
        }
        Ok(col[0] + step * (s - first) as f64)
    }
}

#[allow(clippy::too_many_arguments)]
fn equation_fit(
    d: &Design,
    f: &ols::LsFit,
    method: FitMethod,
    form: FitForm,
    instruments: Vec<String>,
    dependent: &str,
    shifters: Vec<ShifterUse>,
) -> EquationFit {
    let se = f.std_errors();
    let rse = f.robust_std_errors();
    let terms: Vec<Term> = d
        .names
        .iter()
        .enumerate()
        .map(|(j, name)| Term {
            name: name.clone(),
            estimate: f.beta[j],
            std_error: se[j],
            robust_std_error: rse[j],
            t: f.beta[j] / se[j],
            regressor_mean: mean(d.x.column(j).as_slice()),
        })
        .collect();
    let shifters = shifters
        .into_iter()
        .zip(&terms[d.core..])
        .map(|(mut s, t)| {
            s.coefficient = t.estimate;
            s
        })
        .collect();
    let mean_price = mean(&d.price_level);
    let mean_quantity = mean(&d.quantity_level);
    let elasticity_at_means = match form {
        FitForm::Linear => f.beta[1] * mean_price / mean_quantity,
        FitForm::Log => f.beta[1],
    };
    EquationFit {
        method,
        dependent: match form {
            FitForm::Linear => dependent.to_string(),
            FitForm::Log => format!("ln({dependent})"),
        },
        terms,
        r_squared: f.r_squared(),
        residual_sd: f.residual_sd(),
        durbin_watson: f.durbin_watson(),
        elasticity_at_means,
        observations: f.n,
        first_season: d.first_season,
        last_season: d.last_season,
        mean_price,
        mean_quantity,
        robust_kind: "HC1".into(),
        instruments,
        shifters,
        core_terms: d.core,
    }
}

/// Refuses a column whose magnitude its squares cannot hold (underflow below 1e-100, overflow above).
fn check_scale(file: &str, name: &str, col: &[f64]) -> Result<(), FitError> {
    let big = col.iter().fold(0.0f64, |a, v| a.max(v.abs()));
    if big > 0.0 && !(1e-100..=1e100).contains(&big) {
        return Err(FitError::Scale {
            file: file.into(),
            column: printable(name),
            magnitude: format!("{big:.1e}"),
        });
    }
    Ok(())
}

/// The loaded columns by name.
struct Columns {
    names: Vec<String>,
    values: Vec<Vec<f64>>,
}

impl Columns {
    fn get(&self, name: &str) -> &Vec<f64> {
        let i = self.names.iter().position(|n| n == name).unwrap_or(0);
        &self.values[i]
    }
}

/// Estimates demand and supply from CSV text. `file_label` names the data in messages and comments.
pub fn fit_text(
    file_label: &str,
    csv_text: &str,
    opts: &FitOptions,
) -> Result<FitReport, FitError> {
    check_options(opts)?;
    let all = roles(opts);
    let requests: Vec<ColumnRequest> = all[1..]
        .iter()
        .map(|(c, r)| ColumnRequest { role: r, name: c })
        .collect();
    let season_req = ColumnRequest {
        role: "--season",
        name: &opts.season,
    };
    let h = data::load(file_label, csv_text, &season_req, &requests)?;
    let cols = Columns {
        names: all[1..].iter().map(|(c, _)| c.clone()).collect(),
        values: h.columns.clone(),
    };
    let b = &opts.balance;
    let price = cols.get(&opts.price);
    let demand_q_name = b.domestic_use.as_deref().unwrap_or(&opts.quantity);
    let supply_q_name = b
        .area
        .as_deref()
        .or(b.production.as_deref())
        .unwrap_or(&opts.quantity);
    let demand_q = cols.get(demand_q_name);
    let supply_q = cols.get(supply_q_name);
    let mut notes = Vec::new();
    for s in opts
        .stochastic_shifters
        .iter()
        .filter(|s| opts.shifters.contains(s))
    {
        notes.push(format!(
            "stochastic shifter `{}` enters both equations: its variance is added to supply_sd and demand_sd, whose draws are independent (the correlation it creates is left out)",
            printable(s)
        ));
    }
    if h.delimiter != b',' {
        notes.push(format!(
            "read {} as {}-separated (detected from the header row)",
            printable(file_label),
            data::delimiter_name(h.delimiter)
        ));
    }

    // scale: squares of values in levels must neither underflow nor overflow
    for (name, col) in cols.names.iter().zip(&cols.values) {
        let logged = opts.form == FitForm::Log
            && [opts.price.as_str(), demand_q_name, supply_q_name].contains(&name.as_str());
        if !logged {
            check_scale(file_label, name, col)?;
        }
    }
    let mut positive: Vec<&str> = Vec::new();
    if opts.form == FitForm::Log {
        positive.extend([opts.price.as_str(), demand_q_name, supply_q_name]);
    }
    // yields multiply the area: a market needs them positive (and the log trend takes logs)
    positive.extend(b.yield_col.as_deref());
    for name in positive {
        let col = cols.get(name);
        if let Some(i) = col.iter().position(|v| *v <= 0.0) {
            return Err(FitError::NonPositive {
                file: file_label.into(),
                line: h.lines[i],
                season: h.seasons[i].to_string(),
                column: printable(name),
                value: col[i],
            });
        }
    }
    let n = h.seasons.len();

    // the balance-sheet identity, row by row
    let balance = match (&b.production, &b.domestic_use) {
        (Some(pn), Some(un)) => Some(check_balance(file_label, &h, &cols, b, pn, un, price)?),
        _ => None,
    };
    if let Some(bi) = &balance {
        if !bi.identity_checked {
            notes.push(
                "balance identity not checked: no imports, exports or stock-change column was given"
                    .into(),
            );
        }
        if bi.trade.is_some() {
            notes.push(
                "trade left out: the written market is closed (harvest = domestic use at the cleared price); a [trade] section from the imports and exports awaits the open-economy model".into(),
            );
        }
        if b.stock_change.is_some() {
            notes.push(format!(
                "stock changes left out: the written market has no private stocks (mean stock change {} a season)",
                render::fmt_sig(bi.stock_change_mean)
            ));
        }
    }
    // production against area × yield
    if let (Some(pn), Some(an), Some(yn)) = (&b.production, &b.area, &b.yield_col) {
        let (p, a, y) = (cols.get(pn), cols.get(an), cols.get(yn));
        let mut bad = Vec::new();
        for i in 0..n {
            let gap = p[i] - a[i] * y[i];
            if gap.abs() > b.tolerance * p[i].abs().max(1e-300) {
                bad.push(format!(
                    "line {} (season {}): production {} but area × yield {}",
                    h.lines[i],
                    h.seasons[i],
                    render::fmt_sig(p[i]),
                    render::fmt_sig(a[i] * y[i])
                ));
            }
        }
        if !bad.is_empty() {
            return Err(FitError::Options(format!(
                "{}: production ≠ area × yield beyond the tolerance {} in {} row(s): {}",
                printable(file_label),
                b.tolerance,
                bad.len(),
                bad.iter().take(10).cloned().collect::<Vec<_>>().join("; ")
            )));
        }
    }

    let holder = Holder {
        file: file_label,
        seasons: &h.seasons,
        at: opts.at_season,
        stochastic: &opts.stochastic_shifters,
    };
    fn named<'a>(list: &'a [String], cols: &'a Columns) -> Vec<(&'a str, &'a Vec<f64>)> {
        list.iter().map(|c| (c.as_str(), cols.get(c))).collect()
    }
    let demand_sh: Vec<_> = named(&opts.shifters, &cols)
        .into_iter()
        .chain(named(&opts.demand_shifters, &cols))
        .collect();
    let supply_only = named(&opts.supply_shifters, &cols);
    let supply_sh: Vec<_> = named(&opts.shifters, &cols)
        .into_iter()
        .chain(supply_only.iter().copied())
        .collect();

    let dd = build(
        "demand",
        "price",
        0..n,
        0..n,
        false,
        &demand_sh,
        price,
        demand_q,
        &h.seasons,
        opts.form,
    );
    let pa = opts.supply_model == SupplyModel::PartialAdjustment;
    let ds = build(
        "supply",
        "lagged_price",
        1.min(n)..n,
        0..n.saturating_sub(1),
        pa,
        &supply_sh,
        price,
        supply_q,
        &h.seasons,
        opts.form,
    );
    let hold_all = |d: &Design, sh: &[(&str, &Vec<f64>)]| -> Result<Vec<ShifterUse>, FitError> {
        sh.iter()
            .map(|(name, col)| holder.hold(name, col, d.rows.clone()))
            .collect()
    };
    let demand_hold = hold_all(&dd, &demand_sh)?;
    let supply_hold = hold_all(&ds, &supply_sh)?;

    let demand = match opts.method {
        FitMethod::Ols => {
            let f =
                ols::ols(&dd.x, &dd.y).map_err(|e| map_ls_error(e, file_label, &dd, &[], ""))?;
            equation_fit(
                &dd,
                &f,
                FitMethod::Ols,
                opts.form,
                Vec::new(),
                demand_q_name,
                demand_hold,
            )
        }
        FitMethod::TwoStage => {
            // instruments: intercept, exogenous demand shifters, then the excluded supply-only shifters
            let mut znames = vec!["intercept".to_string()];
            znames.extend(demand_sh.iter().map(|(s, _)| s.to_string()));
            znames.extend(supply_only.iter().map(|(s, _)| s.to_string()));
            let zcols: Vec<&Vec<f64>> = demand_sh
                .iter()
                .chain(&supply_only)
                .map(|(_, c)| *c)
                .collect();
            let mut z = DMatrix::from_element(n, 1 + zcols.len(), 1.0);
            for (j, c) in zcols.iter().enumerate() {
                for i in 0..n {
                    z[(i, j + 1)] = c[i];
                }
            }
            let f = ols::two_stage(&dd.x, &z, &dd.y)
                .map_err(|e| map_ls_error(e, file_label, &dd, &znames, ""))?;
            let excluded = supply_only.iter().map(|(s, _)| s.to_string()).collect();
            equation_fit(
                &dd,
                &f,
                FitMethod::TwoStage,
                opts.form,
                excluded,
                demand_q_name,
                demand_hold,
            )
        }
    };
    let fs = ols::ols(&ds.x, &ds.y).map_err(|e| {
        map_ls_error(
            e,
            file_label,
            &ds,
            &[],
            " (the first season has no previous price)",
        )
    })?;
    let supply = equation_fit(
        &ds,
        &fs,
        FitMethod::Ols,
        opts.form,
        Vec::new(),
        supply_q_name,
        supply_hold,
    );
    for (label, e) in [("demand", &demand), ("supply", &supply)] {
        // a zero standard error beside non-zero residuals is lost precision, never a result
        if e.terms
            .iter()
            .any(|t| t.std_error.is_nan() || t.std_error <= 0.0)
            && e.residual_sd > 0.0
        {
            return Err(FitError::NonFinite {
                file: file_label.into(),
                equation: label.into(),
            });
        }
    }
    let partial_adjustment = pa.then(|| {
        let th = &supply.terms[2];
        let theta = th.estimate;
        let short = supply.elasticity_at_means;
        PartialAdjustment {
            theta,
            theta_std_error: th.std_error,
            adjustment: 1.0 - theta,
            short_run_elasticity: short,
            long_run_elasticity: short / (1.0 - theta),
            long_run_slope: supply.slope() / (1.0 - theta),
        }
    });
    let projection_season = holder.season();
    let yield_trend = match (&b.area, &b.yield_col) {
        (Some(_), Some(yn)) => Some(fit_yield_trend(
            file_label,
            &h.seasons,
            yn,
            cols.get(yn),
            b.yield_trend,
            projection_season,
        )?),
        _ => None,
    };
    let history_quantity = match (&b.production, &b.area, &b.yield_col) {
        (Some(p), _, _) => cols.get(p).clone(),
        (None, Some(a), Some(y)) => cols
            .get(a)
            .iter()
            .zip(cols.get(y))
            .map(|(a, y)| a * y)
            .collect(),
        _ => cols.get(&opts.quantity).clone(),
    };
    Ok(FitReport {
        demand,
        supply,
        form: opts.form,
        supply_model: opts.supply_model,
        partial_adjustment,
        yield_trend,
        balance,
        projection_season,
        notes,
        history_check: None,
        data: DataInfo {
            file: file_label.into(),
            sha256: data_sha256(csv_text.as_bytes()),
            seasons: n,
            last_season: *h.seasons.last().unwrap_or(&0),
            last_price: *price.last().unwrap_or(&f64::NAN),
            delimiter: data::delimiter_name(h.delimiter).into(),
        },
        history_price: price.clone(),
        history_quantity,
        last_supply_quantity: *supply_q.last().unwrap_or(&f64::NAN),
    })
}

/// Checks production + imports − exports − stock change = use row by row.
fn check_balance(
    file: &str,
    h: &data::History,
    cols: &Columns,
    b: &Balance,
    production: &str,
    domestic_use: &str,
    price: &[f64],
) -> Result<BalanceInfo, FitError> {
    let n = h.seasons.len();
    let zeros = vec![0.0; n];
    let col = |c: &Option<String>| c.as_deref().map(|c| cols.get(c)).unwrap_or(&zeros);
    let (p, u) = (cols.get(production), cols.get(domestic_use));
    let (im, ex, ds) = (col(&b.imports), col(&b.exports), col(&b.stock_change));
    let checked = b.imports.is_some() || b.exports.is_some() || b.stock_change.is_some();
    let mut largest = 0.0f64;
    let mut bad = Vec::new();
    for i in 0..n {
        let gap = p[i] + im[i] - ex[i] - ds[i] - u[i];
        largest = largest.max(gap.abs());
        if checked && gap.abs() > b.tolerance * u[i].abs().max(p[i].abs()) {
            bad.push(format!(
                "line {} (season {}): production {} + imports {} − exports {} − stock change {} = {} but use is {} (gap {})",
                h.lines[i],
                h.seasons[i],
                render::fmt_sig(p[i]),
                render::fmt_sig(im[i]),
                render::fmt_sig(ex[i]),
                render::fmt_sig(ds[i]),
                render::fmt_sig(u[i] + gap),
                render::fmt_sig(u[i]),
                render::fmt_sig(gap)
            ));
        }
    }
    if !bad.is_empty() {
        let count = bad.len();
        let mut rows = bad.into_iter().take(10).collect::<Vec<_>>().join("; ");
        if count > 10 {
            rows.push_str(&format!("; and {} more", count - 10));
        }
        return Err(FitError::Balance {
            file: printable(file),
            tolerance: b.tolerance,
            count,
            rows,
        });
    }
    let trade = (b.imports.is_some() || b.exports.is_some()).then(|| TradeSummary {
        imports_mean: mean(im),
        exports_mean: mean(ex),
        import_seasons: im.iter().filter(|v| **v > 0.0).count(),
        export_seasons: ex.iter().filter(|v| **v > 0.0).count(),
        parity: b.world_price.as_deref().map(|wn| {
            let w = cols.get(wn);
            let median = |mut v: Vec<f64>| -> Option<f64> {
                (!v.is_empty()).then(|| crate::stochastic::quantiles(&mut v, &[0.5])[0])
            };
            let stats = check::history_stats(w, w);
            TradeParity {
                column: wn.to_string(),
                world_price: mean(w),
                world_price_cv: stats.price_cv,
                world_price_persistence: stats.price_autocorrelation,
                import_cost: median(
                    (0..n)
                        .filter(|&i| im[i] > 0.0)
                        .map(|i| price[i] - w[i])
                        .collect(),
                ),
                export_cost: median(
                    (0..n)
                        .filter(|&i| ex[i] > 0.0)
                        .map(|i| w[i] - price[i])
                        .collect(),
                ),
            }
        }),
    });
    Ok(BalanceInfo {
        identity_checked: checked,
        largest_gap: if checked { largest } else { f64::NAN },
        tolerance: b.tolerance,
        stock_change_mean: mean(ds),
        trade,
    })
}

/// Fits the yield trend (linear or log-linear in the season) and evaluates it at the projection season.
fn fit_yield_trend(
    file: &str,
    seasons: &[i64],
    name: &str,
    y: &[f64],
    form: YieldTrendForm,
    at: Option<i64>,
) -> Result<YieldTrend, FitError> {
    let n = y.len();
    let mut x = DMatrix::from_element(n, 2, 1.0);
    for (i, s) in seasons.iter().enumerate() {
        x[(i, 1)] = *s as f64;
    }
    let log = form == YieldTrendForm::Log;
    let yv = DVector::from_iterator(n, y.iter().map(|v| if log { v.ln() } else { *v }));
    let d = Design {
        equation: "yield trend",
        names: vec!["intercept".into(), "season".into()],
        core: 2,
        x: x.clone(),
        y: yv.clone(),
        price_level: Vec::new(),
        quantity_level: Vec::new(),
        first_season: 0,
        last_season: 0,
        rows: 0..n,
    };
    let f = ols::ols(&x, &yv).map_err(|e| map_ls_error(e, file, &d, &[], ""))?;
    let s_at = at
        .map(|s| s as f64)
        .unwrap_or_else(|| mean(d.x.column(1).as_slice()));
    let fitted = f.beta[0] + f.beta[1] * s_at;
    let sd = f.residual_sd();
    let (at_projection, yield_cv) = if log {
        (fitted.exp(), (sd * sd).exp_m1().sqrt())
    } else {
        (fitted, sd / fitted)
    };
    if !(at_projection > 0.0 && yield_cv.is_finite()) {
        return Err(FitError::Market {
            message: format!(
                "the trend of `{}` gives a yield of {} in the projection season; a market needs a positive yield",
                printable(name),
                render::fmt_sig(at_projection)
            ),
        });
    }
    Ok(YieldTrend {
        column: name.to_string(),
        form: if log { "log" } else { "linear" }.into(),
        intercept: f.beta[0],
        slope: f.beta[1],
        slope_std_error: f.std_errors()[1],
        residual_sd: sd,
        at_projection,
        yield_cv,
        observations: n,
    })
}
