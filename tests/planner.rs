//! The acclimation planner against physics outside it: a simulated tank driven through whole plans (mass
//! and salt stepped exactly, EOS-80 densities from the science core), worked examples computed by hand,
//! and the rate caps, holds and shapes checked step by step.
use chrono::{DateTime, TimeZone, Utc};
use halotank::planner::exchange::exchange_volumes;
use halotank::planner::flow::inflow_l_min;
use halotank::planner::salt::salt_to_make_seawater;
use halotank::planner::water::{osmolality_mosm_kg, Water};
use halotank::planner::{
    blend_batch, make_plan, BlendRequest, Hold, Method, Plan, PlanError, PlanRequest, Ramp, RampShape,
    RateLimits, SalinityLimits, StepKind, WarningCode,
};
use halotank::seawater::absolute_salinity::REFERENCE_SALINITY_RATIO_G_KG;
use halotank::seawater::eos80_density::density_eos80;

fn start() -> DateTime<Utc> {
    Utc.with_ymd_and_hms(2031, 5, 14, 6, 0, 0).unwrap()
}

fn request(volume: f64, from: f64, to: f64, method: Method) -> PlanRequest {
    PlanRequest {
        tank_volume_l: volume,
        from_practical_salinity: from,
        to_practical_salinity: to,
        temperature_c: 12.0,
        start: start(),
        interval_h: 2.0,
        method,
        ramp: Ramp {
            shape: RampShape::LinearSalinity,
            rate: None,
        },
        holds: Vec::new(),
        rate_limits: RateLimits {
            max_rate_sp_per_h: Some(1.0),
            ..RateLimits::default()
        },
        salinity_limits: None,
    }
}

/// A tank simulated by its mass and salt content; volume = mass / ρ_EOS-80(SA). Independent of the planner.
struct Tank {
    mass_kg: f64,
    salt_kg: f64,
    temperature_c: f64,
}

fn density_kg_l(sp: f64, t: f64) -> f64 {
    density_eos80(sp, t, 0.0).unwrap() / 1000.0
}

fn fraction(sp: f64) -> f64 {
    sp * REFERENCE_SALINITY_RATIO_G_KG / 1000.0
}

impl Tank {
    fn new(volume_l: f64, sp: f64, t: f64) -> Self {
        let mass_kg = volume_l * density_kg_l(sp, t);
        Self {
            mass_kg,
            salt_kg: mass_kg * fraction(sp),
            temperature_c: t,
        }
    }
    fn practical_salinity(&self) -> f64 {
        self.salt_kg / self.mass_kg * 1000.0 / REFERENCE_SALINITY_RATIO_G_KG
    }
    fn volume_l(&self) -> f64 {
        self.mass_kg / density_kg_l(self.practical_salinity(), self.temperature_c)
    }
    /// Removes `litres` of tank water; returns the salt removed, kg.
    fn drain(&mut self, litres: f64) -> f64 {
        let mass = litres * density_kg_l(self.practical_salinity(), self.temperature_c);
        let salt = mass * self.salt_kg / self.mass_kg;
        self.mass_kg -= mass;
        self.salt_kg -= salt;
        salt
    }
    /// Adds `litres` of water of salinity `sp`; returns the salt added, kg.
    fn add(&mut self, litres: f64, sp: f64) -> f64 {
        let mass = litres * density_kg_l(sp, self.temperature_c);
        let salt = mass * fraction(sp);
        self.mass_kg += mass;
        self.salt_kg += salt;
        salt
    }
    fn add_salt(&mut self, kg: f64) {
        self.mass_kg += kg;
        self.salt_kg += kg;
    }
}

/// Salt held by `volume_l` of water of salinity `sp`, kg.
fn salt_in(volume_l: f64, sp: f64, t: f64) -> f64 {
    volume_l * density_kg_l(sp, t) * fraction(sp)
}

fn change_steps(plan: &Plan) -> impl Iterator<Item = &halotank::planner::Step> {
    plan.steps.iter().filter(|s| s.kind == StepKind::Change)
}

