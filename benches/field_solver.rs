//! Benchmark of the 2-D field solver (issue 5): one solve of each cross-section of the
//! acceptance checks, at the default accuracy (`Accuracy::Standard`), and the same lines at
//! `Draft` and `Fine`. Run with `cargo bench --bench field_solver`; the measured times are
//! recorded in `docs/field-solver.md`.

use criterion::{Criterion, criterion_group, criterion_main};
use loopwright::field::{self, Accuracy, CrossSection};
use loopwright::solve::impedance::{CoatedMicrostrip, Cpwg, Line, Microstrip, Stripline};
use std::hint::black_box;

/// The benchmarked lines: typical probe-board dimensions (mm).
fn lines() -> Vec<(&'static str, Line)> {
    let ms = Microstrip {
        width: 0.36,
        h: 0.2,
        t: 0.0,
        er: 4.3,
    };
    vec![
        (
            "stripline centred w/b=0.5",
            Line::Stripline(Stripline {
                width: 0.25,
                h1: 0.25,
                h2: 0.25,
                t: 0.0,
                er1: 4.3,
                er2: 4.3,
            }),
        ),
        (
            "stripline offset h1/b=0.15",
            Line::Stripline(Stripline {
                width: 0.2,
                h1: 0.15,
                h2: 0.85,
                t: 0.0,
                er1: 4.3,
                er2: 4.3,
            }),
        ),
        ("microstrip w/h=1.8", Line::Microstrip(ms)),
        (
            "cpwg w=1 s=0.2 h=1.6",
            Line::Cpwg(Cpwg {
                width: 1.0,
                gap: 0.2,
                h: 1.6,
                t: 0.0,
                er: 4.3,
            }),
        ),
        (
            "thick cpwg t=35um",
            Line::Cpwg(Cpwg {
                width: 1.6,
                gap: 0.3,
                h: 1.55,
                t: 0.035,
                er: 4.5,
            }),
        ),
        (
            "coated microstrip t=35um",
            Line::CoatedMicrostrip(CoatedMicrostrip {
                line: Microstrip { t: 0.035, ..ms },
                mask_t: 0.02,
                mask_er: 3.5,
            }),
        ),
    ]
}

fn bench(c: &mut Criterion) {
    let sections: Vec<(&str, CrossSection)> = lines()
        .into_iter()
        .map(|(n, l)| (n, field::cross_section_for_line(&l)))
        .collect();
    let mut g = c.benchmark_group("field_solver default");
    for (name, cs) in &sections {
        g.bench_function(*name, |b| {
            b.iter(|| field::solve_uncached(black_box(cs), Accuracy::default()).unwrap())
        });
    }
    g.finish();
    for (label, acc) in [("draft", Accuracy::Draft), ("fine", Accuracy::Fine)] {
        let mut g = c.benchmark_group(format!("field_solver {label}"));
        for (name, cs) in &sections {
            g.bench_function(*name, |b| {
                b.iter(|| field::solve_uncached(black_box(cs), acc).unwrap())
            });
        }
        g.finish();
    }
}

criterion_group!(benches, bench);
criterion_main!(benches);
