//! `[stock]`: the public buffer stock agency — a price band, a release rule (band, target,
//! drawdown, rotate) and the store's standing parameters. Everything the program knows of it is
//! here; the period actions of the release rules are `stock_band.rs`, `stock_target.rs` and
//! `stock_share.rs`.

use serde::Deserialize;

use super::in_storage::{AgencyMode, Band, Decision, ReleaseInStorage, StoragePlan};
use super::rule::{rank, rule_ref, Build, Cell, Row, Rule, RuleRef, RuleSection, Watched};
use super::{Agency, BandStock, ShareStock, TargetStock};
use crate::input::ranges::{escape, noted, r, short_num, BIG, MONEY};
use crate::input::InputError;
use crate::input::Key;
use crate::input::ValueType;
use crate::input::{deserialize_section, Check};
use crate::regime::RegimePrice;
use crate::regime::StabilityError;
use crate::regime::{RegimeCase, Regimes};
use crate::scenario::Scenario;

const fn num(name: &'static str, range: crate::input::KeyRange) -> Key {
    Key {
        name,
        kind: ValueType::Number,
        range: Some(range),
    }
}

/// The registration of `[stock]`.
pub const SECTION: RuleSection = RuleSection {
    name: "stock",
    keys: &[
        num(
            "buy_below",
            noted(
                r("stock.buy_below", 0.0, BIG, false, false),
                "≤ sell_above; below linear demand's choke price",
            ),
        ),
        num("sell_above", r("stock.sell_above", 0.0, BIG, true, false)),
        num("capacity", r("stock.capacity", 0.0, BIG, false, false)),
        num(
            "initial",
            noted(r("stock.initial", 0.0, BIG, false, false), "≤ capacity"),
        ),
        num("storage_cost", r("stock.storage_cost", 0.0, BIG, false, false)),
        num("loss_rate", r("stock.loss_rate", 0.0, 1.0, false, true)),
        num(
            "purchase_budget",
            r("stock.purchase_budget", 0.0, MONEY, false, false),
        ),
        num("financing_rate", r("stock.financing_rate", 0.0, 1.0, false, true)),
        num("handling_cost", r("stock.handling_cost", 0.0, BIG, false, false)),
        Key {
            name: "release",
            kind: ValueType::Text,
            range: None,
        },
        num(
            "target",
            noted(r("stock.target", 0.0, BIG, false, false), "≤ capacity"),
        ),
        num("speed", r("stock.speed", 0.0, 1.0, true, false)),
        num("share", r("stock.share", 0.0, 1.0, true, false)),
    ],
    read,
    absent: &[
        ("stock buys below ({price})", "no stock"),
        ("stock sells above ({price})", "—"),
        ("capacity ({quantity})", "—"),
        ("initial stock ({quantity})", "—"),
        ("release rule", "—"),
        ("storage cost ({price} per season)", "—"),
        ("loss rate per season", "—"),
    ],
    examples: &[
        "[stock]\nbuy_below = 195.0\nsell_above = 230.0\ncapacity = 60.0\ninitial = 20.0\n",
        "[stock]\nbuy_below = 195.0\nsell_above = 230.0\ncapacity = 60.0\nrelease = \"target\"\ntarget = 30.0\nspeed = 0.5\n",
        "[stock]\nbuy_below = 195.0\nsell_above = 230.0\ncapacity = 60.0\nrelease = \"drawdown\"\nshare = 0.25\n",
        "[stock]\nbuy_below = 195.0\nsell_above = 230.0\ncapacity = 60.0\nrelease = \"rotate\"\nshare = 0.25\n",
    ],
};

/// Release rule of the buffer stock.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Release {
    /// Sells while the price would rise above `sell_above`.
    Band,
    /// Steers the stock toward `target` at `speed` while the price is inside the band.
    Target { target: f64, speed: f64 },
    /// Draws the stock down: releases `share` of the stock each period (not below `buy_below`).
    /// File word `"drawdown"` (`"share"` is accepted as an alias).
    Share { share: f64 },
    /// Rotates: defends the band, and each period sells `share` of the old stock and buys the same
    /// quantity of new grain at the same price (stock and price path unchanged; costs handling).
    Rotate { share: f64 },
}

