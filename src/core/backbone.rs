//! The backbone of a well: period, frequency, action and amplitude of the
//! closed orbits around a center as functions of their energy, from the
//! center up to just below the escape energy.
//!
//! # Quadrature over the level curve (H = T(p) + V(q), T quadratic)
//!
//! When H is separable and the kinetic part is quadratic in p,
//! T(p) = T_c + (p − p_c)²/(2m), a closed level curve H = E is the pair of
//! arcs p = p_c ± √(2m(E − H(q, p_c))) between the turning points q₋ < q₊
//! where H(q, p_c) = E (found by bracketed Newton). Then
//! period = √(2m) ∫ dq/√W and action = (1/π) √(2m) ∫ √W dq with
//! W = E − H(q, p_c). The substitution q = q_mid + (Δ/2) sin θ removes the
//! inverse square-root singularities at the turning points analytically, so
//! the integrand in θ is smooth and Gauss rules converge fast. Next to each
//! turning point e, W is the integral of the slope, −∫ σ ∂H/∂q dq from e
//! (a four-point Gauss–Legendre rule), which keeps its relative accuracy where
//! E − H(q) would lose its digits to cancellation. The integral in θ is taken
//! by globally adaptive Gauss–Kronrod (7, 15) with QUADPACK's error estimate
//! to a relative tolerance of about 1e-13. Each level's bracketed Newton for
//! its turning points starts from those of the level below.
//!
//! Near the escape energy E_s the orbit lingers by the saddle(s) bounding the
//! well: each pass close to a saddle with eigenvalue λ takes about
//! −(1/λ) ln(E_s − E), so T(E) ≈ −(n/λ) ln(E_s − E) + O(1) with n the number
//! of saddle passes per period: n = 2 for the pendulum's libration, which
//! turns back at both saddles q = ±π (4K(m) ≈ 2 ln(16/(1 − m)),
//! Abramowitz & Stegun 17.3.26), n = 1 for a well open over one saddle (the
//! other turning point lies on a wall). The integrand's peak next to the
//! turning points sharpens accordingly and is resolved by the subdivision.
//!
//! # Orbit over one period (any other H)
//!
//! The level curve is traced by the flow itself: from the point where H = E on
//! the line p = p_c to the right of the center, classical Runge–Kutta steps
//! of a fixed fraction of the small-oscillation period until the orbit comes
//! back to that line; the last step is taken with p as the independent
//! variable so that it lands on the line exactly (Hénon's trick). The action
//! is integrated alongside (dA/dt = p ∂H/∂p).
//!
//! # The frequency shift κ
//!
//! Every backbone carries κ of ω ≈ ω₀ + κA² (A half the q-extent): for
//! H = T(p) + V(q) with T quadratic the Lindstedt–Poincaré formula on the
//! center's Taylor coefficients (`equilibria::frequency_shift`); for any
//! other H (a kinetic part that is not quadratic, or q and p mixed) the
//! least-squares fit of ω − ω₀ = κA² + λA⁴ to the rows with A at most a
//! tenth of the widest ([`fit_frequency_shift`]). [`ShiftSource`] says which.
//!
//! # Where the energies are sampled
//!
//! Evenly in √(E − E₀) from the center (the amplitude grows like it), so the
//! small-amplitude end, where the slope κ of ω ≈ ω₀ + κA² is read, is
//! sampled as finely as the rest; below an escape energy the last 40 % of
//! the samples close in on it geometrically, where the period grows like
//! −ln(E_s − E).
//!
//! The escape energy is the lowest saddle level bounding the well: for the
//! separable case the nearest maxima of H(q, p_c) on either side of the center;
//! otherwise the lowest saddle in view above the center. Without one, the
//! backbone goes up to the level whose curve reaches the window's edge.
//!
//! Reference: L. D. Landau and E. M. Lifshitz, *Mechanics* (3rd ed.,
//! Pergamon 1976) §11–12 (period from the energy integral) and §49 (action);
//! W. H. Press et al., *Numerical Recipes* (3rd ed., 2007) §4.6 (Gauss–Kronrod),
//! §17.1 (Runge–Kutta); R. Piessens et al., *QUADPACK* (Springer 1983) §2
//! (adaptive Gauss–Kronrod and its error estimate); M. Abramowitz and
//! I. A. Stegun, *Handbook of Mathematical Functions* (1964) 17.3.26;
//! M. Hénon, Physica D 5 (1982) 412 (landing on a section).

