"""Reference values for fascicle's group statistics (src/analysis/groups.ts, src/analysis/mixed.ts).

Run: python3 tests/reference/make_groups.py   (writes tests/reference/groups.json)
Inputs are invented numbers drawn with fixed seeds and stored in the JSON, so both sides use the same data.
- Welch t: scipy.stats.ttest_ind(equal_var=False) (statistic, df, pvalue, confidence_interval(0.95)).
- Mann-Whitney U: scipy.stats.mannwhitneyu (method 'auto': exact or normal approximation with tie and
  continuity correction).
- One-way ANOVA: scipy.stats.f_oneway. Paired t: scipy.stats.ttest_rel.
- Repeated-measures ANOVA: textbook sums of squares in NumPy (SciPy has none); F distribution from scipy.stats.f;
  Greenhouse-Geisser epsilon from the double-centred covariance (Greenhouse & Geisser 1959).
- Benjamini-Hochberg: scipy.stats.false_discovery_control(method='bh'). Holm: the step-down definition
  (Holm 1979) in NumPy (SciPy has none).
- Mixed model: an independent dense implementation (full N x N matrices) of the random-intercept REML fit,
  optimised with scipy.optimize (bounded Brent, then brentq on the derivative), Satterthwaite df from the
  expected REML information, Fai-Cornelius df for multi-df terms. Balanced cases are checked in the test
  against the closed-form ANOVA results instead.
"""
import json, os
import numpy as np
import scipy
from scipy import stats, optimize

out = {"scipy": scipy.__version__, "numpy": np.__version__}
rng = np.random.default_rng(20261202)
r = lambda x: [float(v) for v in x]

# Welch t
welch = []
for n1, n2, d, s2 in [(4, 5, 1.0, 2.0), (6, 6, 0.3, 1.0), (3, 9, -2.0, 0.5), (12, 7, 0.1, 3.0), (2, 2, 1.0, 1.0)]:
    a = np.round(rng.normal(10, 1, n1), 4)
    b = np.round(rng.normal(10 + d, s2, n2), 4)
    res = stats.ttest_ind(a, b, equal_var=False)
    ci = res.confidence_interval(0.95)
    welch.append({"a": r(a), "b": r(b), "t": float(res.statistic), "df": float(res.df), "p": float(res.pvalue),
                  "ci": [float(ci.low), float(ci.high)]})
res = stats.ttest_ind([1, 2, 3, 4], [2, 4, 6, 8, 10], equal_var=False)  # the doc example of welchTTest
welch.append({"a": [1, 2, 3, 4], "b": [2, 4, 6, 8, 10], "t": float(res.statistic), "df": float(res.df),
              "p": float(res.pvalue), "ci": r(res.confidence_interval(0.95))})
out["welch"] = welch

# Mann-Whitney U
mwu = []
cases = [
    (np.round(rng.normal(0, 1, 5), 3), np.round(rng.normal(1, 1, 7), 3)),
    (np.array([1.0, 2.0, 3.0]), np.array([4.0, 5.0, 6.0, 7.0])),
    (np.round(rng.normal(0, 1, 8), 3), np.round(rng.normal(0.8, 1, 12), 3)),
    (np.round(rng.normal(0, 1, 12), 3), np.round(rng.normal(0.5, 1, 15), 3)),
    (np.array([1, 2, 2, 3, 4, 4.0]), np.array([2, 3, 5, 5, 6, 7, 8.0])),
    (np.round(rng.normal(0, 1, 20), 1), np.round(rng.normal(0.7, 1, 18), 1)),
    (np.round(rng.normal(0, 1, 2), 3), np.round(rng.normal(0, 1, 3), 3)),
]
for a, b in cases:
    res = stats.mannwhitneyu(a, b)
    ties = len(np.unique(np.concatenate([a, b]))) < len(a) + len(b)
    method = "exact" if (not (len(a) > 8 and len(b) > 8)) and not ties else "normal approximation"
    mwu.append({"a": r(a), "b": r(b), "U": float(res.statistic), "p": float(res.pvalue), "method": method})
out["mannwhitney"] = mwu

# one-way ANOVA
anova = []
for sizes, shifts in [((5, 5, 5), (0, 0.5, 1.5)), ((3, 6, 4, 5), (0, 1, 0.2, -0.5)), ((2, 2), (0, 3))]:
    gs = [np.round(rng.normal(s, 1, n), 4) for n, s in zip(sizes, shifts)]
    res = stats.f_oneway(*gs)
    anova.append({"groups": [r(g) for g in gs], "F": float(res.statistic), "p": float(res.pvalue),
                  "df1": len(gs) - 1, "df2": int(sum(sizes) - len(gs))})
