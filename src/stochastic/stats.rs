//! Streaming moments and sample quantiles for Monte Carlo summaries.
//!
//! Quantiles are Hyndman and Fan's (1996) type 7 (linear interpolation between order statistics:
//! h = (n − 1)·p, Q(p) = x₍⌊h⌋₎ + (h − ⌊h⌋)(x₍⌊h⌋+1₎ − x₍⌊h⌋₎), the default of R and NumPy). They are
//! found by selection (O(n) for all the quantiles together), not by sorting: a radix select on the
//! values' order keys for long lists, nested comparison selection for short ones.

use serde::Serialize;

/// Running sums of x − k and (x − k)² around a fixed reference k (close to the mean, so the
/// textbook one-pass variance loses no precision). Sums are added in a fixed order, so results do
/// not depend on the number of threads.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct ShiftedSums {
    /// Reference value k.
    pub reference: f64,
    /// Number of values.
    pub count: u64,
    /// Σ (x − k).
    pub sum: f64,
    /// Σ (x − k)².
    pub sum_sq: f64,
}

/// Adds `x` to sums around `reference`: Σ (x − k) and Σ (x − k)² (the one definition of
/// [`ShiftedSums::push`], which the Monte Carlo's lanes call on their own arrays).
#[inline(always)]
pub(crate) fn shifted_push(reference: f64, x: f64, sum: &mut f64, sum_sq: &mut f64) {
    let d = x - reference;
    *sum += d;
    *sum_sq += d * d;
}

impl ShiftedSums {
    /// Empty sums around `reference`.
    pub fn new(reference: f64) -> ShiftedSums {
        ShiftedSums {
            reference,
            ..Default::default()
        }
    }

    /// Adds a value.
    #[inline]
    pub fn push(&mut self, x: f64) {
        self.count += 1;
        shifted_push(self.reference, x, &mut self.sum, &mut self.sum_sq);
    }

    /// Adds the sums of another run with the same reference.
    #[inline]
    pub fn merge(&mut self, other: &ShiftedSums) {
        self.count += other.count;
        self.sum += other.sum;
        self.sum_sq += other.sum_sq;
    }

    /// The mean (0 when empty).
    pub fn mean(&self) -> f64 {
        if self.count == 0 {
            0.0
        } else {
            self.reference + self.sum / self.count as f64
        }
    }

    /// The sample standard deviation (divisor n − 1; 0 with fewer than two values).
    pub fn sd(&self) -> f64 {
        if self.count < 2 {
            return 0.0;
        }
        let n = self.count as f64;
        ((self.sum_sq - self.sum * self.sum / n) / (n - 1.0))
            .max(0.0)
            .sqrt()
    }
}

/// Mean and the 5 %, 50 % and 95 % quantiles of a sample.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct Summary {
    /// Arithmetic mean.
    pub mean: f64,
    /// 5 % quantile (type 7).
    pub p05: f64,
    /// Median (type 7).
    pub p50: f64,
    /// 95 % quantile (type 7).
    pub p95: f64,
}

impl Summary {
    /// Summarises `values` (reordered in place). The mean is summed in the given order first.
    /// An empty sample gives zeros.
    pub fn of(values: &mut [f64]) -> Summary {
        if values.is_empty() {
            return Summary::default();
        }
        let mean = values.iter().sum::<f64>() / values.len() as f64;
        let q = quantiles(values, &[0.05, 0.5, 0.95]);
        Summary {
            mean,
            p05: q[0],
            p50: q[1],
            p95: q[2],
        }
    }
}

/// Where the type 7 quantile at probability `p` of `n` values lies (Hyndman and Fan 1996,
/// definition 7): the index k of the lower order statistic and the weight of the next one.
#[inline]
pub(crate) fn type7_position(n: usize, p: f64) -> (usize, f64) {
    let h = (n - 1) as f64 * p.clamp(0.0, 1.0);
    let k = (h.floor() as usize).min(n - 1);
    (k, h - k as f64)
}

/// The integer whose order is that of `x` under `f64::total_cmp` (the same transform of the bits
/// that `total_cmp` applies before it compares): `order_key(a) < order_key(b)` exactly when
/// `a.total_cmp(&b)` is `Less`. +0 has key 0 and every value below +0 (−0 included) a negative key.
#[inline]
pub fn order_key(x: f64) -> i64 {
    let b = x.to_bits() as i64;
    b ^ ((((b >> 63) as u64) >> 1) as i64)
}

