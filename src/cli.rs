//! The command line: clap subcommands over the same core API the explorer
//! uses. Every subcommand that needs a system takes [`SystemArgs`] (a session
//! file and/or `--formula`, `--set`, `--window`) and calls
//! [`SystemArgs::resolve`]; it then formats core results as a table or JSON.
//! Bad input is a [`CliError`], which `main` prints and exits with code 2.

use crate::core::Cancel;
use crate::core::analysis::{Analysis, analyze};
use crate::core::backbone::Backbone;
use crate::core::continuation::Sweep;
use crate::core::folds::FoldCurves;
use crate::core::formula::Formula;
use crate::core::integrate::Method;
use crate::core::orbit::{Orbit, OrbitRequest, StopReason, default_duration, integrate_orbit};
use crate::core::system::System;
use crate::core::window::Window;
use crate::render::{self, View, ViewError, table::Table};
use crate::scene::BackbonePlot;
use crate::session::{self, BackboneSettings, FoldSettings, Parameter, Session, SweepSettings};
use clap::{Args, Parser, Subcommand};

mod levels;
pub use levels::{LevelsArgs, run_levels};
use std::fmt::{self, Write as _};
use std::path::PathBuf;

/// The whole command line.
#[derive(Debug, Parser)]
#[command(
    name = "phasewright",
    version,
    about = "Workbench for conservative one-degree-of-freedom Hamiltonian systems H(q, p)",
    long_about = "Workbench for conservative one-degree-of-freedom Hamiltonian systems H(q, p).\n\
                  Without a subcommand, opens the desktop explorer (with FILE if given).",
    args_conflicts_with_subcommands = true
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Option<Command>,
    /// A session file to open in the explorer (the same as `phasewright open FILE`).
    #[arg(value_name = "FILE")]
    pub file: Option<PathBuf>,
}

/// The subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Open a session file in the desktop explorer.
    Open {
        /// The session file (JSON).
        file: PathBuf,
    },
    /// Find equilibria, wells and separatrix connections and print them.
    Analyze(AnalyzeArgs),
    /// Integrate one orbit from (q0, p0): period, action, frequency, energy error.
    Orbit(OrbitArgs),
    /// Follow the equilibria as one parameter moves; locate saddle-nodes and branch points.
    Sweep(SweepArgs),
    /// Trace the saddle-node curves in the plane of two parameters, with their cusps.
    Folds(FoldsArgs),
    /// Period, frequency, action and amplitude against energy in the well of a center.
    Backbone(BackboneArgs),
    /// Semiclassical (Bohr–Sommerfeld) energy levels in each well, for a given ħ.
    Levels(LevelsArgs),
    /// Draw a figure (SVG or PNG by the output's extension).
    Render(RenderArgs),
}

/// Which system to work on: a session file, a formula, or a session file
/// with some of its values overridden. Shared by every subcommand that needs
/// a system.
#[derive(Debug, Clone, Default, Args)]
pub struct SystemArgs {
    /// A session file to start from (JSON).
    #[arg(value_name = "SESSION.json")]
    pub session: Option<PathBuf>,
    /// The Hamiltonian H(q, p), e.g. "p^2/2 - cos(q)"; replaces the session's formula.
    #[arg(long, value_name = "H", allow_hyphen_values = true)]
    pub formula: Option<String>,
    /// Set a parameter, e.g. --set k=0.5 (repeatable).
    #[arg(long = "set", value_name = "NAME=VALUE")]
    pub set: Vec<String>,
    /// The phase-space window: QMIN,QMAX,PMIN,PMAX.
    #[arg(long, value_name = "QMIN,QMAX,PMIN,PMAX", allow_hyphen_values = true)]
    pub window: Option<String>,
}

/// Arguments of `analyze`.
#[derive(Debug, Clone, Args)]
pub struct AnalyzeArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    /// `--json` prints everything as JSON; `--csv` prints the equilibria as CSV.
    #[command(flatten)]
    pub output: OutputArgs,
}

/// Arguments of `orbit`.
#[derive(Debug, Clone, Args)]
pub struct OrbitArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    /// Start coordinate (default: the session's first seeded orbit).
    #[arg(long, allow_negative_numbers = true)]
    pub q0: Option<f64>,
    /// Start momentum (default: the session's first seeded orbit).
    #[arg(long, allow_negative_numbers = true)]
    pub p0: Option<f64>,
    /// Integration time (negative integrates backward). Without it the orbit
    /// runs until it closes, for at most 100 local periods.
    #[arg(long, allow_negative_numbers = true)]
    pub duration: Option<f64>,
    /// Integration method: auto, verlet, yoshida4, yoshida6, nystrom4, nystrom6, split4,
    /// split6, midpoint, gauss4, gauss6, dormand-prince (older spelling: dopri5).
    #[arg(long, value_name = "NAME")]
    pub method: Option<String>,
    /// Fixed step size (default: from the local time scale).
    #[arg(long, value_name = "DT")]
    pub step: Option<f64>,
    /// `--json` prints the measurements as JSON; `--csv` prints the samples (t,q,p,H).
    #[command(flatten)]
    pub output: OutputArgs,
}

/// How an analysis command prints its results.
#[derive(Debug, Clone, Default, Args)]
pub struct OutputArgs {
    /// Print JSON instead of a table.
    #[arg(long, conflicts_with = "csv")]
    pub json: bool,
    /// Print comma-separated values with a header row.
    #[arg(long)]
    pub csv: bool,
}

