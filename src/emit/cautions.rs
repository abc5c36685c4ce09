//! The safety cautions shown in help text, the README, the notes and every report (library
//! side, so that emitters need not reach into the command line).

/// Safety cautions shown in help text, the README and every report.
pub const CAUTIONS: &str = "\
SAFETY: probing live equipment can kill. The probe's shield is tied to the analyzer's \
protective earth; never touch mains-referenced or high-voltage nodes with it, and treat the \
solder-mask coat as no insulation at all. Respect the maximum input of the analyzer and any \
preamplifier (start with attenuation until levels are known; use a DC block where a DC path \
exists). Defer to local codes, the instrument makers' ratings and licensed practice.";

/// Cautions for calibration on the test-line fixture and for level conversion.
pub const CAL_CAUTIONS: &str = "\
CALIBRATION: drive the fixture from a VNA or generator at a level its ports and the far-end \
load are rated for (0 dBm is plenty; a 50 Ω load for 1 W handles +30 dBm). Keep every \
amplifier out of the line path. A probe near a powered line can deliver more than an \
analyzer or preamplifier input can take: know the maximum input of each instrument (and \
whether it is DC-coupled) before connecting, add attenuation first, and never put the fixture \
on a mains-powered or high-voltage circuit.";
