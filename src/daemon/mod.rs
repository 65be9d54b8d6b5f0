//! The daemon: wires the MQTT adapter, the pure ingest core, the science core and the SQLite writer.
//!
//! ```text
//! MQTT client ──InboundMessage──▶ ingest loop (MessageHandler) ──WriteItem──▶ writer thread (SQLite)
//!      ▲                                                                          │
//!      └──────────── acks, retained tank state ◀── acker ◀──CommitReport──────────┘
//! ```
//! Alerts: the handler runs the alert engine on each derived reading; every event's record goes to the
//! writer (`WriteItem::Alert`) and the event to the alert publisher (MQTT, and the delivery hook). Every
//! [`ALERT_TICK`] the loop ticks the engine and applies acknowledgement requests the CLI left in the
//! database (`alert_ack_requests`).
//!
//! Schedules: every [`ALERT_TICK`] the loop also reads the open schedules back from the database
//! ([`schedule_sync`]), so one started or marked with `halotank schedule` is tracked within seconds; the
//! tracker's setpoints go to the setpoint publisher (retained `<prefix>/tank/<id>/setpoint`), its
//! step-due and off-schedule signals to the alert engine, and each reading is checked against its tank's
//! setpoint in the handler.
//! HTTP: [`live_updates`] starts the server of [`crate::http`] and the loop keeps its live view current
//! (tank states from the acker, alert events, the link, counters and writer health every state tick).
//!
//! A QoS 1 message is acked only after the transaction holding its rows has committed; rejected and
//! ignored messages travel through the writer too, so acks leave in the order messages arrived.
pub mod acker;
pub mod alert_limits;
pub mod alert_publisher;
pub mod alerting;
pub mod connection;
pub mod counters;
pub mod handler;
pub mod live_updates;
pub mod schedule_sync;
pub mod setpoint_publisher;
pub mod shutdown;
pub mod tank_state;

use std::time::Duration;

use anyhow::Context;
use chrono::Utc;
use tokio::sync::watch;

use crate::config::Config;
use crate::ingest::subscriptions;
use crate::mqtt::{ConnectionState, MqttHandle};
use crate::species::{SpeciesLibrary, SpeciesProfile};
use crate::storage::{
    spawn_writer, DaemonStateRow, Reader, RetentionSettings, StorageError, WriteItem, WriterHandle,
    WriterSettings,
};

use acker::{run_acker, AckerSummary, Pending};
use handler::MessageHandler;

/// How often the daemon records its own state (broker link, counters) in the database.
const STATE_INTERVAL: Duration = Duration::from_secs(5);
/// How often retention folds old readings.
const RETENTION_INTERVAL: Duration = Duration::from_secs(3600);
/// A broker outage longer than this is logged as a warning, once per interval.
const OUTAGE_WARNING: chrono::TimeDelta = chrono::TimeDelta::seconds(60);
/// How often the alert engine's clock advances and acknowledgement requests are polled.
const ALERT_TICK: Duration = Duration::from_secs(2);
/// Capacity of the queue from the ingest loop to the alert publisher.
const ALERT_QUEUE: usize = 1024;
/// Capacity of the queue from the ingest loop to the setpoint publisher.
const SETPOINT_QUEUE: usize = 1024;
/// How long a graceful MQTT shutdown may take.
const MQTT_SHUTDOWN_TIMEOUT: Duration = Duration::from_secs(10);

/// What a daemon run did, returned after a graceful stop.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct RunSummary {
    pub messages: u64,
    pub readings_stored: u64,
    pub duplicates: u64,
    pub rejected: u64,
    pub ignored: u64,
    pub acks_sent: u64,
}

/// What a caller embedding the daemon (the demo, tests) may ask of it.
#[derive(Debug, Default)]
pub struct DaemonHooks {
    /// Hears the address the HTTP server listens on, once it does.
    pub http_addr: Option<tokio::sync::oneshot::Sender<std::net::SocketAddr>>,
}

/// Runs the daemon until `shutdown` turns true; then stops taking messages, commits, acks,
/// publishes `offline` and returns.
pub async fn run(config: Config, shutdown: watch::Receiver<bool>) -> anyhow::Result<RunSummary> {
    run_with(config, shutdown, DaemonHooks::default()).await
}

