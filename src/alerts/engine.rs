//! `AlertEngine`: every tank's rules and every open alert; turns readings, clock ticks, schedule signals
//! and acknowledgements into [`AlertEvent`]s. Pure: the caller passes `now` and stores/delivers the events.
//!
//! Timing: conditions judged from readings (ranges, rate, probe checks, freezing) time their minimum
//! durations by the readings' own times; probe-stale, schedule conditions, re-notification and every
//! event time use `now`. Readings older than a tank's previous reading are counted and skipped.
use std::collections::{BTreeMap, HashMap};

use chrono::{DateTime, Utc};
use thiserror::Error;

use super::detector::{DetectorState, Edge, Level};
use super::event::AlertEvent;
use super::kind::{AlertId, AlertKey, AlertKind};
use super::lifecycle::{AckError, AlertRecord, AlertState, ClearOutcome};
use super::limits::{AlertLimits, LimitsError};
use super::message;
use super::reading::AlertReading;
use super::rules::schedule::ScheduleSignal;
use super::settings::ResolvedAlertSettings;
use super::tank::TankRules;

/// A tank's position in the engine: the order of [`AlertEngine::add_tank`] calls, from 0 (add tanks in
/// `Config::tanks` order and it equals the ingest `tank_index`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct TankSlot(pub usize);

/// Which alert an acknowledgement is for.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum AlertRef {
    /// By number.
    Id(AlertId),
    /// By key: the open alert linked to that tank's rule.
    Key(AlertKey),
}

/// Why a tank could not be added.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum EngineError {
    /// The id is already used.
    #[error("tank `{0}` is already in the alert engine")]
    DuplicateTank(String),
    /// Its limits are unusable.
    #[error("tank `{tank}`: {source}")]
    Limits {
        tank: String,
        #[source]
        source: LimitsError,
    },
}

/// Readings and calls the engine skipped (never a panic).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct EngineCounters {
    /// Readings evaluated.
    pub readings: u64,
    /// Readings older than the tank's previous reading.
    pub out_of_order: u64,
    /// Readings with a non-finite value.
    pub not_finite: u64,
    /// Calls naming a tank slot the engine does not have.
    pub unknown_tank: u64,
}

/// What [`AlertEngine::restore`] did.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct RestoreReport {
    /// Open alerts linked back to their tank's rule.
    pub linked: usize,
    /// Open alerts of tanks no longer configured, or of rules now switched off: kept open (listable),
    /// never re-notified; acknowledging one closes it.
    pub orphaned: usize,
    /// A second open alert for a key already linked: kept open, not linked.
    pub duplicate_key: usize,
    /// Records not restored: closed, or an id already open.
    pub skipped: usize,
}

#[derive(Debug, Clone)]
struct OpenAlert {
    record: AlertRecord,
    slot: Option<usize>,
}

/// The alert engine.
#[derive(Debug, Clone, Default)]
pub struct AlertEngine {
    tanks: Vec<TankRules>,
    by_id: HashMap<String, usize>,
    open: BTreeMap<AlertId, OpenAlert>,
    next_id: u64,
    counters: EngineCounters,
}

fn ms(t: DateTime<Utc>) -> i64 {
    t.timestamp_millis()
}

fn from_ms(ms: i64, fallback: DateTime<Utc>) -> DateTime<Utc> {
    DateTime::from_timestamp_millis(ms).unwrap_or(fallback)
}

impl AlertEngine {
    /// An engine with no tanks; ids start at 1.
    pub fn new() -> Self {
        Self {
            next_id: 1,
            ..Self::default()
        }
    }

