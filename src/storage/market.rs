//! The pieces of the storage model that do not depend on the solution method: the curves, the
//! storers' carrying terms, and the quadrature over next period's harvest and demand shocks.

use crate::curves::Curve;
use crate::numeric::gauss_hermite;
use crate::scenario::Scenario;
use crate::trade::{BorderMeasures, BorderTerms};

use super::StorageError;

/// One quadrature node over next period's shocks: yield factor `y`, additive quantity shock `e`
/// (supply shock minus demand shock) and weight `w` (the weights sum to 1).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Node {
    /// Multiplicative yield factor.
    pub y: f64,
    /// Additive shock to availability net of demand (supply shock − demand shock).
    pub e: f64,
    /// Probability weight.
    pub w: f64,
}

/// Farmers who plant on a backward-looking rule: next season's planting price is
/// P^e' = `weight`·P_t + `constant` for a rule that reads only the last producer price (the
/// equilibrium keeps one state, availability), plus `memory.weight`·m_t for a rule with one more
/// state m_t (adaptive and constant-gain learning: their own last expectation; two-lag rules such
/// as extrapolative or a trailing mean over two seasons: the price before the last). The weights
/// are asked of the rule itself through its trait ([`Farmers::of`]: its expectation at histories of
/// 0 and 1), so each rule's formula stays in `src/expectations/`; rules with more state (several
/// lags, groups) are refused (docs/storage.md, "Farmers who look back").
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Farmers {
    /// dP^e/dP_t.
    pub weight: f64,
    /// P^e at P_t = 0 (and m_t = 0).
    pub constant: f64,
    /// The price planted on for period 1 (the rule's expectation at the file's price history).
    pub first: f64,
    /// The farmers' second state, for a rule with more state than the last price.
    pub memory: Option<Memory>,
}

/// What a two-state rule remembers besides today's price.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Memory {
    /// dP^e'/dm_t.
    pub weight: f64,
    /// What the memory becomes after a season: the expectation just formed (adaptive, learning)
    /// or the season's price (two-lag rules).
    pub keeps: Keeps,
    /// The memory in period 1: the rule's expectation for period 1 (adaptive), or the last price
    /// of the file's history (two-lag rules).
    pub first: f64,
}

/// What a two-state rule keeps as its memory.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Keeps {
    /// Its own expectation (layout `Expectation`).
    Expectation,
    /// The last price (layout `Lags` of two).
    LastPrice,
}

impl Farmers {
    /// The farmers of `spec` on a market whose price history before period 1 is `history` (newest
    /// last): `None` for the rational rule (farmers look ahead), `Err(())` for a backward-looking
    /// rule with more state than the last price and one memory.
    #[allow(clippy::result_unit_err)]
    pub fn of(
        spec: &crate::expectations::ExpectationSpec,
        history: &[f64],
    ) -> Result<Option<Farmers>, ()> {
        use crate::expectations::{ExpectationInput, StateLayout};
        if spec.is_rational() {
            return Ok(None);
        }
        let rule = spec.rule();
        // the history as the period engine pads it: to the rule's lags (at least two) with its
        // oldest value (`engine::Model::new`)
        let need = rule.lags().max(2);
        let mut padded =
            vec![history.first().copied().unwrap_or(0.0); need.saturating_sub(history.len())];
        padded.extend_from_slice(history);
        let at = |h: &[f64], previous: Option<f64>| {
            rule.expect(&ExpectationInput {
                history: h,
                previous,
                season: 0,
            })
        };
        match (rule.layout(), rule.lags()) {
            (StateLayout::Lags(w), 1) if w.len() == 1 => Ok(Some(Farmers {
                weight: w[0],
                constant: at(&[0.0], None),
                first: at(history, None),
                memory: None,
            })),
            (StateLayout::Expectation(_), 1) => {
                // P^e' = rule(P_t, its previous expectation m): asked at (0, 0), (1, 0), (0, 1)
                let c = at(&[0.0], Some(0.0));
                let first = at(&padded, None);
                let f = Farmers {
                    weight: at(&[1.0], Some(0.0)) - c,
                    constant: c,
                    first,
                    memory: Some(Memory {
                        weight: at(&[0.0], Some(1.0)) - c,
                        keeps: Keeps::Expectation,
                        first,
                    }),
                };
                f.linear(|p, m| at(&[p], Some(m)))
            }
            (StateLayout::Lags(w), 2) if w.len() == 2 => {
                // P^e' = rule(P_{t−1} = m, P_t): asked at (0, 0), (0, 1), (1, 0)
                let c = at(&[0.0, 0.0], None);
                let first = at(&padded, None);
                let f = Farmers {
                    weight: at(&[0.0, 1.0], None) - c,
                    constant: c,
                    first,
                    memory: Some(Memory {
                        weight: at(&[1.0, 0.0], None) - c,
                        keeps: Keeps::LastPrice,
                        first: padded[padded.len() - 1],
                    }),
                };
                f.linear(|p, m| at(&[m, p], None))
            }
            _ => Err(()),
        }
    }

