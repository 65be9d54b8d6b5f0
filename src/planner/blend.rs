//! Two-source blending: the litres of two waters that make a batch of a given volume and salinity, by a
//! salt and water mass balance with EOS-80 densities.
//!
//! With X_a = ρ_a A and X_b = ρ_b B the masses taken (w = SA/1000, TEOS-10) and the batch of volume V at the
//! target (density ρ_t):  X_a + X_b = ρ_t V,  w_a X_a + w_b X_b = w_t ρ_t V,
//! so X_a = ρ_t V (w_b − w_t)/(w_b − w_a) and X_b = ρ_t V (w_t − w_a)/(w_b − w_a).
use serde::{Deserialize, Serialize};

use super::error::{positive, salinity, PlanError};
use super::water::{osmolality_mosm_kg, Water};
use super::CAUTION;

/// A batch to blend.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct BlendRequest {
    /// Volume of the finished batch, litres.
    pub batch_volume_l: f64,
    /// Practical Salinity of the finished batch.
    pub target_practical_salinity: f64,
    pub source_a_practical_salinity: f64,
    pub source_b_practical_salinity: f64,
    /// Temperature of both sources and the batch, °C ITS-90.
    pub temperature_c: f64,
}

/// The recipe of one batch.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BlendBatch {
    #[serde(rename = "batch_volume_L")]
    pub batch_volume_l: f64,
    pub target_practical_salinity: f64,
    #[serde(rename = "target_osmolality_mOsm_kg")]
    pub target_osmolality_mosm_kg: f64,
    pub source_a_practical_salinity: f64,
    pub source_b_practical_salinity: f64,
    /// Litres of source A.
    #[serde(rename = "source_a_L")]
    pub source_a_l: f64,
    /// Litres of source B.
    #[serde(rename = "source_b_L")]
    pub source_b_l: f64,
    /// Densities used (EOS-80 at the temperature, 0 dbar), kg/m³.
    #[serde(rename = "density_a_kg_m3")]
    pub density_a_kg_m3: f64,
    #[serde(rename = "density_b_kg_m3")]
    pub density_b_kg_m3: f64,
    #[serde(rename = "density_batch_kg_m3")]
    pub density_batch_kg_m3: f64,
    #[serde(rename = "temperature_C")]
    pub temperature_c: f64,
    pub caution: &'static str,
}

/// Litres of each source for the batch. The target must lie between the sources.
pub fn blend_batch(request: &BlendRequest) -> Result<BlendBatch, PlanError> {
    let volume = positive("batch_volume_l", request.batch_volume_l)?;
    let target_sp = salinity("target_practical_salinity", request.target_practical_salinity)?;
    let a_sp = salinity("source_a_practical_salinity", request.source_a_practical_salinity)?;
    let b_sp = salinity("source_b_practical_salinity", request.source_b_practical_salinity)?;
    let t = request.temperature_c;
    let (a, b, target) = (
        Water::new(a_sp, t)?,
        Water::new(b_sp, t)?,
        Water::new(target_sp, t)?,
    );
    let (w_a, w_b, w_t) = (a.salt_fraction(), b.salt_fraction(), target.salt_fraction());
    let out_of_reach = PlanError::BlendOutOfReach {
        target: target_sp,
        source_a: a_sp,
        source_b: b_sp,
    };
    if w_t < w_a.min(w_b) || w_t > w_a.max(w_b) {
        return Err(out_of_reach);
    }
    let mass = target.density_kg_l * volume;
    let (mass_a, mass_b) = if w_a == w_b {
        // Both sources equal the target: take it all from A.
        (mass, 0.0)
    } else {
        (mass * (w_b - w_t) / (w_b - w_a), mass * (w_t - w_a) / (w_b - w_a))
    };
    Ok(BlendBatch {
        batch_volume_l: volume,
        target_practical_salinity: target_sp,
        target_osmolality_mosm_kg: osmolality_mosm_kg(target_sp, t)?,
        source_a_practical_salinity: a_sp,
        source_b_practical_salinity: b_sp,
        source_a_l: mass_a / a.density_kg_l,
        source_b_l: mass_b / b.density_kg_l,
        density_a_kg_m3: a.density_kg_l * 1000.0,
        density_b_kg_m3: b.density_kg_l * 1000.0,
        density_batch_kg_m3: target.density_kg_l * 1000.0,
        temperature_c: t,
        caution: CAUTION,
    })
}
