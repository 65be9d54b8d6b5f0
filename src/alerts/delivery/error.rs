//! Delivery errors: settings that cannot work, and why one delivery attempt failed.
use std::path::PathBuf;
use std::time::Duration;

use thiserror::Error;

/// Delivery settings that cannot work; found before any task starts.
#[derive(Debug, Error)]
pub enum DeliverySettingsError {
    /// The webhook URL does not parse, or is not `http://` or `https://` with a host.
    #[error("webhook url {url:?}: {reason}")]
    WebhookUrl { url: String, reason: String },
    /// A timeout that is not a positive finite number of seconds.
    #[error("{channel} timeout_s must be a positive number of seconds, got {timeout_s}")]
    Timeout { channel: &'static str, timeout_s: f64 },
    /// A webhook header name or value that HTTP does not allow.
    #[error("webhook header {name:?}: {reason}")]
    Header { name: String, reason: String },
    /// `bearer_token_env` names a variable that is not set (or not valid text).
    #[error("webhook bearer_token_env names {var:?}, which is not set")]
    TokenMissing { var: String },
    /// The exec program path is empty.
    #[error("exec program is empty")]
    EmptyProgram,
    /// A queue that holds nothing.
    #[error("queue_capacity must be at least 1")]
    QueueCapacity,
}

/// Why one delivery attempt failed.
#[derive(Debug, Error)]
pub enum AttemptError {
    /// The webhook answered with a status other than 2xx.
    #[error("webhook answered HTTP {status}")]
    Status { status: u16 },
    /// The HTTP request failed (connect, TLS, protocol).
    #[error("webhook request failed: {0}")]
    Http(#[source] ureq::Error),
    /// No answer (webhook) or no exit (exec) within the timeout; an exec program is killed.
    #[error("no result within {after:?}")]
    TimedOut { after: Duration },
    /// The exec program could not be started.
    #[error("could not start {program}: {source}")]
    Spawn {
        program: PathBuf,
        #[source]
        source: std::io::Error,
    },
    /// Writing the event to the program's stdin or waiting for it failed.
    #[error("exec i/o: {0}")]
    Io(#[source] std::io::Error),
    /// The exec program did not exit 0.
    #[error("exec program ended with {status}{}", stderr_suffix(.stderr))]
    Exit { status: String, stderr: String },
    /// The blocking HTTP call could not be run to completion (runtime shutting down, or a panic).
    #[error("webhook task ended abnormally: {0}")]
    Task(String),
}

fn stderr_suffix(stderr: &str) -> String {
    if stderr.is_empty() {
        String::new()
    } else {
        format!("; stderr: {stderr}")
    }
}

impl AttemptError {
    /// Whether retrying cannot help: an HTTP 4xx answer other than 408 (timeout), 425 (too early) and
    /// 429 (too many requests), or a 3xx (redirects are not followed for a POST). Everything else is retried.
    pub fn is_permanent(&self) -> bool {
        match self {
            Self::Status { status } => (300..500).contains(status) && !matches!(status, 408 | 425 | 429),
            _ => false,
        }
    }
}
