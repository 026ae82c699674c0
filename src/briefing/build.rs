//! Assembles the briefing: the first page (the answer, one row per policy, caveats, the caution),
//! then the annexes — the market and every setting with its source file, the policy designs, paths,
//! risk, welfare and fiscal cost, stability — and provenance.

use super::assumptions;
use super::figures::{self, Figure};
use super::headline;
use super::path::{self, PathDigest};
use super::tables;
use super::{Briefing, BriefingError, Overrides, Section};
use crate::compare::CompareResult;
use crate::output::TextTable;
use crate::policies::PolicySpec;
use crate::scenario::Scenario;
use crate::stability::StabilityAnalysis;
use crate::units::{group, Units};

/// The caution every briefing carries.
pub const CAUTION: &str = crate::CAUTION;

/// What a briefing is built from.
pub struct Request<'a> {
    /// The market.
    pub scenario: &'a Scenario,
    /// Market file path (named in the settings table and hashed for provenance).
    pub market_path: &'a str,
    /// Policy files as given (hashed for provenance).
    pub policy_paths: &'a [String],
    /// Policies as (file, spec), the market left alone first (file empty when built in).
    pub columns: &'a [(String, PolicySpec)],
    /// The comparison of `columns[1..]` (or of the market left alone alone).
    pub comparison: &'a CompareResult,
    /// Which run settings the command line set.
    pub overrides: Overrides,
    /// The command that made it (provenance), e.g. the program's arguments joined.
    pub command: String,
    /// `(RISK, COST)`: two indicators of the comparison to place the policies by, with the
    /// cost–risk annex and its frontier figure (`report --frontier`); names checked by the caller.
    pub frontier: Option<(String, String)>,
    /// Annexes built elsewhere, appended in order (the assumption annex of `report
    /// --sensitivity`, built by `sensitivity::annex` from the analysis itself; the caller writes
    /// their figures).
    pub annexes: Vec<Section>,
}

/// A built briefing and its figures (for a `--plots` folder).
pub struct Built {
    /// The document.
    pub briefing: Briefing,
    /// Every figure it shows.
    pub figures: Vec<Figure>,
}

/// Stability verdict table; a failed analysis shows its reason.
pub fn stability_table(reports: &[(String, Result<StabilityAnalysis, String>)]) -> TextTable {
    let mut t = TextTable::new(&[
        "policy",
        "verdict",
        "spectral radius",
        "regimes",
        "cycle period (seasons)",
        "half-life (seasons)",
    ]);
    for (name, r) in reports {
        match r {
            Ok(rep) => {
                let dom = rep.regimes.first();
                t.push(vec![
                    name.clone(),
                    rep.verdict.as_str().into(),
                    group(rep.spectral_radius, 3),
                    rep.regimes
                        .iter()
                        .map(|g| g.name.clone())
                        .collect::<Vec<_>>()
                        .join("; "),
                    dom.and_then(|d| d.period)
                        .map_or("none".into(), |p| group(p, 1)),
                    dom.and_then(|d| d.half_life)
                        .map_or("none".into(), |h| group(h, 1)),
                ]);
            }
            Err(e) => t.push(vec![
                name.clone(),
                format!("not available: {e}"),
                String::new(),
                String::new(),
                String::new(),
                String::new(),
            ]),
        }
    }
    t
}

fn add_figures(sec: &mut Section, figures: &[Figure], stems: &[&str]) {
    for f in figures.iter().filter(|f| {
        stems.iter().any(|s| {
            f.stem == *s || (s.ends_with('*') && f.stem.starts_with(s.trim_end_matches('*')))
        })
    }) {
        if let Ok(svg) = f.plot.svg_string() {
            sec.figure(f.caption.clone(), svg);
        } else {
            sec.note(format!(
                "(figure “{}” could not be drawn: no finite data)",
                f.caption
            ));
        }
    }
}

