//! The full derivation of one reading: every quantity halotank reports, in one call.
use serde::{Deserialize, Serialize};

use super::absolute_salinity::absolute_salinity_from_practical_salinity;
use super::eos80_density::density_eos80;
use super::error::{check_conductivity, check_pressure, check_temperature, ScienceError};
use super::freezing_point::freezing_point_unesco1983;
use super::osmotic::{osmolality_and_coefficient, osmotic_pressure_bar};
use super::practical_salinity::{
    conductivity_from_practical_salinity, practical_salinity_from_conductivity, salinity_range, SalinityRange,
};

/// Every derived quantity of one water sample. JSON keys carry their units.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Derived {
    /// Practical Salinity SP (PSS-78 with the Hill et al. 1986 extension below 2), dimensionless.
    pub practical_salinity: f64,
    /// Where SP lies against PSS-78's validity range.
    pub salinity_range: SalinityRange,
    /// Absolute Salinity SA, g/kg (TEOS-10 reference composition, no anomaly).
    #[serde(rename = "absolute_salinity_g_kg")]
    pub absolute_salinity_g_kg: f64,
    /// In-situ density, kg/m³ (EOS-80, UNESCO 1981).
    #[serde(rename = "density_kg_m3")]
    pub density_kg_m3: f64,
    /// Osmotic coefficient of seawater, dimensionless (TEOS-10 Gibbs function).
    pub osmotic_coefficient: f64,
    /// Osmolality, mOsm per kg of water (TEOS-10 Gibbs function).
    #[serde(rename = "osmolality_mOsm_kg")]
    pub osmolality_mosm_kg: f64,
    /// Osmotic pressure against pure water, bar (TEOS-10 definition).
    #[serde(rename = "osmotic_pressure_bar")]
    pub osmotic_pressure_bar: f64,
    /// Solute potential ψs = −osmotic pressure, bar.
    #[serde(rename = "solute_potential_bar")]
    pub solute_potential_bar: f64,
    /// Water potential ψ = ψs + ψp, bar (ψp = gauge pressure; 0 in an open tank).
    #[serde(rename = "water_potential_bar")]
    pub water_potential_bar: f64,
    /// Freezing point, °C ITS-90 (UNESCO 1983, Millero).
    #[serde(rename = "freezing_point_C")]
    pub freezing_point_c: f64,
}

/// Derives every quantity from in-situ conductivity (mS/cm), temperature (°C ITS-90) and sea pressure (dbar).
///
/// `gauge_pressure_bar` is the pressure potential ψp of a closed vessel (0 for an open tank).
pub fn derive_from_conductivity(
    conductivity_ms_cm: f64,
    temperature_c: f64,
    pressure_dbar: f64,
    gauge_pressure_bar: f64,
) -> Result<Derived, ScienceError> {
    check_conductivity(conductivity_ms_cm)?;
    let sp = practical_salinity_from_conductivity(conductivity_ms_cm, temperature_c, pressure_dbar)?;
    derive_from_salinity(sp, temperature_c, pressure_dbar, gauge_pressure_bar)
}

/// Derives every quantity from Practical Salinity, temperature (°C ITS-90) and sea pressure (dbar).
pub fn derive_from_salinity(
    practical_salinity: f64,
    temperature_c: f64,
    pressure_dbar: f64,
    gauge_pressure_bar: f64,
) -> Result<Derived, ScienceError> {
    check_temperature(temperature_c)?;
    check_pressure(pressure_dbar)?;
    if !gauge_pressure_bar.is_finite() {
        return Err(ScienceError::InvalidParameter {
            name: "gauge_pressure_bar",
            value: gauge_pressure_bar,
            why: "must be a finite number",
        });
    }
    let sa = absolute_salinity_from_practical_salinity(practical_salinity)?;
    let density = density_eos80(practical_salinity, temperature_c, pressure_dbar)?;
    let (osmolality, coefficient) = osmolality_and_coefficient(sa, temperature_c, pressure_dbar)?;
    let osmotic_pressure = osmotic_pressure_bar(sa, temperature_c, pressure_dbar)?;
    let freezing = freezing_point_unesco1983(practical_salinity, pressure_dbar)?;
    let solute_potential = -osmotic_pressure;
    Ok(Derived {
        practical_salinity,
        salinity_range: salinity_range(practical_salinity),
        absolute_salinity_g_kg: sa,
        density_kg_m3: density,
        osmotic_coefficient: coefficient,
        osmolality_mosm_kg: osmolality,
        osmotic_pressure_bar: osmotic_pressure,
        solute_potential_bar: solute_potential,
        water_potential_bar: solute_potential + gauge_pressure_bar,
        freezing_point_c: freezing,
    })
}

/// The in-situ conductivity (mS/cm) a probe should read for a salinity, with every derived quantity.
pub fn expected_conductivity(
    practical_salinity: f64,
    temperature_c: f64,
    pressure_dbar: f64,
    gauge_pressure_bar: f64,
) -> Result<(f64, Derived), ScienceError> {
    let derived = derive_from_salinity(
        practical_salinity,
        temperature_c,
        pressure_dbar,
        gauge_pressure_bar,
    )?;
    let c = conductivity_from_practical_salinity(practical_salinity, temperature_c, pressure_dbar)?;
    Ok((c, derived))
}
