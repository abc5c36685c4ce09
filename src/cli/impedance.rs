//! `loopwright impedance`: Z0 of a trace, or the width for a target Z0, with the fab spread.

use crate::error::{Error, FieldError};
use crate::model::stackup::{Stackup, load};
use crate::solve::impedance::{
    Accuracy, CoatedMicrostrip, Cpwg, Line, Method, Microstrip, Solution, SolveLimits, Spread,
    Stripline, Structure, Tolerances, WarningKind, accuracy_name, analyse, analyse_with,
    default_method, solve_width, spread_with,
};
use serde_json::{Value, json};

/// Arguments of `loopwright impedance`. Lengths in millimetres.
#[derive(Debug, Clone, Default, clap::Args)]
#[command(allow_negative_numbers = true)]
pub struct ImpedanceArgs {
    /// Trace structure: microstrip, coated-microstrip, stripline or cpwg. With --stackup it
    /// defaults to the layer's natural structure.
    #[arg(long, value_name = "NAME", value_parser = structure_arg)]
    pub structure: Option<Structure>,
    /// Relative permittivity of the dielectric (overrides the stackup's).
    #[arg(long, value_name = "E")]
    pub er: Option<f64>,
    /// Copper thickness in mm; 0 is the zero-thickness idealisation. Default 0.035 (1 oz)
    /// without a stackup.
    #[arg(long, value_name = "MM")]
    pub t: Option<f64>,
    /// Trace width in mm: compute Z0 for it.
    #[arg(long, value_name = "MM", conflicts_with = "target")]
    pub width: Option<f64>,
    /// Target Z0 in ohms: solve the width (default 50 when --width is absent).
    #[arg(long, value_name = "OHMS")]
    pub target: Option<f64>,
    /// Method: hammerstad-jensen, ipc-2141 (microstrip); cover-blend, ipc-2141 (coated);
    /// wheeler, cohn, ipc-2141 (stripline); conformal (cpwg); field (the 2-D field solver, any
    /// structure). Default: the most accurate closed form.
    #[arg(long, value_name = "NAME", value_parser = method_arg)]
    pub method: Option<Method>,
    /// Microstrip and cpwg: dielectric between the trace's bottom and the plane, mm.
    #[arg(long, value_name = "MM")]
    pub h: Option<f64>,
    /// Cpwg: gap from the trace edge to the coplanar ground, mm.
    #[arg(long, value_name = "MM")]
    pub gap: Option<f64>,
    /// Coated microstrip: solder-mask thickness over the laminate, mm.
    #[arg(long = "mask-t", value_name = "MM")]
    pub mask_t: Option<f64>,
    /// Coated microstrip: solder-mask relative permittivity.
    #[arg(long = "mask-er", value_name = "E")]
    pub mask_er: Option<f64>,
    /// Stripline: dielectric between the upper plane and the trace's top, mm.
    #[arg(long, value_name = "MM")]
    pub h1: Option<f64>,
    /// Stripline: dielectric between the trace's bottom and the lower plane, mm.
    #[arg(long, value_name = "MM")]
    pub h2: Option<f64>,
    /// Take the geometry from a stackup: a built-in name (see `loopwright stackups`) or a file.
    #[arg(long, value_name = "NAME|FILE", requires = "layer")]
    pub stackup: Option<String>,
    /// Copper layer of the trace in the stackup, 1 = top.
    #[arg(long, value_name = "N", requires = "stackup")]
    pub layer: Option<usize>,
    /// Etch tolerance on the width for the spread, ± mm.
    #[arg(long = "etch-tol", value_name = "MM", default_value_t = Tolerances::default().etch_mm)]
    pub etch_tol: f64,
    /// Permittivity tolerance for the spread, ± absolute.
    #[arg(long = "er-tol", value_name = "E", default_value_t = Tolerances::default().er_abs)]
    pub er_tol: f64,
    /// Dielectric thickness tolerance for the spread, ± percent.
    #[arg(long = "h-tol-pct", value_name = "PCT", default_value_t = Tolerances::default().h_rel * 100.0)]
    pub h_tol_pct: f64,
    /// Fab minimum trace width, mm: a solved width below it is refused.
    #[arg(long = "min-trace", value_name = "MM", default_value_t = SolveLimits::default().min_trace_mm)]
    pub min_trace: f64,
    /// Field-solver accuracy for `--method field`: draft (≤ 0.25 %), standard (≤ 0.06 %) or
    /// fine (≤ 0.015 %).
    #[arg(long, value_name = "LEVEL", default_value = "standard", value_parser = accuracy_arg)]
    pub accuracy: Accuracy,
    /// Print one JSON object instead of the table.
    #[arg(long)]
    pub json: bool,
}

