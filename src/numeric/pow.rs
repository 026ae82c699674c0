//! Powers x^y of many values with one exponent, with the same bits as [`f64::powf`].
//!
//! A constant-elasticity curve's price and quantity are powers of the quantity or the price with
//! a fixed exponent (1/ε, ε), and one call into the system's libm per value is about half of such a
//! market's run. On x86-64 Linux with glibc and a CPU with AVX2 and FMA, glibc's `pow` is the
//! algorithm of Szabolcs Nagy (glibc 2.28 and later, `sysdeps/ieee754/dbl-64/e_pow.c`; from memory,
//! the operations read from the machine code of glibc 2.36's `__pow_fma`): log x in two parts from
//! a table of 128 entries and a polynomial of degree 8 in r = z/c − 1, then exp(y log x) by the
//! algorithm of [`super::exp`] with the low part added to r, every multiply-add fused as the copy
//! glibc runs on such a CPU fuses it. [`pow_in_place`] does the same operations in the same order
//! four values at a time, so it gives the same bits for every x in glibc's main path (x positive and
//! normal, y's magnitude in [2⁻⁶⁵, 2⁶³), y log x in exp's main range); any other value or exponent
//! is handed to [`f64::powf`] itself. The log table is computed from its rule (docs/montecarlo.md:
//! 1/c near each subinterval's centre with few bits, log c rounded to a multiple of 2⁻⁴³ and its
//! remainder) and matches the bytes of glibc 2.36's table; the exp table is [`super::exp`]'s.
//!
//! The reference is `f64::powf` with an exponent known only when running, which is glibc's `pow`:
//! with a constant exponent the compiler may rewrite `powf` (x^0.5 as a square root, x^2 as x·x).
//!
//! Before the vector copy is used, a probe of values across every log table entry and many
//! exponents checks it against [`f64::powf`] on this machine; any other platform, a CPU without
//! AVX2 and FMA, or a failed probe gets [`f64::powf`] value by value. Either way the bits are those
//! of [`f64::powf`].

/// Each value x replaced by x^y: the same bits as [`f64::powf`] of it with an exponent the
/// compiler cannot see (glibc's `pow`: with a constant exponent such as 0.5 or 2 the compiler may put
/// a square root or a product in its place, which can differ in the last bit).
pub fn pow_in_place(values: &mut [f64], y: f64) {
    // the exponent as a value known only when running, here and in every fallback below
    let y = std::hint::black_box(y);
    #[cfg(all(target_arch = "x86_64", target_os = "linux", target_env = "gnu"))]
    if glibc::exponent_in_main_path(y) && glibc::vector_copy_agrees() {
        // SAFETY: `vector_copy_agrees` is true only on a CPU with AVX2 and FMA
        unsafe { glibc::pow_avx2(values, y) };
        return;
    }
    for x in values {
        *x = x.powf(y);
    }
}

/// Whether [`pow_in_place`] runs its vector copy on this machine (x86-64 Linux with glibc, AVX2 and
/// FMA, and the probe against [`f64::powf`] passed).
pub fn vector_copy_used() -> bool {
    #[cfg(all(target_arch = "x86_64", target_os = "linux", target_env = "gnu"))]
    {
        glibc::vector_copy_agrees()
    }
    #[cfg(not(all(target_arch = "x86_64", target_os = "linux", target_env = "gnu")))]
    {
        false
    }
}

#[cfg(all(target_arch = "x86_64", target_os = "linux", target_env = "gnu"))]
mod glibc {
    use super::super::exp::glibc::{
        C2, C3, C4, C5, INV_LN2_N, NEG_LN2_HI_N, NEG_LN2_LO_N, SHIFT, TABLE as EXP_TABLE,
    };
    use std::arch::x86_64::*;
    use std::sync::OnceLock;

