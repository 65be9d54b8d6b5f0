//! Tests of the simulated site: determinism, the ramp, the drift, the garbage, and the ingest core's
//! verdict on every message (good ones accepted, broken ones refused for the reason they were built for).
use chrono::{DateTime, TimeDelta, Utc};

use super::*;
use crate::demo::config::demo_config;
use crate::ingest::{IngestOutcome, Ingestor};
use crate::seawater::practical_salinity::practical_salinity_from_conductivity;

fn t0() -> DateTime<Utc> {
    // 2025-04-02T06:00:00Z
    DateTime::from_timestamp(1_743_573_600, 0).unwrap()
}

fn scenario(seed: u64, days: i64) -> Scenario {
    Scenario::brannock(seed, t0(), t0() + TimeDelta::days(days))
}

fn index(s: &Scenario, id: &str) -> usize {
    s.tank_index(id).unwrap()
}

#[test]
fn the_same_seed_gives_the_same_messages_and_another_seed_other_ones() {
    let (from, to) = (t0(), t0() + TimeDelta::hours(3));
    let a = scenario(11, 7).messages_between(from, to);
    let b = scenario(11, 7).messages_between(from, to);
    let c = scenario(12, 7).messages_between(from, to);
    assert!(a.len() > 1000, "{}", a.len());
    assert_eq!(a, b);
    assert_eq!(a.len(), c.len(), "the seed changes values, not the schedule");
    let differing = a.iter().zip(&c).filter(|(x, y)| x.payload != y.payload).count();
    assert!(differing > a.len() * 9 / 10, "{differing} of {}", a.len());
}

#[test]
fn cutting_the_timeline_into_ticks_changes_nothing() {
    let s = scenario(5, 7);
    let (from, to) = (t0() + TimeDelta::milliseconds(300), t0() + TimeDelta::hours(2));
    let whole = s.messages_between(from, to);
    let mut ticked = Vec::new();
    let mut at = from;
    while at < to {
        let next = (at + TimeDelta::milliseconds(37_250)).min(to);
        ticked.extend(s.messages_between(at, next));
        at = next;
    }
    assert_eq!(whole, ticked);
    assert!(whole.iter().all(|m| m.time >= from && m.time < to));
    assert!(whole.windows(2).all(|w| w[0].time <= w[1].time));
    // Nothing before the timeline start.
    assert!(s.messages_between(t0() - TimeDelta::hours(1), t0()).is_empty());
}

#[test]
fn each_tank_keeps_to_its_interval() {
    let s = scenario(1, 7);
    let messages = s.messages_between(t0(), t0() + TimeDelta::hours(1));
    for (i, tank) in s.tanks().iter().enumerate() {
        let per_reading = match tank.format {
            ProbeFormat::BareNumbers { .. } | ProbeFormat::SplitJson { .. } => 2,
            ProbeFormat::CombinedJson { .. } | ProbeFormat::Senml { .. } => 1,
        };
        let n = messages.iter().filter(|m| m.tank_index == i).count();
        assert_eq!(n as i64, 3600 / tank.interval_s * per_reading, "{}", tank.id);
    }
}

#[test]
fn the_smolt_ramp_rises_monotonically_and_is_mid_change_at_the_end() {
    // Week-long timeline: the ramp starts 7 h before the end at SP 8 and rises 1.5 per hour.
    let s = scenario(3, 7);
    let i = index(&s, "smolt-t1");
    let end = t0() + TimeDelta::days(7);
    let sp = |at| s.water(i, at).unwrap().practical_salinity;
    let mut last = sp(t0());
    assert!((last - 8.0).abs() < 1e-12);
    let mut at = t0();
    while at < end + TimeDelta::days(1) {
        at += TimeDelta::minutes(10);
        let now = sp(at);
        assert!(now >= last, "ramp fell at {at}: {last} -> {now}");
        last = now;
    }
    assert!((sp(end) - (8.0 + 1.5 * 7.0)).abs() < 1e-9, "{}", sp(end));
    assert!((sp(end + TimeDelta::days(1)) - 30.0).abs() < 1e-12);
    // A 30-minute timeline starts its ramp at once.
    let short = Scenario::brannock(3, t0(), t0() + TimeDelta::minutes(30));
    let sp_short = |at| short.water(i, at).unwrap().practical_salinity;
    assert!(sp_short(t0() + TimeDelta::minutes(30)) > sp_short(t0()) + 0.7);
}

