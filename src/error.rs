//! Error types shared by every stage: field problems that name the field, the
//! value and the allowed range, and the crate-level [`Error`].

use std::fmt;

/// One problem with one input field.
///
/// `field` is the user's name for it: a command-line flag (`--er`), or a path
/// into a spec file (`layer[3].thickness_mm`).
#[derive(Debug, Clone, PartialEq)]
pub struct FieldError {
    /// The field's name or path, as the user wrote it.
    pub field: String,
    /// The offending value, as text.
    pub value: String,
    /// What would have been accepted.
    pub allowed: String,
    /// The line of the spec file the field is written on, where it is known.
    pub line: Option<usize>,
}

impl FieldError {
    /// Builds a field error from anything printable.
    pub fn new(
        field: impl Into<String>,
        value: impl fmt::Display,
        allowed: impl Into<String>,
    ) -> Self {
        FieldError {
            field: field.into(),
            value: echo(&value.to_string()),
            allowed: allowed.into(),
            line: None,
        }
    }

    /// The same error with `prefix` put in front of the field name.
    pub fn prefixed(mut self, prefix: &str) -> Self {
        self.field = format!("{prefix}{}", self.field);
        self
    }
}

/// The longest value a message echoes whole, in characters; a longer one is cut to
/// [`ECHO_KEEP`] characters and its length.
pub const ECHO_MAX: usize = 80;
/// How much of a longer value is echoed.
pub const ECHO_KEEP: usize = 60;

/// A value as a message echoes it: control characters escaped, and cut to a readable length.
pub fn echo(v: &str) -> String {
    let n = v.chars().count();
    let shown: String = if n > ECHO_MAX {
        v.chars().take(ECHO_KEEP).collect()
    } else {
        v.to_string()
    };
    let mut o = String::with_capacity(shown.len());
    for c in shown.chars() {
        if c.is_control() {
            o.extend(c.escape_default());
        } else {
            o.push(c);
        }
    }
    if n > ECHO_MAX {
        o.push_str(&format!("… ({n} characters in all)"));
    }
    o
}

impl fmt::Display for FieldError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if let Some(l) = self.line {
            write!(f, "line {l}: ")?;
        }
        write!(f, "{} = {}: {}", self.field, self.value, self.allowed)
    }
}

/// Checks that a length in millimetres is finite and strictly inside `(0, max]`.
pub fn check_positive(out: &mut Vec<FieldError>, field: &str, value: f64, max: f64) {
    if !(value.is_finite() && value > 0.0 && value <= max) {
        out.push(FieldError::new(
            field,
            fmt_num(value),
            format!("must be a finite number greater than 0 and at most {max}"),
        ));
    }
}

/// Checks that a value is finite and inside `[min, max]`.
pub fn check_range(out: &mut Vec<FieldError>, field: &str, value: f64, min: f64, max: f64) {
    if !(value.is_finite() && value >= min && value <= max) {
        out.push(FieldError::new(
            field,
            fmt_num(value),
            format!("must be a finite number from {min} to {max}"),
        ));
    }
}

pub use crate::math::fmt_num;

/// Everything that can go wrong in the library.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// One or more fields are out of range; every problem is listed.
    #[error("{}", list(.0))]
    Invalid(Vec<FieldError>),
    /// A name (structure, method, stackup) is not known.
    #[error("unknown {what} '{value}': allowed values are {allowed}")]
    Unknown {
        /// What kind of name.
        what: &'static str,
        /// The name given.
        value: String,
        /// The names that exist.
        allowed: String,
    },
    /// A width solve for a target impedance failed; the text says why.
    #[error("{0}")]
    Unsolvable(String),
    /// The target impedance lies outside what the method gives over the widths it can take;
    /// the text gives the range.
    #[error("{0}")]
    OutOfReach(String),
    /// The design-rule check found violations; nothing was written.
    #[error("design-rule check failed for '{probe}' ({} violation(s)); nothing was written (--force writes anyway and marks the notes):\n{}", .violations.len(), .violations.iter().map(|v| v.to_string()).collect::<Vec<_>>().join("\n"))]
    Drc {
        /// The probe.
        probe: String,
        /// Each violation (rule, layer, location, measurement).
        violations: Vec<Violation>,
    },
    /// A file could not be read or written.
    #[error("{path}: {source}")]
    Io {
        /// The file.
        path: String,
        /// The underlying error.
        source: std::io::Error,
    },
    /// A file could not be parsed.
    #[error("{path}: {message}")]
    Parse {
        /// The file.
        path: String,
        /// The parser's message, with its line and column.
        message: String,
    },
}

