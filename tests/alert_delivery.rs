//! Alert delivery against real endpoints started by the tests: a tiny HTTP/1.1 server on 127.0.0.1:0
//! (it records each request and answers as scripted: a status, or nothing at all) and small shell
//! scripts for the exec hook. Every wait is bounded by `DeliveryHandle::shutdown`'s deadline.
//! The hatchery, tanks and messages are the project's fictional demo scenario.
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};
use std::time::Duration;

use chrono::{TimeZone, Utc};
use halotank::alerts::delivery::{
    spawn_delivery_with_secrets, ChannelKind, DeliveryCounters, DeliverySettings, DeliverySettingsError,
    ExecSettings, WebhookSettings,
};
use halotank::alerts::{AlertEvent, AlertId, AlertKind, AlertRecord, AlertState, Severity};
use tokio::io::{AsyncReadExt, AsyncWriteExt};
use tokio::net::TcpListener;

/// Long enough for every test's work; shutdown returns as soon as the queues are drained.
const DRAIN: Duration = Duration::from_secs(20);

fn no_secrets(_: &str) -> Option<String> {
    None
}

fn event(id: u64, kind: AlertKind) -> AlertEvent {
    let at = Utc.with_ymd_and_hms(2026, 3, 14, 6, 30, 0).unwrap();
    let message = format!("skerry-cove/t3: {} (fictional demo tank)", kind.as_str());
    AlertEvent::Raised {
        alert: AlertRecord {
            id: AlertId(id),
            tank: "skerry-cove/t3".into(),
            kind,
            severity: kind.severity(),
            state: AlertState::Raised,
            raised_at: at,
            observed_at: at,
            last_notified_at: at,
            notify_count: 1,
            cleared_at: None,
            acknowledgement: None,
            message: message.clone(),
            value: Some(36.4),
            limit: Some(35.0),
        },
        at,
        message,
    }
}

fn kind_with(severity: Severity) -> AlertKind {
    AlertKind::ALL
        .into_iter()
        .find(|k| k.severity() == severity)
        .unwrap()
}

/// Checks the delivered JSON against the event it came from.
fn assert_event_json(body: &[u8], sent: &AlertEvent) {
    let json: serde_json::Value = serde_json::from_slice(body).unwrap();
    assert_eq!(json["event"], "raised");
    assert_eq!(json["message"], sent.message());
    assert_eq!(json["alert"]["id"], sent.id().0);
    assert_eq!(json["alert"]["tank"], "skerry-cove/t3");
    assert_eq!(json["alert"]["kind"], sent.alert().kind.as_str());
    assert_eq!(json["alert"]["severity"], sent.severity().as_str());
    assert_eq!(json["alert"]["state"], "raised");
    assert_eq!(json["alert"]["raised_at"], "2026-03-14T06:30:00Z");
    assert_eq!(json["alert"]["value"], 36.4);
}

// ---- a tiny HTTP server -------------------------------------------------------------------------

#[derive(Clone, Copy)]
enum Reply {
    Status(u16),
    /// Read the request, answer nothing, keep the connection open.
    Silent,
}

#[derive(Debug)]
struct Recorded {
    request_line: String,
    headers: BTreeMap<String, String>,
    body: Vec<u8>,
}

/// Serves one request per connection; the n-th connection gets `replies[n]` (then 200).
async fn start_server(replies: Vec<Reply>) -> (String, Arc<Mutex<Vec<Recorded>>>) {
    let listener = TcpListener::bind("127.0.0.1:0").await.unwrap();
    let url = format!("http://{}/hooks/alerts", listener.local_addr().unwrap());
    let recorded = Arc::new(Mutex::new(Vec::new()));
    let log = Arc::clone(&recorded);
    tokio::spawn(async move {
        let mut n = 0;
        loop {
            let Ok((mut stream, _)) = listener.accept().await else {
                return;
            };
            let reply = replies.get(n).copied().unwrap_or(Reply::Status(200));
            n += 1;
            let log = Arc::clone(&log);
            tokio::spawn(async move {
                let Some(request) = read_request(&mut stream).await else {
                    return;
                };
                log.lock().unwrap().push(request);
                match reply {
                    Reply::Status(code) => {
                        let answer = format!(
                            "HTTP/1.1 {code} Scripted\r\nContent-Length: 0\r\nConnection: close\r\n\r\n"
                        );
                        let _ = stream.write_all(answer.as_bytes()).await;
                        let _ = stream.shutdown().await;
                    }
                    Reply::Silent => {
                        tokio::time::sleep(Duration::from_secs(60)).await;
                        drop(stream);
                    }
                }
            });
        }
    });
    (url, recorded)
}

