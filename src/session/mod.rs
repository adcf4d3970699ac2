//! The session file: a plain JSON format of our own (format name
//! "phasewright-session", integer version). Plain data, no computation; the
//! loader validates every field and names the field and the problem, and
//! `save_atomic` replaces a file so that a failed save never destroys the old one.

pub mod basin;
pub mod drive;
mod expression;
mod quantum;

pub use basin::BasinSettings;
pub use drive::{Drive, DriveSettings};
pub use quantum::QuantumSettings;

use crate::core::analysis::AnalysisConfig;
use crate::core::backbone::BackboneConfig;
use crate::core::continuation::SweepConfig;
use crate::core::formula::Formula;
use crate::core::integrate::Method;
use crate::core::system::System;
use crate::core::window::Window;
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};
use std::fmt;
use std::path::Path;
use std::sync::Arc;

mod save;
pub mod schema;
pub use save::{SaveError, save_atomic, write_atomic};

/// The value of the `format` field.
pub const FORMAT_NAME: &str = "phasewright-session";
/// The newest version this program reads and the one it writes.
pub const FORMAT_VERSION: u32 = 1;

/// Largest grid (points per side) a session may ask for.
pub const MAX_GRID: usize = 1024;
/// Smallest grid a session may ask for (the analysis needs at least this).
pub const MIN_GRID: usize = crate::core::analysis::MIN_ANALYSIS_GRID;
/// Largest number of evenly spaced levels.
pub const MAX_LEVELS: usize = 200;
/// Largest number of seeded orbits.
pub const MAX_ORBITS: usize = 64;
/// Largest |duration| of one seeded orbit.
pub const MAX_DURATION: f64 = 1e6;
/// Smallest and largest longest-step share a sweep may ask for.
pub const MIN_SWEEP_STEP: f64 = 1e-4;
pub const MAX_SWEEP_STEP: f64 = 0.1;
/// Fewest and most energies a backbone may sample.
pub const MIN_BACKBONE_ENERGIES: usize = 2;
pub const MAX_BACKBONE_ENERGIES: usize = 2000;
/// Longest session file accepted, in bytes.
pub const MAX_FILE_BYTES: usize = 16 * 1024 * 1024;

/// Orbit method names a session may use (the integrators' stable names).
pub const ORBIT_METHODS: [&str; Method::ALL.len()] = Method::NAMES;

/// Value given to a formula parameter that the session does not list.
pub const DEFAULT_PARAM_VALUE: f64 = 1.0;
/// Slider range given to a formula parameter that the session does not list.
pub const DEFAULT_PARAM_RANGE: (f64, f64) = (-10.0, 10.0);

/// A whole session as saved.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct Session {
    /// Names the kind of file: always "phasewright-session".
    #[schemars(extend("const" = FORMAT_NAME))]
    pub format: String,
    /// The format version the file was written in.
    #[schemars(range(min = 1, max = FORMAT_VERSION))]
    pub version: u32,
    /// A one-line title shown above the figures.
    #[serde(default)]
    pub title: String,
    /// Free notes on the model.
    #[serde(default)]
    pub notes: String,
    /// H in q, p, t and the parameters.
    #[schemars(regex(pattern = schema::NOT_BLANK))]
    pub formula: String,
    /// The formula's parameters (one missing here gets value 1 and range [-10, 10]).
    #[serde(default)]
    pub parameters: Vec<Parameter>,
    /// The window: the rectangle of phase space shown and analysed (read
    /// under its older name `view` too).
    #[serde(default, rename = "window", alias = "view")]
    #[schemars(with = "schema::WindowSchema")]
    pub view: Window,
    #[serde(default)]
    pub levels: LevelSettings,
    /// Orbits started from given points (at most 64 are kept).
    #[serde(default)]
    pub orbits: Vec<SeededOrbit>,
    /// The sweep (equilibria against one parameter), if set.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sweep: Option<SweepSettings>,
    /// The two-parameter box of the fold curves, if set.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub folds: Option<FoldSettings>,
    /// The well whose backbone is drawn, if set.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub backbone: Option<BackboneSettings>,
    /// A periodic drive with light damping, if set (see [`drive`]).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub drive: Option<DriveSettings>,
    /// Planck's constant for the semiclassical levels of each well, if set.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub quantum: Option<QuantumSettings>,
    /// How the safe basins of the wells under the drive are computed, if
    /// set (see [`basin`]).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub basin: Option<BasinSettings>,
}

