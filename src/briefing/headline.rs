//! The first page: the answer in a sentence or two, one row per policy with what a minister's office
//! asks (treasury cost, consumer prices, farm income, net benefit and who pays, each with its 5–95 %
//! range), and the caveats that follow from the market and the run.
//!
//! Rules the answer keeps:
//! - a policy "beats leaving the market alone" only when its net welfare change is positive and,
//!   with several replications, more than two Monte Carlo standard errors above zero;
//! - no policy is called the best when its change is negative, within noise of zero, or within noise
//!   of another winner (the comparison's `close_calls`);
//! - a behaviour change (an expectation override alone) is never ranked; policies that do not
//!   intervene are never ranked either.

use crate::compare::{CompareResult, PolicyComparison};
use crate::output::TextTable;
use crate::units::{group, percent, MoneyScale, Units};

/// The first page's pieces.
#[derive(Debug, Clone, PartialEq)]
pub struct FirstPage {
    /// The answer, one sentence each, most important first.
    pub answer: Vec<String>,
    /// One row per policy (the market left alone first).
    pub table: TextTable,
    /// Automatic caveats.
    pub caveats: Vec<String>,
}

/// How a policy's net welfare change compares with zero.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum WelfareSign {
    /// Positive, and beyond two standard errors (or no noise: one deterministic run).
    Gains,
    /// Negative, beyond two standard errors.
    Loses,
    /// Within two standard errors of zero.
    WithinNoise,
}

/// The sign of a change `x` with standard error `se` (None or zero: no noise measured).
pub fn welfare_sign(x: f64, se: Option<f64>) -> WelfareSign {
    let noise = se
        .filter(|s| s.is_finite() && *s > 0.0)
        .map_or(0.0, |s| 2.0 * s);
    if x > noise {
        WelfareSign::Gains
    } else if x < -noise {
        WelfareSign::Loses
    } else {
        WelfareSign::WithinNoise
    }
}

fn quoted(names: &[&str]) -> String {
    let q: Vec<String> = names.iter().map(|n| format!("“{n}”")).collect();
    match q.len() {
        0 => String::new(),
        1 => q[0].clone(),
        _ => format!("{} and {}", q[..q.len() - 1].join(", "), q[q.len() - 1]),
    }
}

fn num(p: &PolicyComparison, key: &str) -> Option<f64> {
    p.number(key).filter(|x| x.is_finite())
}

/// The column of the market left alone that `p` is measured against.
fn baseline_of<'a>(r: &'a CompareResult, p: &PolicyComparison) -> &'a PolicyComparison {
    if p.baseline == r.baseline.name {
        return &r.baseline;
    }
    r.behaviour
        .iter()
        .find(|b| b.expectations == p.expectations)
        .unwrap_or(&r.baseline)
}

/// "a … b" in `scale`, or "" when a quantile is missing.
fn range(p: &PolicyComparison, key: &str, scale: &MoneyScale) -> String {
    match (num(p, &format!("{key}_p05")), num(p, &format!("{key}_p95"))) {
        (Some(lo), Some(hi)) => format!("5–95 %: {} … {}", scale.show(lo), scale.show(hi)),
        _ => String::new(),
    }
}

/// A range for a table cell: kept on one line (no-break spaces).
fn range_cell(p: &PolicyComparison, key: &str, scale: &MoneyScale) -> String {
    range(p, key, scale).replace(' ', "\u{a0}")
}

fn two_lines(first: String, second: String) -> String {
    if second.is_empty() {
        first
    } else {
        format!("{first}\n{second}")
    }
}

