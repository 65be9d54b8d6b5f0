//! After each commit: ack the messages it covers (in order), publish the tanks' new state, and hand the
//! states and the commit's size and latency to the HTTP server's live view.
//!
//! Acks never wait for state publishes. A state publish waits for room in the MQTT client's request
//! channel, and that channel drains only while the client's event loop runs, which in turn waits for the
//! ingest loop, the writer and so this task: publishing inline here closed that loop, and with many tanks
//! per commit (one state each) the daemon crawled at one publish timeout per tank. So states go to a
//! separate task through a map that keeps only the newest state of each tank.
//!
//! States are published retained at QoS 0: a QoS 1 publish takes one of the client's few outgoing
//! in-flight slots until the broker's PUBACK, and once they are all taken the client holds every later
//! request, the acks of received readings included, so the broker stops delivering; at QoS 0 nothing
//! waits. A state lost with a dropped connection is replaced by the tank's next reading (the retained
//! `online`/`offline` availability stays QoS 1).
use std::collections::HashMap;
use std::sync::{Arc, Mutex};
use std::time::Duration;

use chrono::{DateTime, Utc};
use tokio::sync::{mpsc, Notify};

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
    /// States not published: the client had no room within the timeout, or a newer state replaced them.
    pub states_dropped: u64,
}

/// A state publish that cannot be queued within this time is dropped (the next reading publishes again).
const STATE_PUBLISH_TIMEOUT: Duration = Duration::from_secs(1);

/// The newest committed state of each tank not yet handed to the MQTT client.
#[derive(Default)]
struct StateQueue {
    states: Mutex<StateSlots>,
    notify: Notify,
}

#[derive(Default)]
struct StateSlots {
    newest: HashMap<String, (DateTime<Utc>, TankState)>,
    replaced: u64,
    closed: bool,
}

impl StateQueue {
    fn lock(&self) -> std::sync::MutexGuard<'_, StateSlots> {
        self.states.lock().unwrap_or_else(|e| e.into_inner())
    }

    /// Keeps `state` if it is at least as new as the one waiting for its tank.
    fn offer(&self, time: DateTime<Utc>, state: TankState) {
        let mut slots = self.lock();
        let newer = slots.newest.get(&state.tank).is_none_or(|(t, _)| time >= *t);
        if newer {
            if slots.newest.insert(state.tank.clone(), (time, state)).is_some() {
                slots.replaced += 1;
            }
        } else {
            slots.replaced += 1;
        }
        drop(slots);
        self.notify.notify_one();
    }

    fn close(&self) {
        self.lock().closed = true;
        self.notify.notify_one();
    }
}

/// Runs until the writer's report channel closes and the last states are published; returns the totals.
pub async fn run_acker(
    mut reports: mpsc::Receiver<CommitReport<Pending>>,
    mqtt: MqttHandle,
    topic_prefix: String,
    live: crate::http::LiveView,
) -> AckerSummary {
    let queue = Arc::new(StateQueue::default());
    let publisher = tokio::spawn(publish_states(queue.clone(), mqtt.clone(), topic_prefix));
    let mut summary = AckerSummary::default();
    while let Some(report) = reports.recv().await {
        summary.commits += 1;
        summary.readings_inserted += report.inserted;
        summary.duplicates += report.duplicates;
        summary.rejections_stored += report.rejections;
        live.record_commit(report.rows, report.commit_latency);
        tracing::debug!(
            inserted = report.inserted,
            duplicates = report.duplicates,
            rejections = report.rejections,
            latency_ms = report.commit_latency.as_secs_f64() * 1e3,
            "committed"
        );
        for pending in report.acks {
            if let Some(token) = pending.ack {
                match mqtt.ack(token) {
                    AckOutcome::Stale | AckOutcome::Closed => summary.acks_stale += 1,
                    _ => summary.acks_sent += 1,
                }
            }
            if let Some((time, state)) = pending.state {
                live.set_tank_state(time, state.clone());
                queue.offer(time, state);
            }
        }
    }
    queue.close();
    let (published, dropped) = publisher.await.unwrap_or_default();
    summary.states_published = published;
    summary.states_dropped = dropped + queue.lock().replaced;
    summary
}

/// Publishes queued states (retained, QoS 0) until the queue is closed and empty; returns
/// (published, dropped).
async fn publish_states(queue: Arc<StateQueue>, mqtt: MqttHandle, topic_prefix: String) -> (u64, u64) {
    let (mut published_count, mut dropped) = (0u64, 0u64);
    let mut published: HashMap<String, DateTime<Utc>> = HashMap::new();
    loop {
        let (batch, closed) = {
            let mut slots = queue.lock();
            (std::mem::take(&mut slots.newest), slots.closed)
        };
        if batch.is_empty() {
            if closed {
                return (published_count, dropped);
            }
            queue.notify.notified().await;
            continue;
        }
        for (tank, (time, state)) in batch {
            if published.get(&tank).is_some_and(|t| *t > time) {
                continue;
            }
            let Ok(json) = serde_json::to_vec(&state) else {
                continue;
            };
            let topic = state_topic(&topic_prefix, &tank);
            let publish = mqtt.publish(&topic, json, true, QoS::AtMostOnce);
            match tokio::time::timeout(STATE_PUBLISH_TIMEOUT, publish).await {
                Ok(Ok(())) => {
                    published_count += 1;
                    published.insert(tank, time);
                }
                Ok(Err(err)) => {
                    dropped += 1;
                    tracing::debug!(%topic, error = %err, "state not published");
                }
                Err(_) => dropped += 1,
            }
        }
    }
}
