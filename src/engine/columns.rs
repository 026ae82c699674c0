//! Many paths stepped together, one period at a time, their records kept column by column.
//!
//! The Monte Carlo steps the replications of a chunk together ("lanes": lane l is the chunk's l-th
//! replication): each period, a [`LaneStepper`] advances every lane of one model and writes the
//! period's records into [`Columns`], one array per record field, and the fold reads those arrays
//! lane by lane. A column of one field over the lanes is what the fold's arithmetic runs over, so
//! the compiler can keep it in vector registers; a record per path would be read field by field.
//!
//! [`EachLane`] steps any [`Stepper`] lane by lane (one definition of the step: the path's own);
//! a model may give a faster [`LaneStepper`] that must write the same bits (tested against
//! [`EachLane`]).

use super::{Diverged, PeriodRecord, PeriodShock, Stepper, TradeRecord};

/// The most lanes stepped together (the Monte Carlo's chunk of replications).
pub const LANES: usize = 64;

/// One period of up to [`LANES`] paths of one model, field by field (see [`PeriodRecord`] for what
/// each field means). Lane `l` of every array belongs to the same path; lanes at and above the
/// number stepped, and lanes whose path has ended, hold values of no meaning.
#[derive(Debug, Clone)]
pub struct Columns {
    /// The period t (1-based) of every lane.
    pub period: usize,
    /// [`PeriodRecord::expected_price`].
    pub expected_price: [f64; LANES],
    /// [`PeriodRecord::planted`].
    pub planted: [f64; LANES],
    /// [`PeriodRecord::harvest`].
    pub harvest: [f64; LANES],
    /// [`PeriodRecord::price`].
    pub price: [f64; LANES],
    /// [`PeriodRecord::producer_price`].
    pub producer_price: [f64; LANES],
    /// [`PeriodRecord::consumption`].
    pub consumption: [f64; LANES],
    /// [`PeriodRecord::purchases`].
    pub purchases: [f64; LANES],
    /// [`PeriodRecord::releases`].
    pub releases: [f64; LANES],
    /// [`PeriodRecord::stock`].
    pub stock: [f64; LANES],
    /// [`PeriodRecord::fiscal_cost`].
    pub fiscal_cost: [f64; LANES],
    /// [`PeriodRecord::consumer_surplus`].
    pub consumer_surplus: [f64; LANES],
    /// [`PeriodRecord::producer_surplus`].
    pub producer_surplus: [f64; LANES],
    /// [`PeriodRecord::purchase_cost`].
    pub purchase_cost: [f64; LANES],
    /// [`PeriodRecord::sales_revenue`].
    pub sales_revenue: [f64; LANES],
    /// [`PeriodRecord::storage_cost`].
    pub storage_cost: [f64; LANES],
    /// [`PeriodRecord::financing_cost`].
    pub financing_cost: [f64; LANES],
    /// [`PeriodRecord::handling_cost`].
    pub handling_cost: [f64; LANES],
    /// [`PeriodRecord::deficiency_payments`].
    pub deficiency_payments: [f64; LANES],
    /// [`PeriodRecord::consumer_payments`].
    pub consumer_payments: [f64; LANES],
    /// [`PeriodRecord::rotated`].
    pub rotated: [f64; LANES],
    /// [`PeriodRecord::flags`].
    pub flags: [u16; LANES],
    /// [`PeriodRecord::stockout`].
    pub stockout: [bool; LANES],
    /// The records carry private trade ([`PeriodRecord::trade`] is `Some`): `trade` holds it.
    pub trades: bool,
    /// The private trade of each lane (meaningful only when `trades`).
    pub trade: TradeColumns,
}

/// [`TradeRecord`] field by field.
#[derive(Debug, Clone)]
pub struct TradeColumns {
    /// [`TradeRecord::world_price`].
    pub world_price: [f64; LANES],
    /// [`TradeRecord::imports`].
    pub imports: [f64; LANES],
    /// [`TradeRecord::exports`].
    pub exports: [f64; LANES],
    /// [`TradeRecord::border_revenue`].
    pub border_revenue: [f64; LANES],
    /// [`TradeRecord::quota_rent`].
    pub quota_rent: [f64; LANES],
    /// [`TradeRecord::public_imports`].
    pub public_imports: [f64; LANES],
    /// [`TradeRecord::public_import_cost`].
    pub public_import_cost: [f64; LANES],
}

