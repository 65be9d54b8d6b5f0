//! Engine tests with a fake clock: every rule raises, holds, clears and re-notifies; lifecycle, restore,
//! and a property test that noise inside the hysteresis band cannot make an alert flap.
mod freezing;
mod lifecycle;
mod noise;
mod probe;
mod ranges;
mod rate;
mod schedule;

use chrono::{DateTime, TimeZone, Utc};

use super::*;
use crate::seawater::practical_salinity::conductivity_from_practical_salinity;

/// The fake clock: `s` seconds after a fixed start.
pub fn t(s: i64) -> DateTime<Utc> {
    Utc.timestamp_opt(1_760_000_000, 0).unwrap() + chrono::Duration::milliseconds(s * 1000)
}

/// Limits of a fictional sea-water holding tank (test values, not a species profile).
pub fn sea_limits() -> AlertLimits {
    AlertLimits {
        salinity_optimum: Some(Bounds::new(28.0, 32.0)),
        salinity_tolerance: Some(Bounds::new(20.0, 36.0)),
        temperature_optimum_c: Some(Bounds::new(10.0, 16.0)),
        temperature_tolerance_c: Some(Bounds::new(4.0, 20.0)),
        max_salinity_rate: Some(RateLimit {
            max: RateOfChange::SpPerHour(2.0),
            slower_below: None,
        }),
        expected_interval_s: 60,
    }
}

/// Settings with only the given rules switched on (and other overrides applied by `edit`).
pub fn only(kinds: &[AlertKind], edit: impl FnOnce(&mut AlertSettings)) -> ResolvedAlertSettings {
    let mut s = AlertSettings::default();
    for kind in AlertKind::ALL {
        s.rules.get_mut(kind).enabled = Some(kinds.contains(&kind));
    }
    edit(&mut s);
    s.resolve().unwrap()
}

/// One tank in an engine, fed through the public API.
pub struct Rig {
    pub engine: AlertEngine,
    pub slot: TankSlot,
}

impl Rig {
    pub fn new(limits: AlertLimits, settings: ResolvedAlertSettings) -> Self {
        let mut engine = AlertEngine::new();
        let slot = engine.add_tank("quay-4", limits, settings).unwrap();
        Self { engine, slot }
    }

    /// A reading at `s` seconds with a conductivity consistent with SP and temperature (PSS-78 inverse).
    pub fn read(&mut self, s: i64, sp: f64, temp_c: f64) -> Vec<AlertEvent> {
        let c = conductivity_from_practical_salinity(sp, temp_c, 0.0).unwrap();
        self.read_c(s, sp, temp_c, c, 0.0)
    }

    /// A reading with an explicit conductivity and pressure.
    pub fn read_c(&mut self, s: i64, sp: f64, temp_c: f64, c: f64, p_dbar: f64) -> Vec<AlertEvent> {
        let reading = AlertReading {
            time: t(s),
            practical_salinity: sp,
            temperature_c: temp_c,
            conductivity_ms_cm: c,
            pressure_dbar: p_dbar,
        };
        self.engine.on_reading(self.slot, &reading, t(s))
    }

    pub fn tick(&mut self, s: i64) -> Vec<AlertEvent> {
        self.engine.on_tick(t(s))
    }
}

/// (event name, kind) of each event.
pub fn names(events: &[AlertEvent]) -> Vec<(&'static str, AlertKind)> {
    events.iter().map(|e| (e.name(), e.alert().kind)).collect()
}

/// A deterministic noise sequence in [-1, 1] (a linear congruential generator; test data only).
pub fn noise(seed: u64) -> impl FnMut() -> f64 {
    let mut x = seed.wrapping_mul(6_364_136_223_846_793_005).wrapping_add(1);
    move || {
        x = x
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        ((x >> 11) as f64 / (1u64 << 53) as f64) * 2.0 - 1.0
    }
}
