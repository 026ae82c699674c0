//! Standard normals of one random stream, many at once: the values `rand_distr`'s
//! `StandardNormal` gives drawn one by one, from the same words of the stream, and the stream left
//! where those draws leave it.
//!
//! `StandardNormal` is a ziggurat of 256 layers (Marsaglia and Tsang 2000, "The ziggurat method for
//! generating random variables", J. Stat. Software 5(8); from memory): a draw takes one 64-bit word,
//! its low 8 bits pick layer i and its high 52 bits give u in [−1, 1); x = u x_i is the value when
//! |x| < x_{i+1}, which is so for about 99 of 100 words; otherwise the draw goes on with more words
//! (a test against the density, the tail). One call a normal cost about as much as the ChaCha8
//! words it reads. Here the stream's words are read a block at a time into a buffer
//! ([`rand::RngExt::fill`]: the same words in the same order), the first test is made for every word
//! of the block in one loop (vectorised in the wider copies), and every word that fails it is
//! handed back to `StandardNormal` itself through a reader that gives the buffer's words from that
//! one on, then the stream's: so the rare draws are `rand_distr`'s own, word for word.
//!
//! The layer edges x_0 … x_255 are not copied from `rand_distr`: they are read from its sampler
//! once ([`edges`]), each by a word that picks layer i with u = 2⁻ᵏ (x = u x_i is exact). x_255 and
//! x_256 cannot be read so (the top layer never passes the first test); they are NaN here, so a
//! word of layers 254 and 255 always goes to `StandardNormal`. A probe of 4 096 draws against
//! `StandardNormal` checks the whole before it is used; should it fail (another version of
//! `rand_distr` drawing otherwise), every normal is drawn by `StandardNormal` one by one.

use std::convert::Infallible;
use std::sync::OnceLock;

use rand::{Rng, RngExt, SeedableRng, TryRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::StandardNormal;

use crate::numeric::{simd, simd_copies, Simd};

/// The normals of a block: a buffer of 2 · `BLOCK` words (one 64-bit word a normal that passes the
/// first test).
const BLOCK: usize = 128;

/// `out.len()` standard normals of `rng`, in order: the values of `rng.sample(StandardNormal)` drawn
/// one by one, and `rng` left where those draws would leave it. (A caller drawing many times keeps
/// a [`NormalDraws`] and saves setting up its buffers each time.)
pub fn standard_normals(rng: &mut ChaCha8Rng, out: &mut [f64]) {
    NormalDraws::new().draw(rng, out);
}

/// The buffers [`standard_normals`] draws a block in, kept from one draw to the next.
#[derive(Debug, Clone)]
pub struct NormalDraws {
    /// the block's words, two a normal that passes the first test
    words: [u32; 2 * BLOCK],
    /// each 64-bit word's first value u x_i, and whether it passed
    xs: [f64; BLOCK],
    passed: [bool; BLOCK],
}

impl Default for NormalDraws {
    fn default() -> Self {
        NormalDraws::new()
    }
}

impl NormalDraws {
    /// Empty buffers.
    pub fn new() -> NormalDraws {
        NormalDraws {
            words: [0; 2 * BLOCK],
            xs: [0.0; BLOCK],
            passed: [false; BLOCK],
        }
    }

    /// [`standard_normals`] of `rng` into `out`.
    pub fn draw(&mut self, rng: &mut ChaCha8Rng, out: &mut [f64]) {
        match edges() {
            Some(edges) => self.by_blocks(simd(), edges, rng, out),
            None => out.iter_mut().for_each(|z| *z = rng.sample(StandardNormal)),
        }
    }

    /// [`NormalDraws::draw`] block by block with the first test made in the copy `simd` names.
    fn by_blocks(&mut self, simd: Simd, edges: &[f64; 257], rng: &mut ChaCha8Rng, out: &mut [f64]) {
        let mut done = 0;
        while done < out.len() {
            let m = (out.len() - done).min(BLOCK);
            let words = &mut self.words[..2 * m];
            rng.fill(words);
            let (xs, passed) = (&mut self.xs[..m], &mut self.passed[..m]);
            first_test(simd, edges, words, xs, passed);
            // the words read so far (c) and the normals given (t): the normals that passed take
            // their words, a run at a time; one that did not is drawn by `StandardNormal` from
            // that word on
            let out = &mut out[done..done + m];
            let (mut c, mut t) = (0, 0);
            while t < m && c < words.len() {
                if c.is_multiple_of(2) {
                    let k = c / 2;
                    // t ≤ k (a normal takes two words at least), so the run fits in `out`
                    let run = passed[k..].iter().take_while(|&&p| p).count();
                    out[t..t + run].copy_from_slice(&xs[k..k + run]);
                    t += run;
                    c += 2 * run;
                    if t == m || c == words.len() {
                        break;
                    }
                }
                let mut reader = Words {
                    words,
                    at: c,
                    after: After::Stream(&mut *rng),
                };
                out[t] = reader.sample(StandardNormal);
                c = reader.at;
                t += 1;
            }
            // past the buffer the reader read on from `rng`, which stands where the draws left it
            done += t;
        }
    }
}

simd_copies! {
    /// The first test of the ziggurat for every 64-bit word of `words` (two 32-bit words, the
    /// first the low half, as `next_u64` reads them): the value u x_i, and whether it passes
    /// (|u x_i| < x_{i+1}; never for an edge that is NaN).
    fn first_test[](edges: &[f64; 257], words: &[u32], xs: &mut [f64], passed: &mut [bool]) {
        for ((pair, x), ok) in words.chunks_exact(2).zip(xs.iter_mut()).zip(passed.iter_mut()) {
            let w = u64::from(pair[0]) | (u64::from(pair[1]) << 32);
            let i = (w & 0xff) as usize;
            // the high 52 bits as a number in [2, 4), less 3
            let u = f64::from_bits((w >> 12) | 0x4000_0000_0000_0000) - 3.0;
            let v = u * edges[i];
            *x = v;
            *ok = v.abs() < edges[i + 1];
        }
    }
}

/// The words of a stream: those of `words` from `at` on, then those of `after`, counting the words
/// read.
struct Words<'a> {
    words: &'a [u32],
    at: usize,
    after: After<'a>,
}

