//! Bare-number payloads on per-quantity topics: ASCII decimal text such as `52.7`, `-1.5` or `4.29e1`.
//!
//! Surrounding whitespace is trimmed. The grammar is that of a JSON number with an optional leading `+`
//! and optional leading or trailing digits around the point (`.5`, `5.`). `NaN` and `inf`/`Infinity`
//! (any case, any sign) are `non_finite`; anything else (`12,5`, `0x10`, empty) is `not_numeric`.
//! A bare number carries no time: the reading time is the time the message was received.
use super::{finite, names_non_finite, PayloadError};
use crate::ingest::outcome::RejectReason;

/// Parses one decimal number.
pub fn parse(text: &str) -> Result<f64, PayloadError> {
    let t = text.trim();
    if is_decimal(t) {
        let value: f64 = t
            .parse()
            .map_err(|_| PayloadError::new(RejectReason::NotNumeric, format!("`{t}` is not a number")))?;
        return finite(value, &format!("`{t}`"));
    }
    if names_non_finite(t) {
        return Err(PayloadError::new(
            RejectReason::NonFinite,
            format!("`{t}` is not a finite number"),
        ));
    }
    let shown: String = t.chars().take(40).collect();
    let hint = if t.contains(',') {
        " (use `.` as the decimal point)"
    } else {
        ""
    };
    Err(PayloadError::new(
        RejectReason::NotNumeric,
        format!("`{shown}` is not a decimal number{hint}"),
    ))
}

/// `[+-]? (digits [. digits?] | . digits) ([eE] [+-]? digits)?`
fn is_decimal(t: &str) -> bool {
    let b = t.as_bytes();
    let mut i = 0;
    if i < b.len() && (b[i] == b'+' || b[i] == b'-') {
        i += 1;
    }
    let int_start = i;
    while i < b.len() && b[i].is_ascii_digit() {
        i += 1;
    }
    let mut digits = i - int_start;
    if i < b.len() && b[i] == b'.' {
        i += 1;
        let frac_start = i;
        while i < b.len() && b[i].is_ascii_digit() {
            i += 1;
        }
        digits += i - frac_start;
    }
    if digits == 0 {
        return false;
    }
    if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
        i += 1;
        if i < b.len() && (b[i] == b'+' || b[i] == b'-') {
            i += 1;
        }
        let exp_start = i;
        while i < b.len() && b[i].is_ascii_digit() {
            i += 1;
        }
        if i == exp_start {
            return false;
        }
    }
    i == b.len()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn decimal_numbers_parse_with_whitespace_trimmed() {
        assert_eq!(parse("52.7").unwrap(), 52.7);
        assert_eq!(parse("  312.5\r\n").unwrap(), 312.5);
        assert_eq!(parse("-1.5").unwrap(), -1.5);
        assert_eq!(parse("+8").unwrap(), 8.0);
        assert_eq!(parse(".5").unwrap(), 0.5);
        assert_eq!(parse("5.").unwrap(), 5.0);
        assert_eq!(parse("4.29e1").unwrap(), 42.9);
        assert_eq!(parse("4.29E-1").unwrap(), 0.429);
    }

    #[test]
    fn non_numbers_and_non_finite_values_are_refused() {
        for t in [
            "NaN",
            "nan",
            "inf",
            "-inf",
            "Infinity",
            "+Infinity",
            "1e999",
            "-1e400",
        ] {
            assert_eq!(parse(t).unwrap_err().reason, RejectReason::NonFinite, "{t}");
        }
        for t in [
            "",
            "   ",
            "12,5",
            "0x10",
            "1e",
            "e5",
            ".",
            "-",
            "1.2.3",
            "52.7 mS/cm",
            "١٢",
        ] {
            assert_eq!(parse(t).unwrap_err().reason, RejectReason::NotNumeric, "{t}");
        }
        assert!(parse("12,5").unwrap_err().detail.contains("decimal point"));
    }
}