/// The value of an [`order_key`] (its inverse: the same bits).
#[inline]
pub fn from_order_key(k: i64) -> f64 {
    f64::from_bits((k ^ ((((k >> 63) as u64) >> 1) as i64)) as u64)
}

/// The order statistics of `v` (reordered in place) at the 0-based ranks `ranks` (ascending,
/// distinct, each below `v.len()`; rank r of `v` is rank `r + offset` of the whole list), written
/// to `out` in the same order. Nested selection: the rank nearest the middle of `v` is selected
/// first, then the lower ranks only in the part left of it and the higher ranks only in the part
/// right of it, so each later selection sees a part of the list (a rank at either end of its
/// part is a plain minimum or maximum scan).
fn order_statistics<T: Copy>(
    v: &mut [T],
    offset: usize,
    ranks: &[usize],
    out: &mut [T],
    cmp: &impl Fn(&T, &T) -> std::cmp::Ordering,
) {
    if ranks.is_empty() {
        return;
    }
    let middle = offset + v.len() / 2;
    let m = ranks
        .iter()
        .enumerate()
        .min_by_key(|(_, &r)| r.abs_diff(middle))
        .map_or(0, |(m, _)| m);
    let k = ranks[m] - offset;
    let (left, kth, right) = v.select_nth_unstable_by(k, cmp);
    out[m] = *kth;
    let (out_left, out_rest) = out.split_at_mut(m);
    order_statistics(left, offset, &ranks[..m], out_left, cmp);
    order_statistics(
        right,
        offset + k + 1,
        &ranks[m + 1..],
        &mut out_rest[1..],
        cmp,
    );
}

/// A value selected by its radix key: a `u64` whose unsigned order is the value's order (for an
/// [`order_key`], the key with its sign bit flipped; for an `f64`, that of its order key, so the
/// order of `f64::total_cmp`). Two values with the same radix key have the same bits.
trait RadixKey: Copy {
    /// The key's bits before the sign bit is flipped (which bits two keys share is the same).
    fn bits(self) -> u64;
    #[inline]
    fn radix(self) -> u64 {
        self.bits() ^ (1 << 63)
    }
}

impl RadixKey for i64 {
    #[inline]
    fn bits(self) -> u64 {
        self as u64
    }
}

impl RadixKey for f64 {
    #[inline]
    fn bits(self) -> u64 {
        order_key(self) as u64
    }
}

/// Lists shorter than this are selected by nested comparison selection ([`order_statistics`]),
/// longer ones by radix select ([`radix_order_statistics`]); measured by `benches/quantiles.rs`.
const RADIX_FROM: usize = 512;

/// Lists at least this long are counted in 2048 buckets (11 bits), shorter ones in 256 (8 bits).
const RADIX_WIDE_FROM: usize = 8192;

/// One bucket a radix pass descends into: where its values start in the order of the whole list,
/// how many there are, where they go in the scratch list (and where the next one goes while they
/// are gathered), and which of the wanted ranks it holds.
struct Wanted {
    start: usize,
    len: usize,
    at: usize,
    next: usize,
    ranks: std::ops::Range<usize>,
}

/// [`order_statistics`] (offset 0) by radix select on the values' [`RadixKey`]s: the bits shared by
/// every value are skipped (an OR and an AND of all keys), the next 8 or 11 bits of each key give its
/// bucket, one pass counts the buckets, and one more gathers only the values of the buckets that hold
/// a wanted rank; each of those is selected in the same way (all its values equal: done; a bucket
/// that held more than half its list and is at least half its first value: split about that value,
/// [`split_about_first`]; short: nested selection). All the ranks share the passes. Exact: the same values as sorting. Rank r of
/// `v` is rank `r + offset` of the whole list, as in [`order_statistics`].
fn radix_order_statistics<T: RadixKey>(v: &mut [T], offset: usize, ranks: &[usize], out: &mut [T]) {
    radix_select(v, offset, ranks, out, false);
}

