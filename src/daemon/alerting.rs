//! The daemon's side of the pure alert engine: one engine for all tanks, fed each stored reading, the
//! clock, and acknowledgement requests. No I/O; the daemon persists and publishes what comes out.
use anyhow::Context;
use chrono::{DateTime, Utc};

use super::alert_limits::limits_for_tank;
use crate::alerts::{
    AckError, AlertEngine, AlertEvent, AlertId, AlertReading, AlertRecord, AlertRef, RestoreReport,
    ScheduleSignal,
};
use crate::config::Config;
use crate::species::SpeciesProfile;
use crate::storage::{AckRequest, ReadingRow};

/// The engine with every configured tank added.
#[derive(Debug)]
pub struct Alerting {
    engine: AlertEngine,
}

impl Alerting {
    /// Adds each tank with limits from its profile (`profiles[i]` for `config.tanks[i]`) and its layered
    /// settings (global < species < tank).
    pub fn new(config: &Config, profiles: &[Option<SpeciesProfile>]) -> anyhow::Result<Self> {
        let mut engine = AlertEngine::new();
        for (i, tank) in config.tanks.iter().enumerate() {
            let profile = profiles.get(i).and_then(Option::as_ref);
            let limits = limits_for_tank(profile, tank.expected_interval_s);
            let settings = config
                .alerts
                .layered(tank.species.as_deref(), &tank.alerts)
                .resolve()
                .with_context(|| format!("tank `{}`: alert settings", tank.id))?;
            engine
                .add_tank(&tank.id, limits, settings)
                .with_context(|| format!("tank `{}`: alert limits", tank.id))?;
        }
        Ok(Self { engine })
    }

    /// Takes back the open alerts stored before a restart (see [`AlertEngine::restore`]).
    pub fn restore(&mut self, open: Vec<AlertRecord>, highest_stored_id: u64) -> RestoreReport {
        self.engine.restore(open, highest_stored_id)
    }

    /// Every open alert.
    pub fn open_alerts(&self) -> Vec<AlertRecord> {
        self.engine.open_alerts().cloned().collect()
    }

    /// Evaluates the readings of one message, oldest first.
    pub fn on_rows(&mut self, rows: &[ReadingRow], now: DateTime<Utc>) -> Vec<AlertEvent> {
        let mut events = Vec::new();
        let mut ordered: Vec<&ReadingRow> = rows.iter().collect();
        ordered.sort_by_key(|r| r.time);
        for row in ordered {
            let Some(slot) = self.engine.tank_slot(&row.tank_id) else {
                continue;
            };
            let reading = AlertReading::from_derived(
                row.time,
                row.conductivity_ms_cm,
                row.temperature_c,
                row.pressure_dbar,
                &row.derived,
            );
            events.extend(self.engine.on_reading(slot, &reading, now));
        }
        events
    }

    /// A signal of the schedule tracker for one tank (unknown tanks are ignored).
    pub fn on_schedule(
        &mut self,
        tank_id: &str,
        signal: ScheduleSignal,
        now: DateTime<Utc>,
    ) -> Vec<AlertEvent> {
        match self.engine.tank_slot(tank_id) {
            Some(slot) => self.engine.on_schedule(slot, signal, now),
            None => Vec::new(),
        }
    }

    /// Advances the clock (probe-stale, re-notification).
    pub fn on_tick(&mut self, now: DateTime<Utc>) -> Vec<AlertEvent> {
        self.engine.on_tick(now)
    }

    /// Applies an acknowledgement request from the command line.
    pub fn acknowledge(&mut self, request: &AckRequest, now: DateTime<Utc>) -> Result<AlertEvent, AckError> {
        self.engine.acknowledge(
            &AlertRef::Id(AlertId(request.alert_id)),
            &request.by,
            request.note.as_deref(),
            now,
        )
    }
}
