//! Diagnostics in words: what a path tells an analyst about a scheme's defensibility.

use crate::engine::{Model, PeriodRecord};
use crate::policies::flags;
use crate::scenario::{FloorInstrument, PolicySpec, Scenario};

/// Sentences about the scheme on this path: an indefensible floor (with the stock growth per period
/// and when capacity or budget runs out), stock-outs, and floors lost to a full store.
pub fn diagnose(
    scenario: &Scenario,
    policy: &PolicySpec,
    model: &Model,
    records: &[PeriodRecord],
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
    let first = |bit: u16| {
        records
            .iter()
            .find(|r| r.flags & bit != 0)
            .map(|r| r.period)
    };
    let count = |bit: u16| records.iter().filter(|r| r.flags & bit != 0).count();
    if let Some(t) = first(flags::CAPACITY_FULL) {
        out.push(format!(
            "the store was full from period {t} ({} periods in all): the agency could not buy all it should, and the price fell below its floor or band",
            count(flags::CAPACITY_FULL)
        ));
    }
    if let Some(t) = first(flags::BUDGET_BOUND) {
        out.push(format!(
            "the purchase budget ran out in period {t} ({} periods in all): purchases were cut to the budget",
            count(flags::BUDGET_BOUND)
        ));
    }
    let stockouts: Vec<usize> = records
        .iter()
        .filter(|r| r.stockout)
        .map(|r| r.period)
        .collect();
    if let Some(t) = stockouts.first() {
        out.push(format!(
            "stock-out: the reserve was empty while the price was above the ceiling, first in period {t} ({} periods in all); the ceiling was lost",
            stockouts.len()
        ));
    }
    out
}
