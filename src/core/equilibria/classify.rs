//! Classification of an equilibrium by the Jacobian's eigenvalues, the
//! saddle's eigenvectors, and the shape of H around a degenerate point.

use super::*;
use crate::core::system::{Jet, System};

/// Unit eigenvector of the trace-free Jacobian `jm` for the real eigenvalue `lam`,
/// oriented so that its largest component is positive.
fn eigenvector(jm: [[f64; 2]; 2], lam: f64) -> [f64; 2] {
    // (J − λI) v = 0: v = (J01, λ − J00) or (λ − J11, J10); take the longer
    let v1 = [jm[0][1], lam - jm[0][0]];
    let v2 = [lam - jm[1][1], jm[1][0]];
    let v = if v1[0].hypot(v1[1]) >= v2[0].hypot(v2[1]) {
        v1
    } else {
        v2
    };
    let n = v[0].hypot(v[1]);
    if !n.is_finite() || n <= 0.0 {
        return [f64::NAN, f64::NAN];
    }
    let sign = if v[0].abs() >= v[1].abs() {
        v[0].signum()
    } else {
        v[1].signum()
    };
    [sign * v[0] / n, sign * v[1] / n]
}

/// The linearisation of a saddle from the field's Jacobian `jm`: the rate
/// λ > 0 and the unit eigenvectors for the eigenvalues ½tr J ± λ (unstable,
/// stable), each oriented so that its largest component is positive. None
/// unless det J < 0. For a Hamiltonian field tr J = 0 and λ = √(−det J).
/// The one routine for a saddle's directions: classification, the
/// separatrix tracer and the Melnikov integrals all use it.
pub fn saddle_directions(jm: [[f64; 2]; 2]) -> Option<(f64, [f64; 2], [f64; 2])> {
    let det = jm[0][0] * jm[1][1] - jm[0][1] * jm[1][0];
    if !(det < 0.0) {
        return None;
    }
    let tr = jm[0][0] + jm[1][1];
    let lam = (0.25 * tr * tr - det).sqrt();
    let u = eigenvector(jm, 0.5 * tr + lam);
    let s = eigenvector(jm, 0.5 * tr - lam);
    (lam.is_finite() && u[0].is_finite() && s[0].is_finite()).then_some((lam, u, s))
}

/// The first correction of a center's frequency with amplitude, κ in
/// ω ≈ ω₀ + κA² (A the amplitude in q), for H = T(p) + V(q) with T quadratic
/// in p (mass m = 1/H_pp): with x'' + ω₀²x + α₂x² + α₃x³ = 0 about the
/// center, ω₀² = V₂/m, α₂ = V₃/(2m), α₃ = V₄/(6m) (Vₖ the k-th derivative of
/// V), the Lindstedt–Poincaré result κ = (9α₃ω₀² − 10α₂²)/(24ω₀³)
/// (A. H. Nayfeh and D. T. Mook, *Nonlinear Oscillations*, Wiley 1979,
/// §4.1). κ > 0 is a hardening well, κ < 0 a softening one. None for a
/// kinetic part that is not quadratic in p or a formula that mixes q and p.
pub fn frequency_shift(sys: &System, q: f64, p: f64) -> Option<f64> {
    if !sys.is_separable() || !crate::core::integrate::kinetic_is_quadratic(sys) {
        return None;
    }
    let j = sys.jet(q, p);
    let m = 1.0 / j.hpp;
    let [_, _, v2, v3, v4] = sys.q_derivatives(q, p);
    let w0 = (v2 / m).sqrt();
    let (a2, a3) = (v3 / (2.0 * m), v4 / (6.0 * m));
    let k = (9.0 * a3 * w0 * w0 - 10.0 * a2 * a2) / (24.0 * w0.powi(3));
    (k.is_finite() && m.is_finite() && m > 0.0).then_some(k)
}

