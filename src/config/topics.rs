//! MQTT topic names and filters: validity (MQTT 3.1.1 §4.7), matching, coverage, and `{id}` templates.

/// Longest topic or filter in bytes (MQTT 3.1.1 §1.5.3: UTF-8 strings are at most 65 535 bytes).
pub const MAX_TOPIC_BYTES: usize = 65_535;

/// Checks a concrete topic name (no wildcards, not empty, no NUL).
pub fn check_topic_name(topic: &str) -> Result<(), String> {
    check_common(topic)?;
    if topic.contains(['+', '#']) {
        return Err(format!(
            "topic `{topic}` contains a wildcard (`+` or `#`); give a concrete topic"
        ));
    }
    Ok(())
}

/// Checks a topic filter: `+` and `#` only as whole levels, `#` only last (MQTT 3.1.1 §4.7.1).
pub fn check_topic_filter(filter: &str) -> Result<(), String> {
    check_common(filter)?;
    let levels: Vec<&str> = filter.split('/').collect();
    for (i, level) in levels.iter().enumerate() {
        if level.contains('#') && (*level != "#" || i + 1 != levels.len()) {
            return Err(format!(
                "filter `{filter}`: `#` must be a whole level and the last one"
            ));
        }
        if level.contains('+') && *level != "+" {
            return Err(format!("filter `{filter}`: `+` must be a whole level"));
        }
    }
    Ok(())
}

fn check_common(text: &str) -> Result<(), String> {
    if text.is_empty() {
        return Err("topic is empty".to_string());
    }
    if text.len() > MAX_TOPIC_BYTES {
        return Err(format!("topic is longer than {MAX_TOPIC_BYTES} bytes"));
    }
    if text.contains('\0') {
        return Err("topic contains a NUL character".to_string());
    }
    Ok(())
}

fn is_wildcard(level: &str) -> bool {
    level == "+" || level == "#"
}

/// Wildcards in the first level do not match topics starting with `$` (MQTT 3.1.1 §4.7.2).
fn dollar_blocked(filter_first: &str, other_first: &str) -> bool {
    is_wildcard(filter_first) && other_first.starts_with('$')
}

/// True when `filter` matches the concrete `topic` (MQTT 3.1.1 §4.7).
pub fn filter_matches(filter: &str, topic: &str) -> bool {
    let f: Vec<&str> = filter.split('/').collect();
    let t: Vec<&str> = topic.split('/').collect();
    if dollar_blocked(f[0], t[0]) {
        return false;
    }
    let mut i = 0;
    while i < f.len() {
        if f[i] == "#" {
            return true;
        }
        if i >= t.len() {
            return false;
        }
        if f[i] != "+" && f[i] != t[i] {
            return false;
        }
        i += 1;
    }
    // `a/#` also matches `a` (MQTT 3.1.1 §4.7.1.2); handled above when `#` is reached with `t` exhausted.
    i == t.len()
}

/// True when every topic matched by `specific` is also matched by `general` (both filters or topics).
pub fn filter_covers(general: &str, specific: &str) -> bool {
    let g: Vec<&str> = general.split('/').collect();
    let s: Vec<&str> = specific.split('/').collect();
    if dollar_blocked(g[0], s[0]) {
        return false;
    }
    for (i, general_level) in g.iter().enumerate() {
        if *general_level == "#" {
            return true;
        }
        let Some(level) = s.get(i) else {
            return false;
        };
        match (*general_level, *level) {
            (_, "#") => return false,
            ("+", _) => {}
            (a, b) if a == b => {}
            _ => return false,
        }
    }
    g.len() == s.len()
}

/// True when some topic is matched by both filters.
pub fn filters_overlap(a: &str, b: &str) -> bool {
    let x: Vec<&str> = a.split('/').collect();
    let y: Vec<&str> = b.split('/').collect();
    if dollar_blocked(x[0], y[0]) || dollar_blocked(y[0], x[0]) {
        return false;
    }
    let mut i = 0;
    loop {
        match (x.get(i), y.get(i)) {
            (Some(&"#"), _) | (_, Some(&"#")) => return true,
            (None, None) => return true,
            (Some(_), None) | (None, Some(_)) => return false,
            (Some(p), Some(q)) => {
                if !(*p == "+" || *q == "+" || p == q) {
                    return false;
                }
            }
        }
        i += 1;
    }
}

