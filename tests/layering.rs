//! The library's modules form layers: no module imports another that imports it back, directly or
//! through others (DEVELOPERS.md, "no module circles"). Read from the source text: every
//! `crate::NAME` outside comments and test modules is an import of the top-level module NAME.

use std::collections::{BTreeMap, BTreeSet};
use std::path::Path;

/// Top-level module of each library source file and the top-level modules it names.
fn imports() -> BTreeMap<String, BTreeSet<String>> {
    let mut out: BTreeMap<String, BTreeSet<String>> = BTreeMap::new();
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut stack = vec![src.clone()];
    while let Some(dir) = stack.pop() {
        for entry in std::fs::read_dir(&dir).unwrap() {
            let path = entry.unwrap().path();
            if path.is_dir() {
                stack.push(path);
                continue;
            }
            if path.extension().and_then(|e| e.to_str()) != Some("rs") {
                continue;
            }
            let rel = path.strip_prefix(&src).unwrap();
            let first = rel
                .components()
                .next()
                .unwrap()
                .as_os_str()
                .to_string_lossy();
            let top = first.trim_end_matches(".rs").to_string();
            // the binary's files and the crate root are not library modules
            if top == "main" || top == "cli" || top == "lib" {
                continue;
            }
            let text = std::fs::read_to_string(&path).unwrap();
            let text = text.split("#[cfg(test)]").next().unwrap_or("");
            let names = out.entry(top.clone()).or_default();
            for line in text.lines() {
                let code = line.split("//").next().unwrap_or("");
                let mut rest = code;
                while let Some(i) = rest.find("crate::") {
                    rest = &rest[i + "crate::".len()..];
                    let name: String = rest
                        .chars()
                        .take_while(|c| c.is_alphanumeric() || *c == '_')
                        .collect();
                    // `crate::CAUTION` and the like are items of the crate root, not modules
                    if !name.is_empty()
                        && name != top
                        && !name.chars().next().unwrap().is_uppercase()
                    {
                        names.insert(name);
                    }
                }
            }
        }
    }
    out
}

/// The modules reachable from `from`.
fn reach(graph: &BTreeMap<String, BTreeSet<String>>, from: &str) -> BTreeSet<String> {
    let mut seen = BTreeSet::new();
    let mut todo = vec![from.to_string()];
    while let Some(m) = todo.pop() {
        for n in graph.get(&m).into_iter().flatten() {
            if seen.insert(n.clone()) {
                todo.push(n.clone());
            }
        }
    }
    seen
}

#[test]
fn no_module_imports_one_that_imports_it_back() {
    let graph = imports();
    assert!(graph.len() > 10, "found only {:?}", graph.keys());
    let mut circles = Vec::new();
    for (module, names) in &graph {
        for n in names {
            if reach(&graph, n).contains(module) {
                circles.push(format!("{module} → {n} → … → {module}"));
            }
        }
    }
    assert!(
        circles.is_empty(),
        "module circles:\n{}",
        circles.join("\n")
    );
}

#[test]
fn the_reader_finds_a_circle_when_there_is_one() {
    // the check itself can fail: a graph with a circle is reported
    let mut graph: BTreeMap<String, BTreeSet<String>> = BTreeMap::new();
    graph.entry("a".into()).or_default().insert("b".into());
    graph.entry("b".into()).or_default().insert("c".into());
    graph.entry("c".into()).or_default().insert("a".into());
    assert!(reach(&graph, "b").contains("a"));
    // and the real graph has the modules the map names
    let real = imports();
    for m in [
        "input",
        "regime",
        "scenario",
        "policies",
        "engine",
        "stability",
        "storage",
    ] {
        assert!(real.contains_key(m), "{m} not found");
    }
}