/// Classify a point already known to be an equilibrium.
pub fn classify(sys: &System, q: f64, p: f64, window: &Window) -> Equilibrium {
    let j = sys.jet(q, p);
    let det = j.hessian_det();
    let mag = j.hqq.abs().max(j.hpp.abs()).max(j.hqp.abs());
    let tol = DEGENERATE_DET_REL * mag * mag;
    let root = det.abs().sqrt();
    let eigenvalues = if det >= 0.0 {
        [[0.0, root], [0.0, -root]]
    } else {
        [[root, 0.0], [-root, 0.0]]
    };
    let mut e = Equilibrium {
        q,
        p,
        energy: j.h,
        kind: EquilibriumKind::Degenerate,
        eigenvalues,
        hessian_det: det,
        omega: None,
        small_period: None,
        lambda: None,
        stable_dir: None,
        unstable_dir: None,
        degenerate: None,
        frequency_shift: None,
    };
    if !j.is_finite() || !det.is_finite() {
        return e;
    }
    if det > tol {
        e.kind = EquilibriumKind::Center;
        e.omega = Some(root);
        e.small_period = Some(std::f64::consts::TAU / root);
        e.frequency_shift = frequency_shift(sys, q, p);
    } else if det < -tol {
        e.kind = EquilibriumKind::Saddle;
        e.lambda = Some(root);
        let jm = j.jacobian();
        e.stable_dir = Some(eigenvector(jm, -root));
        e.unstable_dir = Some(eigenvector(jm, root));
    } else {
        e.degenerate = Some(degenerate_shape(sys, &j, q, p, window));
    }
    e
}

/// The sign pattern of H − H0 on one probe circle.
#[derive(Clone, Copy, PartialEq, Eq)]
enum Ring {
    /// Strictly one-signed: +1 or −1.
    Strict(i8),
    /// One-signed where it is not zero (within rounding).
    Weak,
    /// Both signs occur.
    Mixed,
}

/// Decide by higher order whether H has a strict local extremum at (q, p):
/// H − H0 is sampled on circles of [`PROBE_RADII_REL`] (in window units),
/// including the Hessian's null directions, where the quadratic part vanishes.
fn degenerate_shape(sys: &System, j: &Jet, q: f64, p: f64, window: &Window) -> DegenerateShape {
    let s = Scale {
        wq: window.width(),
        wp: window.height(),
    };
    let h_null = match Local::from_jet(j, s) {
        Some(l) => null_direction(l.h),
        None => [1.0, 0.0],
    };
    let null_angle = h_null[1].atan2(h_null[0]);
    let mut angles: Vec<f64> = (0..PROBE_SAMPLES)
        .map(|k| std::f64::consts::TAU * k as f64 / PROBE_SAMPLES as f64)
        .collect();
    angles.extend([null_angle, null_angle + std::f64::consts::PI]);
    let h0 = j.h;
    let mut rings = Vec::with_capacity(PROBE_RADII_REL.len());
    for r in PROBE_RADII_REL {
        let values: Vec<f64> = angles
            .iter()
            .map(|a| sys.energy(q + r * a.cos() * s.wq, p + r * a.sin() * s.wp))
            .collect();
        if values.iter().any(|v| !v.is_finite()) {
            rings.push(Ring::Mixed);
            continue;
        }
        let big = values.iter().fold(h0.abs(), |m, v| m.max(v.abs()));
        let noise = NOISE_ULPS * f64::EPSILON * big;
        let pos = values.iter().filter(|&&v| v - h0 > noise).count();
        let neg = values.iter().filter(|&&v| v - h0 < -noise).count();
        rings.push(if pos > 0 && neg > 0 {
            Ring::Mixed
        } else if pos == values.len() {
            Ring::Strict(1)
        } else if neg == values.len() {
            Ring::Strict(-1)
        } else {
            Ring::Weak
        });
    }
    let signs: Vec<i8> = rings
        .iter()
        .filter_map(|r| {
            if let Ring::Strict(s) = r {
                Some(*s)
            } else {
                None
            }
        })
        .collect();
    let widest_strict = matches!(rings.last(), Some(Ring::Strict(_)));
    if rings.contains(&Ring::Mixed) || !widest_strict || signs.windows(2).any(|w| w[0] != w[1]) {
        DegenerateShape::NoExtremum
    } else {
        DegenerateShape::NonlinearCenter
    }
}
