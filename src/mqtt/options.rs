//! Connection settings for the MQTT adapter, broker URL parsing and the mapping onto rumqttc.
//!
//! [`ConnectionOptions`] is a plain struct (no serde): the configuration layer fills it in.
//! [`ConnectionOptions::to_mqtt_options`] validates it and builds rumqttc's options, reading
//! the TLS files; rumqttc asserts on some values, so every such value is checked here first
//! and reported as an [`OptionsError`].

use std::fmt;
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::Duration;

use rumqttc::{LastWill, MqttOptions, Transport};
use rustls::pki_types::pem::PemObject;
use rustls::pki_types::{CertificateDer, PrivateKeyDer};

use super::backoff::BackoffPolicy;

/// Default port for `mqtt://` (IANA registered).
pub const DEFAULT_MQTT_PORT: u16 = 1883;
/// Default port for `mqtts://` (IANA registered).
pub const DEFAULT_MQTTS_PORT: u16 = 8883;

/// Where system root certificates are looked for when TLS is on and no CA file is given.
const SYSTEM_CA_BUNDLES: [&str; 3] = [
    "/etc/ssl/certs/ca-certificates.crt",
    "/etc/pki/tls/certs/ca-bundle.crt",
    "/etc/ssl/cert.pem",
];

/// MQTT quality of service.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum QoS {
    /// QoS 0: fire and forget; never acknowledged.
    AtMostOnce,
    /// QoS 1: acknowledged with PUBACK; may be delivered more than once.
    AtLeastOnce,
    /// QoS 2: four-step handshake.
    ExactlyOnce,
}

impl QoS {
    pub(crate) fn to_rumqttc(self) -> rumqttc::QoS {
        match self {
            QoS::AtMostOnce => rumqttc::QoS::AtMostOnce,
            QoS::AtLeastOnce => rumqttc::QoS::AtLeastOnce,
            QoS::ExactlyOnce => rumqttc::QoS::ExactlyOnce,
        }
    }

    pub(crate) fn from_rumqttc(qos: rumqttc::QoS) -> Self {
        match qos {
            rumqttc::QoS::AtMostOnce => QoS::AtMostOnce,
            rumqttc::QoS::AtLeastOnce => QoS::AtLeastOnce,
            rumqttc::QoS::ExactlyOnce => QoS::ExactlyOnce,
        }
    }
}

/// TLS settings (`mqtts`). Files are PEM.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct TlsOptions {
    /// CA certificate(s) the broker certificate must chain to; `None` uses the system bundle.
    pub ca_file: Option<PathBuf>,
    /// Client certificate chain and private key for mutual TLS.
    pub client_auth: Option<ClientAuthFiles>,
}

/// Client certificate chain file and its private key file (PKCS#8, PKCS#1 or SEC1 PEM).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ClientAuthFiles {
    pub cert_file: PathBuf,
    pub key_file: PathBuf,
}

/// The message the broker publishes for us if we vanish without a clean DISCONNECT.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct LastWillOptions {
    pub topic: String,
    pub payload: Vec<u8>,
    pub retain: bool,
    pub qos: QoS,
}

/// A retained availability topic: `online` on every connect, `offline` on shutdown and as
/// the last will (unless an explicit [`ConnectionOptions::last_will`] is given).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct AvailabilityOptions {
    pub topic: String,
    pub online_payload: Vec<u8>,
    pub offline_payload: Vec<u8>,
    pub qos: QoS,
}

impl AvailabilityOptions {
    /// Payloads `online` / `offline`, QoS 1.
    pub fn new(topic: impl Into<String>) -> Self {
        Self {
            topic: topic.into(),
            online_payload: b"online".to_vec(),
            offline_payload: b"offline".to_vec(),
            qos: QoS::AtLeastOnce,
        }
    }
}