/// Which sweep: flags that replace the session's `sweep` settings.
#[derive(Debug, Clone, Default, Args)]
pub struct SweepFlags {
    /// The parameter that moves (default: the session's sweep).
    #[arg(long, value_name = "NAME")]
    pub param: Option<String>,
    /// Where the parameter starts (default: the session's sweep).
    #[arg(long, value_name = "A", allow_hyphen_values = true)]
    pub from: Option<String>,
    /// Where the parameter ends (default: the session's sweep).
    #[arg(long, value_name = "B", allow_hyphen_values = true)]
    pub to: Option<String>,
}

/// Which fold curves: flags that replace the session's `folds` settings.
#[derive(Debug, Clone, Default, Args)]
pub struct FoldFlags {
    /// The two parameters: NAME1,NAME2 (default: the session's folds).
    #[arg(long, value_name = "NAME1,NAME2")]
    pub params: Option<String>,
    /// The parameter box [A1, B1] × [A2, B2]: A1,B1,A2,B2 (default: the session's folds).
    #[arg(long = "box", value_name = "A1,B1,A2,B2", allow_hyphen_values = true)]
    pub bounds: Option<String>,
}

/// Which backbone: flags that replace the session's `backbone` settings.
#[derive(Debug, Clone, Default, Args)]
pub struct BackboneFlags {
    /// A point near the center of the well: Q,P (default: the session's
    /// backbone, else the first center in view).
    #[arg(long, value_name = "Q,P", allow_hyphen_values = true)]
    pub center: Option<String>,
    /// Energies sampled, the center's included (default: the session's, else 200).
    #[arg(long, value_name = "N")]
    pub energies: Option<usize>,
}

/// Arguments of `sweep`.
#[derive(Debug, Clone, Args)]
pub struct SweepArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    #[command(flatten)]
    pub sweep: SweepFlags,
    #[command(flatten)]
    pub output: OutputArgs,
}

/// Arguments of `folds`.
#[derive(Debug, Clone, Args)]
pub struct FoldsArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    #[command(flatten)]
    pub folds: FoldFlags,
    #[command(flatten)]
    pub output: OutputArgs,
}

/// Arguments of `backbone`.
#[derive(Debug, Clone, Args)]
pub struct BackboneArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    #[command(flatten)]
    pub backbone: BackboneFlags,
    #[command(flatten)]
    pub output: OutputArgs,
}

/// What a figure shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum FigureView {
    /// Level curves, equilibria and the session's orbits in the phase plane.
    Portrait,
    /// Equilibria against one parameter (the session's sweep, or --param/--from/--to).
    Diagram,
    /// Period against energy, or frequency against amplitude, in the well of one center.
    Backbone,
    /// Saddle-node curves in the plane of two parameters (the session's folds, or --params/--box).
    Folds,
    /// Bohr–Sommerfeld levels over H along the center's line (the session's quantum.hbar, or --hbar).
    Levels,
}

/// Which relation a backbone figure plots.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum PlotArg {
    /// Period against energy, the escape energy as a guide.
    PeriodEnergy,
    /// Angular frequency against amplitude.
    FrequencyAmplitude,
}

/// Arguments of `render`.
#[derive(Debug, Clone, Args)]
pub struct RenderArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    /// The file to write: FILE.svg or FILE.png (a figure), FILE.csv or FILE.json (its table).
    #[arg(short = 'o', long = "output", value_name = "FILE")]
    pub output: PathBuf,
    /// Size in pixels, WIDTHxHEIGHT.
    #[arg(long, value_name = "WIDTHxHEIGHT", default_value = "1000x750")]
    pub size: String,
    /// What to draw.
    #[arg(long, value_enum, default_value_t = FigureView::Portrait)]
    pub view: FigureView,
    /// Backbone: which relation to plot.
    #[arg(long, value_enum, default_value_t = PlotArg::PeriodEnergy)]
    pub plot: PlotArg,
    #[command(flatten)]
    pub sweep: SweepFlags,
    #[command(flatten)]
    pub folds: FoldFlags,
    #[command(flatten)]
    pub backbone: BackboneFlags,
    /// Levels: Planck's constant ħ, a number or an expression over the
    /// parameters (default: the session's quantum.hbar).
    #[arg(long, value_name = "EXPR", allow_hyphen_values = true)]
    pub hbar: Option<String>,
    /// Portrait with -o FILE.csv or FILE.json: which table to write.
    #[arg(long, value_enum)]
    pub table: Option<PortraitTable>,
}

/// The tables behind a portrait.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum PortraitTable {
    Equilibria,
    Wells,
    /// One row of measurements per seeded orbit.
    Orbits,
    /// Every stored sample of every seeded orbit.
    Samples,
}

impl From<PortraitTable> for render::PortraitTable {
    fn from(t: PortraitTable) -> Self {
        match t {
            PortraitTable::Equilibria => render::PortraitTable::Equilibria,
            PortraitTable::Wells => render::PortraitTable::Wells,
            PortraitTable::Orbits => render::PortraitTable::Orbits,
            PortraitTable::Samples => render::PortraitTable::Samples,
        }
    }
}

impl FigureView {
    fn view(self, plot: PlotArg) -> View {
        match self {
            FigureView::Portrait => View::Portrait,
            FigureView::Diagram => View::Diagram,
            FigureView::Folds => View::Folds,
            FigureView::Levels => View::Levels,
            FigureView::Backbone => View::Backbone(match plot {
                PlotArg::PeriodEnergy => BackbonePlot::PeriodEnergy,
                PlotArg::FrequencyAmplitude => BackbonePlot::FrequencyAmplitude,
            }),
        }
    }
}

