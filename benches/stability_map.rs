//! A 200 × 200 stability map (target: under 0.3 s on a 2-core machine).

use criterion::{criterion_group, criterion_main, Criterion};
use furrow::scenario::parse_toml;
use furrow::sweep::{self, Base};

const MARKET: &str = "[market]\nname = \"bench\"\n[demand]\nintercept = 300.0\nslope = -1.25\n\
[supply]\nintercept = -40.0\nslope = 1.1\n[expectations]\nrule = \"adaptive\"\nweight = 0.5\n";

const SECOND_ORDER: &str =
    "[market]\nname = \"bench2\"\n[demand]\nintercept = 300.0\nslope = -1.25\n\
[supply]\nintercept = -40.0\nslope = 1.1\n[expectations]\nrule = \"extrapolative\"\nweight = 0.3\n";

fn map(c: &mut Criterion) {
    let base2 = Base::new(
        "bench2.toml",
        parse_toml("bench2.toml", SECOND_ORDER).unwrap(),
        None,
    );
    let second = [
        sweep::parse_vary("supply.slope=0.1:3.0:200").unwrap(),
        sweep::parse_vary("expectations.weight=-0.95:0.95:200").unwrap(),
    ];
    let base = Base::new(
        "bench.toml",
        parse_toml("bench.toml", MARKET).unwrap(),
        None,
    );
    let slopes = [
        sweep::parse_vary("supply.slope=0.1:3.0:200").unwrap(),
        sweep::parse_vary("demand.slope=-3.0:-0.1:200").unwrap(),
    ];
    let weights = [
        sweep::parse_vary("supply.slope=0.1:3.0:200").unwrap(),
        sweep::parse_vary("expectations.weight=0.01:1.0:200").unwrap(),
    ];
    let mut g = c.benchmark_group("stability_map");
    g.sample_size(10);
    g.bench_function("200x200 supply.slope x demand.slope (adaptive)", |b| {
        b.iter(|| sweep::sweep(&base, &slopes, None).unwrap())
    });
    g.bench_function("200x200 supply.slope x expectations.weight", |b| {
        b.iter(|| sweep::sweep(&base, &weights, None).unwrap())
    });
    g.bench_function(
        "200x200 supply.slope x expectations.weight (extrapolative, 2x2 Schur)",
        |b| b.iter(|| sweep::sweep(&base2, &second, None).unwrap()),
    );
    g.finish();
}

criterion_group! {
    name = benches;
    // criterion's plots need system fonts this machine does not have
    config = Criterion::default().without_plots();
    targets = map
}
criterion_main!(benches);
