//! Undo and redo as snapshots of the scenario.
//!
//! A scenario is small (a model's text, a few numbers, the seeds), so a snapshot per step is
//! simpler and sturdier than inverse commands. Consecutive changes with the same
//! [`MergeKey`] (one slider drag, one typing burst) collapse into a single step.

use crate::command::MergeKey;
use crate::scenario::Scenario;

/// The most steps kept; older ones are dropped.
pub const MAX_STEPS: usize = 200;

/// Undo and redo stacks.
#[derive(Debug, Default)]
pub struct History {
    undo: Vec<Scenario>,
    redo: Vec<Scenario>,
    /// The key of the step being extended, while a gesture lasts.
    open: Option<MergeKey>,
}

impl History {
    /// An empty history.
    pub fn new() -> Self {
        Self::default()
    }

    /// Records the state before a change. A change with the same key as the open step
    /// extends that step instead of starting a new one.
    pub fn record(&mut self, before: &Scenario, key: Option<MergeKey>) {
        if key.is_some() && key == self.open {
            return;
        }
        self.undo.push(before.clone());
        if self.undo.len() > MAX_STEPS {
            self.undo.remove(0);
        }
        self.redo.clear();
        self.open = key;
    }

    /// Ends the open step: the next change starts a new one.
    pub fn close_step(&mut self) {
        self.open = None;
    }

    /// The state to go back to, given the current one (which redo will restore).
    pub fn undo(&mut self, current: &Scenario) -> Option<Scenario> {
        let previous = self.undo.pop()?;
        self.redo.push(current.clone());
        self.open = None;
        Some(previous)
    }

    /// The state to go forward to, given the current one.
    pub fn redo(&mut self, current: &Scenario) -> Option<Scenario> {
        let next = self.redo.pop()?;
        self.undo.push(current.clone());
        self.open = None;
        Some(next)
    }

    /// Whether there is something to undo.
    pub fn can_undo(&self) -> bool {
        !self.undo.is_empty()
    }

    /// Whether there is something to redo.
    pub fn can_redo(&self) -> bool {
        !self.redo.is_empty()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn scenario(k: f64) -> Scenario {
        let mut s = Scenario::new(quarry_core::library::default_model());
        s.orbit_time = k;
        s
    }

    #[test]
    fn one_drag_is_one_undo_step() {
        let mut h = History::new();
        h.record(&scenario(1.0), Some(MergeKey::Param(0)));
        h.record(&scenario(2.0), Some(MergeKey::Param(0)));
        h.record(&scenario(3.0), Some(MergeKey::Param(0)));
        let back = h.undo(&scenario(4.0));
        assert_eq!(back.map(|s| s.orbit_time), Some(1.0));
        assert!(!h.can_undo());
    }

    #[test]
    fn closing_a_step_splits_two_drags() {
        let mut h = History::new();
        h.record(&scenario(1.0), Some(MergeKey::Param(0)));
        h.close_step();
        h.record(&scenario(2.0), Some(MergeKey::Param(0)));
        assert_eq!(h.undo(&scenario(3.0)).map(|s| s.orbit_time), Some(2.0));
        assert_eq!(h.undo(&scenario(2.0)).map(|s| s.orbit_time), Some(1.0));
    }

    #[test]
    fn redo_returns_what_undo_left_and_a_new_change_clears_it() {
        let mut h = History::new();
        h.record(&scenario(1.0), None);
        let back = h.undo(&scenario(2.0));
        assert_eq!(back.map(|s| s.orbit_time), Some(1.0));
        assert_eq!(h.redo(&scenario(1.0)).map(|s| s.orbit_time), Some(2.0));
        h.undo(&scenario(2.0));
        h.record(&scenario(1.0), None);
        assert!(!h.can_redo());
    }
}
