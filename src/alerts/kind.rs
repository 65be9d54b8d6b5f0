//! What an alert is about: its kind, its severity and its stable key (tank, kind).
use std::fmt;

use serde::{Deserialize, Serialize};

/// How urgent an alert is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Severity {
    /// Something to do, nothing wrong (an acclimation step is due).
    Info,
    /// Outside the comfortable range, or a probe looks wrong.
    Warning,
    /// Outside what the animals tolerate, or close to it.
    Critical,
}

impl Severity {
    /// The spelling used in JSON and logs.
    pub fn as_str(self) -> &'static str {
        match self {
            Self::Info => "info",
            Self::Warning => "warning",
            Self::Critical => "critical",
        }
    }

    /// Whether an alert of this severity that clears before anyone acknowledged it stays open until then.
    pub fn holds_until_acknowledged(self) -> bool {
        self == Self::Critical
    }
}

impl fmt::Display for Severity {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// The rule an alert comes from. The `as_str` spellings are stable: they are the keys under
/// `[alerts.rules]` and the `kind` of stored alerts.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum AlertKind {
    /// Practical salinity outside the species optimum.
    SalinityOptimum,
    /// Practical salinity outside the species tolerance.
    SalinityTolerance,
    /// Temperature outside the species optimum.
    TemperatureOptimum,
    /// Temperature outside the species tolerance.
    TemperatureTolerance,
    /// Salinity changing faster than the species maximum safe rate.
    SalinityRate,
    /// No accepted reading for a multiple of the expected interval.
    ProbeStale,
    /// A reading far from the recent median.
    ProbeSpike,
    /// Identical conductivity readings for too long.
    ProbeFlatLine,
    /// Conductivity and temperature that cannot both be right.
    ProbeInconsistent,
    /// Water within a margin of its freezing point.
    NearFreezing,
    /// The tank is off its acclimation schedule (signalled by the planner).
    ScheduleOff,
    /// An acclimation step is due (signalled by the planner).
    ScheduleStepDue,
}

/// Number of alert kinds.
pub const KIND_COUNT: usize = 12;

impl AlertKind {
    /// Every kind, in evaluation and display order.
    pub const ALL: [AlertKind; KIND_COUNT] = [
        Self::SalinityOptimum,
        Self::SalinityTolerance,
        Self::TemperatureOptimum,
        Self::TemperatureTolerance,
        Self::SalinityRate,
        Self::ProbeStale,
        Self::ProbeSpike,
        Self::ProbeFlatLine,
        Self::ProbeInconsistent,
        Self::NearFreezing,
        Self::ScheduleOff,
        Self::ScheduleStepDue,
    ];

    /// Position in [`AlertKind::ALL`].
    pub fn index(self) -> usize {
        self as usize
    }

    /// The stable spelling (configuration key, stored `kind`).
    pub fn as_str(self) -> &'static str {
        match self {
            Self::SalinityOptimum => "salinity_optimum",
            Self::SalinityTolerance => "salinity_tolerance",
            Self::TemperatureOptimum => "temperature_optimum",
            Self::TemperatureTolerance => "temperature_tolerance",
            Self::SalinityRate => "salinity_rate",
            Self::ProbeStale => "probe_stale",
            Self::ProbeSpike => "probe_spike",
            Self::ProbeFlatLine => "probe_flat_line",
            Self::ProbeInconsistent => "probe_inconsistent",
            Self::NearFreezing => "near_freezing",
            Self::ScheduleOff => "schedule_off",
            Self::ScheduleStepDue => "schedule_step_due",
        }
    }

    /// The kind with this spelling.
    pub fn parse(text: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|k| k.as_str() == text)
    }

    /// The severity of every alert of this kind.
    pub fn severity(self) -> Severity {
        match self {
            Self::SalinityTolerance
            | Self::TemperatureTolerance
            | Self::SalinityRate
            | Self::NearFreezing => Severity::Critical,
            Self::ScheduleStepDue => Severity::Info,
            _ => Severity::Warning,
        }
    }

    /// Whether the alert is about the animals' water (its messages carry the animal-care caution);
    /// otherwise it is about the probe.
    pub fn concerns_animals(self) -> bool {
        !matches!(
            self,
            Self::ProbeStale | Self::ProbeSpike | Self::ProbeFlatLine | Self::ProbeInconsistent
        )
    }
}

impl fmt::Display for AlertKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// The stable identity of an alert condition: at most one open alert per key is linked to its rule.
#[derive(Debug, Clone, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
pub struct AlertKey {
    /// Tank id.
    pub tank: String,
    /// The rule.
    pub kind: AlertKind,
}

impl AlertKey {
    /// Parses `tank/kind` (the [`fmt::Display`] form).
    pub fn parse(text: &str) -> Option<Self> {
        let (tank, kind) = text.rsplit_once('/')?;
        if tank.is_empty() {
            return None;
        }
        Some(Self {
            tank: tank.to_string(),
            kind: AlertKind::parse(kind)?,
        })
    }
}

impl fmt::Display for AlertKey {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}/{}", self.tank, self.kind)
    }
}

/// The number of one alert (one raise of one key), assigned by the engine in increasing order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(transparent)]
pub struct AlertId(pub u64);

impl fmt::Display for AlertId {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn kinds_are_in_index_order_and_round_trip() {
        for (i, kind) in AlertKind::ALL.into_iter().enumerate() {
            assert_eq!(kind.index(), i);
            assert_eq!(AlertKind::parse(kind.as_str()), Some(kind));
            let json = serde_json::to_string(&kind).unwrap();
            assert_eq!(json, format!("\"{}\"", kind.as_str()));
        }
    }

    #[test]
    fn key_round_trips_through_text() {
        let key = AlertKey {
            tank: "kelp-row/b2".into(),
            kind: AlertKind::ProbeFlatLine,
        };
        assert_eq!(key.to_string(), "kelp-row/b2/probe_flat_line");
        assert_eq!(AlertKey::parse(&key.to_string()), Some(key));
        assert_eq!(AlertKey::parse("/salinity_rate"), None);
        assert_eq!(AlertKey::parse("t1/nonsense"), None);
    }
}