/// Bad input on the command line or in a file it names.
#[derive(Debug, Clone, PartialEq)]
pub struct CliError(pub String);

impl fmt::Display for CliError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for CliError {}

/// A resolved system: the session after overrides, its compiled system and
/// window, and the warnings met on the way (printed on stderr by `main`).
#[derive(Debug, Clone)]
pub struct Resolved {
    pub session: Session,
    pub system: System,
    pub window: Window,
    pub warnings: Vec<String>,
}

impl SystemArgs {
    /// Load the session (if any), apply `--formula`, `--set` and `--window`,
    /// check the result like a loaded file and compile it.
    pub fn resolve(&self) -> Result<Resolved, CliError> {
        let (mut session, mut warnings) = match (&self.session, &self.formula) {
            (Some(path), _) => session::load_file(path)
                .map_err(|e| CliError(format!("{}: {e}", path.display())))?,
            (None, Some(f)) => (Session::blank(f), Vec::new()),
            (None, None) => {
                return Err(CliError(
                    "give a session file or --formula \"H(q, p)\"".to_string(),
                ));
            }
        };
        if self.session.is_some()
            && self.formula.is_none()
            && self.set.is_empty()
            && self.window.is_none()
        {
            return finish(session, warnings);
        }
        if let Some(f) = &self.formula {
            session.formula = f.clone();
        }
        if let Some(w) = &self.window {
            session.view = parse_window(w)?;
        }
        let formula =
            Formula::compile(&session.formula).map_err(|e| CliError(format!("--formula: {e}")))?;
        for item in &self.set {
            let (name, value) = parse_set(item)?;
            if formula.param_index(&name).is_none() {
                return Err(CliError(format!(
                    "--set {item}: the formula has no parameter `{name}` (it has: {})",
                    if formula.params().is_empty() {
                        "none".to_string()
                    } else {
                        formula.params().join(", ")
                    }
                )));
            }
            match session.parameters.iter_mut().find(|p| p.name == name) {
                Some(p) => {
                    p.value = value;
                    p.min = p.min.min(value);
                    p.max = p.max.max(value);
                }
                None => {
                    let (lo, hi) = session::DEFAULT_PARAM_RANGE;
                    session.parameters.push(Parameter {
                        name,
                        value,
                        min: lo.min(value),
                        max: hi.max(value),
                        step: None,
                    });
                }
            }
        }
        for w in session.validate().map_err(|e| CliError(e.to_string()))? {
            if !warnings.contains(&w) {
                warnings.push(w);
            }
        }
        finish(session, warnings)
    }
}

fn finish(session: Session, warnings: Vec<String>) -> Result<Resolved, CliError> {
    let system = session.system().map_err(|e| CliError(e.to_string()))?;
    let window = session.view;
    Ok(Resolved {
        session,
        system,
        window,
        warnings,
    })
}

/// Parse "QMIN,QMAX,PMIN,PMAX" into a checked window.
pub fn parse_window(text: &str) -> Result<Window, CliError> {
    let parts: Vec<&str> = text.split(',').map(str::trim).collect();
    if parts.len() != 4 {
        return Err(CliError(format!(
            "--window {text}: expected four numbers QMIN,QMAX,PMIN,PMAX (found {})",
            parts.len()
        )));
    }
    let mut v = [0.0; 4];
    for (i, (slot, part)) in v.iter_mut().zip(&parts).enumerate() {
        *slot = parse_number(part).ok_or_else(|| {
            CliError(format!(
                "--window {text}: value {} (\"{part}\") is not a finite number",
                i + 1
            ))
        })?;
    }
    Window::new(v[0], v[1], v[2], v[3]).map_err(|e| CliError(format!("--window {text}: {e}")))
}

/// Parse "NAME=VALUE".
pub fn parse_set(text: &str) -> Result<(String, f64), CliError> {
    let Some((name, value)) = text.split_once('=') else {
        return Err(CliError(format!(
            "--set {text}: expected NAME=VALUE, e.g. --set k=0.5"
        )));
    };
    let name = name.trim();
    if name.is_empty() {
        return Err(CliError(format!("--set {text}: the name is empty")));
    }
    let value = parse_number(value.trim()).ok_or_else(|| {
        CliError(format!(
            "--set {text}: \"{}\" is not a finite number",
            value.trim()
        ))
    })?;
    Ok((name.to_string(), value))
}

fn parse_number(s: &str) -> Option<f64> {
    s.parse::<f64>().ok().filter(|v| v.is_finite())
}

/// Run a subcommand that prints its results; returns the text for stdout.
/// Warnings go to stderr as they are met.
pub fn run(command: &Command) -> Result<String, CliError> {
    match command {
        Command::Analyze(args) => run_analyze(args),
        Command::Orbit(args) => run_orbit(args),
        Command::Sweep(args) => run_sweep(args),
        Command::Folds(args) => run_folds(args),
        Command::Backbone(args) => run_backbone(args),
        Command::Levels(args) => run_levels(args),
        Command::Render(args) => run_render(args),
        Command::Open { .. } => Err(CliError(
            "`open` starts the desktop explorer; it has no text output".to_string(),
        )),
    }
}

fn print_warnings(warnings: &[String]) {
    for w in warnings {
        eprintln!("warning: {w}");
    }
}

