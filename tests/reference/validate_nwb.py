"""Validate NWB files against the NWB 2.7.0 core schema (and hdmf-common 1.8.0) with Debian's
python3-hdmf, independently of fascicle. The schema files are the reference copies in
../shared/nwb-schema (or the folder given by NWB_SCHEMA_DIR).

NWB's schema names its type keys neurodata_type_def / neurodata_type_inc (hdmf's own are
data_type_def / data_type_inc), so the spec classes below map one to the other before hdmf builds
the specs; this is the same mapping NWB's own Python API makes.

Run: /usr/bin/python3 tests/reference/validate_nwb.py FILE.nwb [...]
Prints one JSON line per file: {"file", "ok", "errors": [...], "types": {path: neurodata_type}}
and exits 0 when every file is valid, 1 otherwise, 2 when hdmf or the schema cannot be loaded.
"""
import json
import os
import sys

HERE = os.path.dirname(os.path.abspath(__file__))


def schema_dir():
    env = os.environ.get("NWB_SCHEMA_DIR")
    if env:
        return env
    for up in ("../../../shared/nwb-schema", "../../shared/nwb-schema"):
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


def validate(path, cat):
    manager = BuildManager(TypeMap(cat))
    with HDF5IO(path, mode="r", manager=manager) as io:
        builder = io.read_builder()
        vmap = ValidatorMap(cat.get_namespace("core"))
        errors = vmap.validate(builder)
    return [str(e) for e in errors]


def main(argv):
    root = schema_dir()
    if not root:
        print(json.dumps({"unavailable": "the NWB schema folder (../shared/nwb-schema) was not found"}))
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
        print(json.dumps({"file": p, "ok": not errs, "errors": errs, "types": types_in(p)}))
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
