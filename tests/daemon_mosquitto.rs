//! The daemon against Mosquitto, fed by `mosquitto_pub` (a client written by others): all three payload
//! formats through to stored rows, and a broker restart mid-stream.
//!
//! Runs only when `HALOTANK_TEST_MQTT=host:port` names a Mosquitto allowing anonymous clients (`.ci/run`
//! starts one); the restart test also needs `HALOTANK_TEST_MOSQUITTO_BIN` (the broker binary) to start a
//! private broker with persistence from `tests/mosquitto/test.conf.in`. Otherwise each test prints why it
//! is skipped. Client ids and topics are unique per test, so the tests can share a broker in parallel.

mod daemon_support;
mod mqtt_support;

use std::collections::BTreeSet;
use std::io::{BufRead, BufReader, Write};
use std::net::SocketAddr;
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::sync::{Arc, Mutex};
use std::time::Duration;

use daemon_support::*;
use halotank::storage::Reader;
use mqtt_support::unique;

const TEST_LIMIT: Duration = Duration::from_secs(180);

/// Runs `mosquitto_pub` to completion with `lines` on stdin (`-l`) or with `-m message`.
fn mosquitto_pub(broker: SocketAddr, topic: &str, message: Option<&str>, lines: &[String]) {
    let mut cmd = Command::new("mosquitto_pub");
    cmd.args(["-h", &broker.ip().to_string(), "-p", &broker.port().to_string()])
        .args(["-q", "1", "-t", topic, "-i", &unique("mosq-pub")]);
    match message {
        Some(m) => {
            cmd.args(["-m", m]);
        }
        None => {
            cmd.arg("-l");
        }
    }
    let mut child = cmd
        .stdin(Stdio::piped())
        .spawn()
        .expect("mosquitto_pub (mosquitto-clients) on PATH");
    {
        let mut stdin = child.stdin.take().unwrap();
        for line in lines {
            writeln!(stdin, "{line}").unwrap();
        }
    }
    let status = child.wait().unwrap();
    assert!(status.success(), "mosquitto_pub exited with {status:?}");
}

