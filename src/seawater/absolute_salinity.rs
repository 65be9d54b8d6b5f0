//! Absolute Salinity of reference-composition seawater (TEOS-10, IOC et al. 2010, eq. 2.4.1).
use super::error::ScienceError;

/// Ratio SA/SP of reference-composition seawater, g/kg (Millero et al. 2008: uPS = 35.16504/35 g/kg).
pub const REFERENCE_SALINITY_RATIO_G_KG: f64 = 35.165_04 / 35.0;

/// Absolute Salinity SA (g/kg) from Practical Salinity, reference composition without anomaly (TEOS-10 eq. 2.4.1).
pub fn absolute_salinity_from_practical_salinity(practical_salinity: f64) -> Result<f64, ScienceError> {
    if !practical_salinity.is_finite() || practical_salinity < 0.0 {
        return Err(ScienceError::InvalidSalinity {
            value: practical_salinity,
        });
    }
    Ok(REFERENCE_SALINITY_RATIO_G_KG * practical_salinity)
}

/// Practical Salinity from Absolute Salinity (g/kg), the inverse of [`absolute_salinity_from_practical_salinity`].
pub fn practical_salinity_from_absolute_salinity(absolute_salinity_g_kg: f64) -> Result<f64, ScienceError> {
    if !absolute_salinity_g_kg.is_finite() || absolute_salinity_g_kg < 0.0 {
        return Err(ScienceError::InvalidSalinity {
            value: absolute_salinity_g_kg,
        });
    }
    Ok(absolute_salinity_g_kg / REFERENCE_SALINITY_RATIO_G_KG)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn standard_seawater_sp35_is_sa_35_16504() {
        // TEOS-10 Manual (IOC, SCOR, IAPSO 2010) §2.4: SP = 35 ↔ SA = 35.16504 g/kg.
        let sa = absolute_salinity_from_practical_salinity(35.0).unwrap();
        assert!((sa - 35.165_04).abs() < 1e-12);
        let sp = practical_salinity_from_absolute_salinity(sa).unwrap();
        assert!((sp - 35.0).abs() < 1e-12);
    }

    #[test]
    fn negative_salinity_is_refused() {
        assert!(absolute_salinity_from_practical_salinity(-0.1).is_err());
        assert!(practical_salinity_from_absolute_salinity(f64::INFINITY).is_err());
    }
}
