//! Command-line glue for `furrow fit` (the only file of the module that knows clap and files).

use std::path::PathBuf;

use anyhow::Context;

use furrow::fit::market_file::MarketNames;
use furrow::fit::{
    check_history, fit_text, AtSeason, Balance, FitForm, FitMethod, FitOptions, SupplyModel,
    YieldTrendForm, BALANCE_TOLERANCE,
};
use furrow::output::{write_whole, Format};

use super::common::say;

/// Functional form on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum FormArg {
    /// Quantities on prices in levels.
    Linear,
    /// Logs of quantities on logs of prices (constant elasticity); shifters enter as they are.
    Log,
}

/// Demand estimator on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum MethodArg {
    /// Ordinary least squares.
    Ols,
    /// Two-stage least squares, instruments: the supply-only shifters.
    #[value(name = "2sls")]
    TwoSls,
}

/// Supply equation on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum SupplyArg {
    /// Q_t on P_{t−1} (naive expectations).
    LaggedPrice,
    /// Q_t on P_{t−1} and Q_{t−1} (Nerlove's partial adjustment).
    PartialAdjustment,
}

/// Yield trend on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum TrendArg {
    /// yield = a + b·season.
    Linear,
    /// ln yield = a + b·season.
    Log,
}

fn parse_at_season(s: &str) -> Result<AtSeason, String> {
    match s {
        "last" => Ok(AtSeason::Last),
        "mean" => Ok(AtSeason::Mean),
        _ => s
            .parse::<i64>()
            .ok()
            .filter(|y| (-100_000..=100_000).contains(y))
            .map(AtSeason::Season)
            .ok_or_else(|| {
                format!("`{s}`: expected a season (an integer such as 2025), `last` or `mean`")
            }),
    }
}

/// Balance-sheet, area and yield options of `fit` (boxed: they make the arguments large).
#[derive(Debug, Clone, clap::Args)]
pub struct SheetArgs {
    /// Balance sheet: production column (supply's quantity).
    #[arg(long, value_name = "COL")]
    pub production: Option<String>,
    /// Balance sheet: domestic use column (demand's quantity).
    #[arg(long = "use", value_name = "COL")]
    pub domestic_use: Option<String>,
    /// Balance sheet: imports column.
    #[arg(long, value_name = "COL")]
    pub imports: Option<String>,
    /// Balance sheet: exports column.
    #[arg(long, value_name = "COL")]
    pub exports: Option<String>,
    /// Balance sheet: stock change column (closing − opening stocks).
    #[arg(long, value_name = "COL")]
    pub stock_change: Option<String>,
    /// World (border) price column: the import and export parity gaps for a future `[trade]` section.
    #[arg(long, value_name = "COL")]
    pub world_price: Option<String>,
    /// Area column: supply is estimated on the area and multiplied by the trend yield.
    #[arg(long, value_name = "COL")]
    pub area: Option<String>,
    /// Yield column (with --area): its trend gives the yield, its variation about the trend `yield_cv`.
    #[arg(long = "yield", value_name = "COL")]
    pub yield_col: Option<String>,
    /// Trend of yields.
    #[arg(long, value_enum, default_value = "linear")]
    pub yield_trend: TrendArg,
    /// Tolerance of the balance-sheet identity, as a share of domestic use (0..0.5).
    #[arg(long, default_value_t = BALANCE_TOLERANCE, value_name = "SHARE")]
    pub balance_tolerance: f64,
}

/// `fit DATA.csv [--out MARKET.toml]`: estimate demand and supply from a season history.
#[derive(Debug, Clone, clap::Args)]
pub struct FitArgs {
    /// CSV history, one row per season, oldest first.
    #[arg(value_name = "DATA")]
    pub data: PathBuf,
    /// Season column (consecutive integers, e.g. years).
    #[arg(long, default_value = "season", value_name = "COL")]
    pub season: String,
    /// Price column.
    #[arg(long, default_value = "price", value_name = "COL")]
    pub price: String,
    /// Quantity column (default `quantity`; not used when --production and --use are given).
    #[arg(long, value_name = "COL")]
    pub quantity: Option<String>,
    /// Balance-sheet, area and yield columns.
    #[command(flatten)]
    pub sheet: Box<SheetArgs>,
    /// Shifter entering both equations (repeatable).
    #[arg(long = "shifter", value_name = "COL")]
    pub shifters: Vec<String>,
    /// Shifter entering demand only, e.g. an income trend (repeatable).
    #[arg(long = "demand-shifter", value_name = "COL")]
    pub demand_shifters: Vec<String>,
    /// Shifter entering supply only, e.g. rainfall or an input price; the instruments of 2SLS (repeatable).
    #[arg(long = "supply-shifter", value_name = "COL")]
    pub supply_shifters: Vec<String>,
    /// A shifter whose variance enters the shocks instead of being held at a value (repeatable).
    #[arg(long = "stochastic-shifter", value_name = "COL")]
    pub stochastic_shifters: Vec<String>,
    /// Season the market is projected to: deterministic shifters (trends, input prices) are held at
    /// their value in it; `last` (default) or `mean` (sample means).
    #[arg(long, default_value = "last", value_parser = parse_at_season, value_name = "YEAR")]
    pub at_season: AtSeason,
    /// Supply equation.
    #[arg(long, value_enum, default_value = "lagged-price")]
    pub supply: SupplyArg,
    /// Functional form.
    #[arg(long, value_enum, default_value = "linear")]
    pub form: FormArg,
    /// Demand estimator (supply is always OLS on the lagged price).
    #[arg(long, value_enum, default_value = "ols")]
    pub method: MethodArg,
    /// Write the fitted market file here (whole or not at all; `-` prints it instead of the report).
    #[arg(long, value_name = "MARKET.toml")]
    pub out: Option<PathBuf>,
    /// Report format.
    #[arg(long, default_value = "table", value_parser = parse_format)]
    pub format: Format,
    /// Market name written into the market file (default: "Fitted from DATA").
    #[arg(long, value_name = "TEXT")]
    pub name: Option<String>,
    /// Quantity unit written into the market file.
    #[arg(long, default_value = "kt", value_name = "TEXT")]
    pub quantity_unit: String,
    /// Price unit written into the market file.
    #[arg(long, default_value = "per t", value_name = "TEXT")]
    pub price_unit: String,
    /// Simulated histories for the check against history (0 skips it).
    #[arg(long, default_value_t = 1000, value_name = "N")]
    pub check_replications: usize,
    /// Seed of the check against history.
    #[arg(long, default_value_t = 42, value_name = "N")]
    pub seed: u64,
}

