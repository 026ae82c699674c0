//! Rendering a [`CompareResult`].
//!
//! - table / markdown, [`Layout::Wide`]: a caption, one row per indicator with its unit,
//!   `value ± standard error` where the indicator has one; the present values that have quantiles
//!   get a second row with the 5–95 % range across replications. The market left alone is always
//!   the first column, each behaviour change (a policy file's expectation rule alone) a last
//!   column. In the terminal, columns are headed by short codes (P0 the market left alone, P1 … the
//!   policies, B1 … the behaviour changes) explained in a legend, and split into blocks that fit
//!   [`TERMINAL_WIDTH`]; Markdown keeps the full names in one table.
//! - [`Layout::Long`]: one row per policy (the market left alone first) and a few key indicators
//!   as columns with short labels and a legend.
//! - [`Layout::Auto`] (the default): wide when it fits the terminal width in one block, long
//!   otherwise; Markdown is wide.
//!
//! Numbers a person reads go through [`crate::units`] (thousands separators, one money scale for the
//! whole table, shares as percentages); missing values print as `n/a`.
//! - csv: `indicator` then one column per given policy, every key (quantiles and standard errors as
//!   their own rows), full precision; missing values are empty cells.
//! - json: `{"market", "replications", "periods", "seed", "discount_rate", "risk_aversion",
//!   "public_funds_cost", "policies": [{"name", "file", "baseline", "expectations", "indicators":
//!   {key: value}}], "baseline": {...}, "behaviour_changes": [...]}`; missing values are null.

use super::{CompareResult, Kind, PolicyComparison, Value};
use crate::output::{fmt_full, Format, TextTable};
use crate::units::{group, MoneyScale, Units};

/// Columns of the terminal a table must fit.
pub const TERMINAL_WIDTH: usize = 120;

/// How the side-by-side table is laid out.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Layout {
    /// Wide when it fits, long otherwise.
    #[default]
    Auto,
    /// Indicators as rows, policies as columns (split into blocks in the terminal).
    Wide,
    /// Policies as rows, key indicators as columns.
    Long,
}

impl std::str::FromStr for Layout {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s {
            "auto" => Ok(Layout::Auto),
            "wide" => Ok(Layout::Wide),
            "long" => Ok(Layout::Long),
            other => Err(format!(
                "unknown layout `{other}`: allowed are wide, long, auto"
            )),
        }
    }
}

/// Renders `result` in `format` with the automatic layout.
pub fn render(result: &CompareResult, format: Format) -> String {
    render_with(result, format, Layout::Auto)
}

/// Renders `result` in `format` and `layout` (layout matters for table and Markdown only).
pub fn render_with(result: &CompareResult, format: Format, layout: Layout) -> String {
    match format {
        Format::Json => json(result),
        Format::Csv => csv(result).render(Format::Csv),
        Format::Table => {
            let body = match layout {
                Layout::Long => long_terminal(result),
                Layout::Wide => wide_terminal(result),
                Layout::Auto => {
                    let wide = wide_terminal(result);
                    if wide.lines().all(|l| l.chars().count() <= TERMINAL_WIDTH)
                        && wide.matches("(part ").count() == 0
                    {
                        wide
                    } else {
                        long_terminal(result)
                    }
                }
            };
            format!(
                "{}\n{}{}\n",
                wrap(&caption(result), TERMINAL_WIDTH).join("\n"),
                body,
                wrap(&format!("Caution: {}", crate::CAUTION), TERMINAL_WIDTH).join("\n")
            )
        }
        Format::Markdown => {
            let t = match layout {
                Layout::Long => long_table(result, false).0,
                _ => wide_table(result, false),
            };
            format!(
                "{}\n\n{}\n{}\n",
                caption(result),
                t.render(Format::Markdown),
                footnote(result)
            )
        }
    }
}

