//! `halotank demo`: an embedded broker, simulated probes of the fictional Brannock Sound Hatchery and the
//! real daemon pipeline, with a live per-tank table, for a set duration or until Ctrl-C.
use std::io::{IsTerminal, Write};
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::time::Duration;

use anyhow::Context;
use chrono::Utc;
use tokio::sync::watch;
use tokio::time::{Instant, MissedTickBehavior};

use crate::config::defaults::HTTP_TOKEN_ENV;
use crate::config::Config;
use crate::daemon;
use crate::demo::config::{demo_config_for, DEFAULT_DB};
use crate::demo::scenario::DEFAULT_SEED;
use crate::demo::table::{render_table, TableCounts, TableHeading};
use crate::demo::{run_probes, tank_rows, LatestReading, ProbeSettings, ProbeStats, Scenario, SimClock};
use crate::mqtt::EmbeddedBroker;
use crate::storage::Reader;

/// Client id of the simulated probes (the daemon uses the configuration's).
pub const PROBES_CLIENT_ID: &str = "halotank-demo-probes";
/// Time the daemon gets to connect and subscribe before the probes start.
const DAEMON_HEAD_START: Duration = Duration::from_millis(500);
/// Longest wait for the probes, then the daemon, to finish on shutdown.
const PROBES_STOP_TIMEOUT: Duration = Duration::from_secs(10);
const DAEMON_STOP_TIMEOUT: Duration = Duration::from_secs(30);

/// Options of `halotank demo`.
#[derive(Debug, clap::Args)]
#[command(after_help = "\
Examples:
  halotank demo --duration 30s
  halotank demo --duration 5m --speed 600 --db /tmp/brannock-demo.db
  halotank demo                      (runs until Ctrl-C)

The demo starts an MQTT broker on a free loopback port, simulated probes for the fictional Brannock
Sound Hatchery (one probe drifts, one sends broken messages now and then) and the halotank daemon
connected to that broker, and prints a table of the tanks every second. With --duration D the
simulated timeline covers D x speed and ends at the moment the demo started; without it, it starts
7 days back and, once caught up, follows the real clock. The database it leaves is read by
`halotank status` and `halotank history`.

All data shown is simulated. halotank does not replace a tank's own life-support alarm.")]
pub struct DemoArgs {
    /// Stop after this long, e.g. 30s, 5m, 2h or 1h30m (without it: run until Ctrl-C).
    #[arg(long, value_name = "TIME", value_parser = parse_duration)]
    pub duration: Option<Duration>,
    /// Database file the demo writes (created if missing).
    #[arg(long, value_name = "FILE", default_value = DEFAULT_DB)]
    pub db: PathBuf,
    /// Simulated seconds per real second.
    #[arg(long, value_name = "FACTOR", default_value_t = 60.0)]
    pub speed: f64,
    /// Seed of the simulated noise and faults (the same seed gives the same readings).
    #[arg(long, default_value_t = DEFAULT_SEED)]
    pub seed: u64,
}

/// Parses `30s`, `5m`, `2h` or combinations such as `1h30m`; at least one second, at most 366 days.
pub fn parse_duration(text: &str) -> Result<Duration, String> {
    let t = text.trim();
    if t.is_empty() {
        return Err("empty duration: use e.g. 30s, 5m or 2h".to_string());
    }
    let mut total: u64 = 0;
    let mut digits = String::new();
    for c in t.chars() {
        if c.is_ascii_digit() {
            digits.push(c);
            continue;
        }
        let unit_s = match c {
            's' => 1,
            'm' => 60,
            'h' => 3600,
            _ => {
                return Err(format!(
                    "`{t}`: unknown unit `{c}` (use s, m or h, e.g. 30s, 5m, 2h)"
                ))
            }
        };
        if digits.is_empty() {
            return Err(format!("`{t}`: a number must come before `{c}`"));
        }
        let n: u64 = digits.parse().map_err(|_| format!("`{t}` is too long"))?;
        total = n
            .checked_mul(unit_s)
            .and_then(|s| total.checked_add(s))
            .ok_or_else(|| format!("`{t}` is too long"))?;
        digits.clear();
    }
    if !digits.is_empty() {
        return Err(format!(
            "`{t}`: the number needs a unit (s, m or h), e.g. {digits}s"
        ));
    }
    if total == 0 {
        return Err("the duration must be at least 1s".to_string());
    }
    if total > 366 * 86_400 {
        return Err(format!("`{t}` is longer than 366 days"));
    }
    Ok(Duration::from_secs(total))
}

