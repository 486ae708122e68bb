"""Reference fit for tests/measure/artifactShape.test.ts (run: python3 tests/measure/artifact_shape_scipy.py).

Four artifact-only stretches (sample units) of one shape, f(i) = exp(-(i - ref)/tau1) + rho exp(-(i - ref)/tau2),
each scaled by its own factor, with Gaussian noise (NumPy default_rng(7)); fitted by scipy.optimize.least_squares
(trust-region reflective, the per-stretch scales free parameters beside tau1, tau2, rho). Writes
artifact-shape-scipy.json beside this file.
"""
import json
import os

import numpy as np
import scipy
from scipy.optimize import least_squares

rng = np.random.default_rng(7)
ref = 100
tau1, tau2, rho = 2.0, 15.0, 0.08
stretches = []
for g, start, length in [(-9.0, 100, 14), (-5.4, 102, 12), (-7.2, 101, 10), (-3.0, 104, 16)]:
    i = np.arange(start, start + length)
    f = np.exp(-(i - ref) / tau1) + rho * np.exp(-(i - ref) / tau2)
    y = g * f + rng.normal(0, 0.005, size=length)
    stretches.append({"from": int(start), "y": y.tolist()})


def resid(p):
    t1, t2, r = p[:3]
    out = []
    for k, s in enumerate(stretches):
        i = np.arange(s["from"], s["from"] + len(s["y"]))
        f = np.exp(-(i - ref) / t1) + r * np.exp(-(i - ref) / t2)
        out.append(p[3 + k] * f - np.array(s["y"]))
    return np.concatenate(out)


p0 = [1.5, 10.0, 0.05] + [-5.0] * len(stretches)
fit = least_squares(resid, p0, xtol=1e-14, ftol=1e-14, gtol=1e-14)
res = {
    "source": "tests/measure/artifact_shape_scipy.py: scipy.optimize.least_squares (SciPy %s, NumPy %s)"
    % (scipy.__version__, np.__version__),
    "ref": ref,
    "stretches": stretches,
    "tau1": fit.x[0],
    "tau2": fit.x[1],
    "rho": fit.x[2],
    "scales": fit.x[3:].tolist(),
    "rss": float(np.sum(fit.fun**2)),
    "n": int(sum(len(s["y"]) for s in stretches)),
}
with open(os.path.join(os.path.dirname(__file__), "artifact-shape-scipy.json"), "w") as fh:
    json.dump(res, fh, indent=1)
print(res["tau1"], res["tau2"], res["rho"], res["scales"], res["rss"])
