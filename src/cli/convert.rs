//! `halotank convert`: one reading, the inverse (what a probe should read), or bulk CSV on stdin.
use std::io::{self, BufWriter, Write};
use std::process::ExitCode;

use anyhow::{bail, Context};
use clap::{Args, ValueEnum};
use serde::Serialize;

use crate::cli::convert_csv::{convert_csv, CsvOptions};
use crate::seawater::derive::{derive_from_conductivity, expected_conductivity, Derived};
use crate::seawater::practical_salinity::SalinityRange;
use crate::seawater::units::{ConductivityUnit, ProbeMode, DEFAULT_ALPHA_PERCENT_PER_C};

const EXAMPLES: &str = "\
Examples:
  halotank convert --conductivity 42.9 --unit mS/cm --temperature 15
  halotank convert --conductivity 28.1 --sc25 --alpha 1.9 --temperature 11 --format json
  halotank convert --salinity 30 --temperature 12
  printf 'conductivity_mS_cm,temperature_C\\n42.9,15\\n' | halotank convert --csv";

/// Options of `halotank convert`.
#[derive(Debug, Args)]
#[command(after_help = EXAMPLES)]
pub struct ConvertArgs {
    /// Conductivity as the probe reports it (in --unit).
    #[arg(long, conflicts_with_all = ["salinity", "csv"], required_unless_present_any = ["salinity", "csv"])]
    pub conductivity: Option<f64>,
    /// Practical salinity: print the conductivity a probe should read (inverse mode).
    #[arg(long, conflicts_with = "csv")]
    pub salinity: Option<f64>,
    /// Read CSV on stdin (header conductivity_mS_cm,temperature_C[,pressure_dbar]) and write CSV on stdout.
    #[arg(long)]
    pub csv: bool,
    /// With --csv: exit with code 2 if any row was bad (all rows are still converted).
    #[arg(long, requires = "csv")]
    pub strict: bool,
    /// Conductivity unit: S/m, mS/cm or uS/cm.
    #[arg(long, default_value = "mS/cm", value_parser = parse_unit)]
    pub unit: ConductivityUnit,
    /// Water temperature, °C (ITS-90).
    #[arg(long, required_unless_present = "csv", allow_negative_numbers = true)]
    pub temperature: Option<f64>,
    /// Sea pressure at the probe, dbar (0 at the surface; about 1 dbar per metre of depth).
    #[arg(long, default_value_t = 0.0)]
    pub pressure: f64,
    /// Gauge pressure of a closed vessel, bar (the pressure potential; 0 for an open tank).
    #[arg(long, default_value_t = 0.0, allow_negative_numbers = true)]
    pub gauge_pressure: f64,
    /// The probe reports specific conductance referred to 25 °C (linear compensation with --alpha).
    #[arg(long)]
    pub sc25: bool,
    /// Temperature coefficient of the probe's compensation, %/°C (with --sc25).
    #[arg(long, default_value_t = DEFAULT_ALPHA_PERCENT_PER_C, requires = "sc25")]
    pub alpha: f64,
    /// Output format for a single reading.
    #[arg(long, value_enum, default_value_t = OutputFormat::Text)]
    pub format: OutputFormat,
}

/// Output format of a single conversion.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum OutputFormat {
    Text,
    Json,
}

fn parse_unit(text: &str) -> Result<ConductivityUnit, String> {
    ConductivityUnit::parse(text).ok_or_else(|| format!("unknown unit `{text}`: use S/m, mS/cm or uS/cm"))
}

impl ConvertArgs {
    fn probe_mode(&self) -> ProbeMode {
        if self.sc25 {
            ProbeMode::SpecificConductance25 {
                alpha_percent_per_c: self.alpha,
            }
        } else {
            ProbeMode::InSitu
        }
    }
}

/// One conversion as printed in JSON: the inputs, the in-situ conductivity and every derived quantity.
#[derive(Debug, Serialize)]
struct Conversion {
    /// Conductivity as the probe reports it, in `conductivity_unit`.
    conductivity: f64,
    conductivity_unit: &'static str,
    probe_mode: ProbeMode,
    /// In-situ conductivity, mS/cm.
    #[serde(rename = "conductivity_mS_cm")]
    conductivity_ms_cm: f64,
    #[serde(rename = "temperature_C")]
    temperature_c: f64,
    pressure_dbar: f64,
    #[serde(flatten)]
    derived: Derived,
}

