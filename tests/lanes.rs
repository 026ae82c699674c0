//! The period engine's lanes stepped phase by phase (`engine::ModelLanes::Phased`) write the same
//! bits as each lane stepped on its own `Simulator` (`EachLane`), and end the same paths with the
//! same `Diverged`.
//!
//! Outside reference: the reference here is `Simulator::step` itself, which is checked against
//! closed forms in src/engine/tests.rs and tests/engine_properties.rs (the cobweb path under naive
//! expectations, Ezekiel 1938; the steady state under perfect foresight, Muth 1961; the adaptive
//! recursion, Nerlove 1958). These tests check that the phased lanes are that same step, to the bit.

mod common;

use furrow::engine::{
    Columns, Diverged, LaneStepper, Model, ModelLanes, PeriodRecord, PeriodShock, ShockColumns,
};
use furrow::numeric::Simd;
use furrow::policies::PolicySpec;
use furrow::scenario::{market_from_str, Scenario};
use proptest::prelude::*;

const PROPTEST_SEED: u64 = 0x00f0_2202_6122_1a7e;

fn config(cases: u32) -> ProptestConfig {
    common::proptest_config(PROPTEST_SEED, cases)
}

/// A market of the given forms around (210 crowns, 480 kt), with `expectations` (a TOML section body).
fn market(
    demand_ce: bool,
    supply_ce: bool,
    ed: f64,
    es: f64,
    expectations: &str,
    p0: f64,
) -> Scenario {
    market_text(demand_ce, supply_ce, ed, es, expectations, p0, false, "")
}

/// [`market`], farmers planting on revenue when `revenue`, with `more` (whole sections) added
/// to the file.
#[allow(clippy::too_many_arguments)]
fn market_text(
    demand_ce: bool,
    supply_ce: bool,
    ed: f64,
    es: f64,
    expectations: &str,
    p0: f64,
    revenue: bool,
    more: &str,
) -> Scenario {
    let form = |ce: bool| if ce { "constant-elasticity" } else { "linear" };
    let text = format!(
        "[market]\nname = \"Veldmark test\"\n\
         [demand]\nform = \"{}\"\nat_price = 210.0\nat_quantity = 480.0\nelasticity = {ed:?}\n\
         [supply]\nform = \"{}\"\nat_price = 210.0\nat_quantity = 480.0\nelasticity = {es:?}\n{}\
         [expectations]\n{expectations}\n\
         [run]\nperiods = 40\ninitial_price = {p0:?}\nprice_history = [{:?}, {:?}, {p0:?}]\n{more}",
        form(demand_ce),
        form(supply_ce),
        if revenue {
            "plants_on = \"revenue\"\n"
        } else {
            ""
        },
        0.97 * p0,
        1.02 * p0,
    );
    market_from_str("lanes-test.toml", &text).expect("valid test market")
}

/// The expectation rules the phased lanes take.
fn expectations() -> impl Strategy<Value = String> {
    prop_oneof![
        Just("rule = \"naive\"".to_string()),
        (0.05..1.0f64).prop_map(|w| format!("rule = \"adaptive\"\nweight = {w:?}")),
        (0.05..1.0f64, 150.0..260.0f64).prop_map(|(w, p)| format!(
            "rule = \"adaptive\"\nweight = {w:?}\ninitial_expected_price = {p:?}"
        )),
        (-0.6..0.6f64).prop_map(|w| format!("rule = \"extrapolative\"\nweight = {w:?}")),
        (1usize..5).prop_map(|k| format!("rule = \"trailing-mean\"\nwindow = {k}")),
        (0.0..1.0f64, 180.0..240.0f64).prop_map(|(w, n)| format!(
            "rule = \"normal-price\"\nweight = {w:?}\nnormal_price = {n:?}"
        )),
        (0.0..1.0f64, 1usize..4)
            .prop_map(|(w, k)| format!("rule = \"normal-price\"\nweight = {w:?}\nwindow = {k}")),
    ]
}

/// The agency's standing keys: capacity, initial stock, storage cost, losses, handling, financing.
fn agency() -> impl Strategy<Value = String> {
    (
        20.0..150.0f64,
        0.0..1.0f64,
        0.0..8.0f64,
        0.0..0.1f64,
        0.0..3.0f64,
        0.0..0.08f64,
    )
        .prop_map(|(cap, init, cost, loss, handling, financing)| {
            format!(
                "capacity = {cap:?}\ninitial = {:?}\nstorage_cost = {cost:?}\nloss_rate = {loss:?}\n\
                 handling_cost = {handling:?}\nfinancing_rate = {financing:?}\n",
                init * cap
            )
        })
}

