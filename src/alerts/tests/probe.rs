//! Probe rules through the engine: stale, spike, flat line, inconsistent.
use super::*;

#[test]
fn stale_from_start_then_after_readings_stop_and_clears_once_the_feed_is_back() {
    let mut rig = Rig::new(sea_limits(), only(&[AlertKind::ProbeStale], |_| {}));
    assert!(rig.tick(0).is_empty());
    assert!(rig.tick(170).is_empty());
    let events = rig.tick(180);
    assert_eq!(names(&events), vec![("raised", AlertKind::ProbeStale)]);
    assert!(events[0].message().contains("since monitoring started"));
    assert!(events[0].message().contains("calibrated meter"));
    // The feed comes back: it must keep coming for 300 s (clear_after) before the alert clears.
    for s in (200..500).step_by(60) {
        assert!(rig.read(s, 30.0, 12.0).is_empty(), "{s}");
        assert!(rig.tick(s + 30).is_empty(), "{s}");
    }
    assert_eq!(
        names(&rig.read(500, 30.0, 12.0)),
        vec![("cleared", AlertKind::ProbeStale)]
    );
    // Readings stop at 500: stale at 500 + 3 × 60 s.
    assert!(rig.tick(679).is_empty());
    assert_eq!(names(&rig.tick(680)), vec![("raised", AlertKind::ProbeStale)]);
    assert!(rig.tick(680 + 3599).is_empty());
    assert_eq!(
        names(&rig.tick(680 + 3600)),
        vec![("renotify", AlertKind::ProbeStale)]
    );
}

#[test]
fn an_intermittent_feed_does_not_flap_the_stale_alert() {
    let mut rig = Rig::new(sea_limits(), only(&[AlertKind::ProbeStale], |_| {}));
    rig.tick(0);
    let mut raised = 0;
    let mut cleared = 0;
    // One reading every 200 s (just over 3 intervals), ticks every 10 s, for 3 hours.
    for s in (0..10_800).step_by(10) {
        let mut events = rig.tick(s);
        if s % 200 == 0 {
            events.extend(rig.read(s, 30.0, 12.0));
        }
        raised += events.iter().filter(|e| e.name() == "raised").count();
        cleared += events.iter().filter(|e| e.name() == "cleared").count();
    }
    assert_eq!((raised, cleared), (1, 0));
}

#[test]
fn a_spike_raises_at_once_and_clears_after_quiet_readings() {
    let mut rig = Rig::new(sea_limits(), only(&[AlertKind::ProbeSpike], |_| {}));
    for i in 0..10 {
        assert!(rig.read(i * 60, 30.0 + 0.02 * (i % 3) as f64, 12.0).is_empty());
    }
    let events = rig.read(600, 33.0, 12.0);
    assert_eq!(names(&events), vec![("raised", AlertKind::ProbeSpike)]);
    assert!(events[0].message().contains("median"));
    // Quiet readings from 660: the alert clears after 600 s of them.
    for s in (660..1260).step_by(60) {
        assert!(rig.read(s, 30.01, 12.0).is_empty(), "{s}");
    }
    assert_eq!(
        names(&rig.read(1260, 30.01, 12.0)),
        vec![("cleared", AlertKind::ProbeSpike)]
    );
}

#[test]
fn a_flat_line_raises_after_its_duration_and_clears_on_change() {
    let mut rig = Rig::new(sea_limits(), only(&[AlertKind::ProbeFlatLine], |_| {}));
    for s in (0..1800).step_by(60) {
        assert!(rig.read_c(s, 30.0, 12.0, 38.123, 0.0).is_empty(), "{s}");
    }
    let events = rig.read_c(1800, 30.0, 12.0, 38.123, 0.0);
    assert_eq!(names(&events), vec![("raised", AlertKind::ProbeFlatLine)]);
    assert!(events[0]
        .message()
        .contains("38.123 mS/cm without any change for 30 min (31 readings)"));
    assert_eq!(
        names(&rig.tick(1800 + 3600)),
        vec![("renotify", AlertKind::ProbeFlatLine)]
    );
    assert_eq!(
        names(&rig.read_c(5500, 30.0, 12.0, 38.124, 0.0)),
        vec![("cleared", AlertKind::ProbeFlatLine)]
    );
}