/// Everything needed to connect to one broker.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ConnectionOptions {
    pub host: String,
    pub port: u16,
    /// `Some` for `mqtts`.
    pub tls: Option<TlsOptions>,
    /// Already resolved (no file or environment look-up here).
    pub username: Option<String>,
    /// Already resolved; ignored without a username.
    pub password: Option<String>,
    /// Stable id: the broker keys the persistent session on it.
    pub client_id: String,
    /// Whole seconds, at least 1 (MQTT encodes seconds); zero disables keep-alive.
    pub keep_alive: Duration,
    /// `false` (the default) asks the broker to keep our session and queue QoS 1 messages
    /// while we are away.
    pub clean_session: bool,
    /// Outgoing QoS 1/2 publishes that may await PUBACK at once (rumqttc `inflight`).
    pub max_inflight_outgoing: u16,
    /// Capacity of the channel of inbound messages to the consumer. MQTT 3.1.1 lets the
    /// broker, not the client, set the incoming in-flight window (Mosquitto
    /// `max_inflight_messages`); this bounds what waits for the consumer beyond that.
    pub receive_window: usize,
    /// Largest MQTT packet accepted or sent, in bytes. Keep it well above the ingest payload
    /// cap: an oversized packet breaks the connection and the broker redelivers it forever,
    /// whereas an ingest rejection is counted and acked.
    pub max_packet_size_bytes: usize,
    /// Capacity of rumqttc's request channel (publishes, acks, subscribes).
    pub request_channel_capacity: usize,
    /// TCP + MQTT CONNECT timeout (whole seconds, at least 1).
    pub connect_timeout: Duration,
    pub last_will: Option<LastWillOptions>,
    pub availability: Option<AvailabilityOptions>,
    pub backoff: BackoffPolicy,
}

impl ConnectionOptions {
    /// Plain TCP with defaults: persistent session, keep-alive 30 s, 1 MiB packets.
    pub fn new(host: impl Into<String>, port: u16, client_id: impl Into<String>) -> Self {
        Self {
            host: host.into(),
            port,
            tls: None,
            username: None,
            password: None,
            client_id: client_id.into(),
            keep_alive: Duration::from_secs(30),
            clean_session: false,
            max_inflight_outgoing: 32,
            receive_window: 256,
            max_packet_size_bytes: 1024 * 1024,
            request_channel_capacity: 1024,
            connect_timeout: Duration::from_secs(10),
            last_will: None,
            availability: None,
            backoff: BackoffPolicy::default(),
        }
    }

    /// From a broker URL (`mqtt://HOST[:PORT]` or `mqtts://HOST[:PORT]`); `mqtts` turns on
    /// TLS with the system roots.
    pub fn from_url(url: &str, client_id: impl Into<String>) -> Result<Self, OptionsError> {
        let parsed = BrokerUrl::parse(url)?;
        let mut options = Self::new(parsed.host, parsed.port, client_id);
        if parsed.scheme == Scheme::Mqtts {
            options.tls = Some(TlsOptions::default());
        }
        Ok(options)
    }

    /// Sets a retained availability topic (`online`/`offline`).
    pub fn with_availability(mut self, topic: impl Into<String>) -> Self {
        self.availability = Some(AvailabilityOptions::new(topic));
        self
    }

    /// The last will in force: the explicit one, else `offline` retained on the availability topic.
    pub fn effective_last_will(&self) -> Option<LastWillOptions> {
        self.last_will.clone().or_else(|| {
            self.availability.as_ref().map(|a| LastWillOptions {
                topic: a.topic.clone(),
                payload: a.offline_payload.clone(),
                retain: true,
                qos: a.qos,
            })
        })
    }

