//! `halotank run`: the background service.
use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Context;
use clap::Args;

use crate::cli::logging::{self, LogFormat};
use crate::config::{self, Config};
use crate::daemon;
use crate::mqtt::{BrokerUrl, Scheme};

const EXAMPLES: &str = "\
Examples:
  halotank run --config /etc/halotank/halotank.toml
  halotank run --config config/halotank.toml --broker mqtt://127.0.0.1:1883 --db ./halotank.db

SIGINT or SIGTERM: stop taking messages, commit, ack, publish `offline`, exit 0.";

/// Options of `halotank run`.
#[derive(Debug, Args)]
#[command(after_help = EXAMPLES)]
pub struct RunArgs {
    /// Configuration file (TOML).
    #[arg(long)]
    pub config: PathBuf,
    /// Broker URL, mqtt://HOST:PORT or mqtts://HOST:PORT (overrides [broker] host and port).
    #[arg(long)]
    pub broker: Option<String>,
    /// Database file (overrides [storage] path).
    #[arg(long)]
    pub db: Option<PathBuf>,
    /// Log line format.
    #[arg(long, value_enum, default_value_t = LogFormat::Text)]
    pub log_format: LogFormat,
}

/// Runs the daemon until a stop signal.
pub fn run(args: RunArgs) -> anyhow::Result<ExitCode> {
    logging::init(args.log_format);
    let mut config = config::load(&args.config)?;
    apply_overrides(&mut config, args.broker.as_deref(), args.db)?;
    let runtime = tokio::runtime::Builder::new_multi_thread()
        .enable_all()
        .build()
        .context("cannot start the async runtime")?;
    runtime.block_on(async {
        let shutdown = daemon::shutdown::on_signals();
        daemon::run(config, shutdown).await
    })?;
    Ok(ExitCode::SUCCESS)
}

/// Applies `--broker` and `--db` on top of the file.
pub fn apply_overrides(config: &mut Config, broker: Option<&str>, db: Option<PathBuf>) -> anyhow::Result<()> {
    if let Some(url) = broker {
        let url = BrokerUrl::parse(url).with_context(|| format!("--broker {url}"))?;
        config.broker.host = url.host;
        config.broker.port = url.port;
        match url.scheme {
            Scheme::Mqtt => config.broker.tls = None,
            Scheme::Mqtts if config.broker.tls.is_none() => {
                anyhow::bail!("--broker mqtts://... needs [broker.tls] ca_file in the configuration")
            }
            Scheme::Mqtts => {}
        }
    }
    if let Some(db) = db {
        config.storage.path = db;
    }
    Ok(())
}
