//! TEMPORARY stand-in for the daemon pipeline (replaced on merge by the real `src/daemon/`).
//!
//! It stores nothing: it only waits for `shutdown` to turn true, so that `halotank demo` compiles and
//! runs in a tree without the real daemon.

/// What a daemon run did.
#[derive(Debug, Default)]
pub struct RunSummary {
    pub readings_stored: u64,
    pub rejected: u64,
}

/// Waits until `shutdown` turns true (or its sender is dropped) and returns an empty summary.
pub async fn run(
    config: crate::config::Config,
    mut shutdown: tokio::sync::watch::Receiver<bool>,
) -> anyhow::Result<RunSummary> {
    let _ = config;
    while !*shutdown.borrow_and_update() {
        if shutdown.changed().await.is_err() {
            break;
        }
    }
    Ok(RunSummary::default())
}
