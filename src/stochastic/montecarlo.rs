//! Monte Carlo over replications, several policies under the same shocks (common random numbers).
//!
//! Replication i draws its shocks from its own stream ([`ShockStream`] with stream i), once, and every
//! policy is simulated on that same draw, all policies stepped in lockstep (period by period, each
//! period folded at once and not kept). Replications are split into chunks of a fixed size
//! ([`CHUNK`]) that run in parallel (rayon); a chunk is lane-major (lane l = its l-th replication):
//! each period every policy steps all its lanes into column arrays and the period is folded over the
//! lanes (`stochastic::lanes`). Each chunk folds its periods in order into
//! per-replication summaries and sums, the chunks are collected in order and reduced sequentially, so
//! every figure is bit-identical whatever the number of threads. Each chunk writes its replications'
//! summaries and season outlays into its own slices of the final lists, so nothing is copied or held
//! twice. Nothing per period is kept except the series asked for (period values across replications,
//! needed for fan-chart quantiles), and those only for the first replications that fit in
//! [`SERIES_BUDGET_BYTES`]: per-period quantiles of very large runs come from that leading subset,
//! per-period means and every other figure from all replications.

use std::sync::atomic::{AtomicUsize, Ordering};

use rayon::prelude::*;
use serde::Serialize;

use super::draw_shock_columns;
use super::lanes::{LaneFold, LaneLeakage, Lanes, FOLD_BLOCK};
use super::stats::{order_key, quantiles_of_keys, ShiftedSums, Summary};
use crate::engine::{Columns, Diverged, LaneStepper, Model, PathModel, PeriodRecord, ShockColumns};
use crate::numeric::simd_copies;
use crate::policies::PolicySpec;
use crate::scenario::{Scenario, MAX_ALERTS};
use crate::welfare::{other_income, producer_revenue, Books, WelfarePv};

/// Replications per parallel work item (fixed, so the order of float sums never depends on threads).
pub const CHUNK: usize = crate::engine::LANES;

/// Memory allowed for the per-period values kept for quantiles (all policies and series together).
pub const SERIES_BUDGET_BYTES: usize = 128 << 20;

/// Memory allowed for the per-season fiscal outlays kept for their pooled quantiles (all policies).
pub const SEASON_BUDGET_BYTES: usize = 256 << 20;

/// A per-period variable of a path that can be kept for quantiles (fan charts).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum PathVariable {
    /// Market price P_t.
    Price,
    /// Producer price.
    ProducerPrice,
    /// Harvest Q_t.
    Harvest,
    /// Agency stock S_t.
    Stock,
    /// World price W_t (a market that trades; 0 for a closed one).
    WorldPrice,
    /// Private imports M_t (0 for a closed market).
    Imports,
    /// Private exports (0 for a closed market).
    Exports,
}

impl PathVariable {
    /// The column stem (`price`, `producer_price`, `harvest`, `stock`, `world_price`, `imports`,
    /// `exports`).
    pub fn name(&self) -> &'static str {
        match self {
            PathVariable::Price => "price",
            PathVariable::ProducerPrice => "producer_price",
            PathVariable::Harvest => "harvest",
            PathVariable::Stock => "stock",
            PathVariable::WorldPrice => "world_price",
            PathVariable::Imports => "imports",
            PathVariable::Exports => "exports",
        }
    }

    /// The variable of every lane of one period's columns (for a market closed to trade the
    /// trade variables are 0).
    #[inline]
    fn column<'a>(&self, c: &'a Columns) -> &'a Lanes {
        const ZERO: Lanes = [0.0; crate::engine::LANES];
        match self {
            PathVariable::Price => &c.price,
            PathVariable::ProducerPrice => &c.producer_price,
            PathVariable::Harvest => &c.harvest,
            PathVariable::Stock => &c.stock,
            PathVariable::WorldPrice if c.trades => &c.trade.world_price,
            PathVariable::Imports if c.trades => &c.trade.imports,
            PathVariable::Exports if c.trades => &c.trade.exports,
            PathVariable::WorldPrice | PathVariable::Imports | PathVariable::Exports => &ZERO,
        }
    }
}

/// Told how many replications are done (a progress bar plugs in here; the default does nothing).
pub trait Progress: Sync {
    /// `replications` more replications finished (all policies).
    fn advance(&self, _replications: u64) {}
}

/// A progress observer that ignores everything.
#[derive(Debug, Clone, Copy, Default)]
pub struct NoProgress;

impl Progress for NoProgress {}

/// What one replication of one policy leaves behind.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize)]
pub struct ReplicationSummary {
    /// Present values of the welfare items.
    pub welfare: WelfarePv,
    /// Periods in which the agency bought or a deficiency payment was made.
    pub floor_binding_periods: u32,
    /// Periods with the price above `sell_above` and no stock.
    pub stockout_periods: u32,
    /// Agency stock S_T.
    pub final_stock: f64,
    /// Means over this replication's periods (for standard errors of the pooled means).
    pub mean_price: f64,
    /// Mean producer price over the periods.
    pub mean_producer_price: f64,
    /// Mean harvest over the periods.
    pub mean_harvest: f64,
    /// Mean producer revenue over the periods.
    pub mean_revenue: f64,
    /// Mean cash outlay per season (the records' fiscal cost, interest in full).
    pub mean_season_fiscal: f64,
    /// The largest season's outlay.
    pub worst_season_fiscal: f64,
    /// The largest running total of outlays (from the opening purchase when charged, else 0).
    pub peak_cumulative_fiscal: f64,
    /// Seasons whose outlay exceeded `[policy] annual_budget`.
    pub budget_exceeded_periods: u32,
    /// Seasons with the price above each `[run] alert_price` (in the order given).
    pub alert_periods: [u32; MAX_ALERTS],
    /// Seasons the producer price ended below a purchase floor because the store was full or the
    /// purchase budget bound.
    pub floor_failed_periods: u32,
    /// Seasons the price left [buy_below, sell_above] while the agency could not act (store full,
    /// budget bound, stock out).
    pub band_failed_periods: u32,
    /// Seasons a purchase was cut short by a full store.
    pub capacity_full_periods: u32,
    /// Seasons a purchase was cut short by the purchase budget.
    pub budget_bound_periods: u32,
    /// Mean private imports per season (0 for a closed market).
    #[serde(skip)]
    pub mean_imports: f64,
    /// Mean private exports per season.
    #[serde(skip)]
    pub mean_exports: f64,
    /// Seasons with private imports.
    #[serde(skip)]
    pub import_periods: u32,
    /// Seasons with private exports.
    #[serde(skip)]
    pub export_periods: u32,
}

/// The per-replication values of a [`ReplicationSummary`] that are real numbers, in the order
/// the compact store ([`Replications`]) keeps them.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Real {
    /// Present value of consumer surplus.
    ConsumerSurplus,
    /// Present value of producer surplus.
    ProducerSurplus,
    /// Present value of the fiscal cost.
    FiscalCost,
    /// Present value of purchases.
    PurchaseCost,
    /// Present value of sales revenue.
    SalesRevenue,
    /// Present value of storage cost.
    StorageCost,
    /// Present value of financing cost.
    FinancingCost,
    /// Present value of handling cost.
    HandlingCost,
    /// Present value of deficiency payments.
    DeficiencyPayments,
    /// The opening stock's cost.
    OpeningStockCost,
    /// Present value of the terminal stock.
    TerminalStockValue,
    /// Present value of border receipts.
    BorderRevenue,
    /// Present value of quota rents.
    QuotaRent,
    /// Agency stock S_T.
    FinalStock,
    /// Mean price over the periods.
    MeanPrice,
    /// Mean producer price.
    MeanProducerPrice,
    /// Mean harvest.
    MeanHarvest,
    /// Mean producer revenue.
    MeanRevenue,
    /// Mean cash outlay per season.
    MeanSeasonFiscal,
    /// The largest season's outlay.
    WorstSeasonFiscal,
    /// The largest running total of outlays.
    PeakCumulativeFiscal,
    /// Mean private imports per season.
    MeanImports,
    /// Mean private exports per season.
    MeanExports,
}

/// How many [`Real`] values a replication has.
pub const REALS: usize = 23;

/// The per-replication counts of seasons of a [`ReplicationSummary`], in the order the compact
/// store keeps them.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Count {
    /// Seasons the agency bought or a deficiency payment was made.
    FloorBinding,
    /// Stock-out seasons.
    Stockout,
    /// Seasons above the annual budget.
    BudgetExceeded,
    /// Seasons above the k-th alert price (k < `MAX_ALERTS`).
    Alert(usize),
    /// Seasons a purchase floor failed.
    FloorFailed,
    /// Seasons a band failed.
    BandFailed,
    /// Seasons the store was full.
    CapacityFull,
    /// Seasons the purchase budget bound.
    BudgetBound,
    /// Seasons with private imports.
    ImportPeriods,
    /// Seasons with private exports.
    ExportPeriods,
}

/// How many [`Count`] values a replication has.
pub const COUNTS: usize = 9 + MAX_ALERTS;

impl Count {
    fn index(self) -> usize {
        match self {
            Count::FloorBinding => 0,
            Count::Stockout => 1,
            Count::BudgetExceeded => 2,
            Count::Alert(k) => 3 + k.min(MAX_ALERTS - 1),
            Count::FloorFailed => 3 + MAX_ALERTS,
            Count::BandFailed => 4 + MAX_ALERTS,
            Count::CapacityFull => 5 + MAX_ALERTS,
            Count::BudgetBound => 6 + MAX_ALERTS,
            Count::ImportPeriods => 7 + MAX_ALERTS,
            Count::ExportPeriods => 8 + MAX_ALERTS,
        }
    }
}

impl ReplicationSummary {
    /// The real values in [`Real`] order and the counts in [`Count`] order.
    fn split(&self) -> ([f64; REALS], [u32; COUNTS]) {
        let w = &self.welfare;
        let reals = [
            w.consumer_surplus,
            w.producer_surplus,
            w.fiscal_cost,
            w.purchase_cost,
            w.sales_revenue,
            w.storage_cost,
            w.financing_cost,
            w.handling_cost,
            w.deficiency_payments,
            w.opening_stock_cost,
            w.terminal_stock_value,
            w.border_revenue,
            w.quota_rent,
            self.final_stock,
            self.mean_price,
            self.mean_producer_price,
            self.mean_harvest,
            self.mean_revenue,
            self.mean_season_fiscal,
            self.worst_season_fiscal,
            self.peak_cumulative_fiscal,
            self.mean_imports,
            self.mean_exports,
        ];
        let mut counts = [0; COUNTS];
        for (which, n) in [
            (Count::FloorBinding, self.floor_binding_periods),
            (Count::Stockout, self.stockout_periods),
            (Count::BudgetExceeded, self.budget_exceeded_periods),
            (Count::FloorFailed, self.floor_failed_periods),
            (Count::BandFailed, self.band_failed_periods),
            (Count::CapacityFull, self.capacity_full_periods),
            (Count::BudgetBound, self.budget_bound_periods),
            (Count::ImportPeriods, self.import_periods),
            (Count::ExportPeriods, self.export_periods),
        ] {
            counts[which.index()] = n;
        }
        for (k, &n) in self.alert_periods.iter().enumerate() {
            counts[Count::Alert(k).index()] = n;
        }
        (reals, counts)
    }

