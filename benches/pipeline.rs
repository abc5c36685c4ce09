//! Benchmarks of whole jobs (issue on performance): the demo family built in memory, cold (no
//! field solution kept from an earlier run in the process, as a fresh `loopwright demo`) and
//! warm (every cross-section already solved, the cost of everything but the field solver;
//! the launch design keeps its own results per process, so "cold" re-solves field only);
//! `predict` of the demo after its build; a 100 mm loop and a 64-probe family; and the refusal
//! of a spec with a 10 MB name. Run with `cargo bench --bench pipeline`; results
//! in docs/architecture.md ("Performance").

use criterion::{Criterion, criterion_group};
use loopwright::spec::probe::ProbeFileSpec;
use std::hint::black_box;
use std::path::Path;

fn demo_spec() -> ProbeFileSpec {
    loopwright::spec::parse_toml(loopwright::cli::DEMO_SPEC, "demo").unwrap()
}

/// The demo's settings with other probes: (name, shape, size in mm; a rectangle is size ×
/// size/2).
fn spec_with_probes(probes: &[(&str, &str, f64)]) -> ProbeFileSpec {
    let head = loopwright::cli::DEMO_SPEC
        .split("[[probe]]")
        .next()
        .unwrap()
        .to_string();
    let mut text = head;
    for (name, shape, size) in probes {
        text.push_str(&format!(
            "[[probe]]\nname = \"{name}\"\nshape = \"{shape}\"\n"
        ));
        if *shape == "rectangle" {
            text.push_str(&format!("width_mm = {size}\nheight_mm = {}\n", size / 2.0));
        } else {
            text.push_str(&format!("size_mm = {size}\n"));
        }
    }
    loopwright::spec::parse_toml(&text, "bench").unwrap()
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
    // Scaling: one 100 mm round loop (via rows, copper union and spacing checks grow with
    // the loop), and a 64-probe family of round, square and rectangular loops from 5 to 68 mm.
    let big = spec_with_probes(&[("BIG-R100", "round", 100.0)]);
    g.bench_function("100 mm loop build, warm", |b| {
        b.iter(|| {
            loopwright::pipeline::build_family(black_box(&big), Path::new("."), false).unwrap()
        })
    });
    let shapes = ["round", "square", "rectangle"];
    let many: Vec<(String, &str, f64)> = (0..64)
        .map(|i| (format!("P{i:02}"), shapes[i % 3], 5.0 + i as f64))
        .collect();
    let many: Vec<(&str, &str, f64)> = many.iter().map(|(n, s, d)| (n.as_str(), *s, *d)).collect();
    let family64 = spec_with_probes(&many);
    g.bench_function("64-probe family build, warm", |b| {
        b.iter(|| {
            loopwright::pipeline::build_family(black_box(&family64), Path::new("."), false).unwrap()
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

// The command's allocator settings (`keep_freed_memory`), so that these whole jobs run as
// `loopwright` runs them. Without them glibc's own thresholds follow the largest buffers freed
// so far, and a job's time moves with what ran before it (the warm `predict` here paid 5× the
// page faults once the gap correction's buffers shrank).
include!("../src/keep_freed_memory.rs");

fn main() {
    keep_freed_memory();
    pipeline();
    Criterion::default().configure_from_args().final_summary();
}
