//! `spawn_delivery` and `DeliveryHandle`: the daemon's side of delivery. Submitting never waits; each
//! channel has its own bounded queue and task.
use std::fmt;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;
use std::time::Duration;

use tokio::sync::mpsc::error::TrySendError;
use tokio::sync::{mpsc, watch};
use tokio::task::JoinHandle;
use tokio::time::Instant;

use super::counters::{ChannelKind, DeliveryCounters, SharedCounters};
use super::error::DeliverySettingsError;
use super::exec::ExecChannel;
use super::payload::Payload;
use super::settings::DeliverySettings;
use super::webhook::WebhookChannel;
use super::worker::{Channel, Worker};
use crate::alerts::{AlertEvent, Severity};

/// Extra time [`DeliveryHandle::shutdown`] waits past its deadline for the tasks to stop.
const SHUTDOWN_GRACE: Duration = Duration::from_millis(500);

/// Submits events to the delivery tasks; cheap to clone. When every clone is dropped the tasks
/// deliver what is queued and stop.
#[derive(Clone)]
pub struct DeliveryHandle {
    inner: Arc<Inner>,
}

struct Inner {
    routes: Vec<Route>,
    closing: AtomicBool,
    shutdown: watch::Sender<Option<Instant>>,
    finished: watch::Receiver<bool>,
}

/// One channel's queue, filter and counters.
struct Route {
    kind: ChannelKind,
    min_severity: Severity,
    queue: mpsc::Sender<Arc<Payload>>,
    counters: Arc<SharedCounters>,
}

impl fmt::Debug for DeliveryHandle {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("DeliveryHandle")
            .field("channels", &self.channels())
            .finish()
    }
}

/// Validates `settings`, starts one task per configured channel and a task that ends when they all
/// have (its result is the final counters, summed). `bearer_token_env` is read from the process
/// environment. Must be called within a tokio runtime.
pub fn spawn_delivery(
    settings: &DeliverySettings,
) -> Result<(DeliveryHandle, JoinHandle<DeliveryCounters>), DeliverySettingsError> {
    spawn_delivery_with_secrets(settings, &|var| std::env::var(var).ok())
}

/// As [`spawn_delivery`], with `secret` looking up `bearer_token_env` (for tests, or secrets kept
/// elsewhere than the environment).
pub fn spawn_delivery_with_secrets(
    settings: &DeliverySettings,
    secret: &dyn Fn(&str) -> Option<String>,
) -> Result<(DeliveryHandle, JoinHandle<DeliveryCounters>), DeliverySettingsError> {
    settings.validate()?;
    let webhook = match &settings.webhook {
        Some(webhook) => Some((webhook, WebhookChannel::new(webhook, secret)?)),
        None => None,
    };
    let (shutdown, shutdown_rx) = watch::channel(None);
    let (finished_tx, finished) = watch::channel(false);
    let mut routes = Vec::new();
    let mut tasks = Vec::new();
    let mut start = |kind: ChannelKind, min_severity: Option<Severity>, channel, policy| {
        let (route, task) = start_worker(kind, channel, policy, settings.queue_capacity, &shutdown_rx);
        routes.push(Route {
            min_severity: min_severity.unwrap_or(settings.min_severity),
            ..route
        });
        tasks.push((kind, task));
    };
    if let Some((webhook, channel)) = webhook {
        start(
            ChannelKind::Webhook,
            webhook.min_severity,
            Either::Webhook(channel),
            webhook.retry_policy(),
        );
    }
    if let Some(exec) = &settings.exec {
        let channel = Either::Exec(ExecChannel::new(exec));
        start(ChannelKind::Exec, exec.min_severity, channel, exec.retry_policy());
    }
    let all_counters: Vec<Arc<SharedCounters>> = routes.iter().map(|r| Arc::clone(&r.counters)).collect();
    let supervisor = tokio::spawn(async move {
        for (kind, task) in tasks {
            if let Err(error) = task.await {
                tracing::error!(channel = kind.as_str(), %error, "alert delivery task ended abnormally");
            }
        }
        // Nobody may be waiting; that is fine.
        let _ = finished_tx.send(true);
        all_counters
            .iter()
            .fold(DeliveryCounters::default(), |sum, c| sum + c.snapshot())
    });
    let handle = DeliveryHandle {
        inner: Arc::new(Inner {
            routes,
            closing: AtomicBool::new(false),
            shutdown,
            finished,
        }),
    };
    Ok((handle, supervisor))
}

/// The two channel types behind one task type.
enum Either {
    Webhook(WebhookChannel),
    Exec(ExecChannel),
}

