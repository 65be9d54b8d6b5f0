//! HTTP benchmark: the overview API (`GET /api/tanks`) and a 7-day tank chart
//! (`GET /api/tanks/{id}/history`) of a running daemon with 1,000 tanks and 30 days of one-minute history,
//! while readings arrive over MQTT at 2,000 per second.
//!
//! Run (release build; the embedded broker is used, nothing needs to be running):
//!
//! ```text
//! cargo bench --bench http_overview
//! ```
//!
//! Set-up: a database of 1,000 tanks × 30 days × one reading a minute (43.2 million rows, each with its
//! derived values and tonicity, written in time order through the storage module's own insert, as the
//! daemon writes them) is built once and cached under `target/bench-data/` (`HALOTANK_BENCH_DATA` moves it;
//! it takes about a quarter of an hour and 25 GB). `HALOTANK_BENCH_DAYS` shrinks the history for a quick run.
//! Then the daemon (`daemon::run` in-process) serves it with the HTTP server on loopback, while a publisher
//! sends readings for all tanks at 2,000 per second.
//!
//! Measured, each request on a kept-alive connection, one after another:
//! 1. The overview: N requests to `/api/tanks` (1,000 cards); p50, p99, max.
//! 2. The chart: requests for a random tank's last 7 days (`points=1000`); p50, p99, max.
//!
//! Targets: overview p99 ≤ 20 ms, 7-day chart p99 ≤ 100 ms. A measurement, not a test: it prints a table
//! and never fails on a missed target.
use std::net::SocketAddr;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, AtomicU64, Ordering};
use std::sync::Arc;
use std::time::{Duration, Instant};

use chrono::{DateTime, SecondsFormat, TimeDelta, Utc};
use halotank::mqtt::EmbeddedBroker;
use halotank::seawater::derive::derive_from_conductivity;
use halotank::seawater::practical_salinity::conductivity_from_practical_salinity;
use halotank::species::{tonicity, SpeciesLibrary};
use halotank::storage::insert::insert_reading;
use halotank::storage::schema::open_for_writing;
use halotank::storage::ReadingRow;
use rumqttc::{AsyncClient, MqttOptions, QoS};
use tokio::sync::watch;

const TANKS: usize = 1_000;
const INGEST_PER_S: u64 = 2_000;
const OVERVIEW_REQUESTS: usize = 1_000;
const CHART_REQUESTS: usize = 200;
/// Species the bench tanks keep, in turn (profiles of the built-in library).
const SPECIES: [(&str, f64); 4] = [
    ("atlantic_salmon_smolt", 30.0),
    ("whiteleg_shrimp_pl", 15.0),
    ("pacific_oyster", 28.0),
    ("nile_tilapia", 2.0),
];
const TEMPERATURE_C: f64 = 12.0;
/// Distinct readings kept per species and cycled through (derived values and tonicity are the real ones).
const POOL: usize = 64;

