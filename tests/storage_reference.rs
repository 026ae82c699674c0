//! The stockout price of the competitive storage equilibrium against an independent reference
//! solver written here from the model's equations (docs/storage.md, "The model"), sharing no code
//! with `furrow::storage`:
//!
//! - availability z = (1 − δ)·x₋₁ + q·Y + ε, consumption z − x, price D⁻¹(z − x);
//! - arbitrage P(z) + k = β·E[P(z′)] where x > 0, β = (1 − δ)/(1 + r) (Gustafson 1958; Wright and
//!   Williams 1982; Deaton and Laroque 1992, eq. 6 with storage cost and losses, from memory);
//! - rational planting q = S(E[P(z′)]);
//! - the stockout price is β·E[P(z′) | x = 0] − k (Deaton and Laroque 1992, Theorem 1, from memory).
//!
//! Method (different from furrow's in every numerical piece): time iteration on the endogenous grid
//! of carried stock x, the stock policy x(z) represented by a natural cubic spline in availability
//! (furrow: a monotone cubic of the price), expectations by composite 10-point Gauss–Legendre over
//! the standard normal on [−9, 9] in 240 panels, split where next availability crosses the stockout
//! point (furrow: panels over the shock's density split at every breakpoint of its rule), planting by
//! the secant method (furrow: a bracketed root finder), iteration to a change below 1e-12 of the
//! price. The reference itself is checked for discretisation error by solving it on two grids.

use furrow::policies::PolicySpec;
use furrow::scenario::{apply_override, market_from_table, parse_toml, Scenario};
use furrow::storage::{self, Equilibrium, SolveOptions};

const EXAMPLE: &str = "examples/veldmark_storers.toml";

/// Gauss–Legendre nodes and weights on [−1, 1] (n = 10; Abramowitz and Stegun 1964, Table 25.4).
const GL_X: [f64; 5] = [
    0.148_874_338_981_631_2,
    0.433_395_394_129_247_2,
    0.679_409_568_299_024_4,
    0.865_063_366_688_984_5,
    0.973_906_528_517_171_7,
];
const GL_W: [f64; 5] = [
    0.295_524_224_714_752_9,
    0.269_266_719_309_996_4,
    0.219_086_362_515_982,
    0.149_451_349_150_580_6,
    0.066_671_344_308_688_1,
];

/// The market as the model's equations need it, read from the file's keys (not from furrow).
#[derive(Clone, Copy)]
enum Demand {
    /// Q = a + b·P, b < 0, free disposal above the intercept.
    Linear { a: f64, b: f64 },
    /// Q = q0·(P/p0)^e.
    Elastic { q0: f64, p0: f64, e: f64 },
}

impl Demand {
    fn inverse(self, c: f64) -> f64 {
        match self {
            Demand::Linear { a, b } => ((c - a) / b).max(0.0),
            Demand::Elastic { q0, p0, e } => p0 * (c / q0).powf(1.0 / e),
        }
    }
    fn quantity(self, p: f64) -> f64 {
        match self {
            Demand::Linear { a, b } => a + b * p,
            Demand::Elastic { q0, p0, e } => q0 * (p / p0).powf(e),
        }
    }
}

#[derive(Clone, Copy)]
struct Model {
    demand: Demand,
    /// Linear supply S(P) = q0 + slope·(P − p0).
    supply_q0: f64,
    supply_p0: f64,
    supply_slope: f64,
    /// Lognormal yield: ln Y ~ N(−σ²/2, σ²).
    sigma: f64,
    /// Additive harvest shock sd.
    add_sd: f64,
    beta: f64,
    keep: f64,
    k: f64,
}

impl Model {
    fn supply(&self, p: f64) -> f64 {
        (self.supply_q0 + self.supply_slope * (p - self.supply_p0)).max(0.0)
    }
    /// Next availability at standard normal s (one shock drives both yield and additive noise,
    /// whichever the market has; the tests use one of them at a time).
    fn next(&self, carried: f64, q: f64, s: f64) -> f64 {
        let y = (self.sigma * s - 0.5 * self.sigma * self.sigma).exp();
        carried + q * y + self.add_sd * s
    }
}

/// Natural cubic spline through (xs, ys), linear beyond the ends.
struct Spline {
    xs: Vec<f64>,
    ys: Vec<f64>,
    m: Vec<f64>,
}

