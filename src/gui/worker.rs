//! The explorer's background work, so the UI thread never waits. The portrait
//! worker is one named thread that runs analyses and orbit integrations; each
//! diagram pane (sweep, fold curve, backbone, section, Melnikov function,
//! safe basin, erosion curve) and the quantized orbits over the portrait
//! have their own [`Lane`]. Jobs carry
//! a generation number; a thread always runs the newest pending job, stale
//! results are dropped by the UI, and a running job is cancelled through
//! `core::Cancel` when a newer one arrives.

use crate::core::Cancel;
use crate::core::analysis::{Analysis, AnalysisConfig, analyze};
use crate::core::backbone::{Backbone, BackboneError};
use crate::core::basin::Erosion;
use crate::core::continuation::{ContinuationError, Sweep, SweepProgress};
use crate::core::folds::{FoldCurves, FoldProgress};
use crate::core::melnikov::Melnikov;
use crate::core::system::System;
use crate::core::window::Window;
use crate::render::{BasinData, SectionData, basin_data};
use crate::request::{
    BackboneRequest, BasinRequest, ErosionRequest, FoldsRequest, LevelsRequest, LevelsResult,
    MelnikovRequest, SectionRequest, SweepRequest, undriven_analysis_of,
};
use crate::scene::Rgb;
use crate::session::SeededOrbit;
use std::sync::mpsc::{Receiver, Sender, channel};
use std::sync::{Arc, Mutex};
use std::thread::JoinHandle;
use std::time::{Duration, Instant};

use super::orbits::{OrbitOutcome, integrate};

/// Everything a job needs; compared with the previous job to decide what to redo.
#[derive(Clone, Debug, PartialEq)]
pub struct JobSpec {
    pub source: String,
    pub params: Vec<f64>,
    pub window: Window,
    pub grid: usize,
    pub levels: usize,
    pub refine: bool,
    pub orbits: Vec<SeededOrbit>,
    /// The damping rate the orbits feel (the session's drive).
    pub damping: f64,
}

/// One unit of work for the worker.
pub struct Job {
    pub generation: u64,
    pub spec: JobSpec,
    pub system: System,
    /// A coarse job (slider being dragged) is cheap and not cancelled.
    pub coarse: bool,
    pub cancel: Cancel,
}

/// What the worker sends back.
pub struct Computed {
    pub generation: u64,
    pub spec: JobSpec,
    pub system: System,
    pub coarse: bool,
    pub analysis: Arc<Analysis>,
    pub orbits: Vec<Arc<OrbitOutcome>>,
    /// Wall time of the analysis part (zero when reused from the previous job).
    pub analysis_ms: f64,
    /// Wall time of the orbit part.
    pub orbits_ms: f64,
}

/// The UI side of the worker.
pub struct Worker {
    jobs: Option<Sender<Job>>,
    results: Receiver<Computed>,
    repaint: Arc<Mutex<Option<egui::Context>>>,
    handle: Option<JoinHandle<()>>,
    next_generation: u64,
    /// Generation and cancel flag of the newest job sent.
    in_flight: Option<(u64, bool, Cancel)>,
}

impl Worker {
    /// Start the worker thread. Fails only if the OS refuses a thread.
    pub fn start() -> Result<Worker, String> {
        let (job_tx, job_rx) = channel::<Job>();
        let (res_tx, res_rx) = channel::<Computed>();
        let repaint: Arc<Mutex<Option<egui::Context>>> = Arc::new(Mutex::new(None));
        let repaint_worker = repaint.clone();
        let handle = std::thread::Builder::new()
            .name("phasewright-worker".into())
            .spawn(move || worker_loop(job_rx, res_tx, repaint_worker))
            .map_err(|e| format!("could not start the worker thread: {e}"))?;
        Ok(Worker {
            jobs: Some(job_tx),
            results: res_rx,
            repaint,
            handle: Some(handle),
            next_generation: 1,
            in_flight: None,
        })
    }

    /// The context to wake when a result is ready.
    pub fn set_context(&self, ctx: &egui::Context) {
        if let Ok(mut slot) = self.repaint.lock()
            && slot.is_none()
        {
            *slot = Some(ctx.clone());
        }
    }

    /// The slot holding the context to wake (shared with the pane lanes).
    pub fn repaint_slot(&self) -> Arc<Mutex<Option<egui::Context>>> {
        self.repaint.clone()
    }

