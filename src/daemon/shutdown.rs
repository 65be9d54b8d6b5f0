//! SIGINT/SIGTERM to a shutdown flag every task watches.
use tokio::sync::watch;

/// A shutdown flag that turns true on SIGINT or SIGTERM (Ctrl-C only on non-Unix systems).
///
/// The handlers are installed before this returns (call it inside the runtime, first thing), so a stop
/// signal that arrives while the daemon is still connecting is a graceful stop, not the default kill.
pub fn on_signals() -> watch::Receiver<bool> {
    let (tx, rx) = watch::channel(false);
    let signals = Signals::install();
    tokio::spawn(async move {
        signals.wait().await;
        tracing::info!("stop signal received: finishing the current batch");
        let _ = tx.send(true);
    });
    rx
}

#[cfg(unix)]
struct Signals {
    term: Option<tokio::signal::unix::Signal>,
    int: Option<tokio::signal::unix::Signal>,
}

#[cfg(unix)]
impl Signals {
    fn install() -> Self {
        use tokio::signal::unix::{signal, SignalKind};
        Self {
            term: signal(SignalKind::terminate()).ok(),
            int: signal(SignalKind::interrupt()).ok(),
        }
    }

    async fn wait(mut self) {
        async fn next(s: &mut Option<tokio::signal::unix::Signal>) {
            match s {
                Some(s) => {
                    s.recv().await;
                }
                None => std::future::pending().await,
            }
        }
        if self.term.is_none() && self.int.is_none() {
            let _ = tokio::signal::ctrl_c().await;
            return;
        }
        tokio::select! {
            _ = next(&mut self.term) => {}
            _ = next(&mut self.int) => {}
        }
    }
}

#[cfg(not(unix))]
struct Signals;

#[cfg(not(unix))]
impl Signals {
    fn install() -> Self {
        Self
    }

    async fn wait(self) {
        let _ = tokio::signal::ctrl_c().await;
    }
}
