//! The `quantum` section of a session: ħ for the semiclassical levels of
//! each well, an expression over the parameters.

use super::{Session, SessionError};
use crate::core::formula::Formula;
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

/// The semiclassical (Bohr–Sommerfeld) levels of the wells.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, JsonSchema)]
pub struct QuantumSettings {
    /// ħ as an expression over the parameters ("0.1", "h", "0.05*sqrt(k)"),
    /// without q, p or t; it must come out as a positive number.
    pub hbar: String,
}

impl Session {
    /// Whether the ħ expression names parameter `name` (a parameter may exist
    /// for ħ alone).
    pub(super) fn hbar_uses(&self, name: &str) -> bool {
        self.quantum
            .as_ref()
            .and_then(|q| Formula::compile(&q.hbar).ok())
            .is_some_and(|f| f.param_index(name).is_some())
    }

    /// ħ for the semiclassical levels: the `quantum.hbar` expression at this
    /// session's parameter values; `None` without a `quantum` section. An
    /// expression that does not compile, names q, p, t or a parameter the
    /// session does not list, or is not a positive number is refused.
    pub fn hbar(&self) -> Result<Option<f64>, SessionError> {
        let Some(qs) = &self.quantum else {
            return Ok(None);
        };
        let field = "quantum.hbar";
        if qs.hbar.trim().is_empty() {
            return Err(SessionError::new(
                field,
                "is empty; give Planck's constant, e.g. \"0.1\", or an expression over the parameters",
            ));
        }
        let f = Formula::compile(&qs.hbar).map_err(|e| SessionError::new(field, e.to_string()))?;
        if f.uses_q() || f.uses_p() || f.uses_t() {
            return Err(SessionError::new(
                field,
                "may use the parameters but not q, p or t",
            ));
        }
        let mut slots = vec![0.0; 3];
        for name in f.params() {
            match self.parameter(name) {
                Some(p) => slots.push(p.value),
                None => {
                    return Err(SessionError::new(
                        field,
                        format!(
                            "uses `{name}`, which is not a parameter of this session (list it under parameters)"
                        ),
                    ));
                }
            }
        }
        let h = f.eval_f64(&slots);
        if !(h.is_finite() && h > 0.0) {
            return Err(SessionError::new(
                field,
                format!(
                    "`{}` comes out as {h} with the current parameter values; ħ must be a positive number",
                    qs.hbar
                ),
            ));
        }
        Ok(Some(h))
    }
}
