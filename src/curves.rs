//! Demand and supply curves: linear and constant-elasticity, their inverses, elasticities and the
//! integrals that welfare needs. A [`Curve`] is always in the validated form; calibration from an
//! elasticity at a point happens in `scenario` when the file is read.
//!
//! Quantities are clamped at zero (`quantity` never returns a negative number); inverse curves return
//! `f64::INFINITY` where no finite price exists (constant-elasticity demand at zero consumption) and may
//! return a non-positive number where the market would need a negative price; the engine treats both as
//! a diverging path.

use serde::Serialize;

/// `on_form!(curve, f => expr)`: `expr` with `f` bound to the curve's form, whichever it is (the
/// one dispatch of [`Curve`]'s methods that run on both forms).
macro_rules! on_form {
    ($curve:expr, $f:ident => $e:expr) => {
        match $curve.form() {
            Forms::Linear($f) => $e,
            Forms::Elastic($f) => $e,
        }
    };
}

/// A price–quantity schedule.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "form", rename_all = "kebab-case")]
pub enum Curve {
    /// Q = intercept + slope · P.
    Linear {
        /// Quantity at a zero price.
        intercept: f64,
        /// dQ/dP.
        slope: f64,
    },
    /// Q = at_quantity · (P / at_price)^elasticity.
    ConstantElasticity {
        /// Reference price.
        at_price: f64,
        /// Quantity at the reference price.
        at_quantity: f64,
        /// Constant elasticity d ln Q / d ln P.
        elasticity: f64,
    },
}

impl Curve {
    /// A linear curve through (`price`, `quantity`) with the given point elasticity.
    pub fn linear_at_point(price: f64, quantity: f64, elasticity: f64) -> Curve {
        let slope = elasticity * quantity / price;
        Curve::Linear {
            intercept: quantity - slope * price,
            slope,
        }
    }

    /// This curve's form, as the type that holds its arithmetic.
    #[inline]
    pub fn form(&self) -> Forms {
        match *self {
            Curve::Linear { intercept, slope } => Forms::Linear(Linear { intercept, slope }),
            Curve::ConstantElasticity {
                at_price,
                at_quantity,
                elasticity,
            } => Forms::Elastic(Elastic {
                at_price,
                at_quantity,
                elasticity,
            }),
        }
    }

    /// Quantity at price `p` (never negative).
    #[inline]
    pub fn quantity(&self, p: f64) -> f64 {
        on_form!(self, f => f.quantity(p))
    }

    /// Quantity at price `p` without the clamp at zero (linear curves extend below the axis). Used for
    /// the linearisation and for inverse-curve bookkeeping.
    #[inline]
    pub fn quantity_unclamped(&self, p: f64) -> f64 {
        match *self {
            Curve::Linear { intercept, slope } => Linear { intercept, slope }.unclamped(p),
            _ => self.quantity(p),
        }
    }

    /// The price at which the curve gives quantity `q` (inverse curve). Linear curves extend linearly
    /// (the result may be ≤ 0); constant elasticity gives +∞ or 0 at `q = 0`.
    #[inline]
    pub fn price_at(&self, q: f64) -> f64 {
        on_form!(self, f => f.price_at(q))
    }

    /// dQ/dP at price `p`.
    #[inline]
    pub fn slope_at(&self, p: f64) -> f64 {
        match *self {
            Curve::Linear { slope, .. } => slope,
            Curve::ConstantElasticity { elasticity, .. } => elasticity * self.quantity(p) / p,
        }
    }

    /// dQ/dP at a point (`p`, `q`) known to lie on the curve (q = Q(p)): the same as
    /// [`Self::slope_at`] without computing Q(p) again.
    #[inline]
    pub fn slope_at_point(&self, p: f64, q: f64) -> f64 {
        match *self {
            Curve::Linear { slope, .. } => slope,
            Curve::ConstantElasticity { elasticity, .. } => elasticity * q / p,
        }
    }

    /// Point elasticity (dQ/dP)·(P/Q) at price `p`; not finite where Q = 0.
    pub fn elasticity_at(&self, p: f64) -> f64 {
        match *self {
            Curve::Linear { .. } => self.slope_at(p) * p / self.quantity_unclamped(p),
            Curve::ConstantElasticity { elasticity, .. } => elasticity,
        }
    }

