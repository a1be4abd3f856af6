//! The import directions of sim-core, enforced: each module's non-test
//! code may name (`crate::…`) only modules of its own layer or below, as
//! ARCHITECTURE.md's "Layers" section states, and the top-level modules
//! form no cycle. Read from the source text, so a change that re-creates a
//! backward import fails here with the file, the line and the rule.

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

/// The layers, lowest first, as ARCHITECTURE.md lists them. A module may
/// import from its own layer and every layer below, never above.
const LAYERS: &[(&str, &[&str])] = &[
    (
        "ground",
        &["units", "error", "devices", "metrics", "record"],
    ),
    ("file format", &["scenario"]),
    ("model", &["model"]),
    ("engines", &["exact", "reference"]),
    ("post-processing", &["parts"]),
    ("run", &["run"]),
    ("report", &["report"]),
    ("studies", &["study"]),
];

/// Pairs in one layer that must not import each other either way: the two
/// engines stay independent (the reference is a check on the exact one).
const APART: &[(&str, &str)] = &[("exact", "reference")];

/// Modules held to fewer imports than their layer allows: the file format
/// names only the numbers, the errors and the device laws (not the
/// figures or the recorded waveform), so reading a file never depends on
/// how a run is measured.
const ONLY: &[(&str, &[&str])] = &[("scenario", &["units", "error", "devices"])];

fn src() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("sim-core/src")
}

fn layer_of(module: &str) -> Option<usize> {
    LAYERS.iter().position(|(_, mods)| mods.contains(&module))
}

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") && !is_test_file(&p) {
            out.push(p);
        }
    }
}

/// A file that holds only a test module (`tests.rs`, `tests_*.rs`):
/// tests may reach across layers to compare one module with another.
fn is_test_file(p: &Path) -> bool {
    let stem = p.file_stem().unwrap_or_default().to_string_lossy();
    stem == "tests" || stem.starts_with("tests_")
}

/// The top-level module a file belongs to (`exact/events.rs` → `exact`).
fn top_module(file: &Path) -> String {
    let rel = file.strip_prefix(src()).unwrap();
    let first = rel
        .components()
        .next()
        .unwrap()
        .as_os_str()
        .to_string_lossy();
    first.trim_end_matches(".rs").to_string()
}

/// The file's code without its test module(s) and comments: everything
/// from a `#[cfg(test)]` line on is test code by this crate's convention
/// (test modules sit at the end of a file), and `//` lines are prose.
fn code_lines(text: &str) -> Vec<(usize, &str)> {
    let mut out = Vec::new();
    for (i, line) in text.lines().enumerate() {
        let t = line.trim_start();
        if t.starts_with("#[cfg(test)]") {
            break;
        }
        if t.starts_with("//") {
            continue;
        }
        out.push((i + 1, line));
    }
    out
}

/// Every `crate::NAME` a line names (in `use` items and in paths).
fn crate_refs(line: &str) -> Vec<String> {
    let mut refs = Vec::new();
    let mut rest = line;
    while let Some(i) = rest.find("crate::") {
        let after = &rest[i + "crate::".len()..];
        let name: String = after
            .chars()
            .take_while(|c| c.is_ascii_alphanumeric() || *c == '_')
            .collect();
        if name == "{" || name.is_empty() {
            // `use crate::{a, b::c}`: the names inside the braces.
            if let Some(body) = after.strip_prefix('{') {
                let end = body.find('}').unwrap_or(body.len());
                for part in body[..end].split(',') {
                    let n: String = part
                        .trim()
                        .chars()
                        .take_while(|c| c.is_ascii_alphanumeric() || *c == '_')
                        .collect();
                    if !n.is_empty() {
                        refs.push(n);
                    }
                }
            }
        } else {
            refs.push(name);
        }
        rest = after;
    }
    refs
}

#[test]
fn sim_core_imports_point_down_the_layers_only() {
    let mut files = Vec::new();
    rust_files(&src(), &mut files);
    files.sort();
    let mut graph: BTreeMap<String, BTreeSet<String>> = BTreeMap::new();
    let mut wrong = Vec::new();
    let mut unplaced = BTreeSet::new();
    for file in &files {
        let from = top_module(file);
        if from == "lib" {
            continue; // the facade re-exports from every layer
        }
        let Some(from_layer) = layer_of(&from) else {
            unplaced.insert(from.clone());
            continue;
        };
        let text = std::fs::read_to_string(file).unwrap();
        for (n, line) in code_lines(&text) {
            for to in crate_refs(line) {
                if to == from {
                    continue;
                }
                let Some(to_layer) = layer_of(&to) else {
                    // A crate-root item (a re-export in lib.rs) or a module
                    // the table does not place: the latter is caught below.
                    continue;
                };
                graph.entry(from.clone()).or_default().insert(to.clone());
                let rel = file.strip_prefix(src()).unwrap().display();
                if to_layer > from_layer {
                    wrong.push(format!(
                        "{rel}:{n}: `{from}` ({}) imports `{to}` ({}), a higher layer",
                        LAYERS[from_layer].0, LAYERS[to_layer].0
                    ));
                }
                if let Some((_, allowed)) = ONLY.iter().find(|(m, _)| *m == from) {
                    if !allowed.contains(&to.as_str()) {
                        wrong.push(format!(
                            "{rel}:{n}: `{from}` imports `{to}`; it may import only {allowed:?}"
                        ));
                    }
                }
                if APART
                    .iter()
                    .any(|&(a, b)| (a == from && b == to) || (b == from && a == to))
                {
                    wrong.push(format!(
                        "{rel}:{n}: `{from}` imports `{to}`; they stay apart"
                    ));
                }
            }
        }
    }
    assert!(
        unplaced.is_empty(),
        "modules not placed in a layer (add them to LAYERS and to ARCHITECTURE.md): {unplaced:?}"
    );
    assert!(wrong.is_empty(), "backward imports:\n{}", wrong.join("\n"));

    // No cycle among the top-level modules (same-layer imports included).
    fn visit(
        m: &str,
        g: &BTreeMap<String, BTreeSet<String>>,
        stack: &mut Vec<String>,
        done: &mut BTreeSet<String>,
    ) -> Option<Vec<String>> {
        if let Some(i) = stack.iter().position(|s| s == m) {
            return Some(stack[i..].to_vec());
        }
        if done.contains(m) {
            return None;
        }
        stack.push(m.to_string());
        for n in g.get(m).into_iter().flatten() {
            if let Some(c) = visit(n, g, stack, done) {
                return Some(c);
            }
        }
        stack.pop();
        done.insert(m.to_string());
        None
    }
    let mut done = BTreeSet::new();
    for m in graph.keys() {
        let mut stack = Vec::new();
        if let Some(cycle) = visit(m, &graph, &mut stack, &mut done) {
            panic!(
                "import cycle among top-level modules: {}",
                cycle.join(" → ")
            );
        }
    }
}

#[test]
fn the_layer_table_matches_architecture_md() {
    let arch =
        std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("ARCHITECTURE.md"))
            .unwrap();
    for (layer, mods) in LAYERS {
        let line = arch
            .lines()
            .find(|l| l.contains(&format!("**{layer}**")))
            .unwrap_or_else(|| panic!("ARCHITECTURE.md names no layer **{layer}**"));
        for m in *mods {
            assert!(
                line.contains(&format!("`{m}`")),
                "ARCHITECTURE.md's line for **{layer}** does not list `{m}`: {line}"
            );
        }
    }
}
