//! Isosmotic salinity: the Practical Salinity at which sea water's osmolality equals a given plasma
//! osmolality, solved on the TEOS-10 osmolality of the science core (not a rule of thumb).
use serde::Serialize;

use crate::seawater::absolute_salinity::{
    absolute_salinity_from_practical_salinity, practical_salinity_from_absolute_salinity,
};
use crate::seawater::error::{check_pressure, check_temperature};
use crate::seawater::gibbs::MAX_ABSOLUTE_SALINITY_G_KG;
use crate::seawater::osmotic::{osmolality_and_coefficient, osmotic_pressure_bar};
use crate::seawater::ScienceError;

/// Iterations allowed before [`ScienceError::NoConvergence`].
const MAX_STEPS: usize = 80;

/// Sea water isosmotic with a plasma osmolality at one temperature and pressure.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct IsosmoticWater {
    /// Practical Salinity SP of the isosmotic water.
    pub practical_salinity: f64,
    /// Its Absolute Salinity, g/kg (reference composition).
    pub absolute_salinity_g_kg: f64,
    /// The plasma osmolality it matches, mOsm/kg.
    #[serde(rename = "plasma_osmolality_mOsm_kg")]
    pub plasma_osmolality_mosm_kg: f64,
    /// Its osmotic pressure against pure water, bar (TEOS-10): the plasma's sea-water equivalent.
    pub osmotic_pressure_bar: f64,
}

/// The sea water (reference composition) whose TEOS-10 osmolality equals `plasma_osmolality_mosm_kg`
/// at `temperature_c` (°C ITS-90) and `pressure_dbar`.
///
/// Osmolality rises strictly with SA (TEOS-10: ∂μW/∂SA < 0), so the root is unique in 0..120 g/kg. Newton
/// steps on a central-difference slope, kept inside a shrinking bracket (bisection when a step leaves it).
pub fn isosmotic_water(
    plasma_osmolality_mosm_kg: f64,
    temperature_c: f64,
    pressure_dbar: f64,
) -> Result<IsosmoticWater, ScienceError> {
    check_temperature(temperature_c)?;
    check_pressure(pressure_dbar)?;
    let target = plasma_osmolality_mosm_kg;
    if !(target.is_finite() && target >= 0.0) {
        return Err(ScienceError::InvalidParameter {
            name: "plasma_osmolality_mOsm_kg",
            value: target,
            why: "must be a finite number not below 0",
        });
    }
    let osm = |sa: f64| osmolality_and_coefficient(sa, temperature_c, pressure_dbar).map(|(o, _)| o);
    let sa = if target == 0.0 {
        0.0
    } else {
        let (mut lo, mut hi) = (0.0_f64, MAX_ABSOLUTE_SALINITY_G_KG);
        if osm(hi)? < target {
            return Err(ScienceError::InvalidParameter {
                name: "plasma_osmolality_mOsm_kg",
                value: target,
                why: "is above the osmolality of the most saline water TEOS-10 covers (SA 120 g/kg)",
            });
        }
        // Start from the proportional guess through standard sea water.
        let sa_ref = absolute_salinity_from_practical_salinity(35.0)?;
        let mut x = (target * sa_ref / osm(sa_ref)?).clamp(lo, hi);
        let tolerance = 1e-10 * target;
        let mut solved = None;
        for _ in 0..MAX_STEPS {
            let f = osm(x)? - target;
            if f.abs() <= tolerance {
                solved = Some(x);
                break;
            }
            if f < 0.0 {
                lo = x;
            } else {
                hi = x;
            }
            let h = 1e-6 * x.max(1e-3);
            let slope = (osm((x + h).min(MAX_ABSOLUTE_SALINITY_G_KG))? - osm((x - h).max(0.0))?)
                / ((x + h).min(MAX_ABSOLUTE_SALINITY_G_KG) - (x - h).max(0.0));
            let newton = x - f / slope;
            x = if slope.is_finite() && slope > 0.0 && newton > lo && newton < hi {
                newton
            } else {
                0.5 * (lo + hi)
            };
            if hi - lo <= 1e-14 * hi {
                solved = Some(x);
                break;
            }
        }
        solved.ok_or(ScienceError::NoConvergence {
            what: "isosmotic salinity search",
        })?
    };
    Ok(IsosmoticWater {
        practical_salinity: practical_salinity_from_absolute_salinity(sa)?,
        absolute_salinity_g_kg: sa,
        plasma_osmolality_mosm_kg: target,
        osmotic_pressure_bar: osmotic_pressure_bar(sa, temperature_c, pressure_dbar)?,
    })
}

