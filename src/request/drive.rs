//! The requests of the driven views, from the session's `drive` section:
//!
//! - **Melnikov function**: the drive period and damping from the section;
//!   the amplitude parameter it names, else the one parameter that switches
//!   the drive off ([`drive_amplitude_parameter`]); the connections of H₀
//!   (H at zero amplitude) found by the portrait's analysis of H₀ over the
//!   view.

use crate::core::Cancel;
use crate::core::analysis::{AnalysisConfig, analyze};
use crate::core::melnikov::{Melnikov, drive_amplitude_parameter, melnikov};
use crate::core::system::System;
use crate::core::window::Window;
use crate::session::Session;

/// The Melnikov function of the session's driven system.
#[derive(Clone, Debug, PartialEq)]
pub struct MelnikovRequest {
    /// The drive-amplitude parameter.
    pub amplitude: String,
    /// Drive period τ > 0 and damping δ ≥ 0.
    pub period: f64,
    pub damping: f64,
    /// How H₀ is analysed for its connections.
    pub analysis: AnalysisConfig,
}

impl MelnikovRequest {
    /// The request `session` describes for `sys` (its compiled system); an
    /// error says what is missing (no drive section, no amplitude).
    pub fn from_session(session: &Session, sys: &System) -> Result<MelnikovRequest, String> {
        let drive = session.drive().map_err(|e| e.to_string())?.ok_or_else(|| {
            "the session has no drive (a \"drive\" section with the period, or --period)"
                .to_string()
        })?;
        let amplitude = match drive.amplitude {
            Some(a) => a,
            None => drive_amplitude_parameter(sys)?,
        };
        Ok(MelnikovRequest {
            amplitude,
            period: drive.period,
            damping: drive.damping,
            analysis: session.analysis_config(),
        })
    }

    /// M(t₀) along every connection of H₀ in `window`.
    pub fn run(&self, sys: &System, window: &Window, cancel: &Cancel) -> Result<Melnikov, String> {
        let k = sys.formula().param_index(&self.amplitude).ok_or_else(|| {
            format!(
                "the formula has no parameter named '{}' (the drive amplitude)",
                self.amplitude
            )
        })?;
        let h0 = sys.with_param(k, 0.0);
        let a = analyze(&h0, window, &self.analysis, cancel);
        let connections = melnikov(
            sys,
            &self.amplitude,
            self.damping,
            self.period,
            &a.equilibria,
            &a.connections,
            cancel,
        )?;
        Ok(Melnikov::new(
            sys,
            &self.amplitude,
            self.period,
            self.damping,
            connections,
        ))
    }
}
