//! Writes `examples/veldmark_history.csv`: 40 invented seasons (1985–2024) of hill millet in Veldmark,
//! drawn from a known cobweb market by `furrow::fit::synth` (see that module for the model).
//!
//! Known parameters (`HistoryParams::default()`, seed 20250601), season t = 1..40:
//!   demand   use_t = 190 − 1.0·P_t + 0.5·trend_t + u_t,                               sd(u) = 3
//!   area     A_t = 31.2 + 0.2·P_{t−1} − 0.04·fertiliser_price_t + v_t (kha),          sd(v) = 1
//!   yield    Y_t = 2.3 + 0.01·t + 0.0015·(rainfall_t − 600) + e_t (t/ha),            sd(e) = 0.05
//!   production = quantity = A_t·Y_t; imports ~ max(0, N(3, 1.5²)), exports ~ max(0, N(1, 0.8²)),
//!   stock change ~ N(0, 1.5²); use_t = production + imports − exports − stock change;
//!   rainfall ~ N(600, 80²) mm; fertiliser price AR(1) around 300 (coefficient 0.6, innovation sd 20);
//!   trend_t = t; P_0 = 95 crowns per t; quantities in kt.
//!
//! Run: `cargo run --example make_history [-- OUT.csv [SEASONS [SEED]]]`.
//! Then (this writes the shipped examples/veldmark_fitted.toml; run from the crate root):
//!   `furrow fit examples/veldmark_history.csv --production production --use use --imports imports
//!    --exports exports --stock-change stock_change --demand-shifter trend --supply-shifter rainfall
//!    --supply-shifter fertiliser_price --stochastic-shifter rainfall --method 2sls
//!    --name "Hill millet, Veldmark (fitted 1985-2024)" --price-unit "crowns per t"
//!    --out examples/veldmark_fitted.toml`

use furrow::fit::synth::{generate, to_csv, HistoryParams};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let mut args = std::env::args().skip(1);
    let out = args
        .next()
        .unwrap_or_else(|| "examples/veldmark_history.csv".to_string());
    let mut p = HistoryParams::default();
    if let Some(n) = args.next() {
        p.seasons = n.parse()?;
    }
    if let Some(s) = args.next() {
        p.seed = s.parse()?;
    }
    let rows = generate(&p)?;
    furrow::output::write_whole(std::path::Path::new(&out), to_csv(&rows).as_bytes())?;
    eprintln!("wrote {} seasons to {out}", rows.len());
    Ok(())
}
