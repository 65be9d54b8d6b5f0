//! The demo configuration: `config/demo.toml`, built into the binary so `halotank demo` runs from any
//! folder, with the broker address and database path set at run time.
use std::net::SocketAddr;
use std::path::{Path, PathBuf};

use crate::config::{self, Config, ConfigError};

/// The text of `config/demo.toml`.
pub const DEMO_TOML: &str = include_str!("../../config/demo.toml");

/// Name the built-in file goes by in error messages.
pub const DEMO_ORIGIN: &str = "demo.toml (built in)";

/// Default database file of the demo, relative to the current folder.
pub const DEFAULT_DB: &str = "halotank-demo.db";

/// The demo configuration as shipped.
pub fn demo_config() -> Result<Config, ConfigError> {
    config::parse(DEMO_TOML, Path::new(DEMO_ORIGIN))
}

/// The demo configuration pointed at a broker and a database file.
pub fn demo_config_for(broker: SocketAddr, db_path: &Path) -> Result<Config, ConfigError> {
    let mut config = demo_config()?;
    config.broker.host = broker.ip().to_string();
    config.broker.port = broker.port();
    config.broker.tls = None;
    config.storage.path = PathBuf::from(db_path);
    Ok(config)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::config::{PayloadFormat, TopicKind};
    use crate::demo::scenario::{MessagePart, ProbeFormat, Scenario};
    use crate::seawater::{ConductivityUnit, ProbeMode};

    #[test]
    fn the_built_in_file_parses_and_takes_the_run_time_overrides() {
        let addr: SocketAddr = "127.0.0.1:41883".parse().unwrap();
        let config = demo_config_for(addr, Path::new("/tmp/x/demo.db")).unwrap();
        assert_eq!(config.site.name, "Brannock Sound Hatchery");
        assert_eq!(
            (config.broker.host.as_str(), config.broker.port),
            ("127.0.0.1", 41883)
        );
        assert!(config.broker.tls.is_none());
        assert_eq!(config.storage.path, PathBuf::from("/tmp/x/demo.db"));
        assert_eq!(demo_config().unwrap().storage.path, PathBuf::from(DEFAULT_DB));
        assert!(config.storage.flush_rows <= 20 && config.storage.flush_ms <= 200);
    }

    #[test]
    fn every_simulated_probe_matches_its_tank_in_the_file() {
        let config = demo_config().unwrap();
        let t0 = chrono::DateTime::from_timestamp(1_743_573_600, 0).unwrap();
        let scenario = Scenario::brannock(1, t0, t0 + chrono::TimeDelta::days(1));
        let ids: Vec<&str> = config.tanks.iter().map(|t| t.id.as_str()).collect();
        let sim_ids: Vec<&str> = scenario.tanks().iter().map(|t| t.id).collect();
        assert_eq!(ids, sim_ids, "same tanks, same order");
        for (sim, tank) in scenario.tanks().iter().zip(&config.tanks) {
            assert_eq!(sim.pressure_dbar, tank.pressure_dbar, "{}", sim.id);
            assert_eq!(sim.interval_s as u64, tank.expected_interval_s, "{}", sim.id);
            let topic = |kind| tank.topics.get(kind).map(|b| (b.topic.clone(), b.format));
            match &sim.format {
                ProbeFormat::BareNumbers {
                    conductivity_topic,
                    temperature_topic,
                    alpha_percent_per_c,
                } => {
                    assert_eq!(
                        topic(TopicKind::Conductivity),
                        Some((conductivity_topic.clone(), PayloadFormat::Number))
                    );
                    assert_eq!(
                        topic(TopicKind::Temperature),
                        Some((temperature_topic.clone(), PayloadFormat::Number))
                    );
                    assert_eq!(tank.conductivity_unit, ConductivityUnit::MicroSiemensPerCm);
                    assert_eq!(
                        tank.probe_mode,
                        ProbeMode::SpecificConductance25 {
                            alpha_percent_per_c: *alpha_percent_per_c
                        }
                    );
                }
                ProbeFormat::CombinedJson { topic: t, keys, .. } => {
                    assert_eq!(topic(TopicKind::Combined), Some((t.clone(), PayloadFormat::Json)));
                    assert_eq!(tank.json_keys.conductivity, keys.conductivity);
                    assert_eq!(tank.json_keys.temperature, keys.temperature);
                    assert_eq!(tank.json_keys.time.as_deref(), Some(keys.time));
                    assert_eq!(tank.conductivity_unit, ConductivityUnit::MilliSiemensPerCm);
                    assert_eq!(tank.probe_mode, ProbeMode::InSitu);
                }
                ProbeFormat::SplitJson {
                    conductivity_topic,
                    temperature_topic,
                    keys,
                    ..
                } => {
                    assert_eq!(
                        topic(TopicKind::Conductivity),
                        Some((conductivity_topic.clone(), PayloadFormat::Json))
                    );
                    assert_eq!(
                        topic(TopicKind::Temperature),
                        Some((temperature_topic.clone(), PayloadFormat::Json))
                    );
                    assert_eq!(tank.json_keys.time.as_deref(), Some(keys.time));
                    assert_eq!(tank.probe_mode, ProbeMode::InSitu);
                }
                ProbeFormat::Senml { topic: t, .. } => {
                    assert_eq!(
                        topic(TopicKind::Combined),
                        Some((t.clone(), PayloadFormat::Senml))
                    );
                }
            }
        }
        // Every topic the probes publish on routes to the tank that sent it, as the right kind.
        let ingestor = crate::ingest::Ingestor::new(&config);
        for m in scenario.messages_between(t0, t0 + chrono::TimeDelta::hours(1)) {
            let route = ingestor
                .route(&m.topic)
                .unwrap_or_else(|| panic!("{} routes nowhere", m.topic));
            assert_eq!(route.tank_index, m.tank_index, "{}", m.topic);
            let kind = match m.part {
                MessagePart::Combined => TopicKind::Combined,
                MessagePart::Conductivity => TopicKind::Conductivity,
                MessagePart::Temperature => TopicKind::Temperature,
            };
            assert_eq!(route.kind, kind, "{}", m.topic);
        }
    }
}