/// The sweep of one parameter: which, over what range, how finely.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct SweepSettings {
    /// The parameter that moves (a parameter of the formula).
    #[schemars(regex(pattern = schema::NOT_BLANK))]
    pub param: String,
    /// Where the parameter starts.
    pub from: f64,
    /// Where the parameter ends (different from `from`; may be below it).
    pub to: f64,
    /// Longest continuation step as a share of the range and window (default
    /// 0.02, kept within 0.0001 ..= 0.1).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    #[schemars(extend("exclusiveMinimum" = 0))]
    pub max_step: Option<f64>,
}

/// The plane of two parameters in which fold curves are traced.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct FoldSettings {
    /// The two parameters, horizontal axis first.
    #[schemars(inner(regex(pattern = schema::NOT_BLANK)), extend("uniqueItems" = true))]
    pub params: [String; 2],
    /// The box [a1, b1] × [a2, b2] as [a1, b1, a2, b2].
    #[serde(rename = "box")]
    pub bounds: [f64; 4],
}

/// The well whose period, frequency and action against energy are drawn.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, Default, JsonSchema)]
pub struct BackboneSettings {
    /// A point [q, p] near the center (Newton refines it); without it, the
    /// first center in view.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub center: Option<[f64; 2]>,
    /// Energies sampled, the center's included (default 200, kept within
    /// 2 ..= 2000).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub energies: Option<usize>,
}

/// One parameter of the formula with its slider range.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct Parameter {
    /// The name as the formula writes it.
    #[schemars(regex(pattern = schema::NOT_BLANK))]
    pub name: String,
    /// The value in use, within [min, max].
    pub value: f64,
    /// The slider's range, min < max.
    pub min: f64,
    pub max: f64,
    /// The slider's step; 0 or none: continuous (as in the explorer).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    #[schemars(range(min = 0))]
    pub step: Option<f64>,
}

/// How level curves are drawn.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(default)]
pub struct LevelSettings {
    /// Evenly spaced levels over the range of H in view (saddle levels are
    /// added; at most 200).
    pub count: usize,
    /// Grid points per side (kept within 16 ..= 1024).
    pub grid: usize,
    /// Move vertices onto the exact level.
    pub refine: bool,
}

impl Default for LevelSettings {
    fn default() -> Self {
        LevelSettings {
            count: 24,
            grid: 256,
            refine: false,
        }
    }
}

/// An orbit the user seeded.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct SeededOrbit {
    /// The start point (q0, p0).
    pub q0: f64,
    pub p0: f64,
    /// The longest integration time (negative integrates backward); the
    /// orbit stops sooner once it closes, in the explorer and in figures alike.
    #[schemars(extend("not" = { "const": 0 }))]
    pub duration: f64,
    /// Method name ("auto", "verlet", "yoshida4", ...).
    #[serde(default = "default_method")]
    #[schemars(schema_with = "schema::method_name")]
    pub method: String,
    /// Colour as "#rrggbb".
    #[serde(default, skip_serializing_if = "Option::is_none")]
    #[schemars(regex(pattern = schema::COLOUR))]
    pub colour: Option<String>,
}

fn default_method() -> String {
    "auto".to_string()
}

/// Why a session was refused: which field, and what is wrong with it.
/// `field` is a path such as `parameters[1].min`; it is empty when the
/// problem is the file as a whole (not JSON, unreadable).
#[derive(Clone, Debug, PartialEq)]
pub struct SessionError {
    pub field: String,
    pub problem: String,
}

impl SessionError {
    pub fn new(field: impl Into<String>, problem: impl Into<String>) -> Self {
        SessionError {
            field: field.into(),
            problem: problem.into(),
        }
    }
}

impl fmt::Display for SessionError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.field.is_empty() {
            f.write_str(&self.problem)
        } else {
            write!(f, "field `{}`: {}", self.field, self.problem)
        }
    }
}

