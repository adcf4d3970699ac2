//! The command line: clap subcommands over the same core API the explorer
//! uses. Every subcommand that needs a system takes [`SystemArgs`] (a session
//! file and/or `--formula`, `--set`, `--window`) and calls
//! [`SystemArgs::resolve`]; it then formats core results as a table or JSON.
//! Bad input is a [`CliError`], which `main` prints and exits with code 2.
//!
//! One file per subcommand (`analyze`, `orbit`, `diagrams` for sweep, folds
//! and backbone, `figure` for `render`), with `system` (resolving a session and flags) and
//! `text` (plain-text output) shared by them.

mod analyze;
mod basin;
mod diagrams;
mod drive;
mod figure;
mod levels;
mod orbit;
mod section;
mod system;
mod text;

pub use analyze::*;
pub use basin::{BasinArgs, BasinFlags, ErosionArgs, run_basin, run_erosion};
pub use diagrams::*;
pub use drive::*;
pub use figure::*;
pub use levels::{LevelsArgs, run_levels};
pub use orbit::*;
pub use section::*;
pub use system::*;
use text::*;

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
use crate::request::Overrides;
use crate::scene::BackbonePlot;
use crate::session::{self, BackboneSettings, FoldSettings, Parameter, Session, SweepSettings};
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
    /// Trace the fold curves (where saddle-nodes happen) in the plane of two parameters, with their cusps.
    Folds(FoldsArgs),
    /// Period, frequency, action and amplitude against energy in the well of a center.
    Backbone(BackboneArgs),
    /// Semiclassical (Bohr–Sommerfeld) energy levels in each well, for a given ħ.
    Levels(LevelsArgs),
    /// The Melnikov function of a driven, damped H along each separatrix of the undriven H:
    /// its zeros and the drive amplitude above which a chaotic layer is expected.
    Melnikov(MelnikovArgs),
    /// The stroboscopic section of a driven H: the state every drive period from each start.
    Section(SectionArgs),
    /// The safe basin of each well under the drive: the starts that stay in
    /// the well for N drive periods, the safe area and the integrity measures.
    Basin(BasinArgs),
    /// The integrity measures of the safe basins against the drive
    /// amplitude, with the Melnikov threshold.
    Erosion(ErosionArgs),
    /// Draw a figure (SVG or PNG by the output's extension).
    Render(RenderArgs),
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

/// Bad input on the command line or in a file it names.
#[derive(Debug, Clone, PartialEq)]
pub struct CliError(pub String);

impl fmt::Display for CliError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.0)
    }
}

impl std::error::Error for CliError {}

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
        Command::Melnikov(args) => run_melnikov(args),
        Command::Section(args) => run_section(args),
        Command::Basin(args) => run_basin(args),
        Command::Erosion(args) => run_erosion(args),
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
