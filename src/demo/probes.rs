//! The simulated probes as an MQTT client: each tick, publish the scenario's messages whose simulated
//! reading time has come, with QoS 1, from a plain rumqttc client with its own client id.
//!
//! Each real tick covers `speed × tick` simulated seconds ([`SimClock`]). A bare-number probe cannot
//! carry a time (the ingest core stamps it on receipt), so of each tick's batch only its newest reading
//! is sent ([`newest_untimed_only`]); every other probe sends all of its readings with their own times.
//! On shutdown the task stops publishing, waits (bounded) for the broker's acks of what it sent, and
//! disconnects.
use std::net::SocketAddr;
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::Arc;
use std::time::Duration;

use chrono::{DateTime, Utc};
use rumqttc::{AsyncClient, Event, Incoming, MqttOptions, Outgoing, QoS};
use thiserror::Error;
use tokio::sync::watch;
use tokio::time::{Instant, MissedTickBehavior};

use super::clock::SimClock;
use super::scenario::{ProbeMessage, Scenario};

/// Where and how the probes publish.
#[derive(Debug, Clone, PartialEq)]
pub struct ProbeSettings {
    /// The broker.
    pub broker: SocketAddr,
    /// MQTT client id of the probes (not the daemon's).
    pub client_id: String,
    /// Real time between publishing rounds.
    pub tick: Duration,
    /// How long to wait for outstanding acks on shutdown.
    pub ack_timeout: Duration,
}

impl ProbeSettings {
    /// One round a second, 5 s for the last acks.
    pub fn new(broker: SocketAddr, client_id: impl Into<String>) -> Self {
        Self {
            broker,
            client_id: client_id.into(),
            tick: Duration::from_secs(1),
            ack_timeout: Duration::from_secs(5),
        }
    }
}

/// What the probes have done so far.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ProbeStats {
    /// Messages handed to the MQTT client.
    pub published: u64,
    /// Of those, deliberately broken ones.
    pub published_broken: u64,
    /// Acks (PUBACK) received from the broker.
    pub acked: u64,
    /// The simulated clock at the last round.
    pub simulated_time: Option<DateTime<Utc>>,
}

