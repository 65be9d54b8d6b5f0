//! `halotank status`: each tank's latest reading and its age, stored counts, the open acclimation
//! schedules' progress, rejections by reason, and the daemon's broker link as it last recorded it.
use std::fmt::Write as _;
use std::io::{self, Write};
use std::path::PathBuf;
use std::process::ExitCode;

use chrono::{DateTime, SecondsFormat, Utc};
use serde::Serialize;

use crate::schedule::{progress, Progress};
use crate::seawater::Derived;
use crate::species::TonicityState;
use crate::storage::{Reader, ReasonCount, ScheduleStore, StorageError, SCHEMA_VERSION};

/// The daemon state is called stale when older than this, s (the daemon rewrites it every few seconds).
pub const DAEMON_STATE_STALE_AFTER_S: f64 = 60.0;

/// Output format of `halotank status`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum StatusFormat {
    /// Lines for people.
    Text,
    /// One JSON object.
    Json,
}

/// Options of `halotank status`.
#[derive(Debug, clap::Args)]
#[command(after_help = "\
Ages are measured against this computer's clock. The database can be read while the daemon runs.

Examples:
  halotank status --db /var/lib/halotank/halotank.db
  halotank status --db halotank.db --format json")]
pub struct StatusArgs {
    /// SQLite database written by the daemon.
    #[arg(long, value_name = "PATH")]
    pub db: PathBuf,
    /// Output format.
    #[arg(long, value_enum, default_value_t = StatusFormat::Text)]
    pub format: StatusFormat,
}

/// Everything `status` shows; serialised as the JSON output.
#[derive(Debug, Serialize)]
pub struct StatusReport {
    pub database: String,
    pub schema_version: u32,
    pub generated_at: String,
    pub tanks: Vec<TankStatus>,
    /// Progress of every open (active or paused) schedule.
    pub schedules: Vec<Progress>,
    pub rejections: RejectionSummary,
    /// `null` when the daemon never wrote its state to this database.
    pub daemon: Option<DaemonStatus>,
}

/// One tank: its newest raw reading and how many readings are stored.
#[derive(Debug, Serialize)]
pub struct TankStatus {
    pub tank_id: String,
    pub readings_stored: u64,
    /// Readings already folded into hourly summaries by retention.
    pub readings_folded: u64,
    /// `null` when only hourly summaries remain.
    pub latest: Option<LatestReading>,
}

/// The newest reading of a tank.
#[derive(Debug, Serialize)]
pub struct LatestReading {
    pub time: String,
    /// Seconds between the reading and now (negative if the reading is ahead of this clock).
    pub age_s: f64,
    pub source_topic: String,
    pub conductivity_reported: f64,
    pub conductivity_unit: String,
    #[serde(rename = "conductivity_mS_cm")]
    pub conductivity_ms_cm: f64,
    #[serde(rename = "temperature_C")]
    pub temperature_c: f64,
    pub pressure_dbar: f64,
    pub derived: Derived,
    /// The water against the tank's species (`null` when the reading was stored without a species).
    pub tonicity: Option<TonicityState>,
}

/// Stored rejections.
#[derive(Debug, Serialize)]
pub struct RejectionSummary {
    pub total: u64,
    pub by_reason: Vec<ReasonStatus>,
}

/// Rejections with one reason code.
#[derive(Debug, Serialize)]
pub struct ReasonStatus {
    pub reason: String,
    pub count: u64,
    pub last_time: String,
}

/// The daemon's own record of its broker link and counters.
#[derive(Debug, Serialize)]
pub struct DaemonStatus {
    pub updated_at: String,
    /// Seconds since the daemon last wrote its state.
    pub update_age_s: f64,
    /// True when the state is older than [`DAEMON_STATE_STALE_AFTER_S`]: the daemon may not be running.
    pub state_stale: bool,
    pub started_at: String,
    pub broker_connected: bool,
    pub broker_state_since: String,
    /// Seconds the broker has been unreachable (up to now), `null` while connected.
    pub broker_outage_s: Option<f64>,
    pub reconnect_count: u64,
    pub accepted_count: u64,
    pub rejected_count: u64,
    pub ignored_count: u64,
}

/// Runs `halotank status` against the system clock and standard output.
pub fn run(args: StatusArgs) -> anyhow::Result<ExitCode> {
    let report = build_report(&args, Utc::now())?;
    let text = match args.format {
        StatusFormat::Text => render_text(&report),
        StatusFormat::Json => format!("{}\n", serde_json::to_string_pretty(&report)?),
    };
    match io::stdout().lock().write_all(text.as_bytes()) {
        Err(err) if err.kind() == io::ErrorKind::BrokenPipe => Ok(ExitCode::SUCCESS),
        other => other.map(|()| ExitCode::SUCCESS).map_err(Into::into),
    }
}

