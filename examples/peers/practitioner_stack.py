#!/usr/bin/env python3
"""phasewright's own benchmark peer: the analysis a practitioner would script by
hand with the scientific Python stack, timed so that a Rust benchmark can print
both figures from one run.

  * the grid: H evaluated by NumPy broadcasting over an n x n lattice;
  * level curves: contourpy's line generator, one call per level;
  * equilibria: scipy.optimize.fsolve from a 16 x 16 lattice of starts,
    duplicates dropped within 1e-6;
  * an orbit: the pendulum H = p^2/2 - cos q from a 90-degree amplitude over
    1000 periods with scipy's DOP853 at rtol 1e-10, atol 1e-12.

The system is the biased double well H = p^2/2 + q^4/4 - mu q^2/2 + eps q
(mu = 1, eps = 0.05) on q in [-2, 2], p in [-1.5, 1.5], as in
examples/bench_core.rs.

Set-up:  python3 -m pip install numpy scipy contourpy
Run:     python3 examples/peers/practitioner_stack.py [--grid 512] [--levels 24] [--repeat 7]
Prints one JSON object (median wall times in ms) on its last line.
"""
import argparse
import json
import math
import statistics
import time

import contourpy
import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import fsolve

MU, EPS = 1.0, 0.05
Q_RANGE, P_RANGE = (-2.0, 2.0), (-1.5, 1.5)
# Quarter period of the pendulum at 90 degrees is K(m = 1/2); the period is
# 4 K(1/2) = 7.416298709205487... (complete elliptic integral, recalled from memory;
# only used to set the run length).
PENDULUM_PERIOD = 7.416298709205487


def timed_median(work, repeat):
    work()
    samples = []
    for _ in range(repeat):
        start = time.perf_counter()
        work()
        samples.append((time.perf_counter() - start) * 1e3)
    return statistics.median(samples)


def hamiltonian(q, p):
    return 0.5 * p * p + 0.25 * q**4 - 0.5 * MU * q * q + EPS * q


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--grid", type=int, default=512)
    parser.add_argument("--levels", type=int, default=24)
    parser.add_argument("--repeat", type=int, default=7)
    args = parser.parse_args()

    qs = np.linspace(*Q_RANGE, args.grid)
    ps = np.linspace(*P_RANGE, args.grid)
    qq, pp = np.meshgrid(qs, ps)

    def sample():
        return hamiltonian(qq, pp)

    values = sample()
    levels = np.linspace(values.min(), values.max(), args.levels + 2)[1:-1]

    def curves():
        generator = contourpy.contour_generator(qs, ps, sample())
        return [generator.lines(level) for level in levels]

    def gradient(x):
        return [x[0] ** 3 - MU * x[0] + EPS, x[1]]

    def equilibria():
        roots = []
        for q0 in np.linspace(*Q_RANGE, 16):
            for p0 in np.linspace(*P_RANGE, 16):
                x, _, status, _ = fsolve(gradient, [q0, p0], full_output=True)
                if status == 1 and all(abs(x[0] - r[0]) + abs(x[1] - r[1]) >= 1e-6 for r in roots):
                    roots.append(x)
        return roots

    def field(_t, y):
        return [y[1], -math.sin(y[0])]

    def orbit():
        return solve_ivp(field, (0.0, 1000 * PENDULUM_PERIOD), [math.pi / 2, 0.0],
                         method="DOP853", rtol=1e-10, atol=1e-12)

    solution = orbit()
    energy = 0.5 * solution.y[1] ** 2 - np.cos(solution.y[0])
    print(json.dumps({
        "peer": "examples/peers/practitioner_stack.py",
        "grid": args.grid,
        "levels": args.levels,
        "grid_eval_ms": timed_median(sample, args.repeat),
        "grid_eval_plus_contours_ms": timed_median(curves, args.repeat),
        "equilibria_ms": timed_median(equilibria, 3),
        "equilibria_found": len(equilibria()),
        "orbit_1000_periods_ms": timed_median(orbit, 3),
        "orbit_rhs_evaluations": int(solution.nfev),
        "orbit_energy_drift": float(np.max(np.abs(energy - energy[0]))),
    }))


if __name__ == "__main__":
    main()