    /// Checks the settings rumqttc would otherwise assert on or misbehave with.
    pub fn validate(&self) -> Result<(), OptionsError> {
        let invalid = |name: &'static str, detail: String| Err(OptionsError::InvalidSetting { name, detail });
        if self.host.trim().is_empty() {
            return invalid("host", "empty".into());
        }
        if self.port == 0 {
            return invalid("port", "0".into());
        }
        if self.client_id.is_empty() || self.client_id.len() > 65535 {
            return invalid(
                "client_id",
                "must be 1..=65535 bytes (the broker keys the session on it)".into(),
            );
        }
        if !self.keep_alive.is_zero()
            && (self.keep_alive.subsec_nanos() != 0 || self.keep_alive.as_secs() > u64::from(u16::MAX))
        {
            return invalid(
                "keep_alive",
                format!("{:?}: whole seconds, 1..=65535, or zero", self.keep_alive),
            );
        }
        if self.connect_timeout.as_secs() == 0 || self.connect_timeout.subsec_nanos() != 0 {
            return invalid(
                "connect_timeout",
                format!("{:?}: whole seconds, at least 1", self.connect_timeout),
            );
        }
        if self.max_inflight_outgoing == 0 {
            return invalid("max_inflight_outgoing", "0".into());
        }
        if self.receive_window == 0 {
            return invalid("receive_window", "0".into());
        }
        if self.request_channel_capacity == 0 {
            return invalid("request_channel_capacity", "0".into());
        }
        if self.max_packet_size_bytes < 1024 {
            return invalid(
                "max_packet_size_bytes",
                format!("{} < 1024", self.max_packet_size_bytes),
            );
        }
        if self.backoff.min.is_zero() {
            return invalid("backoff.min", "zero".into());
        }
        if let Some(a) = &self.availability {
            if !rumqttc::valid_topic(&a.topic) || a.topic.is_empty() {
                return invalid(
                    "availability.topic",
                    format!("{:?} is not a valid topic name", a.topic),
                );
            }
        }
        if let Some(will) = self.effective_last_will() {
            if !rumqttc::valid_topic(&will.topic) || will.topic.is_empty() {
                return invalid(
                    "last_will.topic",
                    format!("{:?} is not a valid topic name", will.topic),
                );
            }
        }
        Ok(())
    }

    /// Validates and builds rumqttc's options (manual acks on), reading TLS files if any.
    pub fn to_mqtt_options(&self) -> Result<MqttOptions, OptionsError> {
        self.validate()?;
        let mut o = MqttOptions::new(self.client_id.clone(), self.host.clone(), self.port);
        o.set_keep_alive(self.keep_alive)
            .set_clean_session(self.clean_session)
            .set_manual_acks(true)
            .set_inflight(self.max_inflight_outgoing)
            .set_max_packet_size(self.max_packet_size_bytes, self.max_packet_size_bytes)
            .set_request_channel_capacity(self.request_channel_capacity);
        if let Some(user) = &self.username {
            o.set_credentials(user.clone(), self.password.clone().unwrap_or_default());
        }
        if let Some(will) = self.effective_last_will() {
            o.set_last_will(LastWill::new(
                will.topic,
                will.payload,
                will.qos.to_rumqttc(),
                will.retain,
            ));
        }
        if let Some(tls) = &self.tls {
            let config = build_tls_config(tls)?;
            o.set_transport(Transport::tls_with_config(config.into()));
        }
        Ok(o)
    }
}

/// Builds a rustls client configuration with the `ring` provider passed explicitly (no
/// process-wide default provider needed).
pub fn build_tls_config(tls: &TlsOptions) -> Result<rustls::ClientConfig, OptionsError> {
    let provider = Arc::new(rustls::crypto::ring::default_provider());
    let builder = rustls::ClientConfig::builder_with_provider(provider)
        .with_safe_default_protocol_versions()
        .map_err(|e| OptionsError::Tls {
            detail: e.to_string(),
        })?;

    let ca_path = match &tls.ca_file {
        Some(p) => p.clone(),
        None => SYSTEM_CA_BUNDLES
            .iter()
            .map(PathBuf::from)
            .find(|p| p.is_file())
            .ok_or(OptionsError::NoSystemRoots)?,
    };
    let mut roots = rustls::RootCertStore::empty();
    let ca_certs = read_certs("CA", &ca_path)?;
    let (_added, _ignored) = roots.add_parsable_certificates(ca_certs);
    if roots.is_empty() {
        return Err(OptionsError::NoCertificates {
            what: "CA",
            path: ca_path,
        });
    }
    let builder = builder.with_root_certificates(roots);

    match &tls.client_auth {
        None => Ok(builder.with_no_client_auth()),
        Some(files) => {
            let chain = read_certs("client certificate", &files.cert_file)?;
            let key_pem = read_file("client key", &files.key_file)?;
            let key = PrivateKeyDer::from_pem_slice(&key_pem).map_err(|e| OptionsError::Pem {
                what: "client key",
                path: files.key_file.clone(),
                detail: e.to_string(),
            })?;
            builder
                .with_client_auth_cert(chain, key)
                .map_err(|e| OptionsError::Tls {
                    detail: e.to_string(),
                })
        }
    }
}

