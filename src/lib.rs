//! halotank: salinity, osmolality and tonicity for hatchery and holding tanks.
//!
//! The crate is split into a pure core (no I/O, no clock, no async) and thin
//! adapters at the edges.
//!
//! Pure core:
//! - [`seawater`]: published seawater and osmotic equations (PSS-78, EOS-80,
//!   UNESCO 1983, TEOS-10), one file per equation family.
//! - [`config`]: the TOML configuration, parsed once into validated structs.
//! - [`ingest`]: payload parsing, validation, temperature pairing, topic routing.
//! - [`species`]: species profiles with provenance, tonicity and isosmotic salinity.
//! - [`planner`]: acclimation plans (setpoint ramps and the mass balances of each method).
//! - [`alerts`]: the alert engine (rules, hysteresis, lifecycle) with an injected clock.
//! - [`schedule`]: a stored plan being carried out on a tank, its transitions and progress.
//!
//! Adapters:
//! - [`mqtt`]: the MQTT adapter (client task with manual acks, embedded broker).
//! - [`storage`]: the SQLite record (readings, rejections, hourly summaries, daemon state).
//! - [`http`]: the HTTP server: page, JSON API, metrics, health.
//! - [`demo`]: `halotank demo` (simulated probes; the scenario itself is pure).
//! - [`cli`]: the command-line front end.
pub mod alerts;
pub mod cli;
pub mod config;
pub mod daemon;
pub mod demo;
pub mod http;
pub mod ingest;
pub mod mqtt;
pub mod planner;
pub mod schedule;
pub mod seawater;
pub mod species;
pub mod storage;
