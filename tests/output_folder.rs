//! Output folders: only loopwright's own, unchanged outputs are ever replaced; a run's output
//! appears in one switch, whatever step a run is killed at; leftovers of killed runs go; two
//! runs into one folder do not mix. The kill is simulated through the writer's hook (the
//! process stops at that step and cleans nothing up), not by timing.

mod common;

use loopwright::output::{MANIFEST, Step, check_folder, write_output, write_output_with};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::Command;

fn scratch(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("loopwright-out-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// Every file under `root` with its content (the manifest left out).
fn tree(root: &Path) -> BTreeMap<String, Vec<u8>> {
    common::files_under(root)
        .into_iter()
        .filter_map(|p| {
            let rel = p
                .strip_prefix(root)
                .unwrap()
                .to_string_lossy()
                .replace('\\', "/");
            (rel != MANIFEST).then(|| (rel, std::fs::read(&p).unwrap()))
        })
        .collect()
}

fn entries(run: &str) -> Vec<(PathBuf, Vec<u8>)> {
    vec![
        (PathBuf::from("P1/P1-L1.gbr"), format!("{run} P1 L1").into()),
        (
            PathBuf::from("P1/P1-fab-notes.md"),
            format!("{run} P1 notes").into(),
        ),
        (PathBuf::from("P2/P2-L1.gbr"), format!("{run} P2 L1").into()),
        (
            PathBuf::from("family-summary.md"),
            format!("{run} summary").into(),
        ),
    ]
}

fn expected(e: &[(PathBuf, Vec<u8>)]) -> BTreeMap<String, Vec<u8>> {
    e.iter()
        .map(|(p, b)| (p.to_string_lossy().replace('\\', "/"), b.clone()))
        .collect()
}

/// Names in the parent folder other than the output itself.
/// Runs the binary, expects exit code 2 with `--out` named, and returns its stderr.
fn refused_run(args: &[&std::ffi::OsStr]) -> String {
    let run = Command::new(env!("CARGO_BIN_EXE_loopwright"))
        .args(args)
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&run.stderr).to_string();
    assert_eq!(run.status.code(), Some(2), "{err}");
    assert!(err.contains("--out"), "{err}");
    err
}

fn leftovers(parent: &Path, out: &Path) -> Vec<String> {
    std::fs::read_dir(parent)
        .unwrap()
        .flatten()
        .filter(|e| e.path() != out)
        .map(|e| e.file_name().to_string_lossy().to_string())
        .collect()
}

// The case from the reliability audit: a folder that only looks like an output (a file ending
// in -fab-notes.md) holds a user's file. The build is refused, names both files, and the file
// survives.
#[test]
fn a_users_file_in_the_way_is_refused_and_survives() {
    let root = scratch("thesis");
    let out = root.join("out");
    let fx = out.join("fenwick-marsh-fixture");
    std::fs::create_dir_all(&fx).unwrap();
    std::fs::write(fx.join("meeting-fab-notes.md"), "x").unwrap();
    std::fs::write(fx.join("thesis.docx"), "irreplaceable").unwrap();
    let spec = Path::new(env!("CARGO_MANIFEST_DIR")).join("data/demo/fenwick-marsh-fixture.toml");
    let err = refused_run(&[
        "build".as_ref(),
        spec.as_os_str(),
        "--out".as_ref(),
        out.as_os_str(),
    ]);
    assert!(err.contains("fenwick-marsh-fixture/thesis.docx"), "{err}");
    assert!(
        err.contains("fenwick-marsh-fixture/meeting-fab-notes.md"),
        "{err}"
    );
    assert_eq!(
        std::fs::read_to_string(fx.join("thesis.docx")).unwrap(),
        "irreplaceable"
    );
    assert_eq!(leftovers(&root, &out), Vec::<String>::new());
    let _ = std::fs::remove_dir_all(&root);
}

// A rebuild replaces an unchanged earlier output; a changed or added file stops it, named.
// Entries the new run does not write (another probe's folder) are carried over.
#[test]
fn only_an_unchanged_output_is_replaced() {
    let root = scratch("owned");
    let out = root.join("boards");
    write_output(&out, &entries("one")).unwrap();
    assert!(matches!(
        check_folder(&out),
        Ok(loopwright::output::Contents::Owned(_))
    ));
    // The manifest is what sha256sum -c reads: "<hex>  <path>".
    let manifest = std::fs::read_to_string(out.join(MANIFEST)).unwrap();
    assert!(manifest.lines().any(|l| l
        == format!(
            "{}  P1/P1-L1.gbr",
            loopwright::output::sha256_hex(b"one P1 L1")
        )));
    write_output(&out, &entries("two")).unwrap();
    assert_eq!(tree(&out), expected(&entries("two")));

    // Another run writing only a fixture folder keeps the probes.
    let fixture = vec![(PathBuf::from("FX/FX-L1.gbr"), b"fixture".to_vec())];
    write_output(&out, &fixture).unwrap();
    let mut both = expected(&entries("two"));
    both.extend(expected(&fixture));
    assert_eq!(tree(&out), both);

    // An edited output file and a user's file: refused, both named, both kept.
    std::fs::write(out.join("P1/P1-L1.gbr"), "edited by hand").unwrap();
    std::fs::write(out.join("P2/todo.txt"), "mine").unwrap();
    let e = write_output(&out, &entries("three"))
        .unwrap_err()
        .to_string();
    assert!(e.contains("P2/todo.txt"), "{e}");
    assert!(e.contains("P1/P1-L1.gbr changed"), "{e}");
    assert_eq!(
        std::fs::read_to_string(out.join("P2/todo.txt")).unwrap(),
        "mine"
    );
    assert_eq!(
        std::fs::read_to_string(out.join("P1/P1-L1.gbr")).unwrap(),
        "edited by hand"
    );
    assert_eq!(leftovers(&root, &out), Vec::<String>::new());
    let _ = std::fs::remove_dir_all(&root);
}

// Outputs of versions before manifests (or any folder with files and no manifest) are refused;
// an empty folder is taken.
#[test]
fn a_folder_without_manifest_is_refused_unless_empty() {
    let root = scratch("legacy");
    let out = root.join("old");
    std::fs::create_dir_all(out.join("P1")).unwrap();
    std::fs::write(out.join("P1/P1-fab-notes.md"), "old").unwrap();
    let e = write_output(&out, &entries("new")).unwrap_err().to_string();
    assert!(e.contains("no loopwright-manifest.sha256"), "{e}");
    assert!(e.contains("remove the folder yourself"), "{e}");
    assert_eq!(
        std::fs::read_to_string(out.join("P1/P1-fab-notes.md")).unwrap(),
        "old"
    );
    // A big folder without manifest (a home folder named by mistake) is refused from a few
    // names, not after a walk through all of it.
    let big = root.join("big");
    for i in 0..300 {
        std::fs::create_dir_all(big.join(format!("d{i:03}"))).unwrap();
        std::fs::write(big.join(format!("d{i:03}/f.txt")), "x").unwrap();
    }
    let e = write_output(&big, &entries("new")).unwrap_err().to_string();
    assert!(e.contains(" and more that loopwright did not write"), "{e}");
    assert_eq!(std::fs::read_dir(&big).unwrap().count(), 300);
    let empty = root.join("empty");
    std::fs::create_dir_all(&empty).unwrap();
    write_output(&empty, &entries("new")).unwrap();
    assert_eq!(tree(&empty), expected(&entries("new")));
    let file = root.join("a-file");
    std::fs::write(&file, "x").unwrap();
    let e = write_output(&file, &entries("new"))
        .unwrap_err()
        .to_string();
    assert!(e.contains("--out") && e.contains("is a file"), "{e}");
    let _ = std::fs::remove_dir_all(&root);
}

/// How many hook calls a replacing run makes.
fn steps_of_a_run(exchange: bool) -> Vec<Step> {
    let root = scratch(&format!("count-{exchange}"));
    let out = root.join("o");
    write_output(&out, &entries("old")).unwrap();
    let mut steps = Vec::new();
    write_output_with(&out, &entries("new"), exchange, &mut |s| {
        steps.push(s);
        false
    })
    .unwrap();
    let _ = std::fs::remove_dir_all(&root);
    steps
}

/// Kills a replacing run after each of its steps in turn; after each kill, the next run's
/// recovery (itself killed right after it) leaves the old or the new output, never a mix, and
/// a further run completes and leaves nothing behind.
fn kill_at_every_step(exchange: bool) {
    let steps = steps_of_a_run(exchange);
    assert!(steps.contains(&Step::Switched) && steps.contains(&Step::Staged));
    if !exchange {
        assert!(steps.contains(&Step::OldAside), "{steps:?}");
    } else if cfg!(target_os = "linux") {
        // Linux file systems in use here (ext4, tmpfs, overlayfs) take the exchange.
        assert!(
            !steps.contains(&Step::OldAside),
            "no atomic exchange: {steps:?}"
        );
    }
    let (old, new) = (expected(&entries("old")), expected(&entries("new")));
    let mut saw = (false, false);
    for (k, at) in steps.iter().enumerate() {
        let root = scratch(&format!("kill-{exchange}-{k}"));
        let out = root.join("o");
        write_output(&out, &entries("old")).unwrap();
        let mut n = 0;
        let killed = write_output_with(&out, &entries("new"), exchange, &mut |_| {
            n += 1;
            n == k + 1
        });
        assert!(killed.is_err(), "step {k} ({at:?}) was not reached");
        if exchange {
            // With an atomic exchange the folder is whole even before any recovery.
            let now = tree(&out);
            assert!(now == old || now == new, "after a kill at {at:?}: a mix");
        }
        // The next run recovers, then is itself killed.
        let _ = write_output_with(&out, &entries("third"), exchange, &mut |s| {
            s == Step::Recovered
        });
        let now = tree(&out);
        assert!(
            now == old || now == new,
            "after a kill at {at:?} and recovery: {:?}",
            now.keys().collect::<Vec<_>>()
        );
        saw.0 |= now == old;
        saw.1 |= now == new;
        assert!(matches!(
            check_folder(&out),
            Ok(loopwright::output::Contents::Owned(_))
        ));
        // Recovery removed the killed run's temporary folders (the lock file remains until a
        // run ends normally).
        let left = leftovers(&root, &out);
        assert!(
            left.iter().all(|l| l.ends_with(".loopwright-lock")),
            "after a kill at {at:?}: {left:?}"
        );
        write_output(&out, &entries("fourth")).unwrap();
        assert_eq!(tree(&out), expected(&entries("fourth")));
        assert_eq!(leftovers(&root, &out), Vec::<String>::new());
        let _ = std::fs::remove_dir_all(&root);
    }
    assert!(
        saw.0 && saw.1,
        "kills should leave both old and new states: {saw:?}"
    );
}

#[test]
fn a_kill_at_any_step_leaves_old_or_new_with_exchange() {
    kill_at_every_step(true);
}

#[test]
fn a_kill_at_any_step_leaves_old_or_new_without_exchange() {
    kill_at_every_step(false);
}

// Temporary folders of versions before the lock (`.NAME.loopwright-tmp-PID`) are removed once
// their process has ended, and kept while it runs.
#[test]
fn legacy_leftovers_of_ended_processes_are_removed() {
    let root = scratch("legacy-tmp");
    let out = root.join("o");
    // A process that has ended: a child we waited for.
    let mut dead = Command::new(env!("CARGO_BIN_EXE_loopwright"))
        .arg("--version")
        .spawn()
        .unwrap();
    let dead_pid = dead.id();
    dead.wait().unwrap();
    let gone = root.join(format!(".o.loopwright-tmp-{dead_pid}"));
    let live = root.join(format!(".o.loopwright-tmp-{}", std::process::id()));
    for d in [&gone, &live] {
        std::fs::create_dir_all(d.join("P1")).unwrap();
    }
    write_output(&out, &entries("new")).unwrap();
    assert!(!gone.exists(), "the ended run's folder stayed");
    assert!(live.exists(), "a live process's folder was removed");
    let _ = std::fs::remove_dir_all(&root);
}

// A lock in this process's own name is waited for briefly (a child forked by another thread
// may hold a copy of an ended run's lock descriptor until it execs): a run that ends within the
// wait lets the next one through instead of refusing it.
#[test]
fn a_lock_of_this_process_that_ends_soon_is_waited_for() {
    let root = scratch("own-lock");
    let out = root.join("o");
    write_output(&out, &entries("old")).unwrap();
    let (to_main, from_first) = std::sync::mpsc::channel::<()>();
    let out1 = out.clone();
    let first = std::thread::spawn(move || {
        write_output_with(&out1, &entries("first"), true, &mut |s| {
            if s == Step::Staged {
                to_main.send(()).unwrap();
                std::thread::sleep(std::time::Duration::from_millis(200));
            }
            false
        })
    });
    from_first.recv().unwrap();
    write_output(&out, &entries("second")).unwrap();
    first.join().unwrap().unwrap();
    assert_eq!(tree(&out), expected(&entries("second")));
    assert_eq!(leftovers(&root, &out), Vec::<String>::new());
    let _ = std::fs::remove_dir_all(&root);
}

// A run that holds the folder makes a second run refuse with "another run is writing here"
// (after the brief wait for a lock in this process's own name); the first then completes.
#[test]
fn a_second_run_into_the_same_folder_is_refused() {
    let root = scratch("concurrent");
    let out = root.join("o");
    write_output(&out, &entries("old")).unwrap();
    let (to_main, from_first) = std::sync::mpsc::channel::<()>();
    let (to_first, from_main) = std::sync::mpsc::channel::<()>();
    let out1 = out.clone();
    let first = std::thread::spawn(move || {
        write_output_with(&out1, &entries("first"), true, &mut |s| {
            if s == Step::Staged {
                to_main.send(()).unwrap();
                from_main.recv().unwrap();
            }
            false
        })
    });
    from_first.recv().unwrap();
    let e = write_output(&out, &entries("second"))
        .unwrap_err()
        .to_string();
    assert!(e.contains("another run is writing here"), "{e}");
    assert!(
        e.contains(&format!("process {}", std::process::id())),
        "{e}"
    );
    to_first.send(()).unwrap();
    first.join().unwrap().unwrap();
    assert_eq!(tree(&out), expected(&entries("first")));
    assert_eq!(leftovers(&root, &out), Vec::<String>::new());
    let _ = std::fs::remove_dir_all(&root);
}

// `calibrate` checks its output folder before any work, as `build` does: a user's file in the
// way is named even when the inputs would fail later (here the Touchstone file does not
// exist), and the file survives.
#[test]
fn calibrate_refuses_a_folder_in_the_way_before_reading_anything() {
    let root = scratch("calibrate-first");
    let out = root.join("cal");
    std::fs::create_dir_all(&out).unwrap();
    std::fs::write(out.join("notes.txt"), "mine").unwrap();
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("data/demo");
    let (ts, probes, fixture) = (
        root.join("missing.s2p"),
        demo.join("fenwick-marsh-probes.toml"),
        demo.join("fenwick-marsh-fixture.toml"),
    );
    let err = refused_run(&[
        "calibrate".as_ref(),
        "--touchstone".as_ref(),
        ts.as_os_str(),
        "--probes".as_ref(),
        probes.as_os_str(),
        "--probe".as_ref(),
        "FM-R10".as_ref(),
        "--fixture".as_ref(),
        fixture.as_os_str(),
        "--height".as_ref(),
        "1".as_ref(),
        "--out".as_ref(),
        out.as_os_str(),
    ]);
    assert!(err.contains("--out") && err.contains("notes.txt"), "{err}");
    assert!(!err.contains("missing.s2p"), "{err}");
    assert_eq!(
        std::fs::read_to_string(out.join("notes.txt")).unwrap(),
        "mine"
    );
    let _ = std::fs::remove_dir_all(&root);
}