    /// ∫ Q(p) dp from `p_low` to `p_high` of this curve shifted by `shift` quantity units, with the
    /// integrand clamped at zero (used for consumer surplus between two prices).
    pub fn area_between(&self, p_low: f64, p_high: f64, shift: f64) -> f64 {
        match self.form() {
            Forms::Linear(Linear { intercept, slope }) => {
                // integrand a + shift + slope p, clamped at 0
                let a = intercept + shift;
                let (mut lo, mut hi) = (p_low.min(p_high), p_low.max(p_high));
                let sign = if p_high >= p_low { 1.0 } else { -1.0 };
                let zero = -a / slope; // price where the shifted curve crosses zero
                if slope < 0.0 {
                    hi = hi.min(zero);
                } else {
                    lo = lo.max(zero);
                }
                if hi <= lo {
                    return 0.0;
                }
                let prim = |p: f64| a * p + 0.5 * slope * p * p;
                sign * (prim(hi) - prim(lo))
            }
            Forms::Elastic(e) => e.area_between(p_low, p_high, shift),
        }
    }

    /// Consumer surplus at price `p` for a demand curve shifted by `shift`: ∫_p^{choke} D(x) dx for a
    /// linear curve; for constant elasticity (no finite choke price) ∫_p^{at_price} D(x) dx, so that
    /// only changes are meaningful.
    #[inline]
    pub fn consumer_surplus(&self, p: f64, shift: f64) -> f64 {
        Form::consumer_surplus(self, p, shift)
    }

    /// Cost of producing `q` for a supply curve: ∫_0^q max(0, S⁻¹(x)) dx (the area under the inverse
    /// supply curve, i.e. the sum of marginal costs).
    #[inline]
    pub fn production_cost(&self, q: f64) -> f64 {
        Form::production_cost(self, q)
    }

    /// Short name of the functional form.
    pub fn form_name(&self) -> &'static str {
        match self {
            Curve::Linear { .. } => "linear",
            Curve::ConstantElasticity { .. } => "constant-elasticity",
        }
    }

    /// True for linear curves.
    pub fn is_linear(&self) -> bool {
        matches!(self, Curve::Linear { .. })
    }
}

/// A [`Curve`]'s form as a value of its own type ([`Curve::form`]): what the curve dispatches to.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Forms {
    /// A linear curve.
    Linear(Linear),
    /// A constant-elasticity curve.
    Elastic(Elastic),
}

/// The arithmetic of one functional form, written once: [`Linear`] and [`Elastic`] hold it, and
/// [`Curve`] dispatches to them on its form. Code that runs the same form over many values (the
/// engine's lanes, `engine::lanes`) takes the form as a type parameter, so the choice of form is
/// made once outside its loops; the numbers are the same as through [`Curve`].
pub trait Form: Copy {
    /// Quantity at price `p` (never negative; see [`Curve::quantity`]).
    fn quantity(&self, p: f64) -> f64;
    /// The inverse curve (see [`Curve::price_at`]).
    fn price_at(&self, q: f64) -> f64;
    /// Consumer surplus at `p` on the curve shifted by `shift` (see [`Curve::consumer_surplus`]).
    fn consumer_surplus(&self, p: f64, shift: f64) -> f64;
    /// Cost of producing `q` (see [`Curve::production_cost`]).
    fn production_cost(&self, q: f64) -> f64;

    /// Whether the form's `_many` methods work their values out together, cheaper than one by
    /// one (a caller that can do either asks; the bits are the same).
    const TOGETHER: bool = false;

    /// [`Form::price_at`] of each quantity, in place (the same bits; a form may work them out
    /// together).
    #[inline(always)]
    fn price_at_many(&self, quantities: &mut [f64]) {
        for q in quantities {
            *q = self.price_at(*q);
        }
    }

    /// [`Form::quantity`] at each price, into `into` (the same bits; a form may work them out
    /// together). `into` as long as `prices`.
    #[inline(always)]
    fn quantity_many(&self, prices: &[f64], into: &mut [f64]) {
        let into = &mut into[..prices.len()];
        for (q, &p) in into.iter_mut().zip(prices) {
            *q = self.quantity(p);
        }
    }

    /// [`Form::production_cost`] of each quantity, into `into` (the same bits; a form may work
    /// them out together). `into` as long as `quantities`.
    #[inline(always)]
    fn production_cost_many(&self, quantities: &[f64], into: &mut [f64]) {
        let into = &mut into[..quantities.len()];
        for (c, &q) in into.iter_mut().zip(quantities) {
            *c = self.production_cost(q);
        }
    }

    /// [`Form::consumer_surplus`] at each price, on the curve shifted by the matching shift,
    /// into `into` (the same bits; a form may work them out together). Every slice as long as
    /// `prices`.
    #[inline(always)]
    fn consumer_surplus_many(&self, prices: &[f64], shifts: &[f64], into: &mut [f64]) {
        surplus_each(self, prices, shifts, into);
    }
}

