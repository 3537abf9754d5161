//! The source layout keeps its promises (README "Development"):
//! - no two files of `src/` import each other, and more: the file-level import graph
//!   has no cycle at all;
//! - the library never exits the process, installs a signal handler or parses the
//!   command line (clap, `process::exit` and `signal_hook` appear only in the
//!   binary's files: `main.rs`, `cli.rs`, `commands/`);
//! - `theory/` is pure mathematics: no polars, no file or terminal I/O;
//! - `audit/` does not read `ingest/`.
//!
//! How the graph is built: every `.rs` file is placed in its crate by following the
//! `mod` declarations from `lib.rs` and `main.rs`. Every path a file names
//! (`crate::…`, `super::…`, `self::…`, `gapcert::…` from the binary, a child
//! module's name, or a module imported under its own name) is resolved segment by
//! segment to the module file that defines its item; `pub use` re-exports are
//! followed to the defining file. An edge goes from the file that names the path to
//! that file. `mod` declarations are not edges, and `#[cfg(test)]` modules are left
//! out (test code may reach anywhere).

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

use crate::common::root;

/// A module: its file, its crate, its path inside the crate, its child modules.
#[derive(Debug, Clone)]
struct Module {
    file: PathBuf,
    krate: &'static str,
    path: Vec<String>,
    children: BTreeSet<String>,
    /// Source without `#[cfg(test)]` modules and comments.
    code: String,
}

/// Strips `//` comments (outside string literals, roughly: the layout test only needs
/// paths in code) and every `#[cfg(test)]` item that is a module with a body.
fn strip(source: &str) -> String {
    let mut out = String::with_capacity(source.len());
    for line in source.lines() {
        let trimmed = line.trim_start();
        if trimmed.starts_with("//") {
            out.push('\n');
            continue;
        }
        out.push_str(line);
        out.push('\n');
    }
    // Remove `#[cfg(test)] mod name { ... }` by brace matching.
    let mut result = String::with_capacity(out.len());
    let mut rest = out.as_str();
    while let Some(at) = rest.find("#[cfg(test)]") {
        result.push_str(&rest[..at]);
        let after = &rest[at..];
        let Some(open) = after.find('{') else {
            rest = "";
            break;
        };
        let header = &after[..open];
        if !header.contains("mod ") || header.contains(';') {
            // `#[cfg(test)]` on something else (a `use`, a function): keep the
            // attribute out, keep going after it.
            rest = &after["#[cfg(test)]".len()..];
            continue;
        }
        let mut depth = 0usize;
        let mut end = after.len();
        for (index, ch) in after[open..].char_indices() {
            match ch {
                '{' => depth += 1,
                '}' => {
                    depth -= 1;
                    if depth == 0 {
                        end = open + index + 1;
                        break;
                    }
                }
                _ => {}
            }
        }
        rest = &after[end..];
    }
    result.push_str(rest);
    result
}

/// The `mod name;` declarations of a file.
fn declared_modules(code: &str) -> Vec<String> {
    let mut names = Vec::new();
    for line in code.lines() {
        let line = line.trim();
        let line = line
            .strip_prefix("pub(crate) ")
            .or_else(|| line.strip_prefix("pub "))
            .unwrap_or(line);
        if let Some(rest) = line.strip_prefix("mod ") {
            if let Some(name) = rest.strip_suffix(';') {
                names.push(name.trim().to_string());
            }
        }
    }
    names
}

fn module_tree(src: &Path) -> Vec<Module> {
    let mut modules = Vec::new();
    for (root_file, krate) in [("lib.rs", "lib"), ("main.rs", "bin")] {
        let mut pending = vec![(src.join(root_file), Vec::<String>::new())];
        while let Some((file, path)) = pending.pop() {
            let source = std::fs::read_to_string(&file)
                .unwrap_or_else(|e| panic!("{}: {e}", file.display()));
            let code = strip(&source);
            let stem = file.file_stem().unwrap().to_str().unwrap();
            let folder = if ["lib", "main", "mod"].contains(&stem) {
                file.parent().unwrap().to_path_buf()
            } else {
                file.parent().unwrap().join(stem)
            };
            let mut children = BTreeSet::new();
            for name in declared_modules(&code) {
                let flat = folder.join(format!("{name}.rs"));
                let nested = folder.join(&name).join("mod.rs");
                let child = if flat.exists() { flat } else { nested };
                assert!(child.exists(), "{}: mod {name} has no file", file.display());
                let mut child_path = path.clone();
                child_path.push(name.clone());
                children.insert(name);
                pending.push((child, child_path));
            }
            modules.push(Module {
                file,
                krate,
                path,
                children,
                code,
            });
        }
    }
    modules
}