fn read_file(what: &'static str, path: &Path) -> Result<Vec<u8>, OptionsError> {
    std::fs::read(path).map_err(|source| OptionsError::ReadFile {
        what,
        path: path.to_path_buf(),
        source,
    })
}

fn read_certs(what: &'static str, path: &Path) -> Result<Vec<CertificateDer<'static>>, OptionsError> {
    let pem = read_file(what, path)?;
    let certs = CertificateDer::pem_slice_iter(&pem)
        .collect::<Result<Vec<_>, _>>()
        .map_err(|e| OptionsError::Pem {
            what,
            path: path.to_path_buf(),
            detail: e.to_string(),
        })?;
    if certs.is_empty() {
        return Err(OptionsError::NoCertificates {
            what,
            path: path.to_path_buf(),
        });
    }
    Ok(certs)
}

/// URL scheme of a broker address.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scheme {
    Mqtt,
    Mqtts,
}

/// A parsed `mqtt://HOST[:PORT]` / `mqtts://HOST[:PORT]` (IPv6 as `[addr]`; port defaults
/// to 1883 / 8883). Paths (other than a lone `/`), queries, fragments and user info are rejected.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct BrokerUrl {
    pub scheme: Scheme,
    /// Host name or IP literal, without brackets.
    pub host: String,
    pub port: u16,
}

impl BrokerUrl {
    pub fn parse(url: &str) -> Result<Self, OptionsError> {
        let err = |reason: &'static str| OptionsError::BrokerUrl {
            url: url.to_string(),
            reason,
        };
        let (scheme, rest) = if let Some(r) = url.strip_prefix("mqtt://") {
            (Scheme::Mqtt, r)
        } else if let Some(r) = url.strip_prefix("mqtts://") {
            (Scheme::Mqtts, r)
        } else {
            return Err(err("scheme must be mqtt:// or mqtts://"));
        };
        let authority = rest.strip_suffix('/').unwrap_or(rest);
        if authority.contains(['/', '?', '#']) {
            return Err(err("no path, query or fragment allowed"));
        }
        if authority.contains('@') {
            return Err(err("no user info allowed (give credentials separately)"));
        }
        if authority.chars().any(|c| c.is_whitespace() || c.is_control()) {
            return Err(err("whitespace in address"));
        }
        let (host, port_text) = if let Some(v6) = authority.strip_prefix('[') {
            let (host, after) = v6
                .split_once(']')
                .ok_or_else(|| err("unclosed '[' in IPv6 address"))?;
            if host.parse::<std::net::Ipv6Addr>().is_err() {
                return Err(err("invalid IPv6 address"));
            }
            match after {
                "" => (host, None),
                p => (
                    host,
                    Some(p.strip_prefix(':').ok_or_else(|| err("junk after ']'"))?),
                ),
            }
        } else {
            match authority.split_once(':') {
                None => (authority, None),
                Some((h, p)) => (h, Some(p)),
            }
        };
        if host.is_empty() {
            return Err(err("empty host"));
        }
        let port = match port_text {
            None => match scheme {
                Scheme::Mqtt => DEFAULT_MQTT_PORT,
                Scheme::Mqtts => DEFAULT_MQTTS_PORT,
            },
            Some(p) if !p.is_empty() && p.bytes().all(|b| b.is_ascii_digit()) => match p.parse::<u16>() {
                Ok(0) | Err(_) => return Err(err("port must be 1..=65535")),
                Ok(n) => n,
            },
            Some(_) => return Err(err("port must be decimal digits")),
        };
        Ok(Self {
            scheme,
            host: host.to_string(),
            port,
        })
    }
}