/// Runs `halotank demo`.
pub fn run(args: DemoArgs) -> anyhow::Result<ExitCode> {
    // Only warnings and errors, so log lines do not scroll the live table away (RUST_LOG overrides).
    if std::env::var_os("RUST_LOG").is_none() {
        std::env::set_var("RUST_LOG", "warn,rumqttd=off,rumqttc=off");
    }
    crate::cli::logging::init(crate::cli::logging::LogFormat::Text);
    // A token for this run, so the page's changes (acknowledge, schedules) can be tried; set before any
    // other thread starts.
    if std::env::var_os(HTTP_TOKEN_ENV).is_none() {
        std::env::set_var(HTTP_TOKEN_ENV, format!("demo-{:016x}", rand::random::<u64>()));
    }
    let runtime = tokio::runtime::Builder::new_multi_thread()
        .enable_all()
        .build()
        .context("cannot start the async runtime")?;
    runtime.block_on(run_demo(args))
}

/// Why the live loop ended.
enum Stop {
    DurationReached,
    Interrupted,
    DaemonEnded,
    ProbesEnded(String),
}

async fn run_demo(args: DemoArgs) -> anyhow::Result<ExitCode> {
    let started = Instant::now();
    let clock = SimClock::new(Utc::now(), args.duration, args.speed)?;
    let broker = EmbeddedBroker::start().await?;
    let mut config = demo_config_for(broker.addr(), &args.db)?;
    // The page's usual port when free, else any free one (the address is printed below).
    if std::net::TcpListener::bind(config.http.bind).is_err() {
        config.http.bind.set_port(0);
    }
    let scenario = Scenario::brannock(args.seed, clock.sim_start(), clock.real_start());
    let db = config.storage.path.clone();
    let db_existed = db.exists();

    println!(
        "halotank demo: {} (fictional), simulated probes, {}x speed",
        config.site.name,
        clock.speed()
    );
    println!(
        "  embedded MQTT broker: {}   database: {}",
        broker.url(),
        db.display()
    );
    println!(
        "  simulated time from {} to {}{}",
        clock.sim_start().format("%Y-%m-%d %H:%M UTC"),
        clock.real_start().format("%Y-%m-%d %H:%M UTC"),
        if args.duration.is_some() {
            ""
        } else {
            ", then the real clock (Ctrl-C to stop)"
        }
    );
    if db_existed {
        println!("  the database exists already: this run adds its readings to it");
    }
    println!("  {}", table_source_note());
    println!();

    let (daemon_stop, daemon_stop_rx) = watch::channel(false);
    let (http_addr, http_addr_rx) = tokio::sync::oneshot::channel();
    let hooks = daemon::DaemonHooks {
        http_addr: Some(http_addr),
    };
    let mut daemon_task = tokio::spawn(daemon::run_with(config.clone(), daemon_stop_rx, hooks));
    tokio::time::sleep(DAEMON_HEAD_START).await;
    if let Ok(Ok(addr)) = tokio::time::timeout(DAEMON_HEAD_START, http_addr_rx).await {
        println!("  page and API: http://{addr}/   (metrics: http://{addr}/metrics)");
        if let Ok(token) = std::env::var(HTTP_TOKEN_ENV) {
            println!("  token for changes on the page ({HTTP_TOKEN_ENV}): {token}");
        }
        println!();
    }

    let (probes_stop, probes_stop_rx) = watch::channel(false);
    let (stats_tx, stats_rx) = watch::channel(ProbeStats::default());
    let settings = ProbeSettings::new(broker.addr(), PROBES_CLIENT_ID);
    let mut probes_task = tokio::spawn(run_probes(scenario, clock, settings, stats_tx, probes_stop_rx));

    let deadline = args.duration.map(|d| started + d);
    let mut screen = Screen::new();
    let mut ticker = tokio::time::interval(Duration::from_secs(1));
    ticker.set_missed_tick_behavior(MissedTickBehavior::Skip);
    let ctrl_c = tokio::signal::ctrl_c();
    tokio::pin!(ctrl_c);
    let mut daemon_early = None;
    let stop = loop {
        tokio::select! {
            _ = ticker.tick() => {
                screen.show(&live_table(&config, &clock, &stats_rx.borrow()));
            }
            _ = sleep_until_deadline(deadline) => break Stop::DurationReached,
            _ = &mut ctrl_c => break Stop::Interrupted,
            ended = &mut daemon_task => {
                daemon_early = Some(ended);
                break Stop::DaemonEnded;
            }
            ended = &mut probes_task => break Stop::ProbesEnded(match ended {
                Ok(Ok(_)) => "the simulated probes stopped".to_string(),
                Ok(Err(e)) => e.to_string(),
                Err(e) => format!("the simulated probes failed: {e}"),
            }),
        }
    };

    // Shut down in order: probes (after the broker acked what they sent), then the daemon (flush,
    // commit, ack), then the broker.
    let _ = probes_stop.send(true);
    let probe_stats = match stop {
        Stop::ProbesEnded(_) => stats_rx.borrow().clone(),
        _ => match tokio::time::timeout(PROBES_STOP_TIMEOUT, &mut probes_task).await {
            Ok(Ok(Ok(stats))) => stats,
            Ok(Ok(Err(e))) => {
                eprintln!("halotank demo: {e}");
                stats_rx.borrow().clone()
            }
            Ok(Err(e)) => {
                eprintln!("halotank demo: the simulated probes failed: {e}");
                stats_rx.borrow().clone()
            }
            Err(_) => {
                probes_task.abort();
                eprintln!("halotank demo: the simulated probes did not stop in time");
                stats_rx.borrow().clone()
            }
        },
    };
    let _ = daemon_stop.send(true);
    let daemon_result = match daemon_early {
        Some(ended) => Some(ended),
        None => tokio::time::timeout(DAEMON_STOP_TIMEOUT, &mut daemon_task)
            .await
            .ok(),
    };
    broker.stop().await;

    screen.show(&live_table(&config, &clock, &probe_stats));
    println!();
    match &stop {
        Stop::DurationReached => println!("Stopped: the duration has passed."),
        Stop::Interrupted => println!("Stopped: interrupted."),
        Stop::DaemonEnded => println!("Stopped: the daemon ended early."),
        Stop::ProbesEnded(why) => println!("Stopped: {why}."),
    }
    println!(
        "Probes: {} messages sent ({} deliberately broken), {} acknowledged by the broker.",
        probe_stats.published, probe_stats.published_broken, probe_stats.acked
    );
    let code = match daemon_result {
        Some(Ok(Ok(summary))) => {
            println!(
                "Daemon: {} readings stored, {} messages rejected.",
                summary.readings_stored, summary.rejected
            );
            ExitCode::SUCCESS
        }
        Some(Ok(Err(e))) => {
            eprintln!("halotank demo: the daemon failed: {e:#}");
            ExitCode::from(1)
        }
        Some(Err(e)) => {
            eprintln!("halotank demo: the daemon task failed: {e}");
            ExitCode::from(1)
        }
        None => {
            eprintln!(
                "halotank demo: the daemon did not stop within {} s",
                DAEMON_STOP_TIMEOUT.as_secs()
            );
            ExitCode::from(1)
        }
    };
    print_inspect_hint(&db, &config);
    if matches!(stop, Stop::ProbesEnded(_)) {
        // The probes ending early is a failure of the demo, even when the daemon is fine.
        return Ok(ExitCode::from(1));
    }
    Ok(code)
}

