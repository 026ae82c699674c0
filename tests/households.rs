//! Household groups ("who gains"): the first- and second-order welfare of each `[[households]]`
//! group, checked against closed forms derived here, against the engine's own consumer and
//! producer surplus, and against a direct recomputation; plus the input checks.

mod common;

use common::{bin, stdout_of};
use furrow::compare::{compare_with_households, Fans, Households};
use furrow::engine::{Model, PeriodShock};
use furrow::households::{HouseholdGroup, HouseholdResult};
use furrow::policies::file::policy_from_str;
use furrow::policies::PolicySpec;
use furrow::scenario::{market_from_str, Scenario};
use furrow::stochastic::{consumer_price, draw_shocks, NoProgress};

/// Demand Q = 120 − 0.8 P, supply Q = −10 + 0.5 P^e: P* = 100, Q* = 40, so at the steady state
/// ε_d = −0.8·100/40 = −2 and ε_s = 0.5·100/40 = 1.25 (derived by hand).
const CURVES: &str =
    "[demand]\nintercept = 120.0\nslope = -0.8\n[supply]\nintercept = -10.0\nslope = 0.5\n";
const P_STAR: f64 = 100.0;
const Q_STAR: f64 = 40.0;
const EPS_S: f64 = 1.25;
const EPS_D: f64 = -2.0;

/// Three groups whose production and consumption add up to the market's at the steady state
/// (Σ pop·income·PR = Σ pop·income·CR = 426 per household; derived by hand).
const GROUPS: &str = "\
[[households]]
name = \"Smallholders, hills\"
population_share = 0.35
income = 1200.0
production_share = 0.30
consumption_share = 0.20

[[households]]
name = \"Large farms\"
population_share = 0.15
income = 4000.0
production_share = 0.50
consumption_share = 0.05

[[households]]
name = \"Towns\"
population_share = 0.50
income = 1500.0
production_share = 0.0
consumption_share = 0.416
";

/// Production (= consumption) value per household at the steady state, Σ pop·income·PR.
const VALUE_PER_HOUSEHOLD: f64 = 0.35 * 1200.0 * 0.30 + 0.15 * 4000.0 * 0.50;

fn market(run: &str, extra: &str) -> Scenario {
    market_from_str(
        "hh.toml",
        &format!("{CURVES}[expectations]\nrule = \"naive\"\n[run]\n{run}\n{extra}\n{GROUPS}"),
    )
    .unwrap()
}

fn policy(body: &str) -> PolicySpec {
    policy_from_str("p.toml", &format!("[policy]\nname = \"p\"\n{body}")).unwrap()
}

fn run(s: &Scenario, p: &[PolicySpec]) -> (furrow::compare::CompareResult, HouseholdResult) {
    let (r, h) =
        compare_with_households(s, p, &NoProgress, Fans::Keep, Households::Measure).unwrap();
    (r, h.expect("the market has groups"))
}

fn close(got: f64, want: f64, tol: f64, what: &str) {
    assert!(
        (got - want).abs() <= tol,
        "{what}: got {got}, want {want} (tolerance {tol})"
    );
}

