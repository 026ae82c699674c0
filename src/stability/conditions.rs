//! Published stability conditions, evaluated for the market at hand, beside the eigenvalues.
//!
//! With b = S'(P^e*) (supply slope) and d = |D'(P*)| (demand slope in absolute value) at the steady
//! state, the linearised price answers the planting price with −b/d. The conditions below are the
//! closed forms for each rule; the eigenvalues decide in every case, these are for the reader.

use serde::Serialize;

use crate::scenario::{ExpectationSpec, NormalPrice};

/// A closed-form stability condition and whether this market meets it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PublishedCondition {
    /// The condition as written, e.g. "b < d".
    pub name: String,
    /// Where it comes from.
    pub source: String,
    /// Whether it holds for this market.
    pub holds: bool,
    /// The numbers it was evaluated with.
    pub detail: String,
}

fn f(x: f64) -> String {
    crate::output::fmt_num(x, 6)
}

/// Jury's conditions for z² + a1 z + a0 (both roots inside the unit circle).
pub fn jury_quadratic(a1: f64, a0: f64) -> PublishedCondition {
    let c1 = 1.0 + a1 + a0 > 0.0;
    let c2 = 1.0 - a1 + a0 > 0.0;
    let c3 = a0.abs() < 1.0;
    PublishedCondition {
        name: "Jury: 1 + a1 + a0 > 0, 1 − a1 + a0 > 0, |a0| < 1".into(),
        source: "Jury (1964), Theory and Application of the z-Transform Method (Schur–Cohn–Jury \
                 test for a quadratic; from memory)"
            .into(),
        holds: c1 && c2 && c3,
        detail: format!(
            "z² + a1 z + a0 with a1 = {}, a0 = {}: 1 + a1 + a0 = {}, 1 − a1 + a0 = {}, |a0| = {}",
            f(a1),
            f(a0),
            f(1.0 + a1 + a0),
            f(1.0 - a1 + a0),
            f(a0.abs())
        ),
    }
}

/// The conditions that apply to `rule` with supply slope `b` and demand slope `d` (> 0).
pub fn conditions(rule: &ExpectationSpec, b: f64, d: f64) -> Vec<PublishedCondition> {
    let r = b / d;
    let slopes = format!(
        "b = S'(P*) = {}, d = |D'(P*)| = {}, b/d = {}",
        f(b),
        f(d),
        f(r)
    );
    let ezekiel = || PublishedCondition {
        name: "b < d".into(),
        source: "Ezekiel (1938), The cobweb theorem, Quarterly Journal of Economics 52(2)".into(),
        holds: b < d,
        detail: slopes.clone(),
    };
    // second-order rules: P^e = w1 P_{t−1} + w2 P_{t−2}; characteristic polynomial z² + r w1 z + r w2
    let quadratic = |w1: f64, w2: f64| jury_quadratic(r * w1, r * w2);
    match *rule {
        ExpectationSpec::Naive => vec![ezekiel()],
        ExpectationSpec::TrailingMean { window: 1 } => vec![ezekiel()],
        ExpectationSpec::Adaptive { weight, .. } => {
            let bound = (2.0 - weight) / weight;
            vec![PublishedCondition {
                name: "b/d < (2 − λ)/λ".into(),
                source: "Nerlove (1958), Adaptive expectations and cobweb phenomena, Quarterly \
                         Journal of Economics 72(2)"
                    .into(),
                holds: r < bound,
                detail: format!("{slopes}, λ = {}, (2 − λ)/λ = {}", f(weight), f(bound)),
            }]
        }
        ExpectationSpec::Extrapolative { weight } => vec![quadratic(1.0 + weight, -weight)],
        ExpectationSpec::TrailingMean { window: 2 } => vec![quadratic(0.5, 0.5)],
        ExpectationSpec::NormalPrice {
            weight,
            normal: NormalPrice::Window(2),
        } => vec![quadratic(1.0 - weight + weight / 2.0, weight / 2.0)],
        ExpectationSpec::NormalPrice {
            weight,
            normal: NormalPrice::Window(1),
        }
        | ExpectationSpec::NormalPrice {
            weight,
            normal: NormalPrice::Fixed(_),
        } => {
            let w = if matches!(
                rule,
                ExpectationSpec::NormalPrice {
                    normal: NormalPrice::Window(1),
                    ..
                }
            ) {
                1.0
            } else {
                1.0 - weight
            };
            vec![PublishedCondition {
                name: "(b/d)·w < 1 with w = dP^e/dP_{t−1}".into(),
                source: "first-order root −(b/d)·w of the rule; derived here (no published source checked)"
                    .into(),
                holds: r * w < 1.0,
                detail: format!("{slopes}, w = {}", f(w)),
            }]
        }
        _ => Vec::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn jury_on_known_quadratics() {
        // (z − 0.5)(z + 0.4) = z² + 0.1 z − 0.2: roots inside → holds
        assert!(jury_quadratic(0.1, -0.2).holds);
        // (z − 1.2)(z − 0.1) = z² − 1.3 z + 0.12: a root outside → fails
        assert!(!jury_quadratic(-1.3, 0.12).holds);
        // complex pair of modulus √1.1 > 1: z² + 0 z + 1.1 → fails
        assert!(!jury_quadratic(0.0, 1.1).holds);
    }
}
