//! Property tests of PSS-78 as implemented: SP rises with conductivity, and C -> SP -> C round-trips.
use halotank::seawater::practical_salinity::{
    conductivity_from_practical_salinity, practical_salinity_from_conductivity,
};
use proptest::prelude::*;
use proptest::test_runner::FileFailurePersistence;

/// Conductivity (mS/cm) drawn evenly in log between 0.005 (fresh water) and 70 (strong brine).
fn conductivity() -> impl Strategy<Value = f64> {
    (0.005_f64.ln()..70.0_f64.ln()).prop_map(f64::exp)
}

proptest! {
    #![proptest_config(ProptestConfig {
        cases: 2000,
        failure_persistence: Some(Box::new(FileFailurePersistence::WithSource("regressions"))),
        ..ProptestConfig::default()
    })]

    #[test]
    fn sp_rises_with_conductivity(
        c in conductivity(),
        step in 1e-6_f64..1.0,
        t in -3.0_f64..=45.0,
        p in 0.0_f64..500.0,
    ) {
        let c2 = c * (1.0 + step);
        let sp1 = practical_salinity_from_conductivity(c, t, p).unwrap();
        let sp2 = practical_salinity_from_conductivity(c2, t, p).unwrap();
        prop_assert!(sp2 > sp1, "C {} -> {}, C {} -> {}", c, sp1, c2, sp2);
    }

    #[test]
    fn conductivity_round_trips_through_sp(
        c in conductivity(),
        t in -3.0_f64..=45.0,
        p in 0.0_f64..500.0,
    ) {
        let sp = practical_salinity_from_conductivity(c, t, p).unwrap();
        let back = conductivity_from_practical_salinity(sp, t, p).unwrap();
        prop_assert!((back / c - 1.0).abs() <= 1e-9, "C {} -> SP {} -> C {}", c, sp, back);
    }

    #[test]
    fn sp_round_trips_through_conductivity(
        sp in 0.0_f64..50.0,
        t in -3.0_f64..=45.0,
        p in 0.0_f64..500.0,
    ) {
        let c = conductivity_from_practical_salinity(sp, t, p).unwrap();
        let back = practical_salinity_from_conductivity(c, t, p).unwrap();
        prop_assert!((back - sp).abs() <= 1e-10, "SP {} -> C {} -> SP {}", sp, c, back);
    }

    #[test]
    fn bad_readings_give_errors_never_nan(
        c in prop_oneof![Just(f64::NAN), Just(f64::NEG_INFINITY), -1e6_f64..-1e-12, 0.0_f64..1e4],
        t in prop_oneof![Just(f64::NAN), -100.0_f64..100.0],
        p in prop_oneof![Just(f64::NAN), -1e4_f64..2e4],
    ) {
        if let Ok(sp) = practical_salinity_from_conductivity(c, t, p) {
            prop_assert!(sp.is_finite() && sp >= 0.0, "C {} t {} p {} -> {}", c, t, p, sp);
        }
    }
}
