//! Side-by-side evaluation of policies against the market left alone.
//!
//! [`compare`] runs the Monte Carlo once for the market without intervention (the baseline, always
//! simulated) and each distinct policy, all on the same shocks, and turns the outcome into an ordered
//! list of [`Indicator`]s per policy (see `indicators.rs` for the definitions) plus per-period fan data
//! for plots. Baselines are like for like: a policy whose `[expectations]` overrides the market's
//! rule is measured against the market left alone under that same rule (one baseline per distinct
//! rule, all on common random numbers); what the changed rule alone does (free market under the
//! override against free market under the market's rule) is a separate behaviour-change column,
//! never a policy. A policy that neither trades nor pays reuses its baseline's figures exactly, so
//! its welfare changes are exactly zero. [`render`] turns a result into tables or JSON.

mod indicators;
pub mod render;

use rayon::prelude::*;
use serde::Serialize;

pub use indicators::indicator_keys;

use crate::path::{with_models, LongRunModel, WithModels};
use crate::policies::PolicySpec;
use crate::scenario::{ExpectationSpec, Scenario};
use crate::stochastic::{
    run_models_paired, MonteCarlo, Pairing, PathVariable, Progress, ReplicationFailed, Summary,
};
use crate::storage::LongRunMeans;

/// The value of one indicator.
#[derive(Debug, Clone, PartialEq)]
pub enum Value {
    /// A number (non-finite numbers are written as null / an empty cell).
    Number(f64),
    /// A word, e.g. a verdict.
    Text(String),
    /// Not available (e.g. no stability analysis).
    Missing,
}

impl Serialize for Value {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        match self {
            Value::Number(x) if x.is_finite() => s.serialize_f64(*x),
            Value::Text(t) => s.serialize_str(t),
            _ => s.serialize_none(),
        }
    }
}

/// How an indicator is measured, for choosing decimals and the unit shown.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Kind {
    /// A price (price units).
    Price,
    /// A quantity (quantity units).
    Quantity,
    /// A share or ratio (no unit).
    Share,
    /// Money (price units × quantity units), usually a present value.
    Money,
    /// A pure number (spectral radius).
    Number,
    /// A word.
    Text,
}

impl Kind {
    /// The unit measure a number of this kind is shown in (`None` for words).
    pub fn measure(self) -> Option<crate::units::Measure> {
        use crate::units::Measure;
        match self {
            Kind::Price => Some(Measure::Price),
            Kind::Quantity => Some(Measure::Quantity),
            Kind::Money => Some(Measure::Money),
            Kind::Share => Some(Measure::Share),
            Kind::Number => Some(Measure::Number),
            Kind::Text => None,
        }
    }
}

/// One row of the comparison.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Indicator {
    /// Machine key (JSON key, CSV row name), e.g. `net_welfare_change_pv`.
    pub key: String,
    /// Human label for tables.
    pub label: String,
    /// What it measures.
    pub kind: Kind,
    /// The value.
    pub value: Value,
}

/// Per-period data for fan charts.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Fan {
    /// Market price per period: mean and 5/50/95 % quantiles across replications (empty when the
    /// comparison ran with [`Fans::Skip`]).
    pub price: Vec<Summary>,
    /// Agency stock per period (empty with [`Fans::Skip`]).
    pub stock: Vec<Summary>,
    /// Mean fiscal cost per period.
    pub mean_fiscal_cost: Vec<f64>,
}

/// One policy's column.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PolicyComparison {
    /// Display name (`[policy] name`).
    pub name: String,
    /// The file it came from (empty for the built-in market left alone).
    pub file: String,
    /// True for the market left alone (the baseline's own figures).
    pub is_baseline: bool,
    /// The name of the baseline its changes are measured against.
    pub baseline: String,
    /// The expectation rule farmers follow in this column (with its parameters).
    pub expectations: String,
    /// Indicators in display order.
    pub indicators: Vec<Indicator>,
    /// The single-path warnings summarised as shares over the replications (stderr talk).
    pub warnings: Vec<String>,
    /// Fan-chart data.
    pub fan: Fan,
}

/// The finite number of indicator `key` in `indicators` (None when missing, text or not finite).
pub fn finite_number(indicators: &[Indicator], key: &str) -> Option<f64> {
    match indicators.iter().find(|i| i.key == key).map(|i| &i.value) {
        Some(Value::Number(x)) if x.is_finite() => Some(*x),
        _ => None,
    }
}

impl PolicyComparison {
    /// The value of indicator `key`, if there is one.
    pub fn get(&self, key: &str) -> Option<&Value> {
        self.indicators
            .iter()
            .find(|i| i.key == key)
            .map(|i| &i.value)
    }

