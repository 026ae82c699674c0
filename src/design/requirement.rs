//! `--require "INDICATOR<=VALUE"` and the objective of a design search.

use super::DesignError;
use crate::sweep::outcomes::Outcome;

/// A comparison with the required value.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Op {
    /// `<=`
    Le,
    /// `<`
    Lt,
    /// `>=`
    Ge,
    /// `>`
    Gt,
}

impl Op {
    /// As written.
    pub fn as_str(self) -> &'static str {
        match self {
            Op::Le => "<=",
            Op::Lt => "<",
            Op::Ge => ">=",
            Op::Gt => ">",
        }
    }
}

/// One requirement: an indicator compared with a value.
#[derive(Debug, Clone, PartialEq)]
pub struct Requirement {
    /// The indicator (a `compare` key).
    pub indicator: String,
    /// The comparison.
    pub op: Op,
    /// The required value.
    pub value: f64,
}

impl Requirement {
    /// Parses `IND<=V`, `IND>=V`, `IND<V` or `IND>V` (spaces allowed around the parts).
    pub fn parse(spec: &str) -> Result<Requirement, DesignError> {
        let bad = |why: &str| DesignError::Usage(format!("--require \"{spec}\": {why}"));
        let (at, op, len) = ["<=", ">=", "<", ">"]
            .iter()
            .find_map(|w| {
                spec.find(w).map(|i| {
                    let op = match *w {
                        "<=" => Op::Le,
                        ">=" => Op::Ge,
                        "<" => Op::Lt,
                        _ => Op::Gt,
                    };
                    (i, op, w.len())
                })
            })
            .ok_or_else(|| {
                bad("expected INDICATOR<=VALUE (or >=, <, >), e.g. \"price_above_alert_share<=0.10\"")
            })?;
        let indicator = spec[..at].trim();
        let rest = spec[at + len..].trim();
        if indicator.is_empty()
            || !indicator
                .chars()
                .all(|c| c.is_ascii_alphanumeric() || c == '_')
        {
            return Err(bad("the indicator must be a name such as fiscal_cost_pv"));
        }
        let value = match rest.parse::<f64>() {
            Ok(v) if v.is_finite() => v,
            _ => return Err(bad(&format!("the value `{rest}` must be a finite number"))),
        };
        Ok(Requirement {
            indicator: indicator.to_string(),
            op,
            value,
        })
    }

    /// Whether `x` meets the requirement.
    pub fn holds(&self, x: f64) -> bool {
        match self.op {
            Op::Le => x <= self.value,
            Op::Lt => x < self.value,
            Op::Ge => x >= self.value,
            Op::Gt => x > self.value,
        }
    }

    /// Whether the outcome meets it (a missing or invalid value does not).
    pub fn met_by(&self, o: &Outcome) -> bool {
        o.number(&self.indicator).is_some_and(|x| self.holds(x))
    }

    /// True when the outcome's value lies within two Monte Carlo standard errors of the required
    /// value (`INDICATOR_se`; an indicator without one, or with a zero one, is never within noise).
    pub fn within_noise(&self, o: &Outcome) -> bool {
        match (
            o.number(&self.indicator),
            o.number(&format!("{}_se", self.indicator)),
        ) {
            (Some(x), Some(se)) if se > 0.0 => (x - self.value).abs() <= 2.0 * se,
            _ => false,
        }
    }

    /// As written, e.g. `fiscal_cost_pv<=50000`.
    pub fn describe(&self) -> String {
        format!(
            "{}{}{}",
            self.indicator,
            self.op.as_str(),
            crate::output::fmt_full(self.value)
        )
    }
}

/// What the search makes as small or as large as it can among the designs that meet every
/// requirement: an indicator, or one of the varied keys itself.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Objective {
    /// `--minimise NAME`.
    Minimise(String),
    /// `--maximise NAME`.
    Maximise(String),
}

impl Objective {
    /// The indicator or key.
    pub fn name(&self) -> &str {
        match self {
            Objective::Minimise(n) | Objective::Maximise(n) => n,
        }
    }

    /// True when larger is better.
    pub fn maximises(&self) -> bool {
        matches!(self, Objective::Maximise(_))
    }

    /// In words, e.g. `--minimise fiscal_cost_pv`.
    pub fn describe(&self) -> String {
        match self {
            Objective::Minimise(n) => format!("--minimise {n}"),
            Objective::Maximise(n) => format!("--maximise {n}"),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn requirements_parse_and_hold() {
        let r = Requirement::parse(" price_above_alert_share <= 0.10 ").unwrap();
        assert_eq!(r.indicator, "price_above_alert_share");
        assert_eq!(r.op, Op::Le);
        assert_eq!(r.value, 0.1);
        assert!(r.holds(0.1) && !r.holds(0.1000001));
        let r = Requirement::parse("net_welfare_change_pv>=0").unwrap();
        assert_eq!(r.op, Op::Ge);
        assert!(r.holds(0.0));
        let r = Requirement::parse("x>-3e2").unwrap();
        assert!(r.op == Op::Gt && r.value == -300.0 && !r.holds(-300.0));
        assert_eq!(Requirement::parse("x<1").unwrap().op, Op::Lt);
        for bad in ["x=1", "<=1", "x<=", "x<=nan", "x y<=1", "x<=inf"] {
            let e = Requirement::parse(bad).unwrap_err().to_string();
            assert!(e.contains(bad), "{e}");
        }
    }
}