    /// Adds a tank with its limits and resolved settings.
    pub fn add_tank(
        &mut self,
        id: &str,
        limits: AlertLimits,
        settings: ResolvedAlertSettings,
    ) -> Result<TankSlot, EngineError> {
        if self.by_id.contains_key(id) {
            return Err(EngineError::DuplicateTank(id.to_string()));
        }
        limits.validate().map_err(|source| EngineError::Limits {
            tank: id.to_string(),
            source,
        })?;
        let slot = self.tanks.len();
        self.tanks.push(TankRules::new(id, limits, settings));
        self.by_id.insert(id.to_string(), slot);
        // Link open alerts restored before the tank was added.
        for (alert_id, entry) in self.open.iter_mut() {
            if entry.slot.is_none() && entry.record.tank == id {
                let k = entry.record.kind.index();
                let tank = &mut self.tanks[slot];
                if tank.open[k].is_none() {
                    tank.open[k] = Some(*alert_id);
                    entry.slot = Some(slot);
                    if matches!(entry.record.state, AlertState::Raised | AlertState::Acknowledged) {
                        tank.detectors[k].force_raised();
                    }
                }
            }
        }
        Ok(TankSlot(slot))
    }

    /// Replaces a tank's limits and settings (configuration reload). Windows and conditions are kept; an
    /// open alert whose rule is now switched off clears.
    pub fn reconfigure_tank(
        &mut self,
        slot: TankSlot,
        limits: AlertLimits,
        settings: ResolvedAlertSettings,
        now: DateTime<Utc>,
    ) -> Result<Vec<AlertEvent>, EngineError> {
        let Some(tank) = self.tanks.get_mut(slot.0) else {
            self.counters.unknown_tank += 1;
            return Ok(Vec::new());
        };
        limits.validate().map_err(|source| EngineError::Limits {
            tank: tank.id.clone(),
            source,
        })?;
        tank.configure(limits, settings);
        let mut events = Vec::new();
        for kind in AlertKind::ALL {
            let tank = &mut self.tanks[slot.0];
            if !tank.enabled(kind) && tank.detectors[kind.index()].is_raised() {
                tank.detectors[kind.index()].reset();
                self.apply_edge(slot.0, kind, Edge::Clear, now, now, &mut events);
            }
        }
        Ok(events)
    }

    /// The slot of a tank id.
    pub fn tank_slot(&self, id: &str) -> Option<TankSlot> {
        self.by_id.get(id).copied().map(TankSlot)
    }

    /// Counts of skipped input.
    pub fn counters(&self) -> EngineCounters {
        self.counters
    }