#[test]
fn a_ten_percent_rise_gives_a_net_seller_one_percent_of_income_first_order() {
    // A purchase floor at 110 = 1.1·P*, not announced, from the steady state with naive farmers:
    // the agency holds the price at 110 in every season (it buys what consumers leave), while the
    // market left alone stays at P* = 100; so Δp/p = 0.10 in every season, for producers and
    // consumers alike. First order (Deaton 1989): NBR·Δp/p = (0.30 − 0.20)·0.10 = 0.010 of income.
    // Second order (Minot and Goletti 2000): + ½·(PR·ε_s − CR·ε_d)·(Δp/p)²
    //   = ½·(0.30·1.25 + 0.20·2)·0.01 = 0.003875 (derived here).
    let s = market(
        "periods = 12\ninitial_price = 100.0\ndiscount_rate = 0.05",
        "",
    );
    let floor = policy("[floor]\nprice = 110.0\ninstrument = \"purchase\"\nannounced = false\n");
    let (_, h) = run(&s, &[floor]);
    close(h.supply_elasticity, EPS_S, 1e-12, "ε_s");
    close(h.demand_elasticity, EPS_D, 1e-12, "ε_d");
    let g = &h.policies[0].outcomes[0];
    close(g.first_order, 0.010, 1e-12, "first order");
    let second = 0.5 * (0.30 * EPS_S - 0.20 * EPS_D) * 0.1 * 0.1;
    close(g.with_response, 0.010 + second, 1e-12, "with response");
    // every group: NBR·0.1 and its own second-order term
    for (grp, o) in h.groups.iter().zip(&h.policies[0].outcomes) {
        let (pr, cr) = (grp.production_share, grp.consumption_share);
        close(o.first_order, (pr - cr) * 0.1, 1e-12, &grp.name);
        let want = (pr - cr) * 0.1 + 0.5 * (pr * EPS_S - cr * EPS_D) * 0.01;
        close(o.with_response, want, 1e-12, &grp.name);
        // money per household: the share of the PV of income, Σ_t 1.05^−t over 12 seasons
        let pv: f64 = (1..=12).map(|t| 1.05f64.powi(-t)).sum();
        close(o.pv_per_household, want * grp.income * pv, 1e-9, "PV");
        // no weather: no price risk
        assert_eq!(o.risk_cost, Some(0.0));
    }
}

#[test]
fn the_group_formulas_are_the_taylor_expansion_of_the_exact_surplus_change() {
    // A household producing q_s(p) = a·p^ε_s and consuming q_c(p) = b·p^ε_d (constant elasticity)
    // gains ∫_{p0}^{p1} (q_s − q_c) dp when the price moves from p0 to p1 = p0(1 + δ). As a share
    // of income y, with PR = p0·q_s(p0)/y and CR = p0·q_c(p0)/y, the first-order formula misses by
    // O(δ²) and the second-order one by O(δ³) (Minot and Goletti 2000; the integral derived here).
    let (pr, cr, es, ed, y) = (0.30, 0.20, 0.6, -0.4, 1000.0);
    let g = HouseholdGroup {
        name: "g".into(),
        population_share: 1.0,
        income: y,
        production_share: pr,
        consumption_share: cr,
    };
    let integral = |share: f64, e: f64, d: f64| {
        // ∫_{p0}^{p0(1+d)} (share·y/p0)·(p/p0)^e dp = share·y·((1 + d)^(e+1) − 1)/(e + 1)
        share * y * ((1.0 + d).powf(e + 1.0) - 1.0) / (e + 1.0)
    };
    let mut last = (f64::NAN, f64::NAN);
    for d in [0.04, 0.02, 0.01] {
        let exact = (integral(pr, es, d) - integral(cr, ed, d)) / y;
        let first = g.first_order(d, d);
        let second = first + g.second_order(d, d, es, ed);
        let (e1, e2) = ((first - exact).abs(), (second - exact).abs());
        // the errors' leading terms: ½(PR·ε_s − CR·ε_d)δ² and (PR·ε_s(ε_s−1) − CR·ε_d(ε_d−1))δ³/6
        close(
            e1,
            0.5 * (pr * es - cr * ed) * d * d,
            0.2 * e1,
            "first-order error",
        );
        let third = (pr * es * (es - 1.0) - cr * ed * (ed - 1.0)) / 6.0 * d.powi(3);
        close(e2, third.abs(), 0.2 * e2, "second-order error");
        if last.0.is_finite() {
            // halving δ quarters the first-order error and divides the second-order one by eight
            close(last.0 / e1, 4.0, 0.3, "first-order rate");
            close(last.1 / e2, 8.0, 0.6, "second-order rate");
        }
        last = (e1, e2);
    }
}