#[test]
fn simulated_tank_follows_a_whole_exchange_plan() {
    // 2,000 L from SP 5 to 30 with SP 34 sea water, 2 h steps at ≤ 1 SP/h, a hold at 12.
    let mut req = request(
        2000.0,
        5.0,
        30.0,
        Method::Exchange {
            source_practical_salinity: 34.0,
        },
    );
    req.holds = vec![Hold {
        practical_salinity: 12.0,
        duration_h: 12.0,
    }];
    let plan = make_plan(&req).unwrap();
    let mut tank = Tank::new(2000.0, 5.0, 12.0);
    let initial_salt = tank.salt_kg;
    let (mut salt_added, mut salt_removed) = (0.0, 0.0);
    for step in &plan.steps {
        salt_removed += tank.drain(step.drain_l.unwrap());
        salt_added += tank.add(step.add_l.unwrap(), 34.0);
        // Each step lands on its setpoint and the level is back at the mark.
        assert!(
            (tank.practical_salinity() - step.setpoint_practical_salinity).abs() < 1e-6,
            "step {}: {} vs {}",
            step.index,
            tank.practical_salinity(),
            step.setpoint_practical_salinity
        );
        assert!((tank.volume_l() - 2000.0).abs() < 1e-6, "{}", tank.volume_l());
    }
    assert!((tank.practical_salinity() - 30.0).abs() < 0.1);
    // Salt: the tank ends holding what 2,000 L at SP 30 holds, within 0.1 %, and the simulated books balance.
    let target_salt = salt_in(2000.0, 30.0, 12.0);
    assert!((tank.salt_kg - target_salt).abs() / target_salt < 1e-3);
    let books = initial_salt + salt_added - salt_removed;
    assert!((books - target_salt).abs() / target_salt < 1e-3);
    // The plan's cumulative water is the simulated source water.
    let added: f64 = plan.steps.iter().map(|s| s.add_l.unwrap()).sum();
    assert!((plan.totals.water_l - added).abs() < 1e-9);
}

#[test]
fn simulated_tank_follows_a_whole_flow_through_plan() {
    // 2,000 L from SP 30 down to 10 with SP 0.2 water, inflow reset every 2 h, ≤ 1 SP/h. The simulation feeds
    // the planned flow in 1 s steps and overflows the excess volume of mixed water after each (explicit,
    // first order; independent of the planner's quadrature).
    let req = request(
        2000.0,
        30.0,
        10.0,
        Method::FlowThrough {
            source_practical_salinity: 0.2,
            max_flow_l_min: Some(200.0),
        },
    );
    let plan = make_plan(&req).unwrap();
    let mut tank = Tank::new(2000.0, 30.0, 12.0);
    let initial_salt = tank.salt_kg;
    let (mut salt_added, mut salt_removed) = (0.0, 0.0);
    let dt_s = 1.0;
    for step in &plan.steps {
        let q = step.flow_l_min.unwrap();
        let n = (step.duration_h * 3600.0 / dt_s).round() as usize;
        for _ in 0..n {
            salt_added += tank.add(q * dt_s / 60.0, 0.2);
            let excess = tank.volume_l() - 2000.0;
            salt_removed += tank.drain(excess);
        }
        assert!(
            (tank.practical_salinity() - step.setpoint_practical_salinity).abs() < 0.02,
            "step {}: {} vs {}",
            step.index,
            tank.practical_salinity(),
            step.setpoint_practical_salinity
        );
    }
    assert!(
        (tank.practical_salinity() - 10.0).abs() < 0.1,
        "{}",
        tank.practical_salinity()
    );
    let target_salt = salt_in(2000.0, 10.0, 12.0);
    assert!((tank.salt_kg - target_salt).abs() / target_salt < 1e-3);
    let books = initial_salt + salt_added - salt_removed;
    assert!((books - tank.salt_kg).abs() / target_salt < 1e-9);
    assert!((tank.volume_l() - 2000.0).abs() < 1e-6);
}

#[test]
fn simulated_tank_follows_a_salt_plan() {
    // 1,500 L from SP 5 to 20 by dry salt dissolved in fresh water (4 L/kg), ≤ 1 SP/h.
    let req = request(
        1500.0,
        5.0,
        20.0,
        Method::Salt {
            top_up_practical_salinity: 0.0,
            dissolve_water_l_per_kg: 4.0,
        },
    );
    let plan = make_plan(&req).unwrap();
    let mut tank = Tank::new(1500.0, 5.0, 12.0);
    for step in &plan.steps {
        tank.drain(step.drain_l.unwrap());
        tank.add_salt(step.salt_kg.unwrap());
        tank.add(step.add_l.unwrap(), 0.0);
        assert!((tank.practical_salinity() - step.setpoint_practical_salinity).abs() < 1e-6);
        assert!((tank.volume_l() - 1500.0).abs() < 1e-6);
    }
    let target_salt = salt_in(1500.0, 20.0, 12.0);
    assert!((tank.salt_kg - target_salt).abs() / target_salt < 1e-3);
    let last = plan.steps.last().unwrap();
    assert_eq!(last.cumulative_salt_kg, plan.totals.salt_kg);
}

