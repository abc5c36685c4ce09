//! A census of random probe specs over the documented field ranges: how many validate, how
//! many of those build design-rule clean, and which rules the others break. A measurement
//! tool for the issue that asks validation to know the geometry; not a test (its numbers are
//! reported, not asserted).
//!
//!     cargo run --release --example spec_census -- [count] [seed]
//!
//! Every spec is built in memory (nothing is written). Ranges: the fields' documented ranges,
//! narrowed to what a fab would plausibly offer (see `spec`).

use loopwright::error::Error;
use loopwright::pipeline::build_family;
use std::collections::BTreeMap;
use std::path::Path;

struct Rng(u64);
impl Rng {
    fn next(&mut self) -> f64 {
        // xorshift64*
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        (self.0.wrapping_mul(0x2545_F491_4F6C_DD1D) >> 11) as f64 / (1u64 << 53) as f64
    }
    fn uni(&mut self, lo: f64, hi: f64) -> f64 {
        lo + (hi - lo) * self.next()
    }
    fn log(&mut self, lo: f64, hi: f64) -> f64 {
        (lo.ln() + (hi.ln() - lo.ln()) * self.next()).exp()
    }
    fn pick<'a>(&mut self, xs: &[&'a str]) -> &'a str {
        xs[(self.next() * xs.len() as f64) as usize % xs.len()]
    }
}

fn spec(r: &mut Rng) -> String {
    let shape = match r.pick(&["round", "square", "rectangle"]) {
        "round" => format!("shape = \"round\"\nsize_mm = {:.3}\n", r.log(3.0, 60.0)),
        "square" => {
            let s = r.log(3.0, 60.0);
            format!(
                "shape = \"square\"\nsize_mm = {s:.3}\ncorner_radius_mm = {:.3}\n",
                r.uni(0.0, 0.5) * s
            )
        }
        _ => {
            let (w, h) = (r.log(3.0, 60.0), r.log(3.0, 60.0));
            format!(
                "shape = \"rectangle\"\nwidth_mm = {w:.3}\nheight_mm = {h:.3}\ncorner_radius_mm = {:.3}\n",
                r.uni(0.0, 0.5) * w.min(h)
            )
        }
    };
    let drill = r.uni(0.2, 0.6);
    let text: String = (0..(r.uni(0.0, 24.0) as usize))
        .map(|_| r.pick(&["A", "b", "7", "-", " ", "µ", "Z"]))
        .collect();
    format!(
        "stackup = \"{}\"\nsignal_layer = {}\ntarget_z0_ohms = {:.1}\nclearance_mm = {:.3}\ngap_mm = {:.3}\nmill_interior = {}\n\
         [via]\ndrill_mm = {drill:.3}\npad_mm = {:.3}\npitch_n = {:.1}\nf_max_hz = {:.3e}\n\
         [handle]\nlength_mm = {:.1}\nwidth_mm = {:.2}\n\
         [fab]\nmin_trace_mm = {:.3}\nmin_space_mm = {:.3}\nmin_drill_mm = {:.3}\nmin_annular_ring_mm = {:.3}\n\
         min_hole_gap_mm = {:.3}\ncopper_to_edge_mm = {:.3}\nmask_expansion_mm = {:.3}\nmask_web_mm = {:.3}\n\
         silk_width_mm = {:.3}\nsilk_text_height_mm = {:.2}\nsilk_to_pad_mm = {:.3}\n\
         [[probe]]\nname = \"p\"\nsilk_text = \"{text}\"\n{shape}",
        r.pick(&["common-4l-1.6", "slim-4l-0.8"]),
        r.pick(&["2", "3"]),
        r.uni(35.0, 75.0),
        r.uni(0.1, 1.0),
        r.uni(0.1, 2.0),
        r.pick(&["true", "false"]),
        drill + 2.0 * r.uni(0.1, 0.4),
        r.uni(6.0, 40.0),
        r.log(1e8, 2e10),
        r.uni(8.0, 80.0),
        r.uni(5.0, 20.0),
        r.uni(0.075, 0.2),
        r.uni(0.075, 0.2),
        r.uni(0.15, 0.35),
        r.uni(0.05, 0.2),
        r.uni(0.15, 0.35),
        r.uni(0.1, 1.0),
        r.uni(0.0, 0.1),
        r.uni(0.05, 0.15),
        r.uni(0.1, 0.2),
        r.uni(0.6, 1.5),
        r.uni(0.1, 0.3),
    )
}

fn main() {
    let mut args = std::env::args().skip(1);
    let n: usize = args.next().and_then(|a| a.parse().ok()).unwrap_or(200);
    let seed: u64 = args.next().and_then(|a| a.parse().ok()).unwrap_or(20261202);
    let mut r = Rng(seed | 1);
    let (mut clean, mut drc, mut invalid, mut other, mut panics) = (0, 0, 0, 0, 0);
    let mut rules: BTreeMap<String, usize> = BTreeMap::new();
    let mut fields: BTreeMap<String, usize> = BTreeMap::new();
    let mut unnamed = 0;
    for _ in 0..n {
        let text = spec(&mut r);
        let s: loopwright::spec::probe::ProbeFileSpec =
            match loopwright::spec::parse_toml(&text, "census") {
                Ok(s) => s,
                Err(_) => {
                    invalid += 1;
                    continue;
                }
            };
        match std::panic::catch_unwind(|| build_family(&s, Path::new("."), false)) {
            Ok(Ok(_)) => clean += 1,
            Ok(Err(Error::Drc { violations, .. })) => {
                drc += 1;
                for v in violations {
                    let k = format!("{} on {}", v.rule, v.layer);
                    *rules.entry(k).or_default() += 1;
                }
                if std::env::var("CENSUS_SHOW").is_ok() {
                    eprintln!("--- DRC\n{text}");
                }
            }
            Ok(Err(Error::Invalid(v))) => {
                invalid += 1;
                for e in v {
                    if e.field.is_empty() {
                        unnamed += 1;
                    }
                    *fields.entry(e.field.clone()).or_default() += 1;
                }
            }
            Ok(Err(e)) => {
                other += 1;
                eprintln!("--- other refusal: {e}\n{text}");
            }
            Err(_) => panics += 1,
        }
    }
    let validated = clean + drc + other;
    println!(
        "specs {n}: validated {validated}, of which DRC-clean {clean} ({:.1} %), DRC-refused {drc}, other refusals {other}; refused at validation {invalid} ({unnamed} without a field); panics {panics}",
        100.0 * clean as f64 / validated.max(1) as f64
    );
    println!("DRC rules broken (count of violations):");
    for (k, v) in &rules {
        println!("  {v:>5}  {k}");
    }
    println!("fields refused at validation:");
    let mut fv: Vec<_> = fields.into_iter().collect();
    fv.sort_by_key(|e| std::cmp::Reverse(e.1));
    for (k, v) in fv.iter().take(15) {
        println!("  {v:>5}  {k}");
    }
}
