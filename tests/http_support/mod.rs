//! Shared helpers of the HTTP tests: a blocking HTTP client (ureq, statuses as values), a fixture server
//! (temporary SQLite database filled through the real writer and schedule store, a live view filled
//! directly, the server on a free loopback port), and a checker of the Prometheus text exposition
//! format (version 0.0.4) written from the format's published rules.
//!
//! The site and tanks are fictional (Brannock Sound Hatchery test bench).
#![allow(dead_code)]

use std::collections::BTreeMap;
use std::net::SocketAddr;
use std::path::PathBuf;

use chrono::{DateTime, Duration, Utc};
use halotank::alerts::{Acknowledgement, AlertId, AlertKind, AlertRecord, AlertState};
use halotank::config::{Config, Secret};
use halotank::daemon::tank_state::TankState;
use halotank::http::{AppState, LiveView};
use halotank::mqtt::ConnectionState;
use halotank::seawater::derive::derive_from_conductivity;
use halotank::species::SpeciesLibrary;
use halotank::storage::{spawn_writer, ReadingRow, WriteItem, WriterSettings};
use serde_json::Value;
use tokio::sync::watch;

/// The token the fixture configures.
pub const TOKEN: &str = "test-token-brannock-7f3a";
/// Tank with a species, readings and alerts.
pub const SMOLT: &str = "smolt-h1";
/// Tank without species or readings.
pub const PARR: &str = "parr-h2";

/// A response: status, content type, body text.
#[derive(Debug, Clone)]
pub struct Reply {
    pub status: u16,
    pub content_type: String,
    pub etag: Option<String>,
    pub www_authenticate: Option<String>,
    pub body: String,
}

impl Reply {
    /// The body as JSON (panics with the body when it is not).
    pub fn json(&self) -> Value {
        serde_json::from_str(&self.body).unwrap_or_else(|e| panic!("not JSON ({e}): {}", self.body))
    }

    /// Asserts the error shape `{"error": {"status", "message"}}` with this status; returns the message.
    pub fn error(&self, status: u16) -> String {
        assert_eq!(self.status, status, "{}", self.body);
        assert!(
            self.content_type.starts_with("application/json"),
            "{}",
            self.content_type
        );
        let v = self.json();
        assert_eq!(v["error"]["status"], status, "{v}");
        let message = v["error"]["message"].as_str().unwrap_or_default().to_string();
        assert!(!message.is_empty(), "{v}");
        message
    }
}

fn agent() -> ureq::Agent {
    ureq::Agent::config_builder()
        .http_status_as_error(false)
        .timeout_global(Some(std::time::Duration::from_secs(20)))
        .build()
        .new_agent()
}

fn reply(response: Result<ureq::http::Response<ureq::Body>, ureq::Error>) -> Reply {
    let response = response.expect("HTTP request failed");
    let status = response.status().as_u16();
    let header = |name: &str| {
        response
            .headers()
            .get(name)
            .and_then(|v| v.to_str().ok())
            .map(str::to_string)
    };
    let content_type = header("content-type").unwrap_or_default();
    let etag = header("etag");
    let www_authenticate = header("www-authenticate");
    let body = response.into_body().read_to_string().unwrap_or_default();
    Reply {
        status,
        content_type,
        etag,
        www_authenticate,
        body,
    }
}

/// `GET http://addr/path` with optional extra headers.
pub fn get(addr: SocketAddr, path: &str, headers: &[(&str, &str)]) -> Reply {
    let mut request = agent().get(format!("http://{addr}{path}"));
    for (k, v) in headers {
        request = request.header(*k, *v);
    }
    reply(request.call())
}

/// `POST` of a body, with a bearer token if given.
pub fn post(addr: SocketAddr, path: &str, body: &str, token: Option<&str>) -> Reply {
    let mut request = agent()
        .post(format!("http://{addr}{path}"))
        .header("Content-Type", "application/json");
    if let Some(t) = token {
        request = request.header("Authorization", format!("Bearer {t}"));
    }
    reply(request.send(body.as_bytes()))
}

