//! Stability of the linearised model, regime by regime (being built: the types below are the
//! contract other modules use).

use serde::Serialize;

use crate::curves::SteadyState;
use crate::scenario::{PolicySpec, Scenario};

/// A complex eigenvalue.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Eigenvalue {
    /// Real part.
    pub re: f64,
    /// Imaginary part.
    pub im: f64,
}

/// Stable, neutral or unstable.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Verdict {
    /// Spectral radius below 1 − tolerance.
    Stable,
    /// Spectral radius within the tolerance of 1.
    Neutral,
    /// Spectral radius above 1 + tolerance.
    Unstable,
}

impl Verdict {
    /// The word printed in tables.
    pub fn as_str(&self) -> &'static str {
        match self {
            Verdict::Stable => "stable",
            Verdict::Neutral => "neutral",
            Verdict::Unstable => "unstable",
        }
    }
}

/// One regime's linearisation.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Regime {
    /// Regime name, e.g. "free market".
    pub name: String,
    /// Eigenvalues of the Jacobian.
    pub eigenvalues: Vec<Eigenvalue>,
    /// Largest modulus.
    pub spectral_radius: f64,
    /// Verdict from the spectral radius.
    pub verdict: Verdict,
    /// The dominant eigenvalue is negative or complex.
    pub oscillating: bool,
    /// 2π/|arg λ| of the dominant eigenvalue (2 for a negative real one, None for a positive real one).
    pub period: Option<f64>,
    /// ln 0.5 / ln ρ (None when ρ ≥ 1).
    pub half_life: Option<f64>,
}

/// The stability report of a market under a policy.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StabilityReport {
    /// The steady state the linearisation is taken at.
    pub steady_state: SteadyState,
    /// Regimes, the one holding the steady state first.
    pub regimes: Vec<Regime>,
    /// Verdict of the regime that holds the steady state.
    pub verdict: Verdict,
    /// The largest modulus in that regime.
    pub spectral_radius: f64,
}

/// Why no stability report could be made.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum StabilityError {
    /// Not built yet.
    #[error("stability analysis is not built yet")]
    NotBuilt,
}

/// Analyses `scenario` under `policy`.
pub fn analyse(
    _scenario: &Scenario,
    _policy: &PolicySpec,
) -> Result<StabilityReport, StabilityError> {
    Err(StabilityError::NotBuilt)
}
