//! Expectation rules written once: every registered rule (every example of it) answers every
//! behaviour the program asks of it — its keys in the one schema, its reading, its expectation against
//! its own state layout, its published stability conditions against the eigenvalues, its settling, its
//! descriptions — and the steady state of its stability map is where a long engine run ends.

mod common;

use furrow::engine::{Model, PeriodShock};
use furrow::expectations::{
    section_keys, ExpectationInput, ExpectationRule, ExpectationSpec, ShareRule, StateLayout, RULES,
};
use furrow::policies::PolicySpec;
use furrow::scenario::{self, ranges::range_of, schema, Scenario};
use furrow::stability::{self, conditions::Slopes, Verdict};
use furrow::sweep::{self, Base, Orbit, Target};

/// Demand Q = 100 − 0.5 P, supply Q = 10 + s P, starting at P_0 = 150.
fn market(s: f64, expectations: &str) -> Result<Scenario, scenario::InputError> {
    scenario::market_from_str(
        "m.toml",
        &format!(
            "[demand]\nintercept = 100.0\nslope = -0.5\n[supply]\nintercept = 10.0\nslope = {s:?}\n\
             [run]\ninitial_price = 150.0\nperiods = 10\n{expectations}"
        ),
    )
}

/// Every example of every registered rule: (rule name, example section, the validated spec).
fn every_example() -> Vec<(&'static str, &'static str, ExpectationSpec)> {
    let mut out = Vec::new();
    for rule in RULES {
        assert!(!rule.examples.is_empty(), "{} has no example", rule.name);
        for text in rule.examples {
            let s = market(0.15, text).unwrap_or_else(|e| panic!("{text}: {e}"));
            out.push((rule.name, *text, s.expectations));
        }
    }
    out
}

#[test]
fn the_registry_names_each_rule_once_and_the_first_is_the_default() {
    let names: Vec<&str> = RULES.iter().map(|r| r.name).collect();
    for (i, n) in names.iter().enumerate() {
        assert!(!names[..i].contains(n), "{n} registered twice");
    }
    // a market file without [expectations] takes the first registered rule
    assert_eq!(market(0.15, "").unwrap().expectations.rule_name(), names[0]);
    // an unknown rule is refused, listing every registered one
    let e = market(0.15, "[expectations]\nrule = \"psychic\"\n")
        .unwrap_err()
        .to_string();
    assert!(e.contains(&names.join(", ")), "{e}");
}

