//! `KEY=FROM:TO:STEPS`: one axis of a sweep grid.

use super::SweepError;

/// Most points on one axis.
pub const MAX_STEPS: usize = 100_000;

/// One varied key and its values.
#[derive(Debug, Clone, PartialEq)]
pub struct Axis {
    /// The dotted file key, e.g. `supply.slope`.
    pub key: String,
    /// Grid values, FROM and TO both included.
    pub values: Vec<f64>,
}

/// The STEPS grid points from `from` to `to`, both ends included: from + i·(to − from)/(steps − 1)
/// rounded to 15 significant digits (so 0.05:1:20 gives 0.4, not 0.39999999999999997); the last one
/// is `to` exactly; one step gives `from` alone.
pub fn grid_values(from: f64, to: f64, steps: usize) -> Vec<f64> {
    if steps == 1 {
        return vec![from];
    }
    let h = (to - from) / (steps - 1) as f64;
    (0..steps)
        .map(|i| {
            if i == steps - 1 {
                to
            } else {
                round15(from + i as f64 * h)
            }
        })
        .collect()
}

fn round15(x: f64) -> f64 {
    format!("{x:.14e}").parse().unwrap_or(x)
}

/// Parses `KEY=FROM:TO:STEPS`.
pub fn parse_vary(spec: &str) -> Result<Axis, SweepError> {
    let bad = |reason: String| SweepError::BadVary {
        spec: spec.to_string(),
        reason,
    };
    let (key, range) = spec
        .split_once('=')
        .ok_or_else(|| bad("expected KEY=FROM:TO:STEPS, e.g. supply.slope=0.5:2.5:21".into()))?;
    let key = key.trim();
    match key.split_once('.') {
        Some((s, k)) if !s.is_empty() && !k.is_empty() && !k.contains('.') => {}
        _ => {
            return Err(bad(format!(
                "`{key}`: a key is written section.key, e.g. supply.slope"
            )))
        }
    }
    let parts: Vec<&str> = range.split(':').map(str::trim).collect();
    if parts.len() != 3 {
        return Err(bad(format!(
            "`{range}`: expected FROM:TO:STEPS (three parts separated by `:`)"
        )));
    }
    let num = |s: &str, what: &str| -> Result<f64, SweepError> {
        match s.parse::<f64>() {
            Ok(v) if v.is_finite() => Ok(v),
            _ => Err(bad(format!("{what} `{s}` must be a finite number"))),
        }
    };
    let from = num(parts[0], "FROM")?;
    let to = num(parts[1], "TO")?;
    let steps: usize = parts[2].parse().map_err(|_| {
        bad(format!(
            "STEPS `{}` must be a whole number from 1 to {MAX_STEPS}",
            parts[2]
        ))
    })?;
    if !(1..=MAX_STEPS).contains(&steps) {
        return Err(bad(format!(
            "STEPS {steps} must be a whole number from 1 to {MAX_STEPS}"
        )));
    }
    Ok(Axis {
        key: key.to_string(),
        values: grid_values(from, to, steps),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn both_ends_included() {
        // INTERFACE.md: 0.1:1.0:10 gives 0.1, 0.2, …, 1.0
        let a = parse_vary("expectations.weight=0.1:1.0:10").unwrap();
        assert_eq!(a.values.len(), 10);
        assert_eq!(a.values[0], 0.1);
        assert_eq!(a.values[9], 1.0);
        assert!((a.values[4] - 0.5).abs() < 1e-15);
        let b = parse_vary("expectations.weight=0.05:1:20").unwrap();
        assert_eq!(b.values[7], 0.4);
    }

    #[test]
    fn bad_specs_are_named() {
        for s in [
            "supply.slope",
            "slope=1:2:3",
            "supply.slope=1:2",
            "supply.slope=1:x:3",
            "supply.slope=1:2:0",
        ] {
            let e = parse_vary(s).unwrap_err().to_string();
            assert!(e.contains(s.split('=').next().unwrap()), "{e}");
        }
    }
}
