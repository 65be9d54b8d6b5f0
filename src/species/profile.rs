//! A species profile: osmotic strategy, plasma osmolality, salinity and temperature ranges and safe rates
//! of salinity change, each value with its provenance. JSON keys carry their units.
use serde::Serialize;

use super::provenance::Provenance;

/// Isosmotic band used when neither the profile nor the tank sets one, mOsm/kg (halotank default ±25).
pub const DEFAULT_ISOSMOTIC_BAND_MOSM_KG: f64 = 25.0;

/// The caution shown with every profile.
pub const CAUTION: &str = "Indicative values: strain, size, health and acclimation history change them. \
Follow a fish-health professional and local rules.";

/// How an animal handles the osmolality of its water.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum OsmoticStrategy {
    /// Keeps its plasma osmolality near a set value whatever the water (teleost fish, penaeid shrimp).
    Osmoregulator,
    /// Body fluids follow the water (oysters, mussels).
    Osmoconformer,
}

impl OsmoticStrategy {
    /// The spelling in the library.
    pub fn as_str(self) -> &'static str {
        match self {
            Self::Osmoregulator => "osmoregulator",
            Self::Osmoconformer => "osmoconformer",
        }
    }

    /// Parses the library spelling.
    pub fn parse(text: &str) -> Option<Self> {
        match text {
            "osmoregulator" => Some(Self::Osmoregulator),
            "osmoconformer" => Some(Self::Osmoconformer),
            _ => None,
        }
    }
}

/// One value with its provenance.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Sourced<T> {
    pub value: T,
    #[serde(flatten)]
    pub provenance: Provenance,
}

/// A closed range `min..=max` with its provenance (units in the key that holds it).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SourcedRange {
    pub min: f64,
    pub max: f64,
    #[serde(flatten)]
    pub provenance: Provenance,
}

impl SourcedRange {
    /// True if `x` lies in `min..=max`.
    pub fn contains(&self, x: f64) -> bool {
        (self.min..=self.max).contains(&x)
    }
}

/// A slower safe rate below a salinity (the critical low-salinity period of acclimation studies).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SlowBelow {
    /// Below this Practical Salinity the slower rates apply.
    pub below_sp: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub max_rate_sp_per_h: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub max_rate_percent_per_h: Option<f64>,
    #[serde(flatten)]
    pub provenance: Provenance,
}

/// One species (and life stage) profile.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SpeciesProfile {
    /// Stable id (`a-z`, `0-9`, `_`, `-`), referred to by `[[tanks]] species`.
    pub id: String,
    pub common_name: String,
    pub scientific_name: String,
    /// Life stage the values apply to.
    pub stage: String,
    pub osmotic_strategy: Sourced<OsmoticStrategy>,
    /// Typical plasma (or haemolymph) osmolality, mOsm/kg; `None` for an osmoconformer without one.
    #[serde(rename = "plasma_osmolality_mOsm_kg")]
    pub plasma_osmolality_mosm_kg: Option<Sourced<f64>>,
    /// Half-width of the isosmotic band around the plasma osmolality, mOsm/kg.
    #[serde(rename = "isosmotic_band_mOsm_kg")]
    pub isosmotic_band_mosm_kg: Sourced<f64>,
    /// Optimum Practical Salinity range.
    pub salinity_optimum: SourcedRange,
    /// Tolerated Practical Salinity range.
    pub salinity_tolerance: SourcedRange,
    /// Optimum temperature range, °C.
    #[serde(rename = "temperature_optimum_C")]
    pub temperature_optimum_c: SourcedRange,
    /// Tolerated temperature range, °C.
    #[serde(rename = "temperature_tolerance_C")]
    pub temperature_tolerance_c: SourcedRange,
    /// Largest safe change of Practical Salinity per hour; `null` in JSON when no source gives one.
    pub max_rate_sp_per_h: Option<Sourced<f64>>,
    /// Largest safe change per hour as a percentage of the current salinity (shown only when given).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub max_rate_percent_per_h: Option<Sourced<f64>>,
    /// A slower rate below a salinity (shown only when given).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub slow_below: Option<SlowBelow>,
    /// Free text.
    pub note: String,
}

impl SpeciesProfile {
    /// "Common name, stage" for messages.
    pub fn label(&self) -> String {
        format!("{} ({})", self.common_name, self.stage)
    }