#[test]
fn every_rule_declares_its_keys_in_the_one_schema_and_reads_only_them() {
    let section = section_keys();
    let base = Base::new("m.toml", toml::Table::new(), None);
    for rule in RULES {
        for key in rule.keys {
            // a key in the section's schema with the same type for every rule that reads it
            assert!(
                section.contains(&(key.name, key.kind)),
                "{}: {} ({:?}) not in {section:?}",
                rule.name,
                key.name,
                key.kind
            );
            let dotted = format!("expectations.{}", key.name);
            if key.kind == furrow::input::ValueType::Text {
                // a text key (the groups of `mixed` and `switching`) has no numeric range; a
                // number in its place is refused by the schema, naming the key
                let example = rule
                    .examples
                    .iter()
                    .find(|e| e.contains(&format!("\n{} =", key.name)))
                    .unwrap_or_else(|| panic!("{}: no example sets {}", rule.name, key.name));
                let text: String = example
                    .lines()
                    .map(|l| {
                        if l.starts_with(&format!("{} =", key.name)) {
                            format!("{} = 0.5\n", key.name)
                        } else {
                            format!("{l}\n")
                        }
                    })
                    .collect();
                let e = market(0.15, &text).unwrap_err().to_string();
                assert!(e.contains(&dotted), "{text}: {e}");
                continue;
            }
            let range = key.range.unwrap_or_else(|| panic!("{dotted}: no range"));
            assert_eq!(range.key, dotted);
            // the table's row spans the rule's own range
            let row = range_of(&dotted).unwrap();
            assert!(row.lo <= range.lo && row.hi >= range.hi, "{dotted}");
            // both files have the section; --vary sends it to the market file
            assert!(schema::market().iter().any(|(s, _)| *s == "expectations"));
            assert!(furrow::policies::file::schema()
                .iter()
                .any(|(s, _)| *s == "expectations"));
            assert_eq!(base.target(&dotted), Target::Market, "{dotted}");
            // a value beyond the rule's range is refused, naming the key
            let example = rule
                .examples
                .iter()
                .find(|e| e.contains(&format!("\n{} =", key.name)))
                .unwrap_or_else(|| panic!("{}: no example sets {}", rule.name, key.name));
            let beyond = format!("{:?}", range.hi + 1.0 + range.hi.abs());
            let beyond = if range.integer {
                format!("{}", range.hi as i64 + 1)
            } else {
                beyond
            };
            let text: String = example
                .lines()
                .map(|l| {
                    if l.starts_with(&format!("{} =", key.name)) {
                        format!("{} = {beyond}\n", key.name)
                    } else {
                        format!("{l}\n")
                    }
                })
                .collect();
            let e = market(0.15, &text).unwrap_err().to_string();
            assert!(e.contains(&dotted), "{text}: {e}");
        }
        // the keys it does not read are refused for it by name
        for (key, _) in section.iter().skip(1) {
            if rule.keys.iter().any(|k| k.name == *key) {
                continue;
            }
            let value = match *key {
                "window" => "2",
                "groups" => "\"naive, naive\"",
                "gain_schedule" => "\"decreasing\"",
                "shares" | "cost" => "[0.5, 0.5]",
                _ => "0.5",
            };
            let text = format!("{}{key} = {value}\n", rule.examples[0]);
            let e = market(0.15, &text).unwrap_err().to_string();
            assert!(
                e.contains(&format!("expectations.{key}")) && e.contains("does not use"),
                "{text}: {e}"
            );
        }
        for key in rule.starting {
            assert!(rule.keys.iter().any(|k| k.name == *key), "{key}");
        }
    }
}

#[test]
fn every_example_reads_alike_in_both_files_and_keeps_only_its_keys() {
    for (name, text, spec) in every_example() {
        assert_eq!(spec.rule_name(), name);
        let rule = RULES.iter().find(|r| r.name == name).unwrap();
        for (key, value) in spec.values().iter() {
            assert!(rule.keys.iter().any(|k| k.name == key), "{text}: {key}");
            assert!(value.is_finite(), "{text}: {key}");
        }
        // the same section as a policy file's override
        let p = common::policy(text);
        assert_eq!(p.expectations, Some(spec), "{text}");
        // written on its own
        let body = text.trim_start_matches("[expectations]\n");
        assert_eq!(ExpectationSpec::parse(body).unwrap(), spec, "{text}");
        // restarting drops exactly the starting keys
        let restarted = spec.restarted();
        assert_eq!(restarted.starting_values().count(), 0);
        assert_eq!(
            restarted.values().iter().count() + spec.starting_values().count(),
            spec.values().iter().count()
        );
    }
}

/// The rule's expectation for season 2 from `history` (oldest first) and its previous
/// expectation.
fn expect(rule: &dyn ExpectationRule, history: &[f64], previous: Option<f64>) -> f64 {
    rule.expect(&ExpectationInput {
        history,
        previous,
        season: 2,
    })
}

