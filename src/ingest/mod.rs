//! The pure ingest core: one MQTT message in, an [`IngestOutcome`] out.
//!
//! No tokio, MQTT, SQLite or clock: the receive time is passed in. Steps for a message:
//! 1. route the topic to its tank and kind ([`routing`]); unknown topics are ignored;
//! 2. size cap, UTF-8 (a leading byte-order mark is dropped), then the tank's payload format
//!    ([`payload`]): JSON object, SenML pack or bare number;
//! 3. checks ([`checks`]): reading time not beyond receipt + skew, temperature and reported conductivity
//!    plausible;
//! 4. pairing ([`pairing`]): each conductivity takes the temperature of the same message nearest in time,
//!    else the tank's newest temperature, either within `temperature_max_age_s`, else `no_temperature`;
//! 5. conversion to in-situ mS/cm with the tank's unit and probe mode, checked for plausibility again.
//!
//! A message is all or nothing: if any value in it fails, the whole message is rejected and the pairing
//! state is left as it was. Temperatures of accepted or buffered messages update the pairing state.
//! The science derivation (salinity, density, ...) is not done here; the daemon derives after ingest.
use chrono::{DateTime, Utc};

use crate::config::{Config, JsonKeys, PayloadFormat};
use crate::seawater::{ConductivityUnit, ProbeMode};

pub mod checks;
pub mod log_limit;
pub mod outcome;
pub mod pairing;
pub mod payload;
pub mod routing;
pub mod subscriptions;

pub use log_limit::{LogDecision, LogLimiter};
pub use outcome::{
    AcceptedReading, IgnoreReason, IngestOutcome, RejectReason, Rejection, PAYLOAD_PREFIX_BYTES,
};
pub use pairing::TemperatureSample;
pub use routing::{Route, TopicRouter};
pub use subscriptions::subscriptions;

use checks::Limits;
use pairing::{nearest, PairingState};
use payload::{Expect, PayloadError, Quantity, Sample};

/// What the ingest core keeps of a tank.
#[derive(Debug, Clone)]
struct TankIngest {
    id: String,
    json_keys: JsonKeys,
    conductivity_unit: ConductivityUnit,
    probe_mode: ProbeMode,
    pressure_dbar: f64,
}

/// Turns MQTT messages into accepted readings, rejections, or pairing updates.
#[derive(Debug, Clone)]
pub struct Ingestor {
    router: TopicRouter,
    tanks: Vec<TankIngest>,
    limits: Limits,
    pairing: PairingState,
}

struct PendingConductivity {
    time: DateTime<Utc>,
    value: f64,
    unit: ConductivityUnit,
    reported_ms_cm: f64,
}

impl Ingestor {
    /// An ingestor for every tank of the configuration, with empty pairing state.
    pub fn new(config: &Config) -> Self {
        let tanks = config
            .tanks
            .iter()
            .map(|t| TankIngest {
                id: t.id.clone(),
                json_keys: t.json_keys.clone(),
                conductivity_unit: t.conductivity_unit,
                probe_mode: t.probe_mode,
                pressure_dbar: t.pressure_dbar,
            })
            .collect::<Vec<_>>();
        Self {
            router: TopicRouter::new(config),
            pairing: PairingState::new(tanks.len()),
            tanks,
            limits: Limits::from_settings(&config.ingest),
        }
    }

    /// The route of a topic, if a tank listens to it.
    pub fn route(&self, topic: &str) -> Option<Route> {
        self.router.route(topic)
    }

    /// The newest temperature kept for pairing of a tank.
    pub fn latest_temperature(&self, tank_index: usize) -> Option<TemperatureSample> {
        self.pairing.latest(tank_index)
    }

    /// Handles one message received at `received_at`.
    pub fn handle(&mut self, topic: &str, payload: &[u8], received_at: DateTime<Utc>) -> IngestOutcome {
        let Some(route) = self.router.route(topic) else {
            return IngestOutcome::Ignored(IgnoreReason::UnconfiguredTopic);
        };
        if payload.is_empty() {
            return IngestOutcome::Ignored(IgnoreReason::EmptyPayload);
        }
        match self.process(route, topic, payload, received_at) {
            Ok(outcome) => outcome,
            Err(error) => IngestOutcome::Rejected(Rejection {
                tank_id: self.tanks.get(route.tank_index).map(|t| t.id.clone()),
                topic: topic.to_string(),
                reason: error.reason,
                detail: error.detail,
                payload_prefix: payload[..payload.len().min(PAYLOAD_PREFIX_BYTES)].to_vec(),
            }),
        }
    }

