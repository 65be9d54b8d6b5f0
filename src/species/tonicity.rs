//! Tonicity: the water of one reading as the animal sees it. Hyper-, iso- or hypoosmotic against the
//! profile's plasma osmolality, the gradient, the water-potential difference and which way water tends
//! to move across the animal's surfaces. Osmoconformers get no gradient: their body fluids follow the water.
//!
//! Water-potential difference: Δψ = ψ_water − ψ_plasma = Π_plasma − Π_water (solute potentials; a vessel's
//! gauge pressure acts on both sides and cancels). Π_water is the TEOS-10 osmotic pressure of the reading;
//! Π_plasma is the TEOS-10 osmotic pressure of the sea water isosmotic with the plasma at the same
//! temperature and pressure ([`isosmotic_water`]), i.e. the plasma is treated as sea water of equal
//! osmolality. The van 't Hoff form Δψ ≈ −Δosmolality·R·T ([`water_potential_difference_van_t_hoff_bar`],
//! osmolality ≈ osmolarity for dilute solutions) agrees within a few percent at plasma strength.
//! Water moves toward lower water potential: into the animal when Δψ > 0 (hypoosmotic water), out of it
//! when Δψ < 0 (hyperosmotic water).
use serde::Serialize;

use crate::seawater::van_t_hoff::GAS_CONSTANT_L_BAR_MOL_K;
use crate::seawater::{Derived, ScienceError};

use super::isosmotic::isosmotic_water;
use super::profile::{OsmoticStrategy, SpeciesProfile};

/// Celsius zero, K.
const CELSIUS_ZERO_K: f64 = 273.15;

/// The water against the plasma.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Tonicity {
    /// Water osmolality above plasma + band.
    Hyperosmotic,
    /// Within ±band of the plasma (edges included).
    Isosmotic,
    /// Water osmolality below plasma − band.
    Hypoosmotic,
}

impl Tonicity {
    pub fn as_str(self) -> &'static str {
        match self {
            Self::Hyperosmotic => "hyperosmotic",
            Self::Isosmotic => "isosmotic",
            Self::Hypoosmotic => "hypoosmotic",
        }
    }
}

/// Which way water tends to move across the animal's surfaces (gills, skin, gut).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum WaterMovement {
    /// Hypoosmotic water: water enters the animal (it must excrete water and take up salts).
    IntoAnimal,
    /// Hyperosmotic water: water leaves the animal (it must drink and excrete salts).
    OutOfAnimal,
    /// Within the isosmotic band: little net movement.
    LittleNetMovement,
    /// Osmoconformer: body fluids follow the water.
    FollowsWater,
}

impl WaterMovement {
    pub fn as_str(self) -> &'static str {
        match self {
            Self::IntoAnimal => "into the animal",
            Self::OutOfAnimal => "out of the animal",
            Self::LittleNetMovement => "little net movement",
            Self::FollowsWater => "body fluids follow the water",
        }
    }
}

/// The wording for osmoconformers.
pub const CONFORMER_MESSAGE: &str = "osmoconformer: its body fluids follow the water, so the risk is the \
rate of change and the range, not the gradient";

/// Classifies water against plasma with a band of ±`band_mosm_kg` (edges count as isosmotic).
pub fn classify(water_mosm_kg: f64, plasma_mosm_kg: f64, band_mosm_kg: f64) -> Tonicity {
    let gradient = water_mosm_kg - plasma_mosm_kg;
    if gradient > band_mosm_kg {
        Tonicity::Hyperosmotic
    } else if gradient < -band_mosm_kg {
        Tonicity::Hypoosmotic
    } else {
        Tonicity::Isosmotic
    }
}

/// The direction water tends to move for an osmoregulator in water of this tonicity.
pub fn water_movement(tonicity: Tonicity) -> WaterMovement {
    match tonicity {
        Tonicity::Hypoosmotic => WaterMovement::IntoAnimal,
        Tonicity::Hyperosmotic => WaterMovement::OutOfAnimal,
        Tonicity::Isosmotic => WaterMovement::LittleNetMovement,
    }
}

/// Δψ = ψ_water − ψ_plasma ≈ −(osm_water − osm_plasma)·R·T, bar (van 't Hoff 1887; R = 0.0831 L bar/(mol K),
/// osmolality taken as osmolarity, which holds for dilute solutions).
pub fn water_potential_difference_van_t_hoff_bar(gradient_mosm_kg: f64, temperature_c: f64) -> f64 {
    -gradient_mosm_kg * 1e-3 * GAS_CONSTANT_L_BAR_MOL_K * (temperature_c + CELSIUS_ZERO_K)
}

