//! Stability of the linearised model, regime by regime.
//!
//! Each expectation rule's dynamics is written as a state-space map (`statespace`), linearised at
//! the steady state of each regime a policy creates (`regimes`), and its eigenvalues computed with
//! nalgebra (`eigen`, complex ones included). Published closed-form conditions are evaluated beside
//! the numbers (`conditions`).
//!
//! Verdict: spectral radius ρ < 1 − tol stable, |ρ − 1| ≤ tol neutral, ρ > 1 + tol unstable, with
//! tol = [`eigen::NEUTRAL_TOLERANCE`] (1e-9) widened by the Jacobian's error estimate when that is
//! larger ([`eigen::tolerance_for`]; the analytic Jacobians used here are exact to rounding). When
//! the holding regime has no steady state with finite stock (a purchase floor above the free
//! market's steady state, no losses, no capacity limit), that regime has no eigenvalues, its
//! spectral radius is reported as 1 (the stock's unit root) and the verdict is "neutral", as for any
//! unit root: the price is pinned while the stock drifts upward without end (the analysis says "no
//! steady state with finite stock"). A regime whose steady state would need a market price ≤ 0 has
//! no steady state at all: that is an error, never a verdict.

pub mod eigen;
pub mod regimes;
mod render;
pub mod statespace;
pub mod trade;

use serde::Serialize;

use crate::curves::SteadyState;
use crate::policies::PolicySpec;
use crate::scenario::Scenario;

pub use crate::expectations::conditions::{self, PublishedCondition};
pub use crate::regime::{RegimePrice, StabilityError};
pub use render::render;
pub use statespace::{Setup, StateMap};
pub use trade::{BoundedCycle, TradeAnalysis};

/// A complex eigenvalue.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Eigenvalue {
    /// Real part.
    pub re: f64,
    /// Imaginary part.
    pub im: f64,
}

/// Stable, neutral or unstable.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Verdict {
    /// Spectral radius below 1 − tolerance.
    Stable,
    /// Spectral radius within the tolerance of 1.
    Neutral,
    /// Spectral radius above 1 + tolerance.
    Unstable,
}

impl Verdict {
    /// The word printed in tables.
    pub fn as_str(&self) -> &'static str {
        match self {
            Verdict::Stable => "stable",
            Verdict::Neutral => "neutral",
            Verdict::Unstable => "unstable",
        }
    }
}

/// One regime's linearisation and its verdict.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RegimeStability {
    /// Regime name, e.g. "free market".
    pub name: String,
    /// Eigenvalues of the Jacobian.
    pub eigenvalues: Vec<Eigenvalue>,
    /// Largest modulus.
    pub spectral_radius: f64,
    /// Verdict from the spectral radius.
    pub verdict: Verdict,
    /// The dominant eigenvalue is negative or complex.
    pub oscillating: bool,
    /// 2π/|arg λ| of the dominant eigenvalue (2 for a negative real one, None for a positive real one).
    pub period: Option<f64>,
    /// ln 0.5 / ln ρ (None when ρ ≥ 1).
    pub half_life: Option<f64>,
    /// True for the regime that holds the steady state.
    pub holds_steady_state: bool,
    /// Producer price at which this regime is linearised.
    pub at_price: f64,
    /// "analytic" (closed-form curve derivatives) or "none" (no eigenvalues computed).
    pub jacobian: &'static str,
    /// The neutral band |ρ − 1| ≤ tolerance used for the verdict (1e-9, or wider when the
    /// Jacobian's error estimate calls for it).
    pub tolerance: f64,
    /// Eigenvalue of the agency's stock, which does not feed back on prices (not in the verdict).
    pub stock_eigenvalue: Option<f64>,
    /// Explanation of the regime.
    pub note: Option<String>,
}

