//! How a policy file enters the storage equilibrium: each rule says so itself
//! (`crate::policies::Rule::storage`, collected in [`super::agency::plan_of`]); these are the storage
//! model's entry points.

use super::agency::{plan_of, Band};
use super::StorageError;
use crate::policies::PolicySpec;

/// The agency's rule as a price band inside the storage equilibrium, or `None` for a policy that
/// does not trade (see [`super::agency::band_of`]).
pub fn band_of(policy: &PolicySpec) -> Result<Option<Band>, StorageError> {
    super::agency::band_of(policy)
}

/// The producer price floor farmers plant on: the price of an announced deficiency-payment floor (they
/// plant on E[max(P', floor)]), else 0. A purchase floor acts through the market price instead.
pub fn planting_floor(policy: &PolicySpec) -> f64 {
    plan_of(policy).map_or(0.0, |p| p.planting_floor)
}

/// The price floor of deficiency payments (announced or not), else 0.
pub fn payment_floor(policy: &PolicySpec) -> f64 {
    plan_of(policy).map_or(0.0, |p| p.payment_floor)
}
