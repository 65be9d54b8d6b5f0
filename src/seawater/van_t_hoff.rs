//! Van 't Hoff solute potential ψs = −i C R T of an ideal dilute solution (van 't Hoff 1887).
use super::error::ScienceError;

/// Gas constant in the unit of the van 't Hoff equation as usually quoted, L bar/(mol K) (common practice).
pub const GAS_CONSTANT_L_BAR_MOL_K: f64 = 0.0831;

/// Celsius zero, K.
const CELSIUS_ZERO_K: f64 = 273.15;

/// Solute potential ψs = −i C R T, bar (van 't Hoff 1887), R = 0.0831 L bar/(mol K), T = t + 273.15 K.
///
/// `van_t_hoff_factor_i` is the number of particles per formula unit (2 for NaCl, ideal), `molarity_mol_l`
/// the concentration in mol per litre of solution.
pub fn solute_potential_van_t_hoff_bar(
    van_t_hoff_factor_i: f64,
    molarity_mol_l: f64,
    temperature_c: f64,
) -> Result<f64, ScienceError> {
    if !van_t_hoff_factor_i.is_finite() || van_t_hoff_factor_i < 0.0 {
        return Err(ScienceError::InvalidParameter {
            name: "van_t_hoff_factor_i",
            value: van_t_hoff_factor_i,
            why: "must be a finite number not below 0",
        });
    }
    if !molarity_mol_l.is_finite() || molarity_mol_l < 0.0 {
        return Err(ScienceError::InvalidParameter {
            name: "molarity_mol_l",
            value: molarity_mol_l,
            why: "must be a finite number not below 0",
        });
    }
    let temperature_k = temperature_c + CELSIUS_ZERO_K;
    if !temperature_c.is_finite() || temperature_k < 0.0 {
        return Err(ScienceError::InvalidParameter {
            name: "temperature_c",
            value: temperature_c,
            why: "must be a finite temperature not below absolute zero",
        });
    }
    Ok(-van_t_hoff_factor_i * molarity_mol_l * GAS_CONSTANT_L_BAR_MOL_K * temperature_k)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn worked_example_quarter_molar_salt_at_25_c() {
        // Worked by hand: i = 2, C = 0.25 mol/L, t = 25 °C:
        // ψs = −0.25 × 2 × 0.0831 × 298.15 = −12.388 bar (≈ −12.39 bar).
        let psi = solute_potential_van_t_hoff_bar(2.0, 0.25, 25.0).unwrap();
        assert!((psi - (-12.388_132_5)).abs() < 1e-9, "{psi}");
        assert!((psi - (-12.39)).abs() < 0.005);
    }

    #[test]
    fn pure_water_has_zero_solute_potential() {
        assert_eq!(solute_potential_van_t_hoff_bar(2.0, 0.0, 10.0), Ok(-0.0));
    }

    #[test]
    fn unusable_input_is_refused() {
        for (i, c, t) in [
            (f64::NAN, 0.1, 20.0),
            (-1.0, 0.1, 20.0),
            (2.0, -0.1, 20.0),
            (2.0, f64::INFINITY, 20.0),
            (2.0, 0.1, f64::NAN),
            (2.0, 0.1, -300.0),
        ] {
            assert!(matches!(
                solute_potential_van_t_hoff_bar(i, c, t),
                Err(ScienceError::InvalidParameter { .. })
            ));
        }
    }
}
