//! The simulated tanks of Brannock Sound Hatchery (fictional) and what their probes send.
//!
//! Pure and deterministic: each tank's true water (practical salinity, temperature) is a function of
//! simulated time, and each probe message a function of (seed, tank, sample index), so the same seed
//! gives the same messages however the timeline is cut into ticks. Probe conductivity comes from the
//! true water through PSS-78 ([`conductivity_from_practical_salinity`]) and the probe's unit and mode,
//! plus small noise, probe drift where a tank has it, and the occasional broken payload.
//!
//! The tanks (ids and topics match `config/demo.toml`):
//! - `parr-a`: fresh-water parr raceway, SP about 0.2, bare numbers (specific conductance at 25 °C in
//!   uS/cm, and °C);
//! - `smolt-t1`: smolt tank being brought from brackish toward sea water, a ramp from SP 8 toward 30 that
//!   is about half-way at the end of the simulated timeline, combined JSON with an RFC 3339 time;
//! - `shrimp-n2`: brackish shrimp postlarvae nursery, SP about 12.5, SenML in S/m and Cel;
//! - `sea-hold-4`: full-strength sea-water holding tank, SP about 34.2, JSON with its logger's own keys
//!   and Unix-seconds time;
//! - `oyster-d1`: oyster depuration tank whose conductivity probe drifts up 3 % per simulated day while
//!   the water stays steady, JSON on separate conductivity and temperature topics;
//! - `quarantine-q1`: quarantine tank whose probe reports every 15 s and sends a broken payload in about
//!   4 % of its messages.
//!
//! All of this is invented demo data; nothing here describes a real site, animal or limit.
use chrono::{DateTime, TimeDelta, Timelike, Utc};
use serde_json::json;

use super::garbage::GarbageKind;
use super::noise::{Noise, Stream};
use super::payload::{self, TimeStyle};
use crate::seawater::practical_salinity::conductivity_from_practical_salinity;
use crate::seawater::{ConductivityUnit, ProbeMode};

/// Seed of `halotank demo` unless `--seed` is given.
pub const DEFAULT_SEED: u64 = 1;

/// Relative noise of a probe's conductivity (1 standard deviation).
pub const CONDUCTIVITY_NOISE_FRACTION: f64 = 0.001;
/// Noise of a probe's temperature, °C (1 standard deviation).
pub const TEMPERATURE_NOISE_C: f64 = 0.02;

/// The true water of a tank at one moment.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Water {
    pub practical_salinity: f64,
    pub temperature_c: f64,
}

/// How a tank's salinity moves.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum SalinityModel {
    /// Steady around `practical_salinity`, swinging by `swing` over `period_h` hours (top-ups, dosing).
    Steady {
        practical_salinity: f64,
        swing: f64,
        period_h: f64,
    },
    /// `from` until `start`, then up by `per_hour` until `to`.
    Ramp {
        from: f64,
        to: f64,
        per_hour: f64,
        start: DateTime<Utc>,
    },
}

/// A tank's temperature: a daily swing around a mean, warmest at 15:00 UTC.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TemperatureModel {
    pub mean_c: f64,
    pub daily_swing_c: f64,
}

/// JSON key names of a probe.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct JsonKeyNames {
    pub conductivity: &'static str,
    pub temperature: &'static str,
    pub time: &'static str,
}

/// Keys the demo's JSON probes use unless they have their own.
pub const DEFAULT_KEYS: JsonKeyNames = JsonKeyNames {
    conductivity: "conductivity",
    temperature: "temperature",
    time: "time",
};

/// How a probe encodes its readings.
#[derive(Debug, Clone, PartialEq)]
pub enum ProbeFormat {
    /// Bare numbers on two topics: specific conductance at 25 °C (uS/cm) and temperature (°C).
    /// A bare number carries no time: the ingest core stamps it with the time it is received.
    BareNumbers {
        conductivity_topic: String,
        temperature_topic: String,
        alpha_percent_per_c: f64,
    },
    /// One JSON object: in-situ conductivity (mS/cm), temperature (°C) and time.
    CombinedJson {
        topic: String,
        keys: JsonKeyNames,
        time: TimeStyle,
    },
    /// JSON objects on two topics (temperature first, then conductivity in mS/cm), each with a time.
    SplitJson {
        conductivity_topic: String,
        temperature_topic: String,
        keys: JsonKeyNames,
        time: TimeStyle,
    },
    /// A SenML pack: conductivity in S/m, temperature in Cel, base time in Unix seconds.
    Senml { topic: String, base_name: String },
}

