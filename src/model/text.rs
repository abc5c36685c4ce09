//! Names and texts a user gives: folder names made safe, their lengths, and what may be
//! printed on the silkscreen.

use crate::error::FieldError;

/// The longest folder name a probe, fixture or family may give, in characters. A probe's
/// folder name appears twice in its longest path (`NAME/NAME-legend-bottom.svg`), so with the
/// temporary folder's prefix and an output path of 100 characters, 64 keeps every file inside
/// Windows' 260-character path limit and every name well inside the 255 bytes of a file name
/// (ext4, NTFS, APFS).
pub const NAME_MAX: usize = 64;

/// Checks a sanitised folder name's length.
pub fn check_name_length(out: &mut Vec<FieldError>, field: &str, name: &str, folder: &str) {
    if folder.chars().count() > NAME_MAX {
        out.push(FieldError::new(
            field,
            format!("\"{name}\""),
            format!(
                "at most {NAME_MAX} characters (it names a folder and its files, which must fit \
                 every platform's path limits)"
            ),
        ));
    }
}

/// Signs the silkscreen font draws besides the letters A–Z (either case) and the digits
/// (`geom::font` holds their strokes; its tests check that each has one).
pub const SILK_SIGNS: &str = " -.,/_:+=";

/// The longest extra silkscreen text of a probe, in characters: it runs up the handle beside
/// the name, and 32 characters at the 1 mm default text height fill about 30 mm of it.
pub const SILK_TEXT_MAX: usize = 32;

/// Checks a text that is printed on the board or names files: no control characters, and
/// (when `silk`) only characters the silkscreen font draws. The first offending character is
/// named with its position.
pub fn check_text(out: &mut Vec<FieldError>, field: &str, text: &str, silk: bool) {
    let bad = text.chars().enumerate().find(|(_, c)| {
        c.is_control() || (silk && !(c.is_ascii_alphanumeric() || SILK_SIGNS.contains(*c)))
    });
    if let Some((i, c)) = bad {
        out.push(FieldError::new(
            field,
            format!("{text:?}"),
            if c.is_control() {
                format!(
                    "must not hold control characters (U+{:04X} at character {})",
                    c as u32,
                    i + 1
                )
            } else {
                format!(
                    "'{c}' (U+{:04X}, character {}) is not in the silkscreen font: use letters \
                     A–Z, digits, space and - . , / _ : + =",
                    c as u32,
                    i + 1
                )
            },
        ));
    }
}

/// Makes a name safe as a folder name: letters, digits, `-`, `_` and `.` are kept, anything
/// else becomes `-`; leading dots are removed. Returns `None` when nothing usable is left.
pub fn sanitise(name: &str) -> Option<String> {
    let s: String = name
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' || c == '.' {
                c
            } else {
                '-'
            }
        })
        .collect();
    let s = s.trim_start_matches('.').to_string();
    if s.is_empty() || s.chars().all(|c| c == '-' || c == '.') {
        None
    } else {
        Some(s)
    }
}
