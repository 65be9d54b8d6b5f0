//! `halotank schedule`: start an acclimation schedule on a tank (a plan stored in the database), list and
//! show schedules with their progress, pause, resume or abort one, and mark its steps done.
use std::io::{self, Write};
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::Context;
use chrono::{DateTime, SubsecRound, Utc};
use clap::{Args, Subcommand, ValueEnum};
use serde_json::json;

use crate::cli::plan::{planning_request, MethodArg, PlanningOptions};
use crate::cli::schedule_output::{step_action, write_progress, write_show, write_summary_line};
use crate::cli::time_arg::parse_time_arg;
use crate::planner::{make_plan, CAUTION};
use crate::schedule::{Schedule, SchedulePlan, ScheduleReport, ScheduleSummary};
use crate::storage::{Reader, ScheduleStore};

const EXAMPLES: &str = "\
Examples (tanks of the Brannock Sound hatchery):
  # start smolt tank B2 from its latest stored reading to SP 30 by 2-hourly exchanges with SP 34 sea water,
  # volume from the configuration file, limits from the species library
  halotank schedule start --db halotank.db --config halotank.toml --tank smolt-b2 --to 30 \\
      --temperature 12 --method exchange --source-salinity 34 --interval 2h --species atlantic_salmon_smolt
  # the same with the start salinity and volume given
  halotank schedule start --db halotank.db --tank smolt-b2 --volume 2000 --from 5 --to 30 \\
      --temperature 12 --source-salinity 34 --interval 2h --max-rate 2/h
  halotank schedule list --db halotank.db --tank smolt-b2
  halotank schedule show 3 --db halotank.db --format json
  halotank schedule step-done 3 --db halotank.db --by ines     # the next step
  halotank schedule step-done 3 --db halotank.db --step 4      # refused unless step 4 is the next
  halotank schedule pause 3 --db halotank.db
  halotank schedule resume 3 --db halotank.db                  # later steps move by the paused time
  halotank schedule abort 3 --db halotank.db

A tank has at most one active or paused schedule. Steps are marked done in order, once each.
Plans are indicative: follow a fish-health professional's advice and local rules, verify the tank with a
calibrated meter before and after each step, and keep the tank's own life-support alarms in service.";

/// Options of `halotank schedule`.
#[derive(Debug, Args)]
#[command(after_help = EXAMPLES)]
pub struct ScheduleArgs {
    #[command(subcommand)]
    pub action: ScheduleAction,
}

/// The database option every schedule subcommand takes.
#[derive(Debug, Args)]
pub struct DbArg {
    /// The halotank database (`schedule start` creates it if missing).
    #[arg(long, value_name = "PATH")]
    pub db: PathBuf,
}

/// `schedule` subcommands.
#[derive(Debug, Subcommand)]
pub enum ScheduleAction {
    /// Plan an acclimation for a tank and store it as its active schedule.
    #[command(after_help = EXAMPLES)]
    Start(Box<StartArgs>),
    /// List schedules with their state and progress.
    List(ListArgs),
    /// Show a schedule's steps, progress (step n of m, ahead or behind, expected finish) and caution.
    Show(ShowArgs),
    /// Pause an active schedule; the remaining steps move later by the paused time.
    Pause(IdArgs),
    /// Resume a paused schedule.
    Resume(IdArgs),
    /// Abort an active or paused schedule.
    Abort(IdArgs),
    /// Mark the next step of a schedule done (refuses a step already done or out of order).
    StepDone(StepDoneArgs),
}

/// Text or JSON.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ScheduleFormat {
    Text,
    Json,
}