/// Expands the `use` statements of a file into full paths, each with the name it
/// is bound to (its last segment, or its `as` alias).
fn use_paths(code: &str) -> Vec<(Vec<String>, String, bool)> {
    let mut found = Vec::new();
    let mut rest = code;
    while let Some(at) = find_use(rest) {
        let after = &rest[at..];
        let public = rest[..at].trim_end().ends_with("pub") || rest[..at].ends_with("pub(crate) ");
        let end = after.find(';').unwrap_or(after.len());
        let statement = &after[4..end];
        expand(statement.trim(), &mut Vec::new(), public, &mut found);
        rest = &after[end.min(after.len())..];
    }
    found
}

fn find_use(text: &str) -> Option<usize> {
    let mut from = 0;
    while let Some(at) = text[from..].find("use ") {
        let at = from + at;
        let before = text[..at].chars().last();
        if before.map_or(true, |c| c.is_whitespace()) {
            return Some(at);
        }
        from = at + 4;
    }
    None
}

fn expand(
    tree: &str,
    prefix: &mut Vec<String>,
    public: bool,
    out: &mut Vec<(Vec<String>, String, bool)>,
) {
    let tree = tree.trim();
    if tree.is_empty() {
        return;
    }
    if let Some(open) = tree.find('{') {
        let head: Vec<String> = tree[..open]
            .split("::")
            .map(str::trim)
            .filter(|s| !s.is_empty())
            .map(str::to_string)
            .collect();
        let inner = &tree[open + 1..tree.rfind('}').unwrap_or(tree.len())];
        let depth = prefix.len();
        prefix.extend(head);
        for part in split_top(inner) {
            expand(part, prefix, public, out);
        }
        prefix.truncate(depth);
        return;
    }
    let (path, alias) = match tree.split_once(" as ") {
        Some((path, alias)) => (path.trim(), Some(alias.trim().to_string())),
        None => (tree, None),
    };
    let mut full = prefix.clone();
    full.extend(path.split("::").map(str::trim).map(str::to_string));
    if full.last().is_some_and(|s| s == "self") {
        full.pop();
    }
    let Some(last) = full.last().cloned() else {
        return;
    };
    out.push((full, alias.unwrap_or(last), public));
}

/// Splits at commas outside braces.
fn split_top(text: &str) -> Vec<&str> {
    let mut parts = Vec::new();
    let mut depth = 0;
    let mut start = 0;
    for (index, ch) in text.char_indices() {
        match ch {
            '{' => depth += 1,
            '}' => depth -= 1,
            ',' if depth == 0 => {
                parts.push(&text[start..index]);
                start = index + 1;
            }
            _ => {}
        }
    }
    parts.push(&text[start..]);
    parts
}

struct Graph {
    modules: Vec<Module>,
    by_path: BTreeMap<(&'static str, Vec<String>), usize>,
}

impl Graph {
    fn module(&self, krate: &'static str, path: &[String]) -> Option<usize> {
        self.by_path.get(&(krate, path.to_vec())).copied()
    }

    /// The file that defines what `segments` (absolute within `krate`) names.
    fn resolve(&self, krate: &'static str, segments: &[String], depth: usize) -> Option<usize> {
        if depth > 16 {
            return None;
        }
        let mut current = self.module(krate, &[])?;
        let mut consumed = 0;
        for segment in segments {
            let mut path = self.modules[current].path.clone();
            path.push(segment.clone());
            match self.module(krate, &path) {
                Some(child) => {
                    current = child;
                    consumed += 1;
                }
                None => break,
            }
        }
        if consumed == segments.len() {
            return Some(current);
        }
        // An item of `current`: defined there, or re-exported from elsewhere.
        let item = &segments[consumed];
        for (path, bound, public) in use_paths(&self.modules[current].code) {
            if public && &bound == item {
                let absolute = self.absolute(current, &path)?;
                let (target_krate, target) = absolute;
                return self.resolve(target_krate, &target, depth + 1);
            }
        }
        Some(current)
    }

