//! Daemon benchmark through a real Mosquitto: committed readings per second against the broker's own
//! ceiling, publish-to-commit latency at a steady rate, and peak memory with 1,000 configured tanks.
//!
//! Run (release build; needs a Mosquitto allowing anonymous clients):
//!
//! ```text
//! HALOTANK_BENCH_MQTT=127.0.0.1:1883 HALOTANK_BENCH_N=50000 cargo bench --bench daemon_throughput
//! ```
//!
//! `HALOTANK_BENCH_MQTT` defaults to `127.0.0.1:1883`, `HALOTANK_BENCH_N` to 50,000. What is measured:
//! 1. Throughput, at QoS 0 and at QoS 1: the same stream of N combined-JSON readings (10 tanks, distinct
//!    times) is published as fast as the broker takes it, twice: once to a plain rumqttc subscriber that
//!    only counts (the ceiling: what this broker delivers on this machine), once to the daemon
//!    (`daemon::run` in-process, temporary database, the shipped defaults for batching). Rate = readings
//!    / (last delivered or committed − first published). Commits are seen by polling `MAX(id)` of the
//!    readings table every 2 ms.
//! 2. Latency: readings paced at 2,000/s for 5 s; each reading's time encodes its sequence number and the
//!    publisher notes when it handed the reading to the client; a poller reading new rows every 2 ms
//!    gives commit-seen − published (an over-estimate by up to the poll interval). p50, p99, max.
//! 3. Memory: the `halotank run` binary with 1,000 tanks configured takes 20,000 readings spread over all
//!    tanks; peak resident set (`VmHWM` in `/proc/PID/status`) afterwards.
//!
//! Targets: daemon ≥ 80 % of the ceiling at QoS 0 and QoS 1, p99 ≤ 250 ms, peak RSS ≤ 40 MB. This is a
//! measurement, not a test: it prints a table and never fails on a missed target.
use std::net::SocketAddr;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::Arc;
use std::time::{Duration, Instant};

use chrono::{DateTime, SecondsFormat, Utc};
use rumqttc::{AsyncClient, Event, Incoming, MqttOptions, QoS};
use rusqlite::{Connection, OpenFlags};
use tokio::sync::watch;

const THROUGHPUT_TANKS: usize = 10;
const PACED_RATE_PER_S: u64 = 2_000;
const PACED_SECONDS: u64 = 5;
const RSS_TANKS: usize = 1_000;
const RSS_READINGS: usize = 20_000;
/// A run ends when everything arrived, or when nothing new arrived for this long.
const STALL: Duration = Duration::from_secs(5);