async fn read_request(stream: &mut tokio::net::TcpStream) -> Option<Recorded> {
    let mut buf = Vec::new();
    let mut chunk = [0u8; 4096];
    let head_end = loop {
        if let Some(pos) = buf.windows(4).position(|w| w == b"\r\n\r\n") {
            break pos;
        }
        let n = stream.read(&mut chunk).await.ok()?;
        if n == 0 {
            return None;
        }
        buf.extend_from_slice(&chunk[..n]);
    };
    let head = String::from_utf8(buf[..head_end].to_vec()).ok()?;
    let mut lines = head.split("\r\n");
    let request_line = lines.next()?.to_string();
    let headers: BTreeMap<String, String> = lines
        .filter_map(|l| l.split_once(':'))
        .map(|(k, v)| (k.trim().to_ascii_lowercase(), v.trim().to_string()))
        .collect();
    let length: usize = headers.get("content-length")?.parse().ok()?;
    let mut body = buf[head_end + 4..].to_vec();
    while body.len() < length {
        let n = stream.read(&mut chunk).await.ok()?;
        if n == 0 {
            return None;
        }
        body.extend_from_slice(&chunk[..n]);
    }
    Some(Recorded {
        request_line,
        headers,
        body,
    })
}

fn webhook(url: &str, retries: u32) -> WebhookSettings {
    let mut settings = WebhookSettings::new(url);
    settings.retries = retries;
    settings.backoff_initial_ms = 10;
    settings.backoff_max_ms = 40;
    settings.timeout_s = 5.0;
    settings
}

fn only_webhook(webhook: WebhookSettings) -> DeliverySettings {
    DeliverySettings {
        webhook: Some(webhook),
        ..DeliverySettings::default()
    }
}

fn counters(delivered: u64, retried: u64, failed: u64, dropped: u64) -> DeliveryCounters {
    DeliveryCounters {
        delivered,
        retried,
        failed,
        dropped,
    }
}

// ---- webhook --------------------------------------------------------------------------------------

#[tokio::test]
async fn webhook_posts_event_json_and_retries_after_a_500() {
    let (url, recorded) = start_server(vec![Reply::Status(500), Reply::Status(200)]).await;
    let mut settings = webhook(&url, 3);
    settings.headers.insert("X-Site".into(), "skerry-cove".into());
    settings.bearer_token_env = Some("SKERRY_HOOK_TOKEN".into());
    let secrets = |var: &str| (var == "SKERRY_HOOK_TOKEN").then(|| "cove-token-41".to_string());
    let (handle, task) = spawn_delivery_with_secrets(&only_webhook(settings), &secrets).unwrap();
    assert_eq!(handle.channels(), [ChannelKind::Webhook]);
    let sent = event(7, AlertKind::SalinityTolerance);
    assert_eq!(handle.submit(&sent), 1);

    let totals = handle.shutdown(DRAIN).await;
    assert_eq!(totals, counters(1, 1, 0, 0));
    assert_eq!(handle.channel_counters(ChannelKind::Webhook), Some(totals));
    assert_eq!(handle.channel_counters(ChannelKind::Exec), None);
    assert_eq!(task.await.unwrap(), totals);

    let requests = recorded.lock().unwrap();
    assert_eq!(requests.len(), 2, "one failed attempt and one retry");
    for request in requests.iter() {
        assert_eq!(request.request_line, "POST /hooks/alerts HTTP/1.1");
        assert_eq!(request.headers["content-type"], "application/json");
        assert_eq!(request.headers["authorization"], "Bearer cove-token-41");
        assert_eq!(request.headers["x-site"], "skerry-cove");
        assert_event_json(&request.body, &sent);
    }
}

