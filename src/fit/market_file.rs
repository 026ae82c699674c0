//! Writing the fitted market as a market file (the format of the interface page), with the fit
//! statistics and the data's SHA-256 as comments.
//!
//! - Linear form: `[demand]`/`[supply]` with `form = "linear"`, `intercept`, `slope`. Shifters are held
//!   at their value in the projection season (default the last season; `--at-season mean`: their
//!   sample means) and folded into the intercept: intercept = α + Σ coefficient × held value.
//!   Stochastic shifters are held at their sample means and their fitted contribution's variance
//!   (coefficient² × sample variance) is added to the equation's shock variance.
//! - Supply = area × trend yield: the area curve times the trend yield of the projection season; the
//!   yield's variation about its trend becomes `yield_cv`, the area residual (times the trend yield)
//!   `supply_sd`.
//! - Partial adjustment Q_t = γ + δ·P_{t−1} + θ·Q_{t−1} (Nerlove 1958): its deterministic part is the
//!   linear supply Q = a + b·P^e with a = γ/(1 − θ), b = δ/(1 − θ) and adaptive expectations of weight
//!   λ = 1 − θ (substitute P^e_t = P^e_{t−1} + λ(P_{t−1} − P^e_{t−1}) into Q_t = a + b·P^e_t and
//!   eliminate P^e_{t−1} = (Q_{t−1} − a)/b). `initial_expected_price` = θ·(Q_T − a)/b + (1 − θ)·P_T
//!   continues the recursion from the last season T. Shocks differ: the equation's disturbance
//!   persists through Q_{t−1}, the engine's supply shock hits one harvest only.
//! - Log form: `form = "constant-elasticity"` calibrated at the sample means: `at_price` is the mean
//!   price (for supply the mean lagged price), `at_quantity` the fitted quantity there with shifters at
//!   their means, `elasticity` the log-log slope. Any point on a constant-elasticity curve defines the
//!   same curve, so this is the fitted curve exactly.
//! - Shocks: linear: `supply_sd`, `demand_sd` = the residual standard deviations (quantity units). Log:
//!   the supply residual is a log deviation, so it becomes the multiplicative yield factor:
//!   `yield_cv` = sqrt(exp(s²) − 1), the coefficient of variation of a lognormal with log-sd s (≈ s for
//!   small s); the demand residual s_d (in logs) becomes the additive `demand_sd` = at_quantity · s_d,
//!   its first-order size in quantity units at the calibration point.
//! - `[expectations] rule = "naive"` (supply was estimated on last season's price), `[run]` with
//!   40 periods, the last observed price as `initial_price`, one replication, seed 42.

use super::data::printable;
use super::{EquationFit, FitError, FitForm, FitReport, SupplyModel};
use crate::fit::render::fmt_sig;
use crate::output::fmt_full;

/// Names written into `[market]`.
#[derive(Debug, Clone, PartialEq)]
pub struct MarketNames {
    /// Free-text market name.
    pub name: String,
    /// Quantity unit, e.g. `kt`.
    pub quantity_unit: String,
    /// Price unit, e.g. `crowns per t`.
    pub price_unit: String,
}

fn toml_str(s: &str) -> String {
    toml::Value::String(s.to_string()).to_string()
}

/// A finite float in TOML syntax, rounded to 12 significant digits (far below any standard error;
/// keeps `100.9282` from printing as `100.92819999999999`), always a float literal, never an integer.
fn toml_f64(x: f64) -> String {
    let rounded: f64 = format!("{x:.11e}").parse().unwrap_or(x);
    format!("{rounded:?}")
}

fn finite(what: &str, x: f64) -> Result<f64, FitError> {
    if x.is_finite() {
        Ok(x)
    } else {
        Err(FitError::Market {
            message: format!("{what} is not a finite number"),
        })
    }
}

