"""HDF5 files of the workbench: atomic writing and self-describing attributes.

Every file is written to a temporary name in the destination folder and
renamed over the destination only once it is complete and closed, so a run
killed at any moment leaves either the previous complete file or none
(POSIX ``rename`` is atomic within one file system).

Attributes hold scalars, strings or small arrays; :func:`to_attribute`
converts Python values (``None`` becomes the string ``"none"``, dicts become
JSON text) so the files can be read back with plain h5py and no project code.
"""

from __future__ import annotations

import contextlib
import json
import os
import tempfile
from pathlib import Path
from typing import Any, Iterator, Mapping

import h5py
import numpy as np

#: root attribute naming the conventions every file follows
CONVENTIONS_NOTE = (
    "weight w_n(x) = exp(-n V(x)) h(x); energy I_V = iint log 1/|x-y| + int V; "
    "Euler-Lagrange 2 U^mu + V = ell on S; Omega_j = mu([a_{j+1}, b_k]); "
    "x p_k = a_{k+1} p_{k+1} + b_k p_k + a_k p_{k-1}, a[0] = 0; "
    "g(z) = int log(z - s) dmu(s), principal branches"
)


def to_attribute(value: Any) -> Any:
    """Convert a Python value to something h5py stores as an attribute."""
    if value is None:
        return "none"
    if isinstance(value, (bool, np.bool_)):
        return np.bool_(value)
    if isinstance(value, (int, float, str, np.integer, np.floating)):
        return value
    if isinstance(value, Mapping):
        return json.dumps(value, default=_json_default, sort_keys=True)
    if isinstance(value, (list, tuple, np.ndarray)):
        array = np.asarray(value)
        if array.dtype.kind in "biufc":
            return array
        return json.dumps(list(value), default=_json_default)
    return str(value)


def _json_default(value: Any) -> Any:
    if isinstance(value, np.ndarray):
        return value.tolist()
    if isinstance(value, (np.integer,)):
        return int(value)
    if isinstance(value, (np.floating,)):
        return float(value)
    return str(value)


def set_attributes(node: h5py.HLObject, attributes: Mapping[str, Any]) -> None:
    """Write every entry of ``attributes`` on an h5py group or dataset."""
    for key, value in attributes.items():
        node.attrs[key] = to_attribute(value)


@contextlib.contextmanager
def atomic_file(path: str | os.PathLike[str]) -> Iterator[h5py.File]:
    """Open a new HDF5 file that appears at ``path`` only when complete.

    The file is built under a temporary name beside ``path``; on normal exit
    it is flushed, closed, synced and renamed over ``path``.  On any
    exception (including ``KeyboardInterrupt``) the temporary file is removed
    and ``path`` is left as it was.
    """
    target = Path(path)
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp_name = tempfile.mkstemp(prefix=target.name + ".", suffix=".tmp", dir=target.parent)
    os.close(fd)
    handle = None
    try:
        handle = h5py.File(tmp_name, "w")
        handle.attrs["conventions"] = CONVENTIONS_NOTE
        yield handle
        handle.flush()
        handle.close()
        handle = None
        with open(tmp_name, "rb") as stream:
            os.fsync(stream.fileno())
        os.replace(tmp_name, target)
    finally:
        if handle is not None:
            handle.close()
        if os.path.exists(tmp_name):
            os.remove(tmp_name)
