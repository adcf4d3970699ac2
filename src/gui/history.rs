//! Undo and redo over whole-session snapshots. Edits of the same kind that
//! follow each other closely (one slider drag, a burst of typing, one pan)
//! coalesce into a single step.

use crate::session::Session;

/// What an edit touched; consecutive edits of the same kind may coalesce.
#[derive(Clone, Debug, PartialEq)]
pub enum EditKind {
    Formula,
    Parameter(String),
    ParameterRange(String),
    View,
    Orbits,
    /// Settings of the diagram panes.
    Panes,
    /// The drive section (period, damping, on or off).
    Drive,
    /// Never coalesces (load, new, restore, delete).
    Other,
}

/// Edits of one kind closer together than this (seconds) make one step.
const COALESCE_SECONDS: f64 = 1.0;
/// Steps kept.
const DEPTH: usize = 200;

#[derive(Default)]
pub struct History {
    undo: Vec<Session>,
    redo: Vec<Session>,
    last: Option<(EditKind, f64)>,
}

impl History {
    /// Record `before` (the state before an edit of `kind` at time `now`),
    /// unless it continues the previous edit. `continuing` forces coalescing
    /// (a drag still in progress).
    pub fn record(&mut self, before: &Session, kind: EditKind, now: f64, continuing: bool) {
        let coalesce = match &self.last {
            Some((k, t)) => {
                *k == kind && kind != EditKind::Other && (continuing || now - t < COALESCE_SECONDS)
            }
            None => false,
        };
        if !coalesce {
            self.undo.push(before.clone());
            if self.undo.len() > DEPTH {
                self.undo.remove(0);
            }
            self.redo.clear();
        }
        self.last = Some((kind, now));
    }

    /// Break coalescing so the next edit starts a new step.
    pub fn seal(&mut self) {
        self.last = None;
    }

    pub fn undo(&mut self, current: &Session) -> Option<Session> {
        let s = self.undo.pop()?;
        self.redo.push(current.clone());
        self.last = None;
        Some(s)
    }

    pub fn redo(&mut self, current: &Session) -> Option<Session> {
        let s = self.redo.pop()?;
        self.undo.push(current.clone());
        self.last = None;
        Some(s)
    }

    pub fn can_undo(&self) -> bool {
        !self.undo.is_empty()
    }

    pub fn can_redo(&self) -> bool {
        !self.redo.is_empty()
    }

    pub fn clear(&mut self) {
        *self = History::default();
    }
}
