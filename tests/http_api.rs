//! The HTTP API route by route against a fixture server (temporary database filled through the real
//! writer, a live view filled directly): answers, filters, downsampling, and every refusal: 400 for bad
//! parameters and bodies, 401 without (or with a wrong, or with no configured) token, 404, 409.
//!
//! Outside checks: SMOLT's latest reading is PSS-78's standard seawater (C = 42.914 mS/cm at 15 °C IPTS-68,
//! 0 dbar has practical salinity 35 by definition; UNESCO 1983, Fofonoff & Millard 1983); a plan through the API equals
//! the same plan printed by `halotank plan --format json`; bucket means equal the means of the readings
//! the test stored in each bucket.
mod http_support;

use chrono::{DateTime, Duration, Utc};
use http_support::*;
use serde_json::{json, Value};

fn stamp(t: DateTime<Utc>) -> String {
    t.to_rfc3339_opts(chrono::SecondsFormat::Millis, true)
}

fn enc(t: DateTime<Utc>) -> String {
    stamp(t).replace('+', "%2B")
}

#[test]
fn health_and_readiness_follow_the_broker_link_and_the_writer() {
    let f = Fixture::start(Some(TOKEN));
    let r = f.get("/healthz");
    assert_eq!((r.status, r.json()), (200, json!({"status": "up"})));
    let r = f.get("/readyz");
    assert_eq!(r.status, 200, "{}", r.body);
    assert_eq!(r.json()["ready"], true);
    f.live.set_link(&connected(false));
    let r = f.get("/readyz");
    assert_eq!(r.status, 503);
    assert_eq!(
        r.json(),
        json!({"ready": false, "broker_connected": false, "database_writable": true})
    );
    f.live.set_link(&connected(true));
    f.live.set_writer_health(false, 3);
    let r = f.get("/readyz");
    assert_eq!(
        (r.status, r.json()["database_writable"].clone()),
        (503, json!(false))
    );
}

#[test]
fn tanks_come_from_memory_with_latest_values_alerts_and_limits() {
    let f = Fixture::start(Some(TOKEN));
    let r = f.get("/api/tanks");
    assert_eq!(r.status, 200, "{}", r.body);
    let v = r.json();
    assert!(v["generated_at"].as_str().unwrap().ends_with('Z'));
    let tanks = v["tanks"].as_array().unwrap();
    let ids: Vec<&str> = tanks.iter().map(|t| t["id"].as_str().unwrap()).collect();
    assert_eq!(ids, [SMOLT, PARR], "configuration order");
    let smolt = &tanks[0];
    // PSS-78: the standard seawater conductivity at 15 °C (IPTS-68) is SP 35 (UNESCO 1983).
    let sp = smolt["latest"]["practical_salinity"].as_f64().unwrap();
    assert!((sp - 35.0).abs() < 1e-4, "{sp}");
    assert_eq!(smolt["latest"]["temperature_C"], STANDARD_T90_C);
    assert_eq!(smolt["latest"]["conductivity_mS_cm"], STANDARD_C_MS_CM);
    assert!(smolt["latest"]["osmolality_mOsm_kg"].as_f64().unwrap() > 900.0);
    assert_eq!(smolt["species"]["id"], "atlantic_salmon_smolt");
    assert!(smolt["limits"]["tolerance_practical_salinity"].is_array());
    let age = smolt["age_s"].as_f64().unwrap();
    assert!((55.0..600.0).contains(&age), "{age}");
    assert_eq!(smolt["stale"], false, "60 s old, stale after 180 s");
    let open: Vec<u64> = smolt["open_alerts"]
        .as_array()
        .unwrap()
        .iter()
        .map(|a| a["id"].as_u64().unwrap())
        .collect();
    assert_eq!(open.len(), 2);
    assert!(open.contains(&1) && open.contains(&3) && !open.contains(&2));
    assert!(smolt["schedule"].is_null());
    let parr = &tanks[1];
    assert!(parr["latest"].is_null() && parr["species"].is_null() && parr["age_s"].is_null());
    assert_eq!(parr["stale"], true);
    assert_eq!(parr["limits"]["optimum_practical_salinity"], Value::Null);

    let one = f.get(&format!("/api/tanks/{SMOLT}"));
    assert_eq!(one.status, 200);
    assert_eq!(one.json()["id"], SMOLT);
    assert!(f
        .get("/api/tanks/no-such-tank")
        .error(404)
        .contains("no-such-tank"));
    assert!(f.get("/api/tanks?sort=name").error(400).contains("`sort`"));
}

