//! The `basin` section of a session: how the safe basins of the wells under
//! the session's drive are computed, and the amplitude range of the erosion
//! curve.
//!
//! ```json
//! "basin": { "lattice": 200, "periods": 60, "center": [1, 0], "from": 0, "to": 0.4, "values": 40 }
//! ```
//!
//! Every field is optional; the defaults live in `request::basin`.

use super::{Session, SessionError, check_finite};
use crate::core::basin::{MAX_AMPLITUDES, MAX_LATTICE, MAX_PERIODS};
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

/// Fewest starts per side of a basin's lattice a session may ask for.
pub const MIN_BASIN_LATTICE: usize = 4;
/// Fewest amplitudes on an erosion curve a session may ask for.
pub const MIN_EROSION_VALUES: usize = 2;

/// The safe-basin settings, as saved.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize, Default, JsonSchema)]
pub struct BasinSettings {
    /// Starts per side of the lattice over the view (default 200; kept
    /// within 4 ..= 1000).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lattice: Option<usize>,
    /// Drive periods a start must stay in its well to count as safe
    /// (default 60; kept within 1 ..= 100000).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub periods: Option<usize>,
    /// A point [q, p] near the center of the one well to show; without it,
    /// every well in view.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub center: Option<[f64; 2]>,
    /// Where the erosion curve's drive amplitude starts (default: the
    /// amplitude parameter's slider minimum).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub from: Option<f64>,
    /// Where it ends (default: the slider maximum).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub to: Option<f64>,
    /// Amplitudes on the erosion curve (default 40; kept within 2 ..= 1000).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub values: Option<usize>,
}

fn clamp_count(
    value: &mut Option<usize>,
    field: &str,
    lo: usize,
    hi: usize,
    warnings: &mut Vec<String>,
) {
    if let Some(n) = *value {
        let kept = n.clamp(lo, hi);
        if kept != n {
            warnings.push(format!("{field}: {n} is outside {lo}..={hi}; using {kept}"));
            *value = Some(kept);
        }
    }
}

impl Session {
    /// Check the basin section: finite numbers, a range that is not empty,
    /// counts within their caps (clamped with a warning).
    pub(super) fn validate_basin(
        &mut self,
        warnings: &mut Vec<String>,
    ) -> Result<(), SessionError> {
        let Some(b) = &mut self.basin else {
            return Ok(());
        };
        if let Some([q, p]) = b.center {
            check_finite(|| "basin.center[0]".into(), q)?;
            check_finite(|| "basin.center[1]".into(), p)?;
        }
        if let Some(a) = b.from {
            check_finite(|| "basin.from".into(), a)?;
        }
        if let Some(a) = b.to {
            check_finite(|| "basin.to".into(), a)?;
        }
        if let (Some(a), Some(z)) = (b.from, b.to)
            && a == z
        {
            return Err(SessionError::new(
                "basin.to",
                format!("equals basin.from ({a}); the erosion curve needs a range"),
            ));
        }
        clamp_count(
            &mut b.lattice,
            "basin.lattice",
            MIN_BASIN_LATTICE,
            MAX_LATTICE,
            warnings,
        );
        clamp_count(&mut b.periods, "basin.periods", 1, MAX_PERIODS, warnings);
        clamp_count(
            &mut b.values,
            "basin.values",
            MIN_EROSION_VALUES,
            MAX_AMPLITUDES,
            warnings,
        );
        Ok(())
    }
}
