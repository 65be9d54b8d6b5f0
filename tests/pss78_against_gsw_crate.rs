//! PSS-78 (with the Hill et al. 1986 extension) checked against the `gsw` crate, the Rust port of TEOS-10's
//! GSW toolbox (reference library from crates.io), over a grid from fresh water to strong brine.
use halotank::seawater::practical_salinity::{
    conductivity_from_practical_salinity, practical_salinity_from_conductivity,
};
use halotank::seawater::ScienceError;

/// Conductivities (mS/cm) spaced evenly in log from 0.005 (fresh water) to 65.
fn conductivity_grid() -> Vec<f64> {
    let n = 80;
    let (lo, hi) = (0.005_f64.ln(), 65.0_f64.ln());
    (0..=n)
        .map(|i| (lo + (hi - lo) * f64::from(i) / f64::from(n)).exp())
        .collect()
}

/// Temperatures (°C ITS-90) from -2 to 40 in 2 °C steps, plus two off-grid values.
fn temperature_grid() -> Vec<f64> {
    let mut t: Vec<f64> = (0..=21).map(|i| -2.0 + 2.0 * f64::from(i)).collect();
    t.extend([0.37, 24.9]);
    t
}

const PRESSURES_DBAR: [f64; 7] = [0.0, 0.5, 3.0, 10.0, 50.0, 150.0, 400.0];

#[test]
fn sp_from_conductivity_agrees_with_gsw() {
    // Tolerance 1e-8 in SP (absolute): TEOS-10 quotes its own SP inverse to 2e-14; both codes evaluate
    // the same published polynomials, so any difference above rounding would be an error here.
    let mut worst = 0.0_f64;
    let mut compared = 0;
    for &c in &conductivity_grid() {
        for &t in &temperature_grid() {
            for &p in &PRESSURES_DBAR {
                let reference = gsw::practical_salinity::sp_from_c(c, t, p).unwrap();
                let ours = practical_salinity_from_conductivity(c, t, p).unwrap();
                let diff = (ours - reference).abs();
                assert!(diff <= 1e-8, "C {c} t {t} p {p}: ours {ours}, gsw {reference}");
                worst = worst.max(diff);
                compared += 1;
            }
        }
    }
    assert!(compared > 10_000);
    println!("{compared} points, largest |ΔSP| = {worst:e}");
}

#[test]
fn conductivity_from_sp_agrees_with_gsw() {
    // Relative tolerance 1e-8 in C: C spans five decades over this grid (0.0007 mS/cm at SP 0 to
    // ~70 mS/cm), so an absolute tolerance would be meaningless at one end or the other.
    let salinities = [
        0.0, 0.001, 0.003, 0.01, 0.1, 0.25, 0.5, 1.0, 1.5, 1.99, 2.0, 2.01, 5.0, 9.0, 15.0, 25.0, 30.0, 35.0,
        38.5, 42.0,
    ];
    let mut worst = 0.0_f64;
    for &sp in &salinities {
        for &t in &temperature_grid() {
            for &p in &PRESSURES_DBAR {
                let reference = gsw::practical_salinity::c_from_sp(sp, t, p).unwrap();
                let ours = conductivity_from_practical_salinity(sp, t, p).unwrap();
                let rel = (ours / reference - 1.0).abs();
                assert!(rel <= 1e-8, "SP {sp} t {t} p {p}: ours {ours}, gsw {reference}");
                worst = worst.max(rel);
            }
        }
    }
    println!("largest relative ΔC = {worst:e}");
}

#[test]
fn both_refuse_the_negative_dip_below_the_hill_zero_crossing() {
    // For 0 < C below about 0.0008 mS/cm the Hill et al. (1986) form gives SP slightly below 0;
    // gsw returns its NegativeSalinity error there, halotank its InvalidSalinity error.
    for &c in &[1e-5, 1e-4, 4e-4] {
        for &t in &[0.0, 10.0, 25.0] {
            let reference = gsw::practical_salinity::sp_from_c(c, t, 0.0);
            assert!(reference.is_err(), "gsw accepted C {c} t {t}: {reference:?}");
            let ours = practical_salinity_from_conductivity(c, t, 0.0);
            assert!(
                matches!(ours, Err(ScienceError::InvalidSalinity { value }) if value < 0.0),
                "C {c} t {t}: {ours:?}"
            );
        }
    }
}

#[test]
fn zero_conductivity_agrees_with_gsw() {
    // Hill et al. (1986) passes through the origin: SP = 0 for C = 0 (gsw's own unit test at 10 °C).
    // gsw's approximate Hill ratio leaves rounding residue of either sign there, and it rejects the
    // negative residue as NegativeSalinity; where it returns a value, the two agree to rounding.
    let mut gsw_values = 0;
    for &t in &temperature_grid() {
        let ours = practical_salinity_from_conductivity(0.0, t, 100.0).unwrap();
        assert!(ours.abs() <= 1e-15, "t {t}: {ours}");
        match gsw::practical_salinity::sp_from_c(0.0, t, 100.0) {
            Ok(reference) => {
                assert!((ours - reference).abs() <= 1e-15, "t {t}: {ours} vs {reference}");
                gsw_values += 1;
            }
            Err(gsw::Error::NegativeSalinity) => {}
            Err(other) => panic!("t {t}: unexpected gsw error {other:?}"),
        }
    }
    assert!(gsw_values > 0);
}
