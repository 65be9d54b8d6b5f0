//! halotank: salinity, osmolality and tonicity for hatchery and holding tanks.
//!
//! The crate is split into a pure core (no I/O, no clock, no async) and thin
//! adapters at the edges:
//!
//! - [`seawater`]: published seawater and osmotic equations (PSS-78, EOS-80,
//!   UNESCO 1983, TEOS-10), one file per equation family.
//! - [`storage`]: the SQLite record (readings, rejections, hourly summaries, daemon state).
//! - [`cli`]: the command-line front end.
pub mod cli;
pub mod seawater;
pub mod storage;
