//! Query parameters and path ids, checked with messages that say what to fix: unknown names, times that
//! are not RFC 3339, numbers out of range. Every failure is a 400.
use std::collections::HashMap;

use axum::extract::rejection::{PathRejection, QueryRejection};
use axum::extract::{Path, Query};
use chrono::{DateTime, SecondsFormat, Utc};

use super::error::{ApiError, ApiResult};

/// A request's query parameters, refused if any name is not in `known`.
#[derive(Debug, Clone)]
pub struct Params(HashMap<String, String>);

impl Params {
    pub fn new(
        query: Result<Query<HashMap<String, String>>, QueryRejection>,
        known: &[&str],
    ) -> ApiResult<Self> {
        let Query(map) =
            query.map_err(|e| ApiError::bad_request(format!("bad query string: {}", e.body_text())))?;
        let mut unknown: Vec<&str> = map
            .keys()
            .map(String::as_str)
            .filter(|k| !known.contains(k))
            .collect();
        if !unknown.is_empty() {
            unknown.sort_unstable();
            return Err(ApiError::bad_request(format!(
                "unknown query parameter{} {}; this route takes {}",
                if unknown.len() == 1 { "" } else { "s" },
                unknown
                    .iter()
                    .map(|k| format!("`{k}`"))
                    .collect::<Vec<_>>()
                    .join(", "),
                if known.is_empty() {
                    "none".to_string()
                } else {
                    known.join(", ")
                }
            )));
        }
        Ok(Self(map))
    }

    /// A text value, `None` when absent; an empty value is refused.
    pub fn text(&self, name: &str) -> ApiResult<Option<&str>> {
        match self.0.get(name).map(|v| v.trim()) {
            None => Ok(None),
            Some("") => Err(ApiError::bad_request(format!(
                "`{name}` is empty; give a value or leave it out"
            ))),
            Some(v) => Ok(Some(v)),
        }
    }

    /// One of `choices` (default `default`).
    pub fn choice(
        &self,
        name: &str,
        choices: &[&'static str],
        default: &'static str,
    ) -> ApiResult<&'static str> {
        match self.text(name)? {
            None => Ok(default),
            Some(v) => choices.iter().copied().find(|c| *c == v).ok_or_else(|| {
                ApiError::bad_request(format!("`{name}={v}` is not one of {}", choices.join(", ")))
            }),
        }
    }

    /// An RFC 3339 time.
    pub fn time(&self, name: &str) -> ApiResult<Option<DateTime<Utc>>> {
        self.text(name)?.map(|v| parse_time(name, v)).transpose()
    }

    /// An integer within `min..=max` (default `default`).
    pub fn integer(&self, name: &str, min: u64, max: u64, default: u64) -> ApiResult<u64> {
        let Some(v) = self.text(name)? else {
            return Ok(default);
        };
        match v.parse::<u64>() {
            Ok(n) if (min..=max).contains(&n) => Ok(n),
            _ => Err(ApiError::bad_request(format!(
                "`{name}={v}` must be a whole number from {min} to {max}"
            ))),
        }
    }
}

/// Parses an RFC 3339 time (`2031-05-14T06:00:00Z`, any offset) to UTC.
pub fn parse_time(name: &str, text: &str) -> ApiResult<DateTime<Utc>> {
    DateTime::parse_from_rfc3339(text.trim())
        .map(|t| t.with_timezone(&Utc))
        .map_err(|e| {
            ApiError::bad_request(format!(
                "`{name}={text}` is not an RFC 3339 time such as 2031-05-14T06:00:00Z ({e})"
            ))
        })
}

/// A time as the API writes it: RFC 3339 UTC with milliseconds.
pub fn stamp(time: DateTime<Utc>) -> String {
    time.to_rfc3339_opts(SecondsFormat::Millis, true)
}

/// The text of a path segment.
pub fn path_text(path: Result<Path<String>, PathRejection>) -> ApiResult<String> {
    path.map(|Path(p)| p)
        .map_err(|e| ApiError::bad_request(format!("bad path: {}", e.body_text())))
}

/// A numeric id in the path (`what` names it in the message).
pub fn path_id(path: Result<Path<String>, PathRejection>, what: &str) -> ApiResult<i64> {
    let text = path_text(path)?;
    match text.parse::<i64>() {
        Ok(id) if id > 0 => Ok(id),
        _ => Err(ApiError::bad_request(format!(
            "{what} id `{text}` must be a whole number above 0"
        ))),
    }
}
