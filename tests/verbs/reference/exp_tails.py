"""Reference for tests/verbs/artifactTails.test.ts: a two-exponential artifact tail plus a constant fitted
by SciPy's curve_fit (Levenberg-Marquardt, independent of fascicle's variable projection). Invented test
data, the same formula as the test: 50 kHz, tail window 0.3..6 ms after the stimulus, fast decay -2 mV at
0.3 ms, slow tail +0.1 mV at 3 ms (both at the window start), offset 5 uV, deterministic scatter of 10 uV.
Run: python3 tests/verbs/reference/exp_tails.py"""
import numpy as np
from scipy.optimize import curve_fit

fs = 50000.0
k = np.arange(int(round(5.7e-3 * fs)) + 1)
t = k * 1000.0 / fs  # ms from the window start
i = k + 15  # sample index from the stimulus (0.3 ms = 15 samples)
y = -2e-3 * np.exp(-t / 0.3) + 1e-4 * np.exp(-t / 3.0) + 5e-6 + 1e-5 * np.sin(i * 12.9898) * np.cos(i * 4.1414)


def model(t, a1, l1, a2, l2, c):
    return a1 * np.exp(-t / np.exp(l1)) + a2 * np.exp(-t / np.exp(l2)) + c


p, _ = curve_fit(model, t, y, p0=[-1e-3, np.log(0.2), 5e-5, np.log(2.0), 0.0], maxfev=20000)
r = y - model(t, *p)
print("A1 %.10e tau1 %.10f A2 %.10e tau2 %.10f c %.10e rss %.10e" % (p[0], np.exp(p[1]), p[2], np.exp(p[3]), p[4], r @ r))
