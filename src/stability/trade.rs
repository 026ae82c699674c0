//! Importing and exporting as regimes of a trading market.
//!
//! With `[trade]` in the market file, private traders import when the domestic price reaches import
//! parity P_m and export when it falls to export parity P_x (`trade::BorderTerms`). Seen from the
//! dynamics, each is a regime: while traders import (export) the price is pinned at the parity, so it
//! does not answer the expected price (dP/dP^e = 0: eigenvalue 0 for naive expectations; for other
//! rules the eigenvalues of the rule's own state map with that zero slope). Beyond a binding quota
//! the domestic curve clears the harvest plus the import quota (less the export quota): a free
//! regime shifted by the quota. Between the parities the market clears at home ("free market").
//!
//! The steady state: the closed market's S(P) = D(P) price P* decides. P* above import parity: the
//! price rests at P_m with steady imports D(P_m) − S(P_m) (or the quota, then the shifted curve);
//! P* below export parity: at P_x with steady exports S(P_x) − D(P_x); in between: the free market.
//! The world price is taken at its mean (`world_price`); a `world_price_cv` > 0 is not part of the
//! steady state or the regimes.
//!
//! When the free market holds the steady state and is unstable on its own (b/d > 1 for naive
//! expectations, the cobweb theorem), trade bounds the cobweb: the price cannot leave
//! [P_x, P_m] on a side where trade is unlimited. [`bounded_orbit`] follows the deterministic map
//! with the kinked curve from next to the steady state and reports where it settles.

use serde::Serialize;

use super::statespace::{Setup, StateMap};
use crate::regime::{RegimeCase, RegimeMaps, RegimePrice, Regimes};
use crate::trade::{BorderMeasures, BorderTerms};

/// What trade does at the steady state, beside the regimes.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TradeAnalysis {
    /// The world price the parities are taken at (the mean of `[trade] world_price`).
    pub world_price: f64,
    /// The world price's coefficient of variation (treated at the mean here).
    pub world_price_cv: f64,
    /// Import parity (None: no import can happen, e.g. an import quota of 0).
    pub import_parity: Option<f64>,
    /// Export parity (None: no export can happen: an export ban, a quota of 0, parity ≤ 0).
    pub export_parity: Option<f64>,
    /// The regime holding the steady state.
    pub holding: String,
    /// Imports per period at the steady state.
    pub imports: f64,
    /// Exports per period at the steady state.
    pub exports: f64,
    /// The agency's imports per period at the steady state (state trading; absent without it).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub public_imports: Option<f64>,
    /// Where prices settle when the steady state is unstable and trade bounds the cobweb.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub bounded_cycle: Option<BoundedCycle>,
    /// Explanation for the reader.
    pub note: String,
}

/// Where the deterministic orbit with trade settles.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BoundedCycle {
    /// Lowest producer price on the settled orbit.
    pub low: f64,
    /// Highest producer price on the settled orbit.
    pub high: f64,
    /// The orbit's period when it settles on a cycle (None: no cycle of period ≤ 64 found).
    pub period: Option<usize>,
    /// Share of the settled periods in which the price is pinned at a parity.
    pub at_parity_share: f64,
}

/// The regime where the agency imports (state trading, `[border] public_import_above`): the price
/// pinned at its trigger while its imports fill the gap.
pub const AGENCY_IMPORTING: &str = "agency importing";
/// The agency's imports at their season limit (`public_import_max`): the domestic curve clears the
/// harvest plus the limit.
pub const AGENCY_IMPORTING_FULL: &str = "agency importing, at its limit";

/// True for the regimes of private trade this module lists (the agency's own imports are a
/// policy's regime).
pub fn is_trade_regime(name: &str) -> bool {
    name.starts_with("importing") || name.starts_with("exporting")
}

/// The trade regimes of `setup` at the mean world price under `border`, and which one holds.
pub(crate) struct TradeCases {
    /// The period's border at the mean world price.
    pub terms: BorderTerms,
    /// The regime holding the steady state when trade decides it (None: the free market holds).
    pub holding: Option<RegimeCase>,
    /// The other trade regimes.
    pub secondary: Vec<RegimeCase>,
    /// Steady imports and exports of the holding regime.
    pub imports: f64,
    /// Steady exports.
    pub exports: f64,
    /// Steady public imports (state trading) of the holding regime.
    pub public_imports: f64,
    /// The price above which the agency imports (its trigger, at least export parity), when it
    /// imports below import parity at all.
    pub public_trigger: Option<f64>,
}

fn num(x: f64) -> String {
    crate::scenario::ranges::short_num(x)
}

/// `case` is the regime called `name`.
fn named(case: &Option<RegimeCase>, name: &str) -> bool {
    case.as_ref().is_some_and(|c| c.name == name)
}