#[test]
fn the_water_of_each_tank_stays_in_its_range() {
    let s = scenario(9, 7);
    let ranges = [
        ("parr-a", 0.1, 0.3, 7.0, 11.0),
        ("smolt-t1", 8.0, 30.0, 8.5, 10.5),
        ("shrimp-n2", 10.0, 15.0, 27.0, 29.0),
        ("sea-hold-4", 33.0, 35.0, 9.5, 11.5),
        ("oyster-d1", 30.0, 31.0, 13.0, 15.0),
        ("quarantine-q1", 31.0, 33.0, 10.0, 12.0),
    ];
    for (id, sp_min, sp_max, t_min, t_max) in ranges {
        let i = index(&s, id);
        for h in 0..(24 * 8) {
            let w = s.water(i, t0() + TimeDelta::hours(h)).unwrap();
            assert!(
                (sp_min..=sp_max).contains(&w.practical_salinity),
                "{id} SP {}",
                w.practical_salinity
            );
            assert!(
                (t_min..=t_max).contains(&w.temperature_c),
                "{id} T {}",
                w.temperature_c
            );
        }
    }
}

/// Feeds every message to the ingest core (each received 2 s after its reading time) and returns the
/// accepted readings with the message that produced them.
fn ingest_all(
    s: &Scenario,
    messages: &[ProbeMessage],
) -> Vec<(ProbeMessage, crate::ingest::AcceptedReading)> {
    let config = demo_config().unwrap();
    let mut ingestor = Ingestor::new(&config);
    let mut accepted = Vec::new();
    for m in messages {
        let outcome = ingestor.handle(&m.topic, &m.payload, m.time + TimeDelta::seconds(2));
        match (m.garbage, outcome) {
            (Some(kind), IngestOutcome::Rejected(r)) => {
                assert_eq!(r.reason, kind.expected_reason(), "{kind:?}: {}", r.detail);
                assert_eq!(r.tank_id.as_deref(), Some(m.tank_id));
            }
            (Some(kind), other) => panic!("garbage {kind:?} on {} not refused: {other:?}", m.topic),
            (None, IngestOutcome::Buffered) => assert_eq!(m.part, MessagePart::Temperature, "{}", m.topic),
            (None, IngestOutcome::Accepted(readings)) => {
                assert_ne!(m.part, MessagePart::Temperature);
                assert_eq!(readings.len(), 1, "{}", m.topic);
                for r in readings {
                    assert_eq!(r.tank_index, m.tank_index);
                    let expected_time = if m.carries_time {
                        m.time
                    } else {
                        m.time + TimeDelta::seconds(2)
                    };
                    assert_eq!(r.time, expected_time, "{}", m.topic);
                    accepted.push((m.clone(), r));
                }
            }
            (None, other) => panic!(
                "good message on {} not accepted: {other:?}\n{}",
                m.topic,
                String::from_utf8_lossy(&m.payload)
            ),
        }
    }
    let _ = s;
    accepted
}

