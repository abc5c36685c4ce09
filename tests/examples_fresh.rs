//! `out_examples/` must match what the current code produces: the demo's output folder
//! (`out_examples/demo/`) and what the demo prints (`out_examples/demo.txt`). Set
//! `UPDATE_EXAMPLES=1` to rewrite them, then review the diff.

use std::path::{Path, PathBuf};
use std::process::Command;

fn files_under(root: &Path) -> Vec<PathBuf> {
    let mut out = Vec::new();
    let mut stack = vec![root.to_path_buf()];
    while let Some(d) = stack.pop() {
        let Ok(rd) = std::fs::read_dir(&d) else {
            continue;
        };
        for e in rd.flatten() {
            let p = e.path();
            if p.is_dir() {
                stack.push(p);
            } else {
                out.push(p.strip_prefix(root).unwrap().to_path_buf());
            }
        }
    }
    out.sort();
    out
}

#[test]
fn demo_output_is_fresh() {
    let work = std::env::temp_dir().join(format!("loopwright-examples-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&work);
    std::fs::create_dir_all(&work).unwrap();
    let out = Command::new(env!("CARGO_BIN_EXE_loopwright"))
        .args(["demo", "--out", "demo"])
        .current_dir(&work)
        .output()
        .expect("run loopwright");
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let examples = Path::new(env!("CARGO_MANIFEST_DIR")).join("out_examples");
    let fresh = work.join("demo");
    if std::env::var_os("UPDATE_EXAMPLES").is_some() {
        let _ = std::fs::remove_dir_all(examples.join("demo"));
        for f in files_under(&fresh) {
            let dest = examples.join("demo").join(&f);
            std::fs::create_dir_all(dest.parent().unwrap()).unwrap();
            std::fs::copy(fresh.join(&f), dest).unwrap();
        }
        std::fs::write(examples.join("demo.txt"), &out.stdout).unwrap();
        return;
    }
    let hint = "regenerate with: UPDATE_EXAMPLES=1 cargo test --test examples_fresh";
    let committed = std::fs::read(examples.join("demo.txt")).unwrap_or_default();
    assert!(
        committed == out.stdout,
        "out_examples/demo.txt is stale; {hint}"
    );
    let (a, b) = (files_under(&examples.join("demo")), files_under(&fresh));
    assert_eq!(a, b, "out_examples/demo/ lists other files; {hint}");
    for f in a {
        let (x, y) = (
            std::fs::read(examples.join("demo").join(&f)).unwrap(),
            std::fs::read(fresh.join(&f)).unwrap(),
        );
        assert!(x == y, "out_examples/demo/{} is stale; {hint}", f.display());
    }
    let _ = std::fs::remove_dir_all(&work);
}
