//! Broker-independent scenarios, run against the embedded broker and (when configured)
//! against Mosquitto.
//!
//! `Target::peer_addr` is where plain peers connect; `Target::adapter_addr` is where the
//! adapter under test connects (through a relay that `sever` can cut).

use std::net::SocketAddr;

use halotank::mqtt::{AckOutcome, ConnectionOptions, MqttHandle, QoS};

use super::{options, read_retained, recv, unique, Peer, WAIT};

pub struct Target {
    pub peer_addr: SocketAddr,
    pub adapter_addr: SocketAddr,
    /// Cuts the adapter's connection (and possibly the peers' too).
    pub sever: Box<dyn Fn() + Send + Sync>,
    /// The broker delivers at min(publish QoS, subscription QoS) as MQTT 3.1.1 §3.8.4 says.
    /// rumqttd 0.20 does not: it delivers a QoS 0 publish at the subscription's QoS 1.
    pub downgrades_qos: bool,
    /// The broker sets DUP on a QoS 1 redelivery (Mosquitto does; rumqttd 0.20 replays from
    /// its log without it).
    pub marks_redelivery_dup: bool,
}

fn start(
    o: &ConnectionOptions,
    filters: &[String],
) -> (
    MqttHandle,
    tokio::sync::mpsc::Receiver<halotank::mqtt::InboundMessage>,
) {
    MqttHandle::start(o, filters).expect("start MQTT adapter")
}

/// QoS 1 and QoS 0 from a plain publisher arrive with topic, payload, QoS and flags intact;
/// a retained message present before subscribing arrives flagged retained.
pub async fn receive_and_ack(t: &Target) {
    let base = unique("brannock");
    let mut peer = Peer::connect(t.peer_addr, &unique("probe-sim"), true).await;
    peer.publish_acked(&format!("{base}/nursery-2/probe"), b"retained-reading", true)
        .await;

    let o = options(t.adapter_addr, &unique("halotank-rx"));
    let (handle, mut rx) = start(&o, &[format!("{base}/+/probe")]);
    handle.wait_until_subscribed(WAIT).await.unwrap();

    let retained = recv(&mut rx).await;
    assert_eq!(retained.topic, format!("{base}/nursery-2/probe"));
    assert_eq!(retained.payload, b"retained-reading");
    assert!(
        retained.retain,
        "message stored before subscribing must come flagged retained"
    );
    assert_eq!(handle.ack(retained.ack), AckOutcome::Sent);

    let payload = br#"{"tank":"smolt-4","conductivity_ms_cm":31.2,"temperature_c":9.8}"#;
    peer.publish_acked(&format!("{base}/smolt-4/probe"), payload, false)
        .await;
    let m = recv(&mut rx).await;
    assert_eq!(m.topic, format!("{base}/smolt-4/probe"));
    assert_eq!(m.payload, payload.to_vec());
    assert_eq!(m.qos, QoS::AtLeastOnce);
    assert!(!m.retain);
    assert_eq!(m.ack.generation(), 1);
    assert_eq!(handle.ack(m.ack), AckOutcome::Sent);

    peer.client
        .publish(
            format!("{base}/parr-1/probe"),
            rumqttc::QoS::AtMostOnce,
            false,
            b"q0".to_vec(),
        )
        .await
        .unwrap();
    let q0 = recv(&mut rx).await;
    assert_eq!(q0.payload, b"q0");
    if t.downgrades_qos {
        assert_eq!(q0.qos, QoS::AtMostOnce);
        assert_eq!(handle.ack(q0.ack), AckOutcome::NotNeeded);
    } else {
        assert_eq!(
            q0.qos,
            QoS::AtLeastOnce,
            "rumqttd delivers at the subscription QoS"
        );
        assert_eq!(handle.ack(q0.ack), AckOutcome::Sent);
    }

    // A topic outside the filter is not delivered: the next message is the in-filter one.
    peer.publish_acked(&format!("{base}/smolt-4/other"), b"not for us", false)
        .await;
    peer.publish_acked(&format!("{base}/smolt-4/probe"), b"last", false)
        .await;
    let last = recv(&mut rx).await;
    assert_eq!(last.payload, b"last");
    assert_eq!(handle.ack(last.ack), AckOutcome::Sent);

    // Clear the retained message so shared brokers are left as found.
    peer.publish_acked(&format!("{base}/nursery-2/probe"), b"", true)
        .await;
    handle.shutdown(WAIT).await.unwrap();
    assert!(handle.counters().messages_received >= 4);
    peer.disconnect().await;
}

