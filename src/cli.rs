//! The command line: clap subcommands over the same core API the explorer
//! uses. Every subcommand that needs a system takes [`SystemArgs`] (a session
//! file and/or `--formula`, `--set`, `--window`) and calls
//! [`SystemArgs::resolve`]; it then formats core results as a table or JSON.
//! Bad input is a [`CliError`], which `main` prints and exits with code 2.

use crate::core::Cancel;
use crate::core::analysis::{Analysis, analyze};
use crate::core::formula::Formula;
use crate::core::integrate::Method;
use crate::core::orbit::{Orbit, OrbitRequest, StopReason, default_duration, integrate_orbit};
use crate::core::system::System;
use crate::core::window::Window;
use crate::session::{self, Parameter, Session};
use clap::{Args, Parser, Subcommand};
use std::fmt::{self, Write as _};
use std::path::PathBuf;

/// The whole command line.
#[derive(Debug, Parser)]
#[command(
    name = "phasewright",
    version,
    about = "Workbench for conservative one-degree-of-freedom Hamiltonian systems H(q, p)",
    long_about = "Workbench for conservative one-degree-of-freedom Hamiltonian systems H(q, p).\n\
                  Without a subcommand, opens the desktop explorer."
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Option<Command>,
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
    #[arg(long, value_name = "H")]
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
    /// Print JSON instead of a table.
    #[arg(long)]
    pub json: bool,
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
    /// Integration method: auto, verlet, yoshida4, yoshida6, midpoint, gauss4, gauss6, dopri5.
    #[arg(long, value_name = "NAME")]
    pub method: Option<String>,
    /// Fixed step size (default: from the local time scale).
    #[arg(long, value_name = "H")]
    pub step: Option<f64>,
    /// Print JSON instead of a table.
    #[arg(long, conflicts_with = "csv")]
    pub json: bool,
    /// Print the samples as CSV (t,q,p,H).
    #[arg(long)]
    pub csv: bool,
}

/// How a bifurcation or backbone command prints its results.
#[derive(Debug, Clone, Default, Args)]
pub struct OutputArgs {
    /// Print JSON instead of a table.
    #[arg(long, conflicts_with = "csv")]
    pub json: bool,
    /// Print comma-separated values with a header row.
    #[arg(long)]
    pub csv: bool,
}

/// Arguments of `sweep`.
#[derive(Debug, Clone, Args)]
pub struct SweepArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    /// The parameter that moves.
    #[arg(long, value_name = "NAME")]
    pub param: String,
    /// Where the parameter starts.
    #[arg(long, value_name = "A", allow_hyphen_values = true)]
    pub from: String,
    /// Where the parameter ends.
    #[arg(long, value_name = "B", allow_hyphen_values = true)]
    pub to: String,
    #[command(flatten)]
    pub output: OutputArgs,
}

/// Arguments of `folds`.
#[derive(Debug, Clone, Args)]
pub struct FoldsArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    /// The two parameters: NAME1,NAME2.
    #[arg(long, value_name = "NAME1,NAME2")]
    pub params: String,
    /// The parameter box [A1, B1] × [A2, B2]: A1,B1,A2,B2.
    #[arg(long = "box", value_name = "A1,B1,A2,B2", allow_hyphen_values = true)]
    pub bounds: String,
    #[command(flatten)]
    pub output: OutputArgs,
}

/// Arguments of `backbone`.
#[derive(Debug, Clone, Args)]
pub struct BackboneArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    /// A point near the center of the well: Q,P.
    #[arg(long, value_name = "Q,P", allow_hyphen_values = true)]
    pub center: String,
    #[command(flatten)]
    pub output: OutputArgs,
}

/// What a figure shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum FigureView {
    /// Level curves, equilibria and the session's orbits in the phase plane.
    Portrait,
    /// Equilibria against one parameter.
    Diagram,
    /// Period against energy in the well of one center.
    Backbone,
}