#[test]
fn worked_example_one_exchange_from_30_to_20_with_fresh_water() {
    // Worked by hand. 1,000 L at 10 °C from SP 30 to 20 with SP 0.2 water, one exchange.
    // Densities (EOS-80, Python `seawater` 3.3.5 sw.dens at 0 dbar, tests/vectors/eos80_density_seawater.csv):
    // ρ(30) = 1023.0507, ρ(20) = 1015.2690; ρ(0.2) = 999.8593 kg/m³ interpolated linearly between the
    // table's SP 0.01 (999.7098) and 0.5 (1000.0955).
    // Mass fractions scale with SP (SA = 35.16504/35 · SP), so (w_s − w_b)/(w_s − w_a) = 19.8/29.8 = 0.664430.
    // Kept mass R = ρ(20)·V · 0.664430 = 1015.2690 · 0.664430 = 674.575 kg; drained D = 1000 − 674.575/1.0230507
    // = 340.62 L. Added mass = 1015.269 − 674.575 = 340.694 kg, A = 340.694/0.9998593 = 340.74 L.
    // The linear shortcut V·(30 − 20)/(30 − 0.2) = 335.57 L: about a third, 5 L short once densities count.
    let t = 10.0;
    let v = exchange_volumes(
        1000.0,
        &Water::new(30.0, t).unwrap(),
        &Water::new(0.2, t).unwrap(),
        &Water::new(20.0, t).unwrap(),
    )
    .unwrap();
    assert!((v.drain_l - 340.62).abs() < 0.02, "{v:?}");
    assert!((v.add_l - 340.74).abs() < 0.02, "{v:?}");
    // The same through the planner: a single step when the rate allows 10 SP in one interval.
    let mut req = request(
        1000.0,
        30.0,
        20.0,
        Method::Exchange {
            source_practical_salinity: 0.2,
        },
    );
    req.temperature_c = t;
    req.interval_h = 1.0;
    req.rate_limits.max_rate_sp_per_h = Some(10.0);
    let plan = make_plan(&req).unwrap();
    assert_eq!(plan.steps.len(), 1);
    assert!((plan.totals.drain_l.unwrap() - 340.62).abs() < 0.02);
    // In many small steps the same change needs more water: continuous dilution tends to
    // V·ln(29.8/19.8) = 408.9 L (worked by hand), so 1 SP steps land between the two.
    req.rate_limits.max_rate_sp_per_h = Some(1.0);
    let stepped = make_plan(&req).unwrap();
    let total = stepped.totals.drain_l.unwrap();
    assert_eq!(stepped.steps.len(), 10);
    assert!(total > 341.0 && total < 415.0, "{total}");
}

#[test]
fn worked_example_salt_for_fresh_water_to_35() {
    // TEOS-10 (IOC et al. 2010, §2.4; Millero et al. 2008): SP 35 seawater of reference composition holds
    // 35.16504 g of salt per kilogram of seawater. Worked by hand: 100 L of fresh water at 10 °C
    // (ρ = 999.7019 kg/m³, EOS-80 SP 0 row of tests/vectors) is 99.97019 kg; m = 99.97019 · 0.03516504 /
    // (1 − 0.03516504) = 3.64358 kg.
    let fresh = Water::new(0.0, 10.0).unwrap();
    let m = salt_to_make_seawater(100.0, &fresh, 35.0).unwrap();
    assert!((m - 3.643_58).abs() < 1e-4, "{m}");
    let per_kg = m / (m + 100.0 * fresh.density_kg_l) * 1000.0;
    assert!((per_kg - 35.165).abs() < 1e-3, "{per_kg} g/kg");
}