impl Spline {
    fn new(xs: Vec<f64>, ys: Vec<f64>) -> Spline {
        let n = xs.len();
        let mut m = vec![0.0; n];
        // tridiagonal system for the second derivatives (natural ends), Thomas algorithm
        let mut c = vec![0.0; n];
        let mut d = vec![0.0; n];
        for i in 1..n - 1 {
            let h0 = xs[i] - xs[i - 1];
            let h1 = xs[i + 1] - xs[i];
            let a = h0 / 6.0;
            let b = (h0 + h1) / 3.0;
            let cc = h1 / 6.0;
            let r = (ys[i + 1] - ys[i]) / h1 - (ys[i] - ys[i - 1]) / h0;
            let denom = b - a * c[i - 1];
            c[i] = cc / denom;
            d[i] = (r - a * d[i - 1]) / denom;
        }
        for i in (1..n - 1).rev() {
            m[i] = d[i] - c[i] * m[i + 1];
        }
        Spline { xs, ys, m }
    }
    fn eval(&self, x: f64) -> f64 {
        let n = self.xs.len();
        if x <= self.xs[0] {
            let h = self.xs[1] - self.xs[0];
            let slope = (self.ys[1] - self.ys[0]) / h - h * (2.0 * self.m[0] + self.m[1]) / 6.0;
            return self.ys[0] + slope * (x - self.xs[0]);
        }
        if x >= self.xs[n - 1] {
            let h = self.xs[n - 1] - self.xs[n - 2];
            let slope = (self.ys[n - 1] - self.ys[n - 2]) / h
                + h * (self.m[n - 2] + 2.0 * self.m[n - 1]) / 6.0;
            return self.ys[n - 1] + slope * (x - self.xs[n - 1]);
        }
        let i = self.xs.partition_point(|&v| v <= x).min(n - 1) - 1;
        let h = self.xs[i + 1] - self.xs[i];
        let a = (self.xs[i + 1] - x) / h;
        let b = (x - self.xs[i]) / h;
        a * self.ys[i]
            + b * self.ys[i + 1]
            + ((a * a * a - a) * self.m[i] + (b * b * b - b) * self.m[i + 1]) * h * h / 6.0
    }
}

/// The equilibrium as the reference holds it: the stockout availability z0 and the stock policy
/// x(z) for z > z0 (zero below).
struct Policy {
    z0: f64,
    stock: Spline,
}

impl Policy {
    fn price(&self, m: &Model, z: f64) -> f64 {
        let x = if z <= self.z0 {
            0.0
        } else {
            self.stock.eval(z).max(0.0)
        };
        m.demand.inverse(z - x)
    }
}

/// E[f(s)] over the standard normal, composite Gauss–Legendre on [−9, 9] in `panels` panels, with a
/// panel edge added at `split` (where the integrand has a kink).
fn normal_expectation(panels: usize, split: Option<f64>, f: impl Fn(f64) -> f64) -> f64 {
    let (lo, hi) = (-9.0, 9.0);
    let mut edges: Vec<f64> = (0..=panels)
        .map(|i| lo + (hi - lo) * i as f64 / panels as f64)
        .collect();
    if let Some(s) = split.filter(|s| *s > lo && *s < hi) {
        edges.push(s);
        edges.sort_by(f64::total_cmp);
    }
    let norm = 1.0 / (2.0 * std::f64::consts::PI).sqrt();
    let mut total = 0.0;
    for w in edges.windows(2) {
        let (a, b) = (w[0], w[1]);
        let (mid, half) = (0.5 * (a + b), 0.5 * (b - a));
        if half <= 0.0 {
            continue;
        }
        for (x, wt) in GL_X.iter().zip(GL_W) {
            for s in [mid - half * x, mid + half * x] {
                total += wt * half * f(s) * norm * (-0.5 * s * s).exp();
            }
        }
    }
    total
}

/// The shock at which next availability equals `z0` (bisection; availability rises with s).
fn crossing(m: &Model, carried: f64, q: f64, z0: f64) -> Option<f64> {
    let (mut lo, mut hi) = (-9.0, 9.0);
    if m.next(carried, q, lo) >= z0 || m.next(carried, q, hi) <= z0 {
        return None;
    }
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if m.next(carried, q, mid) < z0 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Some(0.5 * (lo + hi))
}

fn expected_price(m: &Model, pol: &Policy, x: f64, q: f64, panels: usize) -> f64 {
    let carried = m.keep * x;
    let split = crossing(m, carried, q, pol.z0);
    normal_expectation(panels, split, |s| pol.price(m, m.next(carried, q, s)))
}

/// Rational planting at carried stock x: the root of q − S(E[P′ | q]) by the secant method.
fn planting(m: &Model, pol: &Policy, x: f64, guess: f64, panels: usize) -> (f64, f64) {
    let g = |q: f64| {
        let e = expected_price(m, pol, x, q, panels);
        (q - m.supply(e), e)
    };
    let (mut q0, mut q1) = (guess, guess * 1.001 + 1e-9);
    let (mut g0, _) = g(q0);
    let (mut g1, mut e1) = g(q1);
    for _ in 0..60 {
        if g1 == g0 || g1.abs() < 1e-13 * q1.max(1.0) {
            break;
        }
        let q2 = q1 - g1 * (q1 - q0) / (g1 - g0);
        q0 = q1;
        g0 = g1;
        q1 = q2;
        (g1, e1) = g(q1);
    }
    (q1, e1)
}

