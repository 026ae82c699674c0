//! Learning with a decreasing gain (Bray and Savin 1986; Evans and Honkapohja 2001): the engine's
//! path against the closed form of the estimate's recursion, convergence where naive expectations
//! diverge, and the refusals where no eigenvalue or no single-state rule exists.

use furrow::engine::{Model, PeriodShock};
use furrow::expectations::ExpectationSpec;
use furrow::policies::PolicySpec;
use furrow::scenario::{self, Scenario};
use furrow::stability::{self, Verdict};

/// Demand Q = 100 − 0.5 P, supply Q = 10 + b P: P* = 90/(0.5 + b), b/d = 2b. Starts at P_0 = 100
/// (with b/d = 1.2 a naive first season still clears at a positive price).
fn market(b: f64, expectations: &str) -> Scenario {
    scenario::market_from_str(
        "m.toml",
        &format!(
            "[demand]\nintercept = 100.0\nslope = -0.5\n[supply]\nintercept = 10.0\nslope = {b:?}\n\
             [run]\ninitial_price = 100.0\nperiods = 10\n[expectations]\n{expectations}"
        ),
    )
    .unwrap_or_else(|e| panic!("{expectations}: {e}"))
}

/// The engine's (expected price, price) for `seasons` seasons without shocks; `None` from the
/// season it reports a diverging run.
fn path(s: &Scenario, seasons: usize) -> Vec<Option<(f64, f64)>> {
    let model = Model::new(s, &PolicySpec::none());
    let mut sim = model.simulator();
    let mut out = Vec::with_capacity(seasons);
    let mut alive = true;
    for _ in 0..seasons {
        if alive {
            match sim.step(&PeriodShock::NONE) {
                Ok(r) => out.push(Some((r.expected_price, r.price))),
                Err(_) => {
                    alive = false;
                    out.push(None);
                }
            }
        } else {
            out.push(None);
        }
    }
    out
}

#[test]
fn decreasing_gain_converges_where_naive_expectations_diverge() {
    // b/d = 1.2: the naive cobweb diverges (Ezekiel 1938: stable iff b < d); learning with a
    // decreasing gain converges, E-stability holding as T'(a*) = −b/d = −1.2 < 1 (Evans and
    // Honkapohja 2001, ch. 2, the cobweb model; from memory)
    let b = 0.6;
    let ratio = b / 0.5;
    let steady = 90.0 / (0.5 + b);
    let naive = market(b, "rule = \"naive\"");
    let analysis = stability::analyse(&naive, &PolicySpec::none()).unwrap();
    assert_eq!(analysis.verdict, Verdict::Unstable);
    assert!((analysis.spectral_radius - ratio).abs() < 1e-9);
    let naive_path = path(&naive, 400);
    // deviations grow by 1.2 a season until the engine reports the run diverging
    assert!(
        naive_path.iter().any(Option::is_none),
        "naive never diverged"
    );
    for (gain, initial) in [(1.0, None), (0.25, None), (0.1, Some(120.0))] {
        let start = initial.map_or(String::new(), |p: f64| {
            format!("\ninitial_expected_price = {p:?}")
        });
        let s = market(
            b,
            &format!("rule = \"learning\"\ngain = {gain:?}\ngain_schedule = \"decreasing\"{start}"),
        );
        let run = path(&s, 4000);
        assert!(run.iter().all(Option::is_some), "γ = {gain}: diverged");
        let run: Vec<(f64, f64)> = run.into_iter().flatten().collect();
        // the closed form, derived: with linear curves P_t − P* = −(b/d)(a_t − P*), so
        // a_{t+1} − P* = (1 − γ_{t+1}) (a_t − P*) + γ_{t+1} (P_t − P*) = (1 − γ_{t+1}(1 + b/d)) (a_t − P*)
        // with γ_t = 1/(w + t − 1), w = 1/γ − 1 (the estimate a running mean, Bray and Savin 1986)
        let w = 1.0 / gain - 1.0;
        let mut deviation = initial.unwrap_or(100.0) - steady;
        for (i, (expected, price)) in run.iter().enumerate() {
            let t = i + 1;
            if t >= 2 {
                let g = 1.0 / (w + t as f64 - 1.0);
                deviation *= 1.0 - g * (1.0 + ratio);
            }
            assert!(
                (expected - steady - deviation).abs() <= 1e-9 * steady,
                "γ = {gain}, season {t}: engine {expected}, closed form {}",
                steady + deviation
            );
            assert!((price - steady + ratio * deviation).abs() <= 1e-9 * steady);
        }
        // and the estimate is the mean of the prices seen, the initial estimate worth w seasons
        let a1 = run[0].0;
        let mut sum = 0.0;
        for (i, (expected, _)) in run.iter().enumerate().skip(1) {
            sum += run[i - 1].1;
            let mean = (w * a1 + sum) / (w + i as f64);
            assert!(
                (expected - mean).abs() <= 1e-9 * steady,
                "γ = {gain}, t = {i}"
            );
        }
        // it converges: the deviation shrinks like t^−(1 + b/d) (the product above)
        let last = run.last().unwrap().1;
        assert!((last - steady).abs() < 1e-4 * steady, "γ = {gain}: {last}");
    }
}