/// The fixture's configuration text.
pub fn config_text(db: &std::path::Path) -> String {
    format!(
        r#"[site]
name = "Brannock Sound Hatchery test bench"

[broker]
host = "127.0.0.1"

[storage]
path = "{db}"

[http]
bind = "127.0.0.1:0"
token_env = "HALOTANK_TEST_UNSET_TOKEN_VARIABLE"

[[tanks]]
id = "{SMOLT}"
name = "Smolt test tank H1"
volume_l = 2000
species = "atlantic_salmon_smolt"
[tanks.topics]
combined = "bench/{SMOLT}/state"

[[tanks]]
id = "{PARR}"
name = "Parr test tank H2"
volume_l = 1500
[tanks.topics]
combined = "bench/{PARR}/state"
"#,
        db = db.display()
    )
}

/// One derived reading of `tank` (in-situ conductivity, temperature, surface pressure).
pub fn reading(tank: &str, time: DateTime<Utc>, conductivity_ms_cm: f64, temperature_c: f64) -> ReadingRow {
    ReadingRow {
        tank_id: tank.to_string(),
        time,
        source_topic: format!("bench/{tank}/state"),
        conductivity_reported: conductivity_ms_cm,
        conductivity_unit: "mS/cm".into(),
        conductivity_ms_cm,
        temperature_c,
        pressure_dbar: 0.0,
        derived: derive_from_conductivity(conductivity_ms_cm, temperature_c, 0.0, 0.0).unwrap(),
        tonicity: None,
    }
}

/// An alert record as the engine would store it.
pub fn alert(id: u64, kind: AlertKind, state: AlertState, raised_at: DateTime<Utc>) -> AlertRecord {
    AlertRecord {
        id: AlertId(id),
        tank: SMOLT.to_string(),
        kind,
        severity: kind.severity(),
        state,
        raised_at,
        observed_at: raised_at,
        last_notified_at: raised_at,
        notify_count: 1,
        cleared_at: (state == AlertState::Cleared).then_some(raised_at + Duration::minutes(5)),
        acknowledgement: (state == AlertState::Acknowledged).then(|| Acknowledgement {
            by: "ines".into(),
            at: raised_at + Duration::minutes(1),
            note: None,
        }),
        message: format!("test alert {id}"),
        value: Some(36.0),
        limit: Some(35.0),
    }
}

/// A running fixture server.
pub struct Fixture {
    pub dir: tempfile::TempDir,
    pub db: PathBuf,
    pub config: Config,
    pub live: LiveView,
    pub addr: SocketAddr,
    /// Reading times stored for SMOLT, oldest first, with their practical salinity.
    pub stored: Vec<(DateTime<Utc>, f64)>,
    pub now: DateTime<Utc>,
    stop: watch::Sender<bool>,
    runtime: tokio::runtime::Runtime,
}

/// Conductivity of SMOLT's latest reading: PSS-78's standard, C(35, 15 °C IPTS-68, 0) = 42.914 mS/cm, so
/// its practical salinity is 35 (UNESCO 1983, Fofonoff & Millard 1983, the definition of the conductivity
/// ratio; 42.914 mS/cm is the value GSW uses).
pub const STANDARD_C_MS_CM: f64 = 42.914;
/// 15 °C on the IPTS-68 scale as ITS-90 (T68 = 1.00024 T90).
pub const STANDARD_T90_C: f64 = 15.0 / 1.00024;

impl Fixture {
    /// Two days of one-minute readings for SMOLT ending a minute ago (the last one the PSS-78 standard
    /// water), three alerts (raised critical, acknowledged warning, cleared warning), a live view with
    /// the latest state, the open alerts and a connected link; `token` configured or not.
    pub fn start(token: Option<&str>) -> Fixture {
        Self::start_on(token, "127.0.0.1:0")
    }