/// Where [`Words`] reads on past its buffer.
enum After<'a> {
    /// The stream the buffer was filled from (standing just past it): the words it would give
    /// from the place of `words[at]`.
    Stream(&'a mut ChaCha8Rng),
    /// The 64-bit word 2⁶³ + 128 again and again (layer 128 with u = 0, which passes the first
    /// test, so a draw that did not pass on the given words ends on the next; reading the edges).
    Passing,
}

impl TryRng for Words<'_> {
    type Error = Infallible;

    fn try_next_u32(&mut self) -> Result<u32, Infallible> {
        let w = match (self.words.get(self.at), &mut self.after) {
            (Some(&w), _) => w,
            (None, After::Stream(rng)) => rng.next_u32(),
            (None, After::Passing) if self.at.is_multiple_of(2) => 128,
            (None, After::Passing) => 1 << 31,
        };
        self.at += 1;
        Ok(w)
    }

    fn try_next_u64(&mut self) -> Result<u64, Infallible> {
        // two words, the first the low half (as the stream's own `next_u64`)
        let lo = self.next_u32();
        let hi = self.next_u32();
        Ok((u64::from(hi) << 32) | u64::from(lo))
    }

    fn try_fill_bytes(&mut self, dst: &mut [u8]) -> Result<(), Infallible> {
        // a word a four bytes, little-endian, a last part word taking a whole word (as the
        // stream's own `fill_bytes`)
        for part in dst.chunks_mut(4) {
            let w = self.next_u32().to_le_bytes();
            part.copy_from_slice(&w[..part.len()]);
        }
        Ok(())
    }
}

/// The layer edges of `StandardNormal` read from it (NaN where a layer cannot be read), when the
/// normals by blocks then give its values on a probe; None otherwise. Worked out once.
fn edges() -> Option<&'static [f64; 257]> {
    static EDGES: OnceLock<Option<[f64; 257]>> = OnceLock::new();
    EDGES
        .get_or_init(|| {
            let edges = read_edges();
            probe_agrees(&edges).then_some(edges)
        })
        .as_ref()
}

