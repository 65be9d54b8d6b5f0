//! Salinity and temperature range rules through the engine.
use super::*;

#[test]
fn salinity_optimum_raises_after_min_duration_holds_in_band_clears_inside_and_renotifies() {
    let mut rig = Rig::new(sea_limits(), only(&[AlertKind::SalinityOptimum], |_| {}));
    assert!(rig.read(0, 30.0, 12.0).is_empty());
    // Above 32 from t = 60; the minimum duration is 300 s.
    for s in (60..360).step_by(60) {
        assert!(rig.read(s, 32.4, 12.0).is_empty(), "raised early at {s}");
    }
    let events = rig.read(360, 32.4, 12.0);
    assert_eq!(names(&events), vec![("raised", AlertKind::SalinityOptimum)]);
    let alert = events[0].alert().clone();
    assert_eq!(
        (alert.severity, alert.state),
        (Severity::Warning, AlertState::Raised)
    );
    assert_eq!((alert.value, alert.limit), (Some(32.4), Some(32.0)));
    assert!(events[0]
        .message()
        .contains("32.40 is above the species optimum 28.00–32.00"));
    assert!(events[0].message().contains("indicative"));
    // Back under 32 but inside the hysteresis band (clear level 31.7): holds.
    assert!(rig.read(420, 31.8, 12.0).is_empty());
    assert!(rig.read(480, 32.1, 12.0).is_empty(), "no second raise");
    // Re-notify after 3600 s unacknowledged.
    assert!(rig.tick(360 + 3599).is_empty());
    let events = rig.tick(360 + 3600);
    assert_eq!(names(&events), vec![("renotify", AlertKind::SalinityOptimum)]);
    assert_eq!(events[0].alert().notify_count, 2);
    assert!(events[0].message().starts_with("Reminder 2"));
    // Clears inside the clear level; a warning closes at once.
    let events = rig.read(4000, 31.6, 12.0);
    assert_eq!(names(&events), vec![("cleared", AlertKind::SalinityOptimum)]);
    assert_eq!(events[0].alert().state, AlertState::Cleared);
    assert_eq!(rig.engine.open_alerts().count(), 0);
}

#[test]
fn a_short_excursion_does_not_raise() {
    let mut rig = Rig::new(sea_limits(), only(&[AlertKind::SalinityOptimum], |_| {}));
    for s in (0..240).step_by(60) {
        assert!(rig.read(s, 27.5, 12.0).is_empty());
    }
    // Back inside the clear level resets the timer; going out again starts over.
    assert!(rig.read(240, 29.0, 12.0).is_empty());
    for s in (300..600).step_by(60) {
        assert!(rig.read(s, 27.5, 12.0).is_empty(), "{s}");
    }
    assert_eq!(
        names(&rig.read(600, 27.5, 12.0)),
        vec![("raised", AlertKind::SalinityOptimum)]
    );
}

#[test]
fn salinity_tolerance_is_critical_and_coexists_with_the_optimum_warning() {
    let mut rig = Rig::new(
        sea_limits(),
        only(
            &[AlertKind::SalinityOptimum, AlertKind::SalinityTolerance],
            |_| {},
        ),
    );
    rig.read(0, 37.0, 12.0);
    let events = rig.read(60, 37.0, 12.0);
    assert_eq!(names(&events), vec![("raised", AlertKind::SalinityTolerance)]);
    assert_eq!(events[0].severity(), Severity::Critical);
    assert!(events[0]
        .message()
        .contains("above the species tolerance 20.00–36.00"));
    let events = rig.read(300, 37.0, 12.0);
    assert_eq!(names(&events), vec![("raised", AlertKind::SalinityOptimum)]);
    // Critical re-notifies every 900 s.
    assert_eq!(
        names(&rig.tick(60 + 900)),
        vec![("renotify", AlertKind::SalinityTolerance)]
    );
}

#[test]
fn temperature_rules_raise_hold_clear_and_renotify() {
    let mut rig = Rig::new(
        sea_limits(),
        only(
            &[AlertKind::TemperatureOptimum, AlertKind::TemperatureTolerance],
            |_| {},
        ),
    );
    rig.read(0, 30.0, 21.0);
    let events = rig.read(60, 30.0, 21.0);
    assert_eq!(names(&events), vec![("raised", AlertKind::TemperatureTolerance)]);
    assert!(events[0]
        .message()
        .contains("temperature 21.00 °C is above the species tolerance 4.00–20.00 °C"));
    assert_eq!(
        names(&rig.read(300, 30.0, 21.0)),
        vec![("raised", AlertKind::TemperatureOptimum)]
    );
    // 19.8 is inside tolerance but in its band (clear at <= 19.7): holds.
    assert!(rig.read(360, 30.0, 19.8).is_empty());
    assert_eq!(
        names(&rig.tick(960)),
        vec![("renotify", AlertKind::TemperatureTolerance)]
    );
    let events = rig.read(1000, 30.0, 19.6);
    assert_eq!(names(&events), vec![("cleared", AlertKind::TemperatureTolerance)]);
    assert_eq!(events[0].alert().state, AlertState::ClearedUnacknowledged);
    assert_eq!(
        names(&rig.read(1060, 30.0, 15.5)),
        vec![("cleared", AlertKind::TemperatureOptimum)]
    );
}

#[test]
fn a_disabled_rule_never_raises_and_disabling_clears_an_open_alert() {
    let mut rig = Rig::new(sea_limits(), only(&[], |_| {}));
    for s in (0..3600).step_by(60) {
        assert!(rig.read(s, 40.0, 25.0).is_empty());
    }
    let mut rig = Rig::new(sea_limits(), only(&[AlertKind::SalinityOptimum], |_| {}));
    rig.read(0, 33.0, 12.0);
    assert_eq!(rig.read(300, 33.0, 12.0).len(), 1);
    let events = rig
        .engine
        .reconfigure_tank(rig.slot, sea_limits(), only(&[], |_| {}), t(320))
        .unwrap();
    assert_eq!(names(&events), vec![("cleared", AlertKind::SalinityOptimum)]);
    assert!(rig.read(400, 33.0, 12.0).is_empty());
}