impl std::error::Error for SessionError {}

/// Read and check a session from JSON text. Returns the session (values
/// above a cap clamped, missing parameters added) and the warnings that
/// tell the user what was changed or looks wrong.
pub fn load(text: &str) -> Result<(Session, Vec<String>), SessionError> {
    if text.len() > MAX_FILE_BYTES {
        return Err(SessionError::new(
            "",
            format!(
                "the file is {} bytes; a session is at most {MAX_FILE_BYTES} bytes",
                text.len()
            ),
        ));
    }
    // a byte-order mark, as some editors write, is not part of the JSON
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let raw = check_header(text)?;
    let mut warnings = Vec::new();
    unknown_fields(&raw, &field_template(), "", &mut warnings)?;
    let mut de = serde_json::Deserializer::from_str(text);
    let mut session: Session = match serde_path_to_error::deserialize(&mut de) {
        Ok(s) => s,
        Err(e) => return Err(parse_error(e)),
    };
    if let Err(e) = de.end() {
        return Err(SessionError::new("", json_problem(&e)));
    }
    warnings.extend(session.validate()?);
    Ok((session, warnings))
}

/// A session with every optional field present: its JSON shape lists the
/// fields this version knows.
fn field_template() -> serde_json::Value {
    let mut s = Session::blank("q");
    s.parameters.push(Parameter {
        name: String::new(),
        value: 0.0,
        min: 0.0,
        max: 1.0,
        step: Some(1.0),
    });
    s.orbits.push(SeededOrbit {
        q0: 0.0,
        p0: 0.0,
        duration: 1.0,
        method: default_method(),
        colour: Some(String::new()),
    });
    s.sweep = Some(SweepSettings {
        param: String::new(),
        from: 0.0,
        to: 1.0,
        max_step: Some(0.02),
    });
    s.folds = Some(FoldSettings {
        params: [String::new(), String::new()],
        bounds: [0.0, 1.0, 0.0, 1.0],
    });
    s.backbone = Some(BackboneSettings {
        center: Some([0.0, 0.0]),
        energies: Some(200),
    });
    s.drive = Some(DriveSettings {
        period: String::new(),
        damping: Some(String::new()),
        amplitude: Some(String::new()),
        periods: Some(1),
        lattice: Some(1),
        enabled: false,
    });
    s.quantum = Some(QuantumSettings {
        hbar: String::new(),
        on_portrait: false,
    });
    s.basin = Some(BasinSettings {
        lattice: Some(1),
        periods: Some(1),
        center: Some([0.0, 0.0]),
        from: Some(0.0),
        to: Some(1.0),
        values: Some(2),
    });
    let mut known = serde_json::to_value(&s).unwrap_or(serde_json::Value::Null);
    // older names still read (serde aliases)
    if let Some(fields) = known.as_object_mut()
        && let Some(window) = fields.get("window").cloned()
    {
        fields.insert("view".into(), window);
    }
    known
}

/// Warn about fields this version does not know (a typo would otherwise
/// lose the value silently); refuse an array where the format has an object
/// (serde would read it by position).
fn unknown_fields(
    actual: &serde_json::Value,
    known: &serde_json::Value,
    path: &str,
    warnings: &mut Vec<String>,
) -> Result<(), SessionError> {
    use serde_json::Value;
    match (actual, known) {
        (Value::Object(a), Value::Object(k)) => {
            for (key, value) in a {
                let here = if path.is_empty() {
                    key.clone()
                } else {
                    format!("{path}.{key}")
                };
                match k.get(key) {
                    Some(template) => unknown_fields(value, template, &here, warnings)?,
                    None => warnings.push(format!(
                        "{here}: unknown field, ignored (check the spelling)"
                    )),
                }
            }
        }
        (Value::Array(a), Value::Array(k)) => {
            if let Some(template) = k.first() {
                for (i, value) in a.iter().enumerate() {
                    unknown_fields(value, template, &format!("{path}[{i}]"), warnings)?;
                }
            }
        }
        (Value::Array(_), Value::Object(_)) => {
            return Err(SessionError::new(
                path,
                "expected an object { ... } of named fields, found an array",
            ));
        }
        _ => {}
    }
    Ok(())
}

