//! The jobs behind what is shown: the compiled formula, the worker that
//! analyses the portrait and integrates the orbits, the result on screen,
//! the drag state that asks for coarse work, and the exports running on
//! their own threads.

use super::COARSE_GRID;
use super::orbits::OrbitOutcome;
use super::worker::{Computed, JobSpec, Worker};
use crate::core::formula::Formula;
use crate::core::system::System;
use crate::render;
use crate::session::Session;
use std::path::PathBuf;
use std::sync::Arc;
use std::sync::mpsc::{Receiver, TryRecvError};

pub(super) struct Jobs {
    pub(super) worker: Worker,
    /// The session's formula, compiled (None while it does not compile).
    pub(super) compiled: Option<Arc<Formula>>,
    /// The newest result accepted from the worker.
    pub(super) shown: Option<Computed>,
    last_spec: Option<(JobSpec, bool)>,
    /// Exports running on their own threads; each answers with its outcome.
    exports: Vec<Receiver<Result<String, String>>>,
    /// A slider or the view is being dragged (coarse work until released).
    pub(super) dragging: bool,
    /// A drag was reported this frame.
    pub(super) dragging_seen: bool,
    /// When a parameter that left the formula is removed (egui time, s).
    pub(super) param_settle_at: Option<f64>,
}

impl Jobs {
    pub(super) fn new(worker: Worker) -> Self {
        Jobs {
            worker,
            compiled: None,
            shown: None,
            last_spec: None,
            exports: Vec::new(),
            dragging: false,
            dragging_seen: false,
            param_settle_at: None,
        }
    }

    /// Forget what is shown (a new session is in place).
    pub(super) fn reset(&mut self) {
        self.shown = None;
        self.last_spec = None;
    }

    /// Note a drag seen this frame.
    pub(super) fn drag(&mut self) {
        self.dragging = true;
        self.dragging_seen = true;
    }

    /// The system `session` describes, if its formula compiles.
    pub(super) fn system(&self, session: &Session) -> Option<System> {
        let f = self.compiled.clone()?;
        let values = f
            .params()
            .iter()
            .map(|n| {
                session
                    .parameters
                    .iter()
                    .find(|p| &p.name == n)
                    .map_or(1.0, |p| p.value)
            })
            .collect();
        System::new(f, values).ok()
    }

    /// True while a portrait job newer than the shown result is outstanding.
    pub(super) fn portrait_busy(&self) -> bool {
        let shown = self.shown.as_ref().map_or(0, |c| c.generation);
        self.worker.latest_generation() > shown || self.shown.as_ref().is_some_and(|c| c.coarse)
    }

    /// Send the worker a job when what the portrait needs has changed.
    pub(super) fn submit_if_changed(&mut self, session: &Session) {
        let Some(system) = self.system(session) else {
            return;
        };
        let coarse = self.dragging;
        let full = session.levels.grid.max(16);
        let spec = JobSpec {
            source: session.formula.clone(),
            params: system.params().to_vec(),
            window: session.view,
            grid: if coarse { full.min(COARSE_GRID) } else { full },
            levels: session.levels.count,
            refine: session.levels.refine && !coarse,
            orbits: session.orbits.clone(),
            damping: session.damping(),
        };
        if self
            .last_spec
            .as_ref()
            .is_some_and(|(s, c)| *s == spec && *c == coarse)
        {
            return;
        }
        self.last_spec = Some((spec.clone(), coarse));
        self.worker.submit(spec, system, coarse);
    }

    /// Take a worker result if it is newer than what is shown; the result
    /// taken, for the plot to redraw.
    pub(super) fn accept(&mut self, c: Computed) -> Option<&Computed> {
        if self
            .shown
            .as_ref()
            .is_some_and(|s| s.generation >= c.generation)
        {
            return None;
        }
        self.shown = Some(c);
        self.shown.as_ref()
    }

    /// Outcomes lined up with `session.orbits` (None where not computed yet).
    pub(super) fn aligned_outcomes(&self, session: &Session) -> Vec<Option<Arc<OrbitOutcome>>> {
        let Some(c) = &self.shown else {
            return vec![None; session.orbits.len()];
        };
        let current = c.spec.source == session.formula;
        session
            .orbits
            .iter()
            .map(|s| {
                if !current {
                    return None;
                }
                c.spec
                    .orbits
                    .iter()
                    .position(|o| o == s)
                    .and_then(|k| c.orbits.get(k).cloned())
            })
            .collect()
    }

    /// Export `view` of `session` to `path` on a thread of its own, through
    /// the same `render::export` the command line uses; `shown` is what the
    /// pane computed already for the session as it is (written as it is).
    pub(super) fn start_export(
        &mut self,
        session: Session,
        overrides: crate::request::Overrides,
        view: render::View,
        format: render::ExportFormat,
        path: PathBuf,
        shown: Option<render::ViewData>,
    ) -> Result<(), String> {
        let (tx, rx) = std::sync::mpsc::channel();
        std::thread::Builder::new()
            .name("phasewright-export".into())
            .spawn(move || {
                let outcome = match &shown {
                    Some(data) => super::export_data_to_file(&session, data, view, format, &path),
                    None => super::export_to_file(&session, &overrides, view, format, &path),
                };
                let _ = tx.send(outcome);
            })
            .map_err(|e| format!("cannot start the export: {e}"))?;
        self.exports.push(rx);
        Ok(())
    }

    /// The outcomes of the exports that finished since the last call.
    pub(super) fn finished_exports(&mut self) -> Vec<Result<String, String>> {
        let mut done = Vec::new();
        self.exports.retain(|rx| match rx.try_recv() {
            Err(TryRecvError::Empty) => true,
            Ok(outcome) => {
                done.push(outcome);
                false
            }
            Err(TryRecvError::Disconnected) => {
                done.push(Err("the export stopped without a result".into()));
                false
            }
        });
        done
    }

    /// True while an export is running.
    pub(super) fn exporting(&self) -> bool {
        !self.exports.is_empty()
    }
}
