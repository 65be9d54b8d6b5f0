//! Payload parsers: JSON objects, SenML packs and bare numbers, each into [`Sample`]s.
//!
//! Parsers only read the payload; range, time and pairing checks happen in [`super::checks`] and
//! [`super::pairing`].
use chrono::{DateTime, Utc};

use crate::config::TopicKind;
use crate::seawater::ConductivityUnit;

use super::outcome::RejectReason;

pub mod json;
pub mod number;
pub mod senml;
pub mod time;

/// What a sample measures.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Quantity {
    /// Electrical conductivity (unit in [`Sample::conductivity_unit`] or the tank's configured unit).
    Conductivity,
    /// Water temperature, °C.
    Temperature,
}

/// Which quantities a topic carries.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Expect {
    /// Both in one message (combined topic).
    Both,
    /// Conductivity only.
    Conductivity,
    /// Temperature only.
    Temperature,
}

impl Expect {
    /// What a topic kind carries.
    pub fn of(kind: TopicKind) -> Self {
        match kind {
            TopicKind::Combined => Self::Both,
            TopicKind::Conductivity => Self::Conductivity,
            TopicKind::Temperature => Self::Temperature,
        }
    }

    /// True when the topic carries this quantity.
    pub fn wants(self, quantity: Quantity) -> bool {
        matches!(
            (self, quantity),
            (Self::Both, _)
                | (Self::Conductivity, Quantity::Conductivity)
                | (Self::Temperature, Quantity::Temperature)
        )
    }
}

/// One parsed value.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Sample {
    /// What it measures.
    pub quantity: Quantity,
    /// The value: conductivity in its unit, temperature in °C. Always finite.
    pub value: f64,
    /// For conductivity: the unit the payload gave, `None` for the tank's configured unit.
    pub conductivity_unit: Option<ConductivityUnit>,
    /// The reading's time from the payload; `None` means the time it was received.
    pub time: Option<DateTime<Utc>>,
}

/// Why a payload could not be read.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PayloadError {
    /// Stable reason code.
    pub reason: RejectReason,
    /// What exactly, in words.
    pub detail: String,
}

impl PayloadError {
    /// An error with a reason and detail.
    pub fn new(reason: RejectReason, detail: impl Into<String>) -> Self {
        Self {
            reason,
            detail: detail.into(),
        }
    }
}

/// Checks a number is finite.
pub(crate) fn finite(value: f64, what: &str) -> Result<f64, PayloadError> {
    if value.is_finite() {
        Ok(value)
    } else {
        Err(PayloadError::new(
            RejectReason::NonFinite,
            format!("{what} is {value}"),
        ))
    }
}

/// True for spellings of NaN and infinity (`NaN`, `inf`, `-Infinity`, ...), case-insensitive.
pub(crate) fn names_non_finite(text: &str) -> bool {
    let t = text.trim().trim_start_matches(['+', '-']).to_ascii_lowercase();
    matches!(t.as_str(), "nan" | "inf" | "infinity")
}
