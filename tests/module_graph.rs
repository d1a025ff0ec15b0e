//! The modules form a one-way graph: between the top-level modules of `src/` (from the
//! `crate::…` paths of the library and the `stockfit::…` paths of the binary), and between the
//! files of each folder (from their `super::…` and `crate::folder::…` paths; a folder's
//! `mod.rs` may use its files, its files never use `mod.rs`). Test modules at the end of a
//! file (`#[cfg(test)] mod … {`) and comments are left out: they may reach anywhere.
//!
//! Why: a module that imports one which imports it back cannot be understood, tested or
//! replaced alone (DEVELOPERS.md, "Architecture").

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

/// The code of a file: comments and the trailing test module removed.
fn code(text: &str) -> String {
    let mut out = String::new();
    let lines: Vec<&str> = text.lines().collect();
    for (i, line) in lines.iter().enumerate() {
        let t = line.trim_start();
        if t.starts_with("#[cfg(test)]")
            && lines
                .get(i + 1)
                .is_some_and(|n| n.trim_start().starts_with("mod ") && n.trim_end().ends_with('{'))
        {
            break;
        }
        if t.starts_with("//") {
            continue;
        }
        // A trailing comment.
        let line = match line.find("// ") {
            Some(at) if !line[..at].contains('"') => &line[..at],
            _ => line,
        };
        out.push_str(line);
        out.push('\n');
    }
    out
}

fn ident_at(s: &str) -> Option<&str> {
    let end = s
        .find(|c: char| !(c.is_ascii_alphanumeric() || c == '_'))
        .unwrap_or(s.len());
    (end > 0).then(|| &s[..end])
}

/// The names right after every `prefix` in `code`, looking inside one level of braces
/// (`prefix{a::X, b}` names `a` and `b`).
fn names_after(code: &str, prefix: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut rest = code;
    while let Some(at) = rest.find(prefix) {
        // Only a path that starts here (not `xcrate::`).
        let before = rest[..at].chars().last();
        rest = &rest[at + prefix.len()..];
        if before.is_some_and(|c| c.is_ascii_alphanumeric() || c == '_') {
            continue;
        }
        if let Some(inner) = rest.strip_prefix('{') {
            let close = inner.find('}').unwrap_or(inner.len());
            let mut depth = 0;
            let mut start = 0;
            let body = &inner[..close];
            for (i, c) in body.char_indices() {
                match c {
                    '{' => depth += 1,
                    '}' => depth -= 1,
                    ',' if depth == 0 => {
                        if let Some(n) = ident_at(body[start..].trim_start()) {
                            out.push(n.to_string());
                        }
                        start = i + 1;
                    }
                    _ => {}
                }
            }
            if let Some(n) = ident_at(body[start..].trim_start()) {
                out.push(n.to_string());
            }
        } else if let Some(n) = ident_at(rest) {
            out.push(n.to_string());
        }
    }
    out
}

/// A cycle of the graph, if it has one (depth-first search).
fn cycle(graph: &BTreeMap<String, BTreeSet<String>>) -> Option<Vec<String>> {
    fn visit(
        n: &str,
        g: &BTreeMap<String, BTreeSet<String>>,
        state: &mut BTreeMap<String, u8>,
        path: &mut Vec<String>,
    ) -> Option<Vec<String>> {
        state.insert(n.to_string(), 1);
        path.push(n.to_string());
        for m in g.get(n).into_iter().flatten() {
            match state.get(m.as_str()).copied().unwrap_or(0) {
                1 => {
                    let from = path.iter().position(|p| p == m).unwrap();
                    let mut c = path[from..].to_vec();
                    c.push(m.clone());
                    return Some(c);
                }
                0 => {
                    if let Some(c) = visit(m, g, state, path) {
                        return Some(c);
                    }
                }
                _ => {}
            }
        }
        path.pop();
        state.insert(n.to_string(), 2);
        None
    }
    let mut state = BTreeMap::new();
    for n in graph.keys() {
        if state.get(n.as_str()).copied().unwrap_or(0) == 0 {
            if let Some(c) = visit(n, graph, &mut state, &mut Vec::new()) {
                return Some(c);
            }
        }
    }
    None
}