/// Reads the database and measures ages against `now`.
pub fn build_report(args: &StatusArgs, now: DateTime<Utc>) -> anyhow::Result<StatusReport> {
    let mut report = readings_report(args, now)?;
    let store = ScheduleStore::open_existing(&args.db)?;
    report.schedules = store.open_schedules()?.iter().map(|s| progress(s, now)).collect();
    Ok(report)
}

fn readings_report(args: &StatusArgs, now: DateTime<Utc>) -> Result<StatusReport, StorageError> {
    let reader = Reader::open(&args.db)?;
    reader.snapshot(|reader| {
        let latest = reader.latest_per_tank()?;
        let tanks = reader
            .reading_counts()?
            .into_iter()
            .map(|count| TankStatus {
                latest: latest
                    .iter()
                    .find(|r| r.tank_id == count.tank_id)
                    .map(|r| LatestReading {
                        time: stamp(r.time),
                        age_s: seconds_between(r.time, now),
                        source_topic: r.source_topic.clone(),
                        conductivity_reported: r.conductivity_reported,
                        conductivity_unit: r.conductivity_unit.clone(),
                        conductivity_ms_cm: r.conductivity_ms_cm,
                        temperature_c: r.temperature_c,
                        pressure_dbar: r.pressure_dbar,
                        derived: r.derived,
                        tonicity: r.tonicity.clone(),
                    }),
                tank_id: count.tank_id,
                readings_stored: count.raw_readings,
                readings_folded: count.folded_readings,
            })
            .collect();
        let reasons = reader.rejection_counts_by_reason()?;
        let rejections = RejectionSummary {
            total: reasons.iter().map(|r| r.count).sum(),
            by_reason: reasons.into_iter().map(reason_status).collect(),
        };
        let daemon = reader.daemon_state()?.map(|state| {
            let update_age_s = seconds_between(state.updated_at, now);
            DaemonStatus {
                updated_at: stamp(state.updated_at),
                update_age_s,
                state_stale: update_age_s > DAEMON_STATE_STALE_AFTER_S,
                started_at: stamp(state.started_at),
                broker_connected: state.broker_connected,
                broker_state_since: stamp(state.broker_state_since),
                broker_outage_s: (!state.broker_connected)
                    .then(|| seconds_between(state.broker_state_since, now)),
                reconnect_count: state.reconnect_count,
                accepted_count: state.accepted_count,
                rejected_count: state.rejected_count,
                ignored_count: state.ignored_count,
            }
        });
        Ok(StatusReport {
            database: args.db.display().to_string(),
            schema_version: SCHEMA_VERSION,
            generated_at: stamp(now),
            tanks,
            schedules: Vec::new(),
            rejections,
            daemon,
        })
    })
}
/// The report as lines for people.
pub fn render_text(report: &StatusReport) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "halotank status of {} at {}",
        report.database, report.generated_at
    );
    let _ = writeln!(s);
    if report.tanks.is_empty() {
        let _ = writeln!(s, "Tanks: no readings stored yet");
    } else {
        let _ = writeln!(s, "Tanks:");
    }
    for tank in &report.tanks {
        let _ = write!(s, "  {}: {} readings stored", tank.tank_id, tank.readings_stored);
        if tank.readings_folded > 0 {
            let _ = write!(s, " (+{} folded into hourly summaries)", tank.readings_folded);
        }
        let _ = writeln!(s);
        match &tank.latest {
            None => {
                let _ = writeln!(s, "    latest: none (only hourly summaries remain)");
            }
            Some(r) => {
                let d = &r.derived;
                let _ = writeln!(
                    s,
                    "    latest: {} ({}) from {}",
                    r.time,
                    age_phrase(r.age_s),
                    r.source_topic
                );
                let _ = writeln!(
                    s,
                    "    conductivity {:.3} mS/cm in situ, temperature {:.2} °C, pressure {:.1} dbar",
                    r.conductivity_ms_cm, r.temperature_c, r.pressure_dbar
                );
                let _ = writeln!(
                    s,
                    "    practical salinity {:.3}{}, absolute salinity {:.3} g/kg, density {:.2} kg/m³",
                    d.practical_salinity,
                    range_note(d.salinity_range),
                    d.absolute_salinity_g_kg,
                    d.density_kg_m3
                );
                let _ = writeln!(
                    s,
                    "    osmolality {:.0} mOsm/kg, osmotic pressure {:.2} bar, freezing point {:.3} °C",
                    d.osmolality_mosm_kg, d.osmotic_pressure_bar, d.freezing_point_c
                );
                if let Some(t) = &r.tonicity {
                    let _ = writeln!(s, "    tonicity ({}): {}", t.species, t.message);
                }
            }
        }
    }
    let _ = writeln!(s);
    render_schedules(&mut s, &report.schedules);
    let _ = writeln!(s, "Rejections stored: {}", report.rejections.total);
    for reason in &report.rejections.by_reason {
        let _ = writeln!(
            s,
            "  {}: {} (last {})",
            reason.reason, reason.count, reason.last_time
        );
    }
    let _ = writeln!(s);
    match &report.daemon {
        None => {
            let _ = writeln!(s, "Daemon: has not recorded its state in this database");
        }
        Some(d) => {
            let _ = writeln!(
                s,
                "Daemon: started {}, state written {} ({})",
                d.started_at,
                d.updated_at,
                age_phrase(d.update_age_s)
            );
            if d.state_stale {
                let _ = writeln!(
                    s,
                    "  WARNING: the daemon has not written its state for {}; it may not be running",
                    human_duration(d.update_age_s)
                );
            }
            match d.broker_outage_s {
                None => {
                    let _ = writeln!(s, "  broker: connected since {}", d.broker_state_since);
                }
                Some(outage) => {
                    let _ = writeln!(
                        s,
                        "  broker: NOT CONNECTED for {} (since {}); no readings arrive meanwhile",
                        human_duration(outage),
                        d.broker_state_since
                    );
                }
            }
            let _ = writeln!(
                s,
                "  reconnects {}; messages accepted {}, rejected {}, ignored {}",
                d.reconnect_count, d.accepted_count, d.rejected_count, d.ignored_count
            );
        }
    }
    let _ = writeln!(s);
    let _ = writeln!(
        s,
        "Values are only as good as the probes: verify them against a calibrated meter. halotank does not \
         replace a tank's own life-support alarm."
    );
    s
}

