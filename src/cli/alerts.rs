//! `halotank alerts` (list stored alerts) and `halotank ack` (acknowledge one).
//!
//! `ack` always records a request in `alert_ack_requests`. A running daemon polls that table every 2 s,
//! applies the acknowledgement in its engine, stores the record and marks the request handled. When no
//! daemon is running (its state row is missing or older than [`DAEMON_GONE_AFTER_S`]) the command applies
//! the acknowledgement to the stored record itself and marks the request handled; a daemon started later
//! restores that record as it is, so the acknowledgement holds. Alerts are an aid to staff, not a
//! replacement for a tank's own life-support alarm.
use std::io::{self, Write};
use std::path::PathBuf;
use std::process::ExitCode;
use std::time::Duration;

use anyhow::{bail, Context};
use chrono::{DateTime, SecondsFormat, Utc};
use serde::Serialize;

use crate::alerts::AlertRecord;
use crate::storage::alerts::{insert_ack_request, mark_ack_request_handled, select_alert, upsert_alert};
use crate::storage::schema::open_for_writing;
use crate::storage::Reader;

/// The daemon writes its state every 5 s; older than this, it is taken as not running.
pub const DAEMON_GONE_AFTER_S: i64 = 15;

/// Output format of `halotank alerts`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum AlertsFormat {
    Text,
    Json,
}

/// `halotank alerts`.
#[derive(Debug, clap::Args)]
pub struct AlertsArgs {
    /// The halotank database.
    #[arg(long, value_name = "PATH")]
    pub db: PathBuf,
    /// Only open alerts (raised, acknowledged, or cleared and waiting for acknowledgement).
    #[arg(long)]
    pub open: bool,
    /// Only this tank.
    #[arg(long, value_name = "ID")]
    pub tank: Option<String>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = AlertsFormat::Text)]
    pub format: AlertsFormat,
}

/// `halotank ack`.
#[derive(Debug, clap::Args)]
pub struct AckArgs {
    /// The halotank database.
    #[arg(long, value_name = "PATH")]
    pub db: PathBuf,
    /// The alert id (as `halotank alerts` shows it).
    pub id: u64,
    /// Who acknowledges.
    #[arg(long, value_name = "NAME")]
    pub by: String,
    /// Why, or what was done.
    #[arg(long, value_name = "TEXT")]
    pub note: Option<String>,
}

/// One alert as `halotank alerts --format json` prints it.
#[derive(Debug, Serialize)]
pub struct AlertLine<'a> {
    pub id: u64,
    pub tank: &'a str,
    pub kind: &'static str,
    pub severity: &'static str,
    pub state: &'static str,
    pub raised_at: String,
    pub cleared_at: Option<String>,
    pub notify_count: u32,
    pub ack_by: Option<&'a str>,
    pub ack_at: Option<String>,
    pub ack_note: Option<&'a str>,
    pub message: &'a str,
    pub value: Option<f64>,
    pub limit: Option<f64>,
}

fn stamp(t: DateTime<Utc>) -> String {
    t.to_rfc3339_opts(SecondsFormat::Secs, true)
}

fn line(r: &AlertRecord) -> AlertLine<'_> {
    let ack = r.acknowledgement.as_ref();
    AlertLine {
        id: r.id.0,
        tank: &r.tank,
        kind: r.kind.as_str(),
        severity: r.severity.as_str(),
        state: r.state.as_str(),
        raised_at: stamp(r.raised_at),
        cleared_at: r.cleared_at.map(stamp),
        notify_count: r.notify_count,
        ack_by: ack.map(|a| a.by.as_str()),
        ack_at: ack.map(|a| stamp(a.at)),
        ack_note: ack.and_then(|a| a.note.as_deref()),
        message: &r.message,
        value: r.value,
        limit: r.limit,
    }
}

/// Renders alerts as text, one block per alert.
pub fn render_text(records: &[AlertRecord]) -> String {
    use std::fmt::Write as _;
    let mut s = String::new();
    if records.is_empty() {
        s.push_str("no alerts\n");
    }
    for r in records {
        let l = line(r);
        let _ = writeln!(
            s,
            "#{} {} {} {} [{}] raised {}",
            l.id, l.tank, l.severity, l.kind, l.state, l.raised_at
        );
        let _ = writeln!(s, "    {}", l.message);
        if let (Some(by), Some(at)) = (l.ack_by, &l.ack_at) {
            let _ = writeln!(
                s,
                "    acknowledged by {by} at {at}{}",
                l.ack_note.map(|n| format!(": {n}")).unwrap_or_default()
            );
        }
    }
    s.push_str(
        "Alerts are an aid to staff: verify probes against a calibrated meter; this does not replace a \
         tank's own life-support alarm.\n",
    );
    s
}

/// Runs `halotank alerts`.
pub fn run_alerts(args: AlertsArgs) -> anyhow::Result<ExitCode> {
    let reader = Reader::open(&args.db)?;
    let records = reader.alerts(args.open, args.tank.as_deref())?;
    let text = match args.format {
        AlertsFormat::Text => render_text(&records),
        AlertsFormat::Json => {
            let lines: Vec<AlertLine<'_>> = records.iter().map(line).collect();
            format!("{}\n", serde_json::to_string_pretty(&lines)?)
        }
    };
    match io::stdout().lock().write_all(text.as_bytes()) {
        Err(err) if err.kind() == io::ErrorKind::BrokenPipe => Ok(ExitCode::SUCCESS),
        other => other.map(|()| ExitCode::SUCCESS).map_err(Into::into),
    }
}

/// Runs `halotank ack`.
pub fn run_ack(args: AckArgs) -> anyhow::Result<ExitCode> {
    let now = Utc::now();
    let by = args.by.trim();
    if by.is_empty() {
        bail!("--by must name who acknowledges");
    }
    let reader = Reader::open(&args.db)?;
    let daemon_running = reader
        .daemon_state()?
        .is_some_and(|s| (now - s.updated_at).num_seconds() < DAEMON_GONE_AFTER_S);
    drop(reader);
    let conn = open_for_writing(&args.db, Duration::from_secs(5))?;
    let Some(mut record) = select_alert(&conn, args.id)? else {
        bail!("no alert #{} in {}", args.id, args.db.display());
    };
    if !record.state.is_open() {
        bail!("alert #{} is already cleared", args.id);
    }
    let request = insert_ack_request(&conn, args.id, by, args.note.as_deref(), now)
        .context("cannot record the acknowledgement request")?;
    if daemon_running {
        println!(
            "acknowledgement of alert #{} by {by} requested (request {request}); the running daemon applies it within a few seconds",
            args.id
        );
        return Ok(ExitCode::SUCCESS);
    }
    let closed = record.acknowledge(by, args.note.as_deref(), now)?;
    let tx = conn
        .unchecked_transaction()
        .context("cannot write the acknowledgement")?;
    upsert_alert(&tx, &record).context("cannot write the acknowledgement")?;
    mark_ack_request_handled(
        &tx,
        request,
        now,
        "acknowledged by the command line (no daemon running)",
    )
    .context("cannot write the acknowledgement")?;
    tx.commit().context("cannot write the acknowledgement")?;
    println!(
        "alert #{} acknowledged by {by} (no daemon running; applied to the database){}",
        args.id,
        if closed {
            "; it had cleared and is now closed"
        } else {
            ""
        }
    );
    Ok(ExitCode::SUCCESS)
}
