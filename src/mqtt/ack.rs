//! Manual acknowledgement of inbound QoS 1/2 messages: bound to one network connection and
//! released in the order the messages were received.
//!
//! A packet id means something only on the connection that carried it. Every connection
//! gets a new generation number; an [`AckToken`] remembers the generation it was issued in,
//! and an ack whose generation is not the live one (or that arrives while disconnected) is
//! dropped and counted as stale: the broker redelivers that message on the next session
//! instead. The check and the hand-over to rumqttc's request channel happen under one lock
//! that the event-loop task also takes when a connection ends, at which point it drains the
//! channel of acks, so no ack can slip from one connection onto the next.
//!
//! Order: MQTT 3.1.1 §4.6 requires PUBACKs in the order the PUBLISHes arrived, and rumqttd
//! enforces it (an out-of-order PUBACK makes it drop the connection and forget the message
//! at the head of its in-flight queue, which is then never redelivered). So each token also
//! carries its receive sequence number, and an ack that overtakes an earlier un-acked
//! message is held ([`AckOutcome::Held`]) until every earlier one is acked. Consequence:
//! every QoS 1 token must end in [`ack`](super::MqttHandle::ack) or
//! [`nack`](super::MqttHandle::nack); a token simply dropped stalls later acks until the
//! connection next breaks.

use std::collections::{BTreeMap, VecDeque};
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::{Mutex, MutexGuard};

use rumqttc::{AsyncClient, EventLoop, Publish, Request};

use super::options::QoS;

/// Permission to acknowledge one inbound message. Not `Clone`: one token, one ack.
#[derive(Debug, PartialEq, Eq)]
pub struct AckToken {
    generation: u64,
    seq: u64,
    pkid: u16,
    qos: QoS,
}

impl AckToken {
    /// Connection generation the message arrived on (first connection is 1).
    pub fn generation(&self) -> u64 {
        self.generation
    }

    /// Receive order of QoS 1/2 messages within the generation (0-based; 0 for QoS 0 too).
    pub fn sequence(&self) -> u64 {
        self.seq
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
    /// Handed to the event loop for the live connection (with any held acks it unblocked).
    Sent,
    /// Released, but the request channel was full; queued in order and handed over as it drains.
    Queued,
    /// An earlier message is still un-acked; this ack goes out right after that one's.
    Held,
    /// QoS 0: nothing to acknowledge.
    NotNeeded,
    /// Token from an earlier connection, or we are disconnected: dropped, the broker will
    /// redeliver the message.
    Stale,
    /// The client has shut down.
    Closed,
}

/// What happened to a nack.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum NackOutcome {
    /// The connection is being restarted; the broker will redeliver the message.
    Restarting,
    /// QoS 0: the message cannot be redelivered; nothing done.
    NotRedeliverable,
    /// Its connection has already ended; it will be redelivered anyway.
    Stale,
    /// The client has shut down.
    Closed,
}

#[derive(Debug, Default)]
struct GateInner {
    generation: u64,
    connected: bool,
    closed: bool,
    /// Next receive sequence number to issue on the live connection.
    next_issue: u64,
    /// Sequence number of the next ack allowed out.
    next_release: u64,
    /// Acked but waiting for earlier messages: seq -> (pkid, qos).
    held: BTreeMap<u64, (u16, QoS)>,
    /// Released acks waiting for room in the request channel, in order.
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
    /// A nack could not enqueue its DISCONNECT; the event-loop task must do it.
    restart_requested: AtomicBool,
}

fn ack_carrier(pkid: u16, qos: QoS) -> Publish {
    // rumqttc builds the PUBACK/PUBREC from a publish's packet id and QoS.
    let mut p = Publish::new("", qos.to_rumqttc(), Vec::new());
    p.pkid = pkid;
    p
}

impl GateInner {
    /// Hand one released ack to rumqttc (or queue it behind earlier ones).
    fn release(&mut self, pkid: u16, qos: QoS, client: &AsyncClient) -> AckOutcome {
        if self.overflow.is_empty() && client.try_ack(&ack_carrier(pkid, qos)).is_ok() {
            self.enqueued_this_connection += 1;
            AckOutcome::Sent
        } else {
            // Full (the event loop holds the receiver for as long as this gate is open).
            self.overflow.push_back((pkid, qos));
            AckOutcome::Queued
        }
    }

    fn unacked_count(&self) -> u64 {
        self.enqueued_this_connection
            .saturating_sub(self.written_this_connection)
            + self.overflow.len() as u64
            + self.held.len() as u64
    }
}

impl AckGate {
    fn lock(&self) -> MutexGuard<'_, GateInner> {
        // A poisoned lock only means another thread panicked mid-update; the data are counters
        // and queues of small integers, still usable.
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

