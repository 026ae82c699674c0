//! Diagnostics in words: what a path tells an analyst about a scheme's defensibility.

use crate::engine::{Model, PeriodRecord};
use crate::policies::flags;
use crate::scenario::{FloorInstrument, PolicySpec, Scenario};

/// What [`diagnose`] needs from a path, gathered period by period (so a long path can be streamed
/// without keeping its records): for each event, its first period and how many periods had it.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct PathTally {
    /// The store was full (first period, periods).
    pub capacity_full: Option<(usize, usize)>,
    /// The purchase budget bound.
    pub budget_bound: Option<(usize, usize)>,
    /// The price was above the ceiling with no stock.
    pub stockout: Option<(usize, usize)>,
}

impl PathTally {
    /// Adds one period.
    pub fn add(&mut self, r: &PeriodRecord) {
        let bump = |slot: &mut Option<(usize, usize)>, hit: bool| {
            if hit {
                let e = slot.get_or_insert((r.period, 0));
                e.1 += 1;
            }
        };
        bump(&mut self.capacity_full, r.flags & flags::CAPACITY_FULL != 0);
        bump(&mut self.budget_bound, r.flags & flags::BUDGET_BOUND != 0);
        bump(&mut self.stockout, r.stockout);
    }
}

/// Sentences about the scheme on this path: an indefensible floor (with the stock growth per period
/// and when capacity or budget runs out), stock-outs, and floors lost to a full store.
pub fn diagnose(
    scenario: &Scenario,
    policy: &PolicySpec,
    model: &Model,
    records: &[PeriodRecord],
) -> Vec<String> {
    let mut tally = PathTally::default();
    records.iter().for_each(|r| tally.add(r));
    diagnose_tally(scenario, policy, model, &tally)
}

/// [`diagnose`] from a [`PathTally`].
pub fn diagnose_tally(
    scenario: &Scenario,
    policy: &PolicySpec,
    model: &Model,
    tally: &PathTally,
) -> Vec<String> {
    let mut out = Vec::new();
    let unit = &scenario.market.quantity_unit;
    let ss = scenario.steady;
    if let Some(f) = policy.floor {
        if f.price > ss.price {
            let growth = model.supply.quantity(f.price) - model.demand.quantity(f.price);
            match f.instrument {
                FloorInstrument::Purchase => {
                    let mut s = format!(
                        "the floor {} is above the free-market steady state {:.3}: it cannot be defended for ever; at the floor the agency must take S(F) − D(F) = {:.3} {unit} a period",
                        f.price, ss.price, growth
                    );
                    let agency = &model.policy.agency;
                    if agency.capacity.is_finite() {
                        s.push_str(&format!(
                            "; a capacity of {} {unit} lasts about {:.1} periods",
                            agency.capacity,
                            agency.capacity / growth.max(1e-300)
                        ));
                    }
                    if agency.purchase_budget.is_finite() && agency.purchase_budget < f.price * growth {
                        s.push_str(&format!(
                            "; the purchase budget {} covers only {:.3} of the {:.3} {unit} needed each period",
                            agency.purchase_budget,
                            agency.purchase_budget / f.price,
                            growth
                        ));
                    }
                    out.push(s);
                }
                FloorInstrument::DeficiencyPayment => out.push(format!(
                    "the floor {} is above the free-market steady state {:.3}: the payment is permanent, about (F − D⁻¹(S(F)))·S(F) = {:.3} a period once planting settles on the floor",
                    f.price,
                    ss.price,
                    (f.price - model.demand.price_at(model.supply.quantity(f.price))).max(0.0)
                        * model.supply.quantity(f.price)
                )),
            }
        }
    }
    if let Some((t, n)) = tally.capacity_full {
        out.push(format!(
            "the store was full from period {t} ({n} periods in all): the agency could not buy all it should, and the price fell below its floor or band"
        ));
    }
    if let Some((t, n)) = tally.budget_bound {
        out.push(format!(
            "the purchase budget ran out in period {t} ({n} periods in all): purchases were cut to the budget"
        ));
    }
    if let Some((t, n)) = tally.stockout {
        out.push(format!(
            "stock-out: the reserve was empty while the price was above the ceiling, first in period {t} ({n} periods in all); the ceiling was lost"
        ));
    }
    out
}
