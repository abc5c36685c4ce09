//! Benchmark of the 2-D field solver at its default accuracy (placeholder until the solver lands).
use criterion::{Criterion, criterion_group, criterion_main};

fn bench(c: &mut Criterion) {
    c.bench_function("noop", |b| b.iter(|| std::hint::black_box(1 + 1)));
}

criterion_group!(benches, bench);
criterion_main!(benches);
