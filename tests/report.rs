//! The HTML briefing: self-contained (no scripts, no external addresses), escaped, with the caution
//! and the tables; rendered in headless Chromium when it is installed (required when CI is set).

use std::path::{Path, PathBuf};
use std::process::Command;

use assert_cmd::cargo::CommandCargoExt;
use furrow::briefing::{Briefing, Section};
use furrow::output::TextTable;

const MARKET: &str = "examples/veldmark.toml";
const POLICIES: &[&str] = &["policies/support_purchase.toml", "policies/price_band.toml"];

fn write_report(dir: &Path, market: &str, policies: &[&str]) -> (PathBuf, String) {
    write_report_with(dir, market, policies, &[])
}

fn write_report_with(
    dir: &Path,
    market: &str,
    policies: &[&str],
    extra: &[&str],
) -> (PathBuf, String) {
    let out = dir.join("brief.html");
    let mut cmd = Command::cargo_bin("furrow").unwrap();
    cmd.arg("report")
        .arg(market)
        .args(policies)
        .args(extra)
        .arg("--out")
        .arg(&out);
    let o = cmd.output().unwrap();
    assert!(
        o.status.success(),
        "report failed: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    let html = std::fs::read_to_string(&out).unwrap();
    (out, html)
}

/// No script, and no attribute pointing anywhere outside the page (common practice, no source).
fn assert_self_contained(html: &str) {
    let lower = html.to_lowercase();
    assert!(!lower.contains("<script"), "page has a script");
    for attr in ["src=", "href=", "url("] {
        for (i, _) in lower.match_indices(attr) {
            let rest = &lower[i + attr.len()..];
            let rest = rest.trim_start_matches(['"', '\'', ' ']);
            assert!(
                !(rest.starts_with("http:")
                    || rest.starts_with("https:")
                    || rest.starts_with("//")),
                "external reference near {}",
                &html[i..(i + 80).min(html.len())]
            );
        }
    }
    assert!(
        !lower.contains("http://") && !lower.contains("https://"),
        "page holds an address"
    );
    assert!(!lower.contains("<link"), "page links a resource");
}

#[test]
fn briefing_escapes_text_and_inlines_svg() {
    let mut t = TextTable::new(&["policy", "value"]);
    t.push(vec!["A <b>&</b> \"B\"".into(), "1.5".into()]);
    let mut s = Section::new("Results & <more>");
    s.table("caption <i>", t);
    s.figure("fig <1>", "<?xml version=\"1.0\"?>\n<svg width=\"10\" height=\"10\" viewBox=\"0 0 10 10\" xmlns=\"http://www.w3.org/2000/svg\"><text>hi</text></svg>".into());
    let b = Briefing {
        title: "T <script>alert(1)</script>".into(),
        subtitle: "sub".into(),
        summary: vec!["one & two".into()],
        caution: "Model results, not forecasts.".into(),
        sections: vec![s],
        provenance: vec![("seed".into(), "7".into())],
        ..Default::default()
    };
    let html = b.to_html();
    assert_self_contained(&html);
    assert!(html.contains("T &lt;script&gt;alert(1)&lt;/script&gt;"));
    assert!(html.contains("A &lt;b&gt;&amp;&lt;/b&gt; &quot;B&quot;"));
    assert!(html.contains("Results &amp; &lt;more&gt;"));
    assert!(html.contains("<td class=\"num\">1.5</td>"));
    assert!(!html.contains("<?xml"));
    assert!(html.contains("<svg role=\"img\" aria-label=\"fig &lt;1&gt;\""));
    assert!(html.contains("Model results, not forecasts."));
    assert_eq!(
        html.matches("<table").count(),
        2,
        "results table and provenance"
    );
}

#[test]
fn report_verb_writes_a_self_contained_briefing() {
    let dir = tempfile::tempdir().unwrap();
    let (_, html) = write_report(dir.path(), MARKET, POLICIES);
    assert_self_contained(&html);
    assert!(html.contains("<table"));
    assert!(html.contains("not forecasts"));
    assert!(html.contains(furrow::CAUTION), "the caution, word for word");
    assert!(html.matches("<svg").count() >= 4, "plots inlined");
    for p in POLICIES {
        assert!(html.contains(p), "policy file {p} named");
    }
    assert!(html.contains("Support price 200, public purchase"));
    assert!(html.contains(env!("CARGO_PKG_VERSION")));
    // The provenance hashes agree with coreutils' sha256sum when it is present (FIPS 180-4 SHA-256).
    if let Ok(o) = Command::new("sha256sum").arg(MARKET).output() {
        let line = String::from_utf8_lossy(&o.stdout);
        let hash = line.split_whitespace().next().unwrap_or("");
        assert_eq!(hash.len(), 64);
        assert!(
            html.contains(hash),
            "market hash {hash} not in the provenance"
        );
    }
}

#[test]
fn report_needs_out_and_fails_cleanly_on_a_missing_policy() {
    let o = Command::cargo_bin("furrow")
        .unwrap()
        .args(["report", MARKET, POLICIES[0]])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--out"));
    let dir = tempfile::tempdir().unwrap();
    let o = Command::cargo_bin("furrow")
        .unwrap()
        .args(["report", MARKET, "policies/no_such_file.toml", "--out"])
        .arg(dir.path().join("x.html"))
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("no_such_file"));
    assert!(!dir.path().join("x.html").exists());
}

