//! Tests of the whole configuration: the shipped example, defaults, and every kind of refused file.
use std::path::{Path, PathBuf};

use super::*;
use crate::seawater::{ConductivityUnit, ProbeMode};

const BASE: &str = r#"
[site]
name = "Brannock Sound Hatchery"

[broker]
host = "mqtt.brannock.example"

[storage]
path = "data/halotank.sqlite3"
"#;

const TANK_A: &str = r#"
[[tanks]]
id = "tank-a"
name = "Tank A"
volume_l = 1000
[tanks.topics]
combined = "site/tank-a/state"
"#;

fn example_path() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("config/halotank.toml")
}

fn ok(text: &str) -> Config {
    match parse(text, Path::new("/etc/halotank/test.toml")) {
        Ok(c) => c,
        Err(e) => panic!("expected a valid config, got: {e}\n{text}"),
    }
}

/// The error's (line, key, message) for an invalid text.
fn bad(text: &str) -> (Option<usize>, String, String, String) {
    match parse(text, Path::new("test.toml")) {
        Ok(_) => panic!("expected an error for:\n{text}"),
        Err(e) => {
            let shown = e.to_string();
            match e {
                ConfigError::Invalid {
                    file,
                    position,
                    key,
                    message,
                } => {
                    assert_eq!(file, Path::new("test.toml"));
                    (position.map(|p| p.line), key.to_string(), message, shown)
                }
                other => panic!("unexpected {other:?}"),
            }
        }
    }
}

/// 1-based line of the first line of `text` containing `needle` (found by plain text search).
fn line_of(text: &str, needle: &str) -> usize {
    text.lines()
        .position(|l| l.contains(needle))
        .map(|i| i + 1)
        .unwrap_or_else(|| panic!("`{needle}` not in text"))
}

#[test]
fn the_shipped_example_loads() {
    let config = load(&example_path()).unwrap();
    assert_eq!(config.site.name, "Brannock Sound Hatchery");
    assert_eq!(config.broker.port, 8883);
    assert!(config.broker.tls.is_some());
    assert_eq!(
        config.broker.password,
        PasswordSource::Env("HALOTANK_MQTT_PASSWORD".into())
    );
    assert_eq!(config.publish.topic_prefix, "halotank/brannock");
    assert_eq!(config.tanks.len(), 6);
    let formats: std::collections::HashSet<PayloadFormat> = config
        .tanks
        .iter()
        .flat_map(|t| t.topics.iter().map(|(_, b)| b.format))
        .collect();
    assert_eq!(formats.len(), 3, "all three payload formats are shown");
    let modes: std::collections::HashSet<bool> = config
        .tanks
        .iter()
        .map(|t| t.probe_mode == ProbeMode::InSitu)
        .collect();
    assert_eq!(modes.len(), 2, "both probe modes are shown");

    let parr = config.tank("parr-a").unwrap();
    assert_eq!(parr.conductivity_unit, ConductivityUnit::MicroSiemensPerCm);
    assert_eq!(
        parr.probe_mode,
        ProbeMode::SpecificConductance25 {
            alpha_percent_per_c: 2.0
        }
    );
    assert_eq!(
        parr.topics.conductivity.as_ref().unwrap().topic,
        "brannock/probes/parr-a/ec"
    );
    assert_eq!(
        parr.topics.conductivity.as_ref().unwrap().format,
        PayloadFormat::Number
    );
    assert!(
        parr.topics.combined.is_none(),
        "own topics replace the default topics"
    );

    let smolt = config.tank("smolt-t1").unwrap();
    let combined = smolt.topics.combined.as_ref().unwrap();
    assert_eq!(combined.topic, "brannock/probes/smolt-t1/state");
    assert_eq!(combined.format, PayloadFormat::Json);
    assert_eq!(smolt.pressure_dbar, 0.0);

    let oyster = config.tank("oyster-d1").unwrap();
    assert_eq!(
        oyster.topics.conductivity.as_ref().unwrap().format,
        PayloadFormat::Senml
    );
    assert_eq!(
        oyster.topics.temperature.as_ref().unwrap().format,
        PayloadFormat::Number
    );

    let hold = config.tank("sea-hold-4").unwrap();
    assert_eq!(hold.json_keys.conductivity, "cond_ms");
    assert_eq!(hold.json_keys.time.as_deref(), Some("ts"));
    assert_eq!(hold.pressure_dbar, 0.04);
}

