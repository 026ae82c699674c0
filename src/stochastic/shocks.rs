use rand::RngExt;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;

use crate::engine::PeriodShock;
use crate::scenario::{Scenario, ShockSpec};
use crate::trade::Trade;

/// The shocks of one replication, drawn period by period from its own random stream.
///
/// Yield: factor exp(σ z − σ²/2) with σ² = ln(1 + cv²), so the factor is lognormal with mean 1 and
/// coefficient of variation `yield_cv`. Supply: additive N(0, supply_sd²). Demand: AR(1),
/// u_t = ρ u_{t−1} + e_t, e_t ~ N(0, demand_sd²), u_0 = 0. Each period always draws three normals, in
/// this order, so switching one shock on does not reshuffle the others.
///
/// The world price of a trading market ([`ShockStream::with_world`]) comes from a second stream of
/// its own (same seed, stream `replication | 2⁶³`), so that its draws leave every yield, supply and
/// demand draw as it is and common random numbers hold across policies and across markets with and
/// without a border: log factor x_t = ρ x_{t−1} + s √(1 − ρ²) e_t, x_1 ~ N(0, s²) (a stationary
/// start), s² = ln(1 + cv²), factor exp(x_t − s²/2) — lognormal with mean 1 and coefficient of
/// variation `world_price_cv` in every period.
#[derive(Debug, Clone)]
pub struct ShockStream {
    rng: ChaCha8Rng,
    spec: ShockSpec,
    sigma: f64,
    demand: f64,
    world: Option<WorldStream>,
}

/// The world price's own stream: its generator, s, ρ, √(1 − ρ²) and the log factor so far (None
/// before the first period).
#[derive(Debug, Clone)]
struct WorldStream {
    rng: ChaCha8Rng,
    s: f64,
    rho: f64,
    innovation: f64,
    x: Option<f64>,
}

impl WorldStream {
    #[inline]
    fn next_factor(&mut self) -> f64 {
        let z: f64 = self.rng.sample(StandardNormal);
        let x = match self.x {
            None => self.s * z,
            Some(prev) => self.rho * prev + self.s * self.innovation * z,
        };
        self.x = Some(x);
        (x - 0.5 * self.s * self.s).exp()
    }
}

impl ShockStream {
    /// The stream of replication `replication` under `seed`.
    pub fn new(spec: &ShockSpec, seed: u64, replication: u64) -> ShockStream {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        rng.set_stream(replication);
        ShockStream {
            rng,
            spec: *spec,
            sigma: crate::numeric::lognormal_sigma(spec.yield_cv),
            demand: 0.0,
            world: None,
        }
    }

    /// The stream of replication `replication` of `scenario`: its weather and, when the market
    /// trades with a varying world price, the world price's own stream.
    pub fn for_scenario(scenario: &Scenario, replication: u64) -> ShockStream {
        ShockStream::new(&scenario.shocks, scenario.run.seed, replication).with_world(
            scenario.trade.as_ref(),
            scenario.run.seed,
            replication,
        )
    }

    /// This stream with the world price of `trade` drawn on its own stream (seed `seed`, stream
    /// `replication | 2⁶³`); a market without `[trade]`, or with `world_price_cv = 0`, keeps the
    /// world factor at 1 and draws nothing more.
    pub fn with_world(mut self, trade: Option<&Trade>, seed: u64, replication: u64) -> ShockStream {
        self.world = trade.filter(|t| t.world_price_cv > 0.0).map(|t| {
            let mut rng = ChaCha8Rng::seed_from_u64(seed);
            rng.set_stream(replication | (1 << 63));
            let rho = t.world_price_persistence;
            WorldStream {
                rng,
                s: crate::numeric::lognormal_sigma(t.world_price_cv),
                rho,
                innovation: (1.0 - rho * rho).sqrt(),
                x: None,
            }
        });
        self
    }

    /// The next period's shocks.
    #[inline]
    pub fn next_shock(&mut self) -> PeriodShock {
        let zy: f64 = self.rng.sample(StandardNormal);
        let zs: f64 = self.rng.sample(StandardNormal);
        let zd: f64 = self.rng.sample(StandardNormal);
        let s = &self.spec;
        self.demand = s.demand_persistence * self.demand + s.demand_sd * zd;
        PeriodShock {
            yield_factor: if s.yield_cv > 0.0 {
                (self.sigma * zy - 0.5 * self.sigma * self.sigma).exp()
            } else {
                1.0
            },
            supply: s.supply_sd * zs,
            demand: self.demand,
            world_factor: match &mut self.world {
                Some(w) => w.next_factor(),
                None => 1.0,
            },
        }
    }
}

/// The shocks of a single-path run: none for a deterministic market, else replication 0's stream.
pub fn single_path_shocks(scenario: &Scenario) -> Vec<PeriodShock> {
    if scenario.is_deterministic() {
        return vec![PeriodShock::NONE; scenario.run.periods];
    }
    let mut s = ShockStream::for_scenario(scenario, 0);
    (0..scenario.run.periods).map(|_| s.next_shock()).collect()
}

/// The shocks of replication `replication` into `into` (one per period): none for a market without
/// shocks, else the replication's own stream drawn in period order (the same values as
/// [`single_path_shocks`] for replication 0). Monte Carlo draws each replication's shocks once with
/// this and hands them to every model of the replication.
pub fn draw_shocks(scenario: &Scenario, replication: u64, into: &mut [PeriodShock]) {
    draw_shocks_into(scenario, replication, into.iter_mut());
}

/// [`draw_shocks`] into the places `into` gives, one per period in period order (the Monte Carlo
/// writes a replication's shocks straight into its lane of a period-major table).
pub(crate) fn draw_shocks_into<'a>(
    scenario: &Scenario,
    replication: u64,
    into: impl Iterator<Item = &'a mut PeriodShock>,
) {
    if scenario.is_deterministic() {
        into.for_each(|x| *x = PeriodShock::NONE);
        return;
    }
    let mut stream = ShockStream::for_scenario(scenario, replication);
    for x in into {
        *x = stream.next_shock();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn yield_factor_has_mean_one_and_the_given_cv() {
        let spec = ShockSpec {
            yield_cv: 0.2,
            ..Default::default()
        };
        let mut s = ShockStream::new(&spec, 7, 3);
        let n = 200_000;
        let draws: Vec<f64> = (0..n).map(|_| s.next_shock().yield_factor).collect();
        let mean = draws.iter().sum::<f64>() / n as f64;
        let var = draws.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1) as f64;
        // lognormal moments (Aitchison and Brown 1957): mean 1, sd = cv; Monte Carlo error ~ 0.2/√n
        assert!((mean - 1.0).abs() < 4.0 * 0.2 / (n as f64).sqrt(), "{mean}");
        assert!((var.sqrt() - 0.2).abs() < 0.003, "{}", var.sqrt());
    }

    #[test]
    fn streams_are_distinct_and_repeatable() {
        let spec = ShockSpec {
            supply_sd: 1.0,
            ..Default::default()
        };
        let a: Vec<f64> = {
            let mut s = ShockStream::new(&spec, 1, 0);
            (0..5).map(|_| s.next_shock().supply).collect()
        };
        let b: Vec<f64> = {
            let mut s = ShockStream::new(&spec, 1, 0);
            (0..5).map(|_| s.next_shock().supply).collect()
        };
        let c: Vec<f64> = {
            let mut s = ShockStream::new(&spec, 1, 1);
            (0..5).map(|_| s.next_shock().supply).collect()
        };
        assert_eq!(a, b);
        assert_ne!(a, c);
    }
}
