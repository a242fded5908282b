//! The library's modules form a graph without cycles: no module imports from a module
//! that imports it back, directly or through others. Each stage owns its types (levels in
//! `compare`, key parts in `block`, source settings in `sources`) and the modules that
//! assemble them (`spec`, `pipeline`) depend on the stages, never the reverse.
//!
//! The check reads `src/` itself: every `crate::name` path (in `use` lines and inline) in
//! a file of top-level module `a` is an edge `a -> name`. Comments and `#[cfg(test)]`
//! items are skipped: tests may build their inputs with any module. The binary's files
//! (`src/main.rs`, `src/commands/`) are not part of the library and not checked.

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

type Graph = BTreeMap<String, BTreeSet<String>>;

/// Drop `//` comments (string literals containing `//` are rare in this code base and
/// at worst hide an edge on the same line, which the test would then miss, not invent).
fn strip_comments(src: &str) -> String {
    src.lines()
        .map(|l| match l.find("//") {
            Some(i) => &l[..i],
            None => l,
        })
        .collect::<Vec<_>>()
        .join("\n")
}

/// Remove every item that follows a `#[cfg(test)]` attribute; returns the code and the
/// names of test-only modules declared as `mod name;` (their files are skipped too).
fn strip_test_items(src: &str) -> (String, Vec<String>) {
    let mut out = String::new();
    let mut test_mods = Vec::new();
    let mut rest = src;
    while let Some(i) = rest.find("#[cfg(test)]") {
        out.push_str(&rest[..i]);
        let item = &rest[i + "#[cfg(test)]".len()..];
        // The item ends at its `;` or at the brace that closes its first `{`.
        let semi = item.find(';');
        let brace = item.find('{');
        let end = match (semi, brace) {
            (Some(s), b) if b.is_none_or(|b| s < b) => {
                let decl = item[..s].trim();
                if let Some(name) = decl.strip_prefix("mod ") {
                    test_mods.push(name.trim().to_string());
                }
                s + 1
            }
            (_, Some(b)) => {
                let mut depth = 0usize;
                let mut end = item.len();
                for (j, c) in item[b..].char_indices() {
                    match c {
                        '{' => depth += 1,
                        '}' => {
                            depth -= 1;
                            if depth == 0 {
                                end = b + j + 1;
                                break;
                            }
                        }
                        _ => {}
                    }
                }
                end
            }
            _ => item.len(),
        };
        rest = &item[end..];
    }
    out.push_str(rest);
    (out, test_mods)
}

/// The top-level modules named by the `crate::` paths in `code`.
fn crate_paths(code: &str) -> BTreeSet<String> {
    let ident = |s: &str| -> String {
        s.chars()
            .take_while(|c| c.is_ascii_alphanumeric() || *c == '_')
            .collect()
    };
    let mut found = BTreeSet::new();
    for (i, _) in code.match_indices("crate::") {
        let after = &code[i + "crate::".len()..];
        if let Some(group) = after.strip_prefix('{') {
            // `crate::{a::b, c, d::{e, f}}`: the first name of each item at depth 1.
            let mut depth = 1usize;
            let mut at_item_start = true;
            for (j, c) in group.char_indices() {
                match c {
                    '{' => depth += 1,
                    '}' => {
                        depth -= 1;
                        if depth == 0 {
                            break;
                        }
                    }
                    ',' if depth == 1 => at_item_start = true,
                    c if c.is_whitespace() => {}
                    _ if depth == 1 && at_item_start => {
                        found.insert(ident(&group[j..]));
                        at_item_start = false;
                    }
                    _ => {}
                }
            }
        } else {
            found.insert(ident(after));
        }
    }
    found.retain(|n| !n.is_empty() && n != "self");
    found
}

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for entry in std::fs::read_dir(dir).unwrap() {
        let p = entry.unwrap().path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|e| e == "rs") {
            out.push(p);
        }
    }
}

