//! Maps the `[broker]` configuration onto the MQTT adapter's connection options.
use std::time::Duration;

use anyhow::Context;

use crate::config::Config;
use crate::mqtt::{AvailabilityOptions, BackoffPolicy, ClientAuthFiles, ConnectionOptions, TlsOptions};

/// Largest MQTT 3.1.1 packet: the longest remaining length (268,435,455 bytes, MQTT 3.1.1 §2.2.3)
/// plus the fixed header (5 bytes).
pub const MQTT_MAX_PACKET_BYTES: usize = 268_435_455 + 5;

/// Topic of the retained availability message (`online` / `offline`).
pub fn availability_topic(config: &Config) -> String {
    format!("{}/status", config.publish.topic_prefix)
}

/// Connection options for the daemon: persistent session, manual acks, availability with last will.
pub fn connection_options(config: &Config) -> anyhow::Result<ConnectionOptions> {
    let broker = &config.broker;
    let mut options = ConnectionOptions::new(broker.host.clone(), broker.port, broker.client_id.clone());
    options.tls = broker.tls.as_ref().map(|tls| TlsOptions {
        ca_file: Some(tls.ca_file.clone()),
        client_auth: tls.client_auth.as_ref().map(|auth| ClientAuthFiles {
            cert_file: auth.cert_file.clone(),
            key_file: auth.key_file.clone(),
        }),
    });
    options.username = broker.username.clone();
    options.password = broker
        .password
        .resolve()
        .with_context(|| format!("broker password ({})", broker.password.describe()))?;
    options.keep_alive = Duration::from_secs(broker.keep_alive_s.max(5));
    options.clean_session = broker.clean_session;
    // The inbound channel holds what the broker's in-flight window lets through, and a little more.
    options.receive_window = usize::from(broker.max_inflight).max(1) * 2;
    // The ingest cap is enforced by the ingest core (a counted, acked rejection). The transport cap is
    // the protocol's own maximum: a packet over the client's cap breaks the connection before it can be
    // acked, and the broker redelivers it on every reconnect, wedging the session for every later
    // message. Bound message size at the broker (Mosquitto `max_packet_size`) to bound memory.
    options.max_packet_size_bytes = MQTT_MAX_PACKET_BYTES;
    options.backoff = BackoffPolicy {
        min: Duration::from_millis(broker.reconnect_min_ms.max(1)),
        max: Duration::from_millis(broker.reconnect_max_ms.max(broker.reconnect_min_ms.max(1))),
        ..BackoffPolicy::default()
    };
    options.availability = Some(AvailabilityOptions::new(availability_topic(config)));
    options.validate().context("broker settings")?;
    Ok(options)
}
