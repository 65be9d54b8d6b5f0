//! `AlertSettings`: how the rules behave (hysteresis, durations, re-notify, thresholds, enable flags),
//! layered global < species < tank, with every default in [`super::defaults`].
//!
//! The same shape is used at each level; every key is optional and a more specific level wins key by key
//! (per rule, per field). TOML shape (as `[alerts]`, a species' `[alerts]` or a tank's `[tanks.alerts]`):
//!
//! ```toml
//! [alerts]
//! salinity_hysteresis_sp = 0.3            # clear this far inside a salinity range
//! temperature_hysteresis_c = 0.3          # clear this far inside a temperature range
//! rate_window_s = 1800                    # sliding window of the salinity-rate fit
//! rate_min_span_s = 600                   # shortest span the rate is fitted over
//! rate_clear_fraction = 0.7               # rate alert clears at <= this fraction of the maximum
//! rate_percent_floor_sp = 1.0             # a %/h maximum applies to at least this SP
//! stale_multiple = 3.0                    # stale after this many expected intervals
//! stale_clear_multiple = 1.5              # stale clears once readings are at most this many intervals old
//! spike_window_readings = 9               # median of this many previous readings (3..=63)
//! spike_threshold_sp = 1.0                # spike: this far from the median SP
//! spike_threshold_c = 1.0                 # spike: this far from the median temperature
//! spike_clear_fraction = 0.5              # spike clears within this fraction of the thresholds
//! flat_line_s = 1800                      # identical conductivity for this long ...
//! flat_line_min_readings = 5              # ... and at least this many readings
//! flat_line_tolerance_ms_cm = 0.0         # "identical": within this (0 = exactly equal)
//! inconsistent_readings = 10              # readings of the stuck-conductivity check (2..=63)
//! inconsistent_temperature_change_c = 1.0 # temperature range that must move the conductivity
//! inconsistent_conductivity_tolerance_percent = 0.1
//! inconsistent_min_conductivity_ms_cm = 5.0
//! max_temperature_rate_c_per_min = 1.0    # faster than this the temperature reading is not believable
//! temperature_rate_span_s = 60            # measured over at least this span
//! freezing_margin_c = 0.5                 # near-freezing within this of the freezing point
//! freezing_hysteresis_c = 0.2             # clears this much further above
//!
//! [alerts.rules.salinity_optimum]         # one table per rule kind (see `AlertKind::as_str`)
//! enabled = true
//! min_duration_s = 300                    # condition must hold this long before raising
//! renotify_s = 3600                       # repeat while unacknowledged (0 = never)
//! clear_after_s = 0                       # clear condition must hold this long before clearing
//! ```
use serde::{Deserialize, Serialize};
use thiserror::Error;

use super::defaults;
use super::kind::{AlertKind, KIND_COUNT};

/// A setting that cannot be used. `key` is relative to the settings table (`rules.probe_spike.renotify_s`).
#[derive(Debug, Clone, PartialEq, Eq, Error)]
#[error("key `{key}`: {message}")]
pub struct AlertSettingsError {
    /// The key at fault, relative to the `[alerts]` table.
    pub key: String,
    /// What is wrong.
    pub message: String,
}

fn invalid(key: &str, message: impl Into<String>) -> AlertSettingsError {
    AlertSettingsError {
        key: key.to_string(),
        message: message.into(),
    }
}

fn any_bool(_key: &str, _v: bool) -> Result<(), AlertSettingsError> {
    Ok(())
}

fn positive(key: &str, v: f64) -> Result<(), AlertSettingsError> {
    if v.is_finite() && v > 0.0 {
        Ok(())
    } else {
        Err(invalid(key, format!("{v} must be a positive number")))
    }
}

fn non_negative(key: &str, v: f64) -> Result<(), AlertSettingsError> {
    if v.is_finite() && v >= 0.0 {
        Ok(())
    } else {
        Err(invalid(key, format!("{v} must be zero or a positive number")))
    }
}

fn fraction(key: &str, v: f64) -> Result<(), AlertSettingsError> {
    if v.is_finite() && v > 0.0 && v < 1.0 {
        Ok(())
    } else {
        Err(invalid(key, format!("{v} must lie between 0 and 1 (exclusive)")))
    }
}