#[test]
fn worked_example_flow_matches_the_well_mixed_dilution_law_within_the_density_ratio() {
    // Well-mixed tank, constant volume (common practice): dS/dt = Q/V (S_s − S) gives
    // Q = V/t · ln((S_s − S_a)/(S_s − S_b)). 1,000 L from SP 30 to 20 with fresh water in 10 h:
    // Q = 1000/600 · ln(30/20) = 0.675775 L/min (worked by hand). With the mass balance the integrand carries
    // ρ(SA)/ρ_s, which at 10 °C lies between ρ(20)/ρ(0) = 1015.2690/999.7019 = 1.015572 and
    // ρ(30)/ρ(0) = 1023.0507/999.7019 = 1.023356 (tests/vectors), so Q lies between 0.68630 and 0.69156.
    let q = inflow_l_min(1000.0, 30.0, 20.0, &Water::new(0.0, 10.0).unwrap(), 10.0, 10.0).unwrap();
    assert!(q > 0.686_30 && q < 0.691_56, "{q}");
}

#[test]
fn blend_by_mass_balance() {
    // Worked by hand at 10 °C: 500 L of SP 20 from SP 0.5 and SP 35 (ρ from tests/vectors: 1000.0955,
    // 1026.9520, batch 1015.2690 kg/m³). Fractions scale with SP: X_a = ρ_t V (35 − 20)/(35 − 0.5) =
    // 507.6345 · 0.434783 = 220.711 kg → 220.690 L; X_b = 507.6345 − 220.711 = 286.924 kg → 279.394 L.
    let batch = blend_batch(&BlendRequest {
        batch_volume_l: 500.0,
        target_practical_salinity: 20.0,
        source_a_practical_salinity: 0.5,
        source_b_practical_salinity: 35.0,
        temperature_c: 10.0,
    })
    .unwrap();
    assert!((batch.source_a_l - 220.690).abs() < 0.01, "{batch:?}");
    assert!((batch.source_b_l - 279.394).abs() < 0.01, "{batch:?}");
    assert!(matches!(
        blend_batch(&BlendRequest {
            batch_volume_l: 500.0,
            target_practical_salinity: 36.0,
            source_a_practical_salinity: 0.5,
            source_b_practical_salinity: 35.0,
            temperature_c: 10.0,
        }),
        Err(PlanError::BlendOutOfReach { .. })
    ));
}

#[test]
fn rate_caps_and_slow_band_are_respected_at_every_step() {
    // Raising 5 → 30 at ≤ 2 SP/h with ≤ 0.5 SP/h below SP 10.
    let mut req = request(
        2000.0,
        5.0,
        30.0,
        Method::Exchange {
            source_practical_salinity: 34.0,
        },
    );
    req.rate_limits = RateLimits {
        max_rate_sp_per_h: Some(2.0),
        slow_below_sp: Some(10.0),
        slow_rate_sp_per_h: Some(0.5),
        ..RateLimits::default()
    };
    let plan = make_plan(&req).unwrap();
    let mut slow_steps = 0;
    for step in change_steps(&plan) {
        let rate = (step.setpoint_practical_salinity - step.from_practical_salinity).abs() / step.duration_h;
        assert!(rate <= 2.0 + 1e-9, "step {} at {rate} SP/h", step.index);
        if step.setpoint_practical_salinity <= 10.0 {
            slow_steps += 1;
            assert!(rate <= 0.5 + 1e-9, "slow step {} at {rate} SP/h", step.index);
        }
    }
    // 5 SP at 0.5 SP/h is 10 h: five 2 h steps in the slow band.
    assert_eq!(slow_steps, 5);
    assert!((plan.steps.last().unwrap().setpoint_practical_salinity - 30.0).abs() < 1e-12);

    // Lowering 30 → 2 at ≤ 3 SP/h and ≤ 10 %/h, with ≤ 5 %/h below SP 8.
    let mut req = request(
        2000.0,
        30.0,
        2.0,
        Method::Exchange {
            source_practical_salinity: 0.0,
        },
    );
    req.rate_limits = RateLimits {
        max_rate_sp_per_h: Some(3.0),
        max_rate_percent_per_h: Some(10.0),
        slow_below_sp: Some(8.0),
        slow_rate_percent_per_h: Some(5.0),
        ..RateLimits::default()
    };
    let plan = make_plan(&req).unwrap();
    for step in change_steps(&plan) {
        let (a, b, h) = (
            step.from_practical_salinity,
            step.setpoint_practical_salinity,
            step.duration_h,
        );
        assert!(a - b <= 3.0 * h + 1e-9);
        assert!(b >= a * 0.9_f64.powf(h) - 1e-9, "step {}: {a} -> {b}", step.index);
        if a <= 8.0 {
            assert!(
                b >= a * 0.95_f64.powf(h) - 1e-9,
                "slow step {}: {a} -> {b}",
                step.index
            );
        }
    }
}