    fn process(
        &mut self,
        route: Route,
        topic: &str,
        payload: &[u8],
        received_at: DateTime<Utc>,
    ) -> Result<IngestOutcome, PayloadError> {
        let Some(tank) = self.tanks.get(route.tank_index) else {
            // Routes are built from the same tank list, so this does not happen.
            return Ok(IngestOutcome::Ignored(IgnoreReason::UnconfiguredTopic));
        };
        if payload.len() > self.limits.max_payload_bytes {
            return Err(PayloadError::new(
                RejectReason::PayloadTooLarge,
                format!(
                    "{} bytes, more than the {} allowed",
                    payload.len(),
                    self.limits.max_payload_bytes
                ),
            ));
        }
        let text = std::str::from_utf8(payload).map_err(|e| {
            PayloadError::new(
                RejectReason::NotUtf8,
                format!("invalid UTF-8 after byte {}", e.valid_up_to()),
            )
        })?;
        let text = text.strip_prefix('\u{feff}').unwrap_or(text);
        let expect = Expect::of(route.kind);
        let samples = match route.format {
            PayloadFormat::Json => payload::json::parse(text, &tank.json_keys, expect)?,
            PayloadFormat::Senml => payload::senml::parse(text, received_at, expect)?,
            PayloadFormat::Number => {
                let quantity = match expect {
                    Expect::Temperature => Quantity::Temperature,
                    // The configuration refuses `number` on combined topics.
                    Expect::Conductivity | Expect::Both => Quantity::Conductivity,
                };
                vec![Sample {
                    quantity,
                    value: payload::number::parse(text)?,
                    conductivity_unit: None,
                    time: None,
                }]
            }
        };

        let mut temperatures = Vec::new();
        let mut conductivities = Vec::new();
        for sample in &samples {
            let time = sample.time.unwrap_or(received_at);
            self.limits.check_time(time, received_at)?;
            match sample.quantity {
                Quantity::Temperature => {
                    self.limits.check_temperature_c(sample.value)?;
                    temperatures.push(TemperatureSample {
                        time,
                        temperature_c: sample.value,
                    });
                }
                Quantity::Conductivity => {
                    let unit = sample.conductivity_unit.unwrap_or(tank.conductivity_unit);
                    let reported_ms_cm = unit.to_ms_cm(sample.value);
                    self.limits
                        .check_conductivity_ms_cm(reported_ms_cm, "reported conductivity")?;
                    conductivities.push(PendingConductivity {
                        time,
                        value: sample.value,
                        unit,
                        reported_ms_cm,
                    });
                }
            }
        }

        let max_age = self.limits.temperature_max_age;
        let mut readings = Vec::with_capacity(conductivities.len());
        for c in &conductivities {
            let temperature = nearest(&temperatures, c.time, max_age)
                .or_else(|| self.pairing.find(route.tank_index, c.time, max_age))
                .ok_or_else(|| {
                    let latest = match self.pairing.latest(route.tank_index) {
                        Some(t) => format!("the newest is from {}", t.time.to_rfc3339()),
                        None => "none has arrived yet".to_string(),
                    };
                    PayloadError::new(
                        RejectReason::NoTemperature,
                        format!(
                            "no temperature of tank `{}` within {} s of {}; {latest}",
                            tank.id,
                            max_age.num_seconds(),
                            c.time.to_rfc3339()
                        ),
                    )
                })?;
            let conductivity_ms_cm = tank
                .probe_mode
                .in_situ_ms_cm(c.reported_ms_cm, temperature.temperature_c)
                .map_err(|e| PayloadError::new(RejectReason::ImplausibleConductivity, e.to_string()))?;
            self.limits
                .check_conductivity_ms_cm(conductivity_ms_cm, "in-situ conductivity")?;
            readings.push(AcceptedReading {
                tank_id: tank.id.clone(),
                tank_index: route.tank_index,
                time: c.time,
                received_at,
                topic: topic.to_string(),
                reported_conductivity: c.value,
                reported_unit: c.unit,
                probe_mode: tank.probe_mode,
                conductivity_ms_cm,
                temperature_c: temperature.temperature_c,
                temperature_time: temperature.time,
                pressure_dbar: tank.pressure_dbar,
            });
        }

        for t in temperatures {
            self.pairing.update(route.tank_index, t);
        }
        if readings.is_empty() {
            Ok(IngestOutcome::Buffered)
        } else {
            Ok(IngestOutcome::Accepted(readings))
        }
    }
}

#[cfg(test)]
mod tests;
