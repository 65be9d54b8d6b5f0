//! The MQTT client task: drives rumqttc's event loop, hands inbound messages to the consumer
//! with an ack token, resubscribes and announces availability on every connect, reconnects
//! with backoff, and shuts down cleanly.
//!
//! Delivery contract: QoS 1 messages are acknowledged only through [`MqttHandle::ack`], so
//! a message the caller never acked (e.g. the process died before its database commit) is
//! redelivered by the broker on the next session. Redelivery means duplicates: the consumer
//! must tolerate seeing a message twice. Acks should be given in the order the messages were
//! received (MQTT 3.1.1 §4.6).

use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::{Arc, Mutex};
use std::time::Duration;

use chrono::{DateTime, Utc};
use rand::rngs::StdRng;
use rand::SeedableRng;
use rumqttc::{
    AsyncClient, ConnectionError, Event, EventLoop, Incoming, Outgoing, Publish, Request, Subscribe,
    SubscribeFilter, SubscribeReasonCode,
};
use tokio::sync::{mpsc, watch};
use tokio::task::JoinHandle;
use tokio::time::Instant;

use super::ack::{AckGate, AckOutcome, AckToken, NackOutcome};
use super::backoff::Backoff;
use super::options::{AvailabilityOptions, ConnectionOptions, OptionsError, QoS};
use super::status::{ConnectionState, MqttCounters};

/// One message from the broker.
#[derive(Debug)]
pub struct InboundMessage {
    pub topic: String,
    pub payload: Vec<u8>,
    pub qos: QoS,
    /// Set on a retained message sent on subscribe (it may be old).
    pub retain: bool,
    /// The broker marked it as a redelivery (brokers that replay from a log may not).
    pub duplicate: bool,
    /// Wall-clock time the adapter read it off the network.
    pub received_at: DateTime<Utc>,
    /// Pass to [`MqttHandle::ack`] once the message is safely stored.
    pub ack: AckToken,
}

/// Errors of the MQTT handle.
#[derive(Debug, thiserror::Error)]
pub enum MqttError {
    #[error(transparent)]
    Options(#[from] OptionsError),
    #[error("MQTT client must be started inside a tokio runtime")]
    NoRuntime,
    #[error("topic {topic:?} is not a valid MQTT topic name for publishing")]
    InvalidTopic { topic: String },
    #[error("the MQTT client has shut down")]
    Closed,
    #[error("timed out after {after:?} waiting for {what}")]
    Timeout { after: Duration, what: &'static str },
}

#[derive(Debug, Default)]
struct Counters {
    messages_received: AtomicU64,
    connect_failures: AtomicU64,
    disconnects: AtomicU64,
}

struct Shared {
    client: AsyncClient,
    gate: Arc<AckGate>,
    state_tx: Arc<watch::Sender<ConnectionState>>,
    counters: Arc<Counters>,
    shutting_down: Arc<AtomicBool>,
    task: Mutex<Option<JoinHandle<()>>>,
    availability: Option<AvailabilityOptions>,
}

/// Cheap to clone; all clones drive the same connection.
#[derive(Clone)]
pub struct MqttHandle {
    inner: Arc<Shared>,
}

impl std::fmt::Debug for MqttHandle {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("MqttHandle")
            .field("state", &*self.inner.state_tx.borrow())
            .finish()
    }
}

impl MqttHandle {
    /// Validates `options` and `filters` (all subscribed at QoS 1), spawns the event-loop task
    /// on the current tokio runtime and returns the handle and the inbound message stream.
    /// Connecting happens in the background; watch [`MqttHandle::connection_state`].
    pub fn start(
        options: &ConnectionOptions,
        filters: &[String],
    ) -> Result<(MqttHandle, mpsc::Receiver<InboundMessage>), MqttError> {
        let runtime = tokio::runtime::Handle::try_current().map_err(|_| MqttError::NoRuntime)?;
        for f in filters {
            if f.is_empty() || !rumqttc::valid_filter(f) {
                return Err(OptionsError::InvalidFilter { filter: f.clone() }.into());
            }
        }
        let mqtt_options = options.to_mqtt_options()?;
        let (client, mut eventloop) = AsyncClient::new(mqtt_options, options.request_channel_capacity);
        let mut network = eventloop.network_options();
        network.set_connection_timeout(options.connect_timeout.as_secs());
        network.set_tcp_nodelay(true);
        eventloop.set_network_options(network);

        let (inbound_tx, inbound_rx) = mpsc::channel(options.receive_window);
        let state_tx = Arc::new(watch::Sender::new(ConnectionState::initial(Utc::now())));
        let gate = Arc::new(AckGate::default());
        let counters = Arc::new(Counters::default());
        let shutting_down = Arc::new(AtomicBool::new(false));

        let driver = Driver {
            eventloop,
            client: client.clone(),
            gate: gate.clone(),
            state_tx: state_tx.clone(),
            counters: counters.clone(),
            shutting_down: shutting_down.clone(),
            inbound_tx,
            filters: filters.to_vec(),
            availability: options.availability.clone(),
            backoff: Backoff::new(options.backoff),
            rng: StdRng::from_entropy(),
            connected_at: None,
            ever_connected: false,
            saved_publishes: Vec::new(),
            consumer_gone: false,
            drain_deadline: None,
        };
        let task = runtime.spawn(driver.run());
        let shared = Shared {
            client,
            gate,
            state_tx,
            counters,
            shutting_down,
            task: Mutex::new(Some(task)),
            availability: options.availability.clone(),
        };
        Ok((
            MqttHandle {
                inner: Arc::new(shared),
            },
            inbound_rx,
        ))
    }

