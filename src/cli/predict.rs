//! `loopwright predict`: what each probe of a spec will measure.

use crate::error::Error;
use crate::model::probe::family_from_spec;
use crate::physics::{PredictOptions, predict};
use crate::solve::probe::solve;
use crate::spec::parse_toml;
use crate::spec::probe::ProbeFileSpec;
use serde_json::{Value, json};
use std::path::{Path, PathBuf};

/// Arguments of `loopwright predict`.
#[derive(Debug, clap::Args)]
#[command(allow_negative_numbers = true)]
pub struct PredictArgs {
    /// The probe or family spec (TOML).
    pub spec: PathBuf,
    /// Height of the probe's tip above the scanned trace, mm (resolution and coupling).
    #[arg(long, value_name = "MM", default_value_t = PredictOptions::default().height_mm)]
    pub height: f64,
    /// Height of the scanned trace above its ground plane, mm.
    #[arg(long = "trace-h", value_name = "MM", default_value_t = PredictOptions::default().trace_h_mm)]
    pub trace_h: f64,
    /// Lowest frequency of the probe-factor table, Hz (default: a decade below the corner).
    #[arg(long = "f-min", value_name = "HZ")]
    pub f_min: Option<f64>,
    /// Highest frequency, Hz (default: the upper usable frequency).
    #[arg(long = "f-max", value_name = "HZ")]
    pub f_max: Option<f64>,
    /// A test-line fixture spec: add each probe's predicted coupling to its line at --height
    /// (mutual inductance, field per ampere, S21 from the line's input to the probe).
    #[arg(long, value_name = "FIXTURE.toml")]
    pub fixture: Option<PathBuf>,
    /// Print `{"probes": [...]}` as JSON instead of the tables.
    #[arg(long)]
    pub json: bool,
}

pub use crate::emit::json::probe_json;
pub use crate::physics::predicted::{ASSUMPTIONS, Predicted};

/// Loads a spec and predicts every probe.
pub fn predict_spec(
    spec: &ProbeFileSpec,
    base: &Path,
    o: &PredictOptions,
) -> Result<Vec<Predicted>, Error> {
    let errs = o.validate();
    if !errs.is_empty() {
        return Err(Error::Invalid(
            errs.into_iter()
                .map(|mut e| {
                    e.field = format!("--{}", e.field);
                    e
                })
                .collect(),
        ));
    }
    let family = family_from_spec(spec, base)?;
    let mut out = Vec::new();
    for p in family.probes {
        let solved = solve(&p)?;
        let response = predict(&p, &solved, o)?;
        out.push(Predicted {
            probe: p,
            solved,
            response,
        });
    }
    Ok(out)
}

/// A probe's predicted coupling to a test-line fixture at a height.
pub struct FixtureCoupling {
    /// The fixture's name.
    pub fixture: String,
    /// Tip height above the line's copper, mm.
    pub height_mm: f64,
    /// The coupling.
    pub coupling: crate::physics::coupling::Coupling,
    /// Predicted S21 at the probe-factor table's frequencies: (Hz, dB, degrees), with the line
    /// current under the probe from the fixture's launch model (its magnitude; the phase stays
    /// referred to the current under the probe).
    pub s21: Vec<(f64, f64, f64)>,
    /// That current per V_inc/R at the same frequencies, dB (0 on a uniform matched line).
    pub line_current_db: Vec<f64>,
    /// Wave impedance of the line's near field assumed for the electric pickup, Ω: η0/√εeff
    /// of the line (its field in air taken as that of the same line without dielectric at the
    /// same voltage, an estimate).
    pub line_wave_ohm: f64,
    /// Worst-case E-rejection over the line at the same frequencies, dB: the line's electric
    /// field taken across the loop's axis (a probe in the usual orientation, centred on the
    /// line, rejects it by symmetry).
    pub e_rejection_db: Vec<f64>,
}

