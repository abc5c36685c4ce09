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
            value: value.to_string(),
            allowed: allowed.into(),
        }
    }

    /// The same error with `prefix` put in front of the field name.
    pub fn prefixed(mut self, prefix: &str) -> Self {
        self.field = format!("{prefix}{}", self.field);
        self
    }
}

impl fmt::Display for FieldError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
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

/// Formats a number for a message without noise (`NaN`, `inf`, `0.2`).
pub fn fmt_num(v: f64) -> String {
    if v.is_nan() {
        "NaN".to_string()
    } else if v != 0.0 && v.is_finite() && !(1e-4..1e7).contains(&v.abs()) {
        format!("{v:e}")
    } else {
        format!("{v}")
    }
}

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
    /// The design-rule check found violations; nothing was written.
    #[error("design-rule check failed for '{probe}' ({} violation(s)); nothing was written (--force writes anyway and marks the notes):\n{}", .violations.len(), .violations.iter().map(|v| v.to_string()).collect::<Vec<_>>().join("\n"))]
    Drc {
        /// The probe.
        probe: String,
        /// Each violation (rule, layer, location, measurement).
        violations: Vec<crate::drc::Violation>,
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