    /// The same, listening on `bind`.
    pub fn start_on(token: Option<&str>, bind: &str) -> Fixture {
        let dir = tempfile::tempdir().unwrap();
        let db = dir.path().join("halotank.sqlite3");
        let config_path = dir.path().join("halotank.toml");
        let text = config_text(&db).replace("bind = \"127.0.0.1:0\"", &format!("bind = \"{bind}\""));
        std::fs::write(&config_path, text).unwrap();
        let config = halotank::config::load(&config_path).unwrap();
        let now = Utc::now();
        let end = now - Duration::minutes(1);
        let start = end - Duration::days(2);
        let (writer, _reports, thread) = spawn_writer::<()>(&db, WriterSettings::default()).unwrap();
        let mut stored = Vec::new();
        let mut rows = Vec::new();
        let mut t = start;
        let mut i = 0u32;
        while t < end {
            // A slow wave between about SP 28 and 32 at 12 °C.
            let c = 36.0 + 2.0 * (f64::from(i) / 90.0).sin();
            let row = reading(SMOLT, t, c, 12.0);
            stored.push((t, row.derived.practical_salinity));
            rows.push(row);
            t += Duration::minutes(1);
            i += 1;
        }
        let last = reading(SMOLT, end, STANDARD_C_MS_CM, STANDARD_T90_C);
        stored.push((end, last.derived.practical_salinity));
        for chunk in rows.chunks(500) {
            writer
                .blocking_send(WriteItem::Readings(chunk.to_vec(), ()))
                .unwrap();
        }
        writer
            .blocking_send(WriteItem::Reading(last.clone(), ()))
            .unwrap();
        let alerts = [
            alert(
                1,
                AlertKind::SalinityTolerance,
                AlertState::Raised,
                now - Duration::hours(3),
            ),
            alert(
                2,
                AlertKind::TemperatureOptimum,
                AlertState::Cleared,
                now - Duration::hours(30),
            ),
            alert(
                3,
                AlertKind::SalinityOptimum,
                AlertState::Acknowledged,
                now - Duration::hours(2),
            ),
        ];
        for a in &alerts {
            writer.blocking_send(WriteItem::Alert(a.clone())).unwrap();
        }
        writer.blocking_flush().unwrap();
        drop(writer);
        thread.join().unwrap().unwrap();

        let live = LiveView::new();
        live.set_tank_state(end, TankState::from_row("Smolt test tank H1", &last, None));
        live.set_open_alerts(alerts.to_vec());
        live.set_link(&connected(true));
        let profiles = halotank::daemon::tank_profiles(&config).unwrap();
        let state = AppState::new(
            &config,
            &profiles,
            SpeciesLibrary::embedded().unwrap(),
            live.clone(),
            token.map(|t| Secret::new(t.to_string())),
        );
        let runtime = tokio::runtime::Builder::new_multi_thread()
            .worker_threads(2)
            .enable_all()
            .build()
            .unwrap();
        let (stop, stop_rx) = watch::channel(false);
        let server = runtime
            .block_on(halotank::http::serve(config.http.bind, state, stop_rx))
            .unwrap();
        Fixture {
            dir,
            db,
            config,
            live,
            addr: server.addr,
            stored,
            now,
            stop,
            runtime,
        }
    }

    pub fn get(&self, path: &str) -> Reply {
        get(self.addr, path, &[])
    }

    pub fn post(&self, path: &str, body: &str, token: Option<&str>) -> Reply {
        post(self.addr, path, body, token)
    }
}

impl Drop for Fixture {
    fn drop(&mut self) {
        let _ = self.stop.send(true);
    }
}

/// A broker link state.
pub fn connected(up: bool) -> ConnectionState {
    ConnectionState {
        connected: up,
        subscribed: up,
        since: Utc::now(),
        reconnects: 2,
        last_error: None,
        generation: 3,
        session_present: true,
        stopped: false,
    }
}

/// One sample of an exposition: name, labels, value.
#[derive(Debug, Clone, PartialEq)]
pub struct Sample {
    pub name: String,
    pub labels: BTreeMap<String, String>,
    pub value: f64,
}

/// A parsed exposition: each family's TYPE, and every sample.
#[derive(Debug, Clone, Default)]
pub struct Exposition {
    pub types: BTreeMap<String, String>,
    pub helps: BTreeMap<String, String>,
    pub samples: Vec<Sample>,
}

impl Exposition {
    /// The value of the sample with this name and exactly these labels.
    pub fn value(&self, name: &str, labels: &[(&str, &str)]) -> Option<f64> {
        let want: BTreeMap<String, String> = labels
            .iter()
            .map(|(k, v)| (k.to_string(), v.to_string()))
            .collect();
        self.samples
            .iter()
            .find(|s| s.name == name && s.labels == want)
            .map(|s| s.value)
    }
}

