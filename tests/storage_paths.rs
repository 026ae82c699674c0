//! Simulated paths with a public stock read next season's expected price off the storers'
//! arbitrage condition instead of integrating it again; both must agree to the equilibrium's accuracy.

use furrow::policies::file::load_policy;
use furrow::scenario::load_market;
use furrow::storage::{self, simulate, SolveOptions};

#[test]
fn expectation_backed_out_of_the_arbitrage_condition_matches_the_integrated_one() {
    // The complementarity condition of the competitive storage model (Wright and Williams 1982;
    // Deaton and Laroque 1992): P + k = β·E[P'] wherever private stock is carried, so
    // E[P'] = (P + k)/β; where none is carried, β·E[P' | x = 0] − k is the stockout price. The
    // integrated expectation (breakpoint-splitting quadrature) is the reference.
    let s = load_market("examples/veldmark_storers.toml").unwrap();
    for file in ["policies/price_band.toml", "policies/drawdown_reserve.toml"] {
        let p = load_policy(file).unwrap();
        let eq = storage::solve(&s, &p, &SolveOptions::default()).unwrap();
        let path = simulate(&eq, &s.shocks, s.run.seed, 3, 20.0, 150);
        let (mut carried, mut empty) = (0, 0);
        for r in &path {
            let (q_fast, e_fast) = eq.plant_after(r.price, r.private_stock, r.public_stock);
            let (q_exact, e_exact) = eq.plant_and_expect(r.private_stock, r.public_stock);
            assert!(
                (e_fast - e_exact).abs() < 1e-5 * e_exact,
                "{file} period {}: {e_fast} vs {e_exact}",
                r.period
            );
            assert!((q_fast - q_exact).abs() < 1e-5 * q_exact);
            if r.private_stock > 0.0 {
                carried += 1;
            } else {
                empty += 1;
            }
        }
        assert!(carried > 10 && empty > 10, "{file}: {carried} / {empty}");
    }
}