/// [`radix_order_statistics`] of a list that is `bunched` (a bucket that held more than half of
/// the list it came from) or not; only a bunched list is checked for a value held by half of it.
fn radix_select<T: RadixKey>(
    v: &mut [T],
    offset: usize,
    ranks: &[usize],
    out: &mut [T],
    bunched: bool,
) {
    if ranks.is_empty() {
        return;
    }
    // at most 255 buckets are wanted (a u8 tells them apart); u32 counts
    if v.len() < RADIX_FROM || ranks.len() > 255 || v.len() > u32::MAX as usize {
        order_statistics(v, offset, ranks, out, &|a: &T, b: &T| {
            a.radix().cmp(&b.radix())
        });
        return;
    }
    let (all, any) = v.iter().fold((u64::MAX, 0_u64), |(all, any), x| {
        let k = x.bits();
        (all & k, any | k)
    });
    let differ = all ^ any;
    if differ == 0 {
        // every value the same bits
        out.fill(v[0]);
        return;
    }
    if bunched {
        let first = v[0].bits();
        let same = v.iter().filter(|x| x.bits() == first).count();
        if 2 * same >= v.len() {
            // at least half the values are the first one (a stock column at its capacity, say):
            // split the rest about it, not bucket after bucket that keeps most of the list
            split_about_first(v, offset, same, ranks, out);
            return;
        }
    }
    let shift = differ.leading_zeros();
    if v.len() < RADIX_WIDE_FROM {
        radix_pass::<T, 8, 256, 2>(v, shift, offset, ranks, out);
    } else {
        radix_pass::<T, 11, 2048, 1>(v, shift, offset, ranks, out);
    }
}

/// [`radix_order_statistics`] of `v` whose first value is `same` of its values: the values below it
/// and above it (in key order) are copied out and selected apart, the ranks between them are the
/// first value. Exact, as sorting.
fn split_about_first<T: RadixKey>(
    v: &[T],
    offset: usize,
    same: usize,
    ranks: &[usize],
    out: &mut [T],
) {
    let pivot = v[0];
    let key = pivot.radix();
    let mut lower: Vec<T> = v.iter().copied().filter(|x| x.radix() < key).collect();
    let mut upper: Vec<T> = v.iter().copied().filter(|x| x.radix() > key).collect();
    let from = offset + lower.len();
    let to = from + same;
    let in_lower = ranks.partition_point(|&r| r < from);
    let in_pivot = ranks.partition_point(|&r| r < to);
    let (out_lower, rest) = out.split_at_mut(in_lower);
    let (out_pivot, out_upper) = rest.split_at_mut(in_pivot - in_lower);
    radix_order_statistics(&mut lower, offset, &ranks[..in_lower], out_lower);
    out_pivot.fill(pivot);
    radix_order_statistics(&mut upper, to, &ranks[in_pivot..], out_upper);
}

