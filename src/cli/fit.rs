//! Command-line glue for `furrow fit` (the only file of the module that knows clap and files).

use std::path::PathBuf;

use anyhow::Context;

use furrow::fit::market_file::MarketNames;
use furrow::fit::{fit_text, FitForm, FitMethod, FitOptions};
use furrow::output::{write_whole, Format};

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
    /// Quantity column.
    #[arg(long, default_value = "quantity", value_name = "COL")]
    pub quantity: String,
    /// Shifter entering both equations (repeatable).
    #[arg(long = "shifter", value_name = "COL")]
    pub shifters: Vec<String>,
    /// Shifter entering demand only, e.g. an income trend (repeatable).
    #[arg(long = "demand-shifter", value_name = "COL")]
    pub demand_shifters: Vec<String>,
    /// Shifter entering supply only, e.g. rainfall or an input price; the instruments of 2SLS (repeatable).
    #[arg(long = "supply-shifter", value_name = "COL")]
    pub supply_shifters: Vec<String>,
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
            quantity: self.quantity.clone(),
            shifters: self.shifters.clone(),
            demand_shifters: self.demand_shifters.clone(),
            supply_shifters: self.supply_shifters.clone(),
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
    let report = fit_text(&label, &text, &args.options())?;
    let rendered = report.render(args.format);
    match &args.out {
        None => Ok(rendered),
        Some(path) => {
            let names = MarketNames {
                name: args
                    .name
                    .clone()
                    .unwrap_or_else(|| format!("Fitted from {file_name}")),
                quantity_unit: args.quantity_unit.clone(),
                price_unit: args.price_unit.clone(),
            };
            let toml = report.market_toml(&names)?;
            if path.as_os_str() == "-" {
                return Ok(toml);
            }
            write_whole(path, toml.as_bytes())
                .with_context(|| format!("cannot write {}", path.display()))?;
            Ok(rendered)
        }
    }
}
