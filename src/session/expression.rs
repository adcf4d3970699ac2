//! The session's expressions besides H (the drive's period and damping, ħ):
//! formulas over the parameters and constants, compiled by our own formula
//! compiler and evaluated at the session's parameter values.

use super::{Session, SessionError};
use crate::core::formula::{FIRST_PARAM_SLOT, Formula};

/// The value of `text` at the session's parameter values; `field` names it
/// in messages. The value may be any f64 (the caller states which values it
/// takes); the expression must compile, leave out q, p and t, and name only
/// the session's parameters.
pub fn evaluate(session: &Session, field: &str, text: &str) -> Result<f64, SessionError> {
    if text.trim().is_empty() {
        return Err(SessionError::new(
            field,
            "is empty; give a number, e.g. \"0.1\", or an expression over the parameters",
        ));
    }
    let f = Formula::compile(text).map_err(|e| SessionError::new(field, e.to_string()))?;
    if f.uses_q() || f.uses_p() || f.uses_t() {
        return Err(SessionError::new(
            field,
            "may use the parameters and constants only, not q, p or t",
        ));
    }
    let mut slots = vec![0.0; f.slot_count()];
    for (k, name) in f.params().iter().enumerate() {
        let Some(p) = session.parameter(name) else {
            return Err(SessionError::new(
                field,
                format!(
                    "uses `{name}`, which is not a parameter of this session (list it under parameters)"
                ),
            ));
        };
        slots[FIRST_PARAM_SLOT + k] = p.value;
    }
    Ok(f.eval_f64(&slots))
}

impl Session {
    /// The parameter names the session's expressions besides H use (the
    /// drive's period, damping and amplitude, ħ): they count as used even when
    /// H does not name them. Each expression is compiled once.
    pub fn names_outside_formula(&self) -> Vec<String> {
        let drive = self
            .drive
            .iter()
            .flat_map(|d| std::iter::once(d.period.as_str()).chain(d.damping.as_deref()));
        let hbar = self.quantum.iter().map(|q| q.hbar.as_str());
        let mut out: Vec<String> = Vec::new();
        for text in drive.chain(hbar) {
            if let Ok(f) = Formula::compile(text) {
                out.extend(f.params().iter().cloned());
            }
        }
        out.extend(self.drive.iter().filter_map(|d| d.amplitude.clone()));
        out.sort();
        out.dedup();
        out
    }
}