/// A validated `[stock]`: the public buffer stock agency.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Stock {
    /// Buys while the price would fall below this (0 = never buys on the band).
    pub buy_below: f64,
    /// Sells while the price would rise above this (∞ = never sells on the band).
    pub sell_above: f64,
    /// Storage capacity (∞ = unlimited).
    pub capacity: f64,
    /// Stock held before period 1.
    pub initial: f64,
    /// Physical storage cost per unit of end-of-period stock.
    pub storage_cost: f64,
    /// Share of carried stock lost per period.
    pub loss_rate: f64,
    /// Purchase spending allowed per period (∞ = unlimited).
    pub purchase_budget: f64,
    /// Interest per period on the market value of stock held.
    pub financing_rate: f64,
    /// Cost per unit bought or sold.
    pub handling_cost: f64,
    /// Release rule.
    pub release: Release,
}

#[derive(Debug, Default, Deserialize)]
#[serde(default)]
struct Raw {
    buy_below: Option<f64>,
    sell_above: Option<f64>,
    capacity: Option<f64>,
    initial: Option<f64>,
    storage_cost: Option<f64>,
    loss_rate: Option<f64>,
    purchase_budget: Option<f64>,
    financing_rate: Option<f64>,
    handling_cost: Option<f64>,
    release: Option<String>,
    target: Option<f64>,
    speed: Option<f64>,
    share: Option<f64>,
}

fn read(c: &Check, table: &toml::Table) -> Result<RuleRef, InputError> {
    let s: Raw = deserialize_section(c, table)?;
    let buy_below = c.within_keys(SECTION.keys, "stock.buy_below", s.buy_below.unwrap_or(0.0))?;
    let sell_above = match s.sell_above {
        Some(v) => c.within_keys(SECTION.keys, "stock.sell_above", v)?,
        None => f64::INFINITY,
    };
    if buy_below > sell_above {
        return Err(c.bad(
            "stock.buy_below",
            short_num(buy_below),
            &format!(
                "must be ≤ stock.sell_above = {} (equal fixes the price)",
                short_num(sell_above)
            ),
        ));
    }
    let capacity = match s.capacity {
        Some(v) => c.within_keys(SECTION.keys, "stock.capacity", v)?,
        None => f64::INFINITY,
    };
    let initial = c.within_keys(SECTION.keys, "stock.initial", s.initial.unwrap_or(0.0))?;
    if initial > capacity {
        return Err(c.bad(
            "stock.initial",
            short_num(initial),
            &format!("must be ≤ stock.capacity = {}", short_num(capacity)),
        ));
    }
    let release = match s.release.as_deref().unwrap_or("band") {
        "band" => Release::Band,
        "target" => {
            let target = s.target.ok_or_else(|| {
                c.missing(
                    "stock.target",
                    "release = \"target\" needs target ≥ 0 (the stock to steer toward)",
                )
            })?;
            let target = c.within_keys(SECTION.keys, "stock.target", target)?;
            if target > capacity {
                return Err(c.bad(
                    "stock.target",
                    short_num(target),
                    &format!("must be ≤ stock.capacity = {}", short_num(capacity)),
                ));
            }
            let speed = c.within_keys(SECTION.keys, "stock.speed", s.speed.unwrap_or(1.0))?;
            Release::Target { target, speed }
        }
        // "share" is the old name of "drawdown", kept as an alias
        word @ ("drawdown" | "share" | "rotate") => {
            let share = s.share.ok_or_else(|| {
                c.missing(
                    "stock.share",
                    &format!("release = \"{word}\" needs share in (0, 1]"),
                )
            })?;
            let share = c.within_keys(SECTION.keys, "stock.share", share)?;
            if word == "rotate" {
                Release::Rotate { share }
            } else {
                Release::Share { share }
            }
        }
        other => {
            return Err(c.bad(
                "stock.release",
                format!("\"{}\"", escape(other)),
                "allowed release rules: \"band\", \"target\", \"drawdown\" (alias \"share\"), \"rotate\"",
            ))
        }
    };
    let release_key_unused = |k: &str, present: bool| -> Result<(), InputError> {
        if present {
            Err(c.bad(
                &format!("stock.{k}"),
                "(set)",
                &format!(
                    "release rule \"{}\" does not use `{k}`",
                    s.release.as_deref().unwrap_or("band")
                ),
            ))
        } else {
            Ok(())
        }
    };
    if !matches!(release, Release::Target { .. }) {
        release_key_unused("target", s.target.is_some())?;
        release_key_unused("speed", s.speed.is_some())?;
    }
    if !matches!(release, Release::Share { .. } | Release::Rotate { .. }) {
        release_key_unused("share", s.share.is_some())?;
    }
    Ok(rule_ref(Stock {
        buy_below,
        sell_above,
        capacity,
        initial,
        storage_cost: c.within_keys(
            SECTION.keys,
            "stock.storage_cost",
            s.storage_cost.unwrap_or(0.0),
        )?,
        loss_rate: c.within_keys(SECTION.keys, "stock.loss_rate", s.loss_rate.unwrap_or(0.0))?,
        purchase_budget: match s.purchase_budget {
            Some(v) => c.within_keys(SECTION.keys, "stock.purchase_budget", v)?,
            None => f64::INFINITY,
        },
        financing_rate: c.within_keys(
            SECTION.keys,
            "stock.financing_rate",
            s.financing_rate.unwrap_or(0.0),
        )?,
        handling_cost: c.within_keys(
            SECTION.keys,
            "stock.handling_cost",
            s.handling_cost.unwrap_or(0.0),
        )?,
        release,
    }))
}