#[tokio::test]
async fn webhook_times_out_on_a_silent_server_then_retries() {
    let (url, recorded) = start_server(vec![Reply::Silent, Reply::Status(204)]).await;
    let mut settings = webhook(&url, 2);
    settings.timeout_s = 0.3;
    let (handle, _task) = spawn_delivery_with_secrets(&only_webhook(settings), &no_secrets).unwrap();
    let sent = event(8, AlertKind::ProbeStale);
    assert_eq!(handle.submit(&sent), 1);
    assert_eq!(handle.shutdown(DRAIN).await, counters(1, 1, 0, 0));
    let requests = recorded.lock().unwrap();
    assert_eq!(requests.len(), 2);
    assert_event_json(&requests[1].body, &sent);
}

#[tokio::test]
async fn webhook_gives_up_after_its_retries_and_keeps_order() {
    let replies = vec![
        Reply::Status(503),
        Reply::Status(502),
        Reply::Status(500),
        Reply::Status(200),
    ];
    let (url, recorded) = start_server(replies).await;
    let (handle, _task) = spawn_delivery_with_secrets(&only_webhook(webhook(&url, 2)), &no_secrets).unwrap();
    assert_eq!(handle.submit(&event(1, AlertKind::SalinityOptimum)), 1);
    assert_eq!(handle.submit(&event(2, AlertKind::SalinityOptimum)), 1);
    // First event: three attempts, all 5xx, then given up; the second is delivered at once.
    assert_eq!(handle.shutdown(DRAIN).await, counters(1, 2, 1, 0));
    let ids: Vec<u64> = recorded
        .lock()
        .unwrap()
        .iter()
        .map(|r| {
            serde_json::from_slice::<serde_json::Value>(&r.body).unwrap()["alert"]["id"]
                .as_u64()
                .unwrap()
        })
        .collect();
    assert_eq!(ids, [1, 1, 1, 2]);
}

#[tokio::test]
async fn webhook_does_not_retry_a_client_error() {
    let (url, recorded) = start_server(vec![Reply::Status(404)]).await;
    let (handle, _task) = spawn_delivery_with_secrets(&only_webhook(webhook(&url, 4)), &no_secrets).unwrap();
    assert_eq!(handle.submit(&event(3, AlertKind::TemperatureOptimum)), 1);
    assert_eq!(handle.shutdown(DRAIN).await, counters(0, 0, 1, 0));
    assert_eq!(recorded.lock().unwrap().len(), 1);
}

#[tokio::test]
async fn webhook_refused_connection_is_retried_then_failed() {
    let listener = std::net::TcpListener::bind("127.0.0.1:0").unwrap();
    let url = format!("http://{}/hooks/alerts", listener.local_addr().unwrap());
    drop(listener);
    let (handle, _task) = spawn_delivery_with_secrets(&only_webhook(webhook(&url, 1)), &no_secrets).unwrap();
    assert_eq!(handle.submit(&event(4, AlertKind::ProbeSpike)), 1);
    assert_eq!(handle.shutdown(DRAIN).await, counters(0, 1, 1, 0));
}

#[tokio::test]
async fn webhook_token_must_be_set() {
    let mut settings = webhook("http://127.0.0.1:9/hooks/alerts", 1);
    settings.bearer_token_env = Some("SKERRY_HOOK_TOKEN".into());
    let err = spawn_delivery_with_secrets(&only_webhook(settings), &no_secrets).unwrap_err();
    assert!(
        matches!(err, DeliverySettingsError::TokenMissing { ref var } if var == "SKERRY_HOOK_TOKEN"),
        "{err}"
    );
}

// ---- exec hook ------------------------------------------------------------------------------------

/// Writes `body` as a `#!/bin/sh` script and returns exec settings that run it with `OUT` set.
/// The script is run as `/bin/sh script` rather than executed itself, so that a file just written by
/// this multi-threaded test process can never be "text file busy" when another test forks.
fn script(dir: &Path, name: &str, body: &str, out: &Path) -> ExecSettings {
    let path = dir.join(name);
    std::fs::write(&path, format!("#!/bin/sh\n{body}\n")).unwrap();
    let mut settings = ExecSettings::new("/bin/sh");
    settings.args = vec![path.to_string_lossy().into_owned()];
    settings
        .env
        .insert("OUT".into(), out.to_string_lossy().into_owned());
    settings.backoff_initial_ms = 10;
    settings.backoff_max_ms = 40;
    settings
}