/// The stability analysis of a market under a policy.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StabilityAnalysis {
    /// The steady state the linearisation is taken at: market price and harvest of the regime that
    /// holds it (the free market's when no steady state with finite stock exists).
    pub steady_state: SteadyState,
    /// Regimes, the one holding the steady state first.
    pub regimes: Vec<RegimeStability>,
    /// Verdict of the regime that holds the steady state.
    pub verdict: Verdict,
    /// The largest modulus in that regime.
    pub spectral_radius: f64,
    /// False when no steady state with finite stock exists.
    pub steady_state_exists: bool,
    /// Producer price at the steady state.
    pub producer_price: f64,
    /// Planting price at the steady state.
    pub planting_price: f64,
    /// The expectation rule analysed.
    pub rule: &'static str,
    /// Published conditions evaluated for the free-market dynamics at its steady state.
    pub conditions: Vec<PublishedCondition>,
    /// General remarks (a rule that settles at once, omitted features).
    pub note: Option<String>,
    /// On a trading market: the parities at the mean world price, the regime holding the steady
    /// state and its steady imports and exports (absent for a closed market).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub trade: Option<TradeAnalysis>,
}

impl StabilityError {
    /// The regime the error is about.
    pub fn regime(&self) -> &str {
        match self {
            StabilityError::Linearisation { regime, .. }
            | StabilityError::NoSteadyState { regime, .. } => regime,
        }
    }

    /// The file to blame: the policy file when the regime is one the policy creates or the policy
    /// sets the expectation rule, the market file otherwise.
    pub fn blame<'a>(&self, scenario: &'a Scenario, policy: &'a PolicySpec) -> &'a str {
        let policy_made = !policy.source.is_empty()
            && (policy.expectations.is_some() || self.regime() != "free market");
        if policy_made {
            &policy.source
        } else {
            &scenario.source
        }
    }
}

/// Analyses `scenario` under `policy`.
pub fn analyse(
    scenario: &Scenario,
    policy: &PolicySpec,
) -> Result<StabilityAnalysis, StabilityError> {
    let mut analysis = analyse_setup(
        &Setup::new(scenario, policy),
        &scenario.market.quantity_unit,
    )?;
    if scenario.storers.is_some() {
        let extra =
            "the market's private storers are not part of the linearisation (see `storage`)";
        analysis.note = Some(match analysis.note.take() {
            Some(n) => format!("{n}; {extra}"),
            None => extra.to_string(),
        });
    }
    Ok(analysis)
}

/// Spectral radius and verdict only (what a sweep needs).
pub fn radius_and_verdict(setup: &Setup) -> Result<(f64, Verdict), StabilityError> {
    let r = analyse_setup(setup, "")?;
    Ok((r.spectral_radius, r.verdict))
}

/// The free market's steady producer price under the rule (and an announced floor's planting).
pub fn free_price(setup: &Setup) -> Result<f64, StabilityError> {
    let steady = crate::curves::steady_state(&setup.demand, &setup.supply);
    let guess = steady.map(|s| s.price).unwrap_or(1.0);
    let simple = crate::expectations::build(&setup.rule).rests_anywhere();
    if let (true, Some(s)) = (simple, steady) {
        return Ok(s.price);
    }
    StateMap::with_floor(setup, RegimePrice::Free { offtake: 0.0 }, false)
        .fixed_point(guess)
        .ok_or_else(|| StabilityError::NoSteadyState {
            regime: "free market".into(),
            reason: "supply and demand do not cross at a positive price under this rule".into(),
        })
}

