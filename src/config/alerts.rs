//! The alert settings layers of the configuration: `[alerts]` (global), `[alerts.species.<id>]` (per
//! species profile id) and `[tanks.alerts]` (per tank). Each layer is an [`AlertSettings`]; a tank's
//! effective settings are global < species < tank, resolved and checked at load time so a bad value
//! names its file, line and key.
use std::collections::BTreeMap;

use crate::alerts::delivery::DeliverySettings;
use crate::alerts::{AlertSettings, AlertSettingsError, ResolvedAlertSettings};

use super::error::Invalid;
use super::key_path::KeyPath;

/// The site-wide alert layers.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct AlertsConfig {
    /// `[alerts]` without its `species` table.
    pub global: AlertSettings,
    /// `[alerts.species.<id>]`, by species profile id.
    pub species: BTreeMap<String, AlertSettings>,
    /// `[alerts.delivery]`: webhook and exec-hook delivery of alert events (none when absent).
    pub delivery: Option<DeliverySettings>,
}

impl AlertsConfig {
    /// A tank's effective settings: global < its species' layer < `tank`.
    pub fn layered(&self, species: Option<&str>, tank: &AlertSettings) -> AlertSettings {
        let empty = AlertSettings::default();
        let species = species.and_then(|id| self.species.get(id)).unwrap_or(&empty);
        AlertSettings::layered(&[&self.global, species, tank])
    }
}

/// Parses `[alerts]` as written (a TOML table with an optional `species` sub-table).
pub(crate) fn parse_alerts(raw: Option<toml::Table>, path: &KeyPath) -> Result<AlertsConfig, Invalid> {
    let Some(mut table) = raw else {
        return Ok(AlertsConfig::default());
    };
    let delivery = match table.remove("delivery") {
        None => None,
        Some(value) => {
            let key = path.key("delivery");
            let settings: DeliverySettings = value
                .try_into()
                .map_err(|e: toml::de::Error| Invalid::new(key.clone(), e.message().to_string()))?;
            settings
                .validate()
                .map_err(|e| Invalid::new(key, e.to_string()))?;
            Some(settings)
        }
    };
    let mut species = BTreeMap::new();
    if let Some(value) = table.remove("species") {
        let toml::Value::Table(by_id) = value else {
            return Err(Invalid::new(
                path.key("species"),
                "must be a table of `[alerts.species.<id>]` tables",
            ));
        };
        for (id, layer) in by_id {
            let key = path.key("species").key(&id);
            let toml::Value::Table(layer) = layer else {
                return Err(Invalid::new(key, "must be a table of alert settings"));
            };
            species.insert(id, settings_from_table(layer, &key)?);
        }
    }
    let global = settings_from_table(table, path)?;
    Ok(AlertsConfig {
        global,
        species,
        delivery,
    })
}

/// One layer from a TOML table, checked on its own.
pub(crate) fn settings_from_table(table: toml::Table, path: &KeyPath) -> Result<AlertSettings, Invalid> {
    let settings: AlertSettings = toml::Value::Table(table)
        .try_into()
        .map_err(|e: toml::de::Error| Invalid::new(path.clone(), e.message().to_string()))?;
    settings.check().map_err(|e| settings_error(e, path))?;
    Ok(settings)
}

/// Resolves the layers for one tank; an error points at the tank's `alerts` key.
pub(crate) fn resolve_for_tank(
    alerts: &AlertsConfig,
    species: Option<&str>,
    tank: &AlertSettings,
    path: &KeyPath,
) -> Result<ResolvedAlertSettings, Invalid> {
    alerts
        .layered(species, tank)
        .resolve()
        .map_err(|e| settings_error(e, &path.key("alerts")))
}

/// An [`AlertSettingsError`] (key relative to its table) as a configuration error at the full key.
fn settings_error(err: AlertSettingsError, path: &KeyPath) -> Invalid {
    let key = err
        .key
        .split('.')
        .filter(|s| !s.is_empty())
        .fold(path.clone(), |p, segment| p.key(segment));
    Invalid::new(key, err.message)
}