/// Arguments of `render`.
#[derive(Debug, Clone, Args)]
pub struct RenderArgs {
    #[command(flatten)]
    pub system: SystemArgs,
    /// The figure file to write: FILE.svg or FILE.png.
    #[arg(short = 'o', long = "output", value_name = "FILE.svg|FILE.png")]
    pub output: PathBuf,
    /// Size in pixels, WIDTHxHEIGHT.
    #[arg(long, value_name = "WxH", default_value = "1000x750")]
    pub size: String,
    /// What to draw.
    #[arg(long, value_enum, default_value_t = FigureView::Portrait)]
    pub view: FigureView,
    /// Diagram: the parameter to move.
    #[arg(long, value_name = "NAME")]
    pub param: Option<String>,
    /// Diagram: where the parameter starts.
    #[arg(long, value_name = "A", allow_hyphen_values = true)]
    pub from: Option<f64>,
    /// Diagram: where the parameter ends.
    #[arg(long, value_name = "B", allow_hyphen_values = true)]
    pub to: Option<f64>,
    /// Backbone: the center whose well to follow (default: the first center).
    #[arg(long, value_name = "Q,P", allow_hyphen_values = true)]
    pub center: Option<String>,
    /// With -o FILE.csv or FILE.json: which table of the portrait to write.
    #[arg(long, value_enum, default_value_t = PortraitTable::Equilibria)]
    pub table: PortraitTable,
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
    if args.json {
        Ok(analysis_json(&r, &a))
    } else {
        Ok(analysis_table(&r, &a))
    }
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
    if args.csv {
        Ok(orbit_csv(&orbit))
    } else if args.json {
        Ok(orbit_json(&r, &orbit, q0, p0))
    } else {
        Ok(orbit_table(&r, &orbit, q0, p0))
    }
}

/// The session's parameter values by name, for JSON output.
fn parameter_map(r: &Resolved) -> serde_json::Map<String, serde_json::Value> {
    r.session
        .parameters
        .iter()
        .map(|p| (p.name.clone(), serde_json::Value::from(p.value)))
        .collect()
}

/// The orbit's samples as CSV with a header.
pub fn orbit_csv(orbit: &Orbit) -> String {
    let mut out = String::from("t,q,p,H\n");
    for s in &orbit.samples {
        let _ = writeln!(out, "{},{},{},{}", s.t, s.q, s.p, s.h);
    }
    out
}

/// The orbit's measurements as JSON (samples left out; see `--csv`).
pub fn orbit_json(r: &Resolved, orbit: &Orbit, q0: f64, p0: f64) -> String {
    let parameters = parameter_map(r);
    let v = serde_json::json!({
        "formula": r.session.formula,
        "parameters": parameters,
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
    });
    serde_json::to_string_pretty(&v).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"))
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

/// `render`: build the scene the view asks for and write it as SVG or PNG,
/// or write the numbers behind it as CSV or JSON.
pub fn run_render(args: &RenderArgs) -> Result<String, CliError> {
    use crate::render::{FigureFormat, FigureSize};
    let ext = args
        .output
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase);
    let table = matches!(ext.as_deref(), Some("csv" | "json"));
    let format = FigureFormat::from_path(&args.output);
    if format.is_none() && !table {
        return Err(CliError(format!(
            "-o {}: the file name must end in .svg or .png (a figure) or .csv or .json (a table)",
            args.output.display()
        )));
    }
    let size = FigureSize::parse(&args.size).map_err(|e| CliError(format!("--size: {e}")))?;
    let r = args.system.resolve()?;
    print_warnings(&r.warnings);
    let (bytes, summary) = match args.view {
        FigureView::Portrait => {
            let data =
                crate::render::portrait_data(&r.session, &r.system, &r.window, &Cancel::never());
            if table {
                let t = portrait_table(&r, &data, args.table);
                let text = if ext.as_deref() == Some("csv") {
                    t.to_csv()
                } else {
                    t.to_json()
                };
                (text.into_bytes(), format!("{} rows", t.rows.len()))
            } else {
                let scene = crate::render::portrait_scene(&r.session, &r.system, &data);
                figure(&scene, size, format)?
            }
        }
        FigureView::Diagram | FigureView::Backbone => {
            return Err(CliError(format!(
                "--view {}: this figure is not available yet",
                match args.view {
                    FigureView::Diagram => "diagram",
                    _ => "backbone",
                }
            )));
        }
    };
    session::write_atomic(&args.output, |w| w.write_all(&bytes))
        .map_err(|e| CliError(e.to_string()))?;
    Ok(format!("wrote {} ({summary})", args.output.display()))
}

