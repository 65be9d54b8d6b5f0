//! Message text of alert events: values with units, and the caution where the alert concerns animals.
//! Formatting happens only when an event is emitted.
use chrono::{DateTime, SecondsFormat, Utc};

use super::kind::AlertKind;
use super::lifecycle::AlertRecord;
use super::observation::Observation;

/// Added to every message about the animals' water.
pub const ANIMAL_CAUTION: &str = "Caution: species limits are indicative (strain, size, health and acclimation \
history change them); verify the probe against a calibrated meter before acting; halotank does not replace the \
tank's own life-support alarm; follow a fish-health professional's advice and local rules.";

/// Added to every message about a probe.
pub const PROBE_CAUTION: &str = "Caution: check the probe against a calibrated meter; while a probe is in doubt \
its readings (and the alerts based on them) cannot be trusted, and the tank's own life-support alarm and manual \
checks are what count.";

fn caution(kind: AlertKind) -> &'static str {
    if kind.concerns_animals() {
        ANIMAL_CAUTION
    } else {
        PROBE_CAUTION
    }
}

fn what(kind: AlertKind) -> (&'static str, &'static str, &'static str) {
    match kind {
        AlertKind::SalinityOptimum => ("practical salinity", "", "optimum"),
        AlertKind::SalinityTolerance => ("practical salinity", "", "tolerance"),
        AlertKind::TemperatureOptimum => ("temperature", " °C", "optimum"),
        AlertKind::TemperatureTolerance => ("temperature", " °C", "tolerance"),
        _ => ("value", "", "range"),
    }
}

fn time_text(ms: i64) -> String {
    DateTime::<Utc>::from_timestamp_millis(ms)
        .map(|t| t.to_rfc3339_opts(SecondsFormat::Secs, true))
        .unwrap_or_else(|| format!("{ms} ms"))
}

