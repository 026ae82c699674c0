//! Simulating the market under a solved storage equilibrium, and the indicators `compare` shows:
//! mean private and public stocks and the crowding-out of private by public storage.
//!
//! A path starts with no private stock and the agency's initial stock; period by period the shocks
//! come from [`ShockStream`] (one stream per replication, fixed seed), availability is the private stock
//! carried in (after losses) plus the harvest, and the solved rules give the price, both stocks and
//! next season's planting.

use serde::Serialize;

use super::public::{AgencyMode, PublicSolution};
use super::solve::PrivateSolution;
use super::StorageMarket;
use crate::engine::PeriodShock;
use crate::scenario::ShockSpec;
use crate::stochastic::ShockStream;

/// A solved storage equilibrium, with or without a public stock.
#[derive(Debug, Clone)]
pub enum Equilibrium {
    /// Private storers only.
    Private(PrivateSolution),
    /// Private storers and a public band stock.
    Public(PublicSolution),
}

/// One period's outcome under the equilibrium rules.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Outcome {
    /// Market price.
    pub price: f64,
    /// Private stock carried out.
    pub private_stock: f64,
    /// Public stock carried out.
    pub public_stock: f64,
    /// Agency regime (always `Inside` without a public stock).
    pub mode: AgencyMode,
}

impl Equilibrium {
    /// The model.
    pub fn market(&self) -> &StorageMarket {
        match self {
            Equilibrium::Private(s) => &s.market,
            Equilibrium::Public(s) => &s.market,
        }
    }

    /// Share of public stock kept from one period to the next.
    pub fn public_keep(&self) -> f64 {
        match self {
            Equilibrium::Private(_) => 1.0,
            Equilibrium::Public(s) => s.band.keep,
        }
    }

    /// Iterations the solve took.
    pub fn iterations(&self) -> usize {
        match self {
            Equilibrium::Private(s) => s.iterations,
            Equilibrium::Public(s) => s.iterations,
        }
    }

    /// Largest arbitrage residual on the test grid (as measured by [`Self::measure_residual`] when
    /// the equilibrium was solved; on the default test grid otherwise).
    pub fn euler_residual_max(&self) -> f64 {
        match self {
            Equilibrium::Private(s) if s.residual.is_finite() => s.residual,
            Equilibrium::Public(s) if s.residual.is_finite() => s.residual,
            Equilibrium::Private(s) => s.euler_residual_max(2001),
            Equilibrium::Public(s) => s.euler_residual_max(201, 9),
        }
    }

    /// Measures the largest arbitrage residual on `points` test points (one state; two states:
    /// `points`/10 + 1 availabilities × 9 public stocks), keeps it and returns it.
    pub fn measure_residual(&mut self, points: usize) -> f64 {
        match self {
            Equilibrium::Private(s) => {
                s.residual = s.euler_residual_max(points);
                s.residual
            }
            Equilibrium::Public(s) => {
                s.residual = s.euler_residual_max(points / 10 + 1, 9);
                s.residual
            }
        }
    }

    /// Points of the residual test grid for `points` requested ([`Self::measure_residual`]).
    pub fn test_points(&self, points: usize) -> usize {
        match self {
            Equilibrium::Private(s) => s.test_points(points),
            Equilibrium::Public(_) => (points / 10 + 1) * 9,
        }
    }

    /// Largest private stock carried out that the solved grid holds (beyond it the rules are
    /// extrapolated).
    pub fn stock_top(&self) -> f64 {
        match self {
            Equilibrium::Private(s) if s.memory.is_some() => {
                // the largest grid stock any memory level's rule holds
                let r = s.memory.as_ref().map_or(&[][..], |r| &r.rows[..]);
                let most = r
                    .iter()
                    .filter_map(|row| row.spline.as_ref().map(|sp| sp.knots().len()))
                    .max()
                    .unwrap_or(s.stocks.len());
                s.stocks[most.clamp(1, s.stocks.len()) - 1]
            }
            Equilibrium::Private(s) => match &s.rule.spline {
                // the grid ends where the price reaches zero (free disposal): no storer carries
                // more than the stock there, so the rule covers every stock a path can hold
                Some(sp) if sp.knots().len() < s.stocks.len() => {
                    let choke = s.market.demand.quantity(s.market.floor);
                    match s.rule.zero_price_point(s.market.floor) {
                        Some(z0) if choke.is_finite() => z0 - choke,
                        _ => s.stocks[sp.knots().len() - 1],
                    }
                }
                Some(sp) => s.stocks[sp.knots().len() - 1],
                None => *s.stocks.last().unwrap_or(&0.0),
            },
            Equilibrium::Public(s) => *s.stocks.last().unwrap_or(&0.0),
        }
    }

