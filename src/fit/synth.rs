//! An invented season history from a known cobweb market, for the demo and for recovery tests.
//!
//! The market (hill millet in Veldmark; quantities in kt, prices in crowns per t), season t = 1..n:
//!
//! - rainfall_t ~ Normal(rain_mean, rain_sd), independent across seasons (mm over the growing season);
//! - fertiliser_price_t = fert_mean + fert_ar·(fertiliser_price_{t−1} − fert_mean) + Normal(0, fert_sd)
//!   (an AR(1) input price, started at its mean);
//! - trend_t = t (a demand shifter: income growth);
//! - supply (planted on last season's price, naive expectations):
//!   Q_t = supply_intercept + supply_slope·P_{t−1} + supply_rain·rainfall_t + supply_fert·fertiliser_price_t + v_t,
//!   v_t ~ Normal(0, supply_sd);
//! - demand clears the harvest: Q_t = demand_intercept + demand_slope·P_t + demand_trend·trend_t + u_t,
//!   u_t ~ Normal(0, demand_sd), so P_t = (Q_t − demand_intercept − demand_trend·t − u_t) / demand_slope.
//!
//! P_0 = `initial_price`. Both equations are identified: rainfall and the fertiliser price shift
//! supply only (instruments for demand), the trend shifts demand only. OLS of demand is biased
//! because P_t moves with u_t; 2SLS is consistent. One ChaCha8 stream from `seed`; draws are made in
//! a fixed order each season (rainfall, fertiliser shock, supply shock, demand shock).

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};

/// The generator's parameters.
#[derive(Debug, Clone, PartialEq)]
pub struct HistoryParams {
    /// Number of seasons to write.
    pub seasons: usize,
    /// Label of the first season (a year).
    pub first_season: i64,
    /// Price seen before the first season.
    pub initial_price: f64,
    /// α in demand.
    pub demand_intercept: f64,
    /// β in demand (< 0).
    pub demand_slope: f64,
    /// Coefficient of the trend in demand.
    pub demand_trend: f64,
    /// sd of the demand disturbance u_t.
    pub demand_sd: f64,
    /// γ in supply.
    pub supply_intercept: f64,
    /// δ in supply (> 0).
    pub supply_slope: f64,
    /// Coefficient of rainfall in supply.
    pub supply_rain: f64,
    /// Coefficient of the fertiliser price in supply.
    pub supply_fert: f64,
    /// sd of the supply disturbance v_t.
    pub supply_sd: f64,
    /// Mean rainfall.
    pub rain_mean: f64,
    /// sd of rainfall.
    pub rain_sd: f64,
    /// Long-run mean fertiliser price.
    pub fert_mean: f64,
    /// AR(1) coefficient of the fertiliser price.
    pub fert_ar: f64,
    /// sd of the fertiliser price innovation.
    pub fert_sd: f64,
    /// RNG seed.
    pub seed: u64,
}

impl Default for HistoryParams {
    /// The demo history: 40 seasons from 1985. At the trend's mid-point (t = 20) and mean shifters the
    /// steady state is P = 100 crowns per t, Q = 100 kt; supply slope / demand slope = −0.5, a damped
    /// cobweb.
    fn default() -> Self {
        HistoryParams {
            seasons: 40,
            first_season: 1985,
            initial_price: 95.0,
            demand_intercept: 190.0,
            demand_slope: -1.0,
            demand_trend: 0.5,
            demand_sd: 3.0,
            supply_intercept: 44.0,
            supply_slope: 0.5,
            supply_rain: 0.06,
            supply_fert: -0.1,
            supply_sd: 3.0,
            rain_mean: 600.0,
            rain_sd: 80.0,
            fert_mean: 300.0,
            fert_ar: 0.6,
            fert_sd: 20.0,
            seed: 20_250_601,
        }
    }
}

/// One season of the invented history.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Season {
    /// Season label.
    pub season: i64,
    /// Market price P_t.
    pub price: f64,
    /// Harvest Q_t.
    pub quantity: f64,
    /// Rainfall.
    pub rainfall: f64,
    /// Fertiliser price.
    pub fertiliser_price: f64,
    /// Trend t.
    pub trend: f64,
}

