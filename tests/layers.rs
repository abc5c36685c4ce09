//! The library's layers import only downwards (docs/architecture.md, "Layers").
//!
//! Order, bottom up: `math` → `error` → `output` → `spec` → `model` → `field` → `solve` →
//! `physics` → `calib` → `geom` → `artwork` → `drc` → `emit` → `pipeline` → `fuzzing` → `cli` →
//! `main` (with `keep_freed_memory.rs`, which it includes). Every `crate::<module>` path in code (not in comments) of a file under
//! `src/<module>` must name the same module or one below it.
//!
//! To see it fail: add `use crate::emit as _;` to `src/model/mod.rs` and run
//! `cargo test --test layers`; it names the file, the line and the two modules.

use std::path::Path;

// `keep_freed_memory` is the binary's: included by `main.rs` (and the pipeline benchmarks), not
// a module of the library.
const ORDER: [&str; 18] = [
    "math",
    "error",
    "output",
    "spec",
    "model",
    "field",
    "solve",
    "physics",
    "calib",
    "geom",
    "artwork",
    "drc",
    "emit",
    "pipeline",
    "fuzzing",
    "cli",
    "main",
    "keep_freed_memory",
];

fn rank(m: &str) -> Option<usize> {
    ORDER.iter().position(|x| *x == m)
}

fn rust_files(dir: &Path, out: &mut Vec<std::path::PathBuf>) {
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

/// The `crate::<module>` names used on one line of code (comments and strings ignored).
fn crate_refs(line: &str) -> Vec<String> {
    let code = line.split("//").next().unwrap_or("");
    // Drop string literals (rough: between pairs of double quotes).
    let mut kept = String::new();
    let mut in_str = false;
    for c in code.chars() {
        if c == '"' {
            in_str = !in_str;
        } else if !in_str {
            kept.push(c);
        }
    }
    let mut out = Vec::new();
    let mut rest = kept.as_str();
    while let Some(i) = rest.find("crate::") {
        let after = &rest[i + 7..];
        let name: String = after
            .chars()
            .take_while(|c| c.is_alphanumeric() || *c == '_')
            .collect();
        let before = rest[..i].chars().last();
        if !before.is_some_and(|c| c.is_alphanumeric() || c == '_') {
            out.push(name);
        }
        rest = after;
    }
    out
}

#[test]
fn every_import_points_down() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    files.sort();
    let mut wrong = Vec::new();
    let mut unknown = Vec::new();
    for f in &files {
        let rel = f.strip_prefix(&src).unwrap();
        let top = rel
            .components()
            .next()
            .unwrap()
            .as_os_str()
            .to_string_lossy()
            .trim_end_matches(".rs")
            .to_string();
        if top == "lib" {
            continue;
        }
        let Some(me) = rank(&top) else {
            unknown.push(format!(
                "src/{} (module {top} is not in ORDER)",
                rel.display()
            ));
            continue;
        };
        let text = std::fs::read_to_string(f).unwrap();
        for (n, line) in text.lines().enumerate() {
            if line.trim_start().starts_with("//") {
                continue;
            }
            for dep in crate_refs(line) {
                match rank(&dep) {
                    Some(r) if r > me => wrong.push(format!(
                        "src/{}:{}: {top} imports {dep}, a layer above it",
                        rel.display(),
                        n + 1
                    )),
                    Some(_) => {}
                    None if dep.chars().next().is_some_and(|c| c.is_uppercase()) => {}
                    None => unknown.push(format!(
                        "src/{}:{}: crate::{dep} is not a module in ORDER",
                        rel.display(),
                        n + 1
                    )),
                }
            }
        }
    }
    assert!(unknown.is_empty(), "{}", unknown.join("\n"));
    assert!(wrong.is_empty(), "{}", wrong.join("\n"));
}

/// The scanner itself: it sees `use` lines and inline paths, and skips comments and strings.
#[test]
fn the_scanner_sees_paths_and_skips_comments() {
    assert_eq!(crate_refs("use crate::emit::notes;"), vec!["emit"]);
    assert_eq!(
        crate_refs("    let x = crate::solve::probe::solve(p) + crate::math::C0;"),
        vec!["solve", "math"]
    );
    assert!(crate_refs("    // crate::cli is not used here").is_empty());
    assert!(crate_refs(r#"    let s = "crate::cli";"#).is_empty());
    assert!(crate_refs("    mycrate::cli::x()").is_empty());
}
