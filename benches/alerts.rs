//! Alert-engine benchmark: one reading evaluated across every rule, with 1 000 tanks in the engine.
//!
//! Run: `cargo bench --bench alerts`. Target (2-core machine): <= 2 µs per reading, amortised.
//! Readings go round-robin over the tanks (one minute apart per tank), so each call touches a different
//! tank's windows, as in a busy site. Values are precomputed; the loop builds only the reading's time.
use std::hint::black_box;
use std::time::Duration;

use chrono::{DateTime, TimeZone, Utc};
use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use halotank::alerts::{
    AlertEngine, AlertLimits, AlertReading, AlertSettings, Bounds, RateLimit, RateOfChange, TankSlot,
};
use halotank::seawater::practical_salinity::conductivity_from_practical_salinity;

const TANKS: usize = 1000;
/// Rounds of precomputed values (then repeated with later times).
const ROUNDS: usize = 128;

struct Fleet {
    engine: AlertEngine,
    slots: Vec<TankSlot>,
    /// (SP, °C, mS/cm) per round and tank.
    values: Vec<(f64, f64, f64)>,
    start: DateTime<Utc>,
    step: usize,
}

/// A small deterministic generator in [-1, 1] (benchmark data only).
fn lcg(state: &mut u64) -> f64 {
    *state = state
        .wrapping_mul(6_364_136_223_846_793_005)
        .wrapping_add(1_442_695_040_888_963_407);
    ((*state >> 11) as f64 / (1u64 << 53) as f64) * 2.0 - 1.0
}

/// `excursion_every`: every n-th tank drifts out of its optimum and back over the rounds (events fire).
fn fleet(excursion_every: usize) -> Fleet {
    let settings = AlertSettings::default()
        .resolve()
        .expect("default settings resolve");
    let mut engine = AlertEngine::new();
    let mut slots = Vec::with_capacity(TANKS);
    for i in 0..TANKS {
        let centre = 10.0 + (i % 25) as f64; // SP 10 .. 34
        let limits = AlertLimits {
            salinity_optimum: Some(Bounds::new(centre - 2.0, centre + 2.0)),
            salinity_tolerance: Some(Bounds::new(centre - 6.0, centre + 6.0)),
            temperature_optimum_c: Some(Bounds::new(10.0, 16.0)),
            temperature_tolerance_c: Some(Bounds::new(4.0, 22.0)),
            max_salinity_rate: Some(RateLimit {
                max: RateOfChange::PercentPerHour(10.0),
                slower_below: None,
            }),
            expected_interval_s: 60,
        };
        let id = format!("bench-{i:04}");
        slots.push(
            engine
                .add_tank(&id, limits, settings.clone())
                .expect("tank added"),
        );
    }
    let mut state = 42u64;
    let mut values = Vec::with_capacity(ROUNDS * TANKS);
    for round in 0..ROUNDS {
        for i in 0..TANKS {
            let centre = 10.0 + (i % 25) as f64;
            let drift = if excursion_every > 0 && i % excursion_every == 0 {
                // Out to +3 SP and back over the rounds.
                3.0 * (std::f64::consts::PI * round as f64 / ROUNDS as f64).sin()
            } else {
                0.0
            };
            let sp = centre + drift + 0.03 * lcg(&mut state);
            let temp = 13.0 + 0.05 * lcg(&mut state);
            let c = conductivity_from_practical_salinity(sp, temp, 0.0).expect("valid water");
            values.push((sp, temp, c));
        }
    }
    let start = Utc.timestamp_opt(1_760_000_000, 0).single().expect("valid time");
    let mut fleet = Fleet {
        engine,
        slots,
        values,
        start,
        step: 0,
    };
    // Fill every window before measuring (64 rounds: the sample ring and more than the rate window).
    for _ in 0..64 * TANKS {
        fleet.next();
    }
    fleet
}

impl Fleet {
    /// Feeds the next reading; returns the number of events.
    fn next(&mut self) -> usize {
        let step = self.step;
        self.step += 1;
        let tank = step % TANKS;
        let round = step / TANKS;
        let (sp, temp, c) = self.values[(round % ROUNDS) * TANKS + tank];
        let time = self.start + chrono::Duration::seconds(round as i64 * 60);
        let reading = AlertReading {
            time,
            practical_salinity: sp,
            temperature_c: temp,
            conductivity_ms_cm: c,
            pressure_dbar: 0.0,
        };
        self.engine
            .on_reading(self.slots[tank], black_box(&reading), time)
            .len()
    }
}

fn on_reading(c: &mut Criterion) {
    let mut group = c.benchmark_group("alerts_on_reading_1000_tanks");
    group.throughput(Throughput::Elements(1));
    let mut steady = fleet(0);
    group.bench_function("steady_noisy_water", |b| b.iter(|| steady.next()));
    let mut excursions = fleet(20);
    group.bench_function("five_percent_of_tanks_in_excursion", |b| {
        b.iter(|| excursions.next())
    });
    group.finish();
}

fn on_tick(c: &mut Criterion) {
    let mut group = c.benchmark_group("alerts_on_tick_1000_tanks");
    let mut f = fleet(0);
    let mut s = 0i64;
    group.bench_function("tick", |b| {
        b.iter(|| {
            s += 1;
            f.engine
                .on_tick(f.start + chrono::Duration::seconds(64 * 60 + s))
                .len()
        })
    });
    group.finish();
}

criterion_group! {
    name = benches;
    config = Criterion::default().measurement_time(Duration::from_secs(5)).warm_up_time(Duration::from_secs(2));
    targets = on_reading, on_tick
}
criterion_main!(benches);