/// What the observation says, in words (no caution).
fn describe(kind: AlertKind, obs: &Observation) -> String {
    match *obs {
        Observation::Range { value, low, high, clear_low, clear_high } => {
            let (name, unit, range) = what(kind);
            let side = if value < low {
                "below"
            } else if value > high {
                "above"
            } else if value >= clear_low && value <= clear_high {
                "inside"
            } else {
                "near the edge of"
            };
            format!(
                "{name} {value:.2}{unit} is {side} the species {range} {low:.2}–{high:.2}{unit} \
                 (clears inside {clear_low:.2}–{clear_high:.2}{unit})."
            )
        }
        Observation::Rate { rate_sp_per_h, allowed_sp_per_h, clear_sp_per_h, span_s, practical_salinity } => {
            format!(
                "practical salinity is changing at {rate_sp_per_h:+.2} SP/h (least-squares fit over \
                 {:.0} min, now SP {practical_salinity:.2}); the species maximum safe rate here is \
                 {allowed_sp_per_h:.2} SP/h (clears at or below {clear_sp_per_h:.2} SP/h).",
                span_s / 60.0
            )
        }
        Observation::Stale { age_s, limit_s, expected_interval_s, ever_heard } => {
            let since = if ever_heard { "for" } else { "since monitoring started," };
            format!(
                "no accepted reading {since} {:.1} min (readings expected every \
                 {expected_interval_s:.0} s; stale after {:.1} min).",
                age_s / 60.0,
                limit_s / 60.0
            )
        }
        Observation::Spike { practical_salinity, median_sp, temperature_c, median_c } => format!(
            "reading SP {practical_salinity:.2} at {temperature_c:.2} °C is far from the median of \
             the previous readings (SP {median_sp:.2}, {median_c:.2} °C); the probe may be fouled, out of the \
             water or failing."
        ),
        Observation::FlatLine { conductivity_ms_cm, duration_s, readings } => format!(
            "conductivity has read {conductivity_ms_cm:.3} mS/cm without any change for {:.0} min \
             ({readings} readings); the probe, its transmitter or gateway may be stuck.",
            duration_s / 60.0
        ),
        Observation::StuckConductivity { conductivity_ms_cm, range_percent, temperature_range_c, readings } => {
            format!(
                "temperature moved {temperature_range_c:.2} °C over the last {readings} readings but \
                 conductivity stayed at {conductivity_ms_cm:.3} mS/cm (range {range_percent:.3} %); in-situ \
                 conductivity changes about 2 % per °C, so one of the two is wrong (a stuck conductivity probe, \
                 or a temperature-compensated probe configured as in-situ)."
            )
        }
        Observation::TemperatureJump { rate_c_per_min, limit_c_per_min, span_s } => format!(
            "temperature changed at {rate_c_per_min:.2} °C/min over {span_s:.0} s, faster than a \
             tank's water can (limit {limit_c_per_min:.2} °C/min); the temperature probe may be out of the water \
             or failing, and the salinity computed with it is wrong."
        ),
        Observation::Freezing { temperature_c, freezing_point_c, margin_c, practical_salinity, pressure_dbar } => {
            format!(
                "water at {temperature_c:.2} °C is {:.2} °C above its freezing point \
                 {freezing_point_c:.3} °C (UNESCO 1983, SP {practical_salinity:.2}, {pressure_dbar:.0} dbar); \
                 the margin is {margin_c:.2} °C.",
                temperature_c - freezing_point_c
            )
        }
        Observation::ScheduleOff { deviation_sp, target_sp } => format!(
            "practical salinity is {deviation_sp:+.2} SP off the acclimation schedule \
             (target now SP {target_sp:.2})."
        ),
        Observation::StepDue { step, target_sp, due_at_ms, action } => {
            let todo = action.text();
            let todo = if todo.is_empty() { String::new() } else { format!(": {todo}") };
            format!("acclimation step {step} to SP {target_sp:.2} is due at {}{todo}.", time_text(due_at_ms))
        }
        Observation::ScheduleOk | Observation::None => format!("{}.", kind.as_str().replace('_', " ")),
    }
}

/// The text of a raise (or recurrence).
pub fn raised_text(tank: &str, kind: AlertKind, obs: &Observation) -> String {
    format!("Tank {tank}: {} {}", describe(kind, obs), caution(kind))
}

/// The text of a clear.
pub fn cleared_text(tank: &str, kind: AlertKind, obs: &Observation) -> String {
    let latest = match obs {
        Observation::None | Observation::ScheduleOk => String::new(),
        Observation::Stale { .. } => " Readings are arriving again.".to_string(),
        _ => format!(" Latest: {}", describe(kind, obs)),
    };
    format!(
        "Tank {tank}: {} has cleared.{latest} {}",
        kind.as_str(),
        caution(kind)
    )
}

/// The text of a re-notification.
pub fn renotify_text(record: &AlertRecord, latest: &Observation) -> String {
    let body = match latest {
        Observation::None => record.message.clone(),
        obs => raised_text(&record.tank, record.kind, obs),
    };
    format!(
        "Reminder {} (alert {}, raised {}, not acknowledged): {body}",
        record.notify_count,
        record.id,
        record.raised_at.to_rfc3339_opts(SecondsFormat::Secs, true)
    )
}

/// The text of an acknowledgement.
pub fn acknowledged_text(record: &AlertRecord) -> String {
    let (by, note) = record
        .acknowledgement
        .as_ref()
        .map(|a| (a.by.as_str(), a.note.as_deref()))
        .unwrap_or(("?", None));
    let note = note.map(|n| format!(": {n}")).unwrap_or_default();
    let closed = if record.state.is_open() {
        ""
    } else {
        " (already cleared; now closed)"
    };
    format!(
        "Tank {}: alert {} ({}) acknowledged by {by}{note}{closed}.",
        record.tank, record.id, record.kind
    )
}
