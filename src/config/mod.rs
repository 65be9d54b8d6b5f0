//! Configuration: one TOML file parsed once into typed, validated structs.
//!
//! Sections: `[site]`, `[broker]` (+ `[broker.tls]`), `[storage]`, `[publish]`, `[ingest]`,
//! `[tank_defaults]`, `[[tanks]]` (+ `[tanks.alerts]`), `[alerts]` (+ `[alerts.species.<id>]`) and `[http]`. Unknown keys are refused so typos surface. Every default lives in
//! [`defaults`]. Relative paths are resolved against the folder of the configuration file. Every error
//! names the file, line, column and key at fault ([`ConfigError`]).
use std::collections::HashMap;
use std::path::{Path, PathBuf};

use serde::Deserialize;

pub mod alerts;
pub mod broker;
pub mod defaults;
pub mod error;
pub mod http;
pub mod ingest;
pub mod key_path;
pub mod locate;
pub mod publish;
pub mod site;
pub mod storage;
pub mod tank;
pub mod topics;

pub use alerts::AlertsConfig;
pub use broker::{BrokerConfig, ClientAuth, PasswordError, PasswordSource, Secret, TlsConfig};
pub use error::{ConfigError, Position};
pub use http::HttpConfig;
pub use ingest::IngestSettings;
pub use key_path::{KeyPath, KeySegment};
pub use publish::PublishConfig;
pub use site::SiteConfig;
pub use storage::StorageConfig;
pub use tank::{JsonKeys, PayloadFormat, TankConfig, TankTopics, TopicBinding, TopicKind};

use error::Invalid;

/// The whole configuration, validated.
#[derive(Debug, Clone, PartialEq)]
pub struct Config {
    /// The file it was read from (as given).
    pub origin: PathBuf,
    pub site: SiteConfig,
    pub broker: BrokerConfig,
    pub storage: StorageConfig,
    pub publish: PublishConfig,
    pub ingest: IngestSettings,
    /// The tanks, in file order (a tank's index is its position here).
    pub tanks: Vec<TankConfig>,
    /// `[alerts]` and `[alerts.species.<id>]`.
    pub alerts: AlertsConfig,
    /// `[http]`: the built-in HTTP server.
    pub http: HttpConfig,
}

impl Config {
    /// The tank with this id.
    pub fn tank(&self, id: &str) -> Option<&TankConfig> {
        self.tanks.iter().find(|t| t.id == id)
    }
}

/// The file as written.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawConfig {
    site: site::RawSite,
    broker: broker::RawBroker,
    storage: storage::RawStorage,
    publish: Option<publish::RawPublish>,
    ingest: Option<ingest::RawIngest>,
    tank_defaults: Option<tank::RawTankDefaults>,
    #[serde(default)]
    tanks: Vec<tank::RawTank>,
    alerts: Option<toml::Table>,
    http: Option<http::RawHttp>,
}

/// Reads and validates the configuration file at `path`.
pub fn load(path: &Path) -> Result<Config, ConfigError> {
    let text = std::fs::read_to_string(path).map_err(|source| ConfigError::Read {
        path: path.to_path_buf(),
        source,
    })?;
    parse(&text, path)
}

/// Parses and validates configuration text; `origin` names the file in errors and anchors relative paths.
pub fn parse(text: &str, origin: &Path) -> Result<Config, ConfigError> {
    let raw: RawConfig = toml::from_str(text).map_err(|e| ConfigError::from_toml(&e, text, origin))?;
    resolve(raw, origin).map_err(|invalid| ConfigError::from_invalid(invalid, text, origin))
}

/// Resolves a path from the file against the configuration file's folder.
pub(crate) fn resolve_path(base: &Path, path: &str) -> PathBuf {
    let path = Path::new(path);
    if path.is_absolute() {
        path.to_path_buf()
    } else {
        base.join(path)
    }
}

fn resolve(raw: RawConfig, origin: &Path) -> Result<Config, Invalid> {
    let root = KeyPath::root();
    let base = origin.parent().unwrap_or(Path::new("")).to_path_buf();
    let site = raw.site.resolve(&root.key("site"), &base)?;
    let broker = raw.broker.resolve(&root.key("broker"), &site, &base)?;
    let storage = raw.storage.resolve(&root.key("storage"), &base)?;
    let publish = raw
        .publish
        .unwrap_or_default()
        .resolve(&root.key("publish"), &site)?;
    let ingest = raw.ingest.unwrap_or_default().resolve(&root.key("ingest"))?;
    let alerts = alerts::parse_alerts(raw.alerts, &root.key("alerts"))?;
    let http = raw.http.unwrap_or_default().resolve(&root.key("http"), &base)?;
    if raw.tanks.is_empty() {
        return Err(Invalid::new(
            root.key("tanks"),
            "no tanks configured: add at least one [[tanks]] table",
        ));
    }
    let mut tanks = Vec::with_capacity(raw.tanks.len());
    let mut ids: HashMap<String, usize> = HashMap::new();
    let mut topics: HashMap<String, (usize, TopicKind)> = HashMap::new();
    let own_filter = format!("{}/#", publish.topic_prefix);
    for (i, raw_tank) in raw.tanks.iter().enumerate() {
        let path = root.key("tanks").index(i);
        let (tank, origins) = raw_tank.resolve(&path, raw.tank_defaults.as_ref(), &ingest)?;
        alerts::resolve_for_tank(&alerts, tank.species.as_deref(), &tank.alerts, &path)?;
        if let Some(first) = ids.insert(tank.id.clone(), i) {
            return Err(Invalid::new(
                path.key("id"),
                format!("duplicate tank id `{}` (first used by tanks[{first}])", tank.id),
            ));
        }
        for (kind, binding) in tank.topics.iter() {
            let key = origins.key(kind).cloned().unwrap_or_else(|| path.clone());
            if let Some((other, other_kind)) = topics.get(&binding.topic) {
                return Err(Invalid::new(
                    key,
                    format!(
                        "topic `{}` is already the {} topic of tank `{}`",
                        binding.topic,
                        other_kind.as_str(),
                        raw.tanks[*other].id_for_messages()
                    ),
                ));
            }
            if topics::filter_matches(&own_filter, &binding.topic) {
                return Err(Invalid::new(
                    key,
                    format!(
                        "topic `{}` lies under publish.topic_prefix `{}`, where halotank publishes",
                        binding.topic, publish.topic_prefix
                    ),
                ));
            }
            topics.insert(binding.topic.clone(), (i, kind));
        }
        tanks.push(tank);
    }
    for (i, filter) in ingest.subscribe.iter().enumerate() {
        if topics::filters_overlap(filter, &own_filter) {
            return Err(Invalid::new(
                root.key("ingest").key("subscribe").index(i),
                format!(
                    "filter `{filter}` also matches halotank's own publications under `{}`",
                    publish.topic_prefix
                ),
            ));
        }
    }
    Ok(Config {
        origin: origin.to_path_buf(),
        site,
        broker,
        storage,
        publish,
        ingest,
        tanks,
        alerts,
        http,
    })
}

#[cfg(test)]
mod tests;