/// The three ways an analysis command prints: `--json` (the result with the
/// formula, parameter values and window added), `--csv` (its table), or
/// readable text. Each subcommand states only its result, table and text.
fn emit<T: serde::Serialize>(
    r: &Resolved,
    output: &OutputArgs,
    result: &T,
    table: impl FnOnce() -> Table,
    text: impl FnOnce() -> String,
) -> String {
    if output.json {
        let params: Vec<(String, f64)> = r
            .session
            .parameters
            .iter()
            .map(|p| (p.name.clone(), p.value))
            .collect();
        render::table::annotated_json(result, &r.session.formula, &params, &r.window)
    } else if output.csv {
        table().to_csv()
    } else {
        text()
    }
}

/// A view's results for a subcommand or `render`, its errors in command-line words.
fn compute<T>(
    r: &Resolved,
    command: &str,
    run: impl FnOnce(&Session, &System, &Window, &Cancel) -> Result<T, ViewError>,
) -> Result<T, CliError> {
    run(&r.session, &r.system, &r.window, &Cancel::never()).map_err(|e| view_error(&e, command))
}

fn view_error(e: &ViewError, command: &str) -> CliError {
    CliError(match e {
        ViewError::MissingSettings(View::Diagram) => format!(
            "{command}: {e}; give --param NAME --from A --to B or add the section to the session"
        ),
        ViewError::MissingSettings(View::Folds) => format!(
            "{command}: {e}; give --params NAME1,NAME2 --box A1,B1,A2,B2 or add the section to the session"
        ),
        ViewError::MissingSettings(View::Levels) => {
            format!("{command}: {e}; give --hbar EXPR or add the section to the session")
        }
        ViewError::Refused { message, .. } => format!("{command}: {message}"),
        other => format!("{command}: {other}"),
    })
}

/// `analyze`: equilibria, wells, connections, diagnostics.
pub fn run_analyze(args: &AnalyzeArgs) -> Result<String, CliError> {
    let r = args.system.resolve()?;
    print_warnings(&r.warnings);
    let a = analyze(
        &r.system,
        &r.window,
        &r.session.analysis_config(),
        &Cancel::never(),
    );
    #[derive(serde::Serialize)]
    struct Out<'a> {
        equilibria: &'a [crate::core::equilibria::Equilibrium],
        wells: &'a [crate::core::wells::Well],
        connections: &'a [crate::core::wells::Connection],
        diagnostics: &'a [crate::core::Diagnostic],
        cancelled: bool,
    }
    let out = Out {
        equilibria: &a.equilibria,
        wells: &a.wells,
        connections: &a.connections,
        diagnostics: &a.diagnostics,
        cancelled: a.cancelled,
    };
    let params = render::table::parameter_pairs(&r.system);
    Ok(emit(
        &r,
        &args.output,
        &out,
        || render::table::equilibria_table(&a.equilibria, &params),
        || analysis_table(&r, &a),
    ))
}

/// `orbit`: integrate one orbit and print its measurements or samples.
pub fn run_orbit(args: &OrbitArgs) -> Result<String, CliError> {
    let r = args.system.resolve()?;
    print_warnings(&r.warnings);
    let seeded = r.session.orbits.first();
    let (q0, p0) = match (args.q0, args.p0, seeded) {
        (Some(q), Some(p), _) => (q, p),
        (q, p, Some(o)) => (q.unwrap_or(o.q0), p.unwrap_or(o.p0)),
        _ => {
            return Err(CliError(
                "give the start point with --q0 X --p0 Y (the session seeds no orbit)".to_string(),
            ));
        }
    };
    let method_name = match (&args.method, seeded) {
        (Some(m), _) => m.clone(),
        (None, Some(o)) if args.q0.is_none() && args.p0.is_none() => o.method.clone(),
        _ => "auto".to_string(),
    };
    let method = Method::from_name(&method_name).map_err(|e| CliError(format!("--method: {e}")))?;
    let seeded_duration = seeded
        .filter(|_| args.q0.is_none() && args.p0.is_none())
        .map(|o| o.duration);
    let duration = args.duration.or(seeded_duration);
    let mut req = OrbitRequest::new(
        q0,
        p0,
        duration.unwrap_or_else(|| default_duration(&r.system, q0, p0, 0.0)),
        &r.window,
    );
    req.method = method;
    req.step = args.step;
    req.stop_when_closed = duration.is_none();
    req.validate().map_err(|e| {
        let flag = match e.field {
            "q0" => "--q0",
            "p0" => "--p0",
            "q0, p0" => "--q0/--p0",
            "duration" => "--duration",
            "step" => "--step",
            other => other,
        };
        CliError(format!("{flag}: {}", e.problem))
    })?;
    let orbit = integrate_orbit(&r.system, &req, &Cancel::never());
    if let StopReason::InvalidRequest { problem } = &orbit.stop {
        return Err(CliError(format!("--method {method_name}: {problem}")));
    }
    Ok(emit(
        &r,
        &args.output,
        &orbit_measurements(&orbit, q0, p0),
        || render::table::orbit_samples_table(&orbit),
        || orbit_table(&r, &orbit, q0, p0),
    ))
}

