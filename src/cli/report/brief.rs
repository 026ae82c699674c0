//! Assembles the briefing page from the results: summary first, then the market and assumptions,
//! the policies, paths, risk, welfare and fiscal cost, stability, and provenance.

use furrow::output::{fmt_num, TextTable};
use furrow::report::{Briefing, Section};
use furrow::scenario::{PolicySpec, Scenario};
use furrow::stability::StabilityReport;

use super::assumptions;
use super::figures::{money_unit, Figure};

/// The caution every briefing carries: furrow's caution and where the assumptions are.
pub const CAUTION: &str = furrow::CAUTION;

/// Headline figures of one policy (from the comparison).
#[derive(Debug, Clone)]
pub struct Headline {
    /// Policy name.
    pub name: String,
    /// Standard deviation of the price.
    pub price_sd: f64,
    /// Present value of the fiscal cost.
    pub fiscal_pv: f64,
    /// Present value of the net welfare change against no intervention.
    pub net_pv: f64,
}

/// Summary sentences: which policy steadies the price most, at what cost, and who gains.
pub fn summary(heads: &[Headline], money: &str, price_unit: &str, basis: &str) -> Vec<String> {
    let mut out = Vec::new();
    let Some(base) = heads.first() else {
        return out;
    };
    let others: Vec<&Headline> = heads
        .iter()
        .skip(1)
        .filter(|h| h.price_sd.is_finite())
        .collect();
    if others.is_empty() {
        out.push(format!(
            "Only the market left alone was given: the price varies with a standard deviation of {} {price_unit} ({basis}). Add policy files to compare schemes.",
            fmt_num(base.price_sd, 1)
        ));
        return out;
    }
    if let Some(best) = others
        .iter()
        .min_by(|a, b| a.price_sd.total_cmp(&b.price_sd))
    {
        if best.price_sd < base.price_sd {
            let cut = 100.0 * (1.0 - best.price_sd / base.price_sd.max(1e-12));
            out.push(format!(
                "“{}” steadies the price most: its standard deviation is {} {price_unit} against {} without intervention ({}% less), at a fiscal cost of {} {money} in present value ({basis}).",
                best.name, fmt_num(best.price_sd, 1), fmt_num(base.price_sd, 1), fmt_num(cut, 0), fmt_num(best.fiscal_pv, 0)
            ));
        } else {
            out.push(format!(
                "None of the policies makes the price steadier than the market left alone (price sd {} {price_unit}; {basis}).",
                fmt_num(base.price_sd, 1)
            ));
        }
    }
    if let Some(cheap) = others
        .iter()
        .min_by(|a, b| a.fiscal_pv.total_cmp(&b.fiscal_pv))
    {
        if cheap.fiscal_pv < 0.0 {
            out.push(format!(
                "“{}” is the cheapest for the treasury: its sales bring in {} {money} more than it spends, in present value.",
                cheap.name,
                fmt_num(-cheap.fiscal_pv, 0)
            ));
        } else {
            out.push(format!(
                "The cheapest policy for the treasury is “{}” ({} {money} in present value).",
                cheap.name,
                fmt_num(cheap.fiscal_pv, 0)
            ));
        }
    }
    if let Some(w) = others.iter().max_by(|a, b| a.net_pv.total_cmp(&b.net_pv)) {
        let verb = if w.net_pv >= 0.0 { "gains" } else { "loses" };
        out.push(format!(
            "Counting consumers, producers and the treasury together, “{}” does best: the economy {verb} {} {money} in present value against no intervention.",
            w.name, fmt_num(w.net_pv.abs(), 0)
        ));
    }
    out
}