/// [`Form::consumer_surplus`] of `form` at each price, one by one.
#[inline(always)]
fn surplus_each<F: Form>(form: &F, prices: &[f64], shifts: &[f64], into: &mut [f64]) {
    let n = prices.len();
    let (shifts, into) = (&shifts[..n], &mut into[..n]);
    for l in 0..n {
        into[l] = form.consumer_surplus(prices[l], shifts[l]);
    }
}

/// How many values [`Elastic`]'s batched methods raise to a power at a time (a buffer on the
/// stack, so that no call allocates).
const POWERS_AT_ONCE: usize = 64;

/// [`Curve::Linear`]'s arithmetic: Q = intercept + slope · P.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Linear {
    /// Quantity at a zero price.
    pub intercept: f64,
    /// dQ/dP.
    pub slope: f64,
}

/// [`Curve::ConstantElasticity`]'s arithmetic: Q = at_quantity · (P / at_price)^elasticity.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Elastic {
    /// Reference price.
    pub at_price: f64,
    /// Quantity at the reference price.
    pub at_quantity: f64,
    /// Constant elasticity d ln Q / d ln P.
    pub elasticity: f64,
}

impl Linear {
    /// Quantity at price `p` without the clamp at zero (see [`Curve::quantity_unclamped`]).
    #[inline(always)]
    pub fn unclamped(&self, p: f64) -> f64 {
        self.intercept + self.slope * p
    }
}

impl Form for Linear {
    #[inline(always)]
    fn quantity(&self, p: f64) -> f64 {
        (self.intercept + self.slope * p).max(0.0)
    }

    #[inline(always)]
    fn price_at(&self, q: f64) -> f64 {
        (q - self.intercept) / self.slope
    }

    #[inline(always)]
    fn consumer_surplus(&self, p: f64, shift: f64) -> f64 {
        let q = (self.intercept + shift + self.slope * p).max(0.0);
        q * q / (2.0 * -self.slope)
    }

    #[inline(always)]
    fn production_cost(&self, q: f64) -> f64 {
        let Linear { intercept, slope } = *self;
        if q <= 0.0 {
            return 0.0;
        }
        // S⁻¹(x) = (x − c)/d is positive for x > c
        let start = intercept.max(0.0);
        if q <= start {
            return 0.0;
        }
        ((q - intercept).powi(2) - (start - intercept).powi(2)) / (2.0 * slope)
    }
}

impl Elastic {
    /// ∫ Q(p) dp from `p_low` to `p_high` on the curve shifted by `shift` (see
    /// [`Curve::area_between`]).
    #[inline]
    pub fn area_between(&self, p_low: f64, p_high: f64, shift: f64) -> f64 {
        let k = self.area_scale();
        let prim = |p: f64| {
            if self.area_is_log() {
                k * p.ln()
            } else {
                self.primitive(k, p.powf(self.elasticity + 1.0))
            }
        };
        prim(p_high) - prim(p_low) + shift * (p_high - p_low)
    }

    /// k = Q̄ P̄^(−ε): the curve is Q = k P^ε.
    #[inline(always)]
    fn area_scale(&self) -> f64 {
        self.at_quantity * self.at_price.powf(-self.elasticity)
    }

    /// Whether ∫ k P^ε dP is k ln P (ε = −1, to 10⁻¹²).
    #[inline(always)]
    fn area_is_log(&self) -> bool {
        (self.elasticity + 1.0).abs() < 1e-12
    }

    /// The primitive k P^(ε+1)/(ε+1) of k P^ε given the power P^(ε+1) (ε ≠ −1).
    #[inline(always)]
    fn primitive(&self, k: f64, power: f64) -> f64 {
        k * power / (self.elasticity + 1.0)
    }

    /// What the consumer surplus at any price needs of the curve (ε ≠ −1): the scale k and the
    /// primitive at the reference price (two powers).
    #[inline(always)]
    fn surplus_constants(&self) -> (f64, f64) {
        let k = self.area_scale();
        (
            k,
            self.primitive(k, self.at_price.powf(self.elasticity + 1.0)),
        )
    }

    /// What the production cost of any quantity needs of the curve: ln P̄ and ln(ε/(1 + ε)).
    #[inline(always)]
    fn cost_constants(&self) -> (f64, f64) {
        let e = self.elasticity;
        (self.at_price.ln(), (e / (1.0 + e)).ln())
    }

