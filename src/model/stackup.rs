//! Validated stackups: copper and dielectric layers top to bottom, and solder mask.
//!
//! Architecture invariant: a [`Stackup`] always starts and ends with copper, alternates
//! copper and dielectric, has at least two copper layers, and every number in it is finite
//! and inside its documented range.

use super::units::oz_to_mm;
use crate::error::{Error, FieldError, check_positive, check_range, fmt_num};
use crate::model::line::{CoatedMicrostrip, Cpwg, Line, Microstrip, Stripline, Structure};
use crate::spec::parse_toml;
use crate::spec::stackup::{LayerSpec, MaskSpec, StackupSpec};

/// A copper layer.
#[derive(Debug, Clone, PartialEq)]
pub struct Copper {
    /// Name (L1, L2...).
    pub name: String,
    /// Thickness, mm.
    pub thickness_mm: f64,
}

/// A dielectric layer.
#[derive(Debug, Clone, PartialEq)]
pub struct Dielectric {
    /// Name (prepreg, core...).
    pub name: String,
    /// Thickness between the facing copper surfaces, mm.
    pub thickness_mm: f64,
    /// Relative permittivity.
    pub er: f64,
    /// Loss tangent.
    pub loss_tangent: f64,
    /// Material as the fab reads it (`FR-4` unless the stackup names another).
    pub material: String,
}

/// A solder-mask coat.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Mask {
    /// Thickness over the laminate, mm.
    pub thickness_mm: f64,
    /// Relative permittivity.
    pub er: f64,
}

/// A layer of the stack.
#[derive(Debug, Clone, PartialEq)]
pub enum Layer {
    /// Copper.
    Copper(Copper),
    /// Dielectric.
    Dielectric(Dielectric),
}

/// A validated stackup.
#[derive(Debug, Clone, PartialEq)]
pub struct Stackup {
    name: String,
    description: String,
    layers: Vec<Layer>,
    mask_top: Option<Mask>,
    mask_bottom: Option<Mask>,
}

/// Ranges accepted in stackup files.
pub mod limits {
    /// The thinnest copper, mm: 3 µm, the ultra-thin carrier foils of fine-line boards (the
    /// thinnest foil sold for printed boards, from memory); nothing thinner is a board's copper.
    pub const COPPER_MIN_MM: f64 = 0.003;
    /// The thinnest dielectric, mm: 10 µm, below the thinnest flex core (12.5 µm, ½ mil
    /// polyimide, from memory) and any rigid prepreg.
    pub const DIELECTRIC_MIN_MM: f64 = 0.01;
    /// Copper thickness, mm.
    pub const COPPER_MM: f64 = 0.5;
    /// Copper weight, oz.
    pub const COPPER_OZ: f64 = 14.0;
    /// Dielectric thickness, mm.
    pub const DIELECTRIC_MM: f64 = 10.0;
    /// Relative permittivity.
    pub const ER: (f64, f64) = (1.0, 100.0);
    /// Loss tangent.
    pub const LOSS_TANGENT: (f64, f64) = (0.0, 1.0);
    /// Solder-mask thickness, mm.
    pub const MASK_MM: f64 = 0.2;
}

/// Names of the built-in stackups, with their file text.
const BUILTINS: [(&str, &str); 4] = [
    (
        "common-4l-1.6",
        include_str!("../../data/stackups/common-4l-1.6.toml"),
    ),
    (
        "slim-4l-0.8",
        include_str!("../../data/stackups/slim-4l-0.8.toml"),
    ),
    (
        "common-2l-1.6",
        include_str!("../../data/stackups/common-2l-1.6.toml"),
    ),
    (
        "common-6l-1.6",
        include_str!("../../data/stackups/common-6l-1.6.toml"),
    ),
];

/// The built-in stackup names.
pub fn builtin_names() -> Vec<&'static str> {
    BUILTINS.iter().map(|(n, _)| *n).collect()
}

/// The TOML text of a built-in stackup.
pub fn builtin_text(name: &str) -> Option<&'static str> {
    BUILTINS.iter().find(|(n, _)| *n == name).map(|(_, t)| *t)
}

/// A built-in stackup by name.
pub fn builtin(name: &str) -> Option<Stackup> {
    let text = builtin_text(name)?;
    let spec: StackupSpec = parse_toml(text, name).ok()?;
    Stackup::from_spec(&spec).ok()
}

