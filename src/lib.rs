//! furrow: evaluate agricultural market interventions before they are adopted.
pub mod fit;
pub mod output;
