//! `Observation`: what a rule saw at its latest evaluation, kept (without allocation) for the message text.

/// The latest evaluation of one rule, in numbers.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub enum Observation {
    /// Nothing observed yet.
    #[default]
    None,
    /// A value against a range (SP or °C by kind).
    Range {
        value: f64,
        low: f64,
        high: f64,
        clear_low: f64,
        clear_high: f64,
    },
    /// Least-squares rate of change of salinity against the allowed maximum.
    Rate {
        rate_sp_per_h: f64,
        allowed_sp_per_h: f64,
        clear_sp_per_h: f64,
        span_s: f64,
        practical_salinity: f64,
    },
    /// Time since the last accepted reading.
    Stale {
        age_s: f64,
        limit_s: f64,
        expected_interval_s: f64,
        ever_heard: bool,
    },
    /// A reading against the median of the previous ones.
    Spike {
        practical_salinity: f64,
        median_sp: f64,
        temperature_c: f64,
        median_c: f64,
    },
    /// A run of identical conductivity readings.
    FlatLine {
        conductivity_ms_cm: f64,
        duration_s: f64,
        readings: u32,
    },
    /// Temperature moved while conductivity stayed put.
    StuckConductivity {
        conductivity_ms_cm: f64,
        range_percent: f64,
        temperature_range_c: f64,
        readings: usize,
    },
    /// Temperature changed faster than water can.
    TemperatureJump {
        rate_c_per_min: f64,
        limit_c_per_min: f64,
        span_s: f64,
    },
    /// Water temperature against its freezing point.
    Freezing {
        temperature_c: f64,
        freezing_point_c: f64,
        margin_c: f64,
        practical_salinity: f64,
        pressure_dbar: f64,
    },
    /// Off the acclimation schedule.
    ScheduleOff { deviation_sp: f64, target_sp: f64 },
    /// An acclimation step is due.
    StepDue {
        step: u32,
        target_sp: f64,
        due_at_ms: i64,
        action: StepAction,
    },
    /// Back on schedule, or the step is done.
    ScheduleOk,
}

/// The quantities of one acclimation step, where its method uses them (for the step-due message).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct StepAction {
    /// Tank water to drain, litres.
    pub drain_l: Option<f64>,
    /// Water to add back, litres.
    pub add_l: Option<f64>,
    /// Dry sea salt, kg.
    pub salt_kg: Option<f64>,
    /// Inflow to set, L/min.
    pub flow_l_min: Option<f64>,
}

impl StepAction {
    /// The quantities as text: `drain 120 L, add 120 L, 3.50 kg salt, flow 2.0 L/min` (empty when none).
    pub fn text(&self) -> String {
        let mut parts = Vec::new();
        if let Some(v) = self.drain_l {
            parts.push(format!("drain {v:.0} L"));
        }
        if let Some(v) = self.add_l {
            parts.push(format!("add {v:.0} L"));
        }
        if let Some(v) = self.salt_kg {
            parts.push(format!("{v:.2} kg salt"));
        }
        if let Some(v) = self.flow_l_min {
            parts.push(format!("flow {v:.1} L/min"));
        }
        parts.join(", ")
    }
}

impl Observation {
    /// The observed value and the limit it was compared with (for the stored record).
    pub fn value_and_limit(&self) -> (Option<f64>, Option<f64>) {
        match *self {
            Self::None | Self::ScheduleOk => (None, None),
            Self::Range { value, low, high, .. } => (Some(value), Some(if value < low { low } else { high })),
            Self::Rate {
                rate_sp_per_h,
                allowed_sp_per_h,
                ..
            } => (Some(rate_sp_per_h), Some(allowed_sp_per_h)),
            Self::Stale { age_s, limit_s, .. } => (Some(age_s), Some(limit_s)),
            Self::Spike {
                practical_salinity,
                median_sp,
                ..
            } => (Some(practical_salinity), Some(median_sp)),
            Self::FlatLine {
                conductivity_ms_cm, ..
            } => (Some(conductivity_ms_cm), None),
            Self::StuckConductivity {
                conductivity_ms_cm, ..
            } => (Some(conductivity_ms_cm), None),
            Self::TemperatureJump {
                rate_c_per_min,
                limit_c_per_min,
                ..
            } => (Some(rate_c_per_min), Some(limit_c_per_min)),
            Self::Freezing {
                temperature_c,
                freezing_point_c,
                margin_c,
                ..
            } => (Some(temperature_c), Some(freezing_point_c + margin_c)),
            Self::ScheduleOff { deviation_sp, .. } => (Some(deviation_sp), None),
            Self::StepDue { target_sp, .. } => (Some(target_sp), None),
        }
    }
}
