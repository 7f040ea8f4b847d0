"""The HDF5 layout of a run: writing it atomically and reading it back.

One file per run, one group per stage::

    /                   provenance (attributes): format, workbench version, git commit (when
                        there is one), case text, parameters, library versions, timings
    /equilibrium        support, edges, band masses, Ω, ℓ, energy, checks; density on a grid
    /model              predictions of the model problem at every n (a_n, b_n, zeros, counts)
    /direct/n_XXXX      direct orthogonal polynomials at one n (coefficients, zeros, values, Y)
    /comparison         errors against n, counts per band, small-norm deviations
    /comparison/rates   fitted rates (slope, standard error) per error quantity
    /figures            metadata of the figures drawn (names, files, style, palette)

Every dataset carries a ``description`` attribute (what it is, in which
convention) so a file can be read with plain h5py and no project code: the
:func:`read_run` reader below uses nothing but h5py and numpy.

Dimensions are labelled with HDF5 dimension scales (the netCDF-4 convention, so
xarray's h5netcdf engine and other netCDF readers see named dimensions): the 1-D
datasets named in :data:`COORDINATES` (``n`` in ``/comparison`` and ``/model``,
``x`` in ``/equilibrium``, ``k`` of a recurrence file, …) are scales, and the
first axis of every other dataset of the same group whose length matches one of
them is attached to it (``n`` first).  A dataset can name its dimensions itself
(``Group.add(..., dims=(...))``; ``dims=()`` for none), e.g. a sweep's grid
axes, or arrays of another length that happens to equal the number of n.

Files written by ``workbench equilibrium/recurrence/zeros --out`` carry the same
provenance attributes as a run (:func:`write_command_file`, formats
``workbench-equilibrium``, ``workbench-recurrence``, ``workbench-zeros``) and are
read by ``show`` and ``plot`` like run files.

In memory a run is a tree of :class:`Group` nodes holding attributes,
arrays and sub-groups.  The pipeline builds that tree; :func:`write_run`
stores it; :func:`read_run` restores it; :func:`figures` and ``show`` work
only from the restored tree.

Partial results (one file per finished n, written atomically, tied to the
SHA-256 digest of the case) let an interrupted run resume: see
:func:`write_partial` and :func:`load_partials`.
"""

from __future__ import annotations

import datetime as _dt
import json
import os
import platform
import subprocess
import sys
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Iterable, Mapping, Sequence

import h5py
import numpy as np

from workbench.hdf5 import atomic_file, set_attributes

__all__ = [
    "FORMAT",
    "FORMAT_VERSION",
    "Group",
    "Dataset",
    "write_run",
    "read_run",
    "write_group_file",
    "write_command_file",
    "COMMAND_FORMATS",
    "READABLE_FORMATS",
    "COORDINATES",
    "read_group_file",
    "write_partial",
    "load_partials",
    "partial_path",
    "provenance",
    "git_commit",
    "library_versions",
    "remove_stale_temporaries",
    "text_list",
]

FORMAT = "workbench-run"
FORMAT_VERSION = 1
#: the formats of the files written by ``--out`` of single commands
COMMAND_FORMATS = ("workbench-equilibrium", "workbench-recurrence", "workbench-zeros")
#: every format ``show`` and ``plot`` read
READABLE_FORMATS = (FORMAT, "workbench-sweep") + COMMAND_FORMATS
#: 1-D datasets that are dimension scales of their group (their name is the dimension's)
COORDINATES = ("n", "n_dense", "x", "value_x", "k", "j")


@dataclass
class Dataset:
    """An array with the attributes that say what it means (``description`` is required)."""

    data: np.ndarray
    attrs: dict[str, Any] = field(default_factory=dict)
    #: names of the dimensions (coordinates of the same group) per axis; None: by length (module doc)
    dims: tuple[str | None, ...] | None = None