impl Default for Columns {
    fn default() -> Self {
        const Z: [f64; LANES] = [0.0; LANES];
        Columns {
            period: 0,
            expected_price: Z,
            planted: Z,
            harvest: Z,
            price: Z,
            producer_price: Z,
            consumption: Z,
            purchases: Z,
            releases: Z,
            stock: Z,
            fiscal_cost: Z,
            consumer_surplus: Z,
            producer_surplus: Z,
            purchase_cost: Z,
            sales_revenue: Z,
            storage_cost: Z,
            financing_cost: Z,
            handling_cost: Z,
            deficiency_payments: Z,
            consumer_payments: Z,
            rotated: Z,
            flags: [0; LANES],
            stockout: [false; LANES],
            trades: false,
            trade: TradeColumns {
                world_price: Z,
                imports: Z,
                exports: Z,
                border_revenue: Z,
                quota_rent: Z,
                public_imports: Z,
                public_import_cost: Z,
            },
        }
    }
}

impl Columns {
    /// Writes `r` into lane `lane` (its period becomes the columns' period).
    #[inline(always)]
    pub fn set(&mut self, lane: usize, r: &PeriodRecord) {
        self.period = r.period;
        self.expected_price[lane] = r.expected_price;
        self.planted[lane] = r.planted;
        self.harvest[lane] = r.harvest;
        self.price[lane] = r.price;
        self.producer_price[lane] = r.producer_price;
        self.consumption[lane] = r.consumption;
        self.purchases[lane] = r.purchases;
        self.releases[lane] = r.releases;
        self.stock[lane] = r.stock;
        self.fiscal_cost[lane] = r.fiscal_cost;
        self.consumer_surplus[lane] = r.consumer_surplus;
        self.producer_surplus[lane] = r.producer_surplus;
        self.purchase_cost[lane] = r.purchase_cost;
        self.sales_revenue[lane] = r.sales_revenue;
        self.storage_cost[lane] = r.storage_cost;
        self.financing_cost[lane] = r.financing_cost;
        self.handling_cost[lane] = r.handling_cost;
        self.deficiency_payments[lane] = r.deficiency_payments;
        self.consumer_payments[lane] = r.consumer_payments;
        self.rotated[lane] = r.rotated;
        self.flags[lane] = r.flags;
        self.stockout[lane] = r.stockout;
        if let Some(t) = &r.trade {
            self.set_trade(lane, t);
        }
    }

    /// Writes private trade `t` into lane `lane` (the records carry trade from here on).
    #[inline(always)]
    pub fn set_trade(&mut self, lane: usize, t: &TradeRecord) {
        self.trades = true;
        let c = &mut self.trade;
        c.world_price[lane] = t.world_price;
        c.imports[lane] = t.imports;
        c.exports[lane] = t.exports;
        c.border_revenue[lane] = t.border_revenue;
        c.quota_rent[lane] = t.quota_rent;
        c.public_imports[lane] = t.public_imports;
        c.public_import_cost[lane] = t.public_import_cost;
    }

    /// Lane `lane`'s private trade (what [`Columns::set_trade`] wrote), when the records carry
    /// trade.
    #[inline(always)]
    pub fn trade_record(&self, lane: usize) -> Option<TradeRecord> {
        let c = &self.trade;
        self.trades.then(|| TradeRecord {
            world_price: c.world_price[lane],
            imports: c.imports[lane],
            exports: c.exports[lane],
            border_revenue: c.border_revenue[lane],
            quota_rent: c.quota_rent[lane],
            public_imports: c.public_imports[lane],
            public_import_cost: c.public_import_cost[lane],
        })
    }