    /// `Ok(Some(self))` when the rule `rule(P, m)` is the linear map the weights describe (checked at
    /// two more points), `Err(())` otherwise.
    fn linear<R: Fn(f64, f64) -> f64>(self, rule: R) -> Result<Option<Farmers>, ()> {
        for (p, m) in [(210.0, 190.0), (37.0, 512.0)] {
            let want = rule(p, m);
            if (self.expect_with(p, m) - want).abs() > 1e-12 * want.abs().max(1.0) {
                return Err(());
            }
        }
        Ok(Some(self))
    }

    /// The price farmers plant on next season after a season that cleared at `price` (a rule of
    /// the last price alone).
    #[inline]
    pub fn expect(&self, price: f64) -> f64 {
        self.weight * price + self.constant
    }

    /// The price farmers plant on next season after a season that cleared at `price` with memory
    /// `memory` (ignored by a rule of the last price alone).
    #[inline]
    pub fn expect_with(&self, price: f64, memory: f64) -> f64 {
        match self.memory {
            Some(mem) => self.weight * price + mem.weight * memory + self.constant,
            None => self.expect(price),
        }
    }

    /// The memory next season, after a season that cleared at `price` and the expectation
    /// `expected` formed from it.
    #[inline]
    pub fn next_memory(&self, price: f64, expected: f64) -> f64 {
        match self.memory.map(|m| m.keeps) {
            Some(Keeps::Expectation) => expected,
            Some(Keeps::LastPrice) => price,
            None => price,
        }
    }
}

/// Curves, carrying terms and shock quadrature of a market with private storers.
#[derive(Debug, Clone)]
pub struct StorageMarket {
    /// Demand D(P).
    pub demand: Curve,
    /// Supply S(E[P']).
    pub supply: Curve,
    /// 1 − loss rate of private stock.
    pub keep: f64,
    /// (1 − loss)/(1 + r): what a unit stored today is worth tomorrow, in today's money.
    pub discount: f64,
    /// Physical storage cost per unit per period.
    pub cost: f64,
    /// Quadrature nodes over (yield, additive shock).
    pub nodes: Vec<Node>,
    /// Gauss–Hermite nodes over the yield factor alone (factor, weight); one node (1, 1) without
    /// yield risk.
    pub yield_nodes: Vec<(f64, f64)>,
    /// Steady-state price of the market without storage.
    pub p_star: f64,
    /// Steady-state quantity.
    pub q_star: f64,
    /// Standard deviation of the harvest at the steady state (with the net demand shock).
    pub harvest_sd: f64,
    /// σ of the log yield factor.
    pub yield_sigma: f64,
    /// Standard deviation of the additive (supply − demand) shock.
    pub additive_sd: f64,
    /// Producer price floor paid by deficiency payments (0: none): farmers plant on
    /// E[max(P', floor)], storers trade at the market price.
    pub planting_floor: f64,
    /// Price floor of deficiency payments, announced or not (0: none): the treasury pays
    /// (floor − P)·harvest when the price is below it.
    pub payment_floor: f64,
    /// Farmers plant on revenue (`[supply] plants_on = "revenue"`): on E[max(P', F)·Y] (E[Y] = 1,
    /// Wright and Williams 1991) instead of E[max(P', F)]; storers still trade on E[P']. False
    /// without yield risk, where the two are the same.
    pub revenue: bool,
    /// Farmers who plant on a backward-looking rule of the last price (`None`: rational farmers).
    pub farmers: Option<Farmers>,
    /// The border at the (constant) world price under the policy's border measures (`None`: a
    /// closed market). Set by [`StorageMarket::set_border`].
    pub border: Option<BorderTerms>,
    /// The lowest price the market can reach: export parity when traders may export without limit
    /// (exports take any surplus there), else 0 (free disposal).
    pub floor: f64,
    /// The highest price the market can reach: import parity when traders may import without limit
    /// (imports fill any gap there), else ∞.
    pub ceiling: f64,
}