/// The orbit's measurements for JSON (samples left out; see `--csv`).
fn orbit_measurements(orbit: &Orbit, q0: f64, p0: f64) -> serde_json::Value {
    serde_json::json!({
        "q0": q0,
        "p0": p0,
        "method": orbit.method,
        "step": orbit.step,
        "period": orbit.period,
        "action": orbit.action,
        "frequency": orbit.frequency,
        "closed": orbit.closed,
        "motion": orbit.motion,
        "q_advance": orbit.q_advance,
        "q_range": orbit.q_range,
        "p_range": orbit.p_range,
        "energy": orbit.energy,
        "energy_error": orbit.energy_error,
        "energy_scale": orbit.energy_scale,
        "energy_drift": orbit.energy_drift,
        "stop_reason": orbit.stop.name(),
        "stop_message": orbit.stop.message(),
        "steps": orbit.steps,
        "field_evaluations": orbit.field_evaluations,
        "jet_evaluations": orbit.jet_evaluations,
        "samples": orbit.samples.len(),
        "diagnostics": orbit.diagnostics,
    })
}

/// The orbit's measurements as readable lines.
pub fn orbit_table(r: &Resolved, orbit: &Orbit, q0: f64, p0: f64) -> String {
    let mut out = String::new();
    let opt = |v: Option<f64>| v.map_or("none".to_string(), |x| format!("{x}"));
    let _ = writeln!(out, "H(q, p) = {}", r.session.formula);
    let _ = writeln!(
        out,
        "start: q0 = {q0}, p0 = {p0}, H = {}",
        num(orbit.energy)
    );
    let _ = writeln!(out, "method: {}, step {}", orbit.method, num(orbit.step));
    let rows = vec![
        vec!["period".to_string(), opt(orbit.period)],
        vec!["frequency".to_string(), opt(orbit.frequency)],
        vec!["action".to_string(), opt(orbit.action)],
        vec![
            "motion".to_string(),
            format!("{:?}", orbit.motion).to_lowercase(),
        ],
        vec![
            "q range".to_string(),
            format!("{} .. {}", num(orbit.q_range[0]), num(orbit.q_range[1])),
        ],
        vec![
            "p range".to_string(),
            format!("{} .. {}", num(orbit.p_range[0]), num(orbit.p_range[1])),
        ],
        vec![
            "energy error".to_string(),
            format!(
                "{:.3e} (relative {:.3e})",
                orbit.energy_error, orbit.energy_drift
            ),
        ],
        vec!["steps".to_string(), orbit.steps.to_string()],
        vec![
            "field evaluations".to_string(),
            orbit.field_evaluations.to_string(),
        ],
        vec!["stopped".to_string(), orbit.stop.message()],
    ];
    table(&mut out, &["quantity", "value"], &rows);
    for d in &orbit.diagnostics {
        let _ = writeln!(out, "note: {}", d.message);
    }
    out
}

/// Parse one finite number given to `--option`.
fn parse_one(option: &str, text: &str, shape: &str) -> Result<f64, CliError> {
    Ok(parse_numbers(option, text, 1, shape)?[0])
}

/// A parameter named on the command line must be one of the formula's: the
/// panes fall back to the first parameters for a stale name in a saved file,
/// but a name the user typed just now is refused.
fn known_parameter(session: &Session, flag: &str, name: &str) -> Result<(), CliError> {
    let Ok(formula) = crate::core::formula::Formula::compile(&session.formula) else {
        return Ok(()); // the formula's own error is reported where it is compiled
    };
    if formula.param_index(name).is_some() {
        return Ok(());
    }
    let listed = formula.params().join(", ");
    Err(CliError(if listed.is_empty() {
        format!("{flag} {name}: the formula has no parameters")
    } else {
        format!("{flag} {name}: the formula has no parameter {name} (its parameters: {listed})")
    }))
}

impl SweepFlags {
    /// Replace the session's sweep settings with the flags given; the rest
    /// come from the session. All three must be known in the end.
    pub fn apply(&self, session: &mut Session) -> Result<(), CliError> {
        if self.param.is_none() && self.from.is_none() && self.to.is_none() {
            return Ok(());
        }
        let base = session.sweep.clone();
        let from = match &self.from {
            Some(t) => Some(parse_one("from", t, "A")?),
            None => base.as_ref().map(|b| b.from),
        };
        let to = match &self.to {
            Some(t) => Some(parse_one("to", t, "B")?),
            None => base.as_ref().map(|b| b.to),
        };
        let param = self
            .param
            .clone()
            .or(base.as_ref().map(|b| b.param.clone()));
        match (param, from, to) {
            (Some(param), Some(from), Some(to)) => {
                known_parameter(session, "--param", &param)?;
                session.sweep = Some(SweepSettings {
                    param,
                    from,
                    to,
                    max_step: base.and_then(|b| b.max_step),
                });
                Ok(())
            }
            (param, from, to) => {
                let missing: Vec<&str> = [
                    param.is_none().then_some("--param NAME"),
                    from.is_none().then_some("--from A"),
                    to.is_none().then_some("--to B"),
                ]
                .into_iter()
                .flatten()
                .collect();
                Err(CliError(format!(
                    "the session has no sweep settings to complete the flags; also give {}",
                    missing.join(" ")
                )))
            }
        }
    }
}