/// Resolves a built-in name or reads and validates a stackup file.
pub fn load(name_or_path: &str) -> Result<Stackup, Error> {
    if let Some(s) = builtin(name_or_path) {
        return Ok(s);
    }
    let path = std::path::Path::new(name_or_path);
    if !path.is_file() {
        return Err(Error::Unknown {
            what: "stackup",
            value: name_or_path.to_string(),
            allowed: format!(
                "the built-in names {} or the path of a stackup TOML file",
                builtin_names().join(", ")
            ),
        });
    }
    let text = std::fs::read_to_string(path).map_err(|e| Error::Io {
        path: name_or_path.to_string(),
        source: e,
    })?;
    let spec: StackupSpec = parse_toml(&text, name_or_path)?;
    // Lines from the stackup's own file, before its name goes in front of each field.
    Stackup::from_spec(&spec).map_err(|errs| {
        match crate::spec::with_lines(&text, Error::Invalid(errs)) {
            Error::Invalid(errs) => Error::Invalid(
                errs.into_iter()
                    .map(|mut e| match e.line.take() {
                        Some(l) => e.prefixed(&format!("{name_or_path}: line {l}: ")),
                        None => e.prefixed(&format!("{name_or_path}: ")),
                    })
                    .collect(),
            ),
            other => other,
        }
    })
}

fn missing(out: &mut Vec<FieldError>, field: &str, allowed: &str) {
    out.push(FieldError::new(field, "(missing)", allowed));
}

fn mask_from(out: &mut Vec<FieldError>, field: &str, m: &MaskSpec) -> Mask {
    let t_field = format!("{field}.thickness_mm");
    let er_field = format!("{field}.er");
    let t = m.thickness_mm.unwrap_or_else(|| {
        missing(out, &t_field, "a thickness in mm, from 0 to 0.2");
        0.0
    });
    check_range(out, &t_field, t, 0.0, limits::MASK_MM);
    let er = m.er.unwrap_or_else(|| {
        missing(out, &er_field, "a relative permittivity from 1 to 100");
        1.0
    });
    check_range(out, &er_field, er, limits::ER.0, limits::ER.1);
    Mask {
        thickness_mm: t,
        er,
    }
}

fn layer_from(out: &mut Vec<FieldError>, i: usize, l: &LayerSpec) -> Option<Layer> {
    let p = format!("layer[{i}]");
    let name = l.name.clone().unwrap_or_default();
    if name.trim().is_empty() {
        missing(out, &format!("{p}.name"), "a non-empty layer name");
    }
    match l.kind.as_deref() {
        Some("copper") => {
            for (field, v) in [("er", l.er), ("loss_tangent", l.loss_tangent)] {
                if let Some(v) = v {
                    out.push(FieldError::new(
                        format!("{p}.{field}"),
                        fmt_num(v),
                        "not allowed on a copper layer (only on dielectrics)",
                    ));
                }
            }
            if let Some(m) = &l.material {
                out.push(FieldError::new(
                    format!("{p}.material"),
                    format!("{m:?}"),
                    "not allowed on a copper layer (only on dielectrics)",
                ));
            }
            let t = match (l.thickness_mm, l.thickness_oz) {
                (Some(mm), None) => {
                    check_range(
                        out,
                        &format!("{p}.thickness_mm"),
                        mm,
                        limits::COPPER_MIN_MM,
                        limits::COPPER_MM,
                    );
                    mm
                }
                (None, Some(oz)) => {
                    check_positive(out, &format!("{p}.thickness_oz"), oz, limits::COPPER_OZ);
                    if oz.is_finite() && oz > 0.0 && oz_to_mm(oz) < limits::COPPER_MIN_MM {
                        out.push(FieldError::new(
                            format!("{p}.thickness_oz"),
                            fmt_num(oz),
                            "must be at least 0.086 oz (3 µm, the thinnest board copper)",
                        ));
                    }
                    oz_to_mm(oz)
                }
                (Some(_), Some(_)) => {
                    out.push(FieldError::new(
                        format!("{p}.thickness_oz"),
                        "given with thickness_mm",
                        "give thickness_mm or thickness_oz, not both",
                    ));
                    0.0
                }
                (None, None) => {
                    missing(
                        out,
                        &format!("{p}.thickness_mm"),
                        "thickness_mm (0.003 to 0.5) or thickness_oz (0.086 to 14; 1 oz = 35 µm)",
                    );
                    0.0
                }
            };
            Some(Layer::Copper(Copper {
                name,
                thickness_mm: t,
            }))
        }
        Some("dielectric") => {
            if let Some(oz) = l.thickness_oz {
                out.push(FieldError::new(
                    format!("{p}.thickness_oz"),
                    fmt_num(oz),
                    "only copper layers take ounces; give thickness_mm",
                ));
            }
            let t = l.thickness_mm.unwrap_or_else(|| {
                missing(
                    out,
                    &format!("{p}.thickness_mm"),
                    "a thickness in mm, 0.01 to 10",
                );
                1.0
            });
            check_range(
                out,
                &format!("{p}.thickness_mm"),
                t,
                limits::DIELECTRIC_MIN_MM,
                limits::DIELECTRIC_MM,
            );
            let er = l.er.unwrap_or_else(|| {
                missing(
                    out,
                    &format!("{p}.er"),
                    "a relative permittivity from 1 to 100",
                );
                1.0
            });
            check_range(out, &format!("{p}.er"), er, limits::ER.0, limits::ER.1);
            let tand = l.loss_tangent.unwrap_or(0.0);
            check_range(
                out,
                &format!("{p}.loss_tangent"),
                tand,
                limits::LOSS_TANGENT.0,
                limits::LOSS_TANGENT.1,
            );
            let material = l.material.clone().unwrap_or_else(|| "FR-4".into());
            crate::model::text::check_text(out, &format!("{p}.material"), &material, false);
            if material.trim().is_empty() || material.chars().count() > 40 {
                out.push(FieldError::new(
                    format!("{p}.material"),
                    format!("{material:?}"),
                    "a material name of 1 to 40 characters (e.g. \"FR-4\")",
                ));
            }
            Some(Layer::Dielectric(Dielectric {
                name,
                thickness_mm: t,
                er,
                loss_tangent: tand,
                material,
            }))
        }
        Some(other) => {
            out.push(FieldError::new(
                format!("{p}.type"),
                format!("\"{other}\""),
                "must be \"copper\" or \"dielectric\"",
            ));
            None
        }
        None => {
            missing(out, &format!("{p}.type"), "\"copper\" or \"dielectric\"");
            None
        }
    }
}