/// Syntax, the top-level shape, `format` and `version`, checked before the
/// typed read so that a file of another kind or a newer version is named as
/// such rather than by the first field this version does not understand.
fn check_header(text: &str) -> Result<serde_json::Value, SessionError> {
    use serde_json::Value;
    let value: Value = serde_json::from_str(text)
        .map_err(|e| SessionError::new("", format!("not valid JSON: {}", json_problem(&e))))?;
    let Value::Object(map) = &value else {
        return Err(SessionError::new(
            "",
            format!(
                "a session is a JSON object {{ ... }}; this file holds {}",
                json_kind(&value)
            ),
        ));
    };
    match map.get("format") {
        None => {
            return Err(SessionError::new(
                "format",
                "missing; this is not a phasewright session",
            ));
        }
        Some(Value::String(f)) if f == FORMAT_NAME => {}
        Some(Value::String(f)) => {
            return Err(SessionError::new(
                "format",
                format!(
                    "expected \"{FORMAT_NAME}\", found \"{f}\"; this is not a phasewright session"
                ),
            ));
        }
        Some(other) => {
            return Err(SessionError::new(
                "format",
                format!(
                    "expected the text \"{FORMAT_NAME}\", found {}",
                    json_kind(other)
                ),
            ));
        }
    }
    let version = match map.get("version") {
        None => Err(SessionError::new("version", "missing")),
        Some(Value::Number(n)) => match n.as_u64() {
            Some(v) if v > u64::from(FORMAT_VERSION) => Err(SessionError::new(
                "version",
                format!(
                    "written by a newer phasewright (version {v}); this one reads up to {FORMAT_VERSION}"
                ),
            )),
            Some(_) => Ok(()),
            None => Err(SessionError::new(
                "version",
                format!("expected a whole number ≥ 1, found {n}"),
            )),
        },
        Some(other) => Err(SessionError::new(
            "version",
            format!("expected a whole number ≥ 1, found {}", json_kind(other)),
        )),
    };
    version.map(|()| value)
}

fn json_kind(v: &serde_json::Value) -> &'static str {
    use serde_json::Value;
    match v {
        Value::Null => "null",
        Value::Bool(_) => "true or false",
        Value::Number(_) => "a number",
        Value::String(_) => "a text",
        Value::Array(_) => "an array",
        Value::Object(_) => "an object",
    }
}

/// Read and check a session file (see [`load`]). The error does not repeat
/// the path; callers show it as "PATH: error".
pub fn load_file(path: &Path) -> Result<(Session, Vec<String>), SessionError> {
    let text = std::fs::read_to_string(path)
        .map_err(|e| SessionError::new("", format!("cannot read the file: {e}")))?;
    load(&text)
}

/// The message of a serde_json error without its position, and the position
/// written our way.
fn json_problem(e: &serde_json::Error) -> String {
    let full = e.to_string();
    if e.line() == 0 {
        return friendly(&full);
    }
    let suffix = format!(" at line {} column {}", e.line(), e.column());
    let msg = full.strip_suffix(&suffix).unwrap_or(&full);
    format!(
        "{} (line {}, column {})",
        friendly(msg),
        e.line(),
        e.column()
    )
}

/// serde's type names in words a user knows.
fn friendly(msg: &str) -> String {
    msg.replace("expected f64", "expected a number")
        .replace("expected usize", "expected a whole number ≥ 0")
        .replace("expected u32", "expected a whole number ≥ 0")
        .replace("expected a boolean", "expected true or false")
        .replace("expected a string", "expected a text in quotes")
        .replace(
            "number out of range",
            "number out of range: beyond ±1.8e308, the largest a file may hold",
        )
}