/// Options of `schedule start`.
#[derive(Debug, Args)]
pub struct StartArgs {
    #[command(flatten)]
    pub db: DbArg,
    /// The tank the schedule is for.
    #[arg(long, value_name = "ID")]
    pub tank: String,
    /// Configuration file: the tank's volume comes from it when --volume is not given.
    #[arg(long, value_name = "FILE")]
    pub config: Option<PathBuf>,
    /// Tank volume at the mark, litres (default: the tank's volume_l in --config).
    #[arg(long)]
    pub volume: Option<f64>,
    /// The tank's practical salinity now (default: the tank's latest stored reading).
    #[arg(long)]
    pub from: Option<f64>,
    #[command(flatten)]
    pub planning: PlanningOptions,
    /// Output format.
    #[arg(long, value_enum, default_value_t = ScheduleFormat::Text)]
    pub format: ScheduleFormat,
}

/// Options of `schedule list`.
#[derive(Debug, Args)]
pub struct ListArgs {
    #[command(flatten)]
    pub db: DbArg,
    /// Only this tank's schedules.
    #[arg(long, value_name = "ID")]
    pub tank: Option<String>,
    #[arg(long, value_enum, default_value_t = ScheduleFormat::Text)]
    pub format: ScheduleFormat,
}

/// Options of `schedule show`.
#[derive(Debug, Args)]
pub struct ShowArgs {
    /// Schedule id.
    pub id: i64,
    #[command(flatten)]
    pub db: DbArg,
    #[arg(long, value_enum, default_value_t = ScheduleFormat::Text)]
    pub format: ScheduleFormat,
    /// Progress as at this time: RFC 3339, `now`, or a span back from now such as 2h.
    #[arg(long, default_value = "now")]
    pub at: String,
}

/// Options of `schedule pause|resume|abort`.
#[derive(Debug, Args)]
pub struct IdArgs {
    /// Schedule id.
    pub id: i64,
    #[command(flatten)]
    pub db: DbArg,
}

/// Options of `schedule step-done`.
#[derive(Debug, Args)]
pub struct StepDoneArgs {
    /// Schedule id.
    pub id: i64,
    #[command(flatten)]
    pub db: DbArg,
    /// The step done (default: the next one); any other than the next is refused.
    #[arg(long)]
    pub step: Option<usize>,
    /// Who did it.
    #[arg(long, default_value = "staff")]
    pub by: String,
}

fn now() -> DateTime<Utc> {
    Utc::now().trunc_subsecs(3)
}

/// The tank's latest stored practical salinity.
fn latest_salinity(db: &Path, tank: &str) -> anyhow::Result<f64> {
    let reader = Reader::open(db)?;
    let latest = reader.latest_per_tank()?;
    latest
        .iter()
        .find(|r| r.tank_id == tank)
        .map(|r| r.derived.practical_salinity)
        .with_context(|| {
            format!(
                "tank {tank} has no stored reading in {}; give --from",
                db.display()
            )
        })
}

/// The tank's volume from the configuration file.
fn config_volume(path: &Path, tank: &str) -> anyhow::Result<f64> {
    let config = crate::config::load(path)?;
    Ok(config
        .tank(tank)
        .with_context(|| format!("tank {tank} is not in {}", path.display()))?
        .volume_l)
}

fn start(args: &StartArgs, out: &mut impl Write) -> anyhow::Result<()> {
    if args.planning.method == MethodArg::Blend {
        anyhow::bail!("--method blend makes a batch, not a schedule; use `halotank plan --method blend`");
    }
    let now = now();
    let mut store = ScheduleStore::open(&args.db.db)?;
    let volume = match (args.volume, &args.config) {
        (Some(v), _) => Some(v),
        (None, Some(path)) => Some(config_volume(path, &args.tank)?),
        (None, None) => anyhow::bail!("give --volume, or --config with the tank's volume_l"),
    };
    let from = match args.from {
        Some(s) => s,
        None => latest_salinity(&args.db.db, &args.tank)?,
    };
    let request = planning_request(&args.planning, volume, Some(from), now)?;
    let plan = make_plan(&request)?;
    let schedule = store.insert(&args.tank, now, &SchedulePlan::from(&plan), &request)?;
    match args.format {
        ScheduleFormat::Text => {
            writeln!(
                out,
                "started schedule {} on tank {}",
                schedule.id, schedule.tank_id
            )?;
            write_show(out, &schedule, now)?;
        }
        ScheduleFormat::Json => write_json(out, &schedule, now)?,
    }
    Ok(())
}

