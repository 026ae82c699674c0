//! The border: the world price, import and export parity, and competitive private trade within a
//! period.
//!
//! Private traders import when the domestic price reaches import parity (world price + import cost +
//! import duties) and export when it falls to export parity (world price − export cost − export
//! duties), within any quota. Seen from the domestic market, trade turns the demand curve into a
//! kinked one: flat at each parity for as far as trade may go, the domestic curve between them. This
//! module holds that kinked curve ([`BorderTerms`]) and the values it is built from: the market
//! file's `[trade]` section ([`Trade`]) and a policy's border measures ([`BorderMeasures`]). It
//! imports only the curves.

use serde::Serialize;

use crate::curves::Curve;

/// The market file's `[trade]` section, validated.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Trade {
    /// Border reference price (its mean when it varies), in the market's price unit.
    pub world_price: f64,
    /// Coefficient of variation of the lognormal world price (mean `world_price`).
    pub world_price_cv: f64,
    /// AR(1) coefficient of the log world price, in (−1, 1).
    pub world_price_persistence: f64,
    /// Freight, handling and margins per unit imported (added to the world price).
    pub import_cost: f64,
    /// Per unit exported (subtracted from the world price).
    pub export_cost: f64,
}

impl Trade {
    /// The world price in a period whose world-price factor (mean 1) is `factor`.
    #[inline]
    pub fn world_price_at(&self, factor: f64) -> f64 {
        self.world_price * factor
    }

    /// The period's border at world price `world` under `measures`.
    ///
    /// Import parity is the landed price W + import_cost plus the specific and ad valorem duties,
    /// raised to `import_price_target` by a variable levy when that is higher. Export parity is
    /// W − export_cost less the export taxes; an export ban, or an export parity at or below zero,
    /// leaves no export.
    pub fn terms(&self, world: f64, measures: &BorderMeasures) -> BorderTerms {
        let landed = world + self.import_cost;
        let duty = measures.import_tariff + measures.import_tariff_rate * world;
        let import_parity = (landed + duty).max(measures.import_price_target.unwrap_or(0.0));
        let export_tax = measures.export_tax + measures.export_tax_rate * world;
        let export_parity = world - self.export_cost - export_tax;
        let export_quota = if measures.export_ban || export_parity <= 0.0 {
            0.0
        } else {
            measures.export_quota.unwrap_or(f64::INFINITY)
        };
        BorderTerms {
            import_parity,
            export_parity,
            landed,
            import_quota: measures.import_quota.unwrap_or(f64::INFINITY),
            export_quota,
            import_receipt: import_parity - landed,
            export_receipt: export_tax,
        }
    }
}

/// A policy's border measures (`[border]`); [`BorderMeasures::FREE`] when the policy has none.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct BorderMeasures {
    /// Specific import duty per unit.
    pub import_tariff: f64,
    /// Ad valorem import duty, a share of the world price.
    pub import_tariff_rate: f64,
    /// Specific export tax per unit.
    pub export_tax: f64,
    /// Ad valorem export tax, a share of the world price.
    pub export_tax_rate: f64,
    /// No private export at all.
    pub export_ban: bool,
    /// Most private imports per season (none: unlimited).
    pub import_quota: Option<f64>,
    /// Most private exports per season (none: unlimited).
    pub export_quota: Option<f64>,
    /// A variable import levy keeps the landed, duty-paid price at or above this price.
    pub import_price_target: Option<f64>,
    /// State trading: the agency imports (at the landed price, duty free) while the domestic price
    /// would be above this price.
    pub public_import_above: Option<f64>,
    /// The most the agency imports per season (none: as much as the trigger price needs).
    pub public_import_max: Option<f64>,
}

impl BorderMeasures {
    /// Free trade: no duty, tax, quota, ban or levy.
    pub const FREE: BorderMeasures = BorderMeasures {
        import_tariff: 0.0,
        import_tariff_rate: 0.0,
        export_tax: 0.0,
        export_tax_rate: 0.0,
        export_ban: false,
        import_quota: None,
        export_quota: None,
        import_price_target: None,
        public_import_above: None,
        public_import_max: None,
    };
}

impl Default for BorderMeasures {
    fn default() -> Self {
        BorderMeasures::FREE
    }
}

/// One period's border as the domestic market sees it: the two parities, how far trade may go at
/// each, and what the treasury collects per unit traded.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BorderTerms {
    /// Domestic price at which traders import (∞ for a closed market).
    pub import_parity: f64,
    /// Domestic price at which traders export.
    pub export_parity: f64,
    /// The landed price W + import_cost, what a unit bought abroad costs at the border before
    /// duties (what the agency pays for its own imports; ∞ for a closed market).
    pub landed: f64,
    /// Most imports this period (∞ without a quota; 0 for a closed market).
    pub import_quota: f64,
    /// Most exports this period (0 under a ban or for a closed market).
    pub export_quota: f64,
    /// Treasury receipt per unit imported: duties and levy, import parity − landed price.
    pub import_receipt: f64,
    /// Treasury receipt per unit exported: the export taxes.
    pub export_receipt: f64,
}

