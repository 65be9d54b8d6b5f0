//! Criterion benchmarks of the science core: PSS-78 against the `gsw` crate's implementation.
use std::hint::black_box;

use criterion::{criterion_group, criterion_main, Criterion};
use halotank::seawater::practical_salinity::{
    conductivity_from_practical_salinity, practical_salinity_from_conductivity,
};

/// (conductivity mS/cm, temperature °C, pressure dbar) readings typical of each kind of tank.
const SEAWATER: [(f64, f64, f64); 4] = [
    (42.9, 15.0, 0.5),
    (38.0, 10.0, 1.0),
    (53.1, 26.0, 0.3),
    (30.2, 4.0, 2.0),
];
const LOW_SALINITY: [(f64, f64, f64); 4] = [
    (0.35, 12.0, 0.5),
    (1.8, 18.0, 1.0),
    (0.05, 8.0, 0.2),
    (2.9, 22.0, 0.4),
];

fn pss78(c: &mut Criterion) {
    for (name, inputs) in [("seawater", SEAWATER), ("low_salinity", LOW_SALINITY)] {
        let mut group = c.benchmark_group(format!("sp_from_c/{name}"));
        group.bench_function("halotank", |b| {
            b.iter(|| {
                let mut sum = 0.0;
                for &(cond, t, p) in &inputs {
                    sum += practical_salinity_from_conductivity(black_box(cond), black_box(t), black_box(p))
                        .unwrap_or(0.0);
                }
                sum
            })
        });
        group.bench_function("gsw", |b| {
            b.iter(|| {
                let mut sum = 0.0;
                for &(cond, t, p) in &inputs {
                    sum += gsw::practical_salinity::sp_from_c(black_box(cond), black_box(t), black_box(p))
                        .unwrap_or(0.0);
                }
                sum
            })
        });
        group.finish();
    }

    let salinities = [
        (35.0, 15.0, 0.5),
        (0.8, 12.0, 0.5),
        (12.0, 20.0, 1.0),
        (31.5, 6.0, 2.0),
    ];
    let mut group = c.benchmark_group("c_from_sp");
    group.bench_function("halotank", |b| {
        b.iter(|| {
            let mut sum = 0.0;
            for &(sp, t, p) in &salinities {
                sum += conductivity_from_practical_salinity(black_box(sp), black_box(t), black_box(p))
                    .unwrap_or(0.0);
            }
            sum
        })
    });
    group.bench_function("gsw", |b| {
        b.iter(|| {
            let mut sum = 0.0;
            for &(sp, t, p) in &salinities {
                sum += gsw::practical_salinity::c_from_sp(black_box(sp), black_box(t), black_box(p))
                    .unwrap_or(0.0);
            }
            sum
        })
    });
    group.finish();
}

criterion_group!(benches, pss78);
criterion_main!(benches);
