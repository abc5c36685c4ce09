//! Spec files as written by users: TOML read with serde into raw types whose fields are all
//! optional, so that the model stage can report every missing or bad field at once.
//!
//! Only this module knows serde field names and unit spellings (`thickness_oz`).

pub mod fixture;
pub mod panel;
pub mod probe;
pub mod stackup;

use crate::error::Error;

/// How many unknown keys one refusal lists at most.
const UNKNOWN_MAX: usize = 50;

/// Parses a TOML text into a raw spec type, naming the file in the error. Every unknown or
/// misplaced key is reported at once, in file order, each with its line and the keys its table
/// takes; a syntax error or a wrong type is reported as TOML reports it (with the line shown).
pub fn parse_toml<T: serde::de::DeserializeOwned>(text: &str, path: &str) -> Result<T, Error> {
    let refuse = |message: String| Error::Parse {
        path: path.to_string(),
        message,
    };
    let toml_error = |e: toml::de::Error| refuse(e.to_string().trim_end().to_string());
    let mut root = toml::de::DeTable::parse(text).map_err(toml_error)?;
    // Each pass refuses the first unknown key serde meets; it is noted, taken out of the
    // parsed document, and the next pass looks further.
    let mut found: Vec<(usize, String)> = Vec::new();
    loop {
        let e = match T::deserialize(toml::de::Deserializer::from(root.clone())) {
            Ok(v) if found.is_empty() => return Ok(v),
            Ok(_) => break,
            Err(e) => e,
        };
        let span = e.span();
        let unknown = e.message().starts_with("unknown field");
        if unknown
            && found.len() < UNKNOWN_MAX
            && let Some(sp) = &span
            && remove_key(root.get_mut(), sp)
        {
            let m = e.message().trim();
            found.push((line_of(text, sp.start), format!("{m}{}", suggestion(m))));
            continue;
        }
        if found.is_empty() {
            // As TOML words it, with the offending line shown.
            return Err(toml_error(toml::from_str::<T>(text).err().unwrap_or(e)));
        }
        if !unknown {
            let line = span.map_or(0, |s| line_of(text, s.start));
            found.push((line, e.message().trim().to_string()));
        }
        break;
    }
    found.sort_by_key(|f| f.0);
    Err(refuse(
        found
            .iter()
            .map(|(line, m)| format!("line {line}: {m}"))
            .collect::<Vec<_>>()
            .join("\n"),
    ))
}

/// Gives each field error of a spec's validation the line its field is written on in `text`
/// (or, for a field not written, the line of its table). Other errors pass unchanged.
pub fn with_lines(text: &str, e: Error) -> Error {
    let Error::Invalid(mut errs) = e else {
        return e;
    };
    if let Ok(root) = toml::de::DeTable::parse(text) {
        for f in &mut errs {
            if f.line.is_none() {
                f.line = field_offset(root.get_ref(), &f.field).map(|at| line_of(text, at));
            }
        }
    }
    Error::Invalid(errs)
}

/// Where a field path (`probe[4].width_mm`, `via.pitch_n`, `gap_mm`; indices from 1) is
/// written: its key, or the nearest table on the way that is.
fn field_offset(root: &toml::de::DeTable<'_>, field: &str) -> Option<usize> {
    let mut table = root;
    let mut at = None;
    for seg in field.split('.') {
        let (name, index) = match seg.split_once('[') {
            Some((n, rest)) => (n, rest.trim_end_matches(']').parse::<usize>().ok()),
            None => (seg, None),
        };
        let Some((key, value)) = table.iter().find(|(k, _)| k.get_ref().as_ref() == name) else {
            return at;
        };
        at = Some(key.span().start);
        let mut value = value;
        if let Some(i) = index {
            let toml::de::DeValue::Array(a) = value.get_ref() else {
                return at;
            };
            let Some(item) = a.get(i.checked_sub(1)?) else {
                return at;
            };
            at = Some(item.span().start);
            value = item;
        }
        match value.get_ref() {
            toml::de::DeValue::Table(t) => table = t,
            _ => return at,
        }
    }
    at
}

/// The line (1 = the first) of a byte offset.
fn line_of(text: &str, at: usize) -> usize {
    text.as_bytes()[..at.min(text.len())]
        .iter()
        .filter(|&&b| b == b'\n')
        .count()
        + 1
}

/// Removes the key written at `span` from a parsed document; true when it was found.
fn remove_key(t: &mut toml::de::DeTable<'_>, span: &std::ops::Range<usize>) -> bool {
    if let Some(k) = t.keys().find(|k| k.span() == *span).cloned() {
        return t.remove(&k).is_some();
    }
    t.iter_mut().any(|(_, v)| remove_in(v.get_mut(), span))
}

fn remove_in(v: &mut toml::de::DeValue<'_>, span: &std::ops::Range<usize>) -> bool {
    match v {
        toml::de::DeValue::Table(t) => remove_key(t, span),
        toml::de::DeValue::Array(a) => a.iter_mut().any(|x| remove_in(x.get_mut(), span)),
        _ => false,
    }
}

/// " (did you mean `size_mm`?)" for an unknown-field message whose key is one or two edits
/// from a key the table takes; empty otherwise.
fn suggestion(message: &str) -> String {
    let ticked: Vec<&str> = message.split('`').skip(1).step_by(2).collect();
    let Some((got, known)) = ticked.split_first() else {
        return String::new();
    };
    known
        .iter()
        .map(|k| (edits(got, k), *k))
        .filter(|(d, _)| *d <= 2)
        .min()
        .map(|(_, k)| format!(" (did you mean `{k}`?)"))
        .unwrap_or_default()
}

/// The Levenshtein distance between two short keys.
fn edits(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut prev = row[0];
        row[0] = i + 1;
        for (j, cb) in b.iter().enumerate() {
            let cur = row[j + 1];
            row[j + 1] = (prev + usize::from(ca != *cb)).min(row[j] + 1).min(cur + 1);
            prev = cur;
        }
    }
    row[b.len()]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn close_keys_are_suggested() {
        let m = "unknown field `sise_mm`, expected one of `name`, `size_mm`, `width_mm`";
        assert_eq!(suggestion(m), " (did you mean `size_mm`?)");
        assert_eq!(suggestion("unknown field `zzz`, expected `name`"), "");
        assert_eq!(edits("kitten", "sitting"), 3);
    }
}
