//! `TankRules`: one tank's limits, settings, windows and rule conditions; turns a reading (or the clock)
//! into one [`Level`] per rule. Fixed-size state only: nothing here allocates per reading.
//!
//! While the spike rule is on, a reading it flags is kept out of the salinity-rate window, and cannot clear (or reset
//! the timer of) the range, rate and near-freezing conditions: implausible data never makes things look better.
use super::detector::{Detector, Level, Timing};
use super::kind::{AlertId, AlertKind, KIND_COUNT};
use super::limits::AlertLimits;
use super::observation::Observation;
use super::reading::AlertReading;
use super::rules::flat_line::FlatLine;
use super::rules::inconsistent::{self, InconsistentParams};
use super::rules::range::Band;
use super::rules::rate::{self, RateWindow};
use super::rules::{freezing, spike, stale, Sample, Samples};
use super::settings::ResolvedAlertSettings;

/// The range rules: (kind, index into `bands`).
const RANGE_KINDS: [AlertKind; 4] = [
    AlertKind::SalinityOptimum,
    AlertKind::SalinityTolerance,
    AlertKind::TemperatureOptimum,
    AlertKind::TemperatureTolerance,
];

/// One tank's rule state.
#[derive(Debug, Clone)]
pub(crate) struct TankRules {
    pub id: String,
    pub limits: AlertLimits,
    pub settings: ResolvedAlertSettings,
    bands: [Option<Band>; 4],
    pub timing: [Timing; KIND_COUNT],
    window_ms: i64,
    min_span_ms: i64,
    inconsistent: InconsistentParams,
    pub detectors: [Detector; KIND_COUNT],
    pub observations: [Observation; KIND_COUNT],
    /// The open alert linked to each rule.
    pub open: [Option<AlertId>; KIND_COUNT],
    samples: Samples,
    rate: RateWindow,
    flat: FlatLine,
    last_reading_ms: Option<i64>,
    last_heard_ms: Option<i64>,
    watch_since_ms: Option<i64>,
}

/// Rules a spike reading cannot clear.
const SPIKE_CANNOT_CLEAR: [AlertKind; 6] = [
    AlertKind::SalinityOptimum,
    AlertKind::SalinityTolerance,
    AlertKind::TemperatureOptimum,
    AlertKind::TemperatureTolerance,
    AlertKind::SalinityRate,
    AlertKind::NearFreezing,
];

fn seconds_ms(s: u64) -> i64 {
    (s as i64).saturating_mul(1000)
}

impl TankRules {
    pub fn new(id: &str, limits: AlertLimits, settings: ResolvedAlertSettings) -> Self {
        let mut tank = Self {
            id: id.to_string(),
            limits,
            settings,
            bands: [None; 4],
            timing: [Timing::default(); KIND_COUNT],
            window_ms: 0,
            min_span_ms: 0,
            inconsistent: InconsistentParams {
                readings: 0,
                temperature_change_c: 0.0,
                tolerance_percent: 0.0,
                min_conductivity_ms_cm: 0.0,
                max_temperature_rate_c_per_min: 0.0,
                span_s: 0,
            },
            detectors: [Detector::default(); KIND_COUNT],
            observations: [Observation::None; KIND_COUNT],
            open: [None; KIND_COUNT],
            samples: Samples::new(),
            rate: RateWindow::default(),
            flat: FlatLine::default(),
            last_reading_ms: None,
            last_heard_ms: None,
            watch_since_ms: None,
        };
        tank.configure(limits, tank.settings.clone());
        tank
    }

    /// Sets limits and settings, keeping windows and conditions.
    pub fn configure(&mut self, limits: AlertLimits, settings: ResolvedAlertSettings) {
        let s = &settings;
        self.bands = [
            limits
                .salinity_optimum
                .map(|b| Band::new(b, s.salinity_hysteresis_sp)),
            limits
                .salinity_tolerance
                .map(|b| Band::new(b, s.salinity_hysteresis_sp)),
            limits
                .temperature_optimum_c
                .map(|b| Band::new(b, s.temperature_hysteresis_c)),
            limits
                .temperature_tolerance_c
                .map(|b| Band::new(b, s.temperature_hysteresis_c)),
        ];
        self.timing = AlertKind::ALL.map(|k| Timing {
            min_duration_ms: seconds_ms(s.rule(k).min_duration_s),
            clear_after_ms: seconds_ms(s.rule(k).clear_after_s),
        });
        self.window_ms = seconds_ms(s.rate_window_s);
        self.min_span_ms = seconds_ms(s.rate_min_span_s);
        self.inconsistent = InconsistentParams {
            readings: s.inconsistent_readings,
            temperature_change_c: s.inconsistent_temperature_change_c,
            tolerance_percent: s.inconsistent_conductivity_tolerance_percent,
            min_conductivity_ms_cm: s.inconsistent_min_conductivity_ms_cm,
            max_temperature_rate_c_per_min: s.max_temperature_rate_c_per_min,
            span_s: s.temperature_rate_span_s,
        };
        self.limits = limits;
        self.settings = settings;
    }

