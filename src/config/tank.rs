//! `[[tanks]]` and `[tank_defaults]`: each tank's topics, payload formats, units and probe mode.
//!
//! A tank's own value wins over `[tank_defaults]`, which wins over the built-in default
//! ([`super::defaults`]). A tank's `topics` table, when given, replaces the default topics as a whole
//! (it is not merged per kind); `json_keys` are merged key by key.
use serde::{Deserialize, Serialize};

use crate::seawater::{ConductivityUnit, ProbeMode};
use crate::species::SpeciesOverride;

use super::defaults;
use super::error::Invalid;
use super::ingest::IngestSettings;
use super::key_path::KeyPath;
use super::topics::{check_topic_name, expand_template, ID_PLACEHOLDER};

/// How a topic's payload is encoded.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum PayloadFormat {
    /// A JSON object with configurable keys.
    Json,
    /// A SenML pack (RFC 8428, JSON representation).
    Senml,
    /// A bare ASCII decimal number (per-quantity topics only).
    Number,
}

impl PayloadFormat {
    /// The spelling used in the configuration file.
    pub fn as_str(self) -> &'static str {
        match self {
            Self::Json => "json",
            Self::Senml => "senml",
            Self::Number => "number",
        }
    }
}

/// What a topic of a tank carries.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum TopicKind {
    /// Conductivity and temperature in one message.
    Combined,
    /// Conductivity only; paired with the tank's latest temperature.
    Conductivity,
    /// Temperature only; kept for pairing.
    Temperature,
}

impl TopicKind {
    /// The key naming this kind under `topics`.
    pub fn as_str(self) -> &'static str {
        match self {
            Self::Combined => "combined",
            Self::Conductivity => "conductivity",
            Self::Temperature => "temperature",
        }
    }

    /// Every kind, in display order.
    pub const ALL: [TopicKind; 3] = [Self::Combined, Self::Conductivity, Self::Temperature];
}

/// One concrete topic a tank listens to.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct TopicBinding {
    /// The concrete MQTT topic (templates resolved).
    pub topic: String,
    /// How its payload is encoded.
    pub format: PayloadFormat,
}

/// The topics of a tank: `combined`, and/or `conductivity` with `temperature`.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct TankTopics {
    pub combined: Option<TopicBinding>,
    pub conductivity: Option<TopicBinding>,
    pub temperature: Option<TopicBinding>,
}

impl TankTopics {
    /// The binding of one kind.
    pub fn get(&self, kind: TopicKind) -> Option<&TopicBinding> {
        match kind {
            TopicKind::Combined => self.combined.as_ref(),
            TopicKind::Conductivity => self.conductivity.as_ref(),
            TopicKind::Temperature => self.temperature.as_ref(),
        }
    }

    /// The bindings present, in the order combined, conductivity, temperature.
    pub fn iter(&self) -> impl Iterator<Item = (TopicKind, &TopicBinding)> {
        TopicKind::ALL
            .into_iter()
            .filter_map(|kind| self.get(kind).map(|b| (kind, b)))
    }
}

/// JSON keys of a tank's JSON payloads.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct JsonKeys {
    /// Key of conductivity (in the tank's `conductivity_unit`). A key starting with `/` is a JSON Pointer.
    pub conductivity: String,
    /// Key of temperature (°C).
    pub temperature: String,
    /// Key of the reading's time (RFC 3339 string or Unix seconds); `None` (`time = ""`) ignores times.
    pub time: Option<String>,
}

/// One tank.
#[derive(Debug, Clone, PartialEq)]
pub struct TankConfig {
    /// Stable id (`[a-z0-9_-]`, at most 64 characters).
    pub id: String,
    /// Display name.
    pub name: String,
    /// Water volume, litres.
    pub volume_l: f64,
    /// Sea pressure at the probe, dbar (probe depth; 0 at the surface).
    pub pressure_dbar: f64,
    /// Species profile id in the species library.
    pub species: Option<String>,
    /// Site values merged onto the species profile (`[tanks.species_override]`).
    pub species_override: Option<SpeciesOverride>,
    /// The topics the tank listens to.
    pub topics: TankTopics,
    /// JSON key names.
    pub json_keys: JsonKeys,
    /// Unit the probe reports conductivity in (when the payload does not say).
    pub conductivity_unit: ConductivityUnit,
    /// In-situ conductivity or specific conductance at 25 °C.
    pub probe_mode: ProbeMode,
    /// Expected time between readings, seconds.
    pub expected_interval_s: u64,
    /// `[tanks.alerts]`: this tank's alert settings layer (over the global and species layers).
    pub alerts: crate::alerts::AlertSettings,
}