impl FoldFlags {
    /// Replace the session's fold-curve settings with the flags given.
    pub fn apply(&self, session: &mut Session) -> Result<(), CliError> {
        if self.params.is_none() && self.bounds.is_none() {
            return Ok(());
        }
        let base = session.folds.clone();
        let params = match &self.params {
            Some(text) => {
                let names: Vec<&str> = text.split(',').map(str::trim).collect();
                if names.len() != 2 || names.iter().any(|n| n.is_empty()) {
                    return Err(CliError(format!(
                        "--params {text}: expected two parameter names NAME1,NAME2"
                    )));
                }
                Some([names[0].to_string(), names[1].to_string()])
            }
            None => base.as_ref().map(|b| b.params.clone()),
        };
        let bounds = match &self.bounds {
            Some(text) => {
                let b = parse_numbers("box", text, 4, "A1,B1,A2,B2")?;
                Some([b[0], b[1], b[2], b[3]])
            }
            None => base.as_ref().map(|b| b.bounds),
        };
        match (params, bounds) {
            (Some(params), Some(bounds)) => {
                for name in &params {
                    known_parameter(session, "--params", name)?;
                }
                session.folds = Some(FoldSettings { params, bounds });
                Ok(())
            }
            (None, _) => Err(CliError(
                "the session has no fold-curve settings to complete --box; also give --params NAME1,NAME2"
                    .to_string(),
            )),
            (_, None) => Err(CliError(
                "the session has no fold-curve settings to complete --params; also give --box A1,B1,A2,B2"
                    .to_string(),
            )),
        }
    }
}

impl BackboneFlags {
    /// Replace the session's backbone settings with the flags given.
    pub fn apply(&self, session: &mut Session) -> Result<(), CliError> {
        if self.center.is_none() && self.energies.is_none() {
            return Ok(());
        }
        let mut b = session.backbone.clone().unwrap_or_default();
        if let Some(text) = &self.center {
            let c = parse_numbers("center", text, 2, "Q,P")?;
            b.center = Some([c[0], c[1]]);
        }
        if let Some(n) = self.energies {
            let (lo, hi) = (
                session::MIN_BACKBONE_ENERGIES,
                session::MAX_BACKBONE_ENERGIES,
            );
            if !(lo..=hi).contains(&n) {
                return Err(CliError(format!(
                    "--energies {n}: expected a whole number in {lo}..={hi}"
                )));
            }
            b.energies = Some(n);
        }
        session.backbone = Some(BackboneSettings { ..b });
        Ok(())
    }

    /// How a refused backbone is introduced: by the flag that chose the center, if any.
    fn command(&self) -> String {
        self.center
            .as_ref()
            .map_or("backbone".to_string(), |c| format!("--center {c}"))
    }
}

/// `sweep`: branches of equilibria and bifurcation points as one parameter moves.
pub fn run_sweep(args: &SweepArgs) -> Result<String, CliError> {
    let mut r = args.system.resolve()?;
    args.sweep.apply(&mut r.session)?;
    print_warnings(&r.warnings);
    let s = compute(&r, "sweep", render::sweep_of)?;
    Ok(emit(
        &r,
        &args.output,
        &s,
        || render::table::sweep_table(&s),
        || sweep_text(&r, &s),
    ))
}

/// `folds`: saddle-node curves in two parameters.
pub fn run_folds(args: &FoldsArgs) -> Result<String, CliError> {
    let mut r = args.system.resolve()?;
    args.folds.apply(&mut r.session)?;
    print_warnings(&r.warnings);
    let f = compute(&r, "folds", render::folds_of)?;
    Ok(emit(
        &r,
        &args.output,
        &f,
        || render::table::folds_table(&f),
        || folds_text(&r, &f),
    ))
}

/// `backbone`: period, frequency, action and amplitude against energy.
pub fn run_backbone(args: &BackboneArgs) -> Result<String, CliError> {
    let mut r = args.system.resolve()?;
    args.backbone.apply(&mut r.session)?;
    print_warnings(&r.warnings);
    let b = compute(&r, &args.backbone.command(), render::backbone_of)?;
    Ok(emit(
        &r,
        &args.output,
        &b,
        || render::table::backbone_table(&b),
        || backbone_text(&r, &b),
    ))
}

/// `render`: compute the view, then write it as SVG or PNG, or write the
/// numbers behind it as CSV or JSON, through `render::export_data`.
pub fn run_render(args: &RenderArgs) -> Result<String, CliError> {
    use crate::render::{ExportFormat, FigureSize};
    let view = args.view.view(args.plot);
    let which = args.table.map(Into::into).unwrap_or_default();
    let format = ExportFormat::from_path(&args.output, which).ok_or_else(|| {
        CliError(format!(
            "-o {}: the file name must end in .svg or .png (a figure) or .csv or .json (a table)",
            args.output.display()
        ))
    })?;
    if args.table.is_some() && view != View::Portrait {
        return Err(CliError(format!(
            "--table chooses among the portrait's tables; the {} has one table",
            view.name()
        )));
    }
    let size = FigureSize::parse(&args.size).map_err(|e| CliError(format!("--size: {e}")))?;
    let mut r = args.system.resolve()?;
    let command = match view {
        View::Diagram => {
            args.sweep.apply(&mut r.session)?;
            "--view diagram".to_string()
        }
        View::Folds => {
            args.folds.apply(&mut r.session)?;
            "--view folds".to_string()
        }
        View::Backbone(_) => {
            args.backbone.apply(&mut r.session)?;
            args.backbone.command()
        }
        View::Levels => levels::apply_hbar(&mut r.session, args.hbar.as_deref(), "--view levels"),
        View::Portrait => "--view portrait".to_string(),
    };
    print_warnings(&r.warnings);
    let data = compute(&r, &command, |s, sys, w, c| {
        render::view_data(s, sys, w, view, c)
    })?;
    let out = render::export_data(&r.session, &r.system, &data, view, format, size)
        .map_err(|e| view_error(&e, &command))?;
    session::write_atomic(&args.output, |w| w.write_all(&out.bytes))
        .map_err(|e| CliError(e.to_string()))?;
    Ok(format!("wrote {} ({})", args.output.display(), out.summary))
}

