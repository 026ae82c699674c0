//! Which regimes a policy creates around the steady state, and which one holds it.
//!
//! Regimes (each a clearing function for the state-space map):
//! - free market: P = D⁻¹(S(P^e)); also "stock idle" inside a band, where a target-release store
//!   takes a constant net offtake ℓ·S* (its losses) and a band or share store takes none;
//! - floor binding (purchase) and stock buying at `buy_below`: the market price is pinned at the
//!   defended price while the store has room, so dP/dP^e = 0;
//! - stock selling at `sell_above`: pinned at the upper edge while stock lasts;
//! - deficiency payment binding: the producer price is pinned at the floor (the market clears
//!   freely below it), so expectations formed on producer prices are anchored.
//!
//! A pinned purchase regime holds the steady state only when the stock it builds settles: buying
//! X = S(P^e*) − D(F) a period with loss rate ℓ the stock settles at X/ℓ (if the store is big enough).
//! With ℓ = 0 and no capacity limit there is no steady state with finite stock: it grows by X every
//! period. With a capacity limit the store fills and the floor gives way: the free market with the
//! full store buying only its losses ℓ·capacity then holds the steady state.

use super::statespace::{Clearing, Setup, StateMap};
use super::StabilityError;
use crate::scenario::{FloorInstrument, ReleaseSpec};

/// One regime to linearise.
#[derive(Debug, Clone, PartialEq)]
pub struct RegimeCase {
    /// Display name.
    pub name: String,
    /// Its clearing function.
    pub clearing: Clearing,
    /// True for the regime that holds the steady state.
    pub holds: bool,
    /// False when this regime holds but no steady state with finite stock exists.
    pub finite: bool,
    /// The eigenvalue of the agency's stock in this regime (it does not feed back on prices).
    pub stock_eigenvalue: Option<f64>,
    /// Explanation for the reader.
    pub note: Option<String>,
    /// Farmers plant on an announced floor in this regime (false for the market left alone).
    pub floor_applies: bool,
}

fn case(name: &str, clearing: Clearing, note: Option<String>) -> RegimeCase {
    RegimeCase {
        name: name.into(),
        clearing,
        holds: false,
        finite: true,
        stock_eigenvalue: None,
        note,
        floor_applies: true,
    }
}

fn below(p: f64, edge: f64) -> bool {
    p < edge * (1.0 - 1e-12)
}

/// The agency's loss rate, capacity and whether its budget is limited.
fn agency(setup: &Setup) -> (f64, f64, bool) {
    match setup.stock {
        Some(s) => (s.loss_rate, s.capacity, s.purchase_budget.is_finite()),
        None => (0.0, f64::INFINITY, false),
    }
}

/// The regime that holds when the price would settle below a price `edge` the agency defends by
/// buying: pinned with a settled stock, no finite stock, or the free market with a full store.
/// No steady state when the harvest planted on the defended price is not a finite number (a supply
/// curve calibrated at a price many orders of magnitude below it).
fn purchase_holds(
    setup: &Setup,
    name: &str,
    edge: f64,
    unit: &str,
) -> Result<Vec<RegimeCase>, StabilityError> {
    let (loss, capacity, budget) = agency(setup);
    let pinned = Clearing::Pinned(edge);
    let planting = StateMap::new(setup, pinned).planting_at_rest(edge);
    let bought = setup.supply.quantity(planting) - setup.demand.quantity(edge);
    if !bought.is_finite() {
        return Err(StabilityError::NoSteadyState {
            regime: name.into(),
            reason: format!(
                "the harvest planted on the defended price {} has no finite value (the supply \
                 curve overflows there)",
                crate::scenario::ranges::short_num(edge)
            ),
        });
    }
    let budget_note = if budget {
        " The purchase budget is not part of the linearisation."
    } else {
        ""
    };
    let settled = if loss > 0.0 {
        bought / loss
    } else {
        f64::INFINITY
    };
    let mut out = Vec::new();
    if settled <= capacity && loss > 0.0 {
        let mut c = case(
            name,
            pinned,
            Some(format!(
                "price pinned at {edge:.4}; the agency buys {bought:.4} {unit} a period and its stock \
                 settles at {settled:.4} (purchases = losses at rate {loss}).{budget_note}"
            )),
        );
        c.holds = true;
        c.stock_eigenvalue = Some(1.0 - loss);
        out.push(c);
    } else if capacity.is_infinite() {
        let mut c = case(
            name,
            pinned,
            Some(format!(
                "no steady state with finite stock: the price is pinned at {edge:.4} above the free \
                 market's steady state, and the agency's stock grows by {bought:.4} {unit} every period \
                 without end (loss rate {loss}). Verdict: unstable (the stock diverges).{budget_note}"
            )),
        );
        c.holds = true;
        c.finite = false;
        out.push(c);
    } else {
        let offtake = loss * capacity;
        let mut full = case(
            "free market, store full",
            Clearing::Free { offtake },
            Some(format!(
                "the store fills (capacity {capacity}) after about {:.0} periods of buying {bought:.4} \
                 {unit}; then the defence of {edge:.4} gives way and the market clears freely, the full \
                 store buying only its losses ({offtake:.4} {unit} a period).{budget_note}",
                (capacity / bought).ceil()
            )),
        );
        full.holds = true;
        full.stock_eigenvalue = Some(1.0 - loss);
        out.push(full);
        out.push(case(
            name,
            pinned,
            Some(format!(
                "price pinned at {edge:.4} while the store has room"
            )),
        ));
    }
    Ok(out)
}