/// One pass of [`radix_order_statistics`] on `BITS` bits (`BUCKETS` = 2^`BITS` buckets) below the
/// first `shift` bits, which every key of `v` shares.
fn radix_pass<T: RadixKey, const BITS: u32, const BUCKETS: usize, const TALLIES: usize>(
    v: &mut [T],
    shift: u32,
    offset: usize,
    ranks: &[usize],
    out: &mut [T],
) {
    // below 2^BITS (the mask where a bucket indexes only tells the compiler so, and indexing the
    // arrays needs no check). The bucket is taken from the key's bits before the sign flip: below
    // the shared prefix they are the same bits, except when the prefix is empty (keys of both
    // signs), where the upper half of the buckets comes first in the order
    let bucket = move |x: T| ((x.bits() << shift) >> (64 - BITS)) as u16;
    let flip = if shift == 0 { BUCKETS / 2 } else { 0 };
    // each value's bucket, worked out once for the count and the gather (a loop of shifts alone)
    let buckets: Vec<u16> = v.iter().map(|&x| bucket(x)).collect();
    // counted in TALLIES tallies, a value in each in turn (a short column bunched in a few
    // buckets would otherwise wait on the same count again and again), then added up
    let mut counts = [0_u32; BUCKETS];
    if TALLIES == 1 {
        for &b in &buckets {
            counts[usize::from(b) & (BUCKETS - 1)] += 1;
        }
    } else {
        let mut tallies = [[0_u32; BUCKETS]; TALLIES];
        let mut runs = buckets.chunks_exact(TALLIES);
        for run in &mut runs {
            for (tally, &b) in tallies.iter_mut().zip(run) {
                tally[usize::from(b) & (BUCKETS - 1)] += 1;
            }
        }
        for (tally, &b) in tallies.iter_mut().zip(runs.remainder()) {
            tally[usize::from(b) & (BUCKETS - 1)] += 1;
        }
        for tally in &tallies {
            for (c, t) in counts.iter_mut().zip(tally) {
                *c += t;
            }
        }
    }
    // the buckets holding wanted ranks, in ascending order; slot[b] = 1 + its place among them
    let mut slot = [0_u8; BUCKETS];
    let mut wanted: Vec<Wanted> = Vec::with_capacity(ranks.len());
    let mut start = offset;
    let mut r = 0;
    let mut rank = ranks[0];
    let mut at = 0;
    for i in 0..BUCKETS {
        // the buckets in the order of their keys
        let b = i ^ flip;
        let c = counts[b];
        let end = start + c as usize;
        if rank < end {
            let first = r;
            while r < ranks.len() && ranks[r] < end {
                r += 1;
            }
            wanted.push(Wanted {
                start,
                len: c as usize,
                at,
                next: at,
                ranks: first..r,
            });
            at += c as usize;
            slot[b] = wanted.len() as u8;
            match ranks.get(r) {
                Some(&next) => rank = next,
                None => break,
            }
        }
        start = end;
    }
    let mut scratch = vec![v[0]; at + 1];
    if 3 * at < v.len() {
        // a third or less of the values wanted: a branch on it is mostly foreseen
        for (&x, &b) in v.iter().zip(&buckets) {
            let s = slot[usize::from(b) & (BUCKETS - 1)];
            if s != 0 {
                let w = &mut wanted[s as usize - 1];
                scratch[w.next] = x;
                w.next += 1;
            }
        }
    } else {
        gather_both_ways(v, &buckets, &slot, &wanted, &mut scratch);
    }
    for w in &wanted {
        radix_select(
            &mut scratch[w.at..w.at + w.len],
            w.start,
            &ranks[w.ranks.clone()],
            &mut out[w.ranks.clone()],
            2 * w.len > v.len(),
        );
    }
}

/// The gather of [`radix_pass`] when many values are wanted, without a branch on whether a value is
/// (it is taken or not at random, about as often as not, in a column bunched in a few buckets):
/// every value is written where its slot's cursor points, and only a wanted bucket's cursor moves
/// on; slot 0 (the buckets not wanted) writes to one place past the wanted values. Two cursors a
/// bucket, one filling it from the front with the values at even places, one from the back with
/// those at odd places (two chains of cursor updates, not one); they meet where its values end.
fn gather_both_ways<T: Copy, const BUCKETS: usize>(
    v: &[T],
    buckets: &[u16],
    slot: &[u8; BUCKETS],
    wanted: &[Wanted],
    scratch: &mut [T],
) {
    let sink = scratch.len() - 1;
    let mut front = [sink; 256];
    let mut back = [sink; 256];
    for ((f, b), w) in front[1..].iter_mut().zip(&mut back[1..]).zip(wanted) {
        *f = w.at;
        *b = w.at + w.len - 1;
    }
    let slot_of = |b: u16| usize::from(slot[usize::from(b) & (BUCKETS - 1)]);
    let mut pairs = v.chunks_exact(2).zip(buckets.chunks_exact(2));
    for (x, b) in &mut pairs {
        let (s, t) = (slot_of(b[0]), slot_of(b[1]));
        let c = front[s];
        scratch[c] = x[0];
        front[s] = c + usize::from(s != 0);
        let d = back[t];
        scratch[d] = x[1];
        back[t] = d.wrapping_sub(usize::from(t != 0));
    }
    if v.len() % 2 == 1 {
        let s = slot_of(buckets[v.len() - 1]);
        scratch[front[s]] = v[v.len() - 1];
    }
}

/// The order statistics of the order keys `keys` (reordered) at the 0-based ranks `ranks`
/// (ascending, distinct, each below `keys.len()`), into `out`, by nested comparison selection
/// (`select_nth_unstable`). The same values as [`order_statistics_by_radix`] and as sorting; kept
/// public so that the two can be measured against each other (`benches/quantiles.rs`).
pub fn order_statistics_by_selection(keys: &mut [i64], ranks: &[usize], out: &mut [i64]) {
    order_statistics(keys, 0, ranks, out, &|a: &i64, b: &i64| a.cmp(b));
}

/// [`order_statistics_by_selection`] by radix select (nested selection below 512 keys and in the
/// short buckets it descends into). The same values.
pub fn order_statistics_by_radix(keys: &mut [i64], ranks: &[usize], out: &mut [i64]) {
    radix_order_statistics(keys, 0, ranks, out);
}

