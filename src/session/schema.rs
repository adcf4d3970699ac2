//! The session format as a JSON Schema (draft 2020-12), generated from the
//! serde types of [`super`] by `schemars`, so the published description of the
//! format follows the types that read it. The few rules the types alone do not
//! say (the format name, version range, no blank names, positive steps, a
//! non-zero duration, the method names, the colour form) are attributes on the
//! fields; the patterns they use are defined here. What the loader checks
//! beyond any JSON Schema (relations between fields, the formula itself) is
//! listed in the schema's description.
//!
//! The schema ships as [`SHIPPED_PATH`]; `tests/session_schema.rs` compares it
//! with [`json_schema`] and rewrites it with `PHASEWRIGHT_SCHEMA_BLESS=1`.

use super::{FORMAT_NAME, Session};
use crate::core::integrate::Method;
use schemars::{JsonSchema, Schema, SchemaGenerator, json_schema as schema};

/// Where the schema ships, relative to the repository root.
pub const SHIPPED_PATH: &str = "sessions/phasewright-session.schema.json";

/// The characters `str::trim` removes (Unicode White_Space, as
/// `char::is_whitespace`), as the body of a regular-expression class written
/// with escapes every ECMA-262 engine reads alike.
macro_rules! white_space {
    () => {
        r"\t-\r \u0085\u00a0\u1680\u2000-\u200a\u2028\u2029\u202f\u205f\u3000"
    };
}

/// A text with something other than white space in it (the loader refuses
/// names and formulas that trim to nothing).
pub const NOT_BLANK: &str = concat!("[^", white_space!(), "]");

/// A colour written `#rrggbb`.
pub const COLOUR: &str = "^#[0-9A-Fa-f]{6}$";

/// What the loader checks that a JSON Schema cannot say; part of the
/// schema's description.
const LOADER_CHECKS: &str = "Fields this version does not know are allowed (the loader \
     warns and ignores them). Beyond this schema the loader checks: the formula compiles \
     (H in q, p, t and parameters); parameter names are distinct; for each parameter \
     min < max and min <= value <= max; window.qmin < window.qmax and window.pmin < \
     window.pmax, and the window is wider than 1e-12 of its largest coordinate; sweep.from differs from \
     sweep.to; folds.box has box[0] < box[1] and box[2] < box[3]. Whole numbers (version, \
     levels.count, levels.grid, backbone.energies) are written as integers without a \
     decimal point or exponent, up to 18446744073709551615; every number lies within \
     +-1.7976931348623157e308. Values over a cap are clamped with a warning, not refused.";

// The schema of `core::window::Window` (the core stays free of schema code;
// `tests/session_schema.rs` checks that the two have the same fields).
/// A rectangle [qmin, qmax] × [pmin, pmax] of phase space.
#[derive(JsonSchema)]
#[schemars(rename = "Window")]
#[allow(dead_code)]
pub struct WindowSchema {
    /// Left edge (smallest q).
    qmin: f64,
    /// Right edge (largest q).
    qmax: f64,
    /// Bottom edge (smallest p).
    pmin: f64,
    /// Top edge (largest p).
    pmax: f64,
}

/// The schema of an orbit's `method`: one of the integrators' stable names
/// or older spellings, in any ASCII case, with white space around it allowed
/// (the loader trims it and ignores ASCII case).
pub fn method_name(_: &mut SchemaGenerator) -> Schema {
    let names: Vec<&str> = Method::NAMES
        .iter()
        .copied()
        .chain(Method::ALIASES.iter().map(|(alias, _)| *alias))
        .collect();
    let any_case: Vec<String> = names.iter().map(|n| any_ascii_case(n)).collect();
    let pattern = format!(
        "^[{ws}]*(?:{})[{ws}]*$",
        any_case.join("|"),
        ws = white_space!()
    );
    schema!({
        "type": "string",
        "anyOf": [
            { "enum": names },
            { "pattern": pattern }
        ]
    })
}

/// `name` as a pattern matching it in any ASCII case (`dopri5` → `[dD][oO]…5`).
fn any_ascii_case(name: &str) -> String {
    let mut out = String::new();
    for c in name.chars() {
        if c.is_ascii_alphabetic() {
            out.push('[');
            out.push(c.to_ascii_lowercase());
            out.push(c.to_ascii_uppercase());
            out.push(']');
        } else if "^$\\.*+?()[]{}|/".contains(c) {
            out.push('\\');
            out.push(c);
        } else {
            out.push(c);
        }
    }
    out
}

/// The JSON Schema of a session file.
pub fn json_schema() -> serde_json::Value {
    let generator = schemars::generate::SchemaSettings::draft2020_12().into_generator();
    let mut root = generator.into_root_schema_for::<Session>();
    root.insert("title".into(), format!("{FORMAT_NAME} file").into());
    root.insert(
        "description".into(),
        format!(
            "A session of phasewright: a Hamiltonian H(q, p) with its parameters, the window \
             of phase space, level-curve settings, seeded orbits and the settings of the \
             sweep, fold-curve and backbone views. {LOADER_CHECKS}"
        )
        .into(),
    );
    let mut value = root.to_value();
    // `view`, the older name of `window`, is still read: the same rectangle,
    // and never both in one file (serde refuses a field given twice).
    if let Some(props) = value.get_mut("properties").and_then(|p| p.as_object_mut())
        && let Some(window) = props.get("window").cloned()
    {
        let mut view = window;
        if let Some(v) = view.as_object_mut() {
            v.insert(
                "description".into(),
                "The older name of `window`, still read.".into(),
            );
            v.insert("deprecated".into(), true.into());
        }
        props.insert("view".into(), view);
    }
    if let Some(root) = value.as_object_mut() {
        root.insert(
            "not".into(),
            serde_json::json!({ "required": ["window", "view"] }),
        );
    }
    value
}

/// [`json_schema`] as the shipped file holds it: indented, with a final newline.
pub fn json_schema_text() -> String {
    let mut text = serde_json::to_string_pretty(&json_schema()).unwrap_or_default();
    text.push('\n');
    text
}
