//! PLACEHOLDER (helper replaces): EOS-80 density (UNESCO 1981).
use super::error::ScienceError;

/// In-situ density (kg/m³) from SP, temperature (°C ITS-90), sea pressure (dbar); EOS-80.
pub fn density_eos80(
    _practical_salinity: f64,
    _temperature_c: f64,
    _pressure_dbar: f64,
) -> Result<f64, ScienceError> {
    unimplemented!()
}
