//! Simulated storage periods as the period engine's records, so that `run` and `compare` can show a
//! market with private storers with their usual columns and welfare accounting (INTERFACE.md,
//! "Order within a period" and "Welfare"): fiscal cost = P·X − P·R + storage + financing + handling +
//! deficiency payments; consumer surplus at P with the period's demand shock; producer surplus =
//! producer price × harvest − cost of the planted quantity.

use super::agency::Regime;
use super::simulate::StoragePeriod;
use crate::engine::PeriodRecord;
use crate::policies::flags;
use crate::scenario::{PolicySpec, Scenario};

/// The engine's record of each simulated storage period under `policy`.
pub fn to_records(
    scenario: &Scenario,
    policy: &PolicySpec,
    path: &[StoragePeriod],
) -> Vec<PeriodRecord> {
    let demand = &scenario.market.demand;
    let supply = &scenario.market.supply;
    // release = "rotate": the quantity rotated, booked as in the period engine
    let agency = crate::policies::compile(policy).agency;
    let (storage_rate, financing_rate, handling_rate) = (
        agency.storage_cost,
        agency.financing_rate,
        agency.handling_cost,
    );
    let plan = super::agency::plan_of(policy).unwrap_or_default();
    let floor_purchase = plan.purchase_floor.is_some();
    // a consumer payment (a transfer: the treasury's cost and consumers' gain); -0.0 adds nothing
    let paid = |x: f64| if x > 0.0 { x } else { -0.0 };
    let mut previous = agency.initial;
    path.iter()
        .map(|r| {
            let rotated = agency.rotated(previous * (1.0 - agency.loss_rate), r.public_stock);
            previous = r.public_stock;
            let purchase_cost = r.price * r.purchases;
            let sales_revenue = r.price * r.releases;
            let storage_cost = storage_rate * r.public_stock;
            let financing_cost = financing_rate * r.price * r.public_stock;
            let handling_cost = handling_rate * (r.purchases + r.releases + 2.0 * rotated);
            let buy = if floor_purchase {
                flags::FLOOR_BUY
            } else {
                flags::BAND_BUY
            };
            let mut bits = match r.regime {
                Regime::Buying => buy,
                Regime::Full if r.purchases > 0.0 => flags::CAPACITY_FULL | buy,
                Regime::Full => flags::CAPACITY_FULL,
                Regime::Selling => flags::BAND_SELL,
                Regime::Empty if r.releases > 0.0 => flags::STOCK_OUT | flags::BAND_SELL,
                Regime::Empty => flags::STOCK_OUT,
                Regime::Rotating => flags::ROTATION,
                Regime::Steering => flags::TARGET,
                Regime::BudgetBound => buy | flags::BUDGET_BOUND,
                Regime::Inside => 0,
            };
            if r.deficiency_payments > 0.0 {
                bits |= flags::DEFICIENCY;
            }
            let consumer_payments = plan.consumer_payment(r.price, r.consumption);
            if consumer_payments > 0.0 {
                bits |= flags::CONSUMER_SUBSIDY;
            }
            PeriodRecord {
                period: r.period,
                expected_price: r.expected_price,
                planted: r.planted,
                harvest: r.harvest,
                price: r.price,
                producer_price: r.producer_price,
                consumption: r.consumption,
                purchases: r.purchases,
                releases: r.releases,
                stock: r.public_stock,
                fiscal_cost: purchase_cost - sales_revenue
                    + storage_cost
                    + financing_cost
                    + handling_cost
                    + r.deficiency_payments
                    + paid(consumer_payments),
                consumer_surplus: demand.consumer_surplus(r.price, r.demand_shock)
                    + paid(consumer_payments),
                producer_surplus: r.producer_price * r.harvest - supply.production_cost(r.planted),
                purchase_cost,
                sales_revenue,
                storage_cost,
                financing_cost,
                handling_cost,
                deficiency_payments: r.deficiency_payments,
                consumer_payments,
                rotated,
                flags: if rotated > 0.0 {
                    bits | flags::ROTATE
                } else {
                    bits
                },
                stockout: r.stockout,
            }
        })
        .collect()
}