#[test]
fn a_deficiency_payment_for_one_season_adds_up_to_the_producer_surplus_exactly() {
    // One season from the steady state: the harvest was planted on P0 = P*, so it is Q* under both;
    // a deficiency payment to F = 101 leaves the market price at P* (consumers unchanged: ΔCS = 0)
    // and pays producers F on Q*: ΔPS = (F − P*)·Q* exactly. Scaled to the market (N households,
    // N·Σ pop·income·PR = P*·Q*) the groups' first-order gains are Σ PR·y·(F − P*)/P* = Q*(F − P*):
    // the same number (the consistency check of the issue, built here).
    let s = market(
        "periods = 1\ninitial_price = 100.0\ndiscount_rate = 0.05",
        "",
    );
    let pay =
        policy("[floor]\nprice = 101.0\ninstrument = \"deficiency-payment\"\nannounced = false\n");
    let (r, h) = run(&s, &[pay]);
    let n = P_STAR * Q_STAR / VALUE_PER_HOUSEHOLD;
    let scaled: f64 = h
        .groups
        .iter()
        .zip(&h.policies[0].outcomes)
        .map(|(g, o)| n * g.population_share * o.first_order * g.income * h.pv_factor)
        .sum();
    let p = &r.policies[0];
    let aggregate = p.number("consumer_surplus_change_pv").unwrap()
        + p.number("producer_surplus_change_pv").unwrap();
    close(aggregate, Q_STAR * 1.0 / 1.05, 1e-9, "ΔCS + ΔPS");
    close(scaled, aggregate, 1e-9, "scaled group gains");
    // consumers: towns neither gain nor lose
    assert_eq!(h.policies[0].outcomes[2].first_order, 0.0);
}

#[test]
fn a_small_floor_over_many_seasons_matches_the_aggregate_to_second_order() {
    // A purchase floor F = P*(1 + δ), δ = 0.01, not announced, naive farmers, from the steady state:
    // the price is F in every season; the harvest is Q* in season 1 and S(F) afterwards. Per season
    // (linear curves, exact; derived here):
    //   ΔCS = −∫_{P*}^{F} D = −Δp·(D(F) + Q*)/2,   ΔPS_1 = Δp·Q*,   ΔPS_t = ∫_{P*}^{F} S = Δp·(S(F) + Q*)/2,
    // so ΔCS + ΔPS = ½(S' − D')Δp² from season 2 on, and ½(−D')Δp² in season 1. The groups' first
    // order adds up to zero (production = consumption: Σ NBR-weighted incomes cancel), the same
    // first-order size as the aggregate (which is second order); with response, scaled to the
    // market, N·Σ pop·y·½(PR·ε_s − CR·ε_d)δ² = ½·P*Q*(ε_s − ε_d)δ² = ½(S' − D')Δp²: the aggregate
    // of every season after the first (the harvest of season 1 cannot respond).
    let periods = 15;
    let s = market(
        &format!("periods = {periods}\ninitial_price = 100.0\ndiscount_rate = 0.05"),
        "",
    );
    let floor = policy("[floor]\nprice = 101.0\ninstrument = \"purchase\"\nannounced = false\n");
    let (r, h) = run(&s, &[floor]);
    let n = P_STAR * Q_STAR / VALUE_PER_HOUSEHOLD;
    let scale = |pick: &dyn Fn(&furrow::households::GroupOutcome) -> f64| -> f64 {
        h.groups
            .iter()
            .zip(&h.policies[0].outcomes)
            .map(|(g, o)| n * g.population_share * pick(o) * g.income * h.pv_factor)
            .sum()
    };
    let first = scale(&|o| o.first_order);
    let full = scale(&|o| o.with_response);
    let p = &r.policies[0];
    let aggregate = p.number("consumer_surplus_change_pv").unwrap()
        + p.number("producer_surplus_change_pv").unwrap();
    let dp = 1.0;
    let season1_missing = 0.5 * 0.5 * dp * dp / 1.05; // ½·S'·Δp², discounted one season
    let want_aggregate: f64 = (1..=periods)
        .map(|t| 0.5 * (0.5 + 0.8) * dp * dp * 1.05f64.powi(-t))
        .sum::<f64>()
        - season1_missing;
    close(aggregate, want_aggregate, 1e-9, "engine ΔCS + ΔPS");
    assert!(first.abs() < 1e-9, "first order adds up to {first}");
    assert!(aggregate > 0.0 && full > 0.0, "same sign");
    close(full - season1_missing, aggregate, 1e-9, "with response");
}

