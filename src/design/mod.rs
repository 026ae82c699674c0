//! Design search: the value of a file key (or the grid point of two) that meets every requirement
//! and is best on an objective, and the cost–risk frontier.
//!
//! Every design is evaluated by [`crate::sweep::outcomes::evaluate`] — `compare` of the policy with
//! the key set, on the same seed, so every value sees the same shocks (common random numbers) and
//! the requirement is a smooth or step function of the key rather than noise.
//!
//! One key: the grid brackets the answer — the met grid value next to an unmet one in the direction
//! the objective prefers (no objective: the one boundary between met and unmet values) — and
//! bisection then refines it, evaluating midpoints, until the bracket is narrower than the width of
//! the key over which the failing requirement's indicator moves by one Monte Carlo standard error
//! (`_se`; the slope read off the bracket's ends) — the noise, not the grid, then limits the answer —
//! or narrower than 2⁻³⁰ of the grid step (no noise, e.g. a market without shocks). The answer is always a value that
//! was evaluated and met every requirement. Two keys: the best grid point. `--frontier RISK,COST`:
//! the grid points (meeting every requirement, when there are requirements) that no other beats on
//! both indicators, both smaller being better ([`frontier::pareto`]).

pub mod frontier;
pub mod render;
pub mod requirement;

use crate::stochastic::{NoProgress, Progress};
use crate::sweep::outcomes::{self, check_name, evaluate, Outcome, Selection};
use crate::sweep::{Axis, Base, SweepError};

pub use render::render;
pub use requirement::{Objective, Op, Requirement};

/// Why a design search could not be run.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum DesignError {
    /// A malformed or contradictory request.
    #[error("{0}")]
    Usage(String),
    /// The grid or the files.
    #[error(transparent)]
    Sweep(#[from] SweepError),
}

/// What the search is asked.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Spec {
    /// Every requirement a design must meet.
    pub requirements: Vec<Requirement>,
    /// What is made as small or large as possible.
    pub objective: Option<Objective>,
    /// `(RISK, COST)` indicators of the frontier.
    pub frontier: Option<(String, String)>,
}

/// Most bisection steps.
pub const MAX_BISECTIONS: usize = 40;

/// Indicators every design reports besides those named in the request.
pub const ALWAYS_SHOWN: [&str; 2] = ["net_welfare_change_pv", "fiscal_cost_pv"];

/// The search's outcome.
#[derive(Debug, Clone, PartialEq)]
pub struct Design {
    /// The varied keys (`policy` for a list of policy files).
    pub keys: Vec<String>,
    /// For a list of policy files: each design's policy name (empty for a grid of key values).
    pub labels: Vec<String>,
    /// The request.
    pub spec: Spec,
    /// Every grid point, in grid order.
    pub grid: Vec<Outcome>,
    /// The values bisection tried, in order.
    pub tried: Vec<Outcome>,
    /// The chosen design (None when no value meets every requirement, or with `--frontier` alone).
    pub chosen: Option<Outcome>,
    /// Whether the chosen design meets every requirement.
    pub met: bool,
    /// Whether a requirement at the chosen design lies within two standard errors of its value.
    pub within_noise: bool,
    /// After bisection: the last value that met every requirement and the last that did not.
    pub bracket: Option<(f64, f64)>,
    /// Sentences about the answer (no value meets, the boundary outside the grid, …).
    pub notes: Vec<String>,
    /// Indices into `grid` of the frontier's designs, by risk.
    pub frontier: Vec<usize>,
    /// The indicators reported, each followed by its `_se`.
    pub columns: Vec<String>,
}

impl Design {
    /// Whether `o` meets every requirement.
    pub fn meets(&self, o: &Outcome) -> bool {
        meets(&self.spec.requirements, o)
    }
}

fn meets(reqs: &[Requirement], o: &Outcome) -> bool {
    o.indicators.is_ok() && reqs.iter().all(|r| r.met_by(o))
}

/// A `--vary` of `design`: `KEY=FROM:TO` (11 grid values) or `KEY=FROM:TO:STEPS`.
pub fn parse_vary(spec: &str) -> Result<Axis, SweepError> {
    let parts = spec
        .split_once('=')
        .map_or(0, |(_, r)| r.split(':').count());
    if parts == 2 {
        crate::sweep::parse_vary(&format!("{spec}:11"))
    } else {
        crate::sweep::parse_vary(spec)
    }
}

