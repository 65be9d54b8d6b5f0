//! `halotank history`: one tank's stored readings between two times, as CSV or JSON.
use std::io::{self, Write};
use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{bail, Context};
use chrono::{DateTime, SecondsFormat, Utc};
use serde::Serialize;

use super::time_arg::parse_time_arg;
use crate::storage::{Reader, ReadingRow};

/// Output format of `halotank history`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum HistoryFormat {
    /// Comma-separated values with a header row.
    Csv,
    /// A JSON array of objects keyed like the CSV header.
    Json,
}

/// Options of `halotank history`.
#[derive(Debug, clap::Args)]
#[command(after_help = "\
Times (--since, --until): an RFC 3339 time such as 2031-05-14T06:00:00Z, or a span before now:
an integer and one of s, m, h, d, w (90m, 2h, 7d). The range is since <= time < until.
Readings older than the retention period are kept only as hourly summaries and are not listed.

Examples:
  halotank history --db /var/lib/halotank/halotank.db --tank smolt-b2 --since 24h
  halotank history --db halotank.db --tank oyster-d1 --since 2031-05-01T00:00:00Z --until 2031-05-08T00:00:00Z
  halotank history --db halotank.db --tank parr-a1 --since 2h --format json")]
pub struct HistoryArgs {
    /// SQLite database written by the daemon.
    #[arg(long, value_name = "PATH")]
    pub db: PathBuf,
    /// Tank id, as configured.
    #[arg(long, value_name = "ID")]
    pub tank: String,
    /// Earliest time to list (inclusive); default: the oldest stored reading.
    #[arg(long, value_name = "T")]
    pub since: Option<String>,
    /// Time to list up to (exclusive); default: no limit.
    #[arg(long, value_name = "T")]
    pub until: Option<String>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = HistoryFormat::Csv)]
    pub format: HistoryFormat,
}

/// One output record; field names are the CSV header and the JSON keys.
#[derive(Debug, Serialize)]
struct HistoryRecord {
    time: String,
    #[serde(rename = "conductivity_mS_cm")]
    conductivity_ms_cm: f64,
    #[serde(rename = "temperature_C")]
    temperature_c: f64,
    practical_salinity: f64,
    absolute_salinity_g_kg: f64,
    density_kg_m3: f64,
    #[serde(rename = "osmolality_mOsm_kg")]
    osmolality_mosm_kg: f64,
    osmotic_pressure_bar: f64,
    #[serde(rename = "freezing_point_C")]
    freezing_point_c: f64,
}

/// The CSV header, in column order.
pub const CSV_HEADER: &str =
    "time,conductivity_mS_cm,temperature_C,practical_salinity,absolute_salinity_g_kg,\
density_kg_m3,osmolality_mOsm_kg,osmotic_pressure_bar,freezing_point_C";

impl From<&ReadingRow> for HistoryRecord {
    fn from(row: &ReadingRow) -> Self {
        Self {
            time: row.time.to_rfc3339_opts(SecondsFormat::Millis, true),
            conductivity_ms_cm: row.conductivity_ms_cm,
            temperature_c: row.temperature_c,
            practical_salinity: row.derived.practical_salinity,
            absolute_salinity_g_kg: row.derived.absolute_salinity_g_kg,
            density_kg_m3: row.derived.density_kg_m3,
            osmolality_mosm_kg: row.derived.osmolality_mosm_kg,
            osmotic_pressure_bar: row.derived.osmotic_pressure_bar,
            freezing_point_c: row.derived.freezing_point_c,
        }
    }
}

/// Runs `halotank history` against the system clock and standard output.
pub fn run(args: HistoryArgs) -> anyhow::Result<ExitCode> {
    let stdout = io::stdout();
    let mut out = io::BufWriter::new(stdout.lock());
    match run_at(&args, Utc::now(), &mut out).and_then(|code| Ok(out.flush().map(|()| code)?)) {
        Err(err) if is_broken_pipe(&err) => Ok(ExitCode::SUCCESS),
        other => other,
    }
}

/// Runs `halotank history` with relative times counted back from `now`, writing to `out`.
pub fn run_at(args: &HistoryArgs, now: DateTime<Utc>, out: &mut dyn Write) -> anyhow::Result<ExitCode> {
    let since = args
        .since
        .as_deref()
        .map(|t| parse_time_arg(t, now))
        .transpose()
        .context("--since")?;
    let until = args
        .until
        .as_deref()
        .map(|t| parse_time_arg(t, now))
        .transpose()
        .context("--until")?;
    if let (Some(since), Some(until)) = (since, until) {
        if since >= until {
            bail!("--since ({since}) must be before --until ({until})");
        }
    }
    let reader = Reader::open(&args.db)?;
    if !reader.tank_known(&args.tank)? {
        let tanks = reader.tanks()?;
        let known = if tanks.is_empty() {
            "none yet".to_owned()
        } else {
            tanks.join(", ")
        };
        bail!(
            "no readings stored for tank `{}` in {} (tanks with readings: {known})",
            args.tank,
            args.db.display()
        );
    }
    match args.format {
        HistoryFormat::Csv => {
            // The header is written by hand so an empty range still gets it.
            writeln!(out, "{CSV_HEADER}")?;
            let mut csv = csv::WriterBuilder::new()
                .has_headers(false)
                .from_writer(&mut *out);
            reader.history_for_each(&args.tank, since, until, |row| {
                csv.serialize(HistoryRecord::from(&row))?;
                Ok::<(), anyhow::Error>(())
            })?;
            csv.flush()?;
        }
        HistoryFormat::Json => {
            // A JSON array written element by element, so memory stays flat for long ranges.
            let mut first = true;
            write!(out, "[")?;
            reader.history_for_each(&args.tank, since, until, |row| {
                write!(out, "{}\n  ", if first { "" } else { "," })?;
                first = false;
                serde_json::to_writer(&mut *out, &HistoryRecord::from(&row))?;
                Ok::<(), anyhow::Error>(())
            })?;
            writeln!(out, "{}]", if first { "" } else { "\n" })?;
        }
    }
    Ok(ExitCode::SUCCESS)
}

fn is_broken_pipe(err: &anyhow::Error) -> bool {
    err.chain().any(|cause| {
        cause
            .downcast_ref::<io::Error>()
            .is_some_and(|e| e.kind() == io::ErrorKind::BrokenPipe)
            || cause.downcast_ref::<csv::Error>().is_some_and(
                |e| matches!(e.kind(), csv::ErrorKind::Io(io) if io.kind() == io::ErrorKind::BrokenPipe),
            )
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn csv_header_matches_the_record_fields() {
        let mut csv = csv::Writer::from_writer(Vec::new());
        let record = HistoryRecord {
            time: String::new(),
            conductivity_ms_cm: 0.0,
            temperature_c: 0.0,
            practical_salinity: 0.0,
            absolute_salinity_g_kg: 0.0,
            density_kg_m3: 0.0,
            osmolality_mosm_kg: 0.0,
            osmotic_pressure_bar: 0.0,
            freezing_point_c: 0.0,
        };
        csv.serialize(&record).unwrap();
        let text = String::from_utf8(csv.into_inner().unwrap()).unwrap();
        assert_eq!(text.lines().next().unwrap(), CSV_HEADER);
    }
}