    /// The inverse of [`ReplicationSummary::split`].
    fn join(r: &[f64; REALS], c: &[u32; COUNTS]) -> ReplicationSummary {
        let n = |which: Count| c[which.index()];
        ReplicationSummary {
            welfare: welfare_of(r[..13].try_into().unwrap_or([0.0; 13])),
            floor_binding_periods: n(Count::FloorBinding),
            stockout_periods: n(Count::Stockout),
            final_stock: r[13],
            mean_price: r[14],
            mean_producer_price: r[15],
            mean_harvest: r[16],
            mean_revenue: r[17],
            mean_season_fiscal: r[18],
            worst_season_fiscal: r[19],
            peak_cumulative_fiscal: r[20],
            budget_exceeded_periods: n(Count::BudgetExceeded),
            alert_periods: std::array::from_fn(|k| n(Count::Alert(k))),
            floor_failed_periods: n(Count::FloorFailed),
            band_failed_periods: n(Count::BandFailed),
            capacity_full_periods: n(Count::CapacityFull),
            budget_bound_periods: n(Count::BudgetBound),
            mean_imports: r[21],
            mean_exports: r[22],
            import_periods: n(Count::ImportPeriods),
            export_periods: n(Count::ExportPeriods),
        }
    }
}

/// The welfare present values from the first 13 [`Real`] values, in that order.
fn welfare_of(r: [f64; 13]) -> WelfarePv {
    WelfarePv {
        consumer_surplus: r[0],
        producer_surplus: r[1],
        fiscal_cost: r[2],
        purchase_cost: r[3],
        sales_revenue: r[4],
        storage_cost: r[5],
        financing_cost: r[6],
        handling_cost: r[7],
        deficiency_payments: r[8],
        opening_stock_cost: r[9],
        terminal_stock_value: r[10],
        border_revenue: r[11],
        quota_rent: r[12],
    }
}

/// One value of one chunk's replications: the same bits in every replication of the chunk (held
/// once), or one value per replication.
#[derive(Debug, Clone, PartialEq)]
enum Block<T> {
    Same(T),
    /// values that fit in a byte (counts of seasons in a run of up to 255 seasons)
    Small(Box<[u8]>),
    Each(Box<[T]>),
}

/// A value that a block may hold once when all its replications share its bits.
trait Bits: Copy {
    fn bits(self) -> u64;
    /// The value as a byte, when it is a count that fits in one.
    fn small(self) -> Option<u8>;
    fn from_small(b: u8) -> Self;
}

impl Bits for f64 {
    fn bits(self) -> u64 {
        self.to_bits()
    }
    fn small(self) -> Option<u8> {
        None
    }
    fn from_small(b: u8) -> f64 {
        f64::from(b)
    }
}

impl Bits for u32 {
    fn bits(self) -> u64 {
        u64::from(self)
    }
    fn small(self) -> Option<u8> {
        u8::try_from(self).ok()
    }
    fn from_small(b: u8) -> u32 {
        u32::from(b)
    }
}

impl<T: Bits> Block<T> {
    fn of(values: impl Iterator<Item = T> + Clone) -> Block<T> {
        let mut it = values.clone();
        match it.next() {
            Some(first) if it.all(|v| v.bits() == first.bits()) => Block::Same(first),
            _ => match values.clone().map(T::small).collect::<Option<Box<[u8]>>>() {
                Some(small) => Block::Small(small),
                None => Block::Each(values.collect()),
            },
        }
    }

    fn bytes(&self) -> usize {
        match self {
            Block::Same(_) => 0,
            Block::Small(v) => v.len(),
            Block::Each(v) => std::mem::size_of_val(&**v),
        }
    }

    #[inline]
    fn at(&self, i: usize) -> T {
        match self {
            Block::Same(x) => *x,
            Block::Small(v) => T::from_small(v[i]),
            Block::Each(v) => v[i],
        }
    }
}

/// One value of every replication in replication order, reading a column of chunk blocks a block
/// at a time (a block's bytes or values through a slice iterator, a value held once repeated).
#[derive(Debug, Clone)]
pub struct Values<'a, T> {
    blocks: std::slice::Iter<'a, Block<T>>,
    block: Cursor<'a, T>,
    /// values not yet read
    left: usize,
}

/// Where a [`Values`] is in its current block.
#[derive(Debug, Clone)]
enum Cursor<'a, T> {
    /// the value and how many more times it comes
    Same(T, usize),
    Small(std::slice::Iter<'a, u8>),
    Each(std::slice::Iter<'a, T>),
}

impl<'a, T> Values<'a, T> {
    fn new(blocks: &'a [Block<T>], total: usize) -> Values<'a, T> {
        Values {
            blocks: blocks.iter(),
            block: Cursor::Each([].iter()),
            left: total,
        }
    }
}

impl<T: Bits> Iterator for Values<'_, T> {
    type Item = T;

    #[inline]
    fn next(&mut self) -> Option<T> {
        loop {
            let v = match &mut self.block {
                Cursor::Same(x, k) => {
                    if *k > 0 {
                        *k -= 1;
                        Some(*x)
                    } else {
                        None
                    }
                }
                Cursor::Small(it) => it.next().map(|&b| T::from_small(b)),
                Cursor::Each(it) => it.next().copied(),
            };
            if let Some(v) = v {
                self.left -= 1;
                return Some(v);
            }
            // every block but the last holds CHUNK replications
            self.block = match self.blocks.next()? {
                Block::Same(x) => Cursor::Same(*x, CHUNK.min(self.left)),
                Block::Small(v) => Cursor::Small(v.iter()),
                Block::Each(v) => Cursor::Each(v.iter()),
            };
        }
    }

    fn size_hint(&self) -> (usize, Option<usize>) {
        (self.left, Some(self.left))
    }

    /// The values in the order [`Values::next`] gives them, a block at a time: a block's bytes or
    /// values through its slice, a value held once repeated, so a sum or a count over every
    /// replication (`Iterator::sum`, `map`, `fold`) does not match the block's kind per value.
    fn fold<B, F: FnMut(B, T) -> B>(self, init: B, mut f: F) -> B {
        let Values {
            blocks,
            block,
            mut left,
        } = self;
        let mut acc = init;
        let mut block = Some(block);
        let mut blocks = blocks;
        loop {
            let cursor = match block.take() {
                Some(c) => c,
                // every block but the last holds CHUNK replications
                None => match blocks.next() {
                    Some(Block::Same(x)) => Cursor::Same(*x, CHUNK.min(left)),
                    Some(Block::Small(v)) => Cursor::Small(v.iter()),
                    Some(Block::Each(v)) => Cursor::Each(v.iter()),
                    None => return acc,
                },
            };
            match cursor {
                Cursor::Same(x, k) => {
                    for _ in 0..k {
                        acc = f(acc, x);
                    }
                    left -= k;
                }
                Cursor::Small(it) => {
                    left -= it.len();
                    acc = it.fold(acc, |acc, &b| f(acc, T::from_small(b)));
                }
                Cursor::Each(it) => {
                    left -= it.len();
                    acc = it.fold(acc, |acc, &v| f(acc, v));
                }
            }
        }
    }
}

impl<T: Bits> ExactSizeIterator for Values<'_, T> {}

/// Every replication's summary of one model, stored value by value in blocks of [`CHUNK`]
/// replications (a chunk's replications): a value with the same bits in the whole chunk (a cost
/// the policy never incurs, a count that stays 0) is held once, any other value once per
/// replication. Read in replication order, value by value ([`Replications::reals`],
/// [`Replications::counts`]) or whole ([`Replications::iter`], [`Replications::get`]); what is read
/// has the bits of the [`ReplicationSummary`] the fold produced.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Replications {
    len: usize,
    reals: Vec<Vec<Block<f64>>>,
    counts: Vec<Vec<Block<u32>>>,
}

/// One chunk's replications of one model, value by value.
#[derive(Debug, Clone, PartialEq)]
struct ChunkBlocks {
    len: usize,
    reals: Vec<Block<f64>>,
    counts: Vec<Block<u32>>,
}

impl ChunkBlocks {
    fn of(summaries: &[ReplicationSummary]) -> ChunkBlocks {
        let split: Vec<([f64; REALS], [u32; COUNTS])> =
            summaries.iter().map(ReplicationSummary::split).collect();
        ChunkBlocks {
            len: summaries.len(),
            reals: (0..REALS)
                .map(|j| Block::of(split.iter().map(|(r, _)| r[j])))
                .collect(),
            counts: (0..COUNTS)
                .map(|j| Block::of(split.iter().map(|(_, c)| c[j])))
                .collect(),
        }
    }
}

impl Replications {
    fn new() -> Replications {
        Replications {
            len: 0,
            reals: (0..REALS).map(|_| Vec::new()).collect(),
            counts: (0..COUNTS).map(|_| Vec::new()).collect(),
        }
    }

    /// Appends a chunk's replications (every chunk but the last holds [`CHUNK`]).
    fn push(&mut self, c: ChunkBlocks) {
        self.len += c.len;
        for (col, b) in self.reals.iter_mut().zip(c.reals) {
            col.push(b);
        }
        for (col, b) in self.counts.iter_mut().zip(c.counts) {
            col.push(b);
        }
    }

    /// The number of replications.
    pub fn len(&self) -> usize {
        self.len
    }

    /// Whether there are none.
    pub fn is_empty(&self) -> bool {
        self.len == 0
    }

    /// Bytes held for the values (blocks held once cost nothing here).
    pub fn value_bytes(&self) -> usize {
        let r: usize = self.reals.iter().flatten().map(Block::bytes).sum();
        let c: usize = self.counts.iter().flatten().map(Block::bytes).sum();
        r + c
    }

