//! Science-core benchmarks: our PSS-78 beside the `gsw` crate's, the full derivation of one reading, bulk CSV.
//!
//! Run: `cargo bench --bench science`. Targets (2-core machine): `sp_from_c` ratio to gsw <= 1.0,
//! full derivation <= 1 µs per reading, bulk CSV >= 500,000 rows/s.
use std::hint::black_box;
use std::time::Duration;

use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use halotank::cli::convert_csv::{convert_csv, CsvOptions};
use halotank::seawater::derive::derive_from_conductivity;
use halotank::seawater::practical_salinity::practical_salinity_from_conductivity;
use halotank::seawater::units::ProbeMode;

/// A spread of tank waters: fresh, brackish and sea water at hatchery temperatures (mS/cm, °C).
fn readings() -> Vec<(f64, f64)> {
    let mut v = Vec::new();
    for i in 0..64 {
        let c = 0.05 + f64::from(i) * 0.9; // 0.05 .. 56.75 mS/cm
        let t = 4.0 + f64::from(i % 24); // 4 .. 27 °C
        v.push((c, t));
    }
    v
}

fn sp_from_c(c: &mut Criterion) {
    let data = readings();
    let mut group = c.benchmark_group("sp_from_c");
    group.throughput(Throughput::Elements(data.len() as u64));
    group.bench_function("halotank", |b| {
        b.iter(|| {
            let mut acc = 0.0;
            for &(c, t) in &data {
                acc += practical_salinity_from_conductivity(black_box(c), black_box(t), 0.0).unwrap_or(0.0);
            }
            acc
        })
    });
    group.bench_function("gsw_crate", |b| {
        b.iter(|| {
            let mut acc = 0.0;
            for &(c, t) in &data {
                acc += gsw::practical_salinity::sp_from_c(black_box(c), black_box(t), 0.0).unwrap_or(0.0);
            }
            acc
        })
    });
    group.finish();
}

fn full_derivation(c: &mut Criterion) {
    let data = readings();
    let mut group = c.benchmark_group("derive_one_reading");
    group.throughput(Throughput::Elements(data.len() as u64));
    group.bench_function("derive_from_conductivity", |b| {
        b.iter(|| {
            let mut acc = 0.0;
            for &(c, t) in &data {
                if let Ok(d) = derive_from_conductivity(black_box(c), black_box(t), 0.0, 0.0) {
                    acc += d.osmolality_mosm_kg;
                }
            }
            acc
        })
    });
    group.finish();
}

fn bulk_csv(c: &mut Criterion) {
    const ROWS: usize = 100_000;
    let mut input = String::from("conductivity_mS_cm,temperature_C\n");
    let data = readings();
    for i in 0..ROWS {
        let (c, t) = data[i % data.len()];
        input.push_str(&format!("{c:.3},{t:.2}\n"));
    }
    let mut group = c.benchmark_group("bulk_csv");
    group.throughput(Throughput::Elements(ROWS as u64));
    group.sample_size(10);
    group.measurement_time(Duration::from_secs(10));
    group.bench_function("convert_csv_100k_rows", |b| {
        b.iter(|| {
            let mut out = Vec::with_capacity(ROWS * 96);
            let mut errors = Vec::new();
            let options = CsvOptions {
                probe_mode: ProbeMode::InSitu,
            };
            let summary = convert_csv(input.as_bytes(), &mut out, options, &mut errors).unwrap_or_default();
            black_box((summary, out.len()))
        })
    });
    group.finish();
}

criterion_group!(benches, sp_from_c, full_derivation, bulk_csv);
criterion_main!(benches);
