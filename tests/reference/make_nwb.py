"""NWB 2.7.0 fixtures written with h5py, independently of fascicle, following the NWB core schema
2.7.0 and hdmf-common 1.8.0 (../shared/nwb-schema: nwb.file.yaml, nwb.base.yaml, nwb.ecephys.yaml,
nwb.epoch.yaml, table.yaml). Each file has the required root datasets and groups, neurodata_type /
namespace / object_id attributes on every typed object, and the required attributes of each type.

Run: /usr/bin/python3 tests/reference/make_nwb.py   (Debian's python3-h5py and NumPy)
Writes tests/fixtures/nwb/*.nwb, not_nwb.h5 and expected.json (the values fascicle must read back,
computed here with NumPy from the same arrays that were written).

The recordings are invented (a synthetic compound-action-potential-like wave plus noise); the lab,
people and subject are invented too.
"""
import json
import os
import uuid

import h5py
import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
OUT = os.path.join(HERE, "..", "fixtures", "nwb")
RNG = np.random.default_rng(20260)
STR = h5py.string_dtype("utf-8")
REF = h5py.ref_dtype


def oid():
    return str(uuid.UUID(int=int(RNG.integers(0, 2**63)) << 64 | int(RNG.integers(0, 2**63)), version=4))


def typed(obj, ntype, ns="core"):
    obj.attrs["namespace"] = ns
    obj.attrs["neurodata_type"] = ntype
    obj.attrs["object_id"] = oid()
    return obj


def text(group, name, value):
    if isinstance(value, (list, tuple)):
        return group.create_dataset(name, data=np.array(value, dtype=object), dtype=STR)
    return group.create_dataset(name, data=value, dtype=STR)


def nwb_root(path, description, start="2026-03-14T09:30:00+01:00"):
    f = h5py.File(path, "w")
    f.attrs["namespace"] = "core"
    f.attrs["neurodata_type"] = "NWBFile"
    f.attrs["nwb_version"] = "2.7.0"
    f.attrs["object_id"] = oid()
    text(f, "file_create_date", ["2026-03-14T12:00:00+01:00"])
    text(f, "identifier", oid())
    text(f, "session_description", description)
    text(f, "session_start_time", start)
    text(f, "timestamps_reference_time", start)
    for g in ["acquisition", "analysis", "processing", "stimulus/presentation", "stimulus/templates", "general"]:
        f.create_group(g)
    return f


def vector(table, name, data, description, dtype=None, ntype="VectorData"):
    arr = np.asarray(data, dtype=object) if dtype is STR else np.asarray(data, dtype=dtype)
    d = table.create_dataset(name, data=arr, dtype=dtype)
    typed(d, ntype, "hdmf-common")
    d.attrs["description"] = description
    return d


def dynamic_table(group, ntype, ns, description, n, columns):
    """columns: list of (name, data, description, dtype, extra attrs)."""
    typed(group, ntype, ns)
    group.attrs["description"] = description
    group.attrs["colnames"] = np.array([c[0] for c in columns if not c[0].endswith("_index")], dtype=object)
    ids = group.create_dataset("id", data=np.arange(n, dtype=np.int64))
    typed(ids, "ElementIdentifiers", "hdmf-common")
    out = {}
    for name, data, desc, dtype, extra in columns:
        out[name] = vector(group, name, data, desc, dtype)
        for k, v in (extra or {}).items():
            out[name].attrs[k] = v
    return out


def metadata(f):
    g = f["general"]
    text(g, "lab", "Example Nerve Lab")
    text(g, "institution", "Example Institute of Physiology")
    text(g, "experimenter", ["Doe, Jane"])
    text(g, "experiment_description", "Evoked compound action potentials of an isolated nerve (invented data)")
    text(g, "session_id", "S-042")
    s = typed(g.create_group("subject"), "Subject")
    text(s, "subject_id", "R7")
    text(s, "species", "Rattus norvegicus")
    text(s, "sex", "F")
    text(s, "age", "P60D")


def r12(rows):
    """Rows of numbers to 12 significant digits (the tests compare to 1e-9 relative)."""
    return [[float(f"{x:.12g}") for x in r] for r in rows]


