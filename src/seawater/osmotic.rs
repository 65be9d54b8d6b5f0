//! Osmotic properties of seawater from the TEOS-10 Gibbs function: molality, osmotic coefficient,
//! osmolality, osmotic pressure, and the solute and water potentials built on them.
//!
//! Definitions follow the TEOS-10 Manual (IOC, SCOR & IAPSO 2010; osmotic coefficient and osmotic pressure
//! sections, §3.40–3.41 from memory) and the TEOS-10 GSW functions `gsw_osmotic_coefficient_t_exact` and
//! `gsw_osmotic_pressure_t_exact`.
use super::error::{check_temperature, ScienceError};
use super::gibbs::{
    check_absolute_salinity, check_gibbs_pressure, lowering_in_z, lowering_q, pure_water_in_z, z_poly_dz,
    Reduced, CELSIUS_ZERO_K, SALINITY_FACTOR_PER_G_KG,
};

/// Mean molar mass of sea salt of Reference Composition, kg/mol (Millero et al. 2008; TEOS-10 M_S).
pub const MOLAR_MASS_SEA_SALT_KG_MOL: f64 = 0.031_403_821_8;

/// Molar gas constant, J/(mol K), as used by TEOS-10 `gsw_osmotic_coefficient_t_exact`.
pub const GAS_CONSTANT_J_MOL_K: f64 = 8.314_472;

/// Largest Newton steps taken by [`osmotic_pressure_bar`] before it reports no convergence.
const MAX_NEWTON_STEPS: usize = 30;

/// Validates SA, t, p for the osmotic functions.
fn check_inputs(
    absolute_salinity_g_kg: f64,
    temperature_c: f64,
    pressure_dbar: f64,
) -> Result<(), ScienceError> {
    check_absolute_salinity(absolute_salinity_g_kg)?;
    check_temperature(temperature_c)?;
    check_gibbs_pressure(pressure_dbar)
}

/// Molality of sea salt, mol/kg of water: m = SA/(M_S (1 − SA)), SA in kg/kg (TEOS-10 GSW osmotic functions).
pub fn molality_mol_kg(absolute_salinity_g_kg: f64) -> Result<f64, ScienceError> {
    check_absolute_salinity(absolute_salinity_g_kg)?;
    Ok(absolute_salinity_g_kg / (MOLAR_MASS_SEA_SALT_KG_MOL * (1000.0 - absolute_salinity_g_kg)))
}

/// (osmolality mOsm/kg of water, osmotic coefficient φ) from SA (g/kg), t (°C ITS-90), p (dbar).
///
/// φ = −(μW(SA,t,p) − μW(0,t,p)) / (m R T) (TEOS-10 `gsw_osmotic_coefficient_t_exact`),
/// osmolality = φ m · 1000. At SA = 0 this returns the ideal limit (0, 1); the formulation's own limit
/// is 1 + 8·10⁻⁸, the rounding of the published coefficients.
pub fn osmolality_and_coefficient(
    absolute_salinity_g_kg: f64,
    temperature_c: f64,
    pressure_dbar: f64,
) -> Result<(f64, f64), ScienceError> {
    check_inputs(absolute_salinity_g_kg, temperature_c, pressure_dbar)?;
    if absolute_salinity_g_kg == 0.0 {
        return Ok((0.0, 1.0));
    }
    let r = Reduced::new(absolute_salinity_g_kg, temperature_c, pressure_dbar);
    let q = lowering_q(&r);
    let rt = GAS_CONSTANT_J_MOL_K * (CELSIUS_ZERO_K + temperature_c);
    // μW − μW0 = x² Q = SA/Su · Q, so φ m = −x² Q/(R T) and φ = −(1/Su) M_S (1000 − SA) Q/(R T), g/kg units;
    // the SA of x² cancels the SA of m and nothing is divided by SA.
    let osmolality_mosm_kg = -1000.0 * r.x2 * q / rt;
    let coefficient =
        -SALINITY_FACTOR_PER_G_KG * MOLAR_MASS_SEA_SALT_KG_MOL * (1000.0 - absolute_salinity_g_kg) * q / rt;
    Ok((osmolality_mosm_kg, coefficient))
}

