//! Interop: the MQTT adapter against an external broker (Mosquitto), over real TCP.
//!
//! Runs only when `HALOTANK_TEST_MQTT=host:port` names a broker that allows anonymous
//! clients; otherwise each test prints why it is skipped and passes without checking
//! anything. The adapter connects through a local relay so a network drop can be injected;
//! plain test peers connect directly. Topics and client ids carry a random suffix, retained
//! messages are cleared and persistent sessions removed afterwards.

mod mqtt_support;

use std::net::SocketAddr;
use std::sync::Arc;
use std::time::Duration;

use halotank::mqtt::TcpRelay;
use mqtt_support::scenarios::{self, Target};

const TEST_LIMIT: Duration = Duration::from_secs(60);

async fn target() -> Option<(Arc<TcpRelay>, Target)> {
    let Ok(spec) = std::env::var("HALOTANK_TEST_MQTT") else {
        eprintln!("skipped: set HALOTANK_TEST_MQTT=host:port to run the Mosquitto interop tests");
        return None;
    };
    let broker: SocketAddr = match tokio::net::lookup_host(spec.as_str())
        .await
        .ok()
        .and_then(|mut a| a.next())
    {
        Some(a) => a,
        None => panic!("HALOTANK_TEST_MQTT={spec:?} does not resolve to host:port"),
    };
    let relay = Arc::new(TcpRelay::start(broker).await.expect("relay"));
    let r = relay.clone();
    let t = Target {
        peer_addr: broker,
        adapter_addr: relay.addr(),
        sever: Box::new(move || r.sever_connections()),
        downgrades_qos: true,
        marks_redelivery_dup: true,
    };
    Some((relay, t))
}

macro_rules! interop_test {
    ($name:ident, $scenario:path) => {
        #[tokio::test(flavor = "multi_thread", worker_threads = 2)]
        async fn $name() {
            let Some((_relay, t)) = target().await else {
                return;
            };
            tokio::time::timeout(TEST_LIMIT, $scenario(&t))
                .await
                .expect("test exceeded its time limit");
        }
    };
}

interop_test!(mosquitto_receive_and_ack, scenarios::receive_and_ack);
interop_test!(
    mosquitto_availability_online_then_offline,
    scenarios::availability_online_then_offline
);
interop_test!(
    mosquitto_unacked_redelivered_acked_not,
    scenarios::unacked_redelivered_acked_not
);
interop_test!(
    mosquitto_stale_ack_after_network_drop,
    scenarios::stale_ack_after_network_drop
);
interop_test!(
    mosquitto_slow_consumer_loses_nothing,
    scenarios::slow_consumer_loses_nothing
);
interop_test!(
    mosquitto_out_of_order_acks_are_held,
    scenarios::out_of_order_acks_are_held
);
interop_test!(mosquitto_nack_redelivers, scenarios::nack_redelivers);