    /// The logarithm of the production cost of `q` > 0 given [`Elastic::cost_constants`]:
    /// ∫_0^q P̄ (x/Q̄)^{1/ε} dx = q · S⁻¹(q) · ε/(1 + ε), in logs (the direct q^{1 + 1/ε}
    /// overflows for small elasticities, ε < 0.01, although the cost is finite).
    #[inline(always)]
    fn ln_cost(&self, (ln_price, ln_share): (f64, f64), q: f64) -> f64 {
        ln_price + q.ln() + (q / self.at_quantity).ln() / self.elasticity + ln_share
    }

    /// [`Form::production_cost`] of `q` given [`Elastic::cost_constants`] (nothing for q ≤ 0).
    #[inline(always)]
    fn cost_with(&self, constants: (f64, f64), q: f64) -> f64 {
        if q <= 0.0 {
            return 0.0;
        }
        self.ln_cost(constants, q).exp()
    }

    /// [`Form::consumer_surplus`] at `p` (ε ≠ −1) from [`Elastic::surplus_constants`] and the
    /// power p^(ε+1): `area_between(p, P̄, shift)`, prim(P̄) − prim(p) + shift (P̄ − p).
    #[inline(always)]
    fn surplus_from(&self, k: f64, top: f64, p: f64, power: f64, shift: f64) -> f64 {
        top - self.primitive(k, power) + shift * (self.at_price - p)
    }
}

/// A demand curve's consumer surplus ([`Form::consumer_surplus`]) with what does not depend on
/// the price worked out once: a constant-elasticity curve's scale and its primitive at the
/// reference price, two of the three powers of every call otherwise. The same bits as the
/// curve's.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Surplus {
    curve: Curve,
    /// [`Elastic::surplus_constants`] of a constant-elasticity curve (ε ≠ −1).
    constants: Option<(f64, f64)>,
}

impl Surplus {
    /// The consumer surplus on `demand`.
    pub fn of(demand: &Curve) -> Surplus {
        let constants = match demand.form() {
            Forms::Elastic(e) if !e.area_is_log() => Some(e.surplus_constants()),
            _ => None,
        };
        Surplus {
            curve: *demand,
            constants,
        }
    }

    /// The consumer surplus at `p` on the curve shifted by `shift` ([`Curve::consumer_surplus`]).
    #[inline(always)]
    pub fn at(&self, p: f64, shift: f64) -> f64 {
        match (self.curve.form(), self.constants) {
            (Forms::Elastic(e), Some((k, top))) => {
                e.surplus_from(k, top, p, p.powf(e.elasticity + 1.0), shift)
            }
            _ => self.curve.consumer_surplus(p, shift),
        }
    }
}

/// A supply curve's production cost ([`Form::production_cost`]) with what does not depend on the
/// quantity worked out once: a constant-elasticity curve's two constant logarithms, two of the
/// four of every call otherwise. The same bits as the curve's.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Cost {
    curve: Curve,
    /// [`Elastic::cost_constants`] of a constant-elasticity curve.
    constants: Option<(f64, f64)>,
}

impl Cost {
    /// The production cost on `supply`.
    pub fn of(supply: &Curve) -> Cost {
        let constants = match supply.form() {
            Forms::Elastic(e) => Some(e.cost_constants()),
            Forms::Linear(_) => None,
        };
        Cost {
            curve: *supply,
            constants,
        }
    }

    /// The cost of producing `q` ([`Curve::production_cost`]).
    #[inline(always)]
    pub fn at(&self, q: f64) -> f64 {
        match (self.curve.form(), self.constants) {
            (Forms::Elastic(e), Some(constants)) => e.cost_with(constants, q),
            _ => self.curve.production_cost(q),
        }
    }
}

impl Form for Elastic {
    #[inline(always)]
    fn quantity(&self, p: f64) -> f64 {
        if p <= 0.0 {
            if self.elasticity > 0.0 {
                0.0
            } else {
                f64::INFINITY
            }
        } else {
            self.at_quantity * (p / self.at_price).powf(self.elasticity)
        }
    }

    #[inline(always)]
    fn price_at(&self, q: f64) -> f64 {
        if q <= 0.0 {
            if self.elasticity < 0.0 {
                f64::INFINITY
            } else {
                0.0
            }
        } else {
            self.at_price * (q / self.at_quantity).powf(1.0 / self.elasticity)
        }
    }

    #[inline(always)]
    fn consumer_surplus(&self, p: f64, shift: f64) -> f64 {
        // no finite choke price: the area up to the reference price (only changes mean anything)
        self.area_between(p, self.at_price, shift)
    }

    #[inline(always)]
    fn production_cost(&self, q: f64) -> f64 {
        self.cost_with(self.cost_constants(), q)
    }

