//! Spec files as written by users: TOML read with serde into raw types whose fields are all
//! optional, so that the model stage can report every missing or bad field at once.
//!
//! Only this module knows serde field names and unit spellings (`thickness_oz`).

pub mod fixture;
pub mod probe;
pub mod stackup;

use crate::error::Error;

/// Parses a TOML text into a raw spec type, naming the file in the error.
pub fn parse_toml<T: serde::de::DeserializeOwned>(text: &str, path: &str) -> Result<T, Error> {
    toml::from_str(text).map_err(|e| Error::Parse {
        path: path.to_string(),
        message: e.to_string().trim_end().to_string(),
    })
}
