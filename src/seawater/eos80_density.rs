//! In-situ density of seawater by the International Equation of State of Seawater 1980 (EOS-80, UNESCO 1981).
//!
//! ρ(S,t,p) = ρ(S,t,0) / (1 − p/K(S,t,p)) with the one-atmosphere equation of Millero & Poisson (1981)
//! and the secant bulk modulus of Millero, Chen, Bradshaw & Schleicher (1980); coefficients as printed in
//! UNESCO Tech. Pap. Mar. Sci. 44 (Fofonoff & Millard 1983). The equations use IPTS-68 temperature and
//! pressure in bar: halotank's ITS-90 °C and dbar inputs are converted here.
use super::error::{check_pressure, check_temperature, ScienceError};
use super::temperature_scale::t68_from_t90;

/// Highest sea pressure EOS-80 was fitted to, dbar (1000 bar; UNESCO 1981).
pub const MAX_PRESSURE_DBAR: f64 = 10_000.0;

/// Density of pure water (SMOW), kg/m³, at IPTS-68 temperature (Bigg 1967, as used in EOS-80).
#[inline]
fn pure_water_density(t: f64) -> f64 {
    999.842_594
        + t * (6.793_952e-2
            + t * (-9.095_290e-3 + t * (1.001_685e-4 + t * (-1.120_083e-6 + t * 6.536_332e-9))))
}

/// One-atmosphere density ρ(S,t,0), kg/m³ (Millero & Poisson 1981; UNESCO 1983 eq. 13).
#[inline]
fn density_one_atmosphere(s: f64, s15: f64, t: f64) -> f64 {
    let a = 8.244_93e-1 + t * (-4.0899e-3 + t * (7.6438e-5 + t * (-8.2467e-7 + t * 5.3875e-9)));
    let b = -5.724_66e-3 + t * (1.0227e-4 + t * -1.6546e-6);
    let c = 4.8314e-4;
    pure_water_density(t) + s * a + s15 * b + s * s * c
}

/// Secant bulk modulus K(S,t,p), bar, with t IPTS-68 °C and p in bar (Millero et al. 1980; UNESCO 1983 eq. 15).
#[inline]
fn secant_bulk_modulus_bar(s: f64, s15: f64, t: f64, p_bar: f64) -> f64 {
    // Pure water terms.
    let kw = 19_652.21 + t * (148.4206 + t * (-2.327_105 + t * (1.360_477e-2 + t * -5.155_288e-5)));
    let aw = 3.239_908 + t * (1.437_13e-3 + t * (1.160_92e-4 + t * -5.779_05e-7));
    let bw = 8.509_35e-5 + t * (-6.122_93e-6 + t * 5.2787e-8);
    // Salinity terms.
    let k0 = kw
        + s * (54.6746 + t * (-0.603_459 + t * (1.099_87e-2 + t * -6.1670e-5)))
        + s15 * (7.944e-2 + t * (1.6483e-2 + t * -5.3009e-4));
    let a = aw + s * (2.2838e-3 + t * (-1.0981e-5 + t * -1.6078e-6)) + s15 * 1.910_75e-4;
    let b = bw + s * (-9.9348e-7 + t * (2.0816e-8 + t * 9.1697e-10));
    k0 + p_bar * (a + p_bar * b)
}

/// Validates EOS-80 inputs: SP finite and ≥ 0, temperature -3..45 °C, 0 ≤ p ≤ 10 000 dbar.
fn check_inputs(practical_salinity: f64, temperature_c: f64, pressure_dbar: f64) -> Result<(), ScienceError> {
    if !practical_salinity.is_finite() || practical_salinity < 0.0 {
        return Err(ScienceError::InvalidSalinity {
            value: practical_salinity,
        });
    }
    check_temperature(temperature_c)?;
    check_pressure(pressure_dbar)?;
    if pressure_dbar > MAX_PRESSURE_DBAR {
        return Err(ScienceError::InvalidParameter {
            name: "pressure_dbar",
            value: pressure_dbar,
            why: "is above 10 000 dbar, the upper limit of EOS-80",
        });
    }
    Ok(())
}

/// Secant bulk modulus K (bar) from SP, temperature (°C ITS-90), sea pressure (dbar); EOS-80 (Millero et al. 1980).
pub fn secant_bulk_modulus_eos80(
    practical_salinity: f64,
    temperature_c: f64,
    pressure_dbar: f64,
) -> Result<f64, ScienceError> {
    check_inputs(practical_salinity, temperature_c, pressure_dbar)?;
    let s = practical_salinity;
    Ok(secant_bulk_modulus_bar(
        s,
        s * s.sqrt(),
        t68_from_t90(temperature_c),
        pressure_dbar / 10.0,
    ))
}

