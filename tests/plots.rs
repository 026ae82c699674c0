//! Figures render to PNG and SVG with readable text and visible data. Set FURROW_KEEP_PLOTS=DIR to
//! keep the files for looking at.

use std::path::{Path, PathBuf};

use furrow::curves::Curve;
use furrow::plots::{
    bifurcation, cobweb, contour_segments, eigenvalues, fan, fiscal, heatmap, paths, style,
    CobwebStep, EigenPoint, FanBand, Plot, Series,
};

fn out_dir(name: &str) -> (PathBuf, Option<tempfile::TempDir>) {
    match std::env::var("FURROW_KEEP_PLOTS") {
        Ok(d) => (PathBuf::from(d), None),
        Err(_) => {
            let t = tempfile::tempdir().unwrap();
            (t.path().join(name), Some(t))
        }
    }
}

/// Decodes a PNG and checks it is a real figure: many colours (anti-aliased text and lines), much
/// of the plot area not background, and `colour` (the first series) present. Common practice, no source.
fn assert_not_blank(path: &Path, colour: style::RGBColourLike) {
    let img = image::open(path).unwrap().to_rgb8();
    let (w, h) = img.dimensions();
    assert_eq!(w, style::WIDTH);
    assert!(h >= style::HEIGHT);
    let mut colours = std::collections::HashSet::new();
    for p in img.pixels() {
        colours.insert(p.0);
    }
    assert!(
        colours.len() > 60,
        "{}: only {} colours",
        path.display(),
        colours.len()
    );
    // The central plot region: not all paper/field colour.
    let bg = [style::PAPER, style::FIELD];
    let mut non_bg = 0usize;
    let mut total = 0usize;
    for y in h / 5..h * 4 / 5 {
        for x in w / 6..w * 5 / 6 {
            total += 1;
            let p = img.get_pixel(x, y).0;
            if !bg.iter().any(|b| p == [b.0, b.1, b.2]) {
                non_bg += 1;
            }
        }
    }
    assert!(
        non_bg * 50 > total,
        "{}: plot area nearly empty ({non_bg} of {total})",
        path.display()
    );
    let near = img
        .pixels()
        .filter(|p| {
            let d: i32 = (0..3)
                .map(|k| (p.0[k] as i32 - colour[k] as i32).abs())
                .sum();
            d < 24
        })
        .count();
    assert!(
        near > 40,
        "{}: series colour drawn on only {near} pixels",
        path.display()
    );
    // Title text: dark ink pixels in the title block.
    let ink = (10..60)
        .flat_map(|y| (20..400).map(move |x| (x, y)))
        .filter(|&(x, y)| img.get_pixel(x, y).0.iter().all(|&c| c < 90))
        .count();
    assert!(
        ink > 100,
        "{}: no title text drawn ({ink} dark pixels)",
        path.display()
    );
}

fn check(plot: &Plot, stem: &str, colour: style::RGBColourLike) {
    let (dir, _keep) = out_dir("plots");
    let files = plot.write(&dir, stem).unwrap();
    assert_eq!(files.len(), 2);
    assert_not_blank(&files[0], colour);
    let svg = std::fs::read_to_string(&files[1]).unwrap();
    assert!(svg.starts_with("<svg"), "{stem}: not an SVG");
    assert!(svg.contains("<text"), "{stem}: SVG without text");
    let escaped = plot
        .title()
        .replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;");
    assert!(svg.contains(&escaped), "{stem}: SVG lacks the title");
    assert_eq!(
        svg,
        plot.svg_string().unwrap(),
        "{stem}: file and string differ"
    );
}

fn s0() -> style::RGBColourLike {
    let c = style::series_colour(0);
    [c.0, c.1, c.2]
}

fn linear_market() -> (Curve, Curve) {
    // Demand 480 kt at 210 with elasticity -0.25, supply elasticity 0.20 (the demo market).
    (
        Curve::linear_at_point(210.0, 480.0, -0.25),
        Curve::linear_at_point(210.0, 480.0, 0.20),
    )
}