/// What private trade does in a period.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Traded {
    /// The domestic clearing price.
    pub price: f64,
    /// Private imports M ≥ 0.
    pub imports: f64,
    /// Private exports X ≥ 0 (never both M > 0 and X > 0).
    pub exports: f64,
}

impl Traded {
    /// Net imports M − X.
    #[inline]
    pub fn net_imports(&self) -> f64 {
        self.imports - self.exports
    }
}

impl BorderTerms {
    /// A closed market: no trade at any price.
    pub const CLOSED: BorderTerms = BorderTerms {
        import_parity: f64::INFINITY,
        export_parity: 0.0,
        landed: f64::INFINITY,
        import_quota: 0.0,
        export_quota: 0.0,
        import_receipt: 0.0,
        export_receipt: 0.0,
    };

    /// True when no trade can happen (both quotas zero).
    #[inline]
    pub fn is_closed(&self) -> bool {
        self.import_quota == 0.0 && self.export_quota == 0.0
    }

    /// Private trade when `supply` reaches the domestic market (harvest less the agency's net
    /// purchases) and consumers take D(P) + `shift` at price P: imports when the price without
    /// trade would exceed import parity, exports when it would fall below export parity, each up
    /// to its quota; the price is the parity unless the quota binds (then the domestic curve
    /// clears what trade leaves).
    #[inline]
    pub fn clear(&self, demand: &Curve, shift: f64, supply: f64) -> Traded {
        let untraded = demand.price_at(supply - shift);
        self.clear_from(demand, shift, supply, untraded)
    }

    /// [`BorderTerms::clear`] when the untraded price D⁻¹(supply − shift) is already known.
    #[inline]
    pub fn clear_from(&self, demand: &Curve, shift: f64, supply: f64, untraded: f64) -> Traded {
        if untraded > self.import_parity && self.import_quota > 0.0 {
            let wanted = demand.quantity_unclamped(self.import_parity) + shift - supply;
            if wanted <= self.import_quota {
                return Traded {
                    price: self.import_parity,
                    imports: wanted.max(0.0),
                    exports: 0.0,
                };
            }
            return Traded {
                price: demand.price_at(supply + self.import_quota - shift),
                imports: self.import_quota,
                exports: 0.0,
            };
        }
        if untraded < self.export_parity && self.export_quota > 0.0 {
            let surplus = supply - demand.quantity_unclamped(self.export_parity) - shift;
            if surplus <= self.export_quota {
                return Traded {
                    price: self.export_parity,
                    imports: 0.0,
                    exports: surplus.max(0.0),
                };
            }
            return Traded {
                price: demand.price_at(supply - self.export_quota - shift),
                imports: 0.0,
                exports: self.export_quota,
            };
        }
        Traded {
            price: untraded,
            imports: 0.0,
            exports: 0.0,
        }
    }

    /// The most supply the market can take with its price still at least `p` (what an agency
    /// buying to hold the price at `p` leaves in the market), given what consumers take at `p`,
    /// `demanded` = D(p) + shift (the caller asks the curve, keeping its answers:
    /// `policies::clearing::Asked`): plus the export quota when traders export at `p` (∞ without
    /// a quota: exports absorb any surplus at parity), less the import quota when `p` is above
    /// import parity (−∞ without one: no purchase lifts the price above import parity).
    #[inline]
    pub fn most_supply_given(&self, demanded: f64, p: f64) -> f64 {
        let mut q = demanded;
        if p <= self.export_parity {
            q += self.export_quota;
        }
        if p > self.import_parity {
            q -= self.import_quota;
        }
        q
    }

    /// The least supply the market needs for its price to be at most `p` (what an agency selling
    /// to hold the price down to `p` must put in the market), given `demanded` = D(p) + shift (as
    /// [`BorderTerms::most_supply_given`]): less the import quota when traders import at `p` (−∞
    /// without a quota: imports fill any gap at parity), plus the export quota when `p` is below
    /// export parity (∞ without one).
    #[inline]
    pub fn least_supply_given(&self, demanded: f64, p: f64) -> f64 {
        let mut q = demanded;
        if p >= self.import_parity {
            q -= self.import_quota;
        }
        if p < self.export_parity {
            q += self.export_quota;
        }
        q
    }

    /// Treasury receipts from private trade: duties on `traded.imports`, taxes on its exports.
    #[inline]
    pub fn receipts(&self, traded: &Traded) -> f64 {
        let mut r = 0.0;
        if traded.imports > 0.0 {
            r += self.import_receipt * traded.imports;
        }
        if traded.exports > 0.0 {
            r += self.export_receipt * traded.exports;
        }
        r
    }

    /// Quota rents (to the traders holding the licences): (P − import parity)·M when the import
    /// quota binds, (export parity − P)·X when the export quota binds; 0 otherwise.
    #[inline]
    pub fn quota_rent(&self, traded: &Traded) -> f64 {
        let mut r = 0.0;
        if traded.imports > 0.0 && traded.price > self.import_parity {
            r += (traded.price - self.import_parity) * traded.imports;
        }
        if traded.exports > 0.0 && traded.price < self.export_parity {
            r += (self.export_parity - traded.price) * traded.exports;
        }
        r
    }
}

