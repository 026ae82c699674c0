//! The Monte Carlo's fold of one model over the lanes of a chunk (lane l = the chunk's l-th
//! replication), a block of [`FOLD_BLOCK`] periods at a time, reading the periods' records column
//! by column ([`Columns`]).
//!
//! Every accumulator is an array over the lanes (structure of arrays), each block's work is a few
//! loops over every lane (the block's periods inside each, in order) with the run's options
//! matched once outside them,
//! and counts are integer arrays: the loops have no branch per lane, so the compiler can run them
//! in vector registers. Per lane the additions come in period order, as a fold of one replication
//! would make them, so every lane's sums have the bits of that fold. Lanes at and above the chunk's
//! size, and lanes whose path ended, hold values of no meaning (the chunk then fails, or they are
//! never read); nothing here can panic on them.

// the lane loops index several arrays by the same lane, over every lane
#![allow(clippy::needless_range_loop)]

use crate::engine::{floor_binding, Columns, LANES};
use crate::numeric::{simd_copies, Simd};
use crate::policies::flags;
use crate::scenario::MAX_ALERTS;
use crate::trade::leakage_add;
use crate::welfare::{discounted_trade, finish_pv, revenue_of, Crra, PeriodItems, PERIOD_ITEMS};

use super::montecarlo::{Pooled, ReplicationSummary, Watch};
use super::stats::{shifted_push, ShiftedSums};

/// One value per lane.
pub(crate) type Lanes = [f64; LANES];

/// A count of seasons per lane.
type Counts = [u32; LANES];

const ZERO: Lanes = [0.0; LANES];

/// [`ShiftedSums`] of every lane (all lanes count the same values, so the count is held once by
/// the fold): Σ (x − k) and Σ (x − k)² per lane around one reference k.
#[derive(Debug, Clone)]
pub(crate) struct LaneSums {
    reference: f64,
    sum: Lanes,
    sum_sq: Lanes,
}

impl LaneSums {
    pub(crate) fn new(reference: f64) -> LaneSums {
        LaneSums {
            reference,
            sum: ZERO,
            sum_sq: ZERO,
        }
    }

    /// Adds lane l's value `x[l]` to lane l ([`ShiftedSums::push`] lane by lane).
    #[cfg(test)]
    fn push(&mut self, x: &Lanes) {
        for (l, &x) in x.iter().enumerate() {
            self.push_lane(l, x);
        }
    }

    /// Adds `x` to lane `l`.
    #[inline(always)]
    fn push_lane(&mut self, l: usize, x: f64) {
        shifted_push(self.reference, x, &mut self.sum[l], &mut self.sum_sq[l]);
    }

    /// Lane `lane`'s sums of `count` values.
    pub(crate) fn lane(&self, lane: usize, count: u64) -> ShiftedSums {
        ShiftedSums {
            reference: self.reference,
            count,
            sum: self.sum[lane],
            sum_sq: self.sum_sq[lane],
        }
    }
}

/// Periods the fold takes at once ([`LaneFold::add`]): each lane's sums are read and written once
/// a block, held in registers across its periods (the stores of some thirty sums a lane a period
/// were the fold's cost).
pub(crate) const FOLD_BLOCK: usize = 4;

/// The replications of one model in a chunk, folded over the lanes a block of periods at a time.
#[derive(Debug, Clone)]
pub(crate) struct LaneFold {
    /// periods folded (the same in every lane whose path has not ended)
    count: usize,
    /// discount-weighted sums of the period items (welfare::PeriodItems order)
    items: [Lanes; PERIOD_ITEMS],
    /// discount-weighted border receipts and quota rents
    trade: [Lanes; 2],
    price: LaneSums,
    producer_price: LaneSums,
    harvest: LaneSums,
    revenue: LaneSums,
    /// Σ of the CRRA transform of income
    income_transform: Lanes,
    imports: Lanes,
    exports: Lanes,
    fiscal_sum: Lanes,
    worst: Lanes,
    running: Lanes,
    peak: Lanes,
    floor_binding: Counts,
    stockout: Counts,
    budget_exceeded: Counts,
    alerts: [Counts; MAX_ALERTS],
    floor_failed: Counts,
    band_failed: Counts,
    capacity_full: Counts,
    budget_bound: Counts,
    import_periods: Counts,
    export_periods: Counts,
    /// the block just folded: each period's producers' income in each lane
    pub(crate) income: [Lanes; FOLD_BLOCK],
    /// the block just folded: each period's CRRA transform of income in each lane
    pub(crate) transform: [Lanes; FOLD_BLOCK],
    /// the CRRA form of the run's risk aversion (chosen once)
    crra: Crra,
    /// the copy of [`LaneFold::add`] the fold runs, the widest the machine runs (the same
    /// arithmetic in wider registers, so the same bits)
    simd: Simd,
}