/// Naive cobweb: P_t = D⁻¹(S(P_{t-1})) (Ezekiel 1938, the cobweb recursion).
fn naive_path(d: &Curve, s: &Curve, p0: f64, n: usize) -> Vec<CobwebStep> {
    let mut e = p0;
    (0..n)
        .map(|_| {
            let q = s.quantity(e);
            let p = d.price_at(q);
            let st = CobwebStep {
                quantity: q,
                expected: e,
                price: p,
            };
            e = p;
            st
        })
        .collect()
}

#[test]
fn price_paths_png_and_svg() {
    let a: Vec<f64> = (0..40).map(|t| 210.0 + 30.0 * (-0.8f64).powi(t)).collect();
    let b: Vec<f64> = (0..40).map(|t| 210.0 + 30.0 * (0.5f64).powi(t)).collect();
    let p = paths(
        "Price paths by policy",
        "period",
        "price (crowns per t)",
        vec![
            Series::periods("no intervention", &a),
            Series::periods("Band 195-230 & reserve", &b),
        ],
    );
    check(&p, "paths", s0());
}

#[test]
fn cobweb_png_and_svg() {
    let (d, s) = linear_market();
    let steps = naive_path(&d, &s, 240.0, 25);
    let p = cobweb(
        "Cobweb: no intervention",
        &d,
        &s,
        steps,
        Some((480.0, 210.0)),
        "kt",
        "crowns per t",
    );
    check(&p, "cobweb", s0());
}

#[test]
fn fan_png_and_svg() {
    let band = |name: &str, w: f64| FanBand {
        name: name.into(),
        p05: (0..30)
            .map(|t| 210.0 - w * (1.0 - (-0.3 * t as f64).exp()))
            .collect(),
        p50: vec![210.0; 30],
        p95: (0..30)
            .map(|t| 210.0 + w * (1.0 - (-0.3 * t as f64).exp()))
            .collect(),
        mean: Some(vec![211.0; 30]),
        colour: None,
        stride: 1,
    };
    let p = fan(
        "Price fan",
        "period",
        "price (crowns per t)",
        2000,
        vec![band("no intervention", 40.0), band("band", 15.0)],
    );
    check(&p, "fan", s0());
}

#[test]
fn fiscal_bars_and_lines() {
    let v: Vec<f64> = (0..30).map(|t| 500.0 * ((t as f64) * 0.7).sin()).collect();
    let one = fiscal(
        "Fiscal cost",
        "period",
        "crowns (thousand)",
        vec![Series::periods("support", &v)],
    );
    assert!(matches!(one, Plot::Bars(_)));
    let c = style::series_colour(2);
    check(&one, "fiscal_one", [c.0, c.1, c.2]);
    let w: Vec<f64> = v.iter().map(|x| x * 0.5 + 100.0).collect();
    let two = fiscal(
        "Fiscal cost",
        "period",
        "crowns (thousand)",
        vec![Series::periods("a", &v), Series::periods("b", &w)],
    );
    assert!(matches!(two, Plot::Lines(_)));
    check(&two, "fiscal_many", s0());
}

#[test]
fn eigenvalues_png_and_svg() {
    let pts = vec![
        EigenPoint {
            re: -0.8,
            im: 0.0,
            group: "free market".into(),
            primary: true,
        },
        EigenPoint {
            re: 0.3,
            im: 0.6,
            group: "floor binding".into(),
            primary: false,
        },
        EigenPoint {
            re: 0.3,
            im: -0.6,
            group: "floor binding".into(),
            primary: false,
        },
    ];
    check(&eigenvalues("Eigenvalues", pts), "eigen", s0());
}

