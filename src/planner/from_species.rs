//! Rate and salinity limits of a plan taken from a species profile.
use super::{RateLimits, SalinityLimits};
use crate::species::SpeciesProfile;

/// The profile's maximum rates (normal and below its slow threshold) as planner limits.
pub fn rate_limits_of(profile: &SpeciesProfile) -> RateLimits {
    RateLimits {
        max_rate_sp_per_h: profile.max_rate_sp_per_h.as_ref().map(|r| r.value),
        max_rate_percent_per_h: profile.max_rate_percent_per_h.as_ref().map(|r| r.value),
        slow_below_sp: profile.slow_below.as_ref().map(|s| s.below_sp),
        slow_rate_sp_per_h: profile.slow_below.as_ref().and_then(|s| s.max_rate_sp_per_h),
        slow_rate_percent_per_h: profile.slow_below.as_ref().and_then(|s| s.max_rate_percent_per_h),
    }
}

/// The profile's salinity optimum and tolerance as planner limits.
pub fn salinity_limits_of(profile: &SpeciesProfile) -> SalinityLimits {
    SalinityLimits {
        optimum: (profile.salinity_optimum.min, profile.salinity_optimum.max),
        tolerance: (profile.salinity_tolerance.min, profile.salinity_tolerance.max),
    }
}

/// `explicit` where the user gave a limit, else the species' own.
pub fn merge_rate_limits(explicit: RateLimits, species: RateLimits) -> RateLimits {
    let given = explicit.max_rate_sp_per_h.is_some() || explicit.max_rate_percent_per_h.is_some();
    let slow_given = explicit.slow_below_sp.is_some();
    RateLimits {
        max_rate_sp_per_h: if given {
            explicit.max_rate_sp_per_h
        } else {
            species.max_rate_sp_per_h
        },
        max_rate_percent_per_h: if given {
            explicit.max_rate_percent_per_h
        } else {
            species.max_rate_percent_per_h
        },
        slow_below_sp: if slow_given {
            explicit.slow_below_sp
        } else {
            species.slow_below_sp
        },
        slow_rate_sp_per_h: if slow_given {
            explicit.slow_rate_sp_per_h
        } else {
            species.slow_rate_sp_per_h
        },
        slow_rate_percent_per_h: if slow_given {
            explicit.slow_rate_percent_per_h
        } else {
            species.slow_rate_percent_per_h
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::species::SpeciesLibrary;

    #[test]
    fn shrimp_postlarvae_limits_come_from_the_library() {
        // The built-in library gives whiteleg shrimp postlarvae a percentage rate (McGraw et al. 2002).
        let library = SpeciesLibrary::embedded().unwrap();
        let shrimp = library.get("whiteleg_shrimp_pl").unwrap();
        let limits = rate_limits_of(shrimp);
        assert_eq!(
            limits.max_rate_percent_per_h,
            shrimp.max_rate_percent_per_h.as_ref().map(|r| r.value)
        );
        assert!(limits.max_rate_percent_per_h.is_some());
        let salinity = salinity_limits_of(shrimp);
        assert_eq!(
            salinity.tolerance,
            (shrimp.salinity_tolerance.min, shrimp.salinity_tolerance.max)
        );
    }

    #[test]
    fn explicit_limits_win_over_the_species() {
        let species = RateLimits {
            max_rate_sp_per_h: Some(1.0),
            slow_below_sp: Some(5.0),
            slow_rate_sp_per_h: Some(0.2),
            ..RateLimits::default()
        };
        let explicit = RateLimits {
            max_rate_percent_per_h: Some(10.0),
            ..RateLimits::default()
        };
        let merged = merge_rate_limits(explicit, species);
        assert_eq!(merged.max_rate_sp_per_h, None);
        assert_eq!(merged.max_rate_percent_per_h, Some(10.0));
        assert_eq!(merged.slow_below_sp, Some(5.0));
        assert_eq!(merged.slow_rate_sp_per_h, Some(0.2));
    }
}
