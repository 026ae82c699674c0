//! Timing of the storage solvers (issue 14's targets): the one-state solve on 200 points to 1e-9 and
//! the whole no-policy solve with grid coverage and the residual check (target < 50 ms), the
//! two-state solve with a band reserve, alone and as `storage::solve` runs it for the demo's
//! `policies/price_band.toml` with grid coverage and the residual check (target < 300 ms), and the
//! whole solve of `policies/target_reserve.toml` with its refinement (target < 1 s), and the whole
//! solve of `policies/support_high_purchase.toml`, whose purchase budget binds (the costliest of the
//! demo's `compare`; no target of its own), and the whole `compare` of the demo with its eight
//! policies that apply (target < 3 s end to end; every solve from a cold cache; `--plots` and
//! `report` add about 0.7 s of CPU to it and are timed with `/usr/bin/time` in docs/storage.md).

use criterion::{criterion_group, criterion_main, Criterion};
use furrow::policies::file::{load_policy, policy_from_table};
use furrow::scenario::{load_market, parse_toml};
use furrow::storage::{self, public_solve, solve_private, SolveOptions, StorageMarket};

fn bench(c: &mut Criterion) {
    let s = load_market("examples/veldmark_storers.toml").expect("example market");
    let o = SolveOptions::default();
    let mut g = c.benchmark_group("storage");
    g.sample_size(10);
    g.bench_function("private_1d_200_points_tol_1e-9", |b| {
        b.iter(|| {
            let m = StorageMarket::new(&s, o.nodes).unwrap();
            solve_private(m, &o).unwrap()
        })
    });
    g.bench_function("private_1d_refined_to_1e-7_residual", |b| {
        b.iter(|| {
            let m = StorageMarket::new(&s, o.nodes).unwrap();
            let sol = solve_private(m, &o).unwrap();
            storage::solve::refine(sol, &o, storage::REFINE_TARGET, storage::REFINE_MAX_POINTS)
                .unwrap()
        })
    });
    g.bench_function("no_policy_full_solve_with_cover_and_residual", |b| {
        b.iter(|| storage::solve(&s, &furrow::policies::PolicySpec::none(), &o).unwrap())
    });
    let text = "[policy]\nname = \"band\"\n[stock]\nbuy_below = 195.0\nsell_above = 230.0\ncapacity = 60.0\nrelease = \"band\"\n";
    let p = policy_from_table("band.toml", parse_toml("band.toml", text).unwrap()).unwrap();
    let band = storage::band_of(&p).unwrap().unwrap();
    g.bench_function("public_band_2d", |b| {
        b.iter(|| {
            let m = StorageMarket::new(&s, o.nodes).unwrap();
            public_solve::solve_public(m, band, &o).unwrap()
        })
    });
    let band_file = load_policy("policies/price_band.toml").expect("demo policy");
    g.bench_function("band_demo_full_solve_with_cover_and_residual", |b| {
        b.iter(|| storage::solve(&s, &band_file, &o).unwrap())
    });
    let target_file = load_policy("policies/target_reserve.toml").expect("demo policy");
    g.bench_function("target_demo_full_solve_with_refinement", |b| {
        b.iter(|| storage::solve(&s, &target_file, &o).unwrap())
    });
    let budget_file = load_policy("policies/support_high_purchase.toml").expect("demo policy");
    g.bench_function("budget_demo_full_solve_with_cover_and_residual", |b| {
        b.iter(|| storage::solve(&s, &budget_file, &o).unwrap())
    });
    let policies: Vec<_> = [
        "none",
        "price_band",
        "target_reserve",
        "drawdown_reserve",
        "rotating_reserve",
        "support_purchase",
        "support_high_purchase",
        "deficiency_payment",
    ]
    .iter()
    .map(|name| load_policy(&format!("policies/{name}.toml")).expect("demo policy"))
    .collect();
    g.bench_function("compare_eight_demo_policies", |b| {
        b.iter(|| {
            storage::clear_solve_cache();
            furrow::compare::compare(&s, &policies, &furrow::stochastic::NoProgress).unwrap()
        })
    });
    g.finish();
}

criterion_group! {
    name = benches;
    // no plots: criterion's plot backend needs system fonts
    config = Criterion::default().without_plots();
    targets = bench
}
criterion_main!(benches);