/// The bytes of a figure and a one-line summary of it.
fn figure(
    scene: &crate::scene::Scene,
    size: crate::render::FigureSize,
    format: Option<crate::render::FigureFormat>,
) -> Result<(Vec<u8>, String), CliError> {
    let format = format.unwrap_or(crate::render::FigureFormat::Svg);
    let bytes =
        crate::render::figure_bytes(scene, size, format).map_err(|e| CliError(e.to_string()))?;
    Ok((
        bytes,
        format!(
            "{}x{} px, {} curves, {} marks",
            size.width,
            size.height,
            scene.curves.len(),
            scene.marks.len()
        ),
    ))
}

/// The table of a portrait that `--table` names.
fn portrait_table(
    r: &Resolved,
    data: &crate::render::PortraitData,
    which: PortraitTable,
) -> crate::render::table::Table {
    use crate::render::table;
    let params = table::parameter_pairs(&r.system);
    match which {
        PortraitTable::Equilibria => table::equilibria_table(&data.analysis.equilibria, &params),
        PortraitTable::Wells => table::wells_table(&data.analysis.wells, &params),
        PortraitTable::Orbits => table::orbit_measurements_table(&data.orbits, &params),
        PortraitTable::Samples => table::orbits_samples_table(&data.orbits, &params),
    }
}

/// The analysis as JSON: formula, parameters, window, equilibria, wells,
/// connections and diagnostics.
pub fn analysis_json(r: &Resolved, a: &Analysis) -> String {
    let parameters = parameter_map(r);
    #[derive(serde::Serialize)]
    struct Out<'a> {
        formula: &'a str,
        parameters: serde_json::Map<String, serde_json::Value>,
        window: &'a Window,
        equilibria: &'a [crate::core::equilibria::Equilibrium],
        wells: &'a [crate::core::wells::Well],
        connections: &'a [crate::core::wells::Connection],
        diagnostics: &'a [crate::core::Diagnostic],
        cancelled: bool,
    }
    let out = Out {
        formula: &r.session.formula,
        parameters,
        window: &a.window,
        equilibria: &a.equilibria,
        wells: &a.wells,
        connections: &a.connections,
        diagnostics: &a.diagnostics,
        cancelled: a.cancelled,
    };
    serde_json::to_string_pretty(&out).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"))
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