/// None, a band, a band with a target release, a floor by purchase, a deficiency payment.
fn policies() -> impl Strategy<Value = PolicySpec> {
    prop_oneof![
        Just(PolicySpec::none()),
        (180.0..210.0f64, 0.0..40.0f64, agency()).prop_map(|(buy, width, a)| common::policy(
            &format!("[stock]\nbuy_below = {buy:?}\nsell_above = {:?}\n{a}", buy + width)
        )),
        (180.0..210.0f64, 0.0..40.0f64, 0.0..1.0f64, 0.05..1.0f64, agency()).prop_map(
            |(buy, width, target, speed, a)| {
                // target ≤ capacity: a share of the smallest capacity drawn
                common::policy(&format!(
                    "[stock]\nbuy_below = {buy:?}\nsell_above = {:?}\nrelease = \"target\"\n\
                     target = {:?}\nspeed = {speed:?}\n{a}",
                    buy + width,
                    target * 20.0
                ))
            }
        ),
        (180.0..215.0f64, any::<bool>(), agency()).prop_map(|(f, announced, a)| common::policy(
            &format!(
                "[floor]\nprice = {f:?}\ninstrument = \"purchase\"\nannounced = {announced}\n[stock]\n{a}"
            )
        )),
        (180.0..215.0f64, any::<bool>()).prop_map(|(f, announced)| common::policy(&format!(
            "[floor]\nprice = {f:?}\ninstrument = \"deficiency-payment\"\nannounced = {announced}\n"
        ))),
    ]
}

/// Every variant of every registered policy rule (`policies::SECTIONS`' examples: ceilings,
/// drawdown and rotation releases, border measures on a closed market …), one at a time.
fn every_rule() -> impl Strategy<Value = PolicySpec> {
    let examples: Vec<&'static str> = furrow::policies::SECTIONS
        .iter()
        .flat_map(|s| s.examples.iter().copied())
        .collect();
    prop::sample::select(examples).prop_map(common::policy)
}

/// splitmix64: the test's own stream of shocks (any stream will do; both steppers get the same).
fn next(state: &mut u64) -> f64 {
    *state = state.wrapping_add(0x9e37_79b9_7f4a_7c15);
    let mut z = *state;
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^= z >> 31;
    (z >> 11) as f64 / (1u64 << 53) as f64
}

/// Lane `l`'s shock in each period: yield ±`cv`, supply shock ±`supply`, demand shock ±`demand`.
fn shocks(
    seed: u64,
    n: usize,
    periods: usize,
    cv: f64,
    supply: f64,
    demand: f64,
) -> Vec<Vec<PeriodShock>> {
    shocks_abroad(seed, n, periods, cv, supply, demand, 0.0)
}

/// [`shocks`] with the world price's factor ±`world` too (1 when `world` is 0).
fn shocks_abroad(
    seed: u64,
    n: usize,
    periods: usize,
    cv: f64,
    supply: f64,
    demand: f64,
    world: f64,
) -> Vec<Vec<PeriodShock>> {
    let mut state = seed;
    (0..periods)
        .map(|_| {
            (0..n)
                .map(|_| PeriodShock {
                    yield_factor: 1.0 + cv * (2.0 * next(&mut state) - 1.0),
                    supply: supply * (2.0 * next(&mut state) - 1.0),
                    demand: demand * (2.0 * next(&mut state) - 1.0),
                    world_factor: if world > 0.0 {
                        1.0 + world * (2.0 * next(&mut state) - 1.0)
                    } else {
                        1.0
                    },
                })
                .collect()
        })
        .collect()
}

