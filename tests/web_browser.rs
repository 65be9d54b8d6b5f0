//! The operator page in a real browser: headless Chromium, driven through chromedriver (WebDriver, with
//! the fantoccini client), loads the page from the daemon's own HTTP server while the daemon takes
//! readings from the embedded MQTT broker. A value just published shows on its tank card and updates in
//! place, a stale probe is flagged, a raised alert appears, a wrong token is refused with a clear message,
//! and acknowledging the alert from the page changes its state in the database. Screenshots of the light
//! and the dark theme are saved in `target/browser-artifacts/`. A plan made in the page's form is started
//! as a schedule and its first step marked done from the tank view; both land in the database.
//!
//! Needs the Debian packages `chromium` and `chromium-driver` (`/usr/bin/chromium`, `/usr/bin/chromedriver`,
//! or the paths in `HALOTANK_TEST_CHROMIUM` and `HALOTANK_TEST_CHROMEDRIVER`). Without them the test
//! prints why and passes, unless `HALOTANK_TEST_BROWSER=1` (set by `.ci/run`), which makes a missing
//! browser a failure. Nothing is downloaded at test time.
mod mqtt_support;

use std::net::{SocketAddr, TcpListener};
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::sync::{Arc, Mutex};
use std::time::Duration;

use chrono::{DateTime, SecondsFormat, SubsecRound, TimeDelta, Utc};
use fantoccini::{Client, ClientBuilder, Locator};
use halotank::alerts::AlertRecord;
use halotank::mqtt::EmbeddedBroker;
use halotank::seawater::practical_salinity::conductivity_from_practical_salinity;
use halotank::species::SpeciesLibrary;
use halotank::storage::Reader;
use mqtt_support::{unique, Peer};
use tokio::io::{AsyncReadExt, AsyncWriteExt};
use tokio::sync::watch;

/// The tank driven out of its tolerance (raises the alert).
const ALERT_TANK: &str = "oyster-w1";
const ALERT_SPECIES: &str = "pacific_oyster";
/// A fish tank: its card shows the tonicity against the plasma.
const FISH_TANK: &str = "smolt-w2";
const FISH_SPECIES: &str = "atlantic_salmon_smolt";
/// A tank whose only reading is old: its card must say the probe is stale.
const STALE_TANK: &str = "parr-w3";
const TEMPERATURE_C: f64 = 15.0;
const TOKEN: &str = "brannock-page-test-7c1e";
const ACK_BY: &str = "Morwenna Pascoe";
const ACK_NOTE: &str = "probe checked against the bench meter";
/// Longest any single wait may take (the page polls every 5 s, the daemon applies acks every ~2 s).
const DEADLINE: Duration = Duration::from_secs(40);

/// Rules other than the salinity tolerance are off, so exactly one alert is raised.
const RULES_OFF: [&str; 10] = [
    "salinity_optimum",
    "temperature_optimum",
    "temperature_tolerance",
    "salinity_rate",
    "probe_stale",
    "probe_spike",
    "probe_flat_line",
    "probe_inconsistent",
    "near_freezing",
    "schedule_off",
];

/// A program from its environment variable, else `/usr/bin/NAME`, else the first NAME on `PATH`.
fn find_program(env: &str, names: &[&str]) -> Option<PathBuf> {
    if let Some(path) = std::env::var_os(env) {
        let path = PathBuf::from(path);
        return path.is_file().then_some(path);
    }
    let mut dirs = vec![PathBuf::from("/usr/bin")];
    if let Some(path) = std::env::var_os("PATH") {
        dirs.extend(std::env::split_paths(&path));
    }
    dirs.iter()
        .flat_map(|d| names.iter().map(move |n| d.join(n)))
        .find(|p| p.is_file())
}