/// The isosmotic Practical Salinity alone (see [`isosmotic_water`]).
pub fn isosmotic_practical_salinity(
    plasma_osmolality_mosm_kg: f64,
    temperature_c: f64,
    pressure_dbar: f64,
) -> Result<f64, ScienceError> {
    isosmotic_water(plasma_osmolality_mosm_kg, temperature_c, pressure_dbar).map(|w| w.practical_salinity)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn teleost_plasma_is_matched_between_sp_10_and_12_at_15_c() {
        // Common practice: a plasma of 300-340 mOsm/kg is isosmotic with brackish water of about SP 10-12
        // at 15 °C (the "isosmotic" transport and recovery water of hatcheries).
        for plasma in [300.0, 320.0, 340.0] {
            let sp = isosmotic_practical_salinity(plasma, 15.0, 0.0).unwrap();
            assert!((10.0..=12.0).contains(&sp), "{plasma} mOsm/kg -> SP {sp}");
        }
    }

    #[test]
    fn sea_bass_iso_osmotic_salinity_brackets_its_plasma() {
        // Varsamos et al. 2001 (Marine Biology 138:909-915): iso-osmotic salinity of sea bass 10.2-11.6 at
        // 17 °C. The library's plasma value (317.5 mOsm/kg) must solve back into that range.
        let sp = isosmotic_practical_salinity(317.5, 17.0, 0.0).unwrap();
        assert!((10.2..=11.6).contains(&sp), "{sp}");
    }

    #[test]
    fn the_root_satisfies_the_forward_equation() {
        // The defining equation, checked with the science core's own osmolality (residual to 1e-9 relative).
        for &(plasma, t, p) in &[
            (5.0, 25.0, 0.0),
            (317.5, 17.0, 0.0),
            (750.0, 28.0, 0.0),
            (1100.0, -1.0, 500.0),
        ] {
            let w = isosmotic_water(plasma, t, p).unwrap();
            let sa = absolute_salinity_from_practical_salinity(w.practical_salinity).unwrap();
            let (o, _) = osmolality_and_coefficient(sa, t, p).unwrap();
            assert!(((o - plasma) / plasma).abs() < 1e-9, "{plasma} {t} {p}: {o}");
            assert!(w.osmotic_pressure_bar > 0.0);
        }
    }

    #[test]
    fn standard_sea_water_solves_back_to_sp_35() {
        // Round trip through the forward TEOS-10 osmolality of SP 35 (TEOS-10 SSO, SA 35.16504 g/kg).
        let (o, _) = osmolality_and_coefficient(35.165_04, 10.0, 0.0).unwrap();
        let sp = isosmotic_practical_salinity(o, 10.0, 0.0).unwrap();
        assert!((sp - 35.0).abs() < 1e-8, "{sp}");
    }

    #[test]
    fn the_solution_rises_with_the_target_and_is_finite_across_temperatures() {
        // Osmolality rises strictly with SA (TEOS-10), so the isosmotic salinity must rise with the target.
        let mut previous = 0.0;
        for plasma in [100.0, 300.0, 600.0, 1000.0, 2000.0] {
            let sp = isosmotic_practical_salinity(plasma, 20.0, 0.0).unwrap();
            assert!(sp > previous);
            previous = sp;
        }
        for t in [-3.0, 0.0, 15.0, 30.0, 45.0] {
            assert!(isosmotic_practical_salinity(320.0, t, 0.0).unwrap().is_finite());
        }
    }

    #[test]
    fn unusable_input_is_a_typed_error() {
        assert_eq!(isosmotic_practical_salinity(0.0, 15.0, 0.0), Ok(0.0));
        assert!(matches!(
            isosmotic_practical_salinity(-1.0, 15.0, 0.0),
            Err(ScienceError::InvalidParameter { .. })
        ));
        assert!(matches!(
            isosmotic_practical_salinity(f64::NAN, 15.0, 0.0),
            Err(ScienceError::InvalidParameter { .. })
        ));
        assert!(matches!(
            isosmotic_practical_salinity(1e6, 15.0, 0.0),
            Err(ScienceError::InvalidParameter { .. })
        ));
        assert!(matches!(
            isosmotic_practical_salinity(320.0, 60.0, 0.0),
            Err(ScienceError::TemperatureOutOfRange { .. })
        ));
    }
}
