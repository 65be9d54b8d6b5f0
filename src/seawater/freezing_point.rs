//! PLACEHOLDER (helper replaces): freezing point, UNESCO 1983.
use super::error::ScienceError;

/// Freezing point (°C ITS-90) from SP and sea pressure (dbar); UNESCO 1983 (Millero).
pub fn freezing_point_unesco1983(_practical_salinity: f64, _pressure_dbar: f64) -> Result<f64, ScienceError> {
    unimplemented!()
}