impl Stock {
    fn band(&self) -> BandStock {
        BandStock {
            buy_below: self.buy_below,
            sell_above: self.sell_above,
        }
    }

    /// The idle regime of a target-release reserve. Restocking purchases never lift the price above
    /// the band's middle M (the engine's rule), so: with the free steady state at or above M the
    /// reserve cannot restock and the market is free; below M it settles at
    /// S* = speed·T/(1 − (1 − ℓ)(1 − speed)) and buys its losses ℓ·S* each period (a constant
    /// offtake), unless that would lift the price above M, in which case the price is pinned at M
    /// and the reserve settles below its target.
    fn target_regime(&self, r: &Regimes, target: f64, speed: f64) -> (RegimePrice, f64, String) {
        let (free_price, buy, sell, unit) = (r.free_price, self.buy_below, self.sell_above, r.unit);
        let loss = self.loss_rate;
        let middle = if sell.is_finite() {
            0.5 * (buy + sell)
        } else {
            f64::INFINITY
        };
        if !Regimes::below(free_price, middle) {
            return (
                RegimePrice::Free { offtake: 0.0 },
                1.0 - loss,
                format!(
                    "the free steady state is at or above the band's middle {middle:.4}: the reserve \
                     cannot restock there and the market is free"
                ),
            );
        }
        let settled = speed * target / (1.0 - (1.0 - loss) * (1.0 - speed));
        let offtake = loss * settled;
        let interior = RegimePrice::Free { offtake };
        let p = r.fixed_point(interior, free_price);
        match p {
            Some(p) if p <= middle * (1.0 + 1e-12) => (
                interior,
                (1.0 - loss) * (1.0 - speed),
                format!(
                    "inside the band the stock moves toward its target and settles at {settled:.4}; \
                     the agency then buys its losses ({offtake:.4} {unit} a period)"
                ),
            ),
            _ => (
                RegimePrice::Pinned(middle),
                1.0 - loss,
                format!(
                    "restocking purchases stop at the band's middle {middle:.4}: the price is pinned \
                     there and the reserve settles below its target {target}"
                ),
            ),
        }
    }
}