/// Solves the reference on `n` stock nodes up to `x_max` and returns the stockout price.
fn reference_stockout(m: &Model, n: usize, x_max: f64, panels: usize) -> f64 {
    let q_star = m.supply_q0; // the markets below are calibrated at the steady state
    let xs: Vec<f64> = (0..n)
        .map(|i| x_max * (i as f64 / (n - 1) as f64).powi(2))
        .collect();
    // start: no storage beyond a tiny stock (z0 far right)
    let mut pol = Policy {
        z0: 1e12,
        stock: Spline::new(vec![1e12, 1e12 + 1.0, 1e12 + 2.0], vec![0.0; 3]),
    };
    let mut planted = vec![q_star; n];
    let mut last = f64::NAN;
    for _ in 0..2000 {
        let mut zs = Vec::with_capacity(n);
        let mut stock = Vec::with_capacity(n);
        for (i, &x) in xs.iter().enumerate() {
            let (q, e) = planting(m, &pol, x, planted[i], panels);
            planted[i] = q;
            let p = m.beta * e - m.k;
            assert!(p > 0.0, "the reference markets keep prices positive");
            zs.push(x + m.demand.quantity(p));
            stock.push(x);
        }
        let stockout = m.demand.inverse(zs[0]);
        pol = Policy {
            z0: zs[0],
            stock: Spline::new(zs, stock),
        };
        if (stockout - last).abs() < 1e-12 * stockout {
            return stockout;
        }
        last = stockout;
    }
    panic!("the reference did not converge");
}

/// Next to no supply response (the file requires a positive elasticity): planting stays at 480 kt
/// within 1e-6 of it.
const LINEAR_SUPPLY_ELASTICITY: f64 = 1e-9;

fn market(linear_additive: bool) -> Scenario {
    let text = std::fs::read_to_string(EXAMPLE).unwrap();
    let mut table = parse_toml(EXAMPLE, &text).unwrap();
    if linear_additive {
        // a Deaton–Laroque market: linear demand, harvests fixed in expectation (no supply
        // response), additive normal harvest shocks
        for (k, v) in [
            ("demand.form", toml::Value::String("linear".into())),
            ("demand.elasticity", toml::Value::Float(-1.0)),
            (
                "supply.elasticity",
                toml::Value::Float(LINEAR_SUPPLY_ELASTICITY),
            ),
            ("shocks.yield_cv", toml::Value::Float(0.0)),
            ("shocks.supply_sd", toml::Value::Float(30.0)),
        ] {
            apply_override(&mut table, k, v).unwrap();
        }
    }
    market_from_table(EXAMPLE, table).unwrap()
}

/// The model's parameters from the scenario's file keys (calibration at (480 kt, 210 crowns)).
fn model_of(s: &Scenario, linear_additive: bool) -> Model {
    let (q0, p0) = (480.0, 210.0);
    let st = s.storers.as_ref().unwrap();
    let (demand, supply_elasticity, cv, add_sd) = if linear_additive {
        (
            Demand::Linear {
                a: q0 + q0,
                b: -q0 / p0,
            },
            LINEAR_SUPPLY_ELASTICITY,
            0.0,
            30.0,
        )
    } else {
        (Demand::Elastic { q0, p0, e: -0.25 }, 0.20, 0.12, 0.0)
    };
    let keep = 1.0 - st.loss_rate;
    Model {
        demand,
        supply_q0: q0,
        supply_p0: p0,
        supply_slope: supply_elasticity * q0 / p0,
        sigma: (1.0f64 + cv * cv).ln().sqrt(),
        add_sd,
        beta: keep / (1.0 + st.interest_rate),
        keep,
        k: st.storage_cost,
    }
}

fn furrow_stockout(s: &Scenario) -> f64 {
    match storage::solve(s, &PolicySpec::none(), &SolveOptions::default()).unwrap() {
        Equilibrium::Private(p) => p.stockout_price(),
        Equilibrium::Public(_) => panic!("no public stock expected"),
    }
}

fn check(linear_additive: bool, x_max: f64) {
    let s = market(linear_additive);
    let m = model_of(&s, linear_additive);
    let coarse = reference_stockout(&m, 60, x_max, 160);
    let fine = reference_stockout(&m, 120, x_max, 240);
    // the reference's own discretisation error, far below the tolerance
    assert!(
        (fine - coarse).abs() < 1e-7 * fine,
        "reference grids disagree: {coarse} vs {fine}"
    );
    let ours = furrow_stockout(&s);
    assert!(
        (ours - fine).abs() < 1e-6 * fine,
        "furrow {ours} against the reference {fine} (relative {:.2e})",
        (ours - fine).abs() / fine
    );
}

#[test]
fn linear_additive_market_stockout_price_matches_the_continuous_shock_reference() {
    check(true, 240.0);
}

#[test]
fn demo_stockout_price_matches_the_continuous_shock_reference() {
    check(false, 300.0);
}
