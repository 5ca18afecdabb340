"""The scan's HDF5 file: the table, optionally every point's runs; rewritten atomically per point.

Layout (format ``radorbit-sweep``)::

    /               attrs: format, format_version, scenario_toml (the base scenario),
                    vary_json ({"keys": [...], "values": [[...], ...], "grid": bool}), points (total)
    /table/<column> one dataset per column, one entry per finished point (numbers float64,
                    anything else JSON text with attr encoding = "json"), attr unit
    /points/<point_key>/damped, /undamped   (keep="results") arrays with unit attrs,
                    attrs scenario_toml, meta_json, warnings_json

Every write builds the whole file beside the old one and renames it into place
(``tracker.io.atomic_path``), copying the stored runs over, so the file on disk is always
a complete scan of the points finished so far, whatever moment the process dies.
"""

import json
from pathlib import Path

import numpy as np

from ..io import atomic_path
from ..result import ARRAYS

FORMAT = "radorbit-sweep"
FORMAT_VERSION = 1


def _column_data(values):
    if all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in values):
        return np.asarray(values, dtype=np.float64), None
    return np.asarray([json.dumps(v) for v in values], dtype=object), "json"


def write_scan(path, header, rows, units, results=None, source=None):
    """Write the scan file atomically.

    Parameters
    ----------
    path : path of the .h5 file
    header : dict with scenario_toml, vary (dict), points (int)
    rows : list of row dicts (same keys), in point order
    units : {column: SI unit text}
    results : {point_key: {"damped": plain Result, "undamped": plain Result}} not yet on disk
    source : path of an earlier scan file to copy stored runs from (rows' point_key), or None
    """
    import h5py

    results = results or {}
    with atomic_path(path) as tmp:
        with h5py.File(tmp, "w") as h5:
            h5.attrs["format"] = FORMAT
            h5.attrs["format_version"] = FORMAT_VERSION
            h5.attrs["scenario_toml"] = header["scenario_toml"]
            h5.attrs["vary_json"] = json.dumps(header["vary"])
            h5.attrs["points"] = int(header["points"])
            table = h5.create_group("table")
            columns = list(rows[0]) if rows else []
            for name in columns:
                data, encoding = _column_data([r[name] for r in rows])
                ds = table.create_dataset(name, data=data, dtype=h5py.string_dtype() if encoding else None)
                if encoding:
                    ds.attrs["encoding"] = encoding
                ds.attrs["unit"] = units.get(name, "")
            table.attrs["columns_json"] = json.dumps(columns)
            points = h5.create_group("points")
            wanted = {r["point_key"] for r in rows}
            for key, runs in results.items():
                if key in wanted:
                    _write_runs(points.create_group(key), runs)
            if source is not None and Path(source).exists():
                with h5py.File(source, "r") as old:
                    if "points" in old:
                        for key in old["points"]:
                            if key in wanted and key not in points:
                                old.copy(old["points"][key], points, name=key)
    return path


def _write_runs(group, runs):
    for name, plain in runs.items():
        g = group.create_group(name)
        g.attrs["scenario_toml"] = plain["scenario_toml"]
        g.attrs["meta_json"] = json.dumps(plain["meta"])
        g.attrs["warnings_json"] = json.dumps(plain["warnings"])
        for array, unit in ARRAYS.items():
            ds = g.create_dataset(array, data=plain["arrays"][array])
            ds.attrs["unit"] = unit


def read_scan(path):
    """(header, rows, stored point keys) of a scan file; ValueError if it is not one."""
    import h5py

    with h5py.File(path, "r") as h5:
        if h5.attrs.get("format") != FORMAT:
            raise ValueError(f"{path}: not a radorbit scan file.")
        header = {"scenario_toml": str(h5.attrs["scenario_toml"]), "vary": json.loads(h5.attrs["vary_json"]),
                  "points": int(h5.attrs["points"])}
        table = h5["table"]
        columns = json.loads(table.attrs["columns_json"])
        data = {}
        for name in columns:
            ds = table[name]
            if ds.attrs.get("encoding") == "json":
                data[name] = [json.loads(v) for v in ds.asstr()[()]]
            else:
                data[name] = [float(v) for v in ds[()]]
        n = len(data[columns[0]]) if columns else 0
        rows = [{name: data[name][i] for name in columns} for i in range(n)]
        stored = set(h5["points"]) if "points" in h5 else set()
    for row in rows:
        row["index"] = int(row["index"])
    return header, rows, stored


def read_runs(path, key):
    """{"damped": plain Result, "undamped": plain Result} stored for a point, or None."""
    import h5py

    with h5py.File(path, "r") as h5:
        if "points" not in h5 or key not in h5["points"]:
            return None
        out = {}
        for name, g in h5["points"][key].items():
            out[name] = {"arrays": {a: g[a][()] for a in ARRAYS}, "scenario_toml": str(g.attrs["scenario_toml"]),
                         "meta": json.loads(g.attrs["meta_json"]), "warnings": json.loads(g.attrs["warnings_json"])}
        return out