/// One side of the border, as [`cases`] lists it.
struct Side {
    /// The pinned regime's name.
    name: &'static str,
    /// The quota-full regime's name.
    full: &'static str,
    /// The parity.
    parity: f64,
    /// The quota (∞ without one).
    quota: f64,
    /// +1 for imports (they add to the harvest), −1 for exports.
    sign: f64,
}

impl Side {
    /// The untraded price at rest lies beyond the parity (above import parity, below export
    /// parity).
    fn beyond(&self, untraded: f64) -> bool {
        if self.sign > 0.0 {
            untraded > self.parity * (1.0 + 1e-12)
        } else {
            untraded < self.parity * (1.0 - 1e-12)
        }
    }

    fn words(&self) -> (&'static str, &'static str, &'static str) {
        if self.sign > 0.0 {
            ("import", "above", "plus")
        } else {
            ("export", "below", "less")
        }
    }
}

/// Lists the trade regimes (`unit`: the quantity unit for the notes).
pub(crate) fn cases(setup: &Setup, border: &BorderMeasures, unit: &str) -> Option<TradeCases> {
    let trade = setup.trade?;
    let t = trade.terms(trade.world_price, border);
    let mut out = TradeCases {
        terms: t,
        holding: None,
        secondary: Vec::new(),
        imports: 0.0,
        exports: 0.0,
        public_imports: 0.0,
        public_trigger: None,
    };
    let mut sides = Vec::with_capacity(3);
    // state trading first: below import parity the agency's imports hold the price at its trigger
    // before traders would import (a trigger below export parity counts as export parity)
    if let Some(trigger) = border.public_import_above {
        let floor = if t.export_quota > 0.0 {
            t.export_parity
        } else {
            0.0
        };
        let at = trigger.max(floor);
        let below_parity = !(t.import_quota > 0.0 && t.import_parity.is_finite())
            || at < t.import_parity * (1.0 - 1e-12);
        if below_parity {
            out.public_trigger = Some(at);
            sides.push(Side {
                name: AGENCY_IMPORTING,
                full: AGENCY_IMPORTING_FULL,
                parity: at,
                quota: border.public_import_max.unwrap_or(f64::INFINITY),
                sign: 1.0,
            });
        }
    }
    if t.import_quota > 0.0 && t.import_parity.is_finite() {
        sides.push(Side {
            name: "importing",
            full: "importing, quota full",
            parity: t.import_parity,
            quota: t.import_quota,
            sign: 1.0,
        });
    }
    if t.export_quota > 0.0 {
        sides.push(Side {
            name: "exporting",
            full: "exporting, quota full",
            parity: t.export_parity,
            quota: t.export_quota,
            sign: -1.0,
        });
    }
    // what the agency's imports leave to traders at rest: nothing once they hold the price below
    // import parity; at their limit, traders import the rest less the limit
    let mut agency_holds = false;
    let mut agency_limit = 0.0;
    for side in &sides {
        let agency = side.name == AGENCY_IMPORTING;
        if side.name == "importing" && agency_holds {
            out.secondary.push(Regimes::case(
                side.name,
                RegimePrice::Pinned(side.parity),
                Some(format!(
                    "after a short harvest the agency's imports cannot cover: the price reaches \
                     import parity {}, traders import the gap",
                    num(side.parity)
                )),
            ));
            continue;
        }
        let (trade_word, where_word, plus) = side.words();
        let parity = side.parity;
        // at rest on the parity: the harvest planted on it and the untraded price it would fetch
        let planting = StateMap::new(setup, RegimePrice::Pinned(parity)).planting_at_rest(parity);
        let harvest = setup.supply.quantity(planting);
        let untraded = setup.demand.price_at(harvest);
        // what traders move at rest: D(P_m) − S(P_m) in, or S(P_x) − D(P_x) out (less what the
        // agency imports at its limit)
        let before = if side.name == "importing" {
            agency_limit
        } else {
            0.0
        };
        let traded = side.sign * (setup.demand.quantity_unclamped(parity) - harvest) - before;
        // beyond a binding quota: the domestic curve clears the harvest plus (less) the quota
        let full_case = side
            .quota
            .is_finite()
            .then(|| {
                let clearing = RegimePrice::Free {
                    offtake: -side.sign * side.quota - before,
                };
                setup
                    .fixed_point(clearing, parity)
                    .filter(|p| p.is_finite() && *p > 0.0)
                    .map(|p| {
                        Regimes::case(
                            side.full,
                            clearing,
                            Some(format!(
                                "the {trade_word} quota {} {unit} binds: the domestic curve clears \
                                 the harvest {plus} the quota, {where_word} {trade_word} parity {} \
                                 (rest at {})",
                                num(side.quota),
                                num(parity),
                                num(p)
                            )),
                        )
                    })
            })
            .flatten();
        let mut holds_here = None;
        if side.beyond(untraded) && traded <= side.quota {
            let mut c = Regimes::case(
                side.name,
                RegimePrice::Pinned(parity),
                Some(format!(
                    "the closed market would settle {where_word} {trade_word} parity {}: the price \
                     rests there and traders {trade_word} {} {unit} a period ({})",
                    num(parity),
                    num(traded),
                    if side.sign > 0.0 {
                        "D(P_m) − S(P_m)"
                    } else {
                        "S(P_x) − D(P_x)"
                    }
                )),
            );
            c.holds = true;
            holds_here = Some((c, traded));
        } else if side.beyond(untraded) {
            if let Some(mut c) = full_case.clone() {
                c.holds = true;
                c.note = Some(format!(
                    "the closed market would settle {where_word} {trade_word} parity {} and \
                     traders would {trade_word} {} {unit} a period, more than the quota {}: the \
                     price rests {where_word} the parity where the harvest {plus} the quota clears",
                    num(parity),
                    num(traded),
                    num(side.quota)
                ));
                holds_here = Some((c, side.quota));
            }
        }
        if agency {
            let rest_above_parity = holds_here.as_ref().is_some_and(|(c, _)| {
                c.name == AGENCY_IMPORTING_FULL
                    && matches!(c.clearing, RegimePrice::Free { .. })
                    && setup
                        .fixed_point(c.clearing, parity)
                        .is_some_and(|p| t.import_quota > 0.0 && p > t.import_parity)
            });
            if rest_above_parity {
                // the limit leaves the price above import parity: traders import the rest there
                agency_limit = side.quota;
                if let Some((mut c, _)) = holds_here.take() {
                    c.holds = false;
                    out.secondary.push(c);
                }
            } else if holds_here.is_some() {
                agency_holds = true;
            } else if side.beyond(untraded) {
                agency_limit = side.quota;
            }
        }
        let held = holds_here.as_ref().map(|(c, _)| c.name.as_str());
        if held != Some(side.name) {
            let (event, verb) = if side.sign > 0.0 {
                ("a short harvest that lifts", "import the gap")
            } else {
                ("a big harvest that drives", "export the surplus")
            };
            out.secondary.push(Regimes::case(
                side.name,
                RegimePrice::Pinned(parity),
                Some(format!(
                    "after {event} the price to {trade_word} parity {}: price pinned, traders {verb}",
                    num(parity)
                )),
            ));
        }
        if let Some(c) = full_case {
            if held != Some(side.full) {
                out.secondary.push(c);
            }
        }
        if let Some((c, amount)) = holds_here {
            out.holding = Some(c);
            if agency {
                out.public_imports = amount;
            } else if side.sign > 0.0 {
                out.imports = amount;
                if side.name == "importing" {
                    out.public_imports = agency_limit;
                }
            } else {
                out.exports = amount;
            }
        }
    }
    // the agency's own regimes in its words (the notes above speak of traders and quotas)
    let trigger = out.public_trigger.unwrap_or(0.0);
    let cases = out.holding.iter_mut().chain(out.secondary.iter_mut());
    for c in cases {
        if c.name == AGENCY_IMPORTING {
            c.note = Some(format!(
                "state trading: the agency imports at the landed price and sells at home to hold \
                 the price at its trigger {} (below import parity, so traders do not import)",
                num(trigger)
            ));
        } else if c.name == AGENCY_IMPORTING_FULL {
            c.note = Some(format!(
                "state trading at its limit ({} {unit} a season): the domestic curve clears the \
                 harvest plus the agency's imports, above its trigger {}",
                num(border.public_import_max.unwrap_or(f64::INFINITY)),
                num(trigger)
            ));
        }
    }
    Some(out)
}