#[test]
fn defaults_fill_what_the_file_leaves_out() {
    let c = ok(&format!("{BASE}{TANK_A}"));
    assert_eq!(c.broker.port, defaults::BROKER_PORT);
    assert_eq!(c.broker.client_id, "halotank-brannock-sound-hatchery");
    assert_eq!(c.broker.keep_alive_s, 30);
    assert_eq!(c.broker.max_inflight, 100);
    assert!(c.broker.tls.is_none());
    assert_eq!(c.broker.password, PasswordSource::None);
    assert_eq!(c.storage.retention_days, 90);
    assert_eq!((c.storage.flush_rows, c.storage.flush_ms), (100, 200));
    assert_eq!(c.storage.path, Path::new("/etc/halotank/data/halotank.sqlite3"));
    assert_eq!(c.publish.topic_prefix, "halotank/brannock-sound-hatchery");
    assert_eq!(c.ingest.max_payload_bytes, 4096);
    assert_eq!(c.ingest.temperature_max_age_s, 60);
    assert_eq!(
        (c.ingest.conductivity_min_ms_cm, c.ingest.conductivity_max_ms_cm),
        (0.0, 100.0)
    );
    assert_eq!(
        (c.ingest.temperature_min_c, c.ingest.temperature_max_c),
        (-3.0, 45.0)
    );
    let t = &c.tanks[0];
    assert_eq!(t.conductivity_unit, ConductivityUnit::MilliSiemensPerCm);
    assert_eq!(t.probe_mode, ProbeMode::InSitu);
    assert_eq!(t.json_keys.conductivity, "conductivity");
    assert_eq!(t.json_keys.temperature, "temperature");
    assert_eq!(t.json_keys.time.as_deref(), Some("time"));
    assert_eq!(t.expected_interval_s, 60);
    assert_eq!(t.species, None);
}

#[test]
fn tank_values_beat_tank_defaults_which_beat_built_ins() {
    let text = format!(
        r#"{BASE}
[tank_defaults]
format = "senml"
temperature_format = "number"
conductivity_unit = "S/m"
probe_mode = "sc25"
alpha_percent_per_c = 1.8
[tank_defaults.topics]
conductivity = "site/{{id}}/c"
temperature = "site/{{id}}/t"
[tank_defaults.json_keys]
time = "ts"

[[tanks]]
id = "one"
name = "One"
volume_l = 10

[[tanks]]
id = "two"
name = "Two"
volume_l = 10
format = "json"
conductivity_unit = "uS/cm"
probe_mode = "in_situ"
species = "blue_mussel"
[tanks.json_keys]
conductivity = "ec"
"#
    );
    let c = ok(&text);
    let one = &c.tanks[0];
    assert_eq!(one.topics.conductivity.as_ref().unwrap().topic, "site/one/c");
    assert_eq!(
        one.topics.conductivity.as_ref().unwrap().format,
        PayloadFormat::Senml
    );
    assert_eq!(
        one.topics.temperature.as_ref().unwrap().format,
        PayloadFormat::Number
    );
    assert_eq!(one.conductivity_unit, ConductivityUnit::SiemensPerMetre);
    assert_eq!(
        one.probe_mode,
        ProbeMode::SpecificConductance25 {
            alpha_percent_per_c: 1.8
        }
    );
    let two = &c.tanks[1];
    // The tank's own `format` beats the defaults' per-kind `temperature_format`.
    assert_eq!(
        two.topics.temperature.as_ref().unwrap().format,
        PayloadFormat::Json
    );
    assert_eq!(two.conductivity_unit, ConductivityUnit::MicroSiemensPerCm);
    assert_eq!(two.probe_mode, ProbeMode::InSitu);
    assert_eq!(two.json_keys.conductivity, "ec");
    assert_eq!(two.json_keys.temperature, "temperature");
    assert_eq!(two.json_keys.time.as_deref(), Some("ts"));
    assert_eq!(two.species.as_deref(), Some("blue_mussel"));
}