    /// Queue a job; returns its generation. A refining job still running is cancelled.
    pub fn submit(&mut self, spec: JobSpec, system: System, coarse: bool) -> u64 {
        let generation = self.next_generation;
        self.next_generation += 1;
        if let Some((_, was_coarse, cancel)) = &self.in_flight
            && !was_coarse
        {
            cancel.cancel();
        }
        let cancel = Cancel::new();
        self.in_flight = Some((generation, coarse, cancel.clone()));
        if let Some(tx) = &self.jobs {
            let _ = tx.send(Job {
                generation,
                spec,
                system,
                coarse,
                cancel,
            });
        }
        generation
    }

    /// The newest generation submitted (0 before the first job).
    pub fn latest_generation(&self) -> u64 {
        self.in_flight.as_ref().map_or(0, |f| f.0)
    }

    /// Results that arrived since the last call, oldest first.
    pub fn poll(&self) -> Vec<Computed> {
        self.results.try_iter().collect()
    }

    /// Block until a result of `generation` or newer arrives or `timeout`
    /// passes; returns every result received meanwhile. For tests and the
    /// headless benchmark only: the UI never calls this.
    pub fn wait_for(&self, generation: u64, timeout: Duration) -> Vec<Computed> {
        wait_on(&self.results, timeout, |c| c.generation >= generation)
    }
}

/// Receive from `results` until one satisfies `done` or `timeout` passes;
/// returns everything received, oldest first (tests and benchmarks only).
fn wait_on<T>(results: &Receiver<T>, timeout: Duration, done: impl Fn(&T) -> bool) -> Vec<T> {
    let deadline = Instant::now() + timeout;
    let mut got = Vec::new();
    loop {
        let now = Instant::now();
        if now >= deadline {
            return got;
        }
        match results.recv_timeout(deadline - now) {
            Ok(c) => {
                let finished = done(&c);
                got.push(c);
                if finished {
                    got.extend(results.try_iter());
                    return got;
                }
            }
            Err(_) => return got,
        }
    }
}

impl Drop for Worker {
    fn drop(&mut self) {
        if let Some((_, _, cancel)) = &self.in_flight {
            cancel.cancel();
        }
        self.jobs = None;
        if let Some(h) = self.handle.take() {
            let _ = h.join();
        }
    }
}

/// The analysis part of a spec (what decides whether the last analysis can be reused).
fn same_analysis(a: &JobSpec, b: &JobSpec) -> bool {
    a.source == b.source
        && a.params == b.params
        && a.window == b.window
        && a.grid == b.grid
        && a.levels == b.levels
        && a.refine == b.refine
}

fn worker_loop(
    jobs: Receiver<Job>,
    results: Sender<Computed>,
    repaint: Arc<Mutex<Option<egui::Context>>>,
) {
    let mut last_analysis: Option<(JobSpec, Arc<Analysis>)> = None;
    type Reuse = (
        String,
        Vec<f64>,
        f64,
        SeededOrbit,
        Window,
        Arc<OrbitOutcome>,
    );
    let mut last_orbits: Vec<Reuse> = Vec::new();
    while let Ok(mut job) = jobs.recv() {
        // Only the newest pending job matters.
        while let Ok(newer) = jobs.try_recv() {
            job = newer;
        }
        if job.cancel.is_cancelled() {
            continue;
        }
        let started = Instant::now();
        let analysis = match &last_analysis {
            Some((spec, a)) if same_analysis(spec, &job.spec) => a.clone(),
            _ => {
                let cfg = AnalysisConfig {
                    grid: job.spec.grid,
                    levels: job.spec.levels,
                    refine: job.spec.refine,
                    ..AnalysisConfig::default()
                };
                let a = Arc::new(analyze(&job.system, &job.spec.window, &cfg, &job.cancel));
                if a.cancelled {
                    continue;
                }
                last_analysis = Some((job.spec.clone(), a.clone()));
                a
            }
        };
        let analysis_ms = started.elapsed().as_secs_f64() * 1e3;
        let orbit_start = Instant::now();
        let mut outcomes = Vec::with_capacity(job.spec.orbits.len());
        let mut fresh = Vec::with_capacity(job.spec.orbits.len());
        for seeded in &job.spec.orbits {
            // An orbit that stopped at the bounds of an earlier view is
            // integrated again for this one (the bounds follow pan and zoom).
            let reused = last_orbits
                .iter()
                .find(|(src, params, damping, s, window, o)| {
                    src == &job.spec.source
                        && params == &job.spec.params
                        && *damping == job.spec.damping
                        && s == seeded
                        && (!o.view_bound || *window == job.spec.window)
                })
                .map(|o| o.5.clone());
            let outcome = match reused {
                Some(o) => o,
                None => Arc::new(integrate(
                    &job.system,
                    seeded,
                    &job.spec.window,
                    job.spec.damping,
                    &job.cancel,
                )),
            };
            fresh.push((
                job.spec.source.clone(),
                job.spec.params.clone(),
                job.spec.damping,
                seeded.clone(),
                job.spec.window,
                outcome.clone(),
            ));
            outcomes.push(outcome);
        }
        if job.cancel.is_cancelled() {
            continue;
        }
        last_orbits = fresh;
        let computed = Computed {
            generation: job.generation,
            spec: job.spec,
            system: job.system,
            coarse: job.coarse,
            analysis,
            orbits: outcomes,
            analysis_ms,
            orbits_ms: orbit_start.elapsed().as_secs_f64() * 1e3,
        };
        if results.send(computed).is_err() {
            return;
        }
        if let Ok(slot) = repaint.lock()
            && let Some(ctx) = slot.as_ref()
        {
            ctx.request_repaint();
        }
    }
}