    /// Acks held for order or queued for channel room right now.
    pub(crate) fn waiting_len(&self) -> usize {
        let g = self.lock();
        g.held.len() + g.overflow.len()
    }

    /// A CONNACK arrived: start a new generation and return it.
    pub(crate) fn begin_connection(&self) -> u64 {
        let mut g = self.lock();
        g.generation += 1;
        g.connected = true;
        g.next_issue = 0;
        g.next_release = 0;
        g.held.clear();
        g.overflow.clear();
        g.enqueued_this_connection = 0;
        g.written_this_connection = 0;
        self.restart_requested.store(false, Ordering::SeqCst);
        g.generation
    }

    /// Token for a message just received on the live connection.
    pub(crate) fn issue(&self, pkid: u16, qos: QoS) -> AckToken {
        let mut g = self.lock();
        let seq = if qos == QoS::AtMostOnce {
            0
        } else {
            g.next_issue += 1;
            g.next_issue - 1
        };
        AckToken {
            generation: g.generation,
            seq,
            pkid,
            qos,
        }
    }

    /// The connection failed. Call right after `poll()` returned an error: drains acks of the
    /// dead connection out of rumqttc's channel and pending queue (`EventLoop::clean`).
    pub(crate) fn end_connection(&self, eventloop: &mut EventLoop) {
        let mut g = self.lock();
        eventloop.clean();
        eventloop
            .pending
            .retain(|r| !matches!(r, Request::PubAck(_) | Request::PubRec(_)));
        self.stale.fetch_add(g.unacked_count(), Ordering::Relaxed);
        g.held.clear();
        g.overflow.clear();
        g.enqueued_this_connection = 0;
        g.written_this_connection = 0;
        g.connected = false;
    }

    /// The event-loop task is gone; later acks report `Closed`.
    pub(crate) fn close(&self) {
        let mut g = self.lock();
        if g.closed {
            return;
        }
        g.closed = true;
        g.connected = false;
        let lost = g.held.len() as u64 + g.overflow.len() as u64;
        self.stale.fetch_add(lost, Ordering::Relaxed);
        g.held.clear();
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
        if !g.connected || token.generation != g.generation || token.seq < g.next_release {
            self.stale.fetch_add(1, Ordering::Relaxed);
            return AckOutcome::Stale;
        }
        g.held.insert(token.seq, (token.pkid, token.qos));
        let mut outcome = AckOutcome::Held;
        loop {
            let next = g.next_release;
            let Some((pkid, qos)) = g.held.remove(&next) else {
                break;
            };
            g.next_release += 1;
            let released = g.release(pkid, qos, client);
            if next == token.seq {
                outcome = released;
            }
        }
        outcome
    }

    /// Give up on a delivery: end the live connection (clean DISCONNECT) so the broker
    /// redelivers the message and everything after it. Later acks of this generation are stale.
    pub(crate) fn nack(&self, token: AckToken, client: &AsyncClient) -> NackOutcome {
        if token.qos == QoS::AtMostOnce {
            return NackOutcome::NotRedeliverable;
        }
        let mut g = self.lock();
        if g.closed {
            return NackOutcome::Closed;
        }
        if !g.connected || token.generation != g.generation {
            return NackOutcome::Stale;
        }
        // Acks already released go out before the DISCONNECT (same FIFO); held ones cannot
        // (they would overtake the nacked message) and are dropped.
        self.stale.fetch_add(g.held.len() as u64, Ordering::Relaxed);
        g.held.clear();
        g.connected = false;
        if !g.overflow.is_empty() || client.try_disconnect().is_err() {
            self.restart_requested.store(true, Ordering::SeqCst);
        }
        NackOutcome::Restarting
    }

    /// Move queued acks into the request channel while it has room, and enqueue a pending
    /// restart once they are all out. Called by the event-loop task after every event.
    pub(crate) fn flush(&self, client: &AsyncClient) {
        let mut g = self.lock();
        while let Some(&(pkid, qos)) = g.overflow.front() {
            if client.try_ack(&ack_carrier(pkid, qos)).is_err() {
                return;
            }
            g.overflow.pop_front();
            g.enqueued_this_connection += 1;
        }
        if self.restart_requested.load(Ordering::SeqCst) && client.try_disconnect().is_ok() {
            self.restart_requested.store(false, Ordering::SeqCst);
        }
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
        let early = gate.issue(1, QoS::AtLeastOnce);
        assert_eq!(gate.ack(early, &client), AckOutcome::Stale);
        let g1 = gate.begin_connection();
        assert_eq!(g1, 1);
        let t = gate.issue(5, QoS::AtLeastOnce);
        assert_eq!((t.generation(), t.sequence()), (1, 0));
        assert_eq!(gate.ack(t, &client), AckOutcome::Sent);
        let old = gate.issue(6, QoS::AtLeastOnce);
        gate.end_connection(&mut el);
        // The un-written ack of connection 1 was drained and counted.
        assert_eq!(gate.stale_count(), 2);
        assert!(el.pending.iter().all(|r| !matches!(r, Request::PubAck(_))));
        assert_eq!(gate.begin_connection(), 2);
        assert_eq!(gate.ack(old, &client), AckOutcome::Stale);
        assert_eq!(gate.stale_count(), 3);
        let fresh = gate.issue(6, QoS::AtLeastOnce);
        assert_eq!(fresh.generation(), 2);
        assert_eq!(gate.ack(fresh, &client), AckOutcome::Sent);
    }

