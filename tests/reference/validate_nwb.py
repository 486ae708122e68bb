"""Validate NWB files against the NWB 2.7.0 core schema (and hdmf-common 1.8.0) with Debian's
python3-hdmf, independently of fascicle. The schema files are the reference copies in
tests/fixtures/nwb-schema (or the folder given by NWB_SCHEMA_DIR).

NWB's schema names its type keys neurodata_type_def / neurodata_type_inc (hdmf's own are
data_type_def / data_type_inc), so the spec classes below map one to the other before hdmf builds
the specs; this is the same mapping NWB's own Python API makes.

Run: /usr/bin/python3 tests/reference/validate_nwb.py [--layout] FILE.nwb [...]
Prints one JSON line per file: {"file", "ok", "errors": [...], "types": {path: neurodata_type}}
and with --layout what h5py reads there (series attributes and values, table columns).
and exits 0 when every file is valid, 1 otherwise, 2 when hdmf or the schema cannot be loaded.
"""
import json
import os
import sys

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))


def schema_dir():
    env = os.environ.get("NWB_SCHEMA_DIR")
    if env:
        return env
    # the vendored copy first (tests/fixtures/nwb-schema), then a shared folder beside the repository
    for up in ("../fixtures/nwb-schema", "../../../shared/nwb-schema", "../../shared/nwb-schema"):
        p = os.path.normpath(os.path.join(HERE, up))
        if os.path.isdir(p):
            return p
    return None


try:
    import h5py
    from hdmf.spec import GroupSpec, DatasetSpec, SpecNamespace, NamespaceCatalog
    from hdmf.build import BuildManager, TypeMap
    from hdmf.backends.hdf5 import HDF5IO
    from hdmf.validate import ValidatorMap
except ImportError as e:  # the caller skips with this message
    print(json.dumps({"unavailable": f"python3-hdmf / python3-h5py not importable: {e}"}))
    sys.exit(2)


class _NwbKeys:
    """Spec keys as NWB writes them."""

    @classmethod
    def type_key(cls):
        return "neurodata_type"

    @classmethod
    def inc_key(cls):
        return "neurodata_type_inc"

    @classmethod
    def def_key(cls):
        return "neurodata_type_def"

    @classmethod
    def build_const_args(cls, spec_dict):
        d = dict(spec_dict)
        if "neurodata_type_inc" in d:
            d["data_type_inc"] = d.pop("neurodata_type_inc")
        if "neurodata_type_def" in d:
            d["data_type_def"] = d.pop("neurodata_type_def")
        return super().build_const_args(d)


class NwbDatasetSpec(_NwbKeys, DatasetSpec):
    pass


class NwbGroupSpec(_NwbKeys, GroupSpec):
    @classmethod
    def dataset_spec_cls(cls):
        return NwbDatasetSpec


class NwbNamespace(SpecNamespace):
    __types_key = "neurodata_types"

    @classmethod
    def types_key(cls):
        return "neurodata_types"


def build_catalog(root):
    cat = NamespaceCatalog(NwbGroupSpec, NwbDatasetSpec, NwbNamespace)
    cat.load_namespaces(os.path.join(root, "hdmf-common-schema", "common", "namespace.yaml"))
    cat.load_namespaces(os.path.join(root, "core", "nwb.namespace.yaml"))
    return cat


def types_in(path):
    out = {}
    with h5py.File(path, "r") as f:
        def visit(name, obj):
            t = obj.attrs.get("neurodata_type")
            if t is not None:
                out["/" + name] = t.decode() if isinstance(t, bytes) else str(t)
        f.visititems(visit)
        t = f.attrs.get("neurodata_type")
        if t is not None:
            out["/"] = t.decode() if isinstance(t, bytes) else str(t)
    return out


def _val(v):
    if isinstance(v, bytes):
        return v.decode()
    if isinstance(v, np.ndarray):
        return [_val(x) for x in v.tolist()] if v.dtype.kind in "OSU" else v.tolist()
    if isinstance(v, np.generic):
        return v.item()
    return v if isinstance(v, (str, int, float, bool, type(None))) else str(v)


