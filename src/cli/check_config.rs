//! `halotank check-config`: load and validate a configuration file, then summarise it.
use std::path::PathBuf;
use std::process::ExitCode;

use serde::Serialize;

use crate::config::{self, Config, TopicKind};
use crate::ingest::subscriptions;
use crate::seawater::ProbeMode;

/// Options of `halotank check-config`.
#[derive(Debug, clap::Args)]
#[command(after_help = "\
Examples:
  halotank check-config --config /etc/halotank/halotank.toml
  halotank check-config --config config/halotank.toml --format json

JSON output is an array with one object per tank:
  [{\"id\": \"parr-a\", \"topics\": {\"conductivity\": \"brannock/probes/parr-a/ec\", \
\"temperature\": \"brannock/probes/parr-a/temp\"}}, ...]
listing only the topic kinds (combined, conductivity, temperature) the tank listens to.

Exit status: 0 the file is valid; 1 it is invalid or unreadable (the message names the file, line,
column and key at fault, on standard error); 2 the command line is wrong.")]
pub struct CheckConfigArgs {
    /// The configuration file (TOML).
    #[arg(long, value_name = "FILE")]
    pub config: PathBuf,
    /// Output: a readable summary, or the tanks and their concrete topics as JSON.
    #[arg(long, value_enum, default_value_t = Format::Text)]
    pub format: Format,
}

/// Output formats.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    Text,
    Json,
}

/// One tank in the JSON output.
#[derive(Debug, Serialize)]
struct TankTopicsJson<'a> {
    id: &'a str,
    topics: TopicsJson<'a>,
}

#[derive(Debug, Serialize)]
struct TopicsJson<'a> {
    #[serde(skip_serializing_if = "Option::is_none")]
    combined: Option<&'a str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    conductivity: Option<&'a str>,
    #[serde(skip_serializing_if = "Option::is_none")]
    temperature: Option<&'a str>,
}

/// Runs `halotank check-config`. An invalid file is an error (exit status 1).
pub fn run(args: CheckConfigArgs) -> anyhow::Result<ExitCode> {
    let config = config::load(&args.config)?;
    let out = match args.format {
        Format::Json => format!("{}\n", tanks_json(&config)?),
        Format::Text => summary(&config),
    };
    print!("{out}");
    Ok(ExitCode::SUCCESS)
}

/// The JSON array of tanks with their concrete topics.
pub fn tanks_json(config: &Config) -> serde_json::Result<String> {
    let tanks: Vec<TankTopicsJson<'_>> = config
        .tanks
        .iter()
        .map(|t| TankTopicsJson {
            id: &t.id,
            topics: TopicsJson {
                combined: t.topics.combined.as_ref().map(|b| b.topic.as_str()),
                conductivity: t.topics.conductivity.as_ref().map(|b| b.topic.as_str()),
                temperature: t.topics.temperature.as_ref().map(|b| b.topic.as_str()),
            },
        })
        .collect();
    serde_json::to_string_pretty(&tanks)
}

/// The readable summary.
pub fn summary(config: &Config) -> String {
    use std::fmt::Write as _;
    let mut s = String::new();
    let b = &config.broker;
    let _ = writeln!(s, "{}: valid", config.origin.display());
    let _ = writeln!(s, "site: {} ({})", config.site.name, config.site.slug);
    let _ = writeln!(
        s,
        "broker: {}:{} ({}), client id {}, user {}, password {}",
        b.host,
        b.port,
        if b.tls.is_some() {
            "TLS"
        } else {
            "plain TCP, no TLS"
        },
        b.client_id,
        b.username.as_deref().unwrap_or("(none)"),
        b.password.describe(),
    );
    let _ = writeln!(
        s,
        "        keep-alive {} s, {} in flight, reconnect {}..{} ms, {} session",
        b.keep_alive_s,
        b.max_inflight,
        b.reconnect_min_ms,
        b.reconnect_max_ms,
        if b.clean_session { "clean" } else { "persistent" }
    );
    let st = &config.storage;
    let _ = writeln!(
        s,
        "storage: {}, keep {} days, commit every {} rows or {} ms",
        st.path.display(),
        st.retention_days,
        st.flush_rows,
        st.flush_ms
    );
    let _ = writeln!(s, "publish under: {}", config.publish.topic_prefix);
    let h = &config.http;
    if h.enabled {
        let _ = writeln!(
            s,
            "http: listens on {}{}, token for changes from {}",
            h.bind,
            if h.bind.ip().is_loopback() {
                ""
            } else {
                " (beyond loopback: reads need no token)"
            },
            h.describe_token_source()
        );
    } else {
        let _ = writeln!(s, "http: disabled");
    }
    let i = &config.ingest;
    let _ = writeln!(
        s,
        "ingest: payloads up to {} bytes; conductivity {}..{} mS/cm; temperature {}..{} °C; \
         pairing within {} s; future skew up to {} s",
        i.max_payload_bytes,
        i.conductivity_min_ms_cm,
        i.conductivity_max_ms_cm,
        i.temperature_min_c,
        i.temperature_max_c,
        i.temperature_max_age_s,
        i.max_future_skew_s
    );
    let _ = writeln!(s, "subscriptions: {}", subscriptions(config).join(", "));
    let _ = writeln!(s, "tanks: {}", config.tanks.len());
    for t in &config.tanks {
        let mode = match t.probe_mode {
            ProbeMode::InSitu => "in-situ conductivity".to_string(),
            ProbeMode::SpecificConductance25 { alpha_percent_per_c } => {
                format!("specific conductance at 25 °C, alpha {alpha_percent_per_c} %/°C")
            }
        };
        let _ = writeln!(
            s,
            "  {} \"{}\": {} L, probe at {} dbar",
            t.id, t.name, t.volume_l, t.pressure_dbar
        );
        let _ = writeln!(
            s,
            "    unit {}, {}, expected every {} s{}",
            t.conductivity_unit.symbol(),
            mode,
            t.expected_interval_s,
            t.species
                .as_deref()
                .map(|sp| format!(", species {sp}"))
                .unwrap_or_default()
        );
        for (kind, binding) in t.topics.iter() {
            let keys = if binding.format == config::PayloadFormat::Json {
                let k = &t.json_keys;
                let wanted = match kind {
                    TopicKind::Combined => format!("{}, {}", k.conductivity, k.temperature),
                    TopicKind::Conductivity => k.conductivity.clone(),
                    TopicKind::Temperature => k.temperature.clone(),
                };
                format!(
                    " (keys {wanted}; time {})",
                    k.time.as_deref().unwrap_or("ignored")
                )
            } else {
                String::new()
            };
            let _ = writeln!(
                s,
                "    {:<12} {} [{}]{keys}",
                kind.as_str(),
                binding.topic,
                binding.format.as_str()
            );
        }
    }
    s
}
