//! Manual acknowledgement of inbound QoS 1/2 messages, bound to one network connection.
//!
//! A packet id means something only on the connection that carried it. Every connection
//! gets a new generation number; an [`AckToken`] remembers the generation it was issued in,
//! and an ack whose generation is not the live one (or that arrives while disconnected) is
//! dropped and counted as stale: the broker redelivers that message on the next session
//! instead. The check and the hand-over to rumqttc's request channel happen under one lock
//! that the event-loop task also takes when a connection ends, at which point it drains the
//! channel of acks, so no ack can slip from one connection onto the next.

use std::collections::VecDeque;
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::{Mutex, MutexGuard};

use rumqttc::{AsyncClient, EventLoop, Publish, Request};

use super::options::QoS;

/// Permission to acknowledge one inbound message. Not `Clone`: one token, one ack.
#[derive(Debug, PartialEq, Eq)]
pub struct AckToken {
    generation: u64,
    pkid: u16,
    qos: QoS,
}

impl AckToken {
    pub(crate) fn new(generation: u64, pkid: u16, qos: QoS) -> Self {
        Self {
            generation,
            pkid,
            qos,
        }
    }

    /// Connection generation the message arrived on (first connection is 1).
    pub fn generation(&self) -> u64 {
        self.generation
    }

    /// MQTT packet id (0 for QoS 0).
    pub fn packet_id(&self) -> u16 {
        self.pkid
    }

    pub fn qos(&self) -> QoS {
        self.qos
    }
}

/// What happened to an ack.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AckOutcome {
    /// Handed to the event loop for the live connection.
    Sent,
    /// The request channel was full; queued in order and handed over as it drains.
    Queued,
    /// QoS 0: nothing to acknowledge.
    NotNeeded,
    /// Token from an earlier connection, or we are disconnected: dropped, the broker will
    /// redeliver the message.
    Stale,
    /// The client has shut down.
    Closed,
}

#[derive(Debug, Default)]
struct GateInner {
    generation: u64,
    connected: bool,
    closed: bool,
    /// Acks (pkid, qos) waiting for room in the request channel, in arrival order.
    overflow: VecDeque<(u16, QoS)>,
    /// Acks handed to the channel on the live connection.
    enqueued_this_connection: u64,
    /// PUBACK/PUBREC packets the event loop reported as written on the live connection.
    written_this_connection: u64,
}

/// Shared between the handle (acks) and the event-loop task (connection changes).
#[derive(Debug, Default)]
pub(crate) struct AckGate {
    inner: Mutex<GateInner>,
    stale: AtomicU64,
    written: AtomicU64,
}

fn ack_carrier(pkid: u16, qos: QoS) -> Publish {
    // rumqttc builds the PUBACK/PUBREC from a publish's packet id and QoS.
    let mut p = Publish::new("", qos.to_rumqttc(), Vec::new());
    p.pkid = pkid;
    p
}