/// Names a Chromium-based browser goes by on PATH (Debian, Ubuntu, Fedora, Google's packages).
const BROWSER_NAMES: &[&str] = &[
    "chromium",
    "chromium-browser",
    "google-chrome",
    "google-chrome-stable",
    "chrome",
    "headless_shell",
];

/// CI is set (to anything but empty, `0` or `false`): missing tools are then failures, not skips.
fn in_ci() -> bool {
    std::env::var("CI").is_ok_and(|v| !v.is_empty() && v != "0" && v != "false")
}

/// The headless browser: `FURROW_BROWSER` if set, else the first of [`BROWSER_NAMES`] on PATH.
fn chromium() -> Option<PathBuf> {
    if let Some(p) = std::env::var_os("FURROW_BROWSER") {
        let p = PathBuf::from(p);
        assert!(p.is_file(), "FURROW_BROWSER={} is not a file", p.display());
        return Some(p);
    }
    let path = std::env::var_os("PATH").unwrap_or_default();
    for dir in std::env::split_paths(&path) {
        for name in BROWSER_NAMES {
            let p = dir.join(name);
            if p.is_file() {
                return Some(p);
            }
        }
    }
    if in_ci() {
        panic!(
            "CI is set but no headless browser is on PATH (looked for {}): install the Debian package `chromium`",
            BROWSER_NAMES.join(", ")
        );
    }
    eprintln!(
        "SKIPPED the browser check: none of {} is on PATH (set CI to make this fatal)",
        BROWSER_NAMES.join(", ")
    );
    None
}

fn chromium_cmd(bin: &Path, profile: &Path) -> Command {
    let mut c = Command::new(bin);
    c.args([
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--hide-scrollbars",
    ])
    .arg(format!("--user-data-dir={}", profile.display()));
    c
}