def _finite(x):
    """NaN and infinities as None (JSON has no NaN)."""
    if isinstance(x, float) and not np.isfinite(x):
        return None
    if isinstance(x, dict):
        return {k: _finite(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_finite(v) for v in x]
    return x


def layout(path):
    """What h5py finds: root attributes, each series (data shape, dtype, unit, conversion, offset,
    resolution, time base, first values, sum of data * conversion) and each table (columns, rows)."""
    out = {"root": {}, "series": {}, "tables": {}}
    with h5py.File(path, "r") as f:
        out["root"] = {k: _val(v) for k, v in f.attrs.items()}
        for name in ("identifier", "session_start_time", "timestamps_reference_time", "session_description"):
            out["root"][name] = _val(f[name][()]) if name in f else None

        def visit(name, obj):
            t = obj.attrs.get("neurodata_type")
            t = t.decode() if isinstance(t, bytes) else t
            if isinstance(obj, h5py.Group) and t in ("ElectricalSeries", "TimeSeries"):
                d = obj["data"]
                s = {"type": t, "shape": list(d.shape), "dtype": str(d.dtype), "chunks": d.chunks,
                     **{k: _val(d.attrs[k]) for k in ("unit", "conversion", "offset", "resolution") if k in d.attrs}}
                conv = float(d.attrs.get("conversion", 1.0))
                x = np.asarray(d[()], dtype=np.float64)
                s["first"] = x.reshape(x.shape[0], -1)[:5, 0].tolist()
                s["sum_volts"] = float(np.sum(x) * conv)
                if "timestamps" in obj:
                    ts = obj["timestamps"]
                    s["timestamps"] = {"shape": list(ts.shape), "first": ts[:3].tolist(), "unit": _val(ts.attrs.get("unit"))}
                if "starting_time" in obj:
                    s["starting_time"] = {"value": float(obj["starting_time"][()]), "rate": float(obj["starting_time"].attrs["rate"])}
                if "electrodes" in obj:
                    e = obj["electrodes"]
                    s["electrodes"] = {"rows": e[()].tolist(), "table": f[e.attrs["table"]].name}
                out["series"]["/" + name] = s
            if isinstance(obj, h5py.Group) and t in ("TimeIntervals", "DynamicTable"):
                cols = [_val(c) for c in obj.attrs.get("colnames", [])]
                tab = {"type": t, "colnames": cols, "rows": int(obj["id"].shape[0]), "values": {}}
                for c in cols:
                    d = obj[c]
                    if d.dtype.names:  # compound (TimeSeriesReference)
                        v = d[()]
                        tab["values"][c] = [[int(r[0]), int(r[1]), f[r[2]].name] for r in v]
                    elif h5py.check_dtype(ref=d.dtype):
                        tab["values"][c] = [f[r].name for r in d[()]]
                    else:
                        tab["values"][c] = _val(d[()])
                out["tables"]["/" + name] = tab
        f.visititems(visit)
    return out


def validate(path, cat):
    manager = BuildManager(TypeMap(cat))
    with HDF5IO(path, mode="r", manager=manager) as io:
        builder = io.read_builder()
        vmap = ValidatorMap(cat.get_namespace("core"))
        errors = vmap.validate(builder)
    return [str(e) for e in errors]


def main(argv):
    flags = [a for a in argv if a.startswith("--")]
    argv = [a for a in argv if not a.startswith("--")]
    root = schema_dir()
    if not root:
        print(json.dumps({"unavailable": "the NWB schema folder (tests/fixtures/nwb-schema) was not found"}))
        return 2
    try:
        cat = build_catalog(root)
    except Exception as e:  # noqa: BLE001 - reported to the caller
        print(json.dumps({"unavailable": f"hdmf could not load the NWB namespace: {type(e).__name__}: {e}"}))
        return 2
    ok = True
    for p in argv:
        try:
            errs = validate(p, cat)
        except Exception as e:  # noqa: BLE001
            errs = [f"{type(e).__name__}: {e}"]
        ok = ok and not errs
        rec = {"file": p, "ok": not errs, "errors": errs, "types": types_in(p)}
        if "--layout" in flags:
            rec["layout"] = layout(p)
        print(json.dumps(_finite(rec)))
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