out["oneway"] = anova

# repeated-measures ANOVA and paired t
def rm_anova(Y):
    s, k = Y.shape
    g = Y.mean()
    ssc = s * ((Y.mean(0) - g) ** 2).sum()
    sss = k * ((Y.mean(1) - g) ** 2).sum()
    sse = ((Y - g) ** 2).sum() - ssc - sss
    df1, df2 = k - 1, (k - 1) * (s - 1)
    F = (ssc / df1) / (sse / df2)
    S = np.cov(Y, rowvar=False)
    C = np.eye(k) - np.ones((k, k)) / k
    D = C @ S @ C
    eps = min(1.0, np.trace(D) ** 2 / ((k - 1) * np.trace(D @ D)))
    return {"F": float(F), "df1": df1, "df2": df2, "p": float(stats.f.sf(F, df1, df2)), "eps": float(eps),
            "pGG": float(stats.f.sf(F, eps * df1, eps * df2))}

rm = []
for s, k in [(8, 3), (6, 4), (5, 2)]:
    Y = np.round(rng.normal(0, 1, (s, 1)) + rng.normal(0, 0.5, (s, k)) + np.linspace(0, 0.6, k), 4)
    e = {"y": [r(row) for row in Y], **rm_anova(Y)}
    if k == 2:
        tr = stats.ttest_rel(Y[:, 1], Y[:, 0])
        e["paired_t"] = float(tr.statistic)
        e["paired_p"] = float(tr.pvalue)
    rm.append(e)
out["rm"] = rm

# multiplicity
p = np.array([0.01, 0.04, 0.03, 0.005, 0.2, 0.04, 0.5, 0.0001, 0.9, 0.025])
order = np.argsort(p, kind="stable")
m = len(p)
adj = np.minimum(1, np.maximum.accumulate((m - np.arange(m)) * p[order]))
holm = np.empty(m)
holm[order] = adj
out["multiplicity"] = {"p": r(p), "holm": r(holm), "bh": r(stats.false_discovery_control(p, method="bh"))}

# mixed model, dense implementation
def design(rows, factors, levels, interaction, coding):
    cols, names, terms = [np.ones(len(rows))], ["(Intercept)"], []
    codes = []
    for f in factors:
        lv = levels[f]
        idx = np.array([lv.index(row[f]) for row in rows])
        if coding == "treatment":
            c = np.stack([(idx == j + 1).astype(float) for j in range(len(lv) - 1)], 1)
        else:
            c = np.stack([(idx == j).astype(float) - (idx == len(lv) - 1).astype(float) for j in range(len(lv) - 1)], 1)
        codes.append(c)
        terms.append((f, list(range(len(cols), len(cols) + c.shape[1]))))
        for j in range(c.shape[1]):
            cols.append(c[:, j])
            names.append(f"{f}: {lv[j + 1]} vs {lv[0]}" if coding == "treatment" else f"{f}[{lv[j]}]")
    if interaction:
        a, b = factors
        ix = []
        for i in range(codes[0].shape[1]):
            for j in range(codes[1].shape[1]):
                ix.append(len(cols))
                cols.append(codes[0][:, i] * codes[1][:, j])
                names.append(f"{a}: {levels[a][i + 1]} x {b}: {levels[b][j + 1]}" if coding == "treatment" else "")
        terms.append((f"{a} x {b}", ix))
    return np.stack(cols, 1), names, terms