/// [`run`] with hooks.
pub async fn run_with(
    config: Config,
    mut shutdown: watch::Receiver<bool>,
    hooks: DaemonHooks,
) -> anyhow::Result<RunSummary> {
    let started_at = Utc::now();
    let profiles = tank_profiles(&config)?;
    let mut alerting = alerting::Alerting::new(&config, &profiles)?;
    let window = usize::from(config.broker.max_inflight).max(1);
    // Acks wait for commits, and the broker sends at most `window` unacked QoS 1 messages: a batch
    // larger than the window would never fill, so flush_rows is capped at it.
    let settings = WriterSettings {
        flush_rows: config.storage.flush_rows.max(1),
        flush_ms: config.storage.flush_ms.max(1),
        ..WriterSettings::default()
    }
    .cap_flush_rows(window);
    let (writer, reports, writer_thread) = spawn_writer::<Pending>(&config.storage.path, settings)
        .with_context(|| format!("cannot open the database {}", config.storage.path.display()))?;

    // The writer has migrated the schema: read back the open alerts and the highest id.
    let reader = Reader::open(&config.storage.path)
        .with_context(|| format!("cannot read the database {}", config.storage.path.display()))?;
    let restored = reader
        .alerts(true, None)
        .context("cannot read the stored alerts")?;
    let highest_id = reader.max_alert_id().context("cannot read the stored alerts")?;
    let restore_report = alerting.restore(restored, highest_id);
    tracing::info!(?restore_report, highest_id, "open alerts restored");
    let live = live_updates::Live::start(&config, &profiles, hooks.http_addr).await?;
    live.view.set_open_alerts(alerting.open_alerts());
    // Each tank's last stored reading, so the page and the metrics show it before the probe reports again.
    match reader.latest_per_tank() {
        Ok(rows) => live_updates::seed_tank_states(&live.view, &config, rows),
        Err(err) => {
            tracing::warn!(error = %err, "cannot read the latest readings; tanks show none until they report")
        }
    }

    let options = connection::connection_options(&config)?;
    let filters = subscriptions(&config);
    let (mqtt, mut inbound) =
        MqttHandle::start(&options, &filters).context("cannot start the MQTT client")?;
    tracing::info!(
        broker = %format!("{}:{}", config.broker.host, config.broker.port),
        client_id = %config.broker.client_id,
        tanks = config.tanks.len(),
        filters = ?filters,
        db = %config.storage.path.display(),
        "halotank daemon started"
    );
    let acker = tokio::spawn(run_acker(
        reports,
        mqtt.clone(),
        config.publish.topic_prefix.clone(),
        live.view.clone(),
    ));

    let (alert_tx, alert_rx) = tokio::sync::mpsc::channel(ALERT_QUEUE);
    // Webhook and exec-hook delivery ([alerts.delivery]): a forwarder hands each event to the delivery
    // queues without waiting; the record itself is persisted by the writer whatever delivery does.
    let (delivery, delivery_task) = start_delivery(&config)?;
    let alert_publisher = tokio::spawn(alert_publisher::run_alert_publisher(
        alert_rx,
        mqtt.clone(),
        config.publish.topic_prefix.clone(),
        alerting.open_alerts(),
        delivery,
    ));
    let tracker = schedule_sync::tracker_for(&config)?;
    let mut schedules = schedule_sync::ScheduleSync::open(&config.storage.path)?;
    let (setpoint_tx, setpoint_rx) = tokio::sync::mpsc::channel(SETPOINT_QUEUE);
    let setpoint_publisher = tokio::spawn(setpoint_publisher::run_setpoint_publisher(
        setpoint_rx,
        mqtt.clone(),
        config.publish.topic_prefix.clone(),
    ));
    let mut handler = MessageHandler::new(&config, profiles, alerting, tracker);
    // Pick up the schedules stored before this start at once: the setpoint continues where it stands.
    let now = Utc::now();
    let actions = schedules.poll(handler.tracker_mut(), now);
    apply_schedule_actions(&mut handler, &mut schedules, &setpoint_tx, actions, now);
    live.on_schedules(handler.tracker());
    let mut alert_tick = tokio::time::interval(ALERT_TICK);
    let mut handled_requests: std::collections::HashSet<i64> = std::collections::HashSet::new();
    let mut link = mqtt.connection_state();
    let mut state_tick = tokio::time::interval(STATE_INTERVAL);
    let mut retention_tick = tokio::time::interval(RETENTION_INTERVAL);
    let retention = RetentionSettings {
        readings_days: config.storage.retention_days,
        rejections_days: Some(config.storage.retention_days),
    };
    let mut last_outage_warning = started_at;
    let mut messages = 0u64;

    loop {
        tokio::select! {
            biased;
            changed = shutdown.changed() => {
                if changed.is_err() || *shutdown.borrow() {
                    break;
                }
            }
            message = inbound.recv() => {
                let Some(message) = message else {
                    tracing::warn!("MQTT client stopped; shutting down");
                    break;
                };
                messages += 1;
                let item = handler.handle(&message.topic, &message.payload, message.received_at, Some(message.ack));
                if writer.send(item).await.is_err() {
                    tracing::error!("database writer stopped; shutting down");
                    break;
                }
                let events = handler.take_alert_events();
                let pauses = schedule_sync::pauses_for_critical(handler.tracker(), &events);
                apply_schedule_actions(&mut handler, &mut schedules, &setpoint_tx, pauses, message.received_at);
                if emit_alert_events(&writer, &alert_tx, &live.view, events).await.is_err() {
                    break;
                }
            }
            _ = alert_tick.tick() => {
                let now = Utc::now();
                let actions = schedules.poll(handler.tracker_mut(), now);
                apply_schedule_actions(&mut handler, &mut schedules, &setpoint_tx, actions, now);
                live.on_schedules(handler.tracker());
                let mut events = handler.take_alert_events();
                events.extend(handler.alerting_mut().on_tick(now));
                match reader.pending_ack_requests() {
                    Ok(requests) => {
                        for request in requests {
                            if !handled_requests.insert(request.id) {
                                continue;
                            }
                            let outcome = match handler.alerting_mut().acknowledge(&request, now) {
                                Ok(event) => {
                                    tracing::info!(alert = request.alert_id, by = %request.by, "alert acknowledged");
                                    events.push(event);
                                    "acknowledged".to_string()
                                }
                                Err(err) => {
                                    tracing::warn!(alert = request.alert_id, error = %err, "acknowledgement refused");
                                    format!("refused: {err}")
                                }
                            };
                            let item = WriteItem::AckRequestHandled { id: request.id, handled_at: now, outcome };
                            if writer.send(item).await.is_err() {
                                break;
                            }
                        }
                    }
                    Err(err) => tracing::warn!(error = %err, "cannot read acknowledgement requests"),
                }
                let pauses = schedule_sync::pauses_for_critical(handler.tracker(), &events);
                apply_schedule_actions(&mut handler, &mut schedules, &setpoint_tx, pauses, now);
                if emit_alert_events(&writer, &alert_tx, &live.view, events).await.is_err() {
                    break;
                }
            }
            _ = link.changed() => {
                let state = link.borrow_and_update().clone();
                log_link_change(&state);
                live.view.set_link(&state);
            }
            _ = state_tick.tick() => {
                let now = Utc::now();
                let state = link.borrow().clone();
                if !state.connected && now - state.since > OUTAGE_WARNING && now - last_outage_warning > OUTAGE_WARNING {
                    last_outage_warning = now;
                    tracing::warn!(
                        since = %state.since,
                        minutes = (now - state.since).num_minutes(),
                        last_error = state.last_error.as_deref().unwrap_or(""),
                        "broker unreachable; readings wait at the broker"
                    );
                }
                live.on_state_tick(&state, handler.counters(), &writer);
                let row = daemon_state_row(started_at, &state, handler.counters());
                if writer.send(WriteItem::DaemonState(row)).await.is_err() {
                    break;
                }
            }
            _ = retention_tick.tick() => {
                match writer.run_retention(Utc::now(), retention).await {
                    Ok(report) if report.readings_folded > 0 => tracing::info!(
                        folded = report.readings_folded,
                        hourly_rows = report.hourly_rows_written,
                        cutoff = %report.readings_cutoff,
                        "retention folded old readings into hourly summaries"
                    ),
                    Ok(_) => {}
                    Err(err) => tracing::error!(error = %err, "retention failed; will retry"),
                }
            }
        }
    }

    // Stop taking messages: what is still queued is not acked and the broker redelivers it.
    drop(inbound);
    let final_state = daemon_state_row(started_at, &link.borrow().clone(), handler.counters());
    let _ = writer.send(WriteItem::DaemonState(final_state)).await;
    if let Err(err) = writer.flush().await {
        tracing::error!(error = %err, "final commit failed");
    }
    drop(writer);
    drop(alert_tx);
    drop(setpoint_tx);
    let _ = alert_publisher.await;
    let setpoints = setpoint_publisher.await.unwrap_or_default();
    tracing::info!(?setpoints, "setpoint publisher stopped");
    if let Some(task) = delivery_task {
        // The publisher has dropped its sender, so the forwarder drains and shuts delivery down.
        let _ = task.await;
    }
    let writer_result = tokio::task::spawn_blocking(move || writer_thread.join()).await;
    let acked: AckerSummary = acker.await.unwrap_or_default();
    live.stop().await;
    if let Err(err) = mqtt.shutdown(MQTT_SHUTDOWN_TIMEOUT).await {
        tracing::warn!(error = %err, "MQTT shutdown incomplete");
    }
    match writer_result {
        Ok(Ok(Ok(_))) => {}
        Ok(Ok(Err(err))) => tracing::error!(error = %err, "database writer ended with an error"),
        _ => tracing::error!("database writer thread panicked"),
    }
    let counters = handler.counters();
    let summary = RunSummary {
        messages,
        readings_stored: acked.readings_inserted,
        duplicates: acked.duplicates,
        rejected: counters.rejected_total(),
        ignored: counters.ignored_total(),
        acks_sent: acked.acks_sent,
    };
    tracing::info!(?summary, "halotank daemon stopped");
    Ok(summary)
}

