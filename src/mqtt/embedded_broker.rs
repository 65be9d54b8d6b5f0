//! An in-process MQTT 3.1.1 broker on a free loopback port, for `halotank demo` and tests.
//!
//! Built on rumqttd 0.20 (TLS and websockets off), behind a small TCP relay of our own:
//! rumqttd 0.20 has no shutdown API (`Broker::start` blocks forever on its server threads),
//! so the relay owns the public port and gives us [`EmbeddedBroker::stop`] (close the port
//! and every client connection) and [`EmbeddedBroker::sever_connections`] (drop every client
//! connection, keep listening: a network fault for reconnect tests). After `stop` rumqttd's
//! own threads stay parked on a private loopback port until the process exits.
//!
//! What it supports (checked by `tests/mqtt_embedded.rs`, rumqttd 0.20.0 source read too):
//! - Persistent sessions: yes. A `clean_session = false` client that reconnects with the
//!   same id gets `session_present = true`, keeps its subscriptions, and receives what was
//!   published while it was away (kept in rumqttd's in-memory commit log; 10 segments of
//!   16 MiB per topic, oldest dropped first). Sessions live in memory only: gone with the process.
//! - QoS 1 redelivery of un-acked messages after the subscriber reconnects: yes, both after a
//!   graceful DISCONNECT and after a network drop. rumqttd rewinds the session's log cursor
//!   to the oldest un-acked message and replays from there, as fresh PUBLISHes (new packet
//!   ids, DUP flag not set). So the crash/redelivery tests run against it; Mosquitto runs
//!   them too when `HALOTANK_TEST_MQTT` is set.
//! - Acks must come in order: an out-of-order PUBACK makes rumqttd drop the connection, and
//!   the message at the head of its in-flight queue is then never redelivered (seen in its
//!   source, `Outgoing::register_ack`, and in a trial run). The adapter releases acks in
//!   receive order, so this cannot happen through it.
//! - QoS: delivers at the subscription's QoS, not min(publish, subscription) as MQTT 3.1.1
//!   §3.8.4 says: a QoS 0 publish reaches a QoS 1 subscriber as QoS 1 and needs an ack.
//! - In-flight limit: `max_inflight_count` (default here 100) un-acked messages per
//!   subscriber connection; more wait in the log.
//! - Retained messages and last will: yes (will discarded on a clean DISCONNECT).
//! - Quirk seen in tests: right after a client reconnects with its old client id, rumqttd
//!   sometimes drops a different, unrelated connection (its source notes that connection
//!   ids are reused); clients reconnect and carry on.
//! - Not supported here: TLS, websockets, authentication, MQTT 5 (features off).
//! - rumqttd logs ordinary disconnects at ERROR level; filter `rumqttd` in the log settings.

use std::collections::HashMap;
use std::net::{Ipv4Addr, SocketAddr, SocketAddrV4, TcpListener as StdTcpListener};
use std::time::Duration;

use rumqttd::{Broker, Config, ConnectionSettings, RouterConfig, ServerSettings};
use tokio::net::TcpStream;

use super::relay::TcpRelay;

/// Limits of the embedded broker.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct EmbeddedBrokerConfig {
    /// Largest accepted PUBLISH payload, bytes.
    pub max_payload_size_bytes: usize,
    /// Un-acked QoS 1 messages rumqttd sends one subscriber connection before waiting.
    pub max_inflight_count: usize,
    pub max_connections: usize,
    /// How long to wait for rumqttd to start listening.
    pub startup_timeout: Duration,
}

impl Default for EmbeddedBrokerConfig {
    fn default() -> Self {
        Self {
            max_payload_size_bytes: 1024 * 1024,
            max_inflight_count: 100,
            max_connections: 256,
            startup_timeout: Duration::from_secs(10),
        }
    }
}

/// Failures starting the embedded broker.
#[derive(Debug, thiserror::Error)]
pub enum EmbeddedBrokerError {
    #[error("embedded broker: cannot bind a loopback port: {0}")]
    Bind(std::io::Error),
    #[error("embedded broker: cannot start the broker thread: {0}")]
    Thread(std::io::Error),
    #[error("embedded broker: rumqttd stopped during start-up (port {port} taken?)")]
    BrokerExited { port: u16 },
    #[error("embedded broker: rumqttd not listening on port {port} after {after:?}")]
    StartupTimeout { port: u16, after: Duration },
    #[error("embedded broker must be started inside a tokio runtime")]
    NoRuntime,
}

