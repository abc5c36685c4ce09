//! `demo` never loses a user's edit unasked: an edited spec in its folder is refused with the
//! way out (`--force`), which replaces only the demo's own files.

use std::process::Command;

fn demo(out: &std::path::Path, force: bool) -> std::process::Output {
    let mut c = Command::new(env!("CARGO_BIN_EXE_loopwright"));
    c.arg("demo").arg("--out").arg(out);
    if force {
        c.arg("--force");
    }
    c.output().unwrap()
}

#[test]
fn an_edited_demo_spec_is_kept_unless_forced() {
    let root = std::env::temp_dir().join(format!("loopwright-demo-force-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&root);
    let out = root.join("demo");
    assert!(demo(&out, false).status.success());
    let spec = out.join("fenwick-marsh-probes.toml");
    let fresh = std::fs::read_to_string(&spec).unwrap();
    let edited = fresh.replace("size_mm = 20.0", "size_mm = 25.0");
    assert_ne!(edited, fresh);
    std::fs::write(&spec, &edited).unwrap();

    let o = demo(&out, false);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("fenwick-marsh-probes.toml changed since loopwright wrote it")
            && err.contains("--force"),
        "{err}"
    );
    assert_eq!(std::fs::read_to_string(&spec).unwrap(), edited);

    // A file the demo did not write is refused even with --force.
    let mine = out.join("my-notes.txt");
    std::fs::write(&mine, "mine").unwrap();
    let o = demo(&out, true);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("my-notes.txt"));
    assert_eq!(std::fs::read_to_string(&spec).unwrap(), edited);
    std::fs::remove_file(&mine).unwrap();

    let o = demo(&out, true);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert_eq!(std::fs::read_to_string(&spec).unwrap(), fresh);
    let _ = std::fs::remove_dir_all(&root);
}
