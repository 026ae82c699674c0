//! Published stability conditions, evaluated for the market at hand, beside the eigenvalues.
//!
//! With b = S'(P^e*) (supply slope) and d = |D'(P*)| (demand slope in absolute value) at the steady
//! state, the linearised price answers the planting price with −b/d. The closed forms below
//! ([`Slopes`]) name no rule: each expectation rule picks the ones that apply to it
//! (`ExpectationRule::conditions`). The eigenvalues decide in every case, these are for the reader.
//!
//! Every condition is a strict inequality. Where the market sits on its boundary — within the
//! neutral band of the verdict ([`crate::regime::NEUTRAL_TOLERANCE`], measured in the same units as
//! the spectral radius) — the condition does not hold and is reported as "on the boundary", never as
//! holding because of a rounding error in b/d.

use serde::Serialize;

/// A closed-form stability condition and whether this market meets it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PublishedCondition {
    /// The condition as written, e.g. "b < d".
    pub name: String,
    /// Where it comes from.
    pub source: String,
    /// Whether it holds for this market (false on the boundary: the inequalities are strict).
    pub holds: bool,
    /// The market sits on the condition's boundary (within the neutral band).
    pub on_boundary: bool,
    /// The numbers it was evaluated with.
    pub detail: String,
}

fn f(x: f64) -> String {
    crate::output::fmt_num(x, 6)
}

use crate::regime::NEUTRAL_TOLERANCE;

/// (holds, on the boundary) for a condition `margin > 0` whose margin is measured in units of the
/// spectral radius (1 − ρ at the boundary's side).
fn strict(margin: f64) -> (bool, bool) {
    let on_boundary = margin.abs() <= NEUTRAL_TOLERANCE;
    (margin > 0.0 && !on_boundary, on_boundary)
}

impl PublishedCondition {
    /// "holds", "fails" or "on the boundary".
    pub fn status(&self) -> &'static str {
        if self.on_boundary {
            "on the boundary"
        } else if self.holds {
            "holds"
        } else {
            "fails"
        }
    }
}