impl Rule for Stock {
    fn section(&self) -> &'static str {
        "stock"
    }

    fn build(&self, build: &mut Build) {
        build.agency = Agency {
            capacity: self.capacity,
            initial: self.initial,
            storage_cost: self.storage_cost,
            loss_rate: self.loss_rate,
            purchase_budget: self.purchase_budget,
            financing_rate: self.financing_rate,
            handling_cost: self.handling_cost,
            rotation_share: match self.release {
                Release::Rotate { share } => share,
                _ => 0.0,
            },
        };
        let band = self.band();
        let action: Box<dyn super::PolicyRule> = match self.release {
            Release::Band => Box::new(band),
            Release::Target { target, speed } => Box::new(TargetStock {
                band,
                target,
                speed,
            }),
            Release::Share { share } => Box::new(ShareStock { band, share }),
            // the rotation itself nets out in the market: the rule trades as the band, and the
            // engine books the rotated quantity's handling (`Agency::rotated`)
            Release::Rotate { .. } => Box::new(band),
        };
        build.actions.push((rank::STOCK, action));
        build.sell_above = Some(self.sell_above).filter(|p| p.is_finite());
    }

    fn storage(&self, plan: &mut StoragePlan) -> Result<(), String> {
        plan.stock = Some(Band {
            buy_below: self.buy_below,
            sell_above: self.sell_above,
            capacity: self.capacity,
            keep: 1.0 - self.loss_rate,
            release: match self.release {
                // a rotation nets out in the market: the band's equilibrium (records add its handling)
                Release::Rotate { .. } => Release::Band,
                other => other,
            },
            budget: self.purchase_budget,
        });
        Ok(())
    }

    fn regimes(&self, r: &mut Regimes) -> Result<(), StabilityError> {
        // a [stock] section without band edges and with the band release is only the floor's store
        if !(self.buy_below > 0.0 || self.sell_above.is_finite() || self.release != Release::Band) {
            return Ok(());
        }
        let free = RegimePrice::Free { offtake: 0.0 };
        let (buy, sell) = (self.buy_below, self.sell_above);
        let buying = "stock buying at buy_below";
        let selling = "stock selling at sell_above";
        if r.holding.is_empty() {
            if buy > 0.0 && Regimes::below(r.free_price, buy) {
                r.holding = r.purchase_holds(buying, buy)?;
            } else if sell.is_finite() && r.free_price > sell * (1.0 + 1e-12) {
                let mut c = Regimes::case(
                    "stock empty (free market)",
                    free,
                    Some(format!(
                        "the free market's steady state lies above sell_above = {sell:.4}: the agency \
                         sells until its stock runs out, then the market is free"
                    )),
                );
                c.holds = true;
                r.holding.push(c);
            } else {
                let loss = self.loss_rate;
                let (clearing, eig, note) = match self.release {
                    Release::Band => (
                        free,
                        1.0 - loss,
                        "inside the band the agency does not trade: the free market".to_string(),
                    ),
                    Release::Target { target, speed } => self.target_regime(r, target, speed),
                    // a rotation swaps old grain for new: the stock and the market as in the band
                    Release::Rotate { .. } => (
                        free,
                        1.0 - loss,
                        "inside the band the agency only rotates its stock: the free market"
                            .to_string(),
                    ),
                    Release::Share { share } => (
                        free,
                        (1.0 - loss) * (1.0 - share),
                        format!("inside the band the agency releases {share} of its stock a period until it is gone"),
                    ),
                };
                let name = match clearing {
                    RegimePrice::Free { .. } => "stock idle (free market)",
                    _ => "stock restocking at the band's middle",
                };
                let mut c = Regimes::case(name, clearing, Some(note));
                c.holds = true;
                c.stock_eigenvalue = Some(eig);
                r.holding.push(c);
            }
        }
        let held = |n: &str, h: &[RegimeCase]| h.iter().any(|c| c.name == n);
        if buy > 0.0 && !held(buying, &r.holding) {
            r.secondary.push(Regimes::case(
                buying,
                RegimePrice::Pinned(buy),
                Some(format!("price pinned at {buy:.4} while the store has room")),
            ));
        }
        if sell.is_finite() {
            r.secondary.push(Regimes::case(
                selling,
                RegimePrice::Pinned(sell),
                Some(format!("price pinned at {sell:.4} while stock lasts")),
            ));
        }
        Ok(())
    }

    fn check_market(&self, c: &Check, scenario: &Scenario) -> Result<(), InputError> {
        if self.buy_below > 0.0 {
            c.absorbs(
                scenario,
                "stock.buy_below",
                self.buy_below,
                "the price the stock defends by buying",
            )?;
        }
        Ok(())
    }

    fn reference_price(&self) -> f64 {
        self.buy_below
    }

    fn describe(&self) -> String {
        let limit = |v: f64| {
            if v.is_finite() {
                short_num(v)
            } else {
                "unlimited".to_string()
            }
        };
        format!(
            "stock {}, {}, capacity {}, purchase budget {}, release {}",
            if self.buy_below > 0.0 {
                format!("buys below {}", short_num(self.buy_below))
            } else {
                "no buying edge".to_string()
            },
            if self.sell_above.is_finite() {
                format!("sells above {}", short_num(self.sell_above))
            } else {
                "no selling edge".to_string()
            },
            limit(self.capacity),
            limit(self.purchase_budget),
            match self.release {
                Release::Band => "band".to_string(),
                Release::Target { target, speed } =>
                    format!("target {} at speed {}", short_num(target), short_num(speed)),
                Release::Share { share } => format!("drawdown, share {}", short_num(share)),
                Release::Rotate { share } => format!("rotate, share {}", short_num(share)),
            }
        )
    }

    fn price_lines(&self) -> Vec<(&'static str, f64)> {
        let mut out = Vec::new();
        if self.buy_below.is_finite() && self.buy_below > 0.0 {
            out.push(("buys below", self.buy_below));
        }
        if self.sell_above.is_finite() {
            out.push(("sells above", self.sell_above));
        }
        out
    }

    fn rows(&self) -> Vec<Row> {
        use crate::output::fmt_num;
        vec![
            Row {
                label: "stock buys below ({price})",
                value: Cell::Price(self.buy_below),
            },
            Row {
                label: "stock sells above ({price})",
                value: Cell::Price(self.sell_above),
            },
            Row {
                label: "capacity ({quantity})",
                value: Cell::Quantity(self.capacity),
            },
            Row {
                label: "initial stock ({quantity})",
                value: Cell::Quantity(self.initial),
            },
            Row {
                label: "release rule",
                value: Cell::Text(match self.release {
                    Release::Band => "band".into(),
                    Release::Target { target, speed } => format!(
                        "target {} at speed {}",
                        fmt_num(target, 2),
                        fmt_num(speed, 2)
                    ),
                    Release::Share { share } => format!("drawdown, share {}", fmt_num(share, 2)),
                    Release::Rotate { share } => format!(
                        "rotate {} of the stock a season (stock unchanged)",
                        fmt_num(share, 2)
                    ),
                }),
            },
            Row {
                label: "storage cost ({price} per season)",
                value: Cell::Price(self.storage_cost),
            },
            Row {
                label: "loss rate per season",
                value: Cell::Number(self.loss_rate, 3),
            },
        ]
    }

    fn warning(&self, _scenario: &Scenario, _agency: &Agency) -> Option<String> {
        // the band's failures (full store, budget, stock-out) are counted along the path
        // (`diagnose`), not foreseen from the steady state
        None
    }

    fn watch(&self, w: &mut Watched) {
        if self.buy_below > 0.0 || self.sell_above.is_finite() {
            w.band = Some((self.buy_below, self.sell_above));
        }
    }
}