impl LaneFold {
    /// An empty fold of `watch`'s policy; moments shifted by the steady state (P*, Q*).
    pub(crate) fn new(watch: &Watch, steady_price: f64, steady_quantity: f64) -> LaneFold {
        let running = watch.books.opening_stock_cost;
        LaneFold {
            count: 0,
            items: [ZERO; PERIOD_ITEMS],
            trade: [ZERO; 2],
            price: LaneSums::new(steady_price),
            producer_price: LaneSums::new(steady_price),
            harvest: LaneSums::new(steady_quantity),
            revenue: LaneSums::new(steady_price * steady_quantity),
            income_transform: ZERO,
            imports: ZERO,
            exports: ZERO,
            fiscal_sum: ZERO,
            worst: [f64::NEG_INFINITY; LANES],
            running: [running; LANES],
            peak: [running.max(0.0); LANES],
            floor_binding: [0; LANES],
            stockout: [0; LANES],
            budget_exceeded: [0; LANES],
            alerts: [[0; LANES]; MAX_ALERTS],
            floor_failed: [0; LANES],
            band_failed: [0; LANES],
            capacity_full: [0; LANES],
            budget_bound: [0; LANES],
            import_periods: [0; LANES],
            export_periods: [0; LANES],
            income: [ZERO; FOLD_BLOCK],
            transform: [ZERO; FOLD_BLOCK],
            crra: Crra::new(watch.risk_aversion),
            simd: crate::numeric::simd(),
        }
    }

    /// Folds the periods of `block` (in order; at most [`FOLD_BLOCK`], any more are left out)
    /// into each lane's sums; leaves each period's income of every lane and its CRRA transform in
    /// [`LaneFold::income`] and [`LaneFold::transform`] (period `j` of the block at `[j]`). Runs
    /// the copy of [`LaneFold::fold`] the fold's `simd` names: a whole block at once, a shorter
    /// one period by period.
    #[inline]
    pub(crate) fn add(&mut self, block: &[Columns], watch: &Watch) {
        let simd = self.simd;
        match <&[Columns; FOLD_BLOCK]>::try_from(block) {
            Ok(whole) => fold_copies(simd, self, whole, 0, watch),
            Err(_) => {
                for (j, c) in block.iter().enumerate().take(FOLD_BLOCK) {
                    fold_copies(simd, self, std::array::from_ref(c), j, watch);
                }
            }
        }
    }

    /// The one definition of the fold of `K` periods (places `first..first + K` of
    /// [`LaneFold::income`] and [`LaneFold::transform`]). Each loop runs over the lanes with the
    /// periods inside it (`K` a constant, so unrolled): a lane's sums are read once, added to in
    /// period order, written once — the same bits as one period at a time, with a fraction of the
    /// loads and stores.
    #[inline(always)]
    fn fold<const K: usize>(&mut self, block: &[Columns; K], first: usize, watch: &Watch) {
        self.count += K;
        self.welfare(block, watch);
        self.income_and_moments(block, first, watch);
        self.outlays(block, watch);
        self.seasons(block, watch);
    }

