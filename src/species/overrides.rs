//! A tank's `[tanks.species_override]`: site values merged onto the library profile of its species.
//!
//! Every key is optional; a value given replaces the profile's and takes a site-override provenance
//! (with the table's `source`, if given). A range may override one bound only.
//!
//! ```toml
//! [tanks.species_override]
//! salinity_optimum = { min = 30.0 }
//! max_rate_sp_per_h = 4.0
//! source = "site fish-health plan 2025"
//! ```
use serde::Deserialize;

use crate::config::KeyPath;

use super::error::SpeciesError;
use super::library::check_profile;
use super::profile::{SlowBelow, Sourced, SourcedRange, SpeciesProfile};
use super::provenance::Provenance;

/// One or both bounds of a range.
#[derive(Debug, Clone, Copy, Default, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RangeOverride {
    pub min: Option<f64>,
    pub max: Option<f64>,
}

/// A slower rate below a salinity, replacing the profile's.
#[derive(Debug, Clone, Copy, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SlowBelowOverride {
    pub below_sp: f64,
    pub max_rate_sp_per_h: Option<f64>,
    pub max_rate_percent_per_h: Option<f64>,
}

/// `[tanks.species_override]` as written in the site configuration.
#[derive(Debug, Clone, Default, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SpeciesOverride {
    #[serde(rename = "plasma_osmolality_mOsm_kg")]
    pub plasma_osmolality_mosm_kg: Option<f64>,
    #[serde(rename = "isosmotic_band_mOsm_kg")]
    pub isosmotic_band_mosm_kg: Option<f64>,
    pub salinity_optimum: Option<RangeOverride>,
    pub salinity_tolerance: Option<RangeOverride>,
    #[serde(rename = "temperature_optimum_C")]
    pub temperature_optimum_c: Option<RangeOverride>,
    #[serde(rename = "temperature_tolerance_C")]
    pub temperature_tolerance_c: Option<RangeOverride>,
    pub max_rate_sp_per_h: Option<f64>,
    pub max_rate_percent_per_h: Option<f64>,
    pub slow_below: Option<SlowBelowOverride>,
    /// Where the site's values come from (shown as their provenance).
    pub source: Option<String>,
    /// Replaces the profile's note.
    pub note: Option<String>,
}

impl SpeciesOverride {
    /// Checks the values on their own (finite, ordered bounds); the fit with the profile is checked by
    /// [`SpeciesOverride::apply`]. Returns the key at fault, relative to the override table.
    pub fn check(&self) -> Result<(), (String, String)> {
        let finite = |key: &str, x: Option<f64>| match x {
            Some(v) if !v.is_finite() => Err((key.to_string(), format!("must be a finite number (got {v})"))),
            _ => Ok(()),
        };
        finite("plasma_osmolality_mOsm_kg", self.plasma_osmolality_mosm_kg)?;
        finite("isosmotic_band_mOsm_kg", self.isosmotic_band_mosm_kg)?;
        finite("max_rate_sp_per_h", self.max_rate_sp_per_h)?;
        finite("max_rate_percent_per_h", self.max_rate_percent_per_h)?;
        for (key, r) in self.ranges() {
            let Some(r) = r else { continue };
            finite(&format!("{key}.min"), r.min)?;
            finite(&format!("{key}.max"), r.max)?;
            if r.min.is_none() && r.max.is_none() {
                return Err((key.to_string(), "give min, max or both".to_string()));
            }
            if let (Some(lo), Some(hi)) = (r.min, r.max) {
                if lo > hi {
                    return Err((format!("{key}.min"), format!("min {lo} is above max {hi}")));
                }
            }
        }
        if let Some(s) = &self.slow_below {
            finite("slow_below.below_sp", Some(s.below_sp))?;
            finite("slow_below.max_rate_sp_per_h", s.max_rate_sp_per_h)?;
            finite("slow_below.max_rate_percent_per_h", s.max_rate_percent_per_h)?;
        }
        Ok(())
    }