/// The comparison with the household groups' block (`compare --households`): in a table or
/// Markdown the block goes before the caution, in CSV its rows follow the indicators
/// (`household:GROUP:MEASURE`), in JSON it is the `"households"` array (one entry per given policy
/// and group) with `"household_settings"`. Without groups this is [`render_with`] exactly.
pub fn render_with_households(
    result: &CompareResult,
    households: Option<&crate::households::HouseholdResult>,
    format: Format,
    layout: Layout,
) -> String {
    use crate::households::render as hh;
    let Some(h) = households else {
        return render_with(result, format, layout);
    };
    match format {
        Format::Json => {
            let mut doc = json_doc(result);
            if let Some(map) = doc.as_object_mut() {
                map.insert("households".into(), hh::json(h));
                map.insert("household_settings".into(), hh::settings_json(h));
            }
            serde_json::to_string_pretty(&doc).unwrap_or_default() + "\n"
        }
        Format::Csv => {
            let mut t = csv(result);
            for row in hh::csv_rows(h) {
                t.push(row);
            }
            t.render(Format::Csv)
        }
        Format::Table | Format::Markdown => {
            let codes = format == Format::Table;
            let columns = household_columns(result, h, codes);
            let mut block = hh::block(h, &columns, format);
            if codes {
                // the note wrapped to the terminal like the caption
                let (table, note) = block.split_at(block.trim_end().rfind('\n').unwrap_or(0));
                block = format!(
                    "{table}\n{}\n",
                    wrap(note.trim(), TERMINAL_WIDTH).join("\n")
                );
            }
            let text = render_with(result, format, layout);
            match text.rfind("Caution: ") {
                Some(at) => format!("{}{block}\n{}", &text[..at], &text[at..]),
                None => format!("{text}\n{block}"),
            }
        }
    }
}

/// The household columns in the table's order ([`ordered_columns`]): headed by the short codes
/// when `codes`, by the policies' names otherwise.
fn household_columns<'a>(
    result: &CompareResult,
    h: &'a crate::households::HouseholdResult,
    codes: bool,
) -> Vec<(String, &'a crate::households::HouseholdColumn)> {
    let mut out = Vec::new();
    let given_base = result.policies.iter().position(|p| p.is_baseline);
    let base = given_base.map_or(&h.baseline, |k| &h.policies[k]);
    let name = |code: &str, p: &PolicyComparison| {
        if codes {
            code.to_string()
        } else {
            p.name.clone()
        }
    };
    out.push((
        name(
            "P0",
            given_base.map_or(&result.baseline, |k| &result.policies[k]),
        ),
        base,
    ));
    let mut k = 0;
    for (i, p) in result.policies.iter().enumerate() {
        if !p.is_baseline {
            k += 1;
            out.push((name(&format!("P{k}"), p), &h.policies[i]));
        }
    }
    for (i, p) in result.behaviour.iter().enumerate() {
        out.push((name(&format!("B{}", i + 1), p), &h.behaviour[i]));
    }
    out
}

/// The JSON document.
pub fn json(result: &CompareResult) -> String {
    serde_json::to_string_pretty(&json_doc(result)).unwrap_or_default() + "\n"
}

/// The JSON document as a value.
fn json_doc(result: &CompareResult) -> serde_json::Value {
    let column = |p: &PolicyComparison| {
        let indicators: serde_json::Map<String, serde_json::Value> = p
            .indicators
            .iter()
            .map(|i| {
                (
                    i.key.to_string(),
                    serde_json::to_value(&i.value).unwrap_or_default(),
                )
            })
            .collect();
        serde_json::json!({
            "name": p.name,
            "file": p.file,
            "baseline": p.baseline,
            "expectations": p.expectations,
            "indicators": indicators,
        })
    };
    serde_json::json!({
        "market": result.market,
        "replications": result.replications,
        "periods": result.periods,
        "seed": result.seed,
        "discount_rate": result.discount_rate,
        "risk_aversion": result.risk_aversion,
        "public_funds_cost": result.public_funds_cost,
        "caution": crate::CAUTION,
        "policies": result.policies.iter().map(column).collect::<Vec<_>>(),
        "baseline": column(&result.baseline),
        "behaviour_changes": result.behaviour.iter().map(column).collect::<Vec<_>>(),
    })
}

