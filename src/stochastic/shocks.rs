use rand::RngExt;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;

use crate::engine::{PeriodShock, ShockColumns};
use crate::numeric::exp::exp_in_place;
use crate::scenario::{Scenario, ShockSpec};
use crate::stochastic::normals::NormalDraws;
use crate::trade::Trade;

/// The shocks of one replication, drawn period by period, each kind of shock from a random stream
/// of its own.
///
/// Yield: factor exp(σ z − σ²/2) with σ² = ln(1 + cv²), so the factor is lognormal with mean 1 and
/// coefficient of variation `yield_cv`. Supply: additive N(0, supply_sd²). Demand: AR(1),
/// u_t = ρ u_{t−1} + e_t, e_t ~ N(0, demand_sd²), u_0 = 0. Each kind the market has draws one
/// standard normal a period from its own ChaCha8 stream (seed `seed`; stream `replication` for the
/// yield, `replication | 2⁶¹` for the supply shock, `replication | 2⁶²` for the demand shock); a
/// kind the market does not have draws nothing. So switching one shock on or off leaves the
/// others' draws as they were (common random numbers across market variants), and a market pays
/// only for the shocks it has.
///
/// The world price of a trading market ([`ShockStream::with_world`]) comes from a stream of its
/// own too (same seed, stream `replication | 2⁶³`), so that its draws leave every yield, supply and
/// demand draw as it is and common random numbers hold across policies and across markets with and
/// without a border: log factor x_t = ρ x_{t−1} + s √(1 − ρ²) e_t, x_1 ~ N(0, s²) (a stationary
/// start), s² = ln(1 + cv²), factor exp(x_t − s²/2) — lognormal with mean 1 and coefficient of
/// variation `world_price_cv` in every period.
///
/// Replication numbers stay below 2⁶¹ (the run's replications are far fewer), so the four kinds'
/// streams never meet.
#[derive(Debug, Clone)]
pub struct ShockStream {
    /// the yield's stream (None when `yield_cv` is 0)
    yields: Option<ChaCha8Rng>,
    /// the supply shock's stream (None when `supply_sd` is 0)
    supply: Option<ChaCha8Rng>,
    /// the demand shock's stream (None when `demand_sd` is 0)
    demand_rng: Option<ChaCha8Rng>,
    spec: ShockSpec,
    sigma: f64,
    demand: f64,
    world: Option<WorldStream>,
}

/// The stream of one kind of shock: ChaCha8 seeded with `seed`, stream `replication | kind`.
fn kind_stream(seed: u64, replication: u64, kind: u64) -> ChaCha8Rng {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(replication | kind);
    rng
}

/// The stream bits of the supply shock, the demand shock and the world price.
const SUPPLY: u64 = 1 << 61;
const DEMAND: u64 = 1 << 62;
const WORLD: u64 = 1 << 63;

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
    /// The log of the period's factor after the standard normal `z` (its exp is the factor).
    #[inline]
    fn log_factor(&mut self, z: f64) -> f64 {
        let x = match self.x {
            None => self.s * z,
            Some(prev) => self.rho * prev + self.s * self.innovation * z,
        };
        self.x = Some(x);
        x - 0.5 * self.s * self.s
    }
}

/// The log of the yield factor after the standard normal `z`: σ z − σ²/2.
#[inline(always)]
fn yield_log(sigma: f64, z: f64) -> f64 {
    sigma * z - 0.5 * sigma * sigma
}

/// The demand shock after last season's `last` and the standard normal `z`: ρ u + σ z.
#[inline(always)]
fn demand_shock(spec: &ShockSpec, last: f64, z: f64) -> f64 {
    spec.demand_persistence * last + spec.demand_sd * z
}