mod quadrature;
mod well_orbits;

pub use well_orbits::WellOrbits;

use super::equilibria::{
    EquilibriumConfig, EquilibriumKind, classify, find_equilibria, frequency_shift,
};
use super::system::System;
use super::window::Window;
use super::{Cancel, Diagnostic};
use quadrature::gauss_kronrod;
use std::f64::consts::PI;
use std::fmt;

/// Newton for the center stops at this step (relative to the window's diagonal).
const CENTER_TOL: f64 = 1e-13;
/// The refined center may lie at most this fraction of the diagonal from the given point.
const CENTER_REACH: f64 = 0.05;
/// Cells per window width in the scan for the barriers on both sides of the center.
const BARRIER_SCAN_CELLS: f64 = 800.0;
/// Relative tolerance of a quadratic kinetic part, checked at a few momenta.
const QUADRATIC_KINETIC_TOL: f64 = 1e-10;
/// Within this fraction of the half-width of a turning point, W comes from
/// the integral of the slope (a Gauss–Legendre rule) rather than E − H.
const SLOPE_ZONE: f64 = 0.02;
/// Gauss–Legendre nodes on [0, 1] and weights, 4 points (exact for
/// polynomials of degree 7; Abramowitz & Stegun table 25.4).
const GL_SLOPE_NODES: [f64; 4] = [
    0.069_431_844_202_973_71,
    0.330_009_478_207_571_9,
    0.669_990_521_792_428_1,
    0.930_568_155_797_026_3,
];
const GL_SLOPE_WEIGHTS: [f64; 4] = [
    0.173_927_422_568_726_93,
    0.326_072_577_431_273_07,
    0.326_072_577_431_273_07,
    0.173_927_422_568_726_93,
];
/// Share of the sampled energies spaced evenly in √depth (so in amplitude)
/// when an escape energy bounds the well; the rest approach it geometrically.
const EVEN_SHARE: f64 = 0.6;
/// Distance below the escape energy, as a fraction of the well's depth, where
/// the even spacing in √depth hands over to the geometric approach. With
/// [`EVEN_SHARE`] the two spacings meet with nearly the same energy step
/// (2·√0.9/0.6 ≈ 3.2 against 0.1·ln(10⁵)/0.4 ≈ 2.9 per unit of the index
/// fraction, at the default closest approach 1e-6).
const EVEN_TOP: f64 = 0.1;
/// Rounding units of H near the center's energy that a shallow level's
/// quadrature tolerance allows for, when the configured one cannot be met.
const SHALLOW_ULPS: f64 = 16.0;
/// Runge–Kutta steps per small-oscillation period on the orbit path.
const ORBIT_STEPS_PER_PERIOD: f64 = 2000.0;

/// Settings of a backbone.
#[derive(Clone, Debug, PartialEq)]
pub struct BackboneConfig {
    /// Energies sampled, the center's included (default 200, at least 2).
    pub energies: usize,
    /// Closest approach to the escape energy, as a fraction of the well's
    /// depth (default 1e-6). The samples are spaced evenly in √(E − E₀)
    /// (so in amplitude) from the center and, the last 40 % of them,
    /// geometrically towards the escape energy.
    pub closest: f64,
    /// Relative tolerance of the quadrature (default 1e-13).
    pub tolerance: f64,
    /// Largest number of Runge–Kutta steps per orbit on the orbit path (default 400 000).
    pub max_orbit_steps: usize,
    /// The search for saddles when H is not separable.
    pub equilibria: EquilibriumConfig,
}

impl Default for BackboneConfig {
    fn default() -> Self {
        BackboneConfig {
            energies: 200,
            closest: 1e-6,
            tolerance: 1e-13,
            max_orbit_steps: 400_000,
            equilibria: EquilibriumConfig::default(),
        }
    }
}