#[test]
fn the_ingest_core_accepts_every_good_message_and_the_salinity_comes_back() {
    let s = scenario(2025, 2);
    let messages = s.messages_between(t0(), t0() + TimeDelta::days(1));
    let accepted = ingest_all(&s, &messages);
    let readings_expected = messages
        .iter()
        .filter(|m| m.garbage.is_none() && m.part != MessagePart::Temperature)
        .count();
    assert_eq!(accepted.len(), readings_expected);
    for (m, r) in &accepted {
        let truth = s.water(m.tank_index, m.time).unwrap();
        let sp = practical_salinity_from_conductivity(
            r.conductivity_ms_cm / s.drift_factor(m.tank_index, m.time),
            r.temperature_c,
            r.pressure_dbar,
        )
        .unwrap();
        // Noise: 0.1 % on conductivity and 0.02 °C (1 sd each), plus print rounding; 1 % + 0.002 is > 5 sd.
        let tolerance = 0.01 * truth.practical_salinity + 0.002;
        assert!(
            (sp - truth.practical_salinity).abs() < tolerance,
            "{}: SP {sp} vs true {} ({})",
            m.tank_id,
            truth.practical_salinity,
            String::from_utf8_lossy(&m.payload)
        );
        assert!(
            (r.temperature_c - truth.temperature_c).abs() < 0.15,
            "{}",
            m.tank_id
        );
    }
}

#[test]
fn the_drifting_probe_creeps_up_while_the_water_stays_steady() {
    let s = scenario(77, 4);
    let i = index(&s, "oyster-d1");
    let day = |d: i64| {
        let from = t0() + TimeDelta::days(d);
        let messages = s.messages_between(from, from + TimeDelta::hours(2));
        let accepted = ingest_all(&s, &messages);
        let ratios: Vec<f64> = accepted
            .iter()
            .filter(|(m, _)| m.tank_index == i)
            .map(|(m, r)| r.conductivity_ms_cm / s.true_conductivity_ms_cm(i, m.time).unwrap())
            .collect();
        assert_eq!(ratios.len(), 120);
        ratios.iter().sum::<f64>() / ratios.len() as f64
    };
    let (first, third) = (day(0), day(3));
    // 3 % per day: about 1.001 over the first two hours, 1.091 on day 3 (noise averages out to ~1e-4).
    assert!((first - 1.0013).abs() < 0.001, "{first}");
    assert!((third - 1.0913).abs() < 0.001, "{third}");
    let sp = |d| s.water(i, t0() + TimeDelta::days(d)).unwrap().practical_salinity;
    assert!((sp(0) - sp(3)).abs() < 0.25, "the water is steady");
    // No other probe drifts.
    assert!(
        s.tanks()
            .iter()
            .filter(|t| t.drift_percent_per_day != 0.0)
            .count()
            == 1
    );
}

#[test]
fn a_few_percent_of_the_faulty_probes_messages_are_garbage_of_every_kind() {
    for seed in [1, 2, 3] {
        let s = scenario(seed, 4);
        let messages = s.messages_between(t0(), t0() + TimeDelta::days(3));
        let q = index(&s, "quarantine-q1");
        let own: Vec<&ProbeMessage> = messages.iter().filter(|m| m.tank_index == q).collect();
        let garbage: Vec<GarbageKind> = own.iter().filter_map(|m| m.garbage).collect();
        let fraction = garbage.len() as f64 / own.len() as f64;
        // 17 280 messages at p = 0.04: sd of the fraction is 0.0015; bounds at about ±3.3 sd.
        assert!((0.035..=0.045).contains(&fraction), "seed {seed}: {fraction}");
        for kind in GarbageKind::ALL {
            assert!(garbage.contains(&kind), "seed {seed}: no {kind:?}");
        }
        assert!(messages.iter().all(|m| m.garbage.is_none() || m.tank_index == q));
        // Every broken message is refused for its own reason.
        ingest_all(&s, &messages[..messages.len().min(20_000)]);
    }
}

#[test]
fn the_default_demo_run_shows_broken_messages() {
    // `halotank demo --duration 30s` covers 30 simulated minutes with the default seed.
    let s = Scenario::brannock(DEFAULT_SEED, t0(), t0() + TimeDelta::minutes(30));
    let messages = s.messages_between(t0(), t0() + TimeDelta::minutes(30));
    let broken = messages.iter().filter(|m| m.garbage.is_some()).count();
    assert!(broken >= 2, "{broken}");
}