    #[test]
    fn acks_are_released_in_receive_order() {
        // Capacity 1: the first released ack fills the channel, the rest queue in release order.
        let (client, _el) = client_with_capacity(1);
        let gate = AckGate::default();
        gate.begin_connection();
        let a = gate.issue(11, QoS::AtLeastOnce);
        let b = gate.issue(12, QoS::AtLeastOnce);
        let c = gate.issue(13, QoS::AtLeastOnce);
        assert_eq!(gate.ack(c, &client), AckOutcome::Held);
        assert_eq!(gate.ack(b, &client), AckOutcome::Held);
        assert_eq!(gate.waiting_len(), 2);
        assert_eq!(gate.ack(a, &client), AckOutcome::Sent);
        let queued: Vec<u16> = gate.lock().overflow.iter().map(|(pkid, _)| *pkid).collect();
        assert_eq!(
            queued,
            vec![12, 13],
            "pkid 11 went out first, then 12 and 13 in order"
        );
        assert!(gate.lock().held.is_empty());
    }

    #[test]
    fn qos0_needs_no_ack_and_takes_no_sequence_number() {
        let (client, _el) = client_with_capacity(4);
        let gate = AckGate::default();
        gate.begin_connection();
        let q0 = gate.issue(0, QoS::AtMostOnce);
        let q1 = gate.issue(3, QoS::AtLeastOnce);
        assert_eq!(q1.sequence(), 0);
        assert_eq!(gate.ack(q0, &client), AckOutcome::NotNeeded);
        assert_eq!(gate.ack(q1, &client), AckOutcome::Sent);
        assert_eq!(gate.stale_count(), 0);
    }

    #[test]
    fn full_channel_queues_in_order() {
        let (client, _el) = client_with_capacity(1);
        let gate = AckGate::default();
        gate.begin_connection();
        let tokens: Vec<AckToken> = (1..=3).map(|p| gate.issue(p, QoS::AtLeastOnce)).collect();
        let outcomes: Vec<AckOutcome> = tokens.into_iter().map(|t| gate.ack(t, &client)).collect();
        assert_eq!(
            outcomes,
            vec![AckOutcome::Sent, AckOutcome::Queued, AckOutcome::Queued]
        );
        // Channel still full: nothing moves.
        gate.flush(&client);
        assert_eq!(gate.waiting_len(), 2);
    }

    #[test]
    fn nack_restarts_and_makes_later_acks_stale() {
        let (client, mut el) = client_with_capacity(8);
        let gate = AckGate::default();
        gate.begin_connection();
        let a = gate.issue(1, QoS::AtLeastOnce);
        let b = gate.issue(2, QoS::AtLeastOnce);
        let c = gate.issue(3, QoS::AtLeastOnce);
        assert_eq!(gate.ack(a, &client), AckOutcome::Sent);
        assert_eq!(gate.ack(c, &client), AckOutcome::Held);
        assert_eq!(gate.nack(b, &client), NackOutcome::Restarting);
        let later = gate.issue(4, QoS::AtLeastOnce);
        assert_eq!(gate.ack(later, &client), AckOutcome::Stale);
        el.clean();
        let kinds: Vec<&str> = el
            .pending
            .iter()
            .map(|r| match r {
                Request::Disconnect(_) => "disconnect",
                Request::PubAck(_) => "puback",
                _ => "other",
            })
            .collect();
        // clean() drops PubAcks from the channel; what remains is the DISCONNECT.
        assert_eq!(kinds, vec!["disconnect"]);
    }

    #[test]
    fn closed_gate_reports_closed() {
        let (client, _el) = client_with_capacity(1);
        let gate = AckGate::default();
        gate.begin_connection();
        let t = gate.issue(1, QoS::AtLeastOnce);
        gate.close();
        assert_eq!(gate.ack(t, &client), AckOutcome::Closed);
    }
}
