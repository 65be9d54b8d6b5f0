//! `DeliverySettings`: which delivery channels are on and how each behaves (serde, validated).
use std::collections::BTreeMap;
use std::path::PathBuf;

use serde::{Deserialize, Serialize};

use super::backoff::RetryPolicy;
use super::error::DeliverySettingsError;
use crate::alerts::Severity;

/// Delivery channels (each optional) and the events they get.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DeliverySettings {
    /// Events of a lower severity are not delivered (a channel may set its own).
    #[serde(default = "default_min_severity")]
    pub min_severity: Severity,
    /// Events each channel may hold waiting; beyond that an event is dropped from delivery (counted).
    #[serde(default = "default_queue_capacity")]
    pub queue_capacity: usize,
    /// HTTP POST of the event JSON.
    #[serde(default)]
    pub webhook: Option<WebhookSettings>,
    /// A program run with the event JSON on stdin.
    #[serde(default)]
    pub exec: Option<ExecSettings>,
}

impl Default for DeliverySettings {
    fn default() -> Self {
        Self {
            min_severity: default_min_severity(),
            queue_capacity: default_queue_capacity(),
            webhook: None,
            exec: None,
        }
    }
}

/// The webhook channel: `POST url` with `Content-Type: application/json`; success is a 2xx answer.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct WebhookSettings {
    /// `http://` or `https://` URL.
    pub url: String,
    /// Whole-request timeout, seconds.
    #[serde(default = "default_webhook_timeout_s")]
    pub timeout_s: f64,
    /// Retries after a failed attempt.
    #[serde(default = "default_retries")]
    pub retries: u32,
    /// Backoff before the first retry, milliseconds (doubles each retry, with jitter).
    #[serde(default = "default_backoff_initial_ms")]
    pub backoff_initial_ms: u64,
    /// Cap on the backoff, milliseconds.
    #[serde(default = "default_backoff_max_ms")]
    pub backoff_max_ms: u64,
    /// Extra request headers (a `Content-Type` here replaces `application/json`).
    #[serde(default)]
    pub headers: BTreeMap<String, String>,
    /// Name of an environment variable holding a bearer token (sent as `Authorization: Bearer ...`).
    #[serde(default)]
    pub bearer_token_env: Option<String>,
    /// Overrides [`DeliverySettings::min_severity`] for this channel.
    #[serde(default)]
    pub min_severity: Option<Severity>,
}

/// The exec channel: runs `program args...` directly (no shell) with the event JSON on stdin; success
/// is exit status 0. The program also gets `HALOTANK_ALERT_ID`, `HALOTANK_ALERT_EVENT`,
/// `HALOTANK_ALERT_SEVERITY` and `HALOTANK_ALERT_TANK` in its environment.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ExecSettings {
    /// The program (a path; looked up on `PATH` if it has no `/`).
    pub program: PathBuf,
    /// Its arguments.
    #[serde(default)]
    pub args: Vec<String>,
    /// Extra environment variables for it.
    #[serde(default)]
    pub env: BTreeMap<String, String>,
    /// Seconds it may run; it is killed after that.
    #[serde(default = "default_exec_timeout_s")]
    pub timeout_s: f64,
    /// Retries after a failed run.
    #[serde(default = "default_retries")]
    pub retries: u32,
    /// Backoff before the first retry, milliseconds (doubles each retry, with jitter).
    #[serde(default = "default_backoff_initial_ms")]
    pub backoff_initial_ms: u64,
    /// Cap on the backoff, milliseconds.
    #[serde(default = "default_backoff_max_ms")]
    pub backoff_max_ms: u64,
    /// Overrides [`DeliverySettings::min_severity`] for this channel.
    #[serde(default)]
    pub min_severity: Option<Severity>,
}

impl WebhookSettings {
    /// Settings for `url` with every default.
    pub fn new(url: impl Into<String>) -> Self {
        Self {
            url: url.into(),
            timeout_s: default_webhook_timeout_s(),
            retries: default_retries(),
            backoff_initial_ms: default_backoff_initial_ms(),
            backoff_max_ms: default_backoff_max_ms(),
            headers: BTreeMap::new(),
            bearer_token_env: None,
            min_severity: None,
        }
    }

    /// The retry policy.
    pub fn retry_policy(&self) -> RetryPolicy {
        RetryPolicy::from_ms(self.retries, self.backoff_initial_ms, self.backoff_max_ms)
    }
}

impl ExecSettings {
    /// Settings for `program` with every default.
    pub fn new(program: impl Into<PathBuf>) -> Self {
        Self {
            program: program.into(),
            args: Vec::new(),
            env: BTreeMap::new(),
            timeout_s: default_exec_timeout_s(),
            retries: default_retries(),
            backoff_initial_ms: default_backoff_initial_ms(),
            backoff_max_ms: default_backoff_max_ms(),
            min_severity: None,
        }
    }

    /// The retry policy.
    pub fn retry_policy(&self) -> RetryPolicy {
        RetryPolicy::from_ms(self.retries, self.backoff_initial_ms, self.backoff_max_ms)
    }
}

impl DeliverySettings {
    /// Checks what can be checked without the environment (the URL, headers, timeouts, the program).
    pub fn validate(&self) -> Result<(), DeliverySettingsError> {
        if self.queue_capacity == 0 {
            return Err(DeliverySettingsError::QueueCapacity);
        }
        if let Some(webhook) = &self.webhook {
            check_url(&webhook.url)?;
            check_timeout("webhook", webhook.timeout_s)?;
            for (name, value) in &webhook.headers {
                check_header(name, value)?;
            }
        }
        if let Some(exec) = &self.exec {
            if exec.program.as_os_str().is_empty() {
                return Err(DeliverySettingsError::EmptyProgram);
            }
            check_timeout("exec", exec.timeout_s)?;
        }
        Ok(())
    }
}

