//! The library's layers, checked from its source: each module imports only
//! the layers below it, engines never import the printers, and no two
//! modules import each other (directly or through others). Test code
//! (after a `#[cfg(test)]`) is not counted: tests may use anything.
//!
//! Layers, lowest first: `error` < `physics` < `solve` < `input`, `columns`
//! < `scan`, `batch` < `report`. The binary (`main.rs`, `cli/`) sits on top.

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

fn layer(top: &str) -> Option<u8> {
    Some(match top {
        "error" => 0,
        "physics" => 1,
        "solve" => 2,
        "input" | "columns" => 3,
        "scan" | "batch" => 4,
        "report" => 5,
        _ => return None,
    })
}

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for e in std::fs::read_dir(dir).expect("read src/") {
        let p = e.expect("entry").path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

/// The module a source file is (`solve::numeric`, `report`, `lib`), at
/// most two levels deep: a directory's submodules are one node.
fn node_of(src: &Path, file: &Path) -> String {
    let rel = file.strip_prefix(src).expect("under src/");
    let parts: Vec<String> = rel
        .with_extension("")
        .iter()
        .map(|s| s.to_string_lossy().into_owned())
        .filter(|s| s != "mod")
        .collect();
    parts.iter().take(2).cloned().collect::<Vec<_>>().join("::")
}

/// The non-test code of a file: everything before its first `#[cfg(test)]`,
/// without comment lines (a doc link is not an import).
fn code(text: &str) -> String {
    let text = text.find("#[cfg(test)]").map_or(text, |i| &text[..i]);
    text.lines()
        .filter(|l| !l.trim_start().starts_with("//"))
        .collect::<Vec<_>>()
        .join("\n")
}

/// `crate::a::b` references as nodes `a::b` (or `a` when `a` is a file).
fn imports(text: &str, nodes: &BTreeSet<String>) -> BTreeSet<String> {
    let mut out = BTreeSet::new();
    for (i, _) in text.match_indices("crate::") {
        let rest = &text[i + 7..];
        let path: String = rest
            .chars()
            .take_while(|c| c.is_alphanumeric() || *c == '_' || *c == ':')
            .collect();
        let segs: Vec<&str> = path.split("::").filter(|s| !s.is_empty()).collect();
        let Some(top) = segs.first() else { continue };
        let two = segs.get(1).map(|s| format!("{top}::{s}"));
        match two.filter(|n| nodes.contains(n)) {
            Some(n) => out.insert(n),
            None => out.insert(top.to_string()),
        };
    }
    out
}

fn graph() -> BTreeMap<String, BTreeSet<String>> {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    let files: Vec<PathBuf> = files
        .into_iter()
        .filter(|f| {
            let rel = f.strip_prefix(&src).unwrap();
            !(rel.starts_with("cli") || rel == Path::new("main.rs") || rel == Path::new("lib.rs"))
        })
        .collect();
    let nodes: BTreeSet<String> = files.iter().map(|f| node_of(&src, f)).collect();
    let mut g: BTreeMap<String, BTreeSet<String>> = BTreeMap::new();
    for f in &files {
        let text = std::fs::read_to_string(f).expect("read source");
        let me = node_of(&src, f);
        let deps = imports(&code(&text), &nodes);
        let entry = g.entry(me.clone()).or_default();
        entry.extend(deps.into_iter().filter(|d| *d != me));
    }
    g
}

fn top(node: &str) -> &str {
    node.split("::").next().unwrap_or(node)
}

#[test]
fn each_module_imports_only_the_layers_below_it() {
    let mut bad = Vec::new();
    for (from, deps) in graph() {
        let Some(lf) = layer(top(&from)) else {
            continue;
        };
        for d in deps {
            if top(&d) == top(&from) || top(&d) == "strategies" {
                continue;
            }
            match layer(top(&d)) {
                Some(ld) if ld < lf => {}
                _ => bad.push(format!("{from} imports {d}")),
            }
        }
    }
    assert!(bad.is_empty(), "layer violations:\n{}", bad.join("\n"));
}

#[test]
fn no_two_modules_import_each_other() {
    let g = graph();
    // Depth-first search for a back edge; report the cycle found.
    fn visit(
        n: &str,
        g: &BTreeMap<String, BTreeSet<String>>,
        state: &mut BTreeMap<String, u8>,
        stack: &mut Vec<String>,
    ) -> Option<Vec<String>> {
        state.insert(n.to_string(), 1);
        stack.push(n.to_string());
        for d in g.get(n).into_iter().flatten() {
            match state.get(d.as_str()).copied().unwrap_or(0) {
                1 => {
                    let at = stack.iter().position(|s| s == d).unwrap_or(0);
                    let mut cycle = stack[at..].to_vec();
                    cycle.push(d.clone());
                    return Some(cycle);
                }
                0 if g.contains_key(d.as_str()) => {
                    if let Some(c) = visit(d, g, state, stack) {
                        return Some(c);
                    }
                }
                _ => {}
            }
        }
        stack.pop();
        state.insert(n.to_string(), 2);
        None
    }
    let mut state = BTreeMap::new();
    for n in g.keys() {
        if state.get(n.as_str()).copied().unwrap_or(0) == 0 {
            let cycle = visit(n, &g, &mut state, &mut Vec::new());
            assert!(
                cycle.is_none(),
                "import cycle: {}",
                cycle.unwrap().join(" -> ")
            );
        }
    }
}

#[test]
fn the_checker_sees_imports() {
    // The two checks above could pass by reading nothing: make sure the
    // graph holds the edges everyone knows are there.
    let g = graph();
    assert!(
        g["solve::invert"].contains("physics::state"),
        "{:?}",
        g["solve::invert"]
    );
    assert!(g["scan"].contains("solve::problem"), "{:?}", g["scan"]);
    assert!(
        g["report::scan"].contains("scan"),
        "{:?}",
        g["report::scan"]
    );
}