    /// The present values (`welfare::WelfareFold::add` lane by lane).
    #[inline(always)]
    fn welfare<const K: usize>(&mut self, block: &[Columns; K], watch: &Watch) {
        let books = &watch.books;
        let kept = books.financing_kept;
        let factors = block.each_ref().map(|c| books.discount.factor(c.period));
        for l in 0..LANES {
            for (c, &f) in block.iter().zip(&factors) {
                let d = PeriodItems {
                    consumer_surplus: c.consumer_surplus[l],
                    producer_surplus: c.producer_surplus[l],
                    fiscal_cost: c.fiscal_cost[l],
                    financing_cost: c.financing_cost[l],
                    purchase_cost: c.purchase_cost[l],
                    sales_revenue: c.sales_revenue[l],
                    storage_cost: c.storage_cost[l],
                    handling_cost: c.handling_cost[l],
                    deficiency_payments: c.deficiency_payments[l],
                }
                .discounted(f, kept);
                for (acc, d) in self.items.iter_mut().zip(d) {
                    acc[l] += d;
                }
            }
        }
        // a period whose columns carry no trade adds nothing: each trading period in turn (in
        // period order, so each sum's additions still come in that order)
        for (c, &f) in block.iter().zip(&factors).filter(|(c, _)| c.trades) {
            let t = &c.trade;
            let [border, quota] = &mut self.trade;
            for l in 0..LANES {
                let [b, q] = discounted_trade(f, t.border_revenue[l], t.quota_rent[l]);
                border[l] += b;
                quota[l] += q;
            }
            for l in 0..LANES {
                self.imports[l] += t.imports[l];
                self.exports[l] += t.exports[l];
                self.import_periods[l] += u32::from(t.imports[l] > 0.0);
                self.export_periods[l] += u32::from(t.exports[l] > 0.0);
            }
        }
    }

    /// Income, its CRRA transform and the pooled moments.
    #[inline(always)]
    fn income_and_moments<const K: usize>(
        &mut self,
        block: &[Columns; K],
        first: usize,
        watch: &Watch,
    ) {
        let scale = watch.income_scale();
        let crra = self.crra;
        for (j, c) in block.iter().enumerate() {
            let (income, transform) = (&mut self.income[first + j], &mut self.transform[first + j]);
            for l in 0..LANES {
                income[l] = watch.income_of(revenue_of(c.producer_price[l], c.harvest[l]));
            }
            // the form matched once; each arm's loop has it as a constant
            let mut fill = |crra: Crra| {
                for (t, &y) in transform.iter_mut().zip(&*income) {
                    *t = crra.of(y, scale);
                }
            };
            match crra {
                Crra::Linear => fill(Crra::Linear),
                Crra::Reciprocal => fill(Crra::Reciprocal),
                Crra::Log => fill(Crra::Log),
                Crra::Power(e) => fill(Crra::Power(e)),
            }
        }
        let transform = &self.transform[first..first + K];
        for l in 0..LANES {
            for (c, transform) in block.iter().zip(transform) {
                self.price.push_lane(l, c.price[l]);
                self.producer_price.push_lane(l, c.producer_price[l]);
                self.harvest.push_lane(l, c.harvest[l]);
                let revenue = revenue_of(c.producer_price[l], c.harvest[l]);
                self.revenue.push_lane(l, revenue);
                self.income_transform[l] += transform[l];
            }
        }
    }

    /// The season outlays: their sum, the worst, the running total and its peak, the seasons over
    /// budget.
    #[inline(always)]
    fn outlays<const K: usize>(&mut self, block: &[Columns; K], watch: &Watch) {
        let budget = watch.annual_budget * (1.0 + 1e-12);
        for l in 0..LANES {
            for c in block {
                let x = c.fiscal_cost[l];
                self.fiscal_sum[l] += x;
                self.worst[l] = self.worst[l].max(x);
                self.running[l] += x;
                self.peak[l] = self.peak[l].max(self.running[l]);
            }
        }
        // the counts in a loop of their own: a store to an array of u32 beside the sums of f64
        // would keep the optimiser from holding the sums in registers across the periods (it
        // cannot tell the two arrays apart at a common lane index)
        for l in 0..LANES {
            for c in block {
                self.budget_exceeded[l] += u32::from(c.fiscal_cost[l] > budget);
            }
        }
    }

