//! The tree's one-way data flow, checked: every library module belongs to a layer
//! (foundation → model → formats → optim → bounds → protocol → pipeline → render) and uses only
//! its own layer and the layers before it; within a layer, files import each other without
//! cycles. DEVELOPERS.md ("Layout") draws the same map.

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

const LAYERS: &[(&str, &[&str])] = &[
    ("foundation", &["error", "limits", "numbers", "stats"]),
    ("model", &["model"]),
    ("formats", &["formats"]),
    ("optim", &["optim"]),
    ("bounds", &["bounds"]),
    ("protocol", &["protocol"]),
    ("pipeline", &["pipeline"]),
    ("render", &["render"]),
];

fn layer_of(top: &str) -> Option<usize> {
    LAYERS.iter().position(|(_, tops)| tops.contains(&top))
}

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for entry in std::fs::read_dir(dir).unwrap() {
        let path = entry.unwrap().path();
        if path.is_dir() {
            rust_files(&path, out);
        } else if path.extension().is_some_and(|e| e == "rs") {
            out.push(path);
        }
    }
}

/// The module path of a file under src/ (`src/bounds/quantum/npa.rs` → `bounds::quantum::npa`).
fn module_of(src: &Path, file: &Path) -> Vec<String> {
    let rel = file.strip_prefix(src).unwrap().with_extension("");
    let mut parts: Vec<String> = rel
        .components()
        .map(|c| c.as_os_str().to_string_lossy().into_owned())
        .collect();
    if parts.last().is_some_and(|p| p == "mod" || p == "lib") {
        parts.pop();
    }
    parts
}

/// Paths into the crate used outside comments and tests, as segment lists from the crate root:
/// `crate::a::b` as written, `super::b` resolved against `module` (the file's module path).
fn crate_paths(text: &str, module: &[String]) -> Vec<Vec<String>> {
    let code = text.split("#[cfg(test)]").next().unwrap_or("");
    let mut out = Vec::new();
    for line in code.lines() {
        let line = line.trim_start();
        if line.starts_with("//") {
            continue;
        }
        for (prefix, is_super) in [("crate::", false), ("super::", true)] {
            let mut rest = line;
            while let Some(k) = rest.find(prefix) {
                // `super::super::x` is read once, from its first `super`.
                let before = &rest[..k];
                let after = &rest[k + prefix.len()..];
                rest = after;
                if is_super && before.ends_with("super::") {
                    continue;
                }
                let path: String = after
                    .chars()
                    .take_while(|c| c.is_alphanumeric() || *c == '_' || *c == ':')
                    .collect();
                let mut segments: Vec<String> = path
                    .split("::")
                    .filter(|s| !s.is_empty())
                    .map(str::to_string)
                    .collect();
                if is_super {
                    let mut base = module[..module.len().saturating_sub(1)].to_vec();
                    while segments.first().is_some_and(|s| s == "super") {
                        segments.remove(0);
                        base.pop();
                    }
                    base.extend(segments);
                    segments = base;
                }
                out.push(segments);
            }
        }
    }
    out
}

#[test]
fn modules_use_only_their_own_layer_and_the_layers_before_it() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    let mut violations = Vec::new();
    let mut checked = 0;
    for file in &files {
        let module = module_of(&src, file);
        let Some(top) = module.first() else { continue }; // lib.rs re-exports everything
        if top == "main" || top == "cli" {
            continue; // the binary sits on top of everything
        }
        let own = layer_of(top)
            .unwrap_or_else(|| panic!("{}: module `{top}` has no layer", file.display()));
        for path in crate_paths(&std::fs::read_to_string(file).unwrap(), &module) {
            let Some(used) = path.first() else { continue };
            let Some(layer) = layer_of(used) else {
                continue;
            }; // re-exports such as crate::Error
            checked += 1;
            if layer > own {
                violations.push(format!(
                    "{} ({}) uses crate::{} ({})",
                    file.strip_prefix(&src).unwrap().display(),
                    LAYERS[own].0,
                    path.join("::"),
                    LAYERS[layer].0
                ));
            }
        }
    }
    assert!(checked > 100, "the scan found only {checked} crate paths");
    assert!(violations.is_empty(), "{}", violations.join("\n"));
}

#[test]
fn files_import_each_other_without_cycles() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    let modules: BTreeSet<Vec<String>> = files.iter().map(|f| module_of(&src, f)).collect();
    let mut edges: BTreeMap<Vec<String>, BTreeSet<Vec<String>>> = BTreeMap::new();
    for file in &files {
        let from = module_of(&src, file);
        if from.is_empty() || from[0] == "main" {
            continue;
        }
        let text = std::fs::read_to_string(file).unwrap();
        for path in crate_paths(&text, &from) {
            // The longest prefix that names a file-module.
            if let Some(to) = (1..=path.len())
                .rev()
                .map(|k| path[..k].to_vec())
                .find(|p| modules.contains(p))
            {
                // A module may use its own parent's items (mod.rs re-exports); a parent declares
                // its children. Neither is a knot in the flow.
                if to != from && !from.starts_with(&to) {
                    edges.entry(from.clone()).or_default().insert(to);
                }
            }
        }
    }
    // Depth-first search for a back edge.
    fn visit(
        node: &Vec<String>,
        edges: &BTreeMap<Vec<String>, BTreeSet<Vec<String>>>,
        state: &mut BTreeMap<Vec<String>, u8>,
        stack: &mut Vec<Vec<String>>,
    ) -> Option<Vec<String>> {
        state.insert(node.clone(), 1);
        stack.push(node.clone());
        for next in edges.get(node).into_iter().flatten() {
            match state.get(next) {
                Some(1) => {
                    let start = stack.iter().position(|n| n == next).unwrap();
                    return Some(stack[start..].iter().map(|m| m.join("::")).collect());
                }
                Some(_) => {}
                None => {
                    if let Some(cycle) = visit(next, edges, state, stack) {
                        return Some(cycle);
                    }
                }
            }
        }
        stack.pop();
        state.insert(node.clone(), 2);
        None
    }
    let mut state = BTreeMap::new();
    for node in edges.keys() {
        if !state.contains_key(node) {
            let cycle = visit(node, &edges, &mut state, &mut Vec::new());
            assert!(
                cycle.is_none(),
                "import cycle: {}",
                cycle.unwrap().join(" → ")
            );
        }
    }
    assert!(
        edges.len() > 30,
        "the scan found only {} importing modules",
        edges.len()
    );
}