    /// The numeric value of indicator `key`, if it is a number.
    pub fn number(&self, key: &str) -> Option<f64> {
        match self.get(key) {
            Some(Value::Number(x)) => Some(*x),
            _ => None,
        }
    }
}

/// The outcome of [`compare`].
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CompareResult {
    /// Market name.
    pub market: String,
    /// Price unit (e.g. "crowns per t").
    pub price_unit: String,
    /// Quantity unit (e.g. "kt").
    pub quantity_unit: String,
    /// Replications run.
    pub replications: usize,
    /// Periods per replication.
    pub periods: usize,
    /// Seed used.
    pub seed: u64,
    /// Discount rate of the present values.
    pub discount_rate: f64,
    /// Producers' relative risk aversion used for the risk premium.
    pub risk_aversion: f64,
    /// λ, the marginal cost of public funds.
    pub public_funds_cost: f64,
    /// The market left alone under the market's rule (the baseline of every policy that keeps it).
    pub baseline: PolicyComparison,
    /// The policies given, in order.
    pub policies: Vec<PolicyComparison>,
    /// What a changed expectation rule alone does: the market left alone under each overriding rule
    /// against the market left alone under the market's rule (a change in behaviour, not a policy).
    pub behaviour: Vec<PolicyComparison>,
    /// Pairs of policies whose net welfare changes differ by less than two standard errors of the
    /// paired difference (or not at all).
    pub close_calls: Vec<CloseCall>,
}

/// Two policies whose net welfare cannot be told apart at this number of replications.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CloseCall {
    /// The first policy's name.
    pub first: String,
    /// The second policy's name.
    pub second: String,
    /// Mean of (first − second) net welfare change, PV.
    pub difference: f64,
    /// Standard error of that mean (paired over replications).
    pub se: f64,
}

/// The expectation rule with its parameters, in words (e.g. `adaptive (weight 0.33)`; each rule
/// describes itself, `ExpectationRule::describe`).
pub fn describe_rule(rule: &ExpectationSpec) -> String {
    crate::expectations::build(rule).describe()
}

/// Why a comparison could not be made.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CompareError {
    /// No policy was given.
    #[error("no policy file given: compare needs at least one")]
    NoPolicies,
    /// A replication diverged.
    #[error(transparent)]
    Failed(#[from] ReplicationFailed),
    /// The storage equilibrium of a market with private storers could not be solved.
    #[error(transparent)]
    Storage(#[from] crate::storage::StorageError),
}

/// The Monte Carlo of every column on the market's models, and the long-run stocks of each model
/// that has them (the storage equilibrium's, one long path each on the same solved rules).
struct Simulate<'a> {
    scenario: &'a Scenario,
    specs: &'a [PolicySpec],
    progress: &'a dyn Progress,
    /// (column, its baseline) pairs whose paired price changes the household groups need (empty
    /// without `[[households]]`) and whose leakage the border needs (empty without `[trade]`):
    /// with neither, the plain Monte Carlo
    pairs: Pairing<'a>,
    fans: Fans,
}

/// Whether a comparison works out the fan charts' per-period quantiles of the price and the stock.
/// They take a share of the run's time and memory (each period's values kept for up to
/// `stochastic::SERIES_BUDGET_BYTES`, then selected), and only plots and the briefing draw them:
/// no indicator and no table reads them, so both settings give the same indicators, bit for bit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Fans {
    /// Work out the fans ([`PolicyComparison::fan`] filled).
    Keep,
    /// Leave them out ([`Fan::price`] and [`Fan::stock`] empty; the mean fiscal cost per period
    /// is kept, it costs nothing more).
    Skip,
}

impl Fans {
    /// The per-period series the Monte Carlo keeps for them (the price and the stock, or none):
    /// what the comparison runs with and what a memory check counts.
    pub fn series(self) -> &'static [PathVariable] {
        match self {
            Fans::Keep => &[PathVariable::Price, PathVariable::Stock],
            Fans::Skip => &[],
        }
    }
}

/// Whether a comparison measures the household groups of a market with `[[households]]`
/// (`households::measure`: each column against its baseline replication by replication). The
/// Monte Carlo then also keeps every replication's price paths and folds their changes, a quarter
/// of the run's time on the demo market; no indicator reads them, so both settings give the same
/// indicators, bit for bit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Households {
    /// Measure the groups (`compare --households`, the briefing).
    Measure,
    /// Leave them out (the indicators only: design search, sensitivity, sweeps, `compare` without
    /// `--households`).
    Skip,
}