#[test]
fn a_policy_that_changes_nothing_gives_zero_for_every_group() {
    // under random weather with many replications: a file with only [policy] (the market left
    // alone) and a floor far below every price (simulated on its own, never acts) both give
    // exactly zero; identical paths, identical sums
    let s = market(
        "periods = 20\ninitial_price = 100.0\nreplications = 70\nseed = 5\nrisk_aversion = 2.0",
        "[shocks]\nsupply_sd = 3.0\n",
    );
    let none = policy("");
    let idle = policy("[floor]\nprice = 1.0\ninstrument = \"purchase\"\n");
    let (_, h) = run(&s, &[none, idle]);
    for column in &h.policies {
        for o in &column.outcomes {
            assert_eq!(o.first_order, 0.0, "{}", column.policy);
            assert_eq!(o.with_response, 0.0, "{}", column.policy);
            assert_eq!(o.risk_cost, Some(0.0), "{}", column.policy);
            assert_eq!(o.pv_per_household, 0.0, "{}", column.policy);
        }
    }
}

#[test]
fn the_monte_carlo_measures_match_a_direct_recomputation() {
    // The fold (per-replication statistics, Welford merges across chunks of 64, season sums) against
    // a plain recomputation here: every replication's shocks drawn again, both models run, the
    // measures computed per replication and averaged; the price-risk cost from per-season sample
    // variances (derived in the test: ½·R·Var(PR·p/p̄ − CR·p/p̄), policy minus market left alone).
    let reps = 150;
    let s = market(
        &format!("periods = 8\ninitial_price = 104.0\nreplications = {reps}\nseed = 11\nrisk_aversion = 3.0\ndiscount_rate = 0.1"),
        "[shocks]\nsupply_sd = 4.0\nyield_cv = 0.05\n",
    );
    let band = policy("[stock]\nbuy_below = 97.0\nsell_above = 103.0\ncapacity = 30.0\n");
    let (_, h) = run(&s, std::slice::from_ref(&band));
    let periods = 8;
    let v: f64 = 1.0 / 1.1;
    let raw: Vec<f64> = (1..=periods).map(|t| v.powi(t as i32)).collect();
    let total: f64 = raw.iter().sum();
    let w: Vec<f64> = raw.iter().map(|x| x / total).collect();
    let models = [Model::new(&s, &PolicySpec::none()), Model::new(&s, &band)];
    let mut shocks = vec![PeriodShock::NONE; periods];
    let mut per_rep = Vec::new(); // (first, full) per replication for the first group
    let mut prices = vec![vec![Vec::new(); periods]; 2]; // [model][t] -> (pp, pc) per replication
    let (pr, cr) = (0.30, 0.20);
    for rep in 0..reps {
        draw_shocks(&s, rep as u64, &mut shocks);
        let paths: Vec<Vec<(f64, f64)>> = models
            .iter()
            .map(|m| {
                m.run(periods, |t| shocks[t - 1])
                    .unwrap()
                    .iter()
                    .map(|r| (r.producer_price, consumer_price(r)))
                    .collect()
            })
            .collect();
        let (mut first, mut full) = (0.0, 0.0);
        for t in 0..periods {
            let dp = (paths[1][t].0 - paths[0][t].0) / paths[0][t].0;
            let dc = (paths[1][t].1 - paths[0][t].1) / paths[0][t].1;
            first += w[t] * (pr * dp - cr * dc);
            full +=
                w[t] * (pr * dp - cr * dc + 0.5 * (pr * EPS_S * dp * dp - cr * EPS_D * dc * dc));
            for k in 0..2 {
                prices[k][t].push(paths[k][t]);
            }
        }
        per_rep.push((first, full));
    }
    let n = reps as f64;
    let mean = |f: &dyn Fn(&(f64, f64)) -> f64| per_rep.iter().map(f).sum::<f64>() / n;
    let (m1, m2) = (mean(&|x| x.0), mean(&|x| x.1));
    let se = |f: &dyn Fn(&(f64, f64)) -> f64, m: f64| {
        (per_rep.iter().map(|x| (f(x) - m).powi(2)).sum::<f64>() / (n - 1.0)).sqrt() / n.sqrt()
    };
    let o = &h.policies[0].outcomes[0];
    assert!(m1.abs() > 1e-5, "the band changes prices: {m1}");
    close(o.first_order, m1, 1e-12, "first order");
    close(o.with_response, m2, 1e-12, "with response");
    close(
        o.first_order_se.unwrap(),
        se(&|x| x.0, m1),
        1e-10,
        "first-order se",
    );
    close(o.with_response_se.unwrap(), se(&|x| x.1, m2), 1e-10, "se");
    let cost = |k: usize| -> f64 {
        (0..periods)
            .map(|t| {
                let xs = &prices[k][t];
                let mp = xs.iter().map(|x| x.0).sum::<f64>() / n;
                let mc = xs.iter().map(|x| x.1).sum::<f64>() / n;
                let e: Vec<f64> = xs.iter().map(|x| pr * x.0 / mp - cr * x.1 / mc).collect();
                let me = e.iter().sum::<f64>() / n;
                let var = e.iter().map(|x| (x - me).powi(2)).sum::<f64>() / (n - 1.0);
                w[t] * 0.5 * 3.0 * var
            })
            .sum()
    };
    let want = cost(1) - cost(0);
    assert!(want < 0.0, "a band lowers price risk: {want}");
    close(
        o.risk_cost.unwrap(),
        want,
        1e-9 * want.abs().max(1e-6),
        "risk cost",
    );
}