/// Stability of each column; a failed analysis keeps its message.
pub fn stability_of(
    scenario: &Scenario,
    cols: &[(String, PolicySpec)],
) -> Vec<(String, Result<StabilityAnalysis, String>)> {
    cols.iter()
        .map(|(_, p)| {
            (
                p.name.clone(),
                crate::stability::analyse(scenario, p).map_err(|e| e.to_string()),
            )
        })
        .collect()
}

/// The figures of a comparison's columns (the market left alone first): paths (thinned), a cobweb
/// per policy when the market has no shocks (a stochastic staircase is a tangle), the eigenvalues,
/// and with replications the fans and mean fiscal cost.
pub fn comparison_figures(
    scenario: &Scenario,
    cols: &[(String, PolicySpec)],
    comparison: &CompareResult,
    stability: &[(String, Result<StabilityAnalysis, String>)],
) -> Result<Vec<Figure>, BriefingError> {
    let mut digests: Vec<PathDigest> = Vec::with_capacity(cols.len());
    for (_, p) in cols {
        digests.push(path::digest(scenario, p)?);
    }
    let specs: Vec<&PolicySpec> = cols.iter().map(|(_, p)| p).collect();
    let mut figs = figures::path_figures(scenario, &specs, &digests);
    if scenario.is_deterministic() {
        for (i, ((_, p), d)) in cols.iter().zip(&digests).enumerate() {
            figs.push(figures::cobweb_figure(
                scenario,
                p,
                &d.first,
                &format!("cobweb_{}_{}", i, figures::slug(&p.name)),
            ));
        }
    }
    let ok: Vec<(String, StabilityAnalysis)> = stability
        .iter()
        .filter_map(|(n, r)| r.as_ref().ok().map(|r| (n.clone(), r.clone())))
        .collect();
    figs.extend(figures::eigen_figure(&ok));
    if comparison.replications > 1 {
        figs.extend(tables::figures(comparison));
    }
    Ok(figs)
}

/// Builds the briefing.
pub fn build(req: &Request<'_>) -> Result<Built, BriefingError> {
    build_with_households(req, None)
}