/// The idle regime of a target-release reserve. Restocking purchases never lift the price above the
/// band's middle M (the engine's rule), so: with the free steady state at or above M the reserve
/// cannot restock and the market is free; below M it settles at S* = speed·T/(1 − (1 − ℓ)(1 − speed))
/// and buys its losses ℓ·S* each period (a constant offtake), unless that would lift the price above
/// M, in which case the price is pinned at M and the reserve settles below its target.
fn target_regime(
    setup: &Setup,
    free_price: f64,
    buy: f64,
    sell: f64,
    target: f64,
    speed: f64,
    unit: &str,
) -> (Clearing, f64, String) {
    let loss = setup.stock.map_or(0.0, |s| s.loss_rate);
    let middle = if sell.is_finite() {
        0.5 * (buy + sell)
    } else {
        f64::INFINITY
    };
    if !below(free_price, middle) {
        return (
            Clearing::Free { offtake: 0.0 },
            1.0 - loss,
            format!(
                "the free steady state is at or above the band's middle {middle:.4}: the reserve \
                 cannot restock there and the market is free"
            ),
        );
    }
    let settled = speed * target / (1.0 - (1.0 - loss) * (1.0 - speed));
    let offtake = loss * settled;
    let interior = Clearing::Free { offtake };
    let p = StateMap::new(setup, interior).fixed_point(free_price);
    match p {
        Some(p) if p <= middle * (1.0 + 1e-12) => (
            interior,
            (1.0 - loss) * (1.0 - speed),
            format!(
                "inside the band the stock moves toward its target and settles at {settled:.4}; \
                 the agency then buys its losses ({offtake:.4} {unit} a period)"
            ),
        ),
        _ => (
            Clearing::Pinned(middle),
            1.0 - loss,
            format!(
                "restocking purchases stop at the band's middle {middle:.4}: the price is pinned \
                 there and the reserve settles below its target {target}"
            ),
        ),
    }
}