/// Stability verdict table; a failed analysis shows its reason.
pub fn stability_table(reports: &[(String, Result<StabilityReport, String>)]) -> TextTable {
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
                    fmt_num(rep.spectral_radius, 3),
                    rep.regimes
                        .iter()
                        .map(|g| g.name.clone())
                        .collect::<Vec<_>>()
                        .join("; "),
                    dom.and_then(|d| d.period)
                        .map_or("none".into(), |p| fmt_num(p, 1)),
                    dom.and_then(|d| d.half_life)
                        .map_or("none".into(), |h| fmt_num(h, 1)),
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

/// Everything the page is built from.
pub struct Inputs<'a> {
    /// The market.
    pub scenario: &'a Scenario,
    /// Market file path.
    pub market_path: &'a str,
    /// Policies as (file, spec), the market left alone first.
    pub policies: &'a [(String, PolicySpec)],
    /// Assumption rows.
    pub assumptions: TextTable,
    /// Headline figures and the basis they come from.
    pub headlines: Vec<Headline>,
    /// "Monte Carlo, N replications" or "one path".
    pub basis: String,
    /// Welfare and fiscal table.
    pub welfare: TextTable,
    /// Risk table.
    pub risk: TextTable,
    /// Stability results.
    pub stability: Vec<(String, Result<StabilityReport, String>)>,
    /// Figures, by stem.
    pub figures: Vec<Figure>,
    /// Provenance rows.
    pub provenance: Vec<(String, String)>,
    /// Line under the title.
    pub subtitle: String,
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

/// The briefing page.
pub fn build(inp: Inputs<'_>) -> Briefing {
    let s = inp.scenario;
    let m = &s.market;
    let money = money_unit(&m.price_unit, &m.quantity_unit);
    let names: Vec<String> = inp.policies.iter().map(|(_, p)| p.name.clone()).collect();
    let mut summary = summary(&inp.headlines, &money, &m.price_unit, &inp.basis);
    let unstable: Vec<&String> = inp
        .stability
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

    let mut market = Section::new("The market and the assumptions");
    market.paragraph(format!(
        "{} (market file {}): steady state {} {} at {} {}. Farmers plant on the price they expect (rule: {}); {} seasons are simulated{}.",
        m.name,
        inp.market_path,
        fmt_num(s.steady.quantity, 1),
        m.quantity_unit,
        fmt_num(s.steady.price, 1),
        m.price_unit,
        assumptions::expectation_text(&s.expectations),
        s.run.periods,
        if s.run.replications > 1 { format!(", each {} times under random weather", s.run.replications) } else { String::new() }
    ));
    market.table("Every setting, with the file it came from", inp.assumptions);

    let mut pol = Section::new("The policies side by side");
    pol.paragraph(format!("Compared: {}.", names.join("; ")));
    pol.table(
        "Policy designs",
        assumptions::policy_table(inp.policies, &m.price_unit, &m.quantity_unit),
    );

    let mut paths = Section::new("Prices and harvests");
    paths.paragraph(
        "How each policy changes the season-to-season path of the price and of the harvest.",
    );
    add_figures(
        &mut paths,
        &inp.figures,
        &["price_paths", "harvest_paths", "cobweb*"],
    );

    let mut risk = Section::new("Risk");
    risk.paragraph(format!(
        "How much prices, harvests and farm revenue vary across seasons ({}).",
        inp.basis
    ));
    risk.table("Risk figures", inp.risk);
    if s.run.replications > 1 {
        add_figures(&mut risk, &inp.figures, &["price_fan", "stock_fan"]);
    } else {
        risk.note(
            "One path only (replications = 1): the spreads are across seasons of that path. Set `replications` above 1 in the market file (with shocks), or pass --replications N, for fan charts across weather draws.",
        );
    }

    let mut welfare = Section::new("Welfare and fiscal cost");
    welfare.paragraph(format!(
        "Present values at a discount rate of {} per season; changes are against the market without intervention ({}). Money in {money}.",
        fmt_num(s.run.discount_rate, 3),
        inp.basis
    ));
    welfare.table("Welfare and fiscal cost", inp.welfare);
    let stems: &[&str] = if inp.figures.iter().any(|f| f.stem == "fiscal_cost_mean") {
        &["fiscal_cost_mean", "fiscal_cumulative_mean"]
    } else {
        &["fiscal_cost", "fiscal_cumulative"]
    };
    add_figures(&mut welfare, &inp.figures, stems);

    let mut stab = Section::new("Stability");
    stab.paragraph("Whether a disturbance dies out near the steady state, from the eigenvalues of the linearised model: stable when every eigenvalue lies inside the unit circle.");
    stab.table("Stability verdicts", stability_table(&inp.stability));
    add_figures(&mut stab, &inp.figures, &["eigenvalues"]);

    Briefing {
        title: format!("Briefing: {}", m.name),
        subtitle: inp.subtitle,
        summary,
        caution: CAUTION.into(),
        sections: vec![market, pol, paths, risk, welfare, stab],
        provenance: inp.provenance,
    }
}