    /// Acknowledge a message (never blocks). Only acks for the live connection are sent.
    pub fn ack(&self, token: AckToken) -> AckOutcome {
        self.inner.gate.ack(token, &self.inner.client)
    }

    /// Give up on a delivery the caller cannot store: the connection is restarted (clean
    /// DISCONNECT, reconnect after the minimum backoff) so the broker redelivers this message
    /// and every later un-acked one.
    pub fn nack(&self, token: AckToken) -> NackOutcome {
        self.inner.gate.nack(token, &self.inner.client)
    }

    /// Publish; waits for room in the request channel (back-pressure), not for the broker.
    /// Queued QoS 1 publishes survive reconnects.
    pub async fn publish(
        &self,
        topic: &str,
        payload: impl Into<Vec<u8>>,
        retain: bool,
        qos: QoS,
    ) -> Result<(), MqttError> {
        if topic.is_empty() || !rumqttc::valid_topic(topic) {
            return Err(MqttError::InvalidTopic {
                topic: topic.to_string(),
            });
        }
        if self.inner.shutting_down.load(Ordering::SeqCst) {
            return Err(MqttError::Closed);
        }
        self.inner
            .client
            .publish(topic, qos.to_rumqttc(), retain, payload)
            .await
            .map_err(|_| MqttError::Closed)
    }

    /// A receiver of the connection state (updated on every change).
    pub fn connection_state(&self) -> watch::Receiver<ConnectionState> {
        self.inner.state_tx.subscribe()
    }

    /// Waits until connected and subscribed to every filter, or `timeout`.
    pub async fn wait_until_subscribed(&self, timeout: Duration) -> Result<ConnectionState, MqttError> {
        let mut rx = self.connection_state();
        let waited = tokio::time::timeout(timeout, async {
            rx.wait_for(|s| (s.connected && s.subscribed) || s.stopped)
                .await
                .map(|s| s.clone())
        });
        match waited.await {
            Ok(Ok(s)) if !s.stopped => Ok(s),
            Ok(_) => Err(MqttError::Closed),
            Err(_) => Err(MqttError::Timeout {
                after: timeout,
                what: "MQTT connection and subscription",
            }),
        }
    }

    /// Totals since start.
    pub fn counters(&self) -> MqttCounters {
        let c = &self.inner.counters;
        MqttCounters {
            messages_received: c.messages_received.load(Ordering::Relaxed),
            acks_sent: self.inner.gate.written_count(),
            stale_acks_dropped: self.inner.gate.stale_count(),
            acks_waiting: self.inner.gate.waiting_len() as u64,
            connect_failures: c.connect_failures.load(Ordering::Relaxed),
            disconnects: c.disconnects.load(Ordering::Relaxed),
        }
    }

