//! furrow: evaluate agricultural market interventions before they are adopted.
pub mod compare;
pub mod curves;
pub mod engine;
pub mod expectations;
pub mod fit;
pub mod numeric;
pub mod output;
pub mod plots;
pub mod policies;
pub mod report;
pub mod scenario;
pub mod stability;
pub mod stochastic;
pub mod storage;
pub mod sweep;
pub mod welfare;