#[test]
fn the_stability_verb_refuses_a_falling_gain_and_gives_its_limit_in_words() {
    // no eigenvalue exists for a map that changes every season; the limiting map's condition
    // (E-stability, Evans and Honkapohja 2001) is reported in the refusal, naming the key
    for (b, status) in [(0.6, "holds"), (0.15, "holds")] {
        let s = market(
            b,
            "rule = \"learning\"\ngain = 0.5\ngain_schedule = \"decreasing\"",
        );
        let e = stability::analyse(&s, &PolicySpec::none())
            .unwrap_err()
            .to_string();
        assert!(e.contains("expectations.gain_schedule"), "{e}");
        assert!(!e.contains("  "), "one sentence, no gaps: {e}");
        assert!(e.contains("E-stability") && e.contains(status), "{e}");
        let slope = format!("T'(a*) = {}", furrow::output::fmt_num(-2.0 * b, 6));
        assert!(e.contains(&slope), "{e}: {slope}");
    }
    // a constant gain keeps its eigenvalue 1 − γ + γ·(−b/d) (Nerlove 1958 with λ = γ)
    let s = market(0.6, "rule = \"learning\"\ngain = 0.5");
    let a = stability::analyse(&s, &PolicySpec::none()).unwrap();
    assert!((a.spectral_radius - (1.0 - 0.5 - 0.5 * 1.2_f64).abs()).abs() < 1e-9);
}

#[test]
fn a_falling_gain_is_refused_where_no_model_covers_it_naming_the_key() {
    // farmers in groups keep one map per group
    let e = scenario::market_from_str(
        "m.toml",
        "[demand]\nintercept = 100.0\nslope = -0.5\n[supply]\nintercept = 10.0\nslope = 0.15\n\
         [expectations]\nrule = \"mixed\"\ngroups = \"naive, learning:0.5:gain_schedule=decreasing\"\n\
         shares = [0.5, 0.5]\n",
    )
    .unwrap_err()
    .to_string();
    assert!(e.contains("gain_schedule") && e.contains("groups"), "{e}");
    // the storage equilibrium is stationary: farmers beside storers keep one map
    let e = scenario::market_from_str(
        "m.toml",
        "[demand]\nintercept = 100.0\nslope = -0.5\n[supply]\nintercept = 10.0\nslope = 0.15\n\
         [expectations]\nrule = \"learning\"\ngain = 0.5\ngain_schedule = \"decreasing\"\n\
         [storers]\nstorage_cost = 1.0\ninterest_rate = 0.05\n",
    )
    .unwrap_err()
    .to_string();
    assert!(
        e.contains("expectations.gain_schedule") && e.contains("[storers]"),
        "{e}"
    );
    // an unknown schedule names the key, the value and the words allowed
    let e = scenario::market_from_str(
        "m.toml",
        "[demand]\nintercept = 100.0\nslope = -0.5\n[supply]\nintercept = 10.0\nslope = 0.15\n\
         [expectations]\nrule = \"learning\"\ngain = 0.5\ngain_schedule = \"sometimes\"\n",
    )
    .unwrap_err()
    .to_string();
    for part in [
        "m.toml",
        "expectations.gain_schedule",
        "\"sometimes\"",
        "\"constant\"",
        "\"decreasing\"",
    ] {
        assert!(e.contains(part), "{e}: {part}");
    }
}

#[test]
fn the_short_form_and_the_file_give_the_same_falling_gain() {
    let file =
        ExpectationSpec::parse("rule = \"learning\"\ngain = 0.25\ngain_schedule = \"decreasing\"")
            .unwrap();
    let short =
        ExpectationSpec::from_short("learning:0.25:gain_schedule=decreasing", "--rules").unwrap();
    assert_eq!(file, short);
    // its written-out short form and its table read back to the same rule
    assert_eq!(
        ExpectationSpec::from_short(&short.short_form(), "--rules").unwrap(),
        short
    );
    let table = toml::to_string(&short.to_table()).unwrap();
    assert_eq!(ExpectationSpec::parse(&table).unwrap(), short);
    // and the description says the schedule and the prior's weight in seasons (1/γ − 1 = 3)
    let d = short.rule().describe();
    assert!(
        d.contains("decreasing gain from 0.250") && d.contains("3 seasons"),
        "{d}"
    );
    // `gain_schedule = "constant"` is today's rule, `gain = γ` alone
    let constant =
        ExpectationSpec::parse("rule = \"learning\"\ngain = 0.25\ngain_schedule = \"constant\"")
            .unwrap();
    assert!(constant.rule().as_adaptive().is_some());
    assert!(constant.rule().time_varying().is_none());
}
