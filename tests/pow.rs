//! `numeric::pow::pow_in_place` against the system's libm (`f64::powf`; on this project's machines
//! glibc 2.36, whose `pow` is the reference): bit for bit on every value, inside and outside
//! glibc's main path, mixed in the same groups of four, for the exponents constant-elasticity
//! curves use and others.

use furrow::numeric::pow::{pow_in_place, vector_copy_used};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;

fn check(values: &[f64], y: f64) {
    let mut got = values.to_vec();
    pow_in_place(&mut got, y);
    // libm's `pow` itself: a constant exponent (0.5, 2) would let the compiler take a square root
    // or a product instead
    let y = std::hint::black_box(y);
    for (x, p) in values.iter().zip(&got) {
        assert_eq!(
            p.to_bits(),
            x.powf(y).to_bits(),
            "{x:e}^{y:e} = {p:e}, libm {:e}",
            x.powf(y)
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
        assert!(vector_copy_used(), "CI: the vector pow is not used here");
    }
}

#[test]
fn every_value_has_the_bits_of_libm() {
    let mut rng = ChaCha8Rng::seed_from_u64(2026);
    // quantities and prices relative to a reference (0.2–5), wide magnitudes, values near 1
    let v: Vec<f64> = (0..400_000)
        .map(|i| {
            let u: f64 = rng.random::<f64>();
            match i % 4 {
                0 => 0.2 + 4.8 * u,
                1 => 1.0 + (u - 0.5) * 1e-6,
                2 => u * (2.0_f64).powi(rng.random_range(-300..300)),
                _ => 0.5 + u,
            }
        })
        .collect();
    // the curves' exponents (1/ε and ε for ε = −0.25, 0.2, …; ε + 1), and others
    for y in [
        -4.0,
        -0.25,
        0.75,
        5.0,
        0.2,
        1.2,
        -1.0 / 0.3,
        -0.3,
        0.7,
        1.0 / 3.0,
        2.0,
        -7.5,
        0.5,
        13.25,
    ] {
        check(&v, y);
    }
    // random exponents, small and large
    for _ in 0..40 {
        let y = (rng.random::<f64>() - 0.5) * (2.0_f64).powi(rng.random_range(-20..8));
        check(&v[..20_000], y);
    }
}

#[test]
fn values_and_exponents_outside_the_main_path_are_libms() {
    // zero, negative, subnormal, infinite and NaN bases and results that overflow or underflow,
    // in every place of a group of four; exponents glibc treats apart (0, tiny, huge, NaN)
    let special = [
        0.0,
        -0.0,
        -2.0,
        1e-310,
        f64::INFINITY,
        f64::NAN,
        1.0,
        1e300,
        1e-300,
        f64::MIN_POSITIVE,
        3.0,
    ];
    let mut v = Vec::new();
    for s in special {
        for at in 0..4 {
            let mut group = [1.5, 0.7, 2.5, 0.9];
            group[at] = s;
            v.extend(group);
        }
    }
    v.push(0.3); // a short last group
    for y in [
        -4.0,
        0.75,
        900.0,
        -900.0,
        0.0,
        -0.0,
        1e-30,
        1e30,
        f64::INFINITY,
        f64::NAN,
        1.0,
        -1.0,
    ] {
        check(&v, y);
    }
}
