//! Command-line front end: one file per subcommand, each with its own `Args` and `run`.
use std::process::ExitCode;

use clap::{Parser, Subcommand};

pub mod alerts;
pub mod check_config;
pub mod convert;
pub mod convert_csv;
pub mod demo;
pub mod history;
pub mod logging;
pub mod plan;
pub mod plan_chart;
pub mod plan_options;
pub mod plan_output;
pub mod run;
pub mod schedule;
pub mod schedule_output;
pub mod species;
pub mod status;
pub mod time_arg;

/// Salinity, osmolality and tonicity for hatchery and holding tanks.
#[derive(Debug, Parser)]
#[command(name = "halotank", version, about, long_about = None)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

/// The subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Convert conductivity and temperature to salinity, density, osmolality and more (or back).
    Convert(convert::ConvertArgs),
    /// Check a configuration file and summarise its tanks and topics.
    CheckConfig(check_config::CheckConfigArgs),
    /// Run the daemon: MQTT probes in, derived readings to SQLite, tank state out.
    Run(run::RunArgs),
    /// List one tank's stored readings with their derived values (CSV or JSON).
    History(history::HistoryArgs),
    /// Show each tank's latest reading, stored counts, rejections and the daemon's broker link.
    Status(status::StatusArgs),
    /// Plan an acclimation: setpoints over time and what to do at each step (drain, add, flow, salt).
    Plan(Box<plan::PlanArgs>),
    /// Acclimation schedules: start one on a tank, follow its progress, mark steps done, pause, abort.
    Schedule(schedule::ScheduleArgs),
    /// Run a self-contained demonstration: embedded broker, simulated probes, daemon and live table.
    Demo(demo::DemoArgs),
    /// Species profiles (list, show) and the isosmotic salinity of a species.
    Species(species::SpeciesArgs),
    /// List stored alerts (all, or only open ones; one tank or all).
    Alerts(alerts::AlertsArgs),
    /// Acknowledge an alert (the running daemon picks it up within a few seconds).
    Ack(alerts::AckArgs),
}

/// Parses the command line, runs the subcommand and maps errors to exit codes.
pub fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Convert(args) => convert::run(args),
        Command::CheckConfig(args) => check_config::run(args),
        Command::Run(args) => run::run(args),
        Command::History(args) => history::run(args),
        Command::Status(args) => status::run(args),
        Command::Demo(args) => demo::run(args),
        Command::Species(args) => species::run(args),
        Command::Plan(args) => plan::run(*args),
        Command::Schedule(args) => schedule::run(args),
        Command::Alerts(args) => alerts::run_alerts(args),
        Command::Ack(args) => alerts::run_ack(args),
    };
    match result {
        Ok(code) => code,
        Err(err) => {
            eprintln!("halotank: {err:#}");
            ExitCode::from(1)
        }
    }
}
