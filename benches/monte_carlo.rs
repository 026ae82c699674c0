//! Monte Carlo throughput: engine steps under a band policy, the Monte Carlo fold on one thread, and a
//! whole `compare` of 10 000 replications × 100 periods × 5 policies.
//!
//! Targets (issue 5): ≥ 40 million period-steps per second per core with a band policy; the compare
//! in under 0.5 s on 2 cores. Issue 22: five policies stepped in lockstep on each replication's draw
//! (`monte_carlo_lockstep`, on 1 and on 2 threads, for the 2-core/1-core ratio) and one policy
//! (`monte_carlo_1_thread`); the figures, the machine and the side-by-side vectorised script
//! (`/work/shared/bench/peer_numpy.py` in the team's tree, the same job in numpy) are in
//! docs/montecarlo.md. Throughput is in policy-period-steps.

use criterion::{criterion_group, criterion_main, BatchSize, Criterion, Throughput};
use furrow::compare::{compare, compare_indicators};
use furrow::engine::{
    Columns, Diverged, LaneStepper, Model, ModelLanes, PeriodShock, ShockColumns, LANES,
};
use furrow::policies::file::policy_from_table;
use furrow::policies::PolicySpec;
use furrow::scenario::{market_from_table, parse_toml, Scenario};
use furrow::stochastic::{
    draw_shock_columns, run_monte_carlo, NoProgress, PathVariable, ShockStream,
};

const MARKET: &str = r#"
[market]
name = "Bench"
quantity_unit = "kt"
price_unit = "crowns per t"
[demand]
form = "linear"
at_price = 210.0
at_quantity = 480.0
elasticity = -0.25
[supply]
form = "linear"
at_price = 210.0
at_quantity = 480.0
elasticity = 0.20
[expectations]
rule = "adaptive"
weight = 0.6
[run]
periods = 100
initial_price = 210.0
replications = 10000
seed = 2026
[shocks]
yield_cv = 0.03
demand_sd = 3.0
demand_persistence = 0.3
"#;

const BAND: &str = r#"
[policy]
name = "Band"
[stock]
buy_below = 195.0
sell_above = 230.0
capacity = 60.0
initial = 20.0
storage_cost = 6.0
loss_rate = 0.02
"#;

/// The market opened to private trade: a world price varying about the steady state, import and
/// export parity 20 either side.
const BORDER: &str = r#"
[trade]
world_price = 210.0
world_price_cv = 0.05
world_price_persistence = 0.5
import_cost = 20.0
export_cost = 20.0
"#;

fn scenario() -> Scenario {
    market_from_table("bench.toml", parse_toml("bench.toml", MARKET).unwrap()).unwrap()
}

fn border_scenario() -> Scenario {
    let text = format!("{MARKET}{BORDER}");
    market_from_table("bench.toml", parse_toml("bench.toml", &text).unwrap()).unwrap()
}

/// The market on a constant-elasticity demand curve through the same point (the powers of its
/// prices and surpluses are most of a step).
fn elastic_scenario() -> Scenario {
    let text = MARKET.replacen(
        "[demand]\nform = \"linear\"",
        "[demand]\nform = \"constant-elasticity\"",
        1,
    );
    assert_ne!(text, MARKET);
    market_from_table("bench.toml", parse_toml("bench.toml", &text).unwrap()).unwrap()
}

fn policy(text: &str) -> PolicySpec {
    policy_from_table("p.toml", parse_toml("p.toml", text).unwrap()).unwrap()
}

fn policies() -> Vec<PolicySpec> {
    vec![
        PolicySpec::none(),
        policy(BAND),
        policy("[policy]\nname = \"Floor\"\n[floor]\nprice = 200.0\ninstrument = \"purchase\"\n[stock]\ncapacity = 120.0\nstorage_cost = 6.0\nloss_rate = 0.03\n"),
        policy("[policy]\nname = \"DP\"\n[floor]\nprice = 200.0\ninstrument = \"deficiency-payment\"\n"),
        policy("[policy]\nname = \"Target\"\n[stock]\nbuy_below = 190.0\nsell_above = 235.0\ncapacity = 80.0\ninitial = 40.0\nrelease = \"target\"\ntarget = 40.0\nspeed = 0.3\n"),
    ]
}

