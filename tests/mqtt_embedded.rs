//! The MQTT adapter over real TCP against the embedded broker (rumqttd behind a relay).
//! Needs no external broker.

mod mqtt_support;

use std::sync::Arc;
use std::time::Duration;

use halotank::mqtt::EmbeddedBroker;
use mqtt_support::scenarios::{self, Target};
use mqtt_support::Peer;

const TEST_LIMIT: Duration = Duration::from_secs(60);

async fn target() -> (Arc<EmbeddedBroker>, Target) {
    mqtt_support::init_logging();
    let broker = Arc::new(EmbeddedBroker::start().await.expect("embedded broker"));
    let addr = broker.addr();
    let b = broker.clone();
    let t = Target {
        peer_addr: addr,
        adapter_addr: addr,
        sever: Box::new(move || b.sever_connections()),
        downgrades_qos: false,
        marks_redelivery_dup: false,
    };
    (broker, t)
}

async fn run<F: std::future::Future<Output = ()>>(f: F) {
    tokio::time::timeout(TEST_LIMIT, f)
        .await
        .expect("test exceeded its time limit");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn embedded_receive_and_ack() {
    let (_broker, t) = target().await;
    run(scenarios::receive_and_ack(&t)).await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn embedded_availability_online_then_offline() {
    let (_broker, t) = target().await;
    run(scenarios::availability_online_then_offline(&t)).await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn embedded_unacked_redelivered_acked_not() {
    let (_broker, t) = target().await;
    run(scenarios::unacked_redelivered_acked_not(&t)).await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn embedded_stale_ack_after_network_drop() {
    let (_broker, t) = target().await;
    run(scenarios::stale_ack_after_network_drop(&t)).await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn embedded_slow_consumer_loses_nothing() {
    let (_broker, t) = target().await;
    run(scenarios::slow_consumer_loses_nothing(&t)).await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn embedded_broker_stop_closes_the_port() {
    let broker = EmbeddedBroker::start().await.unwrap();
    let addr = broker.addr();
    assert!(broker.url().starts_with("mqtt://127.0.0.1:"));
    let peer = Peer::connect(addr, "stop-check", true).await;
    peer.disconnect().await;
    broker.stop().await;
    assert!(
        tokio::net::TcpStream::connect(addr).await.is_err(),
        "port must refuse after stop"
    );
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn two_embedded_brokers_are_independent() {
    let a = EmbeddedBroker::start().await.unwrap();
    let b = EmbeddedBroker::start().await.unwrap();
    assert_ne!(a.addr(), b.addr());
    let mut sub = Peer::connect(b.addr(), "indep-sub", true).await;
    sub.subscribe("brannock/indep").await;
    let mut pub_a = Peer::connect(a.addr(), "indep-pub-a", true).await;
    pub_a.publish_acked("brannock/indep", b"from-a", false).await;
    let mut pub_b = Peer::connect(b.addr(), "indep-pub-b", true).await;
    pub_b.publish_acked("brannock/indep", b"from-b", false).await;
    // The first message the subscriber on b sees is b's own.
    assert_eq!(&sub.next_publish().await.payload[..], b"from-b");
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn embedded_out_of_order_acks_are_held() {
    let (_broker, t) = target().await;
    run(scenarios::out_of_order_acks_are_held(&t)).await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn embedded_nack_redelivers() {
    let (_broker, t) = target().await;
    run(scenarios::nack_redelivers(&t)).await;
}