// ---------------------------------------------------------------------------
// View jobs: sweeps, fold curves and backbones for the diagram panes.

/// Which pane a view job feeds. Each has its own lane (thread), so a long
/// fold-curve job never holds up a sweep or the portrait.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ViewKind {
    Diagram,
    Folds,
    Backbone,
    Section,
    Melnikov,
    /// The quantized orbits over the portrait and the levels table.
    Levels,
    /// The safe basins of the wells under the drive.
    Basin,
    /// The integrity measures against the drive amplitude (on demand).
    Erosion,
}

impl ViewKind {
    pub const ALL: [ViewKind; 8] = [
        ViewKind::Diagram,
        ViewKind::Folds,
        ViewKind::Backbone,
        ViewKind::Section,
        ViewKind::Melnikov,
        ViewKind::Levels,
        ViewKind::Basin,
        ViewKind::Erosion,
    ];

    /// Position in [`ViewKind::ALL`].
    pub fn index(self) -> usize {
        match self {
            ViewKind::Diagram => 0,
            ViewKind::Folds => 1,
            ViewKind::Backbone => 2,
            ViewKind::Section => 3,
            ViewKind::Melnikov => 4,
            ViewKind::Levels => 5,
            ViewKind::Basin => 6,
            ViewKind::Erosion => 7,
        }
    }

    fn thread_name(self) -> &'static str {
        match self {
            ViewKind::Diagram => "phasewright-sweep",
            ViewKind::Folds => "phasewright-folds",
            ViewKind::Backbone => "phasewright-backbone",
            ViewKind::Section => "phasewright-section",
            ViewKind::Melnikov => "phasewright-melnikov",
            ViewKind::Levels => "phasewright-levels",
            ViewKind::Basin => "phasewright-basin",
            ViewKind::Erosion => "phasewright-erosion",
        }
    }
}

/// What a view job computes (besides the system and the window): one of the
/// requests of `crate::request`, the same ones `render` builds.
#[derive(Clone, Debug, PartialEq)]
pub enum ViewTask {
    Sweep(SweepRequest),
    Folds(FoldsRequest),
    Backbone(BackboneRequest),
    /// A section; with the drive-amplitude parameter whose zero gives H₀
    /// (for the faint separatrices) and each start's own colour.
    Section {
        request: SectionRequest,
        undriven: Option<(String, AnalysisConfig)>,
        colours: Vec<Option<Rgb>>,
    },
    Melnikov(MelnikovRequest),
    Levels(LevelsRequest),
    /// A safe basin with H₀'s separatrices (full, or the quick look).
    Basin(BasinRequest),
    Erosion(ErosionRequest),
}

/// Everything a view job depends on; compared with the last job to decide whether to rerun.
#[derive(Clone, Debug, PartialEq)]
pub struct ViewSpec {
    pub source: String,
    /// Parameter values in the formula's order (the swept ones set to a fixed value,
    /// so that moving them does not rerun the job).
    pub params: Vec<f64>,
    pub window: Window,
    pub task: ViewTask,
}

/// A view job's answer.
#[derive(Debug)]
pub enum ViewOutcome {
    Sweep(Result<Sweep, ContinuationError>),
    Folds(Result<FoldCurves, ContinuationError>),
    Backbone(Result<Backbone, BackboneError>),
    Section(Result<SectionData, String>),
    Melnikov(Result<Melnikov, String>),
    Levels(LevelsResult),
    Basin(Result<BasinData, String>),
    Erosion(Result<Erosion, String>),
}

