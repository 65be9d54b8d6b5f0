//! The daemon's side of schedule tracking: the tracker's per-tank settings from the configuration, and the
//! database polls that bring in schedules started, marked or paused by `halotank schedule` (or the HTTP
//! API) while the daemon runs, and apply the tracker's pauses.
use std::collections::HashMap;

use anyhow::Context;
use chrono::{DateTime, Utc};

use crate::alerts::{AlertEvent, Severity};
use crate::config::Config;
use crate::schedule::{ScheduleTracker, TankTracking, TrackerAction};
use crate::storage::ScheduleStore;

/// A new tracker with each configured tank's band and pause setting (global < species < tank).
pub fn tracker_for(config: &Config) -> anyhow::Result<ScheduleTracker> {
    let mut tanks = HashMap::with_capacity(config.tanks.len());
    for tank in &config.tanks {
        let settings = config
            .alerts
            .layered(tank.species.as_deref(), &tank.alerts)
            .resolve()
            .with_context(|| format!("tank `{}`: alert settings", tank.id))?;
        tanks.insert(tank.id.clone(), tracking(&settings));
    }
    let global = config
        .alerts
        .layered(None, &Default::default())
        .resolve()
        .context("[alerts] settings")?;
    Ok(ScheduleTracker::new(tanks, tracking(&global)))
}

fn tracking(settings: &crate::alerts::ResolvedAlertSettings) -> TankTracking {
    TankTracking {
        band_sp: settings.schedule_band_sp,
        pause_on_critical: settings.schedule_pause_on_critical,
    }
}

/// Reads the open schedules back from the database on each poll.
pub struct ScheduleSync {
    store: ScheduleStore,
    /// Whether the last poll failed (a failure is logged once until a poll succeeds again).
    failing: bool,
}

impl ScheduleSync {
    /// Opens the schedule tables of the daemon's database (the writer has migrated it).
    pub fn open(path: &std::path::Path) -> anyhow::Result<Self> {
        let store = ScheduleStore::open(path)
            .with_context(|| format!("cannot open the schedules in {}", path.display()))?;
        Ok(Self {
            store,
            failing: false,
        })
    }

    /// One poll: syncs the tracker with the stored open schedules and returns its actions, the final
    /// setpoints of schedules that ended included. A database error keeps the tracker as it was.
    pub fn poll(&mut self, tracker: &mut ScheduleTracker, now: DateTime<Utc>) -> Vec<TrackerAction> {
        let open = match self.store.open_schedules() {
            Ok(open) => {
                if self.failing {
                    tracing::info!("schedules readable again");
                    self.failing = false;
                }
                open
            }
            Err(err) => {
                if !self.failing {
                    tracing::warn!(error = %err, "cannot read the schedules; tracking continues from the last read");
                    self.failing = true;
                }
                return tracker.on_tick(now);
            }
        };
        let outcome = tracker.sync(open, now);
        let mut actions = outcome.actions;
        for id in outcome.ended {
            match self.store.get(id) {
                Ok(schedule) => {
                    tracing::info!(schedule = id, tank = %schedule.tank_id, state = schedule.state.name(),
                        "schedule ended");
                    actions.extend(tracker.ended(&schedule, now));
                }
                Err(err) => tracing::warn!(schedule = id, error = %err, "ended schedule not readable"),
            }
        }
        actions
    }

    /// Pauses a schedule after a critical alert on its tank (the next poll picks the pause up).
    pub fn pause(&mut self, schedule_id: i64, tank_id: &str, now: DateTime<Utc>) {
        match self.store.pause(schedule_id, now) {
            Ok(_) => tracing::warn!(schedule = schedule_id, tank = %tank_id,
                "schedule paused after a critical alert; resume it with `halotank schedule resume`"),
            Err(err) => tracing::warn!(schedule = schedule_id, tank = %tank_id, error = %err,
                "schedule not paused after a critical alert"),
        }
    }
}

/// The pauses that newly raised critical alerts ask for.
pub fn pauses_for_critical(tracker: &ScheduleTracker, events: &[AlertEvent]) -> Vec<TrackerAction> {
    events
        .iter()
        .filter(|e| matches!(e, AlertEvent::Raised { .. } | AlertEvent::Recurred { .. }))
        .filter(|e| e.severity() == Severity::Critical)
        .filter_map(|e| tracker.on_critical_alert(&e.alert().tank))
        .collect()
}
