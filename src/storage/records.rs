//! Simulated storage periods as the period engine's records, so that `run` and `compare` can show a
//! market with private storers with their usual columns and welfare accounting: the books of a
//! period are made up by the engine's one booking, [`PeriodRecord::book`] (INTERFACE.md, "Order
//! within a period" and "Welfare"); here only the agency's regime becomes the "acted" flags.
//!
//! [`SolvedStorage`] is a [`PathModel`]: solved once, stepped for as many replications as needed on
//! the shocks it is handed (the same shocks every model of the replication gets).

use super::agency::{AgencyMode, StoragePlan};
use super::simulate::{SolvedPath, StoragePeriod};
use crate::engine::{
    each_lane, Diverged, EachLane, PathModel, PeriodRecord, PeriodShock, Settled, Stepper,
};
use crate::policies::PolicySpec;
use crate::policies::{flags, Agency};
use crate::scenario::Scenario;

/// The engine's record of each simulated storage period under `policy`.
pub fn to_records(
    scenario: &Scenario,
    policy: &PolicySpec,
    path: &[StoragePeriod],
) -> Vec<PeriodRecord> {
    let books = Books::new(scenario, policy);
    let mut previous = books.agency.initial;
    path.iter()
        .map(|r| books.record(r, &mut previous))
        .collect()
}

/// What turns a simulated storage period into a record: the agency's rates and the policy's plan.
#[derive(Debug, Clone)]
struct Books {
    agency: Agency,
    plan: StoragePlan,
    floor_purchase: bool,
    demand: crate::curves::Curve,
    supply: crate::curves::Curve,
}

impl Books {
    fn new(scenario: &Scenario, policy: &PolicySpec) -> Books {
        let plan = super::agency::plan_of(policy).unwrap_or_default();
        Books {
            // release = "rotate": the quantity rotated, booked as in the period engine
            agency: crate::policies::compile(policy).agency,
            floor_purchase: plan.purchase_floor.is_some(),
            plan,
            demand: scenario.market.demand,
            supply: scenario.market.supply,
        }
    }

    /// The record of `r`; `previous` is the public stock carried out of the period before (updated).
    fn record(&self, r: &StoragePeriod, previous: &mut f64) -> PeriodRecord {
        let agency = &self.agency;
        let rotated = agency.rotated(agency.carried(*previous), r.public_stock);
        *previous = r.public_stock;
        let buy = if self.floor_purchase {
            flags::FLOOR_BUY
        } else {
            flags::BAND_BUY
        };
        let bits = match r.mode {
            AgencyMode::Buying => buy,
            AgencyMode::Full if r.purchases > 0.0 => flags::CAPACITY_FULL | buy,
            AgencyMode::Full => flags::CAPACITY_FULL,
            AgencyMode::Selling => flags::BAND_SELL,
            AgencyMode::Empty if r.releases > 0.0 => flags::STOCK_OUT | flags::BAND_SELL,
            AgencyMode::Empty => flags::STOCK_OUT,
            AgencyMode::Rotating => flags::ROTATION,
            AgencyMode::Steering => flags::TARGET,
            AgencyMode::BudgetBound => buy | flags::BUDGET_BOUND,
            AgencyMode::Inside => 0,
        };
        PeriodRecord::book(
            &Settled {
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
                deficiency_payments: r.deficiency_payments,
                consumer_payments: self.plan.consumer_payment(r.price, r.consumption),
                rotated,
                demand_shock: r.demand_shock,
                flags: bits,
                stockout: r.stockout,
            },
            agency,
            &self.demand,
            &self.supply,
        )
    }
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
    books: Books,
    /// The long-run means of the indicator path, when the solve simulated it on these rules.
    long_run: Option<super::LongRunMeans>,
    /// The first planting of every path and the price it is planted on
    /// ([`SolvedPath::start_of`]; the same for every replication).
    start: (f64, f64),
}

impl SolvedStorage {
    /// Solves the equilibrium of `scenario` under `policy` with the default numerical settings.
    ///
    /// Each (market, policy) pair is solved once per process: `compare`, its `--plots` and `report`
    /// ask for the same equilibria more than once, and a solve of the same validated inputs with the
    /// default settings gives the same rules, so later requests reuse the first solution (an
    /// in-process cache of the last [`CACHE_SIZE`] solves, compared by value).
    pub fn new(scenario: &Scenario, policy: &PolicySpec) -> Result<Self, super::StorageError> {
        let (equilibrium, long_run) = cached_solve(scenario, policy)?;
        let initial_public = if super::band_of(policy)?.is_some() {
            crate::policies::compile(policy).agency.initial
        } else {
            0.0
        };
        let start = SolvedPath::start_of(&equilibrium, initial_public);
        Ok(SolvedStorage {
            start,
            equilibrium,
            scenario: scenario.clone(),
            policy: policy.clone(),
            initial_public,
            books: Books::new(scenario, policy),
            long_run,
        })
    }