/// The coupling of a predicted probe to a solved fixture at `height_mm`.
pub fn fixture_coupling(
    x: &Predicted,
    fx: &crate::model::fixture::Fixture,
    fs: &crate::solve::fixture::SolvedFixture,
    height_mm: f64,
) -> FixtureCoupling {
    use crate::physics::coupling::{launch_current, probe_coupling, probe_s21};
    let c = probe_coupling(
        &x.probe,
        &x.solved,
        &x.response,
        height_mm,
        &fs.test_line(crate::physics::R_LOAD),
    );
    let freqs: Vec<f64> = x.response.probe_factor.iter().map(|(f, _)| *f).collect();
    // The fixture's launches (a fixture that solved has sections; none would mean k = 1).
    let secs = crate::solve::fixture::launch_sections(fx, fs).unwrap_or_default();
    let beyond: Vec<_> = secs.iter().rev().copied().collect();
    let k_db: Vec<f64> = freqs
        .iter()
        .map(|&f| {
            let k = launch_current(&secs, &beyond, crate::physics::R_LOAD, f);
            20.0 * k.abs().log10()
        })
        .collect();
    let s21 = probe_s21(&x.probe, &x.solved, &x.response, &c, &freqs)
        .into_iter()
        .zip(&k_db)
        .map(|((f, s), k)| (f, 20.0 * s.abs().log10() + k, s.im.atan2(s.re).to_degrees()))
        .collect();
    let line_wave_ohm = crate::physics::electric::ETA0 / fs.solution.eps_eff.sqrt();
    let e_rejection_db = freqs
        .iter()
        .map(|&f| x.response.e_rejection_db(f, line_wave_ohm))
        .collect();
    FixtureCoupling {
        fixture: fx.name.clone(),
        height_mm,
        coupling: c,
        s21,
        line_current_db: k_db,
        line_wave_ohm,
        e_rejection_db,
    }
}

/// The JSON object of a fixture coupling.
pub fn coupling_json(c: &FixtureCoupling) -> Value {
    let k = &c.coupling;
    json!({
        "fixture": c.fixture,
        "height_mm": c.height_mm,
        "mutual_ph": k.mutual * 1e12,
        "mutual_filament_ph": k.mutual_filament * 1e12,
        "h_avg_per_amp": k.h_avg_per_amp,
        "h_centre_per_amp": k.h_centre_per_amp,
        "field_reference": "area-average Hx over the loop; I = k·V_inc/50 Ω, k from the fixture's launch model",
        "e_field_reference": format!("worst case: the line's electric field across the loop's axis, E/H = η0/√εeff = {:.1} Ω (estimate); dB re the magnetic response; centred in the usual orientation the probe ideally rejects it by symmetry", c.line_wave_ohm),
        "s21": c.s21.iter().zip(&c.line_current_db).zip(&c.e_rejection_db).map(|(((f, db, deg), k), e)| json!({"freq_hz": f, "db": db, "deg": deg, "line_current_db": k, "e_rejection_db": e})).collect::<Vec<_>>(),
    })
}

