//! Near-freezing rule: water within a margin of its freezing point (UNESCO 1983, Millero).
use crate::alerts::detector::Level;
use crate::alerts::observation::Observation;
use crate::seawater::freezing_point::freezing_point_unesco1983;

/// Raise when `temperature - freezing point < margin`; clear at `>= margin + hysteresis`. The freezing
/// point is UNESCO 1983 (Millero 1978) in °C ITS-90 from SP and sea pressure; Unknown if it cannot be computed.
pub fn level(
    practical_salinity: f64,
    pressure_dbar: f64,
    temperature_c: f64,
    margin_c: f64,
    hysteresis_c: f64,
) -> (Level, Observation) {
    let Ok(freezing_point_c) = freezing_point_unesco1983(practical_salinity, pressure_dbar) else {
        return (Level::Unknown, Observation::None);
    };
    let above = temperature_c - freezing_point_c;
    let level = if above < margin_c {
        Level::Raise
    } else if above >= margin_c + hysteresis_c {
        Level::Clear
    } else {
        Level::Hold
    };
    let observation = Observation::Freezing {
        temperature_c,
        freezing_point_c,
        margin_c,
        practical_salinity,
        pressure_dbar,
    };
    (level, observation)
}