fn parse_format(s: &str) -> Result<Format, String> {
    s.parse()
}

impl FitArgs {
    /// The library options these arguments describe.
    pub fn options(&self) -> FitOptions {
        FitOptions {
            season: self.season.clone(),
            price: self.price.clone(),
            quantity: self.quantity.clone().unwrap_or_else(|| "quantity".into()),
            shifters: self.shifters.clone(),
            demand_shifters: self.demand_shifters.clone(),
            supply_shifters: self.supply_shifters.clone(),
            stochastic_shifters: self.stochastic_shifters.clone(),
            supply_model: match self.supply {
                SupplyArg::LaggedPrice => SupplyModel::LaggedPrice,
                SupplyArg::PartialAdjustment => SupplyModel::PartialAdjustment,
            },
            at_season: self.at_season,
            balance: Balance {
                production: self.sheet.production.clone(),
                domestic_use: self.sheet.domestic_use.clone(),
                imports: self.sheet.imports.clone(),
                exports: self.sheet.exports.clone(),
                stock_change: self.sheet.stock_change.clone(),
                world_price: self.sheet.world_price.clone(),
                area: self.sheet.area.clone(),
                yield_col: self.sheet.yield_col.clone(),
                yield_trend: match self.sheet.yield_trend {
                    TrendArg::Linear => YieldTrendForm::Linear,
                    TrendArg::Log => YieldTrendForm::Log,
                },
                tolerance: self.sheet.balance_tolerance,
            },
            form: match self.form {
                FormArg::Linear => FitForm::Linear,
                FormArg::Log => FitForm::Log,
            },
            method: match self.method {
                MethodArg::Ols => FitMethod::Ols,
                MethodArg::TwoSls => FitMethod::TwoStage,
            },
        }
    }
}

/// Runs `fit`: returns the text for stdout (the report, or the market file for `--out -`).
pub fn execute(args: &FitArgs) -> anyhow::Result<String> {
    let label = args.data.display().to_string();
    let bytes = std::fs::read(&args.data).with_context(|| format!("cannot read {label}"))?;
    let text = String::from_utf8(bytes).map_err(|e| {
        anyhow::anyhow!(
            "{label}: not UTF-8 text (first bad byte at offset {})",
            e.utf8_error().valid_up_to()
        )
    })?;
    let file_name = args
        .data
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_else(|| label.clone());
    let opts = args.options();
    if args.quantity.is_some()
        && opts.balance.domestic_use.is_some()
        && (opts.balance.production.is_some() || opts.balance.area.is_some())
    {
        anyhow::bail!("--quantity is not used when --use and --production (or --area) are given: demand is estimated on use, supply on production; drop --quantity");
    }
    let mut report = fit_text(&label, &text, &opts)?;
    let names = MarketNames {
        name: args
            .name
            .clone()
            .unwrap_or_else(|| format!("Fitted from {file_name}")),
        quantity_unit: args.quantity_unit.clone(),
        price_unit: args.price_unit.clone(),
    };
    let market = report.market_toml(&names);
    for n in &report.notes {
        say(n);
    }
    if args.check_replications > 0 {
        match &market {
            Ok(toml) => {
                report.history_check = Some(check_history(
                    &report,
                    toml,
                    args.check_replications,
                    args.seed,
                )?);
                for w in report.check_warnings() {
                    say(&format!("warning: {w}"));
                }
            }
            Err(e) if args.out.is_none() => {
                say(&format!("no market file and no check against history: {e}"))
            }
            Err(_) => {}
        }
    }
    let rendered = report.render(args.format);
    match &args.out {
        None => Ok(rendered),
        Some(path) => {
            let toml = market?;
            if path.as_os_str() == "-" {
                return Ok(toml);
            }
            write_whole(path, toml.as_bytes())
                .with_context(|| format!("cannot write {}", path.display()))?;
            Ok(rendered)
        }
    }
}
