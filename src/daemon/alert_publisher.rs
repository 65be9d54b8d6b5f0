//! Publishes alert events on MQTT: each event on `<prefix>/tank/<id>/alert` (JSON, QoS 1, not retained)
//! and a retained summary of the open alerts on `<prefix>/alerts` after every change.
//!
//! Delivery hook: events are also forwarded, without waiting, to an optional `mpsc::Sender<AlertEvent>`
//! (`delivery`), where webhook and exec delivery (`src/alerts/delivery/`) connect. A full or closed
//! delivery queue drops the forward (logged); the record is already on its way to SQLite, so nothing is lost.
//!
//! Events are published when the engine decides, which can precede the commit of their row by up to one
//! writer batch (`flush_ms`).
use std::collections::BTreeMap;
use std::time::Duration;

use chrono::{SecondsFormat, Utc};
use serde::Serialize;
use tokio::sync::mpsc;

use crate::alerts::{AlertEvent, AlertId, AlertRecord};
use crate::mqtt::{MqttHandle, QoS};

/// A publish that cannot be queued within this time is dropped (and logged).
const PUBLISH_TIMEOUT: Duration = Duration::from_secs(2);

/// Topic of a tank's alert events.
pub fn alert_topic(prefix: &str, tank_id: &str) -> String {
    format!("{prefix}/tank/{tank_id}/alert")
}

/// Topic of the retained summary of open alerts.
pub fn summary_topic(prefix: &str) -> String {
    format!("{prefix}/alerts")
}

/// The retained summary.
#[derive(Debug, Serialize)]
pub struct OpenAlertsSummary<'a> {
    pub updated_at: String,
    pub open_count: usize,
    pub open: Vec<&'a AlertRecord>,
}

/// Runs until `events` closes. `open` is the set restored at start (published once first).
pub async fn run_alert_publisher(
    mut events: mpsc::Receiver<AlertEvent>,
    mqtt: MqttHandle,
    prefix: String,
    open: Vec<AlertRecord>,
    delivery: Option<mpsc::Sender<AlertEvent>>,
) {
    let mut open: BTreeMap<AlertId, AlertRecord> = open.into_iter().map(|r| (r.id, r)).collect();
    publish_summary(&mqtt, &prefix, &open).await;
    while let Some(event) = events.recv().await {
        let record = event.alert();
        if record.state.is_open() {
            open.insert(record.id, record.clone());
        } else {
            open.remove(&record.id);
        }
        match serde_json::to_vec(&event) {
            Ok(json) => publish(&mqtt, &alert_topic(&prefix, &record.tank), json, false).await,
            Err(err) => tracing::warn!(error = %err, "alert event not serialisable"),
        }
        publish_summary(&mqtt, &prefix, &open).await;
        if let Some(tx) = &delivery {
            if let Err(err) = tx.try_send(event) {
                tracing::warn!(error = %err, "alert delivery queue full or closed; event not forwarded");
            }
        }
    }
}

async fn publish_summary(mqtt: &MqttHandle, prefix: &str, open: &BTreeMap<AlertId, AlertRecord>) {
    let summary = OpenAlertsSummary {
        updated_at: Utc::now().to_rfc3339_opts(SecondsFormat::Millis, true),
        open_count: open.len(),
        open: open.values().collect(),
    };
    if let Ok(json) = serde_json::to_vec(&summary) {
        publish(mqtt, &summary_topic(prefix), json, true).await;
    }
}

async fn publish(mqtt: &MqttHandle, topic: &str, payload: Vec<u8>, retain: bool) {
    match tokio::time::timeout(
        PUBLISH_TIMEOUT,
        mqtt.publish(topic, payload, retain, QoS::AtLeastOnce),
    )
    .await
    {
        Ok(Ok(())) => {}
        Ok(Err(err)) => tracing::warn!(%topic, error = %err, "alert publish failed"),
        Err(_) => tracing::warn!(%topic, "alert publish timed out"),
    }
}
