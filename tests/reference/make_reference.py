#!/usr/bin/env python3
"""Writes the reference orbits that Quarry's Rust tests compare against.

Every orbit is computed with scipy.integrate.solve_ivp (method DOP853, rtol 1e-12, atol 1e-12)
from a right-hand side written here in plain Python, independently of Quarry's formula language.
The Rust test (tests/reference_orbits.rs) rebuilds each model from the formulas stored beside
the numbers and checks Quarry's orbit against these samples.

Run: python3 tests/reference/make_reference.py   (needs numpy and scipy from PyPI)
.ci/run re-runs it before the tests so the committed files cannot go stale.
"""

import json
import math
import os

import numpy as np
import scipy
from scipy.integrate import solve_ivp

HERE = os.path.dirname(os.path.abspath(__file__))
RTOL = 1e-12
ATOL = 1e-15


def lotka_volterra(p):
    a, alpha, c, gamma = p["a"], p["alpha"], p["c"], p["gamma"]
    return lambda t, s: [a * s[0] - alpha * s[0] * s[1], -c * s[1] + gamma * s[0] * s[1]]


def rosenzweig_macarthur(p):
    r, K, a, h, b, m = p["r"], p["K"], p["a"], p["h"], p["b"], p["m"]

    def f(t, s):
        x, y = s
        feeding = a * x * y / (1.0 + a * h * x)
        return [r * x * (1.0 - x / K) - feeding, b * feeding - m * y]

    return f


def competition(p):
    r1, r2, K1, K2, a12, a21 = p["r1"], p["r2"], p["K1"], p["K2"], p["a12"], p["a21"]
    return lambda t, s: [
        r1 * s[0] * (1.0 - (s[0] + a12 * s[1]) / K1),
        r2 * s[1] * (1.0 - (s[1] + a21 * s[0]) / K2),
    ]


def van_der_pol(p):
    mu = p["mu"]
    return lambda t, s: [s[1], mu * (1.0 - s[0] ** 2) * s[1] - s[0]]


# name, Python rhs factory, Quarry formulas, parameters, start, t_end, sample step
CASES = [
    (
        "lotka_volterra_forward",
        lotka_volterra,
        ["a*x - alpha*x*y", "-c*y + gamma*x*y"],
        {"a": 1.0, "alpha": 0.1, "c": 1.5, "gamma": 0.075},
        [10.0, 5.0],
        50.0,
        0.5,
    ),
    (
        "lotka_volterra_backward",
        lotka_volterra,
        ["a*x - alpha*x*y", "-c*y + gamma*x*y"],
        {"a": 1.0, "alpha": 0.1, "c": 1.5, "gamma": 0.075},
        [10.0, 5.0],
        -20.0,
        0.25,
    ),
    (
        "rosenzweig_macarthur",
        rosenzweig_macarthur,
        ["r*x*(1 - x/K) - a*x*y/(1 + a*h*x)", "b*a*x*y/(1 + a*h*x) - m*y"],
        {"r": 1.0, "K": 8.0, "a": 1.0, "h": 0.5, "b": 0.5, "m": 0.2},
        [2.0, 1.0],
        100.0,
        1.0,
    ),
    (
        "competition",
        competition,
        ["r1*x*(1 - (x + a12*y)/K1)", "r2*y*(1 - (y + a21*x)/K2)"],
        {"r1": 1.0, "r2": 0.8, "K1": 10.0, "K2": 8.0, "a12": 0.6, "a21": 0.7},
        [1.0, 1.0],
        40.0,
        0.5,
    ),
    (
        "van_der_pol",
        van_der_pol,
        ["y", "mu*(1 - x^2)*y - x"],
        {"mu": 1.0},
        [2.0, 0.0],
        30.0,
        0.25,
    ),
]


def van_der_pol_period(mu=1.0):
    """Limit-cycle period of Van der Pol, from successive upward crossings of x = 0 after
    transients have died out (event location on scipy's dense output)."""

    def crossing(t, s):
        return s[0]

    crossing.direction = 1.0
    sol = solve_ivp(van_der_pol({"mu": mu}), (0.0, 200.0), [2.0, 0.0], method="DOP853",
                    rtol=RTOL, atol=ATOL, events=crossing)
    times = sol.t_events[0]
    return float(times[-1] - times[-2])


def main():
    for name, factory, formulas, params, start, t_end, step in CASES:
        n = int(round(abs(t_end) / step))
        t_eval = np.linspace(0.0, t_end, n + 1)
        sol = solve_ivp(factory(params), (0.0, t_end), start, method="DOP853", rtol=RTOL,
                        atol=ATOL, t_eval=t_eval)
        assert sol.success, sol.message
        out = {
            "source": f"scipy {scipy.__version__} solve_ivp DOP853 rtol={RTOL} atol={ATOL}",
            "rates": formulas,
            "params": params,
            "start": start,
            "t": [float(v) for v in sol.t],
            "x": [float(v) for v in sol.y[0]],
            "y": [float(v) for v in sol.y[1]],
        }
        with open(os.path.join(HERE, f"{name}.json"), "w") as fh:
            json.dump(out, fh, indent=1)
            fh.write("\n")
    period = van_der_pol_period(1.0)
    with open(os.path.join(HERE, "van_der_pol_period.json"), "w") as fh:
        json.dump({"source": f"scipy {scipy.__version__} solve_ivp DOP853 rtol={RTOL} "
                   f"atol={ATOL}, successive upward crossings of x = 0 after t = 150",
                   "mu": 1.0, "period": period}, fh, indent=1)
        fh.write("\n")
    print(f"wrote {len(CASES) + 1} reference files to {HERE}; Van der Pol period {period:.12f}")
    # Published value for comparison (from memory): T = 6.6632868593 for mu = 1.
    assert math.isclose(period, 6.6632868593, rel_tol=1e-8), period


if __name__ == "__main__":
    main()