def cap(t_ms, amp, lat_ms, width_ms):
    """A biphasic wave: derivative-of-Gaussian shape at latency lat_ms (ms)."""
    u = (t_ms - lat_ms) / width_ms
    return amp * -u * np.exp(-0.5 * u * u)


def continuous(expected):
    """An ElectricalSeries of 3 channels (int16 counts, gzip chunks, conversion, offset and
    channel_conversion), starting_time + rate, a trials table with stimulus times and conditions,
    electrodes with a distance column, a subject and lab metadata."""
    fs, t_start, n = 10000.0, 2.0, 15000
    conversion, offset, resolution = 5e-7, -1e-4, 5e-7  # V per count, V, V
    chconv = np.array([1.0, 2.0, 0.5])
    stim = 2.05 + 0.1 * np.arange(12)
    stim[3] += 0.00003  # 0.3 sample off the grid: the nearest sample is used
    t = t_start + np.arange(n) / fs
    dist_mm = np.array([12.0, 24.5, 36.0])
    counts = np.zeros((n, 3))
    intensity = np.array([0.1, 0.2, 0.3, 0.4, 0.6, 0.8, 1.0, 1.2, 1.5, 2.0, 2.0, 2.0])
    for ch in range(3):
        sig = np.zeros(n)
        for k, s in enumerate(stim):
            rel = (t - s) * 1000
            m = (rel > -1) & (rel < 40)
            sig[m] += cap(rel[m], 400 * min(1, intensity[k]) * (1 + 0.3 * ch), dist_mm[ch] / 50.0 + 0.4, 0.35)
        counts[:, ch] = sig / chconv[ch] + 30 * (ch + 1) + RNG.normal(0, 3, n)
    data = np.round(counts).astype(np.int16)
    f = nwb_root(os.path.join(OUT, "continuous.nwb"), "Recruitment series, three recording electrodes")
    metadata(f)
    g = f["general"]
    dev = typed(g.create_group("devices/amplifier"), "Device")
    dev.attrs["description"] = "invented differential amplifier"
    ee = g.create_group("extracellular_ephys")
    grp = typed(ee.create_group("nerve_hooks"), "ElectrodeGroup")
    grp.attrs["description"] = "hook electrodes along the nerve"
    grp.attrs["location"] = "sciatic nerve"
    grp["device"] = h5py.SoftLink("/general/devices/amplifier")
    el = ee.create_group("electrodes")
    locations = ["sciatic nerve, proximal", "sciatic nerve, middle", "tibial nerve, distal"]
    dynamic_table(el, "DynamicTable", "hdmf-common", "recording electrodes", 3, [
        ("location", locations, "where the electrode is", STR, None),
        ("group", [grp.ref] * 3, "electrode group", REF, None),
        ("group_name", ["nerve_hooks"] * 3, "electrode group name", STR, None),
        ("distance_mm", dist_mm, "conduction distance from the stimulating cathode, mm", "f8", None),
        ("imp", np.array([1.1e4, 1.3e4, 1.2e4], dtype="f4"), "impedance, ohms", "f4", None),
    ])
    es = typed(f["acquisition"].create_group("nerve"), "ElectricalSeries")
    es.attrs["description"] = "raw hook-electrode recording"
    es.attrs["comments"] = "no comments"
    es.attrs["filtering"] = "10 Hz - 5 kHz analogue band-pass"
    d = es.create_dataset("data", data=data, chunks=(1000, 3), compression="gzip")
    d.attrs["unit"] = "volts"
    d.attrs["conversion"] = np.float32(conversion)
    d.attrs["offset"] = np.float32(offset)
    d.attrs["resolution"] = np.float32(resolution)
    st = es.create_dataset("starting_time", data=t_start)
    st.attrs["rate"] = np.float32(fs)
    st.attrs["unit"] = "seconds"
    cc = es.create_dataset("channel_conversion", data=chconv.astype("f4"))
    cc.attrs["axis"] = np.int32(1)
    reg = es.create_dataset("electrodes", data=np.arange(3, dtype=np.int64))
    typed(reg, "DynamicTableRegion", "hdmf-common")
    reg.attrs["description"] = "the three electrodes"
    reg.attrs["table"] = el.ref
    tr = f.create_group("intervals/trials")
    pulse_s = np.where(np.arange(12) < 10, 0.0001, 0.0002)
    dynamic_table(tr, "TimeIntervals", "core", "one stimulus per trial", 12, [
        ("start_time", stim - 0.005, "trial start, s", "f8", None),
        ("stop_time", stim + 0.030, "trial stop, s", "f8", None),
        ("stimulus_time", stim, "time of the stimulus pulse, s", "f8", None),
        ("intensity_mA", intensity, "stimulus current, mA", "f8", None),
        ("pulse_width", pulse_s, "pulse width, s", "f8", None),
        ("temperature", np.full(12, 32.5), "bath temperature", "f8", {"unit": "degC"}),
        ("drug", ["none"] * 6 + ["lidocaine"] * 6, "drug in the bath", STR, None),
        ("concentration", [0.0] * 6 + [30.0] * 6, "drug concentration", "f8", {"unit": "uM"}),
        ("operator_note", ["ok"] * 11 + ["bubble"], "free text", STR, None),
    ])
    f.close()
    # what a reader must produce: value = counts * conversion * channel_conversion + offset (volts)
    t0 = -50  # samples: window [-5, 30] ms (both ends) from the trial table
    cut = {}
    for ch in range(3):
        volts = data[:, ch].astype(np.float64) * np.float64(np.float32(conversion)) * np.float64(np.float32(chconv[ch])) \
            + np.float64(np.float32(offset))
        rows = []
        for s in stim:
            i0 = int(np.rint((s - t_start) * fs)) + t0
            rows.append((volts[i0:i0 + 351] * 1000).tolist())  # mV, -5 to 30 ms inclusive
        cut[str(ch)] = rows
    expected["continuous"] = {
        "fs": fs, "nSamples": 351, "t0Ms": -5.0, "stimulus_s": stim.tolist(),
        "conversion": float(np.float32(conversion)), "offset": float(np.float32(offset)),
        "channel_conversion": chconv.tolist(), "distance_mm": dist_mm.tolist(), "locations": locations,
        "intensity": intensity.tolist(), "pulse_width_ms": (pulse_s * 1000).tolist(),
        "sweeps_mV": {"0": r12(cut["0"][:3]), "1": r12(cut["1"][:6]), "2": r12(cut["2"][-2:])},
        "sums_mV": {k: [float(np.sum(r)) for r in v] for k, v in cut.items()},
        "note": "sweeps_mV['0'] holds trials 0-2, ['1'] trials 0-5, ['2'] trials 10-11; sums_mV every trial of every channel",
    }