impl ViewOutcome {
    /// True when the job was stopped early (the result is partial).
    pub fn cancelled(&self) -> bool {
        match self {
            ViewOutcome::Sweep(Ok(s)) => s.cancelled,
            ViewOutcome::Folds(Ok(f)) => f.cancelled,
            ViewOutcome::Backbone(Ok(b)) => b.cancelled,
            ViewOutcome::Section(Ok(d)) => d.section.cancelled,
            ViewOutcome::Levels(l) => l.wells.iter().any(|w| w.cancelled),
            ViewOutcome::Basin(Ok(b)) => b.basin.cancelled,
            ViewOutcome::Erosion(Ok(e)) => e.cancelled,
            _ => false,
        }
    }

    /// The reason the job could not run, in words.
    pub fn error(&self) -> Option<String> {
        match self {
            ViewOutcome::Sweep(Err(e)) | ViewOutcome::Folds(Err(e)) => Some(e.to_string()),
            ViewOutcome::Backbone(Err(e)) => Some(e.to_string()),
            ViewOutcome::Section(Err(e))
            | ViewOutcome::Melnikov(Err(e))
            | ViewOutcome::Basin(Err(e))
            | ViewOutcome::Erosion(Err(e)) => Some(e.clone()),
            _ => None,
        }
    }
}

/// A finished view job.
pub struct ViewComputed {
    pub kind: ViewKind,
    pub generation: u64,
    pub spec: ViewSpec,
    pub system: System,
    pub outcome: Arc<ViewOutcome>,
    pub ms: f64,
}

/// How far the running job of a lane has got.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Progress {
    /// Work done and the most there can be (steps of the step budget, or energies).
    pub done: usize,
    pub total: usize,
    /// What the numbers count, e.g. "3 branches".
    pub note: String,
    pub running: bool,
}

struct ViewJob {
    generation: u64,
    spec: ViewSpec,
    system: System,
    cancel: Cancel,
}

/// One background thread running the jobs of one pane: the newest job wins,
/// a running job is cancelled through `core::Cancel` when a newer one (or the
/// user) asks, and progress is shared for the pane to show.
pub struct Lane {
    jobs: Option<Sender<ViewJob>>,
    results: Receiver<ViewComputed>,
    handle: Option<JoinHandle<()>>,
    progress: Arc<Mutex<Progress>>,
    next_generation: u64,
    in_flight: Option<(u64, Cancel)>,
}

/// Least time between two repaints asked for by progress reports.
const PROGRESS_REPAINT: Duration = Duration::from_millis(60);

impl Lane {
    pub fn start(
        kind: ViewKind,
        repaint: Arc<Mutex<Option<egui::Context>>>,
    ) -> Result<Lane, String> {
        let (job_tx, job_rx) = channel::<ViewJob>();
        let (res_tx, res_rx) = channel::<ViewComputed>();
        let progress = Arc::new(Mutex::new(Progress::default()));
        let shared = progress.clone();
        let handle = std::thread::Builder::new()
            .name(kind.thread_name().into())
            .spawn(move || lane_loop(kind, job_rx, res_tx, shared, repaint))
            .map_err(|e| format!("could not start the {} thread: {e}", kind.thread_name()))?;
        Ok(Lane {
            jobs: Some(job_tx),
            results: res_rx,
            handle: Some(handle),
            progress,
            next_generation: 1,
            in_flight: None,
        })
    }

    /// Queue a job, cancelling the one before; returns its generation.
    pub fn submit(&mut self, spec: ViewSpec, system: System) -> u64 {
        self.cancel();
        let generation = self.next_generation;
        self.next_generation += 1;
        let cancel = Cancel::new();
        self.in_flight = Some((generation, cancel.clone()));
        if let Ok(mut p) = self.progress.lock() {
            *p = Progress {
                running: true,
                ..Progress::default()
            };
        }
        if let Some(tx) = &self.jobs {
            let _ = tx.send(ViewJob {
                generation,
                spec,
                system,
                cancel,
            });
        }
        generation
    }

    /// Stop the running job (its partial result still comes back).
    pub fn cancel(&self) {
        if let Some((_, c)) = &self.in_flight {
            c.cancel();
        }
    }

    /// The newest generation submitted (0 before the first job).
    pub fn latest_generation(&self) -> u64 {
        self.in_flight.as_ref().map_or(0, |f| f.0)
    }

    pub fn progress(&self) -> Progress {
        self.progress.lock().map(|p| p.clone()).unwrap_or_default()
    }

    /// Results that arrived since the last call, oldest first.
    pub fn poll(&self) -> Vec<ViewComputed> {
        self.results.try_iter().collect()
    }