impl AckGate {
    fn lock(&self) -> MutexGuard<'_, GateInner> {
        // A poisoned lock only means another thread panicked mid-update; the data are counters
        // and a queue of u16s, still usable.
        self.inner.lock().unwrap_or_else(|e| e.into_inner())
    }

    /// Stale acks dropped so far.
    pub(crate) fn stale_count(&self) -> u64 {
        self.stale.load(Ordering::Relaxed)
    }

    /// Acks written to the network so far.
    pub(crate) fn written_count(&self) -> u64 {
        self.written.load(Ordering::Relaxed)
    }

    /// A CONNACK arrived: start a new generation and return it.
    pub(crate) fn begin_connection(&self) -> u64 {
        let mut g = self.lock();
        g.generation += 1;
        g.connected = true;
        g.enqueued_this_connection = 0;
        g.written_this_connection = 0;
        g.generation
    }

    /// The connection failed. Call right after `poll()` returned an error: drains acks of the
    /// dead connection out of rumqttc's channel and pending queue (`EventLoop::clean`).
    pub(crate) fn end_connection(&self, eventloop: &mut EventLoop) {
        let mut g = self.lock();
        eventloop.clean();
        eventloop
            .pending
            .retain(|r| !matches!(r, Request::PubAck(_) | Request::PubRec(_)));
        let lost = g
            .enqueued_this_connection
            .saturating_sub(g.written_this_connection)
            + g.overflow.len() as u64;
        self.stale.fetch_add(lost, Ordering::Relaxed);
        g.overflow.clear();
        g.enqueued_this_connection = 0;
        g.written_this_connection = 0;
        g.connected = false;
    }

    /// The event-loop task is gone; later acks report `Closed`.
    pub(crate) fn close(&self) {
        let mut g = self.lock();
        g.closed = true;
        g.connected = false;
        let lost = g.overflow.len() as u64;
        self.stale.fetch_add(lost, Ordering::Relaxed);
        g.overflow.clear();
    }

    /// The event loop reported a PUBACK/PUBREC written.
    pub(crate) fn note_written(&self) {
        let mut g = self.lock();
        g.written_this_connection += 1;
        self.written.fetch_add(1, Ordering::Relaxed);
    }

    /// Acknowledge one message (never blocks).
    pub(crate) fn ack(&self, token: AckToken, client: &AsyncClient) -> AckOutcome {
        if token.qos == QoS::AtMostOnce {
            return AckOutcome::NotNeeded;
        }
        let mut g = self.lock();
        if g.closed {
            return AckOutcome::Closed;
        }
        if !g.connected || token.generation != g.generation {
            self.stale.fetch_add(1, Ordering::Relaxed);
            return AckOutcome::Stale;
        }
        if !g.overflow.is_empty() {
            g.overflow.push_back((token.pkid, token.qos));
            return AckOutcome::Queued;
        }
        match client.try_ack(&ack_carrier(token.pkid, token.qos)) {
            Ok(()) => {
                g.enqueued_this_connection += 1;
                AckOutcome::Sent
            }
            Err(_) => {
                // Full (the event loop holds the receiver for as long as this gate is open).
                g.overflow.push_back((token.pkid, token.qos));
                AckOutcome::Queued
            }
        }
    }

    /// Move queued acks into the request channel while it has room. Called by the event-loop
    /// task after every event, so a queued ack waits at most one event-loop turn.
    pub(crate) fn flush_overflow(&self, client: &AsyncClient) {
        let mut g = self.lock();
        if !g.connected {
            return;
        }
        while let Some(&(pkid, qos)) = g.overflow.front() {
            if client.try_ack(&ack_carrier(pkid, qos)).is_err() {
                break;
            }
            g.overflow.pop_front();
            g.enqueued_this_connection += 1;
        }
    }

    /// Acks still waiting for room in the request channel.
    pub(crate) fn queued_len(&self) -> usize {
        self.lock().overflow.len()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rumqttc::MqttOptions;

    fn client_with_capacity(cap: usize) -> (AsyncClient, EventLoop) {
        let mut o = MqttOptions::new("ack-test", "127.0.0.1", 1);
        o.set_manual_acks(true);
        AsyncClient::new(o, cap)
    }

    #[test]
    fn stale_generation_and_disconnected_acks_are_dropped() {
        let (client, mut el) = client_with_capacity(8);
        let gate = AckGate::default();
        // Not connected yet.
        assert_eq!(
            gate.ack(AckToken::new(0, 1, QoS::AtLeastOnce), &client),
            AckOutcome::Stale
        );
        let g1 = gate.begin_connection();
        assert_eq!(g1, 1);
        assert_eq!(
            gate.ack(AckToken::new(g1, 5, QoS::AtLeastOnce), &client),
            AckOutcome::Sent
        );
        gate.end_connection(&mut el);
        // The un-written ack of connection 1 was drained and counted.
        assert_eq!(gate.stale_count(), 2);
        assert!(el.pending.iter().all(|r| !matches!(r, Request::PubAck(_))));
        let g2 = gate.begin_connection();
        assert_eq!(
            gate.ack(AckToken::new(g1, 6, QoS::AtLeastOnce), &client),
            AckOutcome::Stale
        );
        assert_eq!(gate.stale_count(), 3);
        assert_eq!(
            gate.ack(AckToken::new(g2, 6, QoS::AtLeastOnce), &client),
            AckOutcome::Sent
        );
    }

    #[test]
    fn qos0_needs_no_ack() {
        let (client, _el) = client_with_capacity(1);
        let gate = AckGate::default();
        assert_eq!(
            gate.ack(AckToken::new(7, 0, QoS::AtMostOnce), &client),
            AckOutcome::NotNeeded
        );
        assert_eq!(gate.stale_count(), 0);
    }

    #[test]
    fn full_channel_queues_in_order() {
        let (client, _el) = client_with_capacity(1);
        let gate = AckGate::default();
        let g = gate.begin_connection();
        assert_eq!(
            gate.ack(AckToken::new(g, 1, QoS::AtLeastOnce), &client),
            AckOutcome::Sent
        );
        assert_eq!(
            gate.ack(AckToken::new(g, 2, QoS::AtLeastOnce), &client),
            AckOutcome::Queued
        );
        assert_eq!(
            gate.ack(AckToken::new(g, 3, QoS::AtLeastOnce), &client),
            AckOutcome::Queued
        );
        assert_eq!(gate.queued_len(), 2);
        // Channel still full: nothing moves.
        gate.flush_overflow(&client);
        assert_eq!(gate.queued_len(), 2);
    }

    #[test]
    fn closed_gate_reports_closed() {
        let (client, _el) = client_with_capacity(1);
        let gate = AckGate::default();
        let g = gate.begin_connection();
        gate.close();
        assert_eq!(
            gate.ack(AckToken::new(g, 1, QoS::AtLeastOnce), &client),
            AckOutcome::Closed
        );
    }
}