@dataclass
class Group:
    """A node of the run tree: attributes, datasets and sub-groups."""

    attrs: dict[str, Any] = field(default_factory=dict)
    datasets: dict[str, Dataset] = field(default_factory=dict)
    groups: dict[str, "Group"] = field(default_factory=dict)

    def add(self, name: str, data: Any, description: str, *, dims: Sequence[str | None] | None = None,
            **attrs: Any) -> Dataset:
        """Add a dataset; ``description`` is mandatory so files stay self-describing.

        ``dims`` names the coordinate (a 1-D dataset of this group) of each axis; by default
        the first axis is labelled by length (module docstring)."""
        array = np.asarray(data)
        if array.dtype.kind == "U":
            array = array.astype(object)
        item = Dataset(array, {"description": description, **attrs},
                       None if dims is None else tuple(dims))
        self.datasets[name] = item
        return item

    def group(self, name: str) -> "Group":
        """The sub-group ``name`` (created empty when absent); ``a/b`` paths allowed."""
        node = self
        for part in name.split("/"):
            node = node.groups.setdefault(part, Group())
        return node

    def get(self, path: str) -> Any:
        """Array or group at a slash path, e.g. ``"comparison/err_a"``."""
        node: Any = self
        for part in path.strip("/").split("/"):
            if isinstance(node, Group) and part in node.groups:
                node = node.groups[part]
            elif isinstance(node, Group) and part in node.datasets:
                node = node.datasets[part].data
            else:
                raise KeyError(path)
        return node

    def has(self, path: str) -> bool:
        try:
            self.get(path)
        except KeyError:
            return False
        return True


# ---------------------------------------------------------------------- writing
def _store_array(parent: h5py.Group, name: str, item: Dataset) -> None:
    data = item.data
    if data.dtype == object or data.dtype.kind == "U":
        data = np.asarray([str(v) for v in data.ravel()], dtype=object).reshape(data.shape)
        node = parent.create_dataset(name, data=data, dtype=h5py.string_dtype())
    else:
        compress = data.size > 256
        node = parent.create_dataset(name, data=data, compression="gzip" if compress else None)
    set_attributes(node, item.attrs)


#: the NAME of a dimension scale that is no variable (netCDF-4 convention: a dimension without coordinate)
_DIMENSION_ONLY = "This is a netCDF dimension but not a netCDF variable."


def _dimensions(node: Group) -> tuple[dict[str, int], dict[str, tuple[str | None, ...]]]:
    """The coordinates of ``node`` (name -> length) and the coordinate of each axis of each other
    dataset (None where no coordinate fits: that axis gets a dimension of its own)."""
    scales = {name: item.data.shape[0] for name, item in node.datasets.items()
              if item.data.ndim == 1 and (name in COORDINATES or any(
                  name in (other.dims or ()) for other in node.datasets.values()))}
    out = {}
    for name, item in node.datasets.items():
        if name in scales or item.data.ndim == 0:
            continue
        if item.dims is not None:
            dims = tuple(d if d in scales and scales[d] == size else None
                         for d, size in zip(item.dims, item.data.shape))
        else:
            first = [c for c in ("n",) + COORDINATES[1:] if scales.get(c) == item.data.shape[0]]
            dims = (first[0] if first else None,)
        out[name] = dims + (None,) * (item.data.ndim - len(dims))
    return scales, out


def _store_group(target: h5py.Group, node: Group) -> None:
    set_attributes(target, node.attrs)
    for name, item in node.datasets.items():
        _store_array(target, name, item)
    # every axis of every dataset gets a dimension scale (netCDF readers want all or none):
    # a coordinate of the group, or a dimension of its own, NAME_index<axis>, with no data
    scales, labelled = _dimensions(node)
    for coordinate in scales:
        target[coordinate].make_scale(coordinate)
    for name, dims in labelled.items():
        for axis, coordinate in enumerate(dims):
            if coordinate is None:
                coordinate = f"{name}_index{axis}"
                size = target[name].shape[axis]
                if coordinate in target:
                    continue
                own = target.create_dataset(coordinate, shape=(size,), dtype="f4")
                own.make_scale(f"{_DIMENSION_ONLY}{size:10d}")
                own.attrs["description"] = f"axis {axis} of {name}: a dimension without coordinate (no data)"
            target[name].dims[axis].attach_scale(target[coordinate])
    for name, child in node.groups.items():
        _store_group(target.create_group(name), child)