fn parse_error(e: serde_path_to_error::Error<serde_json::Error>) -> SessionError {
    let path = e.path().to_string();
    let inner = e.inner();
    let mut field = if path == "." { String::new() } else { path };
    let mut problem = json_problem(inner);
    if inner.is_syntax() || inner.is_eof() {
        // Position is what helps here; the path is where the parser stopped.
        return SessionError::new("", format!("not valid JSON: {problem}"));
    }
    if let Some(rest) = problem.strip_prefix("missing field `")
        && let Some((name, tail)) = rest.split_once('`')
    {
        field = if field.is_empty() {
            name.to_string()
        } else {
            format!("{field}.{name}")
        };
        problem = format!("missing{tail}");
    } else if let Some(rest) = problem.strip_prefix("duplicate field `")
        && let Some((name, tail)) = rest.split_once('`')
    {
        field = if field.is_empty() {
            name.to_string()
        } else {
            format!("{field}.{name}")
        };
        problem = format!("given twice{tail}; keep one");
    }
    SessionError::new(field, problem)
}

fn check_finite(field: impl FnOnce() -> String, v: f64) -> Result<(), SessionError> {
    if v.is_finite() {
        Ok(())
    } else {
        Err(SessionError::new(
            field(),
            format!("must be a finite number (found {v})"),
        ))
    }
}

fn check_less(
    field: impl FnOnce() -> String,
    lo: f64,
    hi: f64,
    hi_name: &str,
) -> Result<(), SessionError> {
    if lo < hi {
        Ok(())
    } else {
        Err(SessionError::new(
            field(),
            format!("must be less than {hi_name} ({lo} ≥ {hi})"),
        ))
    }
}

fn names_or_none(names: &[String]) -> String {
    if names.is_empty() {
        "none".to_string()
    } else {
        names.join(", ")
    }
}

/// Whether `s` is a colour written "#rrggbb".
pub fn is_colour(s: &str) -> bool {
    let b = s.as_bytes();
    b.len() == 7 && b[0] == b'#' && b[1..].iter().all(|c| c.is_ascii_hexdigit())
}

impl Session {
    /// A session for `formula` with default view and levels, the formula's
    /// parameters added with default values, checked like a loaded file.
    pub fn from_formula(formula: &str) -> Result<(Session, Vec<String>), SessionError> {
        let mut s = Session::blank(formula);
        let warnings = s.validate()?;
        Ok((s, warnings))
    }

    /// A session for `formula` with default view and levels and no
    /// parameters, not yet checked (call [`Session::validate`]).
    pub fn blank(formula: &str) -> Session {
        Session {
            format: FORMAT_NAME.to_string(),
            version: FORMAT_VERSION,
            title: String::new(),
            notes: String::new(),
            formula: formula.to_string(),
            parameters: Vec::new(),
            view: Window::default(),
            levels: LevelSettings::default(),
            orbits: Vec::new(),
            sweep: None,
            folds: None,
            backbone: None,
            drive: None,
            quantum: None,
            basin: None,
        }
    }

    /// Read and check a session from JSON text, dropping the warnings (see [`load`]).
    pub fn from_json(text: &str) -> Result<Session, SessionError> {
        load(text).map(|(s, _)| s)
    }

    /// The session as indented JSON (what `save_atomic` writes).
    pub fn to_json_pretty(&self) -> String {
        // Serialising plain structs of numbers and strings into a String cannot fail;
        // fall back to the compact form rather than panic.
        serde_json::to_string_pretty(self).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"))
    }

    /// Check every field. Hard problems are errors naming the field; values
    /// above a cap are clamped and formula parameters missing from the list
    /// are added, each with a warning. Running it twice changes nothing more.
    pub fn validate(&mut self) -> Result<Vec<String>, SessionError> {
        let mut warnings = Vec::new();
        if self.format != FORMAT_NAME {
            return Err(SessionError::new(
                "format",
                format!(
                    "expected \"{FORMAT_NAME}\", found \"{}\"; this is not a phasewright session",
                    self.format
                ),
            ));
        }
        if self.version > FORMAT_VERSION {
            return Err(SessionError::new(
                "version",
                format!(
                    "written by a newer phasewright (version {}); this one reads up to {FORMAT_VERSION}",
                    self.version
                ),
            ));
        }
        if self.version == 0 {
            return Err(SessionError::new("version", "must be at least 1 (found 0)"));
        }
        if self.formula.trim().is_empty() {
            return Err(SessionError::new(
                "formula",
                "is empty; write H in q and p, for example \"p^2/2 + q^2/2\"",
            ));
        }
        let formula = Formula::compile(&self.formula)
            .map_err(|e| SessionError::new("formula", e.to_string()))?;
        for w in formula.warnings() {
            warnings.push(format!("formula: {w}"));
        }

        self.validate_parameters(&formula, &mut warnings)?;
        self.validate_view()?;
        self.validate_levels(&mut warnings);
        self.validate_orbits(formula.is_separable(), &mut warnings)?;
        self.validate_sweep(&formula, &mut warnings)?;
        self.validate_folds(&formula, &mut warnings)?;
        self.validate_backbone(&mut warnings)?;
        self.validate_drive(&formula, &mut warnings)?;
        self.validate_basin(&mut warnings)?;
        self.hbar()?;
        Ok(warnings)
    }

