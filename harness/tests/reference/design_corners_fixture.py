#!/usr/bin/env python3
"""Reference margins, peak sensitivity Ms and peak complementary
sensitivity Mt at every linearised corner of the rail-shuttle test
scenario (harness/tests/data/design/shuttle.toml) under fixed PI settings,
for harness/tests/reference_design_corners.rs (evenkeel design's
per-corner table).

Source: python-control (control.stability_margins for GM, PM and the
stability margin sm = min |1 + L|, so Ms = 1/sm; control.frequency_response
of T = L/(1 + L) on a dense grid for Mt), the plant discretised with a
zero-order hold by control.sample_system(..., "zoh").

The corners: mass 300 / 900 kg x drive force 1275 / 1725 N, each at the
reference extremes 0 and 3 m/s (the harness linearises the vehicle there:
m dv/dt = c u - rho CdA |v0| dv; an integrator c/m at standstill).
Loop: actuator lag 1/(0.04 s + 1), one sample of sensor delay, the
measurement filter alpha z/(z - (1 - alpha)) with alpha = Ts/(Tf + Ts), and
C(z) = Kp + Ki Ts/(z - 1), as evenkeel computes them.

Writes shared/vectors/reference/design_corners.csv (relative to the repository root).
Run:  python3 -m venv /tmp/v && /tmp/v/bin/pip install scipy control
      /tmp/v/bin/python harness/tests/reference/design_corners_fixture.py
"""
import itertools
import pathlib

import control as ct
import numpy as np

TS, KP, KI, TF = 0.01, 1.3, 0.6, 0.05
ALPHA = TS / (TF + TS)
RHO, CDA, ACT_TAU = 1.225, 0.8, 0.04

rows = []
s = ct.tf("s")
z = ct.tf([1.0, 0.0], [1.0], TS)
c = KP + KI * TS / (z - 1)
f = ALPHA * z / (z - (1 - ALPHA))
d = ct.tf([1.0], [1.0, 0.0], TS)  # one sample of sensor delay
for mass, force, v0 in itertools.product([300.0, 900.0], [1275.0, 1725.0], [0.0, 3.0]):
    damping = RHO * CDA * abs(v0)
    g = force / (mass * s) if damping == 0 else (force / damping) / ((mass / damping) * s + 1)
    g = g / (ACT_TAU * s + 1)
    gd = ct.sample_system(g, TS, method="zoh")
    loop = c * f * d * gd
    gm, pm, sm, _wpc, wgc, _wms = ct.stability_margins(loop)
    w = np.logspace(np.log10(np.pi / TS * 1e-5), np.log10(np.pi / TS * (1 - 1e-9)), 20000)
    t = ct.feedback(loop, 1)
    mt = float(np.max(np.abs(ct.frequency_response(t, w).complex)))
    rows.append((mass, force, v0, gm, pm, wgc, 1.0 / sm, mt))

out = pathlib.Path(__file__).resolve().parents[3] / "shared/vectors/reference/design_corners.csv"
with out.open("w") as fh:
    fh.write(f"# python-control {ct.__version__}, numpy {np.__version__}; written by harness/tests/reference/design_corners_fixture.py\n")
    fh.write("mass_kg,actuator_gain_n,y0,gain_margin,phase_margin_deg,gain_crossover_rad_s,ms,mt\n")
    for r in rows:
        fh.write(",".join(repr(float(x)) for x in r) + "\n")
print(out.read_text())
