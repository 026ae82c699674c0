//! A Monte Carlo sweep: the demo band's capacity over 20 grid points on the weather market, 2 000
//! replications × 30 seasons, the band and its baseline at every point (`sweep --indicators`).
//!
//! Target (issue 17): under 2 s on 2 cores.

use criterion::{criterion_group, criterion_main, Criterion};
use furrow::scenario::parse_toml;
use furrow::stochastic::NoProgress;
use furrow::sweep::{outcomes, parse_vary, Base};

fn capacity_sweep(c: &mut Criterion) {
    let market = include_str!("../examples/veldmark_weather.toml");
    let policy = include_str!("../policies/price_band.toml");
    let base = Base::new(
        "veldmark_weather.toml",
        parse_toml("veldmark_weather.toml", market).unwrap(),
        Some((
            "price_band.toml",
            parse_toml("price_band.toml", policy).unwrap(),
        )),
    );
    let axes = [parse_vary("stock.capacity=20:400:20").unwrap()];
    let mut g = c.benchmark_group("design_sweep");
    g.sample_size(10);
    g.bench_function("capacity_20_points_2000x30", |b| {
        b.iter(|| outcomes::outcomes(&base, &axes, &NoProgress, &|_| Ok(())).unwrap())
    });
    g.finish();
}

criterion_group! {
    name = benches;
    // no plots: criterion's plotting needs system fonts this machine does not have
    config = Criterion::default().without_plots();
    targets = capacity_sweep
}
criterion_main!(benches);