fn main() {
    // The daemon's own log: warnings by default, `RUST_LOG=info` (or finer) for more.
    let filter = tracing_subscriber::EnvFilter::try_from_default_env()
        .unwrap_or_else(|_| tracing_subscriber::EnvFilter::new("warn"));
    tracing_subscriber::fmt()
        .with_env_filter(filter)
        .with_writer(std::io::stderr)
        .init();
    let days: i64 = std::env::var("HALOTANK_BENCH_DAYS")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(30);
    let data_dir = std::env::var("HALOTANK_BENCH_DATA")
        .map(PathBuf::from)
        .unwrap_or_else(|_| PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("target/bench-data"));
    std::fs::create_dir_all(&data_dir).unwrap();
    let db = data_dir.join(format!("http-{TANKS}-tanks-{days}-days.sqlite3"));
    let end = build_history(&db, days);
    // Earlier runs left their load readings after the history: this run's start after the newest.
    let load_base = newest_reading(&db).max(end);

    let runtime = tokio::runtime::Builder::new_multi_thread()
        .enable_all()
        .build()
        .unwrap();
    runtime.block_on(async move {
        let broker = EmbeddedBroker::start().await.unwrap();
        let http = free_port();
        let dir = tempfile::tempdir().unwrap();
        let config_path = dir.path().join("bench.toml");
        let text = config_text(broker.addr(), &db, http);
        let config = halotank::config::parse(&text, &config_path).unwrap();
        let (stop, stop_rx) = watch::channel(false);
        let daemon = tokio::spawn(halotank::daemon::run(config, stop_rx));
        let base = format!("http://{http}");
        wait_for_server(&base).await;

        let running = Arc::new(AtomicBool::new(true));
        let sent = Arc::new(AtomicU64::new(0));
        let publisher = tokio::spawn(publish_load(broker.addr(), running.clone(), sent.clone(), load_base));
        // Let every tank receive a live reading before measuring.
        tokio::time::sleep(Duration::from_secs(3)).await;

        let started = Instant::now();
        let sent_before = sent.load(Ordering::Relaxed);
        let (overview, overview_bytes, cards_live) = {
            let base = base.clone();
            tokio::task::spawn_blocking(move || measure_overview(&base))
                .await
                .unwrap()
        };
        let chart = {
            let base = base.clone();
            tokio::task::spawn_blocking(move || measure_chart(&base, end))
                .await
                .unwrap()
        };
        let elapsed = started.elapsed().as_secs_f64();
        let ingest_rate = (sent.load(Ordering::Relaxed) - sent_before) as f64 / elapsed;
        running.store(false, Ordering::Relaxed);
        let _ = publisher.await;
        let sent_total = sent.load(Ordering::Relaxed);
        stop.send(true).unwrap();
        let _ = daemon.await;
        broker.stop().await;
        let committed = committed_after(&db, load_base);

        println!();
        println!("halotank HTTP benchmark: {TANKS} tanks, {days} days of one-minute history, ingest during the run");
        println!("{:<34} {:>10} {:>10} {:>10} {:>10}", "request", "p50 ms", "p99 ms", "max ms", "target");
        print_row("GET /api/tanks (overview)", &overview, "p99<=20");
        print_row("GET history, 7 days, 1000 pts", &chart, "p99<=100");
        println!(
            "overview answer: {overview_bytes} bytes, {cards_live} of {TANKS} cards with a live reading"
        );
        println!("ingest while measuring: {ingest_rate:.0} readings/s published (target {INGEST_PER_S}/s)");
        println!("load readings committed by the daemon: {committed} of {sent_total} published (QoS 0)");
        println!("database: {}", db.display());
    });
}

/// Builds (or reuses) the history database; returns the time of its newest reading.
fn build_history(db: &Path, days: i64) -> DateTime<Utc> {
    let minutes = days * 24 * 60;
    let expected = minutes as u64 * TANKS as u64;
    let stamp = db.with_extension("end");
    if let (Ok(text), true) = (std::fs::read_to_string(&stamp), db.exists()) {
        if let Ok(end) = DateTime::parse_from_rfc3339(text.trim()) {
            println!(
                "reusing {} ({expected} readings); applying new migrations",
                db.display()
            );
            let t0 = Instant::now();
            drop(open_for_writing(db, Duration::from_secs(10)).unwrap());
            println!("schema up to date in {:.0} s", t0.elapsed().as_secs_f64());
            return end.with_timezone(&Utc);
        }
    }
    let _ = std::fs::remove_file(db);
    let end = Utc::now();
    let start = end - TimeDelta::minutes(minutes);
    let pools = reading_pools();
    let conn = open_for_writing(db, Duration::from_secs(10)).unwrap();
    conn.pragma_update(None, "synchronous", "OFF").unwrap();
    let tank_ids: Vec<String> = (0..TANKS).map(tank_id).collect();
    let topics: Vec<String> = (0..TANKS)
        .map(|i| format!("bench/{}/state", tank_id(i)))
        .collect();
    let t0 = Instant::now();
    let mut written = 0u64;
    for minute in 0..minutes {
        if minute % 60 == 0 {
            if minute > 0 {
                conn.execute_batch("COMMIT").unwrap();
            }
            conn.execute_batch("BEGIN").unwrap();
        }
        let time = start + TimeDelta::minutes(minute);
        for tank in 0..TANKS {
            let pool = &pools[tank % SPECIES.len()];
            let template = &pool[(minute as usize + tank) % POOL];
            let row = ReadingRow {
                tank_id: tank_ids[tank].clone(),
                time,
                source_topic: topics[tank].clone(),
                ..template.clone()
            };
            insert_reading(&conn, &row).unwrap();
            written += 1;
        }
        if minute % (24 * 60) == 0 && minute > 0 {
            let rate = written as f64 / t0.elapsed().as_secs_f64();
            println!(
                "history: day {} of {days}, {written} rows, {rate:.0} rows/s",
                minute / (24 * 60)
            );
        }
    }
    conn.execute_batch("COMMIT").unwrap();
    conn.pragma_update(None, "synchronous", "FULL").unwrap();
    drop(conn);
    std::fs::write(&stamp, end.to_rfc3339()).unwrap();
    println!("history: {written} rows in {:.0} s", t0.elapsed().as_secs_f64());
    end
}

