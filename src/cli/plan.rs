//! `halotank plan`: an acclimation plan (step table, totals, warnings) for one tank, or a two-source blend,
//! as a table, JSON or CSV, with an optional SVG chart.
use std::io::{self, Write};
use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{bail, Context};
use chrono::{DateTime, SubsecRound, Utc};
use clap::{Args, ValueEnum};

use crate::cli::plan_chart::plan_chart_svg;
use crate::cli::plan_options::{parse_hold, parse_hours, parse_range, parse_rate, RateArg};
use crate::cli::plan_output::{write_blend_csv, write_blend_table, write_csv, write_table};
use crate::planner::salt::DEFAULT_DISSOLVE_WATER_L_PER_KG;
use crate::planner::{
    blend_batch, build_request, make_plan, BlendRequest, Hold, InputsError, MethodChoice, PlanInputs,
    PlanRequest, Ramp, RampShape, RateLimits, RequiredInput,
};
use crate::species::SpeciesLibrary;

const EXAMPLES: &str = "\
Examples (tanks of the Brannock Sound hatchery):
  # smolt tank 3 from SP 5 to 30 by 2-hourly exchanges with SP 34 sea water, at most 2 SP/h,
  # holding 12 h at SP 12
  halotank plan --volume 2000 --from 5 --to 30 --temperature 12 --method exchange \\
      --source-salinity 34 --interval 2h --max-rate 2/h --hold 12@12h --optimum 8-30 --tolerance 0-35
  # the same by flow-through with a 40 L/min pump, osmolality-linear, chart to plan.svg
  halotank plan --volume 2000 --from 5 --to 30 --temperature 12 --method flow --source-salinity 34 \\
      --max-flow 40 --interval 1h --shape osmolality --max-rate 1/h --chart plan.svg
  # postlarvae down to SP 5 at 10 %/h of the current salinity, slower (5 %/h) below SP 10
  halotank plan --volume 800 --from 30 --to 5 --temperature 26 --source-salinity 0.3 --interval 1h \\
      --shape proportional --max-rate 10%/h --slow-below 10 --slow-rate 5%/h --format json
  # raise a 500 L bath from SP 10 to 20 with dry salt dissolved in 4 L of fresh water per kg
  halotank plan --volume 500 --from 10 --to 20 --temperature 15 --method salt --interval 1h --max-rate 3/h
  # blend 300 L of SP 18 from bore water (SP 0.4) and sea water (SP 34)
  halotank plan --method blend --to 18 --temperature 12 --source-a 0.4 --source-b 34 --batch-volume 300

Rates: SP/h as 2/h, % of the current salinity per hour as 10%/h, osmolality as 20mOsm/h (/d for per day).
`--species ID` fills --max-rate, --slow-below, --slow-rate, --optimum and --tolerance from the
built-in species profile where they are not given here.

Plans are indicative: follow a fish-health professional's advice and local rules, and verify the tank with
a calibrated meter before and after each step.";

/// Options of `halotank plan`.
#[derive(Debug, Args)]
#[command(after_help = EXAMPLES)]
pub struct PlanArgs {
    /// Tank volume at the mark, litres.
    #[arg(long, required_unless_present = "batch_volume")]
    pub volume: Option<f64>,
    /// The tank's practical salinity now.
    #[arg(long, required_unless_present = "batch_volume")]
    pub from: Option<f64>,
    #[command(flatten)]
    pub planning: PlanningOptions,
    /// Practical salinity of source A (blend).
    #[arg(long, requires = "source_b")]
    pub source_a: Option<f64>,
    /// Practical salinity of source B (blend).
    #[arg(long, requires = "source_a")]
    pub source_b: Option<f64>,
    /// Volume of the blended batch, litres (blend).
    #[arg(long)]
    pub batch_volume: Option<f64>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = FormatArg::Table)]
    pub format: FormatArg,
    /// Write an SVG chart of planned salinity and osmolality against time to this file.
    #[arg(long)]
    pub chart: Option<PathBuf>,
}

