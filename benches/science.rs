//! Criterion benchmarks of the science core (run: `cargo bench --bench science`).
use std::hint::black_box;

use criterion::{criterion_group, criterion_main, Criterion};
use halotank::seawater::absolute_salinity::absolute_salinity_from_practical_salinity;
use halotank::seawater::gibbs::gibbs_j_kg;
use halotank::seawater::osmotic::{osmolality_and_coefficient, osmotic_pressure_bar, water_potential_bar};

/// The TEOS-10 Gibbs function and the osmotic part of one reading's derivation.
fn gibbs_and_osmotic(c: &mut Criterion) {
    let (sp, t, p) = (33.5_f64, 14.0_f64, 0.0_f64);
    c.bench_function("gibbs_j_kg", |b| {
        b.iter(|| gibbs_j_kg(black_box(34.2), black_box(t), black_box(p)))
    });
    c.bench_function("osmolality_and_coefficient", |b| {
        b.iter(|| osmolality_and_coefficient(black_box(34.2), black_box(t), black_box(p)))
    });
    c.bench_function("osmotic_pressure_bar", |b| {
        b.iter(|| osmotic_pressure_bar(black_box(34.2), black_box(t), black_box(p)))
    });
    // SA, osmolality, φ, osmotic pressure, solute and water potential of one reading.
    c.bench_function("osmotic_part_of_one_reading", |b| {
        b.iter(|| {
            let sa = absolute_salinity_from_practical_salinity(black_box(sp))?;
            let (osmolality, phi) = osmolality_and_coefficient(sa, black_box(t), black_box(p))?;
            let pi = osmotic_pressure_bar(sa, t, p)?;
            let psi = water_potential_bar(-pi, 0.0)?;
            Ok::<_, halotank::seawater::ScienceError>((osmolality, phi, psi))
        })
    });
}

criterion_group!(benches, gibbs_and_osmotic);
criterion_main!(benches);