/// Retained `online` while connected; retained `offline` after a graceful shutdown.
pub async fn availability_online_then_offline(t: &Target) {
    let status = format!("{}/halotank/status", unique("brannock"));
    let mut watcher = Peer::connect(t.peer_addr, &unique("watcher"), true).await;
    watcher.subscribe(&status).await;

    let o = options(t.adapter_addr, &unique("halotank-avail")).with_availability(status.clone());
    let (handle, _rx) = start(&o, &[]);
    let online = watcher.next_publish().await;
    assert_eq!(&online.payload[..], b"online");
    let stored = read_retained(t.peer_addr, &status).await;
    assert_eq!(&stored.payload[..], b"online");
    assert!(stored.retain);

    handle.shutdown(WAIT).await.unwrap();
    assert!(handle.connection_state().borrow().stopped);
    let offline = watcher.next_publish().await;
    assert_eq!(&offline.payload[..], b"offline");
    let stored = read_retained(t.peer_addr, &status).await;
    assert_eq!(&stored.payload[..], b"offline");
    assert!(stored.retain);

    watcher.publish_acked(&status, b"", true).await;
    watcher.disconnect().await;
}

/// A message received but never acked is redelivered to the next session of the same client
/// id; once acked it is not delivered again. Also: a message published while the client is
/// away is queued in its persistent session.
pub async fn unacked_redelivered_acked_not(t: &Target) {
    let base = unique("brannock");
    let topic = format!("{base}/oyster-6/probe");
    let client_id = unique("halotank-redeliver");
    let o = options(t.adapter_addr, &client_id);
    let filters = [format!("{base}/+/probe")];
    let mut peer = Peer::connect(t.peer_addr, &unique("probe-sim"), true).await;

    let (h1, mut rx1) = start(&o, &filters);
    h1.wait_until_subscribed(WAIT).await.unwrap();
    peer.publish_acked(&topic, b"m1", false).await;
    let first = recv(&mut rx1).await;
    assert_eq!(first.payload, b"m1");
    // Not acked: simulate a crash before the database commit.
    drop(first);
    h1.shutdown(WAIT).await.unwrap();
    drop(rx1);

    // Published while nobody is connected: kept in the persistent session.
    peer.publish_acked(&topic, b"m2-while-away", false).await;

    let (h2, mut rx2) = start(&o, &filters);
    let state = h2.wait_until_subscribed(WAIT).await.unwrap();
    assert!(state.session_present, "broker must resume the persistent session");
    let again = recv(&mut rx2).await;
    assert_eq!(again.payload, b"m1", "un-acked message must be redelivered first");
    assert_eq!(again.duplicate, t.marks_redelivery_dup);
    let queued = recv(&mut rx2).await;
    assert_eq!(queued.payload, b"m2-while-away");
    assert_eq!(h2.ack(again.ack), AckOutcome::Sent);
    assert_eq!(h2.ack(queued.ack), AckOutcome::Sent);
    // The acks travel before the DISCONNECT on the same connection.
    h2.shutdown(WAIT).await.unwrap();
    drop(rx2);

    let (h3, mut rx3) = start(&o, &filters);
    h3.wait_until_subscribed(WAIT).await.unwrap();
    peer.publish_acked(&topic, b"m3", false).await;
    let next = recv(&mut rx3).await;
    assert_eq!(next.payload, b"m3", "acked messages must not be redelivered");
    assert_eq!(h3.ack(next.ack), AckOutcome::Sent);
    h3.shutdown(WAIT).await.unwrap();
    peer.disconnect().await;
    forget_session(t.peer_addr, &client_id).await;
}

