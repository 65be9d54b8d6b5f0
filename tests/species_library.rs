//! The shipped species library (`config/species.toml`): it parses, every value names its provenance, it
//! spans fresh-water, euryhaline and marine stock and both osmotic strategies, and every species the
//! example configuration names resolves (with its overrides).
use std::path::Path;

use halotank::species::{OsmoticStrategy, ProvenanceKind, SpeciesLibrary, EMBEDDED_LIBRARY_TOML};

#[test]
fn the_library_parses_with_at_least_eight_profiles() {
    let library = SpeciesLibrary::embedded().unwrap();
    assert!(library.profiles().len() >= 8, "{}", library.profiles().len());
    // The file on disk is the one built in.
    let on_disk = Path::new(env!("CARGO_MANIFEST_DIR")).join("config/species.toml");
    assert_eq!(std::fs::read_to_string(&on_disk).unwrap(), EMBEDDED_LIBRARY_TOML);
    assert_eq!(
        SpeciesLibrary::load(&on_disk).unwrap().profiles(),
        library.profiles()
    );
}

/// Walks the raw TOML (independently of halotank's parser): every table holding a `value` or a
/// `min`/`max` must hold a non-empty `source` in one of the three forms of the file's header.
#[test]
fn every_value_in_the_file_carries_a_provenance() {
    let doc: toml::Table = toml::from_str(EMBEDDED_LIBRARY_TOML).unwrap();
    let species = doc["species"].as_array().unwrap();
    let mut checked = 0;
    for profile in species {
        let profile = profile.as_table().unwrap();
        let id = profile["id"].as_str().unwrap();
        for (key, item) in profile {
            let Some(table) = item.as_table() else {
                // Plain strings are identity and description (id, names, stage, note), not values.
                assert!(item.is_str(), "{id}.{key} must be a table with a source");
                continue;
            };
            assert!(
                table.contains_key("value") || table.contains_key("min") || table.contains_key("below_sp"),
                "{id}.{key}"
            );
            let source = table
                .get("source")
                .and_then(|s| s.as_str())
                .unwrap_or_else(|| panic!("{id}.{key} has no source"));
            let lower = source.to_lowercase();
            let recalled = lower.contains("from memory, verify");
            let practice = lower.starts_with("common practice");
            let cites_year = source
                .split(|c: char| !c.is_ascii_digit())
                .any(|w| w.len() == 4 && (w.starts_with("19") || w.starts_with("20")));
            assert!(recalled || practice || cites_year, "{id}.{key}: `{source}`");
            checked += 1;
        }
    }
    assert!(checked >= 8 * 6, "{checked}");
    // And halotank's own reading agrees: no species value falls back to a default except the band.
    for p in SpeciesLibrary::embedded().unwrap().profiles() {
        for kind in [
            p.osmotic_strategy.provenance.kind,
            p.salinity_optimum.provenance.kind,
            p.salinity_tolerance.provenance.kind,
            p.temperature_optimum_c.provenance.kind,
            p.temperature_tolerance_c.provenance.kind,
        ] {
            assert!(
                matches!(
                    kind,
                    ProvenanceKind::Published | ProvenanceKind::CommonPractice | ProvenanceKind::FromMemory
                ),
                "{}: {kind:?}",
                p.id
            );
        }
    }
}

#[test]
fn the_library_spans_water_types_and_both_strategies() {
    let library = SpeciesLibrary::embedded().unwrap();
    let profiles = library.profiles();
    let fresh = profiles.iter().filter(|p| p.salinity_optimum.max <= 5.0).count();
    let marine = profiles.iter().filter(|p| p.salinity_optimum.min >= 25.0).count();
    let euryhaline = profiles
        .iter()
        .filter(|p| p.salinity_tolerance.min <= 5.0 && p.salinity_tolerance.max >= 30.0)
        .count();
    assert!(
        fresh >= 2 && marine >= 2 && euryhaline >= 2,
        "{fresh} {marine} {euryhaline}"
    );
    let conformers: Vec<_> = profiles
        .iter()
        .filter(|p| p.osmotic_strategy.value == OsmoticStrategy::Osmoconformer)
        .collect();
    assert!(conformers.len() >= 2);
    assert!(conformers.len() < profiles.len());
    // Osmoregulators carry a plasma value; life stage is named where it matters (salmon parr vs smolt).
    for p in profiles {
        if p.osmotic_strategy.value == OsmoticStrategy::Osmoregulator {
            assert!(p.plasma_mosm_kg().is_some(), "{}", p.id);
        }
    }
    assert!(library.get("atlantic_salmon_parr").is_some() && library.get("atlantic_salmon_smolt").is_some());
    // McGraw et al. 2002 report shrimp postlarvae acclimation as % of salinity per hour.
    let shrimp = library.get("whiteleg_shrimp_pl").unwrap();
    assert_eq!(shrimp.max_rate_percent_per_h.as_ref().unwrap().value, 19.0);
    assert!(shrimp.slow_below.is_some());
}

#[test]
fn every_species_of_the_example_configuration_resolves() {
    let config =
        halotank::config::load(&Path::new(env!("CARGO_MANIFEST_DIR")).join("config/halotank.toml")).unwrap();
    let library = SpeciesLibrary::embedded().unwrap();
    let mut with_species = 0;
    for tank in &config.tanks {
        let profile = library.profile_for_tank(tank).unwrap();
        assert_eq!(profile.is_some(), tank.species.is_some(), "{}", tank.id);
        with_species += usize::from(profile.is_some());
    }
    assert!(with_species >= 5);
    let oyster = library
        .profile_for_tank(config.tank("oyster-d1").unwrap())
        .unwrap()
        .unwrap();
    assert_eq!(
        oyster.max_rate_sp_per_h.unwrap().provenance.kind,
        ProvenanceKind::SiteOverride
    );
}
