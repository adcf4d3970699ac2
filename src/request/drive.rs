//! The requests of the driven views, from the session's `drive` section:
//!
//! - **section**: the drive's period, damping and periods from the section;
//!   starts on a lattice of `lattice` × `lattice` points over the view
//!   (cell centres), then the session's seeded orbits' starts, then the
//!   points the user clicked; the method of the first seeded orbit, else
//!   automatic; orbits stop when they leave the usual bounds around the view;
//! - **Melnikov function**: the drive period and damping from the section;
//!   the amplitude parameter it names, else the one parameter that switches
//!   the drive off ([`drive_amplitude_parameter`]); the connections of H₀
//!   (H at zero amplitude) found by the portrait's analysis of H₀ over the
//!   view;
//! - **H₀** (the undriven system, [`undriven`]): H with the amplitude
//!   parameter at 0, for the Melnikov function, the faint separatrices
//!   behind a section and the backbone of a driven session.

use crate::core::Cancel;
use crate::core::analysis::{Analysis, AnalysisConfig, analyze};
use crate::core::integrate::Method;
use crate::core::melnikov::{Melnikov, drive_amplitude_parameter, melnikov};
use crate::core::orbit::BOUNDS_FACTOR;
use crate::core::section::{Section, SectionConfig, section};
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
        let amplitude = amplitude_parameter(session, sys)?;
        Ok(MelnikovRequest {
            amplitude,
            period: drive.period,
            damping: drive.damping,
            // the connections need the equilibria and the saddle levels, not
            // the evenly spaced level curves a portrait draws
            analysis: AnalysisConfig {
                levels: 0,
                ..session.analysis_config()
            },
        })
    }

    /// M(t₀) along every connection of H₀ in `window`.
    pub fn run(&self, sys: &System, window: &Window, cancel: &Cancel) -> Result<Melnikov, String> {
        let h0 = undriven_by_name(sys, &self.amplitude)?;
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

/// The parameter that sets the drive's strength: the one the session's
/// drive section names (on or off), else the one found from the formula
/// ([`drive_amplitude_parameter`]); an error says why there is none.
pub fn amplitude_parameter(session: &Session, sys: &System) -> Result<String, String> {
    match session.drive.as_ref().and_then(|d| d.amplitude.clone()) {
        Some(a) => Ok(a),
        None => drive_amplitude_parameter(sys),
    }
}

/// H₀, the undriven system (H with the drive amplitude at 0), with the
/// amplitude's name: `Ok(None)` when H does not depend on t (it is its own
/// H₀), an error when it does and no amplitude parameter is known.
pub fn undriven(session: &Session, sys: &System) -> Result<Option<(String, System)>, String> {
    if !sys.depends_on_time() {
        return Ok(None);
    }
    let name = amplitude_parameter(session, sys)?;
    let h0 = undriven_by_name(sys, &name)?;
    Ok(Some((name, h0)))
}

/// H₀: `sys` with the parameter `amplitude` at 0, checked free of t (see
/// [`System::undriven`]); an error names a missing parameter or the t left.
pub fn undriven_by_name(sys: &System, amplitude: &str) -> Result<System, String> {
    let k = sys.formula().param_index(amplitude).ok_or_else(|| {
        format!("the formula has no parameter named '{amplitude}' (the drive amplitude)")
    })?;
    sys.undriven(k)
}

/// The analysis of H₀ over `window` (for the separatrices drawn faintly
/// behind a section); None when H₀ is not known.
pub fn undriven_analysis(
    session: &Session,
    sys: &System,
    window: &Window,
    cancel: &Cancel,
) -> Option<Analysis> {
    let (name, _) = undriven(session, sys).ok().flatten()?;
    undriven_analysis_of(sys, &name, window, &session.analysis_config(), cancel)
}

/// The analysis of `sys` with parameter `amplitude` at 0 over `window`;
/// None when H₀ is not known (no such parameter, or t left in it).
pub fn undriven_analysis_of(
    sys: &System,
    amplitude: &str,
    window: &Window,
    cfg: &AnalysisConfig,
    cancel: &Cancel,
) -> Option<Analysis> {
    let h0 = undriven_by_name(sys, amplitude).ok()?;
    Some(analyze(&h0, window, cfg, cancel))
}

/// The stroboscopic section of the session's driven system.
#[derive(Clone, Debug, PartialEq)]
pub struct SectionRequest {
    pub starts: Vec<[f64; 2]>,
    pub bounds: Window,
    pub cfg: SectionConfig,
}

impl SectionRequest {
    /// The section `session` describes, with `extra` starts (clicked points)
    /// after the lattice and the seeded orbits; an error says what is
    /// missing (no drive section) or wrong.
    pub fn from_session(session: &Session, extra: &[[f64; 2]]) -> Result<SectionRequest, String> {
        let drive = session.drive().map_err(|e| e.to_string())?.ok_or_else(|| {
            "the session has no drive (a \"drive\" section with the period, or --period)"
                .to_string()
        })?;
        let w = &session.view;
        let n = drive.lattice;
        let mut starts = Vec::with_capacity(n * n + session.orbits.len() + extra.len());
        for j in 0..n {
            for i in 0..n {
                starts.push([
                    w.qmin + (i as f64 + 0.5) * w.width() / n as f64,
                    w.pmin + (j as f64 + 0.5) * w.height() / n as f64,
                ]);
            }
        }
        starts.extend(session.orbits.iter().map(|o| [o.q0, o.p0]));
        starts.extend_from_slice(extra);
        let method = match session.orbits.first() {
            Some(o) => Method::from_name(&o.method).map_err(|e| e.to_string())?,
            None => Method::Auto,
        };
        Ok(SectionRequest {
            starts,
            bounds: w.scaled(BOUNDS_FACTOR),
            cfg: SectionConfig {
                period: drive.period,
                damping: drive.damping,
                periods: drive.periods,
                method,
                steps_per_period: None,
                t0: 0.0,
            },
        })
    }

    /// The request with every count divided for a quick first look (while a
    /// slider is dragged): a quarter of the periods.
    pub fn coarse(&self) -> SectionRequest {
        let mut r = self.clone();
        r.cfg.periods = (r.cfg.periods / 4).max(1);
        r
    }

    pub fn run(
        &self,
        sys: &System,
        cancel: &Cancel,
        progress: &(dyn Fn(usize, usize) + Sync),
    ) -> Result<Section, String> {
        section(sys, &self.starts, &self.bounds, &self.cfg, cancel, progress)
    }
}