#[test]
fn modules_form_a_one_way_graph() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    files.sort();
    let rel = |p: &Path| -> Vec<String> {
        p.strip_prefix(&src)
            .unwrap()
            .iter()
            .map(|c| c.to_string_lossy().trim_end_matches(".rs").to_string())
            .collect()
    };
    let top_names: BTreeSet<String> = files.iter().map(|f| rel(f)[0].clone()).collect();
    let mut top: BTreeMap<String, BTreeSet<String>> = BTreeMap::new();
    let mut folders: BTreeMap<String, BTreeMap<String, BTreeSet<String>>> = BTreeMap::new();
    let mut edges = 0;
    for f in &files {
        let parts = rel(f);
        let text = code(&std::fs::read_to_string(f).unwrap());
        let me = if parts[0] == "main" {
            "cli".to_string()
        } else {
            parts[0].clone()
        };
        let node = top.entry(me.clone()).or_default();
        let prefix = if me == "cli" { "stockfit::" } else { "crate::" };
        for n in names_after(&text, prefix) {
            if top_names.contains(&n) && n != me && n != "lib" {
                node.insert(n);
                edges += 1;
            }
        }
        // Inside a folder: the file's uses of its siblings and of the folder's mod.rs.
        if parts.len() == 2 {
            let folder = parts[0].clone();
            let file = parts[1].clone();
            let siblings: BTreeSet<String> = files
                .iter()
                .map(|g| rel(g))
                .filter(|r| r.len() == 2 && r[0] == folder)
                .map(|r| r[1].clone())
                .collect();
            let g = folders.entry(folder.clone()).or_default();
            let out = g.entry(file.clone()).or_default();
            let mut named = names_after(&text, "super::");
            named.extend(names_after(&text, &format!("crate::{folder}::")));
            if file == "mod" {
                for s in &siblings {
                    if s != "mod" && text.contains(&format!("{s}::")) {
                        out.insert(s.clone());
                    }
                }
            } else {
                for n in named {
                    let to = if siblings.contains(&n) && n != "mod" {
                        n
                    } else {
                        "mod".to_string()
                    };
                    if to != file {
                        out.insert(to);
                    }
                }
            }
        }
    }
    assert!(
        edges > 50,
        "the scan found only {edges} imports; is it reading the files?"
    );
    if let Some(c) = cycle(&top) {
        panic!("the top-level modules form a cycle: {}", c.join(" → "));
    }
    for (folder, g) in &folders {
        // mod.rs declares, re-exports and registers; what its files share lives in a file.
        for (file, uses) in g {
            assert!(
                file == "mod" || !uses.contains("mod"),
                "src/{folder}/{file}.rs uses an item of src/{folder}/mod.rs; move the item to a \
                 file of its own ({uses:?})"
            );
        }
        if let Some(c) = cycle(g) {
            panic!("the files of src/{folder}/ form a cycle: {}", c.join(" → "));
        }
    }
}

#[test]
fn the_scan_sees_a_cycle() {
    // The scan itself: a made-up pair of modules that use each other is a cycle.
    let mut g: BTreeMap<String, BTreeSet<String>> = BTreeMap::new();
    g.entry("a".into()).or_default().insert("b".into());
    g.entry("b".into()).or_default().insert("a".into());
    assert_eq!(cycle(&g), Some(vec!["a".into(), "b".into(), "a".into()]));
    assert_eq!(
        names_after(
            "use crate::{spec::Spec, stock};\nlet x = crate::value::parse;",
            "crate::"
        ),
        ["spec", "stock", "value"]
    );
}