    /// ln 2 in two parts, the high one with trailing zero bits.
    const LN2_HI: f64 = f64::from_bits(0x3fe6_2e42_fefa_3800);
    const LN2_LO: f64 = f64::from_bits(0x3d2e_f357_93c7_6730);
    /// log(1 + r) − r ≈ A0 r² + … + A6 r⁸ (A0 = −1/2; the others as glibc scales them).
    const A: [f64; 7] = [
        f64::from_bits(0xbfe0_0000_0000_0000),
        f64::from_bits(0xbfe5_5555_5555_5560),
        f64::from_bits(0x3fe0_0000_0000_0006),
        f64::from_bits(0x3fe9_9999_9959_554e),
        f64::from_bits(0xbfe5_5555_5529_a47a),
        f64::from_bits(0xbff2_495b_9b48_45e9),
        f64::from_bits(0x3ff0_002b_8b26_3fc3),
    ];
    /// x = 2^k z with z in [OFF, 2·OFF) as bits (OFF ≈ 0.7071).
    const OFF: u64 = 0x3fe6_9555_0000_0000;

    /// For each of the 128 subintervals of z: the bits of 1/c, of log c rounded to a multiple of
    /// 2⁻⁴³, and of the rest of log c (c near the subinterval's centre).
    #[rustfmt::skip]
    static LOG_TABLE: [[u64; 3]; 128] = [
        [0x3ff6a00000000000, 0xbfd62c82f2b9c800, 0x3cfab42428375680],
        [0x3ff6800000000000, 0xbfd5d1bdbf580800, 0xbd1ca508d8e0f720],
        [0x3ff6600000000000, 0xbfd5767717455800, 0xbd2362a4d5b6506d],
        [0x3ff6400000000000, 0xbfd51aad872df800, 0xbce684e49eb067d5],
        [0x3ff6200000000000, 0xbfd4be5f95777800, 0xbd041b6993293ee0],
        [0x3ff6000000000000, 0xbfd4618bc21c6000, 0x3d13d82f484c84cc],
        [0x3ff5e00000000000, 0xbfd404308686a800, 0x3cdc42f3ed820b3a],
        [0x3ff5c00000000000, 0xbfd3a64c55694800, 0x3d20b1c686519460],
        [0x3ff5a00000000000, 0xbfd347dd9a988000, 0x3d25594dd4c58092],
        [0x3ff5800000000000, 0xbfd2e8e2bae12000, 0x3d267b1e99b72bd8],
        [0x3ff5600000000000, 0xbfd2895a13de8800, 0x3d15ca14b6cfb03f],
        [0x3ff5600000000000, 0xbfd2895a13de8800, 0x3d15ca14b6cfb03f],
        [0x3ff5400000000000, 0xbfd22941fbcf7800, 0xbd165a242853da76],
        [0x3ff5200000000000, 0xbfd1c898c1699800, 0xbd1fafbc68e75404],
        [0x3ff5000000000000, 0xbfd1675cababa800, 0x3d1f1fc63382a8f0],
        [0x3ff4e00000000000, 0xbfd1058bf9ae4800, 0xbd26a8c4fd055a66],
        [0x3ff4c00000000000, 0xbfd0a324e2739000, 0xbd0c6bee7ef4030e],
        [0x3ff4a00000000000, 0xbfd0402594b4d000, 0xbcf036b89ef42d7f],
        [0x3ff4a00000000000, 0xbfd0402594b4d000, 0xbcf036b89ef42d7f],
        [0x3ff4800000000000, 0xbfcfb9186d5e4000, 0x3d0d572aab993c87],
        [0x3ff4600000000000, 0xbfcef0adcbdc6000, 0x3d2b26b79c86af24],
        [0x3ff4400000000000, 0xbfce27076e2af000, 0xbd172f4f543fff10],
        [0x3ff4200000000000, 0xbfcd5c216b4fc000, 0x3d21ba91bbca681b],
        [0x3ff4000000000000, 0xbfcc8ff7c79aa000, 0x3d27794f689f8434],
        [0x3ff4000000000000, 0xbfcc8ff7c79aa000, 0x3d27794f689f8434],
        [0x3ff3e00000000000, 0xbfcbc286742d9000, 0x3d194eb0318bb78f],
        [0x3ff3c00000000000, 0xbfcaf3c94e80c000, 0x3cba4e633fcd9066],
        [0x3ff3a00000000000, 0xbfca23bc1fe2b000, 0xbd258c64dc46c1ea],
        [0x3ff3a00000000000, 0xbfca23bc1fe2b000, 0xbd258c64dc46c1ea],
        [0x3ff3800000000000, 0xbfc9525a9cf45000, 0xbd2ad1d904c1d4e3],
        [0x3ff3600000000000, 0xbfc87fa06520d000, 0x3d2bbdbf7fdbfa09],
        [0x3ff3400000000000, 0xbfc7ab890210e000, 0x3d2bdb9072534a58],
        [0x3ff3400000000000, 0xbfc7ab890210e000, 0x3d2bdb9072534a58],
        [0x3ff3200000000000, 0xbfc6d60fe719d000, 0xbd10e46aa3b2e266],
        [0x3ff3000000000000, 0xbfc5ff3070a79000, 0xbd1e9e439f105039],
        [0x3ff3000000000000, 0xbfc5ff3070a79000, 0xbd1e9e439f105039],
        [0x3ff2e00000000000, 0xbfc526e5e3a1b000, 0xbd20de8b90075b8f],
        [0x3ff2c00000000000, 0xbfc44d2b6ccb8000, 0x3d170cc16135783c],
        [0x3ff2c00000000000, 0xbfc44d2b6ccb8000, 0x3d170cc16135783c],
        [0x3ff2a00000000000, 0xbfc371fc201e9000, 0x3cf178864d27543a],
        [0x3ff2800000000000, 0xbfc29552f81ff000, 0xbd248d301771c408],
        [0x3ff2600000000000, 0xbfc1b72ad52f6000, 0xbd2e80a41811a396],
        [0x3ff2600000000000, 0xbfc1b72ad52f6000, 0xbd2e80a41811a396],
        [0x3ff2400000000000, 0xbfc0d77e7cd09000, 0x3d0a699688e85bf4],
        [0x3ff2400000000000, 0xbfc0d77e7cd09000, 0x3d0a699688e85bf4],
        [0x3ff2200000000000, 0xbfbfec9131dbe000, 0xbd2575545ca333f2],
        [0x3ff2000000000000, 0xbfbe27076e2b0000, 0x3d2a342c2af0003c],
        [0x3ff2000000000000, 0xbfbe27076e2b0000, 0x3d2a342c2af0003c],
        [0x3ff1e00000000000, 0xbfbc5e548f5bc000, 0xbd1d0c57585fbe06],
        [0x3ff1c00000000000, 0xbfba926d3a4ae000, 0x3d253935e85baac8],
        [0x3ff1c00000000000, 0xbfba926d3a4ae000, 0x3d253935e85baac8],
        [0x3ff1a00000000000, 0xbfb8c345d631a000, 0x3d137c294d2f5668],
        [0x3ff1a00000000000, 0xbfb8c345d631a000, 0x3d137c294d2f5668],
        [0x3ff1800000000000, 0xbfb6f0d28ae56000, 0xbd269737c93373da],
        [0x3ff1600000000000, 0xbfb51b073f062000, 0x3d1f025b61c65e57],
        [0x3ff1600000000000, 0xbfb51b073f062000, 0x3d1f025b61c65e57],
        [0x3ff1400000000000, 0xbfb341d7961be000, 0x3d2c5edaccf913df],
        [0x3ff1400000000000, 0xbfb341d7961be000, 0x3d2c5edaccf913df],
        [0x3ff1200000000000, 0xbfb16536eea38000, 0x3d147c5e768fa309],
        [0x3ff1000000000000, 0xbfaf0a30c0118000, 0x3d2d599e83368e91],
        [0x3ff1000000000000, 0xbfaf0a30c0118000, 0x3d2d599e83368e91],
        [0x3ff0e00000000000, 0xbfab42dd71198000, 0x3d1c827ae5d6704c],
        [0x3ff0e00000000000, 0xbfab42dd71198000, 0x3d1c827ae5d6704c],
        [0x3ff0c00000000000, 0xbfa77458f632c000, 0xbd2cfc4634f2a1ee],
        [0x3ff0c00000000000, 0xbfa77458f632c000, 0xbd2cfc4634f2a1ee],
        [0x3ff0a00000000000, 0xbfa39e87b9fec000, 0x3cf502b7f526feaa],
        [0x3ff0a00000000000, 0xbfa39e87b9fec000, 0x3cf502b7f526feaa],
        [0x3ff0800000000000, 0xbf9f829b0e780000, 0xbd2980267c7e09e4],
        [0x3ff0800000000000, 0xbf9f829b0e780000, 0xbd2980267c7e09e4],
        [0x3ff0600000000000, 0xbf97b91b07d58000, 0xbd288d5493faa639],
        [0x3ff0400000000000, 0xbf8fc0a8b0fc0000, 0xbcdf1e7cf6d3a69c],
        [0x3ff0400000000000, 0xbf8fc0a8b0fc0000, 0xbcdf1e7cf6d3a69c],
        [0x3ff0200000000000, 0xbf7fe02a6b100000, 0xbd19e23f0dda40e4],
        [0x3ff0200000000000, 0xbf7fe02a6b100000, 0xbd19e23f0dda40e4],
        [0x3ff0000000000000, 0x0000000000000000, 0x0000000000000000],
        [0x3ff0000000000000, 0x0000000000000000, 0x0000000000000000],
        [0x3fefc00000000000, 0x3f80101575890000, 0xbd10c76b999d2be8],
        [0x3fef800000000000, 0x3f90205658938000, 0xbd23dc5b06e2f7d2],
        [0x3fef400000000000, 0x3f98492528c90000, 0xbd2aa0ba325a0c34],
        [0x3fef000000000000, 0x3fa0415d89e74000, 0x3d0111c05cf1d753],
        [0x3feec00000000000, 0x3fa466aed42e0000, 0xbd2c167375bdfd28],
        [0x3fee800000000000, 0x3fa894aa149fc000, 0xbd197995d05a267d],
        [0x3fee400000000000, 0x3faccb73cdddc000, 0xbd1a68f247d82807],
        [0x3fee200000000000, 0x3faeea31c006c000, 0xbd0e113e4fc93b7b],
        [0x3fede00000000000, 0x3fb1973bd1466000, 0xbd25325d560d9e9b],
        [0x3feda00000000000, 0x3fb3bdf5a7d1e000, 0x3d2cc85ea5db4ed7],
        [0x3fed600000000000, 0x3fb5e95a4d97a000, 0xbd2c69063c5d1d1e],
        [0x3fed400000000000, 0x3fb700d30aeac000, 0x3cec1e8da99ded32],
        [0x3fed000000000000, 0x3fb9335e5d594000, 0x3d23115c3abd47da],
        [0x3fecc00000000000, 0x3fbb6ac88dad6000, 0xbd1390802bf768e5],
        [0x3feca00000000000, 0x3fbc885801bc4000, 0x3d2646d1c65aacd3],
        [0x3fec600000000000, 0x3fbec739830a2000, 0xbd2dc068afe645e0],
        [0x3fec400000000000, 0x3fbfe89139dbe000, 0xbd2534d64fa10afd],
        [0x3fec000000000000, 0x3fc1178e8227e000, 0x3d21ef78ce2d07f2],
        [0x3febe00000000000, 0x3fc1aa2b7e23f000, 0x3d2ca78e44389934],
        [0x3feba00000000000, 0x3fc2d1610c868000, 0x3d039d6ccb81b4a1],
        [0x3feb800000000000, 0x3fc365fcb0159000, 0x3cc62fa8234b7289],
        [0x3feb400000000000, 0x3fc4913d8333b000, 0x3d25837954fdb678],
        [0x3feb200000000000, 0x3fc527e5e4a1b000, 0x3d2633e8e5697dc7],
        [0x3feae00000000000, 0x3fc6574ebe8c1000, 0x3d19cf8b2c3c2e78],
        [0x3feac00000000000, 0x3fc6f0128b757000, 0xbd25118de59c21e1],
        [0x3feaa00000000000, 0x3fc7898d85445000, 0xbd1c661070914305],
        [0x3fea600000000000, 0x3fc8beafeb390000, 0xbd073d54aae92cd1],
        [0x3fea400000000000, 0x3fc95a5adcf70000, 0x3d07f22858a0ff6f],
        [0x3fea000000000000, 0x3fca93ed3c8ae000, 0xbd28724350562169],
        [0x3fe9e00000000000, 0x3fcb31d8575bd000, 0xbd0c358d4eace1aa],
        [0x3fe9c00000000000, 0x3fcbd087383be000, 0xbd2d4bc4595412b6],
        [0x3fe9a00000000000, 0x3fcc6ffbc6f01000, 0xbcf1ec72c5962bd2],
        [0x3fe9600000000000, 0x3fcdb13db0d49000, 0xbd2aff2af715b035],
        [0x3fe9400000000000, 0x3fce530effe71000, 0x3cc212276041f430],
        [0x3fe9200000000000, 0x3fcef5ade4dd0000, 0xbcca211565bb8e11],
        [0x3fe9000000000000, 0x3fcf991c6cb3b000, 0x3d1bcbecca0cdf30],
        [0x3fe8c00000000000, 0x3fd07138604d5800, 0x3cf89cdb16ed4e91],
        [0x3fe8a00000000000, 0x3fd0c42d67616000, 0x3d27188b163ceae9],
        [0x3fe8800000000000, 0x3fd1178e8227e800, 0xbd2c210e63a5f01c],
        [0x3fe8600000000000, 0x3fd16b5ccbacf800, 0x3d2b9acdf7a51681],
        [0x3fe8400000000000, 0x3fd1bf99635a6800, 0x3d2ca6ed5147bdb7],
        [0x3fe8200000000000, 0x3fd214456d0eb800, 0x3d0a87deba46baea],
        [0x3fe7e00000000000, 0x3fd2bef07cdc9000, 0x3d2a9cfa4a5004f4],
        [0x3fe7c00000000000, 0x3fd314f1e1d36000, 0xbd28e27ad3213cb8],
        [0x3fe7a00000000000, 0x3fd36b6776be1000, 0x3d116ecdb0f177c8],
        [0x3fe7800000000000, 0x3fd3c25277333000, 0x3d183b54b606bd5c],
        [0x3fe7600000000000, 0x3fd419b423d5e800, 0x3d08e436ec90e09d],
        [0x3fe7400000000000, 0x3fd4718dc271c800, 0xbd2f27ce0967d675],
        [0x3fe7200000000000, 0x3fd4c9e09e173000, 0xbd2e20891b0ad8a4],
        [0x3fe7000000000000, 0x3fd522ae0738a000, 0x3d2ebe708164c759],
        [0x3fe6e00000000000, 0x3fd57bf753c8d000, 0x3d1fadedee5d40ef],
        [0x3fe6c00000000000, 0x3fd5d5bddf596000, 0xbd0a0b2a08a465dc],
    ];