#[test]
fn toml_syntax_error_names_line_and_column() {
    let text = format!("{BASE}{TANK_A}volume_l = \n");
    let (line, _key, message, shown) = bad(&text);
    assert_eq!(line, Some(text.lines().count()));
    assert!(
        shown.starts_with(&format!("test.toml:{}:", text.lines().count())),
        "{shown}"
    );
    assert!(!message.is_empty());
}

#[test]
fn unknown_key_names_line_and_key() {
    let text = format!("{BASE}{TANK_A}\n[[tanks]]\nid = \"b\"\nname = \"B\"\nvolum_l = 3\n");
    let (line, key, message, shown) = bad(&text);
    assert_eq!(line, Some(line_of(&text, "volum_l")));
    assert_eq!(key, "tanks[1].volum_l");
    assert!(message.contains("unknown field `volum_l`"), "{message}");
    assert_eq!(
        shown,
        format!(
            "test.toml:{}:1: key `tanks[1].volum_l`: {message}",
            line_of(&text, "volum_l")
        )
    );
}

#[test]
fn unknown_section_key_is_refused() {
    let text = format!("{BASE}keepalive = 5\n{TANK_A}");
    let (line, key, _, _) = bad(&text);
    assert_eq!(line, Some(line_of(&text, "keepalive")));
    assert_eq!(key, "storage.keepalive");
}

#[test]
fn wrong_type_names_line_and_key() {
    let text = format!("{BASE}{TANK_A}").replace("volume_l = 1000", "volume_l = \"big\"");
    let (line, key, message, _) = bad(&text);
    assert_eq!(line, Some(line_of(&text, "volume_l")));
    assert_eq!(key, "tanks[0].volume_l");
    assert!(message.contains("invalid type"), "{message}");
}

#[test]
fn unknown_payload_format_names_key() {
    let text = format!("{BASE}{TANK_A}").replace("volume_l = 1000", "volume_l = 1000\nformat = \"xml\"");
    let (line, key, message, _) = bad(&text);
    assert_eq!(
        (line, key.as_str()),
        (Some(line_of(&text, "format")), "tanks[0].format")
    );
    assert!(message.contains("unknown variant `xml`"), "{message}");
}

#[test]
fn missing_tank_field_points_at_the_tank() {
    let text = format!("{BASE}{TANK_A}").replace("name = \"Tank A\"\n", "");
    let (line, key, message, _) = bad(&text);
    assert_eq!(line, Some(line_of(&text, "[[tanks]]")));
    assert_eq!(key, "tanks[0]");
    assert!(message.contains("missing field `name`"), "{message}");
}

#[test]
fn missing_section_has_no_line() {
    let text = format!("{BASE}{TANK_A}").replace("[site]\nname = \"Brannock Sound Hatchery\"\n", "");
    let (line, key, message, _) = bad(&text);
    assert_eq!((line, key.as_str()), (None, ""));
    assert!(message.contains("missing field `site`"), "{message}");
}

#[test]
fn duplicate_tank_id() {
    let text = format!(
        "{BASE}{TANK_A}{}",
        TANK_A.replace("site/tank-a/state", "site/other/state")
    );
    let (line, key, message, _) = bad(&text);
    assert_eq!(key, "tanks[1].id");
    assert_eq!(
        line,
        Some(
            text.lines()
                .enumerate()
                .filter(|(_, l)| l.contains("id = "))
                .nth(1)
                .unwrap()
                .0
                + 1
        )
    );
    assert!(message.contains("duplicate tank id `tank-a`"), "{message}");
}

#[test]
fn duplicate_topic_across_tanks() {
    let text = format!("{BASE}{TANK_A}{}", TANK_A.replace("tank-a\"", "tank-b\""));
    let (line, key, message, _) = bad(&text);
    assert_eq!(key, "tanks[1].topics.combined");
    assert_eq!(
        line,
        Some(
            text.lines()
                .enumerate()
                .filter(|(_, l)| l.contains("combined"))
                .nth(1)
                .unwrap()
                .0
                + 1
        )
    );
    assert!(
        message.contains("already the combined topic of tank `tank-a`"),
        "{message}"
    );
}