    /// Graceful stop: if connected, publish the retained `offline` availability message, send
    /// DISCONNECT (so the broker discards the last will) and wait for the task to finish; if
    /// not connected, just stop (the broker has already published the will or will do so).
    /// After `timeout` the task is aborted. Idempotent.
    pub async fn shutdown(&self, timeout: Duration) -> Result<(), MqttError> {
        self.inner.shutting_down.store(true, Ordering::SeqCst);
        let task = match self.inner.task.lock().unwrap_or_else(|e| e.into_inner()).take() {
            Some(t) => t,
            None => return Ok(()),
        };
        let connected = self.inner.state_tx.borrow().connected;
        let result = if connected {
            let client = self.inner.client.clone();
            let availability = self.inner.availability.clone();
            let mut task = task;
            let graceful = async {
                if let Some(a) = availability {
                    // Errors mean the task already stopped; the join below settles it.
                    let _ = client
                        .publish(a.topic, a.qos.to_rumqttc(), true, a.offline_payload)
                        .await;
                }
                let _ = client.disconnect().await;
                let _ = (&mut task).await;
            };
            match tokio::time::timeout(timeout, graceful).await {
                Ok(()) => Ok(()),
                Err(_) => {
                    task.abort();
                    let _ = task.await;
                    Err(MqttError::Timeout {
                        after: timeout,
                        what: "graceful MQTT disconnect",
                    })
                }
            }
        } else {
            task.abort();
            let _ = task.await;
            Ok(())
        };
        self.inner.gate.close();
        self.inner.state_tx.send_modify(|s| {
            s.connected = false;
            s.subscribed = false;
            s.stopped = true;
            s.since = Utc::now();
        });
        result
    }
}

/// Owns the event loop; the only code that polls it.
struct Driver {
    eventloop: EventLoop,
    client: AsyncClient,
    gate: Arc<AckGate>,
    state_tx: Arc<watch::Sender<ConnectionState>>,
    counters: Arc<Counters>,
    shutting_down: Arc<AtomicBool>,
    inbound_tx: mpsc::Sender<InboundMessage>,
    filters: Vec<String>,
    availability: Option<AvailabilityOptions>,
    backoff: Backoff,
    rng: StdRng,
    connected_at: Option<Instant>,
    ever_connected: bool,
    /// Publishes waiting in rumqttc's pending queue when the connection broke; rumqttc drops
    /// them if the next CONNACK says the broker lost our session, so they are re-queued then.
    saved_publishes: Vec<Publish>,
    consumer_gone: bool,
    /// Set once our DISCONNECT is written during shutdown.
    drain_deadline: Option<Instant>,
}

/// How long to wait for the broker to close the connection after our DISCONNECT.
const DRAIN_AFTER_DISCONNECT: Duration = Duration::from_secs(2);

impl Driver {
    async fn run(mut self) {
        loop {
            let polled = match self.drain_deadline {
                None => self.eventloop.poll().await,
                Some(deadline) => match tokio::time::timeout_at(deadline, self.eventloop.poll()).await {
                    Ok(polled) => polled,
                    Err(_) => {
                        tracing::debug!("MQTT broker did not close the connection after DISCONNECT");
                        break;
                    }
                },
            };
            match polled {
                Ok(event) => {
                    self.on_event(event).await;
                    self.gate.flush(&self.client);
                }
                Err(error) => {
                    self.on_error(&error);
                    if self.shutting_down.load(Ordering::SeqCst) {
                        break;
                    }
                    let delay = self.backoff.next_delay(&mut self.rng);
                    tracing::debug!(?delay, "MQTT reconnect delay");
                    tokio::time::sleep(delay).await;
                }
            }
        }
        self.gate.close();
        self.state_tx.send_modify(|s| {
            s.connected = false;
            s.subscribed = false;
            s.stopped = true;
            s.since = Utc::now();
        });
    }

    async fn on_event(&mut self, event: Event) {
        match event {
            Event::Incoming(Incoming::ConnAck(connack)) => self.on_connack(connack.session_present),
            Event::Incoming(Incoming::Publish(publish)) => self.on_publish(publish).await,
            Event::Incoming(Incoming::SubAck(suback)) => {
                let failed: Vec<&String> = suback
                    .return_codes
                    .iter()
                    .zip(&self.filters)
                    .filter(|(code, _)| matches!(code, SubscribeReasonCode::Failure))
                    .map(|(_, f)| f)
                    .collect();
                if failed.is_empty() {
                    self.state_tx.send_modify(|s| s.subscribed = true);
                } else {
                    let msg = format!("broker refused subscription to {failed:?}");
                    tracing::warn!("{msg}");
                    self.state_tx.send_modify(|s| s.last_error = Some(msg));
                }
            }
            Event::Outgoing(Outgoing::PubAck(_) | Outgoing::PubRec(_)) => self.gate.note_written(),
            Event::Outgoing(Outgoing::Disconnect) if self.shutting_down.load(Ordering::SeqCst) => {
                // Keep reading until the broker closes the connection: then it has processed
                // everything before the DISCONNECT (acks, the offline message). Closing at once
                // could reset the socket and lose those bytes, or let a quick restart with the
                // same client id take the session over before they arrive.
                self.drain_deadline = Some(Instant::now() + DRAIN_AFTER_DISCONNECT);
            }
            Event::Outgoing(Outgoing::Disconnect) => {
                // A nack's restart: the broker closes the socket, poll() errors, we reconnect.
                tracing::info!("MQTT connection restart requested (nack)");
                self.backoff.reset();
            }
            _ => {}
        }
    }

