//! Properties of one water at the plan's temperature: Absolute Salinity, EOS-80 density, salt per litre,
//! osmolality, and the inverse of osmolality back to Practical Salinity.
use crate::seawater::absolute_salinity::{
    absolute_salinity_from_practical_salinity, practical_salinity_from_absolute_salinity,
};
use crate::seawater::eos80_density::density_eos80;
use crate::seawater::osmotic::osmolality_and_coefficient;

use super::error::PlanError;

/// Highest Practical Salinity the planner accepts (brines). Above SP 42 EOS-80 and PSS-78 are extrapolated
/// and the plan says so.
pub const MAX_PLAN_PRACTICAL_SALINITY: f64 = 100.0;

/// Highest SP of the EOS-80 and PSS-78 fits (UNESCO 1981); beyond it values are extrapolated.
pub const FITTED_PRACTICAL_SALINITY: f64 = 42.0;

/// One water at the surface (0 dbar) and the plan's temperature.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Water {
    /// Practical Salinity SP.
    pub practical_salinity: f64,
    /// Absolute Salinity, g/kg (TEOS-10 reference composition, eq. 2.4.1).
    pub absolute_salinity_g_kg: f64,
    /// Density, kg/L (EOS-80, UNESCO 1981, at 0 dbar).
    pub density_kg_l: f64,
}

impl Water {
    /// The water of Practical Salinity `practical_salinity` at `temperature_c` (°C ITS-90), surface pressure.
    pub fn new(practical_salinity: f64, temperature_c: f64) -> Result<Self, PlanError> {
        let absolute_salinity_g_kg = absolute_salinity_from_practical_salinity(practical_salinity)?;
        let density_kg_l = density_eos80(practical_salinity, temperature_c, 0.0)? / 1000.0;
        Ok(Self {
            practical_salinity,
            absolute_salinity_g_kg,
            density_kg_l,
        })
    }

    /// The water of Absolute Salinity `absolute_salinity_g_kg` at `temperature_c`.
    pub fn from_absolute_salinity(
        absolute_salinity_g_kg: f64,
        temperature_c: f64,
    ) -> Result<Self, PlanError> {
        let sp = practical_salinity_from_absolute_salinity(absolute_salinity_g_kg)?;
        Self::new(sp, temperature_c)
    }

    /// Salt mass fraction SA/1000, kg of salt per kg of seawater.
    pub fn salt_fraction(&self) -> f64 {
        self.absolute_salinity_g_kg / 1000.0
    }

    /// Salt held by one litre, kg/L: SA × ρ (TEOS-10 SA is the mass fraction of reference-composition salt).
    pub fn salt_kg_per_l(&self) -> f64 {
        self.salt_fraction() * self.density_kg_l
    }
}

/// Osmolality (mOsm/kg of water) of seawater of Practical Salinity SP at `temperature_c`, 0 dbar (TEOS-10).
pub fn osmolality_mosm_kg(practical_salinity: f64, temperature_c: f64) -> Result<f64, PlanError> {
    let sa = absolute_salinity_from_practical_salinity(practical_salinity)?;
    Ok(osmolality_and_coefficient(sa, temperature_c, 0.0)?.0)
}

/// Iterations allowed to [`practical_salinity_from_osmolality`].
const MAX_INVERSE_STEPS: usize = 100;

/// Practical Salinity whose TEOS-10 osmolality at `temperature_c` is `osmolality_mosm_kg`.
///
/// Osmolality rises strictly with salinity, so the root is bracketed in 0..=MAX_PLAN_PRACTICAL_SALINITY and
/// found by Newton steps (slope by central difference) kept inside the bracket, bisecting when a step leaves it.
pub fn practical_salinity_from_osmolality(
    osmolality_mosm_kg: f64,
    temperature_c: f64,
) -> Result<f64, PlanError> {
    let top = osmolality_mosm_kg_at(MAX_PLAN_PRACTICAL_SALINITY, temperature_c)?;
    if !osmolality_mosm_kg.is_finite() || !(0.0..=top).contains(&osmolality_mosm_kg) {
        return Err(PlanError::InvalidInput {
            name: "osmolality_mosm_kg",
            value: osmolality_mosm_kg,
            why: "is outside the osmolality of SP 0 to 100 seawater",
        });
    }
    if osmolality_mosm_kg == 0.0 {
        return Ok(0.0);
    }
    let (mut low, mut high) = (0.0_f64, MAX_PLAN_PRACTICAL_SALINITY);
    // Seawater is about 30 mOsm/kg per SP unit: a good first guess.
    let mut s = (osmolality_mosm_kg / 30.0).clamp(low, high);
    for _ in 0..MAX_INVERSE_STEPS {
        let f = osmolality_mosm_kg_at(s, temperature_c)? - osmolality_mosm_kg;
        if f.abs() <= 1e-10 * osmolality_mosm_kg.max(1.0) {
            return Ok(s);
        }
        if f > 0.0 {
            high = s;
        } else {
            low = s;
        }
        let h = (1e-6 * s).max(1e-9);
        let slope = (osmolality_mosm_kg_at(s + h, temperature_c)?
            - osmolality_mosm_kg_at((s - h).max(0.0), temperature_c)?)
            / (s + h - (s - h).max(0.0));
        let newton = s - f / slope;
        s = if slope.is_finite() && slope > 0.0 && newton > low && newton < high {
            newton
        } else {
            0.5 * (low + high)
        };
        if high - low <= 1e-12 * high {
            return Ok(s);
        }
    }
    Err(PlanError::Science(crate::seawater::ScienceError::NoConvergence {
        what: "practical salinity from osmolality",
    }))
}

/// Osmolality of SP (clamped at 0 so that difference quotients near fresh water stay in range).
fn osmolality_mosm_kg_at(practical_salinity: f64, temperature_c: f64) -> Result<f64, PlanError> {
    osmolality_mosm_kg(practical_salinity.max(0.0), temperature_c)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn osmolality_inverse_round_trips() {
        for &sp in &[0.05, 1.0, 5.0, 12.0, 30.0, 35.0, 60.0] {
            let o = osmolality_mosm_kg(sp, 12.0).unwrap();
            let back = practical_salinity_from_osmolality(o, 12.0).unwrap();
            assert!((back - sp).abs() < 1e-8, "{sp} -> {o} -> {back}");
        }
        assert_eq!(practical_salinity_from_osmolality(0.0, 12.0), Ok(0.0));
        assert!(practical_salinity_from_osmolality(-1.0, 12.0).is_err());
        assert!(practical_salinity_from_osmolality(f64::NAN, 12.0).is_err());
    }

    #[test]
    fn salt_per_litre_of_standard_seawater() {
        // SP 35 at 0 °C: SA = 35.16504 g/kg (TEOS-10 §2.4) and ρ = 1028.106 kg/m³ (EOS-80 check table,
        // UNESCO 1983, S = 35, t = 0 °C, from memory) give 35.16504e-3 × 1.028106 = 0.0361534 kg/L.
        let w = Water::new(35.0, 0.0).unwrap();
        assert!(
            (w.salt_kg_per_l() - 0.036_153_4).abs() < 2e-7,
            "{}",
            w.salt_kg_per_l()
        );
    }
}