    /// Whether glibc's main path takes exponent `y`: |y| in [2⁻⁶⁵, 2⁶³) and finite (its top
    /// twelve bits, sign aside, within 0x3be..0x43e).
    pub(super) fn exponent_in_main_path(y: f64) -> bool {
        let top = (y.to_bits() >> 52) & 0x7ff;
        top.wrapping_sub(0x3be) < 0x80
    }

    /// Whether the vector copy may be used: the CPU has AVX2 and FMA (glibc then runs its FMA copy
    /// of `pow`), and on a probe across every log table entry and many exponents the vector copy
    /// gave the bits of [`f64::powf`]. Worked out once.
    pub(super) fn vector_copy_agrees() -> bool {
        static AGREES: OnceLock<bool> = OnceLock::new();
        *AGREES.get_or_init(|| {
            if !(is_x86_feature_detected!("avx2") && is_x86_feature_detected!("fma")) {
                return false;
            }
            let bases = probe_bases();
            [-4.0, -0.25, 0.75, 0.5, 1.0 / 3.0, -1.7, 2.5, 12.0]
                .into_iter()
                .all(|y| {
                    let mut got = bases.clone();
                    // SAFETY: the CPU has AVX2 and FMA (checked above)
                    unsafe { pow_avx2(&mut got, y) };
                    // libm's `pow` itself: the exponent hidden from the optimiser (a constant 0.5
                    // would let it take a square root instead)
                    let y = std::hint::black_box(y);
                    got.iter()
                        .zip(&bases)
                        .all(|(g, x)| g.to_bits() == x.powf(y).to_bits())
                })
        })
    }