/// One row per key, one column per given policy, full precision.
pub fn csv(result: &CompareResult) -> TextTable {
    let mut headers = vec!["indicator".to_string()];
    headers.extend(result.policies.iter().map(|p| p.name.clone()));
    let mut t = TextTable::new(&headers);
    let Some(first) = result.policies.first() else {
        return t;
    };
    for (row, ind) in first.indicators.iter().enumerate() {
        let mut cells = vec![ind.key.clone()];
        cells.extend(
            result
                .policies
                .iter()
                .map(|p| match &p.indicators[row].value {
                    Value::Number(x) => fmt_full(*x),
                    Value::Text(s) => s.clone(),
                    Value::Missing => String::new(),
                }),
        );
        t.push(cells);
    }
    t
}

/// The columns in display order: the market left alone first, then the given policies that
/// intervene, then the behaviour changes; with their short codes.
pub fn ordered_columns(result: &CompareResult) -> Vec<(String, &PolicyComparison)> {
    let mut cols: Vec<(String, &PolicyComparison)> = Vec::new();
    // the market left alone: a given do-nothing file if there is one, else the built-in baseline
    let given_base = result.policies.iter().find(|p| p.is_baseline);
    cols.push(("P0".into(), given_base.unwrap_or(&result.baseline)));
    let mut k = 0;
    for p in result.policies.iter().filter(|p| !p.is_baseline) {
        k += 1;
        cols.push((format!("P{k}"), p));
    }
    for (i, p) in result.behaviour.iter().enumerate() {
        cols.push((format!("B{}", i + 1), p));
    }
    cols
}

/// The money scale of the whole table: every money figure of every column.
pub fn money_scale(result: &CompareResult) -> MoneyScale {
    let units = Units::new(&result.price_unit, &result.quantity_unit);
    let cols = ordered_columns(result);
    units.money_scale(cols.iter().flat_map(|(_, p)| {
        p.indicators
            .iter()
            .filter(|i| i.kind == Kind::Money && !i.key.ends_with("_se"))
            .filter_map(|i| match i.value {
                Value::Number(x) => Some(x),
                _ => None,
            })
    }))
}

/// Indicators as rows, one column per policy (full names, or the short codes when `codes`).
pub fn wide_table(result: &CompareResult, codes: bool) -> TextTable {
    let columns = ordered_columns(result);
    let units = Units::new(&result.price_unit, &result.quantity_unit);
    let scale = money_scale(result);
    let mut headers = vec!["Indicator".to_string(), "Unit".to_string()];
    headers.extend(columns.iter().map(
        |(code, p)| {
            if codes {
                code.clone()
            } else {
                p.name.clone()
            }
        },
    ));
    let mut t = TextTable::new(&headers);
    let Some((_, first)) = columns.first() else {
        return t;
    };
    for (row, ind) in first.indicators.iter().enumerate() {
        // quantile rows of an indicator shown above, and standard errors, go into its cells
        let stem = ind.key.rsplit_once('_').map_or("", |(stem, _)| stem);
        if (is_quantile(&ind.key) || ind.key.ends_with("_se")) && first.get(stem).is_some() {
            continue;
        }
        let unit = ind
            .kind
            .measure()
            .map_or(String::new(), |m| units.unit(m, &scale));
        let mut cells = vec![ind.label.clone(), unit];
        let se_key = format!("{}_se", ind.key);
        cells.extend(columns.iter().map(|(_, p)| {
            let value = cell(
                p.indicators.get(row).map_or(&Value::Missing, |i| &i.value),
                ind.kind,
                &units,
                &scale,
            );
            match p.get(&se_key) {
                Some(Value::Number(se)) if se.is_finite() && *se > 0.0 => {
                    format!(
                        "{value} ± {}",
                        cell(&Value::Number(*se), ind.kind, &units, &scale)
                    )
                }
                _ => value,
            }
        }));
        t.push(cells);
        let (lo, hi) = (format!("{}_p05", ind.key), format!("{}_p95", ind.key));
        if first.get(&lo).is_some() {
            let mut cells = vec!["  5–95 % range".to_string(), String::new()];
            cells.extend(columns.iter().map(|(_, p)| {
                let c = |k: &str| {
                    p.get(k)
                        .map_or("n/a".into(), |v| cell(v, ind.kind, &units, &scale))
                };
                format!("{} … {}", c(&lo), c(&hi))
            }));
            t.push(cells);
        }
    }
    t
}