fn list(errors: &[FieldError]) -> String {
    let mut s = String::new();
    for (i, e) in errors.iter().enumerate() {
        if i > 0 {
            s.push('\n');
        }
        s.push_str(&e.to_string());
    }
    s
}

/// Turns a list of problems into `Ok(())` when empty.
pub fn into_result(errors: Vec<FieldError>) -> Result<(), Error> {
    if errors.is_empty() {
        Ok(())
    } else {
        Err(Error::Invalid(errors))
    }
}

// ---- Design rules (the findings of `drc`, kept here so that `Error::Drc` can hold them) ----

/// A design rule. The text each prints (`name`) is part of the messages and notes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Rule {
    /// Every copper contour is closed (first point = last): the Gerber format's region rule (Ucamco, *The Gerber Layer Format Specification*, regions).
    RegionNotClosed,
    /// No contour crosses or touches itself: a region's contour must be simple (same specification, regions).
    RegionNotSimple,
    /// No copper neck narrower than the fab's minimum trace width (`[fab] min_trace_mm`; the fab's own capability).
    MinTraceWidth,
    /// No gap between copper narrower than the fab's minimum space (`[fab] min_space_mm`; the fab's own capability).
    MinSpace,
    /// Copper (except the connector pads, which run to the launch edge) keeps `[fab] copper_to_edge_mm` from every board edge, so routing does not expose or tear it (the fab's own capability).
    CopperToEdge,
    /// No drill smaller than the fab's minimum (`[fab] min_drill_mm`; the fab's own capability).
    MinDrill,
    /// Every pad round a hole leaves at least `[fab] min_annular_ring_mm` of copper between hole and pad edge (IPC-2221 gives the usual minimum rings; here the fab's figure).
    AnnularRing,
    /// A plated hole has pads on at least two layers: a via joins layers (common practice, no single source).
    PlatedHoleWithoutPads,
    /// Holes keep `[fab] min_hole_gap_mm` between their edges (the fab's own capability: drill wander and web strength).
    HoleToHole,
    /// Every hole lies inside the board, its edge at least the copper-to-edge distance from the board edge (common practice).
    HoleInsideOutline,
    /// Solder-mask openings keep `[fab] mask_web_mm` between them, or the web between them breaks off (the fab's own capability).
    MaskWeb,
    /// Legend ink keeps `[fab] silk_to_pad_mm` from every mask opening: ink on a pad spoils soldering (common practice; fabs clip it).
    SilkOnPad,
    /// Legend strokes lie inside the outline (common practice).
    SilkOffBoard,
    /// No copper inside the loop on any layer: flux must pass through it (the probe's own rule, docs/probe-spec.md).
    CopperInsideLoop,
    /// On the signal layer the shield gap holds the trace and nothing else: any more copper there closes the shield's turn (the probe's own rule).
    GapHoldsOnlyTrace,
    /// On every other layer the shield gap is free of copper: a bridge closes the shield's turn and the loop stops sensing H (the probe's own rule).
    GapFreeOfCopper,
    /// No via stands in or touches the shield gap (the probe's own rule: a via there bridges the gap through the board).
    ViaInGap,
    /// No two vias nearer than the fab allows (pad + space, or drill + hole gap; the fab's own capability).
    ViaPitchBelowFab,
    /// Every via has a neighbour within the stitching limit λ/N at f_max (`[via] pitch_n`, `f_max_hz`; λ/20 is common practice, no single source).
    ViaPitchAboveLimit,
    /// Every required row of vias (the loop's inner and outer rows on both halves, the feed's two fences) is covered from end to end within the stitching limit, outside its stated exemptions (the probe's own rule, from the λ/N limit).
    StitchingRowPitch,
    /// The fixture's line runs in one piece of copper from port 1's centre pad to port 2's (the fixture's own rule).
    LineContinuity,
    /// The fixture's line touches no ground pad or via (the fixture's own rule).
    LineShortedToGround,
    /// Along the fixture's uniform line, ground copper keeps the solved keepout (or coplanar gap) from the line's edges, so the line keeps the impedance it was solved for (the fixture's own rule).
    GroundTooNearLine,
    /// An electric probe's electrode is whole copper on both outer layers and the solder mask opens over all of it, so the field reaches bare copper on either face (the probe's own rule, docs/probe-spec.md).
    ElectrodeExposed,
    /// On every layer, shield copper keeps the electrode's stated clearance from its centre's disc (`electrode_clearance_mm`): the predictions' collecting radius assumes it (the probe's own rule).
    ElectrodeClearance,
}

