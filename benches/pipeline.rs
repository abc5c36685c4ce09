//! Benchmarks of whole jobs (issue on performance): the demo family built in memory, cold (no
//! field solution kept from an earlier run in the process, as a fresh `loopwright demo`) and
//! warm (every cross-section already solved, the cost of everything but the field solver;
//! the launch design keeps its own results per process, so "cold" re-solves field only);
//! and `predict` of the demo after its build. Run with `cargo bench --bench pipeline`; results
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
    g.finish();
}

criterion_group!(pipeline, benches);
criterion_main!(pipeline);
