//! The demo's live per-tank table, rendered as plain text (no colour, no cursor control), with a line
//! of counts and the caution line.
//!
//! Pure: rows and counts in, a string out. Each row's state is spelled out in words (`ok`, `STALE`,
//! `waiting`), so nothing depends on colour.
use chrono::{DateTime, TimeDelta, Utc};

/// One tank's newest reading as the table shows it.
#[derive(Debug, Clone, PartialEq)]
pub struct TankRow {
    pub id: String,
    pub name: String,
    /// Practical salinity (PSS-78) of the newest reading.
    pub practical_salinity: Option<f64>,
    pub temperature_c: Option<f64>,
    /// In-situ conductivity, mS/cm.
    pub conductivity_ms_cm: Option<f64>,
    pub osmolality_mosm_kg: Option<f64>,
    /// How old the newest reading is; `None` when the tank has none yet.
    pub age: Option<TimeDelta>,
    /// The tank's expected time between readings, seconds (a reading older than three of these is stale).
    pub expected_interval_s: u64,
}

/// Counts shown under the table.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct TableCounts {
    /// Readings in the database; `None` when not known.
    pub stored: Option<u64>,
    /// Refused messages by reason code, in display order; `None` when not known.
    pub rejected: Option<Vec<(String, u64)>>,
    /// Messages the simulated probes published, and how many of those were deliberately broken.
    pub published: u64,
    pub published_broken: u64,
}

/// What the heading line says.
#[derive(Debug, Clone, PartialEq)]
pub struct TableHeading {
    pub site: String,
    /// The simulated clock.
    pub simulated_time: DateTime<Utc>,
    /// Simulated seconds per real second.
    pub speed: f64,
}

/// The caution printed under every table.
pub const CAUTION: &str =
    "Simulated data for a demonstration only. halotank records and reports; it does not \
replace a tank's own life-support alarm.";

/// A reading stamped at `reading_time` seen at `now`: its age, never negative.
pub fn reading_age(reading_time: DateTime<Utc>, now: DateTime<Utc>) -> TimeDelta {
    (now - reading_time).max(TimeDelta::zero())
}

/// An age in its two largest units: `45s`, `3m05s`, `2h01m`, `3d04h`.
pub fn format_age(age: TimeDelta) -> String {
    let s = age.num_seconds().max(0);
    match s {
        0..=59 => format!("{s}s"),
        60..=3599 => format!("{}m{:02}s", s / 60, s % 60),
        3600..=86_399 => format!("{}h{:02}m", s / 3600, (s % 3600) / 60),
        _ => format!("{}d{:02}h", s / 86_400, (s % 86_400) / 3600),
    }
}

/// The state word of a row.
pub fn row_state(row: &TankRow) -> &'static str {
    match row.age {
        None => "waiting",
        Some(age) if age.num_seconds() > 3 * row.expected_interval_s as i64 => "STALE",
        Some(_) => "ok",
    }
}

fn cell(value: Option<f64>, decimals: usize) -> String {
    match value {
        Some(v) if v.is_finite() => format!("{v:.decimals$}"),
        _ => "-".to_string(),
    }
}

/// `text` cut to at most `width` characters (with `~` marking a cut).
fn fit(text: &str, width: usize) -> String {
    if text.chars().count() <= width {
        text.to_string()
    } else {
        let mut cut: String = text.chars().take(width.saturating_sub(1)).collect();
        cut.push('~');
        cut
    }
}

/// Widest name column; longer names are cut.
const MAX_NAME_WIDTH: usize = 40;

