//! The one-way layering of `src/` (the contributor guide, "Data flow"): every `crate::` path in
//! a module may name only its own layer or one below it, and the top-level modules import each
//! other without a cycle. Reads the source as text; a failure names the file, the line and the
//! import that reaches up. (A rule of this project's own design: no external source.)

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};

/// The layers, lowest first; a module may import its own layer and the ones before it.
const LAYERS: &[&[&str]] = &[
    &[
        "error",
        "par",
        "memory",
        "prefetch",
        "sort",
        "ids",
        "config",
        "export",
        "workspace",
    ],
    &["ingest", "sample", "synth"],
    &["graph"],
    &["dataset"],
    &["metrics"],
    &["analysis"],
    &["report"],
    &["tui", "plot"],
    &["cli"],
];

fn layer_of(module: &str) -> Option<usize> {
    LAYERS.iter().position(|l| l.contains(&module))
}

fn rust_files(dir: &Path, out: &mut Vec<PathBuf>) {
    for e in std::fs::read_dir(dir).unwrap().flatten() {
        let p = e.path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

/// The top-level module a file belongs to (`src/tui/panes/x.rs` -> `tui`).
fn module_of(src: &Path, file: &Path) -> Option<String> {
    let rel = file.strip_prefix(src).ok()?;
    let first = rel
        .components()
        .next()?
        .as_os_str()
        .to_string_lossy()
        .into_owned();
    let name = first.trim_end_matches(".rs").to_string();
    (!matches!(name.as_str(), "lib" | "main" | "bin")).then_some(name)
}

/// Top-level modules named by `crate::` paths on a line, with `use crate::{a, b::c}` groups.
fn imports(line: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut rest = line;
    while let Some(i) = rest.find("crate::") {
        rest = &rest[i + "crate::".len()..];
        if let Some(group) = rest.strip_prefix('{') {
            let end = group.find('}').unwrap_or(group.len());
            for part in group[..end].split(',') {
                let name: String = part
                    .trim()
                    .chars()
                    .take_while(|c| c.is_alphanumeric() || *c == '_')
                    .collect();
                if !name.is_empty() {
                    out.push(name);
                }
            }
        } else {
            let name: String = rest
                .chars()
                .take_while(|c| c.is_alphanumeric() || *c == '_')
                .collect();
            if !name.is_empty() {
                out.push(name);
            }
        }
    }
    out
}

#[test]
fn no_module_imports_from_a_layer_above_it() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    files.sort();
    let mut wrong = Vec::new();
    let mut edges: BTreeMap<String, BTreeSet<String>> = BTreeMap::new();
    for f in &files {
        let Some(module) = module_of(&src, f) else {
            continue;
        };
        let own = layer_of(&module)
            .unwrap_or_else(|| panic!("{}: module `{module}` is in no layer", f.display()));
        let text = std::fs::read_to_string(f).unwrap();
        for (n, line) in text.lines().enumerate() {
            let code = line.split("//").next().unwrap_or("");
            for target in imports(code) {
                if target == module || target == "CAUTION" {
                    continue;
                }
                let Some(l) = layer_of(&target) else {
                    continue;
                };
                edges
                    .entry(module.clone())
                    .or_default()
                    .insert(target.clone());
                if l > own {
                    wrong.push(format!(
                        "{}:{}: `{module}` (layer {own}) imports `{target}` (layer {l}): {}",
                        f.strip_prefix(&src).unwrap().display(),
                        n + 1,
                        line.trim()
                    ));
                }
            }
        }
    }
    assert!(
        wrong.is_empty(),
        "imports that reach up:\n{}",
        wrong.join("\n")
    );
    // No cycle between top-level modules (same-layer imports included).
    fn visit(
        m: &str,
        edges: &BTreeMap<String, BTreeSet<String>>,
        path: &mut Vec<String>,
        done: &mut BTreeSet<String>,
    ) {
        if let Some(i) = path.iter().position(|p| p == m) {
            panic!("import cycle: {} -> {m}", path[i..].join(" -> "));
        }
        if done.contains(m) {
            return;
        }
        path.push(m.to_string());
        for t in edges.get(m).into_iter().flatten() {
            visit(t, edges, path, done);
        }
        path.pop();
        done.insert(m.to_string());
    }
    let mut done = BTreeSet::new();
    for m in edges.keys() {
        visit(m, &edges, &mut Vec::new(), &mut done);
    }
}

#[test]
fn the_import_reader_sees_groups_and_paths() {
    assert_eq!(
        imports("use crate::{report, sample::inputs};"),
        vec!["report", "sample"]
    );
    assert_eq!(
        imports("let x = crate::tui::run(crate::cli::args());"),
        vec!["tui", "cli"]
    );
}

#[test]
fn the_contributor_guide_names_every_source_file() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let guide = std::fs::read_to_string(root.join("DEVELOPERS.md")).unwrap();
    let mut files = Vec::new();
    rust_files(&root.join("src"), &mut files);
    let missing: Vec<String> = files
        .iter()
        .map(|f| f.strip_prefix(root).unwrap().display().to_string())
        .filter(|rel| {
            let (dir, name) = rel.rsplit_once('/').unwrap();
            let listed_in_dir = guide.contains(&format!("{dir}/"))
                && (guide.contains(&format!(" {name}")) || guide.contains(&format!("{dir}/<")));
            !guide.contains(rel.as_str()) && !listed_in_dir
        })
        .collect();
    assert!(
        missing.is_empty(),
        "DEVELOPERS.md's layout does not name: {missing:?}"
    );
}