/// The tonicity of one reading for one species: published in the tank state JSON and shown by `status`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TonicityState {
    /// Species profile id.
    pub species: String,
    pub osmotic_strategy: OsmoticStrategy,
    /// `null` for an osmoconformer.
    pub tonicity: Option<Tonicity>,
    /// The water's osmolality, mOsm/kg (TEOS-10).
    #[serde(rename = "water_osmolality_mOsm_kg")]
    pub water_osmolality_mosm_kg: f64,
    /// The profile's plasma osmolality, mOsm/kg (`null` for an osmoconformer).
    #[serde(rename = "plasma_osmolality_mOsm_kg")]
    pub plasma_osmolality_mosm_kg: Option<f64>,
    /// Half-width of the isosmotic band, mOsm/kg.
    #[serde(rename = "isosmotic_band_mOsm_kg")]
    pub isosmotic_band_mosm_kg: f64,
    /// Water minus plasma, mOsm/kg (`null` for an osmoconformer).
    #[serde(rename = "gradient_mOsm_kg")]
    pub gradient_mosm_kg: Option<f64>,
    /// ψ_water − ψ_plasma, bar (TEOS-10 osmotic pressures; `null` for an osmoconformer).
    pub water_potential_difference_bar: Option<f64>,
    /// The Practical Salinity isosmotic with the plasma at this reading's temperature and pressure.
    pub isosmotic_practical_salinity: Option<f64>,
    pub water_movement: WaterMovement,
    /// One line for people.
    pub message: String,
}