fn steps(c: &mut Criterion) {
    let s = scenario();
    let band = policy(BAND);
    let model = Model::new(&s, &band);
    let mut stream = ShockStream::new(&s.shocks, 1, 0);
    let shocks: Vec<PeriodShock> = (0..100).map(|_| stream.next_shock()).collect();
    let mut g = c.benchmark_group("engine");
    g.throughput(Throughput::Elements(100));
    g.bench_function("band_100_steps", |b| {
        b.iter(|| {
            let mut sim = model.simulator();
            let mut acc = 0.0;
            for sh in &shocks {
                acc += sim.step(sh).unwrap().price;
            }
            acc
        })
    });

    // the step alone, five models of one replication in lockstep on the same 100 shocks (the
    // `compare` job's columns: the market left alone, band, purchase floor, deficiency payment,
    // band with target release)
    let models: Vec<Model> = policies().iter().map(|p| Model::new(&s, p)).collect();
    g.throughput(Throughput::Elements(100 * models.len() as u64));
    g.bench_function("5_policies_lockstep_100_steps", |b| {
        b.iter(|| {
            let mut sims: Vec<_> = models.iter().map(|m| m.simulator()).collect();
            let mut acc = 0.0;
            for sh in &shocks {
                for sim in &mut sims {
                    acc += sim.step(sh).unwrap().price;
                }
            }
            acc
        })
    });

    // one replication's draw: the streams set up and 100 periods of shocks (the job's market has
    // a yield and a demand shock: two normals and one `exp` a period)
    g.throughput(Throughput::Elements(100));
    g.bench_function("draw_100_shocks", |b| {
        let mut rep = 0u64;
        b.iter(|| {
            rep += 1;
            let mut stream = ShockStream::new(&s.shocks, 2026, rep);
            let mut acc = 0.0;
            for _ in 0..100 {
                let x = stream.next_shock();
                acc += x.yield_factor + x.demand;
            }
            acc
        })
    });
    // a chunk's draw as the Monte Carlo does it: 64 replications × 100 periods into the shock
    // columns (the factors' exps a column at a time); throughput in replication-periods
    g.throughput(Throughput::Elements(64 * 100));
    g.bench_function("draw_64x100_shock_columns", |b| {
        let mut columns = vec![ShockColumns::default(); 100];
        let mut from = 0u64;
        b.iter(|| {
            from += 64;
            draw_shock_columns(&s, from, 64, &mut columns);
            columns[99].yield_factor[63]
        })
    });
    g.finish();

    let mut one = s.clone();
    one.run.replications = 1000;
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .unwrap();
    let mut g = c.benchmark_group("monte_carlo_1_thread");
    g.sample_size(20);
    g.throughput(Throughput::Elements(1000 * 100));
    g.bench_function("band_1000x100_with_shocks_and_fold", |b| {
        b.iter(|| {
            pool.install(|| {
                run_monte_carlo(
                    &one,
                    std::slice::from_ref(&band),
                    &[PathVariable::Price, PathVariable::Stock],
                    &NoProgress,
                )
                .unwrap()
            })
        })
    });
    g.finish();

    let all = policies();
    let mut g = c.benchmark_group("monte_carlo_lockstep");
    g.sample_size(10);
    g.throughput(Throughput::Elements(1000 * 100 * all.len() as u64));
    for threads in [1, 2] {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        g.bench_function(format!("5_policies_1000x100_{threads}_threads"), |b| {
            b.iter(|| {
                pool.install(|| {
                    run_monte_carlo(
                        &one,
                        &all,
                        &[PathVariable::Price, PathVariable::Stock],
                        &NoProgress,
                    )
                    .unwrap()
                })
            })
        });
    }
    g.finish();
}

