//! How a failure maps to the program's exit code (kept here so that every caller — the binary, tests,
//! programs embedding furrow — classifies errors the same way).

use std::error::Error;

/// A run that failed for a reason other than bad input (exit code 1).
#[derive(Debug, thiserror::Error)]
#[error("{0}")]
pub struct RunFailed(pub String);

/// Exit code of a failed verb: 1 when a run failed (an error in the chain is a diverging path,
/// [`crate::engine::Diverged`], [`RunFailed`], or a storage solve that did not converge), 2 for anything else (bad input or usage).
pub fn exit_code(err: &(dyn Error + 'static)) -> u8 {
    let mut e: Option<&(dyn Error + 'static)> = Some(err);
    while let Some(cur) = e {
        if cur.downcast_ref::<crate::engine::Diverged>().is_some()
            || cur.downcast_ref::<RunFailed>().is_some()
            || storage_run_failure(cur)
        {
            return 1;
        }
        e = cur.source();
    }
    2
}

/// True when `e` is a storage solve that ran but failed numerically, directly or inside a compare
/// error (which forwards the solver's error transparently, so the chain does not reach it).
fn storage_run_failure(e: &(dyn Error + 'static)) -> bool {
    use crate::compare::CompareError;
    use crate::storage::StorageError;
    if let Some(s) = e.downcast_ref::<StorageError>() {
        return s.is_run_failure();
    }
    matches!(e.downcast_ref::<CompareError>(), Some(CompareError::Storage(s)) if s.is_run_failure())
}