#[test]
fn household_figures_do_not_depend_on_the_thread_count() {
    // common practice, no source: fixed chunks reduced in order
    let s = market(
        "periods = 10\ninitial_price = 104.0\nreplications = 200\nseed = 3\nrisk_aversion = 1.0",
        "[shocks]\nsupply_sd = 3.0\n",
    );
    let band = policy("[stock]\nbuy_below = 97.0\nsell_above = 103.0\n");
    let at = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| run(&s, std::slice::from_ref(&band)).1)
    };
    let one = at(1);
    assert_eq!(one, at(3));
    assert_eq!(one, at(1));
}

// ---- input checks --------------------------------------------------------------------------

fn refused(groups: &str) -> String {
    market_from_str("m.toml", &format!("{CURVES}{groups}"))
        .unwrap_err()
        .to_string()
}

fn one(name: &str, pop: &str, income: &str, pr: &str, cr: &str) -> String {
    format!(
        "[[households]]\nname = \"{name}\"\npopulation_share = {pop}\nincome = {income}\n\
         production_share = {pr}\nconsumption_share = {cr}\n"
    )
}

#[test]
fn bad_groups_are_refused_naming_file_key_value_and_range() {
    let ok = |name: &str, pop: &str| one(name, pop, "100.0", "0.2", "0.3");
    for (text, want) in [
        (
            one("A", "1.0", "100.0", "1.5", "0.3"),
            "m.toml: households[0].production_share = 1.5: must be in [0, 1] (group \"A\")",
        ),
        (
            one("A", "1.0", "100.0", "0.2", "-0.1"),
            "m.toml: households[0].consumption_share = -0.1: must be in [0, 1] (group \"A\")",
        ),
        (
            one("A", "1.0", "-5.0", "0.2", "0.1"),
            "m.toml: households[0].income = -5: must be in (0, 1e+12] (group \"A\")",
        ),
        (
            ok("A", "0.5") + &ok("B", "0.4"),
            "m.toml: households.population_share = 0.9 in total: the groups' population shares must sum to 1",
        ),
        (
            ok("A", "0.6") + &ok("B", "0.4000011"),
            "households.population_share = 1.0000011 in total",
        ),
        (
            ok("A", "1.0") + &ok("B", "0.0"),
            "m.toml: households[1].population_share = 0: group \"B\" has no households",
        ),
        (
            ok("A", "1.2"),
            "m.toml: households[0].population_share = 1.2: must be in (0, 1]",
        ),
        (
            ok("A", "0.5") + &ok("A", "0.5"),
            "m.toml: households[1].name = \"A\": two groups have this name",
        ),
        (
            "[[households]]\nname = \"A\"\npopulation_share = 1.0\nincome = 100.0\nproduction_share = 0.1\n"
                .to_string(),
            "m.toml: households[0].consumption_share: missing",
        ),
        (
            ok("A", "1.0").replace("income", "incme"),
            "m.toml: households[0].incme: unknown key; did you mean `income`?",
        ),
        (
            "[households]\nname = \"A\"\n".to_string(),
            "m.toml: households = ",
        ),
        (
            ok("A", "1.0").replace("0.2", "\"high\""),
            "m.toml: households[0].production_share = \"high\": must be a number",
        ),
    ] {
        let err = refused(&text);
        assert!(err.contains(want), "{text}\n→ {err}\nwanted: {want}");
    }
    // within 1e-6 of 1 is accepted
    let fine = ok("A", "0.6") + &ok("B", "0.4000009");
    assert!(market_from_str("m.toml", &format!("{CURVES}{fine}")).is_ok());
}