/// Probe modes as spelled in the file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
enum RawProbeMode {
    #[serde(rename = "in_situ")]
    InSitu,
    #[serde(rename = "specific_conductance_25", alias = "sc25")]
    SpecificConductance25,
}

#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawTopics {
    combined: Option<String>,
    conductivity: Option<String>,
    temperature: Option<String>,
}

#[derive(Debug, Clone, Default, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawJsonKeys {
    conductivity: Option<String>,
    temperature: Option<String>,
    time: Option<String>,
}

/// `[tank_defaults]` as written in the file: settings every tank inherits.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawTankDefaults {
    topics: Option<RawTopics>,
    format: Option<PayloadFormat>,
    conductivity_format: Option<PayloadFormat>,
    temperature_format: Option<PayloadFormat>,
    json_keys: Option<RawJsonKeys>,
    conductivity_unit: Option<String>,
    probe_mode: Option<RawProbeMode>,
    alpha_percent_per_c: Option<f64>,
    expected_interval_s: Option<u64>,
    pressure_dbar: Option<f64>,
}

/// One `[[tanks]]` entry as written in the file.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawTank {
    id: String,
    name: String,
    volume_l: f64,
    species: Option<String>,
    species_override: Option<SpeciesOverride>,
    topics: Option<RawTopics>,
    format: Option<PayloadFormat>,
    conductivity_format: Option<PayloadFormat>,
    temperature_format: Option<PayloadFormat>,
    json_keys: Option<RawJsonKeys>,
    conductivity_unit: Option<String>,
    probe_mode: Option<RawProbeMode>,
    alpha_percent_per_c: Option<f64>,
    expected_interval_s: Option<u64>,
    pressure_dbar: Option<f64>,
    alerts: Option<toml::Table>,
}

/// Where each of a resolved tank's topics was written (for error messages).
#[derive(Debug, Clone)]
pub(crate) struct TopicOrigins {
    pub keys: Vec<(TopicKind, KeyPath)>,
}

impl TopicOrigins {
    pub(crate) fn key(&self, kind: TopicKind) -> Option<&KeyPath> {
        self.keys.iter().find(|(k, _)| *k == kind).map(|(_, p)| p)
    }
}

/// The tank's own value with its key, else the default's with its key.
fn pick<T: Clone>(
    own: &Option<T>,
    inherited: Option<&Option<T>>,
    own_path: &KeyPath,
    defaults_path: &KeyPath,
    key: &str,
) -> Option<(T, KeyPath)> {
    if let Some(value) = own {
        return Some((value.clone(), own_path.key(key)));
    }
    inherited
        .and_then(|v| v.clone())
        .map(|value| (value, defaults_path.key(key)))
}

/// `base` extended by a dotted relative key (`salinity_optimum.min`).
fn key_under(base: &KeyPath, dotted: &str) -> KeyPath {
    dotted.split('.').fold(base.clone(), |path, key| path.key(key))
}

/// Checks a tank id: 1 to 64 characters of `a-z`, `0-9`, `_`, `-`.
pub fn check_tank_id(id: &str) -> Result<(), String> {
    if id.is_empty() || id.len() > 64 {
        return Err("must be 1 to 64 characters".to_string());
    }
    if !id
        .chars()
        .all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '_' || c == '-')
    {
        return Err(format!("`{id}` may use only a-z, 0-9, `_` and `-`"));
    }
    Ok(())
}