/// Greedy word wrap to `width` characters (a word longer than `width` gets its own line).
fn wrap(text: &str, width: usize) -> Vec<String> {
    let mut lines = Vec::new();
    let mut cur = String::new();
    for w in text.split_whitespace() {
        if !cur.is_empty() && cur.chars().count() + 1 + w.chars().count() > width {
            lines.push(std::mem::take(&mut cur));
        }
        if !cur.is_empty() {
            cur.push(' ');
        }
        cur.push_str(w);
    }
    if !cur.is_empty() || lines.is_empty() {
        lines.push(cur);
    }
    lines
}

fn wrap_cell(text: &str, width: usize) -> String {
    wrap(text, width).join("\n")
}

fn widest(rendered: &str) -> usize {
    rendered
        .lines()
        .map(|l| l.chars().count())
        .max()
        .unwrap_or(0)
}

/// The legend of the short column codes.
fn legend(result: &CompareResult) -> String {
    let mut out = String::new();
    for (code, p) in ordered_columns(result) {
        let text = if code.starts_with('B') {
            format!(
                "{code}  {}: the market left alone under that rule, never ranked",
                p.name
            )
        } else if p.file.is_empty() {
            format!("{code}  {} (built in)", p.name)
        } else {
            format!("{code}  {} ({})", p.name, p.file)
        };
        for (i, l) in wrap(&text, TERMINAL_WIDTH - 4).iter().enumerate() {
            out.push_str(if i == 0 { "" } else { "    " });
            out.push_str(l);
            out.push('\n');
        }
    }
    out
}

/// The wide table in the terminal: short column codes, the indicator column wrapped, and the
/// policy columns split into blocks that fit [`TERMINAL_WIDTH`], then the legend.
fn wide_terminal(result: &CompareResult) -> String {
    let full = wide_table(result, true);
    let mut label = full.clone();
    for r in &mut label.rows {
        r[0] = wrap_cell(&r[0], 34);
    }
    let n = full.headers.len();
    let block_of = |cols: &[usize]| {
        let mut t = TextTable::new(
            &[0usize, 1]
                .iter()
                .chain(cols)
                .map(|&j| label.headers[j].clone())
                .collect::<Vec<_>>(),
        );
        for r in &label.rows {
            t.push(
                [0usize, 1]
                    .iter()
                    .chain(cols)
                    .map(|&j| r.get(j).cloned().unwrap_or_default())
                    .collect(),
            );
        }
        t.render(Format::Table)
    };
    let mut blocks: Vec<Vec<usize>> = Vec::new();
    let mut cur: Vec<usize> = Vec::new();
    for j in 2..n {
        cur.push(j);
        if cur.len() > 1 && widest(&block_of(&cur)) > TERMINAL_WIDTH {
            cur.pop();
            blocks.push(std::mem::take(&mut cur));
            cur.push(j);
        }
    }
    if !cur.is_empty() {
        blocks.push(cur);
    }
    let mut out = String::new();
    let parts = blocks.len();
    for (k, b) in blocks.iter().enumerate() {
        if parts > 1 {
            out.push_str(&format!("(part {} of {parts})\n", k + 1));
        }
        out.push_str(&block_of(b));
    }
    out.push_str(&legend(result));
    out
}

/// Keys of the long layout: (key, short label); the unit goes into the label.
const LONG_KEYS: [(&str, &str); 7] = [
    ("mean_price", "mean price"),
    ("price_sd", "price sd"),
    ("fiscal_cost_pv", "fiscal cost PV"),
    ("consumer_surplus_change_pv", "consumers Δ PV"),
    ("producer_surplus_change_pv", "producers Δ PV"),
    ("net_welfare_change_pv", "net welfare Δ PV"),
    ("verdict", "stability"),
];