#[test]
fn the_binary_refuses_bad_groups_and_a_households_flag_without_groups() {
    let dir = tempfile::tempdir().unwrap();
    let bad = dir.path().join("bad.toml");
    std::fs::write(
        &bad,
        format!("{CURVES}{}", one("A", "0.0", "100.0", "0.1", "0.1")),
    )
    .unwrap();
    let plain = dir.path().join("plain.toml");
    std::fs::write(&plain, CURVES).unwrap();
    let pol = dir.path().join("none.toml");
    std::fs::write(&pol, "[policy]\nname = \"none\"\n").unwrap();
    for (market, extra, want) in [
        (&bad, None, "households[0].population_share = 0"),
        (&plain, Some("--households"), "[[households]]: missing"),
    ] {
        let mut args = vec![
            "compare".to_string(),
            market.display().to_string(),
            pol.display().to_string(),
        ];
        args.extend(extra.map(String::from));
        let out = bin().args(&args).output().unwrap();
        let msg = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{msg}");
        assert!(msg.contains(want), "{msg}");
        assert!(msg.contains(&market.display().to_string()), "{msg}");
    }
}

#[test]
fn without_the_flag_the_comparison_is_the_same_as_without_groups() {
    let root = env!("CARGO_MANIFEST_DIR");
    let text = std::fs::read_to_string(format!("{root}/examples/veldmark.toml")).unwrap();
    assert!(text.contains("[[households]]"), "the demo has groups");
    let cut = text.split("[[households]]").next().unwrap().to_string();
    let dir = tempfile::tempdir().unwrap();
    let (with, without) = (dir.path().join("m.toml"), dir.path().join("m2.toml"));
    std::fs::write(&with, &text).unwrap();
    std::fs::write(&without, &cut).unwrap();
    let pols = [
        format!("{root}/policies/support_purchase.toml"),
        format!("{root}/policies/band_cautious_farmers.toml"),
    ];
    for format in ["table", "markdown", "csv", "json"] {
        let out = |m: &std::path::Path, flag: bool| {
            let mut args = vec!["compare".to_string(), m.display().to_string()];
            args.extend(pols.iter().cloned());
            args.extend(["--format".to_string(), format.to_string()]);
            if flag {
                args.push("--households".into());
            }
            stdout_of(&args).replace(&m.display().to_string(), "MARKET")
        };
        let plain = out(&with, false);
        assert_eq!(plain, out(&without, false), "{format}");
        assert!(!plain.contains("ousehold"), "{format}");
        let block = out(&with, true);
        if format == "table" || format == "markdown" {
            // the block goes in before the caution; everything above it is unchanged
            let above = plain.split("Caution: ").next().unwrap();
            assert!(block.starts_with(above), "{format}");
        }
        match format {
            "json" => {
                let v: serde_json::Value = serde_json::from_str(&block).unwrap();
                let rows = v["households"].as_array().unwrap();
                // 2 policies × 3 groups, each with the fixed keys
                assert_eq!(rows.len(), 6);
                for r in rows {
                    for k in [
                        "name",
                        "policy",
                        "welfare_change_share_first_order",
                        "welfare_change_share",
                        "price_risk_cost_share",
                    ] {
                        assert!(r.get(k).is_some(), "{k} in {r}");
                    }
                }
                assert_eq!(rows[0]["name"], "Hill smallholders");
            }
            "csv" => {
                assert!(block.starts_with(&plain));
                assert!(block.contains("household:Town households:welfare_change_share,"));
            }
            _ => {
                assert!(block.contains("Who gains"), "{block}");
                assert!(block.contains("Valley commercial farms"), "{block}");
                assert!(block.contains("Caution: "), "{block}");
                assert!(!block.contains("NaN") && !block.contains("inf"), "{block}");
            }
        }
    }
}