impl StorageMarket {
    /// Builds the model from a validated scenario with `nodes` Gauss–Hermite points per shock.
    pub fn new(s: &Scenario, nodes: usize) -> Result<StorageMarket, StorageError> {
        let st = s.storers.ok_or_else(|| StorageError::NoStorers {
            file: s.source.clone(),
        })?;
        if let Some(t) = &s.trade {
            if t.world_price_cv > 0.0 {
                return Err(StorageError::UnsupportedPolicy {
                    file: s.source.clone(),
                    key: "trade.world_price_cv".into(),
                    reason: format!(
                        "{}: the storage equilibrium solves a market that trades at a constant world \
                         price (a varying world price would be another state variable); set \
                         trade.world_price_cv = 0",
                        t.world_price_cv
                    ),
                });
            }
        }
        if s.shocks.demand_persistence != 0.0 && s.shocks.demand_sd > 0.0 {
            return Err(StorageError::PersistentDemand {
                file: s.source.clone(),
                value: s.shocks.demand_persistence,
            });
        }
        let keep = 1.0 - st.loss_rate;
        let discount = keep / (1.0 + st.interest_rate);
        if discount >= 1.0 {
            return Err(StorageError::NoCarryingCost {
                file: s.source.clone(),
            });
        }
        let sigma = crate::numeric::lognormal_sigma(s.shocks.yield_cv);
        let add_sd = (s.shocks.supply_sd.powi(2) + s.shocks.demand_sd.powi(2)).sqrt();
        let rule = gauss_hermite(nodes.max(2));
        let ys: Vec<(f64, f64)> = if sigma > 0.0 {
            rule.iter()
                .map(|&(z, w)| ((sigma * z - 0.5 * sigma * sigma).exp(), w))
                .collect()
        } else {
            vec![(1.0, 1.0)]
        };
        let es: Vec<(f64, f64)> = if add_sd > 0.0 {
            rule.iter().map(|&(z, w)| (add_sd * z, w)).collect()
        } else {
            vec![(0.0, 1.0)]
        };
        let mut all = Vec::with_capacity(ys.len() * es.len());
        for &(y, wy) in &ys {
            for &(e, we) in &es {
                all.push(Node { y, e, w: wy * we });
            }
        }
        let q = s.steady.quantity;
        let lowest = all
            .iter()
            .map(|n| q * n.y + n.e)
            .fold(f64::INFINITY, f64::min);
        if !s.market.demand.is_linear() && lowest < 0.05 * q {
            return Err(StorageError::HarvestNearZero {
                file: s.source.clone(),
                lowest: lowest.max(0.0),
            });
        }
        Ok(StorageMarket {
            demand: s.market.demand,
            supply: s.market.supply,
            keep,
            discount,
            cost: st.storage_cost,
            nodes: all,
            yield_nodes: ys,
            p_star: s.steady.price,
            q_star: q,
            harvest_sd: ((q * s.shocks.yield_cv).powi(2) + add_sd * add_sd).sqrt(),
            yield_sigma: sigma,
            additive_sd: add_sd,
            planting_floor: 0.0,
            payment_floor: 0.0,
            // without yield risk (Y = 1) revenue is the price: solved as such, bit for bit
            revenue: s.market.plants_on == crate::scenario::PlantsOn::Revenue && sigma > 0.0,
            farmers: farmers_of(s, &s.expectations)?,
            border: None,
            floor: 0.0,
            ceiling: f64::INFINITY,
        })
        .and_then(|mut m| {
            m.set_border(s, &BorderMeasures::FREE, &s.source)?;
            Ok(m)
        })
    }

