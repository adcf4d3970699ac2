//! The requests of the safe-basin views, from the session's `drive` and
//! `basin` sections. Every default is here:
//!
//! - the drive period and damping from the drive section (a basin needs a
//!   drive; without one there is nothing to erode);
//! - the amplitude parameter the drive names, else the one parameter that
//!   switches the drive off (`drive_amplitude_parameter`); an undriven H
//!   (no t) needs none, and H₀ is H itself;
//! - a lattice of [`DEFAULT_LATTICE`]² starts over the view (cell
//!   centres), [`DEFAULT_PERIODS`] drive periods, the automatic
//!   integrator with its own steps per period;
//! - every well of H₀ in view that a saddle bounds, or the one whose center
//!   is nearest `basin.center`;
//! - the erosion curve over the amplitude parameter's slider range,
//!   [`DEFAULT_AMPLITUDES`] values, both ends included, with the Melnikov
//!   threshold of the same drive (none when it cannot be computed).

use super::MelnikovRequest;
use crate::core::Cancel;
use crate::core::analysis::AnalysisConfig;
use crate::core::basin::{
    Basin, BasinConfig, DEFAULT_AMPLITUDES, DEFAULT_LATTICE, DEFAULT_PERIODS, Erosion, WellRegion,
    amplitude_range, basin, erosion, well_regions,
};
use crate::core::melnikov::drive_amplitude_parameter;
use crate::core::system::System;
use crate::core::window::Window;
use crate::session::Session;

/// The safe basins of the session's wells under its drive.
#[derive(Clone, Debug, PartialEq)]
pub struct BasinRequest {
    /// The drive-amplitude parameter (`None` for an H without t).
    pub amplitude: Option<String>,
    pub window: Window,
    pub cfg: BasinConfig,
    /// A point near the center of the one well wanted (`None`: every well).
    pub center: Option<[f64; 2]>,
    /// How H₀ is analysed for its wells.
    pub analysis: AnalysisConfig,
}

fn no_drive() -> String {
    "the session has no drive (a \"drive\" section with the period, or --period)".to_string()
}

impl BasinRequest {
    /// The request `session` describes for `sys` (its compiled system).
    pub fn from_session(session: &Session, sys: &System) -> Result<BasinRequest, String> {
        let drive = session
            .drive()
            .map_err(|e| e.to_string())?
            .ok_or_else(no_drive)?;
        let amplitude = match drive.amplitude {
            Some(a) => Some(a),
            None if sys.depends_on_time() => Some(drive_amplitude_parameter(sys)?),
            None => None,
        };
        let b = session.basin.clone().unwrap_or_default();
        let mut cfg = BasinConfig::new(drive.period, drive.damping);
        cfg.lattice = b.lattice.unwrap_or(DEFAULT_LATTICE);
        cfg.periods = b.periods.unwrap_or(DEFAULT_PERIODS);
        Ok(BasinRequest {
            amplitude,
            window: session.view,
            cfg,
            center: b.center,
            analysis: session.analysis_config(),
        })
    }

    /// The same request for a quick look while a slider is dragged (the
    /// coarse lattice and fewer periods of [`BasinConfig::preview`]).
    pub fn preview(&self) -> BasinRequest {
        BasinRequest {
            cfg: self.cfg.preview(),
            ..self.clone()
        }
    }

    /// H₀: `sys` with the amplitude at 0 (itself without an amplitude).
    pub fn undriven(&self, sys: &System) -> Result<System, String> {
        Ok(match &self.amplitude {
            Some(name) => super::undriven_by_name(sys, name)?,
            None => sys.clone(),
        })
    }