impl Stackup {
    /// Validates a raw spec, reporting every problem at once. Layer indices in field paths
    /// count from 1 at the top.
    pub fn from_spec(spec: &StackupSpec) -> Result<Stackup, Vec<FieldError>> {
        let mut out = Vec::new();
        let name = spec.name.clone().unwrap_or_default();
        if name.trim().is_empty() {
            missing(&mut out, "name", "a non-empty stackup name");
        }
        let mask_top = spec
            .mask_top
            .as_ref()
            .map(|m| mask_from(&mut out, "mask_top", m));
        let mask_bottom = spec
            .mask_bottom
            .as_ref()
            .map(|m| mask_from(&mut out, "mask_bottom", m));
        let mut layers = Vec::new();
        for (i, l) in spec.layer.iter().enumerate() {
            if let Some(layer) = layer_from(&mut out, i + 1, l) {
                layers.push((i + 1, layer));
            }
        }
        // Structure: copper first and last, alternating, at least two copper layers.
        if layers.len() == spec.layer.len() {
            let coppers = layers
                .iter()
                .filter(|(_, l)| matches!(l, Layer::Copper(_)))
                .count();
            if coppers < 2 {
                out.push(FieldError::new(
                    "layer",
                    format!("{coppers} copper layer(s)"),
                    "a stackup needs at least 2 copper layers",
                ));
            }
            // The first break of the alternation is the fault; the layers after it are only
            // out of step because of it, and are not blamed.
            let first_break = layers
                .iter()
                .enumerate()
                .find(|(k, (_, l))| (k % 2 == 0) != matches!(l, Layer::Copper(_)));
            if let Some((k, (i, l))) = first_break {
                let is_copper = matches!(l, Layer::Copper(_));
                out.push(FieldError::new(
                    format!("layer[{i}].type"),
                    if is_copper {
                        "\"copper\""
                    } else {
                        "\"dielectric\""
                    },
                    if k == 0 {
                        "the top layer must be copper (layers alternate copper, dielectric, \
                         copper... from the top)"
                            .to_string()
                    } else {
                        format!(
                            "layers must alternate copper, dielectric, copper... from the top; \
                             this one follows {} layer",
                            if is_copper {
                                "a copper"
                            } else {
                                "a dielectric"
                            }
                        )
                    },
                ));
            } else if let Some((i, Layer::Dielectric(_))) = layers.last() {
                out.push(FieldError::new(
                    format!("layer[{i}].type"),
                    "\"dielectric\"",
                    "the last layer must be copper",
                ));
            }
        }
        if !out.is_empty() {
            return Err(out);
        }
        Ok(Stackup {
            name,
            description: spec.description.clone().unwrap_or_default(),
            layers: layers.into_iter().map(|(_, l)| l).collect(),
            mask_top,
            mask_bottom,
        })
    }

