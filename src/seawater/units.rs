//! Conductivity units and probe reporting modes (in-situ or specific conductance at 25 °C).
use serde::{Deserialize, Serialize};

use super::error::ScienceError;

/// Unit a probe reports conductivity in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub enum ConductivityUnit {
    /// Siemens per metre (SenML unit `S/m`). 1 S/m = 10 mS/cm.
    #[serde(rename = "S/m")]
    SiemensPerMetre,
    /// Millisiemens per centimetre.
    #[serde(rename = "mS/cm")]
    MilliSiemensPerCm,
    /// Microsiemens per centimetre.
    #[serde(rename = "uS/cm")]
    MicroSiemensPerCm,
}

/// How a probe reports conductivity.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(tag = "mode", rename_all = "snake_case")]
pub enum ProbeMode {
    /// Conductivity at the water's own temperature.
    InSitu,
    /// Specific conductance referred to 25 °C with a linear coefficient in %/°C.
    SpecificConductance25 { alpha_percent_per_c: f64 },
}

impl ConductivityUnit {
    /// Parses the spellings used on the command line and in configuration.
    pub fn parse(text: &str) -> Option<Self> {
        match text.trim() {
            "S/m" | "s/m" => Some(Self::SiemensPerMetre),
            "mS/cm" | "ms/cm" => Some(Self::MilliSiemensPerCm),
            "uS/cm" | "us/cm" | "µS/cm" | "μS/cm" => Some(Self::MicroSiemensPerCm),
            _ => None,
        }
    }

    /// The canonical spelling of the unit.
    pub fn symbol(self) -> &'static str {
        match self {
            Self::SiemensPerMetre => "S/m",
            Self::MilliSiemensPerCm => "mS/cm",
            Self::MicroSiemensPerCm => "uS/cm",
        }
    }

    /// Converts a value in this unit to mS/cm (1 S/m = 10 mS/cm = 10 000 uS/cm; SI definitions).
    pub fn to_ms_cm(self, value: f64) -> f64 {
        match self {
            Self::SiemensPerMetre => value * 10.0,
            Self::MilliSiemensPerCm => value,
            Self::MicroSiemensPerCm => value * 1e-3,
        }
    }

    /// Converts a value in mS/cm to this unit.
    pub fn from_ms_cm(self, value_ms_cm: f64) -> f64 {
        match self {
            Self::SiemensPerMetre => value_ms_cm * 0.1,
            Self::MilliSiemensPerCm => value_ms_cm,
            Self::MicroSiemensPerCm => value_ms_cm * 1e3,
        }
    }
}

/// Default linear temperature coefficient of specific conductance, %/°C (common practice for natural waters).
pub const DEFAULT_ALPHA_PERCENT_PER_C: f64 = 2.0;

/// Reference temperature of specific conductance, °C (common practice; also ISO 7888).
pub const SPECIFIC_CONDUCTANCE_REFERENCE_C: f64 = 25.0;

impl ProbeMode {
    /// In-situ conductivity (mS/cm) from what the probe reported (mS/cm).
    ///
    /// Specific conductance is undone by the linear compensation
    /// C(t) = SC25 · (1 + α/100 · (t − 25)) (ISO 7888 form; common practice).
    pub fn in_situ_ms_cm(self, reported_ms_cm: f64, temperature_c: f64) -> Result<f64, ScienceError> {
        match self {
            Self::InSitu => Ok(reported_ms_cm),
            Self::SpecificConductance25 { alpha_percent_per_c } => {
                let factor = compensation_factor(alpha_percent_per_c, temperature_c)?;
                Ok(reported_ms_cm * factor)
            }
        }
    }

    /// What the probe would report (mS/cm) for an in-situ conductivity (mS/cm).
    pub fn reported_ms_cm(self, in_situ_ms_cm: f64, temperature_c: f64) -> Result<f64, ScienceError> {
        match self {
            Self::InSitu => Ok(in_situ_ms_cm),
            Self::SpecificConductance25 { alpha_percent_per_c } => {
                let factor = compensation_factor(alpha_percent_per_c, temperature_c)?;
                Ok(in_situ_ms_cm / factor)
            }
        }
    }
}

/// 1 + α/100 · (t − 25), refused when α is unusable or the factor is not positive.
fn compensation_factor(alpha_percent_per_c: f64, temperature_c: f64) -> Result<f64, ScienceError> {
    if !alpha_percent_per_c.is_finite() || !(0.0..=10.0).contains(&alpha_percent_per_c) {
        return Err(ScienceError::InvalidParameter {
            name: "alpha_percent_per_c",
            value: alpha_percent_per_c,
            why: "must be between 0 and 10 %/°C",
        });
    }
    let factor = 1.0 + alpha_percent_per_c / 100.0 * (temperature_c - SPECIFIC_CONDUCTANCE_REFERENCE_C);
    if factor.is_finite() && factor > 0.0 {
        Ok(factor)
    } else {
        Err(ScienceError::InvalidParameter {
            name: "alpha_percent_per_c",
            value: alpha_percent_per_c,
            why: "gives a non-positive compensation factor at this temperature",
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn unit_conversions_follow_si_prefixes() {
        // 1 S/m = 10 mS/cm = 10 000 uS/cm (SI definitions).
        assert_eq!(ConductivityUnit::SiemensPerMetre.to_ms_cm(4.29140), 42.914);
        assert!((ConductivityUnit::MicroSiemensPerCm.to_ms_cm(42914.0) - 42.914).abs() < 1e-12);
        for unit in [
            ConductivityUnit::SiemensPerMetre,
            ConductivityUnit::MilliSiemensPerCm,
            ConductivityUnit::MicroSiemensPerCm,
        ] {
            assert_eq!(ConductivityUnit::parse(unit.symbol()), Some(unit));
            let back = unit.from_ms_cm(unit.to_ms_cm(3.7));
            assert!((back - 3.7).abs() < 1e-12);
        }
        assert_eq!(ConductivityUnit::parse("furlongs"), None);
    }

    #[test]
    fn specific_conductance_is_identity_at_25_c() {
        let mode = ProbeMode::SpecificConductance25 {
            alpha_percent_per_c: 2.0,
        };
        assert_eq!(mode.in_situ_ms_cm(50.0, 25.0), Ok(50.0));
    }

    #[test]
    fn specific_conductance_worked_example() {
        // Worked by hand: SC25 = 50 mS/cm, alpha 2 %/°C, water at 15 °C:
        // C = 50 × (1 + 0.02 × (15 − 25)) = 50 × 0.8 = 40 mS/cm.
        let mode = ProbeMode::SpecificConductance25 {
            alpha_percent_per_c: 2.0,
        };
        let c = mode.in_situ_ms_cm(50.0, 15.0).unwrap();
        assert!((c - 40.0).abs() < 1e-12);
        let back = mode.reported_ms_cm(c, 15.0).unwrap();
        assert!((back - 50.0).abs() < 1e-12);
    }

    #[test]
    fn unusable_alpha_is_a_typed_error() {
        let mode = ProbeMode::SpecificConductance25 {
            alpha_percent_per_c: f64::NAN,
        };
        assert!(matches!(
            mode.in_situ_ms_cm(1.0, 10.0),
            Err(ScienceError::InvalidParameter { .. })
        ));
        let mode = ProbeMode::SpecificConductance25 {
            alpha_percent_per_c: 10.0,
        };
        // 1 + 0.1 × (−3 − 25) < 0: refused rather than a negative conductivity.
        assert!(mode.in_situ_ms_cm(1.0, -3.0).is_err());
    }
}
