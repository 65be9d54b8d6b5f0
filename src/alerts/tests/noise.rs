//! Property: noise smaller than the hysteresis band never makes an alert flap.
//!
//! The salinity-optimum rule raises when a reading x > R and clears when x <= C = R − h. With noise
//! |n| <= a < h/2 on a trend, a raise needs trend > R − a and a clear needs trend <= C + a < R − a. So a
//! reference Schmitt trigger on the noise-free trend with those narrowed levels flips at least as often
//! as the engine: at most one raise and one clear per crossing of the trend, whatever the noise, the
//! minimum duration or the clear hold.
use proptest::prelude::*;

use super::*;

const RAISE_SP: f64 = 32.0;

fn rig(h: f64, min_duration_s: u64, clear_after_s: u64) -> Rig {
    let settings = only(&[AlertKind::SalinityOptimum], |s| {
        s.salinity_hysteresis_sp = Some(h);
        let rule = s.rules.get_mut(AlertKind::SalinityOptimum);
        rule.min_duration_s = Some(min_duration_s);
        rule.clear_after_s = Some(clear_after_s);
    });
    Rig::new(sea_limits(), settings)
}

/// Feeds `trend + noise` once a minute; returns (engine raises, engine clears).
fn run(rig: &mut Rig, trend: &[f64], noise: &[f64], a: f64) -> (usize, usize) {
    let (mut raises, mut clears) = (0, 0);
    for (i, (&x, &n)) in trend.iter().zip(noise.iter().cycle()).enumerate() {
        for e in rig.read(i as i64 * 60, x + a * n, 12.0) {
            match e {
                AlertEvent::Raised { .. } | AlertEvent::Recurred { .. } => raises += 1,
                AlertEvent::Cleared { .. } => clears += 1,
                _ => {}
            }
        }
    }
    (raises, clears)
}

/// Flips of a Schmitt trigger on the noise-free trend with the levels narrowed by the noise.
fn reference(trend: &[f64], h: f64, a: f64) -> (usize, usize) {
    let (mut on, mut raises, mut clears) = (false, 0, 0);
    for &x in trend {
        if !on && x > RAISE_SP - a {
            on = true;
            raises += 1;
        } else if on && x <= RAISE_SP - h + a {
            on = false;
            clears += 1;
        }
    }
    (raises, clears)
}

/// A trend of plateaus (each held 1..30 readings) between SP 30 and 34, so only the upper limit matters.
fn trend_strategy() -> impl Strategy<Value = Vec<f64>> {
    prop::collection::vec((30.0f64..34.0, 1usize..30), 1..25).prop_map(|plateaus| {
        plateaus
            .into_iter()
            .flat_map(|(x, n)| std::iter::repeat_n(x, n))
            .collect()
    })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 256, ..ProptestConfig::default() })]

    #[test]
    fn noise_inside_the_band_flips_no_more_than_the_trend(
        trend in trend_strategy(),
        noise in prop::collection::vec(-1.0f64..=1.0, 1..64),
        h in 0.2f64..1.0,
        fraction in 0.0f64..0.99,
        min_duration_s in prop::sample::select(vec![0u64, 60, 300]),
        clear_after_s in prop::sample::select(vec![0u64, 120]),
    ) {
        let a = fraction * h / 2.0;
        let mut rig = rig(h, min_duration_s, clear_after_s);
        let (raises, clears) = run(&mut rig, &trend, &noise, a);
        let (ref_raises, ref_clears) = reference(&trend, h, a);
        prop_assert!(raises <= ref_raises, "raises {raises} > trend crossings {ref_raises}");
        prop_assert!(clears <= ref_clears, "clears {clears} > trend crossings {ref_clears}");
        prop_assert!(raises >= clears && raises <= clears + 1);
        // And it does raise: with no minimum duration, any reading certainly above the limit raises.
        if min_duration_s == 0 && trend.iter().any(|&x| x > RAISE_SP + a) {
            prop_assert!(raises >= 1);
        }
    }

    #[test]
    fn a_trend_sitting_on_the_threshold_raises_at_most_once_and_never_clears(
        noise in prop::collection::vec(-1.0f64..=1.0, 10..400),
        h in 0.2f64..1.0,
        fraction in 0.0f64..0.99,
        offset in -1.0f64..=1.0,
    ) {
        let a = fraction * h / 2.0;
        // Anywhere within the noise amplitude of the raise level.
        let trend = vec![RAISE_SP + offset * a; noise.len()];
        let mut rig = rig(h, 0, 0);
        let (raises, clears) = run(&mut rig, &trend, &noise, a);
        prop_assert!(raises <= 1);
        prop_assert_eq!(clears, 0);
    }
}

#[test]
fn without_hysteresis_the_same_noise_would_flap() {
    // The contrast that makes the property meaningful: a bare threshold (no band) on the same kind of signal
    // flips many times.
    let mut next = noise(3);
    let values: Vec<f64> = (0..200).map(|_| RAISE_SP + 0.1 * next()).collect();
    let flips = values
        .windows(2)
        .filter(|w| (w[0] > RAISE_SP) != (w[1] > RAISE_SP))
        .count();
    assert!(flips > 20, "{flips}");
    let mut rig = rig(0.3, 0, 0);
    let (raises, clears) = run(&mut rig, &values, &[0.0], 0.0);
    assert_eq!((raises, clears), (1, 0));
}