    /// The stackup's name.
    pub fn name(&self) -> &str {
        &self.name
    }

    /// Its one-line description.
    pub fn description(&self) -> &str {
        &self.description
    }

    /// Every layer, top to bottom.
    pub fn layers(&self) -> &[Layer] {
        &self.layers
    }

    /// Top solder mask, if any.
    pub fn mask_top(&self) -> Option<Mask> {
        self.mask_top
    }

    /// Bottom solder mask, if any.
    pub fn mask_bottom(&self) -> Option<Mask> {
        self.mask_bottom
    }

    /// Number of copper layers.
    pub fn copper_count(&self) -> usize {
        self.layers.len().div_ceil(2)
    }

    /// Copper layer `n` (1 = top).
    pub fn copper(&self, n: usize) -> Option<&Copper> {
        if n == 0 {
            return None;
        }
        match self.layers.get(2 * (n - 1)) {
            Some(Layer::Copper(c)) => Some(c),
            _ => None,
        }
    }

    /// The dielectric below copper layer `n` (between n and n + 1).
    pub fn dielectric_below(&self, n: usize) -> Option<&Dielectric> {
        match self.layers.get(2 * (n - 1) + 1) {
            Some(Layer::Dielectric(d)) => Some(d),
            _ => None,
        }
    }

    /// Finished board thickness without mask, mm.
    pub fn thickness_mm(&self) -> f64 {
        self.layers
            .iter()
            .map(|l| match l {
                Layer::Copper(c) => c.thickness_mm,
                Layer::Dielectric(d) => d.thickness_mm,
            })
            .sum()
    }

    /// The natural structure of a trace on copper layer `n`: coated or bare microstrip on an
    /// outer layer (by whether that side has mask), stripline on an inner layer.
    pub fn natural_structure(&self, n: usize) -> Structure {
        let last = self.copper_count();
        let mask = if n == 1 {
            self.mask_top
        } else if n == last {
            self.mask_bottom
        } else {
            return Structure::Stripline;
        };
        match mask {
            Some(m) if m.thickness_mm > 0.0 => Structure::CoatedMicrostrip,
            _ => Structure::Microstrip,
        }
    }