    /// Private stock carried out at the upper end of the range the residual is checked on.
    pub fn range_stock(&self) -> f64 {
        match self {
            Equilibrium::Private(s) => match s.memory_range() {
                // the stock at the top of the range, at the memory where it is largest
                Some((lo, hi)) => s.stock_at(s.range().1, lo).max(s.stock_at(s.range().1, hi)),
                None => s.rule.stock(&s.market, s.range().1),
            },
            Equilibrium::Public(s) => s.clear(s.range().1, 0.0).private_stock,
        }
    }

    /// The period at net availability `z` (availability minus the demand shock) with public stock `g`
    /// carried in.
    pub fn outcome(&self, z: f64, g: f64) -> Outcome {
        self.outcome_with(z, g, 0.0)
    }

    /// [`Self::outcome`] when the farmers remember `memory` (their last expectation or the price
    /// before the last: the second state beside farmers on adaptive or two-lag rules; ignored
    /// otherwise).
    pub fn outcome_with(&self, z: f64, g: f64, memory: f64) -> Outcome {
        match self {
            Equilibrium::Private(s) if s.memory.is_some() => Outcome {
                price: s.price_at(z, memory),
                private_stock: s.stock_at(z, memory),
                public_stock: 0.0,
                mode: AgencyMode::Inside,
            },
            Equilibrium::Private(s) => Outcome {
                price: s.rule.price(&s.market, z),
                private_stock: s.rule.stock(&s.market, z),
                public_stock: 0.0,
                mode: AgencyMode::Inside,
            },
            Equilibrium::Public(s) => {
                let c = s.clear(z, g);
                Outcome {
                    price: c.price,
                    private_stock: c.private_stock,
                    public_stock: c.public_stock,
                    mode: c.mode,
                }
            }
        }
    }

    /// Expected producer price farmers plant on when `x` private and `public` public units are
    /// carried out and `q` is planted.
    pub fn expected_producer_price(&self, x: f64, public: f64, q: f64) -> f64 {
        let m = self.market();
        match self {
            Equilibrium::Private(s) => {
                super::solve::expected_producer(m, m.keep * x, q, &s.rule, &s.breaks).0
            }
            Equilibrium::Public(s) => s.expected_producer(x, public, q),
        }
    }

    /// Planting for next season and the expected producer price it is planted on, when `x` private
    /// and `public` public units are carried out.
    pub fn plant_and_expect(&self, x: f64, public: f64) -> (f64, f64) {
        match self {
            Equilibrium::Private(_) => {
                let q = self.planted_at(x, public);
                (q, self.expected_producer_price(x, public, q))
            }
            Equilibrium::Public(s) => s.plant_and_expect_producer(x, public),
        }
    }

    /// Planting for next season and the expected price it is planted on, after a period that
    /// cleared at `price` with `x` private and `public` public units carried out. Without a planting
    /// floor the expectation is read off the storers' arbitrage condition instead of
    /// being integrated again: the solved rules satisfy β·E[P'] − k = P wherever private stock is
    /// carried, and β·E[P' | x = 0] − k = the stockout price at the public stock carried where none is
    /// (the endogenous grid's own relation), so E[P'] = (P + k)/β up to the equilibrium's Euler
    /// residual, and planting is S(E[P']). Otherwise (a planting floor, or planting on revenue) as
    /// [`Self::plant_and_expect`].
    pub fn plant_after(&self, price: f64, x: f64, public: f64) -> (f64, f64) {
        let m = self.market();
        if let Some(f) = m.farmers {
            // farmers on a backward-looking rule plant on their rule of today's price
            let expected = f.expect(price);
            return (m.supply_at(expected).0, expected);
        }
        if m.plants_on_market_price() {
            let at = if x > 1e-9 * m.q_star {
                Some(price)
            } else {
                match self {
                    Equilibrium::Private(s) => s.rule.spline.as_ref().map(|_| s.stockout_price()),
                    Equilibrium::Public(s) => {
                        super::blend::stockout_price(&s.publics, &s.rows, public)
                    }
                }
            };
            if let Some(p) = at {
                let expected = (p + m.cost) / m.discount;
                return (m.supply_at(expected).0, expected);
            }
        }
        self.plant_and_expect(x, public)
    }