def reml_fit(y, X, g):
    N, p = X.shape
    labels = sorted(set(g))
    Z = np.stack([(np.array(g) == l).astype(float) for l in labels], 1)
    ZZ = Z @ Z.T
    def parts(theta):
        H = np.eye(N) + theta * ZZ
        Hi = np.linalg.inv(H)
        A = X.T @ Hi @ X
        Ai = np.linalg.inv(A)
        beta = Ai @ X.T @ Hi @ y
        res = y - X @ beta
        q = res @ Hi @ res
        dev = ((N - p) * np.log(q / (N - p)) + np.linalg.slogdet(H)[1] + np.linalg.slogdet(A)[1]
               + (N - p) * (1 + np.log(2 * np.pi)))
        HZ = Hi @ ZZ @ Hi
        slope = -(N - p) * (res @ HZ @ res) / q + np.trace(Hi @ ZZ) - np.trace(Ai @ X.T @ HZ @ X)
        return dev, slope, beta, q / (N - p)
    f = lambda rho: parts(rho / (1 - rho))[0]
    o = optimize.minimize_scalar(f, bounds=(0, 1 - 1e-9), method="bounded", options={"xatol": 1e-13})
    rho = o.x
    dslope = lambda rho: parts(rho / (1 - rho))[1]
    lo, hi = max(0.0, rho * 0.9), min(1 - 1e-9, rho * 1.1 + 1e-12)
    if dslope(lo) < 0 < dslope(hi):
        rho = optimize.brentq(dslope, lo, hi, xtol=1e-17, rtol=1e-15)
    theta = rho / (1 - rho)
    dev, _, beta, se = parts(theta)
    su = theta * se
    V = se * np.eye(N) + su * ZZ
    W = np.linalg.inv(V)
    M = np.linalg.inv(X.T @ W @ X)
    P = W - W @ X @ M @ X.T @ W
    Vk = [ZZ, np.eye(N)]
    info = np.array([[0.5 * np.trace(P @ a @ P @ b) for b in Vk] for a in Vk])
    Acov = np.linalg.inv(info)
    dM = [M @ X.T @ W @ a @ W @ X @ M for a in Vk]
    return {"beta": beta, "M": M, "su": su, "se": se, "dev": dev, "A": Acov, "dM": dM}

def satt(fit, l):
    v = l @ fit["M"] @ l
    gr = np.array([l @ d @ l for d in fit["dM"]])
    return 2 * v * v / (gr @ fit["A"] @ gr)

def fterm(fit, L):
    q = L.shape[0]
    LML = L @ fit["M"] @ L.T
    d, U = np.linalg.eigh(LML)
    Lb = L @ fit["beta"]
    F = sum((U[:, m] @ Lb) ** 2 / d[m] for m in range(q)) / q
    nu = np.array([satt(fit, U[:, m] @ L) for m in range(q)])
    if q == 1 or np.all(np.abs(nu - nu[0]) < 1e-8 * abs(nu[0])):
        ddf = float(nu.mean())
    elif np.any(nu <= 2):
        ddf = 2.0
    else:
        E = np.sum(nu / (nu - 2))
        ddf = 2 * E / (E - q) if E > q else 2.0
    return float(F), q, ddf, float(stats.f.sf(F, q, ddf))

mixed = []
# unbalanced: 2 groups x 5 animals, 3 conditions within animal, 1-4 sweeps per cell, some cells missing
rows = []
for gi, grp in enumerate(["control", "treated"]):
    for a in range(5):
        animal = f"{grp[0].upper()}{a + 1}"
        u = rng.normal(0, 0.8)
        for ci, cond in enumerate(["pre", "drug", "wash"]):
            if (a + ci) % 7 == 6:
                continue
            for k in range(int(rng.integers(1, 5))):
                y = 5 + u + 0.4 * gi + [0, -1.0, -0.3][ci] * (1 + 0.5 * gi) + rng.normal(0, 0.5)
                rows.append({"group": grp, "animal": animal, "condition": cond, "value": round(float(y), 4)})
for interaction in [False, True]:
    factors = ["group", "condition"]
    levels = {"group": ["control", "treated"], "condition": ["pre", "drug", "wash"]}
    y = np.array([row["value"] for row in rows])
    g = [row["animal"] for row in rows]
    Xt, names, _ = design(rows, factors, levels, interaction, "treatment")
    ft = reml_fit(y, Xt, g)
    coefs = []
    for j, nm in enumerate(names):
        l = np.zeros(len(names)); l[j] = 1
        se = float(np.sqrt(ft["M"][j, j])); df = float(satt(ft, l)); t = float(ft["beta"][j] / se)
        coefs.append({"term": nm, "estimate": float(ft["beta"][j]), "se": se, "df": df, "t": t,
                      "p": float(2 * stats.t.sf(abs(t), df))})
    Xs, _, terms = design(rows, factors, levels, interaction, "sum")
    fs = reml_fit(y, Xs, g)
    an = []
    for name, ix in terms:
        L = np.zeros((len(ix), Xs.shape[1]))
        for k, c in enumerate(ix):
            L[k, c] = 1
        F, q, ddf, pv = fterm(fs, L)
        an.append({"term": name, "F": F, "num_df": q, "den_df": ddf, "p": pv})
    mixed.append({"interaction": interaction, "sigma_u2": float(ft["su"]), "sigma_e2": float(ft["se"]),
                  "reml_deviance": float(ft["dev"]), "coefficients": coefs, "anova": an})
out["mixed"] = {"rows": rows, "fits": mixed}

path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "groups.json")
with open(path, "w") as fh:
    json.dump(out, fh, indent=0)
print("wrote", path)