/// A number for a table: fixed digits, without "-0".
fn num(v: f64) -> String {
    let v = if v == 0.0 { 0.0 } else { v };
    if v.is_finite() && v != 0.0 && (v.abs() >= 1e6 || v.abs() < 1e-4) {
        format!("{v:.5e}")
    } else {
        format!("{v:.6}")
    }
}

fn complex(re: f64, im: f64) -> String {
    let re = if re == 0.0 { 0.0 } else { re };
    if im == 0.0 {
        num(re)
    } else if re == 0.0 {
        format!("{}i", num(im))
    } else {
        let sign = if im < 0.0 { '-' } else { '+' };
        format!("{}{sign}{}i", num(re), num(im.abs()))
    }
}

/// Left-aligned columns, two spaces apart.
fn table(out: &mut String, header: &[&str], rows: &[Vec<String>]) {
    let mut width: Vec<usize> = header.iter().map(|h| h.chars().count()).collect();
    for row in rows {
        for (w, cell) in width.iter_mut().zip(row) {
            *w = (*w).max(cell.chars().count());
        }
    }
    let line = |out: &mut String, cells: Vec<&str>| {
        let mut s = String::from(" ");
        for (cell, w) in cells.iter().zip(&width) {
            s.push(' ');
            s.push_str(cell);
            s.extend(std::iter::repeat_n(' ', w + 1 - cell.chars().count()));
        }
        let _ = writeln!(out, "{}", s.trim_end());
    };
    line(out, header.to_vec());
    for row in rows {
        line(out, row.iter().map(String::as_str).collect());
    }
}

/// The analysis as readable tables.
pub fn analysis_table(r: &Resolved, a: &Analysis) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "H(q, p) = {}", r.session.formula);
    if !r.session.parameters.is_empty() {
        let list: Vec<String> = r
            .session
            .parameters
            .iter()
            .map(|p| format!("{} = {}", p.name, p.value))
            .collect();
        let _ = writeln!(out, "parameters: {}", list.join(", "));
    }
    let w = &a.window;
    let _ = writeln!(
        out,
        "window: q in [{}, {}], p in [{}, {}]",
        w.qmin, w.qmax, w.pmin, w.pmax
    );

    let _ = writeln!(out, "\nEquilibria ({})", a.equilibria.len());
    let rows: Vec<Vec<String>> = a
        .equilibria
        .iter()
        .enumerate()
        .map(|(i, e)| {
            vec![
                format!("{i}"),
                num(e.q),
                num(e.p),
                num(e.energy),
                crate::scene::kind_name(e.kind).to_string(),
                format!(
                    "{}, {}",
                    complex(e.eigenvalues[0][0], e.eigenvalues[0][1]),
                    complex(e.eigenvalues[1][0], e.eigenvalues[1][1])
                ),
            ]
        })
        .collect();
    if rows.is_empty() {
        let _ = writeln!(out, "  none in view");
    } else {
        table(
            &mut out,
            &["#", "q", "p", "H", "kind", "eigenvalues"],
            &rows,
        );
    }

    let _ = writeln!(out, "\nWells ({})", a.wells.len());
    let rows: Vec<Vec<String>> = a
        .wells
        .iter()
        .map(|wl| {
            vec![
                format!("#{}", wl.center),
                num(wl.q),
                num(wl.p),
                num(wl.energy),
                wl.escape_energy.map_or("none in view".to_string(), num),
                wl.depth.map_or("-".to_string(), num),
                wl.escape_saddle
                    .map_or("-".to_string(), |s| format!("#{s}")),
                wl.edge_energy.map_or("-".to_string(), num),
            ]
        })
        .collect();
    if rows.is_empty() {
        let _ = writeln!(out, "  none");
    } else {
        table(
            &mut out,
            &[
                "center",
                "q",
                "p",
                "H",
                "escape energy",
                "depth",
                "via saddle",
                "meets edge at H",
            ],
            &rows,
        );
    }

    let _ = writeln!(out, "\nSeparatrix connections ({})", a.connections.len());
    let rows: Vec<Vec<String>> = a
        .connections
        .iter()
        .map(|c| {
            vec![
                format!("{:?}", c.kind).to_lowercase(),
                format!("#{}", c.from),
                format!("#{}", c.to),
                num(c.energy),
            ]
        })
        .collect();
    if rows.is_empty() {
        let _ = writeln!(out, "  none");
    } else {
        table(&mut out, &["kind", "from", "to", "H"], &rows);
    }

    if !a.diagnostics.is_empty() || a.cancelled {
        let _ = writeln!(out, "\nDiagnostics");
        for d in &a.diagnostics {
            let _ = writeln!(out, "  {:?}: {}", d.severity, d.message);
        }
        if a.cancelled {
            let _ = writeln!(out, "  the analysis was stopped early; results are partial");
        }
    }
    out
}