/// The open schedules: step n of m, ahead or behind, setpoint now, next step, expected finish.
fn render_schedules(s: &mut String, schedules: &[Progress]) {
    if schedules.is_empty() {
        let _ = writeln!(s, "Schedules: none open");
        let _ = writeln!(s);
        return;
    }
    let _ = writeln!(s, "Schedules:");
    for p in schedules {
        let pace = match p.steps_ahead {
            0 => "on time".to_owned(),
            n if n > 0 => format!("{n} step(s) ahead"),
            n => format!("{} step(s) behind", -n),
        };
        let _ = writeln!(
            s,
            "  {} on tank {}: {}, step {} of {} done ({pace}), setpoint now SP {:.2}",
            p.schedule_id, p.tank_id, p.state, p.steps_done, p.steps_total, p.setpoint_practical_salinity
        );
        if let Some(next) = &p.next_step {
            let when = if next.overdue { "overdue since" } else { "due" };
            let _ = writeln!(
                s,
                "    next: step {} to SP {:.2} {when} {}",
                next.step,
                next.setpoint_practical_salinity,
                stamp(next.due)
            );
        }
        if let Some(finish) = p.expected_finish {
            let _ = writeln!(s, "    expected finish {}", stamp(finish));
        }
    }
    let _ = writeln!(s);
}

fn reason_status(reason: ReasonCount) -> ReasonStatus {
    ReasonStatus {
        reason: reason.reason,
        count: reason.count,
        last_time: stamp(reason.last_time),
    }
}

fn stamp(time: DateTime<Utc>) -> String {
    time.to_rfc3339_opts(SecondsFormat::Millis, true)
}

/// Seconds from `earlier` to `later`, millisecond resolution.
fn seconds_between(earlier: DateTime<Utc>, later: DateTime<Utc>) -> f64 {
    (later - earlier).num_milliseconds() as f64 / 1000.0
}

fn range_note(range: crate::seawater::practical_salinity::SalinityRange) -> &'static str {
    use crate::seawater::practical_salinity::SalinityRange;
    match range {
        SalinityRange::HillExtension => " (below 2: Hill et al. 1986 extension)",
        SalinityRange::Pss78 => "",
        SalinityRange::AboveRange => " (above 42: outside PSS-78, extrapolated)",
    }
}

fn age_phrase(age_s: f64) -> String {
    if age_s < 0.0 {
        format!("{} ahead of this clock", human_duration(-age_s))
    } else {
        format!("{} ago", human_duration(age_s))
    }
}

/// A duration in seconds as the two largest whole units ("3 d 4 h", "2 h 13 min", "45 s").
pub fn human_duration(seconds: f64) -> String {
    let total = if seconds.is_finite() {
        seconds.max(0.0).floor() as u64
    } else {
        0
    };
    let (d, h, m, s) = (
        total / 86_400,
        total % 86_400 / 3_600,
        total % 3_600 / 60,
        total % 60,
    );
    if d > 0 {
        format!("{d} d {h} h")
    } else if h > 0 {
        format!("{h} h {m} min")
    } else if m > 0 {
        format!("{m} min {s} s")
    } else {
        format!("{s} s")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn durations_show_two_units() {
        assert_eq!(human_duration(45.9), "45 s");
        assert_eq!(human_duration(125.0), "2 min 5 s");
        assert_eq!(human_duration(2.0 * 3600.0 + 13.0 * 60.0 + 7.0), "2 h 13 min");
        assert_eq!(human_duration(3.0 * 86_400.0 + 4.0 * 3600.0 + 59.0), "3 d 4 h");
        assert_eq!(human_duration(f64::NAN), "0 s");
    }
}
