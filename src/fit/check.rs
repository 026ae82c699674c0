//! The check against history: the written market simulated over many histories as long as the data,
//! with the data's price and quantity coefficient of variation and lag-1 autocorrelation beside the
//! simulated 5–95 % ranges.
//!
//! Each simulated history is one replication of the library's Monte Carlo scheme: replication i draws
//! its shocks from [`ShockStream`] stream i under the seed and runs the period engine
//! ([`Model::simulator`]) from the market file's initial price, with no intervention. Replications run
//! in parallel and are collected in order, so the figures do not depend on the number of threads.
//! A replication that diverges is counted and left out.

use rayon::prelude::*;
use serde::Serialize;

use super::{CheckRow, FitError, FitReport, HistoryCheck};
use crate::engine::Model;
use crate::policies::PolicySpec;
use crate::scenario::market_from_str;
use crate::stochastic::{quantiles, ShockStream};

/// Coefficients of variation and lag-1 autocorrelations of one price and quantity history.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct HistoryStats {
    /// sd / mean of the price (sample sd, divisor n − 1).
    pub price_cv: f64,
    /// sd / mean of the quantity (harvest).
    pub quantity_cv: f64,
    /// Lag-1 sample autocorrelation of the price.
    pub price_autocorrelation: f64,
    /// Lag-1 sample autocorrelation of the quantity.
    pub quantity_autocorrelation: f64,
}

fn cv(x: &[f64]) -> f64 {
    let n = x.len() as f64;
    let m = x.iter().sum::<f64>() / n;
    let v = x.iter().map(|v| (v - m) * (v - m)).sum::<f64>() / (n - 1.0);
    v.sqrt() / m
}

/// r_1 = Σ_{t<n} (x_t − x̄)(x_{t+1} − x̄) / Σ_t (x_t − x̄)², the sample autocorrelation at lag 1
/// (Box and Jenkins 1970, eq. 2.1.12; from memory).
fn ac1(x: &[f64]) -> f64 {
    let n = x.len() as f64;
    let m = x.iter().sum::<f64>() / n;
    let den: f64 = x.iter().map(|v| (v - m) * (v - m)).sum();
    let num: f64 = x.windows(2).map(|w| (w[0] - m) * (w[1] - m)).sum();
    if den > 0.0 {
        num / den
    } else {
        0.0
    }
}

/// The four statistics of a price and quantity series (at least 3 seasons).
pub fn history_stats(price: &[f64], quantity: &[f64]) -> HistoryStats {
    HistoryStats {
        price_cv: cv(price),
        quantity_cv: cv(quantity),
        price_autocorrelation: ac1(price),
        quantity_autocorrelation: ac1(quantity),
    }
}

/// Simulates `market_text` (the file written from `report`) `replications` times over as many seasons
/// as the data, with `seed`, and sets beside the data's statistics the simulated 5 %, 50 % and 95 %
/// quantiles (type 7). `outside` marks a history value outside the 5–95 % range.
pub fn check_history(
    report: &FitReport,
    market_text: &str,
    replications: usize,
    seed: u64,
) -> Result<HistoryCheck, FitError> {
    let periods = report.history_price.len();
    if periods < 3 || replications < 2 {
        return Err(FitError::Options(format!(
            "the check against history needs at least 3 seasons and 2 replications (has {periods} seasons, {replications} replications)"
        )));
    }
    let scenario =
        market_from_str("the fitted market", market_text).map_err(|e| FitError::Market {
            message: format!("the written market does not load: {e}"),
        })?;
    let model = Model::new(&scenario, &PolicySpec::none());
    let sims: Vec<Option<HistoryStats>> = (0..replications)
        .into_par_iter()
        .map(|rep| {
            let mut stream = ShockStream::new(&scenario.shocks, seed, rep as u64);
            let mut sim = model.simulator();
            let (mut p, mut q) = (Vec::with_capacity(periods), Vec::with_capacity(periods));
            for _ in 0..periods {
                let r = sim.step(&stream.next_shock()).ok()?;
                p.push(r.price);
                q.push(r.harvest);
            }
            Some(history_stats(&p, &q))
        })
        .collect();
    let ok: Vec<HistoryStats> = sims.iter().flatten().copied().collect();
    if ok.len() < 2 {
        return Err(FitError::Market {
            message: format!(
                "the written market diverged in {} of {replications} simulated histories",
                replications - ok.len()
            ),
        });
    }
    let hist = history_stats(&report.history_price, &report.history_quantity);
    type Pick = fn(&HistoryStats) -> f64;
    let pick: [(&str, Pick); 4] = [
        ("price_cv", |s| s.price_cv),
        ("quantity_cv", |s| s.quantity_cv),
        ("price_autocorrelation", |s| s.price_autocorrelation),
        ("quantity_autocorrelation", |s| s.quantity_autocorrelation),
    ];
    let rows = pick
        .iter()
        .map(|(name, f)| {
            let mut v: Vec<f64> = ok.iter().map(f).collect();
            let q = quantiles(&mut v, &[0.05, 0.5, 0.95]);
            let h = f(&hist);
            CheckRow {
                statistic: name.to_string(),
                history: h,
                p05: q[0],
                p50: q[1],
                p95: q[2],
                outside: !(q[0]..=q[2]).contains(&h),
            }
        })
        .collect();
    Ok(HistoryCheck {
        replications: ok.len(),
        periods,
        seed,
        diverged: replications - ok.len(),
        rows,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn autocorrelation_of_an_alternating_series_and_a_line() {
        // x = (1, −1, 1, −1): mean 0, Σ x_t x_{t+1} = −3, Σ x² = 4 → r_1 = −3/4 (definition above)
        assert!((ac1(&[1.0, -1.0, 1.0, -1.0]) + 0.75).abs() < 1e-15);
        // x = 1..5: mean 3, num = (−2)(−1) + (−1)(0) + 0·1 + 1·2 = 4, den = 10
        assert!((ac1(&[1.0, 2.0, 3.0, 4.0, 5.0]) - 0.4).abs() < 1e-15);
        // cv of (9, 11): sd √2, mean 10
        assert!((cv(&[9.0, 11.0]) - 2f64.sqrt() / 10.0).abs() < 1e-15);
    }
}
