//! `loopwright predict`: what each probe of a spec will measure.

use crate::emit::json::{on_fixture_json, probe_json};
use crate::emit::tables::tables;
use crate::error::Error;
use crate::physics::PredictOptions;
use crate::physics::predicted::ASSUMPTIONS;
use crate::pipeline::predict::{OnFixture, on_fixture, predict_spec};
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
    /// Height of the probe's tip above the scanned trace, mm (resolution and coupling; for an
    /// electric probe, held flat, its face's height).
    #[arg(long, value_name = "MM", default_value_t = PredictOptions::default().height_mm)]
    pub height: f64,
    /// Height of the scanned trace above its ground plane, mm.
    #[arg(long = "trace-h", value_name = "MM", default_value_t = PredictOptions::default().trace_h_mm)]
    pub trace_h: f64,
    /// Lowest frequency of the probe-factor table, Hz (default: 150 kHz, where emission scans
    /// begin, or a decade below the corner if that is lower).
    #[arg(long = "f-min", visible_alias = "from", value_name = "HZ")]
    pub f_min: Option<f64>,
    /// Highest frequency, Hz (default: the upper usable frequency). Rows above it are marked
    /// (`above_band: true` in the JSON, dotted in plots): the prediction is not stood behind
    /// there.
    #[arg(long = "f-max", visible_alias = "to", value_name = "HZ")]
    pub f_max: Option<f64>,
    /// A test-line fixture spec: add each probe's predicted coupling to its line at --height
    /// (mutual inductance, field per ampere, S21 from the line's input to the probe).
    #[arg(long, value_name = "FIXTURE.toml")]
    pub fixture: Option<PathBuf>,
    /// Print `{"probes": [...]}` as JSON instead of the tables.
    #[arg(long)]
    pub json: bool,
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
    let all = predict_spec(&spec, a.spec.parent().unwrap_or(Path::new(".")), &o)
        .map_err(|e| crate::spec::with_lines(&text, e))?;
    let couplings: Vec<OnFixture> = match &a.fixture {
        Some(path) => {
            let (fx, fs) = crate::pipeline::load_fixture(path)?;
            // The height is this command's flag.
            let flag = |e: Error| match e {
                Error::Invalid(v) => Error::Invalid(
                    v.into_iter()
                        .map(|f| {
                            if f.field == "height" {
                                f.prefixed("--")
                            } else {
                                f
                            }
                        })
                        .collect(),
                ),
                other => other,
            };
            all.iter()
                .map(|x| on_fixture(x, &fx, &fs, a.height).map_err(flag))
                .collect::<Result<_, _>>()?
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
                    v["fixture_coupling"] = on_fixture_json(c);
                }
                v
            })
            .collect();
        let mut v = json!({
            "probes": probes,
            "assumptions": ASSUMPTIONS,
            "cautions": super::CAUTIONS,
        });
        if all
            .iter()
            .any(|x| x.probe.kind == crate::model::probe::ProbeKind::Balanced)
        {
            v["assumptions_balanced"] = json!(crate::physics::predicted::BALANCED_ASSUMPTIONS);
        }
        if all.iter().any(|x| x.probe.turns > 1) {
            v["assumptions_multi_turn"] = json!(crate::physics::predicted::WINDING_ASSUMPTIONS);
        }
        outln!("{}", serde_json::to_string_pretty(&v).expect("plain JSON"));
    } else {
        out!("{}", tables(&all, &couplings));
    }
    Ok(())
}
