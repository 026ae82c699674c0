//! HTML pieces: escaping, the inline style sheet, and preparing an SVG for inlining.

/// Escapes text for HTML element content and attribute values.
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 8);
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c => out.push(c),
        }
    }
    out
}

/// Prepares an SVG document for inlining: drops an XML prolog or doctype and the namespace
/// attribute (HTML needs none, and the page then holds no address at all), and makes it scale to
/// the column width. `label` becomes the accessible name.
pub fn inline_svg(svg: &str, label: &str) -> String {
    let start = svg.find("<svg").unwrap_or(0);
    let body = &svg[start..];
    let body = body.replacen(" xmlns=\"http://www.w3.org/2000/svg\"", "", 1);
    let body = body.replacen(
        "<svg",
        &format!("<svg role=\"img\" aria-label=\"{}\"", escape(label)),
        1,
    );
    // Drop fixed width/height on the root so CSS can scale it (the viewBox keeps the proportions).
    match body.find('>') {
        Some(end) => {
            let (head, rest) = body.split_at(end);
            let head = strip_attr(&strip_attr(head, "width"), "height");
            format!("{head}{rest}")
        }
        None => body,
    }
}

fn strip_attr(tag: &str, name: &str) -> String {
    let pat = format!(" {name}=\"");
    match tag.find(&pat) {
        Some(i) => {
            let after = &tag[i + pat.len()..];
            match after.find('"') {
                Some(j) => format!("{}{}", &tag[..i], &after[j + 1..]),
                None => tag.to_string(),
            }
        }
        None => tag.to_string(),
    }
}

/// True when a table cell holds a number, a range of numbers or n/a (right-aligned in tables).
pub fn is_numeric(cell: &str) -> bool {
    let one = |s: &str| {
        let t = s.trim();
        t == "n/a" || crate::units::parse_grouped(t).is_some()
    };
    !cell.contains('\n') && cell.split(" … ").flat_map(|p| p.split(" ± ")).all(one)
}

/// The page's whole style sheet (inline; no fonts or images are fetched).
pub const CSS: &str = r#"
:root { --ink:#262a2e; --muted:#5f6468; --paper:#fbf8f1; --rule:#d9d2c3; --lake:#1f5c73; --soil:#9e3b2e; --sand:#f5e3c8; }
* { box-sizing: border-box; }
body { margin:0; background:var(--paper); color:var(--ink);
  font: 16px/1.5 "DejaVu Sans", "Segoe UI", Helvetica, Arial, sans-serif; }
main { max-width: 1040px; margin: 0 auto; padding: 28px 32px 60px; background:#fffefb;
  border-left:1px solid var(--rule); border-right:1px solid var(--rule); }
header.brief { border-bottom: 4px solid var(--lake); padding-bottom: 10px; margin-bottom: 18px; }
header.brief h1 { margin: 0 0 4px; font-size: 28px; }
header.brief p.sub { margin: 0; color: var(--muted); }
h2 { font-size: 21px; margin: 34px 0 10px; padding-bottom: 4px; border-bottom: 1px solid var(--rule); }
h3 { font-size: 17px; margin: 22px 0 6px; }
section.summary { background: #eef4f3; border-left: 6px solid var(--lake); padding: 10px 18px; }
section.summary h2 { border: none; margin-top: 6px; }
section.summary li { margin: 4px 0; }
aside.caution { background: var(--sand); border-left: 6px solid var(--soil); padding: 10px 18px; margin: 18px 0; }
aside.caution strong { color: var(--soil); }
nav.toc { font-size: 14px; color: var(--muted); margin: 12px 0 0; }
nav.toc a { color: var(--lake); margin-right: 14px; text-decoration: none; }
table { border-collapse: collapse; margin: 8px 0 6px; font-size: 14px; width: auto; max-width: 100%; }
.tablewrap { overflow-x: auto; max-width: 100%; }
.tablegroup { margin: 10px 0 14px; }
th, td { overflow-wrap: break-word; }
section.keyfigures table { width: 100%; }
section.keyfigures td, section.keyfigures th { font-size: 13px; }
section.caveats { font-size: 14px; color: var(--ink); }
section.caveats h3 { margin-top: 10px; }
section.caveats li { margin: 3px 0; }
caption { caption-side: top; text-align: left; font-weight: bold; padding: 4px 0; }
th, td { padding: 4px 10px; border-bottom: 1px solid #ebe5d8; vertical-align: top; }
thead th { background: #f1ece1; border-bottom: 2px solid var(--rule); text-align: left; }
tbody th { text-align: left; font-weight: normal; color: var(--ink); }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tbody tr:nth-child(even) { background: #fbf9f4; }
figure { margin: 18px 0 26px; }
figure svg { width: 100%; height: auto; display: block; border: 1px solid var(--rule); }
figcaption { font-size: 14px; color: var(--muted); margin-top: 4px; }
p.note { font-size: 14px; color: var(--muted); }
code { font-size: 90%; background:#f1ece1; padding: 0 3px; }
footer { margin-top: 40px; font-size: 13px; color: var(--muted); border-top: 1px solid var(--rule); padding-top: 8px; }
@media print {
  @page { size: A4; margin: 12mm; }
  body { background: none; font-size: 11px; }
  main { border: none; max-width: none; padding: 0; }
  table, section.keyfigures td, section.keyfigures th { font-size: 10px; }
  th, td { padding: 2px 5px; }
  .tablewrap { overflow: visible; }
  nav.toc { display: none; }
  figure, tr, .tablewrap { break-inside: avoid; page-break-inside: avoid; }
  h2, h3, caption { break-after: avoid; page-break-after: avoid; }
  figure svg { max-height: 230mm; }
  aside.caution { break-inside: avoid; }
  section.annexes-start { break-before: page; page-break-before: always; }
}
"#;