/// How the rows were computed.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum BackboneMethod {
    /// Quadrature over the level curve (separable H, quadratic kinetic part).
    Quadrature,
    /// One period of the orbit on each level.
    Orbit,
}

/// One closed orbit of the well.
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct BackboneRow {
    pub energy: f64,
    pub period: f64,
    /// Angular frequency 2π/period.
    pub frequency: f64,
    /// I = (1/2π) ∮ p dq.
    pub action: f64,
    /// Half the q-extent of the orbit, (q_max − q_min)/2.
    pub amplitude: f64,
}

/// Where a backbone's κ (ω ≈ ω₀ + κA²) comes from.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum ShiftSource {
    /// The Lindstedt–Poincaré formula on the center's Taylor coefficients
    /// (`equilibria::frequency_shift`; H = T(p) + V(q) with T quadratic).
    TaylorCoefficients,
    /// The fit of ω − ω₀ = κA² + λA⁴ to the backbone's small-amplitude rows
    /// (any other H: a kinetic part that is not quadratic, or mixed q and p).
    BackboneFit,
}

impl ShiftSource {
    /// How the source is said in captions and tables.
    pub fn description(self) -> &'static str {
        match self {
            ShiftSource::TaylorCoefficients => "from the Taylor coefficients",
            ShiftSource::BackboneFit => "fitted to the backbone",
        }
    }
}

/// The first correction of the frequency with amplitude, κ in ω ≈ ω₀ + κA²
/// (κ > 0 hardening, κ < 0 softening).
#[derive(Clone, Copy, Debug, PartialEq, serde::Serialize)]
pub struct FrequencyShift {
    pub kappa: f64,
    pub source: ShiftSource,
}

/// Rows whose amplitude is at most this share of the widest enter κ's fit.
const SHIFT_FIT_REACH: f64 = 0.1;
/// Most rows in κ's fit.
const SHIFT_FIT_ROWS: usize = 20;

/// κ from the backbone's rows (the center's first): the least-squares fit of
/// ω − ω₀ = κA² + λA⁴ over the rows beyond the center whose amplitude is at
/// most a tenth of the widest (at most 20 of them; the first row alone gives
/// κ = (ω − ω₀)/A²). None without a row beyond the center or with ω₀ = 0.
pub fn fit_frequency_shift(rows: &[BackboneRow]) -> Option<f64> {
    let w0 = rows.first()?.frequency;
    if !(w0.is_finite() && w0 > 0.0) {
        return None;
    }
    let widest = rows.iter().fold(0.0f64, |m, r| m.max(r.amplitude));
    let small: Vec<(f64, f64)> = rows
        .iter()
        .skip(1)
        .filter(|r| r.amplitude > 0.0 && r.frequency.is_finite())
        .enumerate()
        .take_while(|(i, r)| *i == 0 || r.amplitude <= SHIFT_FIT_REACH * widest)
        .take(SHIFT_FIT_ROWS)
        .map(|(_, r)| (r.amplitude * r.amplitude, r.frequency - w0))
        .collect();
    let k = match small.as_slice() {
        [] => return None,
        [(x, d)] => d / x,
        _ => {
            // normal equations in the scaled x/x_max, for conditioning
            let xm = small.iter().fold(0.0f64, |m, (x, _)| m.max(*x));
            let (mut s11, mut s12, mut s22, mut b1, mut b2) = (0.0, 0.0, 0.0, 0.0, 0.0);
            for &(x, d) in &small {
                let u = x / xm;
                s11 += u * u;
                s12 += u * u * u;
                s22 += u * u * u * u;
                b1 += u * d;
                b2 += u * u * d;
            }
            let det = s11 * s22 - s12 * s12;
            (b1 * s22 - b2 * s12) / det / xm
        }
    };
    k.is_finite().then_some(k)
}

