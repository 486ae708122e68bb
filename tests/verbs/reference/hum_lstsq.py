"""Reference for tests/verbs/humDrift.test.ts: the joint least-squares fit of mains hum and a slow drift
by NumPy's np.linalg.lstsq (independent of fascicle's solver). Invented test data, the same formula as the
test: 20 kHz, -10..140 ms, 60 Hz (12 uV) + 180 Hz (4 uV) hum, drift 40 uV offset + 30 uV at 0.7 Hz,
deterministic scatter; fitted outside 0..90 ms; design = Legendre P0..P2 over the sweep + cos/sin at
60, 120, 180 Hz. Prints the coefficients and the fitted hum at a few samples.
Run: python3 tests/verbs/reference/hum_lstsq.py"""
import numpy as np

fs, t0, n = 20000.0, -10.0, 3001
i = np.arange(n)
t = t0 + i * 1000.0 / fs  # ms
x = (
    40e-6
    + 30e-6 * np.sin(2 * np.pi * 0.7 * t / 1000 + 0.4)
    + 12e-6 * np.sin(2 * np.pi * 60 * t / 1000 + 1.1)
    + 4e-6 * np.sin(2 * np.pi * 180 * t / 1000 + 2.3)
    + 8e-6 * np.sin(i * 12.9898 + 0.5) * np.cos(i * 4.1414)
    + np.where(t > 0, 200e-6 * np.exp(-np.maximum(t, 0) / 20) * np.sin(np.maximum(t, 0) / 6), 0)
)
fit = ~((t >= 0) & (t <= 90))
u = 2 * (t - t[0]) / (t[-1] - t[0]) - 1
P = np.polynomial.legendre.legvander(u, 2)
S = np.column_stack([f(2 * np.pi * h * 60 * t / 1000) for h in (1, 2, 3) for f in (np.cos, np.sin)])
A = np.column_stack([P, S])
coef, *_ = np.linalg.lstsq(A[fit], x[fit], rcond=None)
hum = S @ coef[3:]
print("coef (cos, sin at 60, 120, 180 Hz), V:", [float(f"{c:.12e}") for c in coef[3:]])
for k in (0, 200, 600, 1000, 1800, 2500, 3000):
    print(f"sample {k}: hum {hum[k]:.12e}")
# the same without the drift (constant only): what the fit without drift terms subtracts
A0 = np.column_stack([np.ones(n), S])
c0, *_ = np.linalg.lstsq(A0[fit], x[fit], rcond=None)
true = 12e-6 * np.sin(2 * np.pi * 60 * t / 1000 + 1.1) + 4e-6 * np.sin(2 * np.pi * 180 * t / 1000 + 2.3)
w = (t >= 5) & (t <= 80)
print("rms error of the subtracted hum over 5..80 ms, drift order 2:", np.sqrt(np.mean((hum - true)[w] ** 2)))
print("rms error of the subtracted hum over 5..80 ms, constant only:", np.sqrt(np.mean((S @ c0[1:] - true)[w] ** 2)))