fn is_metric_name(name: &str) -> bool {
    // [a-zA-Z_:][a-zA-Z0-9_:]*
    let mut chars = name.chars();
    matches!(chars.next(), Some(c) if c.is_ascii_alphabetic() || c == '_' || c == ':')
        && chars.all(|c| c.is_ascii_alphanumeric() || c == '_' || c == ':')
}

fn is_label_name(name: &str) -> bool {
    // [a-zA-Z_][a-zA-Z0-9_]*, and names starting with __ are reserved.
    let mut chars = name.chars();
    matches!(chars.next(), Some(c) if c.is_ascii_alphabetic() || c == '_')
        && chars.all(|c| c.is_ascii_alphanumeric() || c == '_')
        && !name.starts_with("__")
}

/// A sample value: a Go-style float, or NaN, +Inf, -Inf.
fn parse_value(text: &str) -> Result<f64, String> {
    match text {
        "NaN" => Ok(f64::NAN),
        "+Inf" => Ok(f64::INFINITY),
        "-Inf" => Ok(f64::NEG_INFINITY),
        t => t.parse::<f64>().map_err(|_| format!("bad value `{t}`")),
    }
}

/// Parses `{a="x",b="y"}` (with `\\`, `\"`, `\n` escapes); returns the labels and the rest of the line.
fn parse_labels(text: &str) -> Result<(BTreeMap<String, String>, &str), String> {
    let mut labels = BTreeMap::new();
    let mut rest = text.strip_prefix('{').ok_or("labels must start with {")?;
    loop {
        if let Some(r) = rest.strip_prefix('}') {
            return Ok((labels, r));
        }
        let eq = rest.find('=').ok_or("label without =")?;
        let name = &rest[..eq];
        if !is_label_name(name) {
            return Err(format!("bad label name `{name}`"));
        }
        rest = rest[eq + 1..]
            .strip_prefix('"')
            .ok_or("label value must be quoted")?;
        let mut value = String::new();
        let mut chars = rest.char_indices();
        let end = loop {
            match chars.next() {
                None => return Err("unterminated label value".into()),
                Some((i, '"')) => break i,
                Some((_, '\\')) => match chars.next() {
                    Some((_, '\\')) => value.push('\\'),
                    Some((_, '"')) => value.push('"'),
                    Some((_, 'n')) => value.push('\n'),
                    other => return Err(format!("bad escape {other:?}")),
                },
                Some((_, '\n')) => return Err("raw line feed in a label value".into()),
                Some((_, c)) => value.push(c),
            }
        };
        if labels.insert(name.to_string(), value).is_some() {
            return Err(format!("label `{name}` repeated"));
        }
        rest = &rest[end + 1..];
        if let Some(r) = rest.strip_prefix(',') {
            rest = r;
        } else if !rest.starts_with('}') {
            return Err("labels must be separated by commas".into());
        }
    }
}

