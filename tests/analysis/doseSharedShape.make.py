"""Reference values for tests/analysis/doseSharedShape.test.ts (NumPy SVD).

Run: python3 tests/analysis/doseSharedShape.make.py > tests/analysis/doseSharedShape.fixture.json
Traces: one waveform (a gamma-like bump) times Hill-curve amplitudes, plus an offset and a slope per trace and
seeded Gaussian noise. Reference: the leading singular pair of the traces after the offset and slope are
projected out (numpy.linalg.svd), scores normalised by the first trace's score (the reference).
"""
import json
import numpy as np

rng = np.random.default_rng(20261202)
m = 80
t = np.arange(m) / m
shape = (t / 0.3) ** 3 * np.exp(-3 * (t / 0.3 - 1))
conc = np.array([0, 3, 8, 21, 58, 155, 417])
amp = 1 / (1 + (conc / 40.0) ** 1.6)
u = (np.arange(m) - (m - 1) / 2) / (m - 1)
Y = []
for a in amp:
    y = a * shape + rng.normal(0, 0.4) + rng.normal(0, 0.3) * u + rng.normal(0, 0.05, m)
    Y.append(y)
Y = np.array(Y)
N = np.vstack([np.ones(m), u]).T
P = np.eye(m) - N @ np.linalg.pinv(N)
R = Y @ P
U, S, Vt = np.linalg.svd(R, full_matrices=False)
scores = U[:, 0] * S[0]
if scores[0] < 0:
    scores = -scores
print(
    json.dumps(
        {
            "source": "numpy.linalg.svd (NumPy " + np.__version__ + "), tests/analysis/doseSharedShape.make.py",
            "traces": Y.tolist(),
            "u": u.tolist(),
            "scores": scores.tolist(),
            "explained": float(S[0] ** 2 / np.sum(S**2)),
        }
    )
)