    /// The counts of seasons.
    #[inline(always)]
    fn seasons<const K: usize>(&mut self, block: &[Columns; K], watch: &Watch) {
        const CUT: u16 = flags::CAPACITY_FULL | flags::BUDGET_BOUND;
        for l in 0..LANES {
            for c in block {
                self.floor_binding[l] +=
                    u32::from(floor_binding(c.purchases[l], c.deficiency_payments[l]));
                self.stockout[l] += u32::from(c.stockout[l]);
                self.capacity_full[l] += u32::from(c.flags[l] & flags::CAPACITY_FULL != 0);
                self.budget_bound[l] += u32::from(c.flags[l] & flags::BUDGET_BOUND != 0);
            }
        }
        for (counts, &a) in (self.alerts.iter_mut()).zip(&watch.alerts[..watch.alert_count]) {
            for l in 0..LANES {
                for c in block {
                    counts[l] += u32::from(c.price[l] > a);
                }
            }
        }
        if let Some(f) = watch.purchase_floor {
            let floor = f * (1.0 - 1e-9);
            for l in 0..LANES {
                for c in block {
                    let cut = c.flags[l] & CUT != 0;
                    self.floor_failed[l] += u32::from(cut && c.producer_price[l] < floor);
                }
            }
        }
        if let Some((lo, hi)) = watch.band {
            let (lo, hi) = (lo * (1.0 - 1e-9), hi * (1.0 + 1e-9));
            for l in 0..LANES {
                for c in block {
                    let cut = c.flags[l] & CUT != 0;
                    let below = cut && c.price[l] < lo;
                    let out = c.stockout[l] || c.flags[l] & flags::STOCK_OUT != 0;
                    let above = c.price[l] > hi && out;
                    self.band_failed[l] += u32::from(below || above);
                }
            }
        }
    }

    /// Lane `lane`'s summary and its pooled moments, the path having ended where `last` (the
    /// columns of the last period folded) leaves it. Reads the lane's values by index (an
    /// array's `map` would take a copy of the whole array of lanes first).
    pub(crate) fn finish(
        &self,
        lane: usize,
        last: &Columns,
        watch: &Watch,
    ) -> (ReplicationSummary, Pooled) {
        let l = lane;
        let count = self.count as u64;
        let pooled = Pooled {
            price: self.price.lane(l, count),
            producer_price: self.producer_price.lane(l, count),
            harvest: self.harvest.lane(l, count),
            revenue: self.revenue.lane(l, count),
            income_transform: self.income_transform[l],
        };
        let per = self.count.max(1) as f64;
        let summary = ReplicationSummary {
            welfare: finish_pv(
                std::array::from_fn(|i| self.items[i][l]),
                std::array::from_fn(|i| self.trade[i][l]),
                (last.stock[l], last.price[l], last.period),
                &watch.books,
            ),
            floor_binding_periods: self.floor_binding[l],
            stockout_periods: self.stockout[l],
            final_stock: last.stock[l],
            mean_price: pooled.price.mean(),
            mean_producer_price: pooled.producer_price.mean(),
            mean_harvest: pooled.harvest.mean(),
            mean_revenue: pooled.revenue.mean(),
            mean_season_fiscal: self.fiscal_sum[l] / per,
            worst_season_fiscal: if self.count == 0 { 0.0 } else { self.worst[l] },
            peak_cumulative_fiscal: self.peak[l],
            budget_exceeded_periods: self.budget_exceeded[l],
            alert_periods: std::array::from_fn(|k| self.alerts[k][l]),
            floor_failed_periods: self.floor_failed[l],
            band_failed_periods: self.band_failed[l],
            capacity_full_periods: self.capacity_full[l],
            budget_bound_periods: self.budget_bound[l],
            mean_imports: self.imports[l] / per,
            mean_exports: self.exports[l] / per,
            import_periods: self.import_periods[l],
            export_periods: self.export_periods[l],
        };
        (summary, pooled)
    }
}