    /// Puts the border of `s` (its `[trade]` section, if any) under `measures` into the model:
    /// the parities become the floor and ceiling of the price. A quota that limits trade to a
    /// positive amount is refused (naming `policy_file`): the flats of the kinked curve would then
    /// end inside the range of availability, which this model does not cover yet; a quota of 0
    /// (no trade that way) and an export ban are covered.
    pub fn set_border(
        &mut self,
        s: &Scenario,
        measures: &BorderMeasures,
        policy_file: &str,
    ) -> Result<(), StorageError> {
        let Some(t) = &s.trade else {
            return Ok(());
        };
        let terms = t.terms(t.world_price, measures);
        for (key, quota) in [
            ("border.import_quota", terms.import_quota),
            ("border.export_quota", terms.export_quota),
        ] {
            if quota > 0.0 && quota.is_finite() {
                return Err(StorageError::UnsupportedPolicy {
                    file: policy_file.into(),
                    key: key.into(),
                    reason: format!(
                        "{quota}: the storage equilibrium covers unlimited trade, no trade (a quota \
                         of 0) and an export ban; a positive quota is not covered yet"
                    ),
                });
            }
        }
        self.floor = if terms.export_quota > 0.0 {
            terms.export_parity.max(0.0)
        } else {
            0.0
        };
        self.ceiling = if terms.import_quota > 0.0 {
            terms.import_parity
        } else {
            f64::INFINITY
        };
        self.border = Some(terms);
        Ok(())
    }

    /// True when traders may import or export.
    #[inline]
    pub fn trades(&self) -> bool {
        self.floor > 0.0 || self.ceiling.is_finite()
    }

    /// Sets the farmers' rule to `spec` (a policy's override of the market's rule).
    pub fn set_farmers(
        &mut self,
        s: &Scenario,
        spec: &crate::expectations::ExpectationSpec,
    ) -> Result<(), StorageError> {
        self.farmers = farmers_of(s, spec)?;
        Ok(())
    }

    /// True when farmers plant on the expected market price itself (no planting floor, not on
    /// revenue): then the planting expectation is the storers' E[P'].
    #[inline]
    pub fn plants_on_market_price(&self) -> bool {
        self.planting_floor <= 0.0 && !self.revenue
    }

    /// Inverse demand with free disposal and the border: the price at which consumers and private
    /// traders take `c` (consumers take D(P), exports fill at export parity, imports at import
    /// parity), never below [`Self::floor`] (zero in a closed market) nor above
    /// [`Self::ceiling`], and its derivative dP/dc (0 where the price is held there).
    #[inline]
    pub fn inverse_demand(&self, c: f64) -> (f64, f64) {
        let c = c.max(1e-9 * self.q_star);
        let p = self.demand.price_at(c);
        if p <= self.floor {
            // (free disposal at 0; exports at export parity)
            (self.floor, 0.0)
        } else if p >= self.ceiling {
            // imports at import parity
            (self.ceiling, 0.0)
        } else {
            (p, 1.0 / self.demand.slope_at_point(p, c))
        }
    }

    /// Planted quantity for an expected price.
    #[inline]
    pub fn supply_at(&self, expected: f64) -> (f64, f64) {
        let q = self.supply.quantity(expected);
        if q <= 0.0 {
            (0.0, 0.0)
        } else {
            (q, self.supply.slope_at(expected))
        }
    }

    /// Harvest at node `n` for planted `q` (never negative).
    #[inline]
    pub fn harvest(&self, q: f64, n: &Node) -> f64 {
        (q * n.y + n.e).max(0.0)
    }

    /// Lowest and highest harvest at ±3 standard deviations of each shock for planted `q`.
    pub fn harvest_range(&self, q: f64) -> (f64, f64) {
        let s = self.yield_sigma;
        let lo = q * (-3.0 * s - 0.5 * s * s).exp() - 3.0 * self.additive_sd;
        let hi = q * (3.0 * s - 0.5 * s * s).exp() + 3.0 * self.additive_sd;
        (lo.max(0.0), hi.max(0.0))
    }
}

/// The farmers of `spec` on the market `s` (see [`Farmers::of`]), refusing a rule with more state
/// and planting on revenue beside backward-looking farmers.
fn farmers_of(
    s: &Scenario,
    spec: &crate::expectations::ExpectationSpec,
) -> Result<Option<Farmers>, StorageError> {
    let farmers =
        Farmers::of(spec, &s.run.price_history).map_err(|()| StorageError::UnsupportedFarmers {
            file: s.source.clone(),
            rule: spec.rule().describe(),
        })?;
    if farmers.is_some() && s.market.plants_on == crate::scenario::PlantsOn::Revenue {
        return Err(StorageError::UnsupportedFarmers {
            file: s.source.clone(),
            rule: format!(
                "{} on revenue (supply.plants_on = \"revenue\")",
                spec.rule().describe()
            ),
        });
    }
    Ok(farmers)
}