def write_run(path: str | os.PathLike[str], tree: Group) -> Path:
    """Write the run tree atomically to ``path`` (previous file kept until the rename)."""
    with atomic_file(path) as handle:
        _store_group(handle, tree)
        handle.attrs["format"] = FORMAT
        handle.attrs["format_version"] = FORMAT_VERSION
    return Path(path)


def write_command_file(path: str | os.PathLike[str], tree: Group, kind: str, parameters: Mapping[str, Any],
                       seconds: float) -> Path:
    """Atomically write the result of ``workbench KIND --out`` with the provenance of a run file.

    ``kind`` is ``equilibrium``, ``recurrence`` or ``zeros`` (format ``workbench-KIND``);
    ``parameters`` describes the weight (``field``, ``set``, ``factor``, ``n``, …).
    """
    fmt = f"workbench-{kind}"
    if fmt not in COMMAND_FORMATS:
        raise ValueError(f"unknown command file kind {kind!r}")
    attrs = provenance("", "command line", parameters, {"total": seconds}, kind=kind)
    attrs.pop("case_text")
    with atomic_file(path) as handle:
        _store_group(handle, tree)
        set_attributes(handle, attrs)
        handle.attrs["format"] = fmt
        handle.attrs["format_version"] = FORMAT_VERSION
    return Path(path)


def write_group_file(path: str | os.PathLike[str], tree: Group, **root_attrs: Any) -> Path:
    """Atomically write a small file holding one tree (partial results, sweep points)."""
    with atomic_file(path) as handle:
        _store_group(handle, tree)
        set_attributes(handle, root_attrs)
    return Path(path)


# ---------------------------------------------------------------------- reading
def _decode(value: Any) -> Any:
    if isinstance(value, bytes):
        return value.decode()
    if isinstance(value, np.ndarray) and value.dtype.kind in "OS":
        return np.asarray([_decode(v) for v in value.ravel()], dtype=object).reshape(value.shape)
    if isinstance(value, np.generic):
        return value.item()
    return value


#: attributes HDF5 keeps for dimension scales (references into the file): not content
_SCALE_ATTRIBUTES = frozenset({"CLASS", "NAME", "REFERENCE_LIST", "DIMENSION_LIST"})


def _dimension_only(item: h5py.Dataset) -> bool:
    label = item.attrs.get("NAME") if "NAME" in item.attrs else None
    if isinstance(label, bytes):
        label = label.decode(errors="replace")
    return isinstance(label, str) and label.startswith(_DIMENSION_ONLY)


def _stored_dims(item: h5py.Dataset) -> tuple[str | None, ...] | None:
    """The coordinate names attached to each axis (None when no axis has one)."""
    names = []
    for axis in item.dims:
        scale = axis[0] if len(axis) else None
        names.append(None if scale is None or _dimension_only(scale) else scale.name.rsplit("/", 1)[-1])
    return tuple(names) if any(names) else None


#: deepest group nesting a file may have (the workbench writes at most four levels)
MAX_DEPTH = 32


class _Reading:
    """What a read has used so far: bytes declared by its datasets, groups visited."""

    def __init__(self) -> None:
        self.nbytes = 0
        self.visited: set = set()


