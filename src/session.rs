//! The session file: a plain JSON format of our own (format name
//! "phasewright-session", integer version). Plain data, no computation; the
//! loader validates every field and names the field and the problem.

use crate::core::window::Window;
use serde::{Deserialize, Serialize};

/// The value of the `format` field.
pub const FORMAT_NAME: &str = "phasewright-session";
/// The newest version this program reads and the one it writes.
pub const FORMAT_VERSION: u32 = 1;

/// A whole session as saved.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Session {
    pub format: String,
    pub version: u32,
    #[serde(default)]
    pub title: String,
    #[serde(default)]
    pub notes: String,
    pub formula: String,
    #[serde(default)]
    pub parameters: Vec<Parameter>,
    #[serde(default)]
    pub view: Window,
    #[serde(default)]
    pub levels: LevelSettings,
    #[serde(default)]
    pub orbits: Vec<SeededOrbit>,
}

/// One parameter of the formula with its slider range.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Parameter {
    pub name: String,
    pub value: f64,
    pub min: f64,
    pub max: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub step: Option<f64>,
}

/// How level curves are drawn.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct LevelSettings {
    /// Evenly spaced levels over the range of H in view (saddle levels are added).
    pub count: usize,
    /// Grid points per side.
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
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct SeededOrbit {
    pub q0: f64,
    pub p0: f64,
    /// Integration time (negative integrates backward).
    pub duration: f64,
    /// Method name ("auto", "verlet", "yoshida4", ...).
    #[serde(default = "default_method")]
    pub method: String,
    /// Colour as "#rrggbb".
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub colour: Option<String>,
}

fn default_method() -> String {
    "auto".to_string()
}
