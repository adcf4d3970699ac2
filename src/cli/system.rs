//! Which system a subcommand works on: a session file and/or `--formula`,
//! `--set`, `--window`, resolved once into a [`Resolved`]; and the parsers of
//! the flags' values.

use super::*;

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

pub(super) fn finish(session: Session, warnings: Vec<String>) -> Result<Resolved, CliError> {
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

pub(super) fn parse_number(s: &str) -> Option<f64> {
    s.parse::<f64>().ok().filter(|v| v.is_finite())
}

/// Parse one finite number given to `--option`.
pub(super) fn parse_one(option: &str, text: &str, shape: &str) -> Result<f64, CliError> {
    Ok(parse_numbers(option, text, 1, shape)?[0])
}

/// A parameter named on the command line must be one of the formula's: the
/// panes fall back to the first parameters for a stale name in a saved file,
/// but a name the user typed just now is refused.
pub(super) fn known_parameter(session: &Session, flag: &str, name: &str) -> Result<(), CliError> {
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

/// Parse `count` comma-separated finite numbers given to `--option`.
pub(super) fn parse_numbers(
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