/// A running embedded broker. Dropping it stops the relay like [`EmbeddedBroker::stop`].
#[derive(Debug)]
pub struct EmbeddedBroker {
    relay: TcpRelay,
}

fn free_loopback_port() -> Result<u16, EmbeddedBrokerError> {
    let l =
        StdTcpListener::bind(SocketAddrV4::new(Ipv4Addr::LOCALHOST, 0)).map_err(EmbeddedBrokerError::Bind)?;
    Ok(l.local_addr().map_err(EmbeddedBrokerError::Bind)?.port())
}

fn rumqttd_config(listen: SocketAddr, c: &EmbeddedBrokerConfig) -> Config {
    let connections = ConnectionSettings {
        connection_timeout_ms: 60_000,
        max_payload_size: c.max_payload_size_bytes,
        max_inflight_count: c.max_inflight_count,
        auth: None,
        external_auth: None,
        dynamic_filters: true,
    };
    let server = ServerSettings {
        name: "halotank-embedded-v4".to_string(),
        listen,
        tls: None,
        next_connection_delay_ms: 1,
        connections,
    };
    Config {
        id: 0,
        router: RouterConfig {
            max_connections: c.max_connections,
            max_outgoing_packet_count: 200,
            max_segment_size: 16 * 1024 * 1024,
            max_segment_count: 10,
            custom_segment: None,
            initialized_filters: None,
            shared_subscriptions_strategy: Default::default(),
        },
        v4: Some(HashMap::from([("1".to_string(), server)])),
        ..Config::default()
    }
}

impl EmbeddedBroker {
    /// Start with default limits on `127.0.0.1:<free port>`.
    pub async fn start() -> Result<Self, EmbeddedBrokerError> {
        Self::start_with(EmbeddedBrokerConfig::default()).await
    }

    pub async fn start_with(config: EmbeddedBrokerConfig) -> Result<Self, EmbeddedBrokerError> {
        tokio::runtime::Handle::try_current().map_err(|_| EmbeddedBrokerError::NoRuntime)?;
        // rumqttd binds by itself, so its private port is picked free and released first.
        let private_port = free_loopback_port()?;
        let private_addr = SocketAddr::from((Ipv4Addr::LOCALHOST, private_port));
        let rumqttd_cfg = rumqttd_config(private_addr, &config);
        let thread = std::thread::Builder::new()
            .name("halotank-embedded-broker".into())
            .spawn(move || {
                let mut broker = Broker::new(rumqttd_cfg);
                if let Err(e) = broker.start() {
                    tracing::error!(error = %e, "embedded broker stopped");
                }
            })
            .map_err(EmbeddedBrokerError::Thread)?;

        let deadline = tokio::time::Instant::now() + config.startup_timeout;
        loop {
            if thread.is_finished() {
                return Err(EmbeddedBrokerError::BrokerExited { port: private_port });
            }
            if TcpStream::connect(private_addr).await.is_ok() {
                break;
            }
            if tokio::time::Instant::now() >= deadline {
                return Err(EmbeddedBrokerError::StartupTimeout {
                    port: private_port,
                    after: config.startup_timeout,
                });
            }
            // rumqttd offers no readiness signal; poll the port.
            tokio::time::sleep(Duration::from_millis(10)).await;
        }

        let relay = TcpRelay::start(private_addr)
            .await
            .map_err(EmbeddedBrokerError::Bind)?;
        tracing::info!(addr = %relay.addr(), "embedded MQTT broker listening");
        Ok(Self { relay })
    }

    /// Loopback address clients connect to.
    pub fn addr(&self) -> SocketAddr {
        self.relay.addr()
    }

    /// `mqtt://127.0.0.1:PORT`.
    pub fn url(&self) -> String {
        format!("mqtt://{}", self.addr())
    }

    /// Drop every client connection now (as a network fault would); keep accepting new ones.
    /// Sessions and retained messages stay in the broker.
    pub fn sever_connections(&self) {
        self.relay.sever_connections();
    }

    /// Stop accepting and drop every client connection. The port is closed when this returns.
    pub async fn stop(self) {
        self.relay.stop().await;
    }
}