/// Runs the search (see the module's documentation). `progress` hears the grid's replications.
pub fn search(
    base: &Base,
    axes: &[Axis],
    spec: &Spec,
    progress: &dyn Progress,
) -> Result<Design, DesignError> {
    if spec.requirements.is_empty() && spec.objective.is_none() && spec.frontier.is_none() {
        return Err(DesignError::Usage(
            "say what the design must do: --require \"INDICATOR<=VALUE\", --minimise or --maximise \
             INDICATOR, or --frontier RISK,COST"
                .into(),
        ));
    }
    outcomes::check_axes(axes, outcomes::MAX_MC_POINTS)?;
    let keys: Vec<String> = axes.iter().map(|a| a.key.clone()).collect();
    let key_objective = spec
        .objective
        .as_ref()
        .and_then(|o| keys.iter().position(|k| k == o.name()));
    if axes.len() == 2 && spec.objective.is_none() && spec.frontier.is_none() {
        return Err(DesignError::Usage(
            "with two --vary keys say which grid point is best: --minimise or --maximise an \
             indicator or one of the keys, or --frontier RISK,COST"
                .into(),
        ));
    }
    let mut asked: Vec<&str> = spec
        .requirements
        .iter()
        .map(|r| r.indicator.as_str())
        .collect();
    if let (Some(o), None) = (&spec.objective, key_objective) {
        asked.push(o.name());
    }
    if let Some((r, c)) = &spec.frontier {
        asked.push(r);
        asked.push(c);
    }
    let grid = outcomes::outcomes(base, axes, progress, &|first| {
        asked.iter().try_for_each(|n| check_name(n, first))
    })?;
    let mut design = assemble(keys, spec, grid, key_objective)?;
    if design.spec.frontier.is_some() && spec.objective.is_none() && spec.requirements.is_empty() {
        return Ok(design);
    }
    if design.keys.len() == 2 || (spec.objective.is_none() && spec.frontier.is_some()) {
        choose_best_grid_point(&mut design, key_objective);
    } else {
        choose_one_key(&mut design, base, &axes[0], key_objective);
    }
    settle(&mut design);
    Ok(design)
}

/// The met flags of the chosen design.
fn settle(design: &mut Design) {
    if let Some(c) = &design.chosen {
        design.met = design.meets(c);
        design.within_noise = design.spec.requirements.iter().any(|r| r.within_noise(c));
    }
}

/// Checks the names against the first valid design, picks the reported columns and finds the
/// frontier.
fn assemble(
    keys: Vec<String>,
    spec: &Spec,
    grid: Vec<Outcome>,
    key_objective: Option<usize>,
) -> Result<Design, DesignError> {
    let Some(first) = outcomes::first_valid(&grid) else {
        let msg = grid
            .iter()
            .find_map(|p| p.indicators.as_ref().err().cloned())
            .unwrap_or_default();
        return Err(DesignError::Usage(format!("no design could be run: {msg}")));
    };
    let mut names: Vec<String> = spec
        .requirements
        .iter()
        .map(|r| r.indicator.clone())
        .collect();
    if let (Some(o), None) = (&spec.objective, key_objective) {
        names.push(o.name().to_string());
    }
    if let Some((r, c)) = &spec.frontier {
        names.push(r.clone());
        names.push(c.clone());
    }
    for n in &names {
        check_name(n, first)?;
    }
    names.extend(ALWAYS_SHOWN.iter().map(|s| s.to_string()));
    names.retain(|n| first.iter().any(|i| &i.key == n));
    let columns = Selection::Names(names).columns(first)?;

    let mut design = Design {
        keys,
        labels: Vec::new(),
        spec: spec.clone(),
        grid,
        tried: Vec::new(),
        chosen: None,
        met: false,
        within_noise: false,
        bracket: None,
        notes: Vec::new(),
        frontier: Vec::new(),
        columns,
    };
    if let Some((risk, cost)) = &spec.frontier {
        let candidates: Vec<usize> = (0..design.grid.len())
            .filter(|&i| {
                let o = &design.grid[i];
                o.indicators.is_ok() && (spec.requirements.is_empty() || design.meets(o))
            })
            .collect();
        let pts: Vec<(f64, f64)> = candidates
            .iter()
            .map(|&i| {
                let o = &design.grid[i];
                (
                    o.number(risk).unwrap_or(f64::NAN),
                    o.number(cost).unwrap_or(f64::NAN),
                )
            })
            .collect();
        design.frontier = frontier::pareto(&pts)
            .into_iter()
            .map(|k| candidates[k])
            .collect();
        if design.frontier.is_empty() {
            design.notes.push(if candidates.is_empty() {
                "no grid design meets every requirement: the frontier is empty".into()
            } else {
                format!("no design has finite {risk} and {cost}: the frontier is empty")
            });
        }
    }
    Ok(design)
}

