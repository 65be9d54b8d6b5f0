//! A channel's task: takes events from its queue in order and delivers each, retrying failed attempts
//! with backoff; on shutdown it drains the queue until the deadline and counts the rest as dropped.
use std::future::Future;
use std::sync::Arc;

use tokio::sync::{mpsc, watch};
use tokio::time::Instant;

use super::backoff::RetryPolicy;
use super::counters::{ChannelKind, SharedCounters};
use super::error::AttemptError;
use super::payload::Payload;

/// One way of delivering an event; an attempt is tried once (the worker retries).
pub(crate) trait Channel: Send + Sync + 'static {
    fn attempt(&self, payload: &Arc<Payload>) -> impl Future<Output = Result<(), AttemptError>> + Send;
}

/// A channel with its queue, counters, retry policy and the shutdown signal (a deadline, once set).
pub(crate) struct Worker<C> {
    pub(crate) kind: ChannelKind,
    pub(crate) channel: C,
    pub(crate) policy: RetryPolicy,
    pub(crate) queue: mpsc::Receiver<Arc<Payload>>,
    pub(crate) counters: Arc<SharedCounters>,
    pub(crate) shutdown: watch::Receiver<Option<Instant>>,
}

/// What delivering one event needs.
struct Delivery<'a, C> {
    kind: ChannelKind,
    channel: &'a C,
    policy: RetryPolicy,
    counters: &'a SharedCounters,
}

impl<C: Channel> Worker<C> {
    /// Runs until the queue is closed and empty, or until shutdown has drained it.
    pub(crate) async fn run(self) {
        let Worker {
            kind,
            channel,
            policy,
            mut queue,
            counters,
            mut shutdown,
        } = self;
        let delivery = Delivery {
            kind,
            channel: &channel,
            policy,
            counters: &counters,
        };
        loop {
            let payload = tokio::select! {
                biased;
                deadline = shutdown_deadline(&mut shutdown) => {
                    delivery.drain(&mut queue, deadline).await;
                    return;
                }
                next = queue.recv() => match next {
                    Some(payload) => payload,
                    None => return,
                },
            };
            let work = delivery.deliver(&payload);
            tokio::pin!(work);
            tokio::select! {
                biased;
                () = &mut work => {}
                deadline = shutdown_deadline(&mut shutdown) => {
                    if tokio::time::timeout_at(deadline, &mut work).await.is_err() {
                        delivery.abandoned(&payload);
                    }
                    delivery.drain(&mut queue, deadline).await;
                    return;
                }
            }
        }
    }
}

/// Resolves with the shutdown deadline once one is set; never, if the handle went away without one.
async fn shutdown_deadline(shutdown: &mut watch::Receiver<Option<Instant>>) -> Instant {
    let deadline = match shutdown.wait_for(Option::is_some).await {
        Ok(value) => *value,
        Err(_) => None,
    };
    match deadline {
        Some(deadline) => deadline,
        None => std::future::pending().await,
    }
}

impl<C: Channel> Delivery<'_, C> {
    /// Delivers one event: the first attempt, then retries with backoff, counting the outcome.
    async fn deliver(&self, payload: &Arc<Payload>) {
        let channel = self.kind.as_str();
        let mut retry = 0u32;
        loop {
            match self.channel.attempt(payload).await {
                Ok(()) => {
                    self.counters.delivered();
                    tracing::debug!(channel, alert_id = payload.id.0, tank = %payload.tank,
                        event = payload.event, retries = retry, "alert event delivered");
                    return;
                }
                Err(error) => {
                    if error.is_permanent() || retry >= self.policy.retries {
                        self.counters.failed();
                        tracing::error!(channel, alert_id = payload.id.0, tank = %payload.tank,
                            event = payload.event, attempts = retry + 1, %error,
                            "alert event delivery failed; giving up on this channel");
                        return;
                    }
                    retry += 1;
                    let delay = self.policy.delay(retry, rand::random::<f64>());
                    tracing::warn!(channel, alert_id = payload.id.0, tank = %payload.tank,
                        event = payload.event, retry, retry_in_ms = delay.as_millis() as u64, %error,
                        "alert event delivery attempt failed; will retry");
                    tokio::time::sleep(delay).await;
                    self.counters.retried();
                }
            }
        }
    }

    /// Stops taking events, then delivers what is queued until `deadline`; the rest is dropped.
    async fn drain(&self, queue: &mut mpsc::Receiver<Arc<Payload>>, deadline: Instant) {
        queue.close();
        while let Some(payload) = queue.recv().await {
            if Instant::now() >= deadline {
                self.abandoned(&payload);
                continue;
            }
            if tokio::time::timeout_at(deadline, self.deliver(&payload))
                .await
                .is_err()
            {
                self.abandoned(&payload);
            }
        }
    }

    fn abandoned(&self, payload: &Payload) {
        self.counters.dropped();
        tracing::warn!(channel = self.kind.as_str(), alert_id = payload.id.0, tank = %payload.tank,
            event = payload.event, "alert event not delivered before the shutdown deadline");
    }
}