/// Both programs, or `None` after printing why the test is skipped (a failure under HALOTANK_TEST_BROWSER=1).
fn browser_programs() -> Option<(PathBuf, PathBuf)> {
    let chromium = find_program("HALOTANK_TEST_CHROMIUM", &["chromium", "chromium-browser"]);
    let driver = find_program("HALOTANK_TEST_CHROMEDRIVER", &["chromedriver"]);
    match (chromium, driver) {
        (Some(c), Some(d)) => Some((c, d)),
        (c, d) => {
            let missing: Vec<&str> = [(c.is_none(), "chromium"), (d.is_none(), "chromedriver")]
                .iter()
                .filter(|(m, _)| *m)
                .map(|(_, n)| *n)
                .collect();
            let why = format!(
                "{} not found (install the Debian packages `chromium chromium-driver`, or set \
                 HALOTANK_TEST_CHROMIUM / HALOTANK_TEST_CHROMEDRIVER)",
                missing.join(" and ")
            );
            if std::env::var("HALOTANK_TEST_BROWSER").is_ok_and(|v| v == "1") {
                panic!("HALOTANK_TEST_BROWSER=1 but {why}");
            }
            eprintln!("web_browser: skipped: {why}");
            None
        }
    }
}

fn free_port() -> u16 {
    TcpListener::bind("127.0.0.1:0")
        .unwrap()
        .local_addr()
        .unwrap()
        .port()
}