/// The top-level module a file of `src/` belongs to (`None` for the binary's files).
fn top_module(src: &Path, file: &Path) -> Option<String> {
    let rel = file.strip_prefix(src).unwrap();
    let first = rel.components().next()?.as_os_str().to_string_lossy();
    let top = first.trim_end_matches(".rs").to_string();
    (!matches!(top.as_str(), "main" | "lib" | "commands")).then_some(top)
}

/// The files of the test-only modules `test_mods` declared (`#[cfg(test)] mod name;`)
/// in `file`: `name.rs` or `name/mod.rs` beside it.
fn test_module_files(file: &Path, test_mods: &[String]) -> Vec<PathBuf> {
    let dir = if file.file_name().unwrap() == "mod.rs" {
        file.parent().unwrap().to_path_buf()
    } else {
        file.with_extension("")
    };
    test_mods
        .iter()
        .flat_map(|m| [dir.join(format!("{m}.rs")), dir.join(m).join("mod.rs")])
        .collect()
}

/// The library's module graph: top-level module -> modules it imports.
fn module_graph(src: &Path) -> Graph {
    let mut files = Vec::new();
    rust_files(src, &mut files);
    files.sort();
    // Files of modules declared `#[cfg(test)] mod name;` are test code as a whole.
    let mut test_files: BTreeSet<PathBuf> = BTreeSet::new();
    let mut code_of = Vec::new();
    for file in &files {
        let Some(top) = top_module(src, file) else {
            continue;
        };
        let text = std::fs::read_to_string(file).unwrap();
        let (code, test_mods) = strip_test_items(&strip_comments(&text));
        test_files.extend(test_module_files(file, &test_mods));
        code_of.push((file.clone(), top, code));
    }
    let mut graph = Graph::new();
    for (file, top, code) in code_of {
        if test_files.contains(&file) {
            continue;
        }
        let deps = graph.entry(top.clone()).or_default();
        deps.extend(crate_paths(&code).into_iter().filter(|m| *m != top));
    }
    graph
}

/// A cycle of the graph, if it has one.
fn find_cycle(g: &Graph) -> Option<Vec<String>> {
    fn visit(
        g: &Graph,
        n: &str,
        state: &mut BTreeMap<String, u8>,
        stack: &mut Vec<String>,
    ) -> Option<Vec<String>> {
        state.insert(n.to_string(), 1);
        stack.push(n.to_string());
        for m in g.get(n).into_iter().flatten() {
            match state.get(m.as_str()) {
                Some(1) => {
                    let start = stack.iter().position(|s| s == m).unwrap();
                    let mut cycle = stack[start..].to_vec();
                    cycle.push(m.clone());
                    return Some(cycle);
                }
                Some(_) => {}
                None => {
                    if let Some(c) = visit(g, m, state, stack) {
                        return Some(c);
                    }
                }
            }
        }
        stack.pop();
        state.insert(n.to_string(), 2);
        None
    }
    let mut state = BTreeMap::new();
    for n in g.keys() {
        if !state.contains_key(n.as_str()) {
            if let Some(c) = visit(g, n, &mut state, &mut Vec::new()) {
                return Some(c);
            }
        }
    }
    None
}

#[test]
fn the_parser_finds_grouped_and_inline_paths() {
    let code = "use crate::{a::B, b, c::{d, e::F}};\nlet x = crate::d::f();\nuse crate::self_x;";
    let got: Vec<String> = crate_paths(code).into_iter().collect();
    assert_eq!(got, ["a", "b", "c", "d", "self_x"]);
    let (code, mods) = strip_test_items(
        "use crate::a;\n#[cfg(test)]\nmod tests {\n use crate::z; { }\n}\n#[cfg(test)]\nmod snap;\nuse crate::b;",
    );
    assert_eq!(
        crate_paths(&code).into_iter().collect::<Vec<_>>(),
        ["a", "b"]
    );
    assert_eq!(mods, ["snap"]);
    let mut g = Graph::new();
    g.entry("x".into()).or_default().insert("y".into());
    g.entry("y".into()).or_default().insert("z".into());
    assert_eq!(find_cycle(&g), None);
    g.entry("z".into()).or_default().insert("x".into());
    assert_eq!(find_cycle(&g).unwrap(), ["x", "y", "z", "x"]);
}

