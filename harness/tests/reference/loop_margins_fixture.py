#!/usr/bin/env python3
"""Reference margins and closed-loop step metrics of sampled PI loops, for
harness/tests/reference_margins.rs (evenkeel_harness::design::margins).

Each case: plant k/(tau s + 1) or k/s, optional actuator lag 1/(ta s + 1),
dead time D*Ts, discretised with a zero-order hold by python-control
(sample_system, method "zoh"); controller exactly as evenkeel computes it:
  u = Kp*(b*r - yf) + I,  I += Ki*Ts*(r - yf)   ->  C(z) = Kp + Ki*Ts/(z - 1)
  yf = yf + alpha*(y_meas - yf)                  ->  F(z) = alpha*z/(z - (1 - alpha))
  y_meas = y delayed by d samples               ->  z^-d
Loop L = C*F*z^-d*G; margins by control.stability_margins; setpoint step
response Y/R = (Kp*b + Ki*Ts/(z - 1))*G / (1 + L), metrics by
control.step_info (2 % settling, 10-90 % rise, final value 1) on the
sample grid (no interpolation between samples).

Writes shared/vectors/reference/loop_margins.csv (path relative to the repository root).
Run:  python3 -m venv /tmp/v && /tmp/v/bin/pip install scipy control
      /tmp/v/bin/python harness/tests/reference/loop_margins_fixture.py
"""
import pathlib

import control as ct
import numpy as np

# name, integrating, k, tau, actuator tau, D (dead-time samples), Ts, Kp, Ki, alpha, d (sensor delay), b
CASES = [
    ("lag_dead_time", False, 2.0, 1.5, 0.0, 4, 0.05, 0.6, 0.4, 1.0, 0, 1.0),
    ("integrator_filter_sensor_delay", True, 0.5, 0.0, 0.0, 0, 0.01, 1.2, 0.3, 0.01 / 0.06, 1, 1.0),
    ("lag_actuator_dead_time_weighted", False, 1.0, 3.0, 0.3, 3, 0.1, 2.0, 1.0, 1.0, 0, 0.5),
]


def delay(n, ts):
    return ct.tf([1.0], [1.0] + [0.0] * n, ts)


rows = []
for name, integ, k, tau, ta, D, ts, kp, ki, alpha, d, b in CASES:
    s = ct.tf("s")
    g = k / s if integ else k / (tau * s + 1)
    if ta > 0:
        g = g / (ta * s + 1)
    gd = ct.sample_system(g, ts, method="zoh") * delay(D, ts)
    z = ct.tf([1.0, 0.0], [1.0], ts)
    c = kp + ki * ts / (z - 1)
    f = alpha * z / (z - (1 - alpha))
    loop = c * f * delay(d, ts) * gd
    gm, pm, _sm, wpc, wgc, _wms = ct.stability_margins(loop)
    cr = kp * b + ki * ts / (z - 1)
    t_ry = cr * ct.feedback(gd, c * f * delay(d, ts))
    n = int(round(60.0 / ts))
    t = np.arange(n) * ts
    resp = ct.step_response(t_ry, T=t)
    info = ct.step_info(resp.outputs, T=resp.time, yfinal=1.0, SettlingTimeThreshold=0.02, RiseTimeLimits=(0.1, 0.9))
    rows.append((name, gm, pm, wpc, wgc, info["RiseTime"], info["SettlingTime"], info["Overshoot"]))

out = pathlib.Path(__file__).resolve().parents[3] / "shared/vectors/reference/loop_margins.csv"
with out.open("w") as fh:
    fh.write(f"# python-control {ct.__version__}, numpy {np.__version__}; written by harness/tests/reference/loop_margins_fixture.py\n")
    fh.write("case,gain_margin,phase_margin_deg,phase_crossover_rad_s,gain_crossover_rad_s,rise_time_s,settling_time_s,overshoot_pct\n")
    for r in rows:
        fh.write(r[0] + "," + ",".join(repr(float(x)) for x in r[1:]) + "\n")
print(out.read_text())
