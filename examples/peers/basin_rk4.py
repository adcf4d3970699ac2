#!/usr/bin/env python3
"""phasewright's own peer for the safe-basin benchmark: the script a
practitioner would write by hand with NumPy.

The driven, damped double well
    q' = p,  p' = q - q^3 - delta*p + F*cos(W*t)
(H = p^2/2 - q^2/2 + q^4/4 - F*q*cos(W*t)) on a lattice of n x n starts
(cell centres) over q in [-1.9, 1.9], p in [-1.2, 1.2]. The starts in either
lobe of the undriven separatrix (H0 < 0, on the side q > 0 or q < 0) are
followed by fixed-step classical RK4 vectorised over all of them at once, for
a number of drive periods; after each period the starts that crossed q = 0
(over the hilltop) are dropped. The same rule as examples/bench_basin.rs.

Run:  python3 examples/peers/basin_rk4.py [--grid 200] [--periods 60] [--steps 64]
      [--F 0.25] [--W 1.2] [--delta 0.088]
Prints one `name value` line per figure.
"""
import argparse
import math
import time

import numpy as np


def energy(q, p):
    return p**2 / 2 - q**2 / 2 + q**4 / 4


def lobe_starts(n):
    qs = -1.9 + (np.arange(n) + 0.5) * 3.8 / n
    ps = -1.2 + (np.arange(n) + 0.5) * 2.4 / n
    q, p = np.meshgrid(qs, ps)
    q, p = q.ravel(), p.ravel()
    inside = (energy(q, p) < 0.0) & (q != 0.0)
    return q[inside].copy(), p[inside].copy()


def basin(q, p, F, W, delta, periods, steps, drop=True):
    """Returns the surviving q, p, their start indices and the start-periods done."""
    T = 2 * math.pi / W
    h = T / steps
    side = np.sign(q)
    idx = np.arange(q.size)
    work = 0
    for k in range(periods):
        t = k * T
        for _ in range(steps):
            k1q, k1p = p, q - q**3 - delta * p + F * np.cos(W * t)
            qa, pa = q + h / 2 * k1q, p + h / 2 * k1p
            c = F * np.cos(W * (t + h / 2))
            k2q, k2p = pa, qa - qa**3 - delta * pa + c
            qb, pb = q + h / 2 * k2q, p + h / 2 * k2p
            k3q, k3p = pb, qb - qb**3 - delta * pb + c
            qc, pc = q + h * k3q, p + h * k3p
            k4q, k4p = pc, qc - qc**3 - delta * pc + F * np.cos(W * (t + h))
            q = q + h / 6 * (k1q + 2 * k2q + 2 * k3q + k4q)
            p = p + h / 6 * (k1p + 2 * k2p + 2 * k3p + k4p)
            t += h
        work += q.size
        if drop:
            keep = q * side > 0
            q, p, side, idx = q[keep], p[keep], side[keep], idx[keep]
    return q, p, idx, work


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--grid", type=int, default=200)
    ap.add_argument("--periods", type=int, default=60)
    ap.add_argument("--steps", type=int, default=64)
    ap.add_argument("--F", type=float, default=0.25)
    ap.add_argument("--W", type=float, default=1.2)
    ap.add_argument("--delta", type=float, default=0.088)
    a = ap.parse_args()
    q0, p0 = lobe_starts(a.grid)

    t0 = time.perf_counter()
    q, p, idx, work = basin(q0, p0, a.F, a.W, a.delta, a.periods, a.steps)
    secs = time.perf_counter() - t0

    # undriven, undamped: energy must stay put
    t1 = time.perf_counter()
    qf, pf, idf, _ = basin(q0, p0, 0.0, a.W, 0.0, a.periods, a.steps, drop=False)
    free_secs = time.perf_counter() - t1
    e0 = energy(q0, p0)
    err = np.max(np.abs(energy(qf, pf) - e0[idf]) / np.maximum(1.0, np.abs(e0[idf])))

    print(f"lattice_starts {a.grid * a.grid}")
    print(f"starts_in_wells {q0.size}")
    print(f"periods {a.periods}")
    print(f"steps_per_period {a.steps}")
    print(f"safe {idx.size}")
    print(f"safe_right {int(np.sum(q0[idx] > 0))}")
    print(f"safe_left {int(np.sum(q0[idx] < 0))}")
    print(f"seconds {secs:.3f}")
    print(f"start_periods_done {work}")
    print(f"lattice_throughput {a.grid * a.grid * a.periods / secs:.4e}")
    print(f"integrated_throughput {work / secs:.4e}")
    print(f"free_seconds {free_secs:.3f}")
    print(f"free_max_rel_energy_error {err:.3e}")


if __name__ == "__main__":
    main()
