//! PLACEHOLDER (helper replaces): PSS-78 with Hill et al. (1986) low-salinity extension, and its inverse.
use serde::{Deserialize, Serialize};

use super::error::ScienceError;

/// Where a Practical Salinity lies against PSS-78's validity range.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum SalinityRange {
    /// SP < 2: PSS-78 extended by Hill et al. (1986).
    HillExtension,
    /// 2 ≤ SP ≤ 42: PSS-78's own validity range.
    Pss78,
    /// SP > 42: beyond PSS-78's validity range (extrapolated; flagged).
    AboveRange,
}

/// Classifies SP against PSS-78's validity range (2-42; Hill et al. 1986 below 2).
pub fn salinity_range(practical_salinity: f64) -> SalinityRange {
    if practical_salinity < 2.0 {
        SalinityRange::HillExtension
    } else if practical_salinity <= 42.0 {
        SalinityRange::Pss78
    } else {
        SalinityRange::AboveRange
    }
}

/// Practical Salinity from in-situ conductivity (mS/cm), temperature (°C ITS-90), sea pressure (dbar).
pub fn practical_salinity_from_conductivity(
    _conductivity_ms_cm: f64,
    _temperature_c: f64,
    _pressure_dbar: f64,
) -> Result<f64, ScienceError> {
    unimplemented!()
}

/// In-situ conductivity (mS/cm) from Practical Salinity, temperature (°C ITS-90), sea pressure (dbar).
pub fn conductivity_from_practical_salinity(
    _practical_salinity: f64,
    _temperature_c: f64,
    _pressure_dbar: f64,
) -> Result<f64, ScienceError> {
    unimplemented!()
}
