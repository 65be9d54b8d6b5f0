//! The TEOS-10 Gibbs function and its derivatives against Python gsw 3.6.23 `gsw.gibbs` and
//! `gsw.chem_potential_water_t_exact` (tests/vectors/gibbs_gsw.csv, from scripts/generate_vectors.py).
mod vector_csv;

use halotank::seawater::gibbs::{
    chemical_potential_water_j_kg, gibbs_j_kg, gibbs_p_m3_kg, gibbs_sa_j_kg_per_g_kg,
    gibbs_sa_p_m3_kg_per_g_kg,
};
use vector_csv::Vectors;

/// |a − e| within `rel` of `scale`: each derivative is compared on the size of its own terms, since
/// values that pass through zero (g near SSO, 0 °C) have no meaningful relative error.
fn check(name: &str, at: &[f64], actual: f64, expected: f64, scale: f64, rel: f64) {
    assert!(
        (actual - expected).abs() <= rel * scale,
        "{name} at {at:?}: {actual} vs {expected} (scale {scale})"
    );
}

#[test]
fn gibbs_function_and_derivatives_match_gsw() {
    // Tolerance 1e-13 of the scale of each quantity: the same polynomial evaluated in a different
    // order (nested tables here, GSW's hand-expanded Horner there) differs by a few ulps of its largest
    // terms. Scales: g and μW up to ~1e5 J/kg at 1000 dbar (scale max(|gW|, 1e3)); g_SA up to ~1e2;
    // g_p ~1e-3 m³/kg; g_SAp ~1e-6.
    let v = Vectors::parse(include_str!("vectors/gibbs_gsw.csv"));
    let (sa, t, p) = (v.col("sa_g_kg"), v.col("t_c"), v.col("p_dbar"));
    let (g, g_sa, g_p, g_sa_p, mu) = (
        v.col("g_j_kg"),
        v.col("g_sa_j_kg_per_g_kg"),
        v.col("g_p_m3_kg"),
        v.col("g_sa_p_m3_kg_per_g_kg"),
        v.col("mu_w_j_kg"),
    );
    for row in &v.rows {
        let (s, tc, pd) = (row[sa], row[t], row[p]);
        let at = &row[..3];
        let g_scale = gibbs_j_kg(0.0, tc, pd).unwrap().abs().max(1e3);
        check("g", at, gibbs_j_kg(s, tc, pd).unwrap(), row[g], g_scale, 1e-13);
        check(
            "μW",
            at,
            chemical_potential_water_j_kg(s, tc, pd).unwrap(),
            row[mu],
            g_scale,
            1e-13,
        );
        check(
            "g_p",
            at,
            gibbs_p_m3_kg(s, tc, pd).unwrap(),
            row[g_p],
            1e-3,
            1e-13,
        );
        check(
            "g_SAp",
            at,
            gibbs_sa_p_m3_kg_per_g_kg(s, tc, pd).unwrap(),
            row[g_sa_p],
            1e-6,
            1e-12,
        );
        if s > 0.0 {
            let scale = row[g_sa].abs().max(10.0);
            check(
                "g_SA",
                at,
                gibbs_sa_j_kg_per_g_kg(s, tc, pd).unwrap(),
                row[g_sa],
                scale,
                1e-12,
            );
        } else {
            assert!(row[g_sa].is_nan(), "the vector marks g_SA at SA = 0 as nan");
            assert!(gibbs_sa_j_kg_per_g_kg(s, tc, pd).is_err());
        }
    }
}
