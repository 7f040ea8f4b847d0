"""HDF5 files of the workbench: atomic writing and self-describing attributes.

Every file is written to a temporary name in the destination folder and
renamed over the destination only once it is complete and closed, so a run
killed at any moment leaves either the previous complete file or none
(POSIX ``rename`` is atomic within one file system).

The temporary file of :func:`tempfile.mkstemp` is private (mode 0600); before the
rename it is given the mode any new file of the user gets, ``0666 & ~umask``
(:func:`new_file_mode`), so results can be shared as the user's other files are.

Attributes hold scalars, strings or small arrays; :func:`to_attribute`
converts Python values (``None`` becomes the string ``"none"``, dicts become
JSON text) so the files can be read back with plain h5py and no project code.
"""

from __future__ import annotations

import contextlib
import io
import json
import os
import stat
import tempfile
from pathlib import Path
from typing import Any, Iterator, Mapping

import h5py
import numpy as np

#: ending of the temporary files of :func:`atomic_file` and of the figures
TEMPORARY_SUFFIX = ".tmp"
#: the mark of a temporary the workbench owns: ``NAME.workbench-PID-XXXXXXXX.tmp`` beside NAME;
#: start-up clears only such names, and only those of a process that is no longer alive
TEMPORARY_MARK = ".workbench-"

#: longest file-name component most file systems accept (bytes, POSIX NAME_MAX)
NAME_MAX = 255


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


def _nearest_existing(path: Path) -> Path:
    probe = path
    while not probe.exists() and probe != probe.parent:
        probe = probe.parent
    return probe


def check_path_text(path: str | os.PathLike[str], what: str) -> Path:
    """Refuse a path that no file system can hold: NUL bytes, a component over 255 bytes."""
    from equilibrium.errors import InputError

    text = os.fspath(path)
    if "\x00" in text:
        raise InputError(f"{what.replace(chr(0), '?')}: the path {text!r} holds a NUL byte; choose another name")
    for part in Path(text).parts:
        if len(part.encode("utf-8", "surrogateescape")) > NAME_MAX:
            raise InputError(f"{what[:80]}...: the name {part[:40]}... has {len(part.encode('utf-8', 'surrogateescape'))} "
                             f"bytes, more than the {NAME_MAX} a file system accepts; choose a shorter name")
    return Path(text)


def check_output_file(path: str | os.PathLike[str], what: str | None = None) -> Path:
    """Refuse, before any computation, an output file that could not be written.

    The path must be absent or a regular file (a FIFO, a device or a socket
    would be replaced by the rename, or block), and its nearest existing
    ancestor must be a writable folder (the missing folders between are
    created at the end).  Raises :class:`~equilibrium.errors.InputError`.
    """
    from equilibrium.errors import InputError

    what = what or f"--out {path}"
    target = check_path_text(path, what)
    try:
        mode = os.stat(target).st_mode
    except (FileNotFoundError, NotADirectoryError):  # absent (a file in the way is named below)
        mode = None
    except OSError as exc:
        raise InputError(f"{what}: cannot be used ({exc.strerror or exc}); choose another path") from None
    if mode is not None and stat.S_ISDIR(mode):
        raise InputError(f"{what} is a folder; give a file name such as {target / 'result.h5'}")
    if mode is not None and not stat.S_ISREG(mode):
        raise InputError(f"{what} is not a regular file (a FIFO, device or socket); "
                         "write to a new or regular file instead")
    check_output_directory(target.parent, what=f"the folder of {what}")
    return target


def check_output_directory(path: str | os.PathLike[str], what: str | None = None) -> Path:
    """Refuse, before any computation, an output folder that could not be created or written."""
    from equilibrium.errors import InputError

    what = what or f"output folder {path}"
    target = check_path_text(path, what)
    existing = _nearest_existing(target.absolute())
    if not existing.is_dir():
        raise InputError(f"{what} cannot be created: {existing} is a file, not a folder; choose another path")
    if not os.access(existing, os.W_OK | os.X_OK):
        raise InputError(f"{what} cannot be written: no write permission in {existing}; choose another path")
    return target