/// The leakage sums of a policy against its baseline on the same shocks, lane by lane
/// (`trade::leakage_sums` per replication: a_t = X_t − R_t the policy's net purchase,
/// ΔNX_t the change in private net exports), added a block of periods at a time in period order.
#[derive(Debug, Clone)]
pub(crate) struct LaneLeakage {
    num: Lanes,
    den: Lanes,
}

impl LaneLeakage {
    pub(crate) fn new() -> LaneLeakage {
        LaneLeakage {
            num: ZERO,
            den: ZERO,
        }
    }

    /// Adds the periods of `policy`'s block against the same periods of `baseline`'s.
    pub(crate) fn add(&mut self, policy: &[Columns], baseline: &[Columns]) {
        // private net exports (0 in a period whose columns carry no trade, as a record's)
        let net_exports = |c: &Columns, l: usize| {
            if c.trades {
                c.trade.exports[l] - c.trade.imports[l]
            } else {
                0.0
            }
        };
        for l in 0..LANES {
            for (c, b) in policy.iter().zip(baseline) {
                let bought = c.purchases[l] - c.releases[l];
                let dnx = net_exports(c, l) - net_exports(b, l);
                leakage_add(&mut self.num[l], &mut self.den[l], bought, dnx);
            }
        }
    }

    /// Lane `lane`'s sums (−Σ ΔNX_t·a_t, Σ a_t²).
    pub(crate) fn lane(&self, lane: usize) -> (f64, f64) {
        (self.num[lane], self.den[lane])
    }
}