#[test]
fn holds_are_placed_at_their_salinity() {
    let mut req = request(
        2000.0,
        5.0,
        30.0,
        Method::Exchange {
            source_practical_salinity: 34.0,
        },
    );
    req.holds = vec![
        Hold {
            practical_salinity: 12.0,
            duration_h: 12.0,
        },
        Hold {
            practical_salinity: 30.0,
            duration_h: 6.0,
        },
    ];
    let plan = make_plan(&req).unwrap();
    let i = plan.steps.iter().position(|s| s.kind == StepKind::Hold).unwrap();
    let hold = &plan.steps[i];
    assert_eq!(hold.setpoint_practical_salinity, 12.0);
    assert_eq!(hold.duration_h, 12.0);
    assert_eq!(plan.steps[i - 1].setpoint_practical_salinity, 12.0);
    assert_eq!(plan.steps[i + 1].time - hold.time, chrono::Duration::hours(12));
    assert_eq!(hold.drain_l, Some(0.0));
    let last = plan.steps.last().unwrap();
    assert!(last.kind == StepKind::Hold && last.setpoint_practical_salinity == 30.0);
    let sum: f64 = plan.steps.iter().map(|s| s.duration_h).sum();
    assert_eq!(plan.total_duration_h, sum);
    assert_eq!(
        plan.end - plan.start,
        chrono::Duration::milliseconds((sum * 3.6e6).round() as i64)
    );
    // A hold off the path is refused.
    req.holds = vec![Hold {
        practical_salinity: 2.0,
        duration_h: 1.0,
    }];
    assert!(matches!(make_plan(&req), Err(PlanError::HoldOffPath { .. })));
}

#[test]
fn infeasible_flow_plans_say_why_and_what_would_work() {
    // Source not beyond the target: SP 28 cannot raise a tank to 30.
    let req = request(
        2000.0,
        5.0,
        30.0,
        Method::FlowThrough {
            source_practical_salinity: 28.0,
            max_flow_l_min: None,
        },
    );
    match make_plan(&req) {
        Err(PlanError::SourceNotBeyondTarget { suggestion, .. }) => {
            assert!(suggestion.contains("above SP 30"))
        }
        other => panic!("{other:?}"),
    }
    // A 5 L/min pump cannot follow 1 SP/h near the top with SP 34 water.
    let req = request(
        2000.0,
        5.0,
        30.0,
        Method::FlowThrough {
            source_practical_salinity: 34.0,
            max_flow_l_min: Some(5.0),
        },
    );
    let shortfall = match make_plan(&req) {
        Err(PlanError::FlowAboveMaximum(s)) => s,
        other => panic!("{other:?}"),
    };
    assert!(shortfall.required_flow_l_min > 5.0);
    assert!(shortfall.reachable_practical_salinity > shortfall.from_practical_salinity);
    assert!(shortfall.reachable_practical_salinity < shortfall.to_practical_salinity);
    // What it says would work does work: the stated pump, and the stated source.
    let mut bigger = req.clone();
    bigger.method = Method::FlowThrough {
        source_practical_salinity: 34.0,
        max_flow_l_min: Some(shortfall.required_flow_l_min * (1.0 + 1e-9)),
    };
    assert!(make_plan(&bigger).is_ok());
    let source = shortfall.workable_source_practical_salinity.unwrap();
    assert!(source > 34.0);
    let mut saltier = req.clone();
    saltier.method = Method::FlowThrough {
        source_practical_salinity: source,
        max_flow_l_min: Some(5.0),
    };
    assert!(make_plan(&saltier).is_ok());
}

