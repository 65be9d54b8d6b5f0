//! After each commit: ack the messages it covers (in order) and publish the tanks' new state.
use std::collections::HashMap;
use std::time::Duration;

use chrono::{DateTime, Utc};
use tokio::sync::mpsc;

use super::tank_state::{state_topic, TankState};
use crate::mqtt::{AckOutcome, AckToken, MqttHandle, QoS};
use crate::storage::CommitReport;

/// What travels with a stored item through the writer: the message's ack and, for readings, the state
/// to publish once the reading is committed.
#[derive(Debug)]
pub struct Pending {
    pub ack: Option<AckToken>,
    pub state: Option<(DateTime<Utc>, TankState)>,
}

/// Totals of the acker over the daemon's life.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct AckerSummary {
    pub commits: u64,
    pub readings_inserted: u64,
    pub duplicates: u64,
    pub rejections_stored: u64,
    pub acks_sent: u64,
    pub acks_stale: u64,
    pub states_published: u64,
    pub states_dropped: u64,
}

/// A state publish that cannot be queued within this time is dropped (the next reading publishes again).
const STATE_PUBLISH_TIMEOUT: Duration = Duration::from_secs(1);

/// Runs until the writer's report channel closes; returns the totals.
pub async fn run_acker(
    mut reports: mpsc::Receiver<CommitReport<Pending>>,
    mqtt: MqttHandle,
    topic_prefix: String,
) -> AckerSummary {
    let mut summary = AckerSummary::default();
    let mut published: HashMap<String, DateTime<Utc>> = HashMap::new();
    while let Some(report) = reports.recv().await {
        summary.commits += 1;
        summary.readings_inserted += report.inserted;
        summary.duplicates += report.duplicates;
        summary.rejections_stored += report.rejections;
        tracing::debug!(
            inserted = report.inserted,
            duplicates = report.duplicates,
            rejections = report.rejections,
            latency_ms = report.commit_latency.as_secs_f64() * 1e3,
            "committed"
        );
        let mut newest: HashMap<String, (DateTime<Utc>, TankState)> = HashMap::new();
        for pending in report.acks {
            if let Some(token) = pending.ack {
                match mqtt.ack(token) {
                    AckOutcome::Stale | AckOutcome::Closed => summary.acks_stale += 1,
                    _ => summary.acks_sent += 1,
                }
            }
            if let Some((time, state)) = pending.state {
                let newer = newest.get(&state.tank).is_none_or(|(t, _)| time >= *t);
                if newer {
                    newest.insert(state.tank.clone(), (time, state));
                }
            }
        }
        for (tank, (time, state)) in newest {
            if published.get(&tank).is_some_and(|t| *t > time) {
                continue;
            }
            let Ok(json) = serde_json::to_vec(&state) else {
                continue;
            };
            let topic = state_topic(&topic_prefix, &tank);
            let publish = mqtt.publish(&topic, json, true, QoS::AtLeastOnce);
            match tokio::time::timeout(STATE_PUBLISH_TIMEOUT, publish).await {
                Ok(Ok(())) => {
                    summary.states_published += 1;
                    published.insert(tank, time);
                }
                Ok(Err(err)) => {
                    summary.states_dropped += 1;
                    tracing::debug!(%topic, error = %err, "state not published");
                }
                Err(_) => summary.states_dropped += 1,
            }
        }
    }
    summary
}