/// The backbone of one well.
#[derive(Clone, Debug, PartialEq, serde::Serialize)]
pub struct Backbone {
    /// The refined center [q, p].
    pub center: [f64; 2],
    pub center_energy: f64,
    /// The lowest saddle level bounding the well, if one bounds it in view.
    pub escape_energy: Option<f64>,
    /// The energy the sampling approaches (the escape energy or the level that reaches the window's edge).
    pub top_energy: f64,
    pub method: BackboneMethod,
    pub rows: Vec<BackboneRow>,
    /// κ in ω ≈ ω₀ + κA² at the center: from the Taylor coefficients where
    /// that formula holds, else fitted to the rows (None at a degenerate
    /// center or without rows beyond it).
    pub frequency_shift: Option<FrequencyShift>,
    pub diagnostics: Vec<Diagnostic>,
    pub cancelled: bool,
}

/// Why a backbone could not be computed.
#[derive(Clone, Debug, PartialEq)]
pub enum BackboneError {
    /// Newton from the given point found no equilibrium nearby.
    NoEquilibrium {
        q: f64,
        p: f64,
    },
    /// The equilibrium there is not a center.
    NotACenter {
        q: f64,
        p: f64,
        kind: EquilibriumKind,
    },
    /// H depends on time: energy levels are not invariant.
    TimeDependent,
    BadConfig(String),
}

impl fmt::Display for BackboneError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            BackboneError::NoEquilibrium { q, p } => {
                write!(
                    f,
                    "there is no equilibrium near q = {q}, p = {p}; give a point close to a center"
                )
            }
            BackboneError::NotACenter { q, p, kind } => write!(
                f,
                "the equilibrium at q = {q:.6}, p = {p:.6} is a {}, not a center; a backbone needs a well",
                match kind {
                    EquilibriumKind::Center => "center",
                    EquilibriumKind::Saddle => "saddle",
                    EquilibriumKind::Degenerate => "degenerate point",
                }
            ),
            BackboneError::TimeDependent => f.write_str(
                "H depends on t, so its level curves are not orbits; a backbone needs H(q, p)",
            ),
            BackboneError::BadConfig(m) => f.write_str(m),
        }
    }
}

impl std::error::Error for BackboneError {}

/// The backbone of the well around the center near `center` = [q, p].
pub fn backbone(
    sys: &System,
    center: [f64; 2],
    window: &Window,
    cfg: &BackboneConfig,
    cancel: &Cancel,
    progress: &dyn Fn(usize, usize),
) -> Result<Backbone, BackboneError> {
    if cfg.energies < 2 {
        return Err(BackboneError::BadConfig(
            "a backbone needs at least two energies".into(),
        ));
    }
    if !(cfg.closest.is_finite() && cfg.closest > 0.0 && cfg.closest < 1.0) {
        return Err(BackboneError::BadConfig(
            "the closest approach must lie between 0 and 1".into(),
        ));
    }
    let orbits = WellOrbits::new(sys, center, window, cfg, false, cancel)?;
    let well = &orbits.well;
    let (escape, top, sigma) = (orbits.escape, orbits.top, well.sigma);
    let mut diagnostics = Vec::new();
    let n = cfg.energies;
    let depth_at =
        |i: usize| top * depth_fraction(i as f64 / (n - 1) as f64, escape.is_some(), cfg.closest);
    let mut rows = Vec::with_capacity(n);
    let mut cancelled = false;
    rows.push(BackboneRow {
        energy: well.ec,
        period: 2.0 * PI / well.omega0,
        frequency: well.omega0,
        action: 0.0,
        amplitude: 0.0,
    });
    // The turning points of the last level bracket the next one from inside.
    let mut from = (well.qc, well.qc);
    for i in 1..n {
        if cancel.is_cancelled() {
            cancelled = true;
            break;
        }
        let depth = depth_at(i);
        match orbits.orbit_at_depth(depth, from) {
            Some((r, ends)) => {
                from = ends;
                rows.push(r);
            }
            None => diagnostics.push(Diagnostic::warning(format!(
                "no closed orbit was found at energy {:.9}; that row is left out",
                well.ec + sigma * depth
            ))),
        }
        progress(i + 1, n);
    }
    let [qc, pc] = orbits.center();
    let shift = match frequency_shift(sys, qc, pc) {
        Some(kappa) => Some(FrequencyShift {
            kappa,
            source: ShiftSource::TaylorCoefficients,
        }),
        None => fit_frequency_shift(&rows).map(|kappa| FrequencyShift {
            kappa,
            source: ShiftSource::BackboneFit,
        }),
    };
    Ok(Backbone {
        center: orbits.center(),
        center_energy: well.ec,
        escape_energy: orbits.escape_energy(),
        top_energy: orbits.top_energy(),
        method: orbits.method(),
        rows,
        frequency_shift: shift,
        diagnostics,
        cancelled,
    })
}