impl WithModels for Simulate<'_> {
    type Output = Result<(MonteCarlo, Vec<Option<LongRunMeans>>), ReplicationFailed>;

    fn with<M: LongRunModel>(self, models: &[M]) -> Self::Output {
        let mc = run_models_paired(
            self.scenario,
            self.specs,
            models,
            self.fans.series(),
            self.progress,
            self.pairs,
        )?;
        let long = models.par_iter().map(|m| m.long_run()).collect();
        Ok((mc, long))
    }
}

/// Compares `policies` (in order) with the market left alone under `scenario`'s shocks,
/// replications, seed and periods, fans included.
pub fn compare(
    scenario: &Scenario,
    policies: &[PolicySpec],
    progress: &dyn Progress,
) -> Result<CompareResult, CompareError> {
    compare_with_households(scenario, policies, progress, Fans::Keep, Households::Skip)
        .map(|(result, _)| result)
}

/// [`compare`] without the fans ([`Fans::Skip`]): the same indicators, sooner. For callers that
/// read only indicators (design search, sensitivity, sweeps), which run many comparisons.
pub fn compare_indicators(
    scenario: &Scenario,
    policies: &[PolicySpec],
    progress: &dyn Progress,
) -> Result<CompareResult, CompareError> {
    compare_with_households(scenario, policies, progress, Fans::Skip, Households::Skip)
        .map(|(result, _)| result)
}