#[test]
fn every_rule_expects_what_its_state_layout_says() {
    for (_, text, spec) in every_example() {
        let rule = spec.rule();
        let k = rule.lags();
        assert!(k >= 1, "{text}");
        let describe = rule.describe();
        assert!(describe.starts_with(spec.rule_name()), "{text}: {describe}");
        // a rule with parameters shows its main one in the briefing's table
        let has_keys = spec.values().iter().count() > 0 || spec.values().groups().is_some();
        assert_eq!(rule.setting().is_some(), has_keys, "{text}");
        let a: Vec<f64> = (0..k + 2).map(|i| 100.0 + 7.0 * i as f64).collect();
        let b: Vec<f64> = (0..k + 2).map(|i| 130.0 - 3.0 * (i * i) as f64).collect();
        match rule.layout() {
            StateLayout::Lags(w) => {
                // affine in the last prices with the layout's weights (newest first)
                assert!(w.len() <= k, "{text}");
                let diff = expect(&*rule, &a, None) - expect(&*rule, &b, None);
                let want: f64 = w
                    .iter()
                    .enumerate()
                    .map(|(i, wi)| wi * (a[a.len() - 1 - i] - b[b.len() - 1 - i]))
                    .sum();
                assert!((diff - want).abs() < 1e-9, "{text}: {diff} vs {want}");
                assert!(rule.as_adaptive().is_none(), "{text}");
            }
            StateLayout::Expectation(w) => {
                // P^e_t = P^e_{t−1} + w (P_{t−1} − P^e_{t−1}) (Nerlove 1958)
                assert!(w > 0.0 && w <= 1.0, "{text}");
                let e = expect(&*rule, &[120.0], Some(90.0));
                assert!((e - (90.0 + w * 30.0)).abs() < 1e-12, "{text}");
                if rule.time_varying().is_some() {
                    // a gain that falls with the season (learning, Bray and Savin 1986): season 2
                    // revises with w, later seasons with less; never the adaptive shortcut
                    assert!(rule.as_adaptive().is_none(), "{text}");
                    let later = rule.expect(&ExpectationInput {
                        history: &[120.0],
                        previous: Some(90.0),
                        season: 10,
                    });
                    assert!(later > 90.0 && later < e, "{text}: {later} vs {e}");
                    continue;
                }
                // the engine's direct call is the same rule
                let direct = rule
                    .as_adaptive()
                    .expect("an expectation state is adaptive");
                assert_eq!(direct.weight, w);
                assert_eq!(direct.next(Some(90.0), 120.0), e);
                assert_eq!(direct.next(None, 120.0), expect(&*rule, &[120.0], None));
            }
            StateLayout::Groups(n) => {
                // farmers in groups: the groups' own map carries the state (price lags, then the
                // groups that keep their own expectation)
                let groups = rule.groups().expect("a group layout has groups");
                assert_eq!(groups.state_dim(), n, "{text}");
                assert_eq!(groups.rest_state(123.0).len(), n, "{text}");
                assert!(rule.as_adaptive().is_none(), "{text}");
            }
        }
        // at rest: a rule that rests anywhere expects the resting price whatever it is
        let rests = [55.0, 123.0, 300.0].iter().all(|&p| {
            let h = vec![p; k + 1];
            (expect(&*rule, &h, Some(p)) - p).abs() < 1e-9 * p
        });
        assert_eq!(rests, rule.rests_anywhere(), "{text}");
    }
}

#[test]
fn published_conditions_agree_with_the_eigenvalues() {
    // each condition is exact for its rule: it holds iff the linearised free market is stable
    // (Ezekiel 1938; Nerlove 1958; Jury 1964 for second-order rules, from memory)
    let mut compared = 0;
    for (_, text, _) in every_example() {
        for ratio in [0.3, 0.8, 1.3, 1.7, 1.9, 2.1, 2.3, 2.6, 3.5, 4.5, 6.0] {
            let Ok(s) = market(0.5 * ratio, text) else {
                continue;
            };
            let Ok(analysis) = stability::analyse(&s, &PolicySpec::none()) else {
                continue;
            };
            let rule = s.expectations.rule();
            if rule.settles_at_once().is_some() {
                assert!(analysis.conditions.is_empty(), "{text}");
                continue;
            }
            // linear curves: the slopes are the file's
            let direct = rule.conditions(&Slopes {
                b: 0.5 * ratio,
                d: 0.5,
            });
            assert_eq!(direct, analysis.conditions, "{text}");
            for c in &analysis.conditions {
                if c.on_boundary || analysis.verdict == Verdict::Neutral {
                    continue;
                }
                assert_eq!(
                    c.holds,
                    analysis.verdict == Verdict::Stable,
                    "{text} at b/d = {ratio}: {} {}",
                    c.name,
                    c.detail
                );
                compared += 1;
            }
        }
    }
    assert!(compared >= 30, "{compared}");
}

