//! PLACEHOLDER (helper replaces): osmotic coefficient, osmolality, osmotic pressure, water potential.
use super::error::ScienceError;

/// (osmolality mOsm/kg of water, osmotic coefficient) from SA (g/kg), t (°C ITS-90), p (dbar).
pub fn osmolality_and_coefficient(
    _absolute_salinity_g_kg: f64,
    _temperature_c: f64,
    _pressure_dbar: f64,
) -> Result<(f64, f64), ScienceError> {
    unimplemented!()
}

/// Osmotic pressure (bar) from SA (g/kg), t (°C ITS-90), p (dbar); TEOS-10 definition.
pub fn osmotic_pressure_bar(
    _absolute_salinity_g_kg: f64,
    _temperature_c: f64,
    _pressure_dbar: f64,
) -> Result<f64, ScienceError> {
    unimplemented!()
}