/// Policies as rows and the key indicators as columns (value, and "± se" on a second line when
/// `stacked`); the second item is the units line for the legend.
pub fn long_table(result: &CompareResult, stacked: bool) -> (TextTable, String) {
    let columns = ordered_columns(result);
    let units = Units::new(&result.price_unit, &result.quantity_unit);
    let scale = money_scale(result);
    let mut headers = vec!["".to_string(), "policy".to_string()];
    headers.extend(LONG_KEYS.iter().map(|(_, l)| l.to_string()));
    let mut t = TextTable::new(&headers);
    for (code, p) in &columns {
        let mut row = vec![code.clone(), p.name.clone()];
        for (key, _) in LONG_KEYS {
            let kind = p
                .indicators
                .iter()
                .find(|i| i.key == key)
                .map_or(Kind::Text, |i| i.kind);
            let v = cell(p.get(key).unwrap_or(&Value::Missing), kind, &units, &scale);
            let se = match p.get(&format!("{key}_se")) {
                Some(Value::Number(se)) if se.is_finite() && *se > 0.0 => {
                    Some(cell(&Value::Number(*se), kind, &units, &scale))
                }
                _ => None,
            };
            row.push(match se {
                Some(se) if stacked => format!("{v}\n± {se}"),
                Some(se) => format!("{v} ± {se}"),
                None => v,
            });
        }
        t.push(row);
    }
    let note = format!(
        "Prices in {}; money in {} (present values); Δ: change against the market left alone; ± one standard error.",
        result.price_unit, scale.label
    );
    (t, note)
}

/// The long table in the terminal: policy names wrapped so that the table fits.
fn long_terminal(result: &CompareResult) -> String {
    let (t, note) = long_table(result, true);
    let mut rendered = String::new();
    for width in (8..=40).rev().step_by(2) {
        let mut w = t.clone();
        for r in &mut w.rows {
            r[1] = wrap_cell(&r[1], width);
        }
        for h in w.headers.iter_mut().skip(2) {
            *h = wrap_cell(h, 9);
        }
        rendered = w.render(Format::Table);
        if widest(&rendered) <= TERMINAL_WIDTH {
            break;
        }
    }
    let mut out = rendered;
    for l in wrap(&note, TERMINAL_WIDTH) {
        out.push_str(&l);
        out.push('\n');
    }
    out.push_str(&legend(result));
    out
}

/// The stderr warnings of a comparison: pairs of policies whose net welfare changes differ by less
/// than two standard errors of their (paired) difference.
pub fn close_call_warnings(result: &CompareResult) -> Vec<String> {
    result
        .close_calls
        .iter()
        .map(|c| {
            format!(
                "\"{}\" and \"{}\": net welfare changes differ by {} ± {} (one standard error of the \
                 paired difference over {} replications): not distinguishable; run more replications",
                c.first,
                c.second,
                group(c.difference, 0),
                group(c.se, 0),
                result.replications
            )
        })
        .collect()
}

fn is_quantile(key: &str) -> bool {
    key.ends_with("_p05") || key.ends_with("_p50") || key.ends_with("_p95")
}

/// One cell: numbers in the shared decimals with thousands separators (money in `scale`, shares
/// as percentages), words as they are, "n/a" for what is missing.
pub fn cell(v: &Value, kind: Kind, units: &Units, scale: &MoneyScale) -> String {
    match (v, kind.measure()) {
        (Value::Number(x), Some(m)) if x.is_finite() => units.show(*x, m, scale),
        (Value::Text(s), _) => s.clone(),
        _ => "n/a".into(),
    }
}

fn caption(r: &CompareResult) -> String {
    format!(
        "{}: {} replications × {} periods (seed {}); present values at {} % a period; changes against \
         the market without intervention under the same expectation rule and the same shocks; \
         ± one Monte Carlo standard error.",
        r.market,
        r.replications,
        r.periods,
        r.seed,
        group(100.0 * r.discount_rate, 2),
    )
}

fn footnote(r: &CompareResult) -> String {
    format!(
        "Ranges: 5 % and 95 % quantiles across replications (Hyndman–Fan type 7); ± one Monte Carlo \
         standard error (paired over replications for changes). Net welfare change = Δ consumer surplus \
         + Δ producer surplus − λ·Δ(fiscal cost, opening stock included, − value of the stock left at the end), \
         λ = {} (Alston and Hurd 1990); interest counts in present values only above the discount rate. \
         Risk premium: exact CRRA certainty equivalent with R = {}, beside ½·R·CV²·mean income \
         (Newbery and Stiglitz 1981).\n\nCaution: {}",
        group(r.public_funds_cost, 2),
        group(r.risk_aversion, 2),
        crate::CAUTION
    )
}
