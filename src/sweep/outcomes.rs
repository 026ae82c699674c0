//! Monte Carlo outcomes over a grid (`sweep --indicators`): at each grid point the files are
//! validated with the point's values exactly as the stability sweep validates them
//! ([`Base::validate`]) and the point's policy is compared with the market left alone by
//! [`crate::compare::compare_indicators`] itself (`compare` without the fans, which no
//! indicator reads), so every indicator is `compare`'s own.
//!
//! Common random numbers: every point runs `compare` with the same seed, replications and periods,
//! so replication i sees the same weather at every point (unless a varied key changes the shocks
//! themselves) and differences between points are not sampling noise. Points run in parallel and are
//! collected in grid order; `compare` is itself bit-identical at any thread count, so the output is
//! too.
//!
//! Points whose values touch the policy file only share the market and so the market left alone:
//! up to [`BATCH`] of them run in one `compare` ([`evaluate_together`]), the baseline stepped once
//! for them all. Each policy's column is what its own `compare` gives, bit for bit (the Monte Carlo
//! steps each policy as it steps it alone, and a column's indicators read only its own runs and its
//! baseline's), as long as the season outlays' budget holds every replication either way, which
//! [`batch_size`] sees to; a batch in which any replication fails is run again point by point, so
//! each point keeps its own error.

use rayon::prelude::*;

use super::{apply::Base, grid::Axis, SweepError, MAX_POINTS};
use crate::compare::{compare_indicators, Indicator, Kind, Value};
use crate::policies::PolicySpec;
use crate::scenario::Scenario;
use crate::stochastic::Progress;

/// Which indicators a sweep reports.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Selection {
    /// Every indicator `compare` gives (in its order, standard errors and quantiles included).
    All,
    /// These names, each followed by its `_se` where `compare` gives one.
    Names(Vec<String>),
}

impl Selection {
    /// Parses `--indicators LIST|all` (comma-separated names; empty names are refused).
    pub fn parse(list: &str) -> Result<Selection, SweepError> {
        if list.trim() == "all" {
            return Ok(Selection::All);
        }
        let names: Vec<String> = list.split(',').map(|s| s.trim().to_string()).collect();
        if names.iter().any(|n| n.is_empty()) {
            return Err(SweepError::Usage(format!(
                "--indicators `{list}`: expected indicator names separated by commas, or `all`"
            )));
        }
        Ok(Selection::Names(names))
    }

    /// The columns this selection gives for a point with `indicators`, or an error naming the unknown
    /// indicator and listing the valid names.
    pub fn columns(&self, indicators: &[Indicator]) -> Result<Vec<String>, SweepError> {
        let has = |k: &str| indicators.iter().any(|i| i.key == k);
        match self {
            Selection::All => Ok(indicators.iter().map(|i| i.key.clone()).collect()),
            Selection::Names(names) => {
                let mut cols = Vec::new();
                for n in names {
                    check_name(n, indicators)?;
                    if !cols.contains(n) {
                        cols.push(n.clone());
                    }
                    let se = format!("{n}_se");
                    if !n.ends_with("_se") && has(&se) && !cols.contains(&se) {
                        cols.push(se);
                    }
                }
                Ok(cols)
            }
        }
    }
}

/// Ok when `name` is one of `indicators`' keys; otherwise an error listing the valid names.
pub fn check_name(name: &str, indicators: &[Indicator]) -> Result<(), SweepError> {
    if indicators.iter().any(|i| i.key == name) {
        return Ok(());
    }
    let valid: Vec<&str> = indicators
        .iter()
        .filter(|i| i.kind != Kind::Text)
        .map(|i| i.key.as_str())
        .collect();
    Err(SweepError::Usage(format!(
        "unknown indicator `{name}`; valid names: {}",
        valid.join(", ")
    )))
}

/// The outcome at one grid point (or one value a design search tried).
#[derive(Debug, Clone, PartialEq)]
pub struct Outcome {
    /// The value of each varied key, in `--vary` order.
    pub values: Vec<f64>,
    /// The policy's indicators (`compare`'s column for it, in `compare`'s order), or why the point
    /// is invalid (its files do not validate, or a replication diverged).
    pub indicators: Result<Vec<Indicator>, String>,
}

impl Outcome {
    /// The numeric value of indicator `key` (None when invalid, missing or not a finite number).
    pub fn number(&self, key: &str) -> Option<f64> {
        crate::compare::finite_number(self.indicators.as_ref().ok()?, key)
    }
}