    fn validate_parameters(
        &mut self,
        formula: &Formula,
        warnings: &mut Vec<String>,
    ) -> Result<(), SessionError> {
        let outside = self.names_outside_formula();
        for (i, p) in self.parameters.iter().enumerate() {
            let at = |f: &str| format!("parameters[{i}].{f}");
            if p.name.trim().is_empty() {
                return Err(SessionError::new(at("name"), "is empty"));
            }
            if let Some(j) = self.parameters[..i].iter().position(|o| o.name == p.name) {
                return Err(SessionError::new(
                    at("name"),
                    format!("`{}` is listed twice (also parameters[{j}])", p.name),
                ));
            }
            check_finite(|| at("value"), p.value)?;
            check_finite(|| at("min"), p.min)?;
            check_finite(|| at("max"), p.max)?;
            check_less(|| at("min"), p.min, p.max, "max")?;
            if p.value < p.min || p.value > p.max {
                return Err(SessionError::new(
                    at("value"),
                    format!(
                        "must lie within [min, max] = [{}, {}] (found {})",
                        p.min, p.max, p.value
                    ),
                ));
            }
            if let Some(step) = p.step {
                check_finite(|| at("step"), step)?;
                if step < 0.0 {
                    return Err(SessionError::new(
                        at("step"),
                        format!("must be 0 (continuous) or greater (found {step})"),
                    ));
                }
            }
            if let Some(meaning) = crate::core::formula::reserved_meaning(&p.name) {
                warnings.push(format!(
                    "parameters[{i}]: `{}` is a built-in name in formulas ({meaning}), so this \
                     parameter has no effect; rename it in the formula and here",
                    p.name
                ));
            } else if formula.param_index(&p.name).is_none() && !outside.contains(&p.name) {
                warnings.push(format!(
                    "parameters[{i}]: `{}` does not appear in the formula and has no effect",
                    p.name
                ));
            }
        }
        // a step of 0 is a continuous slider, the same as none
        for p in &mut self.parameters {
            if p.step == Some(0.0) {
                p.step = None;
            }
        }
        for name in formula.params() {
            if !self.parameters.iter().any(|p| &p.name == name) {
                let (min, max) = DEFAULT_PARAM_RANGE;
                warnings.push(format!(
                    "parameters: the formula uses `{name}`, which the session does not list; \
                     added with value {DEFAULT_PARAM_VALUE} and range [{min}, {max}]"
                ));
                self.parameters.push(Parameter {
                    name: name.clone(),
                    value: DEFAULT_PARAM_VALUE,
                    min,
                    max,
                    step: None,
                });
            }
        }
        Ok(())
    }

    fn validate_view(&self) -> Result<(), SessionError> {
        let v = &self.view;
        for (name, x) in [
            ("qmin", v.qmin),
            ("qmax", v.qmax),
            ("pmin", v.pmin),
            ("pmax", v.pmax),
        ] {
            check_finite(|| format!("window.{name}"), x)?;
        }
        check_less(|| "window.qmin".into(), v.qmin, v.qmax, "qmax")?;
        check_less(|| "window.pmin".into(), v.pmin, v.pmax, "pmax")?;
        v.validate()
            .map_err(|e| SessionError::new("window", e.to_string()))
    }