/// The two sums of the leakage, (−Σ ΔNX_t·a_t, Σ a_t²), over (a_t, ΔNX_t) pairs: the agency's net
/// purchase and the change in private net exports in season t (the one formula; the storage
/// report's leakage, and `compare`'s pooled over replications of the period engine).
pub fn leakage_sums(pairs: impl IntoIterator<Item = (f64, f64)>) -> (f64, f64) {
    let (mut num, mut den) = (0.0, 0.0);
    for (bought, dnx) in pairs {
        leakage_add(&mut num, &mut den, bought, dnx);
    }
    (num, den)
}

/// Adds season t's terms to the sums of [`leakage_sums`]: −ΔNX_t·a_t to `num`, a_t² to `den`
/// (the Monte Carlo's lanes add them so too, lane by lane).
#[inline(always)]
pub fn leakage_add(num: &mut f64, den: &mut f64, bought: f64, dnx: f64) {
    *num -= dnx * bought;
    *den += bought * bought;
}

#[cfg(test)]
mod tests {
    use super::*;

    fn demand() -> Curve {
        // Q = 300 − P
        Curve::Linear {
            intercept: 300.0,
            slope: -1.0,
        }
    }

    fn border() -> Trade {
        Trade {
            world_price: 200.0,
            world_price_cv: 0.0,
            world_price_persistence: 0.0,
            import_cost: 20.0,
            export_cost: 10.0,
        }
    }

    #[test]
    fn free_trade_pins_the_price_between_the_parities() {
        let t = border().terms(200.0, &BorderMeasures::FREE);
        assert_eq!((t.import_parity, t.export_parity), (220.0, 190.0));
        let d = demand();
        // short harvest: untraded price 250 > 220, imports fill D(220) − 50 = 30
        let s = t.clear(&d, 0.0, 50.0);
        assert_eq!((s.price, s.imports, s.exports), (220.0, 30.0, 0.0));
        // big harvest: untraded price 150 < 190, exports 150 − D(190) = 40
        let s = t.clear(&d, 0.0, 150.0);
        assert_eq!((s.price, s.imports, s.exports), (190.0, 0.0, 40.0));
        // in between: no trade
        let s = t.clear(&d, 0.0, 100.0);
        assert_eq!((s.price, s.imports, s.exports), (200.0, 0.0, 0.0));
    }

    #[test]
    fn duties_move_the_parities_and_quotas_bind() {
        let m = BorderMeasures {
            import_tariff: 5.0,
            import_tariff_rate: 0.1,
            export_tax_rate: 0.05,
            import_quota: Some(10.0),
            ..BorderMeasures::FREE
        };
        let t = border().terms(200.0, &m);
        // 200 + 20 + 5 + 0.1·200 = 245; 200 − 10 − 0.05·200 = 180
        assert_eq!((t.import_parity, t.export_parity), (245.0, 180.0));
        assert_eq!((t.import_receipt, t.export_receipt), (25.0, 10.0));
        let s = t.clear(&demand(), 0.0, 30.0);
        // the quota binds: price = D⁻¹(30 + 10) = 260, rent (260 − 245)·10
        assert_eq!((s.price, s.imports), (260.0, 10.0));
        assert_eq!(t.quota_rent(&s), 150.0);
        assert_eq!(t.receipts(&s), 250.0);
    }

    #[test]
    fn a_levy_raises_import_parity_to_its_target_and_a_ban_stops_exports() {
        let m = BorderMeasures {
            import_price_target: Some(260.0),
            export_ban: true,
            ..BorderMeasures::FREE
        };
        let t = border().terms(200.0, &m);
        assert_eq!(t.import_parity, 260.0);
        assert_eq!(t.import_receipt, 40.0);
        assert_eq!(t.export_quota, 0.0);
        let s = t.clear(&demand(), 0.0, 200.0);
        assert_eq!((s.price, s.exports), (100.0, 0.0));
    }

    #[test]
    fn supply_bounds_follow_the_kinked_curve() {
        let t = border().terms(200.0, &BorderMeasures::FREE);
        let d = demand();
        // what consumers take at p on the unshifted curve, as the clearing asks it
        let at_least = |t: &BorderTerms, p: f64| t.most_supply_given(d.quantity_unclamped(p), p);
        let at_most = |t: &BorderTerms, p: f64| t.least_supply_given(d.quantity_unclamped(p), p);
        assert_eq!(at_least(&t, 200.0), 100.0);
        assert_eq!(at_least(&t, 190.0), f64::INFINITY);
        assert_eq!(at_least(&t, 230.0), f64::NEG_INFINITY);
        assert_eq!(at_most(&t, 220.0), f64::NEG_INFINITY);
        assert_eq!(at_most(&t, 185.0), f64::INFINITY);
        let closed = BorderTerms::CLOSED;
        assert_eq!(at_least(&closed, 190.0), 110.0);
        assert_eq!(at_most(&closed, 230.0), 70.0);
    }
}
