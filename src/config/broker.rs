//! The `[broker]` section: where the MQTT broker is, how to authenticate and how to keep the session.
use std::fmt;
use std::path::{Path, PathBuf};

use serde::Deserialize;
use thiserror::Error;

use super::defaults;
use super::error::Invalid;
use super::key_path::KeyPath;
use super::site::SiteConfig;

/// `[broker]` as written in the file.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawBroker {
    host: Option<String>,
    port: Option<u16>,
    url: Option<String>,
    tls: Option<RawTls>,
    username: Option<String>,
    password: Option<String>,
    password_env: Option<String>,
    password_file: Option<String>,
    allow_inline_password: Option<bool>,
    client_id: Option<String>,
    keep_alive_s: Option<u64>,
    max_inflight: Option<u16>,
    reconnect_min_ms: Option<u64>,
    reconnect_max_ms: Option<u64>,
    clean_session: Option<bool>,
}

/// `[broker.tls]` as written in the file.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawTls {
    ca_file: Option<String>,
    client_cert_file: Option<String>,
    client_key_file: Option<String>,
}

/// The MQTT broker connection.
#[derive(Debug, Clone, PartialEq)]
pub struct BrokerConfig {
    /// Host name or address.
    pub host: String,
    /// TCP port.
    pub port: u16,
    /// TLS settings; `None` for a plain TCP connection.
    pub tls: Option<TlsConfig>,
    /// User name, if the broker wants one.
    pub username: Option<String>,
    /// Where the password comes from.
    pub password: PasswordSource,
    /// MQTT client id (stable, so the broker keeps the session across restarts).
    pub client_id: String,
    /// Keep-alive interval, seconds (0 turns keep-alive off).
    pub keep_alive_s: u64,
    /// QoS 1 messages in flight at most (receive window).
    pub max_inflight: u16,
    /// First reconnect delay, milliseconds.
    pub reconnect_min_ms: u64,
    /// Longest reconnect delay, milliseconds.
    pub reconnect_max_ms: u64,
    /// Start a fresh session on connect (drops messages the broker queued while halotank was away).
    pub clean_session: bool,
}

/// TLS files (PEM), paths resolved against the configuration file's folder.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct TlsConfig {
    /// CA certificate(s) that sign the broker's certificate.
    pub ca_file: PathBuf,
    /// Client certificate and key for mutual TLS, both or neither.
    pub client_auth: Option<ClientAuth>,
}

/// A client certificate and its private key (PEM files).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ClientAuth {
    pub cert_file: PathBuf,
    pub key_file: PathBuf,
}

/// A password given inline; `Debug` never shows it.
#[derive(Clone, PartialEq, Eq)]
pub struct Secret(String);

impl Secret {
    /// Wraps a secret.
    pub fn new(text: String) -> Self {
        Self(text)
    }

    /// The secret text.
    pub fn expose(&self) -> &str {
        &self.0
    }
}

impl fmt::Debug for Secret {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str("Secret(<redacted>)")
    }
}

/// Where the broker password comes from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum PasswordSource {
    /// No password.
    None,
    /// The named environment variable.
    Env(String),
    /// The first line of a file.
    File(PathBuf),
    /// Written in the configuration file (only with `allow_inline_password = true`).
    Inline(Secret),
}

/// Why the password could not be obtained.
#[derive(Debug, Error)]
pub enum PasswordError {
    /// The environment variable is not set (or not valid UTF-8).
    #[error("environment variable `{name}` (broker.password_env) is not set")]
    EnvNotSet { name: String },
    /// The password file could not be read.
    #[error("{}: cannot read the broker password file: {source}", path.display())]
    File {
        path: PathBuf,
        #[source]
        source: std::io::Error,
    },
}

impl PasswordSource {
    /// The password, looking environment variables up with `env` and reading files from disk.
    pub fn resolve_with(
        &self,
        env: impl Fn(&str) -> Option<String>,
    ) -> Result<Option<String>, PasswordError> {
        match self {
            Self::None => Ok(None),
            Self::Env(name) => env(name)
                .map(Some)
                .ok_or_else(|| PasswordError::EnvNotSet { name: name.clone() }),
            Self::File(path) => {
                let text = std::fs::read_to_string(path).map_err(|source| PasswordError::File {
                    path: path.clone(),
                    source,
                })?;
                Ok(Some(text.lines().next().unwrap_or("").to_string()))
            }
            Self::Inline(secret) => Ok(Some(secret.expose().to_string())),
        }
    }

    /// The password, from the process environment or disk.
    pub fn resolve(&self) -> Result<Option<String>, PasswordError> {
        self.resolve_with(|name| std::env::var(name).ok())
    }

    /// Where the password comes from, in words, without the password.
    pub fn describe(&self) -> String {
        match self {
            Self::None => "none".to_string(),
            Self::Env(name) => format!("from environment variable {name}"),
            Self::File(path) => format!("from file {}", path.display()),
            Self::Inline(_) => "inline in the configuration file".to_string(),
        }
    }
}

