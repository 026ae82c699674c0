//! Convergence that means convergence, and a grid that covers the paths.
//!
//! - Markets with tiny yield risk (cv 1e-6 … 1e-3) solve to an Euler residual below 1e-6 (the
//!   relative Euler-equation error of Judd 1992, section 5), measured over the range simulated paths
//!   reach; an iterate stopped early is refused with its residual (exit code 1 at the command line).
//! - A market where carrying costs nothing but interest (k = 0, δ = 0) lets long paths carry more
//!   than the steady-state harvest; the grid is extended so that no simulated period falls outside it
//!   (`extrapolated_share` = 0).

mod common;

use furrow::policies::PolicySpec;
use furrow::scenario::{apply_override, market_from_table, parse_toml, Scenario};
use furrow::storage::{self, SolveOptions, StorageError};

const EXAMPLE: &str = "examples/veldmark_storers.toml";

fn example_with(overrides: &[(&str, toml::Value)]) -> Scenario {
    let text = std::fs::read_to_string(EXAMPLE).unwrap();
    let mut table = parse_toml(EXAMPLE, &text).unwrap();
    for (k, v) in overrides {
        apply_override(&mut table, k, v.clone()).unwrap();
    }
    market_from_table(EXAMPLE, table).unwrap()
}

#[test]
fn tiny_risk_markets_solve_to_a_residual_below_1e_minus_6() {
    for cv in [1e-6, 1e-5, 1e-4, 1e-3] {
        for linear in [false, true] {
            let mut o = vec![("shocks.yield_cv", toml::Value::Float(cv))];
            if linear {
                o.push(("demand.form", toml::Value::String("linear".into())));
            }
            let s = example_with(&o);
            let r =
                storage::summary(&s, &PolicySpec::none(), &SolveOptions::default(), 21).unwrap();
            assert!(
                r.euler_residual_max < 1e-6,
                "cv {cv}, linear {linear}: residual {:e} after {} iterations",
                r.euler_residual_max,
                r.iterations
            );
            // and the residual is not measured on a trivially small range: the check reaches past
            // the stockout point, where storers hold stock
            let last = r.grid.last().unwrap();
            assert!(last.private_stock > 0.0, "cv {cv}: {last:?}");
        }
    }
}

#[test]
fn an_iterate_stopped_early_is_refused_with_its_residual() {
    let s = example_with(&[]);
    let loose = SolveOptions {
        tolerance: 0.05,
        ..SolveOptions::default()
    };
    match storage::solve(&s, &PolicySpec::none(), &loose) {
        Err(e @ StorageError::Inaccurate { residual, .. }) => {
            assert!(residual > 1e-6, "{residual}");
            assert!(e.is_run_failure());
        }
        other => panic!("expected a refused solve, got {other:?}"),
    }
    let out = common::bin()
        .args(["storage", EXAMPLE, "--tolerance", "0.05"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("did not converge") && err.contains("residual"),
        "{err}"
    );
}

#[test]
fn a_zero_cost_zero_loss_market_keeps_every_simulated_period_on_the_grid() {
    let s = example_with(&[
        ("storers.storage_cost", toml::Value::Float(0.0)),
        ("storers.loss_rate", toml::Value::Float(0.0)),
    ]);
    let r = storage::summary(&s, &PolicySpec::none(), &SolveOptions::default(), 21).unwrap();
    assert_eq!(r.extrapolated_share, 0.0);
    assert!(r.euler_residual_max < 1e-6, "{:e}", r.euler_residual_max);
    // such a market carries a lot: the long path holds more than a tenth of the steady-state harvest
    let solved = storage::SolvedStorage::new(&s, &PolicySpec::none()).unwrap();
    let most = solved
        .path(0, 10_200)
        .iter()
        .map(|p| p.private_stock)
        .fold(0.0, f64::max);
    assert!(most > 0.1 * s.steady.quantity, "{most}");
}
