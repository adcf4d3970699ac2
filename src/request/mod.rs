//! One request per view, resolved once from a session.
//!
//! The explorer's pane lanes, `render` (figures and tables, the explorer's
//! Export) and the command line's subcommands all build a view's request here
//! and run it with the request's `run`, so whatever the screen shows can be
//! exported and re-made from the saved file with the same numbers. Every
//! default is settled in this file and nowhere else:
//!
//! - **sweep**: the session's `sweep` section when it names a parameter of the
//!   formula; otherwise the formula's first parameter over its slider range;
//! - **fold curves**: the session's `folds` section when it names two distinct
//!   parameters of the formula; otherwise the first two parameters over their
//!   slider ranges;
//! - **backbone**: a saved center follows its well (the center in view nearest
//!   to it, in units of the view's sides, since parameters move centers); with
//!   no saved center, the center the user selected, else the first center in
//!   view (equilibria in the table's order). A driven session's backbone
//!   is that of H₀ (the drive amplitude at 0, see [`undriven`]): the
//!   centers are still found in H as shown, and followed into H₀'s wells.
//!
//! - **levels**: ħ from the session's `quantum.hbar` at the current parameter
//!   values (no `quantum` section, no levels); every center in view, in the
//!   table's order, each with its own well, then every degenerate equilibrium
//!   that is a minimum or maximum of H (the bottom of q⁴/4); the core's level
//!   cap; each level's closed curve traced with [`LEVEL_CURVE_POINTS`] points
//!   (the explorer's overlay and the portrait figure draw them).
//!
//! - **seeded orbits**: start, method and duration from the session, the
//!   damping of its drive section (none without one); the
//!   duration is the longest an orbit runs, and it stops once it has closed
//!   (one period is the whole closed curve), in the explorer and in figures;
//!   the bounds are the default ones around the view.
//!
//! A request is plain data compared by value: the explorer reruns a pane's job
//! only when its request changes.

mod basin;
mod drive;

pub use basin::{BasinRequest, ErosionRequest};
pub use drive::{
    MelnikovRequest, SectionRequest, amplitude_parameter, undriven, undriven_analysis,
    undriven_analysis_of, undriven_by_name,
};

use crate::core::Cancel;
use crate::core::backbone::{Backbone, BackboneConfig, BackboneError, backbone};
use crate::core::continuation::{ContinuationError, Sweep, SweepConfig, SweepProgress, sweep};
use crate::core::equilibria::{Equilibrium, EquilibriumKind, find_equilibria};
use crate::core::folds::{FoldConfig, FoldCurves, FoldProgress, fold_curves};
use crate::core::integrate::Method;
use crate::core::levels::{LevelsConfig, LevelsError, WellLevels, levels};
use crate::core::orbit::OrbitRequest;
use crate::core::system::System;
use crate::core::window::Window;
use crate::session::{Parameter, SeededOrbit, Session, SessionError};

/// What a front end knows beyond the saved session: things the user pointed
/// at that are not saved.
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct Overrides {
    /// The center selected in the equilibria table or on the portrait.
    pub selected_center: Option<[f64; 2]>,
}

/// A one-parameter sweep of the equilibria.
#[derive(Clone, Debug, PartialEq)]
pub struct SweepRequest {
    pub param: String,
    pub from: f64,
    pub to: f64,
    pub cfg: SweepConfig,
}

/// Saddle-node curves in the plane of two parameters.
#[derive(Clone, Debug, PartialEq)]
pub struct FoldsRequest {
    pub params: [String; 2],
    /// [min₁, max₁, min₂, max₂]
    pub bounds: [f64; 4],
    pub cfg: FoldConfig,
}

/// The backbone of the well around one center.
#[derive(Clone, Debug, PartialEq)]
pub struct BackboneRequest {
    pub center: [f64; 2],
    pub cfg: BackboneConfig,
    /// The drive-amplitude parameter set to 0 before the backbone is
    /// computed (H depends on t; the backbone is that of H₀).
    pub undriven: Option<String>,
}

/// The Bohr–Sommerfeld levels of every well in view.
#[derive(Clone, Debug, PartialEq)]
pub struct LevelsRequest {
    pub hbar: f64,
    /// The centers of the wells, in the equilibria table's order.
    pub centers: Vec<[f64; 2]>,
    /// Degenerate equilibria in view: each is a well when it is a minimum
    /// or maximum of H (V = q⁴/4), and is left out silently otherwise.
    pub degenerate: Vec<[f64; 2]>,
    pub cfg: LevelsConfig,
}

/// Points of each quantized orbit's closed curve in a levels request.
pub const LEVEL_CURVE_POINTS: usize = 160;