impl RawBroker {
    pub(crate) fn resolve(
        self,
        path: &KeyPath,
        site: &SiteConfig,
        base: &Path,
    ) -> Result<BrokerConfig, Invalid> {
        let (host, port, url_tls) = match (&self.url, &self.host) {
            (Some(_), Some(_)) => {
                return Err(Invalid::new(
                    path.key("url"),
                    "give either `url` or `host`, not both",
                ));
            }
            (Some(_), None) if self.port.is_some() => {
                return Err(Invalid::new(
                    path.key("port"),
                    "the port belongs in `url` when `url` is given",
                ));
            }
            (Some(url), None) => {
                let (host, port, tls) = parse_url(url).map_err(|m| Invalid::new(path.key("url"), m))?;
                (host, port, Some(tls))
            }
            (None, Some(host)) => {
                let host = host.trim().to_string();
                if host.is_empty() || host.contains(['/', ' ']) {
                    return Err(Invalid::new(path.key("host"), "must be a host name or address"));
                }
                let default_port = if self.tls.is_some() {
                    defaults::BROKER_PORT_TLS
                } else {
                    defaults::BROKER_PORT
                };
                (host, self.port.unwrap_or(default_port), None)
            }
            (None, None) => return Err(Invalid::new(path.clone(), "needs `host` (and `port`) or `url`")),
        };
        if port == 0 {
            return Err(Invalid::new(path.key("port"), "must be 1 to 65535"));
        }
        let password = self.password_source(path, base)?;
        let tls = match (self.tls, url_tls) {
            (Some(_), Some(false)) => {
                return Err(Invalid::new(
                    path.key("tls"),
                    "TLS settings given but `url` is mqtt:// (use mqtts://)",
                ));
            }
            (Some(raw), _) => Some(raw.resolve(&path.key("tls"), base)?),
            (None, Some(true)) => {
                return Err(Invalid::new(
                    path.key("url"),
                    "mqtts:// needs a [broker.tls] table with `ca_file`",
                ));
            }
            (None, _) => None,
        };
        if password != PasswordSource::None && self.username.is_none() {
            return Err(Invalid::new(
                path.key("username"),
                "a password is configured but no `username`",
            ));
        }
        let client_id = self
            .client_id
            .unwrap_or_else(|| format!("{}{}", defaults::CLIENT_ID_PREFIX, site.slug));
        if client_id.trim().is_empty() || client_id.len() > 65_535 {
            return Err(Invalid::new(path.key("client_id"), "must not be empty"));
        }
        let keep_alive_s = self.keep_alive_s.unwrap_or(defaults::KEEP_ALIVE_S);
        if keep_alive_s > u64::from(u16::MAX) {
            return Err(Invalid::new(
                path.key("keep_alive_s"),
                "must be 0 to 65535 seconds (MQTT keep-alive is 16 bits)",
            ));
        }
        let max_inflight = self.max_inflight.unwrap_or(defaults::MAX_INFLIGHT);
        if max_inflight == 0 {
            return Err(Invalid::new(path.key("max_inflight"), "must be at least 1"));
        }
        let reconnect_min_ms = self.reconnect_min_ms.unwrap_or(defaults::RECONNECT_MIN_MS);
        let reconnect_max_ms = self.reconnect_max_ms.unwrap_or(defaults::RECONNECT_MAX_MS);
        if reconnect_min_ms == 0 {
            return Err(Invalid::new(
                path.key("reconnect_min_ms"),
                "must be at least 1 ms",
            ));
        }
        if reconnect_max_ms < reconnect_min_ms {
            return Err(Invalid::new(
                path.key("reconnect_max_ms"),
                format!("must be at least reconnect_min_ms ({reconnect_min_ms})"),
            ));
        }
        Ok(BrokerConfig {
            host,
            port,
            tls,
            username: self.username,
            password,
            client_id,
            keep_alive_s,
            max_inflight,
            reconnect_min_ms,
            reconnect_max_ms,
            clean_session: self.clean_session.unwrap_or(defaults::CLEAN_SESSION),
        })
    }

    fn password_source(&self, path: &KeyPath, base: &Path) -> Result<PasswordSource, Invalid> {
        let given = [
            self.password.is_some(),
            self.password_env.is_some(),
            self.password_file.is_some(),
        ];
        if given.iter().filter(|g| **g).count() > 1 {
            return Err(Invalid::new(
                path.key("password_env"),
                "give at most one of `password`, `password_env`, `password_file`",
            ));
        }
        if let Some(name) = &self.password_env {
            if name.is_empty() || name.contains(['=', '\0']) {
                return Err(Invalid::new(
                    path.key("password_env"),
                    "must be the name of an environment variable",
                ));
            }
            return Ok(PasswordSource::Env(name.clone()));
        }
        if let Some(file) = &self.password_file {
            return Ok(PasswordSource::File(super::resolve_path(base, file)));
        }
        if let Some(password) = &self.password {
            if self.allow_inline_password != Some(true) {
                return Err(Invalid::new(
                    path.key("password"),
                    "an inline password is refused (it ends up in backups and version control); use \
                     `password_env` or `password_file`, or set `allow_inline_password = true`",
                ));
            }
            return Ok(PasswordSource::Inline(Secret(password.clone())));
        }
        Ok(PasswordSource::None)
    }
}

