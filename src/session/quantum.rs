//! The `quantum` section of a session: ħ for the semiclassical levels of
//! each well, an expression over the parameters.

use super::drive::{is_yes, yes};
use super::expression::evaluate;
use super::{Session, SessionError};
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

/// The semiclassical (Bohr–Sommerfeld) levels of the wells.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct QuantumSettings {
    /// ħ as an expression over the parameters ("0.1", "h", "0.05*sqrt(k)"),
    /// without q, p or t; it must come out as a positive number.
    pub hbar: String,
    /// Draw each well's quantized orbits (the level curves at Eₙ) over the
    /// portrait, in the explorer and in the portrait figure (default true).
    #[serde(default = "yes", skip_serializing_if = "is_yes")]
    pub on_portrait: bool,
}

impl QuantumSettings {
    /// ħ given by `hbar`, the quantized orbits on the portrait.
    pub fn new(hbar: impl Into<String>) -> QuantumSettings {
        QuantumSettings {
            hbar: hbar.into(),
            on_portrait: true,
        }
    }
}

impl Session {
    /// ħ for the semiclassical levels: the `quantum.hbar` expression at this
    /// session's parameter values; `None` without a `quantum` section. An
    /// expression that does not compile, names q, p, t or a parameter the
    /// session does not list, or is not a positive number is refused.
    pub fn hbar(&self) -> Result<Option<f64>, SessionError> {
        let Some(qs) = &self.quantum else {
            return Ok(None);
        };
        let h = evaluate(self, "quantum.hbar", &qs.hbar)?;
        if !(h.is_finite() && h > 0.0) {
            return Err(SessionError::new(
                "quantum.hbar",
                format!(
                    "`{}` comes out as {h} with the current parameter values; ħ must be a positive number",
                    qs.hbar
                ),
            ));
        }
        Ok(Some(h))
    }

    /// The parameter whose slider sets ħ: the `quantum.hbar` expression when
    /// it is just the name of a listed parameter.
    pub fn hbar_parameter(&self) -> Option<String> {
        let name = self.quantum.as_ref()?.hbar.trim();
        self.parameter(name).map(|p| p.name.clone())
    }

    /// True when the session has ħ and asks for the quantized orbits on the portrait.
    pub fn levels_on_portrait(&self) -> bool {
        self.quantum.as_ref().is_some_and(|q| q.on_portrait)
    }
}