/// The slider range of parameter `name`, if listed.
pub fn range_of(params: &[Parameter], name: &str) -> Option<(f64, f64)> {
    params
        .iter()
        .find(|p| p.name == name)
        .map(|p| (p.min, p.max))
}

impl SweepRequest {
    /// The sweep `session` describes for a formula with parameters `names`
    /// (see the module's defaults); `None` when the formula has no parameter.
    pub fn from_session(session: &Session, names: &[String]) -> Option<SweepRequest> {
        let known = |n: &str| names.iter().any(|m| m == n);
        let (param, from, to) = match &session.sweep {
            Some(sw) if known(&sw.param) => (sw.param.clone(), sw.from, sw.to),
            _ => {
                let name = names.first()?;
                let (lo, hi) = range_of(&session.parameters, name)?;
                (name.clone(), lo, hi)
            }
        };
        Some(SweepRequest {
            param,
            from,
            to,
            cfg: session.sweep_config(),
        })
    }

    pub fn run(
        &self,
        sys: &System,
        window: &Window,
        cancel: &Cancel,
        progress: &dyn Fn(SweepProgress),
    ) -> Result<Sweep, ContinuationError> {
        sweep(
            sys,
            &self.param,
            self.from,
            self.to,
            window,
            &self.cfg,
            cancel,
            progress,
        )
    }
}

impl FoldsRequest {
    /// The fold curves `session` describes for a formula with parameters
    /// `names`; `None` when there are fewer than two parameters.
    pub fn from_session(session: &Session, names: &[String]) -> Option<FoldsRequest> {
        let known = |n: &str| names.iter().any(|m| m == n);
        let (params, bounds) = match &session.folds {
            Some(f) if known(&f.params[0]) && known(&f.params[1]) && f.params[0] != f.params[1] => {
                (f.params.clone(), f.bounds)
            }
            _ if names.len() >= 2 => {
                let (a1, b1) = range_of(&session.parameters, &names[0])?;
                let (a2, b2) = range_of(&session.parameters, &names[1])?;
                ([names[0].clone(), names[1].clone()], [a1, b1, a2, b2])
            }
            _ => return None,
        };
        Some(FoldsRequest {
            params,
            bounds,
            cfg: FoldConfig::default(),
        })
    }

    pub fn run(
        &self,
        sys: &System,
        window: &Window,
        cancel: &Cancel,
        progress: &dyn Fn(FoldProgress),
    ) -> Result<FoldCurves, ContinuationError> {
        fold_curves(
            sys,
            [self.params[0].as_str(), self.params[1].as_str()],
            self.bounds,
            window,
            &self.cfg,
            cancel,
            progress,
        )
    }
}

/// The centers among `equilibria`, in their order.
pub fn centers_of(equilibria: &[Equilibrium]) -> Vec<[f64; 2]> {
    equilibria
        .iter()
        .filter(|e| e.kind == EquilibriumKind::Center)
        .map(|e| [e.q, e.p])
        .collect()
}

/// The centers and the degenerate equilibria in `window`, as the portrait's
/// analysis finds them (the same search with the session's analysis settings).
pub fn centers_and_degenerate_in_view(
    session: &Session,
    sys: &System,
    window: &Window,
    cancel: &Cancel,
) -> (Vec<[f64; 2]>, Vec<[f64; 2]>) {
    let cfg = session.analysis_config();
    let found = find_equilibria(sys, window, &cfg.equilibria, cancel).0;
    wells_of(&found)
}

/// The centers and the degenerate equilibria among `equilibria`, in their order.
pub fn wells_of(equilibria: &[Equilibrium]) -> (Vec<[f64; 2]>, Vec<[f64; 2]>) {
    let degenerate = equilibria
        .iter()
        .filter(|e| e.kind == EquilibriumKind::Degenerate)
        .map(|e| [e.q, e.p])
        .collect();
    (centers_of(equilibria), degenerate)
}

/// The centers in `window` as the portrait's analysis finds them (the same
/// equilibrium search with the session's analysis settings).
pub fn centers_in_view(
    session: &Session,
    sys: &System,
    window: &Window,
    cancel: &Cancel,
) -> Vec<[f64; 2]> {
    centers_and_degenerate_in_view(session, sys, window, cancel).0
}

impl BackboneRequest {
    /// The backbone `session` describes, given the centers in view (in the
    /// table's order); `None` when there is no center to follow.
    pub fn from_session(
        session: &Session,
        in_view: &[[f64; 2]],
        overrides: &Overrides,
    ) -> Option<BackboneRequest> {
        let w = &session.view;
        let nearest = |c: [f64; 2]| {
            in_view
                .iter()
                .copied()
                .min_by(|a, b| {
                    let d = |x: &[f64; 2]| {
                        ((x[0] - c[0]) / w.width()).hypot((x[1] - c[1]) / w.height())
                    };
                    d(a).total_cmp(&d(b))
                })
                .unwrap_or(c)
        };
        let center = session
            .backbone
            .as_ref()
            .and_then(|b| b.center)
            .map(nearest)
            .or(overrides.selected_center)
            .or_else(|| in_view.first().copied())?;
        Some(BackboneRequest {
            center,
            cfg: session.backbone_config(),
            undriven: None,
        })
    }

