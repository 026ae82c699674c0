//! Household groups ("who gains"): welfare of each `[[households]]` group under each policy
//! against its baseline, as a share of the group's income.
//!
//! `group.rs` holds the validated group and its formulas — first order by the net benefit ratio
//! (Deaton 1989), the second-order supply and demand response (Minot and Goletti 2000), the
//! cost of price risk (after Turnovsky, Shalit and Schmitz 1980) — and [`measure`], which reads
//! them off the Monte Carlo's paired price changes (`stochastic::PairedChanges`, each policy
//! against its baseline in the same replication) and season price moments
//! (`stochastic::SeasonPrices`). `render.rs` prints the block `compare --households` adds.
//! Nothing here simulates: the numbers come from the comparison's own Monte Carlo.

mod group;
pub mod render;

pub use group::{
    elasticities, measure, pv_factor, GroupOutcome, HouseholdColumn, HouseholdGroup,
    HouseholdResult,
};
