//! Replays every fuzz seed and every input that ever failed (`fuzz/seeds/<target>/`,
//! `fuzz/regressions/<target>/`) through the same entry points the cargo-fuzz targets call
//! (`loopwright::fuzzing`): each must return without a panic. The fuzzing itself is run by
//! hand (`fuzz/run.sh`, nightly toolchain and cargo-fuzz); its findings are in `fuzz/README.md`.
//! The behaviour these inputs once got wrong (accepted or written as `inf`) is checked by the
//! tests of their own features; here only "never a panic" is.

use std::path::Path;

fn inputs(dir: &Path) -> Vec<std::path::PathBuf> {
    let Ok(rd) = std::fs::read_dir(dir) else {
        return Vec::new();
    };
    let mut v: Vec<_> = rd
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| {
            p.is_file()
                && !p
                    .file_name()
                    .and_then(|n| n.to_str())
                    .is_some_and(|n| n.starts_with('.'))
        })
        .collect();
    v.sort();
    v
}

#[test]
fn every_seed_and_regression_replays_without_a_panic() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("fuzz");
    for (name, run) in loopwright::fuzzing::TARGETS {
        let seeds = inputs(&root.join("seeds").join(name));
        assert!(!seeds.is_empty(), "fuzz target {name} has no seed");
        for p in seeds
            .iter()
            .chain(inputs(&root.join("regressions").join(name)).iter())
        {
            let data = std::fs::read(p).unwrap();
            let r = std::panic::catch_unwind(|| run(&data));
            assert!(r.is_ok(), "{name}: {} panicked", p.display());
        }
    }
}

/// The seeds are real inputs, not noise: each parses (so the fuzzer starts from the inside of
/// the format).
#[test]
fn the_seeds_parse() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("fuzz/seeds");
    let text = |t: &str| -> Vec<String> {
        inputs(&root.join(t))
            .iter()
            .map(|p| std::fs::read_to_string(p).unwrap())
            .collect()
    };
    use loopwright::spec::parse_toml;
    for t in text("probe_spec").iter().chain(text("full_build").iter()) {
        parse_toml::<loopwright::spec::probe::ProbeFileSpec>(t, "seed").unwrap();
    }
    for t in text("fixture_spec") {
        parse_toml::<loopwright::spec::fixture::FixtureFileSpec>(&t, "seed").unwrap();
    }
    for t in text("stackup") {
        parse_toml::<loopwright::spec::stackup::StackupSpec>(&t, "seed").unwrap();
    }
    for t in text("band") {
        assert!(loopwright::calib::band::parse_band(&t).is_some());
    }
}