fn regime_at(
    setup: &Setup,
    case: &regimes::RegimeCase,
    guess: f64,
) -> Result<RegimeStability, StabilityError> {
    let map = StateMap::with_floor(setup, case.clearing, case.floor_applies);
    // the free regime's fixed point is the free market's steady state (solved in closed form for
    // linear curves); an announced floor applies to it only when it lies below that price
    let at_rest = (case.clearing == RegimePrice::Free { offtake: 0.0 }).then_some(guess);
    let p = at_rest
        .or_else(|| map.fixed_point(guess))
        .filter(|p| p.is_finite() && *p > 0.0)
        .ok_or_else(|| StabilityError::NoSteadyState {
            regime: case.name.clone(),
            reason: "the regime's map has no positive fixed point".into(),
        })?;
    // a rule the model solves sits at its steady state from period 1: the eigenvalue 0
    let settled = setup.rule.rule().settles_at_once().is_some();
    // both curve forms have closed-form derivatives: the Jacobian is analytic for every market
    let (eigenvalues, jacobian, tolerance) = if !case.finite {
        (Vec::new(), "none", eigen::NEUTRAL_TOLERANCE)
    } else if settled {
        (
            vec![Eigenvalue { re: 0.0, im: 0.0 }],
            "none",
            eigen::NEUTRAL_TOLERANCE,
        )
    } else {
        let j = map.analytic_jacobian(p);
        let tol = eigen::tolerance_for(&j, eigen::analytic_error(&j));
        (eigen::eigenvalues(&j), "analytic", tol)
    };
    if eigenvalues
        .iter()
        .any(|e| !(e.re.is_finite() && e.im.is_finite()))
    {
        return Err(StabilityError::Linearisation {
            regime: case.name.clone(),
            reason: format!(
                "the Jacobian at the producer price {} is not finite (a curve has no finite slope there)",
                crate::output::fmt_num(p, 6)
            ),
        });
    }
    let rho = if case.finite {
        eigen::spectral_radius(&eigenvalues)
    } else {
        1.0
    };
    // no steady state with finite stock: the stock's unit root, neutral like any unit root
    let verdict = eigen::verdict_within(rho, tolerance);
    let (oscillating, period, half_life) = if case.finite {
        eigen::read_off_within(&eigenvalues, tolerance)
    } else {
        (false, None, None)
    };
    Ok(RegimeStability {
        name: case.name.clone(),
        eigenvalues,
        spectral_radius: rho,
        verdict,
        oscillating,
        period,
        half_life,
        holds_steady_state: case.holds,
        at_price: p,
        jacobian,
        tolerance,
        stock_eigenvalue: case.stock_eigenvalue,
        note: case.note.clone(),
    })
}

/// Analyses a [`Setup`]; `unit` is the quantity unit used in notes.
pub fn analyse_setup(setup: &Setup, unit: &str) -> Result<StabilityAnalysis, StabilityError> {
    let p_free = free_price(setup)?;
    let (cases, trade_cases) = regimes::regimes_and_trade(setup, p_free, unit)?;
    let mut out = Vec::with_capacity(cases.len());
    for c in &cases {
        out.push(regime_at(setup, c, p_free)?);
    }
    let hold = &out[0];
    let finite = cases[0].finite;
    let map = StateMap::with_floor(setup, cases[0].clearing, cases[0].floor_applies);
    let (producer_price, planting_price, steady_state) = if finite {
        let pp = hold.at_price;
        let planting = map.planting_at_rest(pp);
        let harvest = setup.supply.quantity(planting);
        let market = match cases[0].clearing {
            RegimePrice::Free { offtake } => setup.demand.price_at(harvest - offtake),
            // a payment holds the producer price; the market clears the harvest, with trade if any
            RegimePrice::Paid(_) => match &trade_cases {
                Some(t) => t.terms.clear(&setup.demand, 0.0, harvest).price,
                None => setup.demand.price_at(harvest),
            },
            RegimePrice::Pinned(p) => p,
        };
        if !(market.is_finite() && market > 0.0 && harvest.is_finite() && harvest > 0.0) {
            return Err(StabilityError::NoSteadyState {
                regime: hold.name.clone(),
                reason: format!(
                    "the market price at the steady harvest {} would be {}: demand cannot absorb \
                     that harvest at a positive price",
                    crate::scenario::ranges::short_num(harvest),
                    crate::scenario::ranges::short_num(market)
                ),
            });
        }
        (
            pp,
            planting,
            SteadyState {
                price: market,
                quantity: harvest,
            },
        )
    } else {
        let q = setup.supply.quantity(p_free);
        (
            p_free,
            p_free,
            SteadyState {
                price: p_free,
                quantity: q,
            },
        )
    };
    // published conditions: the free-market dynamics at the free steady state
    let free_map = StateMap::with_floor(setup, RegimePrice::Free { offtake: 0.0 }, false);
    let planting = free_map.planting_at_rest(p_free);
    let b = setup.supply.slope_at(planting);
    let d = -setup.demand.slope_at(p_free);
    let rule = setup.rule.rule();
    let conditions = rule.conditions(&conditions::Slopes { b, d });
    if let Some(why) = rule.time_varying() {
        // no eigenvalue: the limiting map's condition (E-stability) is said in words
        let limit: Vec<String> = conditions
            .iter()
            .map(|c| format!("{} {} ({}; {})", c.name, c.status(), c.detail, c.source))
            .collect();
        return Err(StabilityError::Linearisation {
            regime: "free market".into(),
            reason: format!(
                "{why}; as the gain goes to 0 the path follows the limiting map, whose condition is: {}",
                limit.join("; ")
            ),
        });
    }
    let note = rule.settles_at_once().map(str::to_string);
    let trade = trade_cases.map(|t| {
        trade_analysis(
            setup,
            &t,
            &cases,
            hold,
            producer_price,
            steady_state.quantity,
        )
    });
    Ok(StabilityAnalysis {
        steady_state,
        verdict: hold.verdict,
        spectral_radius: hold.spectral_radius,
        regimes: out,
        steady_state_exists: finite,
        producer_price,
        planting_price,
        rule: setup.rule.rule_name(),
        conditions,
        note,
        trade,
    })
}

