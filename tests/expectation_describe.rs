//! `check` and the briefing describe every expectation rule with its parameters in words, through
//! the one description each rule gives of itself (`ExpectationSpec::description`).

mod common;

use furrow::expectations::RULES;
use furrow::scenario;

const MARKET: &str = "[market]\nname = \"Veldmark test\"\n[demand]\nintercept = 100.0\nslope = -0.5\n\
                      [supply]\nintercept = 10.0\nslope = 0.15\n[run]\ninitial_price = 150.0\nperiods = 10\n";

#[test]
fn check_says_every_rule_with_its_parameters() {
    let dir = tempfile::tempdir().unwrap();
    for rule in RULES {
        for (i, example) in rule.examples.iter().enumerate() {
            let text = format!("{MARKET}{example}");
            let spec = scenario::market_from_str("m.toml", &text)
                .unwrap()
                .expectations;
            let path = dir.path().join(format!("{}-{i}.toml", rule.name));
            std::fs::write(&path, &text).unwrap();
            let out = common::stdout_of(["check".as_ref(), path.as_os_str()]);
            let description = spec.description();
            assert!(description.starts_with(rule.name), "{description}");
            assert!(
                out.contains(&format!("expectations: {description}")),
                "{example}: {out}"
            );
            // every number the section sets is said (written as the file writes it, or as a
            // percentage for a share)
            for (key, value) in spec.values().iter() {
                let said = furrow::output::fmt_num(value, 3);
                let whole = format!("{key} {}", value as i64);
                assert!(
                    description.contains(&said)
                        || (value.fract() == 0.0 && description.contains(&whole)),
                    "{key} = {value}: {description}"
                );
            }
        }
    }
}

#[test]
fn groups_are_said_group_by_group() {
    // written out by hand from the sections' parameters (numbers to three decimals, shares as
    // percentages)
    let cases = [
        (
            "rule = \"mixed\"\ngroups = \"rational, naive\"\nshares = [0.3, 0.7]\n",
            "mixed: 30 % rational, 70 % naive",
        ),
        (
            "rule = \"mixed\"\ngroups = \"naive, adaptive:0.4\"\nshares = [0.5, 0.5]\n",
            "mixed: 50 % naive, 50 % adaptive (weight 0.400)",
        ),
        (
            "rule = \"switching\"\ngroups = \"rational, naive\"\ncost = [1.0, 0.0]\nintensity = 2.0\nmemory = 0.5\n",
            "switching between rational (cost 1.000) and naive (cost 0.000), intensity 2.000, memory 0.500",
        ),
        (
            "rule = \"learning\"\ngain = 0.2\n",
            "learning (constant gain 0.200)",
        ),
        (
            "rule = \"learning\"\ngain = 0.5\ngain_schedule = \"decreasing\"\n",
            "learning (decreasing gain from 0.500: the mean of past prices, the initial estimate counting as 1 season)",
        ),
    ];
    for (section, words) in cases {
        let s = scenario::market_from_str("m.toml", &format!("{MARKET}[expectations]\n{section}"))
            .unwrap();
        assert_eq!(s.expectations.description(), words);
    }
}

#[test]
fn a_policy_that_sets_the_rule_is_checked_with_its_description() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("p.toml");
    std::fs::write(
        &path,
        "[policy]\nname = \"information service\"\n[expectations]\nrule = \"mixed\"\n\
         groups = \"rational, naive\"\nshares = [0.5, 0.5]\n",
    )
    .unwrap();
    let out = common::stdout_of(["check".as_ref(), path.as_os_str()]);
    assert!(
        out.contains("expectations: mixed: 50 % rational, 50 % naive"),
        "{out}"
    );
}
