//! Parsing the `--since`/`--until` time arguments: RFC 3339, or a span before `now` such as `90m`, `2h`, `7d`.
use chrono::{DateTime, Duration, Utc};
use thiserror::Error;

/// Help text describing the accepted forms (shared by the subcommands that take times).
pub const TIME_ARG_HELP: &str =
    "RFC 3339 time (2031-05-14T06:00:00Z, 2031-05-14T08:00:00+02:00) or a span before now: \
     an integer followed by s, m, h, d or w (90m, 2h, 7d); `now` is also accepted";

/// Why a time argument could not be read.
#[derive(Debug, Clone, PartialEq, Eq, Error)]
pub enum TimeArgError {
    #[error("`{text}` is neither an RFC 3339 time nor a span like 2h or 7d ({why})")]
    Unreadable { text: String, why: String },
    #[error("span `{text}` is too large")]
    TooLarge { text: String },
}

/// Reads a time argument; relative spans count back from `now`.
pub fn parse_time_arg(text: &str, now: DateTime<Utc>) -> Result<DateTime<Utc>, TimeArgError> {
    let trimmed = text.trim();
    if trimmed.eq_ignore_ascii_case("now") {
        return Ok(now);
    }
    if let Ok(time) = DateTime::parse_from_rfc3339(trimmed) {
        return Ok(time.with_timezone(&Utc));
    }
    let unreadable = |why: &str| TimeArgError::Unreadable {
        text: text.to_owned(),
        why: why.to_owned(),
    };
    let split = trimmed
        .find(|c: char| !c.is_ascii_digit())
        .ok_or_else(|| unreadable("no unit"))?;
    let (digits, unit) = trimmed.split_at(split);
    if digits.is_empty() {
        return Err(unreadable("no number"));
    }
    let amount: i64 = digits.parse().map_err(|_| TimeArgError::TooLarge {
        text: text.to_owned(),
    })?;
    let seconds_per_unit: i64 = match unit {
        "s" => 1,
        "m" => 60,
        "h" => 3_600,
        "d" => 86_400,
        "w" => 604_800,
        _ => return Err(unreadable("unit must be s, m, h, d or w")),
    };
    let too_large = || TimeArgError::TooLarge {
        text: text.to_owned(),
    };
    let seconds = amount.checked_mul(seconds_per_unit).ok_or_else(too_large)?;
    let span = Duration::try_seconds(seconds).ok_or_else(too_large)?;
    now.checked_sub_signed(span).ok_or_else(too_large)
}

#[cfg(test)]
mod tests {
    use super::*;
    use chrono::TimeZone;

    fn now() -> DateTime<Utc> {
        Utc.with_ymd_and_hms(2031, 5, 14, 12, 0, 0).unwrap()
    }

    #[test]
    fn relative_spans_count_back_from_now() {
        assert_eq!(
            parse_time_arg("2h", now()).unwrap(),
            Utc.with_ymd_and_hms(2031, 5, 14, 10, 0, 0).unwrap()
        );
        assert_eq!(
            parse_time_arg("7d", now()).unwrap(),
            Utc.with_ymd_and_hms(2031, 5, 7, 12, 0, 0).unwrap()
        );
        assert_eq!(
            parse_time_arg("90m", now()).unwrap(),
            Utc.with_ymd_and_hms(2031, 5, 14, 10, 30, 0).unwrap()
        );
        assert_eq!(
            parse_time_arg("1w", now()).unwrap(),
            Utc.with_ymd_and_hms(2031, 5, 7, 12, 0, 0).unwrap()
        );
        assert_eq!(
            parse_time_arg("30s", now()).unwrap(),
            Utc.with_ymd_and_hms(2031, 5, 14, 11, 59, 30).unwrap()
        );
        assert_eq!(parse_time_arg("now", now()).unwrap(), now());
    }

    #[test]
    fn rfc3339_with_offsets_is_converted_to_utc() {
        let t = parse_time_arg("2031-05-14T08:00:00+02:00", now()).unwrap();
        assert_eq!(t, Utc.with_ymd_and_hms(2031, 5, 14, 6, 0, 0).unwrap());
    }

    #[test]
    fn bad_forms_are_typed_errors() {
        for bad in ["", "h", "2", "2y", "-2h", "yesterday", "2031-05-14"] {
            assert!(parse_time_arg(bad, now()).is_err(), "{bad:?} should be refused");
        }
        assert!(matches!(
            parse_time_arg("99999999999999999999d", now()),
            Err(TimeArgError::TooLarge { .. })
        ));
        assert!(matches!(
            parse_time_arg("999999999999w", now()),
            Err(TimeArgError::TooLarge { .. })
        ));
    }
}