    /// A path as written in module `from`, made absolute: (crate, segments).
    fn absolute(&self, from: usize, path: &[String]) -> Option<(&'static str, Vec<String>)> {
        let module = &self.modules[from];
        let first = path.first()?.as_str();
        let mut base: Vec<String>;
        let mut rest = path;
        let mut krate = module.krate;
        match first {
            "crate" => {
                base = Vec::new();
                rest = &path[1..];
            }
            "gapcert" => {
                krate = "lib";
                base = Vec::new();
                rest = &path[1..];
            }
            "self" => {
                base = module.path.clone();
                rest = &path[1..];
            }
            "super" => {
                base = module.path.clone();
                while rest.first().is_some_and(|s| s == "super") {
                    base.pop();
                    rest = &rest[1..];
                }
            }
            name if module.children.contains(name) => {
                base = module.path.clone();
            }
            _ => return None,
        }
        base.extend(rest.iter().cloned());
        Some((krate, base))
    }
}

fn build_graph() -> (Graph, BTreeMap<usize, BTreeSet<usize>>) {
    let modules = module_tree(&root().join("src"));
    let by_path = modules
        .iter()
        .enumerate()
        .map(|(index, m)| ((m.krate, m.path.clone()), index))
        .collect();
    let graph = Graph { modules, by_path };
    let mut edges: BTreeMap<usize, BTreeSet<usize>> = BTreeMap::new();
    let path_pattern = |text: &str| -> Vec<Vec<String>> {
        // Every `a::b::c` in the code.
        let mut found = Vec::new();
        let bytes = text.as_bytes();
        let mut at = 0;
        while at < bytes.len() {
            let starts = (bytes[at].is_ascii_alphabetic() || bytes[at] == b'_')
                && (at == 0
                    || !(bytes[at - 1].is_ascii_alphanumeric()
                        || bytes[at - 1] == b'_'
                        || bytes[at - 1] == b':'));
            if !starts {
                at += 1;
                continue;
            }
            let mut segments = Vec::new();
            let mut end = at;
            loop {
                let word_start = end;
                while end < bytes.len()
                    && (bytes[end].is_ascii_alphanumeric() || bytes[end] == b'_')
                {
                    end += 1;
                }
                segments.push(text[word_start..end].to_string());
                if text[end..].starts_with("::")
                    && text[end + 2..].starts_with(|c: char| c.is_ascii_alphabetic() || c == '_')
                {
                    end += 2;
                } else {
                    break;
                }
            }
            if segments.len() > 1 {
                found.push(segments);
            }
            at = end.max(at + 1);
        }
        found
    };
    for (index, module) in graph.modules.iter().enumerate() {
        let mut named: Vec<Vec<String>> = use_paths(&module.code)
            .into_iter()
            .map(|(p, _, _)| p)
            .collect();
        // Modules imported under their own name (`use crate::report::{self}`).
        let aliases: BTreeMap<String, Vec<String>> = use_paths(&module.code)
            .into_iter()
            .filter_map(|(path, bound, _)| {
                let (krate, absolute) = graph.absolute(index, &path)?;
                graph.module(krate, &absolute).map(|_| (bound, path))
            })
            .collect();
        for mut path in path_pattern(&module.code) {
            if let Some(full) = aliases.get(&path[0]) {
                let mut expanded = full.clone();
                expanded.extend(path.drain(1..));
                path = expanded;
            }
            named.push(path);
        }
        for path in named {
            let Some((krate, absolute)) = graph.absolute(index, &path) else {
                continue;
            };
            if let Some(target) = graph.resolve(krate, &absolute, 0) {
                if target != index
                    && !graph.modules[index].children.iter().any(|c| {
                        let mut p = graph.modules[index].path.clone();
                        p.push(c.clone());
                        graph.module(graph.modules[index].krate, &p) == Some(target)
                            && path.len() == 1
                    })
                {
                    edges.entry(index).or_default().insert(target);
                }
            }
        }
    }
    (graph, edges)
}

fn name(graph: &Graph, index: usize) -> String {
    graph.modules[index]
        .file
        .strip_prefix(root())
        .unwrap()
        .display()
        .to_string()
}

#[test]
fn no_file_of_src_imports_a_file_that_imports_it_back() {
    let (graph, edges) = build_graph();
    assert!(graph.modules.len() > 30, "the module tree was not found");
    // Sanity: a few edges the code certainly has.
    let find = |file: &str| {
        (0..graph.modules.len())
            .find(|&i| name(&graph, i) == file)
            .unwrap_or_else(|| panic!("{file} not in the tree"))
    };
    let has = |from: &str, to: &str| {
        edges
            .get(&find(from))
            .is_some_and(|t| t.contains(&find(to)))
    };
    assert!(has("src/audit/per_run.rs", "src/run/input.rs"));
    assert!(has("src/api.rs", "src/engine.rs"));
    assert!(has("src/engine.rs", "src/audit/mod.rs"));
    assert!(has("src/commands/audit.rs", "src/engine.rs"));
    assert!(
        has("src/audit/result.rs", "src/audit/settings.rs"),
        "re-exports are followed"
    );

    // Depth-first search for a cycle; report the first one found.
    let mut state = vec![0u8; graph.modules.len()];
    let mut stack = Vec::new();
    fn visit(
        node: usize,
        edges: &BTreeMap<usize, BTreeSet<usize>>,
        state: &mut [u8],
        stack: &mut Vec<usize>,
    ) -> Option<Vec<usize>> {
        state[node] = 1;
        stack.push(node);
        for &next in edges.get(&node).into_iter().flatten() {
            if state[next] == 1 {
                let from = stack.iter().position(|&n| n == next).unwrap();
                let mut cycle = stack[from..].to_vec();
                cycle.push(next);
                return Some(cycle);
            }
            if state[next] == 0 {
                if let Some(cycle) = visit(next, edges, state, stack) {
                    return Some(cycle);
                }
            }
        }
        stack.pop();
        state[node] = 2;
        None
    }
    for node in 0..graph.modules.len() {
        if state[node] == 0 {
            if let Some(cycle) = visit(node, &edges, &mut state, &mut stack) {
                let names: Vec<String> = cycle.iter().map(|&i| name(&graph, i)).collect();
                panic!("import cycle: {}", names.join(" → "));
            }
        }
    }
}

#[test]
fn the_library_never_exits_handles_signals_or_parses_the_command_line() {
    let (graph, _) = build_graph();
    for module in graph.modules.iter().filter(|m| m.krate == "lib") {
        for forbidden in [
            "process::exit",
            "signal_hook",
            "clap::",
            "std::process::abort",
        ] {
            assert!(
                !module.code.contains(forbidden),
                "{} (library) uses {forbidden}",
                module.file.display()
            );
        }
    }
    let binary: Vec<String> = graph
        .modules
        .iter()
        .filter(|m| m.krate == "bin")
        .map(|m| m.file.strip_prefix(root()).unwrap().display().to_string())
        .collect();
    assert!(binary.contains(&"src/cli.rs".to_string()), "{binary:?}");
    assert!(
        binary
            .iter()
            .all(|f| f == "src/main.rs" || f == "src/cli.rs" || f.starts_with("src/commands/")),
        "{binary:?}"
    );
}

#[test]
fn theory_is_pure_and_audit_does_not_read_ingest() {
    let (graph, edges) = build_graph();
    for (index, module) in graph.modules.iter().enumerate() {
        let file = name(&graph, index);
        if file.starts_with("src/theory/") {
            for forbidden in [
                "polars",
                "std::fs",
                "std::io",
                "println!",
                "eprintln!",
                "std::env",
            ] {
                assert!(
                    !module.code.contains(forbidden),
                    "{file} (theory) uses {forbidden}"
                );
            }
            for &target in edges.get(&index).into_iter().flatten() {
                assert!(
                    name(&graph, target).starts_with("src/theory/"),
                    "{file} imports {}",
                    name(&graph, target)
                );
            }
        }
        if file.starts_with("src/audit/") {
            for &target in edges.get(&index).into_iter().flatten() {
                assert!(
                    !name(&graph, target).starts_with("src/ingest/"),
                    "{file} imports {}",
                    name(&graph, target)
                );
            }
        }
    }
}