/// Runs `compare` of the base's policy with `overrides` written into the files. Invalid files or a
/// failed run give `Err` with the message.
pub fn evaluate(
    base: &Base,
    overrides: &[(&str, f64)],
    progress: &dyn Progress,
) -> Result<Vec<Indicator>, String> {
    let (scenario, policy) = base.validate(overrides).map_err(|e| e.to_string())?;
    let result = compare_indicators(&scenario, std::slice::from_ref(&policy), progress)
        .map_err(|e| e.to_string())?;
    result
        .policies
        .into_iter()
        .next()
        .map(|c| c.indicators)
        .ok_or_else(|| "compare gave no column".to_string())
}

/// Most grid points in one `compare` ([`evaluate_together`]).
pub const BATCH: usize = 8;

/// How many policies of `scenario` may share one `compare` and give each the figures of its own:
/// the season outlays must be kept for every replication in both (their budget,
/// `stochastic::montecarlo::SEASON_BUDGET_BYTES`, shared by the comparison's models, then never
/// binds), with a baseline of its own for each policy counted; and the replication summaries of
/// the whole batch stay within that budget too. Below 2: none.
pub fn batch_size(scenario: &Scenario) -> usize {
    let budget = crate::stochastic::montecarlo::SEASON_BUDGET_BYTES as u64;
    let reps = scenario.run.replications.max(1) as u64;
    let per_model_outlays = reps * scenario.run.periods.max(1) as u64 * 8;
    let per_model_summaries = reps * crate::stochastic::memory::bytes_per_replication_per_column();
    let models = budget / per_model_outlays.max(per_model_summaries).max(1);
    // the market left alone, and each policy with a baseline of its own at most
    let policies = (models.saturating_sub(1) / 2) as usize;
    policies.min(BATCH)
}

/// The most columns a grid's comparisons hold at once (for the memory check): a batch's, each
/// policy with a baseline of its own counted, or a point's own (the policy and the market left
/// alone).
pub fn columns_at_once(scenario: &Scenario) -> usize {
    match batch_size(scenario) {
        b @ 2.. => 1 + 2 * b,
        _ => 2,
    }
}

/// Each of `policies` (on `scenario`) compared with the market left alone in one `compare`: each
/// one's indicators, as [`evaluate`] gives them point by point (see the module's notes); `None`
/// when a replication failed (the batch is then to be run point by point).
fn evaluate_together(
    scenario: &Scenario,
    policies: &[PolicySpec],
    progress: &dyn Progress,
) -> Option<Vec<Vec<Indicator>>> {
    // the bar counts replications of grid points: this run does those of every policy in it
    let progress = Scaled {
        inner: progress,
        by: policies.len() as u64,
    };
    let result = compare_indicators(scenario, policies, &progress).ok()?;
    Some(result.policies.into_iter().map(|c| c.indicators).collect())
}

/// A progress observer that counts each replication `by` times.
struct Scaled<'a> {
    inner: &'a dyn Progress,
    by: u64,
}

impl Progress for Scaled<'_> {
    fn advance(&self, replications: u64) {
        self.inner.advance(replications * self.by);
    }
}

/// The grid points of `axes` (one or two), the first axis outermost.
pub fn grid_points(axes: &[Axis]) -> Vec<Vec<f64>> {
    match axes {
        [a] => a.values.iter().map(|v| vec![*v]).collect(),
        [a, b] => a
            .values
            .iter()
            .flat_map(|x| b.values.iter().map(move |y| vec![*x, *y]))
            .collect(),
        _ => Vec::new(),
    }
}

/// Checks the axes as the stability sweep does: one or two, distinct, at most [`MAX_POINTS`].
pub fn check_axes(axes: &[Axis], most: usize) -> Result<(), SweepError> {
    if axes.is_empty() || axes.len() > 2 {
        return Err(SweepError::Usage(format!(
            "one or two --vary keys, got {}",
            axes.len()
        )));
    }
    if axes.len() == 2 && axes[0].key == axes[1].key {
        return Err(SweepError::Usage(format!(
            "--vary {} given twice",
            axes[0].key
        )));
    }
    let total: usize = axes.iter().map(|a| a.values.len()).product();
    if total > most.min(MAX_POINTS) {
        return Err(SweepError::Usage(format!(
            "the grid has {total} points; at most {} with a Monte Carlo at each (use fewer STEPS)",
            most.min(MAX_POINTS)
        )));
    }
    Ok(())
}

/// Most grid points of a Monte Carlo sweep.
pub const MAX_MC_POINTS: usize = 100_000;

