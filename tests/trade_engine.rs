//! The open economy in the period engine: private trade at import and export parity, the agency
//! trading on the kinked curve, border measures, and the world price on its own random stream.
//! Every check names its source or derives its closed form here.

mod common;
use common::phi;

use furrow::engine::{Model, PeriodRecord, PeriodShock};
use furrow::policies::file::{policy_for_market, policy_from_table};
use furrow::policies::PolicySpec;
use furrow::scenario::{market_from_table, parse_toml, Scenario};
use furrow::stochastic::ShockStream;

fn market(text: &str) -> Scenario {
    market_from_table("m.toml", parse_toml("m.toml", text).unwrap()).unwrap()
}

fn policy(text: &str) -> PolicySpec {
    let t = parse_toml("p.toml", &format!("[policy]\nname = \"p\"\n{text}")).unwrap();
    policy_from_table("p.toml", t).unwrap()
}

/// Constant-elasticity demand through (480, 210) with elasticity −0.25, supply so inelastic that
/// planting is fixed at Q̄ = 480 to within 10⁻⁴, naive farmers, lognormal yields with CV `cv`.
fn open_market(trade: &str, cv: f64) -> Scenario {
    market(&format!(
        "[demand]\nform = \"constant-elasticity\"\nat_price = 210.0\nat_quantity = 480.0\n\
         elasticity = -0.25\n[supply]\nform = \"linear\"\nat_price = 210.0\nat_quantity = 480.0\n\
         elasticity = 0.000001\n[expectations]\nrule = \"naive\"\n[run]\ninitial_price = 210.0\n\
         periods = 10\nseed = 11\n[shocks]\nyield_cv = {cv}\n{trade}"
    ))
}

const FREE: &str = "[trade]\nworld_price = 210.0\nimport_cost = 20.0\nexport_cost = 20.0\n";

/// Simulates `periods` seasons of replication 0's shocks (world price on its own stream).
fn path(s: &Scenario, p: &PolicySpec, periods: usize) -> Vec<PeriodRecord> {
    let mut stream = ShockStream::for_scenario(s, 0);
    let shocks: Vec<PeriodShock> = (0..periods).map(|_| stream.next_shock()).collect();
    Model::new(s, p).run(periods, |t| shocks[t - 1]).unwrap()
}

/// D(P) = 480 (P/210)^−0.25.
fn demand(p: f64) -> f64 {
    480.0 * (p / 210.0).powf(-0.25)
}

