//! `numeric::exp::exp_in_place` against the system's libm (`f64::exp`; on this project's machines
//! glibc 2.36, whose `exp` is the reference): bit for bit on every value, inside and outside
//! glibc's main range, mixed in the same groups of four. The Monte Carlo's yield and world price
//! factors go through it, so any difference would change the random stream.

use furrow::numeric::exp::{exp_in_place, vector_copy_used};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;

fn check(values: &[f64]) {
    let mut got = values.to_vec();
    exp_in_place(&mut got);
    for (x, y) in values.iter().zip(&got) {
        assert_eq!(
            y.to_bits(),
            x.exp().to_bits(),
            "exp({x:e}) = {y:e}, libm {:e}",
            x.exp()
        );
    }
}

#[test]
fn the_vector_copy_is_the_one_run_on_a_cpu_with_avx2_and_fma() {
    // otherwise the checks below would compare libm with itself
    #[cfg(all(target_arch = "x86_64", target_os = "linux", target_env = "gnu"))]
    if std::arch::is_x86_feature_detected!("avx2") && std::arch::is_x86_feature_detected!("fma") {
        assert!(vector_copy_used());
    }
    if std::env::var_os("CI").is_some() {
        // the machines CI runs on have both; a CI run must not pass by comparing libm with itself
        assert!(vector_copy_used(), "CI: the vector exp is not used here");
    }
}

#[test]
fn every_value_has_the_bits_of_libm() {
    let mut rng = ChaCha8Rng::seed_from_u64(2026);
    // the yield factor's exponents (σ z − σ²/2, σ up to 1), wider values, and values spread over
    // every magnitude glibc's main range holds
    let mut v: Vec<f64> = (0..1_000_000)
        .map(|i| {
            let u: f64 = rng.random::<f64>() * 2.0 - 1.0;
            match i % 4 {
                0 => 0.3 * u,
                1 => 4.0 * u,
                2 => 700.0 * u,
                _ => u * (2.0_f64).powi(rng.random_range(-60..10)),
            }
        })
        .collect();
    // around every multiple of ln2/128 (where the table entry changes), a few ulps either side
    let step = std::f64::consts::LN_2 / 128.0;
    for k in -4000..4000 {
        let c = k as f64 * step;
        for d in -3_i64..=3 {
            v.push(f64::from_bits((c.to_bits() as i64 + d) as u64));
            v.push(c + d as f64 * step * 0.5);
        }
    }
    check(&v);
}

#[test]
fn values_outside_the_main_range_among_others() {
    // zero, tiny, at and beyond 2⁹, overflow, underflow to subnormal and to zero, infinities, NaN;
    // each at every place in a group of four, between values of the main range
    let odd = [
        0.0,
        -0.0,
        1e-300,
        -1e-17,
        2f64.powi(-54),
        -(2f64.powi(-54)),
        2f64.powi(-55),
        511.999,
        512.0,
        -512.0,
        709.78,
        709.8,
        -708.4,
        -740.0,
        -745.2,
        -746.0,
        f64::INFINITY,
        f64::NEG_INFINITY,
        f64::NAN,
        f64::MIN_POSITIVE,
    ];
    for place in 0..5 {
        let mut v = Vec::new();
        for &x in &odd {
            v.extend((0..place).map(|i| 0.1 * i as f64 - 0.17));
            v.push(x);
        }
        let mut got = v.clone();
        exp_in_place(&mut got);
        for (x, y) in v.iter().zip(&got) {
            let want = x.exp();
            assert!(
                y.to_bits() == want.to_bits() || (y.is_nan() && want.is_nan()),
                "exp({x:e}) = {y:e}, libm {want:e}"
            );
        }
    }
}

#[test]
fn lengths_not_a_multiple_of_four() {
    for n in 0..11 {
        let v: Vec<f64> = (0..n).map(|i| 0.37 * i as f64 - 1.1).collect();
        check(&v);
    }
}