/// A CSV field: quoted when it holds a comma, quote or newline.
fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// Numbers in CSV and JSON-like output keep every digit.
fn full(v: f64) -> String {
    format!("{v:?}")
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

fn to_json<T: serde::Serialize>(r: &Resolved, body: &T) -> String {
    let parameters: serde_json::Map<String, serde_json::Value> = r
        .session
        .parameters
        .iter()
        .map(|p| (p.name.clone(), serde_json::Value::from(p.value)))
        .collect();
    let mut value = serde_json::to_value(body).unwrap_or(serde_json::Value::Null);
    if let Some(map) = value.as_object_mut() {
        map.insert("formula".into(), r.session.formula.clone().into());
        map.insert("parameters".into(), parameters.into());
        if let Ok(w) = serde_json::to_value(r.window) {
            map.insert("window".into(), w);
        }
    }
    serde_json::to_string_pretty(&value).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"))
}

/// `sweep`: branches of equilibria and bifurcation points as one parameter moves.
pub fn run_sweep(args: &SweepArgs) -> Result<String, CliError> {
    use crate::core::continuation::{SweepConfig, sweep};
    let from = parse_numbers("from", &args.from, 1, "A")?[0];
    let to = parse_numbers("to", &args.to, 1, "B")?[0];
    let r = args.system.resolve()?;
    if r.system.formula().param_index(&args.param).is_none() {
        return Err(CliError(format!(
            "--param {}: the formula has no parameter `{}` (it has: {})",
            args.param,
            args.param,
            if r.system.formula().params().is_empty() {
                "none".to_string()
            } else {
                r.system.formula().params().join(", ")
            }
        )));
    }
    print_warnings(&r.warnings);
    let s = sweep(
        &r.system,
        &args.param,
        from,
        to,
        &r.window,
        &SweepConfig::default(),
        &Cancel::never(),
        &|_| {},
    )
    .map_err(|e| CliError(format!("sweep: {e}")))?;
    if args.output.json {
        return Ok(to_json(&r, &s));
    }
    let mut out = String::new();
    if args.output.csv {
        let _ = writeln!(out, "record,branch,{},q,p,energy,kind", csv_field(&s.param));
        for (i, b) in s.branches.iter().enumerate() {
            for pt in &b.points {
                let _ = writeln!(
                    out,
                    "point,{i},{},{},{},{},{}",
                    full(pt.param),
                    full(pt.q),
                    full(pt.p),
                    full(pt.energy),
                    crate::scene::kind_name(pt.kind)
                );
            }
        }
        for b in &s.bifurcations {
            let _ = writeln!(
                out,
                "bifurcation,,{},{},{},{},{}",
                full(b.param),
                full(b.q),
                full(b.p),
                full(b.energy),
                b.kind.name()
            );
        }
        return Ok(out);
    }
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
    Ok(out)
}

/// `folds`: saddle-node curves in two parameters.
pub fn run_folds(args: &FoldsArgs) -> Result<String, CliError> {
    use crate::core::folds::{FoldConfig, fold_curves};
    let names: Vec<&str> = args.params.split(',').map(str::trim).collect();
    if names.len() != 2 || names.iter().any(|n| n.is_empty()) {
        return Err(CliError(format!(
            "--params {}: expected two parameter names NAME1,NAME2",
            args.params
        )));
    }
    let b = parse_numbers("box", &args.bounds, 4, "A1,B1,A2,B2")?;
    let r = args.system.resolve()?;
    print_warnings(&r.warnings);
    let f = fold_curves(
        &r.system,
        [names[0], names[1]],
        [b[0], b[1], b[2], b[3]],
        &r.window,
        &FoldConfig::default(),
        &Cancel::never(),
        &|_| {},
    )
    .map_err(|e| CliError(format!("folds: {e}")))?;
    if args.output.json {
        return Ok(to_json(&r, &f));
    }
    let mut out = String::new();
    if args.output.csv {
        let _ = writeln!(
            out,
            "record,curve,{},{},q,p,energy",
            csv_field(&f.params[0]),
            csv_field(&f.params[1])
        );
        for (i, c) in f.curves.iter().enumerate() {
            for pt in &c.points {
                let _ = writeln!(
                    out,
                    "point,{i},{},{},{},{},{}",
                    full(pt.params[0]),
                    full(pt.params[1]),
                    full(pt.q),
                    full(pt.p),
                    full(pt.energy)
                );
            }
        }
        for pt in &f.cusps {
            let _ = writeln!(
                out,
                "cusp,,{},{},{},{},{}",
                full(pt.params[0]),
                full(pt.params[1]),
                full(pt.q),
                full(pt.p),
                full(pt.energy)
            );
        }
        return Ok(out);
    }
    let _ = writeln!(out, "H(q, p) = {}", r.session.formula);
    let _ = writeln!(
        out,
        "{} in [{}, {}], {} in [{}, {}]",
        f.params[0], b[0], b[1], f.params[1], b[2], b[3]
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
    Ok(out)
}

/// `backbone`: period, frequency, action and amplitude against energy.
pub fn run_backbone(args: &BackboneArgs) -> Result<String, CliError> {
    use crate::core::backbone::{BackboneConfig, backbone};
    let c = parse_numbers("center", &args.center, 2, "Q,P")?;
    let r = args.system.resolve()?;
    print_warnings(&r.warnings);
    let b = backbone(
        &r.system,
        [c[0], c[1]],
        &r.window,
        &BackboneConfig::default(),
        &Cancel::never(),
        &|_, _| {},
    )
    .map_err(|e| CliError(format!("--center {}: {e}", args.center)))?;
    if args.output.json {
        return Ok(to_json(&r, &b));
    }
    let mut out = String::new();
    if args.output.csv {
        let _ = writeln!(out, "energy,period,frequency,action,amplitude");
        for row in &b.rows {
            let _ = writeln!(
                out,
                "{},{},{},{},{}",
                full(row.energy),
                full(row.period),
                full(row.frequency),
                full(row.action),
                full(row.amplitude)
            );
        }
        return Ok(out);
    }
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
    Ok(out)
}
