//! A fixed workload for instruction counts of the period engine's lanes (issue 22):
//! `lanes_steps WAY POLICIES ROUNDS` steps 64 lanes × 100 periods of the bench market (linear
//! curves, adaptive expectations) ROUNDS times, WAY `each` (each lane its own `Simulator`) or
//! `phased` (`ModelLanes::Phased`), POLICIES `band` or `all` (the Monte Carlo job's five).
//! Run it under `valgrind --tool=cachegrind`; ROUNDS = 0 gives the setup's count to subtract.

use furrow::engine::{
    Columns, Diverged, LaneStepper, Model, ModelLanes, PeriodShock, ShockColumns, LANES,
};
use furrow::policies::file::policy_from_str;
use furrow::policies::PolicySpec;
use furrow::scenario::market_from_str;
use furrow::stochastic::ShockStream;

const MARKET: &str = "[market]\nname = \"Bench\"\n[demand]\nform = \"linear\"\nat_price = 210.0\n\
at_quantity = 480.0\nelasticity = -0.25\n[supply]\nform = \"linear\"\nat_price = 210.0\n\
at_quantity = 480.0\nelasticity = 0.20\n[expectations]\nrule = \"adaptive\"\nweight = 0.6\n\
[run]\nperiods = 100\ninitial_price = 210.0\n[shocks]\nyield_cv = 0.03\ndemand_sd = 3.0\n\
demand_persistence = 0.3\n";

const BAND: &str = "[policy]\nname = \"Band\"\n[stock]\nbuy_below = 195.0\nsell_above = 230.0\n\
capacity = 60.0\ninitial = 20.0\nstorage_cost = 6.0\nloss_rate = 0.02\n";

fn main() -> anyhow::Result<()> {
    let args: Vec<String> = std::env::args().collect();
    let phased = args.get(1).map(String::as_str) == Some("phased");
    let all = args.get(2).map(String::as_str) == Some("all");
    let rounds: usize = args.get(3).map_or(Ok(1), |a| a.parse())?;
    let s = market_from_str("bench.toml", MARKET)?;
    let p = |t: &str| policy_from_str("p.toml", t);
    let mut policies = vec![p(BAND)?];
    if all {
        policies = vec![
            PolicySpec::none(),
            p(BAND)?,
            p("[policy]\nname = \"Floor\"\n[floor]\nprice = 200.0\ninstrument = \"purchase\"\n[stock]\ncapacity = 120.0\nstorage_cost = 6.0\nloss_rate = 0.03\n")?,
            p("[policy]\nname = \"DP\"\n[floor]\nprice = 200.0\ninstrument = \"deficiency-payment\"\n")?,
            p("[policy]\nname = \"Target\"\n[stock]\nbuy_below = 190.0\nsell_above = 235.0\ncapacity = 80.0\ninitial = 40.0\nrelease = \"target\"\ntarget = 40.0\nspeed = 0.3\n")?,
        ];
    }
    let models: Vec<Model> = policies.iter().map(|p| Model::new(&s, p)).collect();
    let mut streams: Vec<ShockStream> = (0..LANES as u64)
        .map(|l| ShockStream::new(&s.shocks, 2026, l))
        .collect();
    let shocks: Vec<ShockColumns> = (0..100)
        .map(|_| {
            let row: Vec<PeriodShock> = streams.iter_mut().map(|st| st.next_shock()).collect();
            ShockColumns::of(&row)
        })
        .collect();
    let mut out = Columns::default();
    let mut acc = 0.0;
    for _ in 0..rounds {
        let mut lanes: Vec<ModelLanes> = models
            .iter()
            .map(|m| {
                if phased {
                    ModelLanes::new(m, LANES)
                } else {
                    ModelLanes::each(m, LANES)
                }
            })
            .collect();
        let mut failed = vec![vec![None::<Diverged>; LANES]; lanes.len()];
        for row in &shocks {
            for (l, failed) in lanes.iter_mut().zip(failed.iter_mut()) {
                l.step(row, &mut out, failed);
                acc += out.price[LANES - 1];
            }
        }
    }
    println!("{acc}");
    Ok(())
}