    /// The same request on H₀ when `sys` depends on t and its drive
    /// amplitude is known (named by the session or found in the formula);
    /// unchanged otherwise, and the core then says why it cannot go on.
    pub fn with_undriven(mut self, session: &Session, sys: &System) -> BackboneRequest {
        self.undriven = undriven(session, sys).ok().flatten().map(|(name, _)| name);
        self
    }

    pub fn run(
        &self,
        sys: &System,
        window: &Window,
        cancel: &Cancel,
        progress: &dyn Fn(usize, usize),
    ) -> Result<Backbone, BackboneError> {
        match &self.undriven {
            Some(name) => {
                let h0 = undriven_by_name(sys, name).map_err(BackboneError::BadConfig)?;
                backbone(&h0, self.center, window, &self.cfg, cancel, progress)
            }
            None => backbone(sys, self.center, window, &self.cfg, cancel, progress),
        }
    }
}

impl LevelsRequest {
    /// The levels `session` describes, given the centers in view (in the
    /// table's order): `Ok(None)` when the session sets no ħ, an error
    /// naming `quantum.hbar` when its expression is bad at the current
    /// parameter values.
    pub fn from_session(
        session: &Session,
        in_view: &[[f64; 2]],
    ) -> Result<Option<LevelsRequest>, SessionError> {
        Ok(session.hbar()?.map(|hbar| LevelsRequest {
            hbar,
            centers: in_view.to_vec(),
            degenerate: Vec::new(),
            cfg: LevelsConfig {
                curve_points: LEVEL_CURVE_POINTS,
                ..LevelsConfig::default()
            },
        }))
    }

    /// The levels `session` describes for the wells among `equilibria` (an
    /// analysis of the view): its centers, then its degenerate equilibria.
    pub fn for_equilibria(
        session: &Session,
        equilibria: &[Equilibrium],
    ) -> Result<Option<LevelsRequest>, SessionError> {
        let (centers, degenerate) = wells_of(equilibria);
        Ok(LevelsRequest::from_session(session, &centers)?.map(|r| r.with_degenerate(&degenerate)))
    }

    /// The same request with the degenerate equilibria in view added as
    /// candidate wells.
    pub fn with_degenerate(mut self, degenerate: &[[f64; 2]]) -> LevelsRequest {
        self.degenerate = degenerate.to_vec();
        self
    }

    /// The levels of each well, in the order of `centers`; a well the core
    /// refuses is listed with its reason.
    pub fn run(&self, sys: &System, window: &Window, cancel: &Cancel) -> LevelsResult {
        let mut out = LevelsResult {
            hbar: self.hbar,
            wells: Vec::new(),
            refused: Vec::new(),
        };
        for &c in &self.centers {
            match levels(sys, c, window, self.hbar, &self.cfg, cancel) {
                Ok(w) => out.wells.push(w),
                Err(e) => out.refused.push(RefusedWell {
                    center: c,
                    problem: e.to_string(),
                }),
            }
        }
        for &c in &self.degenerate {
            match levels(sys, c, window, self.hbar, &self.cfg, cancel) {
                Ok(w) => out.wells.push(w),
                Err(LevelsError::Well(BackboneError::NotACenter { .. })) => {}
                Err(e) => out.refused.push(RefusedWell {
                    center: c,
                    problem: e.to_string(),
                }),
            }
        }
        out
    }
}

/// The levels of every well in view.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct LevelsResult {
    pub hbar: f64,
    pub wells: Vec<WellLevels>,
    /// Centers whose well gave no levels, with the reason.
    pub refused: Vec<RefusedWell>,
}

/// A center whose levels could not be computed.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct RefusedWell {
    pub center: [f64; 2],
    pub problem: String,
}

/// The core's request for a seeded orbit drawn over `view` with the
/// session's damping rate (0 without a drive; see the module's defaults). An
/// unknown method name or an invalid field is refused with a message naming it.
pub fn seeded_orbit_request(
    seed: &SeededOrbit,
    view: &Window,
    damping: f64,
) -> Result<OrbitRequest, String> {
    let method = Method::from_name(&seed.method).map_err(|e| e.to_string())?;
    let mut req = OrbitRequest::new(seed.q0, seed.p0, seed.duration, view);
    req.method = method;
    req.damping = damping;
    req.stop_when_closed = true;
    req.validate()
        .map_err(|e| format!("{}: {}", e.field, e.problem))?;
    Ok(req)
}