    /// One real value of every replication, in replication order.
    pub fn reals(&self, which: Real) -> Values<'_, f64> {
        Values::new(&self.reals[which as usize], self.len)
    }

    /// One count of every replication, in replication order.
    pub fn counts(&self, which: Count) -> Values<'_, u32> {
        Values::new(&self.counts[which.index()], self.len)
    }

    /// The welfare present values of every replication, in replication order.
    pub fn welfare(&self) -> impl Iterator<Item = WelfarePv> + Clone + '_ {
        let mut cols: [Values<'_, f64>; 13] = std::array::from_fn(|j| self.reals(REAL_ORDER[j]));
        (0..self.len)
            .map(move |_| welfare_of(std::array::from_fn(|j| cols[j].next().unwrap_or(0.0))))
    }

    /// Every replication's [`WelfarePv::net`] at `public_funds_cost`, in replication order, reading
    /// only the five values it uses.
    pub fn nets(&self, public_funds_cost: f64) -> impl Iterator<Item = f64> + Clone + '_ {
        let mut cols = [
            Real::ConsumerSurplus,
            Real::ProducerSurplus,
            Real::FiscalCost,
            Real::TerminalStockValue,
            Real::QuotaRent,
        ]
        .map(|which| self.reals(which));
        (0..self.len).map(move |_| {
            let [cs, ps, fiscal, terminal, quota] =
                std::array::from_fn(|j| cols[j].next().unwrap_or(0.0));
            WelfarePv {
                consumer_surplus: cs,
                producer_surplus: ps,
                fiscal_cost: fiscal,
                terminal_stock_value: terminal,
                quota_rent: quota,
                ..WelfarePv::default()
            }
            .net(public_funds_cost)
        })
    }

    /// Replication `rep`'s summary (the default past the end).
    pub fn get(&self, rep: usize) -> ReplicationSummary {
        if rep >= self.len {
            return ReplicationSummary::default();
        }
        let (b, i) = (rep / CHUNK, rep % CHUNK);
        let r: [f64; REALS] = std::array::from_fn(|j| self.reals[j][b].at(i));
        let c: [u32; COUNTS] = std::array::from_fn(|j| self.counts[j][b].at(i));
        ReplicationSummary::join(&r, &c)
    }

    /// Every replication's summary, in replication order.
    pub fn iter(&self) -> impl Iterator<Item = ReplicationSummary> + Clone + '_ {
        let mut reals: [Values<'_, f64>; REALS] =
            std::array::from_fn(|j| self.reals(REAL_ORDER[j]));
        let mut counts: Vec<Values<'_, u32>> = self
            .counts
            .iter()
            .map(|blocks| Values::new(blocks, self.len))
            .collect();
        (0..self.len).map(move |_| {
            let r: [f64; REALS] = std::array::from_fn(|j| reals[j].next().unwrap_or(0.0));
            let c: [u32; COUNTS] = std::array::from_fn(|j| counts[j].next().unwrap_or(0));
            ReplicationSummary::join(&r, &c)
        })
    }
}

impl<'a> IntoIterator for &'a Replications {
    type Item = ReplicationSummary;
    type IntoIter = Box<dyn Iterator<Item = ReplicationSummary> + 'a>;

    fn into_iter(self) -> Self::IntoIter {
        Box::new(self.iter())
    }
}

/// [`Real`] in store order.
const REAL_ORDER: [Real; REALS] = [
    Real::ConsumerSurplus,
    Real::ProducerSurplus,
    Real::FiscalCost,
    Real::PurchaseCost,
    Real::SalesRevenue,
    Real::StorageCost,
    Real::FinancingCost,
    Real::HandlingCost,
    Real::DeficiencyPayments,
    Real::OpeningStockCost,
    Real::TerminalStockValue,
    Real::BorderRevenue,
    Real::QuotaRent,
    Real::FinalStock,
    Real::MeanPrice,
    Real::MeanProducerPrice,
    Real::MeanHarvest,
    Real::MeanRevenue,
    Real::MeanSeasonFiscal,
    Real::WorstSeasonFiscal,
    Real::PeakCumulativeFiscal,
    Real::MeanImports,
    Real::MeanExports,
];

/// Season outlay quantiles are kept exactly from this probability up (the indicators ask for the
/// 95 % and 99 % quantiles).
pub const SEASON_QUANTILE_FROM: f64 = 0.95;

/// The season outlays kept for pooled quantiles: the upper tail only. Of `n` outlays a type 7
/// quantile at p ≥ [`SEASON_QUANTILE_FROM`] reads only the order statistics from
/// ⌊(n − 1)·SEASON_QUANTILE_FROM⌋ up, so only the largest values are kept (those at or above every
/// value dropped, under `f64::total_cmp`) and the number dropped below them; the quantiles are the
/// same bits as those of the whole list.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct SeasonOutlays {
    /// The largest outlays (no order), as their [`order_key`]s (integers in the order of
    /// `f64::total_cmp`, so selection compares integers).
    kept: Vec<i64>,
    /// How many outlays were dropped, each at or below every kept one.
    dropped: usize,
    /// How many of the largest to keep at least.
    keep: usize,
    /// The smallest kept value after the last pruning: a later outlay at or below it is at or below
    /// every kept value and never needed by a quantile from [`SEASON_QUANTILE_FROM`] up, so it is
    /// counted as dropped at once.
    floor: Option<i64>,
}

impl SeasonOutlays {
    /// Room for the upper tail of `planned` outlays.
    fn new(planned: usize) -> SeasonOutlays {
        let below = ((planned.saturating_sub(1)) as f64 * SEASON_QUANTILE_FROM).floor() as usize;
        SeasonOutlays {
            kept: Vec::new(),
            dropped: 0,
            keep: planned.saturating_sub(below) + 1,
            floor: None,
        }
    }

    /// How many outlays there were (dropped ones included).
    pub fn len(&self) -> usize {
        self.dropped + self.kept.len()
    }

    /// Whether there were none.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Type 7 quantiles of all the outlays at `probs` (ascending); `None` when one lies below the
    /// kept tail. The order statistics they read are selected together, from a copy of the tail.
    pub fn quantiles(&self, probs: &[f64]) -> Option<Vec<f64>> {
        super::stats::quantiles_above(&mut self.kept.clone(), self.dropped, probs)
    }

    /// The floor of the moment: outlays at or below it are dropped on arrival (`None` before the
    /// first pruning). It only rises, so a chunk may drop outlays at or below a floor it was handed
    /// earlier ([`SeasonKeys::push`]) and [`SeasonOutlays::extend_keys`] then keeps what it would
    /// have kept of the whole list.
    fn floor(&self) -> Option<i64> {
        self.floor
    }

    /// Adds outlays ([`SeasonKeys::push`] at this floor, then [`SeasonOutlays::extend_keys`]).
    #[cfg(test)]
    fn extend(&mut self, outlays: &[f64]) {
        let mut keys = SeasonKeys::default();
        keys.push(self.floor, outlays);
        self.extend_keys(keys);
    }

    /// Adds outlays already cut to their keys above a floor no higher than this one (the keys in
    /// the order the outlays came, and how many were dropped); drops the smallest when the kept
    /// values reach twice the tail. What is kept (the largest values, as a multiset), how many are
    /// dropped and so every quantile do not depend on the order the outlays come in within one
    /// call, nor on the floor they were cut at. After a pruning an outlay at or below the floor
    /// (the smallest value kept) is dropped at once: it is at or below every kept value, and at
    /// least `keep` values stay kept, so every quantile from [`SEASON_QUANTILE_FROM`] up still
    /// reads only kept values (a long run of outlays equal to the floor, such as the zeros of a
    /// policy that never spends, is then counted instead of kept and pruned again and again).
    fn extend_keys(&mut self, cut: SeasonKeys) {
        self.dropped += cut.dropped;
        match self.floor {
            None => self.kept.extend_from_slice(&cut.keys),
            Some(floor) => {
                let before = self.kept.len();
                keep_above(crate::numeric::simd(), &cut.keys, floor, &mut self.kept);
                self.dropped += cut.keys.len() - (self.kept.len() - before);
            }
        }
        if self.kept.len() >= 2 * self.keep.max(CHUNK) {
            // the `keep` largest to the front (selected in descending order), the rest cut off
            // the end (nothing moves)
            let cut = self.kept.len() - self.keep;
            self.kept
                .select_nth_unstable_by(self.keep - 1, |a, b| b.cmp(a));
            self.kept.truncate(self.keep);
            self.dropped += cut;
            self.floor = self.kept.last().copied();
        }
    }

    /// Bytes held for the values.
    pub fn value_bytes(&self) -> usize {
        8 * self.kept.capacity()
    }
}

/// Season outlays as a chunk hands them on: the [`order_key`]s of those above the floor it was
/// given, in the order they came, and how many it dropped.
#[derive(Debug, Clone, PartialEq, Default)]
struct SeasonKeys {
    keys: Vec<i64>,
    dropped: usize,
}

impl SeasonKeys {
    /// Room for `n` keys when there is no floor (every outlay is kept), none when there is one.
    fn new(floor: Option<i64>, n: usize) -> SeasonKeys {
        SeasonKeys {
            keys: Vec::with_capacity(if floor.is_none() { n } else { 0 }),
            dropped: 0,
        }
    }

    /// Adds `outlays`: every key with no floor, else those above it ([`keep_above`]).
    fn push(&mut self, floor: Option<i64>, outlays: &[f64]) {
        match floor {
            None => self.keys.extend(outlays.iter().map(|&x| order_key(x))),
            Some(floor) => {
                let before = self.keys.len();
                keep_above(crate::numeric::simd(), outlays, floor, &mut self.keys);
                self.dropped += outlays.len() - (self.keys.len() - before);
            }
        }
    }
}

/// A season outlay or its [`order_key`] already worked out.
trait OutlayKey: Copy {
    fn key(self) -> i64;
}

impl OutlayKey for f64 {
    #[inline(always)]
    fn key(self) -> i64 {
        order_key(self)
    }
}

impl OutlayKey for i64 {
    #[inline(always)]
    fn key(self) -> i64 {
        self
    }
}

simd_copies! {
    /// Appends to `kept` the [`order_key`]s of `outlays` (values or keys) above `floor`, in
    /// order, block by block: the keys worked out and a bit set for each one above the floor in one
    /// loop each (integer comparisons, no branch a value, vectorised in the wider copies), then
    /// only the keys whose bit is set appended, lowest bit first (a few a block in the tail's runs).
    #[inline(never)]
    fn keep_above[T: OutlayKey](outlays: &[T], floor: i64, kept: &mut Vec<i64>) {
        const BLOCK: usize = 64;
        for block in outlays.chunks(BLOCK) {
            let mut keys = [0i64; BLOCK];
            for (k, &x) in keys.iter_mut().zip(block) {
                *k = x.key();
            }
            let mut above = 0u64;
            for (i, &k) in keys[..block.len()].iter().enumerate() {
                above |= u64::from(k > floor) << i;
            }
            while above != 0 {
                kept.push(keys[above.trailing_zeros() as usize]);
                above &= above - 1;
            }
        }
    }
}

/// Pooled moments over all periods and replications of one policy.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Pooled {
    /// Market price.
    pub price: ShiftedSums,
    /// Producer price.
    pub producer_price: ShiftedSums,
    /// Harvest.
    pub harvest: ShiftedSums,
    /// Producer revenue (producer price × harvest).
    pub revenue: ShiftedSums,
    /// Σ of the CRRA transform of producers' income (see [`Watch`]), in a fixed order.
    pub income_transform: f64,
}

impl Pooled {
    fn new(price_ref: f64, quantity_ref: f64) -> Pooled {
        Pooled {
            price: ShiftedSums::new(price_ref),
            producer_price: ShiftedSums::new(price_ref),
            harvest: ShiftedSums::new(quantity_ref),
            revenue: ShiftedSums::new(price_ref * quantity_ref),
            income_transform: 0.0,
        }
    }

    fn merge(&mut self, o: &Pooled) {
        self.price.merge(&o.price);
        self.producer_price.merge(&o.producer_price);
        self.harvest.merge(&o.harvest);
        self.revenue.merge(&o.revenue);
        self.income_transform += o.income_transform;
    }
}

