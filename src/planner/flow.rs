//! Continuous flow-through with overflow: the inflow of source water that moves a well-mixed tank of
//! constant volume from one setpoint to the next in a given time, and what to do when the pump cannot.
//!
//! Salt and water mass balance of a well-mixed tank of volume `V` fed `Q` L/min of source water (mass
//! fraction w_s = SA_s/1000, density ρ_s) and overflowing tank water: with tank mass M = ρ(SA)·V,
//! d(w M)/dt = w_s ṁ_in − w ṁ_out and dM/dt = ṁ_in − ṁ_out give M dw/dt = ṁ_in (w_s − w), that is
//! dSA/dt = (ρ_s Q / (ρ(SA) V)) (SA_s − SA), the familiar dS/dt = Q/V (S_s − S) with the density ratio kept.
//! At constant Q over a segment of `t` minutes: ρ_s Q t / V = ∫ ρ(x)/(SA_s − x) dx from SA_a to SA_b.
//! The integral is taken in u = ln|SA_s − x|, where the integrand ρ is smooth, by Simpson's rule.
use serde::{Deserialize, Serialize};

use super::error::PlanError;
use super::water::Water;

/// Simpson panels for the segment integral (ρ varies by under 3 % over any segment: far more than enough).
const SIMPSON_PANELS: usize = 64;

/// Bisection steps used to invert the segment integral.
const BISECTION_STEPS: usize = 200;

/// ∫ ρ(x)/(SA_s − x) dx from SA_a to SA_b (kg/L), for SA_a and SA_b on the same side of SA_s (EOS-80 ρ).
fn segment_integral(
    from_sa_g_kg: f64,
    to_sa_g_kg: f64,
    source_sa_g_kg: f64,
    temperature_c: f64,
) -> Result<f64, PlanError> {
    // x = SA_s − σ e^u with σ = sign(SA_s − x); dx = −σ e^u du; ρ/(SA_s − x) dx = −ρ du.
    let sigma = if source_sa_g_kg > from_sa_g_kg { 1.0 } else { -1.0 };
    let u_a = (sigma * (source_sa_g_kg - from_sa_g_kg)).ln();
    let u_b = (sigma * (source_sa_g_kg - to_sa_g_kg)).ln();
    let density = |u: f64| -> Result<f64, PlanError> {
        let sa = (source_sa_g_kg - sigma * u.exp()).max(0.0);
        Ok(Water::from_absolute_salinity(sa, temperature_c)?.density_kg_l)
    };
    let h = (u_b - u_a) / SIMPSON_PANELS as f64;
    let mut sum = density(u_a)? + density(u_b)?;
    for i in 1..SIMPSON_PANELS {
        let weight = if i % 2 == 1 { 4.0 } else { 2.0 };
        sum += weight * density(u_a + h * i as f64)?;
    }
    Ok(-sum * h / 3.0)
}

/// Inflow (L/min) that takes the tank from `from_sp` to `to_sp` in `hours` with `source` water.
///
/// `to_sp` must lie between `from_sp` and the source's salinity (not at the source).
pub fn inflow_l_min(
    tank_volume_l: f64,
    from_sp: f64,
    to_sp: f64,
    source: &Water,
    hours: f64,
    temperature_c: f64,
) -> Result<f64, PlanError> {
    if from_sp == to_sp {
        return Ok(0.0);
    }
    let from = Water::new(from_sp, temperature_c)?;
    let to = Water::new(to_sp, temperature_c)?;
    let s = source.absolute_salinity_g_kg;
    let toward =
        (to.absolute_salinity_g_kg - from.absolute_salinity_g_kg) * (s - from.absolute_salinity_g_kg) > 0.0;
    let short = (s - to.absolute_salinity_g_kg) * (s - from.absolute_salinity_g_kg) > 0.0;
    if !(toward && short) {
        return Err(PlanError::SourceNotBeyondTarget {
            source_practical_salinity: source.practical_salinity,
            target_practical_salinity: to_sp,
            suggestion: "flow-through only approaches the source's salinity, never reaches or passes it"
                .to_owned(),
        });
    }
    let integral = segment_integral(
        from.absolute_salinity_g_kg,
        to.absolute_salinity_g_kg,
        s,
        temperature_c,
    )?;
    Ok(tank_volume_l * integral / (source.density_kg_l * hours * 60.0))
}

/// The SP the tank reaches from `from_sp` in `hours` at `flow_l_min` of `source` water.
pub fn reach_with_flow(
    tank_volume_l: f64,
    from_sp: f64,
    source: &Water,
    flow_l_min: f64,
    hours: f64,
    temperature_c: f64,
) -> Result<f64, PlanError> {
    let (mut near, mut far) = (from_sp, source.practical_salinity);
    for _ in 0..BISECTION_STEPS {
        let mid = 0.5 * (near + far);
        if mid == near || mid == far {
            break;
        }
        if inflow_l_min(tank_volume_l, from_sp, mid, source, hours, temperature_c)? <= flow_l_min {
            near = mid;
        } else {
            far = mid;
        }
    }
    Ok(near)
}

/// A flow-through plan the pump cannot follow, with what would work instead.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FlowShortfall {
    /// 1-based step that needs the most flow.
    pub step: usize,
    /// That step's start and end setpoints.
    pub from_practical_salinity: f64,
    pub to_practical_salinity: f64,
    /// Inflow that step needs, L/min (the smallest pump that follows the whole plan).
    #[serde(rename = "required_flow_L_min")]
    pub required_flow_l_min: f64,
    /// The pump's stated maximum, L/min.
    #[serde(rename = "max_flow_L_min")]
    pub max_flow_l_min: f64,
    /// Where the pump at its maximum takes the tank in that step (the largest step it can make there).
    pub reachable_practical_salinity: f64,
    /// A source salinity with which the pump follows the whole plan (lowest when raising, highest when
    /// lowering), if one within SP 0 to 100 exists.
    pub workable_source_practical_salinity: Option<f64>,
}

impl std::fmt::Display for FlowShortfall {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "step {} (SP {:.2} to {:.2}) needs {:.1} L/min but the pump gives at most {:.1} L/min; at that \
             flow the step reaches only SP {:.2}. What would work: a pump of at least {:.1} L/min, a slower \
             ramp or a longer interval",
            self.step,
            self.from_practical_salinity,
            self.to_practical_salinity,
            self.required_flow_l_min,
            self.max_flow_l_min,
            self.reachable_practical_salinity,
            self.required_flow_l_min,
        )?;
        match self.workable_source_practical_salinity {
            Some(s) => write!(f, ", or a source water of SP {s:.2}"),
            None => write!(f, " (no source salinity within SP 0 to 100 is enough)"),
        }
    }
}