/// `--accuracy` (clap value parser).
fn accuracy_arg(s: &str) -> Result<Accuracy, String> {
    match s {
        "draft" => Ok(Accuracy::Draft),
        "standard" => Ok(Accuracy::Standard),
        "fine" => Ok(Accuracy::Fine),
        _ => Err("use one of: draft, standard, fine".into()),
    }
}

/// The outcome of an impedance request, ready to print.
#[derive(Debug, Clone)]
pub struct ImpedanceReport {
    /// The analysed line (with its final width).
    pub line: Line,
    /// Its solution.
    pub solution: Solution,
    /// The target, when the width was solved.
    pub target: Option<f64>,
    /// The fab spread.
    pub spread: Spread,
    /// Stackup name and layer, when taken from one.
    pub stackup: Option<(String, usize)>,
    /// With the field method: the default closed form's solution of the same line.
    pub closed_form: Option<Solution>,
    /// The field solver's accuracy setting.
    pub accuracy: Accuracy,
}

const STRUCTURE_FLAGS: [(&str, &[&str]); 4] = [
    ("microstrip", &["h"]),
    ("coated-microstrip", &["h", "mask-t", "mask-er"]),
    ("stripline", &["h1", "h2"]),
    ("cpwg", &["h", "gap"]),
];

fn flags_of(s: Structure) -> &'static [&'static str] {
    STRUCTURE_FLAGS
        .iter()
        .find(|(n, _)| *n == s.name())
        .map(|(_, f)| *f)
        .unwrap_or(&[])
}

/// `--structure` (clap value parser).
fn structure_arg(s: &str) -> Result<Structure, String> {
    Structure::parse(s).ok_or_else(|| {
        format!(
            "use one of: {}",
            Structure::ALL.map(|s| s.name()).join(", ")
        )
    })
}

/// `--method` (clap value parser).
fn method_arg(s: &str) -> Result<Method, String> {
    Method::parse(s)
        .ok_or_else(|| format!("use one of: {}", Method::ALL.map(|m| m.name()).join(", ")))
}

/// Renames library field names to the flags the user typed.
fn as_flags(errs: Vec<FieldError>) -> Error {
    Error::Invalid(
        errs.into_iter()
            .map(|mut e| {
                if !e.field.starts_with("--") && !e.field.contains('[') {
                    e.field = format!("--{}", e.field);
                }
                e
            })
            .collect(),
    )
}

