//! Salinity-rate rule: the rate of change of practical salinity over a sliding window, as a
//! least-squares slope, against the species' maximum safe rate.
//!
//! Readings are averaged into time buckets (1/60 of the window each, at least 1 s), so the window always
//! fits in a fixed ring of [`RATE_BUCKETS`] buckets whatever the reading rate. The slope is the
//! count-weighted least-squares fit of bucket mean salinity on bucket mean time; it is judged only once
//! the readings span `min_span` and fill at least three buckets, so a single noisy reading cannot raise it.
use crate::alerts::detector::Level;
use crate::alerts::limits::RateLimit;
use crate::alerts::observation::Observation;
use crate::alerts::ring::Ring;

/// Buckets kept (60 per window, plus room for the partial ones at the ends).
pub const RATE_BUCKETS: usize = 64;
/// Buckets per window.
const BUCKETS_PER_WINDOW: i64 = 60;
/// Milliseconds per hour.
const MS_PER_HOUR: f64 = 3_600_000.0;

#[derive(Debug, Clone, Copy, PartialEq, Default)]
struct Bucket {
    /// Time of the bucket's first reading, ms.
    start_ms: i64,
    count: u32,
    /// Sum of (reading time − start), ms.
    sum_offset_ms: f64,
    sum_sp: f64,
}

/// The fitted rate of change.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Slope {
    /// SP per hour (signed).
    pub sp_per_hour: f64,
    /// Span of the readings fitted, s.
    pub span_s: f64,
}

/// The readings of one tank's rate window.
#[derive(Debug, Clone, Default)]
pub struct RateWindow {
    buckets: Ring<Bucket, RATE_BUCKETS>,
    newest_ms: i64,
}

impl RateWindow {
    /// Adds a reading (times must not go backwards; the engine ensures it).
    pub fn push(&mut self, t_ms: i64, practical_salinity: f64, window_ms: i64) {
        let width_ms = (window_ms / BUCKETS_PER_WINDOW).max(1000);
        self.newest_ms = t_ms;
        if let Some(b) = self.buckets.last_mut() {
            if t_ms >= b.start_ms && t_ms - b.start_ms < width_ms {
                b.count += 1;
                b.sum_offset_ms += (t_ms - b.start_ms) as f64;
                b.sum_sp += practical_salinity;
                return;
            }
        }
        self.buckets.push(Bucket {
            start_ms: t_ms,
            count: 1,
            sum_offset_ms: 0.0,
            sum_sp: practical_salinity,
        });
    }

    /// The least-squares slope over the readings of the last `window_ms`, if they span `min_span_ms`.
    pub fn slope(&self, window_ms: i64, min_span_ms: i64) -> Option<Slope> {
        let from_ms = self.newest_ms.saturating_sub(window_ms);
        let mut n_buckets = 0u32;
        let mut earliest_ms = i64::MAX;
        let (mut sw, mut swx, mut swy) = (0.0, 0.0, 0.0);
        for b in self.buckets.iter().filter(|b| b.start_ms >= from_ms) {
            let w = f64::from(b.count);
            let x = self.x_hours(b);
            sw += w;
            swx += w * x;
            swy += b.sum_sp;
            n_buckets += 1;
            earliest_ms = earliest_ms.min(b.start_ms);
        }
        let span_ms = self.newest_ms.saturating_sub(earliest_ms);
        if n_buckets < 3 || span_ms < min_span_ms {
            return None;
        }
        let (x_mean, y_mean) = (swx / sw, swy / sw);
        let (mut sxx, mut sxy) = (0.0, 0.0);
        for b in self.buckets.iter().filter(|b| b.start_ms >= from_ms) {
            let w = f64::from(b.count);
            let dx = self.x_hours(b) - x_mean;
            let dy = b.sum_sp / w - y_mean;
            sxx += w * dx * dx;
            sxy += w * dx * dy;
        }
        if sxx <= 0.0 || !sxx.is_finite() {
            return None;
        }
        Some(Slope {
            sp_per_hour: sxy / sxx,
            span_s: span_ms as f64 / 1000.0,
        })
    }

    /// Bucket mean time relative to the newest reading, hours.
    fn x_hours(&self, b: &Bucket) -> f64 {
        let mean_ms = (b.start_ms - self.newest_ms) as f64 + b.sum_offset_ms / f64::from(b.count);
        mean_ms / MS_PER_HOUR
    }
}

/// Raise when |slope| exceeds the allowed rate at this salinity; clear at or below `clear_fraction` of it.
pub fn level(
    slope: Option<Slope>,
    limit: &RateLimit,
    practical_salinity: f64,
    percent_floor_sp: f64,
    clear_fraction: f64,
) -> (Level, Observation) {
    let Some(slope) = slope else {
        return (Level::Unknown, Observation::None);
    };
    let allowed = limit.allowed_sp_per_hour(practical_salinity, percent_floor_sp);
    let clear = allowed * clear_fraction;
    let magnitude = slope.sp_per_hour.abs();
    let level = if magnitude > allowed {
        Level::Raise
    } else if magnitude <= clear {
        Level::Clear
    } else {
        Level::Hold
    };
    let observation = Observation::Rate {
        rate_sp_per_h: slope.sp_per_hour,
        allowed_sp_per_h: allowed,
        clear_sp_per_h: clear,
        span_s: slope.span_s,
        practical_salinity,
    };
    (level, observation)
}

#[cfg(test)]
mod tests {
    use super::*;

    const WINDOW_MS: i64 = 1_800_000;

    #[test]
    fn recovers_a_linear_ramp_exactly() {
        let mut w = RateWindow::default();
        // 2 SP/h for 40 min, one reading a minute.
        for i in 0..=40 {
            let t = i * 60_000;
            w.push(t, 30.0 + 2.0 * t as f64 / MS_PER_HOUR, WINDOW_MS);
        }
        let s = w.slope(WINDOW_MS, 600_000).unwrap();
        assert!((s.sp_per_hour - 2.0).abs() < 1e-9, "{s:?}");
        assert!((s.span_s - 1800.0).abs() < 1e-9, "{s:?}");
    }

    #[test]
    fn fast_readings_are_bucketed_and_still_fit() {
        let mut w = RateWindow::default();
        // One reading a second for 40 minutes: 2400 readings into a 64-bucket ring.
        for i in 0..2400 {
            let t = i * 1000;
            w.push(t, 20.0 - 1.5 * t as f64 / MS_PER_HOUR, WINDOW_MS);
        }
        let s = w.slope(WINDOW_MS, 600_000).unwrap();
        assert!((s.sp_per_hour + 1.5).abs() < 1e-6, "{s:?}");
        assert!(s.span_s > 1700.0, "{s:?}");
    }

    #[test]
    fn needs_the_minimum_span() {
        let mut w = RateWindow::default();
        for i in 0..5 {
            w.push(i * 60_000, 30.0 + i as f64, WINDOW_MS);
        }
        assert_eq!(w.slope(WINDOW_MS, 600_000), None);
        assert!(w.slope(WINDOW_MS, 240_000).is_some());
    }
}