/// Type 7 quantiles at `probs` (ascending) of `n` values whose order statistics `select` finds:
/// handed the ascending distinct ranks the quantiles read, it returns those order statistics in
/// that order, as numbers.
fn type7_from(n: usize, probs: &[f64], select: impl FnOnce(&[usize], &mut Vec<f64>)) -> Vec<f64> {
    if n == 0 {
        return vec![0.0; probs.len()];
    }
    let positions: Vec<(usize, f64)> = probs.iter().map(|&p| type7_position(n, p)).collect();
    let mut ranks: Vec<usize> = Vec::with_capacity(2 * probs.len());
    for &(k, frac) in &positions {
        ranks.push(k);
        if frac > 0.0 && k + 1 < n {
            ranks.push(k + 1);
        }
    }
    ranks.sort_unstable();
    ranks.dedup();
    let mut values = Vec::with_capacity(ranks.len());
    select(&ranks, &mut values);
    let at = |r: usize| values[ranks.partition_point(|&x| x < r)];
    positions
        .iter()
        .map(|&(k, frac)| {
            let low = at(k);
            if frac > 0.0 && k + 1 < n {
                let high = at(k + 1);
                low + frac * (high - low)
            } else {
                low
            }
        })
        .collect()
}

/// Type 7 quantiles at probabilities `probs` (ascending, in [0, 1]); `values` is reordered in place.
/// Order statistics under `f64::total_cmp`; NaN values sort last (they never arise from the
/// engine, which rejects non-finite prices).
pub fn quantiles(values: &mut [f64], probs: &[f64]) -> Vec<f64> {
    type7_from(values.len(), probs, |ranks, out| {
        out.resize(ranks.len(), 0.0);
        radix_order_statistics(values, 0, ranks, out);
    })
}

/// [`quantiles`] of a sample given as `values` (any order; reordered in place) plus `zeros` values
/// equal to +0 that are not in the slice: the same bits as [`quantiles`] of the whole sample, since
/// a type 7 quantile depends only on the order statistics (under `f64::total_cmp`, where −0 lies
/// below +0).
pub fn quantiles_with_zeros(values: &mut [f64], zeros: usize, probs: &[f64]) -> Vec<f64> {
    let mut keys: Vec<i64> = values.iter().map(|&x| order_key(x)).collect();
    quantiles_of_keys(&mut keys, zeros, probs)
}

/// [`quantiles_with_zeros`] of the values whose [`order_key`]s are `keys` (reordered in place),
/// plus `zeros` values equal to +0 (key 0) not in the slice: the same bits, found by comparing
/// integers.
pub fn quantiles_of_keys(keys: &mut [i64], zeros: usize, probs: &[f64]) -> Vec<f64> {
    let n = keys.len() + zeros;
    type7_from(n, probs, |ranks, out| {
        // the keys below +0 to the front; the zeros held apart lie between them and the rest
        let mut below = 0;
        if zeros > 0 {
            for i in 0..keys.len() {
                if keys[i] < 0 {
                    keys.swap(i, below);
                    below += 1;
                }
            }
        }
        let (lo, hi) = keys.split_at_mut(below);
        let in_lo = ranks.partition_point(|&r| r < below);
        let in_zeros = ranks.partition_point(|&r| r < below + zeros);
        let mut got = vec![0_i64; ranks.len()];
        radix_order_statistics(lo, 0, &ranks[..in_lo], &mut got[..in_lo]);
        radix_order_statistics(hi, below + zeros, &ranks[in_zeros..], &mut got[in_zeros..]);
        // got[in_lo..in_zeros] stay 0: the key of +0
        out.extend(got.into_iter().map(from_order_key));
    })
}

