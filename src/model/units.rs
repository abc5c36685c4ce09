//! Unit conversions, in one place.

/// Millimetres of copper per ounce per square foot: 1 oz = 35 µm (the trade's definition;
/// the physical figure is 34.8 µm, the trade rounds it).
pub const MM_PER_OZ: f64 = 0.035;

/// Copper weight in oz to thickness in mm.
pub fn oz_to_mm(oz: f64) -> f64 {
    oz * MM_PER_OZ
}
