//! The `engine/band_100_steps` benchmark's loop without criterion, for instruction counts under
//! callgrind: `valgrind --tool=callgrind target/release/examples/engine_steps 20000`.

use furrow::engine::{Model, PeriodShock};
use furrow::policies::file::policy_from_str;
use furrow::scenario::market_from_str;
use furrow::stochastic::ShockStream;

const MARKET: &str =
    "[market]\nname = \"Bench\"\nquantity_unit = \"kt\"\nprice_unit = \"crowns per t\"\n\
[demand]\nform = \"linear\"\nat_price = 210.0\nat_quantity = 480.0\nelasticity = -0.25\n\
[supply]\nform = \"linear\"\nat_price = 210.0\nat_quantity = 480.0\nelasticity = 0.20\n\
[expectations]\nrule = \"adaptive\"\nweight = 0.6\n\
[run]\nperiods = 100\ninitial_price = 210.0\nreplications = 10000\nseed = 2026\n\
[shocks]\nyield_cv = 0.03\ndemand_sd = 3.0\ndemand_persistence = 0.3\n";

const BAND: &str = "[policy]\nname = \"Band\"\n[stock]\nbuy_below = 195.0\nsell_above = 230.0\n\
capacity = 60.0\ninitial = 20.0\nstorage_cost = 6.0\nloss_rate = 0.02\n";

fn main() {
    let iterations: usize = std::env::args()
        .nth(1)
        .map(|a| a.parse().unwrap())
        .unwrap_or(10_000);
    let s = market_from_str("bench.toml", MARKET).unwrap();
    // optional band edges (to see the cost of steps without trade): ARGS ITERATIONS REPEATS LOW HIGH
    let band_text = match (std::env::args().nth(3), std::env::args().nth(4)) {
        (Some(lo), Some(hi)) => BAND.replace("195.0", &lo).replace("230.0", &hi),
        _ => BAND.to_string(),
    };
    let band = policy_from_str("p.toml", &band_text).unwrap();
    let model = Model::new(&s, &band);
    let mut stream = ShockStream::new(&s.shocks, 1, 0);
    let shocks: Vec<PeriodShock> = (0..100).map(|_| stream.next_shock()).collect();
    let repeats: usize = std::env::args()
        .nth(2)
        .map(|a| a.parse().unwrap())
        .unwrap_or(1);
    let mut best = f64::INFINITY;
    let mut total = 0.0;
    for _ in 0..repeats {
        let start = std::time::Instant::now();
        for _ in 0..iterations {
            let mut sim = model.simulator();
            let mut acc = 0.0;
            for sh in &shocks {
                acc += sim.step(std::hint::black_box(sh)).unwrap().price;
            }
            total += std::hint::black_box(acc);
        }
        best = best.min(start.elapsed().as_secs_f64());
    }
    let steps = (iterations * 100) as f64;
    println!(
        "{total}: best of {repeats}: {:.3} ns/step, {:.1} M steps/s",
        1e9 * best / steps,
        steps / best / 1e6
    );
}