impl Channel for Either {
    async fn attempt(&self, payload: &Arc<Payload>) -> Result<(), super::error::AttemptError> {
        match self {
            Self::Webhook(channel) => channel.attempt(payload).await,
            Self::Exec(channel) => channel.attempt(payload).await,
        }
    }
}

fn start_worker(
    kind: ChannelKind,
    channel: Either,
    policy: super::backoff::RetryPolicy,
    capacity: usize,
    shutdown: &watch::Receiver<Option<Instant>>,
) -> (Route, JoinHandle<()>) {
    let (queue, queue_rx) = mpsc::channel(capacity);
    let counters = Arc::new(SharedCounters::default());
    let worker = Worker {
        kind,
        channel,
        policy,
        queue: queue_rx,
        counters: Arc::clone(&counters),
        shutdown: shutdown.clone(),
    };
    let task = tokio::spawn(worker.run());
    let route = Route {
        kind,
        min_severity: Severity::Info,
        queue,
        counters,
    };
    (route, task)
}

impl DeliveryHandle {
    /// Queues `event` for every channel whose minimum severity it meets, without waiting; returns how
    /// many channels took it. A full queue (or delivery already shut down) drops the event from that
    /// channel, counted and logged; the alert record itself is the daemon's to persist.
    pub fn submit(&self, event: &AlertEvent) -> usize {
        let severity = event.severity();
        let wanted: Vec<&Route> = self
            .inner
            .routes
            .iter()
            .filter(|r| severity >= r.min_severity)
            .collect();
        if wanted.is_empty() {
            return 0;
        }
        let payload = match Payload::encode(event) {
            Ok(payload) => Arc::new(payload),
            Err(error) => {
                for route in &wanted {
                    route.counters.failed();
                }
                tracing::error!(alert_id = event.id().0, %error, "alert event could not be encoded for delivery");
                return 0;
            }
        };
        let closing = self.inner.closing.load(Ordering::Acquire);
        let mut queued = 0;
        for route in wanted {
            let channel = route.kind.as_str();
            if closing {
                route.counters.dropped();
                tracing::warn!(
                    channel,
                    alert_id = payload.id.0,
                    event = payload.event,
                    "alert delivery is shut down; event not delivered on this channel"
                );
                continue;
            }
            match route.queue.try_send(Arc::clone(&payload)) {
                Ok(()) => queued += 1,
                Err(TrySendError::Full(_)) => {
                    route.counters.dropped();
                    tracing::warn!(
                        channel,
                        alert_id = payload.id.0,
                        event = payload.event,
                        "alert delivery queue full; event dropped from delivery (the alert record is kept)"
                    );
                }
                Err(TrySendError::Closed(_)) => {
                    route.counters.dropped();
                    tracing::warn!(
                        channel,
                        alert_id = payload.id.0,
                        event = payload.event,
                        "alert delivery task has stopped; event not delivered on this channel"
                    );
                }
            }
        }
        queued
    }

    /// The configured channels, in delivery-task order.
    pub fn channels(&self) -> Vec<ChannelKind> {
        self.inner.routes.iter().map(|r| r.kind).collect()
    }

    /// Counters summed over the channels.
    pub fn counters(&self) -> DeliveryCounters {
        self.inner
            .routes
            .iter()
            .fold(DeliveryCounters::default(), |sum, r| sum + r.counters.snapshot())
    }

    /// One channel's counters, if it is configured.
    pub fn channel_counters(&self, kind: ChannelKind) -> Option<DeliveryCounters> {
        self.inner
            .routes
            .iter()
            .find(|r| r.kind == kind)
            .map(|r| r.counters.snapshot())
    }

    /// Refuses further events, lets each channel deliver what is queued (with retries) for up to
    /// `timeout`, then abandons the rest (counted dropped; a running exec program is killed), waits for
    /// the tasks to stop and returns the counters summed. Calling it again does not extend the deadline.
    pub async fn shutdown(&self, timeout: Duration) -> DeliveryCounters {
        self.inner.closing.store(true, Ordering::Release);
        let deadline = Instant::now() + timeout;
        self.inner.shutdown.send_if_modified(|current| match current {
            Some(_) => false,
            None => {
                *current = Some(deadline);
                true
            }
        });
        let wait_until = (*self.inner.shutdown.borrow()).unwrap_or(deadline) + SHUTDOWN_GRACE;
        let mut finished = self.inner.finished.clone();
        if tokio::time::timeout_at(wait_until, finished.wait_for(|done| *done))
            .await
            .is_err()
        {
            tracing::warn!("alert delivery tasks did not stop by the shutdown deadline");
        }
        self.counters()
    }
}