/// Builds the line (width possibly a placeholder) from the arguments.
fn build_line(
    a: &ImpedanceArgs,
    structure: Structure,
    st: Option<&Stackup>,
) -> Result<Line, Error> {
    // Flags that do not belong to the structure are a mistake worth reporting.
    let given: [(&str, Option<f64>); 6] = [
        ("h", a.h),
        ("gap", a.gap),
        ("mask-t", a.mask_t),
        ("mask-er", a.mask_er),
        ("h1", a.h1),
        ("h2", a.h2),
    ];
    let mut errs = Vec::new();
    for (flag, v) in given {
        if let Some(v) = v
            && !flags_of(structure).contains(&flag)
        {
            let list: Vec<String> = flags_of(structure)
                .iter()
                .map(|f| format!("--{f}"))
                .collect();
            errs.push(FieldError::new(
                format!("--{flag}"),
                v,
                format!(
                    "not used by {structure}; its geometry flags are {}",
                    list.join(", ")
                ),
            ));
        }
    }
    let width = a.width.unwrap_or(f64::NAN);
    let mut line = match st {
        Some(st) => {
            let layer = a.layer.unwrap_or(0);
            st.line_for_layer(layer, structure, width, a.gap)?
        }
        None => {
            let need = |errs: &mut Vec<FieldError>, flag: &str, v: Option<f64>| -> f64 {
                v.unwrap_or_else(|| {
                    errs.push(FieldError::new(
                        format!("--{flag}"),
                        "(missing)",
                        format!("{structure} needs --{flag} (or --stackup NAME --layer N)"),
                    ));
                    1.0
                })
            };
            let er = need(&mut errs, "er", a.er);
            let t = a.t.unwrap_or(0.035);
            let line = match structure {
                Structure::Microstrip | Structure::CoatedMicrostrip => {
                    let m = Microstrip {
                        width,
                        h: need(&mut errs, "h", a.h),
                        t,
                        er,
                    };
                    if structure == Structure::Microstrip {
                        Line::Microstrip(m)
                    } else {
                        Line::CoatedMicrostrip(CoatedMicrostrip {
                            line: m,
                            mask_t: need(&mut errs, "mask-t", a.mask_t),
                            mask_er: need(&mut errs, "mask-er", a.mask_er),
                        })
                    }
                }
                Structure::Stripline => Line::Stripline(Stripline {
                    width,
                    h1: need(&mut errs, "h1", a.h1),
                    h2: need(&mut errs, "h2", a.h2),
                    t,
                    er1: er,
                    er2: er,
                }),
                Structure::Cpwg => Line::Cpwg(Cpwg {
                    width,
                    gap: need(&mut errs, "gap", a.gap),
                    h: need(&mut errs, "h", a.h),
                    t,
                    er,
                }),
            };
            if !errs.is_empty() {
                return Err(Error::Invalid(errs));
            }
            line
        }
    };
    if !errs.is_empty() {
        return Err(Error::Invalid(errs));
    }
    // Explicit flags override the stackup's values.
    if st.is_some() {
        match &mut line {
            Line::Microstrip(m) => override_ms(m, a),
            Line::CoatedMicrostrip(c) => {
                override_ms(&mut c.line, a);
                if let Some(v) = a.mask_t {
                    c.mask_t = v;
                }
                if let Some(v) = a.mask_er {
                    c.mask_er = v;
                }
            }
            Line::Stripline(s) => {
                if let Some(v) = a.er {
                    s.er1 = v;
                    s.er2 = v;
                }
                if let Some(v) = a.t {
                    s.t = v;
                }
                if let Some(v) = a.h1 {
                    s.h1 = v;
                }
                if let Some(v) = a.h2 {
                    s.h2 = v;
                }
            }
            Line::Cpwg(c) => {
                if let Some(v) = a.er {
                    c.er = v;
                }
                if let Some(v) = a.t {
                    c.t = v;
                }
                if let Some(v) = a.h {
                    c.h = v;
                }
            }
        }
    }
    Ok(line)
}

fn override_ms(m: &mut Microstrip, a: &ImpedanceArgs) {
    if let Some(v) = a.er {
        m.er = v;
    }
    if let Some(v) = a.t {
        m.t = v;
    }
    if let Some(v) = a.h {
        m.h = v;
    }
}

