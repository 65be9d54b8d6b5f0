//! Log output for the long-running commands: human-readable by default, JSON lines for collectors.
use clap::ValueEnum;
use tracing_subscriber::EnvFilter;

/// Log line format.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum LogFormat {
    Text,
    Json,
}

/// Installs the global subscriber; `RUST_LOG` overrides the default level (`info`, rumqttd quiet).
pub fn init(format: LogFormat) {
    let filter =
        EnvFilter::try_from_default_env().unwrap_or_else(|_| EnvFilter::new("info,rumqttd=off,rumqttc=warn"));
    let builder = tracing_subscriber::fmt()
        .with_env_filter(filter)
        .with_writer(std::io::stderr);
    let _ = match format {
        LogFormat::Text => builder.try_init(),
        LogFormat::Json => builder.json().flatten_event(true).try_init(),
    };
}
