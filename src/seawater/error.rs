//! The typed error every science function returns for input it cannot use.
use thiserror::Error;

/// Why a science function refused its input. Never a panic, never NaN.
#[derive(Debug, Clone, Copy, PartialEq, Error)]
pub enum ScienceError {
    /// Conductivity negative or not finite.
    #[error("conductivity {value} is not a finite, non-negative number")]
    InvalidConductivity { value: f64 },
    /// Temperature outside the range the equations are used for here.
    #[error("temperature {value_c} °C is outside the supported range -3 to 45 °C")]
    TemperatureOutOfRange { value_c: f64 },
    /// Sea pressure negative or not finite.
    #[error("sea pressure {value_dbar} dbar is negative or not finite")]
    InvalidPressure { value_dbar: f64 },
    /// Practical or absolute salinity negative or not finite, or beyond what an equation can represent.
    #[error("salinity {value} is negative, not finite or beyond the equation's reach")]
    InvalidSalinity { value: f64 },
    /// A parameter (temperature coefficient, van 't Hoff factor, molarity, ...) is not usable.
    #[error("parameter `{name}` = {value} is not usable: {why}")]
    InvalidParameter {
        name: &'static str,
        value: f64,
        why: &'static str,
    },
    /// An iterative solver did not reach its tolerance.
    #[error("{what} did not converge")]
    NoConvergence { what: &'static str },
}

/// Lowest temperature accepted by the science core, °C (ITS-90).
pub const MIN_TEMPERATURE_C: f64 = -3.0;
/// Highest temperature accepted by the science core, °C (ITS-90).
pub const MAX_TEMPERATURE_C: f64 = 45.0;

/// Checks a temperature against [`MIN_TEMPERATURE_C`]..=[`MAX_TEMPERATURE_C`].
pub fn check_temperature(temperature_c: f64) -> Result<(), ScienceError> {
    if temperature_c.is_finite() && (MIN_TEMPERATURE_C..=MAX_TEMPERATURE_C).contains(&temperature_c) {
        Ok(())
    } else {
        Err(ScienceError::TemperatureOutOfRange {
            value_c: temperature_c,
        })
    }
}

/// Checks that sea pressure is finite and not negative.
pub fn check_pressure(pressure_dbar: f64) -> Result<(), ScienceError> {
    if pressure_dbar.is_finite() && pressure_dbar >= 0.0 {
        Ok(())
    } else {
        Err(ScienceError::InvalidPressure {
            value_dbar: pressure_dbar,
        })
    }
}

/// Checks that a conductivity is finite and not negative.
pub fn check_conductivity(conductivity: f64) -> Result<(), ScienceError> {
    if conductivity.is_finite() && conductivity >= 0.0 {
        Ok(())
    } else {
        Err(ScienceError::InvalidConductivity { value: conductivity })
    }
}
