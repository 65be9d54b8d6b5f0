//! Alerting: a pure engine (no I/O, an injected clock) that judges each tank's readings against its
//! limits and tells staff in time, without flapping.
//!
//! - [`AlertEngine`] ([`engine`]): readings, clock ticks, schedule signals and acknowledgements in,
//!   [`AlertEvent`]s out; open alerts restored after a restart.
//! - [`AlertLimits`] ([`limits`]): a tank's numbers (mapped from its species profile by the caller).
//! - [`AlertSettings`] ([`settings`]): hysteresis, durations, re-notify, thresholds and enable flags,
//!   layered global < species < tank; defaults in [`defaults`].
//! - [`detector`]: a rule's condition over time (hysteresis, minimum duration, clear hold).
//! - [`lifecycle`]: the alert record, raised -> acknowledged -> cleared.
//! - [`rules`]: one file per rule kind.
//!
//! Alerts are an aid to staff: species limits are indicative, probes must be checked against a calibrated
//! meter, and halotank does not replace a tank's own life-support alarm.
pub mod defaults;
pub mod delivery;
pub mod detector;
pub mod engine;
pub mod event;
pub mod kind;
pub mod lifecycle;
pub mod limits;
pub mod message;
pub mod observation;
pub mod reading;
pub mod ring;
pub mod rules;
pub mod settings;
mod tank;

#[cfg(test)]
mod tests;

pub use engine::{AlertEngine, AlertRef, EngineCounters, EngineError, RestoreReport, TankSlot};
pub use event::AlertEvent;
pub use kind::{AlertId, AlertKey, AlertKind, Severity};
pub use lifecycle::{AckError, Acknowledgement, AlertRecord, AlertState};
pub use limits::{AlertLimits, Bounds, LimitsError, RateLimit, RateOfChange, SlowerBelow};
pub use observation::StepAction;
pub use reading::AlertReading;
pub use rules::schedule::ScheduleSignal;
pub use settings::{AlertSettings, AlertSettingsError, ResolvedAlertSettings, RuleLayer, RuleSettings};
