//! `GET /metrics`: the Prometheus text exposition format (version 0.0.4), written from the live view.
//!
//! Metric names are ours, prefixed `halotank_`; every family has `# HELP` and `# TYPE`; label values
//! are escaped as the format requires (backslash, double quote, line feed).
use std::fmt::Write as _;

use axum::extract::State;
use axum::http::header::CONTENT_TYPE;
use axum::response::{IntoResponse, Response};
use chrono::Utc;

use super::histogram::Histogram;
use super::live::LiveData;
use super::state::AppState;

/// The exposition format's content type.
pub const CONTENT_TYPE_TEXT: &str = "text/plain; version=0.0.4; charset=utf-8";

/// `GET /metrics`.
pub async fn metrics(State(state): State<AppState>) -> Response {
    let responses = state.live().responses();
    let text = state.live().read(|data| render(data, &responses, Utc::now()));
    ([(CONTENT_TYPE, CONTENT_TYPE_TEXT)], text).into_response()
}

/// A sample value as the format writes it (`NaN`, `+Inf`, `-Inf` or a decimal).
pub fn value(v: f64) -> String {
    if v.is_nan() {
        "NaN".into()
    } else if v == f64::INFINITY {
        "+Inf".into()
    } else if v == f64::NEG_INFINITY {
        "-Inf".into()
    } else {
        format!("{v}")
    }
}

/// A label value escaped for the format.
pub fn escape_label(v: &str) -> String {
    v.replace('\\', r"\\").replace('"', "\\\"").replace('\n', r"\n")
}

fn family(out: &mut String, name: &str, kind: &str, help: &str) {
    let _ = writeln!(out, "# HELP {name} {help}");
    let _ = writeln!(out, "# TYPE {name} {kind}");
}

fn sample(out: &mut String, name: &str, labels: &[(&str, &str)], v: f64) {
    out.push_str(name);
    if !labels.is_empty() {
        out.push('{');
        for (i, (k, val)) in labels.iter().enumerate() {
            if i > 0 {
                out.push(',');
            }
            let _ = write!(out, "{k}=\"{}\"", escape_label(val));
        }
        out.push('}');
    }
    let _ = writeln!(out, " {}", value(v));
}

fn histogram(out: &mut String, name: &str, help: &str, h: &Histogram) {
    family(out, name, "histogram", help);
    let bucket = format!("{name}_bucket");
    for (le, count) in h.cumulative() {
        sample(out, &bucket, &[("le", &value(le))], count as f64);
    }
    sample(out, &bucket, &[("le", "+Inf")], h.count() as f64);
    sample(out, &format!("{name}_sum"), &[], h.sum());
    sample(out, &format!("{name}_count"), &[], h.count() as f64);
}

/// The whole exposition text.
pub fn render(
    data: &LiveData,
    responses: &std::collections::BTreeMap<u16, u64>,
    now: chrono::DateTime<Utc>,
) -> String {
    let mut out = String::with_capacity(4096 + data.tanks.len() * 80);
    let c = &data.counters;
    family(
        &mut out,
        "halotank_readings_accepted_total",
        "counter",
        "Readings accepted and handed to storage.",
    );
    sample(
        &mut out,
        "halotank_readings_accepted_total",
        &[],
        c.readings as f64,
    );
    family(
        &mut out,
        "halotank_messages_accepted_total",
        "counter",
        "MQTT messages that yielded stored readings.",
    );
    sample(
        &mut out,
        "halotank_messages_accepted_total",
        &[],
        c.accepted_messages as f64,
    );
    family(
        &mut out,
        "halotank_messages_rejected_total",
        "counter",
        "MQTT messages rejected, by reason.",
    );
    for (reason, n) in &c.rejected {
        sample(
            &mut out,
            "halotank_messages_rejected_total",
            &[("reason", reason)],
            *n as f64,
        );
    }
    family(
        &mut out,
        "halotank_messages_ignored_total",
        "counter",
        "MQTT messages ignored, by reason.",
    );
    for (reason, n) in &c.ignored {
        sample(
            &mut out,
            "halotank_messages_ignored_total",
            &[("reason", reason)],
            *n as f64,
        );
    }
    family(
        &mut out,
        "halotank_messages_buffered_total",
        "counter",
        "Bare-number messages held until their other quantity arrives.",
    );
    sample(
        &mut out,
        "halotank_messages_buffered_total",
        &[],
        c.buffered as f64,
    );
    family(
        &mut out,
        "halotank_tonicity_refused_total",
        "counter",
        "Readings stored without tonicity because the science core refused the assessment.",
    );
    sample(
        &mut out,
        "halotank_tonicity_refused_total",
        &[],
        c.tonicity_refused as f64,
    );
    family(
        &mut out,
        "halotank_tank_last_reading_age_seconds",
        "gauge",
        "Seconds since the reading time of each tank's latest committed reading.",
    );
    let mut tanks: Vec<(&String, f64)> = data
        .tanks
        .iter()
        .map(|(id, (t, _))| (id, (now - *t).num_milliseconds() as f64 / 1000.0))
        .collect();
    tanks.sort_by(|a, b| a.0.cmp(b.0));
    for (tank, age) in tanks {
        sample(
            &mut out,
            "halotank_tank_last_reading_age_seconds",
            &[("tank", tank)],
            age,
        );
    }
    family(
        &mut out,
        "halotank_open_alerts",
        "gauge",
        "Open alerts, by severity.",
    );
    for severity in ["info", "warning", "critical"] {
        let n = data
            .alerts
            .values()
            .filter(|a| a.severity.as_str() == severity)
            .count();
        sample(
            &mut out,
            "halotank_open_alerts",
            &[("severity", severity)],
            n as f64,
        );
    }
    let link = data.link.as_ref();
    family(
        &mut out,
        "halotank_mqtt_connected",
        "gauge",
        "1 while connected to the MQTT broker, else 0.",
    );
    sample(
        &mut out,
        "halotank_mqtt_connected",
        &[],
        f64::from(u8::from(link.is_some_and(|l| l.connected))),
    );
    family(
        &mut out,
        "halotank_mqtt_reconnects_total",
        "counter",
        "Reconnections to the MQTT broker.",
    );
    sample(
        &mut out,
        "halotank_mqtt_reconnects_total",
        &[],
        link.map_or(0, |l| l.reconnects) as f64,
    );
    histogram(
        &mut out,
        "halotank_writer_batch_size_rows",
        "Rows written per storage transaction.",
        &data.writer.batch_size,
    );
    histogram(
        &mut out,
        "halotank_writer_commit_latency_seconds",
        "From the arrival of a batch's oldest item to the end of its commit.",
        &data.writer.commit_latency,
    );
    family(
        &mut out,
        "halotank_writer_commit_failures_total",
        "counter",
        "Storage transaction attempts that failed and were retried.",
    );
    sample(
        &mut out,
        "halotank_writer_commit_failures_total",
        &[],
        data.writer.failed_attempts as f64,
    );
    family(
        &mut out,
        "halotank_http_requests_total",
        "counter",
        "HTTP responses, by status code.",
    );
    for (code, n) in responses {
        sample(
            &mut out,
            "halotank_http_requests_total",
            &[("code", &code.to_string())],
            *n as f64,
        );
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn labels_are_escaped_and_values_written_as_the_format_wants() {
        assert_eq!(escape_label("a\"b\\c\nd"), "a\\\"b\\\\c\\nd");
        assert_eq!(value(f64::INFINITY), "+Inf");
        assert_eq!(value(f64::NAN), "NaN");
        assert_eq!(value(0.25), "0.25");
        assert_eq!(value(3.0), "3");
    }
}