async fn sleep_until_deadline(deadline: Option<Instant>) {
    match deadline {
        Some(at) => tokio::time::sleep_until(at).await,
        None => std::future::pending().await,
    }
}

/// Where the table's readings come from, said once at the start.
fn table_source_note() -> &'static str {
    "table: the newest stored reading of each tank, read back from the demo database every second"
}

/// Rows and counts for the live table, read from the database the daemon writes.
///
/// Before the daemon has created the database (or while it cannot be read) the rows show `waiting`
/// and the counts `n/a`; the probe counts are always live.
fn live_table(config: &Config, clock: &SimClock, stats: &ProbeStats) -> String {
    let simulated_now = stats.simulated_time.unwrap_or_else(|| clock.sim_start());
    let (latest, stored, rejected) = read_back(&config.storage.path);
    let counts = TableCounts {
        stored,
        rejected,
        published: stats.published,
        published_broken: stats.published_broken,
    };
    let heading = TableHeading {
        site: config.site.name.clone(),
        simulated_time: simulated_now,
        speed: clock.speed(),
    };
    render_table(
        &heading,
        &tank_rows(config, &latest, simulated_now, Utc::now()),
        &counts,
    )
}

type ReadBack = (Vec<LatestReading>, Option<u64>, Option<Vec<(String, u64)>>);