/// The planning options shared by `halotank plan` and `halotank schedule start` (everything but the tank's
/// volume and start salinity, the blend batch and the output).
#[derive(Debug, Args)]
pub struct PlanningOptions {
    /// Target practical salinity (for --method blend: the batch's salinity).
    #[arg(long)]
    pub to: f64,
    /// Water temperature, °C (ITS-90); every source water is taken to be at this temperature.
    #[arg(long, allow_negative_numbers = true)]
    pub temperature: f64,
    /// How the salinity is changed.
    #[arg(long, value_enum, default_value_t = MethodArg::Exchange)]
    pub method: MethodArg,
    /// Practical salinity of the source water (exchange, flow).
    #[arg(long)]
    pub source_salinity: Option<f64>,
    /// Time between steps (exchange, salt) or between flow settings (flow): 2h, 90m, 1.5h.
    #[arg(long, default_value = "1h", value_parser = parse_hours)]
    pub interval: f64,
    /// The pump's largest flow, L/min (flow).
    #[arg(long)]
    pub max_flow: Option<f64>,
    /// Practical salinity of the water the salt is dissolved in (salt).
    #[arg(long, default_value_t = 0.0)]
    pub top_up_salinity: f64,
    /// Litres of top-up water per kilogram of salt (salt; 0 puts the dry salt straight in).
    #[arg(long, default_value_t = DEFAULT_DISSOLVE_WATER_L_PER_KG)]
    pub dissolve_water: f64,
    /// Ramp shape.
    #[arg(long, value_enum, default_value_t = ShapeArg::Linear)]
    pub shape: ShapeArg,
    /// The shape's own rate: 1/h (linear), 5%/h (proportional), 20mOsm/h (osmolality). Default: the fastest
    /// constant rate the --max-rate limits allow.
    #[arg(long, value_parser = parse_rate)]
    pub rate: Option<RateArg>,
    /// Maximum rate: 2/h (SP per hour) or 10%/h (of the current salinity per hour); give both to cap by both.
    #[arg(long, value_parser = parse_rate)]
    pub max_rate: Vec<RateArg>,
    /// Below this practical salinity the --slow-rate applies.
    #[arg(long)]
    pub slow_below: Option<f64>,
    /// Maximum rate below --slow-below: 0.5/h or 5%/h (both may be given).
    #[arg(long, value_parser = parse_rate)]
    pub slow_rate: Vec<RateArg>,
    /// Hold at a salinity for a time when the ramp gets there: SP@duration, e.g. 12@12h (repeatable).
    #[arg(long, value_parser = parse_hold)]
    pub hold: Vec<(f64, f64)>,
    /// Optimum salinity range, low-high (shaded on the chart; a target outside it is noted).
    #[arg(long, value_parser = parse_range)]
    pub optimum: Option<(f64, f64)>,
    /// Tolerated salinity range, low-high (a target outside it is flagged).
    #[arg(long, value_parser = parse_range)]
    pub tolerance: Option<(f64, f64)>,
    /// Species profile id (`halotank species list`): fills --max-rate, --slow-below, --slow-rate,
    /// --optimum and --tolerance from the built-in library where those are not given.
    #[arg(long)]
    pub species: Option<String>,
    /// When the first step is due: RFC 3339 time or `now`.
    #[arg(long, default_value = "now")]
    pub start: String,
}

/// `--method` values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum MethodArg {
    /// Partial exchanges with a source water at a fixed interval.
    Exchange,
    /// Continuous flow-through of a source water with overflow.
    Flow,
    /// Dry sea salt dissolved in top-up water (raises salinity only).
    Salt,
    /// A batch blended from two sources (--source-a, --source-b, --batch-volume).
    Blend,
}

/// `--shape` values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ShapeArg {
    /// Equal SP change per hour.
    Linear,
    /// A fixed percentage of the current salinity per hour.
    Proportional,
    /// Equal osmolality change per hour.
    Osmolality,
}

/// `--format` values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum FormatArg {
    Table,
    Json,
    Csv,
}

/// Reads `--start` against the clock.
fn start_time(text: &str, now: DateTime<Utc>) -> anyhow::Result<DateTime<Utc>> {
    if text.trim().eq_ignore_ascii_case("now") {
        return Ok(now);
    }
    Ok(DateTime::parse_from_rfc3339(text.trim())
        .with_context(|| format!("--start `{text}` is neither `now` nor an RFC 3339 time"))?
        .with_timezone(&Utc))
}

/// Splits repeated rate options into an SP/h and a %/h limit.
fn split_rates(option: &str, rates: &[RateArg]) -> anyhow::Result<(Option<f64>, Option<f64>)> {
    let (mut sp, mut percent) = (None, None);
    for rate in rates {
        match *rate {
            RateArg::SalinityPerHour(v) if sp.is_none() => sp = Some(v),
            RateArg::PercentPerHour(v) if percent.is_none() => percent = Some(v),
            RateArg::OsmolalityPerHour(_) => bail!("{option} takes SP/h (2/h) or %/h (10%/h), not mOsm/h"),
            _ => bail!("{option} is given twice in the same unit"),
        }
    }
    Ok((sp, percent))
}

/// The shape and its rate; the rate's unit must match the shape.
fn ramp(args: &PlanningOptions) -> anyhow::Result<Ramp> {
    let shape = match args.shape {
        ShapeArg::Linear => RampShape::LinearSalinity,
        ShapeArg::Proportional => RampShape::Proportional,
        ShapeArg::Osmolality => RampShape::LinearOsmolality,
    };
    let rate = match (shape, args.rate) {
        (_, None) => None,
        (RampShape::LinearSalinity, Some(RateArg::SalinityPerHour(v)))
        | (RampShape::Proportional, Some(RateArg::PercentPerHour(v)))
        | (RampShape::LinearOsmolality, Some(RateArg::OsmolalityPerHour(v))) => Some(v),
        (_, Some(_)) => {
            bail!("--rate must be in the shape's unit: linear 1/h, proportional 5%/h, osmolality 20mOsm/h")
        }
    };
    Ok(Ramp { shape, rate })
}