#[test]
fn stuck_conductivity_while_temperature_moves_raises_and_clears_when_it_follows() {
    let mut rig = Rig::new(sea_limits(), only(&[AlertKind::ProbeInconsistent], |_| {}));
    // Temperature warms 0.15 °C per reading; the conductivity stays at 38.5 mS/cm.
    let mut raised_at = None;
    for i in 0..12 {
        let events = rig.read_c(i * 60, 30.0, 12.0 + 0.15 * i as f64, 38.5, 0.0);
        if !events.is_empty() {
            assert_eq!(names(&events), vec![("raised", AlertKind::ProbeInconsistent)]);
            assert!(events[0].message().contains("one of the two is wrong"));
            raised_at.get_or_insert(i);
        }
    }
    // 10 readings (the window) spanning >= 1 °C: from reading 9 (0.15 × 9 = 1.35 °C).
    assert_eq!(raised_at, Some(9));
    // Conductivity follows the temperature again: clears after 300 s.
    let mut cleared = None;
    for i in 12..30 {
        let temp = 13.8;
        let c = conductivity_from_practical_salinity(30.0 + 0.01 * (i % 2) as f64, temp, 0.0).unwrap();
        let c = c * (1.0 + 0.002 * (i % 3) as f64);
        if names(&rig.read_c(i * 60, 30.0, temp, c, 0.0)) == vec![("cleared", AlertKind::ProbeInconsistent)] {
            cleared = Some(i);
            break;
        }
    }
    assert!(cleared.is_some());
}

#[test]
fn an_impossible_temperature_jump_raises() {
    let mut rig = Rig::new(sea_limits(), only(&[AlertKind::ProbeInconsistent], |_| {}));
    for i in 0..3 {
        assert!(rig.read(i * 60, 30.0, 12.0).is_empty());
    }
    // +3 °C in 60 s: about 210 kW into a 1 000 L tank.
    let events = rig.read(180, 30.0, 15.0);
    assert_eq!(names(&events), vec![("raised", AlertKind::ProbeInconsistent)]);
    assert!(events[0].message().contains("3.00 °C/min"));
}

#[test]
fn bad_and_out_of_order_readings_are_counted_not_evaluated() {
    let mut rig = Rig::new(sea_limits(), only(&[AlertKind::SalinityOptimum], |_| {}));
    rig.read(600, 30.0, 12.0);
    assert!(rig.read(300, 40.0, 12.0).is_empty());
    assert!(rig.read_c(660, f64::NAN, 12.0, 40.0, 0.0).is_empty());
    let reading = AlertReading {
        time: t(700),
        practical_salinity: 30.0,
        temperature_c: 12.0,
        conductivity_ms_cm: 40.0,
        pressure_dbar: 0.0,
    };
    assert!(rig.engine.on_reading(TankSlot(5), &reading, t(700)).is_empty());
    assert!(rig
        .engine
        .on_schedule(TankSlot(5), ScheduleSignal::OnSchedule, t(700))
        .is_empty());
    let c = rig.engine.counters();
    assert_eq!(
        (c.readings, c.out_of_order, c.not_finite, c.unknown_tank),
        (1, 1, 1, 2)
    );
}

#[test]
fn a_spike_back_into_range_does_not_clear_an_alert() {
    let mut rig = Rig::new(
        sea_limits(),
        only(&[AlertKind::SalinityTolerance, AlertKind::ProbeSpike], |_| {}),
    );
    for i in 0..10 {
        rig.read(i * 60, 37.0 + 0.01 * (i % 2) as f64, 12.0);
    }
    assert_eq!(rig.engine.open_alerts().count(), 1);
    // One implausible in-range reading: a spike alert, but the tolerance alert is not cleared.
    let events = rig.read(600, 30.0, 12.0);
    assert_eq!(names(&events), vec![("raised", AlertKind::ProbeSpike)]);
    let tolerance = rig
        .engine
        .open_alerts()
        .find(|r| r.kind == AlertKind::SalinityTolerance)
        .unwrap();
    assert_eq!(tolerance.state, AlertState::Raised);
    // Sustained in-range readings do clear it.
    let events = rig.read(660, 30.0, 12.0);
    assert!(events.is_empty() || names(&events) == vec![("cleared", AlertKind::SalinityTolerance)]);
    let mut cleared = !events.is_empty();
    for i in 12..20 {
        if names(&rig.read(i * 60, 30.0, 12.0)).contains(&("cleared", AlertKind::SalinityTolerance)) {
            cleared = true;
        }
    }
    assert!(cleared);
}