/// The designs are whole policy files (a list of `--policy`): one `compare` of them all on common
/// random numbers, each file a design (`labels`: the policies' names; `values`: its place, 1, 2, …).
/// The best by the objective among those meeting every requirement, and the frontier.
pub fn search_policies(
    scenario: &crate::scenario::Scenario,
    policies: &[crate::policies::PolicySpec],
    spec: &Spec,
    progress: &dyn Progress,
) -> Result<Design, DesignError> {
    if spec.objective.is_none() && spec.frontier.is_none() {
        return Err(DesignError::Usage(
            "with several policy files say which is best: --minimise or --maximise an indicator, \
             or --frontier RISK,COST"
                .into(),
        ));
    }
    let result = crate::compare::compare_indicators(scenario, policies, progress)
        .map_err(|e| DesignError::Usage(e.to_string()))?;
    let grid: Vec<Outcome> = result
        .policies
        .iter()
        .enumerate()
        .map(|(i, c)| Outcome {
            values: vec![(i + 1) as f64],
            indicators: Ok(c.indicators.clone()),
        })
        .collect();
    let mut design = assemble(vec!["policy".into()], spec, grid, None)?;
    design.labels = result.policies.iter().map(|c| c.name.clone()).collect();
    if spec.objective.is_some() || !spec.requirements.is_empty() {
        choose_best_grid_point(&mut design, None);
        settle(&mut design);
    }
    Ok(design)
}

/// The objective's value at `o` (the key's own value for a key objective), larger = better.
fn score(o: &Outcome, objective: &Objective, key: Option<usize>) -> Option<f64> {
    let x = match key {
        Some(k) => o.values.get(k).copied(),
        None => o.number(objective.name()),
    }?;
    Some(if objective.maximises() { x } else { -x })
}

fn best_met(design: &Design, objective: &Objective, key: Option<usize>) -> Option<usize> {
    let mut best: Option<(usize, f64)> = None;
    for (i, o) in design.grid.iter().enumerate() {
        if !design.meets(o) {
            continue;
        }
        if let Some(s) = score(o, objective, key) {
            if best.is_none_or(|(_, b)| s > b) {
                best = Some((i, s));
            }
        }
    }
    best.map(|(i, _)| i)
}

fn no_value_meets(design: &mut Design) {
    let reqs: Vec<String> = design
        .spec
        .requirements
        .iter()
        .map(Requirement::describe)
        .collect();
    design.notes.push(format!(
        "no grid value meets every requirement ({})",
        reqs.join(", ")
    ));
}

fn choose_best_grid_point(design: &mut Design, key: Option<usize>) {
    let chosen = match &design.spec.objective {
        Some(obj) => best_met(design, obj, key),
        // requirements and a frontier, no objective: the first frontier design
        None => design.frontier.first().copied(),
    };
    match chosen {
        Some(i) => {
            design.chosen = Some(design.grid[i].clone());
            if design.keys.len() == 2 {
                design.notes.push(
                    "the best grid point (two keys are not refined between grid points)".into(),
                );
            }
        }
        None => no_value_meets(design),
    }
}

