//! Near-freezing rule: uses the UNESCO 1983 freezing point, checked against the published check value.
use super::*;
use crate::seawater::freezing_point::{freezing_point_unesco1983, freezing_point_unesco1983_t68};

#[test]
fn freezing_point_used_by_the_rule_matches_the_unesco_1983_check_value() {
    // UNESCO Tech. Pap. Mar. Sci. 44 (Fofonoff & Millard 1983), freezing point check value:
    // S = 40, p = 500 dbar gives tf = -2.588567 °C (IPTS-68); published to 6 decimals.
    let tf68 = freezing_point_unesco1983_t68(40.0, 500.0).unwrap();
    assert!((tf68 - -2.588_567).abs() <= 5e-7, "{tf68}");
    let tf90 = freezing_point_unesco1983(40.0, 500.0).unwrap();
    assert!((tf90 - tf68 / 1.00024).abs() <= 1e-12);

    let settings = only(&[AlertKind::NearFreezing], |s| {
        s.rules.get_mut(AlertKind::NearFreezing).min_duration_s = Some(0);
    });
    // Just outside the 0.5 °C margin: holds (no alert) ...
    let mut rig = Rig::new(AlertLimits::default(), settings.clone());
    assert!(rig.read_c(0, 40.0, tf90 + 0.5 + 1e-6, 50.0, 500.0).is_empty());
    // ... just inside it: raises, and the limit reported is the UNESCO 1983 point plus the margin.
    let events = rig.read_c(60, 40.0, tf90 + 0.5 - 1e-6, 50.0, 500.0);
    assert_eq!(names(&events), vec![("raised", AlertKind::NearFreezing)]);
    let alert = events[0].alert();
    assert_eq!(alert.severity, Severity::Critical);
    assert!((alert.limit.unwrap() - (tf90 + 0.5)).abs() < 1e-12);
    assert!(events[0]
        .message()
        .contains("freezing point -2.588 °C (UNESCO 1983, SP 40.00, 500 dbar)"));
    assert!(events[0].message().contains("life-support alarm"));
    // Clears at margin + hysteresis (0.7 °C above), not before.
    assert!(rig.read_c(120, 40.0, tf90 + 0.69, 50.0, 500.0).is_empty());
    let events = rig.read_c(180, 40.0, tf90 + 0.7, 50.0, 500.0);
    assert_eq!(names(&events), vec![("cleared", AlertKind::NearFreezing)]);
    assert_eq!(events[0].alert().state, AlertState::ClearedUnacknowledged);
}

#[test]
fn near_freezing_waits_for_its_minimum_duration_and_renotifies() {
    let mut rig = Rig::new(AlertLimits::default(), only(&[AlertKind::NearFreezing], |_| {}));
    // Surface sea water at SP 34 freezes near -1.87 °C; -1.6 °C is within 0.5 °C.
    assert!(rig.read_c(0, 34.0, -1.6, 25.0, 0.0).is_empty());
    assert!(rig.read_c(30, 34.0, -1.6, 25.0, 0.0).is_empty());
    assert_eq!(
        names(&rig.read_c(60, 34.0, -1.6, 25.0, 0.0)),
        vec![("raised", AlertKind::NearFreezing)]
    );
    assert_eq!(names(&rig.tick(960)), vec![("renotify", AlertKind::NearFreezing)]);
}