def _load_group(source: h5py.Group, depth: int = 0, reading: _Reading | None = None) -> Group:
    """The tree under ``source``, read defensively (the file may come from anywhere).

    Refused (InputError): links of any kind (the workbench writes none; an external
    link would read another file), a group reached twice (hard-link loops), nesting
    deeper than :data:`MAX_DEPTH`, and datasets declaring more than the read budget of
    :mod:`workbench.limits` (checked on the declared shape, before any byte is read).
    """
    from equilibrium.errors import InputError
    from workbench.limits import check_read

    reading = reading or _Reading()
    if depth > MAX_DEPTH:
        raise InputError(f"groups nested deeper than {MAX_DEPTH} levels at {source.name[:80]}")
    if source.id in reading.visited:
        raise InputError(f"the group {source.name[:80]} is reached twice (a link loop)")
    reading.visited.add(source.id)
    node = Group(attrs={k: _decode(v) for k, v in source.attrs.items() if k not in _SCALE_ATTRIBUTES})
    for name in source.keys():
        link = source.get(name, getlink=True)
        if not isinstance(link, h5py.HardLink):
            raise InputError(f"{source.name.rstrip('/')}/{name[:60]} is a {type(link).__name__} "
                             "(the workbench writes no links)")
        item = source[name]
        if isinstance(item, h5py.Group):
            node.groups[name] = _load_group(item, depth + 1, reading)
        elif _dimension_only(item):
            continue        # a dimension without data (_store_group), not content
        elif isinstance(item, h5py.Dataset):
            reading.nbytes += int(np.prod(item.shape, dtype=float)) * max(item.dtype.itemsize, 1) if item.shape else 8
            check_read(reading.nbytes, f"the dataset {item.name[:80]}")
            if h5py.check_string_dtype(item.dtype) is not None:
                data = np.asarray(item.asstr()[()], dtype=object)
            else:
                data = item[()]
            attrs = {k: _decode(item.attrs[k]) for k in item.attrs.keys() if k not in _SCALE_ATTRIBUTES}
            node.datasets[name] = Dataset(np.asarray(data), attrs, _stored_dims(item))
    return node


#: what h5py and numpy raise on files they cannot make sense of (besides InputError)
READ_ERRORS = (OSError, KeyError, ValueError, TypeError, RuntimeError, RecursionError, UnicodeDecodeError)


def read_run(path: str | os.PathLike[str]) -> Group:
    """Read a run file back into a :class:`Group` tree (plain h5py; no computation)."""
    from equilibrium.errors import InputError

    if os.path.isdir(path):
        raise InputError(f"{path} is a folder; give a file written by 'workbench run' or 'sweep'")
    try:
        with h5py.File(path, "r") as handle:
            kind = _decode(handle.attrs.get("format"))
            if not isinstance(kind, str) or kind not in READABLE_FORMATS:
                raise InputError(f"{path} is not a workbench file (no 'format' attribute "
                                 f"'{FORMAT}' or the like); give a file written by 'workbench run', 'sweep' "
                                 "or the --out of 'equilibrium', 'recurrence', 'zeros'")
            return _load_group(handle)
    except READ_ERRORS as exc:
        # h5py's messages run over several lines; the command line promises one
        reason = " ".join(str(exc).split())[:200]
        raise InputError(f"cannot read {path} as HDF5 ({reason}); give a file written by "
                         "'workbench run' or 'sweep'") from None


def read_group_file(path: str | os.PathLike[str]) -> Group:
    with h5py.File(path, "r") as handle:
        return _load_group(handle)


# ---------------------------------------------------------- partial results (resume)
def partial_path(directory: str | os.PathLike[str], n: int) -> Path:
    return Path(directory) / "partial" / f"n_{n:05d}.h5"


def write_partial(directory: str | os.PathLike[str], n: int, tree: Group, digest: str) -> Path:
    """Store the finished work at one n; the file appears only when complete."""
    return write_group_file(partial_path(directory, n), tree, case_digest=digest, n=int(n))


