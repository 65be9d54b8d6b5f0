//! How Rust values map to SQLite columns: times as Unix milliseconds, the salinity range as a stable code.
use chrono::{DateTime, Utc};

use super::error::StorageError;
use crate::seawater::practical_salinity::SalinityRange;
use crate::species::{Tonicity, WaterMovement};

/// Milliseconds in one hour.
pub const HOUR_MS: i64 = 3_600_000;
/// Milliseconds in one day.
pub const DAY_MS: i64 = 24 * HOUR_MS;

/// A time as Unix milliseconds (sub-millisecond parts dropped).
pub fn time_to_ms(time: DateTime<Utc>) -> i64 {
    time.timestamp_millis()
}

/// Unix milliseconds back to a time; out-of-range values are a corrupt row.
pub fn ms_to_time(ms: i64) -> Result<DateTime<Utc>, StorageError> {
    DateTime::<Utc>::from_timestamp_millis(ms).ok_or_else(|| StorageError::CorruptRow {
        what: format!("time {ms} ms is outside the representable range"),
    })
}

/// Start of the UTC hour holding `ms` (floor, also for times before 1970).
pub fn floor_hour_ms(ms: i64) -> i64 {
    ms - ms.rem_euclid(HOUR_MS)
}

/// The stored code of a salinity range.
pub fn salinity_range_code(range: SalinityRange) -> &'static str {
    match range {
        SalinityRange::HillExtension => "hill_extension",
        SalinityRange::Pss78 => "pss78",
        SalinityRange::AboveRange => "above_range",
    }
}

/// Parses a stored salinity range code.
pub fn salinity_range_from_code(code: &str) -> Result<SalinityRange, StorageError> {
    match code {
        "hill_extension" => Ok(SalinityRange::HillExtension),
        "pss78" => Ok(SalinityRange::Pss78),
        "above_range" => Ok(SalinityRange::AboveRange),
        other => Err(StorageError::CorruptRow {
            what: format!("unknown salinity range code `{other}`"),
        }),
    }
}

/// The stored code of a tonicity (its JSON spelling).
pub fn tonicity_code(tonicity: Tonicity) -> &'static str {
    tonicity.as_str()
}

/// Parses a stored tonicity code.
pub fn tonicity_from_code(code: &str) -> Result<Tonicity, StorageError> {
    [Tonicity::Hyperosmotic, Tonicity::Isosmotic, Tonicity::Hypoosmotic]
        .into_iter()
        .find(|t| t.as_str() == code)
        .ok_or_else(|| StorageError::CorruptRow {
            what: format!("unknown tonicity code `{code}`"),
        })
}

const WATER_MOVEMENTS: [(WaterMovement, &str); 4] = [
    (WaterMovement::IntoAnimal, "into_animal"),
    (WaterMovement::OutOfAnimal, "out_of_animal"),
    (WaterMovement::LittleNetMovement, "little_net_movement"),
    (WaterMovement::FollowsWater, "follows_water"),
];

/// The stored code of a water movement (its JSON spelling).
pub fn water_movement_code(movement: WaterMovement) -> &'static str {
    WATER_MOVEMENTS
        .iter()
        .find(|(m, _)| *m == movement)
        .map_or("follows_water", |(_, code)| code)
}

/// Parses a stored water-movement code.
pub fn water_movement_from_code(code: &str) -> Result<WaterMovement, StorageError> {
    WATER_MOVEMENTS
        .iter()
        .find(|(_, c)| *c == code)
        .map(|(m, _)| *m)
        .ok_or_else(|| StorageError::CorruptRow {
            what: format!("unknown water movement code `{code}`"),
        })
}

/// A stored count (SQLite INTEGER) as u64; negative values are a corrupt row.
pub fn count_from_sql(value: i64) -> Result<u64, StorageError> {
    u64::try_from(value).map_err(|_| StorageError::CorruptRow {
        what: format!("negative count {value}"),
    })
}

/// A u64 counter as SQLite INTEGER, saturating at i64::MAX.
pub fn count_to_sql(value: u64) -> i64 {
    i64::try_from(value).unwrap_or(i64::MAX)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn floor_hour_handles_both_sides_of_the_epoch() {
        assert_eq!(floor_hour_ms(0), 0);
        assert_eq!(floor_hour_ms(HOUR_MS - 1), 0);
        assert_eq!(floor_hour_ms(HOUR_MS), HOUR_MS);
        assert_eq!(floor_hour_ms(-1), -HOUR_MS);
    }

    #[test]
    fn salinity_range_codes_round_trip() {
        for range in [
            SalinityRange::HillExtension,
            SalinityRange::Pss78,
            SalinityRange::AboveRange,
        ] {
            assert_eq!(
                salinity_range_from_code(salinity_range_code(range)).unwrap(),
                range
            );
        }
        assert!(salinity_range_from_code("brine").is_err());
    }

    #[test]
    fn tonicity_and_movement_codes_round_trip_and_match_json() {
        for t in [Tonicity::Hyperosmotic, Tonicity::Isosmotic, Tonicity::Hypoosmotic] {
            assert_eq!(tonicity_from_code(tonicity_code(t)).unwrap(), t);
            assert_eq!(serde_json::to_value(t).unwrap(), tonicity_code(t));
        }
        for (m, _) in WATER_MOVEMENTS {
            assert_eq!(water_movement_from_code(water_movement_code(m)).unwrap(), m);
            assert_eq!(serde_json::to_value(m).unwrap(), water_movement_code(m));
        }
        assert!(tonicity_from_code("brackish").is_err());
        assert!(water_movement_from_code("sideways").is_err());
    }

    #[test]
    fn counts_saturate_and_refuse_negatives() {
        assert_eq!(count_to_sql(u64::MAX), i64::MAX);
        assert!(count_from_sql(-1).is_err());
        assert_eq!(count_from_sql(7).unwrap(), 7);
    }
}
