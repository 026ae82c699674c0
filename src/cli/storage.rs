//! `furrow storage MARKET [--policy POLICY]`: the competitive storage equilibrium with private storers
//! (and the public stock rule when the policy holds one), printed on a grid of availability.

use clap::Args;
use furrow::output::fmt_num;
use furrow::storage::{self, SolveOptions};

use super::common::{install_progress, load_policy, say, CommonArgs};

/// Arguments of `storage`.
#[derive(Debug, Args)]
pub struct StorageArgs {
    /// The market file (needs [storers] and rule = "rational").
    pub market: String,
    /// A policy file (default: no intervention).
    #[arg(long)]
    pub policy: Option<String>,
    /// Points of the solution grid of private stock (with a public stock: per public-stock level,
    /// default 150).
    #[arg(long)]
    pub grid: Option<usize>,
    /// Points of the public-stock grid (only with a policy that holds stock).
    #[arg(long, default_value_t = 16)]
    pub public_grid: usize,
    /// Gauss–Hermite nodes over the yield factor, used only when the market also has an additive
    /// shock (supply_sd or demand_sd): the continuous shock (the additive one, or the yield factor
    /// alone) is integrated exactly between the breakpoints of next season's price, so more nodes do
    /// not change the result otherwise.
    #[arg(long, default_value_t = 10)]
    pub nodes: usize,
    /// Convergence tolerance: largest change of the price rule between iterations, relative to the
    /// steady-state price. However loose, the solve fails (exit 1) if its Euler residual ends above
    /// 1e-6.
    #[arg(long, default_value_t = 1e-9)]
    pub tolerance: f64,
    /// Rows of the printed grid of availability.
    #[arg(long, default_value_t = 21)]
    pub rows: usize,
    /// Print one simulated path with the solved rules instead of the grid (`run.periods` periods,
    /// or --periods; the file's seed, or --seed).
    #[arg(long)]
    pub path: bool,
    #[command(flatten)]
    pub common: CommonArgs,
}

/// Runs `storage`.
pub fn execute(args: &StorageArgs) -> anyhow::Result<()> {
    if args.common.plots.is_some() {
        anyhow::bail!("storage draws no figures: --plots is not available for it (use run or compare on the same market --plots)");
    }
    let scenario = args.common.load_market(&args.market)?;
    let policy = load_policy(args.policy.as_deref(), &scenario)?;
    install_progress();
    let d = SolveOptions::default();
    let options = SolveOptions {
        grid: args.grid.unwrap_or(d.grid),
        grid_2d: args.grid.unwrap_or(d.grid_2d),
        public_grid: args.public_grid,
        nodes: args.nodes,
        tolerance: args.tolerance,
        ..d
    };
    if args.path {
        let solved = storage::SolvedStorage::new(&scenario, &policy)?;
        let path = solved.path(0, scenario.run.periods);
        return args
            .common
            .emit(&storage::render_path(&path, args.common.format));
    }
    let report = storage::summary(&scenario, &policy, &options, args.rows)?;
    say(&format!(
        "solved in {} iterations; largest Euler residual {:.2e}; private stocks are zero above {} {}",
        report.iterations,
        report.euler_residual_max,
        fmt_num(report.stockout_price, 2),
        scenario.market.price_unit
    ));
    args.common
        .emit(&storage::render_summary(&report, args.common.format))
}
