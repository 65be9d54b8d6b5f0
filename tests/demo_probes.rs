//! The simulated probes over real TCP: everything they publish to the embedded broker reaches a
//! subscriber, and the ingest core on the demo configuration accepts every good message and refuses
//! every broken one.
use std::collections::HashMap;
use std::time::Duration;

use chrono::Utc;
use halotank::demo::config::demo_config;
use halotank::demo::{run_probes, ProbeSettings, ProbeStats, Scenario, SimClock};
use halotank::ingest::{IngestOutcome, Ingestor, RejectReason};
use halotank::mqtt::EmbeddedBroker;
use rumqttc::{AsyncClient, Event, Incoming, MqttOptions, QoS};
use tokio::sync::{mpsc, watch};

const WAIT: Duration = Duration::from_secs(10);

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn probes_publish_the_scenario_and_the_ingest_core_sorts_it() {
    let broker = EmbeddedBroker::start().await.unwrap();
    let addr = broker.addr();

    // A subscriber to the whole probe tree, before the probes start.
    let mut options = MqttOptions::new("demo-test-sub", addr.ip().to_string(), addr.port());
    options.set_max_packet_size(64 * 1024, 64 * 1024);
    let (sub, mut eventloop) = AsyncClient::new(options, 64);
    let (tx, mut rx) = mpsc::unbounded_channel();
    let (subscribed_tx, subscribed_rx) = tokio::sync::oneshot::channel();
    let mut subscribed_tx = Some(subscribed_tx);
    tokio::spawn(async move {
        while let Ok(event) = eventloop.poll().await {
            match event {
                Event::Incoming(Incoming::SubAck(_)) => {
                    if let Some(s) = subscribed_tx.take() {
                        let _ = s.send(());
                    }
                }
                Event::Incoming(Incoming::Publish(p))
                    if tx
                        .send((p.topic.clone(), p.payload.to_vec(), Utc::now()))
                        .is_err() =>
                {
                    break;
                }
                _ => {}
            }
        }
    });
    sub.subscribe("brannock/#", QoS::AtLeastOnce).await.unwrap();
    tokio::time::timeout(WAIT, subscribed_rx).await.unwrap().unwrap();

    // One simulated hour in one real second, published in 50 ms rounds.
    let clock = SimClock::new(Utc::now(), Some(Duration::from_secs(1)), 3600.0).unwrap();
    let scenario = Scenario::brannock(42, clock.sim_start(), clock.real_start());
    let mut settings = ProbeSettings::new(addr, "demo-test-probes");
    settings.tick = Duration::from_millis(50);
    let (stats_tx, mut stats_rx) = watch::channel(ProbeStats::default());
    let (stop_tx, stop_rx) = watch::channel(false);
    let probes = tokio::spawn(run_probes(scenario, clock, settings, stats_tx, stop_rx));

    // Until the simulated clock reaches the end of the timeline.
    tokio::time::timeout(WAIT, async {
        loop {
            stats_rx.changed().await.unwrap();
            if stats_rx
                .borrow()
                .simulated_time
                .is_some_and(|t| t >= clock.real_start())
            {
                break;
            }
        }
    })
    .await
    .expect("the simulated clock reaches the end of the timeline");
    stop_tx.send(true).unwrap();
    let stats = tokio::time::timeout(WAIT, probes)
        .await
        .unwrap()
        .unwrap()
        .unwrap();
    assert_eq!(stats.acked, stats.published, "the broker acked every message");
    assert!(stats.published > 300, "{stats:?}");

    let mut received = Vec::new();
    while received.len() < stats.published as usize {
        let m = tokio::time::timeout(WAIT, rx.recv())
            .await
            .expect("every message arrives")
            .unwrap();
        received.push(m);
    }

    let config = demo_config().unwrap();
    let mut ingestor = Ingestor::new(&config);
    let mut accepted_by_tank: HashMap<String, usize> = HashMap::new();
    let mut rejected: HashMap<RejectReason, usize> = HashMap::new();
    for (topic, payload, at) in &received {
        match ingestor.handle(topic, payload, *at) {
            IngestOutcome::Accepted(readings) => {
                for r in readings {
                    *accepted_by_tank.entry(r.tank_id).or_default() += 1;
                }
            }
            IngestOutcome::Rejected(r) => *rejected.entry(r.reason).or_default() += 1,
            IngestOutcome::Buffered => {}
            IngestOutcome::Ignored(why) => panic!("{topic} ignored: {why}"),
        }
    }
    let refused: usize = rejected.values().sum();
    assert_eq!(
        refused as u64, stats.published_broken,
        "only the broken messages are refused: {rejected:?}"
    );
    for tank in &config.tanks {
        assert!(
            accepted_by_tank.get(&tank.id).copied().unwrap_or(0) > 0,
            "{}: {accepted_by_tank:?}",
            tank.id
        );
    }
    broker.stop().await;
}
