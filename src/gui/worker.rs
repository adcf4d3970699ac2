//! The explorer's background worker: one named thread that runs analyses and
//! orbit integrations so the UI thread never waits. Jobs carry a generation
//! number; the worker always runs the newest pending job, stale results are
//! dropped by the UI, and a refining job is cancelled when a newer one arrives.

use crate::core::Cancel;
use crate::core::analysis::{Analysis, AnalysisConfig, analyze};
use crate::core::system::System;
use crate::core::window::Window;
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
        let deadline = Instant::now() + timeout;
        let mut got = Vec::new();
        loop {
            let now = Instant::now();
            if now >= deadline {
                return got;
            }
            match self.results.recv_timeout(deadline - now) {
                Ok(c) => {
                    let done = c.generation >= generation;
                    got.push(c);
                    if done {
                        got.extend(self.results.try_iter());
                        return got;
                    }
                }
                Err(_) => return got,
            }
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
    let mut last_orbits: Vec<(String, Vec<f64>, SeededOrbit, Window, Arc<OrbitOutcome>)> =
        Vec::new();
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
                .find(|(src, params, s, window, o)| {
                    src == &job.spec.source
                        && params == &job.spec.params
                        && s == seeded
                        && (!o.view_bound || *window == job.spec.window)
                })
                .map(|o| o.4.clone());
            let outcome = match reused {
                Some(o) => o,
                None => Arc::new(integrate(
                    &job.system,
                    seeded,
                    &job.spec.window,
                    &job.cancel,
                )),
            };
            fresh.push((
                job.spec.source.clone(),
                job.spec.params.clone(),
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