/// What the storage equilibrium needs of the release rule (`in_storage::ReleaseInStorage`).
/// A rotation reaches the storage model as the band (`Rule::storage`); it is treated as the band here too.
impl ReleaseInStorage for Release {
    fn band_only() -> Self {
        Release::Band
    }

    /// The `[stock]` rule's decision inside the storage equilibrium, before the purchase budget's
    /// cut (`storage::agency::decide`): the band first (buy to `buy_below` until full, sell to
    /// `sell_above` until empty; a purchase floor and a ceiling by release set these edges), then
    /// inside the band the target rule (trade speed·(target − g), never pushing the price past the
    /// band's middle) or the drawdown rule (release share·g, never pushing the price below
    /// `buy_below`), as the period actions `stock_band.rs`, `stock_target.rs`, `stock_share.rs` do
    /// (`tests/rules.rs` checks they agree). `pg(G)` is the price (and dP/dz) at end-of-period
    /// public stock G; returns the price, dP/dz, the regime and the decision.
    #[inline]
    fn decide<F: Fn(f64) -> (f64, f64)>(
        &self,
        band: &Band,
        g: f64,
        pg: &F,
    ) -> (f64, f64, AgencyMode, Decision) {
        let fixed = |gg: f64, mode: AgencyMode| {
            let (p, d) = pg(gg);
            (p, d, mode, Decision::Stock(gg))
        };
        let held = |price: f64, lo: f64, hi: f64, mode: AgencyMode| {
            (price, 0.0, mode, Decision::AtPrice { price, lo, hi })
        };
        let (p, d) = pg(g);
        let cap = band.capacity;
        if p < band.buy_below {
            let (pc, _) = pg(cap);
            return if pc < band.buy_below {
                fixed(cap, AgencyMode::Full)
            } else {
                held(band.buy_below, g, cap, AgencyMode::Buying)
            };
        }
        match *self {
            Release::Band | Release::Rotate { .. } | Release::Target { .. }
                if p > band.sell_above =>
            {
                let (p0, _) = pg(0.0);
                if p0 > band.sell_above {
                    fixed(0.0, AgencyMode::Empty)
                } else {
                    held(band.sell_above, 0.0, g, AgencyMode::Selling)
                }
            }
            Release::Band | Release::Rotate { .. } => {
                (p, d, AgencyMode::Inside, Decision::Stock(g))
            }
            Release::Target { target, speed } => {
                let middle = if band.sell_above.is_finite() {
                    0.5 * (band.buy_below + band.sell_above)
                } else {
                    f64::INFINITY
                };
                let gap = speed * (target - g);
                if gap > 0.0 && p < middle {
                    let to = (g + gap).min(cap);
                    if pg(to).0 <= middle {
                        fixed(to, AgencyMode::Steering)
                    } else {
                        held(middle, g, to, AgencyMode::Steering)
                    }
                } else if gap < 0.0 && p > middle.min(band.sell_above) {
                    let limit = middle.min(band.sell_above);
                    let to = (g + gap).max(0.0);
                    if pg(to).0 >= limit {
                        fixed(to, AgencyMode::Steering)
                    } else {
                        held(limit, to, g, AgencyMode::Steering)
                    }
                } else {
                    (p, d, AgencyMode::Inside, Decision::Stock(g))
                }
            }
            Release::Share { share } => {
                let to = (1.0 - share) * g;
                if p > band.sell_above {
                    let (p0, _) = pg(0.0);
                    if p0 > band.sell_above {
                        return fixed(0.0, AgencyMode::Empty);
                    }
                    if pg(to).0 >= band.sell_above {
                        // the band's sale already releases at least the share
                        return held(band.sell_above, 0.0, g, AgencyMode::Selling);
                    }
                }
                if to >= g {
                    return (p, d, AgencyMode::Inside, Decision::Stock(g));
                }
                if pg(to).0 >= band.buy_below {
                    fixed(to, AgencyMode::Rotating)
                } else {
                    held(band.buy_below, to, g, AgencyMode::Rotating)
                }
            }
        }
    }

