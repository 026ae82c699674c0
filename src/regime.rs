//! The regimes a policy creates around the steady state, as the policy rules and the stability
//! analysis share them: each rule adds its own (`policies::Rule::regimes`) to a [`Regimes`], asking
//! the market's maps (`stability::Setup`, through [`RegimeMaps`]) what it needs; `stability`
//! linearises them. This module imports neither side, so the rules do not import `stability`.

/// |ρ − 1| ≤ this counts as neutral (a unit root); below 1 − tol is stable, above 1 + tol unstable.
pub const NEUTRAL_TOLERANCE: f64 = 1e-9;

/// Why no stability analysis could be made.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum StabilityError {
    /// The linearisation has no finite value.
    #[error("cannot linearise the {regime} regime: {reason}")]
    Linearisation {
        /// The regime.
        regime: String,
        /// Why.
        reason: String,
    },
    /// The map of a regime has no fixed point.
    #[error("no steady state in the {regime} regime: {reason}")]
    NoSteadyState {
        /// The regime.
        regime: String,
        /// Why.
        reason: String,
    },
}

/// How the producer price answers the planting price inside one regime.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum RegimePrice {
    /// The market clears the harvest less a constant net offtake: P = D⁻¹(S(P^e) − offtake).
    Free {
        /// Net quantity taken off the market each period: the agency's purchases, or a binding
        /// export quota; negative for a binding import quota (it adds to the harvest).
        offtake: f64,
    },
    /// The market price is pinned (a defended floor, band edge or ceiling, or a trade parity while
    /// traders import or export).
    Pinned(f64),
    /// The producer price is pinned by a payment (a deficiency payment); the market clears freely.
    Paid(f64),
}

/// One regime to linearise.
#[derive(Debug, Clone, PartialEq)]
pub struct RegimeCase {
    /// Display name.
    pub name: String,
    /// Its clearing function.
    pub clearing: RegimePrice,
    /// True for the regime that holds the steady state.
    pub holds: bool,
    /// False when this regime holds but no steady state with finite stock exists.
    pub finite: bool,
    /// The eigenvalue of the agency's stock in this regime (it does not feed back on prices).
    pub stock_eigenvalue: Option<f64>,
    /// Explanation for the reader.
    pub note: Option<String>,
    /// Farmers plant on an announced floor in this regime (false for the market left alone).
    pub floor_applies: bool,
}

/// What a rule adds its regimes to (`policies::Rule::regimes`): the setup, the free market's
/// steady producer price, the regimes holding the steady state so far and the others. Rules are
/// asked in acting order; the first that holds the steady state fills `holding`.
#[derive(Debug)]
pub struct Regimes<'a> {
    /// The market and policy's maps (stability's `Setup`).
    pub maps: &'a dyn RegimeMaps,
    /// The free market's steady producer price.
    pub free_price: f64,
    /// The quantity unit, for notes.
    pub unit: &'a str,
    /// The regime(s) holding the steady state (empty until a rule claims it).
    pub holding: Vec<RegimeCase>,
    /// The other regimes a shock can bring.
    pub secondary: Vec<RegimeCase>,
    /// Border measures (free trade unless `[border]` sets them; they act on a trading market).
    pub border: crate::trade::BorderMeasures,
}

impl Regimes<'_> {
    /// A regime that does not hold the steady state (a rule sets `holds` on the one that does).
    pub fn case(name: &str, clearing: RegimePrice, note: Option<String>) -> RegimeCase {
        RegimeCase {
            name: name.into(),
            clearing,
            holds: false,
            finite: true,
            stock_eigenvalue: None,
            note,
            floor_applies: true,
        }
    }

    /// `p` lies below `edge` (beyond rounding).
    pub fn below(p: f64, edge: f64) -> bool {
        p < edge * (1.0 - 1e-12)
    }

    /// The market price at rest when the producer price is held at `p` under `clearing` (a payment
    /// pins the producer price while the market clears the harvest planted on it).
    pub fn market_price_at_rest(&self, clearing: RegimePrice, p: f64) -> f64 {
        self.maps.market_price_at_rest(clearing, p)
    }

    /// The regime that holds when the price would settle below a price `edge` the agency defends
    /// by buying: pinned with a settled stock, no finite stock, or the free market with a full
    /// store.
    pub fn purchase_holds(&self, name: &str, edge: f64) -> Result<Vec<RegimeCase>, StabilityError> {
        self.maps.purchase_holds(name, edge, self.unit)
    }

    /// The steady producer price of the map in regime `clearing`, searched from `guess`.
    pub fn fixed_point(&self, clearing: RegimePrice, guess: f64) -> Option<f64> {
        self.maps.fixed_point(clearing, guess)
    }
}

/// What a rule may ask of the market's maps while it lists its regimes (implemented by
/// `stability::Setup`).
pub trait RegimeMaps: std::fmt::Debug {
    /// The market price at rest when the producer price is held at `p` under `clearing`.
    fn market_price_at_rest(&self, clearing: RegimePrice, p: f64) -> f64;
    /// The regime(s) that hold when the price would settle below a price `edge` the agency defends
    /// by buying (`unit`: the quantity unit for the notes).
    fn purchase_holds(
        &self,
        name: &str,
        edge: f64,
        unit: &str,
    ) -> Result<Vec<RegimeCase>, StabilityError>;
    /// The steady producer price of the map in regime `clearing`, searched from `guess`.
    fn fixed_point(&self, clearing: RegimePrice, guess: f64) -> Option<f64>;
}