/// Computes the report for a set of arguments.
pub fn evaluate(a: &ImpedanceArgs) -> Result<ImpedanceReport, Error> {
    let stackup = match &a.stackup {
        Some(name) => Some(load(name)?),
        None => None,
    };
    let structure = match (&a.structure, &stackup) {
        (Some(s), _) => *s,
        (None, Some(st)) => st.natural_structure(a.layer.unwrap_or(1)),
        (None, None) => {
            return Err(Error::Invalid(vec![FieldError::new(
                "--structure",
                "(missing)",
                format!(
                    "one of {} (or give --stackup NAME --layer N)",
                    Structure::ALL.map(|s| s.name()).join(", ")
                ),
            )]));
        }
    };
    let method = a.method;
    let line = build_line(a, structure, stackup.as_ref())?;
    let accuracy = a.accuracy;
    let limits = SolveLimits {
        min_trace_mm: a.min_trace,
        min_trace_setting: "--min-trace",
        accuracy,
    };
    let tol = Tolerances {
        etch_mm: a.etch_tol,
        er_abs: a.er_tol,
        h_rel: a.h_tol_pct / 100.0,
    };
    let solve = |method: Option<Method>| -> Result<_, Error> {
        Ok(match a.width {
            Some(_) => {
                let sol = analyse_with(&line, method, accuracy).map_err(as_flags)?;
                (line, sol, None)
            }
            None => {
                let target = a.target.unwrap_or(50.0);
                let (l, s) = solve_width(&line, method, target, &limits).map_err(|e| match e {
                    Error::Invalid(v) => as_flags(v),
                    other => other,
                })?;
                (l, s, Some(target))
            }
        })
    };
    // Where the default closed form is outside its validity (or, solving a width, finds none
    // inside it), the field solver answers and the closed form is shown beside it; a method
    // the user names is kept.
    let first = solve(method);
    let why: Option<String> = match &first {
        _ if method.is_some() => None,
        Ok((_, sol, _)) if sol.outside_validity() => Some(
            sol.warnings
                .iter()
                .filter(|w| w.kind == WarningKind::OutsideValidity)
                .map(|w| w.text.clone())
                .collect::<Vec<_>>()
                .join("; "),
        ),
        Err(Error::Invalid(v)) if a.width.is_none() => Some(
            v.iter()
                .map(|f| f.to_string())
                .collect::<Vec<_>>()
                .join("; "),
        ),
        _ => None,
    };
    let (line, solution, target) = match (why, first) {
        (Some(why), first) => match solve(Some(Method::Field)) {
            Ok((l, mut s, t)) => {
                let closed = default_method(&line);
                s.warnings
                    .push(crate::solve::impedance::Warning::note(format!(
                        "the 2-D field solver answers because {} is out of its depth here ({why}); \
                     give --method {} to use the closed form anyway",
                        closed.name(),
                        closed.name()
                    )));
                (l, s, t)
            }
            Err(_) => first?,
        },
        (None, first) => first?,
    };
    // The closed form beside the field solution, for comparison.
    let closed_form = if solution.method == Method::Field {
        analyse(&line, None).ok()
    } else {
        None
    };
    let spread =
        spread_with(&line, Some(solution.method), &tol, accuracy).map_err(|e| match e {
            Error::Invalid(v) => as_flags(v),
            other => other,
        })?;
    Ok(ImpedanceReport {
        line,
        solution,
        target,
        spread,
        closed_form,
        accuracy,
        stackup: stackup.map(|s| (s.name().to_string(), a.layer.unwrap_or(0))),
    })
}

fn geometry_json(line: &Line) -> Value {
    match line {
        Line::Microstrip(m) => json!({"h_mm": m.h, "t_mm": m.t, "er": m.er}),
        Line::CoatedMicrostrip(c) => json!({
            "h_mm": c.line.h, "t_mm": c.line.t, "er": c.line.er,
            "mask_t_mm": c.mask_t, "mask_er": c.mask_er
        }),
        Line::Stripline(s) => json!({
            "h1_mm": s.h1, "h2_mm": s.h2, "t_mm": s.t, "b_mm": s.b(),
            "er": if s.er1 == s.er2 { json!(s.er1) } else { json!([s.er1, s.er2]) },
            "er_upper": s.er1, "er_lower": s.er2, "centred": s.is_centred()
        }),
        Line::Cpwg(c) => json!({"gap_mm": c.gap, "h_mm": c.h, "t_mm": c.t, "er": c.er}),
    }
}

impl ImpedanceReport {
    /// The JSON object printed by `--json`.
    pub fn to_json(&self) -> Value {
        let s = &self.spread;
        json!({
            "structure": self.line.structure().name(),
            "method": self.solution.method.name(),
            "default_method": default_method(&self.line).name(),
            "z0_ohms": self.solution.z0,
            "eps_eff": self.solution.eps_eff,
            "width_mm": self.line.width(),
            "target_ohms": self.target,
            "geometry": geometry_json(&self.line),
            "stackup": self.stackup.as_ref().map(|(n, l)| json!({"name": n, "layer": l})),
            "spread": {
                "z0_min_ohms": s.z0_min,
                "z0_max_ohms": s.z0_max,
                "corners": s.corners,
                "etch_tol_mm": s.tolerances.etch_mm,
                "er_tol": s.tolerances.er_abs,
                "h_tol_pct": s.tolerances.h_rel * 100.0,
            },
            "warnings": self.solution.warnings.iter().map(|w| w.text.clone()).collect::<Vec<_>>(),
            "accuracy": (self.solution.method == Method::Field).then(|| accuracy_name(self.accuracy)),
            "closed_form": self.closed_form.as_ref().map(|c| json!({
                "method": c.method.name(),
                "z0_ohms": c.z0,
                "eps_eff": c.eps_eff,
                "difference_pct": (c.z0 / self.solution.z0 - 1.0) * 100.0,
            })),
        })
    }

