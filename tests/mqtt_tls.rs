//! `mqtts` end to end: the adapter's rustls configuration (ring provider, CA file, client
//! certificate) against a TLS-terminating relay in front of the embedded broker.
//! Certificates are throwaway test fixtures in `tests/fixtures/tls/`.

mod mqtt_support;

use std::net::SocketAddr;
use std::path::PathBuf;
use std::sync::Arc;

use halotank::mqtt::{AckOutcome, ClientAuthFiles, EmbeddedBroker, MqttHandle, TlsOptions};
use mqtt_support::{options, recv, unique, Peer, WAIT};
use rumqttc::tokio_rustls::TlsAcceptor;
use rustls::pki_types::pem::PemObject;
use rustls::pki_types::{CertificateDer, PrivateKeyDer};

fn fixture(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/tls")
        .join(name)
}

/// TLS server on a loopback port that forwards the decrypted stream to `upstream`.
async fn tls_front(upstream: SocketAddr, require_client_cert: bool) -> SocketAddr {
    let provider = Arc::new(rustls::crypto::ring::default_provider());
    let chain: Vec<CertificateDer<'static>> = CertificateDer::pem_file_iter(fixture("server.pem"))
        .unwrap()
        .collect::<Result<_, _>>()
        .unwrap();
    let key = PrivateKeyDer::from_pem_file(fixture("server.key")).unwrap();
    let builder = rustls::ServerConfig::builder_with_provider(provider.clone())
        .with_safe_default_protocol_versions()
        .unwrap();
    let config = if require_client_cert {
        let mut roots = rustls::RootCertStore::empty();
        for c in CertificateDer::pem_file_iter(fixture("ca.pem")).unwrap() {
            roots.add(c.unwrap()).unwrap();
        }
        let verifier = rustls::server::WebPkiClientVerifier::builder_with_provider(Arc::new(roots), provider)
            .build()
            .unwrap();
        builder
            .with_client_cert_verifier(verifier)
            .with_single_cert(chain, key)
            .unwrap()
    } else {
        builder
            .with_no_client_auth()
            .with_single_cert(chain, key)
            .unwrap()
    };
    let acceptor = TlsAcceptor::from(Arc::new(config));
    let listener = tokio::net::TcpListener::bind("127.0.0.1:0").await.unwrap();
    let addr = listener.local_addr().unwrap();
    tokio::spawn(async move {
        while let Ok((tcp, _)) = listener.accept().await {
            let acceptor = acceptor.clone();
            tokio::spawn(async move {
                let Ok(mut tls) = acceptor.accept(tcp).await else {
                    return;
                };
                let Ok(mut plain) = tokio::net::TcpStream::connect(upstream).await else {
                    return;
                };
                let _ = tokio::io::copy_bidirectional(&mut tls, &mut plain).await;
            });
        }
    });
    addr
}

async fn round_trip(broker: &EmbeddedBroker, front: SocketAddr, tls: TlsOptions) {
    let topic = format!("{}/smolt-4/probe", unique("brannock-tls"));
    let mut o = options(front, &unique("halotank-tls"));
    o.host = "localhost".to_string();
    o.tls = Some(tls);
    let (h, mut rx) = MqttHandle::start(&o, std::slice::from_ref(&topic)).unwrap();
    h.wait_until_subscribed(WAIT).await.unwrap();
    let mut peer = Peer::connect(broker.addr(), &unique("probe-sim"), true).await;
    peer.publish_acked(&topic, b"over-tls", false).await;
    let m = recv(&mut rx).await;
    assert_eq!(m.payload, b"over-tls");
    assert_eq!(h.ack(m.ack), AckOutcome::Sent);
    h.shutdown(WAIT).await.unwrap();
    peer.disconnect().await;
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn mqtts_with_private_ca() {
    let broker = EmbeddedBroker::start().await.unwrap();
    let front = tls_front(broker.addr(), false).await;
    let tls = TlsOptions {
        ca_file: Some(fixture("ca.pem")),
        client_auth: None,
    };
    tokio::time::timeout(WAIT * 3, round_trip(&broker, front, tls))
        .await
        .unwrap();
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn mqtts_with_client_certificate() {
    let broker = EmbeddedBroker::start().await.unwrap();
    let front = tls_front(broker.addr(), true).await;
    let tls = TlsOptions {
        ca_file: Some(fixture("ca.pem")),
        client_auth: Some(ClientAuthFiles {
            cert_file: fixture("client.pem"),
            key_file: fixture("client.key"),
        }),
    };
    tokio::time::timeout(WAIT * 3, round_trip(&broker, front, tls))
        .await
        .unwrap();
}

#[tokio::test(flavor = "multi_thread", worker_threads = 2)]
async fn mqtts_rejects_a_server_outside_the_ca() {
    let broker = EmbeddedBroker::start().await.unwrap();
    let front = tls_front(broker.addr(), false).await;
    // Trusting only an unrelated certificate: the server chain does not lead to it.
    let mut o = options(front, &unique("halotank-tls-bad"));
    o.host = "localhost".to_string();
    o.tls = Some(TlsOptions {
        ca_file: Some(fixture("client.pem")),
        client_auth: None,
    });
    let (h, _rx) = MqttHandle::start(&o, &[]).unwrap();
    let mut state = h.connection_state();
    let failed = tokio::time::timeout(WAIT, state.wait_for(|s| s.last_error.is_some()))
        .await
        .unwrap()
        .unwrap()
        .clone();
    assert!(!failed.connected);
    assert!(failed.last_error.unwrap().contains("TLS"), "expected a TLS error");
    assert!(h.counters().connect_failures >= 1);
    h.shutdown(WAIT).await.unwrap();
}