/// One simulated tank and its probe.
#[derive(Debug, Clone, PartialEq)]
pub struct DemoTank {
    pub id: &'static str,
    pub salinity: SalinityModel,
    pub temperature: TemperatureModel,
    /// Sea pressure at the probe, dbar.
    pub pressure_dbar: f64,
    pub format: ProbeFormat,
    /// Seconds between readings.
    pub interval_s: i64,
    /// Offset of the first reading after the timeline start, seconds (less than `interval_s`).
    pub phase_s: i64,
    /// How fast the probe's conductivity reading creeps up, % per simulated day since the timeline start.
    pub drift_percent_per_day: f64,
    /// Fraction of messages replaced by a broken payload (combined JSON probes only).
    pub garbage_fraction: f64,
}

/// Which part of a reading a message carries.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MessagePart {
    Combined,
    Conductivity,
    Temperature,
}

/// One message a simulated probe publishes.
#[derive(Debug, Clone, PartialEq)]
pub struct ProbeMessage {
    /// Index of the tank in [`Scenario::tanks`].
    pub tank_index: usize,
    pub tank_id: &'static str,
    /// Sample number of the tank (0 at the timeline start).
    pub sample: u64,
    /// The simulated time of the reading.
    pub time: DateTime<Utc>,
    pub topic: String,
    pub payload: Vec<u8>,
    pub part: MessagePart,
    /// False for bare numbers, which carry no time.
    pub carries_time: bool,
    /// `Some` when the payload is deliberately broken.
    pub garbage: Option<GarbageKind>,
}

/// The whole simulated site.
#[derive(Debug, Clone, PartialEq)]
pub struct Scenario {
    noise: Noise,
    start: DateTime<Utc>,
    tanks: Vec<DemoTank>,
}

/// Smolt ramp: hours before the timeline end at which the ramp starts.
const SMOLT_RAMP_LEAD_H: i64 = 7;

impl Scenario {
    /// Brannock Sound Hatchery for a simulated timeline from `start` (whole seconds are used) to `end`.
    pub fn brannock(seed: u64, start: DateTime<Utc>, end: DateTime<Utc>) -> Self {
        let start = DateTime::from_timestamp(start.timestamp(), 0).unwrap_or(start);
        let ramp_start = (end - TimeDelta::hours(SMOLT_RAMP_LEAD_H)).max(start);
        let steady = |practical_salinity, swing, period_h| SalinityModel::Steady {
            practical_salinity,
            swing,
            period_h,
        };
        let temperature = |mean_c, daily_swing_c| TemperatureModel {
            mean_c,
            daily_swing_c,
        };
        let tanks = vec![
            DemoTank {
                id: "parr-a",
                salinity: steady(0.18, 0.02, 13.0),
                temperature: temperature(9.0, 0.8),
                pressure_dbar: 0.0,
                format: ProbeFormat::BareNumbers {
                    conductivity_topic: "brannock/probes/parr-a/ec".into(),
                    temperature_topic: "brannock/probes/parr-a/temp".into(),
                    alpha_percent_per_c: 2.0,
                },
                interval_s: 30,
                phase_s: 0,
                drift_percent_per_day: 0.0,
                garbage_fraction: 0.0,
            },
            DemoTank {
                id: "smolt-t1",
                salinity: SalinityModel::Ramp {
                    from: 8.0,
                    to: 30.0,
                    per_hour: 1.5,
                    start: ramp_start,
                },
                temperature: temperature(9.5, 0.5),
                pressure_dbar: 0.0,
                format: ProbeFormat::CombinedJson {
                    topic: "brannock/probes/smolt-t1/state".into(),
                    keys: DEFAULT_KEYS,
                    time: TimeStyle::Rfc3339,
                },
                interval_s: 60,
                phase_s: 7,
                drift_percent_per_day: 0.0,
                garbage_fraction: 0.0,
            },
            DemoTank {
                id: "shrimp-n2",
                salinity: steady(12.5, 0.3, 9.0),
                temperature: temperature(28.0, 0.4),
                pressure_dbar: 0.0,
                format: ProbeFormat::Senml {
                    topic: "brannock/probes/shrimp-n2/state".into(),
                    base_name: "shrimp-n2:".into(),
                },
                interval_s: 60,
                phase_s: 13,
                drift_percent_per_day: 0.0,
                garbage_fraction: 0.0,
            },
            DemoTank {
                id: "sea-hold-4",
                salinity: steady(34.2, 0.05, 17.0),
                temperature: temperature(10.5, 0.3),
                pressure_dbar: 0.04,
                format: ProbeFormat::CombinedJson {
                    topic: "brannock/probes/sea-hold-4/state".into(),
                    keys: JsonKeyNames {
                        conductivity: "cond_ms",
                        temperature: "water_c",
                        time: "ts",
                    },
                    time: TimeStyle::UnixSeconds,
                },
                interval_s: 120,
                phase_s: 19,
                drift_percent_per_day: 0.0,
                garbage_fraction: 0.0,
            },
            DemoTank {
                id: "oyster-d1",
                salinity: steady(30.5, 0.1, 11.0),
                temperature: temperature(14.0, 0.3),
                pressure_dbar: 0.0,
                format: ProbeFormat::SplitJson {
                    conductivity_topic: "brannock/depuration/d1/conductivity".into(),
                    temperature_topic: "brannock/depuration/d1/temperature".into(),
                    keys: DEFAULT_KEYS,
                    time: TimeStyle::Rfc3339,
                },
                interval_s: 60,
                phase_s: 29,
                drift_percent_per_day: 3.0,
                garbage_fraction: 0.0,
            },
            DemoTank {
                id: "quarantine-q1",
                salinity: steady(32.0, 0.08, 7.0),
                temperature: temperature(11.0, 0.3),
                pressure_dbar: 0.0,
                format: ProbeFormat::CombinedJson {
                    topic: "brannock/probes/quarantine-q1/state".into(),
                    keys: DEFAULT_KEYS,
                    time: TimeStyle::Rfc3339,
                },
                interval_s: 15,
                phase_s: 11,
                drift_percent_per_day: 0.0,
                garbage_fraction: 0.04,
            },
        ];
        Self {
            noise: Noise::new(seed),
            start,
            tanks,
        }
    }