/// Type 7 quantiles at `probs` (ascending) of a list made of the values whose [`order_key`]s are
/// `keys` (reordered in place) and `below` more values, each at or below every one of `keys`, that
/// are not held: the same bits as [`quantiles`] of the whole list, or `None` when a quantile reads
/// one of the values not held. All the order statistics are selected together
/// ([`order_statistics_by_radix`], ranks offset by `below`).
pub fn quantiles_above(keys: &mut [i64], below: usize, probs: &[f64]) -> Option<Vec<f64>> {
    let n = keys.len() + below;
    if n > 0 && probs.iter().any(|&p| type7_position(n, p).0 < below) {
        return None;
    }
    Some(type7_from(n, probs, |ranks, out| {
        let mut got = vec![0_i64; ranks.len()];
        radix_order_statistics(keys, below, ranks, &mut got);
        out.extend(got.into_iter().map(from_order_key));
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn type7_matches_hand_values() {
        // R: quantile(c(1,2,3,4,5,6,7,8,9,10), c(.05,.5,.95), type = 7) = 1.45, 5.5, 9.55
        // (Hyndman and Fan 1996, definition 7; values worked by hand)
        let mut v: Vec<f64> = (1..=10).rev().map(f64::from).collect();
        let q = quantiles(&mut v, &[0.05, 0.5, 0.95]);
        assert!((q[0] - 1.45).abs() < 1e-12, "{q:?}");
        assert!((q[1] - 5.5).abs() < 1e-12);
        assert!((q[2] - 9.55).abs() < 1e-12);
    }

    #[test]
    fn selection_agrees_with_sorting() {
        let mut x = 0.123_f64;
        let mut v: Vec<f64> = (0..997)
            .map(|_| {
                x = (x * 3.9 * (1.0 - x)).clamp(1e-6, 1.0 - 1e-6);
                x
            })
            .collect();
        let mut sorted = v.clone();
        sorted.sort_by(f64::total_cmp);
        let probs = [0.0, 0.05, 0.25, 0.5, 0.95, 1.0];
        let q = quantiles(&mut v, &probs);
        for (p, got) in probs.iter().zip(q) {
            let h = 996.0 * p;
            let lo = h.floor() as usize;
            let hi = (lo + 1).min(996);
            let want = sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo]);
            assert!((got - want).abs() < 1e-15, "p={p}: {got} vs {want}");
        }
    }

    #[test]
    fn nested_selection_gives_the_order_statistics_of_sorting() {
        // the k-th order statistic is the k-th value of the sorted list (its definition; e.g.
        // David and Nagaraja 2003, ch. 1, from memory): sorting under `f64::total_cmp` is the
        // reference, for spreads from a handful of distinct values to the whole f64 range
        let mut x = 0.271_f64;
        let mut next = || {
            x = (x * 3.99 * (1.0 - x)).clamp(1e-9, 1.0 - 1e-9);
            x
        };
        let lists: Vec<Vec<f64>> = vec![
            (0..3001).map(|_| 200.0 + 40.0 * (next() - 0.5)).collect(),
            (0..5000).map(|_| (10.0 * next()).floor()).collect(),
            (0..700)
                .map(|i| match i % 7 {
                    0 => f64::INFINITY,
                    1 => f64::NEG_INFINITY,
                    2 => -0.0,
                    3 => 0.0,
                    4 => f64::MAX * next(),
                    5 => -1e-300 * next(),
                    _ => next(),
                })
                .collect(),
            vec![5.5; 1000],
            // long lists: radix select descends more than once; a column mostly of one value
            (0..100_000)
                .map(|_| 200.0 + 40.0 * (next() - 0.5))
                .collect(),
            (0..20_000)
                .map(|i| if i % 10 < 8 { 0.0 } else { next() })
                .collect(),
            // a stock column mostly at its capacity, the rest on both sides of it (the value held
            // most is first in the list, and not first)
            (0..1000)
                .map(|i| if i % 10 < 9 { 60.0 } else { 120.0 * next() })
                .collect(),
            (0..9000)
                .map(|i| if i % 7 < 4 { 60.0 } else { 120.0 * next() })
                .rev()
                .collect(),
            (0..600)
                .map(|i| if i % 2 == 0 { -0.0 } else { next() - 0.5 })
                .collect(),
            // prices bunched far inside a wide range (a few extreme ones): nearly every value in
            // the buckets wanted (the gather without a branch), odd and even lengths
            (0..1001)
                .map(|i| match i % 250 {
                    0 => 1e6 * next(),
                    1 => -1e6 * next(),
                    _ => 210.0 + next(),
                })
                .collect(),
            (0..4000)
                .map(|i| match i % 400 {
                    0 => 1e9,
                    _ => 210.0 + next(),
                })
                .collect(),
            // mostly one value inside a wide range: its bucket is bunched, then split about it
            (0..3001)
                .map(|i| match i % 10 {
                    0 => 1e6 * next(),
                    1 => -1e6 * next(),
                    _ => 60.0,
                })
                .collect(),
            (0..20_000)
                .map(|i| match i % 4 {
                    0 => -0.0,
                    1 => 0.0,
                    2 => f64::INFINITY,
                    _ => -next(),
                })
                .collect(),
        ];
        for whole in lists {
            let mut sorted = whole.clone();
            sorted.sort_by(f64::total_cmp);
            let n = whole.len();
            let ranks = [0, 1, n / 20, n / 20 + 1, n / 2, n / 2 + 1, n - 2, n - 1];
            let mut keys: Vec<i64> = whole.iter().map(|&v| order_key(v)).collect();
            let mut got = vec![0; ranks.len()];
            order_statistics(&mut keys, 0, &ranks, &mut got, &|a: &i64, b: &i64| a.cmp(b));
            for (r, k) in ranks.iter().zip(&got) {
                assert_eq!(
                    from_order_key(*k).to_bits(),
                    sorted[*r].to_bits(),
                    "rank {r}"
                );
            }
            // radix select, on the keys and on the values themselves
            let mut keys: Vec<i64> = whole.iter().map(|&v| order_key(v)).collect();
            let mut got = vec![0; ranks.len()];
            order_statistics_by_radix(&mut keys, &ranks, &mut got);
            let mut values = whole.clone();
            let mut got_values = vec![0.0; ranks.len()];
            radix_order_statistics(&mut values, 0, &ranks, &mut got_values);
            for ((r, k), v) in ranks.iter().zip(&got).zip(&got_values) {
                assert_eq!(
                    from_order_key(*k).to_bits(),
                    sorted[*r].to_bits(),
                    "rank {r}"
                );
                assert_eq!(v.to_bits(), sorted[*r].to_bits(), "rank {r}");
            }
            let probs = [0.0, 0.05, 0.5, 0.95, 1.0];
            let mut keys: Vec<i64> = whole.iter().map(|&v| order_key(v)).collect();
            let by_keys = quantiles_of_keys(&mut keys, 0, &probs);
            let by_values = quantiles(&mut whole.clone(), &probs);
            for (a, b) in by_keys.iter().zip(&by_values) {
                assert_eq!(a.to_bits(), b.to_bits());
            }
        }
    }

    #[test]
    fn shifted_sums_give_sample_moments() {
        let mut s = ShiftedSums::new(100.0);
        for x in [98.0, 100.0, 102.0, 104.0] {
            s.push(x);
        }
        // mean 101, sample variance ((9 + 1 + 1 + 9) / 3)
        assert!((s.mean() - 101.0).abs() < 1e-12);
        assert!((s.sd() - (20.0f64 / 3.0).sqrt()).abs() < 1e-12);
    }
    #[test]
    fn zeros_held_apart_give_the_quantiles_of_the_whole_sample() {
        // type 7 (Hyndman and Fan 1996, definition 7) of a sample depends only on its order
        // statistics; here the whole sample, with its +0 values written out, is the reference
        let mut x = 0.377_f64;
        let mut whole: Vec<f64> = (0..1501)
            .map(|i| {
                x = (x * 3.7 * (1.0 - x)).clamp(1e-6, 1.0 - 1e-6);
                match i % 5 {
                    0 | 1 => 0.0,
                    2 => -0.0,
                    3 => x - 0.4,
                    _ => x,
                }
            })
            .collect();
        let mut rest: Vec<f64> = whole.iter().copied().filter(|v| v.to_bits() != 0).collect();
        let zeros = whole.len() - rest.len();
        assert!(zeros > 500);
        let probs = [0.0, 0.05, 0.3, 0.5, 0.95, 0.99, 1.0];
        let want = quantiles(&mut whole, &probs);
        let got = quantiles_with_zeros(&mut rest, zeros, &probs);
        for (a, b) in want.iter().zip(&got) {
            assert_eq!(a.to_bits(), b.to_bits(), "{want:?} vs {got:?}");
        }
        // only zeros, and a single value among zeros
        assert_eq!(quantiles_with_zeros(&mut [], 4, &[0.5]), vec![0.0]);
        let mut one = [3.0];
        let mut whole = [0.0, 0.0, 3.0];
        assert_eq!(
            quantiles_with_zeros(&mut one, 2, &[0.5, 0.95]),
            quantiles(&mut whole, &[0.5, 0.95])
        );
    }
}
