//! Breakpoint-splitting quadrature over next period's shocks, for the two-state (public stock)
//! equilibrium.
//!
//! Next period's price P'(z', g') is piecewise smooth in next availability z': it has kinks (each
//! regime's stockout point, the boundaries of the agency's regimes) and, under the target rule, jumps.
//! A fixed Gauss–Hermite rule makes E[P'] kink or jump at every stock where one node crosses one of
//! these points. Here one continuous shock is integrated exactly instead: its range [−L, L] (in
//! standard-normal units) is split at the images of the known breakpoints of z' ↦ P', and each
//! smooth piece is integrated by composite Gauss–Legendre quadrature against the normal density.
//! Integrating a piecewise-smooth function against a smooth density gives a smooth function of the
//! stock, so the expectation carries no kinks into the rules.
//!
//! Continuous variable: the additive shock when there is one (z' is linear in it; a Gauss–Hermite
//! rule stays over the yield factor), otherwise the yield factor's standard normal s
//! (Y = exp(σs − σ²/2)).

use std::sync::OnceLock;

use super::market::StorageMarket;

/// Truncation of the standard normal: the mass beyond ±8.3 is 1.0e-16.
pub const TAIL: f64 = 8.3;
/// Widest Gauss–Legendre panel (standard-normal units). With 12 points per panel the normal partial
/// expectation comes out to about 1e-13 (tests below; 8 points on panels of 3 gave 1e-9).
pub const PANEL: f64 = 4.0;
/// Gauss–Legendre points per panel.
pub const POINTS: usize = 12;

/// The n-point Gauss–Legendre rule on [−1, 1] (nodes ascending, weights summing to 2), from the
/// eigenvalues and first eigenvector components of the Jacobi matrix of the Legendre polynomials
/// (Golub and Welsch 1969; off-diagonal k/√(4k² − 1)).
pub fn gauss_legendre(n: usize) -> Vec<(f64, f64)> {
    let n = n.max(1);
    if n == 1 {
        return vec![(0.0, 2.0)];
    }
    // weight function 1 on [−1, 1]: mass 2
    let mut out: Vec<(f64, f64)> = crate::numeric::jacobi_rule(n, |k| {
        let kf = k as f64;
        kf / (4.0 * kf * kf - 1.0).sqrt()
    })
    .into_iter()
    .map(|(x, w)| (x, 2.0 * w))
    .collect();
    // symmetrise: average each node with its mirror image
    for i in 0..n / 2 {
        let k = n - 1 - i;
        let x = 0.5 * (out[k].0 - out[i].0);
        let w = 0.5 * (out[k].1 + out[i].1);
        out[i] = (-x, w);
        out[k] = (x, w);
    }
    if n % 2 == 1 {
        out[n / 2].0 = 0.0;
    }
    out
}

/// Points of the Gauss–Legendre rule used on a panel of width `h` (at most [`PANEL`]): the fewest of
/// the tabulated counts whose panel error on the normal density, and on t times it, stays below
/// that of [`POINTS`] points on a panel of [`PANEL`] (about 2e-12 at worst; measured on panels placed
/// anywhere in [−TAIL, TAIL], see the tests). Breakpoints cut the range into many narrow pieces; a narrow
/// piece needs far fewer points for the same accuracy (the error of an n-point rule falls like
/// h^(2n)).
const WIDTH_POINTS: [(f64, usize); 6] =
    [(0.1, 3), (0.25, 4), (0.5, 5), (0.8, 6), (1.5, 8), (2.5, 10)];

fn rule_for(h: f64) -> &'static [(f64, f64)] {
    static RULES: OnceLock<Vec<Vec<(f64, f64)>>> = OnceLock::new();
    let rules = RULES.get_or_init(|| {
        WIDTH_POINTS
            .iter()
            .map(|&(_, n)| gauss_legendre(n))
            .chain(std::iter::once(gauss_legendre(POINTS)))
            .collect()
    });
    let i = WIDTH_POINTS.partition_point(|&(w, _)| w < h);
    &rules[i]
}

const INV_SQRT_2PI: f64 = 0.398_942_280_401_432_7;

/// Nodes and weights for E[f(T)], T standard normal, with f smooth between the ascending points
/// `breaks` (those outside (−TAIL, TAIL) are ignored): calls `visit(t, w)` for every node. The weights
/// include the density and sum to 1 − 2Φ(−TAIL).
pub fn normal_nodes<V: FnMut(f64, f64)>(breaks: &[f64], visit: V) {
    normal_nodes_with(breaks, PANEL, visit)
}