/// After a network drop the client reconnects by itself, resubscribes, refuses to ack with a
/// token from the dead connection, and receives the un-acked message again.
pub async fn stale_ack_after_network_drop(t: &Target) {
    let base = unique("brannock");
    let topic = format!("{base}/shrimp-pl/probe");
    let client_id = unique("halotank-drop");
    let o = options(t.adapter_addr, &client_id);
    let filters = [format!("{base}/+/probe")];
    let (h, mut rx) = start(&o, &filters);
    h.wait_until_subscribed(WAIT).await.unwrap();
    let mut peer = Peer::connect(t.peer_addr, &unique("probe-sim"), true).await;
    peer.publish_acked(&topic, b"before-drop", false).await;
    peer.disconnect().await;
    let m = recv(&mut rx).await;
    assert_eq!(m.ack.generation(), 1);

    let mut state = h.connection_state();
    (t.sever)();
    let after = tokio::time::timeout(
        WAIT,
        state.wait_for(|s| s.generation >= 2 && s.connected && s.subscribed),
    )
    .await
    .expect("reconnect in time")
    .unwrap()
    .clone();
    assert_eq!(after.reconnects, 1);
    assert!(after.last_error.is_some());
    assert_eq!(h.ack(m.ack), AckOutcome::Stale);
    assert!(h.counters().stale_acks_dropped >= 1);

    let redelivered = recv(&mut rx).await;
    assert_eq!(redelivered.payload, b"before-drop");
    assert_eq!(redelivered.ack.generation(), 2);
    assert_eq!(h.ack(redelivered.ack), AckOutcome::Sent);

    let mut peer = Peer::connect(t.peer_addr, &unique("probe-sim"), true).await;
    peer.publish_acked(&topic, b"after-drop", false).await;
    let m2 = recv(&mut rx).await;
    assert_eq!(m2.payload, b"after-drop");
    assert_eq!(h.ack(m2.ack), AckOutcome::Sent);
    h.shutdown(WAIT).await.unwrap();
    drop(rx);

    // Both acks of generation 2 reached the broker: nothing comes back.
    let (h2, mut rx2) = start(&o, &filters);
    h2.wait_until_subscribed(WAIT).await.unwrap();
    peer.publish_acked(&topic, b"marker", false).await;
    assert_eq!(recv(&mut rx2).await.payload, b"marker");
    h2.shutdown(WAIT).await.unwrap();
    peer.disconnect().await;
    forget_session(t.peer_addr, &client_id).await;
}

/// A consumer that does not read for a while loses nothing: with a receive window of 2 the
/// event loop waits, and all messages arrive in order once the consumer reads.
pub async fn slow_consumer_loses_nothing(t: &Target) {
    let base = unique("brannock");
    let topic = format!("{base}/holding-1/probe");
    let mut o = options(t.adapter_addr, &unique("halotank-slow"));
    o.receive_window = 2;
    let (h, mut rx) = start(&o, std::slice::from_ref(&topic));
    h.wait_until_subscribed(WAIT).await.unwrap();
    let mut peer = Peer::connect(t.peer_addr, &unique("probe-sim"), true).await;
    const N: usize = 60;
    for i in 0..N {
        peer.publish_acked(&topic, format!("reading-{i}").as_bytes(), false)
            .await;
    }
    for i in 0..N {
        let m = recv(&mut rx).await;
        assert_eq!(
            m.payload,
            format!("reading-{i}").into_bytes(),
            "message {i} out of order or lost"
        );
        assert_eq!(h.ack(m.ack), AckOutcome::Sent);
    }
    h.shutdown(WAIT).await.unwrap();
    assert_eq!(h.counters().messages_received, N as u64);
    peer.disconnect().await;
}

/// Connect once with a clean session so the broker drops the persistent session we made.
pub async fn forget_session(addr: SocketAddr, client_id: &str) {
    let peer = Peer::connect(addr, client_id, true).await;
    peer.disconnect().await;
}