/// The human-readable tables.
pub fn tables(all: &[Predicted], couplings: &[FixtureCoupling]) -> String {
    let mut o = String::new();
    for (i, x) in all.iter().enumerate() {
        let r = &x.response;
        o.push_str(&format!(
            "{} — {} loop, {}\n",
            x.probe.name,
            x.probe.shape.kind(),
            x.probe.shape.size_text()
        ));
        let line = |o: &mut String, k: &str, v: String| o.push_str(&format!("  {k:<22} {v}\n"));
        line(&mut o, "loop area", format!("{:.2} mm²", r.area_m2 * 1e6));
        line(
            &mut o,
            "effective area",
            format!(
                "{:.2} mm² ({:.3} of the centreline's: the shield's current crowds inwards)",
                r.area_eff_m2 * 1e6,
                r.area_eff_m2 / r.area_m2
            ),
        );
        line(
            &mut o,
            "inductance",
            format!(
                "{:.2} nH (outer loop {:.2} nH + inner stub {:.2} nH)",
                r.l_total * 1e9,
                r.l_outer * 1e9,
                r.l_stub * 1e9
            ),
        );
        line(
            &mut o,
            "low-frequency corner",
            format!("{:.1} MHz", r.corner_hz / 1e6),
        );
        line(
            &mut o,
            "upper usable frequency",
            format!("{:.0} MHz ({})", r.upper_hz / 1e6, r.upper_rule),
        );
        line(
            &mut o,
            "error budget (1 dB)",
            match r.budget_hz {
                Some(b) => format!(
                    "reached at {:.0} MHz (electric pickup at 20° tilt + stub length ±5 %)",
                    b / 1e6
                ),
                None => "not reached below the first null".to_string(),
            },
        );
        for (rule, f) in &r.quoted_limits {
            line(
                &mut o,
                "  quoted limit",
                format!("{:.0} MHz: {rule}", f / 1e6),
            );
        }
        line(
            &mut o,
            "resolution (−6 dB)",
            format!(
                "{:.2} mm across a trace {} mm over its plane, tip {} mm above it",
                r.resolution_m * 1e3,
                r.options.trace_h_mm,
                r.options.height_mm
            ),
        );
        line(
            &mut o,
            "mutual to the trace",
            format!("{:.3} nH", r.mutual * 1e9),
        );
        if let Some(l) = &r.launch {
            line(
                &mut o,
                "connector launch",
                format!(
                    "worst return loss {:.1} dB at {:.0} MHz up to f_max {:.0} MHz (limit {} dB); \
                     probe factor changed by at most {:+.2} dB below the upper usable \
                     frequency{} (not included above)",
                    l.s11.worst_db,
                    l.s11.worst_hz / 1e6,
                    l.f_max_hz / 1e6,
                    x.probe.connector.return_loss_limit_db,
                    l.pf_below_upper.1,
                    match l.pf_to_fmax {
                        Some((_, d)) => format!(", {d:+.2} dB from there to f_max"),
                        None => String::new(),
                    }
                ),
            );
        }
        o.push_str(
            "  probe factor (dB(S/m), uniform H, 50 Ω) and E-rejection (dB, worst case: E across \
             the axis, E/H = η0):\n",
        );
        let step = (r.probe_factor.len() / 10).max(1);
        for (i, ((f, d), (_, e))) in r.probe_factor.iter().zip(&r.e_rejection).enumerate() {
            if i % step == 0 || i + 1 == r.probe_factor.len() {
                o.push_str(&format!(
                    "    {:>12.4} MHz  {:>7.2}  {e:>6.1}\n",
                    f / 1e6,
                    d
                ));
            }
        }
        if let Some(c) = couplings.get(i) {
            let k = &c.coupling;
            o.push_str(&format!(
                "  on fixture {}, tip {} mm over the line (loop plane along it):\n",
                c.fixture, c.height_mm
            ));
            line(
                &mut o,
                "mutual inductance",
                format!(
                    "{:.2} pH (strip as a sheet; {:.2} pH as a filament)",
                    k.mutual * 1e12,
                    k.mutual_filament * 1e12
                ),
            );
            line(
                &mut o,
                "field per ampere",
                format!(
                    "{:.3} A/m area-average, {:.3} A/m at the loop's centre",
                    k.h_avg_per_amp, k.h_centre_per_amp
                ),
            );
            o.push_str(&format!(
                "  predicted S21, line input to probe (dB, degrees), and E-rejection over the line \
                 (dB, its field across the axis, E/H = {:.0} Ω):\n",
                c.line_wave_ohm
            ));
            for (j, ((f, db, deg), e)) in c.s21.iter().zip(&c.e_rejection_db).enumerate() {
                if j % step == 0 || j + 1 == c.s21.len() {
                    o.push_str(&format!(
                        "    {:>12.4} MHz  {db:>7.2}  {deg:>7.1}  {e:>6.1}\n",
                        f / 1e6
                    ));
                }
            }
        }
        o.push('\n');
    }
    o.push_str("Assumptions:\n");
    for a in ASSUMPTIONS {
        o.push_str(&format!("  - {a}\n"));
    }
    o.push_str(&format!("\n{}\n", super::CAUTIONS));
    o
}

pub(super) fn run(a: &PredictArgs) -> Result<(), Error> {
    let text = std::fs::read_to_string(&a.spec).map_err(|e| Error::Io {
        path: a.spec.display().to_string(),
        source: e,
    })?;
    let spec: ProbeFileSpec = parse_toml(&text, &a.spec.display().to_string())?;
    let o = PredictOptions {
        height_mm: a.height,
        trace_h_mm: a.trace_h,
        f_min_hz: a.f_min,
        f_max_hz: a.f_max,
        ..PredictOptions::default()
    };
    let all = predict_spec(&spec, a.spec.parent().unwrap_or(Path::new(".")), &o)?;
    let couplings: Vec<FixtureCoupling> = match &a.fixture {
        Some(path) => {
            let (fx, fs) = crate::pipeline::load_fixture(path)?;
            all.iter()
                .map(|x| fixture_coupling(x, &fx, &fs, a.height))
                .collect()
        }
        None => Vec::new(),
    };
    if a.json {
        let probes: Vec<Value> = all
            .iter()
            .enumerate()
            .map(|(i, x)| {
                let mut v = probe_json(x);
                if let Some(c) = couplings.get(i) {
                    v["fixture_coupling"] = coupling_json(c);
                }
                v
            })
            .collect();
        let v = json!({
            "probes": probes,
            "assumptions": ASSUMPTIONS,
            "cautions": super::CAUTIONS,
        });
        outln!("{}", serde_json::to_string_pretty(&v).expect("plain JSON"));
    } else {
        out!("{}", tables(&all, &couplings));
    }
    Ok(())
}