impl ShockStream {
    /// The stream of replication `replication` under `seed`.
    pub fn new(spec: &ShockSpec, seed: u64, replication: u64) -> ShockStream {
        debug_assert!(replication < SUPPLY);
        ShockStream {
            yields: (spec.yield_cv > 0.0).then(|| kind_stream(seed, replication, 0)),
            supply: (spec.supply_sd > 0.0).then(|| kind_stream(seed, replication, SUPPLY)),
            demand_rng: (spec.demand_sd > 0.0).then(|| kind_stream(seed, replication, DEMAND)),
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
            let rng = kind_stream(seed, replication, WORLD);
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
        let z = |rng: &mut ChaCha8Rng| -> f64 { rng.sample(StandardNormal) };
        let s = &self.spec;
        let yield_factor = match &mut self.yields {
            Some(rng) => yield_log(self.sigma, z(rng)).exp(),
            None => 1.0,
        };
        let supply = match &mut self.supply {
            Some(rng) => s.supply_sd * z(rng),
            None => 0.0,
        };
        if let Some(rng) = &mut self.demand_rng {
            self.demand = demand_shock(s, self.demand, z(rng));
        }
        PeriodShock {
            yield_factor,
            supply,
            demand: self.demand,
            world_factor: match &mut self.world {
                Some(w) => {
                    let z = z(&mut w.rng);
                    w.log_factor(z).exp()
                }
                None => 1.0,
            },
        }
    }

    /// Every period's shocks of this stream as [`ShockStream::next_shock`] gives them but with the
    /// yield and world price factors as their logs, kind by kind into `logs` (`logs[k][t]`: kind
    /// k — yield, supply, demand, world price — period t),
    /// each kind's normals drawn from its own stream at once (`normals`: the values drawn one by
    /// one). A kind the market does not have is left as it is.
    fn logs_by_kind(&mut self, normals: &mut NormalDraws, logs: [&mut [f64]; KINDS]) {
        let s = &self.spec;
        let [yields, supply, demand, world] = logs;
        if let Some(rng) = &mut self.yields {
            normals.draw(rng, yields);
            for x in yields {
                *x = yield_log(self.sigma, *x);
            }
        }
        if let Some(rng) = &mut self.supply {
            normals.draw(rng, supply);
            for x in supply {
                *x *= s.supply_sd;
            }
        }
        if let Some(rng) = &mut self.demand_rng {
            normals.draw(rng, demand);
            for x in demand {
                self.demand = demand_shock(s, self.demand, *x);
                *x = self.demand;
            }
        }
        if let Some(w) = &mut self.world {
            normals.draw(&mut w.rng, world);
            for x in world {
                *x = w.log_factor(*x);
            }
        }
    }

    /// Which kinds of shock the stream draws: yield, supply, demand, world price.
    fn kinds(&self) -> [bool; KINDS] {
        [
            self.yields.is_some(),
            self.supply.is_some(),
            self.demand_rng.is_some(),
            self.world.is_some(),
        ]
    }
}

/// The kinds of shock: yield, supply, demand, world price.
const KINDS: usize = 4;

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
/// [`single_path_shocks`] for replication 0).
pub fn draw_shocks(scenario: &Scenario, replication: u64, into: &mut [PeriodShock]) {
    if scenario.is_deterministic() {
        into.fill(PeriodShock::NONE);
        return;
    }
    let mut stream = ShockStream::for_scenario(scenario, replication);
    for shock in into {
        *shock = stream.next_shock();
    }
}

/// [`draw_shocks`] of replications `from`, `from` + 1, … (one a lane, as many as `columns` has
/// lanes in use: `lanes`) into `columns` (one per period): the Monte Carlo draws each
/// replication's shocks once into its lane and hands them to every model of the replication.
/// Each kind's normals of a replication are drawn at once ([`NormalDraws`]), eight replications'
/// periods are written to the columns together (a cache line of a column), and the factors' exps
/// are taken a period's column at a time ([`exp_in_place`]); each step gives the bits of its
/// one-by-one counterpart, so the values are those of [`draw_shocks`].
pub fn draw_shock_columns(
    scenario: &Scenario,
    from: u64,
    lanes: usize,
    columns: &mut [ShockColumns],
) {
    if scenario.is_deterministic() || columns.is_empty() {
        columns.fill(ShockColumns::default());
        return;
    }
    // eight lanes (a cache line of a column) drawn into `logs`, then written to the columns
    const GROUP: usize = 8;
    let periods = columns.len();
    let mut logs = vec![0.0; GROUP * KINDS * periods];
    let mut normals = NormalDraws::new();
    let mut kinds = [false; KINDS];
    for first in (0..lanes).step_by(GROUP) {
        let group = (lanes - first).min(GROUP);
        for (l, lane_logs) in logs
            .chunks_exact_mut(KINDS * periods)
            .take(group)
            .enumerate()
        {
            let mut stream = ShockStream::for_scenario(scenario, from + (first + l) as u64);
            let (yields, rest) = lane_logs.split_at_mut(periods);
            let (supply, rest) = rest.split_at_mut(periods);
            let (demand, world) = rest.split_at_mut(periods);
            stream.logs_by_kind(&mut normals, [yields, supply, demand, world]);
            kinds = stream.kinds();
        }
        for (t, c) in columns.iter_mut().enumerate() {
            let fields = [
                &mut c.yield_factor,
                &mut c.supply,
                &mut c.demand,
                &mut c.world_factor,
            ];
            for (k, (field, has)) in fields.into_iter().zip(kinds).enumerate() {
                if has {
                    for (l, x) in field[first..first + group].iter_mut().enumerate() {
                        *x = logs[(l * KINDS + k) * periods + t];
                    }
                }
            }
        }
    }
    // the factors from their logs; a kind the market does not have: no shock
    let none = PeriodShock::NONE;
    let [yields, supply, demand, world] = kinds;
    for c in columns {
        for (has, shock, factor, value) in [
            (yields, &mut c.yield_factor, true, none.yield_factor),
            (supply, &mut c.supply, false, none.supply),
            (demand, &mut c.demand, false, none.demand),
            (world, &mut c.world_factor, true, none.world_factor),
        ] {
            match (has, factor) {
                (true, true) => exp_in_place(&mut shock[..lanes]),
                (true, false) => {}
                (false, _) => shock[..lanes].fill(value),
            }
        }
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
    fn switching_one_shock_on_or_off_leaves_the_others_draws_as_they_were() {
        // a property of the design (no outside source): each kind of shock on its own stream, so
        // market variants share common random numbers (Law and Kelton 2000, ch. 11; from memory)
        let all = ShockSpec {
            yield_cv: 0.1,
            supply_sd: 2.0,
            demand_sd: 3.0,
            demand_persistence: 0.4,
        };
        let draws = |spec: &ShockSpec| -> Vec<PeriodShock> {
            let mut s = ShockStream::new(spec, 11, 5);
            (0..40).map(|_| s.next_shock()).collect()
        };
        let full = draws(&all);
        for (i, off) in [
            ShockSpec {
                yield_cv: 0.0,
                ..all
            },
            ShockSpec {
                supply_sd: 0.0,
                ..all
            },
            ShockSpec {
                demand_sd: 0.0,
                ..all
            },
        ]
        .iter()
        .enumerate()
        {
            for (a, b) in full.iter().zip(draws(off)) {
                let kept = [
                    (a.yield_factor, b.yield_factor),
                    (a.supply, b.supply),
                    (a.demand, b.demand),
                ];
                for (k, (x, y)) in kept.iter().enumerate() {
                    if k == i {
                        assert_eq!(*y, [1.0, 0.0, 0.0][k], "kind {k} off");
                    } else {
                        assert_eq!(x.to_bits(), y.to_bits(), "kind {k} with {i} off");
                    }
                }
            }
        }
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