    fn on_connack(&mut self, session_present: bool) {
        let generation = self.gate.begin_connection();
        let reconnect = self.ever_connected;
        self.ever_connected = true;
        self.connected_at = Some(Instant::now());
        let pending = &mut self.eventloop.pending;
        if !self.filters.is_empty() {
            let filters = self
                .filters
                .iter()
                .map(|f| SubscribeFilter::new(f.clone(), rumqttc::QoS::AtLeastOnce));
            pending.push_back(Request::Subscribe(Subscribe::new_many(filters)));
        }
        if let Some(a) = &self.availability {
            if !self.shutting_down.load(Ordering::SeqCst) {
                let mut online = Publish::new(&a.topic, a.qos.to_rumqttc(), a.online_payload.clone());
                online.retain = true;
                pending.push_back(Request::Publish(online));
            }
        }
        let saved = std::mem::take(&mut self.saved_publishes);
        if !session_present {
            for mut p in saved {
                p.pkid = 0;
                p.dup = false;
                pending.push_back(Request::Publish(p));
            }
        }
        tracing::info!(generation, session_present, reconnect, "MQTT connected");
        let subscribed = self.filters.is_empty();
        self.state_tx.send_modify(|s| {
            s.connected = true;
            s.subscribed = subscribed;
            s.since = Utc::now();
            s.generation = generation;
            s.session_present = session_present;
            if reconnect {
                s.reconnects += 1;
            }
        });
    }

    async fn on_publish(&mut self, publish: Publish) {
        self.counters.messages_received.fetch_add(1, Ordering::Relaxed);
        if self.drain_deadline.is_some() {
            // Shutting down: leave it un-acked; the broker redelivers it next session.
            return;
        }
        let qos = QoS::from_rumqttc(publish.qos);
        let ack = self.gate.issue(publish.pkid, qos);
        let message = InboundMessage {
            topic: publish.topic,
            payload: publish.payload.to_vec(),
            qos,
            retain: publish.retain,
            duplicate: publish.dup,
            received_at: Utc::now(),
            ack,
        };
        // Awaiting here is the back-pressure: the broker's in-flight window caps QoS 1.
        if self.inbound_tx.send(message).await.is_err() && !self.consumer_gone {
            self.consumer_gone = true;
            tracing::warn!("MQTT consumer dropped its receiver; messages are left unacked");
        }
    }

    fn on_error(&mut self, error: &ConnectionError) {
        self.gate.end_connection(&mut self.eventloop);
        self.saved_publishes = self
            .eventloop
            .pending
            .iter()
            .filter_map(|r| match r {
                Request::Publish(p) => Some(p.clone()),
                _ => None,
            })
            .collect();
        let shutting_down = self.shutting_down.load(Ordering::SeqCst);
        let was_connected = self.connected_at.take();
        match was_connected {
            // The broker closing the connection after our DISCONNECT is not a disconnect.
            Some(_) if shutting_down => {}
            Some(at) => {
                self.counters.disconnects.fetch_add(1, Ordering::Relaxed);
                self.backoff.connection_ended(at.elapsed());
            }
            None => {
                self.counters.connect_failures.fetch_add(1, Ordering::Relaxed);
            }
        }
        let text = if shutting_down {
            tracing::debug!(%error, "MQTT connection closed during shutdown");
            None
        } else {
            tracing::warn!(%error, "MQTT connection error");
            Some(error.to_string())
        };
        self.state_tx.send_modify(|s| {
            if s.connected {
                s.since = Utc::now();
            }
            s.connected = false;
            s.subscribed = false;
            if text.is_some() {
                s.last_error = text;
            }
        });
    }
}
