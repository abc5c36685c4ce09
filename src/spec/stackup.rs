//! The stackup file format (TOML). Layers are listed top to bottom, copper and dielectric
//! alternating, starting and ending with copper. See `docs/stackup-format.md`.

use serde::{Deserialize, Serialize};

/// A stackup as written in a file.
#[derive(Debug, Clone, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct StackupSpec {
    /// Short name, used to refer to the stackup.
    pub name: Option<String>,
    /// One line of description.
    pub description: Option<String>,
    /// Solder mask on the top side (optional: absent means bare copper).
    pub mask_top: Option<MaskSpec>,
    /// Solder mask on the bottom side.
    pub mask_bottom: Option<MaskSpec>,
    /// Layers, top to bottom.
    #[serde(default)]
    pub layer: Vec<LayerSpec>,
}

/// A solder-mask coat.
#[derive(Debug, Clone, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct MaskSpec {
    /// Thickness over the laminate, mm.
    pub thickness_mm: Option<f64>,
    /// Relative permittivity.
    pub er: Option<f64>,
}

/// One layer: `type` is `copper` or `dielectric`.
#[derive(Debug, Clone, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields)]
pub struct LayerSpec {
    /// `copper` or `dielectric`.
    #[serde(rename = "type")]
    pub kind: Option<String>,
    /// Layer name (L1, prepreg, core...).
    pub name: Option<String>,
    /// Thickness in mm (either this or `thickness_oz` for copper).
    pub thickness_mm: Option<f64>,
    /// Copper thickness in ounces per square foot (1 oz = 35 µm, trade definition).
    pub thickness_oz: Option<f64>,
    /// Dielectric relative permittivity.
    pub er: Option<f64>,
    /// Dielectric loss tangent.
    pub loss_tangent: Option<f64>,
    /// Dielectric material as the fab should read it (`FR-4`, a laminate's trade name);
    /// written to the Gerber job file. Default `FR-4`.
    pub material: Option<String>,
}