/// Osmotic pressure of seawater against pure water, bar (TEOS-10 `gsw_osmotic_pressure_t_exact`).
///
/// The extra pressure Π on the seawater side at which μW(SA, t, p + Π) = μW(0, t, p), found by Newton
/// iteration on dμW/dp = g_p − SA g_SAp. 1 bar = 10 dbar. [`ScienceError::NoConvergence`] if it fails.
pub fn osmotic_pressure_bar(
    absolute_salinity_g_kg: f64,
    temperature_c: f64,
    pressure_dbar: f64,
) -> Result<f64, ScienceError> {
    check_inputs(absolute_salinity_g_kg, temperature_c, pressure_dbar)?;
    if absolute_salinity_g_kg == 0.0 {
        return Ok(0.0);
    }
    let r = Reduced::new(absolute_salinity_g_kg, temperature_c, pressure_dbar);
    // Only the pressure varies: collapse x and y once, then each step evaluates two short z-polynomials.
    let water = pure_water_in_z(r.y);
    let lowering = lowering_in_z(r.x, r.y);
    let g_pure = z_poly_dz(&water, r.z).0;
    // Unknown: dz = Π / 10⁴ dbar. f(dz) = gW(z0 + dz) − gW(z0) + x² Q(z0 + dz), in J/kg.
    let mut dz = 0.0_f64;
    for _ in 0..MAX_NEWTON_STEPS {
        let z = r.z + dz;
        let (g_w, g_w_dz) = z_poly_dz(&water, z);
        let (q, q_dz) = z_poly_dz(&lowering, z);
        let f = (g_w - g_pure) + r.x2 * q;
        let slope = g_w_dz + r.x2 * q_dz;
        if !(f.is_finite() && slope.is_finite() && slope > 0.0) {
            break;
        }
        let step = f / slope;
        dz -= step;
        // Near the root f is rounding noise, about 1e-16 |gW| ≲ 1.5e-11 J/kg, so steps jitter by ~2e-16 in z;
        // the floor 1e-14 in z (1e-10 dbar) sits well above that, and Newton's quadratic convergence leaves
        // an error far below the last step taken.
        if step.abs() <= 1e-12 * dz.abs() + 1e-14 {
            return if dz.is_finite() && dz >= 0.0 {
                Ok(dz * 1e3)
            } else {
                Err(ScienceError::NoConvergence {
                    what: "osmotic pressure Newton iteration",
                })
            };
        }
    }
    Err(ScienceError::NoConvergence {
        what: "osmotic pressure Newton iteration",
    })
}

/// Solute (osmotic) potential ψs = −Π, bar (physiology convention; Nobel 2009, Physicochemical and
/// Environmental Plant Physiology, ch. 2).
pub fn solute_potential_bar(
    absolute_salinity_g_kg: f64,
    temperature_c: f64,
    pressure_dbar: f64,
) -> Result<f64, ScienceError> {
    Ok(-osmotic_pressure_bar(
        absolute_salinity_g_kg,
        temperature_c,
        pressure_dbar,
    )?)
}