fn write_json(out: &mut impl Write, s: &Schedule, now: DateTime<Utc>) -> anyhow::Result<()> {
    writeln!(
        out,
        "{}",
        serde_json::to_string_pretty(&ScheduleReport::at(s, now))?
    )?;
    Ok(())
}

fn list(args: &ListArgs, out: &mut impl Write) -> anyhow::Result<()> {
    let now = now();
    let store = ScheduleStore::open_existing(&args.db.db)?;
    let schedules = store.list(args.tank.as_deref())?;
    match args.format {
        ScheduleFormat::Text => {
            if schedules.is_empty() {
                writeln!(out, "no schedules")?;
            }
            for s in &schedules {
                write_summary_line(out, s, now)?;
            }
            writeln!(out, "caution: {CAUTION}")?;
        }
        ScheduleFormat::Json => {
            let items: Vec<_> = schedules.iter().map(|s| ScheduleSummary::at(s, now)).collect();
            let value = json!({ "schedules": items, "caution": CAUTION });
            writeln!(out, "{}", serde_json::to_string_pretty(&value)?)?;
        }
    }
    Ok(())
}

fn show(args: &ShowArgs, out: &mut impl Write) -> anyhow::Result<()> {
    let at = parse_time_arg(&args.at, now())?;
    let store = ScheduleStore::open_existing(&args.db.db)?;
    let schedule = store.get(args.id)?;
    match args.format {
        ScheduleFormat::Text => write_show(out, &schedule, at),
        ScheduleFormat::Json => write_json(out, &schedule, at),
    }
}

/// The result of a pause, resume, abort or step done: one line, the progress, the caution.
fn changed(out: &mut impl Write, what: &str, s: &Schedule, now: DateTime<Utc>) -> anyhow::Result<()> {
    writeln!(out, "schedule {} on tank {}: {what}", s.id, s.tank_id)?;
    write_progress(out, s, now)?;
    writeln!(out, "caution: {}", s.plan.caution)?;
    Ok(())
}

/// Runs `halotank schedule`.
pub fn run(args: ScheduleArgs) -> anyhow::Result<ExitCode> {
    let stdout = io::stdout();
    let mut out = stdout.lock();
    match &args.action {
        ScheduleAction::Start(a) => start(a, &mut out)?,
        ScheduleAction::List(a) => list(a, &mut out)?,
        ScheduleAction::Show(a) => show(a, &mut out)?,
        ScheduleAction::Pause(a) => {
            let now = now();
            let s = ScheduleStore::open_existing(&a.db.db)?.pause(a.id, now)?;
            changed(&mut out, "paused", &s, now)?;
        }
        ScheduleAction::Resume(a) => {
            let now = now();
            let s = ScheduleStore::open_existing(&a.db.db)?.resume(a.id, now)?;
            changed(&mut out, "resumed", &s, now)?;
        }
        ScheduleAction::Abort(a) => {
            let now = now();
            let s = ScheduleStore::open_existing(&a.db.db)?.abort(a.id, now)?;
            changed(&mut out, "aborted", &s, now)?;
        }
        ScheduleAction::StepDone(a) => {
            let now = now();
            let (s, step) =
                ScheduleStore::open_existing(&a.db.db)?.mark_step_done(a.id, a.step, now, &a.by)?;
            let action = s.plan.steps.get(step - 1).map(step_action).unwrap_or_default();
            changed(
                &mut out,
                &format!("step {step} done by {} ({action})", a.by),
                &s,
                now,
            )?;
        }
    }
    out.flush()?;
    Ok(ExitCode::SUCCESS)
}