/// Per species, `POOL` readings around its salinity with their real derived values and tonicity.
fn reading_pools() -> Vec<Vec<ReadingRow>> {
    let library = SpeciesLibrary::embedded().unwrap();
    SPECIES
        .iter()
        .map(|(species, sp)| {
            let profile = library.get(species).unwrap();
            (0..POOL)
                .map(|k| {
                    let sp = sp + 0.02 * (k as f64 - POOL as f64 / 2.0);
                    let c = conductivity_from_practical_salinity(sp, TEMPERATURE_C, 0.0).unwrap();
                    let derived = derive_from_conductivity(c, TEMPERATURE_C, 0.0, 0.0).unwrap();
                    let tonicity = tonicity::assess(&derived, TEMPERATURE_C, 0.0, profile).ok();
                    ReadingRow {
                        tank_id: String::new(),
                        time: Utc::now(),
                        source_topic: String::new(),
                        conductivity_reported: c,
                        conductivity_unit: "mS/cm".into(),
                        conductivity_ms_cm: c,
                        temperature_c: TEMPERATURE_C,
                        pressure_dbar: 0.0,
                        derived,
                        tonicity,
                    }
                })
                .collect()
        })
        .collect()
}

/// Time of the newest stored reading.
fn newest_reading(db: &Path) -> DateTime<Utc> {
    let conn = rusqlite::Connection::open_with_flags(db, rusqlite::OpenFlags::SQLITE_OPEN_READ_ONLY).unwrap();
    let ms: i64 = conn
        .query_row("SELECT COALESCE(MAX(time_ms), 0) FROM readings", [], |r| r.get(0))
        .unwrap();
    DateTime::from_timestamp_millis(ms).unwrap()
}

/// Readings the load added (stamped after `after`).
fn committed_after(db: &Path, end: DateTime<Utc>) -> u64 {
    let conn = rusqlite::Connection::open_with_flags(db, rusqlite::OpenFlags::SQLITE_OPEN_READ_ONLY).unwrap();
    conn.query_row(
        "SELECT COUNT(*) FROM readings WHERE time_ms > ?1",
        [end.timestamp_millis()],
        |r| r.get::<_, i64>(0),
    )
    .map_or(0, |n| n as u64)
}

fn tank_id(i: usize) -> String {
    format!("t{i:04}")
}

fn config_text(broker: SocketAddr, db: &Path, http: SocketAddr) -> String {
    let mut text = format!(
        "[site]\nname = \"Brannock Sound Hatchery bench\"\n[broker]\nhost = \"{}\"\nport = {}\n\
         client_id = \"halotank-http-bench\"\n[storage]\npath = \"{}\"\nretention_days = 3650\n\
         [publish]\ntopic_prefix = \"bench-out\"\n[http]\nbind = \"{http}\"\n",
        broker.ip(),
        broker.port(),
        db.display()
    );
    for i in 0..TANKS {
        let (species, _) = SPECIES[i % SPECIES.len()];
        text.push_str(&format!(
            "[[tanks]]\nid = \"{id}\"\nname = \"Bench tank {i}\"\nvolume_l = 1000\nspecies = \"{species}\"\n\
             expected_interval_s = 60\n[tanks.topics]\ncombined = \"bench/{id}/state\"\n",
            id = tank_id(i)
        ));
    }
    text
}

fn free_port() -> SocketAddr {
    let listener = std::net::TcpListener::bind("127.0.0.1:0").unwrap();
    listener.local_addr().unwrap()
}

async fn wait_for_server(base: &str) {
    let url = format!("{base}/healthz");
    for _ in 0..600 {
        let url = url.clone();
        let up = tokio::task::spawn_blocking(move || ureq::get(&url).call().is_ok())
            .await
            .unwrap_or(false);
        if up {
            return;
        }
        tokio::time::sleep(Duration::from_millis(100)).await;
    }
    panic!("the daemon's HTTP server did not come up");
}