fn only_exec(exec: ExecSettings) -> DeliverySettings {
    DeliverySettings {
        exec: Some(exec),
        ..DeliverySettings::default()
    }
}

#[tokio::test]
async fn exec_hook_gets_the_event_json_on_stdin() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("event.json");
    let body = r#"cat > "$OUT"
printf '%s %s %s %s\n' "$HALOTANK_ALERT_ID" "$HALOTANK_ALERT_EVENT" "$HALOTANK_ALERT_SEVERITY" "$HALOTANK_ALERT_TANK" > "$OUT.env""#;
    let settings = script(dir.path(), "notify.sh", body, &out);
    let (handle, task) = spawn_delivery_with_secrets(&only_exec(settings), &no_secrets).unwrap();
    let sent = event(11, AlertKind::NearFreezing);
    assert_eq!(handle.submit(&sent), 1);
    assert_eq!(handle.shutdown(DRAIN).await, counters(1, 0, 0, 0));
    assert_eq!(task.await.unwrap(), counters(1, 0, 0, 0));
    assert_event_json(&std::fs::read(&out).unwrap(), &sent);
    let env = std::fs::read_to_string(dir.path().join("event.json.env")).unwrap();
    assert_eq!(
        env.trim(),
        format!("11 raised {} skerry-cove/t3", sent.severity().as_str())
    );
}

#[tokio::test]
async fn exec_hook_exit_1_is_retried_then_counted_failed() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("runs.txt");
    let body = "cat > /dev/null\necho run >> \"$OUT\"\necho 'pager gateway offline' >&2\nexit 1";
    let mut settings = script(dir.path(), "failing.sh", body, &out);
    settings.retries = 2;
    let (handle, _task) = spawn_delivery_with_secrets(&only_exec(settings), &no_secrets).unwrap();
    assert_eq!(handle.submit(&event(12, AlertKind::SalinityRate)), 1);
    assert_eq!(handle.shutdown(DRAIN).await, counters(0, 2, 1, 0));
    assert_eq!(std::fs::read_to_string(&out).unwrap().lines().count(), 3);
}

/// Whether the process is gone (or only a zombie waiting to be reaped).
fn process_gone(pid: &str) -> bool {
    match std::fs::read_to_string(format!("/proc/{pid}/stat")) {
        Err(_) => true,
        Ok(stat) => stat
            .rsplit_once(')')
            .is_some_and(|(_, rest)| rest.trim_start().starts_with('Z')),
    }
}

#[tokio::test]
async fn exec_hook_hanging_is_killed_at_the_timeout() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("pids.txt");
    // `exec` makes the shell become `sleep`, so the pid written is the process to be killed.
    let mut settings = script(
        dir.path(),
        "hanging.sh",
        "echo $$ >> \"$OUT\"\nexec sleep 30",
        &out,
    );
    settings.timeout_s = 0.3;
    settings.retries = 1;
    let (handle, _task) = spawn_delivery_with_secrets(&only_exec(settings), &no_secrets).unwrap();
    assert_eq!(handle.submit(&event(13, AlertKind::ProbeInconsistent)), 1);
    // Without the kill each attempt would take 30 s and the drain deadline would count it dropped.
    assert_eq!(handle.shutdown(DRAIN).await, counters(0, 1, 1, 0));
    let pids = std::fs::read_to_string(&out).unwrap();
    let pids: Vec<&str> = pids.lines().collect();
    assert_eq!(pids.len(), 2);
    for pid in pids {
        let mut gone = process_gone(pid);
        for _ in 0..100 {
            if gone {
                break;
            }
            tokio::time::sleep(Duration::from_millis(20)).await;
            gone = process_gone(pid);
        }
        assert!(gone, "process {pid} still running after its timeout");
    }
}