    /// Planting for next season when `x` private and `public` public units are carried out.
    pub fn planted_at(&self, x: f64, public: f64) -> f64 {
        match self {
            Equilibrium::Private(s) => s.planted_at(x),
            Equilibrium::Public(s) => s.planted_at(x, public),
        }
    }
}

/// One simulated period.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct StoragePeriod {
    /// Period t = 1..T.
    pub period: usize,
    /// The producer price farmers expected when they planted (rational expectation).
    pub expected_price: f64,
    /// Planted for this period's harvest (last period's decision).
    pub planted: f64,
    /// Harvest.
    pub harvest: f64,
    /// Private stock carried in (after losses) plus the harvest.
    pub availability: f64,
    /// Market price.
    pub price: f64,
    /// Price farmers receive: the market price, or the deficiency-payment floor when higher.
    pub producer_price: f64,
    /// Deficiency payments: (floor − P)·harvest when the price is below the floor.
    pub deficiency_payments: f64,
    /// Consumption.
    pub consumption: f64,
    /// Private stock carried out.
    pub private_stock: f64,
    /// Agency purchases.
    pub purchases: f64,
    /// Agency releases.
    pub releases: f64,
    /// Public stock carried out.
    pub public_stock: f64,
    /// The price was above the band's selling price while the agency had nothing left to sell.
    pub stockout: bool,
    /// Additive demand shock of the period (quantity units).
    pub demand_shock: f64,
    /// Private imports (at import parity; 0 in a closed market).
    #[serde(skip)]
    pub imports: f64,
    /// Private exports (at export parity; 0 in a closed market).
    #[serde(skip)]
    pub exports: f64,
    /// What the agency did.
    #[serde(skip)]
    pub mode: AgencyMode,
    /// The farmers' memory the period cleared at (beside farmers on adaptive or two-lag rules: their
    /// last expectation or the price before the last; 0 otherwise).
    #[serde(skip)]
    pub memory: f64,
}

/// A path under the solved rules, one period at a time: the state is the private and public stock
/// carried out and the planting (and the price it was planted on) for the next harvest.
#[derive(Debug, Clone)]
pub struct SolvedPath<'a> {
    eq: &'a Equilibrium,
    x: f64,
    public: f64,
    planted: f64,
    expected: f64,
    /// The farmers' memory (two-state farmers; 0 otherwise).
    memory: f64,
    period: usize,
}

impl<'a> SolvedPath<'a> {
    /// A path at period 0 with no private stock and `initial_public` public stock held before
    /// period 1.
    pub fn new(eq: &'a Equilibrium, initial_public: f64) -> SolvedPath<'a> {
        SolvedPath::with_start(eq, initial_public, SolvedPath::start_of(eq, initial_public))
    }

    /// The planting for period 1 and the price it is planted on, of a path that starts with no
    /// private stock and `initial_public` public stock (the same for every replication: see
    /// [`Self::with_start`]).
    pub fn start_of(eq: &Equilibrium, initial_public: f64) -> (f64, f64) {
        let m = eq.market();
        match m.farmers {
            // backward-looking farmers plant on their rule at the file's price history
            Some(f) => (m.supply_at(f.first).0, f.first),
            None => eq.plant_and_expect(0.0, initial_public),
        }
    }

    /// [`Self::new`] with the first planting `start` found already by [`Self::start_of`] (a model
    /// stepped for many replications solves it once).
    pub fn with_start(
        eq: &'a Equilibrium,
        initial_public: f64,
        (planted, expected): (f64, f64),
    ) -> SolvedPath<'a> {
        let m = eq.market();
        SolvedPath {
            eq,
            x: 0.0,
            public: initial_public,
            planted,
            expected,
            memory: m
                .farmers
                .and_then(|f| f.memory)
                .map_or(0.0, |mem| mem.first),
            period: 0,
        }
    }