/// Publishes readings for every tank in turn at `INGEST_PER_S`, times after the history's end.
async fn publish_load(
    broker: SocketAddr,
    running: Arc<AtomicBool>,
    sent: Arc<AtomicU64>,
    end: DateTime<Utc>,
) {
    let mut options = MqttOptions::new("halotank-http-bench-load", broker.ip().to_string(), broker.port());
    options.set_keep_alive(Duration::from_secs(30));
    options.set_inflight(1000);
    let (client, mut eventloop) = AsyncClient::new(options, 10_000);
    let pump = tokio::spawn(async move { while eventloop.poll().await.is_ok() {} });
    let pools = reading_pools();
    let period = Duration::from_secs_f64(1.0 / INGEST_PER_S as f64 * 100.0);
    let mut tick = tokio::time::interval(period);
    let mut n: u64 = 0;
    while running.load(Ordering::Relaxed) {
        tick.tick().await;
        for _ in 0..100 {
            let tank = (n as usize) % TANKS;
            let c = pools[tank % SPECIES.len()][(n as usize) % POOL].conductivity_ms_cm;
            let time = end + TimeDelta::milliseconds(1 + n as i64);
            let payload = format!(
                "{{\"conductivity\": {c}, \"temperature\": {TEMPERATURE_C}, \"time\": \"{}\"}}",
                time.to_rfc3339_opts(SecondsFormat::Millis, true)
            );
            let topic = format!("bench/{}/state", tank_id(tank));
            if client
                .publish(topic, QoS::AtMostOnce, false, payload)
                .await
                .is_err()
            {
                break;
            }
            n += 1;
            sent.store(n, Ordering::Relaxed);
        }
    }
    let _ = client.disconnect().await;
    pump.abort();
}

struct Latencies {
    ms: Vec<f64>,
}

impl Latencies {
    fn quantile(&self, q: f64) -> f64 {
        let mut v = self.ms.clone();
        v.sort_by(f64::total_cmp);
        let i = ((v.len() as f64 - 1.0) * q).round() as usize;
        v.get(i).copied().unwrap_or(f64::NAN)
    }
}

fn print_row(name: &str, l: &Latencies, target: &str) {
    println!(
        "{name:<34} {:>10.2} {:>10.2} {:>10.2} {:>10}",
        l.quantile(0.5),
        l.quantile(0.99),
        l.quantile(1.0),
        target
    );
}

fn agent() -> ureq::Agent {
    ureq::Agent::config_builder()
        .timeout_global(Some(Duration::from_secs(30)))
        .build()
        .into()
}

/// One GET on a kept-alive connection: milliseconds taken and the body.
fn timed_get(agent: &ureq::Agent, url: &str) -> (f64, String) {
    let t = Instant::now();
    let body = agent
        .get(url)
        .call()
        .unwrap()
        .body_mut()
        .read_to_string()
        .unwrap();
    (t.elapsed().as_secs_f64() * 1e3, body)
}

fn measure_overview(base: &str) -> (Latencies, usize, usize) {
    let agent = agent();
    let url = format!("{base}/api/tanks");
    let first = agent
        .get(&url)
        .call()
        .unwrap()
        .body_mut()
        .read_to_string()
        .unwrap();
    let json: serde_json::Value = serde_json::from_str(&first).unwrap();
    let live = json["tanks"]
        .as_array()
        .map_or(0, |t| t.iter().filter(|c| !c["latest"].is_null()).count());
    let mut ms = Vec::with_capacity(OVERVIEW_REQUESTS);
    for _ in 0..OVERVIEW_REQUESTS {
        let (took, body) = timed_get(&agent, &url);
        ms.push(took);
        assert!(
            body.len() > TANKS * 100,
            "overview answer too short: {} bytes",
            body.len()
        );
    }
    (Latencies { ms }, first.len(), live)
}

fn measure_chart(base: &str, end: DateTime<Utc>) -> Latencies {
    let agent = agent();
    let from = (end - TimeDelta::days(7)).to_rfc3339_opts(SecondsFormat::Secs, true);
    let to = end.to_rfc3339_opts(SecondsFormat::Secs, true);
    let mut ms = Vec::with_capacity(CHART_REQUESTS);
    let mut state: u64 = 0x9E37_79B9_7F4A_7C15;
    for _ in 0..CHART_REQUESTS {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        let tank = tank_id((state % TANKS as u64) as usize);
        let url = format!("{base}/api/tanks/{tank}/history?from={from}&to={to}&points=1000");
        let (took, body) = timed_get(&agent, &url);
        ms.push(took);
        assert!(body.contains("\"points\""), "chart answer without points");
    }
    Latencies { ms }
}