impl RawTank {
    pub(crate) fn resolve(
        &self,
        path: &KeyPath,
        defaults: Option<&RawTankDefaults>,
        ingest: &IngestSettings,
    ) -> Result<(TankConfig, TopicOrigins), Invalid> {
        let dpath = KeyPath::root().key("tank_defaults");
        check_tank_id(&self.id).map_err(|m| Invalid::new(path.key("id"), m))?;
        let name = self.name.trim().to_string();
        if name.is_empty() {
            return Err(Invalid::new(path.key("name"), "must not be empty"));
        }
        if !(self.volume_l.is_finite() && self.volume_l > 0.0) {
            return Err(Invalid::new(
                path.key("volume_l"),
                format!("must be a volume greater than 0 litres (got {})", self.volume_l),
            ));
        }
        let pressure = pick(
            &self.pressure_dbar,
            defaults.map(|d| &d.pressure_dbar),
            path,
            &dpath,
            "pressure_dbar",
        );
        let pressure_dbar = match pressure {
            Some((p, key)) if !(p.is_finite() && (0.0..=10_000.0).contains(&p)) => {
                return Err(Invalid::new(key, format!("must be 0 to 10000 dbar (got {p})")));
            }
            Some((p, _)) => p,
            None => defaults::PRESSURE_DBAR,
        };
        let species = match &self.species {
            Some(s) if s.trim().is_empty() => {
                return Err(Invalid::new(path.key("species"), "must not be empty when given"));
            }
            Some(s) => Some(s.trim().to_string()),
            None => None,
        };
        if let Some(o) = &self.species_override {
            let key = path.key("species_override");
            if species.is_none() {
                return Err(Invalid::new(key, "needs a `species` for the tank to override"));
            }
            o.check()
                .map_err(|(sub, message)| Invalid::new(key_under(&key, &sub), message))?;
        }
        let (topics, origins) = self.resolve_topics(path, defaults, &dpath)?;
        let json_keys = self.resolve_json_keys(path, defaults, &dpath)?;
        let conductivity_unit = match pick(
            &self.conductivity_unit,
            defaults.map(|d| &d.conductivity_unit),
            path,
            &dpath,
            "conductivity_unit",
        ) {
            Some((text, key)) => ConductivityUnit::parse(&text).ok_or_else(|| {
                Invalid::new(
                    key,
                    format!("unknown unit `{text}`; use \"S/m\", \"mS/cm\" or \"uS/cm\""),
                )
            })?,
            None => defaults::CONDUCTIVITY_UNIT,
        };
        let probe_mode = self.resolve_probe_mode(path, defaults, &dpath, ingest)?;
        let expected_interval_s = match pick(
            &self.expected_interval_s,
            defaults.map(|d| &d.expected_interval_s),
            path,
            &dpath,
            "expected_interval_s",
        ) {
            Some((0, key)) => return Err(Invalid::new(key, "must be at least 1 s")),
            Some((s, _)) => s,
            None => defaults::EXPECTED_INTERVAL_S,
        };
        Ok((
            TankConfig {
                id: self.id.clone(),
                name,
                volume_l: self.volume_l,
                pressure_dbar,
                species,
                species_override: self.species_override.clone(),
                topics,
                json_keys,
                conductivity_unit,
                probe_mode,
                expected_interval_s,
                alerts: match &self.alerts {
                    Some(table) => super::alerts::settings_from_table(table.clone(), &path.key("alerts"))?,
                    None => crate::alerts::AlertSettings::default(),
                },
            },
            origins,
        ))
    }