/// What the Monte Carlo watches for one policy: its books, its thresholds, and producers' income.
#[derive(Debug, Clone, PartialEq)]
pub struct Watch {
    /// Accounting conventions.
    pub books: Books,
    /// A floor defended by purchase.
    pub purchase_floor: Option<f64>,
    /// The band [buy_below, sell_above] of a buffer stock.
    pub band: Option<(f64, f64)>,
    /// `[policy] annual_budget` (∞ without one).
    pub annual_budget: f64,
    /// `[run] alert_price` values (∞ in the unused slots).
    pub alerts: [f64; MAX_ALERTS],
    /// How many alert prices were given.
    pub alert_count: usize,
    /// Crop share of income α.
    pub crop_income_share: f64,
    /// Relative risk aversion R.
    pub risk_aversion: f64,
    /// Steady-state crop revenue P*·Q* (fixes other income at (1 − α)/α of it and scales the
    /// CRRA transform).
    pub reference_revenue: f64,
    /// (1 − α)/α · P*·Q*, the other income (computed once: [`crate::welfare::other_income`]).
    other_income: f64,
    /// P*·Q*/α, the scale of the CRRA transform (computed once).
    scale: f64,
}

impl Watch {
    /// The watch of `policy` (compiled agency `agency`) under `scenario`.
    pub fn new(
        scenario: &Scenario,
        policy: &PolicySpec,
        agency: &crate::policies::Agency,
    ) -> Watch {
        let watched = crate::policies::watched(policy);
        let mut alerts = [f64::INFINITY; MAX_ALERTS];
        for (slot, p) in alerts.iter_mut().zip(&scenario.run.alert_prices) {
            *slot = *p;
        }
        let reference_revenue = scenario.steady.price * scenario.steady.quantity;
        Watch {
            books: Books::new(scenario, agency),
            purchase_floor: watched.purchase_floor,
            band: watched.band,
            annual_budget: policy.annual_budget.unwrap_or(f64::INFINITY),
            alerts,
            alert_count: scenario.run.alert_prices.len().min(MAX_ALERTS),
            crop_income_share: scenario.run.crop_income_share,
            risk_aversion: scenario.run.risk_aversion,
            reference_revenue,
            other_income: other_income(scenario.run.crop_income_share, reference_revenue),
            scale: reference_revenue / scenario.run.crop_income_share,
        }
    }

    /// Producers' income in a period: revenue plus other income held fixed.
    #[inline]
    pub fn income(&self, r: &PeriodRecord) -> f64 {
        self.income_of(producer_revenue(r))
    }

    /// Producers' income from a period's producer revenue.
    #[inline(always)]
    pub fn income_of(&self, revenue: f64) -> f64 {
        // `welfare::income` with its constant part computed once
        revenue + self.other_income
    }

    /// The scale of the CRRA transform (mean income at the steady state).
    #[inline]
    pub fn income_scale(&self) -> f64 {
        self.scale
    }
}

/// A kept series summarised period by period.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SeriesSummary {
    /// Which series.
    pub series: PathVariable,
    /// Replications the quantiles come from (the first ones; all of them unless the run is very large).
    /// Means always use every replication.
    pub quantile_replications: usize,
    /// Period t = 1..T at index t − 1.
    pub periods: Vec<Summary>,
}

/// The Monte Carlo outcome of one policy.
#[derive(Debug, Clone, PartialEq)]
pub struct PolicyRuns {
    /// The policy's display name.
    pub name: String,
    /// Every replication's summary, in replication order (held value by value; see
    /// [`Replications`]).
    pub replications: Replications,
    /// Moments pooled over periods and replications.
    pub pooled: Pooled,
    /// Mean fiscal cost in each period (index t − 1).
    pub mean_fiscal_cost: Vec<f64>,
    /// The series asked for, summarised per period.
    pub series: Vec<SeriesSummary>,
    /// Per-season cash outlays of the leading replications (all of them unless the run is very
    /// large), for pooled quantiles.
    pub season_fiscal: SeasonOutlays,
    /// Mean producers' income in each period across replications (index t − 1).
    pub mean_income: Vec<f64>,
    /// Mean CRRA transform of income in each period across replications (index t − 1).
    pub mean_income_transform: Vec<f64>,
    /// What was watched (books, thresholds, income).
    pub watch: Watch,
}

/// Everything a Monte Carlo run produced, policies in the order given.
#[derive(Debug, Clone, PartialEq)]
pub struct MonteCarlo {
    /// Number of replications.
    pub replications: usize,
    /// Periods per replication.
    pub periods: usize,
    /// One entry per policy.
    pub policies: Vec<PolicyRuns>,
    /// One entry per pair asked of [`run_models_paired`], in that order (empty otherwise).
    pub paired: Vec<PairedChanges>,
    /// Per model, the season-by-season price moments across replications (empty unless pairs
    /// were asked for).
    pub season_prices: Vec<SeasonPrices>,
    /// One entry per leakage pair asked of [`run_models_paired`] ([`Pairing::leakage`]), in that
    /// order: each replication's leakage sums (−Σ ΔNX_t·a_t, Σ a_t²), in replication order.
    pub leakage: Vec<Vec<(f64, f64)>>,
}

/// The pairs (model, its baseline on the same shocks; indices into the models) whose
/// replication-by-replication comparisons [`run_models_paired`] folds as it runs.
#[derive(Debug, Clone, Copy, Default)]
pub struct Pairing<'a> {
    /// Proportional price changes ([`PairedChanges`]) and every model's season-by-season price
    /// moments ([`SeasonPrices`]), for the household groups.
    pub prices: &'a [(usize, usize)],
    /// The leakage sums of the model's public trades abroad (`trade::leakage_sums`
    /// per replication), for a market with a border.
    pub leakage: &'a [(usize, usize)],
}

/// The price consumers pay in a period: the market price less the consumer payment per unit
/// consumed (a ceiling kept by consumer subsidy), the market price otherwise.
#[inline]
pub fn consumer_price(r: &PeriodRecord) -> f64 {
    consumer_price_of(r.price, r.consumer_payments, r.consumption)
}

/// [`consumer_price`] of a market price, the consumer payments and the consumption.
#[inline(always)]
fn consumer_price_of(price: f64, consumer_payments: f64, consumption: f64) -> f64 {
    if consumer_payments > 0.0 && consumption > 0.0 {
        price - consumer_payments / consumption
    } else {
        price
    }
}

/// Proportional price changes of one model against another stepped on the same shocks (a policy
/// against its baseline, common random numbers), folded over replications. Per replication, with
/// season weights w_t = (1 + r)^−t / Σ_s (1 + r)^−s (r the discount rate), the statistics are
/// `[Σ w·δ_prod, Σ w·δ_cons, Σ w·δ_prod², Σ w·δ_cons²]` where δ = (p_policy − p_base) / p_base season
/// by season, for the producer price and the price consumers pay. Folded as means and the
/// co-moment matrix (Welford, merged pairwise in chunk order: the same bits at any thread count).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct PairedChanges {
    /// Replications folded.
    pub n: usize,
    /// Mean of each statistic over replications.
    pub mean: [f64; 4],
    /// Σ over replications of (x − mean)(x − mean)ᵀ.
    pub comoment: [[f64; 4]; 4],
}

impl PairedChanges {
    fn push(&mut self, x: [f64; 4]) {
        self.n += 1;
        let n = self.n as f64;
        let d: [f64; 4] = std::array::from_fn(|i| x[i] - self.mean[i]);
        for (m, di) in self.mean.iter_mut().zip(&d) {
            *m += di / n;
        }
        let after: [f64; 4] = std::array::from_fn(|j| x[j] - self.mean[j]);
        for (row, di) in self.comoment.iter_mut().zip(&d) {
            for (c, aj) in row.iter_mut().zip(&after) {
                *c += di * aj;
            }
        }
    }

    fn merge(&mut self, o: &PairedChanges) {
        if o.n == 0 {
            return;
        }
        if self.n == 0 {
            *self = *o;
            return;
        }
        let (na, nb) = (self.n as f64, o.n as f64);
        let n = na + nb;
        let d: [f64; 4] = std::array::from_fn(|i| o.mean[i] - self.mean[i]);
        for ((row, other), di) in self.comoment.iter_mut().zip(&o.comoment).zip(&d) {
            for ((c, oc), dj) in row.iter_mut().zip(other).zip(&d) {
                *c += oc + di * dj * na * nb / n;
            }
        }
        for (m, di) in self.mean.iter_mut().zip(&d) {
            *m += di * nb / n;
        }
        self.n += o.n;
    }

    /// Mean and standard error of the mean of the linear combination g·x over replications
    /// (no standard error below two replications).
    pub fn combination(&self, g: [f64; 4]) -> (f64, Option<f64>) {
        let mean: f64 = (0..4).map(|i| g[i] * self.mean[i]).sum();
        if self.n < 2 {
            return (mean, None);
        }
        let mut ss = 0.0;
        for i in 0..4 {
            for j in 0..4 {
                ss += g[i] * g[j] * self.comoment[i][j];
            }
        }
        let n = self.n as f64;
        (mean, Some((ss.max(0.0) / (n - 1.0)).sqrt() / n.sqrt()))
    }
}

/// One model's producer price and consumer price season by season across replications: per
/// season, with a = producer price − reference and b = consumer price − reference,
/// `[Σa, Σb, Σa², Σb², Σab]` over replications (shifted sums: the reference is the steady-state
/// price, so the squares do not swamp the spread).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct SeasonPrices {
    /// The shift.
    pub reference: f64,
    /// Replications summed.
    pub n: usize,
    /// Per season t = 1..T at index t − 1.
    pub sums: Vec<[f64; 5]>,
}

impl SeasonPrices {
    /// Season `t` (0-based): the mean producer price, the mean consumer price, their variances and
    /// their covariance across replications (n − 1 in the denominator; zeros below two).
    pub fn moments(&self, t: usize) -> ([f64; 2], [f64; 3]) {
        let n = self.n.max(1) as f64;
        let s = self.sums.get(t).copied().unwrap_or_default();
        let (ma, mb) = (s[0] / n, s[1] / n);
        let means = [self.reference + ma, self.reference + mb];
        if self.n < 2 {
            return (means, [0.0; 3]);
        }
        let d = n - 1.0;
        (
            means,
            [
                ((s[2] - n * ma * ma) / d).max(0.0),
                ((s[3] - n * mb * mb) / d).max(0.0),
                (s[4] - n * ma * mb) / d,
            ],
        )
    }
}

/// A replication that failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("policy \"{policy}\": replication {replication} (0-based stream number, seed {seed})")]
pub struct ReplicationFailed {
    /// The policy's display name.
    pub policy: String,
    /// Index of the policy in the list given.
    pub policy_index: usize,
    /// The replication (0-based stream number).
    pub replication: usize,
    /// The run's seed.
    pub seed: u64,
    /// What the engine reported (period and reason).
    #[source]
    pub source: Diverged,
}

/// What a chunk of replications hands back, per policy.
struct ChunkPolicy {
    /// replications folded
    n: usize,
    pooled: Pooled,
    /// per-period sums over the chunk's replications of the season outlay, income and its CRRA
    /// transform: [t] = [fiscal, income, transform]
    sums: Vec<[f64; 3]>,
    /// each replication's (producer price, consumer price) per period, replication-major:
    /// [rep in chunk · periods + t] (empty without pairs)
    path: Vec<[f64; 2]>,
    /// per-period sums of the shifted prices (see [`SeasonPrices`]; empty without pairs)
    season: Vec<[f64; 5]>,
    /// kept series, each period-major: [t][rep in chunk], so a period's values are contiguous
    /// (empty when this chunk lies beyond the series budget)
    series: Vec<Vec<f64>>,
    /// per-period sums of each kept series over the chunk's replications, period-major:
    /// [t · series + j]
    series_sums: Vec<f64>,
    /// the chunk's replication summaries while it runs (then `blocks`)
    summaries: Vec<ReplicationSummary>,
    /// the chunk's replication summaries, value by value
    blocks: Option<ChunkBlocks>,
    /// the season outlays of the chunk's replications above the floor it was given, period-major
    /// (t, then rep in chunk), when within the season budget (their quantiles do not depend on the
    /// order: [`SeasonOutlays`])
    outlay_keys: SeasonKeys,
}