impl fmt::Display for BrokerUrl {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let scheme = match self.scheme {
            Scheme::Mqtt => "mqtt",
            Scheme::Mqtts => "mqtts",
        };
        if self.host.contains(':') {
            write!(f, "{scheme}://[{}]:{}", self.host, self.port)
        } else {
            write!(f, "{scheme}://{}:{}", self.host, self.port)
        }
    }
}

/// Bad connection settings.
#[derive(Debug, thiserror::Error)]
pub enum OptionsError {
    #[error("broker URL {url:?}: {reason}")]
    BrokerUrl { url: String, reason: &'static str },
    #[error("MQTT setting {name}: {detail}")]
    InvalidSetting { name: &'static str, detail: String },
    #[error("reading {what} file {path:?}: {source}")]
    ReadFile {
        what: &'static str,
        path: PathBuf,
        source: std::io::Error,
    },
    #[error("{what} file {path:?} is not valid PEM: {detail}")]
    Pem {
        what: &'static str,
        path: PathBuf,
        detail: String,
    },
    #[error("{what} file {path:?} holds no usable certificate")]
    NoCertificates { what: &'static str, path: PathBuf },
    #[error("TLS requested without a CA file and no system CA bundle found")]
    NoSystemRoots,
    #[error("TLS configuration: {detail}")]
    Tls { detail: String },
    #[error("subscription filter {filter:?} is not a valid MQTT topic filter")]
    InvalidFilter { filter: String },
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_plain_and_tls_urls() {
        let u = BrokerUrl::parse("mqtt://broker.brannock.example:1884").unwrap();
        assert_eq!(
            u,
            BrokerUrl {
                scheme: Scheme::Mqtt,
                host: "broker.brannock.example".into(),
                port: 1884
            }
        );
        let u = BrokerUrl::parse("mqtts://10.0.0.5:8884/").unwrap();
        assert_eq!(
            (u.scheme, u.host.as_str(), u.port),
            (Scheme::Mqtts, "10.0.0.5", 8884)
        );
        assert_eq!(BrokerUrl::parse("mqtt://localhost").unwrap().port, 1883);
        assert_eq!(BrokerUrl::parse("mqtts://localhost").unwrap().port, 8883);
        let u = BrokerUrl::parse("mqtt://[::1]:1999").unwrap();
        assert_eq!((u.host.as_str(), u.port), ("::1", 1999));
        assert_eq!(u.to_string(), "mqtt://[::1]:1999");
    }

    #[test]
    fn rejects_everything_else() {
        for bad in [
            "",
            "localhost:1883",
            "tcp://localhost:1883",
            "http://localhost:1883",
            "MQTT://localhost:1883",
            "mqtt://",
            "mqtt://:1883",
            "mqtt://host:",
            "mqtt://host:0",
            "mqtt://host:65536",
            "mqtt://host:+1883",
            "mqtt://host:18x3",
            "mqtt://host:1883/path",
            "mqtt://host:1883?client_id=a",
            "mqtt://host#frag",
            "mqtt://user:pw@host:1883",
            "mqtt://ho st:1883",
            "mqtt://[::1",
            "mqtt://[nothex]:1883",
            "mqtt://[::1]x",
        ] {
            assert!(
                matches!(BrokerUrl::parse(bad), Err(OptionsError::BrokerUrl { .. })),
                "{bad:?} should be rejected"
            );
        }
    }

    #[test]
    fn from_url_sets_tls_for_mqtts() {
        let o = ConnectionOptions::from_url("mqtts://b.example:8883", "halotank-1").unwrap();
        assert_eq!(o.tls, Some(TlsOptions::default()));
        assert!(!o.clean_session);
        let o = ConnectionOptions::from_url("mqtt://b.example", "halotank-1").unwrap();
        assert_eq!(o.tls, None);
    }

    #[test]
    fn builds_rumqttc_options() {
        let mut o =
            ConnectionOptions::new("127.0.0.1", 1883, "halotank-test").with_availability("site/ht/status");
        o.username = Some("ops".into());
        o.password = Some("secret".into());
        let m = o.to_mqtt_options().unwrap();
        assert!(m.manual_acks());
        assert!(!m.clean_session());
        assert_eq!(m.client_id(), "halotank-test");
        assert_eq!(m.keep_alive(), Duration::from_secs(30));
        assert_eq!(m.inflight(), 32);
        assert_eq!(m.max_packet_size(), 1024 * 1024);
        let will = m.last_will().unwrap();
        assert_eq!(will.topic, "site/ht/status");
        assert_eq!(&will.message[..], b"offline");
        assert!(will.retain);
        let login = m.credentials().unwrap();
        assert_eq!(
            (login.username.as_str(), login.password.as_str()),
            ("ops", "secret")
        );
    }

    #[test]
    fn explicit_will_wins_over_availability() {
        let mut o = ConnectionOptions::new("h", 1, "c").with_availability("a/status");
        o.last_will = Some(LastWillOptions {
            topic: "a/lost".into(),
            payload: b"gone".to_vec(),
            retain: false,
            qos: QoS::AtMostOnce,
        });
        assert_eq!(o.effective_last_will().unwrap().topic, "a/lost");
    }

    #[test]
    fn settings_rumqttc_would_panic_on_are_typed_errors() {
        let base = ConnectionOptions::new("127.0.0.1", 1883, "c");
        let cases: Vec<(&str, ConnectionOptions)> = vec![
            (
                "client_id",
                ConnectionOptions {
                    client_id: String::new(),
                    ..base.clone()
                },
            ),
            (
                "keep_alive",
                ConnectionOptions {
                    keep_alive: Duration::from_millis(500),
                    ..base.clone()
                },
            ),
            (
                "max_inflight_outgoing",
                ConnectionOptions {
                    max_inflight_outgoing: 0,
                    ..base.clone()
                },
            ),
            (
                "connect_timeout",
                ConnectionOptions {
                    connect_timeout: Duration::ZERO,
                    ..base.clone()
                },
            ),
            (
                "receive_window",
                ConnectionOptions {
                    receive_window: 0,
                    ..base.clone()
                },
            ),
            (
                "host",
                ConnectionOptions {
                    host: " ".into(),
                    ..base.clone()
                },
            ),
            (
                "availability.topic",
                base.clone().with_availability("bad/+/topic"),
            ),
        ];
        for (name, o) in cases {
            match o.to_mqtt_options() {
                Err(OptionsError::InvalidSetting { name: n, .. }) => assert_eq!(n, name),
                other => panic!("{name}: expected InvalidSetting, got {:?}", other.map(|_| ())),
            }
        }
        assert!(ConnectionOptions {
            keep_alive: Duration::ZERO,
            ..base
        }
        .to_mqtt_options()
        .is_ok());
    }

    #[test]
    fn tls_file_errors_are_typed() {
        let dir = tempfile::tempdir().unwrap();
        let missing = TlsOptions {
            ca_file: Some(dir.path().join("nope.pem")),
            client_auth: None,
        };
        assert!(matches!(
            build_tls_config(&missing),
            Err(OptionsError::ReadFile { what: "CA", .. })
        ));
        let junk = dir.path().join("junk.pem");
        std::fs::write(&junk, b"not a certificate at all").unwrap();
        let junk_opts = TlsOptions {
            ca_file: Some(junk),
            client_auth: None,
        };
        assert!(matches!(
            build_tls_config(&junk_opts),
            Err(OptionsError::NoCertificates { .. })
        ));
    }
}