#[test]
fn report_renders_in_headless_chromium() {
    let Some(bin) = chromium() else { return };
    let dir = tempfile::tempdir().unwrap();
    let (page, _) = write_report(dir.path(), MARKET, POLICIES);
    let url = format!("file://{}", page.canonicalize().unwrap().display());
    let profile = tempfile::tempdir().unwrap();
    let o = chromium_cmd(&bin, profile.path())
        .arg("--dump-dom")
        .arg(&url)
        .output()
        .unwrap();
    assert!(
        o.status.success(),
        "chromium failed: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    let dom = String::from_utf8_lossy(&o.stdout);
    assert!(dom.contains("<table"), "the loaded DOM has no tables");
    assert!(
        dom.matches("<table").count() >= 5,
        "expected the assumption, policy, welfare, stability and provenance tables"
    );
    assert!(dom.contains("Caution."));
    assert!(dom.contains("<svg"));
    let shot = dir.path().join("shot.png");
    let profile = tempfile::tempdir().unwrap();
    let o = chromium_cmd(&bin, profile.path())
        .arg("--window-size=1100,1400")
        .arg(format!("--screenshot={}", shot.display()))
        .arg(&url)
        .output()
        .unwrap();
    assert!(
        o.status.success(),
        "chromium screenshot failed: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    let img = image::open(&shot).unwrap().to_rgb8();
    let mut colours = std::collections::HashSet::new();
    let mut dark = 0usize;
    for p in img.pixels() {
        colours.insert(p.0);
        if p.0.iter().all(|&c| c < 100) {
            dark += 1;
        }
    }
    // A page with text, boxes and plots: many colours and plenty of dark text pixels.
    assert!(
        colours.len() > 200,
        "screenshot looks blank ({} colours)",
        colours.len()
    );
    assert!(
        dark > 2000,
        "screenshot shows little text ({dark} dark pixels)"
    );
}

/// Every shipped policy file, in the order a shell glob gives them.
fn all_policies() -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir("policies")
        .unwrap()
        .filter_map(|e| e.ok())
        .map(|e| format!("policies/{}", e.file_name().to_string_lossy()))
        .filter(|n| n.ends_with(".toml"))
        .collect();
    v.sort();
    v
}

/// A script appended to a copy of the page (the briefing itself never has one): for every table
/// group it records whether any table container overflows (scrollWidth > clientWidth) and the
/// group's visible text, into a `<pre id="furrow-check">` the DOM dump carries out.
const PROBE: &str = r#"<script>
(function () {
  var out = [];
  document.querySelectorAll('.tablegroup').forEach(function (g) {
    var over = [];
    g.querySelectorAll('.tablewrap').forEach(function (w) {
      if (w.scrollWidth > w.clientWidth) { over.push(w.scrollWidth + '>' + w.clientWidth); }
    });
    var cap = g.querySelector('caption');
    out.push({ caption: cap ? cap.textContent : '', overflow: over, text: g.innerText });
  });
  var pre = document.createElement('pre');
  pre.id = 'furrow-check';
  pre.textContent = 'BEGIN' + JSON.stringify(out) + 'END';
  document.body.appendChild(pre);
})();
</script>"#;

/// Loads `html` (with the probe) at `width` px and returns the probe's records.
fn probe(bin: &Path, dir: &Path, html: &str, width: u32, name: &str) -> Vec<serde_json::Value> {
    let page = dir.join(name);
    std::fs::write(&page, html.replace("</body>", &format!("{PROBE}</body>"))).unwrap();
    let profile = tempfile::tempdir().unwrap();
    let o = chromium_cmd(bin, profile.path())
        .arg(format!("--window-size={width},1400"))
        .arg("--dump-dom")
        .arg(format!("file://{}", page.canonicalize().unwrap().display()))
        .output()
        .unwrap();
    assert!(
        o.status.success(),
        "chromium failed: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    let dom = String::from_utf8_lossy(&o.stdout);
    // the script's own text holds 'BEGIN' too, never followed by the JSON's bracket
    let a = dom.find("BEGIN[").expect("probe output") + 5;
    let b = dom[a..].find("]END").expect("probe end") + a + 1;
    let json = dom[a..b]
        .replace("&quot;", "\"")
        .replace("&lt;", "<")
        .replace("&gt;", ">")
        .replace("&amp;", "&");
    serde_json::from_str::<Vec<serde_json::Value>>(&json).expect("probe JSON")
}

/// The briefing of every shipped policy: no table container overflows on a 1 280-px screen nor at
/// the width of A4 portrait (186 mm at 96 px per inch = 703 px, the page less 12 mm margins, with
/// the print rules applied), and each policy table names every policy; it also prints to a PDF
/// (W3C CSSOM View: scrollWidth > clientWidth means clipped content; common practice, no source).
#[test]
fn report_tables_fit_a_screen_and_a_printed_page() {
    let Some(bin) = chromium() else { return };
    let dir = tempfile::tempdir().unwrap();
    let files = all_policies();
    let refs: Vec<&str> = files.iter().map(String::as_str).collect();
    let (page, html) = write_report_with(
        dir.path(),
        "examples/veldmark_weather.toml",
        &refs,
        &["--replications", "100"],
    );
    let names: Vec<String> = files
        .iter()
        .map(|f| {
            let t: toml::Table = std::fs::read_to_string(f).unwrap().parse().unwrap();
            t["policy"]["name"].as_str().unwrap().to_string()
        })
        .collect();
    let printed = html.replace("@media print", "@media all");
    for (width, page_html, what) in [(1280, &html, "screen"), (703, &printed, "A4 print")] {
        let groups = probe(&bin, dir.path(), page_html, width, &format!("{what}.html"));
        assert!(groups.len() >= 6, "{what}: {} table groups", groups.len());
        for g in &groups {
            let caption = g["caption"].as_str().unwrap_or("");
            assert!(
                g["overflow"].as_array().unwrap().is_empty(),
                "{what}: table “{caption}” overflows: {}",
                g["overflow"]
            );
            let policy_table = [
                "Each policy",
                "Policy designs",
                "Risk figures",
                "Welfare and fiscal cost",
                "Stability verdicts",
            ]
            .iter()
            .any(|c| caption.starts_with(c));
            if policy_table {
                let text = g["text"]
                    .as_str()
                    .unwrap()
                    .split_whitespace()
                    .collect::<Vec<_>>()
                    .join(" ");
                for n in &names {
                    assert!(
                        text.contains(n.as_str()),
                        "{what}: “{n}” missing from “{caption}”"
                    );
                }
            }
        }
    }
    let pdf = dir.path().join("brief.pdf");
    let profile = tempfile::tempdir().unwrap();
    let o = chromium_cmd(&bin, profile.path())
        .arg("--no-pdf-header-footer")
        .arg(format!("--print-to-pdf={}", pdf.display()))
        .arg(format!("file://{}", page.canonicalize().unwrap().display()))
        .output()
        .unwrap();
    assert!(
        o.status.success(),
        "print to PDF failed: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    let bytes = std::fs::read(&pdf).unwrap();
    assert!(
        bytes.starts_with(b"%PDF") && bytes.len() > 20_000,
        "PDF of {} bytes",
        bytes.len()
    );
}

/// The text of the first page (from "In brief" to the caution), tags removed.
fn first_page(html: &str) -> String {
    let a = html.find("In brief").expect("summary");
    let b = html.find("Caution.").expect("caution");
    let mut out = String::new();
    let mut tag = false;
    for c in html[a..b].chars() {
        match c {
            '<' => tag = true,
            '>' => {
                tag = false;
                out.push(' ');
            }
            c if !tag => out.push(c),
            _ => {}
        }
    }
    out.split_whitespace().collect::<Vec<_>>().join(" ")
}

/// Two support prices above what the free market pays on average lose for the economy as a whole
/// (a price floor defended by purchases creates a deadweight loss: Wallace 1962, from memory), so
/// the first page must say that no scheme beats leaving the market alone and rank none as best.
#[test]
fn with_only_losing_policies_the_first_page_says_so() {
    let dir = tempfile::tempdir().unwrap();
    let (_, html) = write_report_with(
        dir.path(),
        "examples/veldmark_weather.toml",
        &[
            "policies/support_purchase.toml",
            "policies/support_high_purchase.toml",
        ],
        &["--replications", "200"],
    );
    let page = first_page(&html);
    assert!(
        page.contains("No scheme beats leaving the market alone"),
        "{page}"
    );
    for word in ["best", "largest net benefit", "does best"] {
        assert!(!page.contains(word), "“{word}” on a page of losers: {page}");
    }
    assert!(page.contains("5–95 %"), "ranges on the first page: {page}");
    assert!(page.contains("million crowns") || page.contains("thousand crowns"));
    assert!(html.contains(furrow::CAUTION));
    // the first page comes before the annexes, and the settings table is in an annex
    assert!(html.find("Each policy at a glance") < html.find("Every setting"));
}

/// A long run keeps the briefing small: paths are thinned to the extremes of each pixel column
/// (common practice, no source), so a million seasons make a page of well under 5 MB.
#[test]
fn a_million_seasons_make_a_small_briefing() {
    let dir = tempfile::tempdir().unwrap();
    let (_, html) = write_report_with(dir.path(), MARKET, POLICIES, &["--periods", "1000000"]);
    assert!(html.len() < 5_000_000, "{} bytes", html.len());
    assert!(
        html.contains("lowest and highest value of every"),
        "the thinning is stated"
    );
    assert!(html.contains("1,000,000 seasons are simulated"));
}

#[test]
fn report_refuses_other_formats_and_writes_to_stdout() {
    let o = Command::cargo_bin("furrow")
        .unwrap()
        .args([
            "report",
            MARKET,
            POLICIES[0],
            "--out",
            "-",
            "--format",
            "json",
        ])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("--format json"));
    let o = Command::cargo_bin("furrow")
        .unwrap()
        .args(["report", MARKET, POLICIES[0], "--out", "-"])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let page = String::from_utf8(o.stdout).unwrap();
    assert!(page.starts_with("<!DOCTYPE html>") && page.trim_end().ends_with("</html>"));
}

/// The market paragraph states the steady state of the linear Dunmere market: a + bP = c + dP gives
/// P* = (a − c)/(d − b) = (300 + 40)/(1.1 + 1.25) = 144.68, Q* = 300 − 1.25 P* = 119.15 (the market
/// equilibrium of Ezekiel 1938's cobweb model, worked by hand).
#[test]
fn report_states_the_steady_state_and_the_stability_verdict() {
    let dir = tempfile::tempdir().unwrap();
    let (_, html) = write_report(
        dir.path(),
        "examples/dunmere_cycle.toml",
        &["policies/none.toml"],
    );
    assert!(
        html.contains("steady state 119.1 kt at 144.7 crowns per t"),
        "steady state missing"
    );
    // Naive expectations, linear curves: the eigenvalue is −b/d = −1.1/1.25 = −0.88 (Ezekiel 1938).
    assert!(
        html.contains("<td class=\"num\">0.880</td>"),
        "spectral radius 0.880 missing"
    );
    assert!(html.contains(">stable<"));
}

/// Options a verb cannot honour are refused with a message naming them, never silently ignored.
#[test]
fn plots_are_refused_where_no_figure_is_drawn() {
    let dir = tempfile::tempdir().unwrap();
    for args in [
        vec!["check", MARKET],
        vec!["storage", "examples/veldmark_storers.toml"],
    ] {
        let o = Command::cargo_bin("furrow")
            .unwrap()
            .args(&args)
            .arg("--plots")
            .arg(dir.path().join("p"))
            .output()
            .unwrap();
        assert_eq!(o.status.code(), Some(2), "{args:?}");
        assert!(
            String::from_utf8_lossy(&o.stderr).contains("--plots is not available"),
            "{args:?}"
        );
        assert!(!dir.path().join("p").exists());
    }
}

/// A briefing on a market that trades says so: the parities come from the market file's own
/// numbers (import parity = world price + import cost, export parity = world price − export cost,
/// by definition), and the closed-market caveat is gone.
#[test]
fn a_trading_market_briefing_names_its_parities() {
    let market = "examples/veldmark_border.toml";
    let text = std::fs::read_to_string(market).unwrap();
    let table: toml::Table = text.parse().unwrap();
    let t = table["trade"].as_table().unwrap();
    let num = |k: &str| t[k].as_float().unwrap();
    let (w, mi, xo) = (num("world_price"), num("import_cost"), num("export_cost"));
    let dir = tempfile::tempdir().unwrap();
    let (_, html) = write_report_with(
        dir.path(),
        market,
        &["policies/border/band.toml"],
        &["--replications", "40"],
    );
    assert!(html.contains("The market trades"), "no border paragraph");
    assert!(html.contains(&format!(
        "import parity {}",
        furrow::units::group(w + mi, 1)
    )));
    assert!(html.contains(&format!(
        "export parity {}",
        furrow::units::group(w - xo, 1)
    )));
    assert!(!html.contains("modelled closed"));
    assert!(html.contains("abroad"));
}