#[test]
fn history_returns_raw_readings_or_bucket_means_and_refuses_bad_parameters() {
    let f = Fixture::start(Some(TOKEN));
    // One hour of one-minute readings: raw.
    let (last_t, last_sp) = *f.stored.last().unwrap();
    let from = last_t - Duration::minutes(59) - Duration::seconds(1);
    let to = last_t + Duration::seconds(1);
    let r = f.get(&format!(
        "/api/tanks/{SMOLT}/history?from={}&to={}",
        enc(from),
        enc(to)
    ));
    assert_eq!(r.status, 200, "{}", r.body);
    let v = r.json();
    assert_eq!(v["downsampled"], false);
    let points = v["points"].as_array().unwrap();
    let want: Vec<&(DateTime<Utc>, f64)> = f.stored.iter().filter(|(t, _)| *t >= from && *t < to).collect();
    assert_eq!(points.len(), want.len());
    assert_eq!(points.len(), 60);
    for (p, (t, sp)) in points.iter().zip(&want) {
        assert_eq!(p["time"], stamp(*t));
        assert_eq!(p["practical_salinity"].as_f64().unwrap(), *sp);
        assert!(p.get("min_practical_salinity").is_none());
    }
    assert_eq!(
        points.last().unwrap()["practical_salinity"].as_f64().unwrap(),
        last_sp
    );
    assert!(v.get("setpoint").is_none(), "no schedule");

    // Two days into 100 points: bucket means with min and max.
    let from = f.stored[0].0;
    let to = last_t + Duration::seconds(1);
    let r = f.get(&format!(
        "/api/tanks/{SMOLT}/history?from={}&to={}&points=100",
        enc(from),
        enc(to)
    ));
    assert_eq!(r.status, 200, "{}", r.body);
    let v = r.json();
    assert_eq!(v["downsampled"], true);
    let points = v["points"].as_array().unwrap();
    assert!(points.len() <= 100 && points.len() >= 95, "{}", points.len());
    let width_ms = ((to - from).num_milliseconds() + 99) / 100;
    let first_bucket: Vec<f64> = f
        .stored
        .iter()
        .filter(|(t, _)| (*t - from).num_milliseconds() < width_ms)
        .map(|(_, sp)| *sp)
        .collect();
    let mean = first_bucket.iter().sum::<f64>() / first_bucket.len() as f64;
    let p0 = &points[0];
    assert!((p0["practical_salinity"].as_f64().unwrap() - mean).abs() < 1e-9);
    let min = first_bucket.iter().cloned().fold(f64::INFINITY, f64::min);
    let max = first_bucket.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
    assert_eq!(p0["min_practical_salinity"].as_f64().unwrap(), min);
    assert_eq!(p0["max_practical_salinity"].as_f64().unwrap(), max);
    let times: Vec<&str> = points.iter().map(|p| p["time"].as_str().unwrap()).collect();
    assert!(times.windows(2).all(|w| w[0] < w[1]), "ascending");
    for p in points {
        let (lo, mid, hi) = (
            p["min_practical_salinity"].as_f64().unwrap(),
            p["practical_salinity"].as_f64().unwrap(),
            p["max_practical_salinity"].as_f64().unwrap(),
        );
        assert!(lo <= mid && mid <= hi);
    }

    // Default range: the last 24 hours.
    let r = f.get(&format!("/api/tanks/{SMOLT}/history"));
    assert_eq!(r.status, 200);
    assert_eq!(r.json()["downsampled"], true, "1,440 readings > 1,000 points");

    let base = format!("/api/tanks/{SMOLT}/history");
    let (a, b) = (enc(f.now - Duration::hours(1)), enc(f.now));
    for (query, needle) in [
        (format!("?from={b}&to={a}"), "before"),
        (format!("?from={a}&to={a}"), "before"),
        ("?from=yesterday".to_string(), "RFC 3339"),
        ("?to=2031-13-01T00:00:00Z".to_string(), "RFC 3339"),
        ("?points=0".to_string(), "1 to 5000"),
        ("?points=5001".to_string(), "1 to 5000"),
        ("?points=many".to_string(), "1 to 5000"),
        ("?points=".to_string(), "empty"),
        ("?step=5m".to_string(), "`step`"),
    ] {
        let message = f.get(&format!("{base}{query}")).error(400);
        assert!(message.contains(needle), "{query}: {message}");
    }
    f.get("/api/tanks/no-such-tank/history").error(404);
}

