//! The drive section of a session: a periodic drive written in H with t,
//! its period and a linear damping rate as expressions over the parameters,
//! and the parameter that sets the drive's strength.
//!
//! ```json
//! "drive": { "period": "2*pi/W", "damping": "delta", "amplitude": "F" }
//! ```
//!
//! The equations of motion are then q' = ∂H/∂p, p' = −∂H/∂q − δ ∂H/∂p.
//! The expressions use the formula language (our own compiler) with the
//! session's parameters and constants, never q, p or t.

use super::expression::evaluate;
use super::{Session, SessionError};
use crate::core::formula::Formula;
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

/// The warning for a formula in t without a drive: it is analysed at a frozen time.
pub const FROZEN_TIME_WARNING: &str = "formula: H depends on t but the session has no drive \
     period, so it is analysed frozen at t = 0; add a \"drive\" section to iterate it over periods";

/// Most drive periods a section may iterate per start.
pub const MAX_SECTION_PERIODS: usize = 100_000;
/// Drive periods a section iterates per start when the session says nothing.
pub const DEFAULT_SECTION_PERIODS: usize = 300;
/// Starts per side of the section's lattice over the view when the session says nothing.
pub const DEFAULT_SECTION_LATTICE: usize = 10;
/// Most starts per side of the section's lattice.
pub const MAX_SECTION_LATTICE: usize = 100;

/// A periodic drive with light damping, as saved.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct DriveSettings {
    /// The drive period as an expression over the parameters, e.g.
    /// `"2*pi/W"`; its value must be greater than 0.
    #[schemars(regex(pattern = super::schema::NOT_BLANK))]
    pub period: String,
    /// The linear damping rate δ as an expression over the parameters
    /// (value ≥ 0); none means no damping.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub damping: Option<String>,
    /// The parameter that sets the drive's strength: H with it at 0 is the
    /// undriven H₀ (needed by the Melnikov function; found from the formula
    /// when it is the only parameter in which H is affine and whose zero
    /// removes t).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub amplitude: Option<String>,
    /// Drive periods iterated per start of the section (default 300; more
    /// than 100000 are clamped with a warning).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub periods: Option<usize>,
    /// Starts per side of the section's lattice over the view (default 10;
    /// more than 100 are clamped with a warning).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lattice: Option<usize>,
    /// False keeps the settings but analyses the system undriven.
    #[serde(default = "yes", skip_serializing_if = "is_yes")]
    pub enabled: bool,
}

pub(super) fn yes() -> bool {
    true
}

pub(super) fn is_yes(b: &bool) -> bool {
    *b
}

/// The drive with its expressions evaluated at the session's parameter values.
/// A drive section as a reader of the file would take one with only its
/// period written: switched on, everything else at its default.
impl Default for DriveSettings {
    fn default() -> DriveSettings {
        DriveSettings {
            period: String::new(),
            damping: None,
            amplitude: None,
            periods: None,
            lattice: None,
            enabled: true,
        }
    }
}

#[derive(Clone, Debug, PartialEq)]
pub struct Drive {
    /// τ > 0.
    pub period: f64,
    /// δ ≥ 0.
    pub damping: f64,
    /// The amplitude parameter, when the session names one.
    pub amplitude: Option<String>,
    pub periods: usize,
    pub lattice: usize,
}

impl Session {
    /// The damping rate the session's orbits feel: the drive's, or 0 without
    /// a drive or with one whose expressions do not evaluate.
    pub fn damping(&self) -> f64 {
        self.drive().ok().flatten().map_or(0.0, |d| d.damping)
    }

    /// The drive at the current parameter values; `None` without a drive
    /// section or with it switched off.
    pub fn drive(&self) -> Result<Option<Drive>, SessionError> {
        let Some(d) = self.drive.as_ref().filter(|d| d.enabled) else {
            return Ok(None);
        };
        let period = evaluate(self, "drive.period", &d.period)?;
        if !(period.is_finite() && period > 0.0) {
            return Err(SessionError::new(
                "drive.period",
                format!("must be greater than 0 (`{}` is {period})", d.period),
            ));
        }
        let damping = match &d.damping {
            Some(text) => evaluate(self, "drive.damping", text)?,
            None => 0.0,
        };
        if !(damping.is_finite() && damping >= 0.0) {
            return Err(SessionError::new(
                "drive.damping",
                format!(
                    "must be at least 0 (`{}` is {damping})",
                    d.damping.as_deref().unwrap_or("")
                ),
            ));
        }
        Ok(Some(Drive {
            period,
            damping,
            amplitude: d.amplitude.clone(),
            periods: d.periods.unwrap_or(DEFAULT_SECTION_PERIODS),
            lattice: d.lattice.unwrap_or(DEFAULT_SECTION_LATTICE),
        }))
    }

    /// Check the drive section: its expressions compile and have valid
    /// values, the amplitude names a parameter of H, and the work stays
    /// within the caps (clamped with a warning).
    pub(super) fn validate_drive(
        &mut self,
        formula: &Formula,
        warnings: &mut Vec<String>,
    ) -> Result<(), SessionError> {
        let Some(d) = &mut self.drive else {
            if formula.uses_t() {
                warnings.push(FROZEN_TIME_WARNING.to_string());
            }
            return Ok(());
        };
        // checked on or off: a blank period is no drive at all
        if d.period.trim().is_empty() {
            return Err(SessionError::new(
                "drive.period",
                "is empty; give the drive period, e.g. \"2*pi/W\"",
            ));
        }
        if let Some(a) = &d.amplitude
            && formula.param_index(a).is_none()
        {
            return Err(SessionError::new(
                "drive.amplitude",
                format!(
                    "`{a}` is not a parameter of the formula (its parameters: {})",
                    formula.params().join(", ")
                ),
            ));
        }
        if let Some(n) = d.periods {
            let kept = n.clamp(1, MAX_SECTION_PERIODS);
            if kept != n {
                warnings.push(format!(
                    "drive.periods: {n} is outside 1..={MAX_SECTION_PERIODS}; using {kept}"
                ));
                d.periods = Some(kept);
            }
        }
        if let Some(n) = d.lattice {
            let kept = n.clamp(1, MAX_SECTION_LATTICE);
            if kept != n {
                warnings.push(format!(
                    "drive.lattice: {n} is outside 1..={MAX_SECTION_LATTICE}; using {kept}"
                ));
                d.lattice = Some(kept);
            }
        }
        self.drive().map(|_| ())
    }
}
