//! `fit`: estimate a cobweb market from a history of seasons.
//!
//! Demand: Q_t = α + β·P_t (+ demand shifters), over every season.
//! Supply: Q_t = γ + δ·P_{t−1} (+ supply shifters), over every season but the first (it has no
//! previous price). With [`FitForm::Log`] prices and quantities are replaced by their natural logs
//! (constant elasticity); shifters always enter as they are in the file (take logs in the file if you
//! want them in logs).
//!
//! Which shifter goes where: a column given as a plain shifter (`--shifter COL`) enters both equations;
//! `--demand-shifter COL` only demand, `--supply-shifter COL` only supply. Supply is always estimated by
//! OLS (the lagged price is predetermined). Demand is estimated by OLS or by two-stage least squares
//! ([`FitMethod::TwoStage`]); 2SLS instruments the current price with the supply-only shifters (which
//! move the harvest but not demand), together with the exogenous demand regressors, and is refused
//! when there are no supply-only shifters.
//!
//! Linear algebra: Householder QR ([`ols`]); classical and HC1 robust standard errors.

pub mod data;
mod error;
pub mod market_file;
pub mod ols;
pub mod render;
mod report;
pub mod synth;
#[cfg(test)]
mod tests;

pub use error::FitError;
pub use report::{DataInfo, EquationFit, FitReport, Term};

use nalgebra::{DMatrix, DVector};
use serde::Serialize;
use sha2::{Digest, Sha256};

use data::ColumnRequest;
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