/// The tonicity of a reading (`derived` at `temperature_c`, `pressure_dbar`) for a profile.
pub fn assess(
    derived: &Derived,
    temperature_c: f64,
    pressure_dbar: f64,
    profile: &SpeciesProfile,
) -> Result<TonicityState, ScienceError> {
    let water = derived.osmolality_mosm_kg;
    let band = profile.isosmotic_band_mosm_kg.value;
    let strategy = profile.osmotic_strategy.value;
    let plasma = match (strategy, profile.plasma_mosm_kg()) {
        (OsmoticStrategy::Osmoregulator, Some(p)) => p,
        _ => {
            return Ok(TonicityState {
                species: profile.id.clone(),
                osmotic_strategy: strategy,
                tonicity: None,
                water_osmolality_mosm_kg: water,
                plasma_osmolality_mosm_kg: None,
                isosmotic_band_mosm_kg: band,
                gradient_mosm_kg: None,
                water_potential_difference_bar: None,
                isosmotic_practical_salinity: None,
                water_movement: WaterMovement::FollowsWater,
                message: format!("{}: {CONFORMER_MESSAGE}", profile.label()),
            });
        }
    };
    let iso = isosmotic_water(plasma, temperature_c, pressure_dbar)?;
    let gradient = water - plasma;
    let delta_psi = iso.osmotic_pressure_bar - derived.osmotic_pressure_bar;
    let tonicity = classify(water, plasma, band);
    let movement = water_movement(tonicity);
    let message = format!(
        "{} to {} plasma ({plasma:.0} mOsm/kg): gradient {gradient:+.0} mOsm/kg, water potential \
         difference {delta_psi:+.2} bar; water tends to move {} (isosmotic at SP {:.1})",
        tonicity.as_str(),
        profile.label(),
        match movement {
            WaterMovement::LittleNetMovement => "little either way",
            other => other.as_str(),
        },
        iso.practical_salinity
    );
    Ok(TonicityState {
        species: profile.id.clone(),
        osmotic_strategy: strategy,
        tonicity: Some(tonicity),
        water_osmolality_mosm_kg: water,
        plasma_osmolality_mosm_kg: Some(plasma),
        isosmotic_band_mosm_kg: band,
        gradient_mosm_kg: Some(gradient),
        water_potential_difference_bar: Some(delta_psi),
        isosmotic_practical_salinity: Some(iso.practical_salinity),
        water_movement: movement,
        message,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::seawater::derive_from_salinity;
    use crate::species::SpeciesLibrary;

    fn profile(id: &str) -> SpeciesProfile {
        SpeciesLibrary::embedded().unwrap().get(id).unwrap().clone()
    }

    #[test]
    fn band_edges_count_as_isosmotic() {
        // halotank's default rule: isosmotic within ±25 mOsm/kg (edges included, exact in binary floating point).
        assert_eq!(classify(335.0, 310.0, 25.0), Tonicity::Isosmotic);
        assert_eq!(classify(285.0, 310.0, 25.0), Tonicity::Isosmotic);
        assert_eq!(classify(335.000_001, 310.0, 25.0), Tonicity::Hyperosmotic);
        assert_eq!(classify(284.999_999, 310.0, 25.0), Tonicity::Hypoosmotic);
        assert_eq!(classify(310.0, 310.0, 25.0), Tonicity::Isosmotic);
        // A configured band moves the edges.
        assert_eq!(classify(320.0, 310.0, 5.0), Tonicity::Hyperosmotic);
    }

    #[test]
    fn water_moves_toward_lower_water_potential() {
        // Osmosis (van 't Hoff 1887): water moves toward the more concentrated side, so into an animal in
        // hypoosmotic water and out of it in hyperosmotic water.
        assert_eq!(water_movement(Tonicity::Hypoosmotic), WaterMovement::IntoAnimal);
        assert_eq!(water_movement(Tonicity::Hyperosmotic), WaterMovement::OutOfAnimal);
        assert_eq!(
            water_movement(Tonicity::Isosmotic),
            WaterMovement::LittleNetMovement
        );
        assert!(water_potential_difference_van_t_hoff_bar(-300.0, 15.0) > 0.0);
        assert!(water_potential_difference_van_t_hoff_bar(700.0, 15.0) < 0.0);
    }

    #[test]
    fn van_t_hoff_worked_example() {
        // Worked by hand: Δosm = −0.300 Osm/kg at 15 °C: Δψ = 0.300 × 0.0831 × 288.15 = 7.1836 bar.
        let d = water_potential_difference_van_t_hoff_bar(-300.0, 15.0);
        assert!((d - 7.183_579_5).abs() < 1e-6, "{d}");
    }

    #[test]
    fn fresh_water_is_hypoosmotic_to_parr_and_water_moves_in() {
        let parr = profile("atlantic_salmon_parr");
        let derived = derive_from_salinity(0.1, 10.0, 0.0, 0.0).unwrap();
        let s = assess(&derived, 10.0, 0.0, &parr).unwrap();
        assert_eq!(s.tonicity, Some(Tonicity::Hypoosmotic));
        assert_eq!(s.water_movement, WaterMovement::IntoAnimal);
        let gradient = s.gradient_mosm_kg.unwrap();
        assert!((gradient - (derived.osmolality_mosm_kg - 310.0)).abs() < 1e-12);
        // TEOS-10 Δψ against the van 't Hoff approximation (van 't Hoff 1887): within 5 % at plasma strength.
        let exact = s.water_potential_difference_bar.unwrap();
        let approx = water_potential_difference_van_t_hoff_bar(gradient, 10.0);
        assert!(
            exact > 0.0 && ((exact - approx) / approx).abs() < 0.05,
            "{exact} vs {approx}"
        );
        assert!(
            s.message.contains("hypoosmotic") && s.message.contains("into the animal"),
            "{}",
            s.message
        );
    }

    #[test]
    fn full_sea_water_is_hyperosmotic_to_cod_and_water_moves_out() {
        let cod = profile("atlantic_cod");
        let derived = derive_from_salinity(34.0, 8.0, 0.0, 0.0).unwrap();
        let s = assess(&derived, 8.0, 0.0, &cod).unwrap();
        assert_eq!(s.tonicity, Some(Tonicity::Hyperosmotic));
        assert_eq!(s.water_movement, WaterMovement::OutOfAnimal);
        assert!(s.water_potential_difference_bar.unwrap() < 0.0);
    }

    #[test]
    fn water_at_the_isosmotic_salinity_is_isosmotic() {
        let smolt = profile("atlantic_salmon_smolt");
        let iso = isosmotic_water(330.0, 12.0, 0.0).unwrap();
        let derived = derive_from_salinity(iso.practical_salinity, 12.0, 0.0, 0.0).unwrap();
        let s = assess(&derived, 12.0, 0.0, &smolt).unwrap();
        assert_eq!(s.tonicity, Some(Tonicity::Isosmotic));
        assert!(s.gradient_mosm_kg.unwrap().abs() < 1e-6);
        assert!(s.water_potential_difference_bar.unwrap().abs() < 1e-6);
        assert_eq!(s.water_movement, WaterMovement::LittleNetMovement);
    }

    #[test]
    fn osmoconformers_get_the_follows_the_water_wording() {
        for id in ["pacific_oyster", "blue_mussel"] {
            let p = profile(id);
            let derived = derive_from_salinity(28.0, 14.0, 0.0, 0.0).unwrap();
            let s = assess(&derived, 14.0, 0.0, &p).unwrap();
            assert_eq!(s.tonicity, None);
            assert_eq!(s.gradient_mosm_kg, None);
            assert_eq!(s.water_potential_difference_bar, None);
            assert_eq!(s.water_movement, WaterMovement::FollowsWater);
            assert!(
                s.message.contains("body fluids follow the water"),
                "{}",
                s.message
            );
            assert!(s
                .message
                .contains("rate of change and the range, not the gradient"));
        }
    }

    #[test]
    fn state_json_has_units_in_its_keys() {
        let parr = profile("atlantic_salmon_parr");
        let derived = derive_from_salinity(0.2, 9.0, 0.0, 0.0).unwrap();
        let json = serde_json::to_value(assess(&derived, 9.0, 0.0, &parr).unwrap()).unwrap();
        for key in [
            "species",
            "osmotic_strategy",
            "tonicity",
            "water_osmolality_mOsm_kg",
            "plasma_osmolality_mOsm_kg",
            "isosmotic_band_mOsm_kg",
            "gradient_mOsm_kg",
            "water_potential_difference_bar",
            "isosmotic_practical_salinity",
            "water_movement",
            "message",
        ] {
            assert!(json.get(key).is_some(), "missing {key}: {json}");
        }
        assert_eq!(json["tonicity"], "hypoosmotic");
        assert_eq!(json["water_movement"], "into_animal");
        assert_eq!(json["osmotic_strategy"], "osmoregulator");
    }
}
