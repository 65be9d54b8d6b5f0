//! Seawater and osmotic science: pure functions of published equations.
//!
//! No I/O, no clock, no async. Every public function names the quantity it
//! returns, its units and its published source. Inputs use ITS-90
//! temperature (°C), sea pressure in dbar (0 at the surface) and
//! conductivity in mS/cm unless the name says otherwise.
pub mod absolute_salinity;
pub mod derive;
pub mod eos80_density;
pub mod error;
pub mod freezing_point;
pub mod gibbs;
pub mod osmotic;
pub mod practical_salinity;
pub mod temperature_scale;
pub mod units;
pub mod van_t_hoff;

pub use derive::{derive_from_conductivity, derive_from_salinity, Derived};
pub use error::ScienceError;
pub use units::{ConductivityUnit, ProbeMode};