#[test]
fn alerts_are_listed_with_filters_and_bad_filters_are_refused() {
    let f = Fixture::start(Some(TOKEN));
    let ids = |r: Reply| -> Vec<u64> {
        assert_eq!(r.status, 200, "{}", r.body);
        r.json()["alerts"]
            .as_array()
            .unwrap()
            .iter()
            .map(|a| a["id"].as_u64().unwrap())
            .collect()
    };
    assert_eq!(ids(f.get("/api/alerts")), [3, 1], "open by default, newest first");
    assert_eq!(ids(f.get("/api/alerts?state=all")), [3, 2, 1]);
    assert_eq!(ids(f.get("/api/alerts?state=all&severity=critical")), [1]);
    assert_eq!(ids(f.get("/api/alerts?state=all&kind=temperature_optimum")), [2]);
    assert_eq!(ids(f.get(&format!("/api/alerts?tank={SMOLT}&limit=1"))), [3]);
    assert_eq!(ids(f.get(&format!("/api/alerts?tank={PARR}"))), Vec::<u64>::new());
    let since = enc(f.now - Duration::minutes(150));
    assert_eq!(ids(f.get(&format!("/api/alerts?state=all&since={since}"))), [3]);
    let full = f.get("/api/alerts?state=all&limit=3").json();
    let stored = &full["alerts"][2];
    assert_eq!(stored["kind"], "salinity_tolerance");
    assert_eq!(stored["state"], "raised");
    assert_eq!(stored["message"], "test alert 1");
    for query in [
        "state=closed",
        "kind=salinity",
        "severity=severe",
        "limit=0",
        "limit=1001",
        "since=3h",
        "colour=red",
    ] {
        f.get(&format!("/api/alerts?{query}")).error(400);
    }
}