#[test]
fn heatmap_png_and_svg() {
    let xs: Vec<f64> = (0..21).map(|i| 0.1 + 0.045 * i as f64).collect();
    let ys: Vec<f64> = (0..15).map(|j| 0.1 + 0.1 * j as f64).collect();
    // ρ of naive cobweb with supply slope y and demand slope -1: |y|... scaled by x (illustrative).
    let grid: Vec<Vec<f64>> = ys
        .iter()
        .map(|y| xs.iter().map(|x| x * y * 1.2).collect())
        .collect();
    let p = heatmap("expectations.weight", "supply.slope", xs, ys, grid);
    check(&p, "heatmap", [0x1F, 0x5C, 0x73]);
}

#[test]
fn bifurcation_png_and_svg() {
    // Logistic-map style data standing in for long-run prices.
    let values: Vec<f64> = (0..120).map(|i| 2.8 + 1.2 * i as f64 / 119.0).collect();
    let prices: Vec<Vec<f64>> = values
        .iter()
        .map(|&r| {
            let mut x = 0.3;
            for _ in 0..300 {
                x = r * x * (1.0 - x);
            }
            (0..40)
                .map(|_| {
                    x = r * x * (1.0 - x);
                    150.0 + 120.0 * x
                })
                .collect()
        })
        .collect();
    let p = bifurcation("supply.slope", "crowns per t", values, prices, None);
    check(&p, "bifurcation", s0());
}

/// Linear interpolation is exact for a linear field: every contour point of f = x + y at level 1
/// lies on x + y = 1 (common practice, no source).
#[test]
fn contour_of_linear_field_is_exact() {
    let xs: Vec<f64> = (0..11).map(|i| i as f64 / 10.0).collect();
    let ys = xs.clone();
    let grid: Vec<Vec<f64>> = ys
        .iter()
        .map(|y| xs.iter().map(|x| x + y).collect())
        .collect();
    let segs = contour_segments(&xs, &ys, &grid, 1.0);
    assert!(segs.len() >= 10);
    for (a, b) in segs {
        assert!((a.0 + a.1 - 1.0).abs() < 1e-12 && (b.0 + b.1 - 1.0).abs() < 1e-12);
    }
    // A field entirely below the level has no contour.
    let low: Vec<Vec<f64>> = grid
        .iter()
        .map(|r| r.iter().map(|v| v * 0.1).collect())
        .collect();
    assert!(contour_segments(&xs, &ys, &low, 1.0).is_empty());
}

#[test]
fn empty_data_is_an_error_not_a_panic() {
    let p = paths(
        "Nothing",
        "period",
        "price",
        vec![Series::periods("x", &[f64::NAN, f64::INFINITY])],
    );
    assert!(p.svg_string().is_err());
}

#[test]
fn run_plots_writes_every_figure_of_a_path() {
    use assert_cmd::cargo::CommandCargoExt;
    let dir = tempfile::tempdir().unwrap();
    let plots = dir.path().join("figs");
    let o = std::process::Command::cargo_bin("furrow")
        .unwrap()
        .args([
            "run",
            "examples/veldmark.toml",
            "--policy",
            "policies/price_band.toml",
            "--plots",
        ])
        .arg(&plots)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    for stem in [
        "price_paths",
        "harvest_paths",
        "cobweb",
        "fiscal_cost",
        "fiscal_cumulative",
    ] {
        let png = plots.join(format!("{stem}.png"));
        let img = image::open(&png).unwrap().to_rgb8();
        let colours: std::collections::HashSet<[u8; 3]> = img.pixels().map(|p| p.0).collect();
        assert!(colours.len() > 60, "{stem}.png looks blank");
        let svg = std::fs::read_to_string(plots.join(format!("{stem}.svg"))).unwrap();
        assert!(
            svg.contains("<text") && svg.contains("Band 195-230"),
            "{stem}.svg lacks text or the policy name"
        );
        // Units from the market file appear on the axes.
        assert!(
            svg.contains("crowns") || svg.contains("kt"),
            "{stem}.svg lacks units"
        );
    }
}

fn furrow_ok(args: &[&str], plots: &Path) {
    use assert_cmd::cargo::CommandCargoExt;
    let o = std::process::Command::cargo_bin("furrow")
        .unwrap()
        .args(args)
        .arg("--plots")
        .arg(plots)
        .output()
        .unwrap();
    assert!(
        o.status.success(),
        "{args:?}: {}",
        String::from_utf8_lossy(&o.stderr)
    );
}

