"""Work done beside the main process on the second core: ``fork_call(function)`` runs ``function()``
in a forked child and hands its (pickled) value back.

Used where a run has independent pieces of serial Python work (the bulk zeros of the model stage
beside the rest of it, half of the figures beside the other half, the demo's table beside the
showcase).  The child is a copy of this process at the moment of the call, so it needs no imports,
no arguments shipped over and no start-up: a fork costs a few milliseconds, where a pool of fresh
interpreters (``workbench.sweep``) costs the imports again.

A fork is made only when it is safe and can help:

* the process has one thread (``threading.active_count() == 1``): no other thread's state (a
  held lock, a half-written buffer) can be copied into the child.  The direct stage's two
  discretisations run on a thread only inside one call, which has ended before any fork;
* ``os.fork`` exists (POSIX) and at least two cores are usable;
* ``WORKBENCH_FORK`` is not ``0`` (set it to run everything in the main process, e.g. to profile).

Otherwise :func:`fork_call` returns ``None`` and the caller does the work itself, as it does when
the child fails: :meth:`Forked.result` then returns ``None`` too, so that a failure is raised by
the main process with the same message as without the child.  The numbers do not depend on
where they were computed (the child runs the same code on a copy of the same objects).

The child ignores Ctrl-C (it goes to the whole process group; the main process decides), is
killed and reaped if the main process stops before reading its value (:meth:`Forked.cancel`, run
from a ``finally``) and is killed by the system if the main process dies (``PR_SET_PDEATHSIG``),
so no child outlives its caller.
"""

from __future__ import annotations

import os
import pickle
import signal
import sys
import threading
from typing import Any, Callable

from workbench.limits import usable_cores


def can_fork() -> bool:
    """True when :func:`fork_call` would fork (one thread, POSIX, two usable cores, not disabled)."""
    return (hasattr(os, "fork") and os.environ.get("WORKBENCH_FORK", "").strip() != "0"
            and threading.active_count() == 1 and usable_cores() >= 2)


class Forked:
    """A child computing a value; :meth:`result` waits for it (None: the child failed)."""

    def __init__(self, pid: int, reader: int):
        self._pid = pid
        self._reader = reader
        self._done = False

    def result(self) -> Any | None:
        """The child's value, or None if it failed (raised, was killed, sent nothing readable)."""
        if self._done:
            return None
        chunks = []
        try:
            with os.fdopen(self._reader, "rb") as stream:
                self._reader = -1
                chunks.append(stream.read())
        finally:
            status = self._reap()
        data = b"".join(chunks)
        if status != 0 or not data:
            return None
        try:
            ok, value = pickle.loads(data)
        except Exception:   # a truncated or garbled message: the caller computes it itself
            return None
        return value if ok else None

    def cancel(self) -> None:
        """Stop and reap the child if its value was not read (safe to call at any time)."""
        if self._done:
            return
        try:
            os.kill(self._pid, signal.SIGKILL)
        except ProcessLookupError:
            pass
        if self._reader >= 0:
            os.close(self._reader)
            self._reader = -1
        self._reap()

    def _reap(self) -> int:
        self._done = True
        while True:
            try:
                _, status = os.waitpid(self._pid, 0)
            except ChildProcessError:
                return -1
            except InterruptedError:  # pragma: no cover - retried by Python itself since 3.5
                continue
            return os.waitstatus_to_exitcode(status)


def _die_with(parent: int) -> None:
    """In the child: be killed when the parent dies, even by SIGKILL (Linux ``prctl``
    ``PR_SET_PDEATHSIG``; elsewhere the child ends when it finds the pipe closed)."""
    try:
        import ctypes

        ctypes.CDLL(None, use_errno=True).prctl(1, signal.SIGKILL)   # 1 = PR_SET_PDEATHSIG
    except (OSError, AttributeError):  # pragma: no cover - not Linux
        pass
    if os.getppid() != parent:   # the parent died before the request took effect
        os._exit(1)


def fork_call(function: Callable[[], Any]) -> Forked | None:
    """Start ``function()`` in a forked child; None when no fork is made (:func:`can_fork`).

    The child writes ``pickle((True, value))`` to a pipe and leaves with ``os._exit`` (no
    ``atexit`` handler, no flush of the parent's buffers, no ``finally`` of the caller runs
    in it); if ``function`` raises, it leaves with status 1 and the caller's
    :meth:`Forked.result` is None.
    """
    if not can_fork():
        return None
    sys.stdout.flush()   # buffered output must not be written twice (once by each process)
    sys.stderr.flush()
    reader, writer = os.pipe()
    parent = os.getpid()
    pid = os.fork()
    if pid == 0:  # the child
        status = 1
        try:
            os.close(reader)
            signal.signal(signal.SIGINT, signal.SIG_IGN)
            signal.signal(signal.SIGTERM, signal.SIG_DFL)
            _die_with(parent)
            data = pickle.dumps((True, function()), protocol=pickle.HIGHEST_PROTOCOL)
            view = memoryview(data)
            while view:
                view = view[os.write(writer, view):]
            status = 0
        except BaseException:  # noqa: BLE001 - nothing may escape into the caller's code
            status = 1
        finally:
            os._exit(status)
    os.close(writer)
    return Forked(pid, reader)