/// Every field of two records, bit for bit (`-0.0` and `0.0` differ, NaN equals the same NaN).
fn same_bits(a: &PeriodRecord, b: &PeriodRecord) -> Result<(), String> {
    let f = |name: &str, x: f64, y: f64| {
        if x.to_bits() == y.to_bits() {
            Ok(())
        } else {
            Err(format!("{name}: {x:e} vs {y:e}"))
        }
    };
    if a.period != b.period {
        return Err(format!("period {} vs {}", a.period, b.period));
    }
    f("expected_price", a.expected_price, b.expected_price)?;
    f("planted", a.planted, b.planted)?;
    f("harvest", a.harvest, b.harvest)?;
    f("price", a.price, b.price)?;
    f("producer_price", a.producer_price, b.producer_price)?;
    f("consumption", a.consumption, b.consumption)?;
    f("purchases", a.purchases, b.purchases)?;
    f("releases", a.releases, b.releases)?;
    f("stock", a.stock, b.stock)?;
    f("fiscal_cost", a.fiscal_cost, b.fiscal_cost)?;
    f("consumer_surplus", a.consumer_surplus, b.consumer_surplus)?;
    f("producer_surplus", a.producer_surplus, b.producer_surplus)?;
    f("purchase_cost", a.purchase_cost, b.purchase_cost)?;
    f("sales_revenue", a.sales_revenue, b.sales_revenue)?;
    f("storage_cost", a.storage_cost, b.storage_cost)?;
    f("financing_cost", a.financing_cost, b.financing_cost)?;
    f("handling_cost", a.handling_cost, b.handling_cost)?;
    f(
        "deficiency_payments",
        a.deficiency_payments,
        b.deficiency_payments,
    )?;
    f(
        "consumer_payments",
        a.consumer_payments,
        b.consumer_payments,
    )?;
    f("rotated", a.rotated, b.rotated)?;
    if a.flags != b.flags || a.stockout != b.stockout || a.trade != b.trade {
        return Err(format!(
            "flags {} vs {}, stockout {} vs {}, trade {:?} vs {:?}",
            a.flags, b.flags, a.stockout, b.stockout, a.trade, b.trade
        ));
    }
    Ok(())
}

/// Steps `model`'s phased lanes and its lanes each on a `Simulator` through `shocks` (one row a
/// period) and compares every lane's record of every period and every lane's end. Returns how
/// many lanes ended.
fn compare(model: &Model, shocks: &[Vec<PeriodShock>]) -> Result<usize, String> {
    // every copy of the vector phases the CPU runs (the widest, AVX2, plain)
    let mut ended = 0;
    for simd in [Simd::Avx512, Simd::Avx2, Simd::Plain] {
        let lanes = ModelLanes::new(model, shocks[0].len()).with_simd(simd);
        ended = compare_one(model, shocks, lanes).map_err(|e| format!("{simd:?}: {e}"))?;
    }
    Ok(ended)
}

fn compare_one(
    model: &Model,
    shocks: &[Vec<PeriodShock>],
    mut phased: ModelLanes,
) -> Result<usize, String> {
    let n = shocks[0].len();
    if !phased.is_phased() {
        return Err("the model was not taken phase by phase".into());
    }
    let mut each = ModelLanes::each(model, n);
    let (mut out_p, mut out_e) = (Columns::default(), Columns::default());
    let (mut failed_p, mut failed_e): (Vec<Option<Diverged>>, Vec<Option<Diverged>>) =
        (vec![None; n], vec![None; n]);
    for (t, row) in shocks.iter().enumerate() {
        let row = ShockColumns::of(row);
        phased.step(&row, &mut out_p, &mut failed_p);
        each.step(&row, &mut out_e, &mut failed_e);
        for l in 0..n {
            if failed_p[l] != failed_e[l] {
                return Err(format!(
                    "period {}, lane {l}: ended {:?} vs {:?}",
                    t + 1,
                    failed_p[l],
                    failed_e[l]
                ));
            }
            if failed_e[l].is_none() {
                same_bits(&out_p.record(l), &out_e.record(l))
                    .map_err(|e| format!("period {}, lane {l}: {e}", t + 1))?;
            }
        }
    }
    Ok(failed_e.iter().filter(|f| f.is_some()).count())
}