    /// Start of the simulated timeline (whole seconds).
    pub fn start(&self) -> DateTime<Utc> {
        self.start
    }

    /// The simulated tanks, in the order of `config/demo.toml`.
    pub fn tanks(&self) -> &[DemoTank] {
        &self.tanks
    }

    /// The index of a tank by id.
    pub fn tank_index(&self, id: &str) -> Option<usize> {
        self.tanks.iter().position(|t| t.id == id)
    }

    /// The true water of tank `tank` at `at`.
    pub fn water(&self, tank: usize, at: DateTime<Utc>) -> Option<Water> {
        let t = self.tanks.get(tank)?;
        let hours_since_epoch = at.timestamp_millis() as f64 / 3_600_000.0;
        let practical_salinity = match t.salinity {
            SalinityModel::Steady {
                practical_salinity,
                swing,
                period_h,
            } => practical_salinity + swing * (std::f64::consts::TAU * hours_since_epoch / period_h).sin(),
            SalinityModel::Ramp {
                from,
                to,
                per_hour,
                start,
            } => {
                let hours = ((at - start).num_milliseconds() as f64 / 3_600_000.0).max(0.0);
                (from + per_hour * hours).min(to)
            }
        };
        let hour_of_day = f64::from(at.num_seconds_from_midnight()) / 3600.0;
        // sin peaks 6 h after its zero crossing: zero at 09:00, warmest at 15:00 UTC.
        let temperature_c = t.temperature.mean_c
            + t.temperature.daily_swing_c * (std::f64::consts::TAU * (hour_of_day - 9.0) / 24.0).sin();
        Some(Water {
            practical_salinity,
            temperature_c,
        })
    }

    /// True in-situ conductivity (mS/cm) of tank `tank` at `at`, from PSS-78.
    pub fn true_conductivity_ms_cm(&self, tank: usize, at: DateTime<Utc>) -> Option<f64> {
        let water = self.water(tank, at)?;
        conductivity_from_practical_salinity(
            water.practical_salinity,
            water.temperature_c,
            self.tanks[tank].pressure_dbar,
        )
        .ok()
    }

    /// The probe's drift factor at `at`: what it reads divided by the truth, noise aside.
    pub fn drift_factor(&self, tank: usize, at: DateTime<Utc>) -> f64 {
        let Some(t) = self.tanks.get(tank) else {
            return 1.0;
        };
        let days = ((at - self.start).num_milliseconds() as f64 / 86_400_000.0).max(0.0);
        1.0 + t.drift_percent_per_day / 100.0 * days
    }

    /// Every message with a reading time in `[from, to)`, in time order (within one reading, temperature
    /// before conductivity).
    pub fn messages_between(&self, from: DateTime<Utc>, to: DateTime<Utc>) -> Vec<ProbeMessage> {
        let mut out = Vec::new();
        for (index, tank) in self.tanks.iter().enumerate() {
            let interval_ms = tank.interval_s.max(1) * 1000;
            let phase_ms = tank.phase_s * 1000;
            let offset = |t: DateTime<Utc>| (t - self.start).num_milliseconds() - phase_ms;
            let first = div_ceil(offset(from), interval_ms).max(0);
            let end = div_ceil(offset(to), interval_ms).max(0);
            for k in first..end {
                let sample = k as u64;
                let time = self.start + TimeDelta::milliseconds(phase_ms + k * interval_ms);
                self.sample_messages(index, sample, time, &mut out);
            }
        }
        // Stable: keeps each reading's own message order.
        out.sort_by_key(|m| (m.time, m.tank_index));
        out
    }