fn main() {
    let spec = std::env::var("HALOTANK_BENCH_MQTT").unwrap_or_else(|_| "127.0.0.1:1883".to_string());
    let n: usize = std::env::var("HALOTANK_BENCH_N")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(50_000);
    let runtime = tokio::runtime::Builder::new_multi_thread()
        .enable_all()
        .build()
        .unwrap();
    runtime.block_on(async move {
        let broker: SocketAddr = match tokio::net::lookup_host(spec.as_str())
            .await
            .ok()
            .and_then(|mut a| a.next())
        {
            Some(a) => a,
            None => {
                eprintln!("HALOTANK_BENCH_MQTT={spec:?} does not resolve; nothing measured");
                return;
            }
        };
        if tokio::net::TcpStream::connect(broker).await.is_err() {
            eprintln!("no MQTT broker at {broker} (set HALOTANK_BENCH_MQTT=host:port); nothing measured");
            return;
        }
        println!("halotank daemon benchmark: broker {broker}, N = {n}");
        let mut rows = Vec::new();
        for qos in [QoS::AtMostOnce, QoS::AtLeastOnce] {
            let ceiling = plain_subscriber_run(broker, qos, n).await;
            let daemon = daemon_run(broker, qos, n).await;
            rows.push((qos, ceiling, daemon));
        }
        let latency = latency_run(broker).await;
        let rss = rss_run(broker).await;

        println!();
        println!(
            "{:<38} {:>16} {:>16} {:>8} {:>10}",
            "measure", "plain subscriber", "daemon", "ratio", "target"
        );
        for (qos, ceiling, daemon) in &rows {
            println!(
                "{:<38} {:>16.0} {:>16.0} {:>7.1}% {:>10}",
                format!("readings/s, QoS {}", *qos as u8),
                ceiling.rate(),
                daemon.rate(),
                100.0 * daemon.rate() / ceiling.rate(),
                ">= 80%"
            );
            println!(
                "{:<38} {:>16} {:>16}",
                "  delivered / committed of N",
                format!("{}/{n}", ceiling.count),
                format!("{}/{n}", daemon.count)
            );
        }
        println!(
            "{:<38} {:>16} {:>16.1} {:>8} {:>10}",
            format!("p99 publish->commit @{PACED_RATE_PER_S}/s, ms"),
            "",
            latency.p99_ms,
            "",
            "<= 250"
        );
        println!(
            "{:<38} {:>16} {:>16}",
            "  p50 / max, ms; committed of sent",
            "",
            format!(
                "{:.1} / {:.1}; {}/{}",
                latency.p50_ms, latency.max_ms, latency.samples, latency.sent
            )
        );
        println!(
            "{:<38} {:>16} {:>16.1} {:>8} {:>10}",
            format!("peak RSS (VmHWM), {RSS_TANKS} tanks, MiB"),
            "",
            rss.peak_mb,
            "",
            "<= 40"
        );
        println!(
            "{:<38} {:>16} {:>16}",
            "  readings committed of sent",
            "",
            format!("{}/{RSS_READINGS}", rss.committed)
        );
    });
}

struct Throughput {
    count: usize,
    elapsed: Duration,
}

impl Throughput {
    fn rate(&self) -> f64 {
        self.count as f64 / self.elapsed.as_secs_f64().max(1e-9)
    }
}

fn tag(label: &str) -> String {
    format!("bench-{label}-{:08x}", rand::random::<u32>())
}

fn rfc3339(time: DateTime<Utc>) -> String {
    time.to_rfc3339_opts(SecondsFormat::Millis, true)
}

/// Sequence `i` as a reading time: whole milliseconds after an instant an hour ago (never "future").
fn reading_time(base_ms: i64, i: usize) -> DateTime<Utc> {
    DateTime::from_timestamp_millis(base_ms + i as i64).unwrap_or_default()
}

fn base_ms() -> i64 {
    (Utc::now().timestamp() - 3600) * 1000
}

/// The stream: reading `i` goes to tank `i % tanks` as combined JSON.
fn stream(root: &str, tanks: usize, n: usize, base_ms: i64) -> Vec<(String, String)> {
    (0..n)
        .map(|i| {
            let c = 20.0 + (i % 300) as f64 * 0.1;
            let payload = format!(
                r#"{{"conductivity": {c}, "temperature": 12.5, "time": "{}"}}"#,
                rfc3339(reading_time(base_ms, i))
            );
            (format!("{root}/t{:04}/state", i % tanks), payload)
        })
        .collect()
}

fn options(broker: SocketAddr, id: &str) -> MqttOptions {
    let mut o = MqttOptions::new(id, broker.ip().to_string(), broker.port());
    o.set_keep_alive(Duration::from_secs(10))
        .set_inflight(100)
        .set_max_packet_size(1 << 20, 1 << 20);
    o
}

