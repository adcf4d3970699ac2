//! The program entry: no arguments open the desktop explorer; subcommands run
//! the command line. Exit code 0 on success, 2 on bad input, 1 when the
//! explorer cannot start.

use clap::Parser;
use phasewright::cli::{Cli, Command};
use std::io::Write;
use std::path::PathBuf;
use std::process::ExitCode;

/// Check the file loads, then open the explorer with it.
fn open(file: &std::path::Path) -> ExitCode {
    if let Err(e) = phasewright::session::load_file(file) {
        eprintln!("phasewright: {}: {e}", file.display());
        return ExitCode::from(2);
    }
    explorer(Some(file.to_path_buf()))
}

fn main() -> ExitCode {
    // A defect should read as one line, not as a backtrace hint.
    std::panic::set_hook(Box::new(|info| {
        eprintln!("phasewright: internal error: {info}; please report it with the command you ran");
    }));
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let _ = e.print();
            return if e.use_stderr() {
                ExitCode::from(2)
            } else {
                ExitCode::SUCCESS
            };
        }
    };
    match &cli.command {
        None => match &cli.file {
            None => explorer(None),
            Some(file) => open(file),
        },
        Some(Command::Open { file }) => open(file),
        Some(command) => match phasewright::cli::run(command) {
            Ok(text) => {
                // A closed pipe (`phasewright analyze … | head`) is not an error of ours.
                let mut out = std::io::stdout().lock();
                let _ = out.write_all(text.as_bytes());
                if !text.ends_with('\n') {
                    let _ = out.write_all(b"\n");
                }
                let _ = out.flush();
                ExitCode::SUCCESS
            }
            Err(e) => {
                eprintln!("phasewright: {e}");
                ExitCode::from(2)
            }
        },
    }
}

#[cfg(feature = "gui")]
fn explorer(initial: Option<PathBuf>) -> ExitCode {
    match phasewright::gui::run(initial) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("phasewright: {e}");
            ExitCode::from(1)
        }
    }
}

#[cfg(not(feature = "gui"))]
fn explorer(initial: Option<PathBuf>) -> ExitCode {
    if initial.is_some() {
        eprintln!(
            "phasewright: this build has no desktop explorer (built without the `gui` feature)"
        );
        return ExitCode::from(2);
    }
    let _ = <Cli as clap::CommandFactory>::command().print_help();
    println!();
    ExitCode::SUCCESS
}