def make_output_directory(path: str | os.PathLike[str]) -> Path:
    """``mkdir -p`` with the failure reported as one line (InputError)."""
    from equilibrium.errors import InputError

    target = Path(path)
    try:
        target.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"cannot create the output folder {target}: {exc.strerror or exc}; "
                         "choose another path") from None
    return target


def set_attributes(node: h5py.HLObject, attributes: Mapping[str, Any]) -> None:
    """Write every entry of ``attributes`` on an h5py group or dataset."""
    for key, value in attributes.items():
        node.attrs[key] = to_attribute(value)


def temporary_beside(target: Path) -> tuple[int, str]:
    """Create the owned temporary ``NAME.workbench-PID-XXXXXXXX.tmp`` beside ``target``.

    Returns the open descriptor and the name (:func:`tempfile.mkstemp`); the
    process id in the name lets :func:`owned_stale_temporary` tell a leftover of a
    killed process from the temporary of a run still writing into the same folder.
    """
    return tempfile.mkstemp(prefix=f"{target.name[:200]}{TEMPORARY_MARK}{os.getpid()}-",
                            suffix=TEMPORARY_SUFFIX, dir=target.parent)


def owned_stale_temporary(path: Path) -> bool:
    """True for a temporary of :func:`temporary_beside` whose process is gone."""
    name = path.name
    if not name.endswith(TEMPORARY_SUFFIX) or TEMPORARY_MARK not in name:
        return False
    pid_text = name.rsplit(TEMPORARY_MARK, 1)[1].split("-", 1)[0]
    if not (pid_text.isascii() and pid_text.isdigit()):
        return False
    pid = int(pid_text)
    if pid == os.getpid():
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return True
    except (PermissionError, OverflowError, ValueError):
        return False      # alive under another user, or not a process id at all: not ours to judge
    return False          # alive: a run still writing


def new_file_mode() -> int:
    """``0o666 & ~umask``: the mode ``open(path, "w")`` would give a new file (POSIX)."""
    mask = os.umask(0)      # reading the umask means setting it; put it back at once
    os.umask(mask)
    return 0o666 & ~mask


@contextlib.contextmanager
def atomic_file(path: str | os.PathLike[str]) -> Iterator[h5py.File]:
    """Open a new HDF5 file that appears at ``path`` only when complete.

    The file is built in memory (an HDF5 file image), then written under a
    temporary name beside ``path`` by plain ``os.write``, synced and renamed
    over ``path``.  A write that fails (full disk, file-size limit) is then an
    ordinary ``OSError`` raised here, reported as one line (InputError), and
    not a failure inside the HDF5 library.  On any exception (including
    ``KeyboardInterrupt``) the temporary file is removed and ``path`` is left
    as it was.  The root carries the project's conventions
    (:data:`equilibrium.conventions.CONVENTIONS`).
    """
    from equilibrium.conventions import CONVENTIONS
    from equilibrium.errors import InputError

    target = check_output_file(path, what=f"output file {path}")
    make_output_directory(target.parent)
    image = io.BytesIO()
    handle = h5py.File(image, "w")
    try:
        handle.attrs["conventions"] = CONVENTIONS
        yield handle
        handle.close()
    finally:
        if handle.id.valid:
            handle.close()
    try:
        fd, tmp_name = temporary_beside(target)
    except OSError as exc:
        raise InputError(f"cannot write in {target.parent}: {exc.strerror or exc}; "
                         "choose another path") from None
    try:
        try:
            os.fchmod(fd, new_file_mode())
            view = image.getbuffer()
            while view:
                view = view[os.write(fd, view):]
            os.fsync(fd)
        finally:
            os.close(fd)
        os.replace(tmp_name, target)
    except OSError as exc:
        raise InputError(f"cannot write {target} ({image.getbuffer().nbytes / 1e6:.3g} MB): "
                         f"{exc.strerror or exc}; free space or choose another path") from None
    finally:
        if os.path.exists(tmp_name):
            os.remove(tmp_name)