/// [`normal_nodes`] with panels at most `panel` wide (the number of points on a panel follows its
/// width, [`WIDTH_POINTS`]).
pub fn normal_nodes_with<V: FnMut(f64, f64)>(breaks: &[f64], pw: f64, mut visit: V) {
    let mut a = -TAIL;
    let piece = |a: f64, b: f64, visit: &mut V| {
        if b <= a {
            return;
        }
        let k = ((b - a) / pw).ceil().max(1.0);
        let h = (b - a) / k;
        let rule = rule_for(h);
        for p in 0..k as usize {
            let mid = a + h * (p as f64 + 0.5);
            for &(x, w) in rule {
                let t = mid + 0.5 * h * x;
                visit(t, 0.5 * h * w * INV_SQRT_2PI * (-0.5 * t * t).exp());
            }
        }
    };
    for &b in breaks {
        if b > a && b < TAIL {
            piece(a, b, &mut visit);
            a = b;
        }
    }
    piece(a, TAIL, &mut visit);
}

/// Nodes for next availability z' = `carried` + max(0, q·Y + e) when P' is smooth between the
/// ascending availabilities `breaks`: calls `visit(z', dz'/dq, w)` (weights sum to 1 up to the tail
/// mass). With no shocks, one node.
#[inline]
pub fn next_nodes<V: FnMut(f64, f64, f64)>(
    m: &StorageMarket,
    carried: f64,
    q: f64,
    breaks: &[f64],
    mut visit: V,
) {
    next_nodes_yield(m, carried, q, breaks, |z, dz, _, w| visit(z, dz, w));
}

/// [`next_nodes`] that also hands each node's yield factor Y: `visit(z', dz'/dq, Y, w)` (dz'/dq is
/// Y where the harvest is positive, 0 where it is held at zero). Planting on revenue weights each
/// node's price by Y.
pub fn next_nodes_yield<V: FnMut(f64, f64, f64, f64)>(
    m: &StorageMarket,
    carried: f64,
    q: f64,
    breaks: &[f64],
    mut visit: V,
) {
    let sigma = m.yield_sigma;
    let sd = m.additive_sd;
    if sd > 0.0 {
        let mut ts: Vec<f64> = Vec::with_capacity(breaks.len() + 1);
        for &(y, wy) in &m.yield_nodes {
            let base = q * y;
            ts.clear();
            // the harvest is zero below t0 (z' = carried there: a kink)
            let t0 = -base / sd;
            let mut placed = false;
            for &zb in breaks {
                let t = (zb - carried - base) / sd;
                if t <= t0 {
                    continue;
                }
                if !placed {
                    ts.push(t0);
                    placed = true;
                }
                ts.push(t);
            }
            if !placed {
                ts.push(t0);
            }
            normal_nodes(&ts, |t, w| {
                let h = base + sd * t;
                if h > 0.0 {
                    visit(carried + h, y, y, wy * w);
                } else {
                    visit(carried, 0.0, y, wy * w);
                }
            });
        }
    } else if sigma > 0.0 && q > 0.0 {
        let mut ss: Vec<f64> = Vec::with_capacity(breaks.len());
        let shift = 0.5 * sigma * sigma;
        for &zb in breaks {
            if zb > carried {
                ss.push((((zb - carried) / q).ln() + shift) / sigma);
            }
        }
        normal_nodes(&ss, |s, w| {
            let y = (sigma * s - shift).exp();
            visit(carried + q * y, y, y, w);
        });
    } else {
        visit(carried + q.max(0.0), 1.0, 1.0, 1.0);
    }
}