    /// H₀ and the wells the basin is computed for.
    pub fn wells(
        &self,
        sys: &System,
        cancel: &Cancel,
    ) -> Result<(System, Vec<WellRegion>), String> {
        let h0 = self.undriven(sys)?;
        let mut regions = well_regions(&h0, &self.window, &self.analysis, cancel);
        if let Some(c) = self.center {
            let d = |r: &WellRegion| (r.center[0] - c[0]).hypot(r.center[1] - c[1]);
            regions = regions
                .into_iter()
                .min_by(|a, b| d(a).total_cmp(&d(b)))
                .into_iter()
                .collect();
        }
        if regions.is_empty() && !cancel.is_cancelled() {
            return Err(
                "no well in view is bounded by a saddle in view (the undriven H has no \
                 separatrix around a center here); widen the view"
                    .to_string(),
            );
        }
        Ok((h0, regions))
    }

    /// The safe basins; `progress(done, total)` counts starts.
    pub fn run(
        &self,
        sys: &System,
        cancel: &Cancel,
        progress: &(dyn Fn(usize, usize) + Sync),
    ) -> Result<Basin, String> {
        let (h0, regions) = self.wells(sys, cancel)?;
        basin(
            sys,
            &h0,
            &regions,
            &self.window,
            &self.cfg,
            cancel,
            progress,
        )
    }
}

/// The erosion curve: the integrity measures against the drive amplitude.
#[derive(Clone, Debug, PartialEq)]
pub struct ErosionRequest {
    pub basin: BasinRequest,
    /// The amplitude parameter varied.
    pub amplitude: String,
    pub from: f64,
    pub to: f64,
    pub values: usize,
    /// The Melnikov threshold of the same drive, for the curve's axis.
    pub melnikov: Option<MelnikovRequest>,
}

impl ErosionRequest {
    /// The request `session` describes for `sys`; an error says what is
    /// missing (a drive, an amplitude parameter, a range).
    pub fn from_session(session: &Session, sys: &System) -> Result<ErosionRequest, String> {
        let basin = BasinRequest::from_session(session, sys)?;
        let amplitude = basin.amplitude.clone().ok_or_else(|| {
            "H does not depend on t, so there is no drive amplitude to vary".to_string()
        })?;
        let b = session.basin.clone().unwrap_or_default();
        let slider = session.parameter(&amplitude);
        let from = b.from.or(slider.map(|p| p.min)).unwrap_or(0.0);
        let to = b.to.or(slider.map(|p| p.max)).unwrap_or(1.0);
        let melnikov = MelnikovRequest::from_session(session, sys).ok();
        Ok(ErosionRequest {
            basin,
            amplitude,
            from,
            to,
            values: b.values.unwrap_or(DEFAULT_AMPLITUDES),
            melnikov,
        })
    }

    /// The same curve for a quick look ([`BasinRequest::preview`]).
    pub fn preview(&self) -> ErosionRequest {
        ErosionRequest {
            basin: self.basin.preview(),
            ..self.clone()
        }
    }

    /// The curve, with the Melnikov threshold when it can be computed;
    /// `progress(done, total)` counts starts over the whole curve.
    pub fn run(
        &self,
        sys: &System,
        cancel: &Cancel,
        progress: &(dyn Fn(usize, usize) + Sync),
    ) -> Result<Erosion, String> {
        if !(self.from.is_finite() && self.to.is_finite()) || self.from == self.to {
            return Err(format!(
                "the amplitude range {} to {} is empty",
                self.from, self.to
            ));
        }
        let k = sys.formula().param_index(&self.amplitude).ok_or_else(|| {
            format!(
                "the formula has no parameter named '{}' (the drive amplitude)",
                self.amplitude
            )
        })?;
        let (_, regions) = self.basin.wells(sys, cancel)?;
        let amps = amplitude_range(self.from, self.to, self.values);
        let mut e = erosion(
            sys,
            k,
            &amps,
            &regions,
            &self.basin.window,
            &self.basin.cfg,
            cancel,
            progress,
        )?;
        e.threshold = self
            .melnikov
            .as_ref()
            .and_then(|m| m.run(sys, &self.basin.window, cancel).ok())
            .and_then(|m| m.threshold_amplitude);
        Ok(e)
    }
}
