//! The layer order of docs/architecture.md, checked on the sources: nothing outside `src/cli`
//! (and the binary's `src/main.rs`) may use `crate::cli`.

use std::path::Path;

fn rust_files(dir: &Path, out: &mut Vec<std::path::PathBuf>) {
    for e in std::fs::read_dir(dir).unwrap().flatten() {
        let p = e.path();
        if p.is_dir() {
            rust_files(&p, out);
        } else if p.extension().is_some_and(|x| x == "rs") {
            out.push(p);
        }
    }
}

#[test]
fn the_library_does_not_import_the_command_line() {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("src");
    let mut files = Vec::new();
    rust_files(&src, &mut files);
    assert!(files.len() > 20);
    let offenders: Vec<String> = files
        .iter()
        .filter(|p| !p.starts_with(src.join("cli")) && !p.ends_with("main.rs"))
        .filter(|p| std::fs::read_to_string(p).unwrap().contains("crate::cli"))
        .map(|p| p.strip_prefix(&src).unwrap().display().to_string())
        .collect();
    assert!(offenders.is_empty(), "crate::cli used by {offenders:?}");
}
