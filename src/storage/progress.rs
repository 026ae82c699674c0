//! Progress of storage solves, for a front end to show (the library never prints).
//!
//! A front end installs one [`SolveProgress`] for the process ([`set_progress`]); every solve then
//! reports its stages and iterations to it, from whichever thread runs the solve (`compare` solves
//! several equilibria in parallel, so events of different solves interleave). Without one installed
//! reporting costs one uncontended lock read per iteration. Nothing here changes a result.

use std::sync::{Arc, RwLock};

/// What a solve is doing.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ProgressEvent {
    /// A solve started (`public`: with a public stock, the two-state solve).
    Started { public: bool },
    /// One iteration of the rules ended: the largest change (relative to P*) against the tolerance
    /// it iterates to; `points` is the size of the grid (private × public stock).
    Iteration {
        iteration: usize,
        change: f64,
        tolerance: f64,
        points: usize,
    },
    /// A later stage of the same solve.
    Stage(Stage),
    /// A solve ended (solved or failed).
    Finished,
}

/// The stages after the first iteration to the tolerance.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Stage {
    /// Halving grid intervals where the residual is too large, then solving again.
    Refining,
    /// Extending the private-stock grid over the indicator path, then solving again.
    Covering,
    /// Simulating the indicator path and measuring the Euler residual over it.
    Checking,
}

/// Receives the events of every storage solve in the process.
pub trait SolveProgress: Send + Sync {
    fn event(&self, event: ProgressEvent);
}

static HOOK: RwLock<Option<Arc<dyn SolveProgress>>> = RwLock::new(None);

/// Installs `hook` for every later solve of this process (`None`: report to nobody).
pub fn set_progress(hook: Option<Arc<dyn SolveProgress>>) {
    if let Ok(mut h) = HOOK.write() {
        *h = hook;
    }
}

/// Reports `event` to the installed hook, if any.
pub(crate) fn report(event: ProgressEvent) {
    if let Ok(h) = HOOK.read() {
        if let Some(hook) = h.as_ref() {
            hook.event(event);
        }
    }
}