/// The newest reading per tank, the stored count and the rejections by reason; empty when unreadable.
fn read_back(db: &Path) -> ReadBack {
    if !db.exists() {
        return (Vec::new(), None, None);
    }
    let Ok(reader) = Reader::open(db) else {
        return (Vec::new(), None, None);
    };
    let latest = reader
        .latest_per_tank()
        .map(|rows| {
            rows.into_iter()
                .map(|row| LatestReading {
                    tank_id: row.tank_id,
                    time: row.time,
                    practical_salinity: Some(row.derived.practical_salinity),
                    temperature_c: row.temperature_c,
                    conductivity_ms_cm: row.conductivity_ms_cm,
                    osmolality_mosm_kg: Some(row.derived.osmolality_mosm_kg),
                })
                .collect()
        })
        .unwrap_or_default();
    let stored = reader
        .reading_counts()
        .ok()
        .map(|counts| counts.iter().map(|c| c.raw_readings + c.folded_readings).sum());
    let rejected = reader
        .rejection_counts_by_reason()
        .ok()
        .map(|counts| counts.into_iter().map(|c| (c.reason, c.count)).collect());
    (latest, stored, rejected)
}

/// A path as one shell word (single-quoted when it holds anything but `[A-Za-z0-9_./-]`).
pub fn shell_word(path: &Path) -> String {
    let text = path.display().to_string();
    if !text.is_empty()
        && text
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || matches!(c, '_' | '.' | '/' | '-'))
    {
        text
    } else {
        format!("'{}'", text.replace('\'', r"'\''"))
    }
}

fn print_inspect_hint(db: &Path, config: &Config) {
    let word = shell_word(db);
    let tank = config
        .tank("smolt-t1")
        .or(config.tanks.first())
        .map_or("smolt-t1", |t| t.id.as_str());
    println!("Database: {}", db.display());
    println!("Inspect it with:");
    println!("  halotank status --db {word}");
    println!("  halotank history --db {word} --tank {tank}");
}

/// Prints tables: redrawn in place on an interactive terminal that understands ANSI cursor movement,
/// else one block after another.
struct Screen {
    redraw: bool,
    last_lines: usize,
}

impl Screen {
    fn new() -> Self {
        let term = std::env::var("TERM").unwrap_or_default();
        Self {
            redraw: std::io::stdout().is_terminal() && !term.is_empty() && term != "dumb",
            last_lines: 0,
        }
    }

    fn show(&mut self, table: &str) {
        let mut out = std::io::stdout().lock();
        if self.redraw && self.last_lines > 0 {
            // Cursor up over the previous table, then clear to the end of the screen.
            let _ = write!(out, "\x1b[{}A\x1b[J", self.last_lines);
        } else if !self.redraw && self.last_lines > 0 {
            let _ = writeln!(out);
        }
        let _ = write!(out, "{table}");
        let _ = out.flush();
        self.last_lines = table.lines().count();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn durations_take_seconds_minutes_hours_and_combinations() {
        assert_eq!(parse_duration("30s"), Ok(Duration::from_secs(30)));
        assert_eq!(parse_duration("5m"), Ok(Duration::from_secs(300)));
        assert_eq!(parse_duration("2h"), Ok(Duration::from_secs(7200)));
        assert_eq!(parse_duration(" 1h30m "), Ok(Duration::from_secs(5400)));
        for bad in [
            "",
            "30",
            "0s",
            "5x",
            "m",
            "1.5h",
            "-5s",
            "99999999999999999999s",
            "9000h",
        ] {
            assert!(parse_duration(bad).is_err(), "{bad}");
        }
        assert!(parse_duration("30").unwrap_err().contains("30s"));
    }

    #[test]
    fn paths_are_quoted_for_the_shell_when_needed() {
        assert_eq!(shell_word(Path::new("halotank-demo.db")), "halotank-demo.db");
        assert_eq!(shell_word(Path::new("/tmp/a b.db")), "'/tmp/a b.db'");
        assert_eq!(shell_word(Path::new("it's.db")), r"'it'\''s.db'");
    }
}