    fn resolve_topics(
        &self,
        path: &KeyPath,
        defaults: Option<&RawTankDefaults>,
        dpath: &KeyPath,
    ) -> Result<(TankTopics, TopicOrigins), Invalid> {
        let (raw, topics_path, inherited) = match (&self.topics, defaults.and_then(|d| d.topics.as_ref())) {
            (Some(own), _) => (own, path.key("topics"), false),
            (None, Some(inherited)) => (inherited, dpath.key("topics"), true),
            (None, None) => {
                return Err(Invalid::new(
                    path.clone(),
                    "has no topics: give [tanks.topics] or [tank_defaults.topics]",
                ));
            }
        };
        let own_format = |kind: TopicKind| match kind {
            TopicKind::Combined => None,
            TopicKind::Conductivity => self
                .conductivity_format
                .map(|f| (f, path.key("conductivity_format"))),
            TopicKind::Temperature => self
                .temperature_format
                .map(|f| (f, path.key("temperature_format"))),
        };
        let default_kind_format = |kind: TopicKind| {
            let d = defaults?;
            match kind {
                TopicKind::Combined => None,
                TopicKind::Conductivity => d
                    .conductivity_format
                    .map(|f| (f, dpath.key("conductivity_format"))),
                TopicKind::Temperature => d.temperature_format.map(|f| (f, dpath.key("temperature_format"))),
            }
        };
        let mut topics = TankTopics::default();
        let mut origins = TopicOrigins { keys: Vec::new() };
        for (kind, template) in [
            (TopicKind::Combined, &raw.combined),
            (TopicKind::Conductivity, &raw.conductivity),
            (TopicKind::Temperature, &raw.temperature),
        ] {
            let Some(template) = template else { continue };
            let key = topics_path.key(kind.as_str());
            if inherited && !template.contains(ID_PLACEHOLDER) {
                return Err(Invalid::new(
                    key,
                    format!("a default topic must contain `{ID_PLACEHOLDER}`, or every tank would share it"),
                ));
            }
            let topic = expand_template(template, &self.id).map_err(|m| Invalid::new(key.clone(), m))?;
            check_topic_name(&topic).map_err(|m| Invalid::new(key.clone(), m))?;
            // Tank-level settings beat defaults; per-kind formats beat the general `format`.
            let (format, format_key) = own_format(kind)
                .or_else(|| self.format.map(|f| (f, path.key("format"))))
                .or_else(|| default_kind_format(kind))
                .or_else(|| defaults.and_then(|d| d.format).map(|f| (f, dpath.key("format"))))
                .unwrap_or((defaults::PAYLOAD_FORMAT, key.clone()));
            if kind == TopicKind::Combined && format == PayloadFormat::Number {
                return Err(Invalid::new(
                    format_key,
                    "format `number` carries one quantity; a combined topic needs `json` or `senml`",
                ));
            }
            if let Some((earlier, _)) = topics.iter().find(|(_, b)| b.topic == topic) {
                return Err(Invalid::new(
                    key,
                    format!(
                        "topic `{topic}` is already this tank's {} topic",
                        earlier.as_str()
                    ),
                ));
            }
            let binding = TopicBinding { topic, format };
            match kind {
                TopicKind::Combined => topics.combined = Some(binding),
                TopicKind::Conductivity => topics.conductivity = Some(binding),
                TopicKind::Temperature => topics.temperature = Some(binding),
            }
            origins
                .keys
                .push((kind, if inherited { path.clone() } else { key }));
        }
        match (&topics.conductivity, &topics.temperature) {
            (Some(_), None) => {
                return Err(Invalid::new(
                    topics_path.key("conductivity"),
                    "a conductivity topic needs a temperature topic to pair with (or use `combined`)",
                ));
            }
            (None, Some(_)) => {
                return Err(Invalid::new(
                    topics_path.key("temperature"),
                    "a temperature topic needs a conductivity topic (or use `combined`)",
                ));
            }
            (None, None) if topics.combined.is_none() => {
                return Err(Invalid::new(
                    topics_path,
                    "needs `combined`, or `conductivity` and `temperature`",
                ));
            }
            _ => {}
        }
        for (kind, key) in [
            (TopicKind::Conductivity, "conductivity_format"),
            (TopicKind::Temperature, "temperature_format"),
        ] {
            let given = match kind {
                TopicKind::Conductivity => self.conductivity_format.is_some(),
                _ => self.temperature_format.is_some(),
            };
            if given && topics.get(kind).is_none() {
                return Err(Invalid::new(
                    path.key(key),
                    format!("given, but the tank has no {} topic", kind.as_str()),
                ));
            }
        }
        Ok((topics, origins))
    }