#[test]
fn free_trade_shares_and_mean_trade_match_the_lognormal_closed_form() {
    // Derived here. Planting is fixed at Q̄, the harvest is Q̄·Y with ln Y ~ N(−σ²/2, σ²),
    // σ² = ln(1 + cv²). Traders import iff the untraded price exceeds import parity P_m, i.e. iff
    // Q̄Y < D(P_m), i.e. Y < k_m = D(P_m)/Q̄: P(import) = Φ(d_m), d_m = (ln k_m + σ²/2)/σ; they
    // export iff Y > k_x = D(P_x)/Q̄: P(export) = 1 − Φ(d_x). With the lognormal partial
    // expectation E[Y·1{Y < k}] = Φ((ln k − σ²/2)/σ) (Aitchison and Brown 1957, ch. 2; the same
    // integral as in Black and Scholes 1973):
    //   E[M] = E[(D(P_m) − Q̄Y)⁺] = Q̄ (k_m Φ(d_m) − Φ(d_m − σ)),
    //   E[X] = E[(Q̄Y − D(P_x))⁺] = Q̄ (Φ(σ − d_x) − k_x (1 − Φ(d_x))).
    let cv = 0.2;
    let s = open_market(FREE, cv);
    let n = 100_000;
    let records = path(&s, &PolicySpec::none(), n);
    let sigma = (1.0f64 + cv * cv).ln().sqrt();
    let q_bar = 480.0;
    let (pm, px) = (230.0, 190.0);
    let k_m = demand(pm) / q_bar;
    let k_x = demand(px) / q_bar;
    let d_m = (k_m.ln() + 0.5 * sigma * sigma) / sigma;
    let d_x = (k_x.ln() + 0.5 * sigma * sigma) / sigma;
    let share_m = phi(d_m);
    let share_x = 1.0 - phi(d_x);
    let mean_m = q_bar * (k_m * phi(d_m) - phi(d_m - sigma));
    let mean_x = q_bar * (phi(sigma - d_x) - k_x * (1.0 - phi(d_x)));
    let nf = n as f64;
    let got_share_m = records.iter().filter(|r| r.imports() > 0.0).count() as f64 / nf;
    let got_share_x = records.iter().filter(|r| r.exports() > 0.0).count() as f64 / nf;
    let got_m = records.iter().map(|r| r.imports()).sum::<f64>() / nf;
    let got_x = records.iter().map(|r| r.exports()).sum::<f64>() / nf;
    // binomial standard error √(p(1 − p)/n) ≤ 0.0016; five of them
    assert!(
        (got_share_m - share_m).abs() < 0.008,
        "{got_share_m} vs {share_m}"
    );
    assert!(
        (got_share_x - share_x).abs() < 0.008,
        "{got_share_x} vs {share_x}"
    );
    // mean trade: sd of M is below Q̄·cv = 96, so its standard error below 0.31; five of them
    assert!((got_m - mean_m).abs() < 1.6, "{got_m} vs {mean_m}");
    assert!((got_x - mean_x).abs() < 1.6, "{got_x} vs {mean_x}");
    for r in &records {
        // the price never leaves [export parity, import parity] (free trade, no quota)
        assert!(r.price >= px - 1e-9 && r.price <= pm + 1e-9, "{}", r.price);
        // never both; consumption C = Q + M − X
        assert!(r.imports() == 0.0 || r.exports() == 0.0);
        let c = r.harvest + r.imports() - r.exports();
        assert!(
            (r.consumption - c).abs() < 1e-9 * c,
            "{} vs {c}",
            r.consumption
        );
        // trade happens exactly when the untraded price leaves the parity band
        let untraded = 210.0 * (r.harvest / 480.0).powf(-4.0);
        assert_eq!(r.imports() > 0.0, untraded > pm, "{untraded}");
        assert_eq!(r.exports() > 0.0, untraded < px, "{untraded}");
        if r.imports() > 0.0 {
            assert_eq!(r.price, pm);
        }
        if r.exports() > 0.0 {
            assert_eq!(r.price, px);
        }
    }
}

#[test]
fn a_band_inside_the_parities_trades_only_strictly_inside_and_one_below_export_parity_never_buys() {
    // Derived here: a band [200, 220] strictly inside [190, 230]. The agency buys to hold the price
    // at 200 and sells to hold it at 220; traders act only at the parities, so in a season the
    // agency trades the price is a band edge, strictly inside, and no private trade happens —
    // unless the store is full or empty, when the price goes on to a parity.
    let s = open_market(FREE, 0.2);
    let band = policy(
        "[stock]\nbuy_below = 200.0\nsell_above = 220.0\ncapacity = 1000000.0\ninitial = 500.0\n",
    );
    let records = path(&s, &band, 20_000);
    let (mut bought, mut sold) = (0, 0);
    for r in &records {
        if r.purchases > 0.0 {
            bought += 1;
            assert_eq!((r.imports(), r.exports()), (0.0, 0.0));
            assert!((r.price - 200.0).abs() < 1e-9, "{}", r.price);
        }
        if r.releases > 0.0 && r.stock > 0.0 {
            sold += 1;
            assert_eq!((r.imports(), r.exports()), (0.0, 0.0));
            assert!((r.price - 220.0).abs() < 1e-9, "{}", r.price);
        }
        if r.imports() > 0.0 || r.exports() > 0.0 {
            assert!(r.price <= 190.0 + 1e-9 || r.price >= 230.0 - 1e-9);
        }
    }
    assert!(bought > 100 && sold > 100, "{bought} {sold}");
    // a buy price below export parity: traders export first, the agency never buys (Williams and
    // Wright 1991, ch. 9: a floor below export parity is never defended by public stocks)
    let low = policy("[stock]\nbuy_below = 185.0\nsell_above = 250.0\ncapacity = 1000000.0\n");
    let records = path(&s, &low, 20_000);
    assert!(records.iter().all(|r| r.purchases == 0.0));
    assert!(records.iter().any(|r| r.exports() > 0.0));
    // and a purchase floor below export parity likewise
    let floor = policy("[floor]\nprice = 189.0\n");
    let records = path(&s, &floor, 20_000);
    assert!(records.iter().all(|r| r.purchases == 0.0));
}