#[test]
fn check_names_the_groups_as_an_array_of_tables() {
    // `check` says which sections made it read the file as a market file; the groups are written
    // `[[households]]` in the file and named so
    let out = stdout_of(["check", "examples/veldmark.toml", "--format", "json"]);
    assert!(out.contains("[[households]]"), "{out}");
    assert!(!out.contains(", [households]"), "{out}");
}

#[test]
fn measuring_the_groups_changes_no_indicator() {
    // an identity (no outside source): the groups' paired price paths feed no indicator, so a
    // comparison that leaves them out has every column's indicators bit for bit (several chunks of
    // shocked replications; a policy under its own expectation rule, so a behaviour column too)
    let s = market(
        "periods = 20\nreplications = 150\nseed = 3\ninitial_price = 100.0",
        "[shocks]\nyield_cv = 0.05\ndemand_sd = 1.0",
    );
    let policies = [
        policy("[floor]\nprice = 101.0\ninstrument = \"purchase\"\n"),
        policy(
            "[stock]\nbuy_below = 98.0\nsell_above = 103.0\ncapacity = 20.0\n\
             [expectations]\nrule = \"adaptive\"\nweight = 0.5\n",
        ),
    ];
    let with = |h: Households| compare_with_households(&s, &policies, &NoProgress, Fans::Skip, h);
    let (measured, groups) = with(Households::Measure).unwrap();
    let (skipped, none) = with(Households::Skip).unwrap();
    assert!(groups.is_some() && none.is_none());
    let columns = |r: &furrow::compare::CompareResult| -> Vec<String> {
        (r.policies.iter().chain([&r.baseline]).chain(&r.behaviour))
            .map(|p| format!("{} {:?}", p.name, p.indicators))
            .collect()
    };
    assert_eq!(measured.behaviour.len(), 1);
    assert_eq!(columns(&measured), columns(&skipped));
}
