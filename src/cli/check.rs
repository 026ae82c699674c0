//! `furrow check FILE...`: validate market and policy files.

use clap::Args;
use furrow::output::{fmt_num, Format, TextTable};
use furrow::scenario::{self, is_policy_text};
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
    summary: String,
}

/// Runs `check`.
pub fn execute(args: &CheckArgs) -> anyhow::Result<()> {
    let mut out = Vec::new();
    for file in &args.files {
        let text = std::fs::read_to_string(file)
            .map_err(|e| anyhow::anyhow!("{file}: cannot read: {e}"))?;
        if is_policy_text(&text) {
            let p = scenario::load_policy(file)?;
            let mut parts = Vec::new();
            if let Some(f) = p.floor {
                parts.push(format!(
                    "floor {} by {}{}",
                    f.price,
                    match f.instrument {
                        scenario::FloorInstrument::Purchase => "purchase",
                        scenario::FloorInstrument::DeficiencyPayment => "deficiency payment",
                    },
                    if f.announced { ", announced" } else { "" }
                ));
            }
            if let Some(s) = p.stock {
                parts.push(format!(
                    "stock band [{}, {}], capacity {}, release {}",
                    s.buy_below,
                    s.sell_above,
                    s.capacity,
                    match s.release {
                        scenario::ReleaseSpec::Band => "band".to_string(),
                        scenario::ReleaseSpec::Target { target, speed } =>
                            format!("target {target} at speed {speed}"),
                        scenario::ReleaseSpec::Share { share } =>
                            format!("drawdown, share {share}"),
                        scenario::ReleaseSpec::Rotate { share } => format!("rotate, share {share}"),
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
                summary: parts.join("; "),
            });
        } else {
            let s = args.common.load_market(file)?;
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
            });
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
                    c.summary.clone(),
                ]);
            }
            t.render(f)
        }
    };
    args.common.emit(&text)
}
