//! The species library: `config/species.toml` (or another file) parsed and validated into profiles,
//! with lookup by id and the merge of a tank's `species_override`.
//!
//! Errors name the file, line, column and key at fault, located with the configuration's helpers.
use std::collections::HashSet;
use std::path::{Path, PathBuf};

use serde::Deserialize;

use crate::config::error::Invalid;
use crate::config::{ConfigError, KeyPath, TankConfig};
use crate::seawater::error::{MAX_TEMPERATURE_C, MIN_TEMPERATURE_C};

use super::error::SpeciesError;
use super::profile::{
    OsmoticStrategy, SlowBelow, Sourced, SourcedRange, SpeciesProfile, DEFAULT_ISOSMOTIC_BAND_MOSM_KG,
};
use super::provenance::Provenance;

/// The library shipped in the binary (`config/species.toml`).
pub const EMBEDDED_LIBRARY_TOML: &str = include_str!("../../config/species.toml");

/// The name the embedded library goes by in messages.
pub const EMBEDDED_LIBRARY_NAME: &str = "<built-in>/config/species.toml";

/// Highest Practical Salinity a range may name (well above sea water; brines are out of scope).
pub const MAX_RANGE_SP: f64 = 70.0;
/// Plausible plasma/haemolymph osmolality, mOsm/kg.
pub const PLASMA_RANGE_MOSM_KG: (f64, f64) = (1.0, 2000.0);
/// Largest isosmotic band, mOsm/kg.
pub const MAX_BAND_MOSM_KG: f64 = 200.0;
/// Largest rate of change a profile may give, SP per hour.
pub const MAX_RATE_SP_PER_H: f64 = 100.0;

