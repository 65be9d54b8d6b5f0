//! A fixed-bucket histogram (cumulative counts per upper bound, sum and count), as the Prometheus
//! exposition format writes one.
use std::time::Duration;

/// Upper bounds of the writer's batch-size histogram, rows.
pub const BATCH_SIZE_BOUNDS: &[f64] = &[1.0, 2.0, 5.0, 10.0, 20.0, 50.0, 100.0, 200.0, 500.0, 1000.0];
/// Upper bounds of the writer's commit-latency histogram, seconds.
pub const COMMIT_LATENCY_BOUNDS: &[f64] = &[
    0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1.0, 2.5, 5.0, 10.0,
];

/// Observations counted into buckets `value <= bound` (the last, `+Inf`, is `count`).
#[derive(Debug, Clone, PartialEq)]
pub struct Histogram {
    bounds: &'static [f64],
    /// Per bucket (not cumulative), one per bound.
    counts: Vec<u64>,
    sum: f64,
    count: u64,
}

impl Histogram {
    /// An empty histogram with these upper bounds (ascending).
    pub fn new(bounds: &'static [f64]) -> Self {
        Self {
            bounds,
            counts: vec![0; bounds.len()],
            sum: 0.0,
            count: 0,
        }
    }

    /// Counts one observation (a non-finite one is ignored).
    pub fn observe(&mut self, value: f64) {
        if !value.is_finite() {
            return;
        }
        if let Some(i) = self.bounds.iter().position(|&b| value <= b) {
            self.counts[i] += 1;
        }
        self.sum += value;
        self.count += 1;
    }

    /// Counts a duration in seconds.
    pub fn observe_duration(&mut self, d: Duration) {
        self.observe(d.as_secs_f64());
    }

    /// `(upper bound, cumulative count)` per bound, without `+Inf`.
    pub fn cumulative(&self) -> impl Iterator<Item = (f64, u64)> + '_ {
        let mut running = 0;
        self.bounds.iter().zip(&self.counts).map(move |(&b, &c)| {
            running += c;
            (b, running)
        })
    }

    pub fn sum(&self) -> f64 {
        self.sum
    }

    pub fn count(&self) -> u64 {
        self.count
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn buckets_are_cumulative_and_inclusive() {
        let mut h = Histogram::new(&[1.0, 5.0]);
        for v in [0.5, 1.0, 3.0, 7.0, f64::NAN] {
            h.observe(v);
        }
        assert_eq!(h.cumulative().collect::<Vec<_>>(), vec![(1.0, 2), (5.0, 3)]);
        assert_eq!((h.count(), h.sum()), (4, 11.5));
    }
}