fn equation_comments(out: &mut String, label: &str, e: &EquationFit, price: &str, form: FitForm) {
    let dep = printable(e.dependent.trim_start_matches("ln(").trim_end_matches(')'));
    let (q, p) = match form {
        FitForm::Linear => (dep, price.to_string()),
        FitForm::Log => (format!("ln({dep})"), format!("ln({price})")),
    };
    let method = match e.method {
        super::FitMethod::Ols => "OLS".to_string(),
        super::FitMethod::TwoStage => format!(
            "2SLS, instruments: {}",
            e.instruments
                .iter()
                .map(|i| printable(i))
                .collect::<Vec<_>>()
                .join(", ")
        ),
    };
    let extra = if e.core_terms > 2 {
        format!(", lagged {q}")
    } else {
        String::new()
    };
    out.push_str(&format!(
        "# {label}: {q} on {p}{extra}{} by {method}; seasons {}-{} (n = {})\n",
        if e.terms.len() > e.core_terms {
            " and shifters"
        } else {
            ""
        },
        e.first_season,
        e.last_season,
        e.observations
    ));
    out.push_str("#   term                  estimate      std_error  robust(HC1)       t\n");
    for t in &e.terms {
        out.push_str(&format!(
            "#   {:<18} {:>12} {:>12} {:>12} {:>9}\n",
            printable(&t.name),
            fmt_sig(t.estimate),
            fmt_sig(t.std_error),
            fmt_sig(t.robust_std_error),
            fmt_sig(t.t)
        ));
    }
    out.push_str(&format!(
        "#   R² = {}, residual sd = {}, Durbin–Watson = {}, elasticity at means = {}\n",
        fmt_sig(e.r_squared),
        fmt_sig(e.residual_sd),
        fmt_sig(e.durbin_watson),
        fmt_sig(e.elasticity_at_means)
    ));
    for s in &e.shifters {
        out.push_str(&format!(
            "#   shifter `{}` held at {} = {}{}\n",
            printable(&s.name),
            s.held_how,
            fmt_sig(s.held_at),
            if s.stochastic {
                format!(
                    "; adds variance {} (coefficient² × sample variance {})",
                    fmt_sig(s.contribution_variance()),
                    fmt_sig(s.sample_variance)
                )
            } else {
                String::new()
            }
        ));
    }
}

fn refuse(message: String) -> FitError {
    FitError::Market { message }
}

/// The first line of the block of the keys' standard errors; each key follows on its own line as
/// `#   KEY = STANDARD_ERROR` (`sensitivity --range KEY=fit` reads them).
pub const STANDARD_ERRORS_HEADER: &str = "# standard errors of the keys below";

impl FitReport {
    /// The classical standard error of each key written as an estimate: the price coefficient of
    /// each curve (linear: `slope`, times the trend yield for a supply of area × yield, the yield
    /// taken as known; log: `elasticity`). The long-run slope δ/(1 − θ) of partial adjustment gets
    /// none (it would need the covariance of δ and θ); nor do intercepts with shifters held.
    fn standard_error_comments(&self, o: &mut String, theta: f64, area_factor: f64) {
        let (d, s) = (&self.demand, &self.supply);
        let mut rows: Vec<(&str, f64)> = Vec::new();
        match self.form {
            FitForm::Linear => {
                rows.push(("demand.slope", d.terms[1].std_error));
                if theta == 0.0 {
                    rows.push(("supply.slope", s.terms[1].std_error * area_factor));
                }
            }
            FitForm::Log => {
                rows.push(("demand.elasticity", d.terms[1].std_error));
                rows.push(("supply.elasticity", s.terms[1].std_error));
            }
        }
        rows.retain(|(_, se)| se.is_finite() && *se > 0.0);
        if rows.is_empty() {
            return;
        }
        o.push_str(&format!(
            "#\n{STANDARD_ERRORS_HEADER} (classical; `sensitivity --range KEY=fit` takes the value ± two of them):\n"
        ));
        for (key, se) in rows {
            o.push_str(&format!("#   {key} = {}\n", fmt_full(se)));
        }
    }

