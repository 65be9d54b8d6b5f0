//! Salinity-rate rule through the engine.
use super::*;

fn rate_only(limits: AlertLimits) -> Rig {
    Rig::new(limits, only(&[AlertKind::SalinityRate], |_| {}))
}

#[test]
fn a_fast_ramp_raises_once_the_span_is_reached_and_clears_when_it_stops() {
    let mut rig = rate_only(sea_limits());
    // 30.0 SP steady for 20 min, then falling at 3 SP/h (a fictional dilution) for 40 min.
    let mut raised_at = None;
    for i in 0..=20 {
        assert!(rig.read(i * 60, 30.0, 12.0).is_empty());
    }
    for i in 1..=40 {
        let s = 1200 + i * 60;
        let events = rig.read(s, 30.0 - 3.0 * (i * 60) as f64 / 3600.0, 12.0);
        if !events.is_empty() {
            assert_eq!(names(&events), vec![("raised", AlertKind::SalinityRate)]);
            assert!(events[0].message().contains("SP/h"));
            let value = events[0].alert().value.unwrap();
            assert!(value < -2.0, "{value}");
            raised_at.get_or_insert(s);
        }
    }
    let raised_at = raised_at.expect("a 3 SP/h ramp against a 2 SP/h maximum raises");
    assert!(raised_at > 1200 && raised_at < 1200 + 1800, "{raised_at}");
    // Critical: re-notifies every 900 s while the ramp goes on.
    assert_eq!(
        names(&rig.tick(raised_at + 900)),
        vec![("renotify", AlertKind::SalinityRate)]
    );
    // The ramp stops at 28.0: the fitted slope decays below 0.7 × 2 SP/h within the window.
    let mut cleared = false;
    for i in 1..=40 {
        let events = rig.read(1200 + 2400 + i * 60, 28.0, 12.0);
        if names(&events) == vec![("cleared", AlertKind::SalinityRate)] {
            cleared = true;
            break;
        }
        assert!(events.is_empty());
    }
    assert!(cleared);
}

#[test]
fn noise_and_a_single_spike_do_not_raise_the_rate_rule() {
    // The spike rule on: it keeps the spike out of the rate fit (and raises its own alert).
    let mut rig = Rig::new(
        sea_limits(),
        only(&[AlertKind::SalinityRate, AlertKind::ProbeSpike], |_| {}),
    );
    let mut n = noise(7);
    let mut spikes = 0;
    for i in 0..600 {
        // ±0.05 SP noise, one +8 SP spike at reading 300 (left in the fit, it alone would tilt the slope
        // by about 8 SP × 0.25 h / 0.625 h² = 3.2 SP/h, above the 2 SP/h maximum).
        let sp = 30.0 + 0.05 * n() + if i == 300 { 8.0 } else { 0.0 };
        let events = rig.read(i * 60, sp, 12.0);
        assert!(
            events.iter().all(|e| e.alert().kind == AlertKind::ProbeSpike),
            "reading {i}: {events:?}"
        );
        spikes += events.iter().filter(|e| e.name() == "raised").count();
    }
    assert_eq!(spikes, 1);
}

#[test]
fn a_slow_ramp_within_the_maximum_does_not_raise() {
    let mut rig = rate_only(sea_limits());
    for i in 0..=120 {
        assert!(rig
            .read(i * 60, 30.0 - 1.5 * (i * 60) as f64 / 3600.0, 12.0)
            .is_empty());
    }
}

#[test]
fn percent_rates_and_the_slower_rate_below_a_salinity() {
    // 10 %/h of the current salinity, but at most 0.5 SP/h below SP 10.
    let limits = AlertLimits {
        max_salinity_rate: Some(RateLimit {
            max: RateOfChange::PercentPerHour(10.0),
            slower_below: Some(SlowerBelow {
                practical_salinity: 10.0,
                max: RateOfChange::SpPerHour(0.5),
            }),
        }),
        ..AlertLimits::default()
    };
    // At SP 20, 1.5 SP/h is within 10 %/h (2 SP/h).
    let mut rig = rate_only(limits);
    for i in 0..=60 {
        assert!(rig
            .read(i * 60, 20.0 + 1.5 * (i * 60) as f64 / 3600.0, 12.0)
            .is_empty());
    }
    // At SP 8, 0.8 SP/h is within 10 %/h of 8 (0.8) but above the slower 0.5 SP/h.
    let mut rig = rate_only(limits);
    let mut raised = None;
    for i in 0..=60 {
        let events = rig.read(i * 60, 8.5 - 0.8 * (i * 60) as f64 / 3600.0, 12.0);
        if let Some(e) = events.first() {
            raised = e.alert().limit;
            break;
        }
    }
    assert_eq!(raised, Some(0.5));
}
