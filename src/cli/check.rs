//! `furrow check FILE...`: validate market and policy files.

use clap::Args;
use furrow::output::{fmt_num, Format, TextTable};
use furrow::scenario::ranges::short_num;
use furrow::scenario::{self, FileKind};
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

/// A setting that may be unlimited (stored as +∞): the number, or the given word.
fn limit(v: f64, word: &str) -> String {
    if v.is_finite() {
        short_num(v)
    } else {
        word.to_string()
    }
}

/// Runs `check`.
pub fn execute(args: &CheckArgs) -> anyhow::Result<()> {
    if args.common.plots.is_some() {
        anyhow::bail!("check draws no figures: --plots is not available for it (use run, compare or report --plots)");
    }
    let mut out = Vec::new();
    let (mut markets, mut policies) = (Vec::new(), Vec::new());
    for file in &args.files {
        let text = std::fs::read_to_string(file)
            .map_err(|e| anyhow::anyhow!("{file}: cannot read: {e}"))?;
        // the same validation as every other verb; the kind is decided by the sections present
        let (kind, because) = scenario::file_kind(file, &text)?;
        let read_as = format!(
            "{} file (it has {})",
            match kind {
                FileKind::Market => "market",
                FileKind::Policy => "policy",
            },
            because.join(", ")
        );
        if kind == FileKind::Policy {
            let p = scenario::policy_from_str(file, &text)?;
            let mut parts = Vec::new();
            if let Some(f) = p.floor {
                parts.push(format!(
                    "floor {} by {}{}",
                    short_num(f.price),
                    match f.instrument {
                        scenario::FloorInstrument::Purchase => "purchase",
                        scenario::FloorInstrument::DeficiencyPayment => "deficiency payment",
                    },
                    if f.announced { ", announced" } else { "" }
                ));
            }
            if let Some(s) = p.stock {
                parts.push(format!(
                    "stock {}, {}, capacity {}, purchase budget {}, release {}",
                    if s.buy_below > 0.0 {
                        format!("buys below {}", short_num(s.buy_below))
                    } else {
                        "no buying edge".to_string()
                    },
                    if s.sell_above.is_finite() {
                        format!("sells above {}", short_num(s.sell_above))
                    } else {
                        "no selling edge".to_string()
                    },
                    limit(s.capacity, "unlimited"),
                    limit(s.purchase_budget, "unlimited"),
                    match s.release {
                        scenario::ReleaseSpec::Band => "band".to_string(),
                        scenario::ReleaseSpec::Target { target, speed } =>
                            format!("target {} at speed {}", short_num(target), short_num(speed)),
                        scenario::ReleaseSpec::Share { share } =>
                            format!("drawdown, share {}", short_num(share)),
                        scenario::ReleaseSpec::Rotate { share } =>
                            format!("rotate, share {}", short_num(share)),
                    }
                ));
            }
            if let Some(e) = p.expectations {
                parts.push(format!("expectations {}", e.rule_name()));
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
            let mut s = scenario::market_from_str(file, &text)?;
            args.common.apply(&mut s)?;
            let ss = s.steady;
            out.push(Checked {
                file: file.clone(),
                kind: "market",
                name: s.market.name.clone(),
                steady_state: Some(ss),
                demand_elasticity: Some(s.market.demand.elasticity_at(ss.price)),
                supply_elasticity: Some(s.market.supply.elasticity_at(ss.price)),
                summary: format!(
                    "{} demand, {} supply, {} expectations, {} periods",
                    s.market.demand.form_name(),
                    s.market.supply.form_name(),
                    s.expectations.rule_name(),
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
            scenario::policy_for_market(m, p)?;
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
