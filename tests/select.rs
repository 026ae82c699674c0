//! Order statistics and quantiles by radix select against sorting, on random lists with ties, ±0,
//! ±∞, extremes and long runs of one value.
//!
//! References: the k-th order statistic of a list is the k-th value of the list sorted in ascending
//! order (David and Nagaraja 2003, *Order Statistics*, ch. 1, from memory); the order is IEEE 754-2008
//! totalOrder (§5.10, from memory), which `f64::total_cmp` implements (−0 below +0); the quantile is
//! Hyndman and Fan's (1996) definition 7, h = (n − 1)p, Q(p) = x₍⌊h⌋₎ + (h − ⌊h⌋)(x₍⌊h⌋+1₎ − x₍⌊h⌋₎)
//! (0-based order statistics).

mod common;

use furrow::stochastic::stats::{
    from_order_key, order_key, order_statistics_by_radix, order_statistics_by_selection, quantiles,
    quantiles_of_keys,
};
use proptest::prelude::*;

const PROPTEST_SEED: u64 = 0x5e1e_c7ed;

fn config(cases: u32) -> proptest::test_runner::Config {
    common::proptest_config(PROPTEST_SEED, cases)
}

/// A value: mostly prices, often one of a few tied values, sometimes a special or any f64.
fn value() -> impl Strategy<Value = f64> {
    prop_oneof![
        4 => 150.0..260.0_f64,
        3 => (0_u8..6).prop_map(|k| f64::from(k) * 0.5),
        1 => prop::sample::select(vec![
            0.0,
            -0.0,
            f64::INFINITY,
            f64::NEG_INFINITY,
            f64::MAX,
            f64::MIN,
            f64::MIN_POSITIVE,
            -f64::MIN_POSITIVE,
            5e-324,
            -5e-324,
        ]),
        1 => any::<f64>(),
    ]
}

/// A list: short or long (radix select starts at 512 values), sometimes mostly one value.
fn list() -> impl Strategy<Value = Vec<f64>> {
    prop_oneof![
        prop::collection::vec(value(), 1..600),
        prop::collection::vec(value(), 600..6000),
        (
            prop::collection::vec(value(), 1..4000),
            0.0..1000.0_f64,
            1_usize..20
        )
            .prop_map(|(mut v, x, every)| {
                // a long run of one value with a few others among it
                for (i, e) in v.iter_mut().enumerate() {
                    if i % (every + 1) != 0 {
                        *e = x;
                    }
                }
                v
            }),
    ]
}

/// Distinct ascending ranks below `n` from indices.
fn ranks_of(n: usize, picks: &[prop::sample::Index]) -> Vec<usize> {
    let mut r: Vec<usize> = picks.iter().map(|i| i.index(n)).collect();
    r.push(0);
    r.push(n - 1);
    r.sort_unstable();
    r.dedup();
    r
}

/// The type 7 quantile of an ascending list (the formula written out).
fn type7_of_sorted(sorted: &[f64], p: f64) -> f64 {
    let n = sorted.len();
    let h = (n - 1) as f64 * p;
    let k = h.floor() as usize;
    let frac = h - k as f64;
    if frac > 0.0 && k + 1 < n {
        sorted[k] + frac * (sorted[k + 1] - sorted[k])
    } else {
        sorted[k]
    }
}

proptest! {
    #![proptest_config(config(96))]

    #[test]
    fn radix_and_nested_selection_give_the_order_statistics_of_sorting(
        v in list(),
        picks in prop::collection::vec(any::<prop::sample::Index>(), 0..12),
    ) {
        let mut sorted = v.clone();
        sorted.sort_by(f64::total_cmp);
        let ranks = ranks_of(v.len(), &picks);
        let keys: Vec<i64> = v.iter().map(|&x| order_key(x)).collect();
        let mut by_radix = vec![0; ranks.len()];
        order_statistics_by_radix(&mut keys.clone(), &ranks, &mut by_radix);
        let mut by_selection = vec![0; ranks.len()];
        order_statistics_by_selection(&mut keys.clone(), &ranks, &mut by_selection);
        for (i, &r) in ranks.iter().enumerate() {
            prop_assert_eq!(from_order_key(by_radix[i]).to_bits(), sorted[r].to_bits(), "radix, rank {}", r);
            prop_assert_eq!(from_order_key(by_selection[i]).to_bits(), sorted[r].to_bits(), "nested, rank {}", r);
        }
    }

    #[test]
    fn quantiles_are_type_7_of_the_sorted_list(
        v in list(),
        zeros in prop_oneof![Just(0_usize), 1_usize..3000],
    ) {
        let probs = [0.0, 0.05, 0.25, 0.5, 0.95, 0.99, 1.0];
        // the whole sample: the list and `zeros` values +0
        let mut whole = v.clone();
        whole.extend(std::iter::repeat_n(0.0, zeros));
        let mut sorted = whole.clone();
        sorted.sort_by(f64::total_cmp);
        let want: Vec<f64> = probs.iter().map(|&p| type7_of_sorted(&sorted, p)).collect();
        let got = quantiles(&mut whole, &probs);
        let mut keys: Vec<i64> = v.iter().map(|&x| order_key(x)).collect();
        let got_keys = quantiles_of_keys(&mut keys, zeros, &probs);
        for i in 0..probs.len() {
            prop_assert_eq!(got[i].to_bits(), want[i].to_bits(), "p = {}", probs[i]);
            prop_assert_eq!(got_keys[i].to_bits(), want[i].to_bits(), "p = {} (zeros apart)", probs[i]);
        }
    }
}

#[test]
fn a_long_list_of_prices_with_a_column_of_zeros() {
    // 100 000 values, as many as a fan-chart column of a large run: type 7 against sorting
    // (Hyndman and Fan 1996, definition 7); NaN-free inputs like the engine's
    let mut x = 0.319_f64;
    let v: Vec<f64> = (0..100_000)
        .map(|i| {
            x = (x * 3.97 * (1.0 - x)).clamp(1e-9, 1.0 - 1e-9);
            if i % 3 == 0 {
                0.0
            } else {
                180.0 + 60.0 * x
            }
        })
        .collect();
    let probs = [0.05, 0.5, 0.95];
    let mut sorted = v.clone();
    sorted.sort_by(f64::total_cmp);
    let got = quantiles(&mut v.clone(), &probs);
    let nonzero: Vec<i64> = v
        .iter()
        .filter(|x| x.to_bits() != 0)
        .map(|&x| order_key(x))
        .collect();
    let zeros = v.len() - nonzero.len();
    let got_keys = quantiles_of_keys(&mut nonzero.clone(), zeros, &probs);
    for (i, &p) in probs.iter().enumerate() {
        let want = type7_of_sorted(&sorted, p);
        assert_eq!(got[i].to_bits(), want.to_bits(), "p = {p}");
        assert_eq!(got_keys[i].to_bits(), want.to_bits(), "p = {p}");
    }
    // a third of the list is +0, so the 5 % quantile is 0 and the median a price
    assert_eq!(got[0], 0.0);
    assert!(got[1] > 180.0);
}