/// Publishes every message; `pace` spreads them at that rate; `stamps[i]` gets the hand-over time
/// (ns after `origin`). Returns once the broker acked (QoS 1) or the client flushed (QoS 0) everything.
async fn publish(
    broker: SocketAddr,
    qos: QoS,
    messages: Vec<(String, String)>,
    pace: Option<u64>,
    stamps: Option<(Arc<Vec<AtomicU64>>, Instant)>,
) {
    let (client, mut eventloop) = AsyncClient::new(options(broker, &tag("pub")), 1024);
    let n = messages.len();
    let driver = tokio::spawn(async move {
        let mut acked = 0usize;
        loop {
            match eventloop.poll().await {
                Ok(Event::Incoming(Incoming::PubAck(_))) => {
                    acked += 1;
                    if acked == n {
                        break;
                    }
                }
                Ok(Event::Outgoing(rumqttc::Outgoing::Disconnect)) => break,
                Ok(_) => {}
                Err(e) => {
                    eprintln!("publisher: {e}");
                    break;
                }
            }
        }
    });
    let mut tick = pace.map(|rate| {
        let mut t = tokio::time::interval(Duration::from_micros(1_000_000 / rate));
        t.set_missed_tick_behavior(tokio::time::MissedTickBehavior::Burst);
        t
    });
    for (i, (topic, payload)) in messages.into_iter().enumerate() {
        if let Some(t) = tick.as_mut() {
            t.tick().await;
        }
        if let Some((stamps, origin)) = &stamps {
            stamps[i].store(origin.elapsed().as_nanos() as u64, Ordering::Relaxed);
        }
        if client.publish(topic, qos, false, payload).await.is_err() {
            break;
        }
    }
    if qos == QoS::AtMostOnce {
        let _ = client.disconnect().await;
    }
    let _ = tokio::time::timeout(Duration::from_secs(120), driver).await;
}

async fn plain_subscriber_run(broker: SocketAddr, qos: QoS, n: usize) -> Throughput {
    let root = tag("ceiling");
    let (client, mut eventloop) = AsyncClient::new(options(broker, &tag("sub")), 64);
    client
        .subscribe(format!("{root}/#"), QoS::AtLeastOnce)
        .await
        .unwrap();
    loop {
        if let Ok(Event::Incoming(Incoming::SubAck(_))) = eventloop.poll().await {
            break;
        }
    }
    let messages = stream(&root, THROUGHPUT_TANKS, n, base_ms());
    let start = Instant::now();
    let publisher = tokio::spawn(publish(broker, qos, messages, None, None));
    let mut count = 0usize;
    let mut last = start;
    while count < n {
        match tokio::time::timeout(STALL, eventloop.poll()).await {
            Ok(Ok(Event::Incoming(Incoming::Publish(_)))) => {
                count += 1;
                last = Instant::now();
            }
            Ok(Ok(_)) => {}
            Ok(Err(e)) => {
                eprintln!("plain subscriber: {e}");
                break;
            }
            Err(_) => break,
        }
    }
    let _ = publisher.await;
    let _ = client.disconnect().await;
    let _ = tokio::time::timeout(Duration::from_secs(2), async {
        while eventloop.poll().await.is_ok() {}
    })
    .await;
    Throughput {
        count,
        elapsed: last - start,
    }
}

fn config_text(broker: SocketAddr, root: &str, db: &Path, client_id: &str, tanks: usize) -> String {
    let mut text = format!(
        r#"[site]
name = "Brannock Sound Hatchery bench"
[broker]
host = "{host}"
port = {port}
client_id = "{client_id}"
[storage]
path = "{db}"
[publish]
topic_prefix = "{root}-out"
[http]
bind = "127.0.0.1:0"
"#,
        host = broker.ip(),
        port = broker.port(),
        db = db.display()
    );
    for i in 0..tanks {
        text.push_str(&format!(
            "[[tanks]]\nid = \"t{i:04}\"\nname = \"Bench tank {i}\"\nvolume_l = 1000\n\
             [tanks.topics]\ncombined = \"{root}/t{i:04}/state\"\n"
        ));
    }
    text
}

fn open_db(db: &Path) -> Option<Connection> {
    if !db.exists() {
        return None;
    }
    Connection::open_with_flags(db, OpenFlags::SQLITE_OPEN_READ_ONLY).ok()
}

fn max_id(conn: &Connection) -> usize {
    conn.query_row("SELECT COALESCE(MAX(id), 0) FROM readings", [], |r| {
        r.get::<_, i64>(0)
    })
    .map_or(0, |v| v as usize)
}