/// Water potential ψ = ψs + ψp, bar (Nobel 2009 ch. 2). ψp is 0 for an open tank, the gauge pressure in a
/// closed vessel.
pub fn water_potential_bar(
    solute_potential_bar: f64,
    pressure_potential_bar: f64,
) -> Result<f64, ScienceError> {
    if !solute_potential_bar.is_finite() || solute_potential_bar > 0.0 {
        return Err(ScienceError::InvalidParameter {
            name: "solute_potential_bar",
            value: solute_potential_bar,
            why: "must be a finite number not above 0",
        });
    }
    if !pressure_potential_bar.is_finite() {
        return Err(ScienceError::InvalidParameter {
            name: "pressure_potential_bar",
            value: pressure_potential_bar,
            why: "must be a finite number",
        });
    }
    Ok(solute_potential_bar + pressure_potential_bar)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::seawater::absolute_salinity::absolute_salinity_from_practical_salinity;
    use crate::seawater::gibbs::{chemical_potential_water_j_kg, gibbs_p_m3_kg, gibbs_sa_p_m3_kg_per_g_kg};
    use crate::seawater::van_t_hoff::solute_potential_van_t_hoff_bar;

    #[test]
    fn molality_worked_example() {
        // Worked by hand: SA = 35.16504 g/kg: 0.0314038218 × (1 − 0.03516504) = 0.0302995049 kg/mol,
        // m = 0.03516504 / 0.0302995049 = 1.160581 mol/kg.
        let m = molality_mol_kg(35.165_04).unwrap();
        assert!((m - 1.160_581).abs() < 1e-6, "{m}");
        assert_eq!(molality_mol_kg(0.0), Ok(0.0));
    }

    #[test]
    fn osmotic_coefficient_of_standard_seawater() {
        // Python gsw 3.6.23: −(μW(SSO) − μW(0))/(m R T) from gsw.chem_potential_water_t_exact at
        // SA = 35.16504 g/kg, 0 °C, 0 dbar is 0.892260220817818 (row of tests/vectors/osmotic_gsw.csv).
        // 1e-12: the two evaluations differ only by floating-point rounding of the same polynomial.
        let (osmolality, phi) = osmolality_and_coefficient(35.165_04, 0.0, 0.0).unwrap();
        assert!((phi - 0.892_260_220_817_818).abs() < 1e-12, "{phi}");
        // φ m = 0.892260 × 1.160581 mol/kg = 1.035541 Osm/kg (worked by hand from the two values).
        assert!((osmolality - 1035.541).abs() < 1e-3, "{osmolality}");
    }

    #[test]
    fn pure_water_is_the_ideal_limit() {
        assert_eq!(osmolality_and_coefficient(0.0, 20.0, 0.0), Ok((0.0, 1.0)));
        assert_eq!(osmotic_pressure_bar(0.0, 20.0, 0.0), Ok(0.0));
    }

    #[test]
    fn dilute_seawater_tends_to_ideal_behaviour() {
        // Ideal-solution limit (van 't Hoff 1887): φ → 1 as SA → 0. The approach is
        // the Debye–Hückel √SA law, φ ≈ 1 − 0.064 √SA here, so at SA = 1e-8 g/kg φ is within 1e-5 of 1.
        let (_, phi) = osmolality_and_coefficient(1e-8, 25.0, 0.0).unwrap();
        assert!((phi - 1.0).abs() < 1e-5, "{phi}");
        let mut previous = 0.0;
        for &sa in &[1.0, 1e-2, 1e-4, 1e-6, 1e-8] {
            let (_, phi) = osmolality_and_coefficient(sa, 25.0, 0.0).unwrap();
            assert!(phi > previous, "φ must rise towards 1 as SA falls");
            previous = phi;
        }
    }

    #[test]
    fn dilute_osmotic_pressure_matches_van_t_hoff_for_the_same_osmolality() {
        // For a dilute solution Π ≈ c R T with c the osmolarity (van 't Hoff). Osmolality (per kg water)
        // becomes osmolarity (per litre) via the density of water, 1/g_p(0, t, p) (the solution's density
        // differs by < 1e-5 at SA = 0.01 g/kg). Tolerance 1e-3 relative: the van 't Hoff R = 0.0831
        // L bar/(mol K) is 0.054 % below 0.08314472; compressibility over Π adds < 1e-6.
        let (t, p) = (25.0, 0.0);
        let sa = 0.01;
        let (osmolality, _) = osmolality_and_coefficient(sa, t, p).unwrap();
        let rho_w_kg_l = 1e-3 / gibbs_p_m3_kg(0.0, t, p).unwrap();
        let osmolarity_mol_l = osmolality * 1e-3 * rho_w_kg_l * (1.0 - sa * 1e-3);
        let van_t_hoff = -solute_potential_van_t_hoff_bar(1.0, osmolarity_mol_l, t).unwrap();
        let gibbs = osmotic_pressure_bar(sa, t, p).unwrap();
        assert!(
            ((gibbs - van_t_hoff) / gibbs).abs() < 1e-3,
            "{gibbs} vs {van_t_hoff}"
        );
    }

    #[test]
    fn standard_seawater_osmolality_is_about_1000_to_1100() {
        // Common practice: full-strength seawater (SP 35) is about 1000–1100 mOsm/kg.
        let sa = absolute_salinity_from_practical_salinity(35.0).unwrap();
        let (osmolality, _) = osmolality_and_coefficient(sa, 20.0, 0.0).unwrap();
        assert!((1000.0..=1100.0).contains(&osmolality), "{osmolality}");
    }

    #[test]
    fn teleost_plasma_osmolality_is_reached_near_sp_10_to_12() {
        // Common practice: marine and freshwater teleost plasma is about 300–350 mOsm/kg, matched by
        // seawater at roughly SP 10–12 ("isosmotic" brackish water).
        for sp in [10.0, 11.0, 12.0] {
            let sa = absolute_salinity_from_practical_salinity(sp).unwrap();
            let (osmolality, _) = osmolality_and_coefficient(sa, 15.0, 0.0).unwrap();
            assert!((290.0..=360.0).contains(&osmolality), "SP {sp}: {osmolality}");
        }
        let sa = absolute_salinity_from_practical_salinity(8.0).unwrap();
        assert!(osmolality_and_coefficient(sa, 15.0, 0.0).unwrap().0 < 300.0);
        let sa = absolute_salinity_from_practical_salinity(14.0).unwrap();
        assert!(osmolality_and_coefficient(sa, 15.0, 0.0).unwrap().0 > 350.0);
    }

    #[test]
    fn osmotic_pressure_satisfies_its_definition() {
        // The defining equation (TEOS-10 `gsw_osmotic_pressure_t_exact`) checked with the public μW function;
        // the residual tolerance is the rounding of μW (|μW| up to 1e5 J/kg at depth, times a few 1e-16).
        for &(sa, t, p) in &[
            (35.0, 10.0, 0.0),
            (5.0, 30.0, 100.0),
            (42.0, -2.0, 1000.0),
            (100.0, 20.0, 0.0),
        ] {
            let pi_bar = osmotic_pressure_bar(sa, t, p).unwrap();
            let mu_sea = chemical_potential_water_j_kg(sa, t, p + 10.0 * pi_bar).unwrap();
            let mu_pure = chemical_potential_water_j_kg(0.0, t, p).unwrap();
            assert!(
                (mu_sea - mu_pure).abs() < 1e-13 * mu_pure.abs().max(1e3),
                "{sa} {t} {p}"
            );
            // Newton slope: dμW/dp = g_p − SA g_SAp must stay positive (the iteration relies on it).
            let v = gibbs_p_m3_kg(sa, t, p).unwrap() - sa * gibbs_sa_p_m3_kg_per_g_kg(sa, t, p).unwrap();
            assert!(v > 0.0);
        }
    }

    #[test]
    fn potentials_follow_their_definitions() {
        let pi = osmotic_pressure_bar(35.0, 20.0, 0.0).unwrap();
        let psi_s = solute_potential_bar(35.0, 20.0, 0.0).unwrap();
        assert_eq!(psi_s, -pi);
        // Open tank: ψp = 0, so ψ = ψs; a closed vessel at 0.5 bar gauge adds 0.5 bar.
        assert_eq!(water_potential_bar(psi_s, 0.0), Ok(psi_s));
        assert!((water_potential_bar(psi_s, 0.5).unwrap() - (psi_s + 0.5)).abs() < 1e-12);
        assert!(water_potential_bar(f64::NAN, 0.0).is_err());
        assert!(water_potential_bar(1.0, 0.0).is_err());
        assert!(water_potential_bar(-1.0, f64::INFINITY).is_err());
    }

    proptest::proptest! {
        #[test]
        fn osmolality_and_osmotic_pressure_rise_with_salinity(
            sa in 0.0..60.0_f64,
            extra in 1e-3..10.0_f64,
            t in -2.0..40.0_f64,
            p in 0.0..10_000.0_f64,
        ) {
            // Adding salt lowers the chemical potential of water (TEOS-10: ∂μW/∂SA < 0), so the
            // osmolality and the osmotic pressure must both rise with SA at fixed t and p.
            let (low, _) = osmolality_and_coefficient(sa, t, p).unwrap();
            let (high, _) = osmolality_and_coefficient(sa + extra, t, p).unwrap();
            proptest::prop_assert!(high > low, "{} -> {}", low, high);
            let pi_low = osmotic_pressure_bar(sa, t, p).unwrap();
            let pi_high = osmotic_pressure_bar(sa + extra, t, p).unwrap();
            proptest::prop_assert!(pi_high > pi_low, "{} -> {}", pi_low, pi_high);
        }
    }

    #[test]
    fn bad_input_is_a_typed_error() {
        assert!(matches!(
            osmolality_and_coefficient(-0.1, 10.0, 0.0),
            Err(ScienceError::InvalidSalinity { .. })
        ));
        assert!(matches!(
            osmotic_pressure_bar(f64::NAN, 10.0, 0.0),
            Err(ScienceError::InvalidSalinity { .. })
        ));
        assert!(matches!(
            osmotic_pressure_bar(35.0, f64::INFINITY, 0.0),
            Err(ScienceError::TemperatureOutOfRange { .. })
        ));
        assert!(matches!(
            osmolality_and_coefficient(35.0, 10.0, -5.0),
            Err(ScienceError::InvalidPressure { .. })
        ));
        assert!(matches!(
            osmotic_pressure_bar(35.0, 10.0, 2e4),
            Err(ScienceError::InvalidPressure { .. })
        ));
        assert!(molality_mol_kg(1000.0).is_err());
    }

    #[test]
    fn edges_of_the_accepted_range_give_finite_results() {
        // Corners of SA 0..120 g/kg, t −3..45 °C, p 0..10⁴ dbar: finite, ordered values, never NaN.
        for &sa in &[1e-300, 5e-324, 1e-6, 0.001, 0.1, 120.0] {
            for &t in &[-3.0, 4.0, 45.0] {
                for &p in &[0.0, 9_999.0, 10_000.0] {
                    let (o, phi) = osmolality_and_coefficient(sa, t, p).unwrap();
                    let pi = osmotic_pressure_bar(sa, t, p).unwrap();
                    assert!(
                        o.is_finite() && o >= 0.0 && phi.is_finite() && phi > 0.0,
                        "{sa} {t} {p}"
                    );
                    assert!(pi.is_finite() && pi >= 0.0, "{sa} {t} {p}: {pi}");
                }
            }
        }
    }
}