    /// The long-run means of the indicator path ([`super::long_run`]) when the solve simulated
    /// it on the rules it returned (`None` otherwise: simulate it).
    pub(crate) fn kept_long_run(&self) -> Option<super::LongRunMeans> {
        self.long_run
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

    /// `periods` periods of replication `replication` (the market file's seed, drawn from its own
    /// stream), starting with no private stock and the policy's initial public stock.
    pub fn path(&self, replication: u64, periods: usize) -> Vec<StoragePeriod> {
        let mut stream = crate::stochastic::ShockStream::new(
            &self.scenario.shocks,
            self.scenario.run.seed,
            replication,
        );
        let mut walk = SolvedPath::with_start(&self.equilibrium, self.initial_public, self.start);
        (0..periods)
            .map(|_| walk.step(&stream.next_shock()))
            .collect()
    }

    /// The same periods as the period engine's records.
    pub fn records(&self, replication: u64, periods: usize) -> Vec<PeriodRecord> {
        let mut previous = self.books.agency.initial;
        self.path(replication, periods)
            .iter()
            .map(|r| self.books.record(r, &mut previous))
            .collect()
    }
}

/// A path of a [`SolvedStorage`] stepped on the shocks it is handed.
#[derive(Debug, Clone)]
pub struct StorageStepper<'a> {
    walk: SolvedPath<'a>,
    books: &'a Books,
    previous: f64,
}

impl Stepper for StorageStepper<'_> {
    #[inline]
    fn step(&mut self, shock: &PeriodShock) -> Result<PeriodRecord, Diverged> {
        let period = self.walk.step(shock);
        Ok(self.books.record(&period, &mut self.previous))
    }
}

impl PathModel for SolvedStorage {
    type Stepper<'a> = StorageStepper<'a>;
    type Lanes<'a> = EachLane<StorageStepper<'a>>;

    fn name(&self) -> &str {
        &self.policy.name
    }

    fn start(&self) -> StorageStepper<'_> {
        StorageStepper {
            walk: SolvedPath::with_start(&self.equilibrium, self.initial_public, self.start),
            books: &self.books,
            previous: self.books.agency.initial,
        }
    }

    fn start_lanes(&self, n: usize) -> Self::Lanes<'_> {
        each_lane(self, n)
    }
}

/// Solves kept for reuse within one process ([`SolvedStorage::new`]).
pub const CACHE_SIZE: usize = 16;

type Cache = Vec<(
    Scenario,
    PolicySpec,
    super::simulate::Equilibrium,
    Option<super::LongRunMeans>,
)>;

fn cache() -> &'static std::sync::Mutex<Cache> {
    static CACHE: std::sync::OnceLock<std::sync::Mutex<Cache>> = std::sync::OnceLock::new();
    CACHE.get_or_init(|| std::sync::Mutex::new(Vec::new()))
}

/// Forgets every kept solve, so that the next [`SolvedStorage::new`] solves again (timing a whole
/// command that solves, as the `storage` benchmark does, needs a cold start each time).
pub fn clear_solve_cache() {
    if let Ok(mut c) = cache().lock() {
        c.clear();
    }
}

/// The default-settings solve of (`scenario`, `policy`), from the cache when it was solved before,
/// with the long-run means of its indicator path when the solve simulated it on these rules.
fn cached_solve(
    scenario: &Scenario,
    policy: &PolicySpec,
) -> Result<(super::simulate::Equilibrium, Option<super::LongRunMeans>), super::StorageError> {
    let found = cache().lock().ok().and_then(|c| {
        c.iter()
            .find(|(s, p, _, _)| s == scenario && p == policy)
            .map(|e| (e.2.clone(), e.3))
    });
    if let Some(hit) = found {
        return Ok(hit);
    }
    let (eq, path) = super::solve_with_path(scenario, policy, &super::SolveOptions::default())?;
    let means = path.map(|p| super::long_run::means_of(&p));
    if let Ok(mut c) = cache().lock() {
        if c.len() >= CACHE_SIZE {
            c.remove(0);
        }
        c.push((scenario.clone(), policy.clone(), eq.clone(), means));
    }
    Ok((eq, means))
}