/// Placeholder replaced by the tank id in topic templates.
pub const ID_PLACEHOLDER: &str = "{id}";

/// Replaces `{id}` in a topic template; any other `{` or `}` is refused.
pub fn expand_template(template: &str, id: &str) -> Result<String, String> {
    let rest = template.replace(ID_PLACEHOLDER, "");
    if rest.contains(['{', '}']) {
        return Err(format!(
            "topic `{template}` has an unknown placeholder; only `{ID_PLACEHOLDER}` is known"
        ));
    }
    Ok(template.replace(ID_PLACEHOLDER, id))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn filter_matching_follows_mqtt_3_1_1_section_4_7() {
        // Examples of MQTT 3.1.1 §4.7.1.2, §4.7.1.3 and §4.7.2 (recalled from the standard, from memory).
        assert!(filter_matches("sport/tennis/player1/#", "sport/tennis/player1"));
        assert!(filter_matches(
            "sport/tennis/player1/#",
            "sport/tennis/player1/ranking"
        ));
        assert!(filter_matches(
            "sport/tennis/player1/#",
            "sport/tennis/player1/score/wimbledon"
        ));
        assert!(filter_matches("sport/#", "sport"));
        assert!(filter_matches("sport/tennis/+", "sport/tennis/player1"));
        assert!(!filter_matches("sport/tennis/+", "sport/tennis/player1/ranking"));
        assert!(!filter_matches("sport/+", "sport"));
        assert!(filter_matches("sport/+", "sport/"));
        assert!(filter_matches("+/+", "/finance"));
        assert!(filter_matches("/+", "/finance"));
        assert!(!filter_matches("+", "/finance"));
        // Wildcards at the first level do not match `$` topics.
        assert!(!filter_matches("#", "$SYS/broker"));
        assert!(!filter_matches("+/monitor/Clients", "$SYS/monitor/Clients"));
        assert!(filter_matches("$SYS/#", "$SYS/monitor/Clients"));
        assert!(filter_matches("a/b", "a/b"));
        assert!(!filter_matches("a/b", "a/c"));
    }

    #[test]
    fn coverage_and_overlap() {
        assert!(filter_covers("brannock/#", "brannock/probes/parr-1/state"));
        assert!(filter_covers("brannock/#", "brannock/+/x"));
        assert!(filter_covers("brannock/#", "brannock"));
        assert!(filter_covers("a/+/c", "a/b/c"));
        assert!(!filter_covers("a/+/c", "a/#"));
        assert!(!filter_covers("a/+", "a/b/c"));
        assert!(!filter_covers("a/b", "a/+"));
        assert!(filter_covers("a/b", "a/b"));
        assert!(!filter_covers("#", "$SYS/x"));
        assert!(filters_overlap("a/+", "+/b"));
        assert!(filters_overlap("halotank/#", "+/brannock/x"));
        assert!(!filters_overlap("a/b", "a/c"));
        assert!(!filters_overlap("a/b", "a/b/c"));
        assert!(filters_overlap("a/b/#", "a/b"));
        assert!(!filters_overlap("#", "$SYS/#"));
    }

    #[test]
    fn names_filters_and_templates_are_checked() {
        assert!(check_topic_name("brannock/probes/parr-1").is_ok());
        assert!(check_topic_name("brannock/+/x").is_err());
        assert!(check_topic_name("").is_err());
        assert!(check_topic_filter("brannock/#").is_ok());
        assert!(check_topic_filter("brannock/+/state").is_ok());
        assert!(check_topic_filter("brannock/#/state").is_err());
        assert!(check_topic_filter("brannock/pro+").is_err());
        assert!(check_topic_filter("brannock#").is_err());
        assert_eq!(
            expand_template("b/{id}/state", "parr-1").unwrap(),
            "b/parr-1/state"
        );
        assert!(expand_template("b/{tank}/state", "parr-1").is_err());
    }
}