fn check_url(url: &str) -> Result<(), DeliverySettingsError> {
    let bad = |reason: &str| DeliverySettingsError::WebhookUrl {
        url: url.to_string(),
        reason: reason.to_string(),
    };
    let uri: ureq::http::Uri = url
        .parse()
        .map_err(|e: ureq::http::uri::InvalidUri| bad(&e.to_string()))?;
    match uri.scheme_str() {
        Some("http") | Some("https") => {}
        _ => return Err(bad("the scheme must be http or https")),
    }
    match uri.host() {
        Some(host) if !host.is_empty() => Ok(()),
        _ => Err(bad("no host")),
    }
}

fn check_timeout(channel: &'static str, timeout_s: f64) -> Result<(), DeliverySettingsError> {
    if timeout_s.is_finite() && timeout_s > 0.0 && timeout_s <= 86_400.0 {
        Ok(())
    } else {
        Err(DeliverySettingsError::Timeout { channel, timeout_s })
    }
}

fn check_header(name: &str, value: &str) -> Result<(), DeliverySettingsError> {
    let bad = |reason: String| DeliverySettingsError::Header {
        name: name.to_string(),
        reason,
    };
    ureq::http::HeaderName::from_bytes(name.as_bytes()).map_err(|e| bad(e.to_string()))?;
    ureq::http::HeaderValue::from_str(value).map_err(|e| bad(e.to_string()))?;
    Ok(())
}

fn default_min_severity() -> Severity {
    Severity::Info
}

fn default_queue_capacity() -> usize {
    256
}

fn default_webhook_timeout_s() -> f64 {
    5.0
}

fn default_exec_timeout_s() -> f64 {
    10.0
}

fn default_retries() -> u32 {
    5
}

fn default_backoff_initial_ms() -> u64 {
    500
}

fn default_backoff_max_ms() -> u64 {
    60_000
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn defaults_fill_in_from_toml() {
        let text = r#"
            min_severity = "warning"
            [webhook]
            url = "https://alerts.example.net/hooks/north-shed"
            headers = { "X-Site" = "north-shed" }
            [exec]
            program = "/usr/local/bin/pager-gateway"
            args = ["--quiet"]
        "#;
        let settings: DeliverySettings = toml::from_str(text).unwrap();
        settings.validate().unwrap();
        assert_eq!(settings.min_severity, Severity::Warning);
        assert_eq!(settings.queue_capacity, 256);
        let webhook = settings.webhook.unwrap();
        assert_eq!(webhook.timeout_s, 5.0);
        assert_eq!(webhook.retries, 5);
        assert_eq!(
            (webhook.backoff_initial_ms, webhook.backoff_max_ms),
            (500, 60_000)
        );
        assert_eq!(
            webhook.headers.get("X-Site").map(String::as_str),
            Some("north-shed")
        );
        assert_eq!(webhook.bearer_token_env, None);
        let exec = settings.exec.unwrap();
        assert_eq!(exec.timeout_s, 10.0);
        assert_eq!(exec.retries, 5);
        assert_eq!(exec.args, ["--quiet"]);
    }

    #[test]
    fn integer_timeouts_are_accepted() {
        let settings: DeliverySettings =
            toml::from_str("[webhook]\nurl = \"http://127.0.0.1:9/x\"\ntimeout_s = 2").unwrap();
        assert_eq!(settings.webhook.unwrap().timeout_s, 2.0);
    }

    #[test]
    fn unknown_keys_are_refused() {
        assert!(toml::from_str::<DeliverySettings>("[webhook]\nurl = \"http://a/\"\nretry = 3").is_err());
    }

    #[test]
    fn bad_settings_are_refused_with_a_reason() {
        let with_webhook = |webhook: WebhookSettings| DeliverySettings {
            webhook: Some(webhook),
            ..DeliverySettings::default()
        };
        for url in ["ftp://host/x", "not a url", "/relative/path"] {
            let err = with_webhook(WebhookSettings::new(url)).validate().unwrap_err();
            assert!(
                matches!(err, DeliverySettingsError::WebhookUrl { .. }),
                "{url}: {err}"
            );
        }
        let mut webhook = WebhookSettings::new("http://127.0.0.1:8080/hook");
        webhook.timeout_s = 0.0;
        assert!(matches!(
            with_webhook(webhook).validate(),
            Err(DeliverySettingsError::Timeout {
                channel: "webhook",
                ..
            })
        ));
        let mut webhook = WebhookSettings::new("http://127.0.0.1:8080/hook");
        webhook.headers.insert("Bad Name".into(), "x".into());
        assert!(matches!(
            with_webhook(webhook).validate(),
            Err(DeliverySettingsError::Header { .. })
        ));
        let exec = DeliverySettings {
            exec: Some(ExecSettings::new("")),
            ..DeliverySettings::default()
        };
        assert!(matches!(
            exec.validate(),
            Err(DeliverySettingsError::EmptyProgram)
        ));
        let mut exec = ExecSettings::new("/bin/true");
        exec.timeout_s = f64::NAN;
        let settings = DeliverySettings {
            exec: Some(exec),
            ..DeliverySettings::default()
        };
        assert!(matches!(
            settings.validate(),
            Err(DeliverySettingsError::Timeout { channel: "exec", .. })
        ));
        let settings = DeliverySettings {
            queue_capacity: 0,
            ..DeliverySettings::default()
        };
        assert!(matches!(
            settings.validate(),
            Err(DeliverySettingsError::QueueCapacity)
        ));
    }
}