#[test]
fn duplicate_topic_with_an_inherited_one_points_at_the_later_tank() {
    let text = format!(
        "{BASE}[tank_defaults.topics]\ncombined = \"site/{{id}}/state\"\n\n[[tanks]]\nid = \"tank-a\"\nname = \"A\"\nvolume_l = 1\n\n\
         [[tanks]]\nid = \"tank-b\"\nname = \"B\"\nvolume_l = 1\n[tanks.topics]\ncombined = \"site/tank-a/state\"\n"
    );
    let (line, key, _, _) = bad(&text);
    assert_eq!(key, "tanks[1].topics.combined");
    assert_eq!(line, Some(line_of(&text, "combined = \"site/tank-a/state\"")));
}

#[test]
fn conductivity_topic_without_temperature_and_vice_versa() {
    let text = format!("{BASE}{TANK_A}").replace("combined = ", "conductivity = ");
    let (line, key, message, _) = bad(&text);
    assert_eq!(
        (line, key.as_str()),
        (
            Some(line_of(&text, "conductivity = ")),
            "tanks[0].topics.conductivity"
        )
    );
    assert!(message.contains("needs a temperature topic"), "{message}");

    let text = format!("{BASE}{TANK_A}").replace("combined = ", "temperature = ");
    let (line, key, _, _) = bad(&text);
    assert_eq!(
        (line, key.as_str()),
        (
            Some(line_of(&text, "temperature = ")),
            "tanks[0].topics.temperature"
        )
    );
}

#[test]
fn tank_without_topics() {
    let text = format!("{BASE}{TANK_A}").replace("[tanks.topics]\ncombined = \"site/tank-a/state\"\n", "");
    let (line, key, message, _) = bad(&text);
    assert_eq!(
        (line, key.as_str()),
        (Some(line_of(&text, "[[tanks]]")), "tanks[0]")
    );
    assert!(message.contains("has no topics"), "{message}");
}

#[test]
fn bad_unit_strings_in_a_tank_and_in_the_defaults() {
    let text =
        format!("{BASE}{TANK_A}").replace("volume_l = 1000", "volume_l = 1000\nconductivity_unit = \"mS/m\"");
    let (line, key, message, _) = bad(&text);
    assert_eq!(
        (line, key.as_str()),
        (
            Some(line_of(&text, "conductivity_unit")),
            "tanks[0].conductivity_unit"
        )
    );
    assert!(message.contains("unknown unit `mS/m`"), "{message}");

    let text = format!("{BASE}[tank_defaults]\nconductivity_unit = \"ppt\"\n{TANK_A}");
    let (line, key, _, _) = bad(&text);
    assert_eq!(
        (line, key.as_str()),
        (Some(line_of(&text, "ppt")), "tank_defaults.conductivity_unit")
    );
}

#[test]
fn volumes_must_be_positive() {
    for volume in ["0", "-5", "nan", "inf"] {
        let text = format!("{BASE}{TANK_A}").replace("volume_l = 1000", &format!("volume_l = {volume}"));
        let (line, key, _, _) = bad(&text);
        assert_eq!(
            (line, key.as_str()),
            (Some(line_of(&text, "volume_l")), "tanks[0].volume_l"),
            "{volume}"
        );
    }
}

#[test]
fn tank_ids_are_restricted() {
    for id in ["Tank-A", "tank a", "", "tänk", &"x".repeat(65)] {
        let text = format!("{BASE}{TANK_A}").replace("id = \"tank-a\"", &format!("id = \"{id}\""));
        let (_, key, _, _) = bad(&text);
        assert_eq!(key, "tanks[0].id", "{id}");
    }
}

