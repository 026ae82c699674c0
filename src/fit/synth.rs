//! An invented season history from a known cobweb market, for the demo and for recovery tests.
//!
//! The market (hill millet in Veldmark; quantities in kt, prices in crowns per t), season t = 1..n:
//!
//! - rainfall_t ~ Normal(rain_mean, rain_sd), independent across seasons (mm over the growing season);
//! - fertiliser_price_t = fert_mean + fert_ar·(fertiliser_price_{t−1} − fert_mean) + Normal(0, fert_sd)
//!   (an AR(1) input price, started at its mean);
//! - trend_t = t (a demand shifter: income growth);
//! - area planted on last season's price (naive expectations), in kha:
//!   A_t = area_intercept + area_price·P_{t−1} + area_fert·fertiliser_price_t + v_t, v_t ~ Normal(0, area_sd);
//! - yield, in t/ha: Y_t = yield_base + yield_trend·t + yield_rain·(rainfall_t − rain_mean) + e_t,
//!   e_t ~ Normal(0, yield_sd);
//! - production (the harvest, also written as `quantity`) Q_t = A_t·Y_t, in kt;
//! - imports_t = max(0, imports_mean + Normal(0, imports_sd)), exports_t likewise, stock_change_t ~
//!   Normal(0, stock_sd): exogenous (contracts and a rotating public stock);
//! - domestic use U_t = Q_t + imports_t − exports_t − stock_change_t (the balance sheet), and demand
//!   clears it: U_t = demand_intercept + demand_slope·P_t + demand_trend·trend_t + u_t,
//!   u_t ~ Normal(0, demand_sd), so P_t = (U_t − demand_intercept − demand_trend·t − u_t) / demand_slope.
//!
//! P_0 = `initial_price`. Demand is identified: rainfall and the fertiliser price shift production
//! only (instruments), the trend shifts demand only. OLS of demand is biased because P_t moves with
//! u_t; 2SLS is consistent. The area equation is linear in its parameters and estimated exactly by
//! OLS; production is their product, so a linear supply on production is an approximation (its slope
//! near the trend yield × area_price). One ChaCha8 stream from `seed` (stream 0) draws, each season,
//! rainfall, the fertiliser shock, the area shock, the demand shock; stream 1 draws the yield shock,
//! imports, exports and the stock change.

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
    /// Intercept of the area equation (kha).
    pub area_intercept: f64,
    /// Area response to last season's price (> 0).
    pub area_price: f64,
    /// Coefficient of the fertiliser price in the area equation.
    pub area_fert: f64,
    /// sd of the area disturbance v_t.
    pub area_sd: f64,
    /// Yield at season 0 (t/ha).
    pub yield_base: f64,
    /// Yield trend per season.
    pub yield_trend: f64,
    /// Yield response to rainfall above its mean (t/ha per mm).
    pub yield_rain: f64,
    /// sd of the yield disturbance e_t.
    pub yield_sd: f64,
    /// Mean imports (before the cut at zero).
    pub imports_mean: f64,
    /// sd of imports.
    pub imports_sd: f64,
    /// Mean exports (before the cut at zero).
    pub exports_mean: f64,
    /// sd of exports.
    pub exports_sd: f64,
    /// sd of the stock change (mean zero).
    pub stock_sd: f64,
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
    /// The demo history: 40 seasons from 1985. At the trend's mid-point (t = 20), mean shifters and mean
    /// trade the steady state is about P = 100 crowns per t, use 100 kt, production 98 kt; the supply
    /// slope (trend yield 2.5 t/ha × 0.2 kha per crown = 0.5) / demand slope = −0.5, a damped cobweb.
    fn default() -> Self {
        HistoryParams {
            seasons: 40,
            first_season: 1985,
            initial_price: 95.0,
            demand_intercept: 190.0,
            demand_slope: -1.0,
            demand_trend: 0.5,
            demand_sd: 3.0,
            area_intercept: 31.2,
            area_price: 0.2,
            area_fert: -0.04,
            area_sd: 1.0,
            yield_base: 2.3,
            yield_trend: 0.01,
            yield_rain: 0.0015,
            yield_sd: 0.05,
            imports_mean: 3.0,
            imports_sd: 1.5,
            exports_mean: 1.0,
            exports_sd: 0.8,
            stock_sd: 1.5,
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
    /// Harvest Q_t (= production).
    pub quantity: f64,
    /// Area A_t.
    pub area: f64,
    /// Yield Y_t.
    pub yield_per_area: f64,
    /// Imports.
    pub imports: f64,
    /// Exports.
    pub exports: f64,
    /// Stock change.
    pub stock_change: f64,
    /// Domestic use U_t.
    pub domestic_use: f64,
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
    let va = normal(0.0, p.area_sd, "area_sd")?;
    let ud = normal(0.0, p.demand_sd, "demand_sd")?;
    let ey = normal(0.0, p.yield_sd, "yield_sd")?;
    let im = normal(p.imports_mean, p.imports_sd, "imports_sd")?;
    let ex = normal(p.exports_mean, p.exports_sd, "exports_sd")?;
    let ds = normal(0.0, p.stock_sd, "stock_sd")?;
    let mut rng = ChaCha8Rng::seed_from_u64(p.seed);
    let mut rng2 = ChaCha8Rng::seed_from_u64(p.seed);
    rng2.set_stream(1);
    let mut prev_price = p.initial_price;
    let mut f = p.fert_mean;
    let mut out = Vec::with_capacity(p.seasons);
    for t in 1..=p.seasons {
        let r = rain.sample(&mut rng);
        f = p.fert_mean + p.fert_ar * (f - p.fert_mean) + fert.sample(&mut rng);
        let v = va.sample(&mut rng);
        let u = ud.sample(&mut rng);
        let e = ey.sample(&mut rng2);
        let imports = im.sample(&mut rng2).max(0.0);
        let exports = ex.sample(&mut rng2).max(0.0);
        let stock_change = ds.sample(&mut rng2);
        let trend = t as f64;
        let area = p.area_intercept + p.area_price * prev_price + p.area_fert * f + v;
        let yield_per_area =
            p.yield_base + p.yield_trend * trend + p.yield_rain * (r - p.rain_mean) + e;
        let q = area * yield_per_area;
        let domestic_use = q + imports - exports - stock_change;
        let price =
            (domestic_use - p.demand_intercept - p.demand_trend * trend - u) / p.demand_slope;
        let season = p.first_season + t as i64 - 1;
        if !(price > 0.0 && q > 0.0 && area > 0.0 && yield_per_area > 0.0 && domestic_use > 0.0) {
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
            area,
            yield_per_area,
            imports,
            exports,
            stock_change,
            domestic_use,
            rainfall: r,
            fertiliser_price: f,
            trend,
        });
        prev_price = price;
    }
    Ok(out)
}