    /// The plasma osmolality, mOsm/kg, if the profile gives one.
    pub fn plasma_mosm_kg(&self) -> Option<f64> {
        self.plasma_osmolality_mosm_kg.as_ref().map(|s| s.value)
    }

    /// The safe rate of salinity change at a current Practical Salinity, SP per hour: the smallest of the
    /// limits that apply (the absolute rate, the percentage of `current_sp`, and below
    /// [`SlowBelow::below_sp`] the slower rates instead). `None` when the profile gives no rate.
    pub fn max_rate_sp_per_h_at(&self, current_sp: f64) -> Option<f64> {
        let sp = current_sp.max(0.0);
        let (absolute, percent) = match &self.slow_below {
            Some(slow) if sp < slow.below_sp => (slow.max_rate_sp_per_h, slow.max_rate_percent_per_h),
            _ => (
                self.max_rate_sp_per_h.as_ref().map(|r| r.value),
                self.max_rate_percent_per_h.as_ref().map(|r| r.value),
            ),
        };
        let from_percent = percent.map(|p| p / 100.0 * sp);
        match (absolute, from_percent) {
            (Some(a), Some(p)) => Some(a.min(p)),
            (a, p) => a.or(p),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::species::provenance::ProvenanceKind;

    fn memo() -> Provenance {
        Provenance {
            source: "test".into(),
            kind: ProvenanceKind::FromMemory,
        }
    }

    fn range(min: f64, max: f64) -> SourcedRange {
        SourcedRange {
            min,
            max,
            provenance: memo(),
        }
    }

    fn sample() -> SpeciesProfile {
        SpeciesProfile {
            id: "x".into(),
            common_name: "X".into(),
            scientific_name: "X x".into(),
            stage: "juvenile".into(),
            osmotic_strategy: Sourced {
                value: OsmoticStrategy::Osmoregulator,
                provenance: memo(),
            },
            plasma_osmolality_mosm_kg: Some(Sourced {
                value: 320.0,
                provenance: memo(),
            }),
            isosmotic_band_mosm_kg: Sourced {
                value: 25.0,
                provenance: memo(),
            },
            salinity_optimum: range(10.0, 20.0),
            salinity_tolerance: range(0.0, 30.0),
            temperature_optimum_c: range(10.0, 15.0),
            temperature_tolerance_c: range(0.0, 20.0),
            max_rate_sp_per_h: None,
            max_rate_percent_per_h: None,
            slow_below: None,
            note: String::new(),
        }
    }

    #[test]
    fn percent_rate_scales_with_the_current_salinity() {
        // McGraw et al. 2002 express acclimation as % of the current salinity per hour: 19 %/h at SP 23
        // is 4.37 SP/h (worked by hand: 0.19 × 23).
        let mut p = sample();
        p.max_rate_percent_per_h = Some(Sourced {
            value: 19.0,
            provenance: memo(),
        });
        assert!((p.max_rate_sp_per_h_at(23.0).unwrap() - 4.37).abs() < 1e-12);
        // With an absolute limit too, the smaller applies.
        p.max_rate_sp_per_h = Some(Sourced {
            value: 2.0,
            provenance: memo(),
        });
        assert_eq!(p.max_rate_sp_per_h_at(23.0), Some(2.0));
        assert!((p.max_rate_sp_per_h_at(5.0).unwrap() - 0.95).abs() < 1e-12);
    }

    #[test]
    fn the_slower_rate_applies_below_its_salinity() {
        let mut p = sample();
        p.max_rate_percent_per_h = Some(Sourced {
            value: 19.0,
            provenance: memo(),
        });
        p.slow_below = Some(SlowBelow {
            below_sp: 1.0,
            max_rate_sp_per_h: None,
            max_rate_percent_per_h: Some(10.0),
            provenance: memo(),
        });
        assert!((p.max_rate_sp_per_h_at(1.0).unwrap() - 0.19).abs() < 1e-12);
        assert!((p.max_rate_sp_per_h_at(0.5).unwrap() - 0.05).abs() < 1e-12);
    }

    #[test]
    fn no_rate_is_none() {
        assert_eq!(sample().max_rate_sp_per_h_at(10.0), None);
    }
}
