"""provenance.json: what produced a result — versions, parameters, seed, input hashes, times."""
from __future__ import annotations

import datetime as _dt
import hashlib
import json
import math
import os
import platform
import sys
from importlib import metadata
from pathlib import Path

import numpy as np
import pandas as pd

from ._table import column_dtypes

__all__ = ["build_provenance", "write_provenance_json", "sha256_file"]

#: distributions whose versions are recorded
PACKAGES = ("syncstats", "numpy", "scipy", "pandas", "statsmodels", "pingouin", "matplotlib")

_CHUNK = 1 << 20


def sha256_file(path) -> str:
    """SHA-256 hex digest of a file, read in 1 MiB chunks."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(_CHUNK), b""):
            h.update(block)
    return h.hexdigest()


def _version(dist: str):
    try:
        return metadata.version(dist)
    except metadata.PackageNotFoundError:
        return None


def _input_entry(p, record_paths: bool = False) -> dict:
    path = Path(os.fspath(p))
    entry = {"path": os.fspath(p)}
    if record_paths:
        entry["absolute_path"] = str(path.absolute())
    if path.is_file():
        entry.update(size_bytes=path.stat().st_size, sha256=sha256_file(path))
    elif path.is_dir():
        files = sorted(f for f in path.rglob("*") if f.is_file())
        entry.update(
            kind="folder",
            files=[
                {"path": str(f.relative_to(path)), "size_bytes": f.stat().st_size,
                 "sha256": sha256_file(f)}
                for f in files
            ],
        )
    else:
        entry.update(sha256=None, error="not found when the report was written")
    return entry


def to_jsonable(x):
    """Make parameters JSON-safe: numpy scalars/arrays, tuples, paths, NaN -> null."""
    if isinstance(x, dict):
        return {str(k): to_jsonable(v) for k, v in x.items()}
    if isinstance(x, (list, tuple, set, frozenset)):
        return [to_jsonable(v) for v in x]
    if isinstance(x, np.ndarray):
        return [to_jsonable(v) for v in x.tolist()]
    if isinstance(x, np.generic):
        return to_jsonable(x.item())
    if isinstance(x, float):
        return x if math.isfinite(x) else None
    if isinstance(x, (str, int, bool)) or x is None:
        return x
    if isinstance(x, (os.PathLike,)):
        return os.fspath(x)
    if isinstance(x, (_dt.datetime, _dt.date)):
        return x.isoformat()
    if x is pd.NA:
        return None
    return str(x)


def build_provenance(result, *, record_paths: bool = False) -> dict:
    """The provenance record of ``result`` (a JSON-ready dict).

    Inputs are recorded by the path as given plus size and SHA-256; absolute paths and
    the interpreter's location (which tell user names and folder layouts) only with
    ``record_paths=True``.
    """
    params = to_jsonable(dict(result.params or {}))
    table = result.table
    return {
        "format": "syncstats-provenance/1",
        "written_at": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
        "started_at": params.get("started_at"),
        "finished_at": params.get("finished_at"),
        "seed_entropy": params.get("seed_entropy"),
        "versions": {
            **{name: _version(name) for name in PACKAGES},
            "syncstats_in_params": params.get("syncstats_version"),
        },
        "python": {
            "version": platform.python_version(),
            "implementation": platform.python_implementation(),
            **({"executable": sys.executable} if record_paths else {}),
        },
        "platform": {
            "system": platform.system(),
            "release": platform.release(),
            "machine": platform.machine(),
            "platform": platform.platform(),
        },
        "parameters": params,
        "inputs": [_input_entry(p, record_paths) for p in (result.inputs or [])],
        "table": {
            "rows": int(len(table)) if table is not None else 0,
            "columns": [str(c) for c in table.columns] if table is not None else [],
            "dtypes": column_dtypes(table) if table is not None else {},
        },
    }


def write_provenance_json(result, path, *, output_files=(), record=None) -> Path:
    """Write the provenance of ``result`` to ``path``.

    Parameters
    ----------
    result : ResultData
    path : path-like
    output_files : iterable of path-like
        Files written beside it whose SHA-256 is recorded under ``"outputs"``.
    record : dict, optional
        A record from :func:`build_provenance` to reuse (so the report and this file agree).
    """
    path = Path(path)
    rec = dict(record) if record is not None else build_provenance(result)
    rec["outputs"] = {
        Path(f).name: {"sha256": sha256_file(f), "size_bytes": Path(f).stat().st_size}
        for f in output_files
    }
    path.write_text(json.dumps(rec, indent=2, ensure_ascii=False, allow_nan=False) + "\n",
                    encoding="utf-8")
    return path