    fn ranges(&self) -> [(&'static str, Option<RangeOverride>); 4] {
        [
            ("salinity_optimum", self.salinity_optimum),
            ("salinity_tolerance", self.salinity_tolerance),
            ("temperature_optimum_C", self.temperature_optimum_c),
            ("temperature_tolerance_C", self.temperature_tolerance_c),
        ]
    }

    /// The profile with this override merged on, checked as a library profile is.
    pub fn apply(&self, base: &SpeciesProfile, tank_id: &str) -> Result<SpeciesProfile, SpeciesError> {
        let site = Provenance::site_override(tank_id, self.source.as_deref());
        let value = |x: f64| Sourced {
            value: x,
            provenance: site.clone(),
        };
        let mut p = base.clone();
        if let Some(x) = self.plasma_osmolality_mosm_kg {
            p.plasma_osmolality_mosm_kg = Some(value(x));
        }
        if let Some(x) = self.isosmotic_band_mosm_kg {
            p.isosmotic_band_mosm_kg = value(x);
        }
        if let Some(x) = self.max_rate_sp_per_h {
            p.max_rate_sp_per_h = Some(value(x));
        }
        if let Some(x) = self.max_rate_percent_per_h {
            p.max_rate_percent_per_h = Some(value(x));
        }
        if let Some(s) = self.slow_below {
            p.slow_below = Some(SlowBelow {
                below_sp: s.below_sp,
                max_rate_sp_per_h: s.max_rate_sp_per_h,
                max_rate_percent_per_h: s.max_rate_percent_per_h,
                provenance: site.clone(),
            });
        }
        let merge = |target: &mut SourcedRange, r: Option<RangeOverride>| {
            let Some(r) = r else { return };
            let both = r.min.is_some() && r.max.is_some();
            let library = target.provenance.source.clone();
            target.min = r.min.unwrap_or(target.min);
            target.max = r.max.unwrap_or(target.max);
            target.provenance = if both {
                site.clone()
            } else {
                let bound = if r.min.is_some() { "min" } else { "max" };
                Provenance {
                    source: format!(
                        "{} ({bound}); other bound from the library: {library}",
                        site.source
                    ),
                    kind: site.kind,
                }
            };
        };
        merge(&mut p.salinity_optimum, self.salinity_optimum);
        merge(&mut p.salinity_tolerance, self.salinity_tolerance);
        merge(&mut p.temperature_optimum_c, self.temperature_optimum_c);
        merge(&mut p.temperature_tolerance_c, self.temperature_tolerance_c);
        if let Some(note) = &self.note {
            p.note = note.trim().to_string();
        }
        check_profile(&p, &KeyPath::root()).map_err(|invalid| SpeciesError::Override {
            tank: tank_id.to_string(),
            key: invalid.key.to_string(),
            message: invalid.message,
        })?;
        Ok(p)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::species::provenance::ProvenanceKind;
    use crate::species::SpeciesLibrary;

    fn smolt() -> SpeciesProfile {
        SpeciesLibrary::embedded()
            .unwrap()
            .get("atlantic_salmon_smolt")
            .unwrap()
            .clone()
    }

    #[test]
    fn given_values_replace_the_profile_and_say_so() {
        let o = SpeciesOverride {
            salinity_optimum: Some(RangeOverride {
                min: Some(30.0),
                max: None,
            }),
            max_rate_sp_per_h: Some(4.0),
            isosmotic_band_mosm_kg: Some(15.0),
            source: Some("site fish-health plan".into()),
            ..Default::default()
        };
        let base = smolt();
        let p = o.apply(&base, "smolt-t1").unwrap();
        assert_eq!(p.salinity_optimum.min, 30.0);
        assert_eq!(p.salinity_optimum.max, base.salinity_optimum.max);
        assert_eq!(p.salinity_optimum.provenance.kind, ProvenanceKind::SiteOverride);
        assert!(p
            .salinity_optimum
            .provenance
            .source
            .contains("other bound from the library"));
        assert_eq!(p.max_rate_sp_per_h.as_ref().unwrap().value, 4.0);
        assert!(p
            .max_rate_sp_per_h
            .unwrap()
            .provenance
            .source
            .contains("site fish-health plan"));
        assert_eq!(p.isosmotic_band_mosm_kg.value, 15.0);
        // Untouched values keep the library's provenance.
        assert_eq!(p.salinity_tolerance, base.salinity_tolerance);
    }

    #[test]
    fn an_override_that_breaks_the_profile_is_refused_with_its_key() {
        let o = SpeciesOverride {
            salinity_optimum: Some(RangeOverride {
                min: None,
                max: Some(40.0),
            }),
            ..Default::default()
        };
        match o.apply(&smolt(), "smolt-t1") {
            Err(SpeciesError::Override { tank, key, .. }) => {
                assert_eq!(tank, "smolt-t1");
                assert_eq!(key, "salinity_optimum");
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn check_refuses_unordered_or_empty_bounds() {
        let o = SpeciesOverride {
            temperature_optimum_c: Some(RangeOverride {
                min: Some(12.0),
                max: Some(8.0),
            }),
            ..Default::default()
        };
        assert_eq!(o.check().unwrap_err().0, "temperature_optimum_C.min");
        let o = SpeciesOverride {
            salinity_tolerance: Some(RangeOverride::default()),
            ..Default::default()
        };
        assert_eq!(o.check().unwrap_err().0, "salinity_tolerance");
        let o = SpeciesOverride {
            max_rate_sp_per_h: Some(f64::NAN),
            ..Default::default()
        };
        assert_eq!(o.check().unwrap_err().0, "max_rate_sp_per_h");
        assert!(SpeciesOverride::default().check().is_ok());
    }
}