    /// The cross-section of a trace of `width` on copper layer `n`, referenced to the
    /// neighbouring copper layers. `gap` is needed for `cpwg`.
    pub fn line_for_layer(
        &self,
        n: usize,
        structure: Structure,
        width: f64,
        gap: Option<f64>,
    ) -> Result<Line, Error> {
        let count = self.copper_count();
        if n == 0 || n > count {
            return Err(Error::Invalid(vec![FieldError::new(
                "layer",
                n,
                format!("stackup '{}' has copper layers 1 to {count}", self.name),
            )]));
        }
        let t = self.copper(n).map(|c| c.thickness_mm).unwrap_or(0.0);
        let outer = n == 1 || n == count;
        // The dielectric towards the reference plane of an outer layer.
        let outer_diel = if n == 1 {
            self.dielectric_below(1)
        } else {
            self.dielectric_below(count - 1)
        };
        let wrong = |why: &str| {
            Err(Error::Invalid(vec![FieldError::new(
                "structure",
                structure.name(),
                format!("layer {n} of '{}' {why}", self.name),
            )]))
        };
        match structure {
            Structure::Microstrip | Structure::CoatedMicrostrip | Structure::Cpwg => {
                if !outer {
                    return wrong("is an inner layer: use stripline");
                }
                let d =
                    outer_diel.expect("validated stackup has a dielectric next to an outer layer");
                let ms = Microstrip {
                    width,
                    h: d.thickness_mm,
                    t,
                    er: d.er,
                };
                match structure {
                    Structure::Microstrip => Ok(Line::Microstrip(ms)),
                    Structure::CoatedMicrostrip => {
                        let mask = if n == 1 {
                            self.mask_top
                        } else {
                            self.mask_bottom
                        };
                        match mask {
                            Some(m) => Ok(Line::CoatedMicrostrip(CoatedMicrostrip {
                                line: ms,
                                mask_t: m.thickness_mm,
                                mask_er: m.er,
                            })),
                            None => wrong("has no solder mask on that side"),
                        }
                    }
                    _ => match gap {
                        Some(g) => Ok(Line::Cpwg(Cpwg {
                            width,
                            gap: g,
                            h: d.thickness_mm,
                            t,
                            er: d.er,
                        })),
                        None => Err(Error::Invalid(vec![FieldError::new(
                            "gap",
                            "(missing)",
                            "cpwg needs --gap MM, the trace-to-coplanar-ground clearance",
                        )])),
                    },
                }
            }
            Structure::Stripline => {
                if outer {
                    return wrong("is an outer layer: use microstrip, coated-microstrip or cpwg");
                }
                let up = self
                    .dielectric_below(n - 1)
                    .expect("validated: dielectric above");
                let down = self
                    .dielectric_below(n)
                    .expect("validated: dielectric below");
                Ok(Line::Stripline(Stripline {
                    width,
                    h1: up.thickness_mm,
                    h2: down.thickness_mm,
                    t,
                    er1: up.er,
                    er2: down.er,
                }))
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn builtins_are_valid_and_have_the_stated_thickness() {
        let a = builtin("common-4l-1.6").unwrap();
        assert_eq!(a.copper_count(), 4);
        assert!((a.thickness_mm() - 1.59).abs() < 1e-9);
        let b = builtin("slim-4l-0.8").unwrap();
        assert!((b.thickness_mm() - 0.8).abs() < 1e-9);
        let c = builtin("common-6l-1.6").unwrap();
        assert_eq!(c.copper_count(), 6);
        assert!((c.thickness_mm() - 1.6).abs() < 1e-9);
    }

    // Physical lower bounds: copper of 3 µm and dielectric of 10 µm build; thinner (a unit slip,
    // 1e-300) is refused with the field.
    #[test]
    fn thicknesses_have_physical_lower_bounds() {
        let text = |cu: &str, d: f64| {
            format!(
                "name = \"t\"\n[[layer]]\ntype = \"copper\"\nname = \"L1\"\n{cu}\n\
                 [[layer]]\ntype = \"dielectric\"\nname = \"core\"\nthickness_mm = {d:e}\ner = 4.2\n\
                 [[layer]]\ntype = \"copper\"\nname = \"L2\"\nthickness_mm = 0.035\n"
            )
        };
        let build = |cu: &str, d: f64| {
            let spec: StackupSpec = toml::from_str(&text(cu, d)).unwrap();
            Stackup::from_spec(&spec).map_err(|e| {
                e.iter()
                    .map(|x| x.to_string())
                    .collect::<Vec<_>>()
                    .join("\n")
            })
        };
        assert!(build("thickness_mm = 0.003", 0.01).is_ok());
        assert!(build("thickness_oz = 0.1", 0.01).is_ok());
        let e = build("thickness_mm = 1e-300", 0.2).unwrap_err();
        assert!(e.contains("layer[1].thickness_mm = 1e-300"), "{e}");
        let e = build("thickness_oz = 0.05", 0.2).unwrap_err();
        assert!(e.contains("layer[1].thickness_oz = 0.05"), "{e}");
        let e = build("thickness_mm = 0.035", 1e-6).unwrap_err();
        assert!(e.contains("layer[2].thickness_mm"), "{e}");
    }

    #[test]
    fn reports_every_problem() {
        let spec: StackupSpec = toml::from_str(
            r#"
            name = ""
            [[layer]]
            type = "copper"
            name = "L1"
            thickness_oz = -1
            [[layer]]
            type = "dielectric"
            name = "core"
            thickness_mm = 0.5
            er = 0.5
            [[layer]]
            type = "copper"
            name = "L2"
            "#,
        )
        .unwrap();
        let errs = Stackup::from_spec(&spec).unwrap_err();
        let fields: Vec<_> = errs.iter().map(|e| e.field.as_str()).collect();
        assert_eq!(
            fields,
            [
                "name",
                "layer[1].thickness_oz",
                "layer[2].er",
                "layer[3].thickness_mm"
            ]
        );
    }
}
