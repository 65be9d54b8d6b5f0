//! Species profiles and tonicity: what a tank's water means for the animal in it.
//!
//! Pure: no I/O beyond reading a library file on request, no clock. Files:
//! - [`provenance`] — where each value comes from;
//! - [`profile`] — the profile types (units in the JSON keys);
//! - [`library`] — loading and validating `config/species.toml`, lookup, per-tank merge;
//! - [`overrides`] — a tank's `[tanks.species_override]`;
//! - [`tonicity`] — hyper-/iso-/hypoosmotic, gradient, water-potential difference, water movement;
//! - [`isosmotic`] — the salinity isosmotic with a plasma, solved on TEOS-10;
//! - [`error`] — [`SpeciesError`].
pub mod error;
pub mod isosmotic;
pub mod library;
pub mod overrides;
pub mod profile;
pub mod provenance;
pub mod tonicity;

pub use error::SpeciesError;
pub use isosmotic::{isosmotic_practical_salinity, isosmotic_water, IsosmoticWater};
pub use library::{SpeciesLibrary, EMBEDDED_LIBRARY_TOML};
pub use overrides::SpeciesOverride;
pub use profile::{OsmoticStrategy, SpeciesProfile, CAUTION, DEFAULT_ISOSMOTIC_BAND_MOSM_KG};
pub use provenance::{Provenance, ProvenanceKind};
pub use tonicity::{assess, Tonicity, TonicityState, WaterMovement};
