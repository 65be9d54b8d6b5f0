//! Properties of the planner over random requests: it never panics, and every plan it returns ends on the
//! target, keeps every step within the rate caps, and (for exchange and salt) keeps volumes within the tank.
use chrono::{TimeZone, Utc};
use halotank::planner::{make_plan, Hold, Method, PlanRequest, Ramp, RampShape, RateLimits, StepKind};
use proptest::prelude::*;

/// A method whose source lies beyond the target nine times in ten (u places it between the target and the
/// extreme), and anywhere in SP 0 to 60 otherwise.
fn method(kind: u8, u: f64, wild: bool, from: f64, to: f64, q: Option<f64>, k: f64) -> Method {
    let source = if wild {
        60.0 * u
    } else if to >= from {
        to + (1.0 - u) * (60.0 - to) + 1e-3
    } else {
        to * u
    };
    match kind {
        0 => Method::Exchange {
            source_practical_salinity: source,
        },
        1 => Method::FlowThrough {
            source_practical_salinity: source,
            max_flow_l_min: q,
        },
        _ => Method::Salt {
            top_up_practical_salinity: u,
            dissolve_water_l_per_kg: k,
        },
    }
}

fn shape() -> impl Strategy<Value = RampShape> {
    prop_oneof![
        Just(RampShape::LinearSalinity),
        Just(RampShape::Proportional),
        Just(RampShape::LinearOsmolality),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 300, ..ProptestConfig::default() })]

    #[test]
    fn plans_end_on_target_within_the_caps(
        volume in -10.0..5000.0f64,
        from in -1.0..45.0f64,
        to in 0.0..45.0f64,
        temperature in -4.0..40.0f64,
        interval in 0.1..12.0f64,
        kind in 0u8..3,
        u in 0.0..1.0f64,
        wild in prop::bool::weighted(0.1),
        q in prop::option::of(0.1..500.0f64),
        k in 0.0..10.0f64,
        shape in shape(),
        max_sp in prop::option::of(0.2..5.0f64),
        max_percent in prop::option::of(1.0..50.0f64),
        slow in prop::option::of((1.0..15.0f64, 0.05..1.0f64)),
        hold in prop::option::of((0.0..1.0f64, 0.5..24.0f64)),
    ) {
        let (low, high) = (from.min(to), from.max(to));
        let request = PlanRequest {
            tank_volume_l: volume,
            from_practical_salinity: from,
            to_practical_salinity: to,
            temperature_c: temperature,
            start: Utc.with_ymd_and_hms(2031, 5, 14, 6, 0, 0).unwrap(),
            interval_h: interval,
            method: method(kind, u, wild, from, to, q, k),
            ramp: Ramp { shape, rate: None },
            holds: hold.map(|(f, d)| Hold { practical_salinity: low + f * (high - low), duration_h: d }).into_iter().collect(),
            rate_limits: RateLimits {
                max_rate_sp_per_h: max_sp,
                max_rate_percent_per_h: max_percent,
                slow_below_sp: slow.map(|s| s.0),
                slow_rate_sp_per_h: slow.map(|s| s.1),
                slow_rate_percent_per_h: None,
            },
            salinity_limits: None,
        };
        // Ok or a typed error, never a panic.
        let Ok(plan) = make_plan(&request) else {
            return Ok(());
        };
        if let Some(last) = plan.steps.iter().rev().find(|s| s.kind == StepKind::Change) {
            prop_assert_eq!(last.setpoint_practical_salinity, to);
        }
        for step in plan.steps.iter().filter(|s| s.kind == StepKind::Change) {
            let (a, b, h) = (step.from_practical_salinity, step.setpoint_practical_salinity, step.duration_h);
            // The normal caps hold where the step lies wholly above the slow band (the slow rate replaces them
            // below it).
            let normal_band = slow.is_none_or(|(below, _)| a.min(b) >= below);
            if let (Some(r), true) = (max_sp, normal_band) {
                prop_assert!((b - a).abs() <= r * h * (1.0 + 1e-9) + 1e-9, "{} -> {} in {} h", a, b, h);
            }
            if let (Some(p), true) = (max_percent, normal_band) {
                let ratio = if b < a { b / a } else { a / b };
                let floor = if b < a { (1.0 - p / 100.0).powf(h) } else { 1.0 / (1.0 + p / 100.0).powf(h) };
                prop_assert!(ratio >= floor * (1.0 - 1e-9), "{} -> {} in {} h", a, b, h);
            }
            if let Some((below, rate)) = slow {
                if a.max(b) <= below {
                    prop_assert!((b - a).abs() <= rate * h * (1.0 + 1e-9) + 1e-9);
                }
            }
            for litres in [step.drain_l, step.add_l].into_iter().flatten() {
                prop_assert!(litres >= 0.0 && litres <= volume * 1.05, "{} L", litres);
            }
            if let Some(q) = step.flow_l_min {
                prop_assert!(q.is_finite() && q >= 0.0);
            }
        }
    }
}