def precut(expected):
    """A TimeSeries already cut into sweeps: float32 samples with timestamps that have gaps between
    sweeps, and a TimeIntervals table other than trials ('stimulation') with a timeseries reference
    column, a stimulus column under another name and a distance in cm."""
    fs, ns, nsw = 25000.0, 200, 8
    starts = 10.0 + 3.0 * np.arange(nsw)
    pre = 20  # samples before the stimulus
    ts = np.concatenate([s + np.arange(ns) / fs for s in starts])
    stim = starts + pre / fs
    data = np.zeros(nsw * ns, dtype=np.float32)
    tm = (np.arange(ns) - pre) / fs * 1000
    for k in range(nsw):
        data[k * ns:(k + 1) * ns] = (cap(tm, 1.5 * (1 - 0.1 * k), 1.2, 0.2) + RNG.normal(0, 0.01, ns)).astype(np.float32)
    f = nwb_root(os.path.join(OUT, "precut.nwb"), "Pre-cut sweeps with gaps between them", start="2026-03-15T14:00:00Z")
    text(f["general"], "lab", "Example Nerve Lab")
    ts_g = typed(f["acquisition"].create_group("cap_sweeps"), "TimeSeries")
    ts_g.attrs["description"] = "sweeps stored back to back; timestamps give the gaps"
    d = ts_g.create_dataset("data", data=data)
    d.attrs["unit"] = "volts"
    d.attrs["conversion"] = np.float32(0.001)  # stored values are mV
    d.attrs["offset"] = np.float32(0.0)
    d.attrs["resolution"] = np.float32(-1.0)
    tsd = ts_g.create_dataset("timestamps", data=ts)
    tsd.attrs["interval"] = np.int32(1)
    tsd.attrs["unit"] = "seconds"
    tab = f.create_group("intervals/stimulation")
    ref_t = np.dtype([("idx_start", "<i4"), ("count", "<i4"), ("timeseries", REF)])
    refs = np.array([(k * ns, ns, ts_g.ref) for k in range(nsw)], dtype=ref_t)
    cols = dynamic_table(tab, "TimeIntervals", "core", "stimuli", nsw, [
        ("start_time", starts, "sweep start, s", "f8", None),
        ("stop_time", starts + (ns - 1) / fs, "sweep stop, s", "f8", None),
        ("stim_onset", stim, "stimulus onset, s", "f8", None),
        ("amp", np.linspace(1.0, 8.0, nsw), "stimulus voltage", "f8", {"unit": "V"}),
        ("dist_cm", np.full(nsw, 1.8), "conduction distance, cm", "f8", None),
    ])
    del cols
    tsr = tab.create_dataset("timeseries", data=refs)
    typed(tsr, "TimeSeriesReferenceVectorData", "core")
    tsr.attrs["description"] = "the sweep of each row"
    tsi = tab.create_dataset("timeseries_index", data=np.arange(1, nsw + 1, dtype=np.uint32))
    typed(tsi, "VectorIndex", "hdmf-common")
    tsi.attrs["description"] = "index into timeseries"
    tsi.attrs["target"] = tsr.ref
    tab.attrs["colnames"] = np.array(list(tab.attrs["colnames"]) + ["timeseries"], dtype=object)
    f.close()
    expected["precut"] = {
        "fs": fs, "nSamples": ns, "t0Ms": -pre / fs * 1000, "nSweeps": nsw,
        "sweeps_mV": data.astype(np.float64).reshape(nsw, ns)[[0, 7]].tolist(),
        "amp_V": np.linspace(1.0, 8.0, nsw).tolist(), "distance_mm": 18.0,
        "acquired_s": stim.tolist(),
    }