    fn resolve_json_keys(
        &self,
        path: &KeyPath,
        defaults: Option<&RawTankDefaults>,
        dpath: &KeyPath,
    ) -> Result<JsonKeys, Invalid> {
        let own = self.json_keys.clone().unwrap_or_default();
        let inherited = defaults.and_then(|d| d.json_keys.clone()).unwrap_or_default();
        let own_path = path.key("json_keys");
        let defaults_path = dpath.key("json_keys");
        let field = |key: &str, own: &Option<String>, inherited: &Option<String>, builtin: &str| {
            pick(own, Some(inherited), &own_path, &defaults_path, key)
                .unwrap_or_else(|| (builtin.to_string(), own_path.key(key)))
        };
        let (conductivity, c_key) = field(
            "conductivity",
            &own.conductivity,
            &inherited.conductivity,
            defaults::JSON_KEY_CONDUCTIVITY,
        );
        let (temperature, t_key) = field(
            "temperature",
            &own.temperature,
            &inherited.temperature,
            defaults::JSON_KEY_TEMPERATURE,
        );
        let (time, _) = field("time", &own.time, &inherited.time, defaults::JSON_KEY_TIME);
        for (value, key) in [(&conductivity, &c_key), (&temperature, &t_key)] {
            if value.is_empty() {
                return Err(Invalid::new(key.clone(), "must not be empty"));
            }
        }
        if conductivity == temperature {
            return Err(Invalid::new(
                t_key,
                format!("same key `{temperature}` as conductivity"),
            ));
        }
        let time = (!time.is_empty()).then_some(time);
        if time.as_deref() == Some(conductivity.as_str()) || time.as_deref() == Some(temperature.as_str()) {
            return Err(Invalid::new(
                own_path.key("time"),
                "must differ from the value keys",
            ));
        }
        Ok(JsonKeys {
            conductivity,
            temperature,
            time,
        })
    }

    fn resolve_probe_mode(
        &self,
        path: &KeyPath,
        defaults: Option<&RawTankDefaults>,
        dpath: &KeyPath,
        ingest: &IngestSettings,
    ) -> Result<ProbeMode, Invalid> {
        let mode = pick(
            &self.probe_mode,
            defaults.map(|d| &d.probe_mode),
            path,
            dpath,
            "probe_mode",
        )
        .map_or(RawProbeMode::InSitu, |(m, _)| m);
        let alpha = pick(
            &self.alpha_percent_per_c,
            defaults.map(|d| &d.alpha_percent_per_c),
            path,
            dpath,
            "alpha_percent_per_c",
        );
        match mode {
            RawProbeMode::InSitu => {
                if self.alpha_percent_per_c.is_some() {
                    return Err(Invalid::new(
                        path.key("alpha_percent_per_c"),
                        "only applies with probe_mode = \"specific_conductance_25\"",
                    ));
                }
                Ok(ProbeMode::InSitu)
            }
            RawProbeMode::SpecificConductance25 => {
                let (alpha, key) = alpha.unwrap_or((defaults::ALPHA_PERCENT_PER_C, path.key("probe_mode")));
                if !(alpha.is_finite() && alpha > 0.0 && alpha <= 10.0) {
                    return Err(Invalid::new(
                        key,
                        format!("must be above 0 and at most 10 %/°C (got {alpha})"),
                    ));
                }
                // The compensation 1 + α/100·(t − 25) must stay positive over the plausible temperatures.
                let factor = 1.0 + alpha / 100.0 * (ingest.temperature_min_c - 25.0);
                if factor <= 0.0 {
                    return Err(Invalid::new(
                        key,
                        format!(
                            "{alpha} %/°C gives a non-positive compensation factor at {} °C",
                            ingest.temperature_min_c
                        ),
                    ));
                }
                Ok(ProbeMode::SpecificConductance25 {
                    alpha_percent_per_c: alpha,
                })
            }
        }
    }
}

impl RawTank {
    /// The id as written, for messages about other tanks.
    pub(crate) fn id_for_messages(&self) -> &str {
        &self.id
    }
}
