//! How long a store takes to fill (the rules' warnings and the path diagnostics use it).

/// Periods until a store starting at `initial` fills to `capacity` when it takes `growth` a period
/// and loses `loss` of its carried stock a period: S_t = (1 − δ)S_{t−1} + g, so
/// S_t = L + (S_0 − L)(1 − δ)^t with L = g/δ, and t = ln((L − C)/(L − S_0)) / ln(1 − δ) (a geometric
/// series); (C − S_0)/g without losses. `None` when the store never fills (L ≤ C: losses absorb the
/// surplus first).
pub fn periods_to_fill(initial: f64, capacity: f64, growth: f64, loss: f64) -> Option<f64> {
    if growth <= 0.0 || !capacity.is_finite() {
        return None;
    }
    if initial >= capacity {
        return Some(0.0);
    }
    if loss <= 0.0 {
        return Some((capacity - initial) / growth);
    }
    let limit = growth / loss;
    if limit <= capacity {
        return None;
    }
    Some(((limit - capacity) / (limit - initial)).ln() / (1.0 - loss).ln())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn time_to_fill_follows_the_geometric_recursion() {
        // S_t = (1 − δ)S_{t−1} + g iterated directly (the definition) against the closed form
        let (s0, cap, g, d) = (5.0, 60.0, 10.0, 0.05);
        let t = periods_to_fill(s0, cap, g, d).unwrap();
        let mut s = s0;
        let mut steps = 0;
        while s < cap {
            s = (1.0 - d) * s + g;
            steps += 1;
        }
        assert!(
            t <= steps as f64 && t > steps as f64 - 1.0,
            "{t} vs {steps}"
        );
        // without losses: (C − S_0)/g; with losses that absorb the surplus first: never
        assert!((periods_to_fill(0.0, 60.0, 10.0, 0.0).unwrap() - 6.0).abs() < 1e-12);
        assert_eq!(periods_to_fill(0.0, 60.0, 2.0, 0.05), None); // levels off at 40
    }
}