def no_stimulus():
    f = nwb_root(os.path.join(OUT, "no_stimulus.nwb"), "A series and no stimulus times")
    es = typed(f["acquisition"].create_group("trace"), "TimeSeries")
    d = es.create_dataset("data", data=np.zeros(500, dtype=np.float32))
    d.attrs["unit"] = "volts"
    st = es.create_dataset("starting_time", data=0.0)
    st.attrs["rate"] = np.float32(5000)
    st.attrs["unit"] = "seconds"
    f.close()


def bad_trials():
    """A trials table whose columns cannot become conditions: a pulse width in an unknown unit and a
    temperature given as words."""
    f = nwb_root(os.path.join(OUT, "bad_trials.nwb"), "Trials that do not map")
    es = typed(f["acquisition"].create_group("trace"), "TimeSeries")
    d = es.create_dataset("data", data=np.zeros(5000, dtype=np.float32))
    d.attrs["unit"] = "volts"
    st = es.create_dataset("starting_time", data=0.0)
    st.attrs["rate"] = np.float32(5000)
    st.attrs["unit"] = "seconds"
    tr = f.create_group("intervals/trials")
    dynamic_table(tr, "TimeIntervals", "core", "trials", 3, [
        ("start_time", [0.1, 0.3, 0.5], "s", "f8", None),
        ("stop_time", [0.12, 0.32, 0.52], "s", "f8", None),
        ("pulse_width", [1.0, 2.0, 3.0], "pulse width", "f8", {"unit": "fortnights"}),
        ("temperature", ["warm", "warm", "cold"], "bath", STR, None),
    ])
    f.close()


def not_nwb():
    with h5py.File(os.path.join(OUT, "not_nwb.h5"), "w") as f:
        f.create_dataset("samples", data=np.arange(10.0))
        f.attrs["title"] = "an HDF5 file that is not NWB"


if __name__ == "__main__":
    os.makedirs(OUT, exist_ok=True)
    exp = {"h5py": h5py.__version__, "numpy": np.__version__, "hdf5": h5py.version.hdf5_version}
    continuous(exp)
    precut(exp)
    no_stimulus()
    bad_trials()
    not_nwb()
    with open(os.path.join(OUT, "expected.json"), "w") as fh:
        json.dump(exp, fh)
    print("wrote", sorted(os.listdir(OUT)))
