//! Which regimes a policy creates around the steady state, and which one holds it.
//!
//! Each policy rule adds its own regimes (`policies::Rule::regimes`, in its rule file) to a
//! [`Regimes`], in acting order; this file holds what they share — the case type, the purchase
//! regime that holds below a defended price ([`Regimes::purchase_holds`]) — and adds the free market.
//! A regime is a [`RegimePrice`] for the state-space map: free (P = D⁻¹(S(P^e) − offtake)), pinned
//! (a defended floor, band edge or ceiling: dP/dP^e = 0), or paid (a deficiency payment pins the
//! producer price while the market clears freely, so expectations formed on producer prices are
//! anchored).
//!
//! A pinned purchase regime holds the steady state only when the stock it builds settles: buying
//! X = S(P^e*) − D(F) a period with loss rate ℓ the stock settles at X/ℓ (if the store is big enough).
//! With ℓ = 0 and no capacity limit there is no steady state with finite stock: it grows by X every
//! period. With a capacity limit the store fills and the floor gives way: the free market with the
//! full store buying only its losses ℓ·capacity then holds the steady state.

use super::statespace::{Setup, StateMap};
pub use crate::regime::{RegimeCase, RegimeMaps, Regimes};
use crate::regime::{RegimePrice, StabilityError};

/// The maps a rule's regimes are worked out on: the market and policy's own (`StateMap`).
impl RegimeMaps for Setup {
    fn market_price_at_rest(&self, clearing: RegimePrice, p: f64) -> f64 {
        let planting = StateMap::new(self, clearing).planting_at_rest(p);
        self.demand.price_at(self.supply.quantity(planting))
    }

    fn purchase_holds(
        &self,
        name: &str,
        edge: f64,
        unit: &str,
    ) -> Result<Vec<RegimeCase>, StabilityError> {
        purchase_holds(self, name, edge, unit)
    }

    fn fixed_point(&self, clearing: RegimePrice, guess: f64) -> Option<f64> {
        StateMap::new(self, clearing).fixed_point(guess)
    }
}

fn case(name: &str, clearing: RegimePrice, note: Option<String>) -> RegimeCase {
    Regimes::case(name, clearing, note)
}

/// The agency's loss rate, capacity and whether its budget is limited.
fn agency(setup: &Setup) -> (f64, f64, bool) {
    let a = &setup.agency;
    (a.loss_rate, a.capacity, a.purchase_budget.is_finite())
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
    let pinned = RegimePrice::Pinned(edge);
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
            RegimePrice::Free { offtake },
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

/// Lists the regimes of `setup` given the free market's steady producer price `free_price`, the one
/// holding the steady state first; an error when a regime that would hold it has no steady state.
/// On a trading market importing and exporting are among them (`stability::trade`).
pub fn regimes(
    setup: &Setup,
    free_price: f64,
    unit: &str,
) -> Result<Vec<RegimeCase>, StabilityError> {
    regimes_and_trade(setup, free_price, unit).map(|(cases, _)| cases)
}

/// [`regimes`] and, on a trading market, its border at the mean world price with the steady trade.
pub(crate) fn regimes_and_trade(
    setup: &Setup,
    free_price: f64,
    unit: &str,
) -> Result<(Vec<RegimeCase>, Option<super::trade::TradeCases>), StabilityError> {
    let mut r = Regimes {
        maps: setup,
        free_price,
        unit,
        holding: Vec::new(),
        secondary: Vec::new(),
        border: crate::trade::BorderMeasures::FREE,
    };
    for rule in &setup.rules {
        rule.regimes(&mut r)?;
    }
    let Regimes {
        mut holding,
        mut secondary,
        border,
        ..
    } = r;
    let policy_holds = !holding.is_empty();
    let mut trade = super::trade::cases(setup, &border, unit);
    if let Some(t) = trade.as_mut() {
        super::trade::merge(t, &mut holding, &mut secondary, free_price);
    }
    let free = RegimePrice::Free { offtake: 0.0 };
    if holding.is_empty() {
        let mut c = case("free market", free, None);
        c.holds = true;
        holding.push(c);
    } else if !holding
        .iter()
        .any(|c| matches!(c.clearing, RegimePrice::Free { .. }))
    {
        let note = if policy_holds || trade.is_none() {
            "the market left alone, for comparison (no policy rule acts)".to_string()
        } else {
            "between export parity and import parity: the market clears at home, no trade".into()
        };
        let mut c = case("free market", free, Some(note));
        c.floor_applies = false;
        secondary.insert(0, c);
    }
    holding.extend(secondary);
    Ok((holding, trade))
}
