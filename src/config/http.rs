//! The `[http]` section: the built-in HTTP server (page, JSON API, metrics), where it listens and where
//! the bearer token for state-changing requests comes from.
use std::net::SocketAddr;
use std::path::{Path, PathBuf};

use serde::Deserialize;
use thiserror::Error;

use super::broker::Secret;
use super::defaults;
use super::error::Invalid;
use super::key_path::KeyPath;

/// `[http]` as written in the file.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawHttp {
    enabled: Option<bool>,
    bind: Option<String>,
    token_env: Option<String>,
    token_file: Option<String>,
    stale_after_s: Option<u64>,
    allowed_hosts: Option<Vec<String>>,
    open_reads: Option<bool>,
}

/// The HTTP server.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct HttpConfig {
    /// Serve at all (default true).
    pub enabled: bool,
    /// Address and port to listen on (default `127.0.0.1:8480`; port 0 picks a free one).
    pub bind: SocketAddr,
    /// Environment variable holding the bearer token (default `HALOTANK_HTTP_TOKEN`).
    pub token_env: Option<String>,
    /// File holding the bearer token (trimmed contents), resolved against the configuration's folder.
    pub token_file: Option<PathBuf>,
    /// A reading older than this is stale; `None`: three times the tank's expected interval.
    pub stale_after_s: Option<u64>,
    /// Host names (besides IP addresses and `localhost`) the server answers to, lower case: a request
    /// naming another host is refused, so a web page cannot reach the server by DNS rebinding.
    pub allowed_hosts: Vec<String>,
    /// Reads (`/api/*` GET, `/metrics`) from other hosts need no token either (default false: only
    /// requests from this machine read without one).
    pub open_reads: bool,
}

impl Default for HttpConfig {
    fn default() -> Self {
        Self {
            enabled: true,
            bind: SocketAddr::from(defaults::HTTP_BIND),
            token_env: Some(defaults::HTTP_TOKEN_ENV.to_string()),
            token_file: None,
            stale_after_s: None,
            allowed_hosts: Vec::new(),
            open_reads: false,
        }
    }
}

/// Why the configured token could not be read.
#[derive(Debug, Error)]
pub enum TokenError {
    #[error("{}: cannot read the HTTP token file (http.token_file): {source}", path.display())]
    File {
        path: PathBuf,
        #[source]
        source: std::io::Error,
    },
    #[error("{}: the HTTP token file (http.token_file) is empty", path.display())]
    EmptyFile { path: PathBuf },
}

impl HttpConfig {
    /// The bearer token: the file's trimmed contents if `token_file` is set, else the environment
    /// variable's trimmed value if set and not empty, else `None` (state-changing requests are refused).
    pub fn resolve_token_with(
        &self,
        env: impl Fn(&str) -> Option<String>,
    ) -> Result<Option<Secret>, TokenError> {
        if let Some(path) = &self.token_file {
            let text = std::fs::read_to_string(path).map_err(|source| TokenError::File {
                path: path.clone(),
                source,
            })?;
            let token = text.trim();
            if token.is_empty() {
                return Err(TokenError::EmptyFile { path: path.clone() });
            }
            return Ok(Some(Secret::new(token.to_string())));
        }
        Ok(self
            .token_env
            .as_deref()
            .and_then(env)
            .map(|v| v.trim().to_string())
            .filter(|v| !v.is_empty())
            .map(Secret::new))
    }

    /// [`resolve_token_with`](Self::resolve_token_with) on the process environment.
    pub fn resolve_token(&self) -> Result<Option<Secret>, TokenError> {
        self.resolve_token_with(|name| std::env::var(name).ok())
    }

    /// Where the token comes from, in words, without the token.
    pub fn describe_token_source(&self) -> String {
        match (&self.token_file, &self.token_env) {
            (Some(path), _) => format!("file {}", path.display()),
            (None, Some(name)) => format!("environment variable {name}"),
            (None, None) => "nowhere (no token_env or token_file)".to_string(),
        }
    }
}

impl RawHttp {
    pub(crate) fn resolve(self, path: &KeyPath, base: &Path) -> Result<HttpConfig, Invalid> {
        let bind = match self.bind.as_deref().map(str::trim) {
            None => SocketAddr::from(defaults::HTTP_BIND),
            Some(text) => text.parse::<SocketAddr>().map_err(|_| {
                Invalid::new(
                    path.key("bind"),
                    format!(
                        "`{text}` is not an address and port such as \"127.0.0.1:8480\" or \"[::1]:8480\""
                    ),
                )
            })?,
        };
        let token_env = match self.token_env.as_deref().map(str::trim) {
            None => Some(defaults::HTTP_TOKEN_ENV.to_string()),
            Some("") => {
                return Err(Invalid::new(
                    path.key("token_env"),
                    "must name an environment variable (leave it out for HALOTANK_HTTP_TOKEN)",
                ))
            }
            Some(name) => Some(name.to_string()),
        };
        let token_file = match self.token_file.as_deref().map(str::trim) {
            None => None,
            Some("") => {
                return Err(Invalid::new(
                    path.key("token_file"),
                    "must name a file when given",
                ))
            }
            Some(file) => Some(super::resolve_path(base, file)),
        };
        if self.stale_after_s == Some(0) {
            return Err(Invalid::new(
                path.key("stale_after_s"),
                "must be at least 1 second (leave it out for 3x each tank's expected interval)",
            ));
        }
        let mut allowed_hosts = Vec::new();
        for (i, host) in self.allowed_hosts.unwrap_or_default().iter().enumerate() {
            let host = host.trim().to_ascii_lowercase();
            let valid = !host.is_empty()
                && host
                    .chars()
                    .all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '.');
            if !valid {
                return Err(Invalid::new(
                    path.key("allowed_hosts").index(i),
                    "must be a host name without port or scheme, like `tanks.hatchery.lan`",
                ));
            }
            allowed_hosts.push(host);
        }
        Ok(HttpConfig {
            enabled: self.enabled.unwrap_or(true),
            bind,
            token_env,
            token_file,
            stale_after_s: self.stale_after_s,
            allowed_hosts,
            open_reads: self.open_reads.unwrap_or(false),
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_token_comes_from_the_file_before_the_environment() {
        let dir = tempfile::tempdir().unwrap();
        let file = dir.path().join("token");
        std::fs::write(&file, "  s3cret-from-file \n").unwrap();
        let env = |name: &str| (name == "HT_TOKEN").then(|| " from-env ".to_string());
        let mut config = HttpConfig {
            token_env: Some("HT_TOKEN".into()),
            ..HttpConfig::default()
        };
        let token = config.resolve_token_with(env).unwrap().unwrap();
        assert_eq!(token.expose(), "from-env");
        config.token_file = Some(file.clone());
        let token = config.resolve_token_with(env).unwrap().unwrap();
        assert_eq!(token.expose(), "s3cret-from-file");
        assert!(!format!("{token:?}").contains("s3cret"));
        std::fs::write(&file, "\n").unwrap();
        assert!(matches!(
            config.resolve_token_with(env),
            Err(TokenError::EmptyFile { .. })
        ));
        config.token_file = None;
        let unset = |_: &str| None;
        assert!(config.resolve_token_with(unset).unwrap().is_none());
        let blank = |_: &str| Some("   ".to_string());
        assert!(config.resolve_token_with(blank).unwrap().is_none());
    }
}