fn choose_one_key(design: &mut Design, base: &Base, axis: &Axis, key: Option<usize>) {
    let n = design.grid.len();
    let met: Vec<bool> = design.grid.iter().map(|o| design.meets(o)).collect();
    if !met.iter().any(|m| *m) {
        no_value_meets(design);
        return;
    }
    let first = axis.values[0];
    let last = axis.values[n - 1];
    let fmt = crate::output::fmt_full;
    // (the met grid index, the unmet neighbour to bisect toward)
    let bracket: Option<(usize, Option<usize>)> = match &design.spec.objective {
        None => {
            let mut edges: Vec<(usize, usize)> = Vec::new();
            for i in (0..n).filter(|&i| met[i]) {
                for j in [i.checked_sub(1), (i + 1 < n).then_some(i + 1)]
                    .into_iter()
                    .flatten()
                {
                    if !met[j] {
                        edges.push((i, j));
                    }
                }
            }
            match edges.as_slice() {
                [] => {
                    design.notes.push(format!(
                        "every value from {} to {} meets every requirement: the boundary lies \
                         outside the grid (widen it, or choose with --minimise/--maximise)",
                        fmt(first),
                        fmt(last)
                    ));
                    None
                }
                [(i, j)] => Some((*i, Some(*j))),
                _ => {
                    design.notes.push(format!(
                        "the requirements change from met to unmet more than once between {} and \
                         {}: choose with --minimise or --maximise (the key or an indicator)",
                        fmt(first),
                        fmt(last)
                    ));
                    None
                }
            }
        }
        Some(obj) => {
            let Some(i) = best_met(design, obj, key) else {
                no_value_meets(design);
                return;
            };
            let s_i = score(&design.grid[i], obj, key);
            let toward = [i.checked_sub(1), (i + 1 < n).then_some(i + 1)]
                .into_iter()
                .flatten()
                .filter(|&j| !met[j])
                .filter_map(|j| {
                    // for the key itself the neighbour's own value: the better side by position
                    match (score(&design.grid[j], obj, key), s_i) {
                        (Some(s), Some(si)) if s > si => Some((j, s)),
                        _ => None,
                    }
                })
                .max_by(|a, b| a.1.total_cmp(&b.1))
                .map(|(j, _)| j);
            if toward.is_none() {
                let edge = (i == 0 && key.is_some() && !obj.maximises())
                    || (i == n - 1 && key.is_some() && obj.maximises());
                design.notes.push(if edge {
                    format!(
                        "the grid's end {} meets every requirement: the best value may lie beyond it",
                        fmt(design.grid[i].values[0])
                    )
                } else {
                    "the best grid value; an optimum between grid values is not refined".into()
                });
            }
            Some((i, toward))
        }
    };
    let Some((i, toward)) = bracket else { return };
    let Some(j) = toward else {
        design.chosen = Some(design.grid[i].clone());
        return;
    };
    bisect(design, base, axis, i, j);
}

/// The width of the key over which the requirements that fail at `at_b` move by one Monte Carlo
/// standard error, from the slope between `at_a` and `at_b` (None when no failing requirement has a
/// standard error and a slope).
fn noise_width(reqs: &[Requirement], at_a: &Outcome, at_b: &Outcome) -> Option<f64> {
    let width = (at_b.values[0] - at_a.values[0]).abs();
    reqs.iter()
        .filter(|r| !r.met_by(at_b))
        .filter_map(|r| {
            let ga = at_a.number(&r.indicator)?;
            let gb = at_b.number(&r.indicator)?;
            let se = at_a.number(&format!("{}_se", r.indicator))?;
            let slope = (ga - gb).abs() / width;
            (se > 0.0 && slope > 0.0).then_some(se / slope)
        })
        .reduce(f64::max)
}

/// Bisection between the met grid value `i` and the unmet `j`, on common random numbers, until the
/// bracket is narrower than the key width of one standard error of the failing requirement (the
/// noise limits the answer) or than 2⁻³⁰ of the grid step.
fn bisect(design: &mut Design, base: &Base, axis: &Axis, i: usize, j: usize) {
    let mut at_a = design.grid[i].clone();
    let mut at_b = design.grid[j].clone();
    let tol = (at_b.values[0] - at_a.values[0]).abs() * 2f64.powi(-30);
    let reqs = design.spec.requirements.clone();
    let mut noise_limited = false;
    for _ in 0..MAX_BISECTIONS {
        let (a, b) = (at_a.values[0], at_b.values[0]);
        if (b - a).abs() <= tol {
            break;
        }
        if at_b.indicators.is_ok()
            && noise_width(&reqs, &at_a, &at_b).is_some_and(|w| (b - a).abs() <= w)
        {
            noise_limited = true;
            break;
        }
        let m = 0.5 * (a + b);
        let o = Outcome {
            values: vec![m],
            indicators: evaluate(base, &[(axis.key.as_str(), m)], &NoProgress),
        };
        design.tried.push(o.clone());
        if meets(&reqs, &o) {
            at_a = o;
        } else {
            at_b = o;
        }
    }
    let (a, b) = (at_a.values[0], at_b.values[0]);
    let fmt = crate::output::fmt_full;
    design.notes.push(if noise_limited {
        format!(
            "refined by bisection on common random numbers until the bracket was narrower than one \
             Monte Carlo standard error of the requirement: the noise, not the grid, limits the \
             answer (the boundary lies between {} (met) and {} (not met), give or take that noise)",
            fmt(a),
            fmt(b)
        )
    } else {
        format!(
            "refined by bisection: the boundary lies between {} (met) and {} (not met)",
            fmt(a),
            fmt(b)
        )
    });
    design.bracket = Some((a, b));
    design.chosen = Some(at_a);
}
