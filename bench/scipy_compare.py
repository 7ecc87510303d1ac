#!/usr/bin/env python3
"""Quarry's Lotka-Volterra orbit against scipy's solve_ivp, side by side in one run.

The orbit: dx/dt = a x - alpha x y, dy/dt = -c y + gamma x y with a=1, alpha=0.1, c=1.5,
gamma=0.075, from (10, 5), t in [0, 1000]. Quarry runs DOP853 at rtol 1e-9 with the rates as
compiled formulas (crates/core/examples/orbit_timing.rs). Accuracy is the state error at
t = 1000 against scipy DOP853 at rtol = atol = 1e-13. For each of scipy's RK45, DOP853 and
LSODA (plain-Python right-hand side) the script finds the loosest tolerance that is at least
as accurate as Quarry and times it; the ratio is that time over Quarry's median.

Run from the repository root: python3 bench/scipy_compare.py   (needs numpy and scipy)
"""

import json
import os
import statistics
import subprocess
import sys
import time

import numpy as np
import scipy
from scipy.integrate import solve_ivp

A, ALPHA, C, GAMMA = 1.0, 0.1, 1.5, 0.075
Y0 = [10.0, 5.0]
T_END = 1000.0
QUARRY_RTOL = 1e-9
# Give up on a method once a single run takes longer than this (seconds).
SLOW = 60.0


def rhs(t, s):
    x, y = s
    return [A * x - ALPHA * x * y, -C * y + GAMMA * x * y]


def error(final, ref):
    return max(abs(final[i] - ref[i]) / abs(ref[i]) for i in range(2))


def run_scipy(method, rtol):
    t0 = time.perf_counter()
    sol = solve_ivp(rhs, (0.0, T_END), Y0, method=method, rtol=rtol, atol=rtol)
    return time.perf_counter() - t0, sol.y[:, -1], sol.nfev, sol.success


def main():
    root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    subprocess.run(["cargo", "build", "--release", "--quiet", "-p", "quarry-core", "--example",
                    "orbit_timing"], cwd=root, check=True)
    exe = os.path.join(root, "target", "release", "examples", "orbit_timing")

    ref = solve_ivp(rhs, (0.0, T_END), Y0, method="DOP853", rtol=1e-13, atol=1e-13).y[:, -1]

    q = json.loads(subprocess.run([exe, str(QUARRY_RTOL), "101"], check=True,
                                  capture_output=True, text=True).stdout)
    q_err = error(q["final"], ref)
    print(f"scipy {scipy.__version__}, numpy {np.__version__}, python {sys.version.split()[0]}")
    print(f"quarry DOP853 rtol {QUARRY_RTOL:g}: median {q['median_s'] * 1e3:.3f} ms, "
          f"{q['steps']} steps, {q['rhs_evals']} rate evaluations, native code: {q['native']}, "
          f"state error at t=1000: {q_err:.2e}")

    results = {}
    rtols = [10.0 ** (-k / 2) for k in range(8, 27)]  # 1e-4 ... 1e-13 in half decades
    for method in ["RK45", "DOP853", "LSODA"]:
        found = None
        for rtol in rtols:
            elapsed, final, nfev, ok = run_scipy(method, rtol)
            err = error(final, ref)
            if ok and err <= q_err:
                times = [elapsed] + [run_scipy(method, rtol)[0] for _ in range(2)]
                found = (rtol, statistics.median(times), err, nfev)
                break
            if elapsed > SLOW:
                break
        results[method] = found
        if found:
            rtol, t, err, nfev = found
            print(f"scipy {method:6s}: rtol {rtol:.1e} reaches error {err:.2e} in {t:.3f} s "
                  f"({nfev} evaluations): {t / q['median_s']:.0f}x Quarry")
        else:
            print(f"scipy {method:6s}: never as accurate as Quarry within {SLOW:.0f} s per run")

    timed = [r[1] for r in results.values() if r]
    if timed:
        fastest = min(timed)
        print(f"fastest scipy at equal or better accuracy / Quarry = {fastest / q['median_s']:.0f}x")


if __name__ == "__main__":
    main()
