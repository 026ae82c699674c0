//! `stochastic::normals::standard_normals` against `rand_distr`'s `StandardNormal` drawn one by one
//! (the reference: a general-purpose library from the package registry): the same values bit for
//! bit, from the same streams, for every length, and each stream left at the same word. The Monte
//! Carlo draws every shock through it, so any difference would change the random stream.

use furrow::stochastic::normals::{by_blocks, standard_normals};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;

#[test]
fn the_normals_are_drawn_by_blocks_here() {
    // otherwise the checks below would compare rand_distr with itself
    if std::env::var_os("CI").is_some() {
        assert!(by_blocks(), "CI: the normals are not drawn by blocks here");
    }
    assert!(
        by_blocks(),
        "the layer edges could not be read, or the probe failed"
    );
}

#[test]
fn every_normal_and_every_stream_position_is_that_of_rand_distr() {
    // 2 000 streams (seeds and stream numbers as the Monte Carlo sets them), lengths from 1 to
    // 400 (blocks are 128 normals), each drawn in two calls: about 400 000 normals, among them
    // some 4 000 that fail the first test (the tail and the density test included)
    let mut drawn = 0;
    for k in 0..2000_u64 {
        let mut a = ChaCha8Rng::seed_from_u64(2026 + k % 7);
        a.set_stream(k | ((k % 4) << 61));
        let mut b = a.clone();
        let len = (k as usize * 37) % 400 + 1;
        let split = (k as usize * 13) % len;
        let mut got = vec![0.0; len];
        standard_normals(&mut a, &mut got[..split]);
        standard_normals(&mut a, &mut got[split..]);
        for (i, z) in got.iter().enumerate() {
            let want: f64 = b.sample(StandardNormal);
            assert_eq!(
                z.to_bits(),
                want.to_bits(),
                "stream {k}, normal {i}: {z} against {want}"
            );
        }
        assert_eq!(a.get_word_pos(), b.get_word_pos(), "stream {k}");
        drawn += len;
    }
    assert!(drawn > 300_000);
}

#[test]
fn far_values_from_the_tail_are_those_of_rand_distr() {
    // enough normals that several lie beyond the ziggurat's base (|z| > 3.65: the tail, drawn
    // by rand_distr's own loop through the buffered words)
    let mut a = ChaCha8Rng::seed_from_u64(7);
    let mut b = a.clone();
    let mut got = vec![0.0; 2_000_000];
    standard_normals(&mut a, &mut got);
    let mut far = 0;
    for z in &got {
        let want: f64 = b.sample(StandardNormal);
        assert_eq!(z.to_bits(), want.to_bits());
        far += usize::from(z.abs() > 3.654);
    }
    // P(|Z| > 3.654) ≈ 2.6e-4 (standard normal table): about 520 expected
    assert!(far > 400, "{far}");
    assert_eq!(a.get_word_pos(), b.get_word_pos());
}