/// Parse `count` comma-separated finite numbers given to `--option`.
fn parse_numbers(
    option: &str,
    text: &str,
    count: usize,
    shape: &str,
) -> Result<Vec<f64>, CliError> {
    let parts: Vec<&str> = text.split(',').map(str::trim).collect();
    if parts.len() != count {
        return Err(CliError(format!(
            "--{option} {text}: expected {count} numbers {shape} (found {})",
            parts.len()
        )));
    }
    parts
        .iter()
        .enumerate()
        .map(|(i, part)| {
            parse_number(part).ok_or_else(|| {
                CliError(format!(
                    "--{option} {text}: value {} (\"{part}\") is not a finite number",
                    i + 1
                ))
            })
        })
        .collect()
}

fn diagnostics_text(out: &mut String, diagnostics: &[crate::core::Diagnostic], cancelled: bool) {
    if !diagnostics.is_empty() || cancelled {
        let _ = writeln!(out, "\nDiagnostics");
        for d in diagnostics {
            let _ = writeln!(out, "  {:?}: {}", d.severity, d.message);
        }
        if cancelled {
            let _ = writeln!(out, "  the work was stopped early; results are partial");
        }
    }
}

/// A sweep as readable tables.
fn sweep_text(r: &Resolved, s: &Sweep) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "H(q, p) = {}", r.session.formula);
    let _ = writeln!(out, "{} from {} to {}", s.param, s.from, s.to);
    let _ = writeln!(out, "\nBifurcations ({})", s.bifurcations.len());
    let rows: Vec<Vec<String>> = s
        .bifurcations
        .iter()
        .map(|b| {
            vec![
                b.kind.name().to_string(),
                num(b.param),
                num(b.q),
                num(b.p),
                num(b.energy),
            ]
        })
        .collect();
    if rows.is_empty() {
        let _ = writeln!(out, "  none in range");
    } else {
        table(&mut out, &["kind", &s.param, "q", "p", "H"], &rows);
    }
    let _ = writeln!(out, "\nBranches ({})", s.branches.len());
    let rows: Vec<Vec<String>> = s
        .branches
        .iter()
        .enumerate()
        .filter_map(|(i, b)| {
            let (first, last) = (b.points.first()?, b.points.last()?);
            Some(vec![
                format!("{i}"),
                crate::scene::kind_name(b.kind).to_string(),
                format!("{}", b.points.len()),
                format!("({}, {})", num(first.param), num(first.q)),
                format!("({}, {})", num(last.param), num(last.q)),
            ])
        })
        .collect();
    if rows.is_empty() {
        let _ = writeln!(out, "  none");
    } else {
        let from = format!("from ({}, q)", s.param);
        let to = format!("to ({}, q)", s.param);
        table(&mut out, &["#", "kind", "points", &from, &to], &rows);
    }
    diagnostics_text(&mut out, &s.diagnostics, s.cancelled);
    out
}

/// Fold curves as readable tables.
fn folds_text(r: &Resolved, f: &FoldCurves) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "H(q, p) = {}", r.session.formula);
    let _ = writeln!(
        out,
        "{} in [{}, {}], {} in [{}, {}]",
        f.params[0], f.bounds[0], f.bounds[1], f.params[1], f.bounds[2], f.bounds[3]
    );
    let _ = writeln!(out, "\nFold curves ({})", f.curves.len());
    let rows: Vec<Vec<String>> = f
        .curves
        .iter()
        .enumerate()
        .filter_map(|(i, c)| {
            let (first, last) = (c.points.first()?, c.points.last()?);
            Some(vec![
                format!("{i}"),
                format!("{}", c.points.len()),
                if c.closed { "closed" } else { "open" }.to_string(),
                format!("({}, {})", num(first.params[0]), num(first.params[1])),
                format!("({}, {})", num(last.params[0]), num(last.params[1])),
            ])
        })
        .collect();
    if rows.is_empty() {
        let _ = writeln!(out, "  none in the box");
    } else {
        let from = format!("from ({}, {})", f.params[0], f.params[1]);
        let to = format!("to ({}, {})", f.params[0], f.params[1]);
        table(&mut out, &["#", "points", "shape", &from, &to], &rows);
    }
    let _ = writeln!(out, "\nCusps ({})", f.cusps.len());
    let rows: Vec<Vec<String>> = f
        .cusps
        .iter()
        .map(|c| {
            vec![
                num(c.params[0]),
                num(c.params[1]),
                num(c.q),
                num(c.p),
                num(c.energy),
            ]
        })
        .collect();
    if rows.is_empty() {
        let _ = writeln!(out, "  none");
    } else {
        table(
            &mut out,
            &[&f.params[0], &f.params[1], "q", "p", "H"],
            &rows,
        );
    }
    diagnostics_text(&mut out, &f.diagnostics, f.cancelled);
    out
}

/// A backbone as readable tables.
fn backbone_text(r: &Resolved, b: &Backbone) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "H(q, p) = {}", r.session.formula);
    let _ = writeln!(
        out,
        "center q = {}, p = {}, H = {}",
        num(b.center[0]),
        num(b.center[1]),
        num(b.center_energy)
    );
    let _ = writeln!(
        out,
        "escape energy: {}",
        b.escape_energy.map_or("none in view".to_string(), num)
    );
    let _ = writeln!(out, "\nBackbone ({} energies)", b.rows.len());
    let rows: Vec<Vec<String>> = b
        .rows
        .iter()
        .map(|w| {
            vec![
                num(w.energy),
                num(w.period),
                num(w.frequency),
                num(w.action),
                num(w.amplitude),
            ]
        })
        .collect();
    table(
        &mut out,
        &["energy", "period", "frequency", "action", "amplitude"],
        &rows,
    );
    diagnostics_text(&mut out, &b.diagnostics, b.cancelled);
    out
}
