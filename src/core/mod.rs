//! The computational core: pure functions over plain data. Never imports a view
//! crate, the command-line parser, or the file system (tests/architecture.rs checks).
pub mod analysis;
pub mod backbone;
pub mod basin;
pub mod continuation;
pub mod contour;
pub mod equilibria;
pub mod folds;
pub mod formula;
pub mod integrate;
pub mod levels;
pub mod melnikov;
pub mod orbit;
pub mod section;
pub mod system;
pub mod wells;
pub mod window;

use std::sync::Arc;
use std::sync::atomic::{AtomicBool, Ordering};

/// A shared flag that long computations poll; setting it asks them to stop early.
#[derive(Clone, Debug, Default)]
pub struct Cancel(Arc<AtomicBool>);

impl Cancel {
    pub fn new() -> Self {
        Cancel::default()
    }

    /// A flag that is never set (for callers that do not cancel).
    pub fn never() -> Self {
        Cancel::default()
    }

    pub fn cancel(&self) {
        self.0.store(true, Ordering::Relaxed);
    }

    pub fn is_cancelled(&self) -> bool {
        self.0.load(Ordering::Relaxed)
    }
}

/// How much a diagnostic matters.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Severity {
    Info,
    Warning,
}

/// A soft problem found while computing: the result is still usable.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Diagnostic {
    pub severity: Severity,
    pub message: String,
}

impl Diagnostic {
    pub fn warning(message: impl Into<String>) -> Self {
        Diagnostic {
            severity: Severity::Warning,
            message: message.into(),
        }
    }

    pub fn info(message: impl Into<String>) -> Self {
        Diagnostic {
            severity: Severity::Info,
            message: message.into(),
        }
    }
}

/// Serde helpers that write an index into a result list (an equilibrium, a
/// saddle) as its number counted from 1, the way every table, message and
/// the explorer number rows. The index itself stays 0-based in memory.
pub mod numbered {
    use serde::Serializer;

    pub fn one<S: Serializer>(index: &usize, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_u64(*index as u64 + 1)
    }

    pub fn optional<S: Serializer>(index: &Option<usize>, s: S) -> Result<S::Ok, S::Error> {
        match index {
            Some(i) => s.serialize_some(&(*i as u64 + 1)),
            None => s.serialize_none(),
        }
    }
}
