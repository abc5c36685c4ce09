//! Regenerates the offset-stripline reference table of docs/field-solver.md §9 (the recorded
//! refinement study used by tests/field_solver.rs): `cargo run --release --example field_offset_reference`.
use loopwright::field::{self, Accuracy};
use loopwright::solve::impedance::*;
use std::time::Instant;
fn main() {
    println!(
        "w/b h1/b | R(1) R(2) R(4) R(8) R(16) | fine(16->32) | spread(R8,R16) | par% | t(R16)"
    );
    for wb in [0.2, 0.5, 1.0] {
        for h1 in [0.1, 0.15, 0.25, 0.375, 0.5] {
            let line = Line::Stripline(Stripline {
                width: wb,
                h1,
                h2: 1.0 - h1,
                t: 0.0,
                er1: 1.0,
                er2: 1.0,
            });
            let cs = field::cross_section_for_line(&line);
            let mut r = vec![];
            let mut t = 0.0;
            let mut last = None;
            for m in [1, 2, 4, 8, 16] {
                let t0 = Instant::now();
                let s = field::solve(&cs, Accuracy::Refined(m)).unwrap();
                t = t0.elapsed().as_secs_f64();
                r.push(s.z0_ohms);
                last = Some(s);
            }
            let s = last.unwrap();
            let z1 = cohn_centred(wb, 2.0 * h1, 1.0);
            let z2 = cohn_centred(wb, 2.0 * (1.0 - h1), 1.0);
            let par = 2.0 * z1 * z2 / (z1 + z2);
            let refz = r[4];
            println!(
                "{wb} {h1} | {:.6} {:.6} {:.6} {:.6} {:.6} | {:.6} | {:.1e} | {:+.3} | {:.2}s cohn {:.6} nodes {}",
                r[0],
                r[1],
                r[2],
                r[3],
                r[4],
                s.meshes[1].z0_ohms,
                (r[4] / r[3] - 1.0).abs(),
                100.0 * (par / refz - 1.0),
                t,
                cohn_centred(wb, 1.0, 1.0),
                s.nodes
            );
        }
    }
}
