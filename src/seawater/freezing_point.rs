//! Freezing point of seawater, UNESCO 1983 (Millero 1978, as printed in UNESCO Tech. Pap. Mar. Sci. 44).
//!
//! tf = −0.0575 S + 1.710523e-3 S^1.5 − 2.154996e-4 S² − 7.53e-4 p, with p in dbar and tf in IPTS-68 °C.
//! Fitted for 4 ≤ S ≤ 40 and 0 ≤ p ≤ 500 dbar (Fofonoff & Millard 1983); used beyond that as an
//! extrapolation. halotank reports the ITS-90 value.
use super::error::{check_pressure, ScienceError};
use super::temperature_scale::t90_from_t68;

/// Highest sea pressure accepted, dbar (the shared PSS-78/EOS-80 limit; the fit itself ends at 500 dbar).
pub const MAX_PRESSURE_DBAR: f64 = 10_000.0;

/// Freezing point (°C IPTS-68) from SP and sea pressure (dbar); UNESCO 1983 eq. for tf (Millero 1978).
pub fn freezing_point_unesco1983_t68(
    practical_salinity: f64,
    pressure_dbar: f64,
) -> Result<f64, ScienceError> {
    let s = practical_salinity;
    if !s.is_finite() || s < 0.0 {
        return Err(ScienceError::InvalidSalinity { value: s });
    }
    check_pressure(pressure_dbar)?;
    if pressure_dbar > MAX_PRESSURE_DBAR {
        return Err(ScienceError::InvalidParameter {
            name: "pressure_dbar",
            value: pressure_dbar,
            why: "is above 10 000 dbar",
        });
    }
    Ok(s * (-0.0575 + s.sqrt() * 1.710_523e-3 - s * 2.154_996e-4) - 7.53e-4 * pressure_dbar)
}

/// Freezing point (°C ITS-90) from SP and sea pressure (dbar); UNESCO 1983 (Millero), T90 = T68/1.00024.
pub fn freezing_point_unesco1983(practical_salinity: f64, pressure_dbar: f64) -> Result<f64, ScienceError> {
    freezing_point_unesco1983_t68(practical_salinity, pressure_dbar).map(t90_from_t68)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn unesco_1983_check_value() {
        // UNESCO Tech. Pap. Mar. Sci. 44 (Fofonoff & Millard 1983), freezing point check value (from
        // memory; reproduced by Python `seawater` 3.3.5 sw.fp): S = 40, P = 500 dbar gives
        // tf = -2.588567 °C (IPTS-68). Published to 6 decimals: |Δ| ≤ 5e-7.
        let tf68 = freezing_point_unesco1983_t68(40.0, 500.0).unwrap();
        assert!((tf68 - -2.588_567).abs() <= 5e-7, "{tf68}");
        // The ITS-90 value: -2.588567 / 1.00024 = -2.587946 (Python `seawater` sw.fp: -2.58794636).
        let tf90 = freezing_point_unesco1983(40.0, 500.0).unwrap();
        assert!((tf90 - -2.587_946_36).abs() <= 1e-6, "{tf90}");
    }

    #[test]
    fn fresh_water_freezes_at_zero_at_the_surface() {
        // The equation has no constant term: S = 0, p = 0 gives 0 °C on both scales.
        assert_eq!(freezing_point_unesco1983(0.0, 0.0), Ok(0.0));
    }

    #[test]
    fn bad_input_gives_typed_errors() {
        assert!(matches!(
            freezing_point_unesco1983(-1.0, 0.0),
            Err(ScienceError::InvalidSalinity { .. })
        ));
        assert!(matches!(
            freezing_point_unesco1983(f64::NAN, 0.0),
            Err(ScienceError::InvalidSalinity { .. })
        ));
        assert!(matches!(
            freezing_point_unesco1983(35.0, -1.0),
            Err(ScienceError::InvalidPressure { .. })
        ));
        assert!(matches!(
            freezing_point_unesco1983(35.0, 1e6),
            Err(ScienceError::InvalidParameter { .. })
        ));
    }
}
