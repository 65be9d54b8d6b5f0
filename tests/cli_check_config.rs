//! `halotank check-config` as a user runs it: the built binary on the shipped example and a broken file.
use std::path::Path;
use std::process::Command;

use serde_json::{json, Value};

fn halotank() -> Command {
    Command::new(env!("CARGO_BIN_EXE_halotank"))
}

fn example() -> std::path::PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("config/halotank.toml")
}

#[test]
fn json_output_of_the_example_has_the_documented_shape() {
    let out = halotank()
        .args(["check-config", "--format", "json", "--config"])
        .arg(example())
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "stderr: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    let value: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(
        value,
        json!([
            {"id": "parr-a", "topics": {"conductivity": "brannock/probes/parr-a/ec",
                                         "temperature": "brannock/probes/parr-a/temp"}},
            {"id": "smolt-t1", "topics": {"combined": "brannock/probes/smolt-t1/state"}},
            {"id": "shrimp-n2", "topics": {"combined": "brannock/probes/shrimp-n2/state"}},
            {"id": "sea-hold-4", "topics": {"combined": "brannock/probes/sea-hold-4/state"}},
            {"id": "oyster-d1", "topics": {"conductivity": "brannock/depuration/d1/conductivity",
                                            "temperature": "brannock/depuration/d1/temperature"}},
            {"id": "quarantine-q1", "topics": {"conductivity": "brannock/quarantine/q1/conductivity",
                                                "temperature": "brannock/quarantine/q1/temperature"}}
        ])
    );
}

#[test]
fn text_output_summarises_site_broker_storage_and_tanks() {
    let out = halotank()
        .args(["check-config", "--config"])
        .arg(example())
        .output()
        .unwrap();
    assert!(out.status.success());
    let text = String::from_utf8(out.stdout).unwrap();
    for needle in [
        "site: Brannock Sound Hatchery",
        "broker: mqtt.brannock.example:8883 (TLS)",
        "password from environment variable HALOTANK_MQTT_PASSWORD",
        "storage: /var/lib/halotank/brannock.sqlite3, keep 90 days",
        "http: listens on 127.0.0.1:8480, token for changes from environment variable HALOTANK_HTTP_TOKEN",
        "parr-a \"Parr raceway A (fresh water)\"",
        "unit uS/cm, specific conductance at 25 °C, alpha 2 %/°C",
        "combined     brannock/probes/shrimp-n2/state [senml]",
        "temperature  brannock/depuration/d1/temperature [number]",
    ] {
        assert!(text.contains(needle), "missing `{needle}` in:\n{text}");
    }
}

#[test]
fn a_broken_config_exits_1_naming_file_line_and_key() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("broken.toml");
    let original = std::fs::read_to_string(example()).unwrap();
    // Break the volume of the third tank; find its line by plain text search.
    let broken = original.replacen("volume_l = 3500", "volume_l = -3500", 1);
    assert_ne!(broken, original);
    let line = broken
        .lines()
        .position(|l| l.starts_with("volume_l = -3500"))
        .unwrap()
        + 1;
    std::fs::write(&path, &broken).unwrap();
    for format in ["text", "json"] {
        let out = halotank()
            .args(["check-config", "--format", format, "--config"])
            .arg(&path)
            .output()
            .unwrap();
        assert_eq!(out.status.code(), Some(1));
        assert!(out.stdout.is_empty());
        let stderr = String::from_utf8(out.stderr).unwrap();
        let expected = format!("{}:{line}:1: key `tanks[2].volume_l`:", path.display());
        assert!(stderr.contains(&expected), "expected `{expected}` in: {stderr}");
    }
}

#[test]
fn unknown_key_is_reported_with_its_line() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("typo.toml");
    let original = std::fs::read_to_string(example()).unwrap();
    let broken = original.replacen("retention_days = 90", "retention_dayz = 90", 1);
    let line = broken
        .lines()
        .position(|l| l.starts_with("retention_dayz"))
        .unwrap()
        + 1;
    std::fs::write(&path, &broken).unwrap();
    let out = halotank()
        .args(["check-config", "--config"])
        .arg(&path)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1));
    let stderr = String::from_utf8(out.stderr).unwrap();
    assert!(
        stderr.contains(&format!(":{line}:1: key `storage.retention_dayz`: unknown field")),
        "{stderr}"
    );
}

#[test]
fn missing_file_and_usage_errors() {
    let out = halotank()
        .args(["check-config", "--config", "/nonexistent/halotank.toml"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&out.stderr).contains("/nonexistent/halotank.toml: cannot read"));
    let out = halotank().args(["check-config"]).output().unwrap();
    assert_eq!(out.status.code(), Some(2), "clap usage error");
    let out = halotank().args(["check-config", "--help"]).output().unwrap();
    assert!(out.status.success());
    let help = String::from_utf8(out.stdout).unwrap();
    assert!(help.contains("halotank check-config --config"), "{help}");
    assert!(help.contains("Exit status"), "{help}");
}