/// Publishes a reading of tank 0 (always the same time: stored once) until it is stored.
async fn warm_up(broker: SocketAddr, root: &str, db: &Path) -> usize {
    let warm = vec![(
        format!("{root}/t0000/state"),
        r#"{"conductivity": 30.0, "temperature": 10.0, "time": "2024-01-01T00:00:00Z"}"#.to_string(),
    )];
    let deadline = Instant::now() + Duration::from_secs(30);
    loop {
        publish(broker, QoS::AtLeastOnce, warm.clone(), None, None).await;
        for _ in 0..10 {
            tokio::time::sleep(Duration::from_millis(20)).await;
            if let Some(n) = open_db(db).map(|c| max_id(&c)).filter(|&n| n > 0) {
                return n;
            }
        }
        assert!(
            Instant::now() < deadline,
            "the daemon never stored the warm-up reading"
        );
    }
}

struct InProcess {
    stop: watch::Sender<bool>,
    task: tokio::task::JoinHandle<anyhow::Result<halotank::daemon::RunSummary>>,
    _dir: tempfile::TempDir,
    db: PathBuf,
    root: String,
}

async fn start_daemon(broker: SocketAddr, label: &str) -> InProcess {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("bench.sqlite3");
    let root = tag(label);
    let origin = dir.path().join("halotank.toml");
    let text = config_text(broker, &root, &db, &format!("{root}-daemon"), THROUGHPUT_TANKS);
    let config = halotank::config::parse(&text, &origin).unwrap();
    let (stop, rx) = watch::channel(false);
    let task = tokio::spawn(halotank::daemon::run(config, rx));
    warm_up(broker, &root, &db).await;
    InProcess {
        stop,
        task,
        _dir: dir,
        db,
        root,
    }
}

impl InProcess {
    async fn stop(self) {
        self.stop.send_replace(true);
        match self.task.await {
            Ok(Ok(_)) => {}
            Ok(Err(e)) => eprintln!("daemon: {e:#}"),
            Err(e) => eprintln!("daemon task: {e}"),
        }
    }
}

async fn daemon_run(broker: SocketAddr, qos: QoS, n: usize) -> Throughput {
    let daemon = start_daemon(broker, "daemon").await;
    let conn = open_db(&daemon.db).unwrap();
    let before = max_id(&conn);
    let messages = stream(&daemon.root, THROUGHPUT_TANKS, n, base_ms());
    let start = Instant::now();
    let publisher = tokio::spawn(publish(broker, qos, messages, None, None));
    let mut last = start;
    let mut count = 0;
    while count < n {
        tokio::time::sleep(Duration::from_millis(2)).await;
        let now_count = max_id(&conn) - before;
        if now_count > count {
            count = now_count;
            last = Instant::now();
        } else if last.elapsed() > STALL {
            break;
        }
    }
    let _ = publisher.await;
    daemon.stop().await;
    Throughput {
        count,
        elapsed: last - start,
    }
}

struct Latency {
    p50_ms: f64,
    p99_ms: f64,
    max_ms: f64,
    samples: usize,
    sent: usize,
}

