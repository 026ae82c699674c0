//! Selection of order statistics for quantiles (issue 22): nested comparison selection
//! (`select_nth_unstable` on the order keys) against radix select, by list length, on the kind of
//! lists the Monte Carlo summarises: a spread of prices, prices with many ties, a list with ±0, ±∞
//! and extremes, a column mostly of one value, and prices bunched in a narrow band with a few
//! extreme seasons. Each list asks for the six order statistics of
//! the 5 %, 50 % and 95 % type 7 quantiles. `stats::quantiles_of_keys` uses radix select from 512
//! values up (`RADIX_FROM`), nested selection below. Run:
//! `cargo bench --bench quantiles -- --warm-up-time 1 --measurement-time 3`.

use criterion::{criterion_group, criterion_main, BatchSize, BenchmarkId, Criterion, Throughput};
use furrow::stochastic::stats::{
    order_key, order_statistics_by_radix, order_statistics_by_selection,
};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;

/// The lists of one length, as order keys, with their names.
fn lists(n: usize) -> Vec<(&'static str, Vec<i64>)> {
    let mut rng = ChaCha8Rng::seed_from_u64(22);
    let mut z = move || -> f64 { rng.sample(StandardNormal) };
    let spread: Vec<f64> = (0..n).map(|_| 210.0 + 15.0 * z()).collect();
    let ties: Vec<f64> = (0..n)
        .map(|_| (210.0 + 15.0 * z()).max(195.0).floor())
        .collect();
    let specials: Vec<f64> = (0..n)
        .map(|i| match i % 8 {
            0 => 0.0,
            1 => -0.0,
            2 => f64::INFINITY,
            3 => f64::NEG_INFINITY,
            4 => f64::MAX * z().abs().min(1.0),
            _ => 1e3 * z(),
        })
        .collect();
    let mostly_equal: Vec<f64> = (0..n)
        .map(|i| if i % 10 < 9 { 60.0 } else { 60.0 * z().abs() })
        .collect();
    // a fan column as runs give them: prices bunched in a narrow band, a few extreme seasons
    // stretching the range (most values then fall in the few buckets that hold the wanted ranks)
    let bunched: Vec<f64> = (0..n)
        .map(|i| match i % 250 {
            0 => 1e4 * z().abs(),
            1 => 1.0 + z().abs(),
            _ => 210.0 + 3.0 * z(),
        })
        .collect();
    let keys = |v: &[f64]| v.iter().map(|&x| order_key(x)).collect::<Vec<i64>>();
    vec![
        ("spread", keys(&spread)),
        ("ties", keys(&ties)),
        ("specials", keys(&specials)),
        ("mostly_equal", keys(&mostly_equal)),
        ("bunched", keys(&bunched)),
    ]
}

/// The ranks of the type 7 quantiles at 5 %, 50 % and 95 % of `n` values.
fn ranks(n: usize) -> Vec<usize> {
    let mut r: Vec<usize> = [0.05, 0.5, 0.95]
        .iter()
        .flat_map(|p| {
            let h = (n - 1) as f64 * p;
            let k = h.floor() as usize;
            [k, (k + 1).min(n - 1)]
        })
        .collect();
    r.dedup();
    r
}

fn selection(c: &mut Criterion) {
    for n in [1_000, 10_000, 100_000] {
        let mut group = c.benchmark_group(format!("order_statistics_{n}"));
        group.throughput(Throughput::Elements(n as u64));
        let ranks = ranks(n);
        for (name, keys) in lists(n) {
            group.bench_with_input(BenchmarkId::new("selection", name), &keys, |b, keys| {
                let mut out = vec![0; ranks.len()];
                b.iter_batched_ref(
                    || keys.clone(),
                    |k| order_statistics_by_selection(k, &ranks, &mut out),
                    BatchSize::LargeInput,
                )
            });
            group.bench_with_input(BenchmarkId::new("radix", name), &keys, |b, keys| {
                let mut out = vec![0; ranks.len()];
                b.iter_batched_ref(
                    || keys.clone(),
                    |k| order_statistics_by_radix(k, &ranks, &mut out),
                    BatchSize::LargeInput,
                )
            });
        }
        group.finish();
    }
}

criterion_group!(benches, selection);
criterion_main!(benches);