/// Publishes the warm-up reading until the daemon has stored it (its subscription is then live).
async fn warm_up(broker: SocketAddr, site: &Site) {
    let deadline = tokio::time::Instant::now() + DEADLINE;
    while readings_count(&site.db) == 0 {
        assert!(
            tokio::time::Instant::now() < deadline,
            "daemon never stored the warm-up reading"
        );
        let (warm, topic) = (json_payload(30.0, 10.0, past_time(0)), site.json_topic());
        tokio::task::spawn_blocking(move || mosquitto_pub(broker, &topic, Some(&warm), &[]))
            .await
            .unwrap();
        tokio::time::sleep(Duration::from_millis(50)).await;
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn mosquitto_pub_in_three_formats_is_stored() {
    let Some(broker) = mosquitto_from_env("mosquitto_pub_in_three_formats_is_stored").await else {
        return;
    };
    tokio::time::timeout(TEST_LIMIT, async {
        let site = Site::new("mosq-formats", broker, &SiteOptions::default());
        let daemon = InProcessDaemon::start(&site);
        warm_up(broker, &site).await;

        // Combined JSON, one reading per line.
        let json: Vec<(f64, f64)> = (0..50)
            .map(|i| (30.0 + f64::from(i) * 0.2, 9.0 + f64::from(i) * 0.1))
            .collect();
        let lines: Vec<String> = json
            .iter()
            .enumerate()
            .map(|(i, &(c, t))| json_payload(c, t, past_time(1_000 * (i as i64 + 1))))
            .collect();
        mosquitto_pub(broker, &site.json_topic(), None, &lines);
        // SenML packs (conductivity in S/m), one per line.
        let senml: Vec<(f64, f64)> = (0..50)
            .map(|i| (2.0 + f64::from(i) * 0.03, 25.0 + f64::from(i) * 0.05))
            .collect();
        let lines: Vec<String> = senml
            .iter()
            .enumerate()
            .map(|(i, &(c, t))| senml_payload(c, t, past_time(1_000 * (i as i64 + 1))))
            .collect();
        mosquitto_pub(broker, &site.senml_topic(), None, &lines);
        wait_for_readings(&site.db, 101).await;
        // Bare numbers: a temperature, then conductivities one at a time (their time is their receipt).
        mosquitto_pub(broker, &site.number_temp_topic(), Some("7.5"), &[]);
        let numbers = [0.31, 0.33, 0.35];
        for (i, c) in numbers.iter().enumerate() {
            mosquitto_pub(broker, &site.number_ec_topic(), Some(&c.to_string()), &[]);
            wait_for_readings(&site.db, 102 + i as u64).await;
        }

        let reader = Reader::open(&site.db).unwrap();
        let json_rows = reader.history(JSON_TANK, Some(past_time(1)), None).unwrap();
        assert_eq!(json_rows.len(), json.len());
        for (i, (row, &(c, t))) in json_rows.iter().zip(&json).enumerate() {
            assert_eq!(row.time, past_time(1_000 * (i as i64 + 1)));
            assert_eq!((row.conductivity_ms_cm, row.temperature_c), (c, t));
            assert_derived_eq(&row.derived, &expected_derived(c, t), &format!("JSON line {i}"));
        }
        let senml_rows = reader.history(SENML_TANK, None, None).unwrap();
        assert_eq!(senml_rows.len(), senml.len());
        for (i, (row, &(c, t))) in senml_rows.iter().zip(&senml).enumerate() {
            assert_eq!(row.time, past_time(1_000 * (i as i64 + 1)));
            assert_eq!(row.conductivity_reported, c);
            assert_eq!(row.temperature_c, t);
            // 1 S/m = 10 mS/cm (SI).
            assert_derived_eq(
                &row.derived,
                &expected_derived(c * 10.0, t),
                &format!("SenML line {i}"),
            );
        }
        let number_rows = reader.history(NUMBER_TANK, None, None).unwrap();
        assert_eq!(number_rows.len(), numbers.len());
        for (row, &c) in number_rows.iter().zip(&numbers) {
            assert_eq!((row.conductivity_ms_cm, row.temperature_c), (c, 7.5));
            assert_derived_eq(&row.derived, &expected_derived(c, 7.5), "bare number");
        }

        let summary = daemon.stop().await;
        assert_eq!(summary.readings_stored, 1 + 50 + 50 + 3, "{summary:?}");
        assert_eq!(summary.rejected, 0, "{summary:?}");
        drop_session(broker, &site.client_id).await;
    })
    .await
    .expect("test exceeded its time limit");
}

/// A Mosquitto of our own on a fixed port and directory (persistence on), run in the foreground.
struct PrivateMosquitto {
    bin: PathBuf,
    conf: PathBuf,
    port: u16,
    child: Option<Child>,
}

impl PrivateMosquitto {
    fn new(bin: PathBuf, dir: &Path) -> Self {
        let port = std::net::TcpListener::bind("127.0.0.1:0")
            .unwrap()
            .local_addr()
            .unwrap()
            .port();
        let template = std::fs::read_to_string(
            Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/mosquitto/test.conf.in"),
        )
        .unwrap();
        let text = template
            .replace("@PORT@", &port.to_string())
            .replace("@DIR@", &dir.display().to_string());
        let conf = dir.join("mosquitto.conf");
        std::fs::write(&conf, text).unwrap();
        Self {
            bin,
            conf,
            port,
            child: None,
        }
    }

    fn addr(&self) -> SocketAddr {
        SocketAddr::from(([127, 0, 0, 1], self.port))
    }

    async fn start(&mut self) {
        let child = Command::new(&self.bin)
            .arg("-c")
            .arg(&self.conf)
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .spawn()
            .expect("start mosquitto");
        self.child = Some(child);
        let addr = self.addr();
        poll_until("the private Mosquitto to listen", || {
            std::net::TcpStream::connect_timeout(&addr, Duration::from_millis(100))
                .ok()
                .map(|_| ())
        })
        .await;
    }

    /// SIGTERM (Mosquitto saves its persistence file on the way out) and wait for the exit.
    async fn stop(&mut self) {
        let mut child = self.child.take().expect("running");
        send_sigterm(child.id());
        poll_until("the private Mosquitto to exit", || {
            child.try_wait().unwrap().map(|_| ())
        })
        .await;
    }
}

impl Drop for PrivateMosquitto {
    fn drop(&mut self) {
        if let Some(mut child) = self.child.take() {
            let _ = child.kill();
            let _ = child.wait();
        }
    }
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn broker_restart_mid_stream_loses_nothing_the_broker_acked() {
    const TEST: &str = "broker_restart_mid_stream_loses_nothing_the_broker_acked";
    if mosquitto_from_env(TEST).await.is_none() {
        return;
    }
    let Some(bin) = std::env::var_os("HALOTANK_TEST_MOSQUITTO_BIN").map(PathBuf::from) else {
        eprintln!("{TEST}: skipped: set HALOTANK_TEST_MOSQUITTO_BIN to the mosquitto binary");
        return;
    };
    tokio::time::timeout(TEST_LIMIT, async {
        let broker_dir = tempfile::tempdir().unwrap();
        let mut mosquitto = PrivateMosquitto::new(bin, broker_dir.path());
        mosquitto.start().await;
        let broker = mosquitto.addr();
        // A deliberately slow consumer, so readings are waiting at the broker when it stops: the daemon's
        // window (1000) is larger than Mosquitto's in-flight limit (100), so a batch never fills and is
        // committed by its 300 ms timer, 100 readings at a time.
        let slow = SiteOptions {
            max_inflight: 1000,
            flush_rows: 1000,
            flush_ms: 300,
            ..SiteOptions::default()
        };
        let site = Site::new("mosq-restart", broker, &slow);
        let daemon = InProcessDaemon::start(&site);
        warm_up(broker, &site).await;

        // One mosquitto_pub streams every line; `-d` prints each PUBACK's message id, and libmosquitto
        // numbers messages 1, 2, 3, ... in the order the lines are read, so mid k is line k - 1.
        const LINES: usize = 3_000;
        let lines: Vec<String> = (0..LINES)
            .map(|i| json_payload(28.0 + (i % 100) as f64 * 0.1, 13.0, past_time(10_000 + i as i64)))
            .collect();
        let mut publisher = Command::new("mosquitto_pub")
            .args(["-d", "-h", "127.0.0.1", "-p", &mosquitto.port.to_string()])
            .args([
                "-q",
                "1",
                "-l",
                "-t",
                &site.json_topic(),
                "-i",
                &unique("mosq-stream"),
            ])
            .stdin(Stdio::piped())
            .stdout(Stdio::piped())
            .stderr(Stdio::null())
            .spawn()
            .expect("mosquitto_pub on PATH");
        let acked: Arc<Mutex<BTreeSet<usize>>> = Arc::default();
        let reader_thread = {
            let stdout = publisher.stdout.take().unwrap();
            let acked = acked.clone();
            std::thread::spawn(move || {
                for line in BufReader::new(stdout).lines().map_while(Result::ok) {
                    if let Some(rest) = line.split("received PUBACK (Mid: ").nth(1) {
                        let mid: usize = rest.split(',').next().unwrap().trim().parse().unwrap();
                        acked.lock().unwrap().insert(mid - 1);
                    }
                }
            })
        };
        let mut stdin = publisher.stdin.take().unwrap();
        for line in &lines[..LINES / 2] {
            writeln!(stdin, "{line}").unwrap();
        }
        stdin.flush().unwrap();
        wait_for_readings(&site.db, 1 + 100).await;

        mosquitto.stop().await;
        let acked_before = acked.lock().unwrap().len() as u64;
        let stored_before = readings_count(&site.db) - 1;
        eprintln!(
            "{TEST}: broker stopped with {acked_before} acked to the publisher, {stored_before} stored"
        );
        assert!(
            acked_before > stored_before,
            "no acked reading was waiting at the broker when it stopped; the restart proved nothing"
        );
        mosquitto.start().await;
        for line in &lines[LINES / 2..] {
            writeln!(stdin, "{line}").unwrap();
        }
        drop(stdin);
        poll_until("mosquitto_pub to finish", || publisher.try_wait().unwrap()).await;
        reader_thread.join().unwrap();
        let acked = acked.lock().unwrap().clone();
        assert!(
            acked.iter().any(|&i| i >= LINES / 2),
            "the publisher got no PUBACK after the restart"
        );

        // Every line the broker acked must be stored.
        let wanted: BTreeSet<i64> = acked
            .iter()
            .map(|&i| past_time(10_000 + i as i64).timestamp_millis())
            .collect();
        // The warm-up reading plus every acked one.
        poll_until("every acked reading stored", || {
            (readings_count(&site.db) > wanted.len() as u64).then_some(())
        })
        .await;
        let summary = daemon.stop().await;
        let stored: BTreeSet<i64> = Reader::open(&site.db)
            .unwrap()
            .history(JSON_TANK, Some(past_time(10_000)), None)
            .unwrap()
            .iter()
            .map(|r| r.time.timestamp_millis())
            .collect();
        let missing: Vec<_> = wanted.difference(&stored).collect();
        assert!(
            missing.is_empty(),
            "{} acked readings not stored: {missing:?}",
            missing.len()
        );
        let state = Reader::open(&site.db).unwrap().daemon_state().unwrap().unwrap();
        assert!(
            state.reconnect_count >= 1,
            "the daemon must have reconnected: {state:?}"
        );
        eprintln!(
            "{TEST}: {} acked, {} stored, {} reconnects, {summary:?}",
            acked.len(),
            stored.len(),
            state.reconnect_count
        );
        mosquitto.stop().await;
    })
    .await
    .expect("test exceeded its time limit");
}