/// The CSV header of [`to_csv`].
pub const CSV_HEADER: &str = "season,price,quantity,rainfall,fertiliser_price,trend,production,imports,exports,stock_change,use,area,yield";

/// The history as CSV text with columns `season,price,quantity,rainfall,fertiliser_price,trend,
/// production,imports,exports,stock_change,use,area,yield` (`quantity` = `production`, kept for the
/// single-quantity fit). Rounding: area to 3 decimals and yield to 4; production is written as the
/// product of the rounded area and yield (to 3 decimals), use as production + imports − exports −
/// stock change of the rounded figures, so both identities hold in the file to rounding; prices to
/// 3 decimals, rainfall to 1, the fertiliser price to 2.
pub fn to_csv(rows: &[Season]) -> String {
    let mut s = format!("{CSV_HEADER}\n");
    let r3 = |x: f64| (x * 1000.0).round() / 1000.0;
    for r in rows {
        let area = r3(r.area);
        let y = (r.yield_per_area * 10_000.0).round() / 10_000.0;
        let prod = r3(area * y);
        let (im, ex, ds) = (r3(r.imports), r3(r.exports), r3(r.stock_change));
        let domestic_use = r3(prod + im - ex - ds);
        s.push_str(&format!(
            "{},{:.3},{:.3},{:.1},{:.2},{},{:.3},{:.3},{:.3},{:.3},{:.3},{:.3},{:.4}\n",
            r.season,
            r.price,
            prod,
            r.rainfall,
            r.fertiliser_price,
            r.trend,
            prod,
            im,
            ex,
            ds,
            domestic_use,
            area,
            y
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
        // the demand equation holds up to u_t: U_t = α + β P_t + φ t + u_t; recompute u_t and check
        // its spread is plausible; the balance identities hold exactly
        for s in &a {
            assert!((s.quantity - s.area * s.yield_per_area).abs() < 1e-9);
            let gap = s.quantity + s.imports - s.exports - s.stock_change - s.domestic_use;
            assert!(gap.abs() < 1e-9);
        }
        let us: Vec<f64> = a
            .iter()
            .map(|s| {
                s.domestic_use
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