    /// Lane `lane`'s record, put back together (what [`Columns::set`] wrote).
    pub fn record(&self, lane: usize) -> PeriodRecord {
        PeriodRecord {
            period: self.period,
            expected_price: self.expected_price[lane],
            planted: self.planted[lane],
            harvest: self.harvest[lane],
            price: self.price[lane],
            producer_price: self.producer_price[lane],
            consumption: self.consumption[lane],
            purchases: self.purchases[lane],
            releases: self.releases[lane],
            stock: self.stock[lane],
            fiscal_cost: self.fiscal_cost[lane],
            consumer_surplus: self.consumer_surplus[lane],
            producer_surplus: self.producer_surplus[lane],
            purchase_cost: self.purchase_cost[lane],
            sales_revenue: self.sales_revenue[lane],
            storage_cost: self.storage_cost[lane],
            financing_cost: self.financing_cost[lane],
            handling_cost: self.handling_cost[lane],
            deficiency_payments: self.deficiency_payments[lane],
            consumer_payments: self.consumer_payments[lane],
            rotated: self.rotated[lane],
            flags: self.flags[lane],
            stockout: self.stockout[lane],
            trade: self.trade_record(lane),
        }
    }
}

/// One period's shocks of up to [`LANES`] paths, kind by kind ([`PeriodShock`] field by field):
/// the Monte Carlo draws each replication's shocks straight into its lane, and every model of the
/// replication reads the columns as they are.
#[derive(Debug, Clone)]
pub struct ShockColumns {
    /// [`PeriodShock::yield_factor`].
    pub yield_factor: [f64; LANES],
    /// [`PeriodShock::supply`].
    pub supply: [f64; LANES],
    /// [`PeriodShock::demand`].
    pub demand: [f64; LANES],
    /// [`PeriodShock::world_factor`].
    pub world_factor: [f64; LANES],
}

impl Default for ShockColumns {
    /// No shock in any lane ([`PeriodShock::NONE`]).
    fn default() -> Self {
        let none = PeriodShock::NONE;
        ShockColumns {
            yield_factor: [none.yield_factor; LANES],
            supply: [none.supply; LANES],
            demand: [none.demand; LANES],
            world_factor: [none.world_factor; LANES],
        }
    }
}

impl ShockColumns {
    /// The columns of `shocks`: lane l has `shocks[l]` (the first [`LANES`]), every other lane no
    /// shock.
    pub fn of(shocks: &[PeriodShock]) -> ShockColumns {
        let mut c = ShockColumns::default();
        for (l, shock) in shocks.iter().enumerate().take(LANES) {
            c.set(l, shock);
        }
        c
    }

    /// Lane `l`'s shock.
    #[inline(always)]
    pub fn get(&self, l: usize) -> PeriodShock {
        PeriodShock {
            yield_factor: self.yield_factor[l],
            supply: self.supply[l],
            demand: self.demand[l],
            world_factor: self.world_factor[l],
        }
    }

    /// Writes lane `l`'s shock.
    #[inline(always)]
    pub fn set(&mut self, l: usize, shock: &PeriodShock) {
        self.yield_factor[l] = shock.yield_factor;
        self.supply[l] = shock.supply;
        self.demand[l] = shock.demand;
        self.world_factor[l] = shock.world_factor;
    }
}

/// Up to [`LANES`] paths of one model stepped together, one period at a time.
pub trait LaneStepper {
    /// Steps every lane `l < failed.len()` whose `failed[l]` is `None` one period, lane `l` on
    /// lane `l` of `shocks`, and writes its record into lane `l` of `out`; a lane whose path ends
    /// gets why in `failed[l]` and is not stepped again. The bits written are those of the model's
    /// own [`Stepper`] for the same path.
    fn step(&mut self, shocks: &ShockColumns, out: &mut Columns, failed: &mut [Option<Diverged>]);
}

/// Any [`Stepper`], lane by lane: one path per lane.
#[derive(Debug, Clone)]
pub struct EachLane<S>(pub Vec<S>);

impl<S: Stepper> LaneStepper for EachLane<S> {
    #[inline]
    fn step(&mut self, shocks: &ShockColumns, out: &mut Columns, failed: &mut [Option<Diverged>]) {
        for ((lane, path), failed) in self
            .0
            .iter_mut()
            .enumerate()
            .take(LANES)
            .zip(failed.iter_mut())
        {
            if failed.is_none() {
                match path.step(&shocks.get(lane)) {
                    Ok(ref r) => out.set(lane, r),
                    Err(e) => *failed = Some(e),
                }
            }
        }
    }
}