#[test]
fn number_format_on_a_combined_topic_is_refused() {
    let text = format!("{BASE}{TANK_A}").replace("volume_l = 1000", "volume_l = 1000\nformat = \"number\"");
    let (line, key, _, _) = bad(&text);
    assert_eq!(
        (line, key.as_str()),
        (Some(line_of(&text, "format")), "tanks[0].format")
    );
}

#[test]
fn default_topics_need_the_id_placeholder_and_no_other() {
    let text = format!("{BASE}[tank_defaults.topics]\ncombined = \"site/state\"\n[[tanks]]\nid = \"a\"\nname = \"A\"\nvolume_l = 1\n");
    let (line, key, message, _) = bad(&text);
    assert_eq!(
        (line, key.as_str()),
        (
            Some(line_of(&text, "site/state")),
            "tank_defaults.topics.combined"
        )
    );
    assert!(message.contains("{id}"), "{message}");

    let text = format!("{BASE}{TANK_A}").replace("site/tank-a/state", "site/{tank}/state");
    let (_, key, message, _) = bad(&text);
    assert_eq!(key, "tanks[0].topics.combined");
    assert!(message.contains("unknown placeholder"), "{message}");

    let text = format!("{BASE}{TANK_A}").replace("site/tank-a/state", "site/+/state");
    let (_, key, message, _) = bad(&text);
    assert_eq!(key, "tanks[0].topics.combined");
    assert!(message.contains("wildcard"), "{message}");
}

#[test]
fn inline_password_needs_explicit_permission() {
    let text = format!("{BASE}{TANK_A}").replace(
        "host = \"mqtt.brannock.example\"",
        "host = \"mqtt.brannock.example\"\nusername = \"u\"\npassword = \"hunter2\"",
    );
    let (line, key, message, shown) = bad(&text);
    assert_eq!(
        (line, key.as_str()),
        (Some(line_of(&text, "password")), "broker.password")
    );
    assert!(message.contains("allow_inline_password"), "{message}");
    assert!(!shown.contains("hunter2"));

    let allowed = text.replace(
        "password = \"hunter2\"",
        "password = \"hunter2\"\nallow_inline_password = true",
    );
    let c = ok(&allowed);
    assert!(matches!(&c.broker.password, PasswordSource::Inline(s) if s.expose() == "hunter2"));
    assert!(!format!("{c:?}").contains("hunter2"));

    let two = text.replace(
        "password = \"hunter2\"",
        "password_env = \"A\"\npassword_file = \"pw\"",
    );
    assert_eq!(bad(&two).1, "broker.password_env");

    let no_user = text.replace(
        "username = \"u\"\npassword = \"hunter2\"",
        "password_env = \"PW\"",
    );
    assert_eq!(bad(&no_user).1, "broker.username");
}

#[test]
fn broker_url_and_tls_rules() {
    let url = format!("{BASE}{TANK_A}").replace(
        "host = \"mqtt.brannock.example\"",
        "url = \"mqtt://10.1.2.3:1884\"",
    );
    let c = ok(&url);
    assert_eq!((c.broker.host.as_str(), c.broker.port), ("10.1.2.3", 1884));

    let both = url.replace("url = ", "host = \"x\"\nurl = ");
    let (line, key, _, _) = bad(&both);
    assert_eq!((line, key.as_str()), (Some(line_of(&both, "url")), "broker.url"));

    let mqtts = url.replace("mqtt://", "mqtts://");
    assert_eq!(bad(&mqtts).1, "broker.url");
    let with_tls = mqtts.replace("[storage]", "[broker.tls]\nca_file = \"ca.pem\"\n\n[storage]");
    let c = ok(&with_tls);
    assert_eq!(c.broker.tls.unwrap().ca_file, Path::new("/etc/halotank/ca.pem"));

    let half = with_tls.replace(
        "ca_file = \"ca.pem\"",
        "ca_file = \"ca.pem\"\nclient_cert_file = \"c.pem\"",
    );
    assert_eq!(bad(&half).1, "broker.tls.client_cert_file");
    let no_ca = with_tls.replace("ca_file = \"ca.pem\"", "");
    assert_eq!(bad(&no_ca).1, "broker.tls");

    let backoff = format!("{BASE}{TANK_A}").replace(
        "host = \"mqtt.brannock.example\"",
        "host = \"h\"\nreconnect_min_ms = 5000\nreconnect_max_ms = 100",
    );
    assert_eq!(bad(&backoff).1, "broker.reconnect_max_ms");
    let inflight = format!("{BASE}{TANK_A}").replace(
        "host = \"mqtt.brannock.example\"",
        "host = \"h\"\nmax_inflight = 0",
    );
    assert_eq!(bad(&inflight).1, "broker.max_inflight");
}

