//! A loopback TCP relay in front of a broker, with "sever every connection" and "stop".
//!
//! Gives the embedded broker a way to stop (rumqttd 0.20 has none) and lets tests inject a
//! network fault in front of any broker (embedded or Mosquitto): severed connections are
//! closed without an MQTT DISCONNECT, as a cable pull or a crash would look to both ends.

use std::net::{Ipv4Addr, SocketAddr, SocketAddrV4};
use std::sync::Arc;

use tokio::net::{TcpListener, TcpStream};
use tokio::sync::watch;
use tokio::task::JoinHandle;

/// A running relay. Dropping it stops accepting and closes relayed connections.
#[derive(Debug)]
pub struct TcpRelay {
    addr: SocketAddr,
    sever_tx: Arc<watch::Sender<u64>>,
    stop_tx: Arc<watch::Sender<bool>>,
    accept_task: Option<JoinHandle<()>>,
}

impl TcpRelay {
    /// Listen on `127.0.0.1:<free port>` and relay each connection to `upstream`.
    /// Must be called inside a tokio runtime.
    pub async fn start(upstream: SocketAddr) -> std::io::Result<Self> {
        let listener = TcpListener::bind(SocketAddrV4::new(Ipv4Addr::LOCALHOST, 0)).await?;
        let addr = listener.local_addr()?;
        let sever_tx = Arc::new(watch::Sender::new(0u64));
        let stop_tx = Arc::new(watch::Sender::new(false));
        let accept_task = tokio::spawn(accept_loop(listener, upstream, sever_tx.clone(), stop_tx.clone()));
        Ok(Self {
            addr,
            sever_tx,
            stop_tx,
            accept_task: Some(accept_task),
        })
    }

    /// Address clients connect to.
    pub fn addr(&self) -> SocketAddr {
        self.addr
    }

    /// Close every relayed connection now; keep accepting new ones.
    pub fn sever_connections(&self) {
        self.sever_tx.send_modify(|epoch| *epoch += 1);
    }

    /// Stop accepting and close every relayed connection; the port is closed on return.
    pub async fn stop(mut self) {
        self.stop_tx.send_replace(true);
        if let Some(task) = self.accept_task.take() {
            let _ = task.await;
        }
    }
}

impl Drop for TcpRelay {
    fn drop(&mut self) {
        self.stop_tx.send_replace(true);
    }
}

async fn accept_loop(
    listener: TcpListener,
    upstream: SocketAddr,
    sever_tx: Arc<watch::Sender<u64>>,
    stop_tx: Arc<watch::Sender<bool>>,
) {
    let mut stop_rx = stop_tx.subscribe();
    loop {
        let accepted = tokio::select! {
            _ = stop_rx.wait_for(|stopped| *stopped) => break,
            a = listener.accept() => a,
        };
        let (client, peer) = match accepted {
            Ok(a) => a,
            Err(e) => {
                tracing::warn!(error = %e, "relay accept failed");
                continue;
            }
        };
        tokio::spawn(relay(
            client,
            peer,
            upstream,
            sever_tx.subscribe(),
            stop_tx.subscribe(),
        ));
    }
}

async fn relay(
    mut client: TcpStream,
    peer: SocketAddr,
    upstream: SocketAddr,
    mut sever_rx: watch::Receiver<u64>,
    mut stop_rx: watch::Receiver<bool>,
) {
    let epoch = *sever_rx.borrow_and_update();
    let _ = client.set_nodelay(true);
    let mut server = match TcpStream::connect(upstream).await {
        Ok(s) => s,
        Err(e) => {
            tracing::warn!(error = %e, %peer, %upstream, "relay cannot reach upstream");
            return;
        }
    };
    let _ = server.set_nodelay(true);
    tokio::select! {
        _ = tokio::io::copy_bidirectional(&mut client, &mut server) => {}
        _ = sever_rx.wait_for(|e| *e != epoch) => {}
        _ = stop_rx.wait_for(|stopped| *stopped) => {}
    }
    // Dropping both streams closes them.
}

#[cfg(test)]
mod tests {
    use super::*;
    use tokio::io::{AsyncReadExt, AsyncWriteExt};

    #[tokio::test]
    async fn relays_bytes_and_severs() {
        let echo = TcpListener::bind("127.0.0.1:0").await.unwrap();
        let echo_addr = echo.local_addr().unwrap();
        tokio::spawn(async move {
            loop {
                let (mut s, _) = echo.accept().await.unwrap();
                tokio::spawn(async move {
                    let mut buf = [0u8; 64];
                    while let Ok(n) = s.read(&mut buf).await {
                        if n == 0 || s.write_all(&buf[..n]).await.is_err() {
                            break;
                        }
                    }
                });
            }
        });
        let relay = TcpRelay::start(echo_addr).await.unwrap();
        let mut c = TcpStream::connect(relay.addr()).await.unwrap();
        c.write_all(b"brine").await.unwrap();
        let mut got = [0u8; 5];
        c.read_exact(&mut got).await.unwrap();
        assert_eq!(&got, b"brine");
        relay.sever_connections();
        let mut rest = Vec::new();
        let n = tokio::time::timeout(std::time::Duration::from_secs(5), c.read_to_end(&mut rest))
            .await
            .unwrap()
            .unwrap_or(0);
        assert_eq!(n, 0, "severed connection must reach EOF");
        // Still accepting after a sever.
        let mut c2 = TcpStream::connect(relay.addr()).await.unwrap();
        c2.write_all(b"x").await.unwrap();
        let mut one = [0u8; 1];
        c2.read_exact(&mut one).await.unwrap();
        let addr = relay.addr();
        relay.stop().await;
        assert!(
            TcpStream::connect(addr).await.is_err(),
            "port must be closed after stop"
        );
    }
}