proptest! {
    #![proptest_config(config(300))]

    /// Random eligible scenarios (linear and constant-elasticity curves, the backward-looking
    /// rules, none / band / band with target release / floor by purchase / deficiency payment,
    /// the agency's capacities, losses and costs, every registered rule's examples, planting on
    /// price or on revenue, random shocks, 1 to 64 lanes), closed or open to trade (a world price
    /// of its own each lane and season, import and export costs putting the parities inside,
    /// around and outside the policies' bands; the rules' examples then include border measures:
    /// duties, quotas, bans, a variable levy, state trading): every lane's record of every period
    /// is the same bits as the lane stepped alone.
    #[test]
    fn phased_lanes_are_each_lane_to_the_bit(
        demand_ce in any::<bool>(),
        supply_ce in any::<bool>(),
        ed in -0.8..-0.1f64,
        es in 0.1..0.8f64,
        rule in expectations(),
        p0 in 190.0..230.0f64,
        pol in prop_oneof![3 => policies(), 2 => every_rule()],
        revenue in prop::bool::weighted(0.2),
        n in 1usize..=64,
        seed in any::<u64>(),
        (cv, supply, demand) in (0.0..0.15f64, 0.0..20.0f64, 0.0..30.0f64),
        border in prop::option::of((170.0..250.0f64, 0.0..40.0f64, 0.0..40.0f64, 0.0..0.3f64)),
    ) {
        let (trade, abroad) = match border {
            Some((world, import_cost, export_cost, abroad)) => (
                format!(
                    "[trade]\nworld_price = {world:?}\nimport_cost = {import_cost:?}\n\
                     export_cost = {export_cost:?}\n"
                ),
                abroad,
            ),
            None => (String::new(), 0.0),
        };
        let s = market_text(demand_ce, supply_ce, ed, es, &rule, p0, revenue, &trade);
        let model = Model::new(&s, &pol);
        let rows = shocks_abroad(seed, n, 40, cv, supply, demand, abroad);
        if let Err(e) = compare(&model, &rows) {
            prop_assert!(false, "{e}\nrule {rule}\npolicy {pol:?}\n{trade}");
        }
    }
}

/// Paths that leave the model's region in different periods and for different reasons (a demand
/// saturated by a glut, a harvest wiped out, a market that needs a negative price, an expectation
/// gone negative): the phased lanes end each with the same `Diverged` (period and words) as the
/// lane stepped alone, and the lanes still going keep the same bits.
#[test]
#[allow(clippy::needless_range_loop)]
fn diverging_lanes_end_the_same() {
    let cases = [
        ("rule = \"naive\"", false, false, PolicySpec::none()),
        (
            "rule = \"extrapolative\"\nweight = 0.9",
            false,
            false,
            PolicySpec::none(),
        ),
        (
            "rule = \"adaptive\"\nweight = 0.7",
            false,
            true,
            common::policy("[floor]\nprice = 205.0\ninstrument = \"deficiency-payment\"\n"),
        ),
        (
            "rule = \"trailing-mean\"\nwindow = 2",
            true,
            false,
            common::policy(
                "[stock]\nbuy_below = 200.0\nsell_above = 220.0\ncapacity = 50.0\ninitial = 10.0\n",
            ),
        ),
    ];
    for (rule, demand_ce, supply_ce, pol) in cases {
        let s = market(demand_ce, supply_ce, -0.25, 0.6, rule, 210.0);
        let model = Model::new(&s, &pol);
        let n = 24;
        let mut rows = shocks(7, n, 30, 0.05, 5.0, 5.0);
        // lane l is hit in period 3 + l % 9 by one of: a glut, a lost harvest, a demand collapse
        for l in 0..n {
            let t = 3 + l % 9;
            let shock = &mut rows[t][l];
            match l % 4 {
                0 => shock.supply = 2000.0,
                1 => shock.supply = -2000.0,
                2 => shock.demand = -2000.0,
                _ => shock.yield_factor = 3.0,
            }
        }
        let ended = compare(&model, &rows).unwrap_or_else(|e| panic!("{rule}: {e}"));
        assert!(
            ended > 0,
            "{rule}: no lane diverged, the test tests nothing"
        );
    }
}

/// The vector phases run the widest copy the CPU has (AVX-512 F/BW/DQ/VL, else AVX2), and a
/// narrower copy when asked (so that the tests above compare every copy with the lanes stepped
/// alone).
#[test]
fn the_widest_copy_the_cpu_has() {
    let s = market(false, false, -0.25, 0.2, "rule = \"naive\"", 210.0);
    let model = Model::new(&s, &PolicySpec::none());
    #[cfg(target_arch = "x86_64")]
    let widest = {
        use std::arch::is_x86_feature_detected as has;
        if has!("avx512f") && has!("avx512bw") && has!("avx512dq") && has!("avx512vl") {
            Simd::Avx512
        } else if has!("avx2") {
            Simd::Avx2
        } else {
            Simd::Plain
        }
    };
    #[cfg(not(target_arch = "x86_64"))]
    let widest = Simd::Plain;
    assert_eq!(ModelLanes::new(&model, 8).simd(), widest);
    let avx2 = ModelLanes::new(&model, 8).with_simd(Simd::Avx2).simd();
    assert_eq!(avx2, widest.min(Simd::Avx2));
    let plain = ModelLanes::new(&model, 8).with_simd(Simd::Plain);
    assert_eq!(plain.simd(), Simd::Plain);
}

