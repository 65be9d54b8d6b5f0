//! `halotank demo`: simulated probes of the fictional Brannock Sound Hatchery, published to an embedded
//! broker and read back by the real daemon pipeline.
//!
//! Pure parts (no tokio, MQTT, SQLite or clock inside):
//! - [`clock`]: the simulated clock (real time in, simulated time out);
//! - [`noise`]: deterministic noise from a seed;
//! - [`scenario`]: the simulated tanks, their true water and their probes' messages;
//! - [`payload`]: the good payloads of each probe format;
//! - [`garbage`]: the broken payloads one probe sends now and then;
//! - [`config`]: the demo configuration (`config/demo.toml`, built into the binary);
//! - [`rows`]: the table's rows from the configuration and the newest stored readings;
//! - [`table`]: the live per-tank table as plain text.
//!
//! Adapter: [`probes`], the task that publishes the scenario over MQTT.
//!
//! Everything the demo shows is simulated. halotank does not replace a tank's own life-support alarm.
pub mod clock;
pub mod config;
pub mod garbage;
pub mod noise;
pub mod payload;
pub mod probes;
pub mod rows;
pub mod scenario;
pub mod table;

pub use clock::{ClockError, SimClock};
pub use garbage::GarbageKind;
pub use probes::{run_probes, ProbeError, ProbeSettings, ProbeStats};
pub use rows::{tank_rows, LatestReading};
pub use scenario::{ProbeMessage, Scenario, Water};
pub use table::{render_table, TableCounts, TankRow};
