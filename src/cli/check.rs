//! `furrow check FILE...`: validate market and policy files.

use clap::Args;
use furrow::output::{fmt_num, Format, TextTable};
use furrow::policies::file::FileKind;
use serde::Serialize;

use super::common::CommonArgs;

/// Arguments of `check`.
#[derive(Debug, Args)]
pub struct CheckArgs {
    /// Market and policy files (a policy file has a [policy] section).
    #[arg(required = true)]
    pub files: Vec<String>,
    #[command(flatten)]
    pub common: CommonArgs,
}

#[derive(Debug, Serialize)]
struct Checked {
    file: String,
    kind: &'static str,
    name: String,
    #[serde(skip_serializing_if = "Option::is_none")]
    steady_state: Option<furrow::curves::SteadyState>,
    #[serde(skip_serializing_if = "Option::is_none")]
    demand_elasticity: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    supply_elasticity: Option<f64>,
    /// The sections that decided the kind.
    read_as: String,
    summary: String,
}

/// Runs `check`.
pub fn execute(args: &CheckArgs) -> anyhow::Result<()> {
    if args.common.plots.is_some() {
        anyhow::bail!("check draws no figures: --plots is not available for it (use run, compare or report --plots)");
    }
    let mut out = Vec::new();
    let (mut markets, mut policies) = (Vec::new(), Vec::new());
    for file in &args.files {
        let text = furrow::input::read_file(file)?;
        // the same validation as every other verb; the kind is decided by the sections present
        let (kind, because) = furrow::policies::file::file_kind(file, &text)?;
        let read_as = format!(
            "{} file (it has {})",
            match kind {
                FileKind::Market => "market",
                FileKind::Policy => "policy",
            },
            because.join(", ")
        );
        if kind == FileKind::Policy {
            let p = furrow::policies::file::policy_from_str(file, &text)?;
            let mut parts: Vec<String> = p.rules.iter().map(|r| r.describe()).collect();
            if let Some(e) = p.expectations {
                parts.push(format!("expectations: {}", e.description()));
            }
            if parts.is_empty() {
                parts.push("no intervention".into());
            }
            out.push(Checked {
                file: file.clone(),
                kind: "policy",
                name: p.name.clone(),
                steady_state: None,
                demand_elasticity: None,
                supply_elasticity: None,
                read_as,
                summary: parts.join("; "),
            });
            policies.push(p);
        } else {
            let s = args.common.market_from_text(file, &text)?;
            let ss = s.steady;
            out.push(Checked {
                file: file.clone(),
                kind: "market",
                name: s.market.name.clone(),
                steady_state: Some(ss),
                demand_elasticity: Some(s.market.demand.elasticity_at(ss.price)),
                supply_elasticity: Some(s.market.supply.elasticity_at(ss.price)),
                summary: format!(
                    "{} demand, {} supply, expectations: {}; {} periods",
                    s.market.demand.form_name(),
                    s.market.supply.form_name(),
                    s.expectations.description(),
                    s.run.periods
                ),
                read_as,
            });
            markets.push(s);
        }
    }
    // policies checked beside one market are also checked against it, as every verb does (with
    // several markets it is not known which policy is meant for which)
    if let [m] = markets.as_slice() {
        for p in &policies {
            furrow::policies::file::policy_for_market(m, p)?;
        }
    }
    let text = match args.common.format {
        Format::Json => serde_json::to_string_pretty(&out)? + "\n",
        f => {
            let mut t = TextTable::new(&[
                "file",
                "kind",
                "name",
                "steady_price",
                "steady_quantity",
                "demand_elasticity",
                "supply_elasticity",
                "read_as",
                "summary",
            ]);
            for c in &out {
                let opt = |x: Option<f64>| x.map(|v| fmt_num(v, 4)).unwrap_or_default();
                t.push(vec![
                    c.file.clone(),
                    c.kind.into(),
                    c.name.clone(),
                    opt(c.steady_state.map(|s| s.price)),
                    opt(c.steady_state.map(|s| s.quantity)),
                    opt(c.demand_elasticity),
                    opt(c.supply_elasticity),
                    c.read_as.clone(),
                    c.summary.clone(),
                ]);
            }
            t.render(f)
        }
    };
    args.common.emit(&text)
}