impl Rule {
    /// Every rule.
    pub const ALL: [Rule; 25] = [
        Rule::RegionNotClosed,
        Rule::RegionNotSimple,
        Rule::MinTraceWidth,
        Rule::MinSpace,
        Rule::CopperToEdge,
        Rule::MinDrill,
        Rule::AnnularRing,
        Rule::PlatedHoleWithoutPads,
        Rule::HoleToHole,
        Rule::HoleInsideOutline,
        Rule::MaskWeb,
        Rule::SilkOnPad,
        Rule::SilkOffBoard,
        Rule::CopperInsideLoop,
        Rule::GapHoldsOnlyTrace,
        Rule::GapFreeOfCopper,
        Rule::ViaInGap,
        Rule::ViaPitchBelowFab,
        Rule::ViaPitchAboveLimit,
        Rule::StitchingRowPitch,
        Rule::LineContinuity,
        Rule::LineShortedToGround,
        Rule::GroundTooNearLine,
        Rule::ElectrodeExposed,
        Rule::ElectrodeClearance,
    ];

    /// The rule's name as printed.
    pub fn name(self) -> &'static str {
        match self {
            Rule::RegionNotClosed => "region not closed",
            Rule::RegionNotSimple => "region not simple",
            Rule::MinTraceWidth => "minimum trace width",
            Rule::MinSpace => "minimum space",
            Rule::CopperToEdge => "copper to edge",
            Rule::MinDrill => "minimum drill",
            Rule::AnnularRing => "annular ring",
            Rule::PlatedHoleWithoutPads => "plated hole without pads",
            Rule::HoleToHole => "hole to hole",
            Rule::HoleInsideOutline => "hole inside the outline",
            Rule::MaskWeb => "mask web",
            Rule::SilkOnPad => "silkscreen on a pad",
            Rule::SilkOffBoard => "silkscreen off the board",
            Rule::CopperInsideLoop => "copper inside the loop",
            Rule::GapHoldsOnlyTrace => "gap must hold only the trace",
            Rule::GapFreeOfCopper => "gap free of copper",
            Rule::ViaInGap => "via in the gap",
            Rule::ViaPitchBelowFab => "via pitch below the fab minimum",
            Rule::ViaPitchAboveLimit => "via pitch above the limit",
            Rule::StitchingRowPitch => "stitching row pitch above the limit",
            Rule::LineContinuity => "line continuity",
            Rule::LineShortedToGround => "line shorted to ground",
            Rule::GroundTooNearLine => "ground too near the line",
            Rule::ElectrodeExposed => "electrode not exposed",
            Rule::ElectrodeClearance => "shield inside the electrode's clearance",
        }
    }
}

impl std::fmt::Display for Rule {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// One rule violation.
#[derive(Debug, Clone, PartialEq)]
pub struct Violation {
    /// The rule broken.
    pub rule: Rule,
    /// The layer (file) where it is.
    pub layer: String,
    /// Where, mm.
    pub at: kurbo::Point,
    /// What was measured against what was required.
    pub detail: String,
}

impl std::fmt::Display for Violation {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "{} on {} at ({:.3}, {:.3}) mm: {}",
            self.rule, self.layer, self.at.x, self.at.y, self.detail
        )
    }
}