/// Why the probes stopped early.
#[derive(Debug, Error)]
pub enum ProbeError {
    #[error("simulated probes: the MQTT client stopped: {0}")]
    Client(#[from] rumqttc::ClientError),
}

/// Of a batch, keeps every timed message but only the newest reading of each probe whose messages
/// carry no time; order is kept.
pub fn newest_untimed_only(batch: Vec<ProbeMessage>) -> Vec<ProbeMessage> {
    let mut newest: Vec<(usize, u64)> = Vec::new();
    for m in batch.iter().filter(|m| !m.carries_time) {
        match newest.iter_mut().find(|(tank, _)| *tank == m.tank_index) {
            Some((_, sample)) => *sample = (*sample).max(m.sample),
            None => newest.push((m.tank_index, m.sample)),
        }
    }
    batch
        .into_iter()
        .filter(|m| m.carries_time || newest.contains(&(m.tank_index, m.sample)))
        .collect()
}

/// Publishes the scenario until `shutdown` turns true; reports progress on `stats`.
pub async fn run_probes(
    scenario: Scenario,
    clock: SimClock,
    settings: ProbeSettings,
    stats: watch::Sender<ProbeStats>,
    mut shutdown: watch::Receiver<bool>,
) -> Result<ProbeStats, ProbeError> {
    let mut options = MqttOptions::new(
        settings.client_id.clone(),
        settings.broker.ip().to_string(),
        settings.broker.port(),
    );
    options
        .set_keep_alive(Duration::from_secs(30))
        .set_clean_session(true)
        .set_max_packet_size(64 * 1024, 64 * 1024)
        .set_inflight(100);
    let (client, eventloop) = AsyncClient::new(options, 256);
    let acked = Arc::new(AtomicU64::new(0));
    let stopping = Arc::new(AtomicBool::new(false));
    let events = tokio::spawn(drive(eventloop, acked.clone(), stopping.clone()));

    let mut current = ProbeStats::default();
    let mut from = clock.sim_start();
    let mut ticker = tokio::time::interval(settings.tick);
    ticker.set_missed_tick_behavior(MissedTickBehavior::Delay);
    let result = loop {
        tokio::select! {
            _ = ticker.tick() => {}
            changed = shutdown.changed() => {
                if changed.is_err() || *shutdown.borrow() {
                    break Ok(());
                }
                continue;
            }
        }
        if *shutdown.borrow() {
            break Ok(());
        }
        let to = clock.at(Utc::now());
        let batch = newest_untimed_only(scenario.messages_between(from, to));
        from = to.max(from);
        let mut failed = None;
        for m in batch {
            let broken = m.garbage.is_some();
            if let Err(e) = client.publish(m.topic, QoS::AtLeastOnce, false, m.payload).await {
                failed = Some(e);
                break;
            }
            current.published += 1;
            current.published_broken += u64::from(broken);
        }
        current.acked = acked.load(Ordering::Relaxed);
        current.simulated_time = Some(to);
        stats.send_replace(current.clone());
        if let Some(e) = failed {
            break Err(ProbeError::Client(e));
        }
    };

    // Wait for the broker to ack what was sent, then leave cleanly.
    let deadline = Instant::now() + settings.ack_timeout;
    while acked.load(Ordering::Relaxed) < current.published && Instant::now() < deadline {
        tokio::time::sleep(Duration::from_millis(20)).await;
    }
    stopping.store(true, Ordering::Relaxed);
    let disconnected = client.disconnect().await.is_ok();
    if !disconnected
        || tokio::time::timeout(Duration::from_secs(2), events)
            .await
            .is_err()
    {
        tracing::debug!("simulated probes: event loop did not finish after DISCONNECT");
    }
    current.acked = acked.load(Ordering::Relaxed);
    stats.send_replace(current.clone());
    result.map(|()| current)
}

/// Polls the client's event loop: counts acks, reconnects after errors until stopping.
async fn drive(mut eventloop: rumqttc::EventLoop, acked: Arc<AtomicU64>, stopping: Arc<AtomicBool>) {
    loop {
        match eventloop.poll().await {
            Ok(Event::Incoming(Incoming::PubAck(_))) => {
                acked.fetch_add(1, Ordering::Relaxed);
            }
            Ok(Event::Outgoing(Outgoing::Disconnect)) => break,
            Ok(_) => {}
            Err(e) => {
                if stopping.load(Ordering::Relaxed) {
                    break;
                }
                tracing::warn!(error = %e, "simulated probes: connection lost, reconnecting");
                tokio::time::sleep(Duration::from_millis(200)).await;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use chrono::TimeDelta;

    #[test]
    fn only_the_newest_bare_number_reading_of_a_batch_is_kept() {
        let t0 = DateTime::from_timestamp(1_743_573_600, 0).unwrap();
        let s = Scenario::brannock(1, t0, t0 + TimeDelta::days(1));
        let batch = s.messages_between(t0, t0 + TimeDelta::minutes(5));
        let parr = s.tank_index("parr-a").unwrap();
        assert_eq!(batch.iter().filter(|m| m.tank_index == parr).count(), 20);
        let kept = newest_untimed_only(batch.clone());
        let parr_kept: Vec<&ProbeMessage> = kept.iter().filter(|m| m.tank_index == parr).collect();
        // The last reading (sample 9, at 4 min 30 s): its temperature, then its conductivity.
        assert_eq!(parr_kept.len(), 2);
        assert!(parr_kept.iter().all(|m| m.sample == 9));
        assert!(parr_kept[0].topic.ends_with("/temp") && parr_kept[1].topic.ends_with("/ec"));
        let timed: Vec<&ProbeMessage> = batch.iter().filter(|m| m.carries_time).collect();
        assert_eq!(kept.len(), timed.len() + 2);
    }
}