    /// The powers (P/P̄)^ε worked out together ([`crate::numeric::pow::pow_in_place`]), 64 at a
    /// time.
    fn quantity_many(&self, prices: &[f64], into: &mut [f64]) {
        let n = prices.len();
        let into = &mut into[..n];
        let mut powers = [0.0; POWERS_AT_ONCE];
        for start in (0..n).step_by(POWERS_AT_ONCE) {
            let end = (start + POWERS_AT_ONCE).min(n);
            let powers = &mut powers[..end - start];
            for (x, &p) in powers.iter_mut().zip(&prices[start..end]) {
                *x = p / self.at_price;
            }
            crate::numeric::pow::pow_in_place(powers, self.elasticity);
            for (l, &x) in (start..end).zip(powers.iter()) {
                into[l] = if prices[l] <= 0.0 {
                    self.quantity(prices[l])
                } else {
                    self.at_quantity * x
                };
            }
        }
    }

    /// The logarithms that do not depend on the quantity once, the exponentials worked out
    /// together ([`crate::numeric::exp::exp_in_place`]), 64 at a time.
    fn production_cost_many(&self, quantities: &[f64], into: &mut [f64]) {
        let n = quantities.len();
        let into = &mut into[..n];
        let constants = self.cost_constants();
        let mut logs = [0.0; POWERS_AT_ONCE];
        for start in (0..n).step_by(POWERS_AT_ONCE) {
            let end = (start + POWERS_AT_ONCE).min(n);
            let logs = &mut logs[..end - start];
            for (x, &q) in logs.iter_mut().zip(&quantities[start..end]) {
                // a quantity ≤ 0 costs nothing: its slot holds a number of no meaning
                *x = if q <= 0.0 {
                    0.0
                } else {
                    self.ln_cost(constants, q)
                };
            }
            crate::numeric::exp::exp_in_place(logs);
            for (l, &x) in (start..end).zip(logs.iter()) {
                into[l] = if quantities[l] <= 0.0 { 0.0 } else { x };
            }
        }
    }

    const TOGETHER: bool = true;

    /// The powers (Q/Q̄)^(1/ε) worked out together
    /// ([`crate::numeric::pow::pow_in_place`]), 64 at a time.
    fn price_at_many(&self, quantities: &mut [f64]) {
        let y = 1.0 / self.elasticity;
        let mut powers = [0.0; POWERS_AT_ONCE];
        for chunk in quantities.chunks_mut(POWERS_AT_ONCE) {
            let powers = &mut powers[..chunk.len()];
            for (x, q) in powers.iter_mut().zip(chunk.iter()) {
                *x = q / self.at_quantity;
            }
            crate::numeric::pow::pow_in_place(powers, y);
            for (q, &x) in chunk.iter_mut().zip(powers.iter()) {
                *q = if *q <= 0.0 {
                    self.price_at(*q)
                } else {
                    self.at_price * x
                };
            }
        }
    }

    /// The powers P^(ε+1) of [`Elastic::area_between`] worked out together
    /// ([`crate::numeric::pow::pow_in_place`]), 64 at a time; the area up to the
    /// reference price once.
    fn consumer_surplus_many(&self, prices: &[f64], shifts: &[f64], into: &mut [f64]) {
        if self.area_is_log() {
            return surplus_each(self, prices, shifts, into);
        }
        let n = prices.len();
        let (shifts, into) = (&shifts[..n], &mut into[..n]);
        let (k, top) = self.surplus_constants();
        let y = self.elasticity + 1.0;
        let mut powers = [0.0; POWERS_AT_ONCE];
        for start in (0..n).step_by(POWERS_AT_ONCE) {
            let end = (start + POWERS_AT_ONCE).min(n);
            let powers = &mut powers[..end - start];
            powers.copy_from_slice(&prices[start..end]);
            crate::numeric::pow::pow_in_place(powers, y);
            for (l, &power) in (start..end).zip(powers.iter()) {
                into[l] = self.surplus_from(k, top, prices[l], power, shifts[l]);
            }
        }
    }
}

/// A [`Curve`] dispatches on its form (one `match` per call).
impl Form for Curve {
    #[inline]
    fn quantity(&self, p: f64) -> f64 {
        Curve::quantity(self, p)
    }

    #[inline]
    fn price_at(&self, q: f64) -> f64 {
        Curve::price_at(self, q)
    }

    #[inline]
    fn consumer_surplus(&self, p: f64, shift: f64) -> f64 {
        on_form!(self, f => f.consumer_surplus(p, shift))
    }

    #[inline]
    fn production_cost(&self, q: f64) -> f64 {
        on_form!(self, f => f.production_cost(q))
    }