/// Why a history could not be generated.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SynthError {
    /// A parameter outside its range.
    #[error("history generator: {0}")]
    Parameter(String),
    /// The path left the region where prices and quantities are positive.
    #[error("history generator: season {season} has price {price} and quantity {quantity}; choose parameters that keep both positive")]
    NonPositive {
        season: i64,
        price: f64,
        quantity: f64,
    },
}

fn normal(mean: f64, sd: f64, what: &str) -> Result<Normal<f64>, SynthError> {
    Normal::new(mean, sd)
        .map_err(|_| SynthError::Parameter(format!("{what} must be finite and ≥ 0")))
}

/// Generates the history (see the module documentation for the model).
pub fn generate(p: &HistoryParams) -> Result<Vec<Season>, SynthError> {
    if p.demand_slope.is_nan() || p.demand_slope >= 0.0 {
        return Err(SynthError::Parameter("demand_slope must be < 0".into()));
    }
    let rain = normal(p.rain_mean, p.rain_sd, "rain_sd")?;
    let fert = normal(0.0, p.fert_sd, "fert_sd")?;
    let vs = normal(0.0, p.supply_sd, "supply_sd")?;
    let ud = normal(0.0, p.demand_sd, "demand_sd")?;
    let mut rng = ChaCha8Rng::seed_from_u64(p.seed);
    let mut prev_price = p.initial_price;
    let mut f = p.fert_mean;
    let mut out = Vec::with_capacity(p.seasons);
    for t in 1..=p.seasons {
        let r = rain.sample(&mut rng);
        f = p.fert_mean + p.fert_ar * (f - p.fert_mean) + fert.sample(&mut rng);
        let v = vs.sample(&mut rng);
        let u = ud.sample(&mut rng);
        let trend = t as f64;
        let q = p.supply_intercept
            + p.supply_slope * prev_price
            + p.supply_rain * r
            + p.supply_fert * f
            + v;
        let price = (q - p.demand_intercept - p.demand_trend * trend - u) / p.demand_slope;
        let season = p.first_season + t as i64 - 1;
        if !(price > 0.0 && q > 0.0) {
            return Err(SynthError::NonPositive {
                season,
                price,
                quantity: q,
            });
        }
        out.push(Season {
            season,
            price,
            quantity: q,
            rainfall: r,
            fertiliser_price: f,
            trend,
        });
        prev_price = price;
    }
    Ok(out)
}

/// The history as CSV text with columns `season,price,quantity,rainfall,fertiliser_price,trend`
/// (prices and quantities to 3 decimals, rainfall to 1, the fertiliser price to 2).
pub fn to_csv(rows: &[Season]) -> String {
    let mut s = String::from("season,price,quantity,rainfall,fertiliser_price,trend\n");
    for r in rows {
        s.push_str(&format!(
            "{},{:.3},{:.3},{:.1},{:.2},{}\n",
            r.season, r.price, r.quantity, r.rainfall, r.fertiliser_price, r.trend
        ));
    }
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn same_seed_same_history_and_equations_hold() {
        let p = HistoryParams::default();
        let a = generate(&p).unwrap();
        assert_eq!(a, generate(&p).unwrap());
        assert_eq!(a.len(), 40);
        // without the shocks the demand equation must hold exactly up to u_t: check the identity
        // Q_t = α + β P_t + φ t + u_t by recomputing u_t and checking its spread is plausible
        let us: Vec<f64> = a
            .iter()
            .map(|s| {
                s.quantity
                    - p.demand_intercept
                    - p.demand_slope * s.price
                    - p.demand_trend * s.trend
            })
            .collect();
        let sd = (us.iter().map(|u| u * u).sum::<f64>() / us.len() as f64).sqrt();
        assert!(sd > 1.5 && sd < 5.0, "demand disturbance sd {sd}");
        assert!(a.iter().all(|s| s.price > 0.0 && s.quantity > 0.0));
    }

    #[test]
    fn bad_slope_is_refused() {
        let p = HistoryParams {
            demand_slope: 0.5,
            ..HistoryParams::default()
        };
        assert!(generate(&p).is_err());
    }
}
