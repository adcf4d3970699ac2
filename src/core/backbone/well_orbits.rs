//! One well's closed orbits at any energy between its center and its top
//! ([`WellOrbits`]): what the backbone samples on its grid of energies and
//! the Bohr–Sommerfeld levels evaluate where their root finding asks.

use super::*;

/// One well made ready to give its closed orbit at any energy between the
/// center and the top: the refined center, the barriers on both sides, the
/// escape and top energies and the method, settled once. [`backbone`]
/// samples it on its grid of energies; the Bohr–Sommerfeld levels
/// (`core::levels`) evaluate it wherever their root finding asks.
pub struct WellOrbits<'a> {
    pub(super) well: Well<'a>,
    quadratic: bool,
    /// ∂²H/∂p² at the center (the inverse mass on the quadrature path).
    hpp: f64,
    /// The q of the barrier tops or window edges on the left and right.
    limits: (f64, f64),
    /// Whether each limit is a barrier top (a maximum of H(q, p_c)).
    saddles: (bool, bool),
    /// Depth of the escape energy, when a saddle bounds the well in view.
    pub(super) escape: Option<f64>,
    /// Depth of the top energy.
    pub(super) top: f64,
    tolerance: f64,
    max_orbit_steps: usize,
}

impl<'a> WellOrbits<'a> {
    /// The well around the center near `center` = [q, p], with the
    /// quadrature tolerance, orbit step cap and saddle search of `cfg` (its
    /// `energies` and `closest` are not used). The errors are the backbone's.
    /// With `degenerate_ok`, a degenerate minimum (or maximum) of a separable
    /// H with a quadratic kinetic part, such as the bottom of V = q⁴/4, is
    /// accepted too: its center is where ∂H/∂q(q, p_c) changes sign, its
    /// small-oscillation frequency is 0, and only the quadrature path serves it.
    pub fn new(
        sys: &'a System,
        center: [f64; 2],
        window: &Window,
        cfg: &BackboneConfig,
        degenerate_ok: bool,
        cancel: &Cancel,
    ) -> Result<WellOrbits<'a>, BackboneError> {
        if !(cfg.tolerance.is_finite() && cfg.tolerance > 0.0) {
            return Err(BackboneError::BadConfig(
                "the quadrature tolerance must be a positive number".into(),
            ));
        }
        window
            .validate()
            .map_err(|e| BackboneError::BadConfig(format!("window: {e}")))?;
        if sys.depends_on_time() {
            return Err(BackboneError::TimeDependent);
        }
        if !(center[0].is_finite() && center[1].is_finite()) {
            return Err(BackboneError::NoEquilibrium {
                q: center[0],
                p: center[1],
            });
        }
        let refined = refine_center(sys, center, window).or_else(|| {
            degenerate_ok
                .then(|| degenerate_center(sys, center, window))
                .flatten()
        });
        let [qc, pc] = refined.ok_or(BackboneError::NoEquilibrium {
            q: center[0],
            p: center[1],
        })?;
        let jc = sys.jet(qc, pc);
        let kind = classify(sys, qc, pc, window).kind;
        let degenerate = degenerate_ok && kind == EquilibriumKind::Degenerate;
        if kind != EquilibriumKind::Center && !degenerate {
            return Err(BackboneError::NotACenter { q: qc, p: pc, kind });
        }
        // Orientation: +1 when the center is a minimum of H, −1 for a maximum.
        let sigma = if degenerate {
            jc.hpp.signum()
        } else {
            jc.hqq.signum()
        };
        let well = Well {
            sys,
            qc,
            pc,
            ec: jc.h,
            sigma,
            omega0: if degenerate {
                0.0
            } else {
                jc.hessian_det().sqrt()
            },
        };
        let quadratic = sys.is_separable() && well.kinetic_is_quadratic(jc.hpp, window);
        let (left, right) = (well.barrier(window, -1.0), well.barrier(window, 1.0));
        if degenerate
            && !(quadratic
                && well.depth_q(qc - 1e-3 * window.width()).0 > 0.0
                && well.depth_q(qc + 1e-3 * window.width()).0 > 0.0)
        {
            return Err(BackboneError::NotACenter { q: qc, p: pc, kind });
        }
        let (escape, top) = if quadratic {
            let escape = [left, right]
                .iter()
                .filter(|b| b.saddle)
                .map(|b| b.depth)
                .fold(f64::INFINITY, f64::min);
            let edge = [left, right]
                .iter()
                .filter(|b| !b.saddle)
                .map(|b| b.depth)
                .fold(f64::INFINITY, f64::min);
            if escape <= edge {
                (Some(escape), escape)
            } else {
                (None, edge)
            }
        } else {
            let escape = well.lowest_saddle_above(window, &cfg.equilibria, cancel);
            let edge = left.depth.min(right.depth);
            match escape {
                Some(e) => (Some(e), e),
                None => (None, edge),
            }
        };
        if !(top.is_finite() && top > 0.0) {
            return Err(BackboneError::BadConfig(
                "the well around this center has no room in view: its level curves leave the window at once".into(),
            ));
        }
        Ok(WellOrbits {
            well,
            quadratic,
            hpp: jc.hpp,
            limits: (left.reach, right.reach),
            saddles: (left.saddle, right.saddle),
            escape,
            top,
            tolerance: cfg.tolerance,
            max_orbit_steps: cfg.max_orbit_steps,
        })
    }

    /// The refined center [q, p].
    pub fn center(&self) -> [f64; 2] {
        [self.well.qc, self.well.pc]
    }

    pub fn center_energy(&self) -> f64 {
        self.well.ec
    }

    /// +1 when the center is a minimum of H, −1 when it is a maximum: the
    /// energy at depth d is E_c + σ d.
    pub fn orientation(&self) -> f64 {
        self.well.sigma
    }

    /// The small-oscillation angular frequency √det(Hessian) (0 at a degenerate center).
    pub fn small_frequency(&self) -> f64 {
        self.well.omega0
    }

    /// The lowest saddle level bounding the well, if one bounds it in view.
    pub fn escape_energy(&self) -> Option<f64> {
        self.escape.map(|d| self.well.ec + self.well.sigma * d)
    }

    /// The escape energy, or the level whose curve reaches the window's edge.
    pub fn top_energy(&self) -> f64 {
        self.well.ec + self.well.sigma * self.top
    }

    /// The depth σ(E_top − E_c) > 0 of the top energy.
    pub fn top_depth(&self) -> f64 {
        self.top
    }

    pub fn method(&self) -> BackboneMethod {
        if self.quadratic {
            BackboneMethod::Quadrature
        } else {
            BackboneMethod::Orbit
        }
    }

    /// The inverse mass ∂²H/∂p² at the center.
    pub fn inverse_mass(&self) -> f64 {
        self.hpp
    }

    /// The q of the barrier top on the left (`side` < 0) or right of the
    /// center along p = p_c, when the well is bounded there by a maximum of
    /// H(q, p_c) (quadrature path only).
    pub fn barrier_top(&self, side: f64) -> Option<f64> {
        let (q, saddle) = if side < 0.0 {
            (self.limits.0, self.saddles.0)
        } else {
            (self.limits.1, self.saddles.1)
        };
        (self.quadratic && saddle).then_some(q)
    }

    /// The closed orbit at depth σ(E − E_c) = `depth` (0 < depth ≤ top) and
    /// its turning points on p = p_c. `from` holds turning points of a lower
    /// level that bracket this one from inside (the center twice when there is
    /// none); the orbit path ignores it and gives the center twice.
    pub fn orbit_at_depth(
        &self,
        depth: f64,
        from: (f64, f64),
    ) -> Option<(BackboneRow, (f64, f64))> {
        self.orbit_at_depth_within(depth, from, self.tolerance)
            .or_else(|| {
                // At a shallow depth E − H keeps only the digits that
                // rounding of H near E_c leaves: ask no more of the rule.
                let floor = SHALLOW_ULPS * f64::EPSILON * (self.well.ec.abs() + depth) / depth;
                (floor > self.tolerance)
                    .then(|| self.orbit_at_depth_within(depth, from, floor))
                    .flatten()
            })
    }

    /// As [`WellOrbits::orbit_at_depth`] with the quadrature's relative
    /// tolerance `tol` instead of the configured one (a looser one converges
    /// where rounding in E − H limits the accuracy, very close to a flat top).
    pub fn orbit_at_depth_within(
        &self,
        depth: f64,
        from: (f64, f64),
        tol: f64,
    ) -> Option<(BackboneRow, (f64, f64))> {
        if !(depth > 0.0 && depth <= self.top) {
            return None;
        }
        if self.quadratic {
            self.well
                .quadrature_row(depth, self.limits, from, self.hpp, tol)
        } else if self.well.omega0 > 0.0 {
            self.well
                .orbit_row(depth, self.limits, self.max_orbit_steps)
                .map(|r| (r, (self.well.qc, self.well.qc)))
        } else {
            None
        }
    }

    /// The closed orbit at depth σ(E − E_c) = `depth` as a polyline of about
    /// `points` points, for drawing: on the quadrature path the two arcs
    /// p = p_c ± √(2m W(q)) between the turning points `ends` (those the
    /// level search returned), sampled at q = q_mid − (Δ/2) cos θ so that
    /// the points gather where the curve turns; on the orbit path the orbit
    /// over one period, thinned. None where there is no closed orbit.
    pub fn closed_curve(
        &self,
        depth: f64,
        ends: (f64, f64),
        points: usize,
    ) -> Option<Vec<[f64; 2]>> {
        if !(depth > 0.0 && depth <= self.top) || points < 8 {
            return None;
        }
        let w = &self.well;
        if !self.quadratic {
            let mut out = Vec::with_capacity(points + 2);
            if w.omega0 > 0.0 {
                w.orbit_path(
                    depth,
                    self.limits,
                    self.max_orbit_steps,
                    Some((&mut out, points)),
                )?;
            }
            return (out.len() >= 3).then_some(out);
        }
        let (qm, qp) = ends;
        let (mid, half) = (0.5 * (qm + qp), 0.5 * (qp - qm));
        if !(half > 0.0 && half.is_finite()) {
            return None;
        }
        let two_m = 2.0 / self.hpp.abs();
        let arc = points / 2;
        let mut out = Vec::with_capacity(2 * arc + 1);
        for side in [1.0, -1.0] {
            for k in 0..arc {
                let theta = PI * k as f64 / arc as f64;
                let q = mid - side * half * theta.cos();
                let room = (depth - w.depth_q(q).0).max(0.0);
                out.push([q, w.pc + side * (two_m * room).sqrt()]);
            }
        }
        out.push(out[0]);
        Some(out)
    }

    /// The action under the barrier on one side (quadrature path, a barrier
    /// top there): ∫ |p| dq from the turning point at `depth` (below the
    /// top) to the barrier top, |p| = √(2m σ(H(q, p_c) − E)) with
    /// m = 1/|∂²H/∂p²|. The substitution q = q_t + (q_s − q_t) s² removes the
    /// square-root zero at the turning point q_t; the integral in s is taken
    /// by the same adaptive Gauss–Kronrod rule as the orbits.
    pub fn barrier_action(&self, depth: f64, side: f64) -> Option<f64> {
        let qs = self.barrier_top(side)?;
        let w = &self.well;
        let top_here = w.depth_q(qs).0;
        if !(depth > 0.0 && depth < top_here) {
            return None;
        }
        let qt = w.turning_point(depth, w.qc, qs)?;
        let len = qs - qt;
        let m = 1.0 / self.hpp.abs();
        let f = |s: f64| {
            let q = qt + len * s * s;
            let above = (w.depth_q(q).0 - depth).max(0.0);
            let v = 2.0 * len * s * above.sqrt();
            [v, v]
        };
        let [v, _] = gauss_kronrod(&f, 0.0, 1.0, self.tolerance)?;
        Some((2.0 * m).sqrt() * v.abs())
    }
}