/// A validated set of species profiles.
#[derive(Debug, Clone, PartialEq)]
pub struct SpeciesLibrary {
    origin: PathBuf,
    profiles: Vec<SpeciesProfile>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawLibrary {
    #[serde(default)]
    species: Vec<RawProfile>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawSourced<T> {
    value: T,
    source: String,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawRange {
    min: f64,
    max: f64,
    source: String,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawSlowBelow {
    below_sp: f64,
    max_rate_sp_per_h: Option<f64>,
    max_rate_percent_per_h: Option<f64>,
    source: String,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawProfile {
    id: String,
    common_name: String,
    scientific_name: String,
    stage: String,
    #[serde(default)]
    note: String,
    osmotic_strategy: RawSourced<String>,
    #[serde(rename = "plasma_osmolality_mOsm_kg")]
    plasma_osmolality_mosm_kg: Option<RawSourced<f64>>,
    #[serde(rename = "isosmotic_band_mOsm_kg")]
    isosmotic_band_mosm_kg: Option<RawSourced<f64>>,
    salinity_optimum: RawRange,
    salinity_tolerance: RawRange,
    #[serde(rename = "temperature_optimum_C")]
    temperature_optimum_c: RawRange,
    #[serde(rename = "temperature_tolerance_C")]
    temperature_tolerance_c: RawRange,
    max_rate_sp_per_h: Option<RawSourced<f64>>,
    max_rate_percent_per_h: Option<RawSourced<f64>>,
    slow_below: Option<RawSlowBelow>,
}

fn provenance(source: &str, key: KeyPath) -> Result<Provenance, Invalid> {
    Provenance::from_library(source).map_err(|m| Invalid::new(key, m))
}

fn sourced<T: Clone>(raw: &RawSourced<T>, path: &KeyPath) -> Result<Sourced<T>, Invalid> {
    Ok(Sourced {
        value: raw.value.clone(),
        provenance: provenance(&raw.source, path.key("source"))?,
    })
}

fn range(raw: &RawRange, path: &KeyPath) -> Result<SourcedRange, Invalid> {
    Ok(SourcedRange {
        min: raw.min,
        max: raw.max,
        provenance: provenance(&raw.source, path.key("source"))?,
    })
}

fn non_empty(text: &str, key: KeyPath) -> Result<String, Invalid> {
    let t = text.trim();
    if t.is_empty() {
        return Err(Invalid::new(key, "must not be empty"));
    }
    Ok(t.to_string())
}

/// Checks a species id: 1 to 64 characters of `a-z`, `0-9`, `_`, `-` (the rule of tank ids).
pub fn check_species_id(id: &str) -> Result<(), String> {
    crate::config::tank::check_tank_id(id)
}

impl RawProfile {
    fn resolve(&self, path: &KeyPath) -> Result<SpeciesProfile, Invalid> {
        check_species_id(&self.id).map_err(|m| Invalid::new(path.key("id"), m))?;
        let strategy_path = path.key("osmotic_strategy");
        let strategy = OsmoticStrategy::parse(self.osmotic_strategy.value.trim()).ok_or_else(|| {
            Invalid::new(
                strategy_path.key("value"),
                format!(
                    "unknown osmotic strategy `{}`; use \"osmoregulator\" or \"osmoconformer\"",
                    self.osmotic_strategy.value
                ),
            )
        })?;
        let band = match &self.isosmotic_band_mosm_kg {
            Some(raw) => sourced(raw, &path.key("isosmotic_band_mOsm_kg"))?,
            None => Sourced {
                value: DEFAULT_ISOSMOTIC_BAND_MOSM_KG,
                provenance: Provenance::default_setting("isosmotic band ±25 mOsm/kg"),
            },
        };
        let slow_below = match &self.slow_below {
            Some(raw) => Some(SlowBelow {
                below_sp: raw.below_sp,
                max_rate_sp_per_h: raw.max_rate_sp_per_h,
                max_rate_percent_per_h: raw.max_rate_percent_per_h,
                provenance: provenance(&raw.source, path.key("slow_below").key("source"))?,
            }),
            None => None,
        };
        let profile = SpeciesProfile {
            id: self.id.clone(),
            common_name: non_empty(&self.common_name, path.key("common_name"))?,
            scientific_name: non_empty(&self.scientific_name, path.key("scientific_name"))?,
            stage: non_empty(&self.stage, path.key("stage"))?,
            osmotic_strategy: Sourced {
                value: strategy,
                provenance: provenance(&self.osmotic_strategy.source, strategy_path.key("source"))?,
            },
            plasma_osmolality_mosm_kg: self
                .plasma_osmolality_mosm_kg
                .as_ref()
                .map(|raw| sourced(raw, &path.key("plasma_osmolality_mOsm_kg")))
                .transpose()?,
            isosmotic_band_mosm_kg: band,
            salinity_optimum: range(&self.salinity_optimum, &path.key("salinity_optimum"))?,
            salinity_tolerance: range(&self.salinity_tolerance, &path.key("salinity_tolerance"))?,
            temperature_optimum_c: range(&self.temperature_optimum_c, &path.key("temperature_optimum_C"))?,
            temperature_tolerance_c: range(
                &self.temperature_tolerance_c,
                &path.key("temperature_tolerance_C"),
            )?,
            max_rate_sp_per_h: self
                .max_rate_sp_per_h
                .as_ref()
                .map(|raw| sourced(raw, &path.key("max_rate_sp_per_h")))
                .transpose()?,
            max_rate_percent_per_h: self
                .max_rate_percent_per_h
                .as_ref()
                .map(|raw| sourced(raw, &path.key("max_rate_percent_per_h")))
                .transpose()?,
            slow_below,
            note: self.note.trim().to_string(),
        };
        check_profile(&profile, path)?;
        Ok(profile)
    }
}

fn check_range(r: &SourcedRange, path: &KeyPath, (low, high): (f64, f64), unit: &str) -> Result<(), Invalid> {
    for (key, x) in [("min", r.min), ("max", r.max)] {
        if !(x.is_finite() && (low..=high).contains(&x)) {
            return Err(Invalid::new(
                path.key(key),
                format!("must be a number from {low} to {high}{unit} (got {x})"),
            ));
        }
    }
    if r.min > r.max {
        return Err(Invalid::new(
            path.key("min"),
            format!("min {} is above max {}", r.min, r.max),
        ));
    }
    Ok(())
}

fn check_inside(
    inner: &SourcedRange,
    outer: &SourcedRange,
    inner_path: &KeyPath,
    outer_name: &str,
) -> Result<(), Invalid> {
    if inner.min < outer.min || inner.max > outer.max {
        return Err(Invalid::new(
            inner_path.clone(),
            format!(
                "{}..{} must lie inside the {outer_name} {}..{}",
                inner.min, inner.max, outer.min, outer.max
            ),
        ));
    }
    Ok(())
}

fn check_rate_sp(x: f64, key: KeyPath) -> Result<(), Invalid> {
    if !(x.is_finite() && x > 0.0 && x <= MAX_RATE_SP_PER_H) {
        return Err(Invalid::new(
            key,
            format!("must be above 0 and at most {MAX_RATE_SP_PER_H} SP per hour (got {x})"),
        ));
    }
    Ok(())
}

fn check_rate_percent(x: f64, key: KeyPath) -> Result<(), Invalid> {
    if !(x.is_finite() && x > 0.0 && x <= 100.0) {
        return Err(Invalid::new(
            key,
            format!("must be above 0 and at most 100 % per hour (got {x})"),
        ));
    }
    Ok(())
}

/// Checks a profile's values against each other and their plausible ranges; `path` names the profile.
pub(crate) fn check_profile(p: &SpeciesProfile, path: &KeyPath) -> Result<(), Invalid> {
    let plasma_key = path.key("plasma_osmolality_mOsm_kg");
    match (&p.plasma_osmolality_mosm_kg, p.osmotic_strategy.value) {
        (None, OsmoticStrategy::Osmoregulator) => {
            return Err(Invalid::new(
                path.key("osmotic_strategy"),
                "an osmoregulator needs plasma_osmolality_mOsm_kg",
            ));
        }
        (Some(s), _) => {
            let (low, high) = PLASMA_RANGE_MOSM_KG;
            if !(s.value.is_finite() && (low..=high).contains(&s.value)) {
                return Err(Invalid::new(
                    plasma_key.key("value"),
                    format!("must be {low} to {high} mOsm/kg (got {})", s.value),
                ));
            }
        }
        (None, OsmoticStrategy::Osmoconformer) => {}
    }
    let band = p.isosmotic_band_mosm_kg.value;
    if !(band.is_finite() && band > 0.0 && band <= MAX_BAND_MOSM_KG) {
        return Err(Invalid::new(
            path.key("isosmotic_band_mOsm_kg").key("value"),
            format!("must be above 0 and at most {MAX_BAND_MOSM_KG} mOsm/kg (got {band})"),
        ));
    }
    let so = path.key("salinity_optimum");
    let st = path.key("salinity_tolerance");
    let to = path.key("temperature_optimum_C");
    let tt = path.key("temperature_tolerance_C");
    check_range(&p.salinity_optimum, &so, (0.0, MAX_RANGE_SP), "")?;
    check_range(&p.salinity_tolerance, &st, (0.0, MAX_RANGE_SP), "")?;
    let t_limits = (MIN_TEMPERATURE_C, MAX_TEMPERATURE_C);
    check_range(&p.temperature_optimum_c, &to, t_limits, " °C")?;
    check_range(&p.temperature_tolerance_c, &tt, t_limits, " °C")?;
    check_inside(
        &p.salinity_optimum,
        &p.salinity_tolerance,
        &so,
        "salinity tolerance",
    )?;
    check_inside(
        &p.temperature_optimum_c,
        &p.temperature_tolerance_c,
        &to,
        "temperature tolerance",
    )?;
    if let Some(r) = &p.max_rate_sp_per_h {
        check_rate_sp(r.value, path.key("max_rate_sp_per_h").key("value"))?;
    }
    if let Some(r) = &p.max_rate_percent_per_h {
        check_rate_percent(r.value, path.key("max_rate_percent_per_h").key("value"))?;
    }
    if let Some(slow) = &p.slow_below {
        let sp = path.key("slow_below");
        if !(slow.below_sp.is_finite() && slow.below_sp > 0.0 && slow.below_sp <= MAX_RANGE_SP) {
            return Err(Invalid::new(
                sp.key("below_sp"),
                format!(
                    "must be above 0 and at most {MAX_RANGE_SP} (got {})",
                    slow.below_sp
                ),
            ));
        }
        if slow.max_rate_sp_per_h.is_none() && slow.max_rate_percent_per_h.is_none() {
            return Err(Invalid::new(
                sp,
                "needs max_rate_sp_per_h or max_rate_percent_per_h",
            ));
        }
        if let Some(x) = slow.max_rate_sp_per_h {
            check_rate_sp(x, sp.key("max_rate_sp_per_h"))?;
        }
        if let Some(x) = slow.max_rate_percent_per_h {
            check_rate_percent(x, sp.key("max_rate_percent_per_h"))?;
        }
    }
    Ok(())
}

impl SpeciesLibrary {
    /// The library embedded in the binary.
    pub fn embedded() -> Result<Self, SpeciesError> {
        Self::parse(EMBEDDED_LIBRARY_TOML, Path::new(EMBEDDED_LIBRARY_NAME))
    }

    /// Reads and validates a library file.
    pub fn load(path: &Path) -> Result<Self, SpeciesError> {
        let text = std::fs::read_to_string(path).map_err(|source| SpeciesError::Read {
            path: path.to_path_buf(),
            source,
        })?;
        Self::parse(&text, path)
    }

    /// Parses and validates library text; `origin` names the file in errors.
    pub fn parse(text: &str, origin: &Path) -> Result<Self, SpeciesError> {
        let raw: RawLibrary = toml::from_str(text)
            .map_err(|e| SpeciesError::Invalid(ConfigError::from_toml(&e, text, origin)))?;
        Self::resolve(raw)
            .map(|profiles| Self {
                origin: origin.to_path_buf(),
                profiles,
            })
            .map_err(|invalid| SpeciesError::Invalid(ConfigError::from_invalid(invalid, text, origin)))
    }

    fn resolve(raw: RawLibrary) -> Result<Vec<SpeciesProfile>, Invalid> {
        let root = KeyPath::root().key("species");
        if raw.species.is_empty() {
            return Err(Invalid::new(
                KeyPath::root(),
                "no species: add at least one [[species]] table",
            ));
        }
        let mut seen = HashSet::new();
        let mut profiles = Vec::with_capacity(raw.species.len());
        for (i, raw_profile) in raw.species.iter().enumerate() {
            let path = root.index(i);
            let profile = raw_profile.resolve(&path)?;
            if !seen.insert(profile.id.clone()) {
                return Err(Invalid::new(
                    path.key("id"),
                    format!("duplicate species id `{}`", profile.id),
                ));
            }
            profiles.push(profile);
        }
        Ok(profiles)
    }

    /// Where the library was read from.
    pub fn origin(&self) -> &Path {
        &self.origin
    }

    /// Every profile, in file order.
    pub fn profiles(&self) -> &[SpeciesProfile] {
        &self.profiles
    }

    /// The profile with this id.
    pub fn get(&self, id: &str) -> Option<&SpeciesProfile> {
        self.profiles.iter().find(|p| p.id == id)
    }

    /// The ids, in file order.
    pub fn ids(&self) -> impl Iterator<Item = &str> {
        self.profiles.iter().map(|p| p.id.as_str())
    }

    /// A tank's effective profile: its species from this library with its `species_override` merged on.
    /// `Ok(None)` when the tank names no species.
    pub fn profile_for_tank(&self, tank: &TankConfig) -> Result<Option<SpeciesProfile>, SpeciesError> {
        let Some(species) = tank.species.as_deref() else {
            return Ok(None);
        };
        let base = self.get(species).ok_or_else(|| SpeciesError::UnknownSpecies {
            tank: tank.id.clone(),
            species: species.to_string(),
            known: self.ids().collect::<Vec<_>>().join(", "),
        })?;
        match &tank.species_override {
            Some(o) => o.apply(base, &tank.id).map(Some),
            None => Ok(Some(base.clone())),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::species::provenance::ProvenanceKind;

    const ONE: &str = r#"
[[species]]
id = "test_fish"
common_name = "Test fish"
scientific_name = "Piscis probandus"
stage = "juvenile"

[species.osmotic_strategy]
value = "osmoregulator"
source = "common practice"

[species.plasma_osmolality_mOsm_kg]
value = 320
source = "from memory, verify"

[species.salinity_optimum]
min = 10.0
max = 20.0
source = "from memory, verify"

[species.salinity_tolerance]
min = 0.0
max = 30.0
source = "from memory, verify"

[species.temperature_optimum_C]
min = 10.0
max = 15.0
source = "from memory, verify"

[species.temperature_tolerance_C]
min = 0.0
max = 20.0
source = "from memory, verify"
"#;

    fn parse(text: &str) -> Result<SpeciesLibrary, SpeciesError> {
        SpeciesLibrary::parse(text, Path::new("lib.toml"))
    }

    fn invalid(text: &str) -> (String, Option<usize>, String) {
        match parse(text) {
            Err(SpeciesError::Invalid(e)) => (
                e.key().map(|k| k.to_string()).unwrap_or_default(),
                e.position().map(|p| p.line),
                e.to_string(),
            ),
            other => panic!("expected an invalid library, got {other:?}"),
        }
    }

    #[test]
    fn parses_a_minimal_profile_with_the_default_band() {
        let lib = parse(ONE).unwrap();
        let p = lib.get("test_fish").unwrap();
        assert_eq!(p.plasma_mosm_kg(), Some(320.0));
        assert_eq!(p.isosmotic_band_mosm_kg.value, DEFAULT_ISOSMOTIC_BAND_MOSM_KG);
        assert_eq!(p.isosmotic_band_mosm_kg.provenance.kind, ProvenanceKind::Default);
        assert_eq!(p.osmotic_strategy.provenance.kind, ProvenanceKind::CommonPractice);
        assert!(lib.get("other").is_none());
    }

    #[test]
    fn a_value_without_provenance_is_refused_at_its_line() {
        let text = ONE.replacen(
            "source = \"from memory, verify\"\n\n[species.salinity_tolerance]",
            "source = \"a nice book\"\n\n[species.salinity_tolerance]",
            1,
        );
        let (key, line, message) = invalid(&text);
        assert_eq!(key, "species[0].salinity_optimum.source");
        let expected = text.lines().position(|l| l.contains("a nice book")).unwrap() + 1;
        assert_eq!(line, Some(expected));
        assert!(message.starts_with("lib.toml:"), "{message}");
    }

    #[test]
    fn a_missing_source_key_is_a_schema_error() {
        let text = ONE.replacen("value = 320\nsource = \"from memory, verify\"", "value = 320", 1);
        let (_, line, message) = invalid(&text);
        assert!(line.is_some(), "{message}");
        assert!(message.contains("source"), "{message}");
    }

    #[test]
    fn unknown_keys_are_refused() {
        let text = ONE.replacen(
            "stage = \"juvenile\"",
            "stage = \"juvenile\"\ncolour = \"red\"",
            1,
        );
        let (_, line, message) = invalid(&text);
        let expected = text.lines().position(|l| l.starts_with("colour")).unwrap() + 1;
        assert_eq!(line, Some(expected), "{message}");
        assert!(message.contains("colour"), "{message}");
    }

    #[test]
    fn inconsistent_values_are_refused() {
        let text = ONE.replacen("min = 10.0\nmax = 20.0", "min = 10.0\nmax = 35.0", 1);
        let (key, _, _) = invalid(&text);
        assert_eq!(key, "species[0].salinity_optimum");
        let text = ONE.replacen("min = 10.0\nmax = 20.0", "min = 25.0\nmax = 20.0", 1);
        assert_eq!(invalid(&text).0, "species[0].salinity_optimum.min");
        let text = ONE.replacen("value = \"osmoregulator\"", "value = \"osmoswimmer\"", 1);
        assert_eq!(invalid(&text).0, "species[0].osmotic_strategy.value");
        let text = ONE.replacen(
            "[species.plasma_osmolality_mOsm_kg]\nvalue = 320\nsource = \"from memory, verify\"\n",
            "",
            1,
        );
        assert_eq!(invalid(&text).0, "species[0].osmotic_strategy");
        let text = format!(
            "{ONE}\n[species.max_rate_percent_per_h]\nvalue = 150\nsource = \"from memory, verify\"\n"
        );
        assert_eq!(invalid(&text).0, "species[0].max_rate_percent_per_h.value");
        let text = format!("{ONE}\n[species.slow_below]\nbelow_sp = 2\nsource = \"from memory, verify\"\n");
        assert_eq!(invalid(&text).0, "species[0].slow_below");
    }

    #[test]
    fn duplicate_ids_and_empty_libraries_are_refused() {
        let text = format!("{ONE}\n{ONE}");
        assert_eq!(invalid(&text).0, "species[1].id");
        assert!(matches!(parse(""), Err(SpeciesError::Invalid(_))));
    }

    #[test]
    fn a_missing_file_is_a_read_error() {
        assert!(matches!(
            SpeciesLibrary::load(Path::new("/nonexistent/species.toml")),
            Err(SpeciesError::Read { .. })
        ));
    }
}