    /// Block until the result of `generation` or newer arrives or `timeout`
    /// passes (tests only; the UI never waits).
    pub fn wait_for(&self, generation: u64, timeout: Duration) -> Vec<ViewComputed> {
        wait_on(&self.results, timeout, |c| c.generation >= generation)
    }
}

impl Drop for Lane {
    fn drop(&mut self) {
        self.cancel();
        self.jobs = None;
        if let Some(h) = self.handle.take() {
            let _ = h.join();
        }
    }
}

fn lane_loop(
    kind: ViewKind,
    jobs: Receiver<ViewJob>,
    results: Sender<ViewComputed>,
    progress: Arc<Mutex<Progress>>,
    repaint: Arc<Mutex<Option<egui::Context>>>,
) {
    let wake = |after: Option<Duration>| {
        if let Ok(slot) = repaint.lock()
            && let Some(ctx) = slot.as_ref()
        {
            match after {
                Some(d) => ctx.request_repaint_after(d),
                None => ctx.request_repaint(),
            }
        }
    };
    while let Ok(mut job) = jobs.recv() {
        while let Ok(newer) = jobs.try_recv() {
            job = newer;
        }
        if job.cancel.is_cancelled() {
            continue;
        }
        let started = Instant::now();
        let last_wake = Mutex::new(Instant::now());
        let report = |done: usize, total: usize, note: String| {
            if let Ok(mut p) = progress.lock() {
                *p = Progress {
                    done,
                    total,
                    note,
                    running: true,
                };
            }
            if let Ok(mut t) = last_wake.lock()
                && t.elapsed() >= PROGRESS_REPAINT
            {
                *t = Instant::now();
                wake(None);
            }
        };
        let outcome = run_view(&job, &report);
        if let Ok(mut p) = progress.lock() {
            p.running = false;
        }
        let computed = ViewComputed {
            kind,
            generation: job.generation,
            spec: job.spec,
            system: job.system,
            outcome: Arc::new(outcome),
            ms: started.elapsed().as_secs_f64() * 1e3,
        };
        if results.send(computed).is_err() {
            return;
        }
        wake(None);
    }
}

/// Run one view job through the core.
fn run_view(job: &ViewJob, report: &(dyn Fn(usize, usize, String) + Sync)) -> ViewOutcome {
    let sys = &job.system;
    let window = &job.spec.window;
    match &job.spec.task {
        ViewTask::Sweep(req) => {
            ViewOutcome::Sweep(req.run(sys, window, &job.cancel, &|p: SweepProgress| {
                report(
                    p.steps,
                    p.max_steps,
                    format!("{} steps, {} branches", p.steps, p.branches),
                )
            }))
        }
        ViewTask::Folds(req) => {
            ViewOutcome::Folds(req.run(sys, window, &job.cancel, &|p: FoldProgress| {
                report(
                    p.steps,
                    p.max_steps,
                    format!("{} steps, {} curves", p.steps, p.curves),
                )
            }))
        }
        ViewTask::Backbone(req) => {
            ViewOutcome::Backbone(req.run(sys, window, &job.cancel, &|done, total| {
                report(done, total, format!("{done} of {total} energies"))
            }))
        }
        ViewTask::Section {
            request,
            undriven,
            colours,
        } => ViewOutcome::Section(
            request
                .run(sys, &job.cancel, &|done, total| {
                    report(done, total, format!("{done} of {total} starts"))
                })
                .map(|section| SectionData {
                    section,
                    undriven: undriven.as_ref().and_then(|(a, cfg)| {
                        undriven_analysis_of(sys, a, window, cfg, &job.cancel)
                    }),
                    colours: colours.clone(),
                }),
        ),
        ViewTask::Melnikov(req) => {
            report(0, 1, "tracing the connections".to_string());
            ViewOutcome::Melnikov(req.run(sys, window, &job.cancel))
        }
        ViewTask::Levels(req) => ViewOutcome::Levels(req.run(sys, window, &job.cancel)),
        ViewTask::Basin(req) => ViewOutcome::Basin(
            basin_data(sys, req, &job.cancel, &|done, total| {
                report(done, total, format!("{done} of {total} starts"))
            })
            .map_err(|e| e.to_string()),
        ),
        ViewTask::Erosion(req) => {
            ViewOutcome::Erosion(req.run(sys, &job.cancel, &|done, total| {
                report(
                    done,
                    total,
                    format!("{done} of {total} starts over {} amplitudes", req.values),
                )
            }))
        }
    }
}