#[test]
fn the_stability_steady_state_is_where_a_long_engine_run_ends() {
    // a stable map's fixed point is the limit of its iteration (contraction mapping; from memory):
    // b/d = 0.3 is stable under every registered example
    for (_, text, _) in every_example() {
        let s = market(0.15, text).unwrap();
        if let Some(why) = s.expectations.rule().time_varying() {
            // no eigenvalue for a map that changes each season: refused, naming the key; the run
            // still ends where the curves cross, 100 − 0.5 P = 10 + 0.15 P (the gain falls as
            // 1/t, so the approach is slow: tests/expectation_learning.rs has its closed form)
            let e = stability::analyse(&s, &PolicySpec::none())
                .unwrap_err()
                .to_string();
            assert!(e.contains(&why) && e.contains("E-stability"), "{e}");
            let model = Model::new(&s, &PolicySpec::none());
            let mut sim = model.simulator();
            let mut last = f64::NAN;
            for _ in 0..3000 {
                last = sim.step(&PeriodShock::NONE).unwrap().price;
            }
            let crossing = 90.0 / 0.65;
            assert!((last - crossing).abs() < 1e-3 * crossing, "{text}: {last}");
            continue;
        }
        let analysis = stability::analyse(&s, &PolicySpec::none()).unwrap();
        assert_eq!(analysis.verdict, Verdict::Stable, "{text}");
        let model = Model::new(&s, &PolicySpec::none());
        let mut sim = model.simulator();
        let mut first = None;
        let mut last = f64::NAN;
        for _ in 0..3000 {
            let r = sim.step(&PeriodShock::NONE).unwrap();
            first.get_or_insert(r.price);
            last = r.price;
        }
        let steady = analysis.steady_state.price;
        assert!(
            (last - steady).abs() <= 1e-8 * steady,
            "{text}: run ends at {last}, stability's steady state {steady}"
        );
        let rule = s.expectations.rule();
        // a rule the model solves is at its steady state from period 1 (Muth 1961: without shocks
        // the rational expectation is the steady price); every other starts from P_0 = 150
        let first = first.unwrap();
        assert_eq!(
            (first - steady).abs() <= 1e-8 * steady,
            rule.is_rational(),
            "{text}: first price {first}, steady {steady}"
        );
        // the storage model needs a rule that looks ahead or a backward-looking one with at most
        // one state besides the last price: the last price alone (one state), or with the rule's
        // own last expectation or the price before the last (two states; README, "Private storers")
        let covered = match (rule.layout(), rule.lags()) {
            (StateLayout::Lags(ref w), 1) => w.len() == 1,
            (StateLayout::Lags(ref w), 2) => w.len() == 2,
            (StateLayout::Expectation(_), 1) => true,
            _ => false,
        };
        let storers = format!("{text}[storers]\nstorage_cost = 1.0\ninterest_rate = 0.05\n");
        assert_eq!(
            market(0.15, &storers).is_ok(),
            rule.is_rational() || covered,
            "{text}"
        );
    }
}