fn assert_figure(dir: &Path, stem: &str) {
    let img = image::open(dir.join(format!("{stem}.png")))
        .unwrap()
        .to_rgb8();
    let colours: std::collections::HashSet<[u8; 3]> = img.pixels().map(|p| p.0).collect();
    assert!(colours.len() > 60, "{stem}.png looks blank");
    let svg = std::fs::read_to_string(dir.join(format!("{stem}.svg"))).unwrap();
    assert!(svg.contains("<text"), "{stem}.svg has no text");
}

#[test]
fn stability_and_sweep_plots() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path();
    furrow_ok(&["stability", "examples/dunmere_cycle.toml"], &p.join("st"));
    assert_figure(&p.join("st"), "eigenvalues");
    furrow_ok(
        &[
            "sweep",
            "examples/veldmark_weather.toml",
            "--vary",
            "expectations.weight=0.1:1:10",
            "--vary",
            "supply.elasticity=0.1:0.5:8",
        ],
        &p.join("sw2"),
    );
    assert_figure(&p.join("sw2"), "stability_map");
    furrow_ok(
        &[
            "sweep",
            "examples/dunmere_cycle.toml",
            "--vary",
            "supply.slope=0.8:1.6:17",
            "--long-run",
            "20",
        ],
        &p.join("sw1"),
    );
    assert_figure(&p.join("sw1"), "spectral_radius");
    assert_figure(&p.join("sw1"), "bifurcation");
}

#[test]
fn compare_plots_on_the_demo_writes_every_figure() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("cmp");
    let mut args = vec!["compare", "examples/veldmark_weather.toml"];
    let policies: Vec<String> = std::fs::read_dir("policies")
        .unwrap()
        .map(|e| e.unwrap().path().display().to_string())
        .filter(|p| p.ends_with(".toml"))
        .collect();
    args.extend(policies.iter().map(|s| s.as_str()));
    args.extend(["--replications", "200"]);
    furrow_ok(&args, &out);
    for stem in [
        "price_paths",
        "harvest_paths",
        "fiscal_cost",
        "fiscal_cumulative",
        "price_fan",
        "stock_fan",
        "fiscal_cost_mean",
        "fiscal_cumulative_mean",
        "eigenvalues",
    ] {
        assert_figure(&out, stem);
    }
    let cobwebs = std::fs::read_dir(&out)
        .unwrap()
        .filter(|e| {
            let n = e
                .as_ref()
                .unwrap()
                .file_name()
                .to_string_lossy()
                .to_string();
            n.starts_with("cobweb_") && n.ends_with(".png")
        })
        .count();
    // under random weather a single path's cobweb is a tangle: none is drawn
    assert_eq!(cobwebs, 0);
    // without shocks, one cobweb per column (the market left alone first)
    let det = dir.path().join("det");
    furrow_ok(
        &[
            "compare",
            "examples/veldmark.toml",
            "policies/support_purchase.toml",
            "policies/price_band.toml",
        ],
        &det,
    );
    for stem in [
        "cobweb_0_no_intervention",
        "cobweb_1_support_price_200_public_purchase",
        "cobweb_2_band_195_230_60_kt_reserve",
    ] {
        assert_figure(&det, stem);
    }
}

