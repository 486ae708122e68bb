"""Reference fixtures for fascicle's filters, computed with SciPy.

Run: python3 tests/reference/make_filters.py [--check]
Writes tests/reference/filters.json (or, with --check, compares with the committed
file and exits 1 when SciPy now gives different values). The inputs are made by a
fixed formula (no random generator) so they are identical everywhere.
"""
import json, math, sys, os
import numpy as np
import scipy
from scipy import signal

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "filters.json")

def test_signal(n):
    i = np.arange(n, dtype=float)
    return (np.sin(2 * np.pi * i / 37.0) + 0.5 * np.cos(2 * np.pi * i / 5.3) + 0.25 * np.sin(i * i / 91.0) + 0.01 * i).tolist()

cases = []
designs = [
    (4, [0.2], "lowpass"), (2, [0.5], "lowpass"), (1, [0.3], "lowpass"), (5, [0.1], "lowpass"),
    (8, [0.45], "lowpass"), (10, [0.05], "lowpass"),
    (3, [0.1], "highpass"), (4, [0.02], "highpass"), (1, [0.6], "highpass"),
    (2, [0.1, 0.4], "bandpass"), (3, [0.05, 0.3], "bandpass"), (4, [0.2, 0.25], "bandpass"),
    (2, [0.1, 0.4], "bandstop"), (3, [0.3, 0.5], "bandstop"),
]
x = test_signal(500)
for order, wn, btype in designs:
    sos = signal.butter(order, wn if len(wn) > 1 else wn[0], btype=btype, output="sos")
    y = signal.sosfiltfilt(sos, np.array(x))
    yc = signal.sosfilt(sos, np.array(x))
    cases.append({"order": order, "Wn": wn, "btype": btype, "sos": sos.tolist(),
                  "sosfiltfilt": y.tolist(), "sosfilt": yc.tolist()})
b, a = signal.iirnotch(50.0, 30.0, fs=1000.0)
notch = {"f0": 50.0, "Q": 30.0, "fs": 1000.0, "b": b.tolist(), "a": a.tolist(),
         "filtfilt": signal.filtfilt(b, a, np.array(x)).tolist()}
zi = signal.sosfilt_zi(signal.butter(4, 0.2, output="sos")).tolist()
# rational-rate resampling (scipy.signal.resample_poly, default Kaiser beta 5 FIR)
resample = []
for up, down, padtype in [(2, 5, "constant"), (5, 2, "constant"), (1, 3, "constant"), (3, 1, "constant"),
                          (2, 5, "mean"), (2, 5, "median"), (160, 147, "constant"), (7, 11, "mean")]:
    y = signal.resample_poly(np.array(x), up, down, padtype=padtype)
    resample.append({"up": up, "down": down, "padtype": padtype, "y": y.tolist()})
fir = {"numtaps": 41, "cutoff": 0.3, "beta": 5.0,
       "h": signal.firwin(41, 0.3, window=("kaiser", 5.0)).tolist(),
       "kaiser_15_8.6": signal.get_window(("kaiser", 8.6), 15, fftbins=False).tolist()}
ref = {"generator": "tests/reference/make_filters.py", "scipy": scipy.__version__, "numpy": np.__version__,
       "input": x, "cases": cases, "notch": notch, "sosfilt_zi_butter4_0.2": zi,
       "resample_poly": resample, "firwin_kaiser": fir}

def close(a, b, rtol=1e-12, atol=1e-14):
    if isinstance(a, list):
        return isinstance(b, list) and len(a) == len(b) and all(close(p, q, rtol, atol) for p, q in zip(a, b))
    if isinstance(a, dict):
        return isinstance(b, dict) and set(a) == set(b) and all(close(a[k], b[k], rtol, atol) for k in a if k not in ("scipy", "numpy"))
    if isinstance(a, (int, float)) and isinstance(b, (int, float)):
        return abs(a - b) <= atol + rtol * abs(b)
    return a == b

if "--check" in sys.argv:
    with open(OUT) as f:
        old = json.load(f)
    if not close(ref, old):
        print("filters.json no longer matches what SciPy %s gives; rerun tests/reference/make_filters.py" % scipy.__version__)
        sys.exit(1)
    print("filters.json matches SciPy %s" % scipy.__version__)
else:
    with open(OUT, "w") as f:
        json.dump(ref, f)
    print("wrote", OUT)