def load_partials(directory: str | os.PathLike[str], digest: str,
                  wanted: Iterable[int]) -> dict[int, Group]:
    """Finished per-n results of the same case (same digest, same n).

    A file that cannot be read completely (a damaged disk block, a file put there by
    hand) or that belongs to another case or another n is not used: that n is computed
    again and its file replaced.
    """
    from equilibrium.errors import InputError

    found: dict[int, Group] = {}
    for n in wanted:
        path = partial_path(directory, n)
        if not path.is_file():
            continue
        try:
            with h5py.File(path, "r") as handle:
                if _decode(handle.attrs.get("case_digest")) != digest or _decode(handle.attrs.get("n")) != int(n):
                    continue
                found[n] = _load_group(handle)
        except (InputError, *READ_ERRORS):
            continue  # never trust a disk: recompute
    return found


def remove_stale_temporaries(directory: str | os.PathLike[str]) -> list[Path]:
    """Remove the temporaries a killed process of the workbench left in ``directory``.

    :func:`workbench.hdf5.atomic_file` and the figure writer remove their
    temporary on every exception, but nothing runs after SIGKILL.  Only names
    the workbench owns are touched (``NAME.workbench-PID-XXXXXXXX.tmp``, see
    :func:`workbench.hdf5.temporary_beside`), and only when process PID is no
    longer alive: a user's own ``*.tmp`` files and the temporaries of a run still
    writing into the same folder are left alone.  Such leftovers never carry a
    final name, so they cannot be mistaken for results.
    """
    from workbench.hdf5 import owned_stale_temporary

    removed = []
    root = Path(directory)
    if not root.is_dir():
        return removed
    # the output folder and its subfolders (partial/, figures/): wherever the workbench writes
    for path in sorted([*root.glob("*.tmp"), *root.glob("*/*.tmp")]):
        if not owned_stale_temporary(path):
            continue
        try:
            path.unlink()
            removed.append(path)
        except OSError:
            pass
    return removed


# ------------------------------------------------------------------- provenance
def git_commit() -> str | None:
    """``git rev-parse HEAD`` of the repository holding the package, or None (never fails)."""
    here = Path(__file__).resolve().parent.parent
    if not (here / ".git").exists():
        return None
    try:
        out = subprocess.run(["git", "rev-parse", "HEAD"], cwd=here, capture_output=True,
                             text=True, timeout=5, check=False)
    except (OSError, subprocess.SubprocessError):
        return None
    commit = out.stdout.strip()
    return commit if out.returncode == 0 and len(commit) >= 7 else None


def library_versions() -> dict[str, str]:
    versions = {"python": platform.python_version()}
    for name in ("numpy", "scipy", "h5py", "mpmath", "matplotlib"):
        try:
            module = __import__(name)
            versions[name] = str(getattr(module, "__version__", "unknown"))
        except ImportError:
            versions[name] = "absent"
    versions["hdf5"] = h5py.version.hdf5_version
    return versions


def provenance(case_text: str, case_source: str, parameters: Mapping[str, Any],
               timings: Mapping[str, float], kind: str = "run") -> dict[str, Any]:
    """Root attributes of a result file."""
    import workbench

    attrs: dict[str, Any] = {
        "workbench_version": workbench.__version__,
        "created_utc": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
        "case_text": case_text,
        "case_source": case_source,
        "parameters": json.dumps(dict(parameters), default=str, sort_keys=True),
        "library_versions": json.dumps(library_versions(), sort_keys=True),
        "timings_s": json.dumps({k: round(float(v), 4) for k, v in timings.items()}),
        "platform": platform.platform(),
        "command": " ".join(["workbench", kind] + sys.argv[2:]) if sys.argv else "",
    }
    commit = git_commit()
    if commit is not None:
        attrs["git_commit"] = commit
    return attrs


def text_list(value) -> list[str]:
    """A list of texts stored as an attribute (a list, its JSON, one text, or "none")."""
    if value is None or (isinstance(value, str) and value in ("", "none")):
        return []
    if isinstance(value, str):
        if value.startswith("["):
            try:
                return [str(v) for v in json.loads(value)]
            except ValueError:
                pass
        return [value]
    return [str(v) for v in value]