/// Puts the trade regimes beside the policy's (`holding`, `secondary` as the rules left them, the
/// free market not yet added): trade holds the steady state when no rule does, or when the rule's
/// pinned price lies beyond a parity that traders reach first; a rule that defends a price beyond a
/// parity where trade is unlimited leaks its purchases (sales) abroad and has no steady state with
/// finite stock.
pub(crate) fn merge(
    trade: &mut TradeCases,
    holding: &mut Vec<RegimeCase>,
    secondary: &mut Vec<RegimeCase>,
    free_price: f64,
) {
    let t = trade.terms;
    let (pm, px) = (t.import_parity, t.export_parity);
    let unlimited_imports = t.import_quota.is_infinite() && pm.is_finite();
    let unlimited_exports = t.export_quota.is_infinite();
    if holding.is_empty() {
        if let Some(c) = trade.holding.take() {
            holding.push(c);
        }
        secondary.append(&mut trade.secondary);
        return;
    }
    let first = holding[0].clearing;
    let trade_holds = trade.holding.is_some();
    let mut demote = false;
    match first {
        RegimePrice::Pinned(e) => {
            let buying = e > free_price;
            let importing = named(&trade.holding, "importing");
            let exporting = named(&trade.holding, "exporting");
            let agency = named(&trade.holding, AGENCY_IMPORTING)
                || named(&trade.holding, AGENCY_IMPORTING_FULL);
            let trigger = trade.public_trigger.unwrap_or(f64::INFINITY);
            // traders reach their parity (the agency its trigger) before the rule trades at its price
            if (!buying && importing && e >= pm)
                || (buying && exporting && e <= px)
                || (!buying && agency && e >= trigger)
            {
                demote = true;
            } else if buying && unlimited_imports && e > pm * (1.0 + 1e-12) {
                let h = &mut holding[0];
                h.finite = false;
                h.note = Some(format!(
                    "the defended price {} lies above import parity {}: traders import without \
                     limit and the agency buys what they bring in — no steady state with finite \
                     stock (the defence leaks abroad)",
                    num(e),
                    num(pm)
                ));
            } else if !buying && t.export_quota > 0.0 && unlimited_exports && e < px * (1.0 - 1e-12)
            {
                let h = &mut holding[0];
                h.finite = false;
                h.note = Some(format!(
                    "the defended price {} lies below export parity {}: traders buy the agency's \
                     releases for export without limit — no steady state with finite stock (the \
                     stock leaks abroad)",
                    num(e),
                    num(px)
                ));
            }
        }
        RegimePrice::Free { .. } => demote = trade_holds,
        RegimePrice::Paid(_) => {}
    }
    if demote {
        for c in holding.iter_mut() {
            c.holds = false;
            let extra =
                "with trade, traders reach their parity first: the regime does not hold at rest";
            c.note = Some(match c.note.take() {
                Some(n) => format!("{n} ({extra})"),
                None => extra.into(),
            });
        }
        let mut policy = std::mem::take(holding);
        if let Some(c) = trade.holding.take() {
            holding.push(c);
        }
        policy.append(secondary);
        *secondary = policy;
    } else if let Some(mut c) = trade.holding.take() {
        // the rule holds the steady state; the trade regime is one a shock can bring
        c.holds = false;
        secondary.push(c);
    }
    // a rule's pinned price beyond a parity where trade is unlimited is reached only if trade stops
    for c in secondary.iter_mut().filter(|c| !is_trade_regime(&c.name)) {
        let RegimePrice::Pinned(e) = c.clearing else {
            continue;
        };
        let extra = if unlimited_imports && e > pm * (1.0 + 1e-12) {
            format!(
                "above import parity {}: traders import before the price gets there",
                num(pm)
            )
        } else if t.export_quota > 0.0 && unlimited_exports && e < px * (1.0 - 1e-12) {
            format!(
                "below export parity {}: traders export before the price gets there",
                num(px)
            )
        } else {
            continue;
        };
        c.note = Some(match c.note.take() {
            Some(n) => format!("{n} ({extra})"),
            None => extra,
        });
    }
    secondary.append(&mut trade.secondary);
}