/// Chunks run in parallel at a time: their results are merged in chunk order while the next wave
/// runs (so at most two waves' results are in memory, never the whole run's; any wave size gives
/// the same bits: the merge order is the chunk order).
pub const WAVE: usize = 128;

/// One model's results merged over the chunks so far, in chunk order.
struct Merged {
    replications: Replications,
    outlays: SeasonOutlays,
    pooled: Option<Pooled>,
    fiscal: Vec<f64>,
    income: Vec<f64>,
    transform: Vec<f64>,
    /// per series, the kept chunks' period-major values, in chunk order (chunks all +0 only
    /// counted)
    series: Vec<Vec<Vec<f64>>>,
    /// per series, the kept replications whose values were all +0 (their chunks not kept)
    series_zero_reps: Vec<usize>,
    series_sums: Vec<Vec<f64>>,
}

impl Merged {
    fn new(periods: usize, series: usize, planned_outlays: usize) -> Merged {
        Merged {
            replications: Replications::new(),
            outlays: SeasonOutlays::new(planned_outlays),
            series_zero_reps: vec![0; series],
            pooled: None,
            fiscal: vec![0.0; periods],
            income: vec![0.0; periods],
            transform: vec![0.0; periods],
            series: (0..series).map(|_| Vec::new()).collect(),
            series_sums: (0..series).map(|_| vec![0.0; periods]).collect(),
        }
    }

    /// Adds the next chunk's results (chunks in order).
    fn merge(&mut self, c: ChunkPolicy) {
        match &mut self.pooled {
            None => self.pooled = Some(c.pooled),
            Some(acc) => acc.merge(&c.pooled),
        }
        for (a, b) in self.fiscal.iter_mut().zip(&c.sums) {
            *a += b[0];
        }
        for (a, b) in self.income.iter_mut().zip(&c.sums) {
            *a += b[1];
        }
        for (a, b) in self.transform.iter_mut().zip(&c.sums) {
            *a += b[2];
        }
        let kinds = self.series.len();
        for (j, ((sums, kept), (zero_reps, block))) in self
            .series_sums
            .iter_mut()
            .zip(self.series.iter_mut())
            .zip(self.series_zero_reps.iter_mut().zip(c.series))
            .enumerate()
        {
            for (a, b) in sums
                .iter_mut()
                .zip(c.series_sums.iter().skip(j).step_by(kinds))
            {
                *a += b;
            }
            if block.iter().all(|x| x.to_bits() == 0) {
                // quantiles depend only on the values, not on which replication holds them
                *zero_reps += c.n * usize::from(!block.is_empty());
            } else {
                kept.push(block);
            }
        }
        if let Some(b) = c.blocks {
            self.replications.push(b);
        }
        self.outlays.extend_keys(c.outlay_keys);
    }
}

/// A chunk's results per model, per price pair and per leakage pair (each replication's sums).
type ChunkOutcome =
    Result<(Vec<ChunkPolicy>, Vec<PairedChanges>, Vec<Vec<(f64, f64)>>), ReplicationFailed>;

/// Simulates every policy in `policies` over `scenario.run.replications` replications of
/// `scenario.run.periods` periods under the same shocks, keeping the per-period `series` for quantiles.
/// The first failing replication (lowest replication, then lowest policy index) fails the whole run.
/// This runs the period engine; for any market (private storers too) see [`run_models`] and
/// `path::with_models`.
pub fn run_monte_carlo(
    scenario: &Scenario,
    policies: &[PolicySpec],
    series: &[PathVariable],
    progress: &dyn Progress,
) -> Result<MonteCarlo, ReplicationFailed> {
    let models: Vec<Model> = policies.iter().map(|p| Model::new(scenario, p)).collect();
    run_with_budget(
        scenario,
        policies,
        &models,
        (series, Pairing::default()),
        progress,
        SERIES_BUDGET_BYTES,
    )
}

/// [`run_monte_carlo`] over given models (one per policy, in order, built from `policies`): the
/// period engine or the solved storage equilibrium alike (`path::with_models` builds them).
pub fn run_models<M: PathModel>(
    scenario: &Scenario,
    policies: &[PolicySpec],
    models: &[M],
    variables: &[PathVariable],
    progress: &dyn Progress,
) -> Result<MonteCarlo, ReplicationFailed> {
    run_with_budget(
        scenario,
        policies,
        models,
        (variables, Pairing::default()),
        progress,
        SERIES_BUDGET_BYTES,
    )
}

/// [`run_models`] that also folds, for each pair (model, its baseline) of `pairs.prices` (indices
/// into `models`), the proportional price changes of the model against the baseline in the same
/// replication ([`PairedChanges`]) and every model's season-by-season price moments
/// ([`SeasonPrices`]); household groups are measured from them (`households`); and for each pair of
/// `pairs.leakage` each replication's leakage sums ([`MonteCarlo::leakage`]). With no pairs this is
/// [`run_models`] exactly.
pub fn run_models_paired<M: PathModel>(
    scenario: &Scenario,
    policies: &[PolicySpec],
    models: &[M],
    variables: &[PathVariable],
    progress: &dyn Progress,
    pairs: Pairing<'_>,
) -> Result<MonteCarlo, ReplicationFailed> {
    run_with_budget(
        scenario,
        policies,
        models,
        (variables, pairs),
        progress,
        SERIES_BUDGET_BYTES,
    )
}

fn run_with_budget<M: PathModel>(
    scenario: &Scenario,
    policies: &[PolicySpec],
    models: &[M],
    (series, pairing): (&[PathVariable], Pairing<'_>),
    progress: &dyn Progress,
    budget: usize,
) -> Result<MonteCarlo, ReplicationFailed> {
    let pairs = pairing.prices;
    let reps = scenario.run.replications.max(1);
    let periods = scenario.run.periods;
    let watches: Vec<Watch> = policies
        .iter()
        .map(|p| Watch::new(scenario, p, &crate::policies::compile(p).agency))
        .collect();
    let season_reps = (SEASON_BUDGET_BYTES / (periods * models.len() * 8).max(1))
        .max(1)
        .div_ceil(CHUNK)
        * CHUNK;
    let chunks = reps.div_ceil(CHUNK);
    let first_failure = AtomicUsize::new(usize::MAX);
    let per_replication = (periods * series.len() * models.len() * 8).max(1);
    // at least one chunk, so quantiles always exist
    let series_reps = (budget / per_replication).max(1).div_ceil(CHUNK) * CHUNK;
    // season weights of the paired changes: (1 + r)^−t normalised to sum to 1
    let weights: Vec<f64> = if pairs.is_empty() {
        Vec::new()
    } else {
        let v = 1.0 / (1.0 + scenario.run.discount_rate);
        let raw: Vec<f64> = (1..=periods).map(|t| v.powi(t as i32)).collect();
        let total: f64 = raw.iter().sum();
        raw.iter().map(|w| w / total).collect()
    };
    let ctx = Context {
        pairs,
        leakage_pairs: pairing.leakage,
        weights: &weights,
        series_reps,
        season_reps,
        scenario,
        models,
        watches: &watches,
        series,
        first_failure: &first_failure,
        progress,
    };
    let planned_outlays = season_reps.min(reps) * periods;
    let mut acc = Accumulated {
        merged: models
            .iter()
            .map(|_| Merged::new(periods, series.len(), planned_outlays))
            .collect(),
        paired: vec![PairedChanges::default(); pairs.len()],
        leakage: pairing
            .leakage
            .iter()
            .map(|_| Vec::with_capacity(reps))
            .collect(),
        season_prices: if pairs.is_empty() {
            Vec::new()
        } else {
            (0..models.len())
                .map(|_| SeasonPrices {
                    reference: scenario.steady.price,
                    n: 0,
                    sums: vec![[0.0; 5]; periods],
                })
                .collect()
        },
    };
    // `floors`: each model's season floor as the waves before the last one left it (the same at
    // any thread count: the last wave is merged while this one runs)
    let wave_of = |wave: usize, floors: Vec<Option<i64>>| -> Vec<Option<ChunkOutcome>> {
        (wave..(wave + WAVE).min(chunks))
            .into_par_iter()
            // each worker's period columns, reused from chunk to chunk
            .map_init(Vec::new, |columns, c| {
                if first_failure.load(Ordering::Relaxed) < c {
                    return None; // an earlier chunk failed: this one cannot be the first failure
                }
                let out = ctx.chunk(c * CHUNK, ((c + 1) * CHUNK).min(reps), columns, &floors);
                if out.is_err() {
                    first_failure.fetch_min(c, Ordering::Relaxed);
                }
                Some(out)
            })
            .collect()
    };
    // waves of chunks run in parallel; each wave's results are merged in chunk order while the
    // next wave runs (rayon::join: the merging thread takes chunks again when it is done; the merge
    // is join's first task, so one thread merges before it runs the next wave and holds one wave)
    let mut pending: Vec<Option<ChunkOutcome>> = Vec::new();
    for wave in (0..chunks).step_by(WAVE) {
        let last = std::mem::take(&mut pending);
        let floors = acc.merged.iter().map(|m| m.outlays.floor()).collect();
        let (merged_last, outcomes) =
            rayon::join(|| acc.merge_wave(last), || wave_of(wave, floors));
        merged_last?;
        pending = outcomes;
    }
    acc.merge_wave(pending)?;
    let Accumulated {
        merged,
        paired,
        season_prices,
        leakage,
    } = acc;
    // the models assembled in parallel (each on its own; collected in model order)
    let policies = merged
        .into_par_iter()
        .enumerate()
        .map(|(k, m)| assemble(models[k].name(), m, series, periods, watches[k].clone()))
        .collect();
    Ok(MonteCarlo {
        replications: reps,
        periods,
        policies,
        paired,
        season_prices,
        leakage,
    })
}

/// One model's period over the lanes of a chunk: what its per-period sums add, lane by lane.
struct PeriodSums<'c> {
    /// the chunk's lanes (at most [`CHUNK`])
    n: usize,
    fiscal: &'c Lanes,
    income: &'c Lanes,
    transform: &'c Lanes,
}

