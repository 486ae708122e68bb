"""Reference solutions of non-negative least squares from scipy.optimize.nnls
(SciPy's Lawson-Hanson NNLS, Lawson & Hanson 1974). Problems: the SciPy documentation
example, random well-posed problems (over- and under-determined), a rank-deficient one
(duplicated and dependent columns), an ill-conditioned one (Hilbert-like columns), one
whose solution is all zero, and a Tikhonov-augmented deconvolution.
Run: python3 tests/reference/make_nnls.py  (writes tests/reference/nnls.json)."""
import json, os
import numpy as np
import scipy
from scipy.optimize import nnls

rng = np.random.default_rng(20260412)
problems = []

def add(name, A, b, unique):
    A = np.asarray(A, dtype=float); b = np.asarray(b, dtype=float)
    x, rnorm = nnls(A, b, maxiter=50 * A.shape[1])
    problems.append({"name": name, "m": A.shape[0], "n": A.shape[1], "A": A.ravel().tolist(), "b": b.tolist(),
                     "x": x.tolist(), "rnorm": float(rnorm), "unique": unique,
                     "rank": int(np.linalg.matrix_rank(A)), "cond": float(np.linalg.cond(A))})

add("scipy-doc", [[1, 0], [1, 0], [0, 1]], [2, 1, 1], True)
for k, (m, n) in enumerate([(20, 5), (40, 12), (15, 15), (60, 30)]):
    A = rng.normal(size=(m, n)); b = rng.normal(size=m)
    add(f"random-{m}x{n}", A, b, True)
A = rng.normal(size=(8, 20)); b = rng.normal(size=8)
add("underdetermined-8x20", A, b, False)
A = rng.normal(size=(30, 6)); A = np.hstack([A, A[:, :2], A[:, 2:3] + A[:, 3:4]]); b = rng.normal(size=30)
add("rank-deficient-30x9", A, b, False)
t = np.linspace(0, 1, 40); A = np.array([t ** k for k in range(10)]).T; b = np.exp(-3 * t) * np.cos(4 * t) + 0.1
add("ill-conditioned-polynomial-40x10", A, b, True)
A = np.abs(rng.normal(size=(25, 7))); b = -np.abs(rng.normal(size=25))
add("all-zero-solution", A, b, True)
# deconvolution: Gaussian blur of a non-negative two-peak signal, with a second-difference penalty
n = 40; g = np.exp(-0.5 * (np.arange(-8, 9) / 3.0) ** 2)
K = np.zeros((n + 16, n))
for j in range(n): K[j:j + 17, j] = g
xt = np.exp(-0.5 * ((np.arange(n) - 12) / 3) ** 2) + 0.5 * np.exp(-0.5 * ((np.arange(n) - 28) / 2) ** 2)
b = K @ xt + 0.01 * rng.normal(size=n + 16)
D2 = np.diff(np.eye(n), 2, axis=0)
add("tikhonov-deconvolution-94x40", np.vstack([K, np.sqrt(0.1) * D2]), np.concatenate([b, np.zeros(n - 2)]), True)

out = {"scipy": scipy.__version__, "numpy": np.__version__, "function": "scipy.optimize.nnls(A, b, maxiter=50 n)", "problems": problems}
with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "nnls.json"), "w") as f:
    json.dump(out, f)
print("wrote nnls.json:", ", ".join(f"{p['name']} (rank {p['rank']}, cond {p['cond']:.3g})" for p in problems))
