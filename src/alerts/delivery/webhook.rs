//! The webhook channel: one HTTP POST of the event JSON per attempt; success is a 2xx answer.
//!
//! The client is `ureq` (blocking, run on tokio's blocking pool): a small, well-kept HTTP/1.1 client with
//! rustls on the `ring` provider the project already builds (no aws-lc, no hyper stack), which keeps
//! chunked bodies, TLS, proxies (`HTTPS_PROXY`, `NO_PROXY`) and timeouts out of our own code. One POST
//! at a time per channel needs no async client. Redirects are not followed: a 3xx is a failed delivery.
use std::fmt;
use std::sync::Arc;
use std::time::Duration;

use super::error::{AttemptError, DeliverySettingsError};
use super::payload::Payload;
use super::settings::WebhookSettings;
use super::worker::Channel;

/// A configured webhook, ready to post.
pub(crate) struct WebhookChannel {
    agent: ureq::Agent,
    url: Arc<str>,
    headers: Arc<[(String, String)]>,
    bearer: Option<Arc<str>>,
    timeout: Duration,
}

impl fmt::Debug for WebhookChannel {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("WebhookChannel")
            .field("url", &self.url)
            .field("headers", &self.headers.len())
            .field("bearer", &self.bearer.as_ref().map(|_| "<redacted>"))
            .field("timeout", &self.timeout)
            .finish()
    }
}

impl WebhookChannel {
    /// Builds the client; `secret` looks up `bearer_token_env` (the process environment in the daemon).
    pub(crate) fn new(
        settings: &WebhookSettings,
        secret: &dyn Fn(&str) -> Option<String>,
    ) -> Result<Self, DeliverySettingsError> {
        let bearer = match &settings.bearer_token_env {
            None => None,
            Some(var) => {
                let token = secret(var)
                    .filter(|t| !t.trim().is_empty())
                    .ok_or_else(|| DeliverySettingsError::TokenMissing { var: var.clone() })?;
                let token = token.trim().to_string();
                ureq::http::HeaderValue::from_str(&format!("Bearer {token}")).map_err(|e| {
                    DeliverySettingsError::Header {
                        name: "Authorization".into(),
                        reason: e.to_string(),
                    }
                })?;
                Some(Arc::from(token))
            }
        };
        let timeout = Duration::from_secs_f64(settings.timeout_s);
        let agent = ureq::Agent::config_builder()
            .timeout_global(Some(timeout))
            .http_status_as_error(false)
            .max_redirects(0)
            .max_redirects_will_error(false)
            .user_agent(concat!("halotank/", env!("CARGO_PKG_VERSION")))
            .build()
            .new_agent();
        Ok(Self {
            agent,
            url: Arc::from(settings.url.as_str()),
            headers: settings
                .headers
                .iter()
                .map(|(k, v)| (k.clone(), v.clone()))
                .collect(),
            bearer,
            timeout,
        })
    }
}

impl Channel for WebhookChannel {
    async fn attempt(&self, payload: &Arc<Payload>) -> Result<(), AttemptError> {
        let agent = self.agent.clone();
        let url = Arc::clone(&self.url);
        let headers = Arc::clone(&self.headers);
        let bearer = self.bearer.clone();
        let payload = Arc::clone(payload);
        let timeout = self.timeout;
        let post = move || -> Result<(), AttemptError> {
            let mut request = agent.post(&*url);
            // A configured Content-Type replaces the default rather than adding a second one.
            if !headers
                .iter()
                .any(|(name, _)| name.eq_ignore_ascii_case("content-type"))
            {
                request = request.header("Content-Type", "application/json");
            }
            for (name, value) in headers.iter() {
                request = request.header(name.as_str(), value.as_str());
            }
            if let Some(token) = bearer {
                request = request.header("Authorization", format!("Bearer {token}"));
            }
            let response = request.send(&payload.body[..]).map_err(|e| match e {
                ureq::Error::Timeout(_) => AttemptError::TimedOut { after: timeout },
                other => AttemptError::Http(other),
            })?;
            let status = response.status().as_u16();
            if (200..300).contains(&status) {
                Ok(())
            } else {
                Err(AttemptError::Status { status })
            }
        };
        tokio::task::spawn_blocking(post)
            .await
            .map_err(|e| AttemptError::Task(e.to_string()))?
    }
}