impl PeriodSums<'_> {
    /// Adds the period's fiscal costs, incomes and CRRA transforms to `sums` and the `M − 3` kept
    /// series to `series_sums` (`M` = 3 + the number of series), all in one loop
    /// ([`sum_lanes`]).
    #[inline(always)]
    fn add<const M: usize>(
        &self,
        sums: &mut [f64; 3],
        cols: &Columns,
        series: &[PathVariable],
        series_sums: &mut [f64],
    ) {
        let xs: [&Lanes; M] = std::array::from_fn(|j| match j {
            0 => self.fiscal,
            1 => self.income,
            2 => self.transform,
            _ => series[j - 3].column(cols),
        });
        let mut all = [0.0; M];
        all[..3].copy_from_slice(sums);
        all[3..].copy_from_slice(series_sums);
        sum_lanes(self.n, xs, &mut all);
        sums.copy_from_slice(&all[..3]);
        series_sums.copy_from_slice(&all[3..]);
    }

    /// The three sums and the kept series: up to four series with the three in one loop
    /// ([`PeriodSums::add`]`::<3 + series>`), more with [`PeriodSums::add_any`].
    #[inline(always)]
    fn add_all(
        &self,
        sums: &mut [f64; 3],
        cols: &Columns,
        series: &[PathVariable],
        series_sums: &mut [f64],
    ) {
        match series.len() {
            0 => self.add::<3>(sums, cols, series, series_sums),
            1 => self.add::<4>(sums, cols, series, series_sums),
            2 => self.add::<5>(sums, cols, series, series_sums),
            3 => self.add::<6>(sums, cols, series, series_sums),
            4 => self.add::<7>(sums, cols, series, series_sums),
            _ => self.add_any(sums, cols, series, series_sums),
        }
    }

    /// [`PeriodSums::add`] for any number of kept series: the three sums in one loop, then the
    /// series four at a time.
    fn add_any(
        &self,
        sums: &mut [f64; 3],
        cols: &Columns,
        series: &[PathVariable],
        series_sums: &mut [f64],
    ) {
        sum_lanes(self.n, [self.fiscal, self.income, self.transform], sums);
        let n = self.n;
        let column = |which: &[PathVariable], j: usize| which[j].column(cols);
        let mut groups = series.chunks_exact(4).zip(series_sums.chunks_exact_mut(4));
        for (which, sum) in groups.by_ref() {
            sum_lanes::<4>(n, std::array::from_fn(|j| column(which, j)), sum);
        }
        let rest = series.len() - series.len() % 4;
        let (which, sum) = (&series[rest..], &mut series_sums[rest..]);
        match which.len() {
            1 => sum_lanes::<1>(n, std::array::from_fn(|j| column(which, j)), sum),
            2 => sum_lanes::<2>(n, std::array::from_fn(|j| column(which, j)), sum),
            3 => sum_lanes::<3>(n, std::array::from_fn(|j| column(which, j)), sum),
            _ => {}
        }
    }
}

/// Adds each of the `K` arrays of lanes `xs` (its first `n` lanes, `n` at most [`CHUNK`]) to its sum
/// in `sums`, each over the lanes in lane order (the bits of adding the replications one after
/// another), but all `K` in one loop, so their chains of additions overlap instead of waiting on
/// one another. The loop reads whole arrays of lanes, so no index is checked in it.
#[inline(always)]
#[allow(clippy::needless_range_loop)] // lane by lane, the K sums side by side
fn sum_lanes<const K: usize>(n: usize, xs: [&Lanes; K], sums: &mut [f64]) {
    let n = n.min(CHUNK);
    let mut s: [f64; K] = std::array::from_fn(|j| sums[j]);
    for l in 0..n {
        for j in 0..K {
            s[j] += xs[j][l];
        }
    }
    sums.copy_from_slice(&s);
}

/// Every model's results merged over the waves so far, in chunk order.
struct Accumulated {
    merged: Vec<Merged>,
    paired: Vec<PairedChanges>,
    season_prices: Vec<SeasonPrices>,
    /// per leakage pair, each replication's sums so far, in replication order
    leakage: Vec<Vec<(f64, f64)>>,
}

impl Accumulated {
    /// Adds a wave's chunk results in chunk order; the first failed chunk's error, if any. The
    /// models are merged in parallel, each over the chunks in order (the same additions in the
    /// same order as one model after another).
    fn merge_wave(&mut self, outcomes: Vec<Option<ChunkOutcome>>) -> Result<(), ReplicationFailed> {
        let mut per_model: Vec<Vec<ChunkPolicy>> = self
            .merged
            .iter()
            .map(|_| Vec::with_capacity(outcomes.len()))
            .collect();
        for o in outcomes {
            match o {
                Some(Ok((v, p, leakage))) => {
                    for (a, b) in self.paired.iter_mut().zip(&p) {
                        a.merge(b);
                    }
                    for (all, chunk) in self.leakage.iter_mut().zip(leakage) {
                        all.extend(chunk);
                    }
                    for (acc, c) in self.season_prices.iter_mut().zip(&v) {
                        acc.n += c.n;
                        for (a, b) in acc.sums.iter_mut().zip(&c.season) {
                            for i in 0..5 {
                                a[i] += b[i];
                            }
                        }
                    }
                    for (list, c) in per_model.iter_mut().zip(v) {
                        list.push(c);
                    }
                }
                Some(Err(e)) => return Err(e),
                None => unreachable!("a chunk is skipped only after an earlier chunk failed"),
            }
        }
        self.merged
            .par_iter_mut()
            .zip(per_model)
            .for_each(|(m, chunks)| chunks.into_iter().for_each(|c| m.merge(c)));
        Ok(())
    }
}

struct Context<'a, M> {
    /// (model, baseline) pairs whose paired price changes are folded (empty: none)
    pairs: &'a [(usize, usize)],
    /// (model, baseline) pairs whose leakage sums are kept replication by replication
    leakage_pairs: &'a [(usize, usize)],
    /// season weights of the paired changes (empty without pairs)
    weights: &'a [f64],
    scenario: &'a Scenario,
    models: &'a [M],
    watches: &'a [Watch],
    series: &'a [PathVariable],
    series_reps: usize,
    /// replications whose season outlays are kept (whole chunks)
    season_reps: usize,
    first_failure: &'a AtomicUsize,
    progress: &'a dyn Progress,
}

impl<M: PathModel> Context<'_, M> {
    /// Replications `from..to` (at most [`CHUNK`]) of every model, lane-major: lane l is
    /// replication `from + l`. Each period every model steps all its lanes on the period's shocks;
    /// every [`FOLD_BLOCK`] periods (and at the end) each model's block of periods is folded over
    /// the lanes at once ([`LaneFold`]); a lane's sums see its periods in order and the chunk's sums
    /// see the lanes in replication order, so every figure has the bits of folding the replications
    /// one after another.
    ///
    /// `columns` holds [`FOLD_BLOCK`] [`Columns`] per model, the periods of the block in hand (made
    /// here when it is empty), reused by the next chunk the caller runs: every period's step writes
    /// the lanes it steps before they are read, and nothing reads a lane at or above the chunk's
    /// size, so what an earlier chunk left in them is never read (and they are not zeroed again,
    /// 14 KB a period and model).
    ///
    /// `season_floors` holds each model's [`SeasonOutlays`] floor as some earlier merge left it:
    /// the chunk hands on only the season outlays above it.
    fn chunk(
        &self,
        from: usize,
        to: usize,
        columns: &mut Vec<Columns>,
        season_floors: &[Option<i64>],
    ) -> ChunkOutcome {
        let s = self.scenario;
        let periods = s.run.periods;
        let n = to - from;
        let pairs = !self.pairs.is_empty();
        let floor_of = |k: usize| season_floors.get(k).copied().flatten();
        let mut out: Vec<ChunkPolicy> = (0..self.models.len())
            .map(|k| ChunkPolicy {
                n,
                pooled: Pooled::new(s.steady.price, s.steady.quantity),
                sums: vec![[0.0; 3]; periods],
                path: if pairs {
                    vec![[0.0; 2]; n * periods]
                } else {
                    Vec::new()
                },
                season: if pairs {
                    vec![[0.0; 5]; periods]
                } else {
                    Vec::new()
                },
                // filled period by period as the chunk runs (not zeroed first)
                series: self
                    .series
                    .iter()
                    .map(|_| {
                        if from < self.series_reps {
                            Vec::with_capacity(n * periods)
                        } else {
                            Vec::new()
                        }
                    })
                    .collect(),
                series_sums: vec![0.0; periods * self.series.len()],
                summaries: Vec::with_capacity(n),
                blocks: None,
                outlay_keys: SeasonKeys::new(
                    floor_of(k),
                    if from < self.season_reps {
                        n * periods
                    } else {
                        0
                    },
                ),
            })
            .collect();
        let mut paired = vec![PairedChanges::default(); self.pairs.len()];
        let mut leakage = vec![LaneLeakage::new(); self.leakage_pairs.len()];
        // every replication's shocks, drawn once and handed to every model: period t's shocks of
        // every lane are one set of columns, each lane's drawn straight into its places
        let mut shocks = vec![ShockColumns::default(); periods];
        draw_shock_columns(s, from as u64, n, &mut shocks);
        let mut lanes: Vec<M::Lanes<'_>> = self.models.iter().map(|m| m.start_lanes(n)).collect();
        // each model's columns of the last FOLD_BLOCK periods, folded together
        columns.resize_with(self.models.len() * FOLD_BLOCK, Columns::default);
        let mut failed: Vec<Vec<Option<Diverged>>> =
            self.models.iter().map(|_| vec![None; n]).collect();
        let mut folds: Vec<LaneFold> = self
            .watches
            .iter()
            .map(|w| LaneFold::new(w, s.steady.price, s.steady.quantity))
            .collect();
        // lockstep: period by period, every model steps every lane on the same shocks; every
        // FOLD_BLOCK periods (and at the end) each model's block is folded and its periods' sums
        // and kept values taken, period by period
        for (t, shocks) in shocks.iter().enumerate() {
            if self.first_failure.load(Ordering::Relaxed) < from / CHUNK {
                break; // an earlier chunk failed; this chunk's figures will not be used
            }
            let j = t % FOLD_BLOCK;
            for ((path, block), failed) in lanes
                .iter_mut()
                .zip(columns.chunks_exact_mut(FOLD_BLOCK))
                .zip(failed.iter_mut())
            {
                path.step(shocks, &mut block[j], failed);
            }
            if j + 1 < FOLD_BLOCK && t + 1 < periods {
                continue;
            }
            let first = t - j;
            for (k, ((block, fold), (acc, watch))) in columns
                .chunks_exact(FOLD_BLOCK)
                .zip(folds.iter_mut())
                .zip(out.iter_mut().zip(self.watches))
                .enumerate()
            {
                let block = &block[..=j];
                fold.add(block, watch);
                for (j, cols) in block.iter().enumerate() {
                    self.keep_period(from, (first + j, cols), (fold, j), floor_of(k), acc);
                }
            }
            let block_of = |k: usize| columns.chunks_exact(FOLD_BLOCK).nth(k).map(|c| &c[..=j]);
            for (sums, &(k, b)) in leakage.iter_mut().zip(self.leakage_pairs) {
                if let (Some(policy), Some(baseline)) = (block_of(k), block_of(b)) {
                    sums.add(policy, baseline);
                }
            }
        }
        let last = periods.saturating_sub(1) % FOLD_BLOCK;
        // replication by replication: the first failing one (lowest replication, then lowest model
        // index) fails the chunk
        for lane in 0..n {
            for (k, (((fold, block), failed), (acc, watch))) in folds
                .iter()
                .zip(columns.chunks_exact(FOLD_BLOCK))
                .zip(failed.iter_mut())
                .zip(out.iter_mut().zip(self.watches))
                .enumerate()
            {
                if let Some(source) = failed[lane].take() {
                    return Err(ReplicationFailed {
                        policy: self.models[k].name().to_string(),
                        policy_index: k,
                        replication: from + lane,
                        seed: s.run.seed,
                        source,
                    });
                }
                let (summary, pooled) = fold.finish(lane, &block[last], watch);
                acc.pooled.merge(&pooled);
                acc.summaries.push(summary);
            }
            if pairs {
                self.pair_up(lane, &mut out, &mut paired);
            }
        }
        let leakage = leakage
            .iter()
            .map(|sums| (0..n).map(|lane| sums.lane(lane)).collect())
            .collect();
        self.progress.advance(n as u64);
        for c in &mut out {
            c.path = Vec::new(); // the chunk's scratch: not kept with the chunk
            c.blocks = Some(ChunkBlocks::of(&c.summaries));
            c.summaries = Vec::new();
        }
        Ok((out, paired, leakage))
    }

    /// What the chunk from replication `from` keeps of period `t` of one model once it is folded
    /// (`cols` its columns, `j` its place in the fold's block): the per-period sums, the season
    /// outlays above `season_floor` and the fan values of the leading replications, the paired
    /// price paths.
    fn keep_period(
        &self,
        from: usize,
        (t, cols): (usize, &Columns),
        (fold, j): (&LaneFold, usize),
        season_floor: Option<i64>,
        acc: &mut ChunkPolicy,
    ) {
        let n = acc.n;
        let periods = self.scenario.run.periods;
        let kinds = self.series.len();
        let period = PeriodSums {
            n,
            fiscal: &cols.fiscal_cost,
            income: &fold.income[j],
            transform: &fold.transform[j],
        };
        let series_sums = &mut acc.series_sums[t * kinds..(t + 1) * kinds];
        period.add_all(&mut acc.sums[t], cols, self.series, series_sums);
        // the season outlays of the leading replications (within budget)
        if from < self.season_reps {
            acc.outlay_keys.push(season_floor, &cols.fiscal_cost[..n]);
        }
        if from < self.series_reps {
            for (kept, which) in acc.series.iter_mut().zip(self.series) {
                kept.extend_from_slice(&which.column(cols)[..n]);
            }
        }
        if !self.pairs.is_empty() {
            for (lane, cell) in acc.path.iter_mut().skip(t).step_by(periods).enumerate() {
                *cell = [
                    cols.producer_price[lane],
                    consumer_price_of(
                        cols.price[lane],
                        cols.consumer_payments[lane],
                        cols.consumption[lane],
                    ),
                ];
            }
        }
    }

    /// After every model stepped the chunk: replication `lane`'s proportional price changes for
    /// each pair and each model's shifted price sums.
    fn pair_up(&self, lane: usize, out: &mut [ChunkPolicy], paired: &mut [PairedChanges]) {
        let periods = self.scenario.run.periods;
        let range = lane * periods..(lane + 1) * periods;
        fn path(c: &ChunkPolicy, range: std::ops::Range<usize>) -> &[[f64; 2]] {
            c.path.get(range).unwrap_or(&[])
        }
        let change = |p: f64, base: f64| if base > 0.0 { (p - base) / base } else { 0.0 };
        for (acc, &(k, b)) in paired.iter_mut().zip(self.pairs) {
            let mut x = [0.0; 4];
            let (pk, pb) = (path(&out[k], range.clone()), path(&out[b], range.clone()));
            for ((pk, pb), w) in pk.iter().zip(pb).zip(self.weights) {
                let (dp, dc) = (change(pk[0], pb[0]), change(pk[1], pb[1]));
                x[0] += w * dp;
                x[1] += w * dc;
                x[2] += w * dp * dp;
                x[3] += w * dc * dc;
            }
            acc.push(x);
        }
        let reference = self.scenario.steady.price;
        for c in out.iter_mut() {
            let ChunkPolicy { season, path, .. } = c;
            let path = path.get(range.clone()).unwrap_or(&[]);
            for (s, p) in season.iter_mut().zip(path) {
                let (a, b) = (p[0] - reference, p[1] - reference);
                s[0] += a;
                s[1] += b;
                s[2] += a * a;
                s[3] += b * b;
                s[4] += a * b;
            }
        }
    }
}

