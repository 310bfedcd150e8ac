#!/usr/bin/env python3
"""Synthetic step-test logs with known parameters, and their fit by
scipy.optimize.least_squares, for harness/tests/reference_fit.rs
(evenkeel fit).

The plant is simulated here on its own (numpy), not by the harness: a
first-order lag  tau*dy/dt = k*u(t - theta) + d - y  with a zero-order-hold
input, discretised exactly over each sample interval and split where the
delayed input switches (theta need not be a whole number of samples); the
input before the log is its first value. White Gaussian measurement noise
(numpy default_rng, seeded) is added.

Each log is then fitted by scipy.optimize.least_squares ("trf", bounds
theta >= 0, tau > 0, tolerances 1e-15) over (k, tau, theta, d, y0) with the
same simulator, minimising the output error: the reference for the
harness's Levenberg-Marquardt on the same data.

Writes harness/tests/data/fit/lag_NN.csv (12 logs, INVENTED data for the
test), shared/vectors/reference/fit_lag.csv (true and scipy values), and
the demo log set shared/logs/ (synthetic, says so in each file).
Run:  python3 -m venv /tmp/v && /tmp/v/bin/pip install scipy control
      /tmp/v/bin/python harness/tests/reference/fit_fixture.py
"""
import pathlib

import numpy as np
import scipy
from scipy.optimize import least_squares

ROOT = pathlib.Path(__file__).resolve().parents[3]


def simulate(k, tau, theta, d, y0, u, dt):
    """Exact ZOH response of the delayed lag, sample by sample."""
    n = len(u)
    whole = int(np.floor(theta / dt + 1e-12))
    frac = theta - whole * dt
    if frac > dt * (1 - 1e-12):
        whole, frac = whole + 1, 0.0

    def uu(j):
        return u[j] if j >= 0 else u[0]

    y = np.empty(n)
    x = y0
    y[0] = x
    for i in range(1, n):
        kk = i - 1  # interval [t_{i-1}, t_i] under the input held at i-1
        pieces = []
        if frac > 0:
            pieces.append((uu(kk - whole - 1), frac))
            pieces.append((uu(kk - whole), dt - frac))
        else:
            pieces.append((uu(kk - whole), dt))
        for ua, h in pieces:
            w = k * ua + d
            x = x + (w - x) * -np.expm1(-h / tau)
        y[i] = x
    return y


def steps(rng, n, lo, hi, hold):
    """A random staircase: a new level every `hold` samples (about)."""
    u = np.empty(n)
    level = lo
    i = 0
    while i < n:
        span = int(rng.integers(hold // 2, 2 * hold))
        u[i:i + span] = level
        level = rng.uniform(lo, hi)
        i += span
    u[:10] = lo
    return u


def fit(u, y, dt, start):
    def res(p):
        return simulate(p[0], p[1], p[2], p[3], p[4], u, dt) - y
    r = least_squares(res, start, method="trf",
                      bounds=([-np.inf, 1e-6, 0.0, -np.inf, -np.inf], [np.inf, np.inf, 50.0, np.inf, np.inf]),
                      xtol=1e-15, ftol=1e-15, gtol=1e-15, max_nfev=20000, diff_step=1e-7)
    return r.x


def write_log(path, t, u, y, header):
    with path.open("w") as fh:
        fh.write(header)
        fh.write("t_s,applied,measurement\n")
        for a, b, c in zip(t, u, y):
            fh.write(f"{float(a)!r},{float(b)!r},{float(c)!r}\n")


rng = np.random.default_rng(20261202)
dt, n, noise = 0.1, 400, 0.02
rows = []
for i in range(12):
    k = 2.5 * rng.uniform(0.8, 1.2)
    tau = 4.0 * rng.uniform(0.8, 1.2)
    theta = 0.73 * rng.uniform(0.8, 1.2)
    d = rng.uniform(-0.2, 0.2)
    y0 = k * 0.2 + d
    u = steps(rng, n, 0.2, 0.8, 60)
    t = np.arange(n) * dt
    y = simulate(k, tau, theta, d, y0, u, dt) + rng.normal(0.0, noise, n)
    name = f"lag_{i:02d}"
    write_log(ROOT / f"harness/tests/data/fit/{name}.csv", t, u, y,
              f"# INVENTED test data: a first-order lag with dead time, noise std {noise}, made by harness/tests/reference/fit_fixture.py\n")
    est = fit(u, y, dt, [2.0, 3.0, 0.5, 0.0, y[0]])
    rows.append((name, k, tau, theta, d, y0, *est))

out = ROOT / "shared/vectors/reference/fit_lag.csv"
with out.open("w") as fh:
    fh.write(f"# scipy {scipy.__version__}, numpy {np.__version__}; written by harness/tests/reference/fit_fixture.py\n")
    fh.write("log,true_gain,true_tau_s,true_dead_time_s,true_load,true_initial_output,"
             "scipy_gain,scipy_tau_s,scipy_dead_time_s,scipy_load,scipy_initial_output\n")
    for r in rows:
        fh.write(r[0] + "," + ",".join(repr(float(x)) for x in r[1:]) + "\n")

# Demo log set: a greenhouse heating-water mixing valve, step tests at three
# boiler supply temperatures (the gain changes). INVENTED, synthetic data.
for label, k in [("supply_60C", 18.0), ("supply_70C", 24.0), ("supply_80C", 30.0)]:
    dt_demo, n_demo = 1.0, 600
    tau, theta, d = 95.0, 12.5, 2.0
    u = np.full(n_demo, 0.3)
    u[60:] = 0.5
    u[330:] = 0.4
    t = np.arange(n_demo) * dt_demo
    y0 = k * 0.3 + d
    y = simulate(k, tau, theta, d, y0, u, dt_demo) + rng.normal(0.0, 0.05, n_demo)
    path = ROOT / f"shared/logs/mixing_valve_{label}.csv"
    write_log(path, t, u, y,
              "# SYNTHETIC demo log (invented, not measured): greenhouse heating loop, mixing-valve\n"
              f"# opening (0..1) against the heating-water temperature rise in K, boiler supply {label[7:]};\n"
              "# made by harness/tests/reference/fit_fixture.py. Fit with:\n"
              "#   evenkeel fit shared/logs/mixing_valve_*.csv --model first-order-lag --output-unit K\n")
print(out.read_text())