/// The same equality on the job's market (linear curves, adaptive expectations) under each of the
/// Monte Carlo job's policies, 64 lanes × 100 periods.
#[test]
fn the_jobs_policies_are_each_lane_to_the_bit() {
    let s = market(
        false,
        false,
        -0.25,
        0.20,
        "rule = \"adaptive\"\nweight = 0.6",
        210.0,
    );
    let policies = [
        PolicySpec::none(),
        common::policy("[stock]\nbuy_below = 195.0\nsell_above = 230.0\ncapacity = 60.0\ninitial = 20.0\nstorage_cost = 6.0\nloss_rate = 0.02\n"),
        common::policy("[floor]\nprice = 200.0\ninstrument = \"purchase\"\n[stock]\ncapacity = 120.0\nstorage_cost = 6.0\nloss_rate = 0.03\n"),
        common::policy("[floor]\nprice = 200.0\ninstrument = \"deficiency-payment\"\n"),
        common::policy("[stock]\nbuy_below = 190.0\nsell_above = 235.0\ncapacity = 80.0\ninitial = 40.0\nrelease = \"target\"\ntarget = 40.0\nspeed = 0.3\n"),
    ];
    for pol in &policies {
        let model = Model::new(&s, pol);
        // a linear demand curve, no budget, actions with a lane form: cleared column by column
        assert!(
            ModelLanes::new(&model, 64).clears_in_columns(),
            "{}",
            pol.name
        );
        let rows = shocks(2026, 64, 100, 0.06, 3.0, 6.0);
        compare(&model, &rows).unwrap_or_else(|e| panic!("{}: {e}", pol.name));
    }
}

/// Policies of several actions at once — one example of each of `[floor]`, `[stock]` and
/// `[ceiling]` together (trades by more than one action, payments to producers and consumers
/// beside trades) — are each lane to the bit: every action acts on each lane's market in the
/// policy's order whether the lanes go action by action or lane by lane. On a linear demand curve
/// and on a constant-elasticity one (whose lanes work out their prices together and hand the
/// curve's answers at the defended prices — more of them than are kept — from lane to lane).
#[test]
fn policies_of_several_actions_are_each_lane_to_the_bit() {
    for demand_ce in [false, true] {
        let s = market(
            demand_ce,
            true,
            -0.25,
            0.6,
            "rule = \"adaptive\"\nweight = 0.6",
            210.0,
        );
        let examples = |name: &str| furrow::policies::rule::section(name).unwrap().examples;
        let mut compared = 0;
        for floor in examples("floor") {
            for stock in examples("stock") {
                for ceiling in examples("ceiling") {
                    let text = format!("[policy]\nname = \"several\"\n{floor}{stock}{ceiling}");
                    let Ok(pol) = furrow::policies::file::policy_from_str("several.toml", &text)
                    else {
                        continue;
                    };
                    let model = Model::new(&s, &pol);
                    assert!(ModelLanes::new(&model, 64).is_phased(), "{text}");
                    let rows = shocks(11, 64, 60, 0.08, 6.0, 8.0);
                    compare(&model, &rows).unwrap_or_else(|e| panic!("{text}: {e}"));
                    compared += 1;
                }
            }
        }
        // 2 floors × 4 stock releases × 2 ceilings; a combination the rules refuse is not compared
        assert!(compared >= 12, "only {compared} combinations were valid");
    }
}

/// A market that trades where the agency defends a floor above import parity with neither
/// capacity nor budget (it would buy every unit traders bring in): the phased lanes end each path
/// with the lane stepped alone's `Diverged` (period and words, the world price among them), and
/// the lanes still going keep the same bits.
#[test]
fn a_market_that_trades_ends_the_same_where_the_agency_would_buy_without_end() {
    let border = "[trade]\nworld_price = 200.0\nimport_cost = 20.0\nexport_cost = 20.0\n";
    let s = market_text(
        true,
        false,
        -0.3,
        0.2,
        "rule = \"adaptive\"\nweight = 0.6",
        210.0,
        false,
        border,
    );
    let pol = common::policy("[floor]\nprice = 215.0\ninstrument = \"purchase\"\n");
    let model = Model::new(&s, &pol);
    let rows = shocks_abroad(5, 64, 4, 0.05, 2.0, 3.0, 0.1);
    let ended = compare(&model, &rows).unwrap_or_else(|e| panic!("{e}"));
    // import parity 200·(1 ± 0.1) + 20 falls below the floor in about three seasons of eight
    assert!(ended > 0 && ended < 64, "{ended} of 64 paths ended");
}