    /// Bases that reach every log table entry at several binary exponents, with values near 1 and
    /// a few outside the main path.
    pub(super) fn probe_bases() -> Vec<f64> {
        let mut v: Vec<f64> = (0..1024)
            .map(|i| {
                let entry = (i % 128) as u64;
                let within = ((i * 37) % 97) as u64 * (1 << 39);
                let z = f64::from_bits(OFF + (entry << 45) + within);
                z * [1.0, 2.0, 0.5, 1024.0, 1.0 / 4096.0, 3.0e5, 7.0e-6, 1.0][i / 128]
            })
            .collect();
        v.extend([
            1.0,
            0.999_999_9,
            1.000_000_1,
            0.0,
            -2.0,
            f64::INFINITY,
            1e-310,
        ]);
        v
    }

    /// [`super::pow_in_place`] four values at a time: glibc's operations in glibc's order (its FMA
    /// copy), the values outside its main path by [`f64::powf`]. `y` must be in the main path
    /// ([`exponent_in_main_path`]).
    ///
    /// # Safety
    /// The CPU must have AVX2 and FMA.
    #[target_feature(enable = "avx2,fma")]
    pub(super) unsafe fn pow_avx2(values: &mut [f64], y: f64) {
        let mut quads = values.chunks_exact_mut(4);
        for q in &mut quads {
            let mut xs = [0.0; 4];
            xs.copy_from_slice(q);
            // SAFETY: `q` holds four values (unaligned loads and stores)
            let (p, outside) = pow4(unsafe { _mm256_loadu_pd(q.as_ptr()) }, y);
            // SAFETY: as above
            unsafe { _mm256_storeu_pd(q.as_mut_ptr(), p) };
            if outside != 0 {
                for (l, (v, x)) in q.iter_mut().zip(xs).enumerate() {
                    if outside & (1 << l) != 0 {
                        *v = x.powf(y);
                    }
                }
            }
        }
        for v in quads.into_remainder() {
            *v = v.powf(y);
        }
    }