#[test]
fn acknowledging_needs_the_token_and_records_a_request_the_daemon_applies() {
    let f = Fixture::start(Some(TOKEN));
    let body = r#"{"by": "ines", "note": "salinity checked with the bench meter"}"#;
    let m = f.post("/api/alerts/1/ack", body, None).error(401);
    assert!(m.contains("Authorization"), "{m}");
    f.post("/api/alerts/1/ack", body, Some("not-the-token"))
        .error(401);
    let r = f.post("/api/alerts/1/ack", body, Some(TOKEN));
    assert_eq!(r.status, 202, "{}", r.body);
    let v = r.json();
    assert_eq!(v["status"], "pending");
    let request = v["request_id"].as_i64().unwrap();
    // Exactly what `halotank ack` records.
    let conn = rusqlite::Connection::open(&f.db).unwrap();
    let (alert, by, note): (i64, String, Option<String>) = conn
        .query_row(
            "SELECT alert_id, by, note FROM alert_ack_requests WHERE id = ?1 AND handled_at_ms IS NULL",
            [request],
            |row| Ok((row.get(0)?, row.get(1)?, row.get(2)?)),
        )
        .unwrap();
    assert_eq!((alert, by.as_str()), (1, "ines"));
    assert_eq!(note.as_deref(), Some("salinity checked with the bench meter"));
    let r = f.get(&format!("/api/ack-requests/{request}"));
    assert_eq!((r.status, r.json()["status"].clone()), (200, json!("pending")));
    // The daemon's alert tick marks it handled; the route reports the outcome.
    conn.execute(
        "UPDATE alert_ack_requests SET handled_at_ms = 1, outcome = 'refused: alert 1 was already acknowledged' WHERE id = ?1",
        [request],
    )
    .unwrap();
    let v = f.get(&format!("/api/ack-requests/{request}")).json();
    assert_eq!(v["status"], "refused");
    assert_eq!(v["reason"], "alert 1 was already acknowledged");

    assert!(f
        .post("/api/alerts/2/ack", body, Some(TOKEN))
        .error(409)
        .contains("cleared"));
    assert!(f
        .post("/api/alerts/3/ack", body, Some(TOKEN))
        .error(409)
        .contains("ines"));
    f.post("/api/alerts/99/ack", body, Some(TOKEN)).error(404);
    f.post("/api/alerts/x/ack", body, Some(TOKEN)).error(400);
    f.get("/api/ack-requests/999").error(404);
    f.get("/api/ack-requests/zero").error(400);
    for bad in [
        "",
        "not json",
        r#"{"note": "no name"}"#,
        r#"{"by": "  "}"#,
        r#"{"by": "ines", "colour": "red"}"#,
        &format!(r#"{{"by": "{}"}}"#, "x".repeat(65)),
        &format!(r#"{{"by": "ines", "note": "{}"}}"#, "n".repeat(501)),
    ] {
        f.post("/api/alerts/1/ack", bad, Some(TOKEN)).error(400);
    }
}

#[test]
fn without_a_configured_token_every_change_is_refused_and_reads_still_work() {
    let f = Fixture::start(None);
    let m = f
        .post("/api/alerts/1/ack", r#"{"by": "ines"}"#, Some(TOKEN))
        .error(401);
    assert!(
        m.contains("HALOTANK_TEST_UNSET_TOKEN_VARIABLE"),
        "says how to configure one: {m}"
    );
    f.post("/api/schedules/1/pause", "{}", Some(TOKEN)).error(401);
    f.post("/api/schedules", "{}", None).error(401);
    assert_eq!(f.get("/api/tanks").status, 200);
    assert_eq!(f.get("/api/alerts").status, 200);
}

/// Every state-changing route refuses a missing or wrong token (401 naming the Bearer scheme, RFC 6750
/// §3) and changes nothing in the database.
#[test]
fn every_change_needs_the_token() {
    let f = Fixture::start(Some(TOKEN));
    let count = |sql: &str| -> i64 {
        rusqlite::Connection::open(&f.db)
            .unwrap()
            .query_row(sql, [], |r| r.get(0))
            .unwrap()
    };
    let before = (
        count("SELECT COUNT(*) FROM alert_ack_requests"),
        count("SELECT COUNT(*) FROM schedules"),
        count("SELECT COUNT(*) FROM schedule_steps_done"),
    );
    let start = json!({"tank": SMOLT, "plan": plan_form()}).to_string();
    let routes: [(&str, &str); 6] = [
        ("/api/alerts/1/ack", r#"{"by": "ines"}"#),
        ("/api/schedules", &start),
        ("/api/schedules/1/pause", "{}"),
        ("/api/schedules/1/resume", "{}"),
        ("/api/schedules/1/abort", "{}"),
        ("/api/schedules/1/step-done", r#"{"step": 1, "by": "ines"}"#),
    ];
    for (path, body) in routes {
        for token in [None, Some("not-the-token")] {
            let r = f.post(path, body, token);
            r.error(401);
            assert_eq!(
                r.www_authenticate.as_deref(),
                Some("Bearer realm=\"halotank\""),
                "{path} {token:?}"
            );
        }
    }
    let after = (
        count("SELECT COUNT(*) FROM alert_ack_requests"),
        count("SELECT COUNT(*) FROM schedules"),
        count("SELECT COUNT(*) FROM schedule_steps_done"),
    );
    assert_eq!(before, after, "nothing changed");
}

/// This machine's address on its first non-loopback interface (a UDP "connect" sends nothing).
fn lan_address() -> Option<std::net::IpAddr> {
    let socket = std::net::UdpSocket::bind("0.0.0.0:0").ok()?;
    socket.connect("192.0.2.1:9").ok()?;
    let ip = socket.local_addr().ok()?.ip();
    (!ip.is_loopback() && !ip.is_unspecified()).then_some(ip)
}

/// Listening on every interface: from this machine reads need no token; from another address the data
/// routes need it, while the page and the probes stay open.
#[test]
fn reads_from_another_host_need_the_token() {
    let Some(lan) = lan_address() else {
        eprintln!("skipped: this machine has no non-loopback IPv4 address");
        return;
    };
    let f = Fixture::start_on(Some(TOKEN), "0.0.0.0:0");
    let port = f.addr.port();
    let there = std::net::SocketAddr::new(lan, port);
    let here = std::net::SocketAddr::from(([127, 0, 0, 1], port));
    assert_eq!(get(here, "/api/tanks", &[]).status, 200);
    let refused = get(there, "/api/tanks", &[]);
    assert!(refused.error(401).contains("another host"), "{}", refused.body);
    get(there, "/metrics", &[]).error(401);
    let bearer = format!("Bearer {TOKEN}");
    assert_eq!(
        get(there, "/api/tanks", &[("Authorization", &bearer)]).status,
        200
    );
    assert_eq!(get(there, "/", &[]).status, 200);
    assert_eq!(get(there, "/healthz", &[]).status, 200);
}

fn plan_form() -> Value {
    json!({
        "volume_L": 2000, "from": 5, "to": 30, "temperature_C": 12, "method": "exchange",
        "source_practical_salinity": 34, "interval_h": 2, "max_rate_sp_per_h": 2,
        "holds": [{"practical_salinity": 12, "hours": 12}],
        "start": "2031-05-14T06:00:00Z"
    })
}

#[test]
fn a_plan_through_the_api_is_the_plan_the_cli_prints() {
    let f = Fixture::start(None);
    let r = f.post("/api/plan", &plan_form().to_string(), None);
    assert_eq!(r.status, 200, "{}", r.body);
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_halotank"))
        .args([
            "plan",
            "--volume",
            "2000",
            "--from",
            "5",
            "--to",
            "30",
            "--temperature",
            "12",
            "--method",
            "exchange",
            "--source-salinity",
            "34",
            "--interval",
            "2h",
            "--max-rate",
            "2/h",
            "--hold",
            "12@12h",
            "--start",
            "2031-05-14T06:00:00Z",
            "--format",
            "json",
        ])
        .output()
        .unwrap();
    assert!(out.status.success(), "{}", String::from_utf8_lossy(&out.stderr));
    let cli: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(r.json(), cli);

    // A configured tank fills volume, species and the latest salinity (SP 35) and temperature.
    let r = f.post(
        "/api/plan",
        &json!({"tank": SMOLT, "to": 30, "method": "exchange", "source_practical_salinity": 0.2,
                "interval_h": 1})
        .to_string(),
        None,
    );
    assert_eq!(r.status, 200, "{}", r.body);
    let v = r.json();
    assert!((v["from_practical_salinity"].as_f64().unwrap() - 35.0).abs() < 1e-4);
    assert_eq!(v["assumptions"]["tank_volume_L"], 2000.0);
    assert_eq!(v["assumptions"]["temperature_C"], STANDARD_T90_C);

    let r = f.post(
        "/api/plan",
        &json!({"method": "blend", "to": 18, "temperature_C": 12, "source_a_practical_salinity": 0.4,
                "source_b_practical_salinity": 34, "batch_volume_L": 300})
        .to_string(),
        None,
    );
    assert_eq!(r.status, 200, "{}", r.body);
    let v = r.json();
    let (a, b) = (
        v["source_a_L"].as_f64().unwrap(),
        v["source_b_L"].as_f64().unwrap(),
    );
    assert!(a > 0.0 && b > 0.0, "{v}");

    let mut no_source = plan_form();
    no_source
        .as_object_mut()
        .unwrap()
        .remove("source_practical_salinity");
    let mut bad_method = plan_form();
    bad_method["method"] = json!("bucket");
    let mut too_salty = plan_form();
    too_salty["to"] = json!(120);
    let mut bad_start = plan_form();
    bad_start["start"] = json!("tomorrow");
    let mut unknown_species = plan_form();
    unknown_species["species"] = json!("kraken");
    for (body, needle) in [
        (no_source.to_string(), "source_practical_salinity"),
        (bad_method.to_string(), "bucket"),
        (too_salty.to_string(), "120"),
        (bad_start.to_string(), "RFC 3339"),
        (unknown_species.to_string(), "kraken"),
        (
            json!({"to": 30, "method": "exchange"}).to_string(),
            "temperature_C",
        ),
        (json!({"method": "blend", "to": 18}).to_string(), "blend"),
        (
            json!({"tank": "no-such-tank", "to": 30, "method": "salt"}).to_string(),
            "no-such-tank",
        ),
        ("{".to_string(), "JSON"),
    ] {
        let r = f.post("/api/plan", &body, None);
        let status = if needle == "no-such-tank" { 404 } else { 400 };
        let m = r.error(status);
        assert!(m.contains(needle), "{body}: {m}");
    }
}

#[test]
fn schedules_start_change_and_refuse_what_the_cli_refuses() {
    let f = Fixture::start(Some(TOKEN));
    let mut form = plan_form();
    form.as_object_mut().unwrap().remove("start");
    let start = json!({"tank": PARR, "plan": form, "by": "ines"}).to_string();
    f.post("/api/schedules", &start, None).error(401);
    let r = f.post("/api/schedules", &start, Some(TOKEN));
    assert_eq!(r.status, 201, "{}", r.body);
    let v = r.json();
    let id = v["schedule"]["id"].as_i64().unwrap();
    assert_eq!(v["schedule"]["tank_id"], PARR);
    assert_eq!(v["progress"]["state"], "active");
    assert_eq!(v["progress"]["steps_done"], 0);
    assert!(v["caution"].as_str().unwrap().contains("calibrated meter"));
    assert!(f
        .post("/api/schedules", &start, Some(TOKEN))
        .error(409)
        .contains(&id.to_string()));
    // The overview shows the schedule at once.
    let tanks = f.get("/api/tanks").json();
    assert_eq!(tanks["tanks"][1]["schedule"]["schedule_id"], id);

    // The history of the tank carries the planned setpoint line: SP 5 at the start up to SP 30.
    let plan_end: DateTime<Utc> = v["schedule"]["plan"]["end"].as_str().unwrap().parse().unwrap();
    let h = f.get(&format!(
        "/api/tanks/{PARR}/history?from={}&to={}",
        enc(f.now - Duration::hours(1)),
        enc(plan_end + Duration::hours(1))
    ));
    assert_eq!(h.status, 200, "{}", h.body);
    let h = h.json();
    assert_eq!(h["points"], json!([]));
    let line = h["setpoint"].as_array().expect("a setpoint line");
    assert_eq!(line.first().unwrap()["practical_salinity"], 5.0);
    assert!((line.last().unwrap()["practical_salinity"].as_f64().unwrap() - 30.0).abs() < 1e-9);
    let sps: Vec<f64> = line
        .iter()
        .map(|p| p["practical_salinity"].as_f64().unwrap())
        .collect();
    assert!(sps.windows(2).all(|w| w[1] >= w[0]), "rising: {sps:?}");
    let list = f.get("/api/schedules").json();
    let id = &list["schedules"][0]["id"];
    assert!(
        line.iter().all(|p| &p["schedule_id"] == id),
        "each point names its schedule"
    );
    assert_eq!(list["schedules"].as_array().unwrap().len(), 1);
    assert_eq!(
        f.get(&format!("/api/schedules?tank={SMOLT}")).json()["schedules"],
        json!([])
    );
    let shown = f.get(&format!("/api/schedules/{id}"));
    assert_eq!(shown.status, 200);
    let shown = shown.json();
    assert!(shown["due"].as_array().unwrap().len() > 3);
    // Same content as `halotank schedule show --format json`.
    let out = std::process::Command::new(env!("CARGO_BIN_EXE_halotank"))
        .args(["schedule", "show", &id.to_string(), "--format", "json", "--db"])
        .arg(&f.db)
        .output()
        .unwrap();
    let cli: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(cli["schedule"], shown["schedule"]);
    assert_eq!(cli["due"], shown["due"]);

    let path = |action: &str| format!("/api/schedules/{id}/{action}");
    f.post(&path("pause"), "{}", None).error(401);
    let r = f.post(&path("pause"), r#"{"by": "ines"}"#, Some(TOKEN));
    assert_eq!(
        (r.status, r.json()["progress"]["state"].clone()),
        (200, json!("paused"))
    );
    assert!(f
        .post(&path("pause"), "", Some(TOKEN))
        .error(409)
        .contains("paused"));
    let r = f.post(&path("resume"), "", Some(TOKEN));
    assert_eq!(
        (r.status, r.json()["progress"]["state"].clone()),
        (200, json!("active"))
    );
    f.post(&path("step-done"), r#"{"step": 2, "by": "ines"}"#, Some(TOKEN))
        .error(409);
    let r = f.post(&path("step-done"), r#"{"step": 1, "by": "ines"}"#, Some(TOKEN));
    assert_eq!(
        (r.status, r.json()["progress"]["steps_done"].clone()),
        (200, json!(1))
    );
    assert!(f
        .post(&path("step-done"), r#"{"step": 1, "by": "ines"}"#, Some(TOKEN))
        .error(409)
        .contains("already"));
    f.post(&path("step-done"), r#"{"step": 0, "by": "ines"}"#, Some(TOKEN))
        .error(400);
    f.post(&path("step-done"), r#"{"by": "ines"}"#, Some(TOKEN))
        .error(400);
    let r = f.post(&path("abort"), "", Some(TOKEN));
    assert_eq!(
        (r.status, r.json()["progress"]["state"].clone()),
        (200, json!("aborted"))
    );
    f.post(&path("resume"), "", Some(TOKEN)).error(409);
    assert!(f.get("/api/tanks").json()["tanks"][1]["schedule"].is_null());

    f.get("/api/schedules/404").error(404);
    f.post("/api/schedules/404/pause", "", Some(TOKEN)).error(404);
    f.get("/api/schedules/first").error(400);
    f.get("/api/schedules?state=done").error(400);
    f.post("/api/schedules/1/pause", "not json", Some(TOKEN))
        .error(400);
    let other = json!({"tank": "no-such-tank", "plan": plan_form()}).to_string();
    f.post("/api/schedules", &other, Some(TOKEN)).error(404);
    let mut blend = plan_form();
    blend["method"] = json!("blend");
    let blend = json!({"tank": SMOLT, "plan": blend}).to_string();
    assert!(f
        .post("/api/schedules", &blend, Some(TOKEN))
        .error(400)
        .contains("blend"));
    f.post("/api/schedules", r#"{"plan": {}}"#, Some(TOKEN))
        .error(400);
}

#[test]
fn the_page_and_assets_are_embedded_and_unknown_routes_answer_json() {
    let f = Fixture::start(None);
    let r = f.get("/");
    assert_eq!(r.status, 200);
    assert!(r.content_type.starts_with("text/html"), "{}", r.content_type);
    assert!(r.body.contains("halotank"));
    let tag = r.etag.clone().expect("an ETag");
    let again = get(f.addr, "/", &[("If-None-Match", &tag)]);
    assert_eq!(again.status, 304);
    assert_eq!(f.get("/assets/index.html").status, 200);
    f.get("/assets/missing.js").error(404);
    f.get("/api/nothing-here").error(404);
    let huge = format!(r#"{{"by": "ines", "note": "{}"}}"#, "n".repeat(70 * 1024));
    assert!(f.post("/api/plan", &huge, None).error(413).contains("KiB"));
    let m = f.post("/api/tanks", "{}", Some(TOKEN)).error(405);
    assert!(m.contains("method"), "{m}");
}

#[test]
fn requests_naming_another_host_are_refused_against_dns_rebinding() {
    let f = Fixture::start(None);
    let r = get(f.addr, "/api/tanks", &[("Host", "evil.example:8480")]);
    let message = r.error(421);
    assert!(
        message.contains("allowed_hosts") && message.contains("evil.example"),
        "{message}"
    );
    assert_eq!(
        get(f.addr, "/api/tanks", &[("Host", "localhost:8480")]).status,
        200
    );
    assert_eq!(get(f.addr, "/", &[("Host", "[::1]:8480")]).status, 200);
}

#[test]
fn metrics_follow_the_exposition_format_and_count_requests() {
    let f = Fixture::start(None);
    let mut counters = halotank::daemon::counters::Counters {
        accepted_messages: 40,
        readings: 41,
        ..Default::default()
    };
    counters.rejected.insert("payload_not_json", 2);
    counters.ignored.insert("unknown_topic", 5);
    f.live.set_counters(&counters);
    for (rows, ms) in [(1, 3), (100, 40), (7, 2)] {
        f.live.record_commit(rows, std::time::Duration::from_millis(ms));
    }
    f.get("/api/tanks/no-such-tank");
    let r = f.get("/metrics");
    assert_eq!(r.status, 200);
    assert!(
        r.content_type.starts_with("text/plain; version=0.0.4"),
        "{}",
        r.content_type
    );
    let m = parse_exposition(&r.body).unwrap_or_else(|e| panic!("{e}\n{}", r.body));
    assert_eq!(m.value("halotank_readings_accepted_total", &[]), Some(41.0));
    assert_eq!(
        m.value(
            "halotank_messages_rejected_total",
            &[("reason", "payload_not_json")]
        ),
        Some(2.0)
    );
    assert_eq!(
        m.value("halotank_messages_ignored_total", &[("reason", "unknown_topic")]),
        Some(5.0)
    );
    assert_eq!(
        m.value("halotank_open_alerts", &[("severity", "critical")]),
        Some(1.0)
    );
    assert_eq!(
        m.value("halotank_open_alerts", &[("severity", "warning")]),
        Some(1.0)
    );
    assert_eq!(
        m.value("halotank_open_alerts", &[("severity", "info")]),
        Some(0.0)
    );
    assert_eq!(m.value("halotank_mqtt_connected", &[]), Some(1.0));
    assert_eq!(m.value("halotank_mqtt_reconnects_total", &[]), Some(2.0));
    let age = m
        .value("halotank_tank_last_reading_age_seconds", &[("tank", SMOLT)])
        .unwrap();
    assert!(age >= 59.0, "{age}");
    assert_eq!(m.value("halotank_writer_batch_size_rows_count", &[]), Some(3.0));
    assert_eq!(m.value("halotank_writer_batch_size_rows_sum", &[]), Some(108.0));
    assert_eq!(
        m.value("halotank_writer_batch_size_rows_bucket", &[("le", "5")]),
        Some(1.0)
    );
    assert_eq!(
        m.value("halotank_writer_batch_size_rows_bucket", &[("le", "10")]),
        Some(2.0)
    );
    assert_eq!(
        m.value(
            "halotank_writer_commit_latency_seconds_bucket",
            &[("le", "0.005")]
        ),
        Some(2.0)
    );
    assert_eq!(
        m.value("halotank_writer_commit_latency_seconds_bucket", &[("le", "+Inf")]),
        Some(3.0)
    );
    assert!(
        m.value("halotank_http_requests_total", &[("code", "404")])
            .unwrap()
            >= 1.0
    );
    assert_eq!(m.types["halotank_writer_commit_latency_seconds"], "histogram");
    assert_eq!(m.types["halotank_readings_accepted_total"], "counter");
    for family in m.types.keys() {
        assert!(
            family.starts_with("halotank_") && m.helps.contains_key(family),
            "{family}"
        );
    }
}

#[test]
fn the_exposition_checker_refuses_what_the_format_forbids() {
    // The checker itself, on hand-written texts that break one rule each (Prometheus exposition formats).
    let good = "# HELP a_total A.\n# TYPE a_total counter\na_total{x=\"q\\\"\\\\\\n\"} 1\n";
    let parsed = parse_exposition(good).unwrap();
    assert_eq!(parsed.samples[0].labels["x"], "q\"\\\n");
    for bad in [
        "a_total 1",
        "# TYPE a counter\na -1\n",
        "1abc 1\n",
        "a{1x=\"v\"} 1\n",
        "a{x=v} 1\n",
        "a{x=\"v\"} one\n",
        "# TYPE h histogram\nh_bucket{le=\"1\"} 2\nh_bucket{le=\"2\"} 1\nh_bucket{le=\"+Inf\"} 2\nh_sum 1\nh_count 2\n",
        "# TYPE h histogram\nh_bucket{le=\"1\"} 1\nh_sum 1\nh_count 1\n",
        "# TYPE h histogram\nh_bucket{le=\"+Inf\"} 1\nh_sum 1\nh_count 2\n",
        "a 1\nb 1\na 2\n",
        "a 1\n# TYPE a gauge\n",
        "# TYPE a meter\n",
    ] {
        assert!(parse_exposition(bad).is_err(), "accepted: {bad:?}");
    }
}

#[test]
fn hours_folded_by_retention_come_back_from_the_hourly_table() {
    let f = Fixture::start(None);
    let (writer, _reports, thread) =
        halotank::storage::spawn_writer::<()>(&f.db, halotank::storage::WriterSettings::default()).unwrap();
    let settings = halotank::storage::RetentionSettings {
        readings_days: 1,
        rejections_days: None,
    };
    let report = writer.blocking_run_retention(f.now, settings).unwrap();
    drop(writer);
    thread.join().unwrap().unwrap();
    assert!(report.readings_folded > 1000, "{report:?}");
    let cutoff = report.readings_cutoff;
    let from = f.stored[0].0;
    let to = f.stored.last().unwrap().0 + Duration::seconds(1);
    let r = f.get(&format!(
        "/api/tanks/{SMOLT}/history?from={}&to={}&points=5000",
        enc(from),
        enc(to)
    ));
    assert_eq!(r.status, 200, "{}", r.body);
    let v = r.json();
    assert_eq!(v["downsampled"], true);
    let points = v["points"].as_array().unwrap();
    // Each folded hour is one point at the middle of its hour with that hour's mean, min and max.
    let hour = Duration::hours(1);
    let first_hour_start = DateTime::from_timestamp(from.timestamp() - from.timestamp() % 3600, 0).unwrap();
    let mut h = first_hour_start;
    let mut checked = 0;
    while h + hour <= cutoff {
        let in_hour: Vec<f64> = f
            .stored
            .iter()
            .filter(|(t, _)| *t >= h && *t < h + hour)
            .map(|(_, sp)| *sp)
            .collect();
        if h >= from && !in_hour.is_empty() {
            let mid = stamp(h + Duration::minutes(30));
            let p = points
                .iter()
                .find(|p| p["time"] == mid)
                .unwrap_or_else(|| panic!("no point at {mid}"));
            let mean = in_hour.iter().sum::<f64>() / in_hour.len() as f64;
            assert!(
                (p["practical_salinity"].as_f64().unwrap() - mean).abs() < 1e-9,
                "{mid}"
            );
            let max = in_hour.iter().cloned().fold(f64::NEG_INFINITY, f64::max);
            assert_eq!(p["max_practical_salinity"].as_f64().unwrap(), max);
            checked += 1;
        }
        h += hour;
    }
    assert!(checked >= 20, "{checked} folded hours checked");
    // After the cutoff every raw reading is its own point.
    let raw_after = f.stored.iter().filter(|(t, _)| *t >= cutoff).count();
    let after = points
        .iter()
        .filter(|p| p["time"].as_str().unwrap() >= stamp(cutoff).as_str())
        .count();
    assert_eq!(after, raw_after);
}

#[test]
fn a_database_that_cannot_be_opened_answers_503() {
    let f = Fixture::start(Some(TOKEN));
    for suffix in ["", "-wal", "-shm"] {
        let _ = std::fs::remove_file(format!("{}{suffix}", f.db.display()));
    }
    assert!(f.get("/api/alerts").error(503).contains("database"));
    f.get(&format!("/api/tanks/{SMOLT}/history")).error(503);
    f.post("/api/alerts/1/ack", r#"{"by": "ines"}"#, Some(TOKEN))
        .error(503);
    f.post("/api/schedules/1/pause", "", Some(TOKEN)).error(503);
    assert!(!f.db.exists(), "no empty database was created");
    // The overview is served from memory and still answers.
    assert_eq!(f.get("/api/tanks").status, 200);
}
