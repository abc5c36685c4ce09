//! A family built on several threads writes the same bytes as one built on a single thread
//! (issue on performance: "output byte-identical to a serial run").

use std::collections::BTreeMap;
use std::path::Path;
use std::process::Command;

fn tree(dir: &Path) -> BTreeMap<String, Vec<u8>> {
    let mut out = BTreeMap::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).unwrap() {
            let p = e.unwrap().path();
            if p.is_dir() {
                stack.push(p);
            } else {
                let rel = p.strip_prefix(dir).unwrap().to_string_lossy().to_string();
                out.insert(rel, std::fs::read(&p).unwrap());
            }
        }
    }
    out
}

#[test]
fn four_threads_write_what_one_thread_writes() {
    let root = std::env::temp_dir().join(format!("loopwright-parallel-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&root);
    let mut trees = Vec::new();
    for threads in ["1", "4"] {
        let out = root.join(format!("t{threads}"));
        let o = Command::new(env!("CARGO_BIN_EXE_loopwright"))
            .args(["demo", "--out"])
            .arg(&out)
            .env("RAYON_NUM_THREADS", threads)
            // The job files' creation date, fixed so that only the threads differ.
            .env("SOURCE_DATE_EPOCH", "1767225600")
            .output()
            .unwrap();
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        trees.push(tree(&out));
    }
    assert!(trees[0].len() > 40, "{}", trees[0].len());
    assert_eq!(
        trees[0].keys().collect::<Vec<_>>(),
        trees[1].keys().collect::<Vec<_>>()
    );
    for (k, v) in &trees[0] {
        assert!(trees[1][k] == *v, "{k} differs between 1 and 4 threads");
    }
    let _ = std::fs::remove_dir_all(&root);
}
