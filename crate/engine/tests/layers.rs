//! The engine's layers: each folder of `src/` imports only from the folders before it in
//! `LAYERS`, and no two modules import each other, directly or round a loop. Read from the
//! source text, so a new import that climbs or closes a loop fails here with its file and line.
//! (Layering and acyclic imports are common practice, no source.)

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

/// Bottom to top. `sample` (the demo valley) may use everything.
const LAYERS: [&str; 9] = [
    "base", "params", "io", "ice", "plants", "run", "view", "export", "sample",
];

/// A module: its layer and, inside a layer folder, its file (`None` for the folder's mod.rs).
type Module = (String, Option<String>);

struct Import {
    from: Module,
    to: Module,
    file: PathBuf,
    line: usize,
}

fn rank(layer: &str) -> Option<usize> {
    LAYERS.iter().position(|l| *l == layer)
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

fn module_of(src: &Path, file: &Path) -> Option<Module> {
    let relative = file.strip_prefix(src).unwrap();
    let parts: Vec<String> = relative
        .with_extension("")
        .components()
        .map(|c| c.as_os_str().to_string_lossy().into_owned())
        .collect();
    match parts.as_slice() {
        [root] if root == "lib" => None,
        [root] => Some((root.clone(), None)),
        [layer, file] if file == "mod" => Some((layer.clone(), None)),
        [layer, file] => Some((layer.clone(), Some(file.clone()))),
        _ => panic!("{} is deeper than one folder", relative.display()),
    }
}

/// Every `crate::a::b` path in the code (comments dropped) of each module under `src`.
fn imports(src: &Path) -> Vec<Import> {
    let mut files = Vec::new();
    rust_files(src, &mut files);
    files.sort();
    let mut found = Vec::new();
    for file in files {
        let Some(from) = module_of(src, &file) else {
            continue;
        };
        let text = std::fs::read_to_string(&file).unwrap();
        let siblings = sibling_modules(&file);
        let mut in_tests = false;
        for (n, line) in text.lines().enumerate() {
            let code = line.split("//").next().unwrap_or("");
            // A file's own tests see it through `super`; they come last, by convention.
            in_tests |= code.trim_start().starts_with("#[cfg(test)]");
            if !in_tests && from.1.is_some() {
                for target in words_after(code, "super::") {
                    let module = siblings.contains(&target).then_some(target);
                    found.push(Import {
                        from: from.clone(),
                        to: (from.0.clone(), module),
                        file: file.clone(),
                        line: n + 1,
                    });
                }
            }
            if !in_tests && from.1.is_none() && !code.trim_start().starts_with("pub mod ") {
                // A folder's mod.rs names its own files bare: `csv_tables::column_word`.
                for sibling in &siblings {
                    if uses_bare(code, sibling) {
                        found.push(Import {
                            from: from.clone(),
                            to: (from.0.clone(), Some(sibling.clone())),
                            file: file.clone(),
                            line: n + 1,
                        });
                    }
                }
            }
            let mut rest = code;
            while let Some(at) = rest.find("crate::") {
                rest = &rest[at + "crate::".len()..];
                let words: Vec<&str> = rest
                    .split("::")
                    .take(2)
                    .map(|w| {
                        let end = w
                            .find(|c: char| !(c.is_ascii_alphanumeric() || c == '_'))
                            .unwrap_or(w.len());
                        &w[..end]
                    })
                    .collect();
                let layer = words[0];
                // `crate::Grid`, `crate::MAX_CELLS`: the root's re-exports of `base`.
                let to = if layer.starts_with(char::is_uppercase) {
                    ("base".to_string(), Some("grid".to_string()))
                } else {
                    let module = words
                        .get(1)
                        .filter(|w| w.starts_with(char::is_lowercase) && !w.is_empty())
                        .map(|w| w.to_string());
                    (layer.to_string(), module)
                };
                found.push(Import {
                    from: from.clone(),
                    to,
                    file: file.clone(),
                    line: n + 1,
                });
            }
        }
    }
    found
}

/// The other modules of a file's folder (none for files at the root of `src`).
fn sibling_modules(file: &Path) -> Vec<String> {
    let dir = file.parent().unwrap();
    if dir.file_name().is_some_and(|n| n == "src") {
        return Vec::new();
    }
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "rs"))
        .map(|p| p.file_stem().unwrap().to_string_lossy().into_owned())
        .filter(|n| n != "mod")
        .collect();
    names.sort();
    names
}

