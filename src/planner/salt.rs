//! Dry salt addition: drain some tank water, add sea salt dissolved in a little fresh water, and bring the
//! level back to the mark, by a salt and water mass balance with EOS-80 densities.
//!
//! Unknowns: the litres drained `D` (tank water at SP_a) and the salt mass `m` (kg, reference-composition
//! sea salt, dry). The salt is dissolved in `k·m` litres of top-up water (SP_f, usually fresh). After mixing
//! the tank holds `V` litres at the setpoint SP_b. With R = ρ_a(V − D) (w = SA/1000, TEOS-10; ρ EOS-80):
//!
//! R + m + ρ_f k m = ρ_b V,  w_a R + m + w_f ρ_f k m = w_b ρ_b V,
//!
//! so m = ρ_b V (w_b − w_a) / ((1 − w_a) − ρ_f k (w_a − w_f)) and R follows from the first line.
use serde::{Deserialize, Serialize};

use super::error::PlanError;
use super::water::Water;
use crate::seawater::absolute_salinity::absolute_salinity_from_practical_salinity;

/// Default top-up water per kilogram of salt, L/kg (a brine of about 200 g/kg; common practice is to
/// dissolve salt before it goes into a tank with animals).
pub const DEFAULT_DISSOLVE_WATER_L_PER_KG: f64 = 4.0;

/// Mass fraction of a saturated sodium chloride brine at about 20 °C (about 26.4 %, handbook value from
/// memory); a salt brine stronger than this will not dissolve completely.
pub const SATURATED_BRINE_FRACTION: f64 = 0.264;

/// What one salt step needs.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SaltAddition {
    /// Tank water to drain first, litres.
    pub drain_l: f64,
    /// Dry sea salt to dissolve, kg.
    pub salt_kg: f64,
    /// Top-up water the salt is dissolved in, litres.
    pub top_up_l: f64,
}

/// The drain, salt and top-up water that take `tank_volume_l` of `tank` water to `setpoint`.
pub fn salt_addition(
    tank_volume_l: f64,
    tank: &Water,
    top_up: &Water,
    dissolve_water_l_per_kg: f64,
    setpoint: &Water,
) -> Result<SaltAddition, PlanError> {
    let (w_a, w_f, w_b) = (
        tank.salt_fraction(),
        top_up.salt_fraction(),
        setpoint.salt_fraction(),
    );
    if w_b < w_a {
        return Err(PlanError::MethodCannotReach {
            method: "salt addition",
            from: tank.practical_salinity,
            to: setpoint.practical_salinity,
            why: "adding salt only raises salinity",
        });
    }
    let k = dissolve_water_l_per_kg;
    let denominator = (1.0 - w_a) - top_up.density_kg_l * k * (w_a - w_f);
    let mass_b = setpoint.density_kg_l * tank_volume_l;
    let salt_kg = mass_b * (w_b - w_a) / denominator;
    let kept_mass = mass_b - salt_kg * (1.0 + top_up.density_kg_l * k);
    let drain_l = tank_volume_l - kept_mass / tank.density_kg_l;
    if !(denominator > 0.0 && salt_kg.is_finite() && drain_l.is_finite()) || drain_l > tank_volume_l {
        return Err(PlanError::Inconsistent(format!(
            "{k} L of top-up water per kg of salt dilutes the tank more than the salt raises it at SP {}",
            tank.practical_salinity
        )));
    }
    Ok(SaltAddition {
        drain_l: drain_l.max(0.0),
        salt_kg,
        top_up_l: k * salt_kg,
    })
}

/// Salt (kg) that takes `fresh_l` litres of `fresh` water to `practical_salinity`: all the water is kept and
/// the salt is added to it (TEOS-10: SA is the mass fraction of reference-composition salt).
///
/// m = M_w (w_b − w_f) / (1 − w_b), with M_w = ρ_f · fresh_l the water's mass.
pub fn salt_to_make_seawater(fresh_l: f64, fresh: &Water, practical_salinity: f64) -> Result<f64, PlanError> {
    let w_b = absolute_salinity_from_practical_salinity(practical_salinity)? / 1000.0;
    let w_f = fresh.salt_fraction();
    if w_b < w_f {
        return Err(PlanError::MethodCannotReach {
            method: "salt addition",
            from: fresh.practical_salinity,
            to: practical_salinity,
            why: "adding salt only raises salinity",
        });
    }
    Ok(fresh.density_kg_l * fresh_l * (w_b - w_f) / (1.0 - w_b))
}