/// Follows the deterministic map with the kinked curve from 0.1 % above the steady producer price
/// `p` and reports where it settles (None when the orbit leaves every finite positive price, i.e.
/// trade does not bound it).
pub(crate) fn bounded_orbit(setup: &Setup, terms: &BorderTerms, p: f64) -> Option<BoundedCycle> {
    const BURN: usize = 4000;
    const KEEP: usize = 256;
    let map = StateMap::new(setup, RegimePrice::Free { offtake: 0.0 });
    let price = |planting: f64| {
        let q = setup.supply.quantity(planting);
        terms.clear(&setup.demand, 0.0, q).price
    };
    let mut x = map.rest_state(p * 1.001);
    let mut next = x.clone();
    let mut kept = Vec::with_capacity(KEEP);
    for t in 0..BURN + KEEP {
        map.apply_with(&x, &mut next, price);
        std::mem::swap(&mut x, &mut next);
        let now = map.price_in(&x, price);
        if !(now.is_finite() && now > 0.0) {
            return None;
        }
        if t >= BURN {
            kept.push(now);
        }
    }
    let low = kept.iter().copied().fold(f64::INFINITY, f64::min);
    let high = kept.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let tol = 1e-9 * high.max(1.0);
    let period = (1..=64).find(|&k| (k..KEEP).all(|i| (kept[i] - kept[i - k]).abs() <= tol));
    let pinned =
        |v: f64| (v - terms.import_parity).abs() <= tol || (v - terms.export_parity).abs() <= tol;
    let at_parity_share = kept.iter().filter(|v| pinned(**v)).count() as f64 / KEEP as f64;
    Some(BoundedCycle {
        low,
        high,
        period,
        at_parity_share,
    })
}