    fn validate_levels(&mut self, warnings: &mut Vec<String>) {
        let l = &mut self.levels;
        if l.grid > MAX_GRID {
            warnings.push(format!(
                "levels.grid: {} points per side is above the cap of {MAX_GRID}; using {MAX_GRID}",
                l.grid
            ));
            l.grid = MAX_GRID;
        }
        if l.grid < MIN_GRID {
            warnings.push(format!(
                "levels.grid: {} points per side is below the minimum of {MIN_GRID}; using {MIN_GRID}",
                l.grid
            ));
            l.grid = MIN_GRID;
        }
        if l.count > MAX_LEVELS {
            warnings.push(format!(
                "levels.count: {} levels is above the cap of {MAX_LEVELS}; using {MAX_LEVELS}",
                l.count
            ));
            l.count = MAX_LEVELS;
        }
    }

    fn validate_orbits(
        &mut self,
        separable: bool,
        warnings: &mut Vec<String>,
    ) -> Result<(), SessionError> {
        for (i, o) in self.orbits.iter_mut().enumerate() {
            let at = |f: &str| format!("orbits[{i}].{f}");
            check_finite(|| at("q0"), o.q0)?;
            check_finite(|| at("p0"), o.p0)?;
            check_finite(|| at("duration"), o.duration)?;
            if o.duration == 0.0 {
                return Err(SessionError::new(
                    at("duration"),
                    "must not be zero (negative integrates backward)",
                ));
            }
            if o.duration.abs() > MAX_DURATION {
                let clamped = MAX_DURATION.copysign(o.duration);
                warnings.push(format!(
                    "orbits[{i}].duration: {} is beyond the cap of ±{MAX_DURATION:e}; using {clamped:e}",
                    crate::numbers::message(o.duration)
                ));
                o.duration = clamped;
            }
            match Method::from_name(&o.method) {
                Err(e) => return Err(SessionError::new(at("method"), e.to_string())),
                Ok(m) if m.needs_separable() && !separable => warnings.push(format!(
                    "orbits[{i}].method: \"{}\" needs H = T(p) + V(q) and this formula \
                     is not separable; the orbit will be refused until the method changes \
                     (\"auto\" picks one that works)",
                    o.method
                )),
                Ok(_) => {}
            }
            if let Some(c) = &o.colour
                && !is_colour(c)
            {
                return Err(SessionError::new(
                    at("colour"),
                    format!("expected \"#rrggbb\" with hexadecimal digits (found \"{c}\")"),
                ));
            }
        }
        if self.orbits.len() > MAX_ORBITS {
            warnings.push(format!(
                "orbits: {} orbits is above the cap of {MAX_ORBITS}; keeping the first {MAX_ORBITS}",
                self.orbits.len()
            ));
            self.orbits.truncate(MAX_ORBITS);
        }
        Ok(())
    }

    fn validate_sweep(
        &mut self,
        formula: &Formula,
        warnings: &mut Vec<String>,
    ) -> Result<(), SessionError> {
        let Some(sw) = &mut self.sweep else {
            return Ok(());
        };
        if sw.param.trim().is_empty() {
            return Err(SessionError::new(
                "sweep.param",
                "is empty; name the parameter that moves",
            ));
        }
        check_finite(|| "sweep.from".into(), sw.from)?;
        check_finite(|| "sweep.to".into(), sw.to)?;
        if sw.from == sw.to {
            return Err(SessionError::new(
                "sweep.to",
                format!("must differ from `from` (both are {})", sw.from),
            ));
        }
        if let Some(step) = sw.max_step {
            check_finite(|| "sweep.max_step".into(), step)?;
            if step <= 0.0 {
                return Err(SessionError::new(
                    "sweep.max_step",
                    format!("must be greater than 0 (found {step})"),
                ));
            }
            let kept = step.clamp(MIN_SWEEP_STEP, MAX_SWEEP_STEP);
            if kept != step {
                warnings.push(format!(
                    "sweep.max_step: {step} is outside [{MIN_SWEEP_STEP}, {MAX_SWEEP_STEP}]; using {kept}"
                ));
                sw.max_step = Some(kept);
            }
        }
        if formula.param_index(&sw.param).is_none() {
            warnings.push(format!(
                "sweep.param: the formula has no parameter `{}`; the sweep needs one of: {}",
                sw.param,
                names_or_none(formula.params())
            ));
        }
        Ok(())
    }

