//! `out_examples/` must match what the current code produces. Set `UPDATE_EXAMPLES=1` to
//! rewrite the files, then review the diff.

use std::process::Command;

fn check(args: &[&str], file: &str) {
    let out = Command::new(env!("CARGO_BIN_EXE_loopwright"))
        .args(args)
        .output()
        .expect("run loopwright");
    assert!(out.status.success());
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("out_examples")
        .join(file);
    if std::env::var_os("UPDATE_EXAMPLES").is_some() {
        std::fs::write(&path, &out.stdout).unwrap();
        return;
    }
    let committed = std::fs::read(&path).unwrap_or_default();
    assert!(
        committed == out.stdout,
        "out_examples/{file} is stale: regenerate with UPDATE_EXAMPLES=1 cargo test --test examples_fresh"
    );
}

#[test]
fn demo_text_is_fresh() {
    check(&["demo"], "demo.txt");
}

/// JSON equality with a 1e-12 relative tolerance on numbers, so that a last-bit difference in
/// the platform's `ln`/`exp` does not count as staleness.
fn same(a: &serde_json::Value, b: &serde_json::Value) -> bool {
    use serde_json::Value::*;
    match (a, b) {
        (Number(x), Number(y)) => {
            let (x, y) = (x.as_f64().unwrap(), y.as_f64().unwrap());
            (x - y).abs() <= 1e-12 * x.abs().max(y.abs())
        }
        (Array(x), Array(y)) => x.len() == y.len() && x.iter().zip(y).all(|(p, q)| same(p, q)),
        (Object(x), Object(y)) => {
            x.len() == y.len() && x.iter().all(|(k, v)| y.get(k).is_some_and(|w| same(v, w)))
        }
        _ => a == b,
    }
}

#[test]
fn demo_json_is_fresh() {
    let out = Command::new(env!("CARGO_BIN_EXE_loopwright"))
        .args(["demo", "--json"])
        .output()
        .expect("run loopwright");
    assert!(out.status.success());
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("out_examples/demo.json");
    if std::env::var_os("UPDATE_EXAMPLES").is_some() {
        std::fs::write(&path, &out.stdout).unwrap();
        return;
    }
    let now: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let committed: serde_json::Value =
        serde_json::from_slice(&std::fs::read(&path).unwrap_or_default()).unwrap_or_default();
    assert!(
        same(&now, &committed),
        "out_examples/demo.json is stale: regenerate with UPDATE_EXAMPLES=1 cargo test --test examples_fresh"
    );
}