/// Builds the briefing with, when `households` is given (a market with `[[households]]`, from
/// `compare::compare_with_households` on the same comparison), the "who gains" annex: the groups,
/// their welfare change under each policy and a bar chart per group.
pub fn build_with_households(
    req: &Request<'_>,
    households: Option<&crate::households::HouseholdResult>,
) -> Result<Built, BriefingError> {
    let s = req.scenario;
    let m = &s.market;
    let r = req.comparison;
    let units = Units::new(&m.price_unit, &m.quantity_unit);
    let stability = stability_of(s, req.columns);
    let figs = comparison_figures(s, req.columns, r, &stability)?;
    let basis = if r.replications > 1 {
        format!(
            "Monte Carlo, {} replications of {} seasons, seed {}",
            r.replications, r.periods, r.seed
        )
    } else if s.is_deterministic() {
        "one deterministic path".to_string()
    } else {
        format!("one simulated weather path, seed {}", s.run.seed)
    };
    let names: Vec<String> = req.columns.iter().map(|(_, p)| p.name.clone()).collect();

    // --- first page
    let intervenes: Vec<bool> = r
        .policies
        .iter()
        .map(|p| {
            req.columns
                .iter()
                .find(|(_, c)| c.name == p.name)
                .is_none_or(|(_, c)| c.intervenes())
        })
        .collect();
    let first = headline::first_page(r, &intervenes, s.storers.is_some(), s.trade.is_some());
    let mut summary = first.answer;
    let unstable: Vec<&String> = stability
        .iter()
        .filter_map(|(n, r)| {
            r.as_ref()
                .ok()
                .filter(|r| r.verdict.as_str() != "stable")
                .map(|_| n)
        })
        .collect();
    if !unstable.is_empty() {
        summary.push(format!(
            "Not stable around the steady state: {} (see Stability).",
            unstable
                .iter()
                .map(|n| format!("“{n}”"))
                .collect::<Vec<_>>()
                .join(", ")
        ));
    }
    summary.push(format!("Basis: {basis}."));

    // --- annexes
    let scale = tables::money_scale(r);
    let mut market = Section::new("Annex A: the market and every setting");
    market.paragraph(format!(
        "{} (market file {}): steady state {} {} at {} {}. Farmers plant on the price they expect, formed by the rule {}; {} seasons are simulated{}.",
        m.name,
        req.market_path,
        group(s.steady.quantity, 1),
        m.quantity_unit,
        group(s.steady.price, 1),
        m.price_unit,
        s.expectations.description(),
        group(s.run.periods as f64, 0),
        if s.run.replications > 1 {
            format!(", each {} times under random weather", group(s.run.replications as f64, 0))
        } else {
            String::new()
        }
    ));
    if let Some(t) = &s.trade {
        let free = t.terms(t.world_price, &crate::trade::BorderMeasures::FREE);
        market.paragraph(format!(
            "The market trades: at the world price {w} {pu}{vary}, traders import when the domestic price reaches import parity {m} {pu} and export when it falls to export parity {x} {pu} (before any border measure of a policy). A public reserve in such a market buys what traders would have exported and sells what they would have imported, so much of its effort moves trade rather than the domestic price; border measures beside it (a duty, a variable levy, an export ban) decide how much stays at home.",
            w = group(t.world_price, 1),
            pu = m.price_unit,
            vary = if t.world_price_cv > 0.0 {
                format!(" on average (varying by {} % a season)", group(100.0 * t.world_price_cv, 0))
            } else {
                String::new()
            },
            m = group(free.import_parity, 1),
            x = group(free.export_parity, 1),
        ));
        // state trading: the agency's own imports, in words, for each policy that has them
        let traders: Vec<String> = req
            .columns
            .iter()
            .filter_map(|(name, spec)| {
                let b = crate::policies::compile(spec).border;
                b.public_import_above.map(|above| {
                    let most = b.public_import_max.map_or(String::new(), |q| {
                        format!(", at most {} {} a season", group(q, 1), m.quantity_unit)
                    });
                    format!("{name} (above {} {}{most})", group(above, 1), m.price_unit)
                })
            })
            .collect();
        if !traders.is_empty() {
            market.paragraph(format!(
                "State trading: under {} the agency itself imports when the domestic price would pass its trigger, buying abroad at the world price plus the import cost (no duty) and selling the grain at home in the same season. Its imports take the place of private imports first and lower the price only once those are gone; the treasury pays the landed price and receives the domestic price, so it gains when it sells above the landed price and loses below it.",
                traders.join("; ")
            ));
        }
    }
    market.table(
        "Every setting, with the file it came from",
        assumptions::assumption_table(s, req.market_path, req.columns, &req.overrides)?,
    );

    let mut pol = Section::new("Annex B: the policies");
    pol.paragraph(format!("Compared: {}.", names.join("; ")));
    pol.table(
        "Policy designs",
        assumptions::policy_table(req.columns, &m.price_unit, &m.quantity_unit),
    );

    let mut paths = Section::new("Annex C: prices and harvests");
    paths.paragraph(
        "How each policy changes the season-to-season path of the price and of the harvest.",
    );
    add_figures(
        &mut paths,
        &figs,
        &["price_paths", "harvest_paths", "cobweb*"],
    );
    if !s.is_deterministic() {
        paths.note("No cobweb diagrams: under random weather one path's staircase is a tangle; the fan charts under Risk show the spread instead.");
    }

    let mut risk = Section::new("Annex D: risk");
    risk.paragraph(format!(
        "How much prices, harvests and farm revenue vary across seasons ({basis})."
    ));
    risk.table("Risk figures", tables::table(r, &tables::is_risk, &scale));
    if r.replications > 1 {
        add_figures(&mut risk, &figs, &["price_fan", "stock_fan"]);
    } else {
        risk.note(
            "One path only (replications = 1): the spreads are across seasons of that path. Set `replications` above 1 in the market file (with shocks), or pass --replications N, for fan charts across weather draws.",
        );
    }

    let mut welfare = Section::new("Annex E: welfare and fiscal cost");
    welfare.paragraph(format!(
        "Present values at a discount rate of {} per season; changes are against the market without intervention ({basis}). Money in {}.",
        group(s.run.discount_rate, 3),
        scale.label
    ));
    welfare.table(
        "Welfare and fiscal cost",
        tables::with_ranges(r, tables::table(r, &tables::is_welfare, &scale), &scale),
    );
    if !r.behaviour.is_empty() {
        welfare.table(
            "Behaviour changes (an expectation override alone, not a policy; never ranked)",
            tables::behaviour_table(r, &tables::is_welfare, &scale),
        );
    }
    let stems: &[&str] = if figs.iter().any(|f| f.stem == "fiscal_cost_mean") {
        &["fiscal_cost_mean", "fiscal_cumulative_mean"]
    } else {
        &["fiscal_cost", "fiscal_cumulative"]
    };
    add_figures(&mut welfare, &figs, stems);
    if !figs.iter().any(|f| stems.contains(&f.stem.as_str())) {
        welfare.note("No fiscal chart: none of the policies spends or receives anything.");
    }

    let mut stab = Section::new("Annex F: stability");
    stab.paragraph("Whether a disturbance dies out near the steady state, from the eigenvalues of the linearised model: stable when every eigenvalue lies inside the unit circle.");
    stab.table("Stability verdicts", stability_table(&stability));
    add_figures(&mut stab, &figs, &["eigenvalues"]);

    let mut provenance = vec![
        (
            "furrow version".to_string(),
            env!("CARGO_PKG_VERSION").to_string(),
        ),
        ("command".into(), req.command.clone()),
        ("seed".into(), s.run.seed.to_string()),
        ("replications".into(), s.run.replications.to_string()),
        ("periods".into(), s.run.periods.to_string()),
        ("results basis".into(), basis.clone()),
        (
            "money unit".into(),
            format!(
                "{} = {} × {}, shown in {} on this page",
                units.money(),
                m.price_unit,
                m.quantity_unit,
                scale.label
            ),
        ),
    ];
    let mut inputs = vec![req.market_path.to_string()];
    inputs.extend(req.policy_paths.iter().cloned());
    for f in &inputs {
        provenance.push((format!("SHA-256 of {f}"), assumptions::sha256_file(f)?));
    }
    let mut sections = vec![market, pol, paths, risk, welfare, stab];
    let mut figs = figs;
    if let Some(h) = households {
        let (who, group_figures) = super::households::section(r, h);
        sections.push(who);
        figs.extend(group_figures);
        summary.push(format!(
            "Who gains among the market file's {} household groups: see {}.",
            h.groups.len(),
            super::households::HEADING
                .split(':')
                .next()
                .unwrap_or("the annex")
        ));
    }
    if let Some((risk, cost)) = &req.frontier {
        let (designs, frontier_figures) = super::frontier::section(r, risk, cost);
        sections.push(designs);
        figs.extend(frontier_figures);
        summary.push(format!(
            "The policies as designs by {risk} and {cost}, with those no other beats on both: see \
             Annex H."
        ));
    }
    for annex in &req.annexes {
        sections.push(annex.clone());
        summary.push(format!(
            "{}: see {}.",
            annex.heading.split(": ").nth(1).unwrap_or("an annex"),
            annex.heading.split(':').next().unwrap_or("the annex")
        ));
    }
    let n = req.policy_paths.len();
    let briefing = Briefing {
        title: format!("Briefing: {}", m.name),
        subtitle: format!(
            "{} policy file{} against the market left alone — furrow {}",
            n,
            if n == 1 { "" } else { "s" },
            env!("CARGO_PKG_VERSION")
        ),
        summary,
        key_table: Some((
            "Each policy at a glance (the market left alone first; changes against it, in present value)".to_string(),
            first.table,
        )),
        caveats: first.caveats,
        caution: CAUTION.into(),
        sections,
        provenance,
    };
    Ok(Built {
        briefing,
        figures: figs,
    })
}