impl RawTls {
    fn resolve(self, path: &KeyPath, base: &Path) -> Result<TlsConfig, Invalid> {
        let ca_file = self.ca_file.ok_or_else(|| {
            Invalid::new(path.clone(), "needs `ca_file` (PEM CA certificate of the broker)")
        })?;
        let client_auth = match (self.client_cert_file, self.client_key_file) {
            (Some(cert), Some(key)) => Some(ClientAuth {
                cert_file: super::resolve_path(base, &cert),
                key_file: super::resolve_path(base, &key),
            }),
            (None, None) => None,
            (Some(_), None) => {
                return Err(Invalid::new(
                    path.key("client_cert_file"),
                    "needs `client_key_file` too",
                ));
            }
            (None, Some(_)) => {
                return Err(Invalid::new(
                    path.key("client_key_file"),
                    "needs `client_cert_file` too",
                ));
            }
        };
        Ok(TlsConfig {
            ca_file: super::resolve_path(base, &ca_file),
            client_auth,
        })
    }
}

/// Splits `mqtt://HOST[:PORT]` or `mqtts://HOST[:PORT]` into host, port and whether TLS is used.
fn parse_url(url: &str) -> Result<(String, u16, bool), String> {
    let (rest, tls) = if let Some(rest) = url.strip_prefix("mqtts://") {
        (rest, true)
    } else if let Some(rest) = url.strip_prefix("mqtt://") {
        (rest, false)
    } else {
        return Err(format!("`{url}` must start with mqtt:// or mqtts://"));
    };
    let rest = rest.strip_suffix('/').unwrap_or(rest);
    if rest.contains(['/', '@', '?', ' ']) {
        return Err(format!(
            "`{url}` must be mqtt[s]://HOST[:PORT] with no path or user"
        ));
    }
    let default_port = if tls {
        defaults::BROKER_PORT_TLS
    } else {
        defaults::BROKER_PORT
    };
    // A bracketed IPv6 literal may hold colons.
    let (host, port) = if let Some(v6) = rest.strip_prefix('[') {
        let end = v6.find(']').ok_or_else(|| format!("`{url}`: unclosed `[`"))?;
        let after = &v6[end + 1..];
        let port = match after.strip_prefix(':') {
            Some(p) => Some(p),
            None if after.is_empty() => None,
            None => return Err(format!("`{url}`: unexpected text after `]`")),
        };
        (v6[..end].to_string(), port)
    } else {
        match rest.rsplit_once(':') {
            Some((host, port)) => (host.to_string(), Some(port)),
            None => (rest.to_string(), None),
        }
    };
    if host.is_empty() {
        return Err(format!("`{url}` has no host"));
    }
    let port = match port {
        Some(p) => p
            .parse::<u16>()
            .ok()
            .filter(|p| *p != 0)
            .ok_or_else(|| format!("`{url}`: port must be 1 to 65535"))?,
        None => default_port,
    };
    Ok((host, port, tls))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn urls_give_host_port_and_tls() {
        assert_eq!(
            parse_url("mqtt://broker.local").unwrap(),
            ("broker.local".into(), 1883, false)
        );
        assert_eq!(
            parse_url("mqtts://broker.local").unwrap(),
            ("broker.local".into(), 8883, true)
        );
        assert_eq!(
            parse_url("mqtt://10.0.0.5:1884/").unwrap(),
            ("10.0.0.5".into(), 1884, false)
        );
        assert_eq!(
            parse_url("mqtts://[fd00::5]:8884").unwrap(),
            ("fd00::5".into(), 8884, true)
        );
        assert!(parse_url("http://broker.local").is_err());
        assert!(parse_url("mqtt://broker.local:0").is_err());
        assert!(parse_url("mqtt://broker.local:99999").is_err());
        assert!(parse_url("mqtt://user@broker.local").is_err());
        assert!(parse_url("mqtt://").is_err());
    }

    #[test]
    fn password_sources_resolve_without_showing_the_secret() {
        let env = PasswordSource::Env("HT_PW".into());
        assert_eq!(
            env.resolve_with(|n| (n == "HT_PW").then(|| "s3cret".to_string()))
                .unwrap(),
            Some("s3cret".to_string())
        );
        assert!(matches!(
            env.resolve_with(|_| None),
            Err(PasswordError::EnvNotSet { .. })
        ));
        let dir = tempfile::tempdir().unwrap();
        let file = dir.path().join("pw");
        std::fs::write(&file, "from-file\nignored\n").unwrap();
        let source = PasswordSource::File(file);
        assert_eq!(
            source.resolve_with(|_| None).unwrap(),
            Some("from-file".to_string())
        );
        let inline = PasswordSource::Inline(Secret("hunter2".into()));
        assert!(!format!("{inline:?}").contains("hunter2"));
        assert!(!inline.describe().contains("hunter2"));
    }
}
