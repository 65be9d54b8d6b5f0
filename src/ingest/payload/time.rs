//! Reading times in payloads: RFC 3339 strings and Unix seconds.
use chrono::{DateTime, Utc};

use super::PayloadError;
use crate::ingest::outcome::RejectReason;

/// Latest representable reading time: 9999-12-31T23:59:59Z, Unix seconds.
const MAX_UNIX_S: f64 = 253_402_300_799.0;

/// A time from Unix seconds (fractions allowed). Zero and earlier are refused: a probe whose clock is
/// unset reports 1970.
pub fn from_unix_seconds(seconds: f64) -> Result<DateTime<Utc>, PayloadError> {
    if !seconds.is_finite() {
        return Err(PayloadError::new(
            RejectReason::BadTime,
            format!("time {seconds} is not finite"),
        ));
    }
    if seconds <= 0.0 {
        return Err(PayloadError::new(
            RejectReason::BadTime,
            format!("time {seconds} is at or before 1970-01-01 (probe clock not set?)"),
        ));
    }
    if seconds > MAX_UNIX_S {
        let hint = if seconds > 1.0e11 {
            " (milliseconds? halotank expects Unix seconds)"
        } else {
            ""
        };
        return Err(PayloadError::new(
            RejectReason::BadTime,
            format!("time {seconds} s is beyond the year 9999{hint}"),
        ));
    }
    // Rounded to whole microseconds: a decimal such as 1743573600.123 has no exact binary form (the f64 is
    // 1743573600.12299990...), and keeping its nanoseconds would put it in millisecond .122 when stored.
    // At present-day times an f64 resolves about 0.24 µs, so the nearest microsecond is the one written.
    let micros = (seconds * 1e6).round() as i64;
    DateTime::from_timestamp_micros(micros)
        .ok_or_else(|| PayloadError::new(RejectReason::BadTime, format!("time {seconds} is out of range")))
}

/// A time from an RFC 3339 date-time string (offsets converted to UTC).
pub fn from_rfc3339(text: &str) -> Result<DateTime<Utc>, PayloadError> {
    let time = DateTime::parse_from_rfc3339(text.trim())
        .map_err(|e| {
            PayloadError::new(
                RejectReason::BadTime,
                format!("`{text}` is not an RFC 3339 time: {e}"),
            )
        })?
        .with_timezone(&Utc);
    if time <= DateTime::UNIX_EPOCH {
        return Err(PayloadError::new(
            RejectReason::BadTime,
            format!("time `{text}` is at or before 1970-01-01 (probe clock not set?)"),
        ));
    }
    Ok(time)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn unix(text: &str) -> f64 {
        let t = from_rfc3339(text).unwrap();
        t.timestamp() as f64 + f64::from(t.timestamp_subsec_nanos()) * 1e-9
    }

    #[test]
    fn rfc_3339_section_5_8_examples() {
        // RFC 3339 §5.8 examples (recalled from the RFC, from memory). Unix seconds worked by hand from the civil dates:
        // 1985-04-12T23:20:50.52Z: 5580 days from 1970-01-01 to 1985-04-12 → 5580·86400 + 84050.52.
        assert!((unix("1985-04-12T23:20:50.52Z") - 482_196_050.52).abs() < 1e-6);
        // 1996-12-19T16:39:57-08:00 is 1996-12-20T00:39:57Z (the RFC says so).
        assert_eq!(
            from_rfc3339("1996-12-19T16:39:57-08:00").unwrap(),
            from_rfc3339("1996-12-20T00:39:57Z").unwrap()
        );
        // 1937-01-01T12:00:27.87+00:20 lies before 1970 (the RFC's example of a Netherlands time):
        // refused as a reading time.
        assert_eq!(
            from_rfc3339("1937-01-01T12:00:27.87+00:20").unwrap_err().reason,
            RejectReason::BadTime
        );
        // Leap second 1990-12-31T23:59:60Z and its -08:00 form denote the same instant.
        assert_eq!(
            from_rfc3339("1990-12-31T23:59:60Z").unwrap(),
            from_rfc3339("1990-12-31T15:59:60-08:00").unwrap()
        );
    }

    #[test]
    fn rfc_3339_grammar_is_enforced() {
        for bad in [
            "2025-04-02",
            "2025-04-02T06:00:00",
            "02/04/2025 06:00",
            "2025-13-01T00:00:00Z",
            "",
        ] {
            assert_eq!(
                from_rfc3339(bad).unwrap_err().reason,
                RejectReason::BadTime,
                "{bad}"
            );
        }
        // RFC 3339 §5.6 allows a lower-case `t` and `z`.
        assert!(from_rfc3339("2025-04-02t06:00:00z").is_ok());
    }

    #[test]
    fn unix_seconds_with_milliseconds_keep_their_millisecond() {
        // Every millisecond of a present-day second, written as decimal Unix seconds, stays in that
        // millisecond (the stored resolution); 1 ms apart never collapses into one.
        for ms in 0..1000 {
            let text = format!("1743573600.{ms:03}");
            let t = from_unix_seconds(text.parse().unwrap()).unwrap();
            assert_eq!(t.timestamp(), 1_743_573_600, "{text}");
            assert_eq!(t.timestamp_subsec_millis(), ms, "{text}");
        }
    }

    #[test]
    fn unix_seconds_must_be_positive_finite_and_in_range() {
        let t = from_unix_seconds(1_743_573_600.25).unwrap();
        assert_eq!(t.timestamp(), 1_743_573_600);
        assert_eq!(t.timestamp_subsec_millis(), 250);
        for bad in [0.0, -5.0, f64::NAN, f64::INFINITY, 1.743_573_600e12] {
            assert_eq!(
                from_unix_seconds(bad).unwrap_err().reason,
                RejectReason::BadTime,
                "{bad}"
            );
        }
        assert!(from_unix_seconds(1.743_573_600e12)
            .unwrap_err()
            .detail
            .contains("milliseconds"));
        assert_eq!(
            from_rfc3339("1970-01-01T00:00:00Z").unwrap_err().reason,
            RejectReason::BadTime
        );
    }
}