/// A linear test market (210 crowns, 480 kt, elasticity −0.25 both ways) with lognormal yield
/// risk `yield_sigma` on Gauss–Hermite nodes and an additive shock `additive_sd`; the unit tests of
/// the storage model's pieces share it.
#[cfg(test)]
pub(crate) fn test_market(yield_sigma: f64, additive_sd: f64) -> StorageMarket {
    let c = crate::curves::Curve::linear_at_point(210.0, 480.0, -0.25);
    let rule = crate::numeric::gauss_hermite(10);
    StorageMarket {
        demand: c,
        supply: c,
        keep: 1.0,
        discount: 0.9,
        cost: 0.0,
        nodes: Vec::new(),
        yield_nodes: if yield_sigma > 0.0 {
            rule.iter()
                .map(|&(z, w)| ((yield_sigma * z - 0.5 * yield_sigma * yield_sigma).exp(), w))
                .collect()
        } else {
            vec![(1.0, 1.0)]
        },
        p_star: 210.0,
        q_star: 480.0,
        harvest_sd: 0.0,
        yield_sigma,
        additive_sd,
        planting_floor: 0.0,
        payment_floor: 0.0,
        revenue: false,
        farmers: None,
        border: None,
        floor: 0.0,
        ceiling: f64::INFINITY,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn legendre_rule_matches_the_tables() {
        // Abramowitz and Stegun (1964), Table 25.4, n = 5.
        let r = gauss_legendre(5);
        let want = [
            (-0.906_179_845_938_664, 0.236_926_885_056_189),
            (-0.538_469_310_105_683, 0.478_628_670_499_366),
            (0.0, 0.568_888_888_888_889),
            (0.538_469_310_105_683, 0.478_628_670_499_366),
            (0.906_179_845_938_664, 0.236_926_885_056_189),
        ];
        for (got, want) in r.iter().zip(want) {
            assert!((got.0 - want.0).abs() < 1e-14, "{got:?} {want:?}");
            assert!((got.1 - want.1).abs() < 1e-14, "{got:?} {want:?}");
        }
        // an n-point rule integrates polynomials of degree ≤ 2n − 1 exactly (Golub and Welsch 1969):
        // ∫ x^14 dx over [−1, 1] = 2/15
        let r8 = gauss_legendre(8);
        let i14: f64 = r8.iter().map(|&(x, w)| w * x.powi(14)).sum();
        assert!((i14 - 2.0 / 15.0).abs() < 1e-14, "{i14}");
    }

    /// Φ(x) from erf by the all-positive series erf(x) = (2/√π)·e^(−x²)·Σ 2ⁿx^(2n+1)/(1·3⋯(2n+1))
    /// (Abramowitz and Stegun 1964, eq. 7.1.6), independent of the quadrature under test.
    fn phi_cdf(x: f64) -> f64 {
        let u = x.abs() / std::f64::consts::SQRT_2;
        let (mut term, mut sum) = (u, u);
        for n in 1..400 {
            term *= 2.0 * u * u / (2 * n + 1) as f64;
            sum += term;
            if term < 1e-18 * sum {
                break;
            }
        }
        let erf = 2.0 / std::f64::consts::PI.sqrt() * (-u * u).exp() * sum;
        0.5 + 0.5 * erf.copysign(x)
    }

    fn phi_pdf(x: f64) -> f64 {
        INV_SQRT_2PI * (-0.5 * x * x).exp()
    }

    #[test]
    fn reproduces_the_normal_partial_expectation_and_tail_probabilities() {
        // E[max(a + σε, c)] = c·Φ(α) + a·(1 − Φ(α)) + σ·φ(α), α = (c − a)/σ, ε standard normal
        // (the normal partial expectation E[X·1{X > c}] = a·(1 − Φ(α)) + σφ(α); e.g. Johnson, Kotz
        // and Balakrishnan 1994, ch. 13), and E[1{ε > b}] = 1 − Φ(b).
        for &(a, sigma, c) in &[(10.0, 2.0, 11.3), (-1.0, 0.5, -1.9), (3.0, 1.0, 3.0)] {
            let alpha = (c - a) / sigma;
            let want = c * phi_cdf(alpha) + a * (1.0 - phi_cdf(alpha)) + sigma * phi_pdf(alpha);
            let mut got = 0.0;
            normal_nodes(&[alpha], |t, w| got += w * f64::max(a + sigma * t, c));
            assert!(
                (got - want).abs() < 1e-12 * (1.0 + want.abs()),
                "{got} {want}"
            );
        }
        for &b in &[-2.4, -0.3, 0.0, 1.7, 3.1] {
            let mut got = 0.0;
            normal_nodes(&[b], |t, w| got += w * f64::from(u8::from(t > b)));
            let want = 1.0 - phi_cdf(b);
            assert!((got - want).abs() < 1e-13, "{b}: {got} {want}");
        }
        // two breakpoints: a step up and a kink, E[1{ε > −0.5} + max(ε − 1, 0)]
        let mut got = 0.0;
        normal_nodes(&[-0.5, 1.0], |t, w| {
            got += w * (f64::from(u8::from(t > -0.5)) + (t - 1.0).max(0.0))
        });
        let want = (1.0 - phi_cdf(-0.5)) + phi_pdf(1.0) - (1.0 - phi_cdf(1.0));
        assert!((got - want).abs() < 1e-13, "{got} {want}");
        // without the breakpoint the step is integrated only to the panel's accuracy
        let mut rough = 0.0;
        normal_nodes(&[], |t, w| rough += w * f64::from(u8::from(t > 0.37)));
        assert!((rough - (1.0 - phi_cdf(0.37))).abs() > 1e-6);
    }

    #[test]
    fn narrow_panels_keep_the_accuracy_of_the_full_rule() {
        // every piece (its width picks the points, WIDTH_POINTS) integrates the density and t
        // times it over [a, a + h] to 3e-12 (the 12-point rule on a panel of 4 reaches 2.3e-12)
        // against Φ(a + h) − Φ(a) and φ(a) − φ(a + h)
        // (Abramowitz and Stegun 1964, eq. 7.1.6 for Φ), wherever the piece lies; and two points
        // fewer than the table gives on its widest panel would not (the table is not loose)
        for &h in &[
            0.05, 0.1, 0.2, 0.25, 0.45, 0.5, 0.7, 0.8, 1.3, 1.5, 2.2, 2.5, 3.5, 4.0,
        ] {
            let mut a = -TAIL;
            while a + h < TAIL {
                let (mut p0, mut p1) = (0.0, 0.0);
                normal_nodes(&[a, a + h], |t, w| {
                    if t > a && t < a + h {
                        p0 += w;
                        p1 += w * t;
                    }
                });
                let want0 = phi_cdf(a + h) - phi_cdf(a);
                let want1 = phi_pdf(a) - phi_pdf(a + h);
                assert!((p0 - want0).abs() < 3e-12, "{a} {h}: {p0} {want0}");
                assert!((p1 - want1).abs() < 3e-12, "{a} {h}: {p1} {want1}");
                a += 0.37;
            }
        }
        let (h, n) = WIDTH_POINTS[3];
        let fewer = gauss_legendre(n - 2);
        let a = -0.5 * h - 1.0;
        let got: f64 = fewer
            .iter()
            .map(|&(x, w)| 0.5 * h * w * phi_pdf(a + 0.5 * h * (x + 1.0)))
            .sum();
        assert!((got - (phi_cdf(a + h) - phi_cdf(a))).abs() > 1e-13);
    }

    #[test]
    fn next_availability_nodes_integrate_kinked_functions_of_the_harvest() {
        // Lognormal yield Y = exp(σs − σ²/2): E[max(qY, c)] = q·Φ(σ − s*) + c·Φ(s*),
        // s* = (ln(c/q) + σ²/2)/σ (the lognormal partial expectation, as in Black and Scholes 1973).
        let (q, sigma): (f64, f64) = (480.0, 0.12);
        let m = test_market(sigma, 0.0);
        for &c in &[430.0, 480.0, 560.0] {
            let s_star = ((c / q).ln() + 0.5 * sigma * sigma) / sigma;
            let want = q * phi_cdf(sigma - s_star) + c * phi_cdf(s_star);
            let (mut got, mut weight) = (0.0, 0.0);
            next_nodes(&m, 0.0, q, &[c], |z, _, w| {
                got += w * z.max(c);
                weight += w;
            });
            assert!((got - want).abs() < 1e-12 * want, "{c}: {got} {want}");
            assert!((weight - 1.0).abs() < 1e-12, "{weight}");
        }
        // additive normal shock (no yield risk): carried + max(0, q + e) against a kink at c above
        // the carried stock is the normal partial expectation with a = carried + q
        let (carried, sd) = (20.0, 40.0);
        let m = test_market(0.0, sd);
        for &c in &[470.0, 500.0, 555.0] {
            let alpha = (c - carried - q) / sd;
            let a = carried + q;
            let want = c * phi_cdf(alpha) + a * (1.0 - phi_cdf(alpha)) + sd * phi_pdf(alpha);
            let mut got = 0.0;
            next_nodes(&m, carried, q, &[c], |z, _, w| got += w * z.max(c));
            assert!((got - want).abs() < 1e-12 * want, "{c}: {got} {want}");
        }
    }
}