#[test]
fn library_modules_import_without_cycles() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let g = module_graph(&src);
    assert!(
        g.contains_key("spec") && g["spec"].contains("sources"),
        "{g:?}"
    );
    if let Some(cycle) = find_cycle(&g) {
        panic!(
            "module cycle {}: move the shared item into the module that owns it \
             (the lower stage) so that imports point one way; graph: {g:#?}",
            cycle.join(" -> ")
        );
    }
}

/// The pipeline's stages, which get data and give data and touch no file.
const STAGES: [&str; 8] = [
    "standardize",
    "block",
    "compare",
    "model",
    "score",
    "decide",
    "cluster",
    "keys",
];

/// What file I/O looks like in this code base: the standard library's file system and
/// standard streams, and the modules of the I/O edge.
const FILE_IO: [&str; 10] = [
    "std::fs",
    "fs::",
    "File::",
    "OpenOptions",
    "std::io::stdin",
    "std::io::stdout",
    "crate::csvio",
    "crate::output",
    "crate::store",
    "crate::model_file",
];

/// The file I/O found in the code (not the tests) of the top-level module `top`, as
/// `(file, line, what)`.
fn file_io_in(src: &Path, top: &str) -> Vec<(PathBuf, usize, &'static str)> {
    let mut files = Vec::new();
    let dir = src.join(top);
    if dir.is_dir() {
        rust_files(&dir, &mut files);
    } else {
        files.push(src.join(format!("{top}.rs")));
    }
    files.sort();
    let texts: Vec<(PathBuf, String)> = files
        .iter()
        .map(|f| (f.clone(), std::fs::read_to_string(f).unwrap()))
        .collect();
    // Files of `#[cfg(test)] mod name;` modules are tests as a whole.
    let mut test_files = BTreeSet::new();
    for (file, text) in &texts {
        let (_, test_mods) = strip_test_items(&strip_comments(text));
        test_files.extend(test_module_files(file, &test_mods));
    }
    let mut found = Vec::new();
    for (file, text) in &texts {
        if test_files.contains(file) {
            continue;
        }
        let (code, _) = strip_test_items(&strip_comments(text));
        for (n, line) in code.lines().enumerate() {
            for what in FILE_IO {
                if line.contains(what) {
                    found.push((file.clone(), n + 1, what));
                }
            }
        }
    }
    found
}

#[test]
fn the_file_io_scan_finds_io_and_skips_tests() {
    let dir = tempfile::tempdir().unwrap();
    let src = dir.path();
    std::fs::create_dir_all(src.join("stage")).unwrap();
    std::fs::write(
        src.join("stage/mod.rs"),
        "// std::fs in a comment\nfn f() { let _ = std::fs::read(\"x\"); }\n\
         #[cfg(test)]\nmod tests { fn g() { std::fs::File::open(\"y\"); } }\n\
         #[cfg(test)]\nmod more;\n",
    )
    .unwrap();
    std::fs::write(src.join("stage/more.rs"), "use std::fs::File;\n").unwrap();
    std::fs::write(src.join("flat.rs"), "use crate::csvio::CsvWriter;\n").unwrap();
    let found = file_io_in(src, "stage");
    let what: Vec<&str> = found.iter().map(|f| f.2).collect();
    assert_eq!(what, ["std::fs", "fs::"]);
    assert_eq!(found[0].1, 2);
    assert_eq!(file_io_in(src, "flat")[0].2, "crate::csvio");
}

#[test]
fn stages_touch_no_files() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut found = Vec::new();
    for stage in STAGES {
        found.extend(file_io_in(&src, stage));
    }
    let report: Vec<String> = found
        .iter()
        .map(|(f, n, what)| {
            let f = f.strip_prefix(&src).unwrap_or(f).display();
            format!("src/{f}:{n}: {what}")
        })
        .collect();
    assert!(
        report.is_empty(),
        "the pipeline's stages get data and give data; move reading and writing files \
         to the I/O edge (sources, csvio, output, model_file, store, ...):\n{}",
        report.join("\n")
    );
}