/// Acks given out of receive order are held and sent in order: the broker sees no
/// out-of-order PUBACK (rumqttd would drop the connection and lose a message), nothing is
/// redelivered afterwards.
pub async fn out_of_order_acks_are_held(t: &Target) {
    let base = unique("brannock");
    let topic = format!("{base}/smolt-4/probe");
    let client_id = unique("halotank-order");
    let o = options(t.adapter_addr, &client_id);
    let filters = [topic.clone()];
    let mut peer = Peer::connect(t.peer_addr, &unique("probe-sim"), true).await;

    let (h, mut rx) = start(&o, &filters);
    h.wait_until_subscribed(WAIT).await.unwrap();
    for p in ["r1", "r2", "r3"] {
        peer.publish_acked(&topic, p.as_bytes(), false).await;
    }
    let r1 = recv(&mut rx).await;
    let r2 = recv(&mut rx).await;
    let r3 = recv(&mut rx).await;
    assert_eq!(
        (r1.ack.sequence(), r2.ack.sequence(), r3.ack.sequence()),
        (0, 1, 2)
    );
    assert_eq!(h.ack(r3.ack), AckOutcome::Held);
    assert_eq!(h.ack(r2.ack), AckOutcome::Held);
    assert_eq!(h.counters().acks_waiting, 2);
    assert_eq!(h.ack(r1.ack), AckOutcome::Sent);
    assert_eq!(h.counters().acks_waiting, 0);
    h.shutdown(WAIT).await.unwrap();
    assert_eq!(h.connection_state().borrow().reconnects, 0);
    assert_eq!(h.counters().disconnects, 0, "broker must not have dropped us");
    drop(rx);

    let (h2, mut rx2) = start(&o, &filters);
    h2.wait_until_subscribed(WAIT).await.unwrap();
    peer.publish_acked(&topic, b"marker", false).await;
    let next = recv(&mut rx2).await;
    assert_eq!(
        next.payload, b"marker",
        "all three were acked: nothing to redeliver"
    );
    assert_eq!(h2.ack(next.ack), AckOutcome::Sent);
    h2.shutdown(WAIT).await.unwrap();
    peer.disconnect().await;
    forget_session(t.peer_addr, &client_id).await;
}

/// A nack restarts the connection and the broker redelivers the nacked message.
pub async fn nack_redelivers(t: &Target) {
    let base = unique("brannock");
    let topic = format!("{base}/parr-1/probe");
    let client_id = unique("halotank-nack");
    let o = options(t.adapter_addr, &client_id);
    let filters = [topic.clone()];
    let mut peer = Peer::connect(t.peer_addr, &unique("probe-sim"), true).await;

    let (h, mut rx) = start(&o, &filters);
    h.wait_until_subscribed(WAIT).await.unwrap();
    peer.publish_acked(&topic, b"n1", false).await;
    peer.publish_acked(&topic, b"n2", false).await;
    let n1 = recv(&mut rx).await;
    let n2 = recv(&mut rx).await;
    assert_eq!(h.ack(n1.ack), AckOutcome::Sent);
    assert_eq!(h.nack(n2.ack), halotank::mqtt::NackOutcome::Restarting);

    let mut state = h.connection_state();
    tokio::time::timeout(
        WAIT,
        state.wait_for(|s| s.generation >= 2 && s.connected && s.subscribed),
    )
    .await
    .expect("restart in time")
    .unwrap();
    let again = recv(&mut rx).await;
    assert_eq!(
        again.payload, b"n2",
        "the nacked message (and only it) comes back"
    );
    assert_eq!(again.ack.generation(), 2);
    assert_eq!(h.ack(again.ack), AckOutcome::Sent);
    peer.publish_acked(&topic, b"marker", false).await;
    let next = recv(&mut rx).await;
    assert_eq!(next.payload, b"marker");
    assert_eq!(h.ack(next.ack), AckOutcome::Sent);
    h.shutdown(WAIT).await.unwrap();
    peer.disconnect().await;
    forget_session(t.peer_addr, &client_id).await;
}