    fn validate_folds(
        &mut self,
        formula: &Formula,
        warnings: &mut Vec<String>,
    ) -> Result<(), SessionError> {
        let Some(f) = &self.folds else {
            return Ok(());
        };
        for (i, name) in f.params.iter().enumerate() {
            if name.trim().is_empty() {
                return Err(SessionError::new(format!("folds.params[{i}]"), "is empty"));
            }
        }
        if f.params[0] == f.params[1] {
            return Err(SessionError::new(
                "folds.params[1]",
                format!("must differ from params[0] (both are `{}`)", f.params[0]),
            ));
        }
        for (i, v) in f.bounds.iter().enumerate() {
            check_finite(|| format!("folds.box[{i}]"), *v)?;
        }
        let [a1, b1, a2, b2] = f.bounds;
        check_less(|| "folds.box[0]".into(), a1, b1, "box[1]")?;
        check_less(|| "folds.box[2]".into(), a2, b2, "box[3]")?;
        for (i, name) in f.params.iter().enumerate() {
            if formula.param_index(name).is_none() {
                warnings.push(format!(
                    "folds.params[{i}]: the formula has no parameter `{name}`; the fold \
                     curves need two of: {}",
                    names_or_none(formula.params())
                ));
            }
        }
        Ok(())
    }

    fn validate_backbone(&mut self, warnings: &mut Vec<String>) -> Result<(), SessionError> {
        let Some(b) = &mut self.backbone else {
            return Ok(());
        };
        if let Some([q, p]) = b.center {
            check_finite(|| "backbone.center[0]".into(), q)?;
            check_finite(|| "backbone.center[1]".into(), p)?;
        }
        if let Some(n) = b.energies {
            let kept = n.clamp(MIN_BACKBONE_ENERGIES, MAX_BACKBONE_ENERGIES);
            if kept != n {
                warnings.push(format!(
                    "backbone.energies: {n} is outside {MIN_BACKBONE_ENERGIES}..={MAX_BACKBONE_ENERGIES}; using {kept}"
                ));
                b.energies = Some(kept);
            }
        }
        Ok(())
    }

    /// Sweep settings for the core: the defaults with this session's longest step.
    pub fn sweep_config(&self) -> SweepConfig {
        let mut cfg = SweepConfig::default();
        if let Some(step) = self.sweep.as_ref().and_then(|s| s.max_step) {
            cfg.step.max = step;
            cfg.step.initial = cfg.step.initial.min(step);
        }
        cfg
    }

    /// Backbone settings for the core: the defaults with this session's number of energies.
    pub fn backbone_config(&self) -> BackboneConfig {
        let mut cfg = BackboneConfig::default();
        if let Some(n) = self.backbone.as_ref().and_then(|b| b.energies) {
            cfg.energies = n;
        }
        cfg
    }

    /// The value of parameter `name`, if listed.
    pub fn parameter(&self, name: &str) -> Option<&Parameter> {
        self.parameters.iter().find(|p| p.name == name)
    }

    /// The compiled system: the formula with this session's parameter values.
    pub fn system(&self) -> Result<System, SessionError> {
        let formula = Formula::compile(&self.formula)
            .map_err(|e| SessionError::new("formula", e.to_string()))?;
        let mut values = Vec::with_capacity(formula.params().len());
        for name in formula.params() {
            match self.parameter(name) {
                Some(p) => values.push(p.value),
                None => {
                    return Err(SessionError::new(
                        "parameters",
                        format!("the formula uses `{name}`, which has no entry"),
                    ));
                }
            }
        }
        System::new(Arc::new(formula), values)
            .map_err(|e| SessionError::new("parameters", e.to_string()))
    }

    /// Analysis settings from the session's level settings.
    pub fn analysis_config(&self) -> AnalysisConfig {
        AnalysisConfig {
            grid: self.levels.grid,
            levels: self.levels.count,
            refine: self.levels.refine,
            ..AnalysisConfig::default()
        }
    }
}