fn required(value: Option<f64>, option: &str, method: &str) -> anyhow::Result<f64> {
    value.with_context(|| format!("--method {method} needs {option}"))
}

/// Builds the planner's request from the options.
pub fn plan_request(args: &PlanArgs, now: DateTime<Utc>) -> anyhow::Result<PlanRequest> {
    planning_request(&args.planning, args.volume, args.from, now)
}

/// Builds the planner's request from the shared planning options, the tank's volume and its salinity now
/// (both required; the messages name `--volume` and `--from`).
pub fn planning_request(
    args: &PlanningOptions,
    volume_l: Option<f64>,
    from_practical_salinity: Option<f64>,
    now: DateTime<Utc>,
) -> anyhow::Result<PlanRequest> {
    let method = match args.method {
        MethodArg::Exchange => MethodChoice::Exchange,
        MethodArg::Flow => MethodChoice::Flow,
        MethodArg::Salt => MethodChoice::Salt,
        MethodArg::Blend => bail!("--method blend makes a batch, not a plan"),
    };
    let (max_sp, max_percent) = split_rates("--max-rate", &args.max_rate)?;
    let (slow_sp, slow_percent) = split_rates("--slow-rate", &args.slow_rate)?;
    let inputs = PlanInputs {
        tank_volume_l: volume_l,
        from_practical_salinity,
        to_practical_salinity: args.to,
        temperature_c: args.temperature,
        start: start_time(&args.start, now)?,
        interval_h: args.interval,
        method,
        source_practical_salinity: args.source_salinity,
        max_flow_l_min: args.max_flow,
        top_up_practical_salinity: args.top_up_salinity,
        dissolve_water_l_per_kg: args.dissolve_water,
        ramp: ramp(args)?,
        rate_limits: RateLimits {
            max_rate_sp_per_h: max_sp,
            max_rate_percent_per_h: max_percent,
            slow_below_sp: args.slow_below,
            slow_rate_sp_per_h: slow_sp,
            slow_rate_percent_per_h: slow_percent,
        },
        optimum: args.optimum,
        tolerance: args.tolerance,
        holds: args
            .hold
            .iter()
            .map(|&(practical_salinity, duration_h)| Hold {
                practical_salinity,
                duration_h,
            })
            .collect(),
    };
    let library;
    let species = match &args.species {
        None => None,
        Some(id) => {
            library = SpeciesLibrary::embedded()?;
            Some(library.get(id).with_context(|| {
                format!(
                    "unknown species `{id}`; known: {}",
                    library.ids().collect::<Vec<_>>().join(", ")
                )
            })?)
        }
    };
    build_request(&inputs, species).map_err(|err| match err {
        InputsError::Missing { input, method } => {
            let option = match input {
                RequiredInput::Volume => "--volume",
                RequiredInput::FromSalinity => "--from",
                RequiredInput::SourceSalinity => "--source-salinity",
            };
            anyhow::anyhow!("--method {} needs {option}", method.unwrap_or("plans"))
        }
    })
}

/// Runs `halotank plan`.
pub fn run(args: PlanArgs) -> anyhow::Result<ExitCode> {
    let stdout = io::stdout();
    let mut out = stdout.lock();
    if args.planning.method == MethodArg::Blend {
        if args.chart.is_some() {
            bail!("--chart draws a plan over time; a blend is a single batch");
        }
        let batch = blend_batch(&BlendRequest {
            batch_volume_l: required(args.batch_volume, "--batch-volume", "blend")?,
            target_practical_salinity: args.planning.to,
            source_a_practical_salinity: required(args.source_a, "--source-a", "blend")?,
            source_b_practical_salinity: required(args.source_b, "--source-b", "blend")?,
            temperature_c: args.planning.temperature,
        })?;
        match args.format {
            FormatArg::Table => write_blend_table(&mut out, &batch)?,
            FormatArg::Json => writeln!(out, "{}", serde_json::to_string_pretty(&batch)?)?,
            FormatArg::Csv => {
                write_blend_csv(&mut out, &batch)?;
                eprintln!("caution: {}", batch.caution);
            }
        }
        return Ok(ExitCode::SUCCESS);
    }
    let request = plan_request(&args, Utc::now().trunc_subsecs(0))?;
    let limits = request.salinity_limits;
    let plan = make_plan(&request)?;
    if let Some(path) = &args.chart {
        let svg = plan_chart_svg(&plan, limits.as_ref())?;
        std::fs::write(path, svg).with_context(|| format!("writing the chart to {}", path.display()))?;
    }
    match args.format {
        FormatArg::Table => write_table(&mut out, &plan)?,
        FormatArg::Json => writeln!(out, "{}", serde_json::to_string_pretty(&plan)?)?,
        FormatArg::Csv => {
            write_csv(&mut out, &plan)?;
            for w in &plan.warnings {
                eprintln!("warning: {}", w.message);
            }
            eprintln!("caution: {}", plan.caution);
        }
    }
    out.flush()?;
    Ok(ExitCode::SUCCESS)
}