/// Loads the species library (`[site] species_library`, else the built-in one) and each tank's effective
/// profile, by tank index. A tank naming an unknown species, or a bad library, refuses the start.
pub fn tank_profiles(config: &Config) -> anyhow::Result<Vec<Option<SpeciesProfile>>> {
    let library = match &config.site.species_library {
        Some(path) => SpeciesLibrary::load(path)
            .with_context(|| format!("cannot load the species library {}", path.display()))?,
        None => SpeciesLibrary::embedded().context("the built-in species library is invalid")?,
    };
    config
        .tanks
        .iter()
        .map(|tank| {
            library.profile_for_tank(tank).with_context(|| {
                format!(
                    "tank `{}` in {}: species profile not usable (library {})",
                    tank.id,
                    config.origin.display(),
                    library.origin().display()
                )
            })
        })
        .collect()
}

/// Hands the tracker's signals to the engine, its setpoints to the publisher (never waiting: a full queue
/// drops the message, and the next change or restart republishes) and its pauses to the database.
fn apply_schedule_actions(
    handler: &mut MessageHandler,
    schedules: &mut schedule_sync::ScheduleSync,
    setpoints: &tokio::sync::mpsc::Sender<crate::schedule::SetpointMessage>,
    actions: Vec<crate::schedule::TrackerAction>,
    now: chrono::DateTime<Utc>,
) {
    if actions.is_empty() {
        return;
    }
    let (messages, pauses) = handler.apply_tracker_actions(actions, now);
    for message in messages {
        if setpoints.try_send(message).is_err() {
            tracing::warn!("setpoint publisher queue full; setpoint not published");
        }
    }
    for (schedule_id, tank_id) in pauses {
        schedules.pause(schedule_id, &tank_id, now);
    }
}