/// Checks and parses the text exposition format 0.0.4 (the rules of the Prometheus "Exposition formats"
/// documentation): `# HELP name text` and `# TYPE name counter|gauge|histogram|summary|untyped` at most
/// once per family and before its samples; metric and label names by their grammar; label values quoted
/// and escaped; values as floats; a family's samples together; histogram samples as `_bucket` with `le`
/// (ascending, cumulative, ending in `+Inf`), `_sum` and `_count` equal to the `+Inf` bucket; the text
/// ends with a line feed.
pub fn parse_exposition(text: &str) -> Result<Exposition, String> {
    if !text.ends_with('\n') {
        return Err("the exposition must end with a line feed".into());
    }
    let mut out = Exposition::default();
    let mut seen_families: Vec<String> = Vec::new();
    let mut current: Option<String> = None;
    let family_of = |name: &str, types: &BTreeMap<String, String>| -> String {
        for suffix in ["_bucket", "_sum", "_count"] {
            if let Some(base) = name.strip_suffix(suffix) {
                if types
                    .get(base)
                    .is_some_and(|t| t == "histogram" || t == "summary")
                {
                    return base.to_string();
                }
            }
        }
        name.to_string()
    };
    for (n, line) in text.lines().enumerate() {
        let at = |m: String| format!("line {}: {m}: `{line}`", n + 1);
        if line.is_empty() {
            continue;
        }
        if let Some(comment) = line.strip_prefix('#') {
            let mut parts = comment.trim_start().splitn(3, ' ');
            let keyword = parts.next().unwrap_or("");
            if keyword != "HELP" && keyword != "TYPE" {
                continue;
            }
            let name = parts.next().ok_or_else(|| at("no metric name".into()))?;
            if !is_metric_name(name) {
                return Err(at(format!("bad metric name `{name}`")));
            }
            let rest = parts.next().unwrap_or("");
            if keyword == "TYPE" {
                if !["counter", "gauge", "histogram", "summary", "untyped"].contains(&rest) {
                    return Err(at(format!("unknown type `{rest}`")));
                }
                if out.samples.iter().any(|s| family_of(&s.name, &out.types) == name) {
                    return Err(at("TYPE after the family's samples".into()));
                }
                if out.types.insert(name.to_string(), rest.to_string()).is_some() {
                    return Err(at("TYPE given twice".into()));
                }
            } else if out.helps.insert(name.to_string(), rest.to_string()).is_some() {
                return Err(at("HELP given twice".into()));
            }
            continue;
        }
        let name_end = line.find(['{', ' ']).ok_or_else(|| at("no value".into()))?;
        let name = &line[..name_end];
        if !is_metric_name(name) {
            return Err(at(format!("bad metric name `{name}`")));
        }
        let (labels, rest) = if line[name_end..].starts_with('{') {
            parse_labels(&line[name_end..]).map_err(at)?
        } else {
            (BTreeMap::new(), &line[name_end..])
        };
        let mut fields = rest.split_whitespace();
        let value = parse_value(fields.next().ok_or_else(|| at("no value".into()))?).map_err(at)?;
        if let Some(ts) = fields.next() {
            ts.parse::<i64>()
                .map_err(|_| at(format!("bad timestamp `{ts}`")))?;
        }
        if fields.next().is_some() {
            return Err(at("text after the timestamp".into()));
        }
        let family = family_of(name, &out.types);
        if current.as_deref() != Some(family.as_str()) {
            if seen_families.contains(&family) {
                return Err(at(format!("samples of `{family}` are not together")));
            }
            seen_families.push(family.clone());
            current = Some(family.clone());
        }
        if out.types.get(&family).is_some_and(|t| t == "histogram") {
            if name.ends_with("_bucket") && !labels.contains_key("le") {
                return Err(at("histogram bucket without `le`".into()));
            }
            if name == family {
                return Err(at("a histogram has only _bucket, _sum and _count samples".into()));
            }
        }
        if out.types.get(&family).is_some_and(|t| t == "counter") && (value < 0.0 || value.is_nan()) {
            return Err(at("a counter is never negative".into()));
        }
        out.samples.push(Sample {
            name: name.to_string(),
            labels,
            value,
        });
    }
    for (family, kind) in &out.types {
        if kind != "histogram" {
            continue;
        }
        let buckets: Vec<&Sample> = out
            .samples
            .iter()
            .filter(|s| s.name == format!("{family}_bucket"))
            .collect();
        let les: Vec<f64> = buckets
            .iter()
            .map(|s| parse_value(&s.labels["le"]))
            .collect::<Result<_, _>>()?;
        if les.last() != Some(&f64::INFINITY) {
            return Err(format!("histogram {family}: the last bucket must be le=\"+Inf\""));
        }
        if les.windows(2).any(|w| w[0] >= w[1]) {
            return Err(format!("histogram {family}: le must ascend"));
        }
        if buckets.windows(2).any(|w| w[0].value > w[1].value) {
            return Err(format!("histogram {family}: bucket counts must be cumulative"));
        }
        let count = out
            .value(&format!("{family}_count"), &[])
            .ok_or_else(|| format!("histogram {family}: no _count"))?;
        out.value(&format!("{family}_sum"), &[])
            .ok_or_else(|| format!("histogram {family}: no _sum"))?;
        if buckets.last().map(|s| s.value) != Some(count) {
            return Err(format!("histogram {family}: _count differs from the +Inf bucket"));
        }
    }
    Ok(out)
}
