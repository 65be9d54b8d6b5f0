//! The exec channel: runs the configured program directly (no shell) with the event JSON on stdin;
//! success is exit status 0, and a program still running at the timeout is killed.
use std::collections::BTreeMap;
use std::io::ErrorKind;
use std::path::PathBuf;
use std::process::Stdio;
use std::sync::Arc;
use std::time::Duration;

use tokio::io::AsyncWriteExt;
use tokio::process::Command;

use super::error::AttemptError;
use super::payload::Payload;
use super::settings::ExecSettings;
use super::worker::Channel;

/// The most of a failed program's stderr kept for the log, bytes.
const STDERR_TAIL_BYTES: usize = 512;

/// A configured program, ready to run.
#[derive(Debug)]
pub(crate) struct ExecChannel {
    program: PathBuf,
    args: Vec<String>,
    env: BTreeMap<String, String>,
    timeout: Duration,
}

impl ExecChannel {
    pub(crate) fn new(settings: &ExecSettings) -> Self {
        Self {
            program: settings.program.clone(),
            args: settings.args.clone(),
            env: settings.env.clone(),
            timeout: Duration::from_secs_f64(settings.timeout_s),
        }
    }
}

impl Channel for ExecChannel {
    async fn attempt(&self, payload: &Arc<Payload>) -> Result<(), AttemptError> {
        let mut command = Command::new(&self.program);
        command
            .args(&self.args)
            .envs(&self.env)
            .env("HALOTANK_ALERT_ID", payload.id.to_string())
            .env("HALOTANK_ALERT_EVENT", payload.event)
            .env("HALOTANK_ALERT_SEVERITY", payload.severity.as_str())
            .env("HALOTANK_ALERT_TANK", &payload.tank)
            .stdin(Stdio::piped())
            .stdout(Stdio::null())
            .stderr(Stdio::piped())
            .kill_on_drop(true);
        let mut child = command.spawn().map_err(|source| AttemptError::Spawn {
            program: self.program.clone(),
            source,
        })?;
        let stdin = child.stdin.take();
        let body = &payload.body;
        // The child moves into this future: dropping it at the timeout kills the program.
        let run = async move {
            if let Some(mut stdin) = stdin {
                match stdin.write_all(body).await {
                    // The program need not read its input.
                    Err(e) if e.kind() == ErrorKind::BrokenPipe => {}
                    Err(e) => return Err(AttemptError::Io(e)),
                    Ok(()) => {}
                }
                drop(stdin);
            }
            child.wait_with_output().await.map_err(AttemptError::Io)
        };
        let output = tokio::time::timeout(self.timeout, run)
            .await
            .map_err(|_| AttemptError::TimedOut { after: self.timeout })??;
        if output.status.success() {
            Ok(())
        } else {
            Err(AttemptError::Exit {
                status: output.status.to_string(),
                stderr: stderr_tail(&output.stderr),
            })
        }
    }
}

fn stderr_tail(stderr: &[u8]) -> String {
    let start = stderr.len().saturating_sub(STDERR_TAIL_BYTES);
    String::from_utf8_lossy(&stderr[start..]).trim().to_string()
}