/// The identifiers right after each `prefix` in `code`, and inside a `prefix{a, b}` group.
fn words_after(code: &str, prefix: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut rest = code;
    while let Some(at) = rest.find(prefix) {
        rest = &rest[at + prefix.len()..];
        let group = rest
            .strip_prefix('{')
            .map(|g| g.split('}').next().unwrap_or(""));
        let items: Vec<&str> = match group {
            Some(g) => g.split(',').collect(),
            None => vec![rest],
        };
        for item in items {
            let item = item.trim();
            let end = item
                .find(|c: char| !(c.is_ascii_alphanumeric() || c == '_'))
                .unwrap_or(item.len());
            if end > 0 {
                out.push(item[..end].to_string());
            }
        }
    }
    out
}

/// Whether `code` names `module::` on its own (not as the tail of a longer path).
fn uses_bare(code: &str, module: &str) -> bool {
    let needle = format!("{module}::");
    code.match_indices(&needle).any(|(at, _)| {
        let before = code[..at].chars().next_back();
        !before.is_some_and(|c| c.is_ascii_alphanumeric() || c == '_' || c == ':')
    })
}

/// A loop in the module graph, as the modules round it, if there is one.
fn find_loop(edges: &BTreeMap<Module, BTreeSet<Module>>) -> Option<Vec<Module>> {
    fn visit(
        node: &Module,
        edges: &BTreeMap<Module, BTreeSet<Module>>,
        state: &mut BTreeMap<Module, u8>,
        path: &mut Vec<Module>,
    ) -> Option<Vec<Module>> {
        state.insert(node.clone(), 1);
        path.push(node.clone());
        for next in edges.get(node).into_iter().flatten() {
            match state.get(next).copied().unwrap_or(0) {
                1 => {
                    let start = path.iter().position(|m| m == next).unwrap();
                    let mut cycle = path[start..].to_vec();
                    cycle.push(next.clone());
                    return Some(cycle);
                }
                0 => {
                    if let Some(cycle) = visit(next, edges, state, path) {
                        return Some(cycle);
                    }
                }
                _ => {}
            }
        }
        path.pop();
        state.insert(node.clone(), 2);
        None
    }
    let mut state = BTreeMap::new();
    for node in edges.keys() {
        if state.get(node).copied().unwrap_or(0) == 0 {
            if let Some(cycle) = visit(node, edges, &mut state, &mut Vec::new()) {
                return Some(cycle);
            }
        }
    }
    None
}

fn name(module: &Module) -> String {
    match &module.1 {
        Some(file) => format!("{}::{file}", module.0),
        None => module.0.clone(),
    }
}

#[test]
fn every_import_goes_down_a_layer_or_stays_in_its_own() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let found = imports(&src);
    assert!(found.len() > 100, "only {} imports read", found.len());
    let mut wrong = Vec::new();
    for import in &found {
        let (Some(from), Some(to)) = (rank(&import.from.0), rank(&import.to.0)) else {
            wrong.push(format!(
                "{}:{}: crate::{} is not a layer (one of {LAYERS:?})",
                import.file.display(),
                import.line,
                import.to.0
            ));
            continue;
        };
        if to > from {
            wrong.push(format!(
                "{}:{}: {} imports {}, a layer above it",
                import.file.display(),
                import.line,
                name(&import.from),
                name(&import.to)
            ));
        }
    }
    assert!(wrong.is_empty(), "{}", wrong.join("\n"));
}

#[test]
fn no_two_modules_import_each_other() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut edges: BTreeMap<Module, BTreeSet<Module>> = BTreeMap::new();
    for import in imports(&src) {
        if import.from != import.to {
            edges.entry(import.from).or_default().insert(import.to);
        }
    }
    if let Some(cycle) = find_loop(&edges) {
        let names: Vec<String> = cycle.iter().map(name).collect();
        panic!("import loop: {}", names.join(" -> "));
    }
}

#[test]
fn the_loop_finder_finds_a_loop() {
    let m = |layer: &str, file: &str| (layer.to_string(), Some(file.to_string()));
    let mut edges: BTreeMap<Module, BTreeSet<Module>> = BTreeMap::new();
    edges
        .entry(m("plants", "pft"))
        .or_default()
        .insert(m("plants", "dispersal"));
    edges
        .entry(m("plants", "dispersal"))
        .or_default()
        .insert(m("plants", "error"));
    assert_eq!(find_loop(&edges), None);
    edges
        .entry(m("plants", "dispersal"))
        .or_default()
        .insert(m("plants", "pft"));
    let cycle = find_loop(&edges).expect("pft -> dispersal -> pft");
    assert_eq!(cycle.first(), cycle.last());
    assert_eq!(cycle.len(), 3);
}
