//! Alert delivery: an async adapter (tokio) that tells people about [`AlertEvent`](super::AlertEvent)s
//! through optional channels, without ever blocking ingest.
//!
//! - [`spawn_delivery`] ([`handle`]): one bounded queue and one task per channel; [`DeliveryHandle::submit`]
//!   never waits (a full queue drops the event from delivery, counted and logged; the alert record itself
//!   is persisted by the daemon) and [`DeliveryHandle::shutdown`] drains what it can in time.
//! - [`webhook`]: HTTP POST of the event JSON. [`exec`]: a configured program with the event JSON on stdin.
//! - [`worker`]: a channel's task, delivering in order, retrying with [`RetryPolicy`] ([`backoff`]).
//! - [`settings`]: [`DeliverySettings`] (serde, validated). [`counters`]: [`DeliveryCounters`].
//!
//! MQTT event publishing is done by the daemon itself, not here. Delivery is an aid to staff and does
//! not replace a tank's own life-support alarm.
pub mod backoff;
pub mod counters;
pub mod error;
pub mod exec;
pub mod handle;
mod payload;
pub mod settings;
pub mod webhook;
mod worker;

pub use backoff::RetryPolicy;
pub use counters::{ChannelKind, DeliveryCounters};
pub use error::{AttemptError, DeliverySettingsError};
pub use handle::{spawn_delivery, spawn_delivery_with_secrets, DeliveryHandle};
pub use settings::{DeliverySettings, ExecSettings, WebhookSettings};