/// In-situ density (kg/m³) from SP, temperature (°C ITS-90), sea pressure (dbar); EOS-80 (UNESCO 1981).
///
/// Fitted for 0 ≤ SP ≤ 42, -2..40 °C and 0..10 000 dbar; SP above 42 is extrapolated (see `salinity_range`).
pub fn density_eos80(
    practical_salinity: f64,
    temperature_c: f64,
    pressure_dbar: f64,
) -> Result<f64, ScienceError> {
    check_inputs(practical_salinity, temperature_c, pressure_dbar)?;
    let s = practical_salinity;
    let s15 = s * s.sqrt();
    let t = t68_from_t90(temperature_c);
    let p_bar = pressure_dbar / 10.0;
    let rho0 = density_one_atmosphere(s, s15, t);
    let k = secant_bulk_modulus_bar(s, s15, t, p_bar);
    let rho = rho0 / (1.0 - p_bar / k);
    if rho.is_finite() && rho > 0.0 {
        Ok(rho)
    } else {
        Err(ScienceError::InvalidSalinity { value: s })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::seawater::temperature_scale::t90_from_t68;

    // Check values of UNESCO Tech. Pap. Mar. Sci. 44 (Fofonoff & Millard 1983), EOS-80 section
    // (from memory; each reproduced by Python `seawater` 3.3.5 sw.dens / sw.seck). Inputs are IPTS-68
    // and bar; they are converted to ITS-90 and dbar to call the API. The published values carry
    // 5 decimals, so |Δ| ≤ 5e-6 (plus a hair for rounding); the T68 -> T90 -> T68 round trip moves
    // T68 by ~1e-15 °C, below 1e-12 kg/m³ in density.
    const TOL_DENSITY: f64 = 6e-6;

    #[test]
    fn unesco_density_check_values() {
        let cases = [
            // (S, T68 °C, P bar, ρ kg/m³)
            (0.0, 5.0, 0.0, 999.966_75),
            (35.0, 5.0, 0.0, 1_027.675_47),
            (35.0, 25.0, 1000.0, 1_062.538_17),
        ];
        for (s, t68, p_bar, expected) in cases {
            let rho = density_eos80(s, t90_from_t68(t68), p_bar * 10.0).unwrap();
            assert!(
                (rho - expected).abs() <= TOL_DENSITY,
                "S {s} T68 {t68} P {p_bar}: {rho}"
            );
        }
    }

    #[test]
    fn unesco_secant_bulk_modulus_check_values() {
        // Same source: K(0,5,0) = 20337.80375, K(35,5,0) = 22185.93358, K(35,25,1000) = 27108.94504 bar.
        let cases = [
            (0.0, 5.0, 0.0, 20_337.803_75),
            (35.0, 5.0, 0.0, 22_185.933_58),
            (35.0, 25.0, 1000.0, 27_108.945_04),
        ];
        for (s, t68, p_bar, expected) in cases {
            let k = secant_bulk_modulus_eos80(s, t90_from_t68(t68), p_bar * 10.0).unwrap();
            assert!((k - expected).abs() <= 6e-6, "S {s} T68 {t68} P {p_bar}: {k}");
        }
    }

    #[test]
    fn density_rises_with_salinity_and_pressure() {
        let fresh = density_eos80(0.0, 10.0, 0.0).unwrap();
        let sea = density_eos80(35.0, 10.0, 0.0).unwrap();
        let deep = density_eos80(35.0, 10.0, 500.0).unwrap();
        assert!(fresh < sea && sea < deep);
    }

    #[test]
    fn bad_input_gives_typed_errors() {
        for s in [-0.1, f64::NAN, f64::INFINITY] {
            assert!(matches!(
                density_eos80(s, 10.0, 0.0),
                Err(ScienceError::InvalidSalinity { .. })
            ));
        }
        for t in [-3.5, 45.5, f64::NAN] {
            assert!(matches!(
                density_eos80(35.0, t, 0.0),
                Err(ScienceError::TemperatureOutOfRange { .. })
            ));
        }
        for p in [-1.0, f64::NAN] {
            assert!(matches!(
                density_eos80(35.0, 10.0, p),
                Err(ScienceError::InvalidPressure { .. })
            ));
        }
        assert!(matches!(
            secant_bulk_modulus_eos80(35.0, 10.0, 20_000.0),
            Err(ScienceError::InvalidParameter {
                name: "pressure_dbar",
                ..
            })
        ));
    }
}
