//! `halotank species list|show|isosmotic`: the species library, one profile with the source of every value,
//! and the salinity isosmotic with a species' plasma at a temperature.
use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::{anyhow, bail, Context};
use clap::{Args, Subcommand, ValueEnum};
use serde::Serialize;

use crate::species::profile::{Sourced, SourcedRange};
use crate::species::{
    isosmotic_water, OsmoticStrategy, Provenance, ProvenanceKind, SpeciesLibrary, SpeciesProfile, CAUTION,
};

/// Options of `halotank species`.
#[derive(Debug, Args)]
#[command(after_help = "\
Examples:
  halotank species list
  halotank species show whiteleg_shrimp_pl --format json
  halotank species isosmotic atlantic_salmon_smolt --temperature 9
  halotank species list --library /etc/halotank/species.toml

Values are indicative: strain, size, health and acclimation history change them. Follow a fish-health
professional and local rules.")]
pub struct SpeciesArgs {
    /// Species library (TOML); default: the library built into halotank (config/species.toml).
    #[arg(long, value_name = "FILE", global = true)]
    pub library: Option<PathBuf>,
    #[command(subcommand)]
    pub command: SpeciesCommand,
}

/// The `species` subcommands.
#[derive(Debug, Subcommand)]
pub enum SpeciesCommand {
    /// List the profiles of the library.
    List {
        #[arg(long, value_enum, default_value_t = SpeciesFormat::Text)]
        format: SpeciesFormat,
    },
    /// Show one profile with the source of every value.
    Show {
        /// Species profile id (see `halotank species list`).
        id: String,
        #[arg(long, value_enum, default_value_t = SpeciesFormat::Text)]
        format: SpeciesFormat,
    },
    /// The practical salinity whose osmolality equals the species' plasma osmolality (TEOS-10).
    Isosmotic {
        /// Species profile id (an osmoregulator).
        id: String,
        /// Water temperature, °C (ITS-90).
        #[arg(long, allow_negative_numbers = true)]
        temperature: f64,
        /// Sea pressure, dbar (0 at the surface).
        #[arg(long, default_value_t = 0.0)]
        pressure: f64,
        #[arg(long, value_enum, default_value_t = SpeciesFormat::Text)]
        format: SpeciesFormat,
    },
}

/// Output formats.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum SpeciesFormat {
    Text,
    Json,
}

#[derive(Serialize)]
struct ListJson<'a> {
    library: String,
    caution: &'static str,
    species: &'a [SpeciesProfile],
}

#[derive(Serialize)]
struct ShowJson<'a> {
    library: String,
    caution: &'static str,
    #[serde(flatten)]
    profile: &'a SpeciesProfile,
}

#[derive(Serialize)]
struct IsosmoticJson<'a> {
    species: &'a str,
    #[serde(rename = "plasma_osmolality_mOsm_kg")]
    plasma_osmolality_mosm_kg: f64,
    plasma_osmolality_source: &'a Provenance,
    #[serde(rename = "temperature_C")]
    temperature_c: f64,
    pressure_dbar: f64,
    practical_salinity: f64,
    absolute_salinity_g_kg: f64,
    osmotic_pressure_bar: f64,
    caution: &'static str,
}

fn load(library: Option<&Path>) -> anyhow::Result<SpeciesLibrary> {
    Ok(match library {
        Some(path) => SpeciesLibrary::load(path)?,
        None => SpeciesLibrary::embedded().context("the built-in species library is invalid")?,
    })
}

fn lookup<'a>(library: &'a SpeciesLibrary, id: &str) -> anyhow::Result<&'a SpeciesProfile> {
    library.get(id).ok_or_else(|| {
        anyhow!(
            "no species `{id}` in {}; known: {}",
            library.origin().display(),
            library.ids().collect::<Vec<_>>().join(", ")
        )
    })
}

/// Runs `halotank species`.
pub fn run(args: SpeciesArgs) -> anyhow::Result<ExitCode> {
    let library = load(args.library.as_deref())?;
    let origin = library.origin().display().to_string();
    let out = match args.command {
        SpeciesCommand::List { format } => match format {
            SpeciesFormat::Json => json(&ListJson {
                library: origin,
                caution: CAUTION,
                species: library.profiles(),
            })?,
            SpeciesFormat::Text => list_text(&library),
        },
        SpeciesCommand::Show { id, format } => {
            let profile = lookup(&library, &id)?;
            match format {
                SpeciesFormat::Json => json(&ShowJson {
                    library: origin,
                    caution: CAUTION,
                    profile,
                })?,
                SpeciesFormat::Text => show_text(profile),
            }
        }
        SpeciesCommand::Isosmotic {
            id,
            temperature,
            pressure,
            format,
        } => {
            let profile = lookup(&library, &id)?;
            let plasma = match (&profile.plasma_osmolality_mosm_kg, profile.osmotic_strategy.value) {
                (Some(p), OsmoticStrategy::Osmoregulator) => p,
                _ => bail!(
                    "`{id}` is an osmoconformer: its body fluids follow the water, so there is no isosmotic \
                     salinity to aim for; keep to its salinity range and a slow rate of change"
                ),
            };
            let water = isosmotic_water(plasma.value, temperature, pressure)
                .with_context(|| format!("cannot solve the isosmotic salinity of `{id}`"))?;
            match format {
                SpeciesFormat::Json => json(&IsosmoticJson {
                    species: &profile.id,
                    plasma_osmolality_mosm_kg: plasma.value,
                    plasma_osmolality_source: &plasma.provenance,
                    temperature_c: temperature,
                    pressure_dbar: pressure,
                    practical_salinity: water.practical_salinity,
                    absolute_salinity_g_kg: water.absolute_salinity_g_kg,
                    osmotic_pressure_bar: water.osmotic_pressure_bar,
                    caution: CAUTION,
                })?,
                SpeciesFormat::Text => format!(
                    "{}: plasma {} mOsm/kg is isosmotic with water of practical salinity {:.2} at {} °C \
                     (absolute salinity {:.3} g/kg, osmotic pressure {:.2} bar; TEOS-10)\n  plasma value: {}\n\
                     Caution: {CAUTION}\n",
                    profile.label(),
                    plasma.value,
                    water.practical_salinity,
                    temperature,
                    water.absolute_salinity_g_kg,
                    water.osmotic_pressure_bar,
                    source_text(&plasma.provenance),
                ),
            }
        }
    };
    print!("{out}");
    Ok(ExitCode::SUCCESS)
}

