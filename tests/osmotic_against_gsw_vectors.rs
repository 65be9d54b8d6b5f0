//! Osmotic coefficient, osmolality and osmotic pressure against TEOS-10 reference values:
//! - tests/vectors/osmotic_gsw.csv, built with Python gsw 3.6.23 (scripts/generate_vectors.py);
//! - tests/vectors/osmotic_teos10_check_cast.csv, the TEOS-10 check values of the MATLAB GSW
//!   toolbox (gsw_osmotic_coefficient_t_exact, gsw_osmotic_pressure_t_exact) with their own limits.
mod vector_csv;

use halotank::seawater::osmotic::{osmolality_and_coefficient, osmotic_pressure_bar};
use vector_csv::Vectors;

fn rel_err(actual: f64, expected: f64) -> f64 {
    ((actual - expected) / expected).abs()
}

#[test]
fn osmotic_coefficient_and_osmolality_match_gsw_grid() {
    // Tolerance 1e-11 relative. Both sides evaluate the same IAPWS-08 polynomial; gsw forms
    // μW(SA) − μW(0) as a difference of two values of up to ~1e4 J/kg (at 1000 dbar), which at the most
    // dilute point (SA = 0.01 g/kg, difference ~0.7 J/kg) loses about 4 of the 16 digits, so agreement
    // is expected near 1e-12 and 1e-11 leaves a margin without hiding a wrong coefficient (≥ 1e-9).
    let v = Vectors::parse(include_str!("vectors/osmotic_gsw.csv"));
    let (sa, t, p) = (v.col("sa_g_kg"), v.col("t_c"), v.col("p_dbar"));
    let (phi, osm) = (v.col("osmotic_coefficient"), v.col("osmolality_mosm_kg"));
    let mut worst = (0.0_f64, 0.0_f64);
    for row in &v.rows {
        let (o, f) = osmolality_and_coefficient(row[sa], row[t], row[p]).unwrap();
        let e_phi = rel_err(f, row[phi]);
        let e_osm = rel_err(o, row[osm]);
        assert!(
            e_phi < 1e-11,
            "φ at {:?}: {f} vs {} ({e_phi:e})",
            &row[..3],
            row[phi]
        );
        assert!(
            e_osm < 1e-11,
            "osmolality at {:?}: {o} vs {} ({e_osm:e})",
            &row[..3],
            row[osm]
        );
        worst = (worst.0.max(e_phi), worst.1.max(e_osm));
    }
    println!(
        "{} rows; worst relative error φ {:e}, osmolality {:e}",
        v.rows.len(),
        worst.0,
        worst.1
    );
}

#[test]
fn osmotic_pressure_matches_gsw_grid() {
    // The vector solves μW(SA, t, p + Π) = μW(0, t, p) with scipy brentq to 1e-12 dbar on gsw's μW.
    // Tolerance 1e-10 relative or 1e-10 dbar: the root is fixed to ~1e-16 |μW|/(dμW/dp) ≈ 1e-12 dbar by
    // the rounding of μW, plus brentq's 1e-12 dbar, both far below a coefficient error.
    let v = Vectors::parse(include_str!("vectors/osmotic_gsw.csv"));
    let (sa, t, p, op) = (
        v.col("sa_g_kg"),
        v.col("t_c"),
        v.col("p_dbar"),
        v.col("osmotic_pressure_dbar"),
    );
    let mut worst = 0.0_f64;
    for row in &v.rows {
        let pi_dbar = 10.0 * osmotic_pressure_bar(row[sa], row[t], row[p]).unwrap();
        let err = (pi_dbar - row[op]).abs();
        assert!(
            err <= 1e-10 * row[op] + 1e-10,
            "Π at {:?}: {pi_dbar} vs {} dbar",
            &row[..3],
            row[op]
        );
        worst = worst.max(err);
    }
    println!("{} rows; worst absolute error {worst:e} dbar", v.rows.len());
}

#[test]
fn matches_teos10_check_values_within_their_published_limits() {
    // The check limits (*_ca columns: 3.6e-13 for φ, 1.0e-9 dbar for Π) are those TEOS-10 itself uses to
    // accept an implementation (gsw_check_functions); the cast reaches 6131 dbar.
    let v = Vectors::parse(include_str!("vectors/osmotic_teos10_check_cast.csv"));
    let (sa, t, p) = (v.col("sa_g_kg"), v.col("t_c"), v.col("p_dbar"));
    let (phi, op) = (v.col("osmotic_coefficient"), v.col("osmotic_pressure_dbar"));
    let (phi_ca, op_ca) = (v.col("osmotic_coefficient_ca"), v.col("osmotic_pressure_dbar_ca"));
    for row in &v.rows {
        let (_, f) = osmolality_and_coefficient(row[sa], row[t], row[p]).unwrap();
        assert!(
            (f - row[phi]).abs() < row[phi_ca],
            "φ at {:?}: {f} vs {}",
            &row[..3],
            row[phi]
        );
        let pi_dbar = 10.0 * osmotic_pressure_bar(row[sa], row[t], row[p]).unwrap();
        assert!(
            (pi_dbar - row[op]).abs() < row[op_ca],
            "Π at {:?}: {pi_dbar} vs {} dbar",
            &row[..3],
            row[op]
        );
    }
}