/// The whole table: heading, one line per tank, the counts line and the caution line.
pub fn render_table(heading: &TableHeading, rows: &[TankRow], counts: &TableCounts) -> String {
    let id_width = rows
        .iter()
        .map(|r| r.id.chars().count())
        .max()
        .unwrap_or(4)
        .max(4);
    let name_width = rows
        .iter()
        .map(|r| r.name.chars().count())
        .max()
        .unwrap_or(4)
        .clamp(4, MAX_NAME_WIDTH);
    let mut out = format!(
        "{}  simulated time {}  ({}x)\n",
        heading.site,
        heading.simulated_time.format("%Y-%m-%d %H:%M:%S UTC"),
        heading.speed
    );
    out.push_str(&format!(
        "{:<id_width$}  {:<name_width$}  {:>7}  {:>6}  {:>7}  {:>7}  {:>6}  {}\n",
        "TANK", "NAME", "SP", "TEMP C", "mS/cm", "mOsm/kg", "AGE", "STATE"
    ));
    for row in rows {
        out.push_str(&format!(
            "{:<id_width$}  {:<name_width$}  {:>7}  {:>6}  {:>7}  {:>7}  {:>6}  {}\n",
            fit(&row.id, id_width),
            fit(&row.name, name_width),
            cell(row.practical_salinity, 2),
            cell(row.temperature_c, 2),
            cell(row.conductivity_ms_cm, 3),
            cell(row.osmolality_mosm_kg, 0),
            row.age.map_or_else(|| "-".to_string(), format_age),
            row_state(row),
        ));
    }
    let stored = counts
        .stored
        .map_or_else(|| "stored: n/a".to_string(), |n| format!("stored: {n} readings"));
    let rejected = match &counts.rejected {
        None => "rejected: n/a".to_string(),
        Some(reasons) => {
            let total: u64 = reasons.iter().map(|(_, n)| n).sum();
            if reasons.is_empty() {
                "rejected: 0".to_string()
            } else {
                let parts: Vec<String> = reasons.iter().map(|(r, n)| format!("{r} {n}")).collect();
                format!("rejected: {total} ({})", parts.join(", "))
            }
        }
    };
    out.push_str(&format!(
        "{stored} | {rejected} | probes sent: {} ({} deliberately broken)\n",
        counts.published, counts.published_broken
    ));
    out.push_str(CAUTION);
    out.push('\n');
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn t(s: &str) -> DateTime<Utc> {
        DateTime::parse_from_rfc3339(s).unwrap().with_timezone(&Utc)
    }

    fn row(id: &str, name: &str, sp: Option<f64>, age_s: Option<i64>) -> TankRow {
        TankRow {
            id: id.into(),
            name: name.into(),
            practical_salinity: sp,
            temperature_c: sp.map(|_| 9.5),
            conductivity_ms_cm: sp.map(|_| 15.234_56),
            osmolality_mosm_kg: None,
            age: age_s.map(TimeDelta::seconds),
            expected_interval_s: 60,
        }
    }

    #[test]
    fn ages_are_short_and_never_negative() {
        assert_eq!(format_age(TimeDelta::seconds(45)), "45s");
        assert_eq!(format_age(TimeDelta::seconds(185)), "3m05s");
        assert_eq!(format_age(TimeDelta::seconds(7260)), "2h01m");
        assert_eq!(
            format_age(TimeDelta::seconds(3 * 86_400 + 4 * 3600 + 59)),
            "3d04h"
        );
        let now = t("2025-04-02T06:00:00Z");
        assert_eq!(reading_age(t("2025-04-02T06:00:05Z"), now), TimeDelta::zero());
        assert_eq!(
            reading_age(t("2025-04-02T05:59:00Z"), now),
            TimeDelta::seconds(60)
        );
    }

    #[test]
    fn renders_rows_states_counts_and_the_caution() {
        let heading = TableHeading {
            site: "Brannock Sound Hatchery".into(),
            simulated_time: t("2025-04-02T05:40:00Z"),
            speed: 60.0,
        };
        let rows = [
            row("smolt-t1", "Smolt transfer tank T1", Some(18.456), Some(20)),
            row("sea-hold-4", "Sea-water holding tank H4", Some(34.2), Some(181)),
            row(
                "parr-a",
                "A very long tank name that does not fit in its column",
                None,
                None,
            ),
        ];
        let counts = TableCounts {
            stored: Some(1234),
            rejected: Some(vec![("malformed_json".into(), 4), ("not_utf8".into(), 2)]),
            published: 1300,
            published_broken: 6,
        };
        let text = render_table(&heading, &rows, &counts);
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines.len(), 2 + rows.len() + 2, "{text}");
        assert_eq!(
            lines[0],
            "Brannock Sound Hatchery  simulated time 2025-04-02 05:40:00 UTC  (60x)"
        );
        let cols = |l: &str| l.split_whitespace().map(str::to_string).collect::<Vec<_>>();
        assert_eq!(
            cols(lines[1]),
            ["TANK", "NAME", "SP", "TEMP", "C", "mS/cm", "mOsm/kg", "AGE", "STATE"]
        );
        assert!(
            lines[2].starts_with("smolt-t1    Smolt transfer tank T1 "),
            "{}",
            lines[2]
        );
        assert!(
            lines[2].ends_with("  18.46    9.50   15.235        -     20s  ok"),
            "{}",
            lines[2]
        );
        assert!(lines[3].ends_with("  3m01s  STALE"), "{}", lines[3]);
        assert!(
            lines[4].contains("A very long tank name that does not fit~"),
            "{}",
            lines[4]
        );
        assert!(lines[4].ends_with("-  waiting"), "{}", lines[4]);
        // Columns line up: every row is as wide as the header up to the state word.
        let state_col = lines[1].find("STATE").unwrap();
        for l in &lines[2..5] {
            assert_eq!(
                l.chars().count() - l.split_whitespace().last().unwrap().len(),
                state_col,
                "{l}"
            );
        }
        assert_eq!(
            lines[5],
            "stored: 1234 readings | rejected: 6 (malformed_json 4, not_utf8 2) | probes sent: 1300 (6 deliberately broken)"
        );
        assert_eq!(lines[6], CAUTION);
        assert!(text.is_ascii(), "plain ASCII for any terminal");
        assert!(!text.contains('\x1b'));
    }

    #[test]
    fn unknown_counts_say_so() {
        let heading = TableHeading {
            site: "S".into(),
            simulated_time: t("2025-04-02T05:40:00Z"),
            speed: 3600.0,
        };
        let text = render_table(&heading, &[], &TableCounts::default());
        assert!(
            text.contains("stored: n/a | rejected: n/a | probes sent: 0 (0 deliberately broken)"),
            "{text}"
        );
        assert!(text.contains("(3600x)"));
    }
}