/// Persists each event's record (through the one writer) and hands the event to the alert publisher.
/// A full publisher queue drops the publish, never the record.
async fn emit_alert_events(
    writer: &WriterHandle<Pending>,
    publisher: &tokio::sync::mpsc::Sender<crate::alerts::AlertEvent>,
    live: &crate::http::LiveView,
    events: Vec<crate::alerts::AlertEvent>,
) -> Result<(), StorageError> {
    for event in events {
        tracing::info!(event = event.name(), alert = %event.id(), tank = %event.alert().tank,
            severity = event.severity().as_str(), "{}", event.message());
        writer.send(WriteItem::Alert(event.alert().clone())).await?;
        live.set_alert(event.alert());
        if publisher.try_send(event).is_err() {
            tracing::warn!("alert publisher queue full; event not published");
        }
    }
    Ok(())
}

/// How long delivery may take to drain its queues at shutdown.
const DELIVERY_SHUTDOWN_TIMEOUT: Duration = Duration::from_secs(10);

type DeliveryStart = (
    Option<tokio::sync::mpsc::Sender<crate::alerts::AlertEvent>>,
    Option<tokio::task::JoinHandle<()>>,
);

/// Starts webhook/exec delivery when `[alerts.delivery]` is configured, with a forwarding task.
fn start_delivery(config: &Config) -> anyhow::Result<DeliveryStart> {
    let Some(settings) = &config.alerts.delivery else {
        return Ok((None, None));
    };
    let (handle, workers) =
        crate::alerts::delivery::spawn_delivery(settings).context("cannot start alert delivery")?;
    let (tx, mut rx) = tokio::sync::mpsc::channel::<crate::alerts::AlertEvent>(ALERT_QUEUE);
    let task = tokio::spawn(async move {
        while let Some(event) = rx.recv().await {
            handle.submit(&event);
        }
        let counters = handle.shutdown(DELIVERY_SHUTDOWN_TIMEOUT).await;
        drop(handle);
        let _ = workers.await;
        tracing::info!(?counters, "alert delivery stopped");
    });
    Ok((Some(tx), Some(task)))
}

fn daemon_state_row(
    started_at: chrono::DateTime<Utc>,
    link: &ConnectionState,
    counters: &counters::Counters,
) -> DaemonStateRow {
    DaemonStateRow {
        updated_at: Utc::now(),
        started_at,
        broker_connected: link.connected,
        broker_state_since: link.since,
        reconnect_count: link.reconnects,
        accepted_count: counters.accepted_messages,
        rejected_count: counters.rejected_total(),
        ignored_count: counters.ignored_total(),
    }
}

fn log_link_change(state: &ConnectionState) {
    if state.connected {
        tracing::info!(
            reconnects = state.reconnects,
            session_present = state.session_present,
            "connected to the broker"
        );
    } else if !state.stopped {
        tracing::warn!(
            error = state.last_error.as_deref().unwrap_or(""),
            "lost the broker; reconnecting with backoff"
        );
    }
}
