//! The fit report as a table (terminal, Markdown, CSV) or JSON.
//!
//! One table, one row per coefficient and then one row per equation statistic, so that every format
//! (CSV included) carries everything: columns `equation, method, term, estimate, std_error,
//! robust_std_error, t`. Statistic rows (`r_squared`, `residual_sd`, `durbin_watson`,
//! `elasticity_at_means`, `observations`) leave the last three cells empty.

use super::{EquationFit, FitReport};
use crate::output::{fmt_full, Format, TextTable};

/// Six significant digits, plain notation where readable; non-finite values give an empty cell.
pub fn fmt_sig(x: f64) -> String {
    if !x.is_finite() {
        return String::new();
    }
    if x == 0.0 {
        return "0".into();
    }
    let mag = x.abs().log10().floor() as i32;
    if (-4..7).contains(&mag) {
        let decimals = (5 - mag).max(0) as usize;
        format!("{x:.decimals$}")
    } else {
        format!("{x:.5e}")
    }
}

fn method_label(e: &EquationFit) -> String {
    serde_json::to_value(e.method)
        .ok()
        .and_then(|v| v.as_str().map(str::to_string))
        .unwrap_or_default()
}

impl FitReport {
    fn table_with(&self, num: fn(f64) -> String) -> TextTable {
        let mut t = TextTable::new(&[
            "equation",
            "method",
            "term",
            "estimate",
            "std_error",
            "robust_std_error",
            "t",
        ]);
        for (label, e) in [("demand", &self.demand), ("supply", &self.supply)] {
            let m = method_label(e);
            for term in &e.terms {
                t.push(vec![
                    label.into(),
                    m.clone(),
                    term.name.clone(),
                    num(term.estimate),
                    num(term.std_error),
                    num(term.robust_std_error),
                    num(term.t),
                ]);
            }
            for (name, v) in [
                ("r_squared", num(e.r_squared)),
                ("residual_sd", num(e.residual_sd)),
                ("durbin_watson", num(e.durbin_watson)),
                ("elasticity_at_means", num(e.elasticity_at_means)),
                ("observations", e.observations.to_string()),
            ] {
                t.push(vec![
                    label.into(),
                    m.clone(),
                    name.into(),
                    v,
                    String::new(),
                    String::new(),
                    String::new(),
                ]);
            }
            if label == "supply" {
                if let Some(pa) = &self.partial_adjustment {
                    t.push(vec![
                        label.into(),
                        m.clone(),
                        "long_run_elasticity".into(),
                        num(pa.long_run_elasticity),
                        String::new(),
                        String::new(),
                        String::new(),
                    ]);
                }
            }
        }
        if let Some(y) = &self.yield_trend {
            let m = "ols".to_string();
            t.push(vec![
                "yield_trend".into(),
                m.clone(),
                "season".into(),
                num(y.slope),
                num(y.slope_std_error),
                String::new(),
                num(y.slope / y.slope_std_error),
            ]);
            for (name, v) in [
                ("trend_yield_at_projection", y.at_projection),
                ("yield_cv", y.yield_cv),
            ] {
                t.push(vec![
                    "yield_trend".into(),
                    m.clone(),
                    name.into(),
                    num(v),
                    String::new(),
                    String::new(),
                    String::new(),
                ]);
            }
        }
        t
    }

    /// The check against history as a table: statistic, history, simulated 5 %, 50 %, 95 %, flag.
    pub fn check_table(&self) -> Option<TextTable> {
        let c = self.history_check.as_ref()?;
        let mut t = TextTable::new(&[
            "statistic",
            "history",
            "simulated_p05",
            "simulated_p50",
            "simulated_p95",
            "inside_5_95",
        ]);
        for r in &c.rows {
            t.push(vec![
                r.statistic.clone(),
                fmt_sig(r.history),
                fmt_sig(r.p05),
                fmt_sig(r.p50),
                fmt_sig(r.p95),
                if r.outside { "NO" } else { "yes" }.into(),
            ]);
        }
        Some(t)
    }

    /// Warnings from the check against history: one per statistic outside the simulated 5–95 % range.
    pub fn check_warnings(&self) -> Vec<String> {
        let Some(c) = &self.history_check else {
            return Vec::new();
        };
        let mut w: Vec<String> = c
            .rows
            .iter()
            .filter(|r| r.outside)
            .map(|r| {
                format!(
                    "the history's {} {} lies outside the range the fitted market simulates (5–95 %: {} to {}, {} histories of {} seasons): the market misses something in the data",
                    r.statistic,
                    fmt_sig(r.history),
                    fmt_sig(r.p05),
                    fmt_sig(r.p95),
                    c.replications,
                    c.periods
                )
            })
            .collect();
        if c.diverged > 0 {
            w.push(format!(
                "{} simulated histories diverged and were left out of the check",
                c.diverged
            ));
        }
        w
    }

    /// The report as a table with six significant digits (terminal and Markdown).
    pub fn to_table(&self) -> TextTable {
        self.table_with(fmt_sig)
    }

    /// The same table with full round-trip precision (CSV).
    pub fn to_table_full(&self) -> TextTable {
        self.table_with(fmt_full)
    }

    /// Renders in any output format: JSON is the serialised report, CSV the full-precision table.
    pub fn render(&self, format: Format) -> String {
        match format {
            Format::Json => {
                let mut v = serde_json::to_value(self).unwrap_or_default();
                if let Some(m) = v.as_object_mut() {
                    m.insert("caution".into(), crate::CAUTION.into());
                }
                let mut s = serde_json::to_string_pretty(&v).unwrap_or_default();
                s.push('\n');
                s
            }
            Format::Csv => self.to_table_full().render(Format::Csv),
            other => {
                let mut s = self.to_table().render(other);
                if let (Some(t), Some(c)) = (self.check_table(), &self.history_check) {
                    s.push_str(&format!(
                        "\nCheck against history: the written market simulated {} times over {} seasons (seed {})\n\n",
                        c.replications, c.periods, c.seed
                    ));
                    s.push_str(&t.render(other));
                }
                s.push_str(&format!("\nCaution: {}\n", crate::CAUTION));
                s
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn significant_digits() {
        assert_eq!(fmt_sig(1.234567891), "1.23457");
        assert_eq!(fmt_sig(-0.0358191792925910), "-0.0358192");
        assert_eq!(fmt_sig(1829.15146461355), "1829.15");
        assert_eq!(fmt_sig(-3482258.63459582), "-3482259");
        assert_eq!(fmt_sig(4.2e-7), "4.20000e-7");
        assert_eq!(fmt_sig(f64::NAN), "");
        assert_eq!(fmt_sig(0.0), "0");
    }
}