#[test]
fn probe_mode_and_alpha_rules() {
    let alpha_in_situ =
        format!("{BASE}{TANK_A}").replace("volume_l = 1000", "volume_l = 1000\nalpha_percent_per_c = 2.0");
    let (line, key, _, _) = bad(&alpha_in_situ);
    assert_eq!(
        (line, key.as_str()),
        (
            Some(line_of(&alpha_in_situ, "alpha")),
            "tanks[0].alpha_percent_per_c"
        )
    );

    let sc = format!("{BASE}{TANK_A}").replace(
        "volume_l = 1000",
        "volume_l = 1000\nprobe_mode = \"specific_conductance_25\"",
    );
    assert_eq!(
        ok(&sc).tanks[0].probe_mode,
        ProbeMode::SpecificConductance25 {
            alpha_percent_per_c: 2.0
        }
    );
    // 1 + 0.04 × (−3 − 25) < 0: this alpha cannot be undone at the lowest plausible temperature.
    let steep = sc.replace(
        "probe_mode = \"specific_conductance_25\"",
        "probe_mode = \"sc25\"\nalpha_percent_per_c = 4.0",
    );
    let (_, key, message, _) = bad(&steep);
    assert_eq!(key, "tanks[0].alpha_percent_per_c");
    assert!(message.contains("non-positive"), "{message}");
    let zero = steep.replace("4.0", "0");
    assert_eq!(bad(&zero).1, "tanks[0].alpha_percent_per_c");
}

#[test]
fn publish_prefix_and_subscriptions_must_not_loop() {
    let text = format!("{BASE}[publish]\ntopic_prefix = \"site\"\n{TANK_A}");
    let (line, key, message, _) = bad(&text);
    assert_eq!(
        (line, key.as_str()),
        (Some(line_of(&text, "combined")), "tanks[0].topics.combined")
    );
    assert!(message.contains("publish.topic_prefix"), "{message}");

    let text = format!("{BASE}[ingest]\nsubscribe = [\"site/#\", \"#\"]\n{TANK_A}");
    let (line, key, message, _) = bad(&text);
    assert_eq!(
        (line, key.as_str()),
        (Some(line_of(&text, "subscribe")), "ingest.subscribe[1]")
    );
    assert!(message.contains("own publications"), "{message}");

    let text = format!("{BASE}[ingest]\nsubscribe = [\"site/#/x\"]\n{TANK_A}");
    assert_eq!(bad(&text).1, "ingest.subscribe[0]");
    let text = format!("{BASE}[publish]\ntopic_prefix = \"halotank/\"\n{TANK_A}");
    assert_eq!(bad(&text).1, "publish.topic_prefix");
}

#[test]
fn ingest_ranges_are_checked() {
    let text = format!("{BASE}[ingest]\ntemperature_max_c = 60\n{TANK_A}");
    let (line, key, _, _) = bad(&text);
    assert_eq!(
        (line, key.as_str()),
        (
            Some(line_of(&text, "temperature_max_c")),
            "ingest.temperature_max_c"
        )
    );
    let text = format!("{BASE}[ingest]\nconductivity_min_ms_cm = 50\nconductivity_max_ms_cm = 40\n{TANK_A}");
    assert_eq!(bad(&text).1, "ingest.conductivity_max_ms_cm");
    let text = format!("{BASE}[ingest]\nmax_payload_bytes = 0\n{TANK_A}");
    assert_eq!(bad(&text).1, "ingest.max_payload_bytes");
}

#[test]
fn no_tanks_is_an_error() {
    let (line, key, message, _) = bad(BASE);
    assert_eq!((line, key.as_str()), (None, "tanks"));
    assert!(message.contains("no tanks"), "{message}");
}