#[test]
fn a_rule_that_settles_at_once_says_so_in_stability_and_long_runs() {
    for (name, text, _) in every_example() {
        let s = market(0.15, text).unwrap();
        let rule = s.expectations.rule();
        let lr = sweep::longrun::long_run(&s, &PolicySpec::none(), 200, 4);
        if rule.time_varying().is_some() {
            // a map that changes each season: no eigenvalue, no Lyapunov exponent
            assert!(
                stability::analyse(&s, &PolicySpec::none()).is_err(),
                "{text}"
            );
            assert_eq!(lr.orbit, Orbit::Ok, "{text}");
            assert!(lr.lyapunov.is_none(), "{text}: {lr:?}");
            continue;
        }
        let analysis = stability::analyse(&s, &PolicySpec::none()).unwrap();
        match rule.settles_at_once() {
            Some(note) => {
                assert_eq!(analysis.note.as_deref(), Some(note), "{text}");
                for r in &analysis.regimes {
                    assert!(r.eigenvalues.iter().all(|e| e.re == 0.0 && e.im == 0.0));
                }
                assert_eq!(lr.orbit, Orbit::Settled(name));
                assert_eq!(lr.orbit.as_str(), name);
                assert!(lr.lyapunov.is_none());
            }
            None if rule.groups().is_some_and(|g| g.shares != ShareRule::Fixed) => {
                // switching: the shares move with squared errors, which the state map holds at
                // rest, so a long run estimates no exponent
                assert_eq!(analysis.note, None, "{text}");
                assert_eq!(lr.orbit, Orbit::Ok, "{text}");
                assert!(lr.lyapunov.is_none(), "{text}: {lr:?}");
            }
            None => {
                assert_eq!(analysis.note, None, "{text}");
                assert_eq!(lr.orbit, Orbit::Ok, "{text}");
                // a stable orbit contracts: a negative exponent
                assert!(lr.lyapunov.is_some_and(|l| l < 0.0), "{text}: {lr:?}");
            }
        }
    }
}

#[test]
fn constant_gain_learning_equals_adaptive_expectations_bit_for_bit() {
    // a_t = a_{t−1} + γ (P_{t−1} − a_{t−1}) is Nerlove's (1958) adaptive recursion with λ = γ
    // (Evans and Honkapohja 2001, constant-gain estimation of a mean): the same numbers, under
    // shocks and under a policy, in every indicator of a comparison
    let text = std::fs::read_to_string("examples/veldmark_weather.toml").unwrap();
    let mut table: toml::Table = text.parse().unwrap();
    table["run"]
        .as_table_mut()
        .unwrap()
        .insert("replications".into(), toml::Value::Integer(30));
    let policies: Vec<PolicySpec> = [
        "policies/price_band.toml",
        "policies/deficiency_payment.toml",
    ]
    .iter()
    .map(|p| furrow::policies::file::load_policy(p).unwrap())
    .collect();
    for (gain, initial) in [(0.6, None), (0.25, Some(205.0)), (1.0, None)] {
        let with = |section: String| {
            let mut t = table.clone();
            t.insert(
                "expectations".into(),
                toml::Value::Table(section.parse().unwrap()),
            );
            scenario::market_from_table("m.toml", t).unwrap()
        };
        let start = initial
            .map(|p: f64| format!("\ninitial_expected_price = {p:?}"))
            .unwrap_or_default();
        let learning = with(format!("rule = \"learning\"\ngain = {gain:?}{start}"));
        let adaptive = with(format!("rule = \"adaptive\"\nweight = {gain:?}{start}"));
        let a = furrow::compare::compare(&learning, &policies, &furrow::stochastic::NoProgress)
            .unwrap();
        let b = furrow::compare::compare(&adaptive, &policies, &furrow::stochastic::NoProgress)
            .unwrap();
        for (x, y) in a.policies.iter().zip(&b.policies) {
            assert_eq!(x.indicators.len(), y.indicators.len());
            for (i, j) in x.indicators.iter().zip(&y.indicators) {
                match (&i.value, &j.value) {
                    (furrow::compare::Value::Number(p), furrow::compare::Value::Number(q)) => {
                        assert_eq!(p.to_bits(), q.to_bits(), "γ = {gain}: {}", i.key)
                    }
                    (p, q) => assert_eq!(p, q, "{}", i.key),
                }
            }
        }
        // and the path itself, without shocks, period by period
        let run = |s: &Scenario| {
            let model = Model::new(s, &policies[0]);
            let mut sim = model.simulator();
            (0..60)
                .map(|_| {
                    sim.step(&PeriodShock::NONE)
                        .unwrap()
                        .expected_price
                        .to_bits()
                })
                .collect::<Vec<u64>>()
        };
        assert_eq!(run(&learning), run(&adaptive), "γ = {gain}");
    }
}
