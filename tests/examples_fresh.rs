//! `out_examples/` must match what the current code produces: the demo's output folder
//! (`out_examples/demo/`) and what the demo prints (`out_examples/demo.txt`), and the README's
//! calibrate-and-convert walk-through on the demo's bench data (`out_examples/walkthrough/`,
//! what it prints in `out_examples/walkthrough.txt`). Set `UPDATE_EXAMPLES=1` to rewrite them,
//! then review the diff.

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

/// Runs loopwright in `dir` with `args`; returns what it printed.
fn loopwright(dir: &Path, args: &[&str]) -> Vec<u8> {
    let out = Command::new(env!("CARGO_BIN_EXE_loopwright"))
        .args(args)
        .current_dir(dir)
        // The calibration's files record their date: a fixed one (2026-01-01) keeps them
        // byte for byte (the reproducible-builds convention).
        .env("SOURCE_DATE_EPOCH", "1767225600")
        .output()
        .expect("run loopwright");
    assert!(
        out.status.success(),
        "{args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    out.stdout
}

/// Compares (or with UPDATE_EXAMPLES rewrites) `out_examples/<name>/` against `fresh` and
/// `out_examples/<name>.txt` against `printed`.
fn compare(name: &str, fresh: &Path, printed: &[u8]) {
    let examples = Path::new(env!("CARGO_MANIFEST_DIR")).join("out_examples");
    if std::env::var_os("UPDATE_EXAMPLES").is_some() {
        let _ = std::fs::remove_dir_all(examples.join(name));
        for f in files_under(fresh) {
            let dest = examples.join(name).join(&f);
            std::fs::create_dir_all(dest.parent().unwrap()).unwrap();
            std::fs::copy(fresh.join(&f), dest).unwrap();
        }
        std::fs::write(examples.join(format!("{name}.txt")), printed).unwrap();
        return;
    }
    let hint = "regenerate with: UPDATE_EXAMPLES=1 cargo test --test examples_fresh";
    let committed = std::fs::read(examples.join(format!("{name}.txt"))).unwrap_or_default();
    assert!(
        committed == printed,
        "out_examples/{name}.txt is stale; {hint}"
    );
    let (a, b) = (files_under(&examples.join(name)), files_under(fresh));
    assert_eq!(a, b, "out_examples/{name}/ lists other files; {hint}");
    for f in a {
        let (x, y) = (
            std::fs::read(examples.join(name).join(&f)).unwrap(),
            std::fs::read(fresh.join(&f)).unwrap(),
        );
        assert!(
            x == y,
            "out_examples/{name}/{} is stale; {hint}",
            f.display()
        );
    }
}

/// The demo, then the README's walk-through on its bench data (the same commands as README.md).
#[test]
fn demo_and_walkthrough_outputs_are_fresh() {
    let work = std::env::temp_dir().join(format!("loopwright-examples-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&work);
    std::fs::create_dir_all(&work).unwrap();
    let printed = loopwright(&work, &["demo", "--out", "demo"]);
    compare("demo", &work.join("demo"), &printed);
    std::fs::create_dir_all(work.join("walkthrough")).unwrap();
    let mut printed = loopwright(
        &work,
        &[
            "calibrate",
            "--touchstone",
            "demo/fm-r10-on-fixture-1mm.s2p",
            "--probes",
            "demo/fenwick-marsh-probes.toml",
            "--probe",
            "FM-R10",
            "--fixture",
            "demo/fenwick-marsh-fixture.toml",
            "--height",
            "1",
            "--out",
            "walkthrough/cal-fm-r10",
        ],
    );
    printed.extend(loopwright(
        &work,
        &[
            "convert",
            "--readings",
            "demo/fm-clock-scan.csv",
            "--factor",
            "walkthrough/cal-fm-r10/FM-R10-pf-measured.csv",
            "--gain-db",
            "20",
            "--atten-db",
            "6",
            "--cable-db",
            "1.5",
            "--out",
            "walkthrough/clock-field.csv",
            "--plot",
            "walkthrough/clock-field.svg",
        ],
    ));
    compare("walkthrough", &work.join("walkthrough"), &printed);
    let _ = std::fs::remove_dir_all(&work);
}