/// x_i for every layer i whose first test some u = 2⁻ᵏ passes: the word with low bits i and high
/// bits 3 + 2⁻ᵏ (so u = 2⁻ᵏ) read by `StandardNormal` alone gives u x_i, exactly; NaN for the
/// others (and x_256).
fn read_edges() -> [f64; 257] {
    let mut edges = [f64::NAN; 257];
    for (i, edge) in edges.iter_mut().enumerate().take(256) {
        for k in 1..=51_u32 {
            let w = (((1_u64 << 51) | (1_u64 << (51 - k))) << 12) | i as u64;
            let mut given = Words {
                words: &[w as u32, (w >> 32) as u32],
                at: 0,
                after: After::Passing,
            };
            let x: f64 = given.sample(StandardNormal);
            if given.at == 2 {
                // one word read: the first test passed, x = 2⁻ᵏ x_i
                *edge = x * 2_f64.powi(k as i32);
                break;
            }
        }
    }
    edges
}

/// Whether the normals by blocks give `StandardNormal`'s values, and leave the stream where it
/// does, on 4 096 draws of a fixed stream, in blocks of every size.
fn probe_agrees(edges: &[f64; 257]) -> bool {
    let mut blocks = ChaCha8Rng::seed_from_u64(0x5eed);
    let mut one_by_one = blocks.clone();
    let mut got = vec![0.0; 4096];
    let (mut at, mut len) = (0, 1);
    while at < got.len() {
        let len_here = len.min(got.len() - at);
        NormalDraws::new().by_blocks(Simd::Plain, edges, &mut blocks, &mut got[at..at + len_here]);
        at += len_here;
        len += 1;
    }
    let agree = got.iter().all(|z| {
        let want: f64 = one_by_one.sample(StandardNormal);
        z.to_bits() == want.to_bits()
    });
    let with_simd = {
        let mut a = ChaCha8Rng::seed_from_u64(0x5eed);
        let mut b = vec![0.0; 4096];
        NormalDraws::new().by_blocks(simd(), edges, &mut a, &mut b);
        b == got
    };
    agree && with_simd && blocks.get_word_pos() == one_by_one.get_word_pos()
}

/// Whether the normals are drawn by blocks on this machine (the layer edges read and the probe
/// passed); otherwise by `StandardNormal` one by one.
pub fn by_blocks() -> bool {
    edges().is_some()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_edges_read_are_those_of_a_normal_ziggurat() {
        // the layers of a 256-layer ziggurat for the standard normal (Marsaglia and Tsang 2000):
        // x_1 = r ≈ 3.6542 (the tail's start), x_0 = v / f(r) ≈ 3.9108 (the base layer's width),
        // decreasing edges, and equal areas: x_i (f(x_{i+1}) − f(x_i)) = v for each layer
        let e = read_edges();
        assert!((e[1] - 3.654_152_885_361_009).abs() < 1e-12, "{}", e[1]);
        assert!((e[0] - 3.910_757_959_537_09).abs() < 1e-12, "{}", e[0]);
        let f = |x: f64| (-0.5 * x * x).exp();
        let v = e[1] * f(e[1])
            + (1.0 - erf_series(e[1] / std::f64::consts::SQRT_2)) * 0.5
                / (1.0 / (2.0 * std::f64::consts::PI).sqrt());
        for i in 1..254 {
            assert!(e[i + 1] < e[i], "{i}");
            let area = e[i] * (f(e[i + 1]) - f(e[i]));
            assert!((area - v).abs() < 1e-9 * v, "layer {i}: {area} against {v}");
        }
        // v ≈ 0.004928673233992 for 256 layers (Marsaglia and Tsang 2000; from memory)
        assert!((v - 0.004_928_673_233_992).abs() < 1e-12, "{v}");
        assert!(e[255].is_nan() && e[256].is_nan());
    }

    /// erf by the series of Abramowitz and Stegun (1964) 7.1.5 (enough terms for x below 3).
    fn erf_series(x: f64) -> f64 {
        let mut sum = 0.0_f64;
        let mut term = x;
        let mut n = 0.0;
        while term.abs() > 1e-18 * sum.abs().max(1e-300) || n < 5.0 {
            sum += term / (2.0 * n + 1.0);
            n += 1.0;
            term *= -x * x / n;
        }
        sum * 2.0 / std::f64::consts::PI.sqrt()
    }
}