#[tokio::test]
async fn exec_hook_missing_program_is_counted_failed() {
    let mut settings = ExecSettings::new(PathBuf::from("/nonexistent/skerry-cove/pager"));
    settings.retries = 1;
    settings.backoff_initial_ms = 10;
    settings.backoff_max_ms = 10;
    let (handle, _task) = spawn_delivery_with_secrets(&only_exec(settings), &no_secrets).unwrap();
    assert_eq!(handle.submit(&event(14, AlertKind::ProbeStale)), 1);
    assert_eq!(handle.shutdown(DRAIN).await, counters(0, 1, 1, 0));
}

// ---- queue, filter, shutdown ----------------------------------------------------------------------

#[tokio::test]
async fn a_full_queue_drops_from_delivery_without_waiting() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("runs.txt");
    let settings = DeliverySettings {
        queue_capacity: 1,
        ..only_exec(script(
            dir.path(),
            "count.sh",
            "cat > /dev/null\necho run >> \"$OUT\"",
            &out,
        ))
    };
    let (handle, _task) = spawn_delivery_with_secrets(&settings, &no_secrets).unwrap();
    // A current-thread runtime: the delivery task cannot run between these calls, so the queue of one
    // takes the first event and the next three are dropped at once.
    let queued: Vec<usize> = (1..=4)
        .map(|id| handle.submit(&event(id, AlertKind::ProbeSpike)))
        .collect();
    assert_eq!(queued, [1, 0, 0, 0]);
    assert_eq!(handle.counters(), counters(0, 0, 0, 3));
    assert_eq!(handle.shutdown(DRAIN).await, counters(1, 0, 0, 3));
    assert_eq!(std::fs::read_to_string(&out).unwrap().lines().count(), 1);
}

#[tokio::test]
async fn min_severity_filters_per_channel() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("runs.txt");
    let mut exec = script(
        dir.path(),
        "count.sh",
        "cat > /dev/null\necho run >> \"$OUT\"",
        &out,
    );
    exec.min_severity = Some(Severity::Critical);
    let settings = DeliverySettings {
        min_severity: Severity::Info,
        ..only_exec(exec)
    };
    let (handle, _task) = spawn_delivery_with_secrets(&settings, &no_secrets).unwrap();
    assert_eq!(handle.submit(&event(1, kind_with(Severity::Info))), 0);
    assert_eq!(handle.submit(&event(2, kind_with(Severity::Warning))), 0);
    assert_eq!(handle.submit(&event(3, kind_with(Severity::Critical))), 1);
    assert_eq!(handle.shutdown(DRAIN).await, counters(1, 0, 0, 0));
    assert_eq!(std::fs::read_to_string(&out).unwrap().lines().count(), 1);
}

#[tokio::test]
async fn shutdown_deadline_abandons_what_is_left() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("pids.txt");
    let mut settings = script(dir.path(), "slow.sh", "echo $$ >> \"$OUT\"\nexec sleep 30", &out);
    settings.timeout_s = 60.0;
    let (handle, task) = spawn_delivery_with_secrets(&only_exec(settings), &no_secrets).unwrap();
    assert_eq!(handle.submit(&event(1, AlertKind::SalinityTolerance)), 1);
    assert_eq!(handle.submit(&event(2, AlertKind::SalinityTolerance)), 1);
    // The first is running, the second queued: both are abandoned at the deadline.
    assert_eq!(
        handle.shutdown(Duration::from_millis(300)).await,
        counters(0, 0, 0, 2)
    );
    assert_eq!(task.await.unwrap(), counters(0, 0, 0, 2));
    // After shutdown nothing more is taken.
    assert_eq!(handle.submit(&event(3, AlertKind::SalinityTolerance)), 0);
    assert_eq!(handle.counters(), counters(0, 0, 0, 3));
}

#[tokio::test]
async fn no_channels_is_a_quiet_no_op() {
    let (handle, task) = spawn_delivery_with_secrets(&DeliverySettings::default(), &no_secrets).unwrap();
    assert!(handle.channels().is_empty());
    assert_eq!(handle.submit(&event(1, AlertKind::SalinityTolerance)), 0);
    assert_eq!(
        handle.shutdown(Duration::from_secs(1)).await,
        DeliveryCounters::default()
    );
    assert_eq!(task.await.unwrap(), DeliveryCounters::default());
}