    /// Whether a rule is switched on for this tank.
    pub fn enabled(&self, kind: AlertKind) -> bool {
        self.settings.rules[kind.index()].enabled
    }

    fn set(&mut self, levels: &mut [Level; KIND_COUNT], kind: AlertKind, (level, obs): (Level, Observation)) {
        if self.enabled(kind) {
            levels[kind.index()] = level;
            if obs != Observation::None {
                self.observations[kind.index()] = obs;
            }
        }
    }

    /// Evaluates every reading rule; `None` if the reading is older than the previous one (skipped).
    /// The probe-stale level is Clear (a reading was heard at `now_ms`).
    pub fn evaluate_reading(&mut self, r: &AlertReading, now_ms: i64) -> Option<(i64, [Level; KIND_COUNT])> {
        self.last_heard_ms = Some(now_ms);
        let t_ms = r.time.timestamp_millis();
        if self.last_reading_ms.is_some_and(|last| t_ms < last) {
            return None;
        }
        self.last_reading_ms = Some(t_ms);
        let mut levels = [Level::Unknown; KIND_COUNT];
        let sp = r.practical_salinity;
        let temp = r.temperature_c;

        for (i, kind) in RANGE_KINDS.into_iter().enumerate() {
            if let Some(band) = self.bands[i] {
                let value = if i < 2 { sp } else { temp };
                self.set(&mut levels, kind, band.level(value));
            }
        }

        let sample = Sample {
            t_ms,
            practical_salinity: sp,
            temperature_c: temp,
            conductivity_ms_cm: r.conductivity_ms_cm,
        };
        let s = &self.settings;
        let spiked = spike::level(
            &self.samples,
            &sample,
            s.spike_window_readings,
            s.spike_threshold_sp,
            s.spike_threshold_c,
            s.spike_clear_fraction,
        );
        // With the spike rule switched off, every reading is taken at face value.
        let is_spike = spiked.0 == Level::Raise && self.enabled(AlertKind::ProbeSpike);
        self.set(&mut levels, AlertKind::ProbeSpike, spiked);
        self.samples.push(sample);

        if !is_spike {
            self.rate.push(t_ms, sp, self.window_ms);
        }
        if let Some(limit) = self.limits.max_salinity_rate {
            let s = &self.settings;
            let slope = self.rate.slope(self.window_ms, self.min_span_ms);
            let judged = rate::level(slope, &limit, sp, s.rate_percent_floor_sp, s.rate_clear_fraction);
            self.set(&mut levels, AlertKind::SalinityRate, judged);
        }

        let s = &self.settings;
        let flat = self.flat.update(
            t_ms,
            r.conductivity_ms_cm,
            s.flat_line_tolerance_ms_cm,
            s.flat_line_s,
            s.flat_line_min_readings,
        );
        self.set(&mut levels, AlertKind::ProbeFlatLine, flat);

        let judged = inconsistent::level(&self.samples, &self.inconsistent);
        self.set(&mut levels, AlertKind::ProbeInconsistent, judged);

        let s = &self.settings;
        let judged = freezing::level(
            sp,
            r.pressure_dbar,
            temp,
            s.freezing_margin_c,
            s.freezing_hysteresis_c,
        );
        self.set(&mut levels, AlertKind::NearFreezing, judged);

        if is_spike {
            // Fail-safe: an implausible reading may start a condition's minimum duration, but never clears
            // a condition or resets its timer.
            for kind in SPIKE_CANNOT_CLEAR {
                if levels[kind.index()] == Level::Clear {
                    levels[kind.index()] = Level::Unknown;
                }
            }
        }

        self.set(
            &mut levels,
            AlertKind::ProbeStale,
            (Level::Clear, self.stale_observation(now_ms)),
        );
        Some((t_ms, levels))
    }

    /// The probe-stale level at `now_ms` (watching starts at the first call).
    pub fn evaluate_stale(&mut self, now_ms: i64) -> Level {
        let since = *self.watch_since_ms.get_or_insert(now_ms);
        let (age_ms, heard) = match self.last_heard_ms {
            Some(t) => (now_ms.saturating_sub(t), true),
            None => (now_ms.saturating_sub(since), false),
        };
        let s = &self.settings;
        let (level, obs) = stale::level(
            age_ms,
            self.limits.expected_interval_s,
            s.stale_multiple,
            s.stale_clear_multiple,
            heard,
        );
        if !self.enabled(AlertKind::ProbeStale) {
            return Level::Unknown;
        }
        self.observations[AlertKind::ProbeStale.index()] = obs;
        level
    }

    fn stale_observation(&self, now_ms: i64) -> Observation {
        let interval = self.limits.expected_interval_s as f64;
        Observation::Stale {
            age_s: self
                .last_heard_ms
                .map_or(0.0, |t| now_ms.saturating_sub(t) as f64 / 1000.0),
            limit_s: interval * self.settings.stale_multiple,
            expected_interval_s: interval,
            ever_heard: true,
        }
    }
}