    /// x^y of four values by glibc's main path, and the mask of the lanes outside it (bit l set:
    /// lane l's value is to be worked out by [`f64::powf`]).
    #[inline]
    #[target_feature(enable = "avx2,fma")]
    fn pow4(x: __m256d, y: f64) -> (__m256d, i32) {
        let set = _mm256_set1_pd;
        let ix = _mm256_castpd_si256(x);
        // x positive and normal: its top twelve bits (sign included) in 1..=0x7fe
        let topx = _mm256_srli_epi64::<52>(ix);
        let normal = _mm256_and_si256(
            _mm256_cmpgt_epi64(topx, _mm256_setzero_si256()),
            _mm256_cmpgt_epi64(_mm256_set1_epi64x(0x7ff), topx),
        );
        // log x = k ln2 + log c + log(z/c): tmp = ix − OFF, its top bits k, the next seven the entry
        let tmp = _mm256_sub_epi64(ix, _mm256_set1_epi64x(OFF as i64));
        let entry = _mm256_and_si256(_mm256_srli_epi64::<45>(tmp), _mm256_set1_epi64x(127));
        let top = _mm256_and_si256(tmp, _mm256_set1_epi64x(0xfff0_0000_0000_0000_u64 as i64));
        let z = _mm256_castsi256_pd(_mm256_sub_epi64(ix, top));
        // k = tmp >> 52 (arithmetic), as a double: the top twelve bits of tmp, sign-extended
        let mut k = [0i64; 4];
        // SAFETY: four lanes into four slots
        unsafe { _mm256_storeu_si256(k.as_mut_ptr().cast(), tmp) };
        let kd = _mm256_setr_pd(
            (k[0] >> 52) as f64,
            (k[1] >> 52) as f64,
            (k[2] >> 52) as f64,
            (k[3] >> 52) as f64,
        );
        let at = _mm256_mul_epi32(entry, _mm256_set1_epi64x(3));
        let base = LOG_TABLE.as_ptr().cast::<f64>();
        // SAFETY: every entry is below 128, so 3·entry + 2 is inside the table's 384 words
        let (invc, logc, logctail) = unsafe {
            (
                _mm256_i64gather_pd::<8>(base, at),
                _mm256_i64gather_pd::<8>(base.add(1), at),
                _mm256_i64gather_pd::<8>(base.add(2), at),
            )
        };
        let r = _mm256_fmadd_pd(z, invc, set(-1.0));
        let t1 = _mm256_fmadd_pd(kd, set(LN2_HI), logc);
        let t2 = _mm256_add_pd(t1, r);
        let lo1 = _mm256_fmadd_pd(kd, set(LN2_LO), logctail);
        let lo2 = _mm256_add_pd(_mm256_sub_pd(t1, t2), r);
        let ar = _mm256_mul_pd(r, set(A[0]));
        let ar2 = _mm256_mul_pd(r, ar);
        let ar3 = _mm256_mul_pd(r, ar2);
        let lo3 = _mm256_fmsub_pd(ar, r, ar2);
        let hi = _mm256_add_pd(t2, ar2);
        let lo4 = _mm256_add_pd(_mm256_sub_pd(t2, hi), ar2);
        let a12 = _mm256_fmadd_pd(r, set(A[2]), set(A[1]));
        let a34 = _mm256_fmadd_pd(r, set(A[4]), set(A[3]));
        let a56 = _mm256_fmadd_pd(r, set(A[6]), set(A[5]));
        let q = _mm256_fmadd_pd(a56, ar2, a34);
        let p = _mm256_fmadd_pd(ar2, q, a12);
        let lo = _mm256_add_pd(_mm256_add_pd(_mm256_add_pd(lo1, lo2), lo3), lo4);
        let lo = _mm256_fmadd_pd(ar3, p, lo);
        let log_hi = _mm256_add_pd(hi, lo);
        let log_lo = _mm256_add_pd(_mm256_sub_pd(hi, log_hi), lo);
        // y log x = ehi + elo
        let yv = set(y);
        let ehi = _mm256_mul_pd(yv, log_hi);
        let elo = _mm256_fmadd_pd(yv, log_lo, _mm256_fmsub_pd(log_hi, yv, ehi));
        // exp's main range for ehi: 2⁻⁵⁴ ≤ |ehi| < 2⁹ (not NaN)
        let abs = _mm256_andnot_pd(set(-0.0), ehi);
        let inside = _mm256_and_pd(
            _mm256_cmp_pd::<_CMP_GE_OQ>(abs, set(f64::from_bits(0x3c90_0000_0000_0000))),
            _mm256_cmp_pd::<_CMP_LT_OQ>(abs, set(512.0)),
        );
        let inside = _mm256_and_pd(inside, _mm256_castsi256_pd(normal));
        let outside = !_mm256_movemask_pd(inside) & 0xf;
        // exp(ehi + elo) as `super::super::exp`'s main path, elo added to r
        let kd = _mm256_fmadd_pd(ehi, set(INV_LN2_N), set(SHIFT));
        let ki = _mm256_castpd_si256(kd);
        let kd = _mm256_sub_pd(kd, set(SHIFT));
        let r = _mm256_fmadd_pd(kd, set(NEG_LN2_HI_N), ehi);
        let r = _mm256_fmadd_pd(kd, set(NEG_LN2_LO_N), r);
        let r = _mm256_add_pd(elo, r);
        let at = _mm256_slli_epi64::<1>(_mm256_and_si256(ki, _mm256_set1_epi64x(127)));
        let top = _mm256_slli_epi64::<45>(ki);
        // SAFETY: every index is even and below 256, so it and the next are in the table
        let (tail, high) = unsafe {
            (
                _mm256_i64gather_pd::<8>(EXP_TABLE.as_ptr().cast::<f64>(), at),
                _mm256_i64gather_epi64::<8>(EXP_TABLE.as_ptr().add(1).cast::<i64>(), at),
            )
        };
        let scale = _mm256_castsi256_pd(_mm256_add_epi64(high, top));
        let r2 = _mm256_mul_pd(r, r);
        let c23 = _mm256_fmadd_pd(r, set(C3), set(C2));
        let tail_r = _mm256_add_pd(r, tail);
        let c45 = _mm256_fmadd_pd(r, set(C5), set(C4));
        let tmp = _mm256_fmadd_pd(c23, r2, tail_r);
        let r4 = _mm256_mul_pd(r2, r2);
        let tmp = _mm256_fmadd_pd(r4, c45, tmp);
        (_mm256_fmadd_pd(scale, tmp, scale), outside)
    }
}
