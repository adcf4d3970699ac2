#!/usr/bin/env python3
"""phasewright's own peer for the driven-system benchmark (examples/bench_drive.rs):
the script a practitioner writes for a stroboscopic section or a safe basin with
NumPy alone.

The driven, damped double well

    q' = p,  p' = q - q^3 - delta*p + F*cos(W*t),   W = 1,

integrated by the classical fixed-step Runge-Kutta method of order 4, vectorised
over all starts at once (one NumPy array per coordinate), the state sampled once
per drive period 2*pi/W.

  * section mode (default): a sqrt(orbits) x sqrt(orbits) lattice over
    q in [-1.5, 1.5], p in [-0.8, 0.8]; every period's point kept.
  * basin mode (--basin): a grid x grid lattice over q in [-2, 2], p in [-1.5, 1.5];
    after each period the starts outside the box 0 < q < 2.5, |p| < 2 (the right
    well and its surroundings) are dropped from the arrays (boolean indexing),
    so a start that left costs nothing more; the count of starts that stayed
    all periods is printed.

Each mode runs twice: undriven and undamped (F = delta = 0, where H = p^2/2 -
q^2/2 + q^4/4 is conserved, for the energy error: the largest |H - H(start)| /
max(1, |H(start)|) over every sampled point), then driven (the timed workload).

Set-up:  python3 -m pip install numpy
Run:     python3 examples/peers/drive_rk4.py [--orbits 100] [--periods 500] [--steps 64]
         [--cube power|products]   (q**3, the default, or q*q*q)
         python3 examples/peers/drive_rk4.py --basin [--grid 200] [--periods 60] [--steps 64]
         [--amplitude F] [--damping DELTA]
Prints one JSON object on its last line (wall times in ms).
"""
import argparse
import json
import math
import time

import numpy as np

W = 1.0
BOX = (0.0, 2.5, -2.0, 2.0)  # q_min, q_max, p_min, p_max of basin mode


def energy(q, p):
    return p**2 / 2 - q**2 / 2 + q**4 / 4


CUBE = {
    # what one writes first; NumPy computes it by pow(), which is slow for
    # negative bases (about 2 ms per 40 000 values here, 100x a product)
    "power": lambda q: q**3,
    # the same cube as two products
    "products": lambda q: q * q * q,
}
cube = CUBE["power"]


def rhs(t, q, p, F, delta):
    return p, q - cube(q) - delta * p + F * np.cos(W * t)


def run(q, p, F, delta, periods, steps, box=None):
    """Iterate the drive-period map; returns (energy error, starts left)."""
    tau = 2 * math.pi / W
    h = tau / steps
    e0 = energy(q, p)
    err = 0.0
    for k in range(periods):
        t = k * tau
        for _ in range(steps):
            k1q, k1p = rhs(t, q, p, F, delta)
            k2q, k2p = rhs(t + h / 2, q + h / 2 * k1q, p + h / 2 * k1p, F, delta)
            k3q, k3p = rhs(t + h / 2, q + h / 2 * k2q, p + h / 2 * k2p, F, delta)
            k4q, k4p = rhs(t + h, q + h * k3q, p + h * k3p, F, delta)
            q = q + h / 6 * (k1q + 2 * k2q + 2 * k3q + k4q)
            p = p + h / 6 * (k1p + 2 * k2p + 2 * k3p + k4p)
            t += h
        if box is not None:
            inside = (q > box[0]) & (q < box[1]) & (p > box[2]) & (p < box[3])
            q, p, e0 = q[inside], p[inside], e0[inside]
        if q.size:
            rel = np.abs(energy(q, p) - e0) / np.maximum(1.0, np.abs(e0))
            err = max(err, float(rel.max()))
    return err, q.size


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--orbits", type=int, default=100)
    ap.add_argument("--basin", action="store_true")
    ap.add_argument("--grid", type=int, default=200)
    ap.add_argument("--periods", type=int, default=None)
    ap.add_argument("--steps", type=int, default=64)
    ap.add_argument("--amplitude", type=float, default=None)
    ap.add_argument("--damping", type=float, default=None)
    ap.add_argument("--cube", choices=sorted(CUBE), default="power")
    a = ap.parse_args()
    global cube
    cube = CUBE[a.cube]
    if a.basin:
        n = a.grid
        periods = 60 if a.periods is None else a.periods
        F = 0.2 if a.amplitude is None else a.amplitude
        delta = 0.25 if a.damping is None else a.damping
        qs, ps = np.meshgrid(np.linspace(-2.0, 2.0, n), np.linspace(-1.5, 1.5, n))
        box = BOX
    else:
        n = int(round(math.sqrt(a.orbits)))
        periods = 500 if a.periods is None else a.periods
        F = 0.3 if a.amplitude is None else a.amplitude
        delta = 0.0 if a.damping is None else a.damping
        qs, ps = np.meshgrid(np.linspace(-1.5, 1.5, n), np.linspace(-0.8, 0.8, n))
        box = None
    q0, p0 = qs.ravel().copy(), ps.ravel().copy()

    t0 = time.perf_counter()
    err, free_left = run(q0.copy(), p0.copy(), 0.0, 0.0, periods, a.steps, box)
    free_ms = (time.perf_counter() - t0) * 1e3

    t0 = time.perf_counter()
    _, left = run(q0.copy(), p0.copy(), F, delta, periods, a.steps, box)
    driven_ms = (time.perf_counter() - t0) * 1e3

    print(json.dumps({
        "mode": "basin" if a.basin else "section",
        "starts": int(q0.size),
        "periods": periods,
        "steps_per_period": a.steps,
        "amplitude": F,
        "damping": delta,
        "cube": a.cube,
        "free_ms": round(free_ms, 1),
        "free_max_rel_energy_error": err,
        "free_stayed": int(free_left),
        "driven_ms": round(driven_ms, 1),
        "stayed": int(left),
        "starts_periods_per_s": q0.size * periods / (driven_ms / 1e3),
    }))


if __name__ == "__main__":
    main()