/// Jury's conditions for z² + a1 z + a0 (both roots inside the unit circle).
pub fn jury_quadratic(a1: f64, a0: f64) -> PublishedCondition {
    let (c1, b1) = strict(1.0 + a1 + a0);
    let (c2, b2) = strict(1.0 - a1 + a0);
    let (c3, b3) = strict(1.0 - a0.abs());
    // on the boundary when one condition is on it and none fails outright
    let fails_outright = [(c1, b1), (c2, b2), (c3, b3)].iter().any(|(c, b)| !c && !b);
    PublishedCondition {
        name: "Jury: 1 + a1 + a0 > 0, 1 − a1 + a0 > 0, |a0| < 1".into(),
        source: "Jury (1964), Theory and Application of the z-Transform Method (Schur–Cohn–Jury \
                 test for a quadratic; from memory)"
            .into(),
        holds: c1 && c2 && c3,
        on_boundary: (b1 || b2 || b3) && !fails_outright,
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

/// The steady-state slopes the published conditions are evaluated with: b = S'(P^e*) and
/// d = |D'(P*)| (> 0). Each expectation rule picks its conditions (`ExpectationRule::conditions`)
/// from the closed forms below.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Slopes {
    /// Supply slope at the steady planting price.
    pub b: f64,
    /// Demand slope at the steady price, in absolute value.
    pub d: f64,
}

impl Slopes {
    /// b/d.
    fn ratio(&self) -> f64 {
        self.b / self.d
    }

    fn words(&self) -> String {
        format!(
            "b = S'(P*) = {}, d = |D'(P*)| = {}, b/d = {}",
            f(self.b),
            f(self.d),
            f(self.ratio())
        )
    }

    /// The cobweb theorem for naive expectations: b < d (ρ = b/d: the margin 1 − b/d).
    pub fn ezekiel(&self) -> PublishedCondition {
        let (holds, on_boundary) = strict(1.0 - self.ratio());
        PublishedCondition {
            name: "b < d".into(),
            source: "Ezekiel (1938), The cobweb theorem, Quarterly Journal of Economics 52(2)"
                .into(),
            holds,
            on_boundary,
            detail: self.words(),
        }
    }

    /// Adaptive expectations of weight λ: b/d < (2 − λ)/λ.
    pub fn nerlove(&self, weight: f64) -> PublishedCondition {
        let bound = (2.0 - weight) / weight;
        // beyond the bound ρ = λ(1 + b/d) − 1, so 1 − ρ = λ·((2 − λ)/λ − b/d)
        let (holds, on_boundary) = strict(weight * (bound - self.ratio()));
        PublishedCondition {
            name: "b/d < (2 − λ)/λ".into(),
            source: "Nerlove (1958), Adaptive expectations and cobweb phenomena, Quarterly \
                     Journal of Economics 72(2)"
                .into(),
            holds,
            on_boundary,
            detail: format!(
                "{}, λ = {}, (2 − λ)/λ = {}",
                self.words(),
                f(weight),
                f(bound)
            ),
        }
    }

    /// Learning with a decreasing gain: the estimate a follows, as the gain goes to 0, the
    /// differential equation da/dτ = T(a) − a with T(a) the price that planting on a brings;
    /// it is E-stable iff T'(a*) = −b/d < 1, which every falling demand and rising supply meet
    /// (the margin 1 − T'(a*) = 1 + b/d).
    pub fn e_stability(&self) -> PublishedCondition {
        let slope = -self.ratio();
        let (holds, on_boundary) = strict(1.0 - slope);
        PublishedCondition {
            name: "T'(a*) = −b/d < 1 (E-stability)".into(),
            source: "Evans and Honkapohja (2001), Learning and Expectations in Macroeconomics, ch. 2 (E-stability of the cobweb model; from memory); Bray and Savin (1986)"
                .into(),
            holds,
            on_boundary,
            detail: format!("{}, T'(a*) = {}", self.words(), f(slope)),
        }
    }

    /// A second-order rule P^e = w1 P_{t−1} + w2 P_{t−2}: Jury's conditions on the characteristic
    /// polynomial z² + (b/d) w1 z + (b/d) w2.
    pub fn second_order(&self, w1: f64, w2: f64) -> PublishedCondition {
        jury_quadratic(self.ratio() * w1, self.ratio() * w2)
    }

    /// A first-order rule with w = dP^e/dP_{t−1}: its root −(b/d)·w inside the unit circle.
    pub fn first_order(&self, w: f64) -> PublishedCondition {
        let (holds, on_boundary) = strict(1.0 - self.ratio() * w);
        PublishedCondition {
            name: "(b/d)·w < 1 with w = dP^e/dP_{t−1}".into(),
            source:
                "first-order root −(b/d)·w of the rule; derived here (no published source checked)"
                    .into(),
            holds,
            on_boundary,
            detail: format!("{}, w = {}", self.words(), f(w)),
        }
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
        // (z − 1)(z − 0.5) = z² − 1.5 z + 0.5: a root on the unit circle → on the boundary
        let edge = jury_quadratic(-1.5, 0.5);
        assert!(!edge.holds && edge.on_boundary, "{edge:?}");
        // (z − 1)(z − 2): a root outside as well → fails, not "on the boundary"
        let out = jury_quadratic(-3.0, 2.0);
        assert!(!out.holds && !out.on_boundary, "{out:?}");
    }

    #[test]
    fn nerlove_boundary_is_not_reported_as_holding() {
        // b/d = 0.3/0.1 rounds to 2.9999999999999996 < 3 = (2 − λ)/λ at λ = 0.5: on the boundary
        // (Nerlove 1958: the adaptive cobweb is stable iff b/d < (2 − λ)/λ)
        let at = |b: f64, d: f64| Slopes { b, d }.nerlove(0.5);
        let c = at(0.3, 0.1);
        assert!(!c.holds && c.on_boundary, "{c:?}");
        assert_eq!(c.status(), "on the boundary");
        assert!(at(0.29, 0.1).holds);
        assert_eq!(at(0.31, 0.1).status(), "fails");
        // Ezekiel (1938): b = d is the boundary of b < d
        let n = Slopes {
            b: 0.7,
            d: 0.7000000000000001,
        }
        .ezekiel();
        assert_eq!(n.status(), "on the boundary");
    }
}