#[test]
fn unreadable_file_names_the_path() {
    let e = load(Path::new("/nonexistent/halotank.toml")).unwrap_err();
    assert!(matches!(e, ConfigError::Read { .. }));
    assert!(e
        .to_string()
        .starts_with("/nonexistent/halotank.toml: cannot read"));
}

/// A tank without its topics table, ending in an open `species = "` for the id to follow.
const TANK_SPECIES: &str = "\n[[tanks]]\nid = \"tank-a\"\nname = \"Tank A\"\nvolume_l = 1000\nspecies = \"";
const TOPICS: &str = "[tanks.topics]\ncombined = \"site/tank-a/state\"\n";

#[test]
fn a_species_override_is_parsed_and_checked() {
    let text = format!(
        "{BASE}{TANK_SPECIES}atlantic_salmon_smolt\"\n{TOPICS}\
         [tanks.species_override]\n\
         salinity_optimum = {{ min = 30.0 }}\n\
         max_rate_sp_per_h = 4.0\n\
         source = \"site fish-health plan\"\n"
    );
    let c = ok(&text);
    let o = c.tanks[0].species_override.as_ref().unwrap();
    assert_eq!(o.salinity_optimum.unwrap().min, Some(30.0));
    assert_eq!(o.max_rate_sp_per_h, Some(4.0));
    // The merge onto the embedded library profile.
    let library = crate::species::SpeciesLibrary::embedded().unwrap();
    let p = library.profile_for_tank(&c.tanks[0]).unwrap().unwrap();
    assert_eq!(p.salinity_optimum.min, 30.0);
    assert_eq!(p.max_rate_sp_per_h_at(30.0), Some(4.0));
}

#[test]
fn a_species_override_needs_a_species_and_sound_values() {
    let text = format!("{BASE}{TANK_A}[tanks.species_override]\nmax_rate_sp_per_h = 4.0\n");
    let (line, key, message, _) = bad(&text);
    assert_eq!(key, "tanks[0].species_override");
    assert_eq!(line, Some(line_of(&text, "[tanks.species_override]")));
    assert!(message.contains("species"), "{message}");

    let text = format!(
        "{BASE}{TANK_SPECIES}blue_mussel\"\n{TOPICS}[tanks.species_override]\n\
         salinity_tolerance = {{ min = 30.0, max = 20.0 }}\n"
    );
    let (line, key, _, _) = bad(&text);
    assert_eq!(key, "tanks[0].species_override.salinity_tolerance.min");
    assert_eq!(line, Some(line_of(&text, "salinity_tolerance")));

    let text =
        format!("{BASE}{TANK_SPECIES}blue_mussel\"\n{TOPICS}[tanks.species_override]\nsalinity_range = 3\n");
    let (_, _, message, _) = bad(&text);
    assert!(message.contains("salinity_range"), "{message}");
}

#[test]
fn alert_layers_global_species_tank_win_key_by_key() {
    let text = format!(
        "{BASE}\n[alerts]\nsalinity_hysteresis_sp = 0.4\nstale_multiple = 4.0\n\
         [alerts.rules.salinity_tolerance]\nrenotify_s = 900\n\
         [alerts.species.pacific_oyster]\nsalinity_hysteresis_sp = 0.6\n\
         [[tanks]]\nid = \"oyster-c1\"\nname = \"Oyster C1\"\nvolume_l = 500\nspecies = \"pacific_oyster\"\n\
         [tanks.topics]\ncombined = \"site/oyster-c1/state\"\n[tanks.alerts]\nstale_multiple = 6.0\n\
         [tanks.alerts.rules.salinity_tolerance]\nmin_duration_s = 30\n"
    );
    let config = ok(&text);
    let tank = &config.tanks[0];
    let resolved = config
        .alerts
        .layered(tank.species.as_deref(), &tank.alerts)
        .resolve()
        .unwrap();
    assert_eq!(resolved.salinity_hysteresis_sp, 0.6); // species beats global
    assert_eq!(resolved.stale_multiple, 6.0); // tank beats global
    let rule = resolved.rule(crate::alerts::AlertKind::SalinityTolerance);
    assert_eq!((rule.renotify_s, rule.min_duration_s), (900, 30)); // per field, per rule
                                                                   // Without layers every value is the built-in default.
    let plain = ok(&format!("{BASE}{TANK_A}"));
    assert_eq!(
        plain
            .alerts
            .layered(None, &plain.tanks[0].alerts)
            .resolve()
            .unwrap(),
        crate::alerts::AlertSettings::default().resolve().unwrap()
    );
}

