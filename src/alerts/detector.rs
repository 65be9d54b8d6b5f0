//! `Detector`: one rule's condition over time: hysteresis levels, a minimum duration before raising and
//! an optional hold before clearing. It says when a condition starts and ends; the alert record
//! ([`super::lifecycle`]) says what people have been told.
//!
//! A rule classifies each observation as [`Level::Raise`] (beyond the raise level), [`Level::Clear`]
//! (inside the clear level, which lies inside the raise level), [`Level::Hold`] (in the band between) or
//! [`Level::Unknown`] (cannot be judged). The detector is a Schmitt trigger on those levels:
//!
//! - Idle --Raise--> Pending(since); Pending --Clear--> Idle; Pending --Raise, held `min_duration`--> Active (raise).
//! - Active --Clear--> Clearing(since); Clearing --Raise--> Active; Clearing --Clear, held `clear_after`--> Idle (clear).
//! - Hold and Unknown change nothing, so noise smaller than the band cannot make it flap.
//!
//! A raise is confirmed only on a Raise observation and a clear only on a Clear observation.

/// How one observation stands against a rule's levels.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Level {
    /// Not enough data to judge.
    #[default]
    Unknown,
    /// Inside the clear level.
    Clear,
    /// Between the clear and the raise level.
    Hold,
    /// Beyond the raise level.
    Raise,
}

impl Level {
    /// Combines two checks of one rule: Raise if either raises; Clear if every check that could judge
    /// clears; Hold otherwise; Unknown if neither could judge.
    pub fn either(self, other: Level) -> Level {
        use Level::*;
        match (self, other) {
            (Raise, _) | (_, Raise) => Raise,
            (Hold, _) | (_, Hold) => Hold,
            (Clear, _) | (_, Clear) => Clear,
            (Unknown, Unknown) => Unknown,
        }
    }
}

/// A confirmed change of the condition.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Edge {
    /// The condition started (after its minimum duration).
    Raise,
    /// The condition ended (after its clear hold).
    Clear,
}

/// Where the condition stands.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum DetectorState {
    /// Not present.
    #[default]
    Idle,
    /// Beyond the raise level since `since_ms`, waiting for the minimum duration.
    Pending { since_ms: i64 },
    /// Present (raised).
    Active,
    /// Inside the clear level since `since_ms`, waiting for the clear hold.
    Clearing { since_ms: i64 },
}

/// Minimum durations of one rule, milliseconds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Timing {
    /// Before raising.
    pub min_duration_ms: i64,
    /// Before clearing.
    pub clear_after_ms: i64,
}

/// One rule's condition state.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Detector {
    state: DetectorState,
    last_level: Level,
}

impl Detector {
    /// The state.
    pub fn state(&self) -> DetectorState {
        self.state
    }

    /// The last level that could be judged.
    pub fn last_level(&self) -> Level {
        self.last_level
    }

    /// Whether the condition is raised (Active, or Clearing but not yet cleared).
    pub fn is_raised(&self) -> bool {
        matches!(self.state, DetectorState::Active | DetectorState::Clearing { .. })
    }

    /// Marks the condition raised without an edge (an alert restored after a restart).
    pub fn force_raised(&mut self) {
        self.state = DetectorState::Active;
    }

    /// Forgets the condition.
    pub fn reset(&mut self) {
        *self = Self::default();
    }

    /// Feeds one observation at `now_ms`; returns the edge it confirms, if any.
    pub fn update(&mut self, level: Level, now_ms: i64, timing: Timing) -> Option<Edge> {
        use DetectorState::*;
        if level == Level::Unknown {
            return None;
        }
        self.last_level = level;
        match (self.state, level) {
            (Idle, Level::Raise) => {
                if timing.min_duration_ms <= 0 {
                    self.state = Active;
                    return Some(Edge::Raise);
                }
                self.state = Pending { since_ms: now_ms };
                None
            }
            (Pending { .. }, Level::Clear) => {
                self.state = Idle;
                None
            }
            (Pending { since_ms }, Level::Raise) => {
                if now_ms.saturating_sub(since_ms) >= timing.min_duration_ms {
                    self.state = Active;
                    Some(Edge::Raise)
                } else {
                    None
                }
            }
            (Active, Level::Clear) => {
                if timing.clear_after_ms <= 0 {
                    self.state = Idle;
                    return Some(Edge::Clear);
                }
                self.state = Clearing { since_ms: now_ms };
                None
            }
            (Clearing { .. }, Level::Raise) => {
                self.state = Active;
                None
            }
            (Clearing { since_ms }, Level::Clear) => {
                if now_ms.saturating_sub(since_ms) >= timing.clear_after_ms {
                    self.state = Idle;
                    Some(Edge::Clear)
                } else {
                    None
                }
            }
            _ => None,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const T: Timing = Timing {
        min_duration_ms: 100,
        clear_after_ms: 50,
    };

    #[test]
    fn raises_after_the_minimum_duration_and_clears_after_the_hold() {
        let mut d = Detector::default();
        assert_eq!(d.update(Level::Raise, 0, T), None);
        assert_eq!(d.update(Level::Hold, 60, T), None);
        assert_eq!(d.update(Level::Raise, 99, T), None);
        assert_eq!(d.update(Level::Raise, 100, T), Some(Edge::Raise));
        assert!(d.is_raised());
        assert_eq!(d.update(Level::Raise, 120, T), None);
        assert_eq!(d.update(Level::Clear, 200, T), None);
        assert_eq!(d.update(Level::Hold, 230, T), None);
        assert_eq!(d.update(Level::Clear, 249, T), None);
        assert_eq!(d.update(Level::Clear, 250, T), Some(Edge::Clear));
        assert!(!d.is_raised());
    }

    #[test]
    fn a_clear_observation_resets_a_pending_raise_and_a_raise_cancels_clearing() {
        let mut d = Detector::default();
        d.update(Level::Raise, 0, T);
        d.update(Level::Clear, 50, T);
        assert_eq!(d.update(Level::Raise, 120, T), None, "the timer restarted at 120");
        assert_eq!(d.update(Level::Raise, 220, T), Some(Edge::Raise));
        d.update(Level::Clear, 300, T);
        d.update(Level::Raise, 320, T);
        assert_eq!(
            d.update(Level::Clear, 360, T),
            None,
            "the clear hold restarted at 360"
        );
        assert_eq!(d.update(Level::Clear, 410, T), Some(Edge::Clear));
    }

    #[test]
    fn unknown_and_hold_change_nothing() {
        let mut d = Detector::default();
        assert_eq!(d.update(Level::Hold, 0, T), None);
        assert_eq!(d.update(Level::Unknown, 0, T), None);
        assert_eq!(d.state(), DetectorState::Idle);
        let zero = Timing::default();
        assert_eq!(d.update(Level::Raise, 0, zero), Some(Edge::Raise));
        assert_eq!(d.update(Level::Unknown, 1, zero), None);
        assert_eq!(d.update(Level::Hold, 2, zero), None);
        assert!(d.is_raised());
        assert_eq!(d.update(Level::Clear, 3, zero), Some(Edge::Clear));
    }

    #[test]
    fn either_combines_checks() {
        use Level::*;
        assert_eq!(Clear.either(Raise), Raise);
        assert_eq!(Clear.either(Hold), Hold);
        assert_eq!(Clear.either(Unknown), Clear);
        assert_eq!(Unknown.either(Unknown), Unknown);
    }
}