/// Where screenshots go: `<target>/browser-artifacts/`.
fn artifacts_dir() -> PathBuf {
    let tmp = Path::new(env!("CARGO_TARGET_TMPDIR"));
    let dir = tmp.parent().unwrap_or(tmp).join("browser-artifacts");
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

/// chromedriver on a free local port; killed when dropped.
struct Driver {
    child: Child,
    port: u16,
    /// Every session opened, so they can be closed even when the scenario fails half-way (a browser
    /// whose session is never closed outlives chromedriver).
    sessions: Mutex<Vec<Client>>,
}

impl Driver {
    async fn start(program: &Path, log: &Path) -> Driver {
        let port = free_port();
        let log = std::fs::File::create(log).unwrap();
        let child = Command::new(program)
            .arg(format!("--port={port}"))
            .stdin(Stdio::null())
            .stdout(log.try_clone().unwrap())
            .stderr(log)
            .spawn()
            .expect("start chromedriver");
        let driver = Driver {
            child,
            port,
            sessions: Mutex::new(Vec::new()),
        };
        let deadline = tokio::time::Instant::now() + DEADLINE;
        while tokio::net::TcpStream::connect(("127.0.0.1", port)).await.is_err() {
            assert!(
                tokio::time::Instant::now() < deadline,
                "chromedriver never listened on {port}"
            );
            tokio::time::sleep(Duration::from_millis(50)).await;
        }
        driver
    }

    /// A new headless Chromium session (`--force-dark-mode` makes `prefers-color-scheme: dark` match).
    async fn session(&self, chromium: &Path, dark: bool) -> Client {
        let mut args = vec![
            "--headless=new",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-dev-shm-usage",
            "--hide-scrollbars",
            "--window-size=1280,1500",
        ];
        if dark {
            args.push("--force-dark-mode");
        }
        let mut caps = serde_json::Map::new();
        caps.insert(
            "goog:chromeOptions".to_string(),
            serde_json::json!({ "binary": chromium, "args": args }),
        );
        let client = ClientBuilder::new(hyper_util::client::legacy::connect::HttpConnector::new())
            .capabilities(caps)
            .connect(&format!("http://127.0.0.1:{}", self.port))
            .await
            .expect("open a Chromium session through chromedriver");
        self.sessions.lock().unwrap().push(client.clone());
        client
    }

    /// Closes every session still open (ending its browser); closed ones just answer an error.
    async fn close_all(&self) {
        let sessions: Vec<Client> = self.sessions.lock().unwrap().drain(..).collect();
        for client in sessions {
            let _ = client.close().await;
        }
    }
}

impl Drop for Driver {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

fn config_text(
    broker: SocketAddr,
    db: &Path,
    root: &str,
    prefix: &str,
    http: SocketAddr,
    token: &Path,
) -> String {
    let mut text = format!(
        "# Generated by the browser test (fictional site).\n\
         [site]\nname = \"Brannock Sound Hatchery page test bench\"\n\
         [broker]\nhost = \"{host}\"\nport = {port}\nclient_id = \"{client}\"\n\
         [storage]\npath = \"{db}\"\nflush_ms = 50\n\
         [publish]\ntopic_prefix = \"{prefix}\"\n\
         [http]\nbind = \"{http}\"\ntoken_file = \"{token}\"\n",
        host = broker.ip(),
        port = broker.port(),
        client = unique("halotank-web"),
        db = db.display(),
        token = token.display(),
    );
    let tanks = [
        (ALERT_TANK, "Oyster depuration tank W1", Some(ALERT_SPECIES)),
        (FISH_TANK, "Smolt transfer tank W2", Some(FISH_SPECIES)),
        (STALE_TANK, "Parr raceway W3", Some("atlantic_salmon_parr")),
    ];
    for (id, name, species) in tanks {
        text.push_str(&format!(
            "[[tanks]]\nid = \"{id}\"\nname = \"{name}\"\nvolume_l = 600\nformat = \"json\"\n\
             conductivity_unit = \"mS/cm\"\n"
        ));
        if let Some(s) = species {
            text.push_str(&format!("species = \"{s}\"\n"));
        }
        text.push_str(&format!("[tanks.topics]\ncombined = \"{root}/{id}/probe\"\n"));
    }
    text.push_str(
        "[alerts.rules.salinity_tolerance]\nmin_duration_s = 0\nclear_after_s = 0\nrenotify_s = 0\n",
    );
    for rule in RULES_OFF {
        text.push_str(&format!("[alerts.rules.{rule}]\nenabled = false\n"));
    }
    text
}

/// Publishes combined-JSON readings of one tank at a given practical salinity.
struct Probe {
    peer: Peer,
    root: String,
}

impl Probe {
    /// Publishes SP `sp` at `time`; returns the conductivity sent (mS/cm).
    async fn send(&mut self, tank: &str, sp: f64, time: DateTime<Utc>) -> f64 {
        let c = conductivity_from_practical_salinity(sp, TEMPERATURE_C, 0.0).unwrap();
        let time = time.to_rfc3339_opts(SecondsFormat::Millis, true);
        let payload =
            format!("{{\"conductivity\": {c}, \"temperature\": {TEMPERATURE_C}, \"time\": \"{time}\"}}");
        self.peer
            .publish_acked(&format!("{}/{tank}/probe", self.root), payload.as_bytes(), false)
            .await;
        c
    }
}

/// Plain `GET path` on the daemon's HTTP server; the status code, or `None` while nothing listens.
async fn http_status(addr: SocketAddr, path: &str) -> Option<u16> {
    let mut s = tokio::net::TcpStream::connect(addr).await.ok()?;
    let req = format!("GET {path} HTTP/1.1\r\nHost: {addr}\r\nConnection: close\r\n\r\n");
    s.write_all(req.as_bytes()).await.ok()?;
    let mut buf = Vec::new();
    s.read_to_end(&mut buf).await.ok()?;
    let head = String::from_utf8_lossy(&buf);
    head.split_whitespace().nth(1)?.parse().ok()
}

fn alerts(db: &Path) -> Vec<AlertRecord> {
    Reader::open(db)
        .and_then(|r| r.alerts(false, None))
        .unwrap_or_default()
}

async fn wait_db<T>(what: &str, mut probe: impl FnMut() -> Option<T>) -> T {
    let deadline = tokio::time::Instant::now() + DEADLINE;
    loop {
        if let Some(v) = probe() {
            return v;
        }
        assert!(
            tokio::time::Instant::now() < deadline,
            "timed out waiting for {what}"
        );
        tokio::time::sleep(Duration::from_millis(100)).await;
    }
}

/// The text of the first element matching `css`, or `None` while there is none.
async fn text_of(c: &Client, css: &str) -> Option<String> {
    let e = c.find(Locator::Css(css)).await.ok()?;
    e.text().await.ok()
}

async fn attr_of(c: &Client, css: &str, attr: &str) -> Option<String> {
    let e = c.find(Locator::Css(css)).await.ok()?;
    e.attr(attr).await.ok().flatten()
}

/// Polls the page until `probe` gives `Some`; on timeout panics with what was awaited and the page's text.
async fn wait_page<T, F, Fut>(c: &Client, what: &str, mut probe: F) -> T
where
    F: FnMut() -> Fut,
    Fut: std::future::Future<Output = Option<T>>,
{
    let deadline = tokio::time::Instant::now() + DEADLINE;
    loop {
        if let Some(v) = probe().await {
            return v;
        }
        if tokio::time::Instant::now() >= deadline {
            let body = text_of(c, "body").await.unwrap_or_default();
            panic!("timed out waiting for {what}; the page shows:\n{body}");
        }
        tokio::time::sleep(Duration::from_millis(150)).await;
    }
}

/// Scrolls the element to the middle of the window (as a person would, clear of the fixed caution
/// strip at the bottom) and clicks it. The page redraws its lists every few seconds, so an element found
/// just before a redraw may be gone when clicked: then it is found again, until the deadline.
async fn click(c: &Client, css: &str) {
    let deadline = tokio::time::Instant::now() + DEADLINE;
    loop {
        let attempt = async {
            let e = c.find(Locator::Css(css)).await?;
            let arg = serde_json::to_value(&e).map_err(fantoccini::error::CmdError::Json)?;
            c.execute(
                "arguments[0].scrollIntoView({block: 'center'}); return true",
                vec![arg],
            )
            .await?;
            e.click().await
        };
        match attempt.await {
            Ok(()) => return,
            Err(e) if tokio::time::Instant::now() >= deadline => panic!("click {css}: {e}"),
            Err(_) => tokio::time::sleep(Duration::from_millis(200)).await,
        }
    }
}

async fn type_into(c: &Client, css: &str, text: &str) {
    let e = c
        .find(Locator::Css(css))
        .await
        .unwrap_or_else(|e| panic!("no element {css}: {e}"));
    e.clear().await.unwrap();
    e.send_keys(text).await.unwrap();
}

/// Waits for a dialog to be open (shown modally) and returns once it is.
async fn wait_dialog(c: &Client, testid: &str) {
    let css = format!("[data-testid=\"{testid}\"][open]");
    wait_page(c, &format!("the {testid} to open"), || async {
        c.find(Locator::Css(&css)).await.ok().map(|_| ())
    })
    .await;
}

/// Saves a PNG screenshot and checks it is one (PNG signature, ISO/IEC 15948 §5.2).
async fn screenshot(c: &Client, name: &str) -> PathBuf {
    let png = c.screenshot().await.unwrap();
    assert_eq!(&png[..8], b"\x89PNG\r\n\x1a\n", "{name}: not a PNG");
    assert!(
        png.len() > 10_000,
        "{name}: {} bytes, too small for a rendered page",
        png.len()
    );
    let path = artifacts_dir().join(name);
    std::fs::write(&path, &png).unwrap();
    eprintln!("web_browser: screenshot {}", path.display());
    path
}

async fn prefers_dark(c: &Client) -> bool {
    c.execute(
        "return matchMedia('(prefers-color-scheme: dark)').matches",
        vec![],
    )
    .await
    .unwrap()
    .as_bool()
    .unwrap()
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn page_shows_published_values_and_acknowledges_an_alert() {
    let Some((chromium, chromedriver)) = browser_programs() else {
        return;
    };
    let logs = tempfile::tempdir().unwrap();
    let driver = Arc::new(Driver::start(&chromedriver, &logs.path().join("chromedriver.log")).await);
    let outcome = tokio::spawn(scenario(driver.clone(), chromium)).await;
    driver.close_all().await;
    drop(driver);
    if let Err(e) = outcome {
        if let Ok(log) = std::fs::read_to_string(logs.path().join("chromedriver.log")) {
            let tail: Vec<&str> = log.lines().rev().take(20).collect();
            eprintln!(
                "chromedriver log (last lines, newest first):\n{}",
                tail.join("\n")
            );
        }
        match e.try_into_panic() {
            Ok(panic) => std::panic::resume_unwind(panic),
            Err(e) => panic!("browser scenario did not finish: {e}"),
        }
    }
}

/// The scenario of the module doc, on sessions of `driver`.
async fn scenario(driver: Arc<Driver>, chromium: PathBuf) {
    mqtt_support::init_logging();
    let library = SpeciesLibrary::embedded().unwrap();
    let oyster = library.get(ALERT_SPECIES).unwrap();
    let inside = (oyster.salinity_optimum.min + oyster.salinity_optimum.max) / 2.0;
    let outside = if oyster.salinity_tolerance.min > 2.0 {
        oyster.salinity_tolerance.min / 2.0
    } else {
        oyster.salinity_tolerance.max + 3.0
    };
    let smolt = library.get(FISH_SPECIES).unwrap();
    let smolt_sp = (smolt.salinity_optimum.min + smolt.salinity_optimum.max) / 2.0;

    let broker = EmbeddedBroker::start().await.unwrap();
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("page.sqlite3");
    let token_file = dir.path().join("http.token");
    std::fs::write(&token_file, format!("{TOKEN}\n")).unwrap();
    let http: SocketAddr = ([127, 0, 0, 1], free_port()).into();
    let root = unique("brannock-page");
    let text = config_text(
        broker.addr(),
        &db,
        &root,
        &unique("halotank-page"),
        http,
        &token_file,
    );
    let cfg = halotank::config::parse(&text, &dir.path().join("halotank.toml")).unwrap();
    let (stop, stop_rx) = watch::channel(false);
    let daemon = tokio::spawn(halotank::daemon::run(cfg, stop_rx));
    let deadline = tokio::time::Instant::now() + DEADLINE;
    while http_status(http, "/healthz").await != Some(200) {
        assert!(
            tokio::time::Instant::now() < deadline,
            "no 200 from http://{http}/healthz"
        );
        tokio::time::sleep(Duration::from_millis(100)).await;
    }
    let mut probe = Probe {
        peer: Peer::connect(broker.addr(), &unique("page-probe"), true).await,
        root,
    };

    // Eight hours of history inside the optimum for the charts (every 10 min), then the readings the
    // cards must show: the alert tank, the fish tank, and one old reading for the stale tank.
    let t0 = (Utc::now() - TimeDelta::seconds(60)).trunc_subsecs(3);
    for i in (1..=48).rev() {
        let wave = (f64::from(i) / 7.0).sin();
        let at = t0 - TimeDelta::minutes(10 * i64::from(i));
        probe
            .send(ALERT_TANK, inside - 1.5 + 0.04 * f64::from(i) + 0.4 * wave, at)
            .await;
        probe.send(FISH_TANK, smolt_sp + 0.5 * wave, at).await;
    }
    let c1 = probe.send(ALERT_TANK, inside, t0).await;
    probe.send(FISH_TANK, smolt_sp, t0).await;
    let stale_at = (Utc::now() - TimeDelta::minutes(90)).trunc_subsecs(3);
    probe.send(STALE_TANK, 0.5, stale_at).await;
    wait_db("the latest readings stored", || {
        Reader::open(&db)
            .ok()
            .map(|r| {
                [ALERT_TANK, FISH_TANK, STALE_TANK].iter().all(|t| {
                    let since = if *t == STALE_TANK { stale_at } else { t0 };
                    r.history(t, None, None)
                        .is_ok_and(|h| h.iter().any(|row| row.time >= since))
                })
            })
            .filter(|all| *all)
    })
    .await;

    let page = driver.session(&chromium, false).await;
    assert!(
        !prefers_dark(&page).await,
        "the light session reports a dark colour scheme"
    );
    page.goto(&format!("http://{http}/")).await.unwrap();

    // The published value on its card: PSS-78 of the sent conductivity, checked against the gsw crate
    // (TEOS-10 GSW `gsw_sp_from_c`), shown to two decimals and carried at full precision in data-value.
    let card = format!("[data-testid=\"tank-card\"][data-tank=\"{ALERT_TANK}\"]");
    let sal_css = format!("{card} [data-testid=\"salinity\"]");
    let want1 = gsw::practical_salinity::sp_from_c(c1, TEMPERATURE_C, 0.0).unwrap();
    let shown = wait_page(&page, "the first reading on the card", || async {
        text_of(&page, &sal_css)
            .await
            .filter(|t| *t == format!("{want1:.2}"))
    })
    .await;
    assert_eq!(shown, format!("{want1:.2}"));
    let full: f64 = attr_of(&page, &sal_css, "data-value")
        .await
        .unwrap()
        .parse()
        .unwrap();
    assert!((full - want1).abs() <= 1e-8, "card SP {full}, gsw {want1}");

    // Live update without a reload: a marker set in the page survives the card changing.
    page.execute("window.__halotankMarker = 'kept'; return true", vec![])
        .await
        .unwrap();
    let sp2 = inside + 1.0;
    let c2 = probe.send(ALERT_TANK, sp2, t0 + TimeDelta::seconds(10)).await;
    let want2 = gsw::practical_salinity::sp_from_c(c2, TEMPERATURE_C, 0.0).unwrap();
    wait_page(&page, "the second reading on the card", || async {
        text_of(&page, &sal_css)
            .await
            .filter(|t| *t == format!("{want2:.2}"))
    })
    .await;
    let marker = page
        .execute("return window.__halotankMarker || null", vec![])
        .await
        .unwrap();
    assert_eq!(
        marker,
        serde_json::json!("kept"),
        "the page reloaded instead of updating the card"
    );

    // The stale tank is flagged in words, not only by style; the fresh ones are not.
    let stale_card = format!("[data-testid=\"tank-card\"][data-tank=\"{STALE_TANK}\"]");
    let flag = wait_page(&page, "the stale flag", || async {
        text_of(&page, &format!("{stale_card} [data-testid=\"stale\"]")).await
    })
    .await;
    assert!(flag.contains("STALE"), "stale flag reads {flag:?}");
    assert_eq!(
        attr_of(&page, &card, "data-stale").await.as_deref(),
        Some("false")
    );
    // The fish tank's tonicity against its species' plasma is written out.
    let tonicity = text_of(
        &page,
        &format!("[data-tank=\"{FISH_TANK}\"] [data-testid=\"tonicity\"]"),
    )
    .await
    .unwrap();
    assert!(
        tonicity.contains("osmotic to plasma"),
        "tonicity line {tonicity:?}"
    );
    // The caution is on the page.
    let caution = text_of(&page, "[data-testid=\"caution\"]").await.unwrap();
    assert!(
        caution.contains("life-support alarm") && caution.contains("calibrated meter"),
        "{caution}"
    );

    // Out of tolerance: the daemon raises one critical alert, and the card shows it.
    let mut t = t0 + TimeDelta::seconds(20);
    for _ in 0..3 {
        probe.send(ALERT_TANK, outside, t).await;
        t += TimeDelta::seconds(10);
    }
    let alert = wait_db("one open alert", || {
        alerts(&db).into_iter().find(|a| a.state.is_open())
    })
    .await;
    assert_eq!(alert.kind.as_str(), "salinity_tolerance");
    let alert_id = alert.id.0.to_string();
    wait_page(&page, "the alert on the card", || async {
        let css = format!("{card} [data-testid=\"card-alerts\"] [data-alert-id=\"{alert_id}\"]");
        text_of(&page, &css).await
    })
    .await;
    screenshot(&page, "overview-light.png").await;

    // The alerts view lists it as raised.
    page.goto(&format!("http://{http}/#/alerts")).await.unwrap();
    let row = format!("[data-testid=\"alert-row\"][data-alert-id=\"{alert_id}\"]");
    let state = wait_page(&page, "the alert row", || async {
        attr_of(&page, &row, "data-alert-state").await
    })
    .await;
    assert_eq!(state, "raised");

    // Acknowledge with a wrong token first: refused (401) with a message saying so; nothing changes.
    click(&page, &format!("{row} [data-testid=\"ack-button\"]")).await;
    wait_dialog(&page, "ack-dialog").await;
    type_into(&page, "[data-testid=\"ack-by\"]", ACK_BY).await;
    type_into(&page, "[data-testid=\"ack-note\"]", ACK_NOTE).await;
    click(&page, "[data-testid=\"ack-submit\"]").await;
    wait_dialog(&page, "unlock-dialog").await;
    type_into(&page, "[data-testid=\"token-input\"]", "not-the-token").await;
    click(&page, "[data-testid=\"unlock-submit\"]").await;
    let refused = wait_page(&page, "the 401 message", || async {
        text_of(&page, "[data-testid=\"notice\"]")
            .await
            .filter(|t| t.contains("401"))
    })
    .await;
    assert!(refused.contains("Unlock again"), "401 notice {refused:?}");
    assert!(alerts(&db)[0].acknowledgement.is_none());

    // Then with the daemon's token: the acknowledgement reaches the database.
    click(&page, &format!("{row} [data-testid=\"ack-button\"]")).await;
    wait_dialog(&page, "ack-dialog").await;
    type_into(&page, "[data-testid=\"ack-by\"]", ACK_BY).await;
    type_into(&page, "[data-testid=\"ack-note\"]", ACK_NOTE).await;
    click(&page, "[data-testid=\"ack-submit\"]").await;
    wait_dialog(&page, "unlock-dialog").await;
    // Enter in the field confirms (WebDriver key U+E007 is Enter).
    type_into(
        &page,
        "[data-testid=\"token-input\"]",
        &format!("{TOKEN}\u{e007}"),
    )
    .await;
    let acked = wait_db("the acknowledgement in the database", || {
        alerts(&db)
            .into_iter()
            .find(|a| a.id == alert.id && a.acknowledgement.is_some())
    })
    .await;
    let ack = acked.acknowledgement.as_ref().unwrap();
    assert_eq!(ack.by, ACK_BY);
    assert_eq!(ack.note.as_deref(), Some(ACK_NOTE));
    assert_eq!(
        acked.state.as_str(),
        "acknowledged",
        "the condition is still present"
    );
    let state = wait_page(&page, "the row to show acknowledged", || async {
        attr_of(&page, &row, "data-alert-state")
            .await
            .filter(|s| s == "acknowledged")
    })
    .await;
    assert_eq!(state, "acknowledged");
    assert_eq!(
        attr_of(&page, "[data-testid=\"unlock\"]", "aria-pressed")
            .await
            .as_deref(),
        Some("true"),
        "the page should show it is unlocked"
    );
    screenshot(&page, "alerts-light.png").await;

    // A plan for the fish tank (its volume, species and salinity come from the daemon), started as a
    // schedule, and its first step marked done from the tank view (the name is the one given above).
    page.goto(&format!("http://{http}/#/plan?tank={FISH_TANK}"))
        .await
        .unwrap();
    wait_page(&page, "the tank in the plan form", || async {
        let v = page
            .execute(
                "return document.querySelector('[data-testid=\"plan-tank\"]').value",
                vec![],
            )
            .await
            .ok()?;
        (v == serde_json::json!(FISH_TANK)).then_some(())
    })
    .await;
    let target = 20.0;
    type_into(&page, "[data-testid=\"plan-to\"]", &format!("{target}")).await;
    type_into(&page, "[data-testid=\"plan-source_practical_salinity\"]", "0").await;
    type_into(&page, "[data-testid=\"plan-interval_h\"]", "1").await;
    // 2 SP per hour, linear: about six hourly steps.
    let shape = page
        .find(Locator::Css("[data-testid=\"plan-shape\"]"))
        .await
        .unwrap();
    shape.select_by_value("linear").await.unwrap();
    type_into(&page, "[data-testid=\"plan-rate\"]", "2").await;
    click(&page, "[data-testid=\"plan-submit\"]").await;
    let rows_css = "[data-testid=\"plan-result\"] [data-testid=\"step-table\"] tbody tr";
    let planned_rows = wait_page(&page, "the plan's step table", || async {
        let rows = page.find_all(Locator::Css(rows_css)).await.ok()?;
        (!rows.is_empty()).then_some(rows.len())
    })
    .await;
    screenshot(&page, "plan-light.png").await;
    click(&page, "[data-testid=\"plan-start\"]").await;
    let schedule = wait_db("the schedule in the database", || {
        Reader::open(&db)
            .ok()?
            .schedules(Some(FISH_TANK))
            .ok()?
            .into_iter()
            .find(|s| s.state.is_open())
    })
    .await;
    assert_eq!(schedule.plan.steps.len(), planned_rows, "steps shown vs stored");
    assert!(
        planned_rows >= 2,
        "a plan of {planned_rows} step(s): the schedule would end at once"
    );
    assert_eq!(schedule.plan.to_practical_salinity, target);
    let step_done = "[data-testid=\"step-done\"][data-step=\"1\"]";
    wait_page(&page, "the step-done button of step 1", || async {
        page.find(Locator::Css(step_done)).await.ok().map(|_| ())
    })
    .await;
    click(&page, step_done).await;
    let done = wait_db("step 1 done in the database", || {
        Reader::open(&db)
            .ok()?
            .schedule(schedule.id)
            .ok()
            .filter(|s| !s.steps_done.is_empty())
    })
    .await;
    assert_eq!(done.steps_done[0].step, 1);
    assert_eq!(done.steps_done[0].by, ACK_BY);
    wait_page(&page, "step 1 shown done", || async {
        page.find(Locator::Css(
            "[data-testid=\"step-table\"] tr.row-done[data-step=\"1\"]",
        ))
        .await
        .ok()
        .map(|_| ())
    })
    .await;
    screenshot(&page, "tank-schedule-light.png").await;

    // Phone width: one column of cards, the values still large.
    page.set_window_size(390, 1600).await.unwrap();
    page.goto(&format!("http://{http}/")).await.unwrap();
    wait_page(&page, "the card at phone width", || async {
        text_of(&page, &sal_css)
            .await
            .filter(|t| !t.is_empty() && t != "–")
    })
    .await;
    let columns = page
        .execute(
            "return getComputedStyle(document.querySelector('[data-testid=\"cards\"]')).gridTemplateColumns.split(' ').length",
            vec![],
        )
        .await
        .unwrap();
    assert_eq!(columns, serde_json::json!(1), "cards at phone width");
    screenshot(&page, "overview-phone-light.png").await;
    page.close().await.unwrap();

    // The dark theme, from the system setting.
    let dark = driver.session(&chromium, true).await;
    assert!(
        prefers_dark(&dark).await,
        "--force-dark-mode did not set prefers-color-scheme: dark"
    );
    dark.goto(&format!("http://{http}/")).await.unwrap();
    wait_page(&dark, "the card in the dark session", || async {
        text_of(&dark, &sal_css)
            .await
            .filter(|t| !t.is_empty() && t != "–")
    })
    .await;
    let bg = dark
        .execute("return getComputedStyle(document.body).backgroundColor", vec![])
        .await
        .unwrap();
    assert_ne!(
        bg,
        serde_json::json!("rgb(243, 240, 232)"),
        "dark session shows the light background"
    );
    screenshot(&dark, "overview-dark.png").await;
    // The fish tank's view: history lines, the schedule's setpoint line, the plasma's isosmotic band.
    dark.set_window_size(1280, 2600).await.unwrap();
    dark.goto(&format!("http://{http}/#/tank/{FISH_TANK}"))
        .await
        .unwrap();
    for (what, css) in [
        (
            "the salinity line",
            "[data-testid=\"chart-salinity\"] svg path.line.s-sal",
        ),
        (
            "the setpoint line",
            "[data-testid=\"chart-salinity\"] svg path.line.s-set",
        ),
        (
            "the isosmotic band",
            "[data-testid=\"chart-osmolality\"] svg rect.band-iso",
        ),
        (
            "the temperature line",
            "[data-testid=\"chart-temperature\"] svg path.line.s-temp",
        ),
        (
            "the step table",
            "[data-testid=\"schedule-panel\"] [data-testid=\"step-table\"]",
        ),
    ] {
        wait_page(&dark, what, || async {
            dark.find(Locator::Css(css)).await.ok().map(|_| ())
        })
        .await;
    }
    screenshot(&dark, "tank-dark.png").await;
    dark.close().await.unwrap();

    stop.send(true).unwrap();
    tokio::time::timeout(DEADLINE, daemon)
        .await
        .expect("daemon did not stop")
        .unwrap()
        .unwrap();
    broker.stop().await;
}