#[test]
fn proportional_shape_slows_toward_fresh_water() {
    // 10 %/h compounded hourly from 30 toward 5: each hour keeps 90 % of the last.
    let mut req = request(
        2000.0,
        30.0,
        5.0,
        Method::Exchange {
            source_practical_salinity: 0.0,
        },
    );
    req.interval_h = 1.0;
    req.ramp = Ramp {
        shape: RampShape::Proportional,
        rate: Some(10.0),
    };
    req.rate_limits = RateLimits::default();
    let plan = make_plan(&req).unwrap();
    let drops: Vec<f64> = change_steps(&plan)
        .map(|s| s.from_practical_salinity - s.setpoint_practical_salinity)
        .collect();
    assert!(drops.windows(2).all(|w| w[1] < w[0]), "{drops:?}");
    for step in change_steps(&plan).take(drops.len() - 1) {
        assert!((step.setpoint_practical_salinity / step.from_practical_salinity - 0.9).abs() < 1e-12);
    }
    // ln(5/30)/ln(0.9) = 17.01 h: 18 steps (worked by hand).
    assert_eq!(drops.len(), 18);
    assert!(plan.warnings.iter().any(|w| w.code == WarningCode::NoRateLimit));
}

#[test]
fn osmolality_shape_has_equal_osmolality_steps() {
    let mut req = request(
        2000.0,
        5.0,
        30.0,
        Method::Exchange {
            source_practical_salinity: 34.0,
        },
    );
    req.ramp = Ramp {
        shape: RampShape::LinearOsmolality,
        rate: Some(20.0),
    };
    req.rate_limits.max_rate_sp_per_h = Some(2.0);
    let plan = make_plan(&req).unwrap();
    let steps: Vec<_> = change_steps(&plan).collect();
    for step in &steps[..steps.len() - 1] {
        let before = osmolality_mosm_kg(step.from_practical_salinity, 12.0).unwrap();
        assert!(
            (step.setpoint_osmolality_mosm_kg - before - 40.0).abs() < 1e-6,
            "step {}",
            step.index
        );
    }
    // Seawater is roughly 29-30 mOsm/kg per SP, so 40 mOsm/kg per 2 h stays under 2 SP/h and the cap never
    // cuts; the SP steps shrink slightly as salinity rises (the osmotic coefficient rises).
    let last = steps.last().unwrap();
    assert!((last.setpoint_practical_salinity - 30.0).abs() < 1e-12);
}

#[test]
fn limits_and_freezing_are_flagged() {
    let mut req = request(
        2000.0,
        30.0,
        2.0,
        Method::Exchange {
            source_practical_salinity: 0.0,
        },
    );
    req.temperature_c = 0.2;
    req.salinity_limits = Some(SalinityLimits {
        optimum: (8.0, 30.0),
        tolerance: (3.0, 35.0),
    });
    let plan = make_plan(&req).unwrap();
    let codes: Vec<_> = plan.warnings.iter().map(|w| w.code).collect();
    assert!(codes.contains(&WarningCode::TargetOutsideTolerance), "{codes:?}");
    // UNESCO 1983: SP 2 freezes at −0.11 °C, within 1 °C of 0.2 °C.
    assert!(codes.contains(&WarningCode::NearFreezing), "{codes:?}");
    assert!(plan.caution.contains("calibrated meter"));
}

#[test]
fn bad_input_is_a_typed_error() {
    let base = request(
        2000.0,
        5.0,
        30.0,
        Method::Exchange {
            source_practical_salinity: 34.0,
        },
    );
    for (field, value) in [
        ("volume", -1.0),
        ("volume", f64::NAN),
        ("from", -2.0),
        ("interval", 0.0),
    ] {
        let mut r = base.clone();
        match field {
            "volume" => r.tank_volume_l = value,
            "from" => r.from_practical_salinity = value,
            _ => r.interval_h = value,
        }
        assert!(
            matches!(make_plan(&r), Err(PlanError::InvalidInput { .. })),
            "{field} {value}"
        );
    }
    let mut r = base.clone();
    r.rate_limits = RateLimits::default();
    assert!(matches!(make_plan(&r), Err(PlanError::NoRate)));
    let mut r = base.clone();
    r.method = Method::Salt {
        top_up_practical_salinity: 0.0,
        dissolve_water_l_per_kg: 4.0,
    };
    r.from_practical_salinity = 31.0;
    assert!(matches!(make_plan(&r), Err(PlanError::MethodCannotReach { .. })));
    let mut r = base;
    r.temperature_c = 80.0;
    assert!(matches!(make_plan(&r), Err(PlanError::Science(_))));
}