#[test]
fn an_export_ban_with_a_low_world_price_is_the_closed_market_in_surplus_seasons() {
    // Derived here: with a world price of 100 export parity is 80, far below any price the market
    // reaches; a ban removes even that. Without imports (import parity above every price: import
    // cost 10⁶) the market is closed in every season, so the whole path must be the closed
    // market's to the last bit; with imports possible (import cost 20, parity 120), in each season
    // without imports the price must be the closed market's D⁻¹(Q) exactly.
    let ban = policy("[border]\nexport_ban = true\n");
    let closed = open_market("", 0.2);
    let no_imports = open_market(
        "[trade]\nworld_price = 100.0\nimport_cost = 1000000.0\nexport_cost = 20.0\n",
        0.2,
    );
    let a = path(&closed, &PolicySpec::none(), 2_000);
    let b = path(&no_imports, &ban, 2_000);
    for (x, y) in a.iter().zip(&b) {
        assert_eq!(y.exports(), 0.0);
        assert_eq!(y.imports(), 0.0);
        let mut y = *y;
        y.trade = None;
        assert_eq!(*x, y);
    }
    let cheap = open_market(
        "[trade]\nworld_price = 200.0\nimport_cost = 20.0\nexport_cost = 20.0\n",
        0.2,
    );
    let records = path(&cheap, &ban, 5_000);
    let mut surplus = 0;
    for r in &records {
        assert_eq!(r.exports(), 0.0);
        if r.imports() == 0.0 {
            surplus += 1;
            let closed_price = 210.0 * (r.harvest / 480.0).powf(-4.0);
            assert!((r.price - closed_price).abs() < 1e-9 * closed_price);
            assert_eq!(r.consumption, r.harvest);
        } else {
            assert_eq!(r.price, 220.0);
        }
    }
    assert!(surplus > 1000, "{surplus}");
}

#[test]
fn a_specific_tariff_moves_import_parity_by_itself_and_collects_tau_per_unit() {
    // Derived here (the definition of a specific duty): import parity = W + import cost + τ, and the
    // treasury collects τ·M each season; the border receipt comes off the fiscal cost.
    let s = open_market(FREE, 0.2);
    let tau = 12.5;
    let tariff = policy(&format!("[border]\nimport_tariff = {tau}\n"));
    let free = path(&s, &PolicySpec::none(), 5_000);
    let taxed = path(&s, &tariff, 5_000);
    let parity = |rs: &[PeriodRecord]| rs.iter().find(|r| r.imports() > 0.0).unwrap().price;
    assert_eq!(parity(&taxed) - parity(&free), tau);
    let mut seasons = 0;
    for r in &taxed {
        let m = r.imports();
        assert!((r.border_revenue() - tau * m).abs() <= 1e-12 * (tau * m).max(1.0));
        if m > 0.0 {
            seasons += 1;
            assert_eq!(r.price, 210.0 + 20.0 + tau);
            assert!((r.fiscal_cost + tau * m).abs() <= 1e-9 * tau * m);
        }
    }
    assert!(seasons > 500, "{seasons}");
}

#[test]
fn a_floor_above_import_parity_without_limits_is_refused_naming_both_keys() {
    // Common practice, no source: an unlimited agency defending a price above import parity would
    // buy every unit imported; the refusal names the floor and the world price.
    let s = open_market(FREE, 0.2);
    let floor = policy("[floor]\nprice = 240.0\n");
    let err = policy_for_market(&s, &floor).unwrap_err().to_string();
    assert!(err.contains("floor.price"), "{err}");
    assert!(err.contains("trade.world_price"), "{err}");
    // with a capacity it is a policy like any other
    let limited = policy("[stock]\nbuy_below = 240.0\nsell_above = 260.0\ncapacity = 50.0\n");
    assert!(policy_for_market(&s, &limited).is_ok());
    // and a varying world price that falls below the floor ends the run as diverging
    let varying = open_market(
        "[trade]\nworld_price = 250.0\nworld_price_cv = 0.3\nimport_cost = 20.0\nexport_cost = 20.0\n",
        0.2,
    );
    let floor = policy("[floor]\nprice = 240.0\n");
    assert!(policy_for_market(&varying, &floor).is_ok());
    let mut stream = ShockStream::for_scenario(&varying, 0);
    let shocks: Vec<PeriodShock> = (0..500).map(|_| stream.next_shock()).collect();
    let err = Model::new(&varying, &floor)
        .run(500, |t| shocks[t - 1])
        .unwrap_err()
        .to_string();
    assert!(
        err.contains("floor.price") && err.contains("trade.world_price"),
        "{err}"
    );
}

