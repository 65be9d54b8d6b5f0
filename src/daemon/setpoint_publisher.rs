//! Publishes each tank's schedule setpoint, retained at QoS 1, on `<prefix>/tank/<id>/setpoint`, for a
//! dosing controller to follow.
//!
//! The ingest loop hands messages over a channel and never waits for the broker. Setpoints change rarely
//! (a step marked done, a pause, a flow ramp moving by 0.01 SP), so each is worth delivering: one that
//! could not be published (broker down, client full) is kept as the tank's newest and retried every
//! [`RETRY_INTERVAL`] until it goes out or a newer one replaces it.
use std::collections::BTreeMap;
use std::time::Duration;

use tokio::sync::mpsc;

use crate::mqtt::{MqttHandle, QoS};
use crate::schedule::{setpoint_topic, SetpointMessage};

/// A publish that cannot be queued within this time waits for the next retry.
const PUBLISH_TIMEOUT: Duration = Duration::from_secs(2);
/// How often unpublished setpoints are retried.
const RETRY_INTERVAL: Duration = Duration::from_secs(10);

/// Totals over the daemon's life.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct SetpointSummary {
    pub published: u64,
    /// Attempts that failed (each retried later).
    pub failed: u64,
    /// Setpoints still unpublished at shutdown.
    pub unpublished: u64,
}

/// Runs until `setpoints` closes; then makes one last attempt for what is unpublished.
pub async fn run_setpoint_publisher(
    mut setpoints: mpsc::Receiver<SetpointMessage>,
    mqtt: MqttHandle,
    prefix: String,
) -> SetpointSummary {
    let mut summary = SetpointSummary::default();
    let mut unpublished: BTreeMap<String, SetpointMessage> = BTreeMap::new();
    let mut retry = tokio::time::interval(RETRY_INTERVAL);
    retry.set_missed_tick_behavior(tokio::time::MissedTickBehavior::Delay);
    loop {
        tokio::select! {
            message = setpoints.recv() => {
                let Some(message) = message else { break };
                unpublished.insert(message.tank.clone(), message);
            }
            _ = retry.tick() => {}
        }
        publish_all(&mqtt, &prefix, &mut unpublished, &mut summary).await;
    }
    publish_all(&mqtt, &prefix, &mut unpublished, &mut summary).await;
    summary.unpublished = unpublished.len() as u64;
    summary
}

async fn publish_all(
    mqtt: &MqttHandle,
    prefix: &str,
    unpublished: &mut BTreeMap<String, SetpointMessage>,
    summary: &mut SetpointSummary,
) {
    let tanks: Vec<String> = unpublished.keys().cloned().collect();
    for tank in tanks {
        let Some(message) = unpublished.get(&tank) else {
            continue;
        };
        let json = match serde_json::to_vec(message) {
            Ok(json) => json,
            Err(err) => {
                tracing::warn!(%tank, error = %err, "setpoint not serialisable");
                unpublished.remove(&tank);
                continue;
            }
        };
        let topic = setpoint_topic(prefix, &tank);
        let publish = mqtt.publish(&topic, json, true, QoS::AtLeastOnce);
        match tokio::time::timeout(PUBLISH_TIMEOUT, publish).await {
            Ok(Ok(())) => {
                summary.published += 1;
                unpublished.remove(&tank);
            }
            Ok(Err(err)) => {
                summary.failed += 1;
                tracing::debug!(%topic, error = %err, "setpoint not published; will retry");
            }
            Err(_) => {
                summary.failed += 1;
                tracing::debug!(%topic, "setpoint publish timed out; will retry");
            }
        }
    }
}