fn json<T: Serialize>(value: &T) -> anyhow::Result<String> {
    Ok(format!("{}\n", serde_json::to_string_pretty(value)?))
}

fn kind_label(kind: ProvenanceKind) -> &'static str {
    match kind {
        ProvenanceKind::Published => "published",
        ProvenanceKind::CommonPractice => "common practice",
        ProvenanceKind::FromMemory => "recalled",
        ProvenanceKind::SiteOverride => "site override",
        ProvenanceKind::Default => "default",
    }
}

fn source_text(p: &Provenance) -> String {
    format!("[{}] {}", kind_label(p.kind), p.source)
}

fn list_text(library: &SpeciesLibrary) -> String {
    let mut out = format!("Species library: {}\n", library.origin().display());
    let _ = writeln!(
        out,
        "{:<22} {:<14} {:>7}  {:<11}  {:<11}  name, stage",
        "id", "strategy", "plasma", "SP optimum", "SP range"
    );
    for p in library.profiles() {
        let plasma = p.plasma_mosm_kg().map_or("-".to_string(), |v| format!("{v:.0}"));
        let _ = writeln!(
            out,
            "{:<22} {:<14} {:>7}  {:<11}  {:<11}  {} ({}), {}",
            p.id,
            p.osmotic_strategy.value.as_str(),
            plasma,
            format!("{}-{}", p.salinity_optimum.min, p.salinity_optimum.max),
            format!("{}-{}", p.salinity_tolerance.min, p.salinity_tolerance.max),
            p.common_name,
            p.scientific_name,
            p.stage
        );
    }
    let _ = writeln!(
        out,
        "plasma in mOsm/kg; salinities are practical salinity (PSS-78)."
    );
    let _ = writeln!(out, "Caution: {CAUTION}");
    out
}

fn push_line(out: &mut String, label: &str, value: &str, provenance: &Provenance) {
    let _ = writeln!(
        out,
        "  {label:<24} {value}\n  {:<24} {}",
        "",
        source_text(provenance)
    );
}

fn push_plain(out: &mut String, label: &str, value: &str) {
    let _ = writeln!(out, "  {label:<24} {value}");
}

fn range_text(r: &SourcedRange, unit: &str) -> String {
    format!("{} to {}{unit}", r.min, r.max)
}

fn value_text(s: &Sourced<f64>, unit: &str) -> String {
    format!("{}{unit}", s.value)
}

fn show_text(p: &SpeciesProfile) -> String {
    let mut out = format!(
        "{} ({}), {}  [{}]\n",
        p.common_name, p.scientific_name, p.stage, p.id
    );
    let o = &mut out;
    push_line(
        o,
        "osmotic strategy",
        p.osmotic_strategy.value.as_str(),
        &p.osmotic_strategy.provenance,
    );
    match &p.plasma_osmolality_mosm_kg {
        Some(s) => push_line(o, "plasma osmolality", &value_text(s, " mOsm/kg"), &s.provenance),
        None => push_plain(o, "plasma osmolality", "follows the water (osmoconformer)"),
    }
    let band = &p.isosmotic_band_mosm_kg;
    push_line(
        o,
        "isosmotic band",
        &value_text(band, " mOsm/kg (±)"),
        &band.provenance,
    );
    for (label, r, unit) in [
        ("salinity optimum", &p.salinity_optimum, " SP"),
        ("salinity tolerance", &p.salinity_tolerance, " SP"),
        ("temperature optimum", &p.temperature_optimum_c, " °C"),
        ("temperature tolerance", &p.temperature_tolerance_c, " °C"),
    ] {
        push_line(o, label, &range_text(r, unit), &r.provenance);
    }
    if let Some(s) = &p.max_rate_sp_per_h {
        push_line(
            o,
            "max rate of change",
            &value_text(s, " SP per hour"),
            &s.provenance,
        );
    }
    if let Some(s) = &p.max_rate_percent_per_h {
        push_line(
            o,
            "max rate of change",
            &value_text(s, " % of salinity per hour"),
            &s.provenance,
        );
    }
    if p.max_rate_sp_per_h.is_none() && p.max_rate_percent_per_h.is_none() {
        push_plain(
            o,
            "max rate of change",
            "none sourced (set one per tank in the site configuration)",
        );
    }
    if let Some(slow) = &p.slow_below {
        let mut rates = Vec::new();
        if let Some(x) = slow.max_rate_sp_per_h {
            rates.push(format!("{x} SP per hour"));
        }
        if let Some(x) = slow.max_rate_percent_per_h {
            rates.push(format!("{x} % of salinity per hour"));
        }
        push_line(
            o,
            &format!("below SP {}", slow.below_sp),
            &rates.join(", "),
            &slow.provenance,
        );
    }
    if !p.note.is_empty() {
        let _ = writeln!(o, "Note: {}", p.note);
    }
    let _ = writeln!(o, "Caution: {CAUTION}");
    out
}