#[test]
fn the_world_price_is_lognormal_with_mean_one_and_its_own_stream() {
    // Lognormal moments (Aitchison and Brown 1957): factor exp(x − s²/2), x ~ N(0, s²),
    // s² = ln(1 + cv²), has mean 1 and coefficient of variation cv; AR(1) with a stationary start
    // keeps that law in every period, and the lag-one correlation of x is ρ (Hamilton 1994,
    // ch. 3). The weather draws are those of the market without a border, bit for bit.
    let cv = 0.15;
    let rho = 0.6;
    let s = open_market(
        &format!(
            "[trade]\nworld_price = 210.0\nworld_price_cv = {cv}\nworld_price_persistence = {rho}\n\
             import_cost = 20.0\nexport_cost = 20.0\n"
        ),
        0.2,
    );
    let closed = open_market("", 0.2);
    let mut a = ShockStream::for_scenario(&s, 3);
    let mut b = ShockStream::for_scenario(&closed, 3);
    let n = 200_000;
    let mut factors = Vec::with_capacity(n);
    for _ in 0..n {
        let x = a.next_shock();
        let y = b.next_shock();
        assert_eq!(
            (x.yield_factor, x.supply, x.demand),
            (y.yield_factor, y.supply, y.demand)
        );
        assert_eq!(y.world_factor, 1.0);
        factors.push(x.world_factor);
    }
    let nf = n as f64;
    let mean = factors.iter().sum::<f64>() / nf;
    let sd = (factors.iter().map(|f| (f - mean).powi(2)).sum::<f64>() / (nf - 1.0)).sqrt();
    // persistence inflates the standard error of the mean by √((1 + ρ)/(1 − ρ)) = 2
    assert!((mean - 1.0).abs() < 5.0 * 2.0 * cv / nf.sqrt(), "{mean}");
    assert!((sd - cv).abs() < 0.003, "{sd}");
    let s2 = (1.0f64 + cv * cv).ln();
    let xs: Vec<f64> = factors.iter().map(|f| f.ln() + 0.5 * s2).collect();
    let lag = xs.windows(2).map(|w| w[0] * w[1]).sum::<f64>() / (nf - 1.0) / s2;
    assert!((lag - rho).abs() < 0.01, "{lag}");
    // a market whose only randomness is the world price is stochastic
    let only_world = open_market(
        "[trade]\nworld_price = 210.0\nworld_price_cv = 0.1\nimport_cost = 20.0\nexport_cost = 20.0\n",
        0.0,
    );
    assert!(!only_world.is_deterministic());
    assert!(open_market(FREE, 0.0).is_deterministic());
}

#[test]
fn rational_farmers_expect_import_parity_when_the_closed_steady_price_is_above_it() {
    // Derived here: without shocks, the rational expectation solves P^e = P(S(P^e)), P the price
    // on the kinked curve. The closed steady state is (480, 210); with a world price of 150 and
    // costs 20, import parity 170 is below 210: at P^e = 170 farmers plant S(170) < D(170), the
    // gap is imported and the price is 170 = P^e. So P^e = 170 in every season and imports are
    // D(170) − S(170), S linear through (480, 210) with elasticity 0.2.
    let s = market(
        "[demand]\nform = \"constant-elasticity\"\nat_price = 210.0\nat_quantity = 480.0\n\
         elasticity = -0.25\n[supply]\nform = \"linear\"\nat_price = 210.0\nat_quantity = 480.0\n\
         elasticity = 0.2\n[expectations]\nrule = \"rational\"\n[run]\ninitial_price = 210.0\n\
         periods = 5\n[trade]\nworld_price = 150.0\nimport_cost = 20.0\nexport_cost = 20.0\n",
    );
    let records = Model::new(&s, &PolicySpec::none())
        .run(5, |_| PeriodShock::NONE)
        .unwrap();
    let slope = 0.2 * 480.0 / 210.0;
    let supply_170 = 480.0 + slope * (170.0 - 210.0);
    for r in &records {
        assert!(
            (r.expected_price - 170.0).abs() < 1e-6,
            "{}",
            r.expected_price
        );
        assert!((r.price - 170.0).abs() < 1e-9);
        assert!((r.imports() - (demand(170.0) - supply_170)).abs() < 1e-5);
    }
}