simd_copies! {
    /// [`LaneFold::fold`] built for the baseline, AVX2 (four lanes a register) and AVX-512 (eight):
    /// the same operations in each (no FMA, no reassociation), so every lane gets the same bits.
    #[inline(never)]
    fn fold_copies[const K: usize](
        fold: &mut LaneFold,
        block: &[Columns; K],
        first: usize,
        watch: &Watch,
    ) {
        fold.fold(block, first, watch)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A deterministic spread of values (a logistic map), none repeated.
    fn values(n: usize, seed: f64) -> Vec<f64> {
        let mut x = seed;
        (0..n)
            .map(|_| {
                x = 3.97 * x * (1.0 - x);
                180.0 + 60.0 * x
            })
            .collect()
    }

    #[test]
    fn lane_sums_are_shifted_sums_lane_by_lane_and_give_the_sample_variance() {
        let periods = 37;
        let reference = 200.0;
        let mut lanes = LaneSums::new(reference);
        let mut each = vec![ShiftedSums::new(reference); LANES];
        let paths: Vec<Vec<f64>> = (0..LANES)
            .map(|l| values(periods, 0.1 + 0.8 * l as f64 / LANES as f64))
            .collect();
        for t in 0..periods {
            let x: Lanes = std::array::from_fn(|l| paths[l][t]);
            lanes.push(&x);
            for (s, &x) in each.iter_mut().zip(&x) {
                s.push(x);
            }
        }
        for (l, path) in paths.iter().enumerate() {
            let got = lanes.lane(l, periods as u64);
            assert_eq!(got, each[l], "lane {l}");
            // the two-pass sample variance Σ(x − x̄)²/(n − 1) (the shifted-data formula gives it
            // up to rounding: Chan, Golub and LeVeque 1983, eq. 1.5; from memory)
            let n = periods as f64;
            let mean = path.iter().sum::<f64>() / n;
            let var = path.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0);
            assert!((got.mean() - mean).abs() < 1e-9 * mean);
            assert!((got.sd() * got.sd() - var).abs() < 1e-9 * var, "lane {l}");
        }
    }

    #[test]
    fn the_crra_form_chosen_once_is_the_transform() {
        // (y/s)^{1−R}, ln at R = 1 (Pratt 1964): the form chosen once gives the bits of the
        // transform chosen per call, and the closed forms at R = 0, 1, 2
        for r in [0.0, 0.5, 1.0, 2.0, 3.0] {
            let crra = Crra::new(r);
            for y in values(50, 0.3) {
                let t = crate::welfare::crra_transform(y, 150.0, r);
                assert_eq!(crra.of(y, 150.0).to_bits(), t.to_bits());
                let x = y / 150.0;
                let closed = match r {
                    0.0 => x,
                    1.0 => x.ln(),
                    2.0 => 1.0 / x,
                    _ => x.powf(1.0 - r),
                };
                assert!((t - closed).abs() <= 1e-15 * closed.abs().max(1.0));
            }
        }
    }

    #[test]
    fn every_vector_copy_and_block_of_the_fold_gives_the_bits_of_the_plain_one_period_by_period() {
        // an identity (no outside source): the same fold built for two instruction sets, and
        // periods folded a block at a time (whole blocks, then a shorter one: 30 periods) against
        // one at a time
        let s = crate::scenario::market_from_table(
            "t.toml",
            crate::scenario::parse_toml(
                "t.toml",
                "[market]\nname = \"T\"\nquantity_unit = \"kt\"\nprice_unit = \"per t\"\n\
                 [demand]\nintercept = 200.0\nslope = -2.0\n[supply]\nintercept = -40.0\nslope = 1.0\n\
                 [expectations]\nrule = \"naive\"\n[run]\nperiods = 30\ninitial_price = 85.0\n\
                 alert_price = [81.0, 95.0]\nrisk_aversion = 1.5\n",
            )
            .unwrap(),
        )
        .unwrap();
        let policy = crate::policies::PolicySpec::none();
        let mut watch = Watch::new(&s, &policy, &crate::policies::compile(&policy).agency);
        watch.purchase_floor = Some(78.0);
        watch.band = Some((76.0, 84.0));
        watch.annual_budget = 40.0;
        let mut plain = LaneFold::new(&watch, 80.0, 40.0);
        plain.simd = Simd::Plain;
        // the copies this machine runs (a narrower one stands in for one it does not)
        let mut blocked: Vec<LaneFold> = [Simd::Plain, Simd::Avx2, Simd::Avx512]
            .map(|k| LaneFold {
                simd: k.at_most(),
                ..plain.clone()
            })
            .into();
        let periods: Vec<Columns> = (1..=30)
            .map(|t| {
                let mut c = Columns {
                    trades: t % 7 != 3, // a period without trade now and then
                    ..Columns::default()
                };
                let v = values(LANES * 8, 0.05 + 0.03 * t as f64);
                c.period = t;
                for l in 0..LANES {
                    let x = &v[8 * l..8 * l + 8];
                    c.price[l] = x[0] * 0.45;
                    c.producer_price[l] = x[1] * 0.42;
                    c.harvest[l] = x[2] * 0.2;
                    c.fiscal_cost[l] = x[3] - 210.0;
                    c.financing_cost[l] = x[4] * 0.01;
                    c.consumer_surplus[l] = x[5];
                    c.purchases[l] = (x[6] - 200.0).max(0.0);
                    c.stockout[l] = x[7] > 220.0;
                    c.flags[l] = (x[7] as u16) & 0x7ff;
                    c.trade.imports[l] = (x[0] - 210.0).max(0.0);
                    c.trade.exports[l] = (x[1] - 205.0).max(0.0);
                    c.trade.border_revenue[l] = x[1] * 0.1;
                    c.trade.quota_rent[l] = x[2] * 0.05;
                }
                c
            })
            .collect();
        assert_ne!(periods.len() % FOLD_BLOCK, 0, "a shorter block at the end");
        for block in periods.chunks(FOLD_BLOCK) {
            let mut transforms = Vec::new();
            for c in block {
                plain.add(std::slice::from_ref(c), &watch);
                transforms.push(format!("{:?}", plain.transform[0]));
            }
            for w in &mut blocked {
                w.add(block, &watch);
                for (j, want) in transforms.iter().enumerate() {
                    assert_eq!(want, &format!("{:?}", w.transform[j]), "{:?}", w.simd);
                }
            }
        }
        let last = periods.last().unwrap();
        for w in &blocked {
            for l in 0..LANES {
                let (a, b) = (plain.finish(l, last, &watch), w.finish(l, last, &watch));
                // Debug shows every value's bits that matter here (the sign of a zero included)
                assert_eq!(format!("{a:?}"), format!("{b:?}"), "{:?} lane {l}", w.simd);
            }
        }
    }
}