/// The depth of the sample at index fraction `u` ∈ [0, 1] as a fraction of
/// the top depth. √depth, to leading order proportional to the amplitude, is
/// spaced evenly from the center, so the small-amplitude end, where hardening
/// or softening is read, is resolved as finely as the rest (the energy steps
/// are smallest there). Without an escape energy that is all:
/// depth = u². Below an escape energy the period grows like −ln(E_s − E), so
/// the last `1 − EVEN_SHARE` of the samples approach it geometrically, the
/// distance σ(E_s − E) falling from `EVEN_TOP` of the depth to `closest`.
fn depth_fraction(u: f64, escape: bool, closest: f64) -> f64 {
    let handover = EVEN_TOP.max(closest);
    if !escape {
        return u * u;
    }
    if handover <= closest {
        let s = u * (1.0 - closest).sqrt();
        return s * s;
    }
    if u <= EVEN_SHARE {
        let s = u / EVEN_SHARE * (1.0 - handover).sqrt();
        s * s
    } else {
        let v = (u - EVEN_SHARE) / (1.0 - EVEN_SHARE);
        1.0 - handover * (closest / handover).powf(v)
    }
}

/// The bottom of a degenerate well of a separable H with quadratic kinetic
/// part near `start`: p_c from ∂H/∂p = 0 (one Newton step, exact for a
/// quadratic kinetic part), q_c where ∂H/∂q(q, p_c) changes sign within a
/// bracket grown around start (bisection). None when no sign change lies
/// within the center's reach.
fn degenerate_center(sys: &System, start: [f64; 2], window: &Window) -> Option<[f64; 2]> {
    let j = sys.jet(start[0], start[1]);
    if !(j.is_finite() && j.hpp != 0.0) {
        return None;
    }
    let pc = start[1] - j.hp / j.hpp;
    let slope = |q: f64| sys.dh_dq(q, pc, 0.0).1;
    let s0 = slope(start[0]);
    if s0 == 0.0 {
        return Some([start[0], pc]);
    }
    let reach = CENTER_REACH * window.diagonal();
    let mut r = 1e-6 * reach;
    while r <= reach {
        for side in [-1.0, 1.0] {
            let b = start[0] + side * r;
            if slope(b).signum() != s0.signum() {
                let (mut a, mut b) = (start[0], b);
                for _ in 0..200 {
                    let m = 0.5 * (a + b);
                    if m == a || m == b {
                        break;
                    }
                    if slope(m).signum() == s0.signum() {
                        a = m;
                    } else {
                        b = m;
                    }
                }
                return Some([0.5 * (a + b), pc]);
            }
        }
        r *= 2.0;
    }
    None
}

/// Newton on ∇H = 0 from `start`.
fn refine_center(sys: &System, start: [f64; 2], window: &Window) -> Option<[f64; 2]> {
    let [mut q, mut p] = start;
    let tol = CENTER_TOL * window.diagonal();
    for _ in 0..60 {
        let j = sys.jet(q, p);
        let det = j.hessian_det();
        if !j.is_finite() || det == 0.0 {
            return None;
        }
        let dq = -(j.hpp * j.hq - j.hqp * j.hp) / det;
        let dp = -(j.hqq * j.hp - j.hqp * j.hq) / det;
        q += dq;
        p += dp;
        if (q - start[0]).hypot(p - start[1]) > CENTER_REACH * window.diagonal() {
            return None;
        }
        if dq.abs().max(dp.abs()) <= tol {
            return Some([q, p]);
        }
    }
    None
}