    /// Every open alert (raised, acknowledged, or cleared and waiting for acknowledgement), by id.
    pub fn open_alerts(&self) -> impl Iterator<Item = &AlertRecord> + '_ {
        self.open.values().map(|e| &e.record)
    }

    /// The open alert with this id.
    pub fn open_alert(&self, id: AlertId) -> Option<&AlertRecord> {
        self.open.get(&id).map(|e| &e.record)
    }

    /// The open alert linked to this key's rule.
    pub fn open_alert_for(&self, key: &AlertKey) -> Option<&AlertRecord> {
        let slot = *self.by_id.get(&key.tank)?;
        let id = self.tanks[slot].open[key.kind.index()]?;
        self.open_alert(id)
    }

    /// Evaluates one accepted reading of a tank across every rule.
    pub fn on_reading(
        &mut self,
        tank: TankSlot,
        reading: &AlertReading,
        now: DateTime<Utc>,
    ) -> Vec<AlertEvent> {
        let mut events = Vec::new();
        let Some(rules) = self.tanks.get_mut(tank.0) else {
            self.counters.unknown_tank += 1;
            return events;
        };
        if !reading.is_finite() {
            self.counters.not_finite += 1;
            return events;
        }
        let now_ms = ms(now);
        let Some((t_ms, levels)) = rules.evaluate_reading(reading, now_ms) else {
            self.counters.out_of_order += 1;
            return events;
        };
        self.counters.readings += 1;
        for kind in AlertKind::ALL {
            let level = levels[kind.index()];
            if level == Level::Unknown {
                continue;
            }
            // Probe-stale is timed by the engine clock, every reading rule by the reading's own time.
            let at_ms = if kind == AlertKind::ProbeStale {
                now_ms
            } else {
                t_ms
            };
            let rules = &mut self.tanks[tank.0];
            let timing = rules.timing[kind.index()];
            if let Some(edge) = rules.detectors[kind.index()].update(level, at_ms, timing) {
                self.apply_edge(tank.0, kind, edge, now, reading.time, &mut events);
            }
        }
        events
    }

    /// Advances the clock: probe-stale for every tank, pending schedule conditions, and re-notification of
    /// raised, unacknowledged alerts. Call it regularly (every few seconds).
    pub fn on_tick(&mut self, now: DateTime<Utc>) -> Vec<AlertEvent> {
        let mut events = Vec::new();
        let now_ms = ms(now);
        for slot in 0..self.tanks.len() {
            let kind = AlertKind::ProbeStale;
            let level = self.tanks[slot].evaluate_stale(now_ms);
            self.feed(slot, kind, level, now_ms, now, &mut events);
            for kind in [AlertKind::ScheduleOff, AlertKind::ScheduleStepDue] {
                let detector = self.tanks[slot].detectors[kind.index()];
                if matches!(
                    detector.state(),
                    DetectorState::Pending { .. } | DetectorState::Clearing { .. }
                ) {
                    self.feed(slot, kind, detector.last_level(), now_ms, now, &mut events);
                }
            }
        }
        for entry in self.open.values_mut() {
            let Some(slot) = entry.slot else { continue };
            let tank = &self.tanks[slot];
            let kind = entry.record.kind;
            if entry
                .record
                .renotify_due(now, tank.settings.rule(kind).renotify_s)
            {
                entry.record.mark_notified(now);
                let text = message::renotify_text(&entry.record, &tank.observations[kind.index()]);
                events.push(AlertEvent::Renotify {
                    alert: entry.record.clone(),
                    at: now,
                    message: text,
                });
            }
        }
        events
    }

    /// A signal from the acclimation planner.
    pub fn on_schedule(
        &mut self,
        tank: TankSlot,
        signal: ScheduleSignal,
        now: DateTime<Utc>,
    ) -> Vec<AlertEvent> {
        let mut events = Vec::new();
        let Some(rules) = self.tanks.get_mut(tank.0) else {
            self.counters.unknown_tank += 1;
            return events;
        };
        let (kind, level, obs) = signal.condition();
        if !rules.enabled(kind) {
            return events;
        }
        rules.observations[kind.index()] = obs;
        self.feed(tank.0, kind, level, ms(now), now, &mut events);
        events
    }

    /// Acknowledges an open alert. Acknowledging a cleared critical alert closes it.
    pub fn acknowledge(
        &mut self,
        alert: &AlertRef,
        by: &str,
        note: Option<&str>,
        now: DateTime<Utc>,
    ) -> Result<AlertEvent, AckError> {
        let id = match alert {
            AlertRef::Id(id) => *id,
            AlertRef::Key(key) => self
                .open_alert_for(key)
                .map(|r| r.id)
                .or_else(|| {
                    self.open
                        .values()
                        .find(|e| e.record.tank == key.tank && e.record.kind == key.kind)
                        .map(|e| e.record.id)
                })
                .ok_or_else(|| AckError::NotOpen(key.to_string()))?,
        };
        let entry = self
            .open
            .get_mut(&id)
            .ok_or_else(|| AckError::NotOpen(id.to_string()))?;
        let mut closed = entry.record.acknowledge(by, note, now)?;
        if !closed && entry.slot.is_none() {
            // No rule watches an unlinked alert (its tank or rule is gone), so nothing would ever clear it.
            closed = entry.record.condition_cleared(now) == ClearOutcome::Closed;
        }
        let record = entry.record.clone();
        if closed {
            if let Some(slot) = entry.slot {
                let k = record.kind.index();
                if self.tanks[slot].open[k] == Some(id) {
                    self.tanks[slot].open[k] = None;
                }
            }
            self.open.remove(&id);
        }
        let text = message::acknowledged_text(&record);
        Ok(AlertEvent::Acknowledged {
            alert: record,
            at: now,
            message: text,
        })
    }

    /// Takes back the open alerts persisted before a restart, so they are not raised again: an alert that
    /// was raised or acknowledged counts as a present condition (it clears through its rule's clear level);
    /// one waiting for acknowledgement stays open. New ids continue above `highest_stored_id` and every
    /// restored id. Call it after adding the tanks (alerts of tanks added later are linked then).
    pub fn restore(&mut self, open_alerts: Vec<AlertRecord>, highest_stored_id: u64) -> RestoreReport {
        let mut report = RestoreReport::default();
        self.next_id = self.next_id.max(highest_stored_id.saturating_add(1));
        for record in open_alerts {
            self.next_id = self.next_id.max(record.id.0.saturating_add(1));
            if !record.state.is_open() || self.open.contains_key(&record.id) {
                report.skipped += 1;
                continue;
            }
            let mut slot = self
                .by_id
                .get(&record.tank)
                .copied()
                .filter(|&s| self.tanks[s].enabled(record.kind));
            match slot {
                None => report.orphaned += 1,
                Some(s) => {
                    let k = record.kind.index();
                    let tank = &mut self.tanks[s];
                    if tank.open[k].is_some() {
                        report.duplicate_key += 1;
                        slot = None;
                    } else {
                        tank.open[k] = Some(record.id);
                        if matches!(record.state, AlertState::Raised | AlertState::Acknowledged) {
                            tank.detectors[k].force_raised();
                        }
                        report.linked += 1;
                    }
                }
            }
            self.open.insert(record.id, OpenAlert { record, slot });
        }
        report
    }

    fn feed(
        &mut self,
        slot: usize,
        kind: AlertKind,
        level: Level,
        at_ms: i64,
        now: DateTime<Utc>,
        events: &mut Vec<AlertEvent>,
    ) {
        let tank = &mut self.tanks[slot];
        let timing = tank.timing[kind.index()];
        if let Some(edge) = tank.detectors[kind.index()].update(level, at_ms, timing) {
            let observed = from_ms(at_ms, now);
            self.apply_edge(slot, kind, edge, now, observed, events);
        }
    }

    fn apply_edge(
        &mut self,
        slot: usize,
        kind: AlertKind,
        edge: Edge,
        now: DateTime<Utc>,
        observed_at: DateTime<Utc>,
        events: &mut Vec<AlertEvent>,
    ) {
        let k = kind.index();
        let tank = &mut self.tanks[slot];
        let obs = tank.observations[k];
        match (edge, tank.open[k]) {
            (Edge::Raise, Some(id)) => {
                let Some(entry) = self.open.get_mut(&id) else {
                    return;
                };
                if entry.record.condition_returned(now) {
                    let text = message::raised_text(&tank.id, kind, &obs);
                    let (value, limit) = obs.value_and_limit();
                    entry.record.observed_at = observed_at;
                    entry.record.message = text.clone();
                    entry.record.value = value;
                    entry.record.limit = limit;
                    events.push(AlertEvent::Recurred {
                        alert: entry.record.clone(),
                        at: now,
                        message: text,
                    });
                }
            }
            (Edge::Raise, None) => {
                let id = AlertId(self.next_id);
                self.next_id += 1;
                let text = message::raised_text(&tank.id, kind, &obs);
                let (value, limit) = obs.value_and_limit();
                let record = AlertRecord {
                    id,
                    tank: tank.id.clone(),
                    kind,
                    severity: kind.severity(),
                    state: AlertState::Raised,
                    raised_at: now,
                    observed_at,
                    last_notified_at: now,
                    notify_count: 1,
                    cleared_at: None,
                    acknowledgement: None,
                    message: text.clone(),
                    value,
                    limit,
                };
                tank.open[k] = Some(id);
                self.open.insert(
                    id,
                    OpenAlert {
                        record: record.clone(),
                        slot: Some(slot),
                    },
                );
                events.push(AlertEvent::Raised {
                    alert: record,
                    at: now,
                    message: text,
                });
            }
            (Edge::Clear, Some(id)) => {
                let Some(entry) = self.open.get_mut(&id) else {
                    return;
                };
                let outcome = entry.record.condition_cleared(now);
                if outcome == ClearOutcome::Unchanged {
                    return;
                }
                let record = entry.record.clone();
                if outcome == ClearOutcome::Closed {
                    tank.open[k] = None;
                    self.open.remove(&id);
                }
                events.push(AlertEvent::Cleared {
                    message: message::cleared_text(&tank.id, kind, &obs),
                    alert: record,
                    at: now,
                });
            }
            (Edge::Clear, None) => {}
        }
    }
}
