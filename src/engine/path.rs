//! The path model: what the period engine and the solved storage equilibrium have in common.
//!
//! A [`PathModel`] starts a path ([`PathModel::start`]) that a [`Stepper`] advances one period at a
//! time on the shock it is handed, returning a [`PeriodRecord`] whose books are made up by the one
//! booking, [`PeriodRecord::book`]. A model never draws its own shocks: the caller draws a
//! replication's shocks once and hands the same values to every model of the replication (and can
//! step several models of one replication in lockstep, one [`Stepper`] each).

use super::columns::{EachLane, LaneStepper, LANES};
use super::{Diverged, Model, PeriodRecord, PeriodShock, Simulator};

/// A path in progress: advances one period on the shock it is handed.
pub trait Stepper {
    /// The next period under `shock`, or why the path left the region where the model means
    /// anything.
    fn step(&mut self, shock: &PeriodShock) -> Result<PeriodRecord, Diverged>;
}

/// A market under one policy, ready to simulate paths: the period engine ([`Model`]) or a solved
/// storage equilibrium (`storage::SolvedStorage`). Models are shared across threads; each path has
/// its own [`Stepper`].
pub trait PathModel: Sync {
    /// The stepper of one path.
    type Stepper<'a>: Stepper
    where
        Self: 'a;

    /// Up to [`LANES`] paths stepped together (the Monte Carlo's chunk of replications).
    type Lanes<'a>: LaneStepper
    where
        Self: 'a;

    /// The policy's display name.
    fn name(&self) -> &str;

    /// A fresh path at period 0.
    fn start(&self) -> Self::Stepper<'_>;

    /// `n` (≤ [`LANES`]) fresh paths at period 0, stepped together.
    fn start_lanes(&self, n: usize) -> Self::Lanes<'_>;
}

/// `n` fresh paths of `model`, each its own [`Stepper`] ([`EachLane`]).
pub fn each_lane<M: PathModel>(model: &M, n: usize) -> EachLane<M::Stepper<'_>> {
    debug_assert!(n <= LANES);
    EachLane((0..n).map(|_| model.start()).collect())
}

impl Stepper for Simulator<'_> {
    #[inline(always)]
    fn step(&mut self, shock: &PeriodShock) -> Result<PeriodRecord, Diverged> {
        self.advance(shock)
    }
}

impl PathModel for Model {
    type Stepper<'a> = Simulator<'a>;
    type Lanes<'a> = super::ModelLanes<'a>;

    fn name(&self) -> &str {
        &self.policy.name
    }

    #[inline]
    fn start(&self) -> Simulator<'_> {
        self.simulator()
    }

    /// Phase by phase ([`super::ModelLanes`]) when the model allows it, else lane by lane.
    fn start_lanes(&self, n: usize) -> Self::Lanes<'_> {
        super::ModelLanes::new(self, n)
    }
}