/// A market's storage equilibrium under one policy, solved once and simulated for as many
/// replications as needed (each on its own random stream, as everywhere in furrow).
#[derive(Debug, Clone)]
pub struct SolvedStorage {
    /// The solved equilibrium.
    pub equilibrium: super::simulate::Equilibrium,
    scenario: Scenario,
    policy: PolicySpec,
    initial_public: f64,
}

impl SolvedStorage {
    /// Solves the equilibrium of `scenario` under `policy` with the default numerical settings.
    ///
    /// Each (market, policy) pair is solved once per process: `compare`, its `--plots` and `report`
    /// ask for the same equilibria more than once, and a solve of the same validated inputs with the
    /// default settings gives the same rules, so later requests reuse the first solution (an
    /// in-process cache of the last [`CACHE_SIZE`] solves, compared by value).
    pub fn new(scenario: &Scenario, policy: &PolicySpec) -> Result<Self, super::StorageError> {
        let equilibrium = cached_solve(scenario, policy)?;
        let initial_public = if super::band_of(policy)?.is_some() {
            crate::policies::compile(policy).agency.initial
        } else {
            0.0
        };
        Ok(SolvedStorage {
            equilibrium,
            scenario: scenario.clone(),
            policy: policy.clone(),
            initial_public,
        })
    }

    /// The policy the equilibrium was solved for.
    pub fn policy(&self) -> &PolicySpec {
        &self.policy
    }

    /// The market the equilibrium was solved for.
    pub fn scenario(&self) -> &Scenario {
        &self.scenario
    }

    /// The public stock each simulated path starts with (the policy's initial stock when it runs a
    /// band, otherwise 0).
    pub fn initial_public(&self) -> f64 {
        self.initial_public
    }

    /// `periods` periods of replication `replication` (the market file's seed), starting with no
    /// private stock and the policy's initial public stock.
    pub fn path(&self, replication: u64, periods: usize) -> Vec<StoragePeriod> {
        super::simulate(
            &self.equilibrium,
            &self.scenario.shocks,
            self.scenario.run.seed,
            replication,
            self.initial_public,
            periods,
        )
    }

    /// The same periods as the period engine's records.
    pub fn records(&self, replication: u64, periods: usize) -> Vec<PeriodRecord> {
        to_records(
            &self.scenario,
            &self.policy,
            &self.path(replication, periods),
        )
    }
}

/// Solves kept for reuse within one process ([`SolvedStorage::new`]).
pub const CACHE_SIZE: usize = 16;

type Cache = Vec<(Scenario, PolicySpec, super::simulate::Equilibrium)>;

fn cache() -> &'static std::sync::Mutex<Cache> {
    static CACHE: std::sync::OnceLock<std::sync::Mutex<Cache>> = std::sync::OnceLock::new();
    CACHE.get_or_init(|| std::sync::Mutex::new(Vec::new()))
}

/// The default-settings solve of (`scenario`, `policy`), from the cache when it was solved before.
fn cached_solve(
    scenario: &Scenario,
    policy: &PolicySpec,
) -> Result<super::simulate::Equilibrium, super::StorageError> {
    let found = cache().lock().ok().and_then(|c| {
        c.iter()
            .find(|(s, p, _)| s == scenario && p == policy)
            .map(|e| e.2.clone())
    });
    if let Some(eq) = found {
        return Ok(eq);
    }
    let eq = super::solve(scenario, policy, &super::SolveOptions::default())?;
    if let Ok(mut c) = cache().lock() {
        if c.len() >= CACHE_SIZE {
            c.remove(0);
        }
        c.push((scenario.clone(), policy.clone(), eq.clone()));
    }
    Ok(eq)
}