/// Policy `k`'s results from its chunks merged in chunk order.
fn assemble(
    name: &str,
    m: Merged,
    series: &[PathVariable],
    periods: usize,
    watch: Watch,
) -> PolicyRuns {
    let Merged {
        replications,
        outlays,
        pooled,
        mut fiscal,
        mut income,
        mut transform,
        series: kept_series,
        series_zero_reps,
        series_sums,
    } = m;
    // the merged list holds every replication
    let reps = replications.len();
    for f in fiscal
        .iter_mut()
        .chain(income.iter_mut())
        .chain(transform.iter_mut())
    {
        *f /= reps as f64;
    }
    let summaries = series
        .iter()
        .zip(kept_series.iter().zip(&series_sums))
        .zip(&series_zero_reps)
        .map(|((which, (blocks, sums)), &zeros)| {
            let kept: usize = blocks
                .iter()
                .map(|b| b.len() / periods.max(1))
                .sum::<usize>()
                + zeros;
            let summaries = (0..periods)
                .into_par_iter()
                .map_init(
                    || Vec::with_capacity(kept),
                    |column, t| {
                        column.clear();
                        for block in blocks {
                            let n = block.len() / periods.max(1);
                            column.extend(block[t * n..(t + 1) * n].iter().map(|&x| order_key(x)));
                        }
                        // selection among integers in the order of `f64::total_cmp`
                        let q = quantiles_of_keys(column, zeros, &[0.05, 0.5, 0.95]);
                        Summary {
                            mean: sums[t] / reps as f64,
                            p05: q[0],
                            p50: q[1],
                            p95: q[2],
                        }
                    },
                )
                .collect();
            SeriesSummary {
                series: *which,
                quantile_replications: kept,
                periods: summaries,
            }
        })
        .collect();
    PolicyRuns {
        name: name.to_string(),
        replications,
        pooled: pooled.unwrap_or_default(),
        mean_fiscal_cost: fiscal,
        series: summaries,
        season_fiscal: outlays,
        mean_income: income,
        mean_income_transform: transform,
        watch,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::numeric::Simd;
    use crate::scenario::{market_from_table, parse_toml};
    use crate::stochastic::quantiles;

    fn scenario(reps: usize) -> Scenario {
        let text = format!(
            "[market]\nname = \"T\"\nquantity_unit = \"kt\"\nprice_unit = \"per t\"\n\
             [demand]\nintercept = 200.0\nslope = -2.0\n[supply]\nintercept = -40.0\nslope = 1.0\n\
             [expectations]\nrule = \"naive\"\n[run]\nperiods = 10\ninitial_price = 85.0\n\
             replications = {reps}\nseed = 9\n[shocks]\nsupply_sd = 2.0\n"
        );
        market_from_table("t.toml", parse_toml("t.toml", &text).unwrap()).unwrap()
    }

    #[test]
    fn over_budget_quantiles_come_from_the_leading_replications_and_means_from_all() {
        let none = [PolicySpec::none()];
        let series = [PathVariable::Price];
        // a budget of one replication rounds up to one chunk of CHUNK replications
        let models = [Model::new(&scenario(200), &none[0])];
        let capped = run_with_budget(
            &scenario(200),
            &none,
            &models,
            (&series, Pairing::default()),
            &NoProgress,
            1,
        )
        .unwrap();
        let full = run_monte_carlo(&scenario(200), &none, &series, &NoProgress).unwrap();
        let leading = run_monte_carlo(&scenario(CHUNK), &none, &series, &NoProgress).unwrap();
        let (c, f, l) = (
            &capped.policies[0].series[0],
            &full.policies[0].series[0],
            &leading.policies[0].series[0],
        );
        assert_eq!(c.quantile_replications, CHUNK);
        assert_eq!(f.quantile_replications, 200);
        for t in 0..10 {
            assert_eq!(c.periods[t].mean, f.periods[t].mean);
            assert_eq!(c.periods[t].p05, l.periods[t].p05);
            assert_eq!(c.periods[t].p95, l.periods[t].p95);
        }
        assert_eq!(capped.policies[0].pooled, full.policies[0].pooled);
    }

    #[test]
    fn the_kept_tail_gives_the_upper_quantiles_of_the_whole_list() {
        // type 7 (Hyndman and Fan 1996, definition 7) at 95 % and 99 % of the whole list, selected
        // by `stats::quantiles`, against the tail kept while outlays arrive in chunks: a spread
        // with a third of zeros, a policy that never spends (all +0), and a few repeated values
        // (many outlays equal to the floor, counted rather than kept), rising and falling lists;
        // and what is kept is what the plain rule keeps
        let mut x = 0.4321_f64;
        let mut next = || {
            x = (x * 3.95 * (1.0 - x)).clamp(1e-9, 1.0 - 1e-9);
            x
        };
        let lists: Vec<Vec<f64>> = vec![
            (0..20_000)
                .map(|i| {
                    let x = next();
                    if i % 3 == 0 {
                        0.0
                    } else {
                        1000.0 * (x - 0.3)
                    }
                })
                .collect(),
            vec![0.0; 20_000],
            (0..20_000).map(|_| (4.0 * next()).floor() * 10.0).collect(),
            (0..9_000)
                .map(|i| if i % 50 == 0 { next() } else { -0.0 })
                .collect(),
            // rising: after a pruning every block has outlays above the floor, most of them all;
            // falling: every block after the first pruning is below the floor and only counted
            (0..20_000).map(|i| f64::from(i) * 0.5).collect(),
            (0..20_000).map(|i| f64::from(20_000 - i) * 0.5).collect(),
            // a floor of −0 and then +0 outlays, above it under total order
            (0..20_000)
                .map(|i| match (i % 500, i < 10_000) {
                    (0, _) => next(),
                    (_, true) => -0.0,
                    (_, false) => 0.0,
                })
                .collect(),
        ];
        for whole in lists {
            let mut tail = SeasonOutlays::new(whole.len());
            // what is kept: every outlay whose key is above the floor of the moment (the rule
            // written plainly), so the same multiset as the fast path (a +0 over a floor of −0
            // included, which no quantile tells apart)
            let mut plain = SeasonOutlays::new(whole.len());
            // parts cut at the floor of two parts before, as a chunk cuts its outlays at the floor
            // the merges before the last wave left: the same keys, in the same order
            let mut early = SeasonOutlays::new(whole.len());
            let mut floors = vec![None, None];
            for part in whole.chunks(700) {
                tail.extend(part);
                let mut cut = SeasonKeys::default();
                cut.push(floors[floors.len() - 2], part);
                early.extend_keys(cut);
                floors.push(early.floor());
                let (floor, before) = (plain.floor, plain.kept.len());
                let keys = part.iter().map(|&x| order_key(x));
                plain
                    .kept
                    .extend(keys.filter(|&k| floor.is_none_or(|f| k > f)));
                plain.dropped += part.len() - (plain.kept.len() - before);
                plain.extend(&[]); // the pruning, as the type prunes
            }
            let (mut a, mut b) = (tail.kept.clone(), plain.kept.clone());
            a.sort_unstable();
            b.sort_unstable();
            assert!(
                a == b && tail.dropped == plain.dropped,
                "kept values differ"
            );
            assert!(tail.dropped > 0, "the test must drop values");
            assert_eq!(early, tail, "cut early, kept the same");
            assert_eq!(tail.len(), whole.len());
            let probs = [0.95, 0.975, 0.99, 1.0];
            let want = quantiles(&mut whole.clone(), &probs);
            let got = tail.quantiles(&probs).unwrap();
            for (a, b) in want.iter().zip(&got) {
                assert_eq!(a.to_bits(), b.to_bits(), "{want:?} vs {got:?}");
            }
            // a quantile below the kept tail is refused, not guessed
            assert_eq!(tail.quantiles(&[0.5]), None);
        }
        assert_eq!(
            SeasonOutlays::new(0).quantiles(&[0.95, 0.99]),
            Some(vec![0.0; 2])
        );
    }

    #[test]
    fn every_copy_of_the_tail_filter_keeps_the_keys_above_the_floor_in_order() {
        // the plain rule (keys above the floor, in the order they come) against each vector copy,
        // on blocks with none, some and all above, a short last block, zeros of both signs
        let xs: Vec<f64> = (0..1000)
            .map(|i| match i % 7 {
                0 => -0.0,
                1 => 0.0,
                _ => ((i * 37) % 101) as f64 - 50.0 + if i > 700 { 60.0 } else { 0.0 },
            })
            .collect();
        for floor in [
            order_key(-0.0),
            order_key(0.0),
            order_key(25.0),
            order_key(-100.0),
        ] {
            let want: Vec<i64> = (xs.iter().map(|&x| order_key(x)))
                .filter(|&k| k > floor)
                .collect();
            let keys: Vec<i64> = xs.iter().map(|&x| order_key(x)).collect();
            for simd in [Simd::Plain, Simd::Avx2, Simd::Avx512] {
                let (mut got, mut from_keys) = (vec![7], vec![7]);
                keep_above(simd.at_most(), &xs, floor, &mut got);
                keep_above(simd.at_most(), &keys, floor, &mut from_keys);
                assert_eq!(got[0], 7, "appended, not replaced");
                assert_eq!(got[1..], want[..], "{simd:?} floor {floor}");
                assert_eq!(from_keys, got, "{simd:?} floor {floor}, from keys");
            }
        }
    }

    #[test]
    fn a_chunk_on_reused_columns_gives_the_bits_of_one_on_fresh_columns() {
        // the last, short chunk on the columns a full chunk left behind, against the same chunk on
        // fresh columns: every figure it hands back has the same bits
        let reps = 2 * CHUNK + 23;
        let s = scenario(reps);
        let band = crate::policies::file::policy_from_table(
            "p.toml",
            parse_toml(
                "p.toml",
                "[policy]\nname = \"Band\"\n[stock]\nbuy_below = 78.0\nsell_above = 84.0\n\
                 capacity = 30.0\ninitial = 5.0\nstorage_cost = 1.0\n",
            )
            .unwrap(),
        )
        .unwrap();
        let policies = [PolicySpec::none(), band];
        let models: Vec<Model> = policies.iter().map(|p| Model::new(&s, p)).collect();
        let watches: Vec<Watch> = policies
            .iter()
            .map(|p| Watch::new(&s, p, &crate::policies::compile(p).agency))
            .collect();
        let first_failure = AtomicUsize::new(usize::MAX);
        let ctx = Context {
            pairs: &[],
            leakage_pairs: &[],
            weights: &[],
            scenario: &s,
            models: &models,
            watches: &watches,
            series: &[PathVariable::Price, PathVariable::Stock],
            series_reps: reps,
            season_reps: reps,
            first_failure: &first_failure,
            progress: &NoProgress,
        };
        let bits = |columns: &mut Vec<Columns>| -> Vec<String> {
            // the band's season outlays cut at a floor of +0, the market's uncut
            let floors = [None, Some(order_key(0.0))];
            let (out, _, _) = ctx.chunk(2 * CHUNK, reps, columns, &floors).unwrap();
            out.iter()
                .map(|c| {
                    format!(
                        "{} {:?} {:?} {:?} {:?} {:?} {:?}",
                        c.n, c.pooled, c.sums, c.series, c.series_sums, c.blocks, c.outlay_keys
                    )
                })
                .collect()
        };
        let fresh = bits(&mut Vec::new());
        let mut used = Vec::new();
        assert!(ctx
            .chunk(CHUNK, 2 * CHUNK, &mut used, &[None, None])
            .is_ok());
        assert_eq!(used.len(), models.len() * FOLD_BLOCK);
        assert_eq!(bits(&mut used), fresh);
    }

    /// Summaries with values shared across a chunk, small and large counts, and values that differ.
    fn mixed_summaries() -> Vec<ReplicationSummary> {
        (0..CHUNK as u32 + 5)
            .map(|i| ReplicationSummary {
                mean_price: 100.0 + f64::from(i) * 0.37,
                final_stock: 12.5,
                stockout_periods: i % 7,
                capacity_full_periods: 250 + i,
                alert_periods: [i % 2, 0, 0, 0, 0, 0, 0, 0],
                welfare: WelfarePv {
                    fiscal_cost: if i % 2 == 0 { -0.0 } else { 0.0 },
                    consumer_surplus: f64::from(i).sqrt(),
                    ..Default::default()
                },
                ..Default::default()
            })
            .collect()
    }

    fn store(summaries: &[ReplicationSummary]) -> Replications {
        let mut reps = Replications::new();
        for part in summaries.chunks(CHUNK) {
            reps.push(ChunkBlocks::of(part));
        }
        reps
    }

    #[test]
    fn values_fold_block_by_block_gives_the_values_one_by_one() {
        // `Values::fold` against `Values::next`, from the start and from part-way through a block,
        // on blocks held once, as bytes and value by value
        let reps = store(&mixed_summaries());
        fn by_next<T: Bits>(it: Values<'_, T>) -> Vec<u64> {
            // a `for` loop calls `next`, value by value
            let mut out = Vec::new();
            for v in it {
                out.push(v.bits());
            }
            out
        }
        fn by_fold<T: Bits>(it: Values<'_, T>) -> Vec<u64> {
            it.fold(Vec::new(), |mut out, v| {
                out.push(v.bits());
                out
            })
        }
        fn after<T: Bits>(mut it: Values<'_, T>, skip: usize) -> Values<'_, T> {
            for _ in 0..skip {
                it.next();
            }
            it
        }
        for skip in [0, 1, CHUNK - 1, CHUNK, CHUNK + 3, reps.len()] {
            for which in [Real::MeanPrice, Real::FinalStock, Real::FiscalCost] {
                let want = by_next(after(reps.reals(which), skip));
                assert_eq!(want.len(), reps.len() - skip);
                let got = by_fold(after(reps.reals(which), skip));
                assert_eq!(got, want, "{which:?} from {skip}");
            }
            for which in [Count::CapacityFull, Count::Stockout, Count::Alert(1)] {
                let want = by_next(after(reps.counts(which), skip));
                let got = by_fold(after(reps.counts(which), skip));
                assert_eq!(got, want, "{which:?} from {skip}");
            }
        }
    }

    #[test]
    fn per_period_sums_of_any_number_of_series_are_the_sums_in_lane_order() {
        // an identity (no outside source): every arm (the three sums with 0 to 4 series in one
        // loop, and any number four at a time, 0 to 9 series) gives the bits of adding lane after
        // lane
        // every kind of series (the ones `run` keeps on a market that trades)
        let all = crate::path::SUMMARY_VARIABLES_TRADE;
        let mut c = Columns {
            trades: true,
            ..Columns::default()
        };
        let mut x = 0.3_f64;
        let mut next = || {
            x = 3.9 * x * (1.0 - x);
            100.0 * x - 20.0
        };
        let (mut fiscal, mut income, mut transform) = ([0.0; CHUNK], [0.0; CHUNK], [0.0; CHUNK]);
        for l in 0..CHUNK {
            (fiscal[l], income[l], transform[l]) = (next(), next(), next());
            (c.price[l], c.producer_price[l], c.harvest[l], c.stock[l]) =
                (next(), next(), next(), next());
            (
                c.trade.world_price[l],
                c.trade.imports[l],
                c.trade.exports[l],
            ) = (next(), next(), next());
        }
        for n in [1, 17, CHUNK] {
            let period = PeriodSums {
                n,
                fiscal: &fiscal,
                income: &income,
                transform: &transform,
            };
            for k in 0..=9 {
                // past seven, some kinds twice (a series may be kept twice)
                let series: Vec<PathVariable> = (0..k).map(|j| all[(3 * j) % 7]).collect();
                let start = [1.5, -2.0, 0.25];
                let want = |xs: &Lanes, s0: f64| xs[..n].iter().fold(s0, |s, x| s + x);
                let wanted: Vec<f64> = series.iter().map(|v| want(v.column(&c), 0.5)).collect();
                let base = [
                    want(&fiscal, start[0]),
                    want(&income, start[1]),
                    want(&transform, start[2]),
                ];
                let (mut sums, mut got) = (start, vec![0.5; series.len()]);
                period.add_all(&mut sums, &c, &series, &mut got);
                let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<_>>();
                assert_eq!(bits(&sums), bits(&base), "n {n}, {} series", series.len());
                assert_eq!(bits(&got), bits(&wanted), "n {n}, {} series", series.len());
                // and the any-number path for the lengths that have their own arm
                let (mut sums, mut got) = (start, vec![0.5; series.len()]);
                period.add_any(&mut sums, &c, &series, &mut got);
                assert_eq!(bits(&sums), bits(&base));
                assert_eq!(bits(&got), bits(&wanted));
            }
        }
    }

    #[test]
    fn chunk_blocks_give_back_every_summary() {
        let summaries = mixed_summaries();
        let mut reps = Replications::new();
        for part in summaries.chunks(CHUNK) {
            reps.push(ChunkBlocks::of(part));
        }
        assert_eq!(reps.len(), summaries.len());
        for (i, want) in summaries.iter().enumerate() {
            let got = reps.get(i);
            assert_eq!(&got, want, "replication {i}");
            assert_eq!(
                got.welfare.fiscal_cost.to_bits(),
                want.welfare.fiscal_cost.to_bits()
            );
        }
        assert!(reps.iter().eq(summaries.iter().copied()));
        assert!(reps
            .reals(Real::MeanPrice)
            .eq(summaries.iter().map(|r| r.mean_price)));
        assert!(reps
            .counts(Count::CapacityFull)
            .eq(summaries.iter().map(|r| r.capacity_full_periods)));
        assert!(reps
            .counts(Count::Alert(0))
            .eq(summaries.iter().map(|r| r.alert_periods[0])));
        assert!(reps.welfare().eq(summaries.iter().map(|r| r.welfare)));
        // the net read from five values has the bits of `WelfarePv::net` of the whole summary
        for lambda in [1.0, 1.2] {
            assert!(reps
                .nets(lambda)
                .map(f64::to_bits)
                .eq(summaries.iter().map(|r| r.welfare.net(lambda).to_bits())));
        }
    }
}
