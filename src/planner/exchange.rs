//! Partial exchange: drain tank water, refill to the mark with a source water, by a salt and water mass
//! balance with EOS-80 densities.
//!
//! Unknowns: the litres drained `D` (tank water at SP_a) and the litres of source water added `A`. After
//! mixing, the tank holds its volume `V` at the setpoint SP_b, so its mass is ρ_b·V and its salt
//! w_b·ρ_b·V (w = SA/1000, TEOS-10 mass fraction; ρ from EOS-80). With R = ρ_a(V − D) the mass left and
//! X = ρ_s·A the mass added:
//!
//! R + X = ρ_b V (water and salt),  w_a R + w_s X = w_b ρ_b V (salt),
//!
//! so X = ρ_b V (w_b − w_a)/(w_s − w_a) and R = ρ_b V (w_s − w_b)/(w_s − w_a). The setpoint fixes the
//! mixture's salinity and so its density: the balance is linear in D and A and is solved exactly, no
//! iteration. D and A differ slightly (the densities of the waters differ and mixing is not ideal in volume);
//! the linear shortcut D = V (SP_a − SP_b)/(SP_a − SP_s) ignores both.
use serde::{Deserialize, Serialize};

use super::error::PlanError;
use super::water::Water;

/// Litres to drain and to add for one exchange step.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct ExchangeVolumes {
    /// Tank water to drain first, litres.
    pub drain_l: f64,
    /// Source water to add to bring the level back to the mark, litres.
    pub add_l: f64,
}

/// The drain and refill that take `tank_volume_l` of `tank` water to `setpoint` with `source` water.
pub fn exchange_volumes(
    tank_volume_l: f64,
    tank: &Water,
    source: &Water,
    setpoint: &Water,
) -> Result<ExchangeVolumes, PlanError> {
    let (w_a, w_s, w_b) = (
        tank.salt_fraction(),
        source.salt_fraction(),
        setpoint.salt_fraction(),
    );
    let between = (w_a.min(w_s)..=w_a.max(w_s)).contains(&w_b);
    if w_s == w_a || !between {
        return Err(PlanError::SourceNotBeyondTarget {
            source_practical_salinity: source.practical_salinity,
            target_practical_salinity: setpoint.practical_salinity,
            suggestion:
                "an exchange needs a source water beyond the setpoint (fresher to lower, saltier to raise)"
                    .to_owned(),
        });
    }
    let mass_b = setpoint.density_kg_l * tank_volume_l;
    let added_mass = mass_b * (w_b - w_a) / (w_s - w_a);
    let kept_mass = mass_b * (w_s - w_b) / (w_s - w_a);
    let drain_l = tank_volume_l - kept_mass / tank.density_kg_l;
    let add_l = added_mass / source.density_kg_l;
    if !(drain_l.is_finite() && add_l.is_finite())
        || drain_l < -1e-9 * tank_volume_l
        || drain_l > tank_volume_l
    {
        return Err(PlanError::Inconsistent(format!(
            "exchange from SP {} to SP {} with SP {} has no solution within the tank",
            tank.practical_salinity, setpoint.practical_salinity, source.practical_salinity
        )));
    }
    Ok(ExchangeVolumes {
        drain_l: drain_l.max(0.0),
        add_l,
    })
}
