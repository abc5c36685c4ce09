//! Regenerates the convergence tables of docs/field-solver.md §4 (error against mesh size and
//! time): `cargo run --release --example field_convergence`.
use loopwright::field::{self, Accuracy};
use loopwright::solve::impedance::*;
use std::time::Instant;
fn time(l: &Line, a: Accuracy) -> (field::FieldSolution, f64) {
    let mut ts = vec![];
    let mut sol = None;
    let reps = 7;
    for _ in 0..reps {
        let t0 = Instant::now();
        // Uncached: `field::solve` keeps solutions, so a repeat would time a lookup.
        sol = Some(field::solve_uncached(&field::cross_section_for_line(l), a).unwrap());
        ts.push(t0.elapsed().as_secs_f64());
    }
    ts.sort_by(f64::total_cmp);
    (sol.unwrap(), ts[reps / 2])
}
fn main() {
    let cases: Vec<(&str, Line, Option<f64>)> = vec![
        (
            "stripline w/b=0.5 (Cohn exact)",
            Line::Stripline(Stripline {
                width: 0.5,
                h1: 0.5,
                h2: 0.5,
                t: 0.0,
                er1: 1.0,
                er2: 1.0,
            }),
            Some(cohn_centred(0.5, 1.0, 1.0)),
        ),
        (
            "stripline w/b=0.1 (Cohn exact)",
            Line::Stripline(Stripline {
                width: 0.1,
                h1: 0.5,
                h2: 0.5,
                t: 0.0,
                er1: 1.0,
                er2: 1.0,
            }),
            Some(cohn_centred(0.1, 1.0, 1.0)),
        ),
        (
            "microstrip w/h=1 er=4.3",
            Line::Microstrip(Microstrip {
                width: 1.0,
                h: 1.0,
                t: 0.0,
                er: 4.3,
            }),
            None,
        ),
        (
            "gcpw w=1 s=0.2 h=1.6 er=4.3",
            Line::Cpwg(Cpwg {
                width: 1.0,
                gap: 0.2,
                h: 1.6,
                t: 0.0,
                er: 4.3,
            }),
            None,
        ),
        (
            "thick cpwg 1.6/0.3/1.55 t=0.035",
            Line::Cpwg(Cpwg {
                width: 1.6,
                gap: 0.3,
                h: 1.55,
                t: 0.035,
                er: 4.5,
            }),
            None,
        ),
    ];
    for (name, l, exact) in cases {
        let reference = exact.unwrap_or_else(|| {
            field::solve_line(&l, Accuracy::Refined(16))
                .unwrap()
                .z0_ohms
        });
        println!(
            "\n{name}: reference {:.6} ({})",
            reference,
            if exact.is_some() {
                "Cohn"
            } else {
                "Refined(16)"
            }
        );
        println!(
            "| setting | fine-mesh nodes | coarse error | fine error | extrapolated error | estimated_error | time |"
        );
        for (lab, a) in [
            ("Draft", Accuracy::Draft),
            ("Standard", Accuracy::Standard),
            ("Fine", Accuracy::Fine),
            ("Refined(2)", Accuracy::Refined(2)),
            ("Refined(4)", Accuracy::Refined(4)),
            ("Refined(8)", Accuracy::Refined(8)),
        ] {
            let (s, t) = time(&l, a);
            let e = |z: f64| 100.0 * (z / reference - 1.0);
            println!(
                "| {lab} | {} | {:+.4} % | {:+.4} % | {:+.5} % | {:.4} % | {:.1} ms |",
                s.nodes,
                e(s.meshes[0].z0_ohms),
                e(s.meshes[1].z0_ohms),
                e(s.z0_ohms),
                100.0 * s.estimated_error,
                t * 1e3
            );
        }
    }
}
