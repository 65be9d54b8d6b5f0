//! MQTT adapter: connection options, reconnect backoff, a client task with manual acks, and
//! an embedded broker for the demo and tests.
//!
//! - [`options`]: [`ConnectionOptions`] and broker URL parsing.
//! - [`backoff`]: capped exponential backoff with jitter (pure).
//! - [`ack`]: ack tokens bound to one network connection.
//! - [`status`]: connection state and counters.
//! - [`client`]: the event-loop task and [`MqttHandle`].
//! - [`embedded_broker`]: an in-process broker on a loopback port.
//! - [`relay`]: a TCP relay that can sever connections (broker stop, fault injection).
pub mod ack;
pub mod backoff;
pub mod client;
pub mod embedded_broker;
pub mod options;
pub mod relay;
pub mod status;

pub use ack::{AckOutcome, AckToken, NackOutcome};
pub use backoff::{Backoff, BackoffPolicy};
pub use client::{InboundMessage, MqttError, MqttHandle};
pub use embedded_broker::{EmbeddedBroker, EmbeddedBrokerConfig, EmbeddedBrokerError};
pub use options::{
    AvailabilityOptions, BrokerUrl, ClientAuthFiles, ConnectionOptions, LastWillOptions, OptionsError, QoS,
    Scheme, TlsOptions,
};
pub use relay::TcpRelay;
pub use status::{ConnectionState, MqttCounters};