fn at_least_one(key: &str, v: u64) -> Result<(), AlertSettingsError> {
    if v >= 1 {
        Ok(())
    } else {
        Err(invalid(key, "must be at least 1"))
    }
}

fn readings_3_to_63(key: &str, v: usize) -> Result<(), AlertSettingsError> {
    if (3..=63).contains(&v) {
        Ok(())
    } else {
        Err(invalid(key, format!("{v} must be 3 to 63 readings")))
    }
}

fn readings_2_to_63(key: &str, v: usize) -> Result<(), AlertSettingsError> {
    if (2..=63).contains(&v) {
        Ok(())
    } else {
        Err(invalid(key, format!("{v} must be 2 to 63 readings")))
    }
}

fn count_at_least_two(key: &str, v: u32) -> Result<(), AlertSettingsError> {
    if v >= 2 {
        Ok(())
    } else {
        Err(invalid(key, format!("{v} must be at least 2 readings")))
    }
}

fn stale_multiple_check(key: &str, v: f64) -> Result<(), AlertSettingsError> {
    if v.is_finite() && v > 1.0 {
        Ok(())
    } else {
        Err(invalid(key, format!("{v} must be more than 1 expected interval")))
    }
}

macro_rules! scalar_settings {
    ($( $(#[$doc:meta])* $name:ident : $ty:ty = $default:expr, $check:path; )*) => {
        /// One layer of alert settings as written (global, species or tank); every key optional.
        #[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
        #[serde(deny_unknown_fields)]
        pub struct AlertSettings {
            $( $(#[$doc])* #[serde(default, skip_serializing_if = "Option::is_none")] pub $name: Option<$ty>, )*
            /// Per-rule settings, one table per kind.
            #[serde(default)]
            pub rules: RuleLayers,
        }

        /// Alert settings with every value filled in and checked.
        #[derive(Debug, Clone, PartialEq)]
        pub struct ResolvedAlertSettings {
            $( $(#[$doc])* pub $name: $ty, )*
            /// Per-rule settings, indexed by [`AlertKind::index`].
            pub rules: [RuleSettings; KIND_COUNT],
        }

        impl AlertSettings {
            /// This layer with `over`'s values winning where `over` has them.
            pub fn overlaid_with(&self, over: &AlertSettings) -> AlertSettings {
                AlertSettings {
                    $( $name: over.$name.or(self.$name), )*
                    rules: self.rules.overlaid_with(&over.rules),
                }
            }

            fn check_scalars(&self) -> Result<(), AlertSettingsError> {
                $( if let Some(v) = self.$name { $check(stringify!($name), v)?; } )*
                Ok(())
            }

            fn resolve_scalars(&self, rules: [RuleSettings; KIND_COUNT]) -> ResolvedAlertSettings {
                ResolvedAlertSettings { $( $name: self.$name.unwrap_or($default), )* rules }
            }
        }
    };
}

scalar_settings! {
    /// Hysteresis of the salinity ranges, SP.
    salinity_hysteresis_sp: f64 = defaults::SALINITY_HYSTERESIS_SP, non_negative;
    /// Hysteresis of the temperature ranges, °C.
    temperature_hysteresis_c: f64 = defaults::TEMPERATURE_HYSTERESIS_C, non_negative;
    /// Sliding window of the salinity-rate fit, s.
    rate_window_s: u64 = defaults::RATE_WINDOW_S, at_least_one;
    /// Shortest span of readings the rate is fitted over, s.
    rate_min_span_s: u64 = defaults::RATE_MIN_SPAN_S, at_least_one;
    /// The rate alert clears at or below this fraction of the maximum.
    rate_clear_fraction: f64 = defaults::RATE_CLEAR_FRACTION, fraction;
    /// A maximum in percent per hour applies to at least this practical salinity.
    rate_percent_floor_sp: f64 = defaults::RATE_PERCENT_FLOOR_SP, positive;
    /// Probe stale after this many expected intervals without a reading.
    stale_multiple: f64 = defaults::STALE_MULTIPLE, stale_multiple_check;
    /// Stale clears once the newest reading is at most this many intervals old.
    stale_clear_multiple: f64 = defaults::STALE_CLEAR_MULTIPLE, positive;
    /// Previous readings whose median a reading is compared with.
    spike_window_readings: usize = defaults::SPIKE_WINDOW_READINGS, readings_3_to_63;
    /// Spike threshold on practical salinity, SP.
    spike_threshold_sp: f64 = defaults::SPIKE_THRESHOLD_SP, positive;
    /// Spike threshold on temperature, °C.
    spike_threshold_c: f64 = defaults::SPIKE_THRESHOLD_C, positive;
    /// A spike alert clears within this fraction of the thresholds.
    spike_clear_fraction: f64 = defaults::SPIKE_CLEAR_FRACTION, fraction;
    /// Identical conductivity for this long is a flat line, s.
    flat_line_s: u64 = defaults::FLAT_LINE_S, at_least_one;
    /// ... over at least this many readings.
    flat_line_min_readings: u32 = defaults::FLAT_LINE_MIN_READINGS, count_at_least_two;
    /// Readings within this of each other are identical, mS/cm.
    flat_line_tolerance_ms_cm: f64 = defaults::FLAT_LINE_TOLERANCE_MS_CM, non_negative;
    /// Readings of the stuck-conductivity check.
    inconsistent_readings: usize = defaults::INCONSISTENT_READINGS, readings_2_to_63;
    /// Temperature range that must move the conductivity, °C.
    inconsistent_temperature_change_c: f64 = defaults::INCONSISTENT_TEMPERATURE_CHANGE_C, positive;
    /// Conductivity range (percent of its mean) at or below which it counts as unchanged.
    inconsistent_conductivity_tolerance_percent: f64 =
        defaults::INCONSISTENT_CONDUCTIVITY_TOLERANCE_PERCENT, positive;
    /// The stuck-conductivity check applies at or above this mean conductivity, mS/cm.
    inconsistent_min_conductivity_ms_cm: f64 = defaults::INCONSISTENT_MIN_CONDUCTIVITY_MS_CM, non_negative;
    /// Fastest believable change of water temperature, °C/min.
    max_temperature_rate_c_per_min: f64 = defaults::MAX_TEMPERATURE_RATE_C_PER_MIN, positive;
    /// The temperature change is measured over at least this span, s.
    temperature_rate_span_s: u64 = defaults::TEMPERATURE_RATE_SPAN_S, at_least_one;
    /// Near-freezing within this of the freezing point, °C.
    freezing_margin_c: f64 = defaults::FREEZING_MARGIN_C, non_negative;
    /// Near-freezing clears this much further above, °C.
    freezing_hysteresis_c: f64 = defaults::FREEZING_HYSTERESIS_C, positive;
    /// A tank is off its acclimation schedule beyond this distance from the setpoint, SP.
    schedule_band_sp: f64 = defaults::SCHEDULE_BAND_SP, positive;
    /// Pause the tank's running schedule when a critical alert is raised on it.
    schedule_pause_on_critical: bool = defaults::SCHEDULE_PAUSE_ON_CRITICAL, any_bool;
}

/// One rule's settings as written; every key optional.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RuleLayer {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub enabled: Option<bool>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub min_duration_s: Option<u64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub renotify_s: Option<u64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub clear_after_s: Option<u64>,
}

impl RuleLayer {
    fn overlaid_with(&self, over: &RuleLayer) -> RuleLayer {
        RuleLayer {
            enabled: over.enabled.or(self.enabled),
            min_duration_s: over.min_duration_s.or(self.min_duration_s),
            renotify_s: over.renotify_s.or(self.renotify_s),
            clear_after_s: over.clear_after_s.or(self.clear_after_s),
        }
    }
}

/// One rule's settings, filled in.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct RuleSettings {
    /// The rule is evaluated.
    pub enabled: bool,
    /// The raise condition must hold this long before the alert is raised, s.
    pub min_duration_s: u64,
    /// Repeat interval while raised and unacknowledged, s (0: never repeat).
    pub renotify_s: u64,
    /// The clear condition must hold this long before the alert clears, s.
    pub clear_after_s: u64,
}

macro_rules! rule_layers {
    ($( $field:ident => $kind:ident, )*) => {
        /// The `[alerts.rules]` table: one optional table per rule kind.
        #[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
        #[serde(deny_unknown_fields)]
        pub struct RuleLayers {
            $( #[serde(default, skip_serializing_if = "Option::is_none")] pub $field: Option<RuleLayer>, )*
        }

        impl RuleLayers {
            /// The layer of one kind.
            pub fn get(&self, kind: AlertKind) -> Option<&RuleLayer> {
                match kind { $( AlertKind::$kind => self.$field.as_ref(), )* }
            }

            /// The layer of one kind, mutable (created empty if missing).
            pub fn get_mut(&mut self, kind: AlertKind) -> &mut RuleLayer {
                match kind { $( AlertKind::$kind => self.$field.get_or_insert_with(RuleLayer::default), )* }
            }

            fn overlaid_with(&self, over: &RuleLayers) -> RuleLayers {
                RuleLayers {
                    $( $field: match (self.$field, over.$field) {
                        (Some(a), Some(b)) => Some(a.overlaid_with(&b)),
                        (a, b) => b.or(a),
                    }, )*
                }
            }
        }
    };
}

rule_layers! {
    salinity_optimum => SalinityOptimum,
    salinity_tolerance => SalinityTolerance,
    temperature_optimum => TemperatureOptimum,
    temperature_tolerance => TemperatureTolerance,
    salinity_rate => SalinityRate,
    probe_stale => ProbeStale,
    probe_spike => ProbeSpike,
    probe_flat_line => ProbeFlatLine,
    probe_inconsistent => ProbeInconsistent,
    near_freezing => NearFreezing,
    schedule_off => ScheduleOff,
    schedule_step_due => ScheduleStepDue,
}

/// Longest duration accepted in any `*_s` rule key: 30 days.
const MAX_DURATION_S: u64 = 30 * 24 * 3600;

impl AlertSettings {
    /// Merges layers, least specific first (global, species, tank): later layers win key by key.
    pub fn layered(layers: &[&AlertSettings]) -> AlertSettings {
        layers
            .iter()
            .fold(AlertSettings::default(), |acc, layer| acc.overlaid_with(layer))
    }

    /// Checks the values this layer sets (use on each layer, so an error names the layer's own key).
    pub fn check(&self) -> Result<(), AlertSettingsError> {
        self.check_scalars()?;
        for kind in AlertKind::ALL {
            let Some(rule) = self.rules.get(kind) else {
                continue;
            };
            for (field, value) in [
                ("min_duration_s", rule.min_duration_s),
                ("renotify_s", rule.renotify_s),
                ("clear_after_s", rule.clear_after_s),
            ] {
                if let Some(v) = value {
                    if v > MAX_DURATION_S {
                        return Err(invalid(
                            &format!("rules.{}.{field}", kind.as_str()),
                            format!("{v} s is longer than 30 days"),
                        ));
                    }
                }
            }
        }
        Ok(())
    }

    /// Fills in the defaults and checks the result (including keys that depend on each other).
    pub fn resolve(&self) -> Result<ResolvedAlertSettings, AlertSettingsError> {
        self.check()?;
        let rules = AlertKind::ALL.map(|kind| {
            let (enabled, min_duration_s, renotify_s, clear_after_s) = defaults::rule(kind);
            let layer = self.rules.get(kind).copied().unwrap_or_default();
            RuleSettings {
                enabled: layer.enabled.unwrap_or(enabled),
                min_duration_s: layer.min_duration_s.unwrap_or(min_duration_s),
                renotify_s: layer.renotify_s.unwrap_or(renotify_s),
                clear_after_s: layer.clear_after_s.unwrap_or(clear_after_s),
            }
        });
        let resolved = self.resolve_scalars(rules);
        if resolved.rate_min_span_s > resolved.rate_window_s {
            return Err(invalid(
                "rate_min_span_s",
                format!(
                    "{} s is longer than rate_window_s ({} s)",
                    resolved.rate_min_span_s, resolved.rate_window_s
                ),
            ));
        }
        if resolved.stale_clear_multiple >= resolved.stale_multiple {
            return Err(invalid(
                "stale_clear_multiple",
                format!(
                    "{} must be less than stale_multiple ({}): the clear level lies inside the raise level",
                    resolved.stale_clear_multiple, resolved.stale_multiple
                ),
            ));
        }
        Ok(resolved)
    }
}

impl Default for ResolvedAlertSettings {
    /// Every default.
    fn default() -> Self {
        AlertSettings::default().resolve_scalars(AlertKind::ALL.map(|kind| {
            let (enabled, min_duration_s, renotify_s, clear_after_s) = defaults::rule(kind);
            RuleSettings {
                enabled,
                min_duration_s,
                renotify_s,
                clear_after_s,
            }
        }))
    }
}

impl ResolvedAlertSettings {
    /// The settings of one rule.
    pub fn rule(&self, kind: AlertKind) -> &RuleSettings {
        &self.rules[kind.index()]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn defaults_resolve_and_match_the_defaults_file() {
        let resolved = AlertSettings::default().resolve().unwrap();
        assert_eq!(resolved, ResolvedAlertSettings::default());
        assert_eq!(resolved.spike_window_readings, defaults::SPIKE_WINDOW_READINGS);
        assert_eq!(resolved.rule(AlertKind::ProbeSpike).clear_after_s, 600);
    }

    #[test]
    fn layers_merge_global_species_tank_key_by_key() {
        let global: AlertSettings = toml::from_str(
            "freezing_margin_c = 1.0\nstale_multiple = 4.0\n\
             [rules.salinity_optimum]\nmin_duration_s = 600\nrenotify_s = 7200\n",
        )
        .unwrap();
        let species: AlertSettings =
            toml::from_str("freezing_margin_c = 0.8\n[rules.salinity_optimum]\nmin_duration_s = 120\n")
                .unwrap();
        let tank: AlertSettings = toml::from_str(
            "[rules.salinity_optimum]\nenabled = false\n[rules.probe_spike]\nrenotify_s = 0\n",
        )
        .unwrap();
        let merged = AlertSettings::layered(&[&global, &species, &tank])
            .resolve()
            .unwrap();
        assert_eq!(merged.freezing_margin_c, 0.8);
        assert_eq!(merged.stale_multiple, 4.0);
        let rule = merged.rule(AlertKind::SalinityOptimum);
        assert_eq!(
            *rule,
            RuleSettings {
                enabled: false,
                min_duration_s: 120,
                renotify_s: 7200,
                clear_after_s: 0
            }
        );
        assert_eq!(merged.rule(AlertKind::ProbeSpike).renotify_s, 0);
        assert_eq!(merged.rule(AlertKind::ProbeSpike).clear_after_s, 600);
    }

    #[test]
    fn bad_values_name_their_key() {
        let unknown = toml::from_str::<AlertSettings>("spike_treshold_sp = 1.0\n");
        assert!(unknown.is_err());
        let err = toml::from_str::<AlertSettings>("spike_clear_fraction = 1.5\n")
            .unwrap()
            .check()
            .unwrap_err();
        assert_eq!(err.key, "spike_clear_fraction");
        let err = toml::from_str::<AlertSettings>("[rules.probe_stale]\nrenotify_s = 99999999\n")
            .unwrap()
            .check()
            .unwrap_err();
        assert_eq!(err.key, "rules.probe_stale.renotify_s");
        let err = toml::from_str::<AlertSettings>("rate_window_s = 300\n")
            .unwrap()
            .resolve()
            .unwrap_err();
        assert_eq!(err.key, "rate_min_span_s");
        let err = toml::from_str::<AlertSettings>("stale_multiple = 1.2\n")
            .unwrap()
            .resolve()
            .unwrap_err();
        assert_eq!(err.key, "stale_clear_multiple");
        let err = toml::from_str::<AlertSettings>("spike_window_readings = 64\n")
            .unwrap()
            .check()
            .unwrap_err();
        assert_eq!(err.key, "spike_window_readings");
    }
}
