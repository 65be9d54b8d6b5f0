//! Conversion between the ITS-90 and IPTS-68 temperature scales (T68 = 1.00024 · T90, Saunders 1990).
//!
//! The UNESCO 1981/1983 equations (PSS-78, EOS-80, freezing point) were fitted on IPTS-68;
//! halotank's API takes ITS-90 and converts at the boundary, as TEOS-10's `gsw_t68_from_t90` does.

/// Ratio T68/T90 for seawater temperatures, Saunders (1990), WOCE Newsletter 10.
pub const T68_PER_T90: f64 = 1.000_24;

/// IPTS-68 temperature (°C) from an ITS-90 temperature (°C): T68 = 1.00024 · T90 (Saunders 1990).
#[inline]
pub fn t68_from_t90(t90_c: f64) -> f64 {
    t90_c * T68_PER_T90
}

/// ITS-90 temperature (°C) from an IPTS-68 temperature (°C): T90 = T68 / 1.00024 (Saunders 1990).
#[inline]
pub fn t90_from_t68(t68_c: f64) -> f64 {
    t68_c / T68_PER_T90
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn saunders_factor_at_the_warm_end() {
        // Saunders (1990): 40 °C on ITS-90 is 40.0096 °C on IPTS-68 (1.00024 × 40).
        assert!((t68_from_t90(40.0) - 40.0096).abs() < 1e-12);
        assert!((t90_from_t68(40.0096) - 40.0).abs() < 1e-12);
        // Both scales share their zero.
        assert_eq!(t68_from_t90(0.0), 0.0);
    }

    #[test]
    fn round_trip_is_exact_to_rounding() {
        for i in -30..=450 {
            let t90 = f64::from(i) / 10.0;
            let back = t90_from_t68(t68_from_t90(t90));
            assert!((back - t90).abs() <= 4.0 * f64::EPSILON * t90.abs().max(1.0));
        }
    }
}