    /// The market file text (valid TOML), or an error when the estimates cannot make a valid market
    /// (a demand curve that does not slope down, a supply curve that does not slope up, a linear demand
    /// curve with no positive quantity, a partial-adjustment θ outside (0, 1)).
    pub fn market_toml(&self, names: &MarketNames) -> Result<String, FitError> {
        let (d, s) = (&self.demand, &self.supply);
        let what = match self.form {
            FitForm::Linear => "slope",
            FitForm::Log => "elasticity",
        };
        let hint = "the data may not identify the curve; try shifters, --method 2sls with supply-only shifters, or a longer history";
        if d.slope().is_nan() || d.slope() >= 0.0 {
            return Err(refuse(format!(
                "the estimated demand {what} is {}, but a market file needs a demand {what} < 0 ({hint})",
                fmt_sig(d.slope())
            )));
        }
        if s.slope().is_nan() || s.slope() <= 0.0 {
            return Err(refuse(format!(
                "the estimated supply {what} on the lagged price is {}, but a market file needs a supply {what} > 0 ({hint})",
                fmt_sig(s.slope())
            )));
        }
        // partial adjustment: divide by (1 − θ)
        let theta = match &self.partial_adjustment {
            Some(pa) => {
                if self.form == FitForm::Log {
                    return Err(refuse(
                        "partial adjustment in log form cannot be written as a market: the engine's adaptive expectations are in price levels, not logs; use --form linear for --out (the report above is still the estimate)".into(),
                    ));
                }
                if !(pa.theta > 0.0 && pa.theta < 1.0) {
                    return Err(refuse(format!(
                        "the estimated partial-adjustment coefficient θ on lagged_quantity is {}, but a market file needs 0 < θ < 1 (θ ≤ 0: no adjustment lag, use the lagged-price model; θ ≥ 1: no long-run supply curve)",
                        fmt_sig(pa.theta)
                    )));
                }
                pa.theta
            }
            None => 0.0,
        };
        let yield_at = self.yield_trend.as_ref().map(|y| y.at_projection);
        let area_factor = yield_at.unwrap_or(1.0);
        let last_price = finite("the last observed price", self.data.last_price)?;

        let mut o = String::new();
        o.push_str(&format!(
            "# Market estimated by `furrow fit` from {}\n",
            printable(&self.data.file)
        ));
        o.push_str(&format!("# data sha256: {}\n", self.data.sha256));
        o.push_str(&format!(
            "# Caution: {}\n",
            crate::CAUTION.replace('\n', " ")
        ));
        o.push_str(&format!(
            "# form: {}; standard errors: classical and HC1 robust (White 1980, MacKinnon and White 1985)\n",
            match self.form {
                FitForm::Linear => "linear (levels)",
                FitForm::Log => "log-linear (constant elasticity)",
            }
        ));
        o.push_str(&format!(
            "# {}\n#\n",
            match self.projection_season {
                Some(season) => format!(
                    "projection season {season}: trend and other deterministic shifters are held at their value in {season}"
                ),
                None => "shifters are held at their sample means".into(),
            }
        ));
        equation_comments(&mut o, "demand", d, "price", self.form);
        o.push_str("#\n");
        equation_comments(&mut o, "supply", s, "lagged_price", self.form);
        if let Some(pa) = &self.partial_adjustment {
            o.push_str(&format!(
                "#   partial adjustment (Nerlove 1958): θ = {} (se {}); short-run elasticity {}, long-run {} = short-run / (1 − θ)\n",
                fmt_sig(pa.theta),
                fmt_sig(pa.theta_std_error),
                fmt_sig(pa.short_run_elasticity),
                fmt_sig(pa.long_run_elasticity)
            ));
        }
        if let Some(y) = &self.yield_trend {
            o.push_str(&format!(
                "#\n# yield: `{}` on the season ({} trend), slope {} a season (se {}), residual sd {}; trend yield {} in the projection season; yield cv about the trend {}\n",
                printable(&y.column),
                y.form,
                fmt_sig(y.slope),
                fmt_sig(y.slope_std_error),
                fmt_sig(y.residual_sd),
                fmt_sig(y.at_projection),
                fmt_sig(y.yield_cv)
            ));
            o.push_str("# supply below = the area curve × the trend yield\n");
        }
        if let Some(b) = &self.balance {
            o.push_str("#\n");
            if b.identity_checked {
                o.push_str(&format!(
                    "# balance sheet: production + imports − exports − stock change = use holds in every season (largest gap {}, tolerance {} of use)\n",
                    fmt_sig(b.largest_gap),
                    b.tolerance
                ));
            }
            o.push_str(if self.yield_trend.is_some() {
                "# demand was estimated on domestic use, supply on the area (times the trend yield)\n"
            } else {
                "# demand was estimated on domestic use, supply on production\n"
            });
            if let Some(t) = &b.trade {
                o.push_str(&format!(
                    "# LEFT OUT: trade (imports {} a season on average in {} seasons, exports {} in {} seasons): this market is closed, harvest = use; the [trade] section waits for the open-economy model\n",
                    fmt_sig(t.imports_mean),
                    t.import_seasons,
                    fmt_sig(t.exports_mean),
                    t.export_seasons
                ));
                if let Some(tp) = &t.parity {
                    let opt = |x: Option<f64>| {
                        x.map(fmt_sig)
                            .unwrap_or_else(|| "none (no such season)".into())
                    };
                    o.push_str(&format!(
                        "#   from `{}`, a [trade] section would hold: world_price = {} (sample mean), world_price_cv = {}, world_price_persistence = {} (lag-1 autocorrelation), import_cost = {} (median P − W in import seasons), export_cost = {} (median W − P in export seasons)\n",
                        printable(&tp.column),
                        fmt_sig(tp.world_price),
                        fmt_sig(tp.world_price_cv),
                        fmt_sig(tp.world_price_persistence),
                        opt(tp.import_cost),
                        opt(tp.export_cost)
                    ));
                }
            }
            if b.stock_change_mean != 0.0 {
                o.push_str(&format!(
                    "# LEFT OUT: stock changes (mean {} a season): no private stocks in this market\n",
                    fmt_sig(b.stock_change_mean)
                ));
            }
        }
        self.standard_error_comments(&mut o, theta, area_factor);
        o.push_str("#\n");

        o.push_str("[market]\n");
        o.push_str(&format!("name = {}\n", toml_str(&names.name)));
        o.push_str(&format!(
            "quantity_unit = {}\n",
            toml_str(&names.quantity_unit)
        ));
        o.push_str(&format!("price_unit = {}\n\n", toml_str(&names.price_unit)));

        let yield_cv_part = self.yield_trend.as_ref().map(|y| y.yield_cv);
        let held = "plus shifters where the comments above say";
        let shocks = match self.form {
            FitForm::Linear => {
                let di = finite("the demand intercept", d.held_intercept())?;
                if di <= 0.0 {
                    return Err(refuse(format!(
                        "the demand intercept with the shifters held is {}, so demand is never positive ({hint})",
                        fmt_sig(di)
                    )));
                }
                let si = finite("the supply intercept", s.held_intercept())?;
                o.push_str("[demand]  # Q = intercept + slope * P\nform = \"linear\"\n");
                o.push_str(&format!(
                    "intercept = {}  # estimated intercept {} {held}\n",
                    toml_f64(di),
                    fmt_full(d.terms[0].estimate)
                ));
                o.push_str(&format!(
                    "slope = {}\n\n",
                    toml_f64(finite("a slope", d.slope())?)
                ));
                let scale = area_factor / (1.0 - theta);
                let mut note = format!(
                    "estimated intercept {} {held}",
                    fmt_full(s.terms[0].estimate)
                );
                if theta > 0.0 {
                    note.push_str(", divided by (1 − θ)");
                }
                if yield_at.is_some() {
                    note.push_str(", times the trend yield");
                }
                o.push_str("[supply]  # Q = intercept + slope * P^e\nform = \"linear\"\n");
                o.push_str(&format!(
                    "intercept = {}  # {note}\n",
                    toml_f64(finite("the supply intercept", si * scale)?)
                ));
                o.push_str(&format!(
                    "slope = {}{}\n\n",
                    toml_f64(finite("a slope", s.slope() * scale)?),
                    match (theta > 0.0, yield_at.is_some()) {
                        (true, true) => "  # δ / (1 − θ) × trend yield",
                        (true, false) => "  # long-run slope δ / (1 − θ)",
                        (false, true) => "  # area slope × trend yield",
                        _ => "",
                    }
                ));
                let mut sh = format!(
                    "supply_sd = {}  # supply residual sd{}{}\n",
                    toml_f64(finite("the supply shock sd", s.shock_sd() * area_factor)?),
                    if s.stochastic_variance() > 0.0 {
                        " with the stochastic shifters' variance"
                    } else {
                        ""
                    },
                    if yield_at.is_some() {
                        ", times the trend yield (quantity units)"
                    } else {
                        " (quantity units)"
                    }
                );
                sh.push_str(&format!(
                    "demand_sd = {}  # demand residual sd{} (quantity units)\n",
                    toml_f64(finite("the demand shock sd", d.shock_sd())?),
                    if d.stochastic_variance() > 0.0 {
                        " with the stochastic shifters' variance"
                    } else {
                        ""
                    }
                ));
                if let Some(cv) = yield_cv_part {
                    sh.push_str(&format!(
                        "yield_cv = {}  # yield about its trend\n",
                        toml_f64(finite("yield_cv", cv)?)
                    ));
                }
                sh
            }
            FitForm::Log => {
                let mut at_q = [0.0; 2];
                for (i, (sec, e, pname, factor)) in [
                    ("demand", d, "price", 1.0),
                    ("supply", s, "lagged price", area_factor),
                ]
                .into_iter()
                .enumerate()
                {
                    let at_p = finite("a mean price", e.mean_price)?;
                    let q = finite(
                        "a calibration quantity",
                        (e.held_intercept() + e.slope() * at_p.ln()).exp() * factor,
                    )?;
                    at_q[i] = q;
                    o.push_str(&format!(
                        "[{sec}]  # Q = at_quantity * (P / at_price)^elasticity\nform = \"constant-elasticity\"\n"
                    ));
                    o.push_str(&format!(
                        "at_price = {}  # sample mean {pname}\n",
                        toml_f64(at_p)
                    ));
                    o.push_str(&format!(
                        "at_quantity = {}  # fitted quantity at at_price, shifters held{}\n",
                        toml_f64(q),
                        if factor != 1.0 {
                            ", times the trend yield"
                        } else {
                            ""
                        }
                    ));
                    o.push_str(&format!("elasticity = {}\n\n", toml_f64(e.slope())));
                }
                let sd_s = finite("the supply shock sd", s.shock_sd())?;
                let sd_d = finite("the demand shock sd", d.shock_sd())?;
                // log variances add: the area (or harvest) residual and the yield about its trend
                let yield_var = yield_cv_part.map(|cv| (cv * cv).ln_1p()).unwrap_or(0.0);
                let total = sd_s * sd_s + yield_var;
                format!(
                    "yield_cv = {}  # from the supply log shock sd {}{}: cv of a lognormal factor = sqrt(exp(sd^2) - 1)\ndemand_sd = {}  # demand log shock sd {} times demand at_quantity (first-order, quantity units)\n",
                    toml_f64(finite("yield_cv", total.exp_m1().sqrt())?),
                    fmt_sig(sd_s),
                    if yield_var > 0.0 { " and the yield's log variance about its trend" } else { "" },
                    toml_f64(finite("demand_sd", sd_d * at_q[0])?),
                    fmt_sig(sd_d)
                )
            }
        };

        match (&self.partial_adjustment, self.supply_model) {
            (Some(pa), SupplyModel::PartialAdjustment) => {
                let a = s.held_intercept() / (1.0 - theta);
                let b = s.slope() / (1.0 - theta);
                let pe = theta * (self.last_supply_quantity - a) / b + (1.0 - theta) * last_price;
                o.push_str("[expectations]\n");
                o.push_str("# Partial adjustment Q_t = γ + δ·P_{t−1} + θ·Q_{t−1} (Nerlove 1958) written as the linear\n");
                o.push_str("# supply above, Q = a + b·P^e with a = γ/(1 − θ), b = δ/(1 − θ), and adaptive expectations\n");
                o.push_str("# of weight λ = 1 − θ: the same deterministic path. Limit: the fitted disturbance persists\n");
                o.push_str("# through Q_{t−1}, while the engine's supply shock hits one harvest only.\n");
                o.push_str(&format!(
                    "rule = \"adaptive\"\nweight = {}  # 1 − θ\n",
                    toml_f64(pa.adjustment)
                ));
                if pe.is_finite() && pe > 0.0 {
                    o.push_str(&format!(
                        "initial_expected_price = {}  # θ·(Q_T − a)/b + (1 − θ)·P_T: continues the recursion from season {}\n\n",
                        toml_f64(pe),
                        self.data.last_season
                    ));
                } else {
                    o.push_str(&format!(
                        "# initial_expected_price left at the last price: θ·(Q_T − a)/b + (1 − θ)·P_T = {} is not positive\n\n",
                        fmt_sig(pe)
                    ));
                }
            }
            _ => o.push_str("[expectations]\nrule = \"naive\"  # supply was estimated on the previous season's price\n\n"),
        }
        o.push_str("[run]\nperiods = 40\n");
        o.push_str(&format!(
            "initial_price = {}  # last observed price (season {})\n",
            toml_f64(last_price),
            self.data.last_season
        ));
        o.push_str("replications = 1\nseed = 42\n\n");
        o.push_str("[shocks]\n");
        o.push_str(&shocks);
        Ok(o)
    }
}
