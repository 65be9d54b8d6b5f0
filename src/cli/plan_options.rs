//! Reading the `halotank plan` option values: rates (`2/h`, `10%/h`, `20mOsm/h`), durations (`2h`, `90m`,
//! `1.5h`), ranges (`8-30`) and holds (`12@12h`).
use thiserror::Error;

/// A rate as written on the command line.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum RateArg {
    /// Practical Salinity per hour (`2/h`).
    SalinityPerHour(f64),
    /// Percent of the current salinity per hour (`10%/h`).
    PercentPerHour(f64),
    /// mOsm/kg per hour (`20mOsm/h`).
    OsmolalityPerHour(f64),
}

/// Why an option value could not be read.
#[derive(Debug, Clone, PartialEq, Eq, Error)]
#[error("`{text}`: {why}")]
pub struct OptionError {
    pub text: String,
    pub why: &'static str,
}

fn error(text: &str, why: &'static str) -> OptionError {
    OptionError {
        text: text.to_owned(),
        why,
    }
}

/// A finite number above zero.
fn positive_number(text: &str, number: &str) -> Result<f64, OptionError> {
    match number.trim().parse::<f64>() {
        Ok(v) if v.is_finite() && v > 0.0 => Ok(v),
        _ => Err(error(text, "needs a number above 0")),
    }
}

/// Reads `2/h` (SP/h), `10%/h` (%/h) or `20mOsm/h` (mOsm/kg per hour); `/d` divides by 24.
pub fn parse_rate(text: &str) -> Result<RateArg, OptionError> {
    let t = text.trim();
    let (body, hours) = if let Some(b) = t.strip_suffix("/h") {
        (b, 1.0)
    } else if let Some(b) = t.strip_suffix("/d") {
        (b, 24.0)
    } else {
        return Err(error(text, "a rate ends in /h or /d: 2/h, 10%/h, 20mOsm/h"));
    };
    if let Some(n) = body.strip_suffix('%') {
        Ok(RateArg::PercentPerHour(positive_number(text, n)? / hours))
    } else if let Some(n) = body.strip_suffix("mOsm") {
        Ok(RateArg::OsmolalityPerHour(positive_number(text, n)? / hours))
    } else {
        Ok(RateArg::SalinityPerHour(positive_number(text, body)? / hours))
    }
}

/// Reads a duration in hours: `2h`, `90m`, `1.5h`, `1d` or a bare number of hours.
pub fn parse_hours(text: &str) -> Result<f64, OptionError> {
    let t = text.trim();
    let (number, factor) = if let Some(n) = t.strip_suffix('h') {
        (n, 1.0)
    } else if let Some(n) = t.strip_suffix('m') {
        (n, 1.0 / 60.0)
    } else if let Some(n) = t.strip_suffix('d') {
        (n, 24.0)
    } else {
        (t, 1.0)
    };
    let hours = positive_number(text, number)? * factor;
    if hours > 24.0 * 366.0 * 10.0 {
        return Err(error(text, "is longer than ten years"));
    }
    Ok(hours)
}

/// Reads a salinity range `low-high` (`8-30`, `0-35`).
pub fn parse_range(text: &str) -> Result<(f64, f64), OptionError> {
    let (a, b) = text
        .split_once('-')
        .ok_or_else(|| error(text, "a range is written low-high, e.g. 8-30"))?;
    let parse = |s: &str| match s.trim().parse::<f64>() {
        Ok(v) if v.is_finite() && v >= 0.0 => Ok(v),
        _ => Err(error(text, "needs two salinities not below 0")),
    };
    let (low, high) = (parse(a)?, parse(b)?);
    if low > high {
        return Err(error(text, "the low end is above the high end"));
    }
    Ok((low, high))
}

/// Reads a hold `SP@duration` (`12@12h`).
pub fn parse_hold(text: &str) -> Result<(f64, f64), OptionError> {
    let (s, d) = text
        .split_once('@')
        .ok_or_else(|| error(text, "a hold is written SP@duration, e.g. 12@12h"))?;
    let sp = match s.trim().parse::<f64>() {
        Ok(v) if v.is_finite() && v >= 0.0 => v,
        _ => return Err(error(text, "needs a salinity not below 0 before @")),
    };
    Ok((sp, parse_hours(d)?))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rates() {
        assert_eq!(parse_rate("2/h"), Ok(RateArg::SalinityPerHour(2.0)));
        assert_eq!(parse_rate("10%/h"), Ok(RateArg::PercentPerHour(10.0)));
        assert_eq!(parse_rate("24/d"), Ok(RateArg::SalinityPerHour(1.0)));
        assert_eq!(parse_rate("20mOsm/h"), Ok(RateArg::OsmolalityPerHour(20.0)));
        for bad in ["2", "-1/h", "x%/h", "0/h", "NaN/h", ""] {
            assert!(parse_rate(bad).is_err(), "{bad}");
        }
    }

    #[test]
    fn durations_ranges_holds() {
        assert_eq!(parse_hours("2h"), Ok(2.0));
        assert_eq!(parse_hours("90m"), Ok(1.5));
        assert_eq!(parse_hours("1d"), Ok(24.0));
        assert_eq!(parse_hours("0.5"), Ok(0.5));
        assert!(parse_hours("0h").is_err() && parse_hours("1e9h").is_err() && parse_hours("2y").is_err());
        assert_eq!(parse_range("8-30"), Ok((8.0, 30.0)));
        assert!(parse_range("30-8").is_err() && parse_range("8").is_err());
        assert_eq!(parse_hold("12@12h"), Ok((12.0, 12.0)));
        assert!(parse_hold("12").is_err() && parse_hold("x@1h").is_err());
    }
}