/// More than four lines become small multiples (one panel per policy, taller figure); a policy's
/// floor and band lines are part of the chart; the eigenvalue plot of many policies is panelled
/// (small multiples as a reading aid: Tufte 1983, from memory).
#[test]
fn many_policies_make_small_multiples() {
    use furrow::plots::{eigenvalues, paths, EigenPoint, Plot, Reference, Series};
    let series: Vec<Series> = (0..6)
        .map(|k| {
            Series::periods(
                format!("policy {k}"),
                &(0..30)
                    .map(|t| 200.0 + ((t * (k + 1)) % 7) as f64)
                    .collect::<Vec<_>>(),
            )
        })
        .collect();
    let mut few = paths("p", "period", "price", series[..3].to_vec());
    let mut many = paths("p", "period", "price", series.clone());
    for p in [&mut few, &mut many] {
        if let Plot::Lines(l) = p {
            l.series_references.push((
                1,
                Reference {
                    label: "floor 195".into(),
                    value: 195.0,
                },
            ));
        }
    }
    assert_eq!(few.size().1, furrow::plots::style::HEIGHT);
    assert!(
        many.size().1 > furrow::plots::style::HEIGHT,
        "panels are taller"
    );
    let svg = many.svg_string().unwrap();
    for k in 1..6 {
        assert!(svg.contains(&format!("policy {k}")), "panel title {k}");
    }
    // the floor line extends the y range down to 195 (data stay at or above 200)
    if let Plot::Lines(l) = &few {
        assert!(l.series_references.iter().any(|(_, r)| r.value == 195.0));
    }
    let pts: Vec<EigenPoint> = (0..5)
        .map(|k| EigenPoint {
            re: -0.5,
            im: 0.0,
            group: format!("policy {k}"),
            primary: true,
        })
        .collect();
    let e = eigenvalues("eig", pts.clone());
    assert!(e.size().1 > furrow::plots::style::HEIGHT);
    let svg = e.svg_string().unwrap();
    assert!(svg.contains("one panel per policy"));
    let e2 = eigenvalues("eig", pts[..2].to_vec());
    assert_eq!(e2.size().1, furrow::plots::style::HEIGHT);
}

/// Prices spanning more than two decades get a log axis, and values without a bounded long run
/// are drawn in their own strip, not among the data.
#[test]
fn bifurcation_uses_a_log_axis_for_prices_over_decades() {
    let values: Vec<f64> = (0..10).map(|i| i as f64).collect();
    let mut prices: Vec<Vec<f64>> = values.iter().map(|v| vec![10f64.powf(*v / 3.0)]).collect();
    prices[9] = vec![];
    let p = furrow::plots::bifurcation("k", "crowns per t", values.clone(), prices, None);
    let svg = p.svg_string().unwrap();
    assert!(svg.contains("log scale") && svg.contains("log price axis"));
    assert!(svg.contains("diverged"));
    let flat: Vec<Vec<f64>> = values.iter().map(|v| vec![100.0 + v]).collect();
    let svg = furrow::plots::bifurcation("k", "crowns per t", values, flat, None)
        .svg_string()
        .unwrap();
    assert!(!svg.contains("log scale"));
}

#[test]
fn monte_carlo_run_plots_fans() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("mc");
    furrow_ok(
        &[
            "run",
            "examples/veldmark_weather.toml",
            "--policy",
            "policies/price_band.toml",
            "--replications",
            "100",
        ],
        &out,
    );
    for stem in ["price_fan", "harvest_fan", "stock_fan", "fiscal_cost_mean"] {
        assert_figure(&out, stem);
    }
}

/// A long zig-zag (a thinned path of thousands of seasons) stays inside its plotting area: the
/// top strip of the PNG, above the title, is untouched paper (wide strokes of sharp zig-zags
/// once drew spikes across the whole figure).
#[test]
fn dense_paths_stay_inside_the_chart() {
    let values: Vec<f64> = (0..1800)
        .map(|t| if t % 2 == 0 { 100.0 } else { 800.0 })
        .collect();
    let p = paths(
        "dense",
        "period",
        "price",
        vec![Series::periods("zig-zag", &values)],
    );
    let dir = tempfile::tempdir().unwrap();
    let png = dir.path().join("dense.png");
    p.write_png(&png).unwrap();
    let img = image::open(&png).unwrap().to_rgb8();
    let paper = furrow::plots::style::PAPER;
    for y in 0..8 {
        for x in 0..img.width() {
            let px = img.get_pixel(x, y).0;
            assert_eq!(px, [paper.0, paper.1, paper.2], "pixel ({x}, {y}) drawn on");
        }
    }
}