/// The trade part of the analysis: parities, the holding regime's steady trade, and where prices
/// settle when the free market holds an unstable steady state that trade bounds.
fn trade_analysis(
    setup: &Setup,
    t: &trade::TradeCases,
    cases: &[regimes::RegimeCase],
    hold: &RegimeStability,
    producer_price: f64,
    harvest: f64,
) -> TradeAnalysis {
    let num = crate::scenario::ranges::short_num;
    let world = setup.trade.map(|t| t.world_price).unwrap_or(0.0);
    let cv = setup.trade.map(|t| t.world_price_cv).unwrap_or(0.0);
    let terms = t.terms;
    let import_parity = (terms.import_quota > 0.0 && terms.import_parity.is_finite())
        .then_some(terms.import_parity);
    let export_parity = (terms.export_quota > 0.0).then_some(terms.export_parity);
    let by_trade = trade::is_trade_regime(&hold.name);
    let (imports, exports) = if by_trade {
        (t.imports, t.exports)
    } else if let RegimePrice::Paid(_) = cases[0].clearing {
        // a deficiency payment holds the producer price; the market trades what it would
        let traded = terms.clear(&setup.demand, 0.0, harvest);
        (traded.imports, traded.exports)
    } else {
        (0.0, 0.0)
    };
    let mut note = format!("the world price is taken at its mean {}", num(world));
    if cv > 0.0 {
        note.push_str(&format!(
            " (world_price_cv {} is treated at the mean for the steady state and the regimes)",
            num(cv)
        ));
    }
    note.push_str(&format!(
        "; the steady state is held by the {} regime",
        hold.name
    ));
    let policy_regimes = cases
        .iter()
        .any(|c| c.name != "free market" && !trade::is_trade_regime(&c.name));
    let mut bounded_cycle = None;
    if hold.name == "free market" && hold.verdict == Verdict::Unstable {
        if policy_regimes {
            note.push_str(
                "; the free market's steady state is unstable; the orbit with the policy's regimes \
                 and trade together is not followed here (see `run`)",
            );
        } else {
            bounded_cycle = trade::bounded_orbit(setup, &terms, producer_price);
            match &bounded_cycle {
                Some(b) => note.push_str(&format!(
                    "; the steady state is unstable at home (spectral radius {}), but trade bounds \
                     the cobweb: without shocks prices settle {} between {} and {} (at a parity in \
                     {} % of periods) — a bounded cycle, not divergence",
                    crate::output::fmt_num(hold.spectral_radius, 6),
                    b.period
                        .map(|k| format!("on a cycle of period {k}"))
                        .unwrap_or_else(|| "on no short cycle".into()),
                    num(b.low),
                    num(b.high),
                    num(100.0 * b.at_parity_share)
                )),
                None => note.push_str(
                    "; the steady state is unstable at home and trade does not bound the cobweb \
                     on the side without trade: the orbit leaves positive prices",
                ),
            }
        }
    }
    let agency = hold.name == trade::AGENCY_IMPORTING || hold.name == trade::AGENCY_IMPORTING_FULL;
    let public_imports = t.public_trigger.map(|_| {
        if agency || by_trade {
            t.public_imports
        } else {
            0.0
        }
    });
    TradeAnalysis {
        world_price: world,
        world_price_cv: cv,
        import_parity,
        export_parity,
        holding: hold.name.clone(),
        imports,
        exports,
        public_imports,
        bounded_cycle,
        note,
    }
}

#[cfg(test)]
mod tests;