    /// The human-readable table.
    pub fn to_table(&self) -> String {
        let mut o = String::new();
        let l = &self.line;
        let z = self.solution.z0;
        let push = |o: &mut String, k: &str, v: String| o.push_str(&format!("  {k:<12} {v}\n"));
        o.push_str(&format!(
            "{} (quasi-static), method {}\n",
            l.structure(),
            self.solution.method
        ));
        if let Some((n, layer)) = &self.stackup {
            push(&mut o, "stackup", format!("{n}, layer L{layer}"));
        }
        let wtxt = match self.target {
            Some(t) => format!("{:.4} mm  (solved for {t} Ω)", l.width()),
            None => format!("{:.4} mm", l.width()),
        };
        push(&mut o, "width", wtxt);
        match l {
            Line::Microstrip(m) => push(
                &mut o,
                "dielectric",
                format!("h {:.4} mm, εr {:.3}, t {:.4} mm", m.h, m.er, m.t),
            ),
            Line::CoatedMicrostrip(c) => {
                push(
                    &mut o,
                    "dielectric",
                    format!(
                        "h {:.4} mm, εr {:.3}, t {:.4} mm",
                        c.line.h, c.line.er, c.line.t
                    ),
                );
                push(
                    &mut o,
                    "mask",
                    format!("{:.4} mm, εr {:.3}", c.mask_t, c.mask_er),
                );
            }
            Line::Stripline(s) => {
                push(
                    &mut o,
                    "dielectric",
                    format!(
                        "h1 {:.4} mm (εr {:.3}) above, h2 {:.4} mm (εr {:.3}) below, t {:.4} mm{}",
                        s.h1,
                        s.er1,
                        s.h2,
                        s.er2,
                        s.t,
                        if s.is_centred() {
                            ", centred"
                        } else {
                            ", offset"
                        }
                    ),
                );
            }
            Line::Cpwg(c) => push(
                &mut o,
                "dielectric",
                format!(
                    "h {:.4} mm, εr {:.3}, t {:.4} mm, gap {:.4} mm",
                    c.h, c.er, c.t, c.gap
                ),
            ),
        }
        push(&mut o, "Z0", format!("{z:.2} Ω"));
        if let Some(c) = &self.closed_form {
            push(
                &mut o,
                "closed form",
                format!(
                    "{:.2} Ω by {} ({:+.2} % against the field solution)",
                    c.z0,
                    c.method,
                    (c.z0 / z - 1.0) * 100.0
                ),
            );
        }
        push(&mut o, "εeff", format!("{:.3}", self.solution.eps_eff));
        let s = &self.spread;
        push(
            &mut o,
            "spread",
            format!(
                "{:.2} … {:.2} Ω ({:+.1} % / {:+.1} %) over width ±{} mm, εr ±{}, h ±{} %",
                s.z0_min,
                s.z0_max,
                (s.z0_min / z - 1.0) * 100.0,
                (s.z0_max / z - 1.0) * 100.0,
                s.tolerances.etch_mm,
                s.tolerances.er_abs,
                s.tolerances.h_rel * 100.0
            ),
        );
        if !self.solution.warnings.is_empty() {
            o.push_str("warnings:\n");
            for w in &self.solution.warnings {
                o.push_str(&format!("  - {}\n", w.text));
            }
        }
        o
    }
}

pub(super) fn run(a: &ImpedanceArgs) -> Result<(), Error> {
    let r = evaluate(a)?;
    if a.json {
        outln!(
            "{}",
            serde_json::to_string_pretty(&r.to_json()).expect("JSON of plain values")
        );
    } else {
        out!("{}", r.to_table());
    }
    Ok(())
}
