//! Writing the fitted market as a market file (the format of the interface page), with the fit
//! statistics and the data's SHA-256 as comments.
//!
//! - Linear form: `[demand]`/`[supply]` with `form = "linear"`, `intercept`, `slope`. Shifters are held
//!   at their sample means and folded into the intercept: intercept = α + Σ coefficient × mean.
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

use super::{EquationFit, FitError, FitForm, FitReport};
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
    let (q, p) = match form {
        FitForm::Linear => ("quantity".to_string(), price.to_string()),
        FitForm::Log => ("ln(quantity)".to_string(), format!("ln({price})")),
    };
    let method = match e.method {
        super::FitMethod::Ols => "OLS".to_string(),
        super::FitMethod::TwoStage => format!("2SLS, instruments: {}", e.instruments.join(", ")),
    };
    out.push_str(&format!(
        "# {label}: {q} on {p}{} by {method}; seasons {}-{} (n = {})\n",
        if e.terms.len() > 2 {
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
            t.name,
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
    for t in &e.terms[2..] {
        out.push_str(&format!(
            "#   shifter `{}` held at its sample mean {}\n",
            t.name,
            fmt_sig(t.regressor_mean)
        ));
    }
}

impl FitReport {
    /// The market file text (valid TOML), or an error when the estimates cannot make a valid market
    /// (a demand curve that does not slope down, a supply curve that does not slope up, a linear demand
    /// curve with no positive quantity).
    pub fn market_toml(&self, names: &MarketNames) -> Result<String, FitError> {
        let (d, s) = (&self.demand, &self.supply);
        let what = match self.form {
            FitForm::Linear => "slope",
            FitForm::Log => "elasticity",
        };
        let hint = "the data may not identify the curve; try shifters, --method 2sls with supply-only shifters, or a longer history";
        if d.slope().is_nan() || d.slope() >= 0.0 {
            return Err(FitError::Market {
                message: format!(
                    "the estimated demand {what} is {}, but a market file needs a demand {what} < 0 ({hint})",
                    fmt_sig(d.slope())
                ),
            });
        }
        if s.slope().is_nan() || s.slope() <= 0.0 {
            return Err(FitError::Market {
                message: format!(
                    "the estimated supply {what} on the lagged price is {}, but a market file needs a supply {what} > 0 ({hint})",
                    fmt_sig(s.slope())
                ),
            });
        }
        let last_price = finite("the last observed price", self.data.last_price)?;

        let mut o = String::new();
        o.push_str(&format!(
            "# Market estimated by `furrow fit` from {}\n",
            self.data.file.replace('\n', " ")
        ));
        o.push_str(&format!("# data sha256: {}\n", self.data.sha256));
        o.push_str(&format!(
            "# form: {}; standard errors: classical and HC1 robust (White 1980, MacKinnon and White 1985)\n#\n",
            match self.form {
                FitForm::Linear => "linear (levels)",
                FitForm::Log => "log-linear (constant elasticity)",
            }
        ));
        equation_comments(&mut o, "demand", d, "price", self.form);
        o.push_str("#\n");
        equation_comments(&mut o, "supply", s, "lagged_price", self.form);
        o.push_str(
            "#\n# Shifters are held at their sample means and folded into the curves below.\n\n",
        );

        o.push_str("[market]\n");
        o.push_str(&format!("name = {}\n", toml_str(&names.name)));
        o.push_str(&format!(
            "quantity_unit = {}\n",
            toml_str(&names.quantity_unit)
        ));
        o.push_str(&format!("price_unit = {}\n\n", toml_str(&names.price_unit)));

        let shocks = match self.form {
            FitForm::Linear => {
                let di = finite("the demand intercept", d.intercept_at_shifter_means())?;
                if di <= 0.0 {
                    return Err(FitError::Market {
                        message: format!(
                            "the demand intercept with shifters at their means is {}, so demand is never positive ({hint})",
                            fmt_sig(di)
                        ),
                    });
                }
                let si = finite("the supply intercept", s.intercept_at_shifter_means())?;
                for (sec, e, icpt, note) in [
                    ("demand", d, di, "Q = intercept + slope * P"),
                    ("supply", s, si, "Q = intercept + slope * P^e"),
                ] {
                    o.push_str(&format!("[{sec}]  # {note}\nform = \"linear\"\n"));
                    o.push_str(&format!(
                        "intercept = {}  # estimated intercept {} plus shifters at their means\n",
                        toml_f64(icpt),
                        fmt_full(e.terms[0].estimate)
                    ));
                    o.push_str(&format!(
                        "slope = {}\n\n",
                        toml_f64(finite("a slope", e.slope())?)
                    ));
                }
                format!(
                    "supply_sd = {}  # supply residual sd (quantity units)\ndemand_sd = {}  # demand residual sd (quantity units)\n",
                    toml_f64(finite("the supply residual sd", s.residual_sd)?),
                    toml_f64(finite("the demand residual sd", d.residual_sd)?)
                )
            }
            FitForm::Log => {
                let mut at_q = [0.0; 2];
                for (i, (sec, e, pname)) in [("demand", d, "price"), ("supply", s, "lagged price")]
                    .into_iter()
                    .enumerate()
                {
                    let at_p = finite("a mean price", e.mean_price)?;
                    let q = finite(
                        "a calibration quantity",
                        (e.intercept_at_shifter_means() + e.slope() * at_p.ln()).exp(),
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
                        "at_quantity = {}  # fitted quantity at at_price, shifters at their means\n",
                        toml_f64(q)
                    ));
                    o.push_str(&format!("elasticity = {}\n\n", toml_f64(e.slope())));
                }
                let sd_s = finite("the supply residual sd", s.residual_sd)?;
                let sd_d = finite("the demand residual sd", d.residual_sd)?;
                format!(
                    "yield_cv = {}  # from the supply log residual sd {}: cv of a lognormal factor = sqrt(exp(sd^2) - 1)\ndemand_sd = {}  # demand log residual sd {} times demand at_quantity (first-order, quantity units)\n",
                    toml_f64(finite("yield_cv", (sd_s * sd_s).exp_m1().sqrt())?),
                    fmt_sig(sd_s),
                    toml_f64(finite("demand_sd", sd_d * at_q[0])?),
                    fmt_sig(sd_d)
                )
            }
        };

        o.push_str("[expectations]\nrule = \"naive\"  # supply was estimated on the previous season's price\n\n");
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