    #[inline]
    fn price_at_many(&self, quantities: &mut [f64]) {
        on_form!(self, f => f.price_at_many(quantities))
    }

    #[inline]
    fn quantity_many(&self, prices: &[f64], into: &mut [f64]) {
        on_form!(self, f => f.quantity_many(prices, into))
    }

    #[inline]
    fn production_cost_many(&self, quantities: &[f64], into: &mut [f64]) {
        on_form!(self, f => f.production_cost_many(quantities, into))
    }

    #[inline]
    fn consumer_surplus_many(&self, prices: &[f64], shifts: &[f64], into: &mut [f64]) {
        on_form!(self, f => f.consumer_surplus_many(prices, shifts, into))
    }
}

/// The market-clearing steady state where supply at the price equals demand at the price.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SteadyState {
    /// Steady-state price P*.
    pub price: f64,
    /// Steady-state quantity Q* = S(P*) = D(P*).
    pub quantity: f64,
}

/// Solves S(P) = D(P): closed form for two linear curves and for two constant-elasticity curves (in
/// logs), otherwise Brent's method on a bracket found by expansion (excess supply is increasing in
/// P). `None` when no positive crossing exists.
pub fn steady_state(demand: &Curve, supply: &Curve) -> Option<SteadyState> {
    let price = match (*demand, *supply) {
        (
            Curve::Linear {
                intercept: a,
                slope: b,
            },
            Curve::Linear {
                intercept: c,
                slope: d,
            },
        ) => (a - c) / (d - b),
        (
            Curve::ConstantElasticity {
                at_price: pd,
                at_quantity: qd,
                elasticity: ed,
            },
            Curve::ConstantElasticity {
                at_price: ps,
                at_quantity: qs,
                elasticity: es,
            },
        ) => {
            // ln qd + ed (ln P − ln pd) = ln qs + es (ln P − ln ps), solved for ln P: exact to
            // rounding even for tiny elasticities, where a root finder's stopping rule on the
            // excess demand (≈ (ed − es)·δ for a relative error δ in P) would leave δ ≈ 1e-9
            let ln_p = ((qd / qs).ln() - ed * pd.ln() + es * ps.ln()) / (es - ed);
            ln_p.exp()
        }
        _ => {
            let guess = match *demand {
                Curve::ConstantElasticity { at_price, .. } => at_price,
                Curve::Linear { intercept, slope } => 0.5 * intercept / -slope,
            };
            let excess_demand = |p: f64| {
                let d = demand.quantity(p);
                let s = supply.quantity(p);
                // scale-free form keeps the root finder well conditioned
                (d - s) / (d + s + 1e-300)
            };
            crate::numeric::root_decreasing(excess_demand, guess, 1e-14 * guess.max(1.0))?
        }
    };
    let quantity = demand.quantity(price);
    if price.is_finite() && price > 0.0 && quantity.is_finite() && quantity > 0.0 {
        Some(SteadyState { price, quantity })
    } else {
        None
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn prices_worked_out_together_are_each_prices_bits() {
        // an identity (no outside source): the batch's powers are libm's (numeric::pow), so every
        // price has the bits of `price_at` alone, the ends of the curve (q ≤ 0, NaN) included
        for elasticity in [-0.25, -0.3, -1.5, 0.2, 0.7] {
            let e = Elastic {
                at_price: 210.0,
                at_quantity: 480.0,
                elasticity,
            };
            let mut q: Vec<f64> = (0..2_000)
                .map(|i| 480.0 * (0.3 + 0.0007 * i as f64))
                .collect();
            q.extend([
                0.0,
                -0.0,
                -5.0,
                f64::NAN,
                1e-300,
                1e300,
                f64::INFINITY,
                480.0,
            ]);
            // the curve's exponent hidden from the optimiser, as it is when read from a file
            let e = std::hint::black_box(e);
            let want: Vec<u64> = q.iter().map(|&x| e.price_at(x).to_bits()).collect();
            e.price_at_many(&mut q);
            let got: Vec<u64> = q.iter().map(|x| x.to_bits()).collect();
            assert_eq!(got, want, "elasticity {elasticity}");
        }
    }

    #[test]
    fn surpluses_worked_out_together_are_each_surplus_bits() {
        // an identity (no outside source), as above: every consumer surplus has the bits of
        // `consumer_surplus` alone, ε = −1 (the logarithm) and the ends of the curve included,
        // over lengths that end inside a batch and on its edge
        for elasticity in [-0.25, -0.3, -1.0, -1.5, 0.2] {
            let e = Elastic {
                at_price: 210.0,
                at_quantity: 480.0,
                elasticity,
            };
            let e = std::hint::black_box(e);
            for n in [0, 1, 63, 64, 65, 1_000] {
                let mut prices: Vec<f64> =
                    (0..n).map(|i| 210.0 * (0.5 + 0.001 * i as f64)).collect();
                let shifts: Vec<f64> = (0..n).map(|i| (i % 7) as f64 - 3.0).collect();
                for (i, x) in [0.0, -0.0, -5.0, f64::NAN, 1e-300, 1e300, f64::INFINITY]
                    .into_iter()
                    .enumerate()
                {
                    if i < n {
                        prices[i * n / 7] = x;
                    }
                }
                let want: Vec<u64> = (prices.iter().zip(&shifts))
                    .map(|(&p, &s)| e.consumer_surplus(p, s).to_bits())
                    .collect();
                let mut got = vec![0.0; n];
                e.consumer_surplus_many(&prices, &shifts, &mut got);
                let got: Vec<u64> = got.iter().map(|x| x.to_bits()).collect();
                assert_eq!(got, want, "elasticity {elasticity}, {n} prices");
            }
        }
    }

    #[test]
    fn quantities_and_costs_worked_out_together_are_each_ones_bits() {
        // an identity (no outside source), as above: every quantity and every production cost has
        // the bits of `quantity` and `production_cost` alone (`Cost::at` too), small elasticities
        // (the cost in logs) and the ends of the curve included, on and off a batch's edge
        for elasticity in [0.005, 0.2, 0.7, 1.0, 3.0] {
            let e = Elastic {
                at_price: 210.0,
                at_quantity: 480.0,
                elasticity,
            };
            let e = std::hint::black_box(e);
            let cost = Cost::of(&Curve::ConstantElasticity {
                at_price: 210.0,
                at_quantity: 480.0,
                elasticity,
            });
            for n in [0, 1, 63, 64, 65, 1_000] {
                let mut xs: Vec<f64> = (0..n).map(|i| 150.0 + 0.3 * i as f64).collect();
                for (i, x) in [0.0, -0.0, -5.0, f64::NAN, 1e-300, 1e300, f64::INFINITY]
                    .into_iter()
                    .enumerate()
                {
                    if i < n {
                        xs[i * n / 7] = x;
                    }
                }
                let bits = |v: &[f64]| v.iter().map(|x| x.to_bits()).collect::<Vec<u64>>();
                let mut got = vec![0.0; n];
                e.quantity_many(&xs, &mut got);
                let want: Vec<f64> = xs.iter().map(|&p| e.quantity(p)).collect();
                assert_eq!(bits(&got), bits(&want), "quantities, ε {elasticity}, {n}");
                e.production_cost_many(&xs, &mut got);
                let want: Vec<f64> = xs.iter().map(|&q| e.production_cost(q)).collect();
                assert_eq!(bits(&got), bits(&want), "costs, ε {elasticity}, {n}");
                let kept: Vec<f64> = xs.iter().map(|&q| cost.at(q)).collect();
                assert_eq!(bits(&kept), bits(&want), "Cost::at, ε {elasticity}, {n}");
            }
        }
    }

    #[test]
    fn the_surplus_with_its_constants_once_is_the_curves() {
        // an identity (no outside source): `Surplus::at` has the bits of `consumer_surplus` on
        // both forms, ε = −1 (the logarithm, no constants kept) and the ends of the curve included
        let mut curves: Vec<Curve> = [-0.25, -1.0, -1.7, 0.3]
            .into_iter()
            .map(|elasticity| Curve::ConstantElasticity {
                at_price: 210.0,
                at_quantity: 480.0,
                elasticity: std::hint::black_box(elasticity),
            })
            .collect();
        curves.push(Curve::linear_at_point(210.0, 480.0, -0.25));
        for demand in &curves {
            let surplus = Surplus::of(demand);
            for p in [
                0.0,
                -0.0,
                -4.0,
                1e-300,
                150.0,
                210.0,
                262.5,
                1e300,
                f64::NAN,
            ] {
                for shift in [0.0, -7.5, 12.0] {
                    assert_eq!(
                        surplus.at(p, shift).to_bits(),
                        demand.consumer_surplus(p, shift).to_bits(),
                        "{demand:?} at {p}, shift {shift}"
                    );
                }
            }
        }
    }

    #[test]
    fn linear_steady_state_closed_form() {
        // Q_d = 120 − 0.8 P, Q_s = −10 + 0.5 P → P* = 130/1.3 = 100, Q* = 40 (algebra)
        let d = Curve::Linear {
            intercept: 120.0,
            slope: -0.8,
        };
        let s = Curve::Linear {
            intercept: -10.0,
            slope: 0.5,
        };
        let ss = steady_state(&d, &s).unwrap();
        assert_relative_eq!(ss.price, 100.0, max_relative = 1e-14);
        assert_relative_eq!(ss.quantity, 40.0, max_relative = 1e-14);
    }

    #[test]
    fn constant_elasticity_steady_state_closed_form() {
        // D = 100 (P/50)^-0.2, S = 80 (P/50)^0.3 → (P/50)^0.5 = 100/80 → P = 50·1.5625
        let d = Curve::ConstantElasticity {
            at_price: 50.0,
            at_quantity: 100.0,
            elasticity: -0.2,
        };
        let s = Curve::ConstantElasticity {
            at_price: 50.0,
            at_quantity: 80.0,
            elasticity: 0.3,
        };
        let ss = steady_state(&d, &s).unwrap();
        assert_relative_eq!(ss.price, 50.0 * 1.5625, max_relative = 1e-12);
    }

    #[test]
    fn inverse_round_trips() {
        let curves = [
            Curve::Linear {
                intercept: 120.0,
                slope: -0.8,
            },
            Curve::ConstantElasticity {
                at_price: 90.0,
                at_quantity: 40.0,
                elasticity: -0.25,
            },
            Curve::ConstantElasticity {
                at_price: 90.0,
                at_quantity: 40.0,
                elasticity: 0.4,
            },
        ];
        for c in curves {
            for p in [10.0, 55.5, 120.0] {
                let q = c.quantity(p);
                assert_relative_eq!(c.price_at(q), p, max_relative = 1e-12);
            }
        }
    }

    #[test]
    fn linear_surplus_is_the_triangle() {
        // consumer surplus of linear demand = ½ · (choke − P) · D(P) (triangle area, any textbook)
        let d = Curve::Linear {
            intercept: 120.0,
            slope: -0.8,
        };
        let p = 100.0;
        let triangle = 0.5 * (150.0 - p) * d.quantity(p);
        assert_relative_eq!(d.consumer_surplus(p, 0.0), triangle, max_relative = 1e-14);
        // production cost with a negative intercept: trapezoid under S⁻¹ from 0 to q
        let s = Curve::Linear {
            intercept: -10.0,
            slope: 0.5,
        };
        let q = 40.0;
        let trapezoid = 0.5 * (s.price_at(0.0) + s.price_at(q)) * q;
        assert_relative_eq!(s.production_cost(q), trapezoid, max_relative = 1e-14);
        // positive intercept: the first 10 units cost nothing, the rest a triangle
        let s2 = Curve::Linear {
            intercept: 10.0,
            slope: 0.5,
        };
        assert_relative_eq!(
            s2.production_cost(40.0),
            0.5 * 30.0 * s2.price_at(40.0),
            max_relative = 1e-14
        );
    }

    #[test]
    fn constant_elasticity_cost_matches_quadrature() {
        let s = Curve::ConstantElasticity {
            at_price: 90.0,
            at_quantity: 40.0,
            elasticity: 0.4,
        };
        // midpoint rule on the inverse curve
        let n = 200_000;
        let q = 35.0;
        let h = q / n as f64;
        let sum: f64 = (0..n).map(|i| s.price_at((i as f64 + 0.5) * h) * h).sum();
        assert_relative_eq!(s.production_cost(q), sum, max_relative = 1e-6);
    }

    #[test]
    fn constant_elasticity_cost_is_finite_for_small_elasticities() {
        // cost = q·S⁻¹(q)·e/(1 + e) (the integral of the power function, by hand); the textbook form
        // at_price·at_quantity^(−1/e)·q^(1+1/e)/(1 + 1/e) overflows for e = 1e-3 at q = 480
        for e in [1e-3, 5e-3, 0.009, 0.2, 10.0] {
            let s = Curve::ConstantElasticity {
                at_price: 210.0,
                at_quantity: 480.0,
                elasticity: e,
            };
            for q in [470.0, 480.0, 481.0] {
                let cost = s.production_cost(q);
                let want = q * s.price_at(q) * e / (1.0 + e);
                assert!(cost.is_finite(), "e = {e}, q = {q}");
                assert_relative_eq!(cost, want, max_relative = 1e-12);
            }
        }
    }

    #[test]
    fn calibration_reproduces_point_and_elasticity() {
        let c = Curve::linear_at_point(90.0, 40.0, -0.2);
        assert_relative_eq!(c.quantity(90.0), 40.0, max_relative = 1e-14);
        assert_relative_eq!(c.elasticity_at(90.0), -0.2, max_relative = 1e-14);
    }
}
