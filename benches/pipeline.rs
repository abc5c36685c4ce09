//! Benchmarks of whole jobs (issue on performance): the demo family built in memory, cold (no
//! field solution kept from an earlier run in the process, as a fresh `loopwright demo`) and
//! warm (every cross-section already solved, the cost of everything but the field solver;
//! the launch design keeps its own results per process, so "cold" re-solves field only);
//! `predict` of the demo after its build; and the refusal of a spec with a 10 MB name. Run with `cargo bench --bench pipeline`; results
//! in docs/architecture.md ("Performance").

use criterion::{Criterion, criterion_group, criterion_main};
use loopwright::spec::probe::ProbeFileSpec;
use std::hint::black_box;
use std::path::Path;

fn demo_spec() -> ProbeFileSpec {
    loopwright::spec::parse_toml(loopwright::cli::DEMO_SPEC, "demo").unwrap()
}

fn benches(c: &mut Criterion) {
    let spec = demo_spec();
    let mut g = c.benchmark_group("pipeline");
    g.sample_size(10);
    g.bench_function("demo family build, cold", |b| {
        b.iter(|| {
            loopwright::field::forget_kept();
            loopwright::pipeline::build_family(black_box(&spec), Path::new("."), false).unwrap()
        })
    });
    g.bench_function("demo family build, warm", |b| {
        b.iter(|| {
            loopwright::pipeline::build_family(black_box(&spec), Path::new("."), false).unwrap()
        })
    });
    g.bench_function("predict of the demo, warm", |b| {
        b.iter(|| {
            loopwright::pipeline::predict::predict_spec(
                black_box(&spec),
                Path::new("."),
                &Default::default(),
            )
            .unwrap()
        })
    });
    // A spec whose probe name is 10 MB long: read, validated and refused (goal: under
    // 100 ms; the parse of the 10 MB text is most of it).
    let long = loopwright::cli::DEMO_SPEC.replace(
        "name = \"FM-R5\"",
        &format!("name = \"{}\"", "x".repeat(10_000_000)),
    );
    g.bench_function("refuse a 10 MB name", |b| {
        b.iter(|| {
            let spec: ProbeFileSpec =
                loopwright::spec::parse_toml(black_box(&long), "long").unwrap();
            let e = loopwright::model::probe::family_from_spec(&spec, Path::new(".")).unwrap_err();
            loopwright::spec::with_lines(&long, e)
        })
    });
    g.finish();
}

criterion_group!(pipeline, benches);
criterion_main!(pipeline);
