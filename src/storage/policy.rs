//! How a policy file enters the storage equilibrium: the agency's band (a second state variable) and
//! the producer price floor of deficiency payments (which changes planting only).

use super::agency::{Band, Release};
use super::StorageError;
use crate::scenario::{FloorInstrument, PolicySpec, ReleaseSpec};

/// The agency's rule as a price band inside the storage equilibrium, or `None` for a policy that
/// does not trade. Covered: a band stock released by the band, the target or the share rule, a floor
/// defended by purchase (a band that never sells), within a purchase budget if one is set (an unlimited capacity is solved on a bounded grid, see [`super::solve`]); a deficiency-payment floor
/// does not trade (see [`planting_floor`]).
pub fn band_of(policy: &PolicySpec) -> Result<Option<Band>, StorageError> {
    let unsupported = |key: &str, reason: &str| StorageError::UnsupportedPolicy {
        file: policy.source.clone(),
        key: key.into(),
        reason: reason.into(),
    };
    if let Some(e) = policy.expectations {
        if e != crate::scenario::ExpectationSpec::Rational {
            return Err(unsupported(
                "expectations.rule",
                &format!("\"{}\": the storage model needs rule = \"rational\" (farmers and storers look ahead)", e.rule_name()),
            ));
        }
    }
    let floor = match policy.floor {
        None => None,
        Some(f) => match f.instrument {
            FloorInstrument::Purchase => Some(f.price),
            FloorInstrument::DeficiencyPayment => None,
        },
    };
    let Some(stock) = policy.stock else {
        // a purchase floor without a [stock] section: an unlimited store without losses that never
        // sells (as in the period engine); solved on a bounded grid, see `storage::solve`
        return Ok(floor.map(|f| Band {
            buy_below: f,
            sell_above: f64::INFINITY,
            capacity: f64::INFINITY,
            keep: 1.0,
            release: Release::Band,
            budget: f64::INFINITY,
        }));
    };
    let release = match stock.release {
        ReleaseSpec::Band => Release::Band,
        ReleaseSpec::Target { target, speed } => Release::Target { target, speed },
        ReleaseSpec::Share { share } => Release::Share { share },
        // a rotation nets out in the market: the band's equilibrium (records add its handling)
        ReleaseSpec::Rotate { .. } => Release::Band,
    };
    if stock.capacity <= 0.0 {
        return Ok(None); // a store that holds nothing never trades
    }
    let buy_below = floor.map_or(stock.buy_below, |f| f.max(stock.buy_below));
    let sell_above = if floor.is_some() && policy.stock.is_some() && stock.sell_above <= buy_below {
        f64::INFINITY
    } else {
        stock.sell_above
    };
    Ok(Some(Band {
        buy_below,
        sell_above,
        capacity: stock.capacity,
        keep: 1.0 - stock.loss_rate,
        release,
        budget: stock.purchase_budget,
    }))
}

/// The producer price floor farmers plant on: the price of an announced deficiency-payment floor (they
/// plant on E[max(P', floor)]), else 0. A purchase floor acts through the market price instead.
pub fn planting_floor(policy: &PolicySpec) -> f64 {
    match policy.floor {
        Some(f) if f.instrument == FloorInstrument::DeficiencyPayment && f.announced => f.price,
        _ => 0.0,
    }
}

/// The price floor of deficiency payments (announced or not), else 0.
pub fn payment_floor(policy: &PolicySpec) -> f64 {
    match policy.floor {
        Some(f) if f.instrument == FloorInstrument::DeficiencyPayment => f.price,
        _ => 0.0,
    }
}
