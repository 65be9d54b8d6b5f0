//! Shared helpers for the MQTT integration tests: a plain rumqttc peer whose events are
//! awaited through a channel, option presets, and bounded waits.
#![allow(dead_code)]

pub mod scenarios;

use std::net::SocketAddr;
use std::time::Duration;

use halotank::mqtt::{BackoffPolicy, ConnectionOptions, InboundMessage};
use rumqttc::{AsyncClient, Event, Incoming, MqttOptions, Outgoing, QoS};
use tokio::sync::mpsc;

/// Upper bound for any single wait in these tests.
pub const WAIT: Duration = Duration::from_secs(10);

/// A unique suffix so runs against a shared broker do not see each other's topics or sessions.
pub fn unique(prefix: &str) -> String {
    format!("{prefix}-{:08x}", rand::random::<u32>())
}

/// Adapter options for a test broker: fast reconnects, persistent session.
/// Logs to the test output when `RUST_LOG` is set (e.g. `RUST_LOG=rumqttd=warn,halotank=debug`).
pub fn init_logging() {
    if std::env::var_os("RUST_LOG").is_some() {
        let _ = tracing_subscriber::fmt()
            .with_env_filter(tracing_subscriber::EnvFilter::from_default_env())
            .with_test_writer()
            .try_init();
    }
}

pub fn options(addr: SocketAddr, client_id: &str) -> ConnectionOptions {
    let mut o = ConnectionOptions::new(addr.ip().to_string(), addr.port(), client_id);
    o.keep_alive = Duration::from_secs(5);
    o.connect_timeout = Duration::from_secs(3);
    o.backoff = BackoffPolicy {
        min: Duration::from_millis(50),
        max: Duration::from_millis(400),
        stable_after: Duration::from_secs(5),
    };
    o
}

pub async fn recv(rx: &mut mpsc::Receiver<InboundMessage>) -> InboundMessage {
    tokio::time::timeout(WAIT, rx.recv())
        .await
        .expect("timed out waiting for a message")
        .expect("stream ended")
}

/// A plain rumqttc client (auto acks) driven in the background; events arrive on `events`.
pub struct Peer {
    pub client: AsyncClient,
    pub events: mpsc::UnboundedReceiver<Event>,
    task: tokio::task::JoinHandle<()>,
}

impl Peer {
    pub async fn connect(addr: SocketAddr, client_id: &str, clean_session: bool) -> Peer {
        let mut o = MqttOptions::new(client_id, addr.ip().to_string(), addr.port());
        o.set_clean_session(clean_session)
            .set_keep_alive(Duration::from_secs(5));
        let (client, mut eventloop) = AsyncClient::new(o, 64);
        let (tx, events) = mpsc::unbounded_channel();
        let task = tokio::spawn(async move {
            loop {
                match eventloop.poll().await {
                    Ok(ev) => {
                        if tx.send(ev).is_err() {
                            break;
                        }
                    }
                    Err(e) => {
                        // rumqttd 0.20 sometimes drops an unrelated client right after another
                        // client reconnects with a reused connection id; polling again
                        // reconnects and resends what was in flight.
                        eprintln!("test peer connection lost, reconnecting: {e}");
                        if tx.is_closed() {
                            break;
                        }
                        tokio::time::sleep(Duration::from_millis(20)).await;
                    }
                }
            }
        });
        let mut peer = Peer { client, events, task };
        peer.wait_for(|e| matches!(e, Event::Incoming(Incoming::ConnAck(_))))
            .await;
        peer
    }

    /// Waits for the first event matching `pred`, skipping others.
    pub async fn wait_for(&mut self, pred: impl Fn(&Event) -> bool) -> Event {
        tokio::time::timeout(WAIT, async {
            loop {
                match self.events.recv().await {
                    Some(e) if pred(&e) => return e,
                    Some(_) => continue,
                    None => panic!("peer event loop ended"),
                }
            }
        })
        .await
        .expect("timed out waiting for a peer event")
    }

    /// QoS 1 publish, returning once the broker has acked it.
    pub async fn publish_acked(&mut self, topic: &str, payload: &[u8], retain: bool) {
        self.client
            .publish(topic, QoS::AtLeastOnce, retain, payload.to_vec())
            .await
            .unwrap();
        self.wait_for(|e| matches!(e, Event::Incoming(Incoming::PubAck(_))))
            .await;
    }

    pub async fn subscribe(&mut self, filter: &str) {
        self.client.subscribe(filter, QoS::AtLeastOnce).await.unwrap();
        self.wait_for(|e| matches!(e, Event::Incoming(Incoming::SubAck(_))))
            .await;
    }

    /// Next PUBLISH on any subscribed topic.
    pub async fn next_publish(&mut self) -> rumqttc::Publish {
        match self
            .wait_for(|e| matches!(e, Event::Incoming(Incoming::Publish(_))))
            .await
        {
            Event::Incoming(Incoming::Publish(p)) => p,
            _ => unreachable!(),
        }
    }

    pub async fn disconnect(mut self) {
        self.client.disconnect().await.unwrap();
        self.wait_for(|e| matches!(e, Event::Outgoing(Outgoing::Disconnect)))
            .await;
        self.task.abort();
    }
}

/// The retained message on `topic`, read by a fresh clean-session subscriber.
pub async fn read_retained(addr: SocketAddr, topic: &str) -> rumqttc::Publish {
    let mut peer = Peer::connect(addr, &unique("retained-reader"), true).await;
    // Not `subscribe()`: it would skip a retained PUBLISH that overtook the SUBACK.
    peer.client.subscribe(topic, QoS::AtLeastOnce).await.unwrap();
    let p = peer.next_publish().await;
    peer.disconnect().await;
    p
}
