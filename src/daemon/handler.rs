//! One MQTT message in, one storage item out: ingest, derive, assess tonicity against the tank's species,
//! check the tank against its acclimation schedule, and count. No I/O but logging.
use chrono::{DateTime, Utc};

use super::acker::Pending;
use super::alerting::Alerting;
use super::counters::Counters;
use super::tank_state::TankState;
use crate::config::Config;
use crate::ingest::{AcceptedReading, IngestOutcome, Ingestor, LogDecision, LogLimiter, Rejection};
use crate::mqtt::AckToken;
use crate::schedule::{ScheduleTracker, SetpointMessage, TrackerAction};
use crate::seawater::derive::derive_from_conductivity;
use crate::species::{tonicity, SpeciesProfile};
use crate::storage::{ReadingRow, RejectionRow, WriteItem};

/// Rejection code for a reading the science core refused (outside the equations' range).
pub const SCIENCE_REFUSED: &str = "outside_science_range";

/// Log-limiter key for a reading whose tonicity the science core refused (the reading is still stored).
const TONICITY_REFUSED: &str = "tonicity_refused";

/// Seconds between two log lines of the same rejection reason.
const REJECTION_LOG_INTERVAL_S: i64 = 10;

/// Turns messages into storage items and keeps the counts.
#[derive(Debug)]
pub struct MessageHandler {
    ingestor: Ingestor,
    tank_names: Vec<String>,
    /// Each tank's effective species profile, by tank index (`None`: the tank names no species).
    profiles: Vec<Option<SpeciesProfile>>,
    alerting: Alerting,
    /// The open acclimation schedules (off-schedule checks on each reading; progress in the state).
    tracker: ScheduleTracker,
    /// Alert events of handled messages, taken by the daemon with [`MessageHandler::take_alert_events`].
    events: Vec<crate::alerts::AlertEvent>,
    counters: Counters,
    log_limit: LogLimiter<&'static str>,
}

impl MessageHandler {
    /// `profiles[i]` is the effective species profile of `config.tanks[i]` (see
    /// [`SpeciesLibrary::profile_for_tank`](crate::species::SpeciesLibrary::profile_for_tank)).
    pub fn new(
        config: &Config,
        profiles: Vec<Option<SpeciesProfile>>,
        alerting: Alerting,
        tracker: ScheduleTracker,
    ) -> Self {
        Self {
            ingestor: Ingestor::new(config),
            tank_names: config.tanks.iter().map(|t| t.name.clone()).collect(),
            profiles,
            alerting,
            tracker,
            events: Vec::new(),
            counters: Counters::default(),
            log_limit: LogLimiter::new(chrono::Duration::seconds(REJECTION_LOG_INTERVAL_S)),
        }
    }

    pub fn counters(&self) -> &Counters {
        &self.counters
    }

    /// The alert engine (for clock ticks and acknowledgements).
    pub fn alerting_mut(&mut self) -> &mut Alerting {
        &mut self.alerting
    }

    /// The schedule tracker (for the daemon's database polls).
    pub fn tracker_mut(&mut self) -> &mut ScheduleTracker {
        &mut self.tracker
    }

    pub fn tracker(&self) -> &ScheduleTracker {
        &self.tracker
    }

    /// Feeds the tracker's alert signals to the engine (their events join [`Self::take_alert_events`]);
    /// returns the setpoints to publish and the schedules to pause.
    pub fn apply_tracker_actions(
        &mut self,
        actions: Vec<TrackerAction>,
        now: DateTime<Utc>,
    ) -> (Vec<SetpointMessage>, Vec<(i64, String)>) {
        let (mut setpoints, mut pauses) = (Vec::new(), Vec::new());
        for action in actions {
            match action {
                TrackerAction::Setpoint(message) => setpoints.push(message),
                TrackerAction::Pause { schedule_id, tank_id } => pauses.push((schedule_id, tank_id)),
                TrackerAction::Signal { tank_id, signal } => {
                    let events = self.alerting.on_schedule(&tank_id, signal, now);
                    self.events.extend(events);
                }
            }
        }
        (setpoints, pauses)
    }

    /// The alert events raised by the messages handled since the last call.
    pub fn take_alert_events(&mut self) -> Vec<crate::alerts::AlertEvent> {
        std::mem::take(&mut self.events)
    }

