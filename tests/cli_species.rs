//! `halotank species` as a user runs it: the built binary, its JSON shapes and the caution.
use std::process::Command;

use serde_json::Value;

fn halotank(args: &[&str]) -> (bool, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_halotank"))
        .args(args)
        .output()
        .unwrap();
    (
        out.status.success(),
        String::from_utf8(out.stdout).unwrap(),
        String::from_utf8(out.stderr).unwrap(),
    )
}

fn json(args: &[&str]) -> Value {
    let (ok, stdout, stderr) = halotank(args);
    assert!(ok, "{args:?}: {stderr}");
    serde_json::from_str(&stdout).unwrap()
}

const CAUTION_WORDS: [&str; 2] = [
    "strain, size, health and acclimation history",
    "fish-health professional",
];

#[test]
fn show_json_has_the_documented_keys_with_units_and_provenance() {
    let v = json(&["species", "show", "whiteleg_shrimp_pl", "--format", "json"]);
    assert_eq!(v["id"], "whiteleg_shrimp_pl");
    assert_eq!(v["osmotic_strategy"]["value"], "osmoregulator");
    for key in [
        "plasma_osmolality_mOsm_kg",
        "salinity_optimum",
        "salinity_tolerance",
        "temperature_optimum_C",
        "temperature_tolerance_C",
        "max_rate_percent_per_h",
        "slow_below",
        "isosmotic_band_mOsm_kg",
    ] {
        let value = &v[key];
        assert!(value.is_object(), "{key}: {v}");
        assert!(value["source"].as_str().is_some_and(|s| !s.is_empty()), "{key}");
        assert!(value["provenance"].is_string(), "{key}");
    }
    assert_eq!(v["max_rate_percent_per_h"]["value"], 19.0);
    assert!(v["salinity_optimum"]["min"].is_number() && v["salinity_optimum"]["max"].is_number());
    // No SP/h rate is given for shrimp: the key is present and null.
    assert!(v["max_rate_sp_per_h"].is_null());
    let caution = v["caution"].as_str().unwrap();
    assert!(CAUTION_WORDS.iter().all(|w| caution.contains(w)), "{caution}");
}

#[test]
fn show_json_of_a_profile_without_a_percent_rate_leaves_that_key_out() {
    let v = json(&["species", "show", "atlantic_salmon_smolt", "--format", "json"]);
    assert_eq!(v["max_rate_sp_per_h"]["value"], 35.0);
    assert!(v.get("max_rate_percent_per_h").is_none());
    let oyster = json(&["species", "show", "pacific_oyster", "--format", "json"]);
    assert_eq!(oyster["osmotic_strategy"]["value"], "osmoconformer");
    assert!(oyster["plasma_osmolality_mOsm_kg"].is_null());
}

#[test]
fn list_json_holds_every_profile_and_the_caution() {
    let v = json(&["species", "list", "--format", "json"]);
    let species = v["species"].as_array().unwrap();
    assert!(species.len() >= 8);
    assert!(species
        .iter()
        .all(|p| p["id"].is_string() && p["salinity_tolerance"].is_object()));
    assert!(v["caution"].as_str().unwrap().contains(CAUTION_WORDS[0]));
}

#[test]
fn text_outputs_carry_the_caution() {
    for args in [
        &["species", "list"][..],
        &["species", "show", "blue_mussel"][..],
        &["species", "isosmotic", "nile_tilapia", "--temperature", "26"][..],
    ] {
        let (ok, stdout, stderr) = halotank(args);
        assert!(ok, "{stderr}");
        assert!(
            CAUTION_WORDS.iter().all(|w| stdout.contains(w)),
            "{args:?}: {stdout}"
        );
    }
}

#[test]
fn isosmotic_json_gives_the_practical_salinity() {
    // Common practice: salmonid plasma (about 300-340 mOsm/kg) is isosmotic with about SP 10-12.
    let v = json(&[
        "species",
        "isosmotic",
        "atlantic_salmon_smolt",
        "--temperature",
        "15",
        "--format",
        "json",
    ]);
    let sp = v["practical_salinity"].as_f64().unwrap();
    assert!((10.0..=12.0).contains(&sp), "{sp}");
    assert_eq!(v["species"], "atlantic_salmon_smolt");
    assert_eq!(v["temperature_C"], 15.0);
    assert!(v["plasma_osmolality_mOsm_kg"].is_number());
    assert!(v["plasma_osmolality_source"]["provenance"].is_string());
    assert!(v["caution"].is_string());
}

#[test]
fn errors_are_reported_not_panicked() {
    let (ok, _, stderr) = halotank(&["species", "show", "kraken"]);
    assert!(
        !ok && stderr.contains("no species `kraken`") && stderr.contains("blue_mussel"),
        "{stderr}"
    );
    let (ok, _, stderr) = halotank(&["species", "isosmotic", "blue_mussel", "--temperature", "10"]);
    assert!(!ok && stderr.contains("osmoconformer"), "{stderr}");
    let (ok, _, stderr) = halotank(&["species", "isosmotic", "barramundi", "--temperature", "80"]);
    assert!(!ok && stderr.contains("temperature"), "{stderr}");
}

#[test]
fn a_library_file_is_used_and_its_errors_are_located() {
    let dir = tempfile::tempdir().unwrap();
    let good = dir.path().join("good.toml");
    let text = halotank::species::EMBEDDED_LIBRARY_TOML;
    std::fs::write(&good, text).unwrap();
    let v = json(&[
        "species",
        "list",
        "--format",
        "json",
        "--library",
        good.to_str().unwrap(),
    ]);
    assert_eq!(v["library"], good.to_str().unwrap());

    let bad = dir.path().join("bad.toml");
    let broken = text.replacen("value = 750", "value = \"lots\"", 1);
    std::fs::write(&bad, &broken).unwrap();
    let line = broken.lines().position(|l| l.contains("\"lots\"")).unwrap() + 1;
    let (ok, _, stderr) = halotank(&["species", "list", "--library", bad.to_str().unwrap()]);
    assert!(!ok);
    assert!(stderr.contains(&format!("bad.toml:{line}:")), "{stderr}");
}