/// The limit of the well on one side of the center along p = p_c.
#[derive(Clone, Copy, Debug)]
struct Barrier {
    /// Depth σ(E − E_c) of the limit.
    depth: f64,
    /// The q of the limit (the barrier top or the window's edge).
    reach: f64,
    /// True when the limit is a maximum of H(q, p_c) (a saddle for separable H).
    saddle: bool,
}

struct Well<'a> {
    sys: &'a System,
    qc: f64,
    pc: f64,
    ec: f64,
    sigma: f64,
    omega0: f64,
}

impl Well<'_> {
    /// σ(H(q, p_c) − E_c) and its q-derivative.
    fn depth_q(&self, q: f64) -> (f64, f64) {
        let (h, hq) = self.sys.dh_dq(q, self.pc, 0.0);
        (self.sigma * (h - self.ec), self.sigma * hq)
    }

    /// True when H(q_c, p) − H(q_c, p_c) = H_pp (p − p_c)²/2 at a few momenta.
    fn kinetic_is_quadratic(&self, hpp: f64, window: &Window) -> bool {
        [0.37, -0.61, 1.3].iter().all(|&f| {
            let dp = f * window.height();
            let t = self.sys.energy(self.qc, self.pc + dp) - self.ec;
            let model = 0.5 * hpp * dp * dp;
            (t - model).abs() <= QUADRATIC_KINETIC_TOL * model.abs().max(f64::MIN_POSITIVE)
        })
    }

    /// Scan H(q, p_c) from the center towards `dir` for the first maximum of
    /// the depth or the window's edge.
    fn barrier(&self, window: &Window, dir: f64) -> Barrier {
        let edge = if dir > 0.0 { window.qmax } else { window.qmin };
        let dq = window.width() / BARRIER_SCAN_CELLS;
        let mut a = self.qc;
        loop {
            let b = a + dir * dq;
            let past = (b - edge) * dir >= 0.0;
            let b = if past { edge } else { b };
            if self.depth_q(b).1 * dir <= 0.0 {
                // The depth stops growing: the top of the barrier lies in (a, b].
                let top = self.slope_root(a, b);
                return Barrier {
                    depth: self.depth_q(top).0,
                    reach: top,
                    saddle: true,
                };
            }
            if past {
                return Barrier {
                    depth: self.depth_q(edge).0,
                    reach: edge,
                    saddle: false,
                };
            }
            a = b;
        }
    }

    /// A root of ∂H/∂q(q, p_c) between a and b (where it changes sign).
    fn slope_root(&self, mut a: f64, mut b: f64) -> f64 {
        let sa = self.depth_q(a).1;
        for _ in 0..200 {
            let m = 0.5 * (a + b);
            if m == a || m == b {
                break;
            }
            let sm = self.depth_q(m).1;
            if sm == 0.0 {
                return m;
            }
            if sm.signum() == sa.signum() {
                a = m;
            } else {
                b = m;
            }
        }
        0.5 * (a + b)
    }

    /// The q between `from` (the center, or the turning point of a lower
    /// level on the same side) and `reach` where the depth equals `depth`.
    fn turning_point(&self, depth: f64, from: f64, reach: f64) -> Option<f64> {
        let (mut a, mut b) = (from, reach);
        let (db, _) = self.depth_q(b);
        if db < depth {
            return None;
        }
        let mut q = b;
        for _ in 0..200 {
            let (d, s) = self.depth_q(q);
            let f = d - depth;
            if f > 0.0 {
                b = q;
            } else {
                a = q;
            }
            let newton = q - f / s;
            let inside = (newton - a) * (newton - b) < 0.0;
            let next = if inside && s != 0.0 {
                newton
            } else {
                0.5 * (a + b)
            };
            if next == q || (a - b).abs() <= 4.0 * f64::EPSILON * q.abs().max(1e-300) {
                return Some(next);
            }
            q = next;
        }
        Some(q)
    }

    /// σ ∂H/∂q(q, p_c): the slope of the depth.
    fn slope(&self, q: f64) -> f64 {
        self.sigma * self.sys.dh_dq(q, self.pc, 0.0).1
    }

    /// Period, action and amplitude of the level at `depth` whose turning
    /// points lie between `from` and `limits` on each side; `from` holds the
    /// turning points of a lower level (or the center twice).
    fn quadrature_row(
        &self,
        depth: f64,
        limits: (f64, f64),
        from: (f64, f64),
        hpp: f64,
        tol: f64,
    ) -> Option<(BackboneRow, (f64, f64))> {
        let qm = self.turning_point(depth, from.0, limits.0)?;
        let qp = self.turning_point(depth, from.1, limits.1)?;
        let half = 0.5 * (qp - qm);
        if half.is_nan() || half <= 0.0 {
            return None;
        }
        let m = 1.0 / hpp.abs();
        let ends = [qm, qp];
        let zone = SLOPE_ZONE * half;
        // W(q) = σ(E − H(q, p_c)) ≥ 0 between the turning points. Next to a
        // turning point e the difference E − H(q) loses its digits to
        // cancellation, so there W = −∫₀^d σ H_q(e + s) ds (q = e + d) by
        // Gauss–Legendre on the slope, which has no cancellation: W keeps its
        // relative accuracy down to the end, and W(e) = 0 exactly.
        let w = |end: usize, d: f64| {
            let e = ends[end];
            let v = if d.abs() < zone {
                let mut acc = 0.0;
                for (x, wt) in GL_SLOPE_NODES.iter().zip(GL_SLOPE_WEIGHTS) {
                    acc += wt * self.slope(e + d * x);
                }
                -d * acc
            } else {
                depth - self.sigma * (self.sys.energy(e + d, self.pc) - self.ec)
            };
            v.max(f64::MIN_POSITIVE)
        };
        // θ = ±(π/2 − u): q − e = ∓2·half·sin²(u/2) and cos θ = sin u, both
        // without cancellation; the two halves are integrated together.
        let f = |u: f64| {
            let c = u.sin();
            let d = 2.0 * half * (0.5 * u).sin().powi(2);
            let (wl, wu) = (w(0, d), w(1, -d));
            let (sl, su) = (wl.sqrt(), wu.sqrt());
            [half * c * (1.0 / sl + 1.0 / su), half * c * (sl + su)]
        };
        let [ti, ai] = gauss_kronrod(&f, 0.0, 0.5 * PI, tol)?;
        let period = (2.0 * m).sqrt() * ti;
        let action = (2.0 * m).sqrt() * ai / PI;
        Some((
            BackboneRow {
                energy: self.ec + self.sigma * depth,
                period,
                frequency: 2.0 * PI / period,
                action,
                amplitude: half,
            },
            (qm, qp),
        ))
    }

    /// One period of the orbit through the point right of the center on p = p_c.
    fn orbit_row(&self, depth: f64, limits: (f64, f64), max_steps: usize) -> Option<BackboneRow> {
        self.orbit_path(depth, limits, max_steps, None)
    }

    /// [`Well::orbit_row`], also recording about `record.1` points of the
    /// orbit into `record.0` when asked (for drawing it).
    fn orbit_path(
        &self,
        depth: f64,
        limits: (f64, f64),
        max_steps: usize,
        mut record: Option<(&mut Vec<[f64; 2]>, usize)>,
    ) -> Option<BackboneRow> {
        let q0 = self.turning_point(depth, self.qc, limits.1)?;
        let field = |s: [f64; 3]| {
            let j = self.sys.jet(s[0], s[1]);
            [j.hp, -j.hq, s[1] * j.hp]
        };
        let rk4 = |s: [f64; 3], dt: f64| {
            let add = |a: [f64; 3], k: [f64; 3], c: f64| {
                [a[0] + c * k[0], a[1] + c * k[1], a[2] + c * k[2]]
            };
            let k1 = field(s);
            let k2 = field(add(s, k1, 0.5 * dt));
            let k3 = field(add(s, k2, 0.5 * dt));
            let k4 = field(add(s, k3, dt));
            [
                s[0] + dt / 6.0 * (k1[0] + 2.0 * k2[0] + 2.0 * k3[0] + k4[0]),
                s[1] + dt / 6.0 * (k1[1] + 2.0 * k2[1] + 2.0 * k3[1] + k4[1]),
                s[2] + dt / 6.0 * (k1[2] + 2.0 * k2[2] + 2.0 * k3[2] + k4[2]),
            ]
        };
        let dt = 2.0 * PI / self.omega0 / ORBIT_STEPS_PER_PERIOD;
        let start = [q0, self.pc, 0.0];
        let dir = field(start)[1].signum();
        let mut s = start;
        let mut t = 0.0;
        let (mut qmin, mut qmax) = (q0, q0);
        let mut prev = [start, start];
        let every = record.as_ref().map_or(usize::MAX, |r| {
            (ORBIT_STEPS_PER_PERIOD as usize / r.1.max(1)).max(1)
        });
        for step in 0..max_steps {
            if step % every == 0
                && let Some((out, _)) = record.as_mut()
            {
                out.push([s[0], s[1]]);
            }
            let next = rk4(s, dt);
            // Parabolic refinement of a q-extremum at the middle of three samples.
            let (a, b, c) = (prev[1][0], s[0], next[0]);
            if step > 0 && (b - a) * (c - b) <= 0.0 {
                let den = a - 2.0 * b + c;
                let ext = if den != 0.0 {
                    b - 0.125 * (c - a) * (c - a) / den
                } else {
                    b
                };
                qmin = qmin.min(ext);
                qmax = qmax.max(ext);
            }
            qmin = qmin.min(next[0]);
            qmax = qmax.max(next[0]);
            let crossed = (s[1] - self.pc) * (next[1] - self.pc) <= 0.0
                && next[0] > self.qc
                && field(next)[1].signum() == dir
                && step > 2;
            if crossed {
                // Hénon: one step in p from s back to p = p_c.
                let g = |x: [f64; 4]| {
                    let f = field([x[0], x[1], x[2]]);
                    [f[0] / f[1], 1.0, f[2] / f[1], 1.0 / f[1]]
                };
                let x0 = [s[0], s[1], s[2], t];
                let hp = self.pc - s[1];
                let add = |a: [f64; 4], k: [f64; 4], c: f64| {
                    [
                        a[0] + c * k[0],
                        a[1] + c * k[1],
                        a[2] + c * k[2],
                        a[3] + c * k[3],
                    ]
                };
                let k1 = g(x0);
                let k2 = g(add(x0, k1, 0.5 * hp));
                let k3 = g(add(x0, k2, 0.5 * hp));
                let k4 = g(add(x0, k3, hp));
                let fin: Vec<f64> = (0..4)
                    .map(|i| x0[i] + hp / 6.0 * (k1[i] + 2.0 * k2[i] + 2.0 * k3[i] + k4[i]))
                    .collect();
                let period = fin[3];
                let action = fin[2].abs() / (2.0 * PI);
                if !(period.is_finite() && period > 0.0) {
                    return None;
                }
                if let Some((out, _)) = record.as_mut() {
                    out.push([start[0], start[1]]);
                }
                return Some(BackboneRow {
                    energy: self.ec + self.sigma * depth,
                    period,
                    frequency: 2.0 * PI / period,
                    action,
                    amplitude: 0.5 * (qmax - qmin),
                });
            }
            prev = [prev[1], s];
            s = next;
            t += dt;
        }
        None
    }

    /// The depth of the lowest saddle above the center among the equilibria in view.
    fn lowest_saddle_above(
        &self,
        window: &Window,
        cfg: &EquilibriumConfig,
        cancel: &Cancel,
    ) -> Option<f64> {
        find_equilibria(self.sys, window, cfg, cancel)
            .0
            .into_iter()
            .filter_map(|e| {
                let depth = self.sigma * (e.energy - self.ec);
                (e.kind == EquilibriumKind::Saddle && depth > 0.0).then_some(depth)
            })
            .min_by(f64::total_cmp)
    }
}
