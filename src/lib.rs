//! furrow: evaluate agricultural market interventions before they are adopted.
//!
//! The engine starts from a validated market file and policy file:
//!
//! ```
//! use furrow::engine::{Model, PeriodShock};
//! use furrow::scenario::market_from_str;
//! use furrow::policies::PolicySpec;
//!
//! let market = market_from_str(
//!     "demo.toml",
//!     "[demand]\nintercept = 120.0\nslope = -0.8\n[supply]\nintercept = -10.0\nslope = 0.5\n\
//!      [run]\ninitial_price = 90.0\n",
//! )
//! .unwrap();
//! let model = Model::new(&market, &PolicySpec::none());
//! let path = model.run(3, |_| PeriodShock::NONE).unwrap();
//! // the naive cobweb: P_t = P* + (P_0 − P*)(−b/d)^t with P* = 100, b/d = 0.625
//! assert!((path[0].price - (100.0 + 10.0 * 0.625)).abs() < 1e-9);
//! ```

/// The caution every report and every side-by-side table carries.
pub const CAUTION: &str = "These are model results under the stated assumptions, not forecasts. \
Magnitudes depend on elasticities, expectations and shocks that are uncertain. Check them against official \
analysis and the applicable law and rules before acting on them.";
pub mod briefing;
pub mod compare;
pub mod curves;
pub mod design;
pub mod engine;
pub mod error;
pub mod expectations;
pub mod fit;
pub mod households;
pub mod input;
pub mod numeric;
pub mod output;
pub mod path;
pub mod plots;
pub mod policies;
pub mod regime;
pub mod scenario;
pub mod sensitivity;
pub mod stability;
pub mod stochastic;
pub mod storage;
pub mod sweep;
pub mod trade;
pub mod units;
pub mod welfare;