/// Runs `halotank convert`.
pub fn run(args: ConvertArgs) -> anyhow::Result<ExitCode> {
    if args.csv {
        let options = CsvOptions {
            probe_mode: args.probe_mode(),
        };
        let stdin = io::stdin().lock();
        let stdout = BufWriter::with_capacity(1 << 16, io::stdout().lock());
        let summary = convert_csv(stdin, stdout, options, &mut io::stderr().lock())?;
        if summary.bad_rows > 0 {
            eprintln!(
                "halotank: {} of {} rows could not be converted",
                summary.bad_rows,
                summary.bad_rows + summary.good_rows
            );
            if args.strict {
                return Ok(ExitCode::from(2));
            }
        }
        return Ok(ExitCode::SUCCESS);
    }
    let Some(temperature_c) = args.temperature else {
        bail!("--temperature is required");
    };
    let mode = args.probe_mode();
    let conversion = if let Some(sp) = args.salinity {
        let (in_situ_ms_cm, derived) =
            expected_conductivity(sp, temperature_c, args.pressure, args.gauge_pressure)
                .with_context(|| format!("cannot find the conductivity of salinity {sp}"))?;
        let reported_ms_cm = mode.reported_ms_cm(in_situ_ms_cm, temperature_c)?;
        Conversion {
            conductivity: args.unit.from_ms_cm(reported_ms_cm),
            conductivity_unit: args.unit.symbol(),
            probe_mode: mode,
            conductivity_ms_cm: in_situ_ms_cm,
            temperature_c,
            pressure_dbar: args.pressure,
            derived,
        }
    } else {
        let Some(reported) = args.conductivity else {
            bail!("give --conductivity, --salinity or --csv");
        };
        let in_situ_ms_cm = mode.in_situ_ms_cm(args.unit.to_ms_cm(reported), temperature_c)?;
        let derived =
            derive_from_conductivity(in_situ_ms_cm, temperature_c, args.pressure, args.gauge_pressure)
                .context("cannot convert this reading")?;
        Conversion {
            conductivity: reported,
            conductivity_unit: args.unit.symbol(),
            probe_mode: mode,
            conductivity_ms_cm: in_situ_ms_cm,
            temperature_c,
            pressure_dbar: args.pressure,
            derived,
        }
    };
    let mut out = io::stdout().lock();
    match args.format {
        OutputFormat::Json => {
            serde_json::to_writer_pretty(&mut out, &conversion)?;
            writeln!(out)?;
        }
        OutputFormat::Text => write_text(&mut out, &conversion, args.salinity.is_some())?,
    }
    Ok(ExitCode::SUCCESS)
}

fn write_text(out: &mut impl Write, c: &Conversion, inverse: bool) -> io::Result<()> {
    let d = &c.derived;
    let probe = match c.probe_mode {
        ProbeMode::InSitu => "in-situ conductivity".to_string(),
        ProbeMode::SpecificConductance25 { alpha_percent_per_c } => {
            format!("specific conductance at 25 °C, alpha {alpha_percent_per_c} %/°C")
        }
    };
    let label = if inverse {
        "Probe should read"
    } else {
        "Probe reading"
    };
    writeln!(
        out,
        "{label:<34}{:.4} {} ({probe})",
        c.conductivity, c.conductivity_unit
    )?;
    writeln!(
        out,
        "{:<34}{:.4} mS/cm",
        "In-situ conductivity", c.conductivity_ms_cm
    )?;
    writeln!(out, "{:<34}{:.3} °C (ITS-90)", "Temperature", c.temperature_c)?;
    writeln!(out, "{:<34}{:.1} dbar", "Sea pressure", c.pressure_dbar)?;
    writeln!(
        out,
        "{:<34}{:.4}",
        "Practical salinity (PSS-78)", d.practical_salinity
    )?;
    writeln!(
        out,
        "{:<34}{:.4} g/kg",
        "Absolute salinity (TEOS-10)", d.absolute_salinity_g_kg
    )?;
    writeln!(out, "{:<34}{:.3} kg/m³", "Density (EOS-80)", d.density_kg_m3)?;
    writeln!(
        out,
        "{:<34}{:.1} mOsm/kg",
        "Osmolality (TEOS-10)", d.osmolality_mosm_kg
    )?;
    writeln!(
        out,
        "{:<34}{:.4}",
        "Osmotic coefficient (TEOS-10)", d.osmotic_coefficient
    )?;
    writeln!(
        out,
        "{:<34}{:.3} bar",
        "Osmotic pressure (TEOS-10)", d.osmotic_pressure_bar
    )?;
    writeln!(out, "{:<34}{:.3} bar", "Solute potential", d.solute_potential_bar)?;
    writeln!(out, "{:<34}{:.3} bar", "Water potential", d.water_potential_bar)?;
    writeln!(
        out,
        "{:<34}{:.4} °C (ITS-90)",
        "Freezing point (UNESCO 1983)", d.freezing_point_c
    )?;
    match d.salinity_range {
        SalinityRange::Pss78 => {}
        SalinityRange::HillExtension => writeln!(
            out,
            "Note: salinity below 2, computed with the Hill et al. (1986) extension of PSS-78."
        )?,
        SalinityRange::AboveRange => writeln!(
            out,
            "Warning: salinity above 42 is outside PSS-78's validity range (2-42); the value is extrapolated."
        )?,
    }
    Ok(())
}