    /// The next period under `s`.
    pub fn step(&mut self, s: &PeriodShock) -> StoragePeriod {
        let eq = self.eq;
        let m = eq.market();
        let harvest = (self.planted * s.yield_factor + s.supply).max(0.0);
        let availability = m.keep * self.x + harvest;
        let g = eq.public_keep() * self.public;
        let memory = self.memory;
        let o = eq.outcome_with(availability - s.demand, g, memory);
        let trade = o.public_stock - g;
        let left = availability + g - o.public_stock - o.private_stock;
        // private trade fills the gap to what consumers take at import parity, or takes the
        // surplus at export parity (a closed market: none)
        let (imports, exports) = if o.price >= m.ceiling {
            (
                (m.demand.quantity(m.ceiling) + s.demand - left).max(0.0),
                0.0,
            )
        } else if m.floor > 0.0 && o.price <= m.floor {
            (0.0, (left - m.demand.quantity(m.floor) - s.demand).max(0.0))
        } else {
            (0.0, 0.0)
        };
        let consumption = (left + imports - exports).max(0.0);
        self.x = o.private_stock;
        self.public = o.public_stock;
        let (planted_now, expected_now) = (self.planted, self.expected);
        (self.planted, self.expected) = match m.farmers {
            Some(f) if f.memory.is_some() => {
                // farmers on a rule with a memory: their rule of today's price and their memory
                let expected = f.expect_with(o.price, memory);
                self.memory = f.next_memory(o.price, expected);
                (m.supply_at(expected).0, expected)
            }
            _ => eq.plant_after(o.price, self.x, self.public),
        };
        let gap = (m.payment_floor - o.price).max(0.0);
        self.period += 1;
        StoragePeriod {
            period: self.period,
            expected_price: expected_now,
            planted: planted_now,
            harvest,
            availability,
            price: o.price,
            producer_price: o.price + gap,
            deficiency_payments: gap * harvest,
            consumption,
            private_stock: self.x,
            purchases: trade.max(0.0),
            releases: (-trade).max(0.0),
            public_stock: self.public,
            stockout: o.mode == AgencyMode::Empty,
            demand_shock: s.demand,
            imports,
            exports,
            mode: o.mode,
            memory,
        }
    }
}

/// Simulates `periods` periods of replication `replication` under `seed` (its own [`ShockStream`]),
/// starting with no private stock and `initial_public` public stock held before period 1.
pub fn simulate(
    eq: &Equilibrium,
    shocks: &ShockSpec,
    seed: u64,
    replication: u64,
    initial_public: f64,
    periods: usize,
) -> Vec<StoragePeriod> {
    let mut stream = ShockStream::new(shocks, seed, replication);
    let mut walk = SolvedPath::new(eq, initial_public);
    (0..periods)
        .map(|_| walk.step(&stream.next_shock()))
        .collect()
}

/// Long-run indicators of the market under a storage equilibrium.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct StorageIndicators {
    /// Mean price.
    pub mean_price: f64,
    /// Standard deviation of the price.
    pub price_sd: f64,
    /// sd / mean.
    pub price_cv: f64,
    /// Mean harvest.
    pub mean_harvest: f64,
    /// Mean producer price (with deficiency payments).
    pub mean_producer_price: f64,
    /// Mean deficiency payments per period.
    pub deficiency_payments_mean: f64,
    /// Mean private stock carried out.
    pub private_stock_mean: f64,
    /// Mean public stock carried out.
    pub public_stock_mean: f64,
    /// Mean private stock of the same market without the policy (same shocks).
    pub private_stock_mean_without_policy: f64,
    /// (mean private stock without the policy − with it) / mean public stock with it; `None` when
    /// the agency holds (almost) nothing.
    pub crowding_out: Option<f64>,
    /// Share of periods with no private stock carried out.
    pub private_stockout_share: f64,
    /// Share of periods with the price above the selling price and the agency's stock out.
    pub stockout_share: f64,
    /// Largest arbitrage residual of the policy's equilibrium.
    pub euler_residual_max: f64,
    /// Iterations of the policy's equilibrium.
    pub iterations: usize,
    /// Periods averaged (after the burn-in).
    pub periods: usize,
}

/// Periods dropped at the start of the indicator simulation.
pub const BURN_IN: usize = 200;
/// Periods averaged for the indicators.
pub const INDICATOR_PERIODS: usize = 10_000;

/// Means over one long path after the burn-in: (mean price, sd, mean harvest, private, public,
/// private stockout share, public stockout share, mean producer price, mean deficiency payments).
pub(crate) fn moments(path: &[StoragePeriod]) -> [f64; 9] {
    let n = path.len().max(1) as f64;
    let mean = |f: &dyn Fn(&StoragePeriod) -> f64| path.iter().map(f).sum::<f64>() / n;
    let mp = mean(&|r| r.price);
    let var = path.iter().map(|r| (r.price - mp).powi(2)).sum::<f64>() / (n - 1.0).max(1.0);
    [
        mp,
        var.sqrt(),
        mean(&|r| r.harvest),
        mean(&|r| r.private_stock),
        mean(&|r| r.public_stock),
        mean(&|r| f64::from(u8::from(r.private_stock <= 1e-9))),
        mean(&|r| f64::from(u8::from(r.stockout))),
        mean(&|r| r.producer_price),
        mean(&|r| r.deficiency_payments),
    ]
}