/// [`compare`] with or without the fans, and with [`Households::Measure`] for a market with
/// `[[households]]` the household groups' welfare under every column from the same Monte Carlo
/// (`households::measure`; `None` for a market without groups, whose run is then exactly
/// [`compare`]'s, and with [`Households::Skip`]).
pub fn compare_with_households(
    scenario: &Scenario,
    policies: &[PolicySpec],
    progress: &dyn Progress,
    fans: Fans,
    households: Households,
) -> Result<(CompareResult, Option<crate::households::HouseholdResult>), CompareError> {
    let groups = households == Households::Measure && !scenario.households.is_empty();
    if policies.is_empty() {
        return Err(CompareError::NoPolicies);
    }
    // baselines first: the market left alone under the market's rule (index 0), then under each
    // distinct overriding rule, in order of first appearance; a policy that neither trades nor pays
    // maps onto the baseline of its rule
    let market_rule = scenario.expectations;
    let rule_of = |p: &PolicySpec| p.expectations.unwrap_or(market_rule);
    let mut rules = vec![market_rule];
    for p in policies {
        if !rules.contains(&rule_of(p)) {
            rules.push(rule_of(p));
        }
    }
    let mut specs: Vec<PolicySpec> = rules
        .iter()
        .enumerate()
        .map(|(i, rule)| {
            let mut none = PolicySpec::none();
            if i > 0 {
                none.expectations = Some(*rule);
                none.name = format!("No intervention, {} farmers", describe_rule(rule));
            }
            none
        })
        .collect();
    let baseline_of: Vec<usize> = policies
        .iter()
        .map(|p| rules.iter().position(|r| *r == rule_of(p)).unwrap_or(0))
        .collect();
    let slots: Vec<usize> = policies
        .iter()
        .zip(&baseline_of)
        .map(|(p, &b)| {
            if p.intervenes() {
                specs.push(p.clone());
                specs.len() - 1
            } else {
                b
            }
        })
        .collect();
    // the household groups need each column against its baseline in the same replication: the
    // policies' (slot, baseline) and the behaviour changes' (rule i, the market's rule)
    let mut pairs: Vec<(usize, usize)> = Vec::new();
    if groups {
        let wanted = slots
            .iter()
            .zip(&baseline_of)
            .map(|(&s, &b)| (s, b))
            .chain((1..rules.len()).map(|i| (i, 0)));
        for pair in wanted {
            if pair.0 != pair.1 && !pairs.contains(&pair) {
                pairs.push(pair);
            }
        }
    }
    // a market with a border (and no private storers, whose storage report has its own): each
    // intervening policy's leakage against its baseline, folded as the Monte Carlo runs
    let mut leakage_pairs: Vec<(usize, usize)> = Vec::new();
    if scenario.trade.is_some() && scenario.storers.is_none() {
        for (k, p) in policies.iter().enumerate() {
            let pair = (slots[k], baseline_of[k]);
            if p.intervenes() && !leakage_pairs.contains(&pair) {
                leakage_pairs.push(pair);
            }
        }
    }
    let (mc, long) = with_models(
        scenario,
        &specs,
        Simulate {
            scenario,
            specs: &specs,
            progress,
            pairs: Pairing {
                prices: &pairs,
                leakage: &leakage_pairs,
            },
            fans,
        },
    )??;
    let leakage_of = |slot: usize, base: usize| {
        let i = leakage_pairs.iter().position(|p| *p == (slot, base))?;
        mc.leakage.get(i).map(Vec::as_slice)
    };
    let households = groups.then(|| {
        let column = |name: &str, slot: usize, base: usize| crate::households::HouseholdColumn {
            policy: name.to_string(),
            outcomes: crate::households::measure(
                scenario,
                &mc,
                pairs.iter().position(|p| *p == (slot, base)),
                slot,
                base,
            ),
        };
        let (eps_s, eps_d) = crate::households::elasticities(scenario);
        crate::households::HouseholdResult {
            groups: scenario.households.clone(),
            supply_elasticity: eps_s,
            demand_elasticity: eps_d,
            risk_aversion: scenario.run.risk_aversion,
            pv_factor: crate::households::pv_factor(scenario, mc.periods),
            baseline: column(&specs[0].name, 0, 0),
            policies: policies
                .iter()
                .enumerate()
                .map(|(k, p)| column(&p.name, slots[k], baseline_of[k]))
                .collect(),
            behaviour: (1..rules.len())
                .map(|i| {
                    column(
                        &format!(
                            "Behaviour change: {} farmers (not a policy)",
                            describe_rule(&rules[i])
                        ),
                        i,
                        0,
                    )
                })
                .collect(),
        }
    });
    let column = |spec: &PolicySpec, slot: usize, base: usize| {
        let runs = &mc.policies[slot];
        PolicyComparison {
            name: spec.name.clone(),
            file: spec.source.clone(),
            is_baseline: slot == 0,
            baseline: specs[base].name.clone(),
            expectations: describe_rule(&rule_of(&specs[slot])),
            indicators: indicators::build(
                scenario,
                &specs[slot],
                (runs, &mc.policies[base]),
                long[slot].as_ref().zip(long[base].as_ref()),
                leakage_of(slot, base),
            ),
            warnings: crate::path::summarise(scenario, &specs[slot], runs),
            fan: Fan {
                price: runs
                    .series
                    .first()
                    .map(|s| s.periods.clone())
                    .unwrap_or_default(),
                stock: runs
                    .series
                    .get(1)
                    .map(|s| s.periods.clone())
                    .unwrap_or_default(),
                mean_fiscal_cost: runs.mean_fiscal_cost.clone(),
            },
        }
    };
    // the columns are independent of one another: built in parallel, kept in order
    let behaviour = (1..rules.len())
        .into_par_iter()
        .map(|i| {
            let mut c = column(&specs[i], i, 0);
            c.name = format!(
                "Behaviour change: {} farmers (not a policy)",
                describe_rule(&rules[i])
            );
            c
        })
        .collect();
    // policies whose net welfare changes differ by less than two standard errors of the difference
    let lambda = scenario.run.public_funds_cost;
    // each policy's net welfare change replication by replication, read once
    let nets: Vec<Vec<f64>> = (0..policies.len())
        .into_par_iter()
        .map(|k| {
            let (slot, base) = (slots[k], baseline_of[k]);
            mc.policies[slot]
                .replications
                .nets(lambda)
                .zip(mc.policies[base].replications.nets(lambda))
                .map(|(p, b)| p - b)
                .collect()
        })
        .collect();
    let net = |k: usize, rep: usize| nets[k][rep];
    let mut close_calls = Vec::new();
    for i in 0..policies.len() {
        for j in i + 1..policies.len() {
            if slots[i] == slots[j] && baseline_of[i] == baseline_of[j] {
                continue; // the same figures
            }
            let (d, se) = indicators::mean_se((0..mc.replications).map(|r| net(i, r) - net(j, r)));
            if let Some(se) = se {
                // ≤: two files with the same figures (d = se = 0) cannot be told apart either
                if d.abs() <= 2.0 * se {
                    close_calls.push(CloseCall {
                        first: policies[i].name.clone(),
                        second: policies[j].name.clone(),
                        difference: d,
                        se,
                    });
                }
            }
        }
    }
    let (baseline, columns) = rayon::join(
        || column(&specs[0], 0, 0),
        || {
            policies
                .par_iter()
                .enumerate()
                .map(|(k, p)| column(p, slots[k], baseline_of[k]))
                .collect()
        },
    );
    let result = CompareResult {
        market: scenario.market.name.clone(),
        price_unit: scenario.market.price_unit.clone(),
        quantity_unit: scenario.market.quantity_unit.clone(),
        replications: mc.replications,
        periods: mc.periods,
        seed: scenario.run.seed,
        discount_rate: scenario.run.discount_rate,
        risk_aversion: scenario.run.risk_aversion,
        public_funds_cost: lambda,
        baseline,
        policies: columns,
        behaviour,
        close_calls,
    };
    Ok((result, households))
}
