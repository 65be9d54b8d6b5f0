//! SIGINT/SIGTERM to a shutdown flag every task watches.
use tokio::sync::watch;

/// A shutdown flag that turns true on SIGINT or SIGTERM (Ctrl-C only on non-Unix systems).
pub fn on_signals() -> watch::Receiver<bool> {
    let (tx, rx) = watch::channel(false);
    tokio::spawn(async move {
        wait_for_signal().await;
        tracing::info!("stop signal received: finishing the current batch");
        let _ = tx.send(true);
    });
    rx
}

#[cfg(unix)]
async fn wait_for_signal() {
    use tokio::signal::unix::{signal, SignalKind};
    match signal(SignalKind::terminate()) {
        Ok(mut term) => {
            tokio::select! {
                _ = tokio::signal::ctrl_c() => {}
                _ = term.recv() => {}
            }
        }
        Err(_) => {
            let _ = tokio::signal::ctrl_c().await;
        }
    }
}

#[cfg(not(unix))]
async fn wait_for_signal() {
    let _ = tokio::signal::ctrl_c().await;
}