    /// The storage item for one message; `ack` is released once that item is committed.
    pub fn handle(
        &mut self,
        topic: &str,
        payload: &[u8],
        received_at: DateTime<Utc>,
        ack: Option<AckToken>,
    ) -> WriteItem<Pending> {
        match self.ingestor.handle(topic, payload, received_at) {
            IngestOutcome::Accepted(readings) => match self.derive_all(&readings) {
                Ok(rows) => {
                    self.counters.accepted_messages += 1;
                    self.counters.readings += rows.len() as u64;
                    // The message's arrival time is the engine's clock for the readings it carries.
                    let events = self.alerting.on_rows(&rows, received_at);
                    self.events.extend(events);
                    let newest = rows.iter().max_by_key(|r| r.time);
                    if let Some(row) = newest {
                        let check = self
                            .tracker
                            .on_reading(&row.tank_id, row.derived.practical_salinity);
                        self.apply_tracker_actions(check.into_iter().collect(), received_at);
                    }
                    let state = newest.and_then(|row| {
                        let index = readings.first().map(|r| r.tank_index)?;
                        let name = self.tank_names.get(index)?;
                        let schedule = self.tracker.progress(&row.tank_id).cloned();
                        Some((row.time, TankState::from_row(name, row, schedule)))
                    });
                    WriteItem::Readings(rows, Pending { ack, state })
                }
                Err(detail) => {
                    self.counters.reject_code(SCIENCE_REFUSED);
                    let first = readings.first();
                    let row = RejectionRow {
                        time: received_at,
                        topic: topic.to_string(),
                        tank_id: first.map(|r| r.tank_id.clone()),
                        reason: SCIENCE_REFUSED.to_string(),
                        detail,
                        payload_prefix: prefix(payload),
                    };
                    self.log_rejection(SCIENCE_REFUSED, &row.topic, &row.detail, received_at);
                    WriteItem::Rejection(row, Pending { ack, state: None })
                }
            },
            IngestOutcome::Rejected(rejection) => {
                self.counters.reject(rejection.reason);
                self.log_rejection(rejection.reason.as_str(), topic, &rejection.detail, received_at);
                WriteItem::Rejection(
                    rejection_row(rejection, received_at),
                    Pending { ack, state: None },
                )
            }
            IngestOutcome::Ignored(reason) => {
                self.counters.ignore(reason);
                WriteItem::AckOnly(Pending { ack, state: None })
            }
            IngestOutcome::Buffered => {
                self.counters.buffered += 1;
                WriteItem::AckOnly(Pending { ack, state: None })
            }
        }
    }

    /// Derives every reading of a message; one refusal refuses the message (all or nothing).
    fn derive_all(&mut self, readings: &[AcceptedReading]) -> Result<Vec<ReadingRow>, String> {
        readings
            .iter()
            .map(|r| {
                let derived =
                    derive_from_conductivity(r.conductivity_ms_cm, r.temperature_c, r.pressure_dbar, 0.0)
                        .map_err(|e| format!("reading at {}: {e}", r.time))?;
                let tonicity = self.tonicity(r, &derived);
                Ok(ReadingRow {
                    tank_id: r.tank_id.clone(),
                    time: r.time,
                    source_topic: r.topic.clone(),
                    conductivity_reported: r.reported_conductivity,
                    conductivity_unit: r.reported_unit.symbol().to_string(),
                    conductivity_ms_cm: r.conductivity_ms_cm,
                    temperature_c: r.temperature_c,
                    pressure_dbar: r.pressure_dbar,
                    derived,
                    tonicity,
                })
            })
            .collect()
    }

    /// The tonicity of one derived reading for its tank's species; a refusal of the science core keeps the
    /// reading (without tonicity) and is counted and logged.
    fn tonicity(
        &mut self,
        r: &AcceptedReading,
        derived: &crate::seawater::Derived,
    ) -> Option<crate::species::TonicityState> {
        let profile = self.profiles.get(r.tank_index)?.as_ref()?;
        match tonicity::assess(derived, r.temperature_c, r.pressure_dbar, profile) {
            Ok(state) => Some(state),
            Err(err) => {
                self.counters.tonicity_refused += 1;
                if let LogDecision::Emit { suppressed } = self.log_limit.check(&TONICITY_REFUSED, r.time) {
                    tracing::warn!(tank = %r.tank_id, suppressed, error = %err,
                        "tonicity not assessed; reading kept without it");
                }
                None
            }
        }
    }

    fn log_rejection(&mut self, code: &'static str, topic: &str, detail: &str, now: DateTime<Utc>) {
        if let LogDecision::Emit { suppressed } = self.log_limit.check(&code, now) {
            tracing::warn!(reason = code, %topic, suppressed, "rejected message: {detail}");
        }
    }
}

fn rejection_row(rejection: Rejection, received_at: DateTime<Utc>) -> RejectionRow {
    RejectionRow {
        time: received_at,
        topic: rejection.topic,
        tank_id: rejection.tank_id,
        reason: rejection.reason.as_str().to_string(),
        detail: rejection.detail,
        payload_prefix: rejection.payload_prefix,
    }
}

fn prefix(payload: &[u8]) -> Vec<u8> {
    payload[..payload.len().min(crate::ingest::PAYLOAD_PREFIX_BYTES)].to_vec()
}
