use super::*;
use crate::policies::PolicySpec;
use crate::scenario;
use approx::assert_relative_eq;

pub(crate) fn market(extra: &str) -> Scenario {
    let text = format!(
        "[demand]\nintercept = 120.0\nslope = -0.8\n[supply]\nintercept = -10.0\nslope = 0.5\n{extra}"
    );
    let t = scenario::parse_toml("test.toml", &text).unwrap();
    scenario::market_from_table("test.toml", t).unwrap()
}

pub(crate) fn policy(text: &str) -> PolicySpec {
    let t = scenario::parse_toml("p.toml", &format!("[policy]\nname = \"p\"\n{text}")).unwrap();
    crate::policies::file::policy_from_table("p.toml", t).unwrap()
}

#[test]
fn naive_linear_path_is_the_closed_form() {
    // Ezekiel (1938), cobweb theorem: P_t = P* + (P0 − P*)(−b/d)^t with b = supply slope, d = |demand slope|
    let s = market("[run]\ninitial_price = 90.0\nperiods = 30\n");
    let model = Model::new(&s, &PolicySpec::none());
    let path = model.run(30, |_| PeriodShock::NONE).unwrap();
    let ratio: f64 = -0.5 / 0.8;
    for r in &path {
        let closed = 100.0 + (90.0 - 100.0) * ratio.powi(r.period as i32);
        assert_relative_eq!(r.price, closed, max_relative = 1e-12);
    }
}

#[test]
fn rational_without_shocks_is_the_steady_state() {
    // Muth (1961): perfect foresight in a deterministic market plants on P* from period 1.
    let s = market("[expectations]\nrule = \"rational\"\n[run]\ninitial_price = 70.0\n");
    let model = Model::new(&s, &PolicySpec::none());
    let path = model.run(5, |_| PeriodShock::NONE).unwrap();
    for r in &path {
        assert_relative_eq!(r.expected_price, 100.0, max_relative = 1e-10);
        assert_relative_eq!(r.price, 100.0, max_relative = 1e-10);
    }
}

#[test]
fn purchase_floor_stock_grows_by_excess_supply() {
    // Price-support analysis (e.g. Gardner 1987, ch. 4, from memory): with the floor F above P* and
    // announced, farmers plant S(F) and the agency removes S(F) − D(F) each period.
    let s = market("[run]\ninitial_price = 100.0\n");
    let p = policy("[floor]\nprice = 110.0\ninstrument = \"purchase\"\n");
    let model = Model::new(&s, &p);
    let path = model.run(6, |_| PeriodShock::NONE).unwrap();
    let excess = (-10.0 + 0.5 * 110.0) - (120.0 - 0.8 * 110.0);
    for (i, r) in path.iter().enumerate() {
        assert_relative_eq!(r.price, 110.0, max_relative = 1e-12);
        assert_relative_eq!(r.stock, excess * (i + 1) as f64, max_relative = 1e-12);
    }
}

#[test]
fn deficiency_payment_costs_the_gap_on_the_harvest() {
    let s = market("[run]\ninitial_price = 100.0\n");
    let p = policy("[floor]\nprice = 110.0\ninstrument = \"deficiency-payment\"\n");
    let model = Model::new(&s, &p);
    let path = model.run(4, |_| PeriodShock::NONE).unwrap();
    for r in &path {
        let gap = (110.0 - r.price).max(0.0);
        assert_relative_eq!(r.deficiency_payments, gap * r.harvest, max_relative = 1e-12);
        assert_relative_eq!(r.producer_price, r.price.max(110.0), max_relative = 1e-12);
    }
}

#[test]
fn exploding_market_reports_divergence() {
    // supply steeper than demand: |−b/d| > 1 explodes (Ezekiel 1938)
    let text = "[demand]\nintercept = 120.0\nslope = -0.5\n[supply]\nintercept = -10.0\nslope = 0.8\n[run]\ninitial_price = 90.0\n";
    let t = scenario::parse_toml("x.toml", text).unwrap();
    let s = scenario::market_from_table("x.toml", t).unwrap();
    let model = Model::new(&s, &PolicySpec::none());
    let err = model.run(200, |_| PeriodShock::NONE).unwrap_err();
    assert!(err.period > 1 && err.period < 200, "{err}");
    assert!(err.to_string().starts_with("diverging"));
}

#[test]
fn purchase_budget_binds_exactly() {
    let s = market("[run]\ninitial_price = 100.0\n");
    let p = policy("[floor]\nprice = 110.0\n[stock]\npurchase_budget = 300.0\n");
    let model = Model::new(&s, &p);
    let path = model.run(3, |_| PeriodShock::NONE).unwrap();
    for r in &path {
        assert!(r.purchase_cost <= 300.0 + 1e-9);
        // the budget binds: spending equals the budget and the price is consistent with the purchases
        assert_relative_eq!(r.purchase_cost, 300.0, max_relative = 1e-9);
        assert_relative_eq!(
            r.price,
            s.market.demand.price_at(r.consumption),
            max_relative = 1e-12
        );
    }
}

#[test]
fn a_band_buys_the_excess_supply_at_its_lower_edge() {
    // Buffer-stock band rule (Newbery and Stiglitz 1981, ch. 30, from memory): when the harvest
    // would clear below the band the agency buys until the price is the lower edge, X = Q − D(p_lo).
    // Naive farmers plant S(130) = 55; alone the market would clear at (120 − 55)/0.8 = 81.25 < 90,
    // so the agency buys 55 − D(90) = 55 − 48 = 7.
    let s = market("[run]\ninitial_price = 130.0\n");
    let p = policy("[stock]\nbuy_below = 90.0\nsell_above = 140.0\ncapacity = 100.0\n");
    let model = Model::new(&s, &p);
    let r = model.run(1, |_| PeriodShock::NONE).unwrap()[0];
    assert_relative_eq!(r.harvest, 55.0, max_relative = 1e-12);
    assert_relative_eq!(r.price, 90.0, max_relative = 1e-12);
    assert_relative_eq!(r.purchases, 7.0, max_relative = 1e-12);
    assert_relative_eq!(r.consumption, 48.0, max_relative = 1e-12);
    assert_relative_eq!(r.stock, 7.0, max_relative = 1e-12);
}