    /// The messages of one reading of one tank.
    fn sample_messages(&self, index: usize, sample: u64, time: DateTime<Utc>, out: &mut Vec<ProbeMessage>) {
        let tank = &self.tanks[index];
        let Some(water) = self.water(index, time) else {
            return;
        };
        let temperature_c =
            water.temperature_c + TEMPERATURE_NOISE_C * self.noise.normal(Stream::Temperature, index, sample);
        let Some(true_ms_cm) = self.true_conductivity_ms_cm(index, time) else {
            return;
        };
        let probe_ms_cm = true_ms_cm
            * self.drift_factor(index, time)
            * (1.0 + CONDUCTIVITY_NOISE_FRACTION * self.noise.normal(Stream::Conductivity, index, sample));
        let temperature_shown = payload::round_to(temperature_c, 2);
        let message = |topic: &str, payload: Vec<u8>, part, carries_time, garbage| ProbeMessage {
            tank_index: index,
            tank_id: tank.id,
            sample,
            time,
            topic: topic.to_string(),
            payload,
            part,
            carries_time,
            garbage,
        };
        match &tank.format {
            ProbeFormat::BareNumbers {
                conductivity_topic,
                temperature_topic,
                alpha_percent_per_c,
            } => {
                let mode = ProbeMode::SpecificConductance25 {
                    alpha_percent_per_c: *alpha_percent_per_c,
                };
                // The probe compensates with its own temperature reading.
                let Ok(sc25_ms_cm) = mode.reported_ms_cm(probe_ms_cm, temperature_shown) else {
                    return;
                };
                let sc25_us_cm = ConductivityUnit::MicroSiemensPerCm.from_ms_cm(sc25_ms_cm);
                out.push(message(
                    temperature_topic,
                    payload::bare_number(temperature_shown, 2),
                    MessagePart::Temperature,
                    false,
                    None,
                ));
                out.push(message(
                    conductivity_topic,
                    payload::bare_number(sc25_us_cm, 1),
                    MessagePart::Conductivity,
                    false,
                    None,
                ));
            }
            ProbeFormat::CombinedJson {
                topic,
                keys,
                time: style,
            } => {
                let good = payload::json_object(&[
                    (keys.conductivity, json!(payload::round_to(probe_ms_cm, 3))),
                    (keys.temperature, json!(temperature_shown)),
                    (keys.time, payload::time_value(time, *style)),
                ]);
                let garbage = (tank.garbage_fraction > 0.0
                    && self.noise.uniform(Stream::GarbageChoice, index, sample, 0) < tank.garbage_fraction)
                    .then(|| GarbageKind::pick(self.noise.uniform(Stream::GarbageKind, index, sample, 0)));
                let bytes = match garbage {
                    Some(kind) => kind.payload(
                        &good,
                        keys.conductivity,
                        self.noise.bits(Stream::GarbageBytes, index, sample, 0),
                    ),
                    None => payload::to_bytes(&good),
                };
                out.push(message(topic, bytes, MessagePart::Combined, true, garbage));
            }
            ProbeFormat::SplitJson {
                conductivity_topic,
                temperature_topic,
                keys,
                time: style,
            } => {
                let stamp = payload::time_value(time, *style);
                let temperature = payload::json_object(&[
                    (keys.temperature, json!(temperature_shown)),
                    (keys.time, stamp.clone()),
                ]);
                let conductivity = payload::json_object(&[
                    (keys.conductivity, json!(payload::round_to(probe_ms_cm, 3))),
                    (keys.time, stamp),
                ]);
                out.push(message(
                    temperature_topic,
                    payload::to_bytes(&temperature),
                    MessagePart::Temperature,
                    true,
                    None,
                ));
                out.push(message(
                    conductivity_topic,
                    payload::to_bytes(&conductivity),
                    MessagePart::Conductivity,
                    true,
                    None,
                ));
            }
            ProbeFormat::Senml { topic, base_name } => {
                let s_m = ConductivityUnit::SiemensPerMetre.from_ms_cm(probe_ms_cm);
                let pack = payload::senml_pack(base_name, time, payload::round_to(s_m, 4), temperature_shown);
                out.push(message(
                    topic,
                    payload::to_bytes(&pack),
                    MessagePart::Combined,
                    true,
                    None,
                ));
            }
        }
    }
}

/// ⌈a / b⌉ for b > 0.
fn div_ceil(a: i64, b: i64) -> i64 {
    let q = a.div_euclid(b);
    if a.rem_euclid(b) == 0 {
        q
    } else {
        q + 1
    }
}

#[cfg(test)]
mod tests;
