//! Independent physical cross-check: osmolality from freezing-point depression against the TEOS-10
//! Gibbs-function osmolality.
//!
//! Freezing-point osmometry is how laboratories measure the osmolality of plasma and of water
//! (common practice): osmolality ≈ ΔTf / Kf with the cryoscopic constant of water Kf = 1.858 K kg/mol
//! (CRC Handbook of Chemistry and Physics; from memory, verify). The depression comes from the UNESCO
//! (1983) freezing-point formula, a fit to measured freezing points (Doherty & Kester 1974), so it is
//! independent of the Gibbs function.
use halotank::seawater::absolute_salinity::absolute_salinity_from_practical_salinity;
use halotank::seawater::freezing_point::freezing_point_unesco1983;
use halotank::seawater::osmotic::osmolality_and_coefficient;

const CRYOSCOPIC_CONSTANT_K_KG_MOL: f64 = 1.858;

#[test]
fn freezing_point_osmolality_agrees_with_gibbs_within_one_percent_for_sp_5_to_40() {
    for sp in [5.0, 8.0, 10.0, 12.0, 15.0, 20.0, 25.0, 30.0, 35.0, 40.0] {
        let tf = freezing_point_unesco1983(sp, 0.0).unwrap();
        let cryoscopic_mosm_kg = -tf / CRYOSCOPIC_CONSTANT_K_KG_MOL * 1000.0;
        let sa = absolute_salinity_from_practical_salinity(sp).unwrap();
        // Evaluated at the freezing point itself, where the osmometer measures (clamped to the core's range).
        let (gibbs_mosm_kg, _) = osmolality_and_coefficient(sa, tf.max(-3.0), 0.0).unwrap();
        let relative = (cryoscopic_mosm_kg - gibbs_mosm_kg).abs() / gibbs_mosm_kg;
        assert!(
            relative < 0.01,
            "SP {sp}: freezing point {tf:.4} °C gives {cryoscopic_mosm_kg:.1} mOsm/kg, Gibbs {gibbs_mosm_kg:.1} ({:.2} %)",
            relative * 100.0
        );
    }
}
