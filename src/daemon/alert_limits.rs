//! A tank's [`AlertLimits`] from its effective species profile and its expected reading interval. Pure.
//!
//! Ranges map one to one (optimum -> warning, tolerance -> critical, salinity and temperature). The rate
//! limit: a profile may give an absolute rate (SP/h), a relative one (% of the current SP per h), or both;
//! [`AlertLimits`] holds one, so with both the stricter at the middle of the salinity optimum is kept. The
//! slower band below a salinity maps the same way. A tank without a species gets only the probe rules.
use crate::alerts::{AlertLimits, Bounds, RateLimit, RateOfChange, SlowerBelow};
use crate::species::profile::SourcedRange;
use crate::species::SpeciesProfile;

/// The limits a tank's water is checked against.
pub fn limits_for_tank(profile: Option<&SpeciesProfile>, expected_interval_s: u64) -> AlertLimits {
    let Some(p) = profile else {
        return AlertLimits {
            expected_interval_s,
            ..AlertLimits::default()
        };
    };
    let mid_sp = (p.salinity_optimum.min + p.salinity_optimum.max) / 2.0;
    let max = stricter(
        p.max_rate_sp_per_h.as_ref().map(|r| r.value),
        p.max_rate_percent_per_h.as_ref().map(|r| r.value),
        mid_sp,
    );
    let slower_below = p.slow_below.as_ref().and_then(|slow| {
        // The band's own middle: halfway between zero and where it starts.
        let max = stricter(
            slow.max_rate_sp_per_h,
            slow.max_rate_percent_per_h,
            slow.below_sp / 2.0,
        )?;
        Some(SlowerBelow {
            practical_salinity: slow.below_sp,
            max,
        })
    });
    AlertLimits {
        salinity_optimum: Some(bounds(&p.salinity_optimum)),
        salinity_tolerance: Some(bounds(&p.salinity_tolerance)),
        temperature_optimum_c: Some(bounds(&p.temperature_optimum_c)),
        temperature_tolerance_c: Some(bounds(&p.temperature_tolerance_c)),
        max_salinity_rate: max.map(|max| RateLimit { max, slower_below }),
        expected_interval_s,
    }
}

fn bounds(range: &SourcedRange) -> Bounds {
    Bounds::new(range.min, range.max)
}

/// One rate from an absolute and a relative maximum: the one allowing less change at `at_sp`.
fn stricter(sp_per_h: Option<f64>, percent_per_h: Option<f64>, at_sp: f64) -> Option<RateOfChange> {
    match (sp_per_h, percent_per_h) {
        (Some(a), Some(pct)) if pct / 100.0 * at_sp.max(0.0) < a => Some(RateOfChange::PercentPerHour(pct)),
        (Some(a), _) => Some(RateOfChange::SpPerHour(a)),
        (None, Some(pct)) => Some(RateOfChange::PercentPerHour(pct)),
        (None, None) => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::species::SpeciesLibrary;

    #[test]
    fn every_embedded_profile_maps_to_limits_the_engine_accepts() {
        let library = SpeciesLibrary::embedded().unwrap();
        for p in library.profiles() {
            let limits = limits_for_tank(Some(p), 30);
            limits.validate().unwrap_or_else(|e| panic!("{}: {e}", p.id));
            assert_eq!(limits.expected_interval_s, 30);
            let tol = limits.salinity_tolerance.unwrap();
            assert_eq!(
                (tol.low, tol.high),
                (p.salinity_tolerance.min, p.salinity_tolerance.max)
            );
            let opt = limits.temperature_optimum_c.unwrap();
            assert_eq!(
                (opt.low, opt.high),
                (p.temperature_optimum_c.min, p.temperature_optimum_c.max)
            );
            // The mapped rate agrees with the profile's own rule at the optimum's middle.
            let mid = (p.salinity_optimum.min + p.salinity_optimum.max) / 2.0;
            match (limits.max_salinity_rate, p.max_rate_sp_per_h_at(mid)) {
                (Some(rate), Some(expected)) => {
                    let got = rate.allowed_sp_per_hour(mid, 0.0);
                    assert!((got - expected).abs() < 1e-9, "{}: {got} vs {expected}", p.id);
                }
                (None, None) => {}
                (got, expected) => panic!("{}: {got:?} vs {expected:?}", p.id),
            }
        }
    }

    #[test]
    fn both_rates_keep_the_stricter_and_a_tank_without_species_gets_probe_rules_only() {
        // 2 SP/h against 10 %/h: at SP 30 the percentage allows 3 SP/h, so 2 SP/h is stricter; at SP 10, 1 SP/h.
        assert_eq!(
            stricter(Some(2.0), Some(10.0), 30.0),
            Some(RateOfChange::SpPerHour(2.0))
        );
        assert_eq!(
            stricter(Some(2.0), Some(10.0), 10.0),
            Some(RateOfChange::PercentPerHour(10.0))
        );
        assert_eq!(
            stricter(None, Some(10.0), 10.0),
            Some(RateOfChange::PercentPerHour(10.0))
        );
        assert_eq!(stricter(None, None, 10.0), None);
        let none = limits_for_tank(None, 45);
        assert_eq!(none.salinity_tolerance, None);
        assert_eq!(none.max_salinity_rate, None);
        assert_eq!(none.expected_interval_s, 45);
    }
}
