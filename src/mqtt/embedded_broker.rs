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
//! FACTS_PLACEHOLDER

use std::collections::HashMap;
use std::net::{Ipv4Addr, SocketAddr, SocketAddrV4, TcpListener as StdTcpListener};
use std::sync::Arc;
use std::time::Duration;

use rumqttd::{Broker, Config, ConnectionSettings, RouterConfig, ServerSettings};
use tokio::net::{TcpListener, TcpStream};
use tokio::sync::watch;
use tokio::task::JoinHandle;

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
    addr: SocketAddr,
    /// Bumped to sever every relayed connection.
    sever_tx: Arc<watch::Sender<u64>>,
    /// `true` once stopped.
    stop_tx: Arc<watch::Sender<bool>>,
    accept_task: Option<JoinHandle<()>>,
}

fn free_loopback_port() -> Result<u16, EmbeddedBrokerError> {
    let l = StdTcpListener::bind(SocketAddrV4::new(Ipv4Addr::LOCALHOST, 0)).map_err(EmbeddedBrokerError::Bind)?;
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
        let runtime = tokio::runtime::Handle::try_current().map_err(|_| EmbeddedBrokerError::NoRuntime)?;
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

        let listener = TcpListener::bind(SocketAddrV4::new(Ipv4Addr::LOCALHOST, 0))
            .await
            .map_err(EmbeddedBrokerError::Bind)?;
        let addr = listener.local_addr().map_err(EmbeddedBrokerError::Bind)?;
        let sever_tx = Arc::new(watch::Sender::new(0u64));
        let stop_tx = Arc::new(watch::Sender::new(false));
        let accept_task = runtime.spawn(accept_loop(listener, private_addr, sever_tx.clone(), stop_tx.clone()));
        tracing::info!(%addr, "embedded MQTT broker listening");
        Ok(Self { addr, sever_tx, stop_tx, accept_task: Some(accept_task) })
    }

    /// Loopback address clients connect to.
    pub fn addr(&self) -> SocketAddr {
        self.addr
    }

    /// `mqtt://127.0.0.1:PORT`.
    pub fn url(&self) -> String {
        format!("mqtt://{}", self.addr)
    }

    /// Drop every client connection now (as a network fault would); keep accepting new ones.
    /// Sessions and retained messages stay in the broker.
    pub fn sever_connections(&self) {
        self.sever_tx.send_modify(|epoch| *epoch += 1);
    }

    /// Stop accepting and drop every client connection. The port is closed when this returns.
    pub async fn stop(mut self) {
        self.stop_tx.send_replace(true);
        if let Some(task) = self.accept_task.take() {
            let _ = task.await;
        }
    }
}

impl Drop for EmbeddedBroker {
    fn drop(&mut self) {
        self.stop_tx.send_replace(true);
    }
}

async fn accept_loop(
    listener: TcpListener,
    private_addr: SocketAddr,
    sever_tx: Arc<watch::Sender<u64>>,
    stop_tx: Arc<watch::Sender<bool>>,
) {
    let mut stop_rx = stop_tx.subscribe();
    loop {
        let accepted = tokio::select! {
            _ = stop_rx.wait_for(|stopped| *stopped) => break,
            a = listener.accept() => a,
        };
        let (client, peer) = match accepted {
            Ok(a) => a,
            Err(e) => {
                tracing::warn!(error = %e, "embedded broker accept failed");
                continue;
            }
        };
        let sever_rx = sever_tx.subscribe();
        let stop_rx = stop_tx.subscribe();
        tokio::spawn(relay(client, peer, private_addr, sever_rx, stop_rx));
    }
}

async fn relay(
    mut client: TcpStream,
    peer: SocketAddr,
    private_addr: SocketAddr,
    mut sever_rx: watch::Receiver<u64>,
    mut stop_rx: watch::Receiver<bool>,
) {
    let _ = client.set_nodelay(true);
    let mut upstream = match TcpStream::connect(private_addr).await {
        Ok(s) => s,
        Err(e) => {
            tracing::warn!(error = %e, %peer, "embedded broker relay cannot reach rumqttd");
            return;
        }
    };
    let _ = upstream.set_nodelay(true);
    let epoch = *sever_rx.borrow_and_update();
    tokio::select! {
        _ = tokio::io::copy_bidirectional(&mut client, &mut upstream) => {}
        _ = sever_rx.wait_for(|e| *e != epoch) => {}
        _ = stop_rx.wait_for(|stopped| *stopped) => {}
    }
    // Dropping both streams closes them (the broker sees a network drop, not a DISCONNECT).
}