#[test]
fn bad_alert_settings_name_the_key() {
    let text = format!("{BASE}{TANK_A}\n[alerts]\nrate_clear_fraction = 1.5\n");
    let (line, key, message, _) = bad(&text);
    assert_eq!(key, "alerts.rate_clear_fraction");
    assert_eq!(line, Some(line_of(&text, "rate_clear_fraction")));
    assert!(message.contains("between 0 and 1"), "{message}");

    let text = format!("{BASE}{TANK_A}[tanks.alerts]\nstale_multipl = 3.0\n");
    let (_, key, message, _) = bad(&text);
    assert_eq!(key, "tanks[0].alerts");
    assert!(message.contains("stale_multipl"), "{message}");

    let text =
        format!("{BASE}{TANK_A}\n[alerts.species.pacific_oyster.rules.probe_spike]\nrenotify_s = -1\n");
    let (_, key, _, _) = bad(&text);
    assert!(key.starts_with("alerts.species.pacific_oyster"), "{key}");
}

#[test]
fn http_defaults_to_loopback_with_the_token_from_the_environment() {
    let config = ok(&format!("{BASE}{TANK_A}"));
    assert!(config.http.enabled);
    assert_eq!(config.http.bind.to_string(), "127.0.0.1:8480");
    assert_eq!(config.http.token_env.as_deref(), Some("HALOTANK_HTTP_TOKEN"));
    assert_eq!(
        (config.http.token_file.as_ref(), config.http.stale_after_s),
        (None, None)
    );
    let text = format!(
        "{BASE}[http]\nenabled = false\nbind = \"[::1]:0\"\ntoken_file = \"secrets/http-token\"\nstale_after_s = 300\n{TANK_A}"
    );
    let config = ok(&text);
    assert!(!config.http.enabled);
    assert_eq!(config.http.bind.to_string(), "[::1]:0");
    assert_eq!(
        config.http.token_file.as_deref(),
        Some(Path::new("/etc/halotank/secrets/http-token"))
    );
    assert_eq!(config.http.stale_after_s, Some(300));
    assert!(config.http.allowed_hosts.is_empty());
    let config = ok(&format!(
        "{BASE}[http]\nallowed_hosts = [\"Tanks.Kelpie.LAN\"]\n{TANK_A}"
    ));
    assert_eq!(config.http.allowed_hosts, vec!["tanks.kelpie.lan".to_string()]);
}

#[test]
fn bad_http_settings_name_line_and_key() {
    for (setting, key, needle) in [
        ("bind = \"localhost\"", "http.bind", "address and port"),
        ("bind = \"127.0.0.1:99999\"", "http.bind", "address and port"),
        ("token_env = \" \"", "http.token_env", "environment variable"),
        ("token_file = \"\"", "http.token_file", "file"),
        ("stale_after_s = 0", "http.stale_after_s", "at least 1"),
        (
            "allowed_hosts = [\"tanks.lan:8480\"]",
            "http.allowed_hosts[0]",
            "without port",
        ),
        ("port = 8480", "http", "port"),
    ] {
        let text = format!("{BASE}{TANK_A}\n[http]\n{setting}\n");
        let (line, got_key, message, shown) = bad(&text);
        assert!(got_key.starts_with(key), "{setting}: {got_key}");
        assert!(
            message.contains(needle) || shown.contains(needle),
            "{setting}: {shown}"
        );
        let expected = line_of(&text, setting.split(' ').next().unwrap());
        assert_eq!(line, Some(expected), "{setting}: {shown}");
    }
}