/// What to estimate and from which columns.
#[derive(Debug, Clone, PartialEq)]
pub struct FitOptions {
    /// Season column (consecutive integers).
    pub season: String,
    /// Price column.
    pub price: String,
    /// Quantity column.
    pub quantity: String,
    /// Shifters entering both equations.
    pub shifters: Vec<String>,
    /// Shifters entering demand only.
    pub demand_shifters: Vec<String>,
    /// Shifters entering supply only (and the instruments for 2SLS).
    pub supply_shifters: Vec<String>,
    /// Levels or logs.
    pub form: FitForm,
    /// Demand estimator.
    pub method: FitMethod,
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
            form: FitForm::Linear,
            method: FitMethod::Ols,
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

fn check_roles(opts: &FitOptions) -> Result<(), FitError> {
    let mut all: Vec<(String, String)> = vec![
        (opts.season.clone(), "--season".into()),
        (opts.price.clone(), "--price".into()),
        (opts.quantity.clone(), "--quantity".into()),
    ];
    let groups = [
        (&opts.shifters, "--shifter"),
        (&opts.demand_shifters, "--demand-shifter"),
        (&opts.supply_shifters, "--supply-shifter"),
    ];
    for (list, role) in groups {
        for c in list {
            all.push((c.clone(), role.to_string()));
        }
    }
    for (i, (c, r)) in all.iter().enumerate() {
        if let Some((_, first)) = all[..i].iter().find(|(d, _)| d == c) {
            return Err(FitError::DuplicateColumn {
                column: c.clone(),
                first: first.clone(),
                second: r.clone(),
            });
        }
    }
    Ok(())
}

/// One equation's design before estimation.
struct Design {
    equation: &'static str,
    names: Vec<String>,
    x: DMatrix<f64>,
    y: DVector<f64>,
    /// price regressor in levels, quantity in levels (for means)
    price_level: Vec<f64>,
    quantity_level: Vec<f64>,
    first_season: i64,
    last_season: i64,
}

#[allow(clippy::too_many_arguments)]
fn build(
    equation: &'static str,
    price_name: &str,
    rows: std::ops::Range<usize>,
    price_rows: std::ops::Range<usize>,
    shifters: &[(&str, &Vec<f64>)],
    price: &[f64],
    quantity: &[f64],
    seasons: &[i64],
    form: FitForm,
) -> Design {
    let n = rows.len();
    let k = 2 + shifters.len();
    let tr = |v: f64| match form {
        FitForm::Linear => v,
        FitForm::Log => v.ln(),
    };
    let mut x = DMatrix::from_element(n, k, 1.0);
    for (i, pi) in price_rows.clone().enumerate() {
        x[(i, 1)] = tr(price[pi]);
    }
    for (j, (_, col)) in shifters.iter().enumerate() {
        for (i, r) in rows.clone().enumerate() {
            x[(i, 2 + j)] = col[r];
        }
    }
    let y = DVector::from_iterator(n, rows.clone().map(|r| tr(quantity[r])));
    let mut names = vec!["intercept".to_string(), price_name.to_string()];
    names.extend(shifters.iter().map(|(s, _)| s.to_string()));
    Design {
        equation,
        names,
        x,
        y,
        price_level: price[price_rows].to_vec(),
        quantity_level: quantity[rows.clone()].to_vec(),
        first_season: seasons.get(rows.start).copied().unwrap_or(0),
        last_season: seasons
            .get(rows.end.saturating_sub(1))
            .copied()
            .unwrap_or(0),
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
            terms: d.names.join(", "),
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
                column: names.get(index).cloned().unwrap_or_default(),
                before: names[..index.min(names.len())].join(", "),
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

fn equation_fit(
    d: &Design,
    f: &ols::LsFit,
    method: FitMethod,
    form: FitForm,
    instruments: Vec<String>,
) -> EquationFit {
    let se = f.std_errors();
    let rse = f.robust_std_errors();
    let terms = d
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
    let mean_price = mean(&d.price_level);
    let mean_quantity = mean(&d.quantity_level);
    let elasticity_at_means = match form {
        FitForm::Linear => f.beta[1] * mean_price / mean_quantity,
        FitForm::Log => f.beta[1],
    };
    EquationFit {
        method,
        dependent: match form {
            FitForm::Linear => "quantity".into(),
            FitForm::Log => "ln(quantity)".into(),
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
    }
}

/// Estimates demand and supply from CSV text. `file_label` names the data in messages and comments.
pub fn fit_text(
    file_label: &str,
    csv_text: &str,
    opts: &FitOptions,
) -> Result<FitReport, FitError> {
    check_roles(opts)?;
    if opts.method == FitMethod::TwoStage && opts.supply_shifters.is_empty() {
        return Err(FitError::NoInstruments);
    }
    let mut requests = vec![
        ColumnRequest {
            role: "--price",
            name: &opts.price,
        },
        ColumnRequest {
            role: "--quantity",
            name: &opts.quantity,
        },
    ];
    for (list, role) in [
        (&opts.shifters, "--shifter"),
        (&opts.demand_shifters, "--demand-shifter"),
        (&opts.supply_shifters, "--supply-shifter"),
    ] {
        requests.extend(list.iter().map(|c| ColumnRequest { role, name: c }));
    }
    let season_req = ColumnRequest {
        role: "--season",
        name: &opts.season,
    };
    let h = data::load(file_label, csv_text, &season_req, &requests)?;
    let (price, quantity) = (&h.columns[0], &h.columns[1]);
    if opts.form == FitForm::Log {
        for (col, name) in [(price, &opts.price), (quantity, &opts.quantity)] {
            if let Some(i) = col.iter().position(|v| *v <= 0.0) {
                return Err(FitError::NonPositive {
                    file: file_label.into(),
                    line: h.lines[i],
                    season: h.seasons[i].to_string(),
                    column: name.clone(),
                    value: col[i],
                });
            }
        }
    }
    let n = h.seasons.len();
    let named: Vec<(&str, &Vec<f64>)> = requests[2..]
        .iter()
        .zip(&h.columns[2..])
        .map(|(r, c)| (r.name, c))
        .collect();
    let nb = opts.shifters.len();
    let nd = opts.demand_shifters.len();
    let both = &named[..nb];
    let demand_only = &named[nb..nb + nd];
    let supply_only = &named[nb + nd..];
    let demand_sh: Vec<_> = both.iter().chain(demand_only).copied().collect();
    let supply_sh: Vec<_> = both.iter().chain(supply_only).copied().collect();

    let dd = build(
        "demand",
        "price",
        0..n,
        0..n,
        &demand_sh,
        price,
        quantity,
        &h.seasons,
        opts.form,
    );
    let ds = build(
        "supply",
        "lagged_price",
        1.min(n)..n,
        0..n.saturating_sub(1),
        &supply_sh,
        price,
        quantity,
        &h.seasons,
        opts.form,
    );

    let demand = match opts.method {
        FitMethod::Ols => {
            let f =
                ols::ols(&dd.x, &dd.y).map_err(|e| map_ls_error(e, file_label, &dd, &[], ""))?;
            equation_fit(&dd, &f, FitMethod::Ols, opts.form, Vec::new())
        }
        FitMethod::TwoStage => {
            // instruments: intercept, exogenous demand shifters, then the excluded supply-only shifters
            let mut znames = vec!["intercept".to_string()];
            znames.extend(demand_sh.iter().map(|(s, _)| s.to_string()));
            znames.extend(supply_only.iter().map(|(s, _)| s.to_string()));
            let zcols: Vec<&Vec<f64>> = demand_sh
                .iter()
                .chain(supply_only)
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
            equation_fit(&dd, &f, FitMethod::TwoStage, opts.form, excluded)
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
    let supply = equation_fit(&ds, &fs, FitMethod::Ols, opts.form, Vec::new());
    Ok(FitReport {
        demand,
        supply,
        form: opts.form,
        data: DataInfo {
            file: file_label.into(),
            sha256: data_sha256(csv_text.as_bytes()),
            seasons: n,
            last_season: *h.seasons.last().unwrap_or(&0),
            last_price: *price.last().unwrap_or(&f64::NAN),
        },
    })
}