/// Issue 22's lanes: 64 lanes × 100 periods of one model (the band) and of the job's five models,
/// each lane on its own `Simulator` (`EachLane`) against the lanes stepped phase by phase
/// (`ModelLanes::Phased`), on the same shocks (the replications' own streams). Throughput in
/// policy-period-steps.
fn lanes(c: &mut Criterion) {
    let s = scenario();
    let shocks: Vec<ShockColumns> = {
        let mut streams: Vec<ShockStream> = (0..LANES as u64)
            .map(|l| ShockStream::new(&s.shocks, 2026, l))
            .collect();
        (0..100)
            .map(|_| {
                let row: Vec<PeriodShock> = streams.iter_mut().map(|st| st.next_shock()).collect();
                ShockColumns::of(&row)
            })
            .collect()
    };
    let run = |lanes: &mut [ModelLanes], out: &mut Columns| {
        let mut failed = vec![vec![None::<Diverged>; LANES]; lanes.len()];
        let mut acc = 0.0;
        for row in &shocks {
            for (l, failed) in lanes.iter_mut().zip(failed.iter_mut()) {
                l.step(row, out, failed);
                acc += out.price[LANES - 1];
            }
        }
        acc
    };
    let band: Vec<Model> = vec![Model::new(&s, &policy(BAND))];
    let all: Vec<Model> = policies().iter().map(|p| Model::new(&s, p)).collect();
    let mut g = c.benchmark_group("lanes");
    for (name, models) in [("band", &band), ("5_policies", &all)] {
        g.throughput(Throughput::Elements((LANES * 100 * models.len()) as u64));
        for phased in [false, true] {
            let way = if phased { "phased" } else { "each_lane" };
            g.bench_function(format!("{name}_64x100_{way}"), |b| {
                let mut out = Columns::default();
                b.iter(|| {
                    let mut lanes: Vec<ModelLanes> = models
                        .iter()
                        .map(|m| {
                            if phased {
                                ModelLanes::new(m, LANES)
                            } else {
                                ModelLanes::each(m, LANES)
                            }
                        })
                        .collect();
                    run(&mut lanes, &mut out)
                })
            });
        }
    }
    g.finish();
}

fn compare_end_to_end(c: &mut Criterion) {
    let s = scenario();
    let ps = policies();
    let mut g = c.benchmark_group("compare");
    g.sample_size(10);
    g.throughput(Throughput::Elements(10_000 * 100 * 5));
    g.bench_function("10000x100x5_policies", |b| {
        b.iter_batched(
            || (),
            |_| compare(&s, &ps, &NoProgress).unwrap(),
            BatchSize::PerIteration,
        )
    });
    // what `compare` without --plots runs, and design search, sensitivity and sweeps: the same
    // indicators without the fans' kept series and per-period quantiles
    g.bench_function("10000x100x5_policies_no_fans", |b| {
        b.iter_batched(
            || (),
            |_| compare_indicators(&s, &ps, &NoProgress).unwrap(),
            BatchSize::PerIteration,
        )
    });
    // the same job on a market with a border (each lane cleared on its own border, and the
    // leakage of each policy's trades abroad folded as the replications run)
    let open = border_scenario();
    g.bench_function("border_10000x100x5_policies_no_fans", |b| {
        b.iter_batched(
            || (),
            |_| compare_indicators(&open, &ps, &NoProgress).unwrap(),
            BatchSize::PerIteration,
        )
    });
    // the same job on a constant-elasticity demand curve
    let elastic = elastic_scenario();
    g.bench_function("elastic_10000x100x5_policies_no_fans", |b| {
        b.iter_batched(
            || (),
            |_| compare_indicators(&elastic, &ps, &NoProgress).unwrap(),
            BatchSize::PerIteration,
        )
    });
    g.finish();
}

criterion_group! {
    name = benches;
    // no plots: criterion's plotting needs system fonts this machine does not have
    config = Criterion::default().without_plots();
    targets = steps, lanes, compare_end_to_end
}
criterion_main!(benches);
