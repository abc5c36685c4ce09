use loopwright::model::probe::family_from_spec;
use std::path::Path;
fn main() {
    let text = std::env::args().nth(1).unwrap();
    let spec: loopwright::spec::probe::ProbeFileSpec =
        toml::from_str(&std::fs::read_to_string(text).unwrap()).unwrap();
    let fam = family_from_spec(&spec, Path::new(".")).unwrap();
    for p in &fam.probes {
        let s = loopwright::solve::probe::solve(p).unwrap();
        let t = std::time::Instant::now();
        let r = loopwright::physics::electric_probe::predict(p, &s, &Default::default()).unwrap();
        println!("{} {:?}", p.name, t.elapsed());
        println!(
            "r_eff {:.3} mm c_self {:.3} pF corner {:.3e} upper {:.3e} ({}) trace w {:.3} C_c {:.4} fF res {:?} mm",
            r.r_eff_m * 1e3,
            r.c_self * 1e12,
            r.corner_hz,
            r.upper_hz,
            r.upper_rule,
            r.trace.width,
            r.coupling_f * 1e15,
            r.resolution_m.map(|x| x * 1e3)
        );
        for (f, d) in r.factor.iter().step_by(20) {
            println!("  {f:.3e} {d:.2}");
        }
        for (f, d) in r.output_per_volt.iter().step_by(20) {
            println!("  v {f:.3e} {d:.2}");
        }
    }
}
