//! `Payload`: one alert event encoded once as JSON, with what the logs and the exec hook need.
use crate::alerts::{AlertEvent, AlertId, Severity};

/// An event ready to deliver: the JSON body and a few fields for logs and the exec hook's environment.
#[derive(Debug)]
pub(crate) struct Payload {
    pub(crate) id: AlertId,
    pub(crate) event: &'static str,
    pub(crate) severity: Severity,
    pub(crate) tank: String,
    /// The event as JSON (the `AlertEvent` serde form, tagged by `"event"`).
    pub(crate) body: Vec<u8>,
}

impl Payload {
    pub(crate) fn encode(event: &AlertEvent) -> Result<Self, serde_json::Error> {
        Ok(Self {
            id: event.id(),
            event: event.name(),
            severity: event.severity(),
            tank: event.alert().tank.clone(),
            body: serde_json::to_vec(event)?,
        })
    }
}