/// Evaluates every grid point of `axes` (see [`evaluate`]) in parallel, collected in grid order.
/// The base files must validate; an unknown key, or a key none of whose grid values validates,
/// fails the whole sweep (as in the stability sweep). `check` sees the first valid point's
/// indicators before the rest of the grid is run (e.g. to refuse an unknown indicator name at
/// once); its error ends the sweep.
pub fn outcomes(
    base: &Base,
    axes: &[Axis],
    progress: &dyn Progress,
    check: &(dyn Fn(&[Indicator]) -> Result<(), SweepError> + Sync),
) -> Result<Vec<Outcome>, SweepError> {
    check_axes(axes, MAX_MC_POINTS)?;
    base.validate(&[]).map_err(SweepError::Input)?;
    for axis in axes {
        let checked: Vec<_> = axis
            .values
            .iter()
            .map(|v| base.validate(&[(axis.key.as_str(), *v)]))
            .collect();
        let all_bad = checked.iter().all(|r| r.is_err());
        if let Some(Err(e)) = checked.iter().find(|r| {
            all_bad
                || matches!(r, Err(e) if matches!(e, crate::scenario::InputError::UnknownKey { .. } | crate::scenario::InputError::Syntax { .. }))
        }) {
            return Err(SweepError::Key {
                key: axis.key.clone(),
                problem: e.clone(),
            });
        }
    }
    let run = |values: &Vec<f64>| {
        let overrides: Vec<(&str, f64)> = axes
            .iter()
            .zip(values)
            .map(|(a, v)| (a.key.as_str(), *v))
            .collect();
        Outcome {
            values: values.clone(),
            indicators: evaluate(base, &overrides, progress),
        }
    };
    let points = grid_points(axes);
    // the grid in order up to the first valid point, checked, then the rest in parallel
    let mut done = Vec::new();
    for values in &points {
        let o = run(values);
        let valid = o.indicators.is_ok();
        if let Ok(list) = &o.indicators {
            check(list)?;
        }
        done.push(o);
        if valid {
            break;
        }
    }
    let rest = &points[done.len()..];
    // the points on the base's own market in batches of one `compare` each, the others alone
    let market = base.validate(&[]).map_err(SweepError::Input)?.0;
    let size = batch_size(&market);
    let policy_of = |values: &Vec<f64>| -> Option<PolicySpec> {
        if size < 2 {
            return None; // no batches: each point is validated once, when it runs
        }
        let overrides: Vec<(&str, f64)> = axes
            .iter()
            .zip(values)
            .map(|(a, v)| (a.key.as_str(), *v))
            .collect();
        let (scenario, policy) = base.validate(&overrides).ok()?;
        (scenario == market).then_some(policy)
    };
    let batches = batches(rest, size, policy_of);
    let outcomes: Vec<Vec<Outcome>> = batches
        .par_iter()
        .map(|batch| match batch {
            Batch::Alone(values) => vec![run(values)],
            Batch::Together(points) => {
                let (values, policies): (Vec<&Vec<f64>>, Vec<PolicySpec>) =
                    points.iter().map(|(v, p)| (*v, p.clone())).unzip();
                match evaluate_together(&market, &policies, progress) {
                    Some(lists) => values
                        .into_iter()
                        .zip(lists)
                        .map(|(v, list)| Outcome {
                            values: v.clone(),
                            indicators: Ok(list),
                        })
                        .collect(),
                    None => values.into_iter().map(run).collect(),
                }
            }
        })
        .collect();
    done.extend(outcomes.into_iter().flatten());
    Ok(done)
}

/// A grid point run alone, or points whose policies share one `compare`.
enum Batch<'a> {
    Alone(&'a Vec<f64>),
    Together(Vec<(&'a Vec<f64>, PolicySpec)>),
}

/// `points` in grid order as batches: runs of up to `size` points whose policy `policy_of` gives
/// (a point on the base's market) together, every other point alone.
fn batches<'a>(
    points: &'a [Vec<f64>],
    size: usize,
    policy_of: impl Fn(&Vec<f64>) -> Option<PolicySpec>,
) -> Vec<Batch<'a>> {
    let mut out: Vec<Batch<'a>> = Vec::new();
    for values in points {
        match policy_of(values) {
            None => out.push(Batch::Alone(values)),
            Some(policy) => match out.last_mut() {
                Some(Batch::Together(run)) if run.len() < size => run.push((values, policy)),
                _ => out.push(Batch::Together(vec![(values, policy)])),
            },
        }
    }
    out
}

/// The first valid point's indicators (for checking names), if any point is valid.
pub fn first_valid(points: &[Outcome]) -> Option<&[Indicator]> {
    points
        .iter()
        .find_map(|p| p.indicators.as_ref().ok().map(|v| v.as_slice()))
}