/// Lists the regimes of `setup` given the free market's steady producer price `free_price`, the one
/// holding the steady state first; an error when a regime that would hold it has no steady state.
pub fn regimes(
    setup: &Setup,
    free_price: f64,
    unit: &str,
) -> Result<Vec<RegimeCase>, StabilityError> {
    let mut holding: Vec<RegimeCase> = Vec::new();
    let mut secondary: Vec<RegimeCase> = Vec::new();
    let free = Clearing::Free { offtake: 0.0 };
    if let Some(f) = setup.floor {
        match f.instrument {
            FloorInstrument::Purchase => {
                let name = "floor binding (purchase)";
                if below(free_price, f.price) {
                    holding = purchase_holds(setup, name, f.price, unit)?;
                } else {
                    secondary.push(case(
                        name,
                        Clearing::Pinned(f.price),
                        Some(format!(
                            "after a shock that drives the price below {:.4}: price pinned, the agency buys",
                            f.price
                        )),
                    ));
                }
            }
            FloorInstrument::DeficiencyPayment => {
                let name = "deficiency payment binding";
                let pinned = Clearing::Pinned(f.price);
                if below(free_price, f.price) {
                    let planting = StateMap::new(setup, pinned).planting_at_rest(f.price);
                    let market = setup.demand.price_at(setup.supply.quantity(planting));
                    let mut c = case(
                        name,
                        pinned,
                        Some(format!(
                            "producer price pinned at {:.4} (expectations anchored); the market clears \
                             at {:.4} and the treasury pays the gap on the harvest",
                            f.price, market
                        )),
                    );
                    c.holds = true;
                    holding.push(c);
                } else {
                    secondary.push(case(
                        name,
                        pinned,
                        Some(format!(
                            "after a shock that drives the price below {:.4}: producers get the floor",
                            f.price
                        )),
                    ));
                }
            }
        }
    }
    // a [stock] section without band edges and with the band release is only the floor's store
    let band = setup.stock.filter(|s| {
        s.buy_below > 0.0 || s.sell_above.is_finite() || s.release != ReleaseSpec::Band
    });
    if let Some(s) = band {
        let (buy, sell) = (s.buy_below, s.sell_above);
        let buying = "stock buying at buy_below";
        let selling = "stock selling at sell_above";
        if holding.is_empty() {
            if buy > 0.0 && below(free_price, buy) {
                holding = purchase_holds(setup, buying, buy, unit)?;
            } else if sell.is_finite() && free_price > sell * (1.0 + 1e-12) {
                let mut c = case(
                    "stock empty (free market)",
                    free,
                    Some(format!(
                        "the free market's steady state lies above sell_above = {sell:.4}: the agency \
                         sells until its stock runs out, then the market is free"
                    )),
                );
                c.holds = true;
                holding.push(c);
            } else {
                let loss = s.loss_rate;
                let (clearing, eig, note) = match s.release {
                    ReleaseSpec::Band => (
                        free,
                        1.0 - loss,
                        "inside the band the agency does not trade: the free market".to_string(),
                    ),
                    ReleaseSpec::Target { target, speed } => {
                        target_regime(setup, free_price, buy, sell, target, speed, unit)
                    }
                    // a rotation swaps old grain for new: the stock and the market as in the band
                    ReleaseSpec::Rotate { .. } => (
                        free,
                        1.0 - loss,
                        "inside the band the agency only rotates its stock: the free market"
                            .to_string(),
                    ),
                    ReleaseSpec::Share { share } => (
                        free,
                        (1.0 - loss) * (1.0 - share),
                        format!("inside the band the agency releases {share} of its stock a period until it is gone"),
                    ),
                };
                let name = match clearing {
                    Clearing::Pinned(_) => "stock restocking at the band's middle",
                    Clearing::Free { .. } => "stock idle (free market)",
                };
                let mut c = case(name, clearing, Some(note));
                c.holds = true;
                c.stock_eigenvalue = Some(eig);
                holding.push(c);
            }
        }
        let held = |n: &str, h: &[RegimeCase]| h.iter().any(|c| c.name == n);
        if buy > 0.0 && !held(buying, &holding) {
            secondary.push(case(
                buying,
                Clearing::Pinned(buy),
                Some(format!("price pinned at {buy:.4} while the store has room")),
            ));
        }
        if sell.is_finite() {
            secondary.push(case(
                selling,
                Clearing::Pinned(sell),
                Some(format!("price pinned at {sell:.4} while stock lasts")),
            ));
        }
    }
    if holding.is_empty() {
        let mut c = case("free market", free, None);
        c.holds = true;
        holding.push(c);
    } else if !holding
        .iter()
        .any(|c| matches!(c.clearing, Clearing::Free { .. }))
    {
        let mut c = case(
            "free market",
            free,
            Some("the market left alone, for comparison (no policy rule acts)".into()),
        );
        c.floor_applies = false;
        secondary.insert(0, c);
    }
    holding.extend(secondary);
    Ok(holding)
}