async fn latency_run(broker: SocketAddr) -> Latency {
    let daemon = start_daemon(broker, "latency").await;
    let n = (PACED_RATE_PER_S * PACED_SECONDS) as usize;
    let base = base_ms();
    let messages = stream(&daemon.root, THROUGHPUT_TANKS, n, base);
    let stamps: Arc<Vec<AtomicU64>> = Arc::new((0..n).map(|_| AtomicU64::new(u64::MAX)).collect());
    let origin = Instant::now();
    let db = daemon.db.clone();
    let poll_stamps = stamps.clone();
    let poller = std::thread::spawn(move || {
        let conn = open_db(&db).unwrap();
        let mut last_id = max_id(&conn) as i64;
        let mut latencies = Vec::with_capacity(n);
        let mut idle_since = Instant::now();
        let mut stmt = conn
            .prepare("SELECT id, time_ms FROM readings WHERE id > ?1 ORDER BY id")
            .unwrap();
        while latencies.len() < n && idle_since.elapsed() < STALL + Duration::from_secs(PACED_SECONDS) {
            let seen_ns = origin.elapsed().as_nanos() as u64;
            let rows: Vec<(i64, i64)> = stmt
                .query_map([last_id], |r| Ok((r.get(0)?, r.get(1)?)))
                .unwrap()
                .map(|r| r.unwrap())
                .collect();
            if !rows.is_empty() {
                idle_since = Instant::now();
            }
            for (id, time_ms) in rows {
                last_id = id;
                let i = (time_ms - base) as usize;
                if let Some(sent) = poll_stamps.get(i).map(|s| s.load(Ordering::Relaxed)) {
                    if sent != u64::MAX {
                        latencies.push(seen_ns.saturating_sub(sent) as f64 / 1e6);
                    }
                }
            }
            std::thread::sleep(Duration::from_millis(2));
        }
        latencies
    });
    publish(
        broker,
        QoS::AtLeastOnce,
        messages,
        Some(PACED_RATE_PER_S),
        Some((stamps, origin)),
    )
    .await;
    let mut latencies = tokio::task::spawn_blocking(move || poller.join().unwrap())
        .await
        .unwrap();
    daemon.stop().await;
    latencies.sort_by(f64::total_cmp);
    let at = |q: f64| {
        if latencies.is_empty() {
            f64::NAN
        } else {
            latencies[((latencies.len() as f64 * q).ceil() as usize).clamp(1, latencies.len()) - 1]
        }
    };
    Latency {
        p50_ms: at(0.50),
        p99_ms: at(0.99),
        max_ms: latencies.last().copied().unwrap_or(f64::NAN),
        samples: latencies.len(),
        sent: n,
    }
}

struct Rss {
    peak_mb: f64,
    committed: usize,
}

fn vm_hwm_kb(pid: u32) -> Option<u64> {
    let status = std::fs::read_to_string(format!("/proc/{pid}/status")).ok()?;
    status
        .lines()
        .find(|l| l.starts_with("VmHWM:"))?
        .split_whitespace()
        .nth(1)?
        .parse()
        .ok()
}

async fn rss_run(broker: SocketAddr) -> Rss {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("rss.sqlite3");
    let root = tag("rss");
    let config = dir.path().join("halotank.toml");
    std::fs::write(
        &config,
        config_text(broker, &root, &db, &format!("{root}-daemon"), RSS_TANKS),
    )
    .unwrap();
    let mut child = std::process::Command::new(env!("CARGO_BIN_EXE_halotank"))
        .arg("run")
        .arg("--config")
        .arg(&config)
        .env("RUST_LOG", "warn")
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .expect("start halotank run");
    let before = warm_up(broker, &root, &db).await;
    let messages = stream(&root, RSS_TANKS, RSS_READINGS, base_ms());
    publish(broker, QoS::AtLeastOnce, messages, None, None).await;
    let conn = open_db(&db).unwrap();
    let mut committed = 0;
    let mut last = Instant::now();
    while committed < RSS_READINGS && last.elapsed() < STALL {
        tokio::time::sleep(Duration::from_millis(20)).await;
        let now = max_id(&conn) - before;
        if now > committed {
            committed = now;
            last = Instant::now();
        }
    }
    let peak_kb = vm_hwm_kb(child.id()).unwrap_or(0);
    let _ = std::process::Command::new("kill")
        .arg("-TERM")
        .arg(child.id().to_string())
        .status();
    let deadline = Instant::now() + Duration::from_secs(20);
    while child.try_wait().ok().flatten().is_none() && Instant::now() < deadline {
        tokio::time::sleep(Duration::from_millis(20)).await;
    }
    let _ = child.kill();
    let _ = child.wait();
    Rss {
        peak_mb: peak_kb as f64 / 1024.0,
        committed,
    }
}
