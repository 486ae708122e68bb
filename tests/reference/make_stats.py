"""Reference values for fascicle's distribution functions, from scipy.stats.
Run: python3 tests/reference/make_stats.py  (writes tests/reference/stats.json)."""
import json, os
import scipy
from scipy import stats
out = {"scipy": scipy.__version__, "t_ppf": [], "t_cdf": [], "f_sf": [], "chi2_sf": [], "norm_ppf": []}
for df in [1, 2, 3, 5, 10, 20, 50, 200]:
    for p in [0.975, 0.95, 0.9, 0.6]:
        out["t_ppf"].append([p, df, float(stats.t.ppf(p, df))])
    for t in [-3.0, -0.5, 0.7, 2.5]:
        out["t_cdf"].append([t, df, float(stats.t.cdf(t, df))])
for d1, d2 in [(1, 10), (2, 20), (3, 7), (1, 100), (4, 40)]:
    for f in [0.5, 1.0, 3.0, 8.0]:
        out["f_sf"].append([f, d1, d2, float(stats.f.sf(f, d1, d2))])
for k in [1, 2, 5, 10]:
    for x in [0.5, 2.0, 7.0]:
        out["chi2_sf"].append([x, k, float(stats.chi2.sf(x, k))])
for p in [0.5, 0.8, 0.975, 0.999]:
    out["norm_ppf"].append([p, float(stats.norm.ppf(p))])
with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "stats.json"), "w") as f:
    json.dump(out, f, indent=0)
print("wrote stats.json")