    /// The target rule trades to g + speed·(target − g) within [0, capacity]; the drawdown rule
    /// releases to (1 − share)·g.
    fn inner_stock(&self, g: f64, capacity: f64) -> Option<f64> {
        match *self {
            Release::Band | Release::Rotate { .. } => None,
            Release::Target { target, speed } => {
                let gap = speed * (target - g);
                Some(if gap > 0.0 {
                    (g + gap).min(capacity)
                } else {
                    (g + gap).max(0.0)
                })
            }
            Release::Share { share } => Some((1.0 - share) * g),
        }
    }

    /// The target rule stops at the band's middle.
    fn inner_price(&self, band: &Band) -> Option<f64> {
        match *self {
            Release::Target { .. } if band.sell_above.is_finite() => {
                Some(0.5 * (band.buy_below + band.sell_above))
            }
            _ => None,
        }
    }

    /// The target rule switches from restocking to running down where the carried-in stock equals
    /// the target, G* = target/keep.
    fn bend(&self, keep: f64) -> Option<f64> {
        match *self {
            Release::Target { target, .. } => Some(target / keep),
            _ => None,
        }
    }

    /// The target rule's kinks lie on curves across the public-stock levels.
    fn refines_levels(&self) -> bool {
        matches!(self, Release::Target { .. })
    }

    /// The target and drawdown rules trade inside the band.
    fn trades_inside_band(&self) -> bool {
        matches!(self, Release::Target { .. } | Release::Share { .. })
    }
}