/// The sweep's outcomes as text in `format`: one row per grid point, the varied keys first, then each
/// column of `columns`, then `status` (`ok` or `invalid`). JSON: `{"keys": [...], "indicators":
/// [...], "points": [{"values": {KEY: v}, "indicators": {NAME: v}, "message"}]}`.
pub fn render(
    points: &[Outcome],
    keys: &[String],
    columns: &[String],
    format: crate::output::Format,
) -> String {
    use crate::output::{fmt_full, fmt_num, Format, TextTable};
    if format == Format::Json {
        return render_json(points, keys, columns);
    }
    let full = format == Format::Csv;
    let num = |x: f64| if full { fmt_full(x) } else { fmt_num(x, 6) };
    let missing = if full { "" } else { "n/a" };
    let mut headers: Vec<String> = keys.to_vec();
    headers.extend(columns.iter().cloned());
    headers.push("status".into());
    let mut t = TextTable::new(&headers);
    for p in points {
        let mut row: Vec<String> = p.values.iter().map(|v| num(*v)).collect();
        match &p.indicators {
            Ok(inds) => {
                for c in columns {
                    row.push(match inds.iter().find(|i| &i.key == c).map(|i| &i.value) {
                        Some(Value::Number(x)) if x.is_finite() => num(*x),
                        Some(Value::Text(s)) => s.clone(),
                        _ => missing.into(),
                    });
                }
                row.push("ok".into());
            }
            Err(_) => {
                row.extend(columns.iter().map(|_| missing.to_string()));
                row.push("invalid".into());
            }
        }
        t.push(row);
    }
    t.render(format)
}

fn render_json(points: &[Outcome], keys: &[String], columns: &[String]) -> String {
    use serde_json::{json, Map};
    let pts: Vec<serde_json::Value> = points
        .iter()
        .map(|p| {
            let mut values = Map::new();
            for (k, v) in keys.iter().zip(&p.values) {
                values.insert(k.clone(), json!(v));
            }
            let (inds, message) = match &p.indicators {
                Ok(list) => (indicator_map(list, columns), serde_json::Value::Null),
                Err(m) => (serde_json::Value::Null, json!(m)),
            };
            json!({ "values": values, "indicators": inds, "message": message })
        })
        .collect();
    serde_json::to_string_pretty(&json!({ "keys": keys, "indicators": columns, "points": pts }))
        .unwrap_or_default()
        + "\n"
}

/// `{NAME: value}` for `columns` in order (non-finite numbers and missing values as null).
pub fn indicator_map(list: &[Indicator], columns: &[String]) -> serde_json::Value {
    let mut m = serde_json::Map::new();
    for c in columns {
        let v = list
            .iter()
            .find(|i| &i.key == c)
            .map(|i| serde_json::to_value(&i.value).unwrap_or(serde_json::Value::Null))
            .unwrap_or(serde_json::Value::Null);
        m.insert(c.clone(), v);
    }
    serde_json::Value::Object(m)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn market(replications: usize, periods: usize) -> Scenario {
        crate::scenario::market_from_str(
            "m.toml",
            &format!(
                "[demand]\nintercept = 200.0\nslope = -2.0\n[supply]\nintercept = -40.0\n\
                 slope = 1.0\n[expectations]\nrule = \"naive\"\n[run]\nperiods = {periods}\n\
                 replications = {replications}\n[shocks]\nyield_cv = 0.05\n"
            ),
        )
        .unwrap()
    }

    #[test]
    fn a_batch_never_lets_the_season_outlays_budget_bind() {
        // the rule the module relies on (derived here): with the batch's models, a baseline each
        // counted, periods × 8 bytes × replications × models stays within the season budget, so
        // every column keeps the outlays of every replication, as it does in its own comparison
        let budget = crate::stochastic::montecarlo::SEASON_BUDGET_BYTES;
        for (reps, periods) in [
            (150, 30),
            (2_000, 40),
            (10_000, 100),
            (60_000, 100),
            (1_000_000, 100),
        ] {
            let s = market(reps, periods);
            let b = batch_size(&s);
            assert!(b <= BATCH);
            if b >= 2 {
                let models = 1 + 2 * b;
                assert!(
                    periods * 8 * reps * models <= budget,
                    "{reps} x {periods}: {b}"
                );
                assert_eq!(columns_at_once(&s), models);
            } else {
                assert_eq!(columns_at_once(&s), 2);
            }
        }
        assert_eq!(batch_size(&market(2_000, 40)), BATCH);
        assert!(
            batch_size(&market(1_000_000, 100)) < 2,
            "a long run is not batched"
        );
    }
}