/// Builds the first page from a comparison. `intervenes[i]` says whether `r.policies[i]` trades or
/// pays (a file that does neither is the market left alone and is never ranked); `storers` whether
/// the market has private storage.
pub fn first_page(
    r: &CompareResult,
    intervenes: &[bool],
    storers: bool,
    trading: bool,
) -> FirstPage {
    let units = Units::new(&r.price_unit, &r.quantity_unit);
    let schemes: Vec<&PolicyComparison> = r
        .policies
        .iter()
        .enumerate()
        .filter(|(i, p)| !p.is_baseline && intervenes.get(*i).copied().unwrap_or(true))
        .map(|(_, p)| p)
        .collect();
    let money_of = |keys: &[&str], cols: &[&PolicyComparison]| {
        units.money_scale(cols.iter().flat_map(|p| {
            keys.iter()
                .flat_map(|k| {
                    [
                        num(p, k),
                        num(p, &format!("{k}_p05")),
                        num(p, &format!("{k}_p95")),
                    ]
                })
                .flatten()
                .collect::<Vec<_>>()
        }))
    };
    let mut all: Vec<&PolicyComparison> = vec![&r.baseline];
    all.extend(schemes.iter().copied());
    let season = money_of(&["fiscal_cost_season_mean", "fiscal_cost_season_p95"], &all);
    let pv = money_of(
        &[
            "consumer_surplus_change_pv",
            "producer_surplus_change_pv",
            "net_welfare_change_pv",
            "fiscal_cost_pv",
        ],
        &all,
    );
    let alert = r.baseline.get("price_above_alert_share").is_some();
    let several = r.replications > 1;

    // --- the answer
    let mut answer = Vec::new();
    let net = |p: &PolicyComparison| num(p, "net_welfare_change_pv").unwrap_or(0.0);
    let net_se = |p: &PolicyComparison| num(p, "net_welfare_change_pv_se");
    let what = "net benefit to the economy (consumers, producers and the treasury together, in present value)";
    if schemes.is_empty() {
        answer.push(format!(
            "Only the market left alone was given: the price varies with a standard deviation of {} {}. Add policy files to compare schemes.",
            num(&r.baseline, "price_sd").map_or("n/a".into(), |x| group(x, 2)),
            r.price_unit
        ));
    } else {
        let by = |v: WelfareSign| -> Vec<&PolicyComparison> {
            schemes
                .iter()
                .copied()
                .filter(|p| welfare_sign(net(p), net_se(p)) == v)
                .collect()
        };
        let (gains, loses, noise) = (
            by(WelfareSign::Gains),
            by(WelfareSign::Loses),
            by(WelfareSign::WithinNoise),
        );
        if gains.is_empty() {
            let mut s = if noise.is_empty() {
                format!(
                    "No scheme beats leaving the market alone: {} lower{} the {what}.",
                    match loses.len() {
                        1 => "the one scheme compared".to_string(),
                        2 => "both schemes compared".to_string(),
                        n => format!("all {n} schemes compared"),
                    },
                    if loses.len() == 1 { "s" } else { "" }
                )
            } else {
                format!(
                    "No scheme beats leaving the market alone: for {} the change in the {what} cannot be told from zero at {} replications{}.",
                    quoted(&noise.iter().map(|p| p.name.as_str()).collect::<Vec<_>>()),
                    r.replications,
                    if loses.is_empty() {
                        String::new()
                    } else {
                        format!(
                            ", and {} lower{} it",
                            quoted(&loses.iter().map(|p| p.name.as_str()).collect::<Vec<_>>()),
                            if loses.len() == 1 { "s" } else { "" }
                        )
                    }
                )
            };
            if let (Some(lo), Some(hi)) = (
                loses.iter().map(|p| net(p)).reduce(f64::max),
                loses.iter().map(|p| net(p)).reduce(f64::min),
            ) {
                s.push_str(&format!(
                    " The losses range from {} to {} {}.",
                    pv.show(-lo),
                    pv.show(-hi),
                    pv.label
                ));
            }
            answer.push(s);
        } else {
            let best = gains
                .iter()
                .copied()
                .max_by(|a, b| net(a).total_cmp(&net(b)))
                .unwrap_or(gains[0]);
            let tied: Vec<&PolicyComparison> = gains
                .iter()
                .copied()
                .filter(|p| p.name != best.name)
                .filter(|p| {
                    r.close_calls.iter().any(|c| {
                        (c.first == best.name && c.second == p.name)
                            || (c.second == best.name && c.first == p.name)
                    })
                })
                .collect();
            if tied.is_empty() {
                let rng = range(best, "net_welfare_change_pv", &pv);
                answer.push(format!(
                    "{}“{}” gives the largest {what}: {} {} against leaving the market alone{}.",
                    if gains.len() > 1 {
                        format!(
                            "{} of the {} schemes beat leaving the market alone; ",
                            gains.len(),
                            schemes.len()
                        )
                    } else {
                        String::new()
                    },
                    best.name,
                    pv.show(net(best)),
                    pv.label,
                    if rng.is_empty() {
                        String::new()
                    } else {
                        format!(" ({rng})")
                    }
                ));
            } else {
                let mut names = vec![best.name.as_str()];
                names.extend(tied.iter().map(|p| p.name.as_str()));
                answer.push(format!(
                    "{} raise the {what} by about the same amount (between {} and {} {}); the difference between them is within Monte Carlo noise, so neither is ranked first.",
                    quoted(&names),
                    pv.show(tied.iter().map(|p| net(p)).fold(net(best), f64::min)),
                    pv.show(net(best)),
                    pv.label
                ));
            }
            if !loses.is_empty() {
                answer.push(format!(
                    "{} do{} worse than leaving the market alone.",
                    quoted(&loses.iter().map(|p| p.name.as_str()).collect::<Vec<_>>()),
                    if loses.len() == 1 { "es" } else { "" }
                ));
            }
            if !noise.is_empty() {
                answer.push(format!(
                    "For {} the change cannot be told from zero at {} replications.",
                    quoted(&noise.iter().map(|p| p.name.as_str()).collect::<Vec<_>>()),
                    r.replications
                ));
            }
        }
        // price stability and the treasury, in one sentence each
        let base_sd = num(&r.baseline, "price_sd");
        if let (Some(steadiest), Some(base_sd)) = (
            schemes
                .iter()
                .copied()
                .filter(|p| num(p, "price_sd").is_some())
                .min_by(|a, b| {
                    num(a, "price_sd")
                        .unwrap_or(f64::INFINITY)
                        .total_cmp(&num(b, "price_sd").unwrap_or(f64::INFINITY))
                }),
            base_sd,
        ) {
            let sd = num(steadiest, "price_sd").unwrap_or(base_sd);
            if sd < base_sd {
                let outlay = num(steadiest, "fiscal_cost_season_mean").unwrap_or(0.0);
                // a negative cost is a receipt and is said so
                let treasury = if outlay < 0.0 {
                    format!(
                        "with the treasury taking in {} {} a season on average",
                        season.show(-outlay),
                        season.label
                    )
                } else {
                    format!(
                        "at an average treasury cost of {} {} a season",
                        season.show(outlay),
                        season.label
                    )
                };
                answer.push(format!(
                    "“{}” steadies the price most: standard deviation {} against {} {} left alone ({} less), {treasury}.",
                    steadiest.name,
                    group(sd, 2),
                    group(base_sd, 2),
                    r.price_unit,
                    percent(1.0 - sd / base_sd.max(1e-12)),
                ));
            } else {
                answer.push(format!(
                    "None of the schemes makes the price steadier than leaving the market alone (standard deviation {} {}).",
                    group(base_sd, 2),
                    r.price_unit
                ));
            }
        }
    }

    // --- the table: one row per policy, the market left alone first
    let headers = [
        "policy".to_string(),
        format!(
            "treasury cost per season, average (1-in-20 season) — {}",
            season.label
        ),
        format!(
            "consumer price, average{} — {}",
            if alert {
                " (chance above the alert price)"
            } else {
                ""
            },
            r.price_unit
        ),
        format!("consumers, change — {}", pv.label),
        format!("farm income (producer surplus), change — {}", pv.label),
        format!("net benefit to the economy — {}", pv.label),
        "who pays / who gains".to_string(),
    ];
    let mut table = TextTable::new(&headers);
    for (k, p) in all.iter().enumerate() {
        let base = baseline_of(r, p);
        let treasury = match (
            num(p, "fiscal_cost_season_mean"),
            num(p, "fiscal_cost_season_p95"),
        ) {
            (Some(m), Some(q)) if several => format!("{} ({})", season.show(m), season.show(q)),
            (Some(m), _) => season.show(m),
            _ => "n/a".into(),
        };
        let price = {
            let m = num(p, "mean_price");
            let change = match (m, num(base, "mean_price")) {
                (Some(a), Some(b)) if k > 0 && b.abs() > 0.0 => {
                    format!(", {:+.1} %", 100.0 * (a / b - 1.0))
                }
                _ => String::new(),
            };
            let chance = if alert {
                num(p, "price_above_alert_share")
                    .map_or(String::new(), |s| format!(" ({})", percent(s)))
            } else {
                String::new()
            };
            format!(
                "{}{change}{chance}",
                m.map_or("n/a".into(), |x| group(x, 2))
            )
        };
        let change = |key: &str| {
            if k == 0 {
                return "—".to_string();
            }
            two_lines(
                num(p, key).map_or("n/a".into(), |x| pv.show(x)),
                range_cell(p, key, &pv),
            )
        };
        let net_cell = if k == 0 {
            "— (the reference)".to_string()
        } else {
            let x = net(p);
            let first = match (welfare_sign(x, net_se(p)), net_se(p)) {
                (_, Some(se)) if se > 0.0 => format!("{} ± {}", pv.show(x), pv.show(se)),
                _ => pv.show(x),
            };
            let tag = match welfare_sign(x, net_se(p)) {
                WelfareSign::Gains => "gain",
                WelfareSign::Loses => "loss",
                WelfareSign::WithinNoise => "not distinguishable from zero",
            };
            two_lines(
                format!("{first} ({tag})"),
                range_cell(p, "net_welfare_change_pv", &pv),
            )
        };
        let who = if k == 0 {
            "—".to_string()
        } else {
            let mut pays = Vec::new();
            let mut gains = Vec::new();
            let fiscal = num(p, "fiscal_cost_pv").unwrap_or(0.0);
            if fiscal > 0.0 {
                pays.push("treasury");
            } else if fiscal < 0.0 {
                gains.push("treasury");
            }
            for (key, who) in [
                ("consumer_surplus_change_pv", "consumers"),
                ("producer_surplus_change_pv", "farmers"),
            ] {
                let x = num(p, key).unwrap_or(0.0);
                if x < 0.0 {
                    pays.push(who);
                } else if x > 0.0 {
                    gains.push(who);
                }
            }
            let list = |v: &[&str]| {
                if v.is_empty() {
                    "nobody".to_string()
                } else {
                    v.join(", ")
                }
            };
            format!("pays: {}\ngains: {}", list(&pays), list(&gains))
        };
        table.push(vec![
            p.name.clone(),
            treasury,
            price,
            change("consumer_surplus_change_pv"),
            change("producer_surplus_change_pv"),
            net_cell,
            who,
        ]);
    }

    // --- caveats
    let mut caveats = Vec::new();
    if !storers {
        caveats.push(
            "The market has no private storage: traders' stocks, which smooth prices without any scheme, are left out, so a public stock's effect may be overstated.".to_string(),
        );
    }
    caveats.push(if trading {
        "The market trades: imports at import parity and exports at export parity bound the domestic price, so part of what a reserve buys or sells changes trade instead of the domestic price (buying in a surplus season takes the place of exports, selling in a short one the place of imports). What traders, buyers and sellers abroad gain or lose is not counted; only the domestic consumers, producers and treasury (with border duties) are.".to_string()
    } else {
        "The market is modelled closed: no imports or exports, so world prices do not bound the domestic price as they would with trade.".to_string()
    });
    if !several {
        caveats.push(
            "One simulated path only: no ranges and no noise estimates. Set replications above 1 (with shocks) for 5–95 % ranges.".to_string(),
        );
    } else {
        caveats.push(format!(
            "Ranges are the 5th to 95th percentile over {} simulated weather paths; ± is one Monte Carlo standard error; a difference within two standard errors is treated as no difference.",
            r.replications
        ));
    }
    if !r.behaviour.is_empty() {
        caveats.push(format!(
            "{} A policy file that changes how farmers form expectations is measured against the market left alone under that same behaviour; the behaviour change alone is shown apart in the annex and never ranked.",
            if r.behaviour.len() == 1 { "One expectation override is present." } else { "Expectation overrides are present." }
        ));
    }
    FirstPage {
        answer,
        table,
        caveats,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::compare::{CloseCall, Fan, Indicator, Kind, Value};

    fn column(name: &str, baseline: bool, net: f64, se: f64) -> PolicyComparison {
        let ind = |key: &str, v: f64| Indicator {
            key: key.into(),
            label: key.into(),
            kind: Kind::Money,
            value: Value::Number(v),
        };
        PolicyComparison {
            name: name.into(),
            file: String::new(),
            is_baseline: baseline,
            baseline: "No intervention".into(),
            expectations: "naive".into(),
            indicators: vec![
                ind("mean_price", 200.0),
                ind("price_sd", 20.0),
                ind("fiscal_cost_pv", 50.0),
                ind("fiscal_cost_season_mean", 5.0),
                ind("fiscal_cost_season_p95", 9.0),
                ind("net_welfare_change_pv", net),
                ind("net_welfare_change_pv_se", se),
                ind("net_welfare_change_pv_p05", net - 3.0 * se),
                ind("net_welfare_change_pv_p95", net + 3.0 * se),
            ],
            warnings: vec![],
            fan: Fan {
                price: vec![],
                stock: vec![],
                mean_fiscal_cost: vec![],
            },
        }
    }

    fn result(policies: Vec<PolicyComparison>, close: Vec<(&str, &str)>) -> CompareResult {
        CompareResult {
            market: "m".into(),
            price_unit: "crowns per t".into(),
            quantity_unit: "kt".into(),
            replications: 500,
            periods: 30,
            seed: 1,
            discount_rate: 0.05,
            risk_aversion: 2.0,
            public_funds_cost: 1.0,
            baseline: column("No intervention", true, 0.0, 0.0),
            policies,
            behaviour: vec![],
            close_calls: close
                .into_iter()
                .map(|(a, b)| CloseCall {
                    first: a.into(),
                    second: b.into(),
                    difference: 1.0,
                    se: 1.0,
                })
                .collect(),
        }
    }

    /// The answer follows the noise rules stated in the module (two standard errors; close calls).
    #[test]
    fn the_answer_never_ranks_losers_noise_or_ties() {
        // all lose, one within noise of zero: no scheme beats the market left alone
        let r = result(
            vec![
                column("A", false, -500.0, 10.0),
                column("B", false, -5.0, 10.0),
            ],
            vec![],
        );
        let page = first_page(&r, &[true, true], false, false);
        assert!(page.answer[0].starts_with("No scheme beats leaving the market alone"));
        assert!(page.answer.iter().all(|s| !s.contains("largest")));
        // a clear winner is named
        let r = result(
            vec![
                column("A", false, 500.0, 10.0),
                column("B", false, 100.0, 10.0),
            ],
            vec![],
        );
        let page = first_page(&r, &[true, true], false, false);
        assert!(
            page.answer[0].contains("“A” gives the largest"),
            "{:?}",
            page.answer
        );
        // two winners within noise of each other: neither is first
        let r = result(
            vec![
                column("A", false, 500.0, 10.0),
                column("B", false, 495.0, 10.0),
            ],
            vec![("A", "B")],
        );
        let page = first_page(&r, &[true, true], false, false);
        assert!(
            page.answer[0].contains("neither is ranked first"),
            "{:?}",
            page.answer
        );
        // a file that does not intervene is never a scheme
        let r = result(vec![column("Idle", false, 900.0, 1.0)], vec![]);
        let page = first_page(&r, &[false], false, false);
        assert!(page.answer[0].starts_with("Only the market left alone"));
        // the market left alone is the first row; every row is there
        assert_eq!(page.table.rows[0][0], "No intervention");
        assert!(page
            .caveats
            .iter()
            .any(|c| c.contains("no private storage")));
        // the border caveat follows the market: closed, or trading at the parities
        assert!(page.caveats.iter().any(|c| c.contains("modelled closed")));
        let page = first_page(&r, &[false], true, true);
        assert!(!page.caveats.iter().any(|c| c.contains("modelled closed")));
        assert!(!page
            .caveats
            .iter()
            .any(|c| c.contains("no private storage")));
        assert!(page
            .caveats
            .iter()
            .any(|c| c.contains("import parity") && c.contains("abroad")));
    }

    /// Two standard errors as the noise band is common practice (about a 95 % interval under a
    /// normal approximation), no source.
    #[test]
    fn verdicts_respect_the_noise_band() {
        assert_eq!(welfare_sign(10.0, Some(4.0)), WelfareSign::Gains);
        assert_eq!(welfare_sign(7.0, Some(4.0)), WelfareSign::WithinNoise);
        assert_eq!(welfare_sign(-7.0, Some(4.0)), WelfareSign::WithinNoise);
        assert_eq!(welfare_sign(-9.0, Some(4.0)), WelfareSign::Loses);
        assert_eq!(welfare_sign(-1.0, None), WelfareSign::Loses);
        assert_eq!(welfare_sign(0.0, None), WelfareSign::WithinNoise);
        assert_eq!(welfare_sign(1.0, Some(0.0)), WelfareSign::Gains);
    }
}
