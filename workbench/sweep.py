"""Parameter sweeps: the equilibrium measure over a 1-D or 2-D grid of field parameters.

A sweep evaluates a *point function* (parameters -> small dict of numbers)
at every grid point, in parallel, and records each finished point at once in
an append-only journal (JSON lines, one per point, flushed as it arrives).
A rerun reads the journal and evaluates only the points not yet in it, so
an interrupted sweep resumes where it stopped; a torn last line (the
process was killed while writing it) is ignored.

Executors
---------
* a local process pool (:class:`concurrent.futures.ProcessPoolExecutor`,
  ``forkserver`` start method so that no thread state is forked).  A worker
  that dies (segfault, ``os._exit``, OOM kill) breaks the pool
  (:class:`~concurrent.futures.process.BrokenProcessPool`): the pool is
  rebuilt, tasks that had not started are resubmitted as they were, and the
  points of tasks that had started are rerun one at a time in a one-process
  pool, so the culprit is isolated; a point whose worker died
  ``retries + 1`` times is recorded as failed and the sweep completes.
* a Dask distributed cluster, when a scheduler address is given; Dask
  itself reschedules tasks of a lost worker and reports
  ``KilledWorker`` after its allowed failures, which is recorded the same way.

A point function raising an exception does not stop the sweep: the point
is recorded with ``{"error": message, "error_kind": class name}`` (a
deterministic failure is not retried).  The journal holds the case digest
in its first line; a journal of another case is set aside, never mixed in.
"""

from __future__ import annotations

import concurrent.futures as cf
import functools
import json
import math
import multiprocessing
import os
import re
import signal
import sys
import time
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable, Mapping, Sequence

import numpy as np

from equilibrium.errors import InputError

__all__ = [
    "SweepOutcome",
    "Journal",
    "grid_points",
    "run_points",
    "equilibrium_point",
    "equilibrium_point_fast",
    "sweep_case",
    "CaseSweep",
    "field_payload",
    "assemble",
]

PointFunction = Callable[[Mapping[str, float]], Mapping[str, Any]]


# ----------------------------------------------------------------------- journal
class Journal:
    """Append-only record of finished points (JSON lines) tied to a case digest."""

    def __init__(self, path: str | os.PathLike[str], digest: str,
                 valid: Callable[[Mapping[str, Any]], bool] | None = None) -> None:
        self.path = Path(path)
        self.digest = digest
        self.valid = valid
        self.rejected = 0  # records that were not used (malformed): their points are computed again
        self.results: dict[int, dict[str, Any]] = {}
        self._handle = None
        self._last_sync = 0.0
        self._load()

    def _load(self) -> None:
        """Read the journal; every record is checked, and a malformed one is not used.

        The journal is a file anyone can edit: a line that is not UTF-8 JSON, an id that
        is not a non-negative integer (``"abc"``, ``1.5``, NaN, ``true``), a result that is
        not an object or that ``valid`` refuses, all leave their point to be computed again.
        """
        from equilibrium.errors import InputError

        if not self.path.exists() and not self.path.is_symlink():
            return
        if not self.path.is_file():
            raise InputError(f"the sweep journal {self.path} is not a regular file; move it away "
                             "or choose another output folder")
        try:
            lines = self.path.read_bytes().splitlines()
        except OSError as exc:
            raise InputError(f"cannot read the sweep journal {self.path}: {exc.strerror or exc}") from None
        header = _parse_line(lines[0]) if lines else None
        if not header or header.get("digest") != self.digest:
            # another case (or a damaged header): keep it aside, start afresh
            self.path.replace(self.path.with_suffix(f".other-{int(time.time())}.jsonl"))
            return
        for line in lines[1:]:
            record = _parse_line(line)
            point_id = None if record is None else record.get("id")
            result = None if record is None else record.get("result")
            if (type(point_id) is int and 0 <= point_id < 2**53 and isinstance(result, dict)
                    and (self.valid is None or self.valid(result))):
                self.results[point_id] = result
            elif line.strip():
                self.rejected += 1

    def open(self) -> None:
        new = not self.path.exists()
        self.path.parent.mkdir(parents=True, exist_ok=True)
        if not new:
            # a torn last line (SIGKILL mid-write) must not glue onto the next record
            with open(self.path, "rb") as stream:
                stream.seek(0, os.SEEK_END)
                if stream.tell() > 0:
                    stream.seek(-1, os.SEEK_END)
                    torn = stream.read(1) != b"\n"
                else:
                    torn = False
        self._handle = open(self.path, "a", encoding="utf-8")
        if new:
            self._write({"digest": self.digest, "format": "workbench-sweep-journal"})
        elif torn:
            self._handle.write("\n")

    def _write(self, record: Mapping[str, Any]) -> None:
        assert self._handle is not None
        self._handle.write(json.dumps(record, default=_json_default) + "\n")
        self._handle.flush()
        now = time.monotonic()
        if now - self._last_sync > 2.0:  # bound the fsync cost; flush already survives SIGKILL
            os.fsync(self._handle.fileno())
            self._last_sync = now

    def record(self, point_id: int, result: Mapping[str, Any]) -> None:
        self.results[int(point_id)] = dict(result)
        self._write({"id": int(point_id), "result": result})

    def close(self) -> None:
        if self._handle is not None:
            self._handle.flush()
            os.fsync(self._handle.fileno())
            self._handle.close()
            self._handle = None


def _parse_line(line: bytes) -> dict[str, Any] | None:
    try:
        value = json.loads(line.decode("utf-8"))
    except (ValueError, RecursionError):  # not UTF-8, not JSON, nested too deep
        return None
    return value if isinstance(value, dict) else None


def _number(value: Any) -> bool:
    # NaN is a recorded value (a quantity a point could not give), not damage
    return type(value) in (int, float)


def valid_point_result(result: Mapping[str, Any]) -> bool:
    """Whether a journal record is a result of :func:`sweep_point` (or its recorded failure)."""
    if "error" in result:
        return isinstance(result["error"], str)
    bands = result.get("bands")
    if type(bands) is not int or not 1 <= bands <= 10_000:
        return False
    support = result.get("support", [])
    omega = result.get("omega", [])
    return (isinstance(support, list) and len(support) == bands
            and all(isinstance(p, list) and len(p) == 2 and all(_number(e) or e is None for e in p)
                    for p in support)
            and isinstance(omega, list) and len(omega) <= bands and all(_number(w) for w in omega)
            and all(_number(result[k]) for k in ("lagrange", "energy") if k in result)
            and all(type(result[k]) is bool for k in ("verified", "regular", "positive") if k in result))


def _json_default(value: Any) -> Any:
    if isinstance(value, np.ndarray):
        return value.tolist()
    if isinstance(value, np.generic):
        return value.item()
    return str(value)


# ------------------------------------------------------------------ point running
@dataclass(frozen=True)
class SweepOutcome:
    """What a call of :func:`run_points` did."""

    results: dict[int, dict[str, Any]]
    computed: int          # points evaluated in this call
    reused: int            # points taken from the journal
    failed: int            # points recorded with an error
    retried: int           # resubmissions after a worker died
    complete: bool         # every point has a result
    seconds: float


_STARTED = None  # worker-process side: queue on which a worker announces each task it starts


def _worker_init(started) -> None:
    # Ctrl-C goes to the whole process group; the parent alone decides what to do
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    global _STARTED
    _STARTED = started


def _evaluate_chunk(function: PointFunction,
                    chunk: Sequence[tuple[int, Mapping[str, float]]]) -> list[tuple[int, dict]]:
    if _STARTED is not None and chunk:
        _STARTED.put(chunk[0][0])  # lets the parent tell the culprit of a dead worker
    out = []
    for point_id, params in chunk:
        try:
            result = dict(function(params))
        except Exception as exc:  # recorded per point: one bad point must not stop a sweep
            result = {"error": str(exc) or type(exc).__name__, "error_kind": type(exc).__name__}
        out.append((point_id, result))
    return out


def _chunks(items: Sequence[tuple[int, Mapping[str, float]]], size: int):
    return [list(items[i:i + size]) for i in range(0, len(items), size)]


def run_points(
    points: Sequence[Mapping[str, float]],
    function: PointFunction,
    journal: Journal,
    *,
    workers: int | None = None,
    scheduler: str | None = None,
    chunk_size: int | None = None,
    retries: int = 2,
    budget: int | None = None,
    progress: bool = True,
    description: str = "sweep",
    scheduler_timeout: float = 10.0,
) -> SweepOutcome:
    """Evaluate ``function`` at every point not yet in ``journal``.

    Parameters
    ----------
    points : sequence of parameter dicts; the point id is the position.
    function : picklable callable ``params -> dict`` (top-level function or partial).
    journal : where finished points are recorded (and found on a rerun).
    workers : processes of the local pool (default: the number of CPUs).
    scheduler : address ``tcp://host:port`` of a Dask scheduler; overrides the pool.
    chunk_size : points per task (default: about 8 tasks per worker, at most 64 points).
    retries : resubmissions of a point after its worker died.
    budget : stop after this many new points (used to test resuming).
    progress : show a tqdm bar on stderr (only when stderr is a terminal).
    scheduler_timeout : seconds to wait for the Dask scheduler before giving up.
    """
    start = time.perf_counter()
    todo = [(i, dict(p)) for i, p in enumerate(points) if i not in journal.results]
    reused = len(points) - len(todo)
    if budget is not None:
        todo = todo[:max(0, int(budget))]
    workers = max(1, int(workers or os.cpu_count() or 1))
    if chunk_size is None:
        chunk_size = int(min(64, max(1, math.ceil(len(todo) / (8 * workers)))))
    bar = _progress_bar(len(points), reused, progress, description)
    counters = {"computed": 0, "failed": 0, "retried": 0}

    def record(point_id: int, result: dict[str, Any]) -> None:
        journal.record(point_id, result)
        counters["computed"] += 1
        counters["failed"] += "error" in result
        bar.update(1)

    journal.open()
    try:
        if todo:
            if scheduler:
                counters["retried"] += _run_dask(todo, function, scheduler, chunk_size, record,
                                                 scheduler_timeout)
            else:
                _run_pool(todo, function, workers, chunk_size, retries, record, counters)
    finally:
        journal.close()
        bar.close()
    return SweepOutcome(
        results=dict(journal.results),
        computed=counters["computed"],
        reused=reused,
        failed=sum("error" in journal.results.get(i, {}) for i in range(len(points))),
        retried=counters["retried"],
        complete=all(i in journal.results for i in range(len(points))),
        seconds=time.perf_counter() - start,
    )


def _run_pool(todo, function, workers, chunk_size, retries, record, counters) -> None:
    """Bulk rounds on ``workers`` processes, then the suspects of dead workers one by one.

    When a worker dies the executor terminates every worker and fails every
    pending task.  Tasks that had not started are innocent: they go to the
    next bulk round unchanged.  Tasks that had started and not finished are
    suspects: each of their points is then run alone in a one-process pool,
    where a death can only be that point's; it is retried ``retries`` times
    and then recorded as failed.
    """
    context = _pool_context()
    pending = _chunks(todo, chunk_size)
    suspects: list[tuple[int, Mapping[str, float]]] = []
    while pending:
        lost, started = _pool_round(context, workers, pending, function, record)
        pending = []
        if lost and not any(chunk[0][0] in started for chunk in lost):
            started = {chunk[0][0] for chunk in lost}  # no announcement arrived: suspect all
        for chunk in lost:
            if chunk[0][0] in started:
                suspects.extend(chunk)
            else:
                pending.append(chunk)
        counters["retried"] += sum(len(chunk) for chunk in lost)
    for point in suspects:
        for attempt in range(retries + 1):
            lost, _ = _pool_round(context, 1, [[point]], function, record)
            if not lost:
                break
            if attempt < retries:
                counters["retried"] += 1
        else:
            record(point[0], {"error": f"worker died {retries + 1} times at this point",
                              "error_kind": "WorkerDied"})


def _pool_context():
    """``forkserver`` context whose server has the solver imported already.

    Workers fork from the server, so no thread state of the parent (progress
    bar, Dask) is ever forked, and each worker starts with equilibrium and
    its expression parser loaded instead of importing them itself.
    """
    context = multiprocessing.get_context("forkserver")
    context.set_forkserver_preload(["workbench.sweep", "equilibrium", "equilibrium.expression"])
    return context


def _pool_round(context, workers, chunks, function, record):
    """Run ``chunks`` on a fresh pool; return the chunks lost to a dead worker and the started ids."""
    started_queue = context.SimpleQueue()
    pool = cf.ProcessPoolExecutor(max_workers=workers, mp_context=context,
                                  initializer=_worker_init, initargs=(started_queue,))
    lost = []
    try:
        futures = {pool.submit(_evaluate_chunk, function, chunk): chunk for chunk in chunks}
        for future in cf.as_completed(futures):
            try:
                finished = future.result()
            except BrokenProcessPool:
                lost.append(futures[future])
                continue
            for point_id, result in finished:
                record(point_id, result)
    except BaseException:
        # Ctrl-C or SIGTERM (workbench.cli.Terminated): the workers ignore SIGINT and would finish
        # their chunk, or outlive the parent; end them here so none is left orphaned
        processes = list((getattr(pool, "_processes", None) or {}).values())
        pool.shutdown(wait=False, cancel_futures=True)
        for process in processes:
            if process.is_alive():
                process.terminate()
        for process in processes:
            process.join(timeout=5)
        raise
    pool.shutdown(wait=True, cancel_futures=True)
    started = set()
    if lost:
        while not started_queue.empty():
            started.add(started_queue.get())
    started_queue.close()
    return lost, started


_SCHEDULER_ADDRESS = re.compile(r"tcp://(\[[0-9A-Fa-f:.]+\]|[A-Za-z0-9][A-Za-z0-9.\-]*):([0-9]{1,5})")


def parse_scheduler_address(address: str) -> tuple[str, int]:
    """``tcp://HOST:PORT`` → (host, port); anything else is an InputError naming the form."""
    match = _SCHEDULER_ADDRESS.fullmatch(address.strip())
    if not match or not 1 <= int(match.group(2)) <= 65535:
        raise InputError(f"--scheduler {address[:80]!r}: give an address tcp://HOST:PORT with a port "
                         "1..65535, e.g. tcp://127.0.0.1:8786 (IPv6 in brackets: tcp://[::1]:8786)")
    return match.group(1).strip("[]"), int(match.group(2))


def check_scheduler(address: str, timeout: float) -> None:
    """Refuse (InputError) an address that does not answer as a Dask scheduler within ``timeout``.

    A Dask scheduler speaks first: on a new connection it sends its handshake, a frame
    header of little-endian 64-bit lengths (a few dozen bytes in all) and a msgpack map
    naming ``compression`` (measured on distributed's own Scheduler).  A peer that says
    nothing (an HTTP server, a closed port behind a firewall), or announces a length
    beyond 1 MB, is refused before Dask's client, which would wait or try to allocate what
    the peer announced.
    """
    import socket
    import struct

    if "://" in address and not address.startswith("tcp://"):
        return  # another transport (inproc:// of an in-process cluster, tls://): Dask's own client
    host, port = parse_scheduler_address(address)
    reason = None
    try:
        with socket.create_connection((host, port), timeout=timeout) as connection:
            connection.settimeout(timeout)
            head = _receive(connection, 8)
            total = struct.unpack("<Q", head)[0] if len(head) == 8 else None
            if total is None or not 8 < total <= 2**20:
                reason = "it did not send a Dask handshake"
            elif b"compression" not in _receive(connection, total):
                reason = "its first message is not a Dask handshake"
    except socket.timeout:
        reason = f"no answer within {timeout:g} s"
    except OSError as exc:
        reason = exc.strerror or str(exc)
    if reason:
        raise InputError(f"cannot reach the Dask scheduler at {address} ({reason}); start one with "
                         "'dask scheduler' and give its tcp://HOST:PORT")


def _receive(connection, size: int) -> bytes:
    data = b""
    while len(data) < size:
        chunk = connection.recv(size - len(data))
        if not chunk:
            break
        data += chunk
    return data


def _run_dask(todo, function, scheduler, chunk_size, record, timeout) -> int:
    """Run the chunks on a Dask cluster; return the points resubmitted after a worker was lost.

    Dask reschedules the tasks of a lost worker by itself (its nanny restarts the
    worker); the scheduler's transition log shows each extra start of a task.
    """
    try:
        from distributed import Client, as_completed
        from distributed.scheduler import KilledWorker
    except ImportError:  # pragma: no cover - dask is a declared dependency
        raise InputError("--scheduler needs dask.distributed; install it with "
                         "'pip install dask[distributed]'") from None
    check_scheduler(scheduler, timeout)
    try:
        client = Client(scheduler, timeout=f"{timeout}s", set_as_default=False)
    except (OSError, TimeoutError, ValueError) as exc:
        raise InputError(f"cannot reach the Dask scheduler at {scheduler} ({exc}); start one "
                         f"with 'dask scheduler' and give its tcp://HOST:PORT") from None
    try:
        chunks = _chunks(todo, chunk_size)
        futures = [client.submit(_evaluate_chunk, function, chunk, pure=False) for chunk in chunks]
        by_key = {f.key: chunk for f, chunk in zip(futures, chunks)}
        with client.as_current():
            for future in as_completed(futures):
                try:
                    finished = future.result()
                except KilledWorker as exc:
                    finished = [(pid, {"error": f"Dask worker lost repeatedly: {exc}",
                                       "error_kind": "WorkerDied"})
                                for pid, _ in by_key[future.key]]
                for point_id, result in finished:
                    record(point_id, result)
        starts = _dask_task_starts(client, list(by_key))
        return sum(max(0, starts.get(key, 1) - 1) * len(chunk) for key, chunk in by_key.items())
    finally:
        client.close()


def _dask_task_starts(client, keys) -> dict:
    """How many times the scheduler sent each task to a worker (from its transition log).

    The log is bounded (``distributed.admin.low-level-log-length``); a scheduler
    that refuses ``run_on_scheduler`` gives no count, reported as no resubmission.
    """
    def starts(dask_scheduler, keys):
        counts: dict = {}
        for entry in dask_scheduler.story(*keys):
            if entry[2] == "processing":  # (key, start state, finish state, ...)
                counts[entry[0]] = counts.get(entry[0], 0) + 1
        return counts

    try:
        return dict(client.run_on_scheduler(starts, keys=keys))
    except Exception:  # noqa: BLE001 - a count we cannot get must not fail a finished sweep
        return {}


def _progress_bar(total: int, initial: int, enabled: bool, description: str):
    from tqdm import tqdm

    return tqdm(total=total, initial=initial, desc=description, unit="pt", file=sys.stderr,
                disable=not enabled or not sys.stderr.isatty(), dynamic_ncols=True, leave=False)


# ------------------------------------------------------------------ grid and point
def grid_points(axes: Sequence[tuple[str, np.ndarray]]) -> list[dict[str, float]]:
    """Points of the tensor grid, first axis slowest (C order, like ``np.meshgrid(indexing='ij')``)."""
    if len(axes) == 1:
        name, values = axes[0]
        return [{name: float(v)} for v in values]
    (n1, v1), (n2, v2) = axes
    return [{n1: float(a), n2: float(b)} for a in v1 for b in v2]


def field_payload(case) -> dict[str, Any]:
    """The picklable description of a case that :func:`equilibrium_point` needs."""
    return {
        "expression": case.field.expression,
        "parameters": dict(case.field.parameters),
        "intervals": [list(pair) for pair in case.set.intervals],
        "signed": case.set.signed,
    }


@functools.lru_cache(maxsize=4)
def _interval_set(intervals: tuple[tuple[float, float], ...]):
    from equilibrium import IntervalSet

    if intervals == ((-math.inf, math.inf),):
        return IntervalSet.real_line()
    return IntervalSet(list(intervals))


def equilibrium_point(payload: Mapping[str, Any], params: Mapping[str, float]) -> dict[str, Any]:
    """Equilibrium measure at one grid point: bands, support, Ω, ℓ, energy, verification."""
    from equilibrium import Field, solve, solve_signed

    values = dict(payload["parameters"])
    values.update(params)
    field_ = Field.from_expression(payload["expression"], parameters=values)
    on = _interval_set(tuple(tuple(p) for p in payload["intervals"]))
    mu = (solve_signed if payload["signed"] else solve)(field_, on=on, on_failure="mark")
    return _measure_summary(mu)


def assemble(results: Mapping[int, Mapping[str, Any]], shape: tuple[int, ...]) -> dict[str, np.ndarray]:
    """Grids of the recorded quantities (NaN / -1 where a point failed)."""
    size = int(np.prod(shape))
    max_bands = max([len(r.get("support", [])) for r in results.values()] + [1])
    bands = np.full(size, -1, dtype=np.int64)
    lagrange = np.full(size, np.nan)
    energy = np.full(size, np.nan)
    verified = np.zeros(size, dtype=bool)
    regular = np.zeros(size, dtype=bool)
    positive = np.zeros(size, dtype=bool)
    support = np.full((size, max_bands, 2), np.nan)
    omega = np.full((size, max(1, max_bands - 1)), np.nan)
    errors = np.full(size, "", dtype=object)
    for i in range(size):
        r = results.get(i)
        if r is None:
            errors[i] = "not computed"
            continue
        if "error" in r:
            errors[i] = f"{r.get('error_kind', 'Error')}: {r['error']}"
            continue
        bands[i] = r["bands"]
        lagrange[i] = r.get("lagrange", np.nan)
        energy[i] = r.get("energy", np.nan)
        verified[i] = r.get("verified", False)
        regular[i] = r.get("regular", False)
        positive[i] = r.get("positive", True)  # journals written before 'positive' held positive measures
        for j, band in enumerate(r.get("support", [])):
            support[i, j] = band
        for j, w in enumerate(r.get("omega", [])):
            omega[i, j] = w
    return {
        "bands": bands.reshape(shape),
        "lagrange": lagrange.reshape(shape),
        "energy": energy.reshape(shape),
        "verified": verified.reshape(shape),
        "regular": regular.reshape(shape),
        "positive": positive.reshape(shape),
        "support": support.reshape(shape + (max_bands, 2)),
        "omega": omega.reshape(shape + (omega.shape[1],)),
        "errors": errors.reshape(shape),
    }


# ---------------------------------------------------------------- transition curves
def transition_edges(bands: np.ndarray) -> list[tuple[int, tuple[int, ...]]]:
    """Grid edges across which the number of bands changes: ``(axis, index of the lower end)``.

    Both ends must have a result (band count >= 1).  The order is deterministic (axis
    first, then C order), so a journal of located transitions can be matched to it.
    """
    edges = []
    for axis in range(bands.ndim):
        lower = np.moveaxis(bands, axis, 0)[:-1]
        upper = np.moveaxis(bands, axis, 0)[1:]
        crossing = (lower >= 1) & (upper >= 1) & (lower != upper)
        for index in zip(*np.nonzero(np.moveaxis(crossing, 0, axis))):
            edges.append((axis, tuple(int(i) for i in index)))
    return edges


def transition_point(payload: Mapping[str, Any], task: Mapping[str, Any]) -> dict[str, Any]:
    """Locate the transition on one grid edge (:func:`equilibrium.transitions.locate_transition`).

    ``task`` holds the varying parameter (``name``, ``lower``, ``upper``) and the fixed
    values of the others (``fixed``).  A bracket of one grid cell needs few continuation
    steps; the parameter is located to 1e-9 of the cell.
    """
    from equilibrium.transitions import locate_transition

    on = _interval_set(tuple(tuple(p) for p in payload["intervals"]))

    def family(value: float):
        values = dict(payload["parameters"])
        values.update(task["fixed"])
        values[task["name"]] = float(value)
        return _fast_field(payload, values)

    lower, upper = float(task["lower"]), float(task["upper"])
    found = locate_transition(family, lower, upper, on=on, tolerance=1e-9 * (upper - lower), steps=2)
    return {"edge": task["edge"], "parameter": found.parameter, "bands_before": found.bands_before,
            "bands_after": found.bands_after, "kind": found.kind, "evaluations": found.evaluations}


def locate_transitions(case, axes, bands: np.ndarray, directory: Path, *, workers=None, scheduler=None,
                       retries: int = 2, progress: bool = True) -> tuple[dict[str, np.ndarray], dict[str, int]]:
    """Transition parameters on every grid edge where the band count changes (journalled, resumable).

    Returns one array per axis, ``transition_<name>`` (the axis one shorter, NaN where the
    count does not change or the location failed), and the counts located / failed.
    """
    edges = transition_edges(bands)
    names = [name for name, _ in axes]
    tasks = []
    for axis, index in edges:
        name, values = axes[axis]
        fixed = {names[k]: float(axes[k][1][index[k]]) for k in range(len(axes)) if k != axis}
        tasks.append({"edge": [axis, *index], "name": name, "lower": float(values[index[axis]]),
                      "upper": float(values[index[axis] + 1]), "fixed": fixed})
    journal = Journal(directory / "transitions.jsonl", case.digest)
    # a journal written for another edge list (the grid was recomputed) is not mixed in
    if any(journal.results.get(i, {}).get("edge", task["edge"]) != task["edge"]
           for i, task in enumerate(tasks)):
        journal.path.unlink()
        journal = Journal(directory / "transitions.jsonl", case.digest)
    outcome = run_points(tasks, functools.partial(transition_point, field_payload(case)), journal,
                         workers=workers, scheduler=scheduler, retries=retries, progress=progress,
                         description=f"{case.name}: transitions")
    located = {}
    for axis, (name, _) in enumerate(axes):
        shape = list(bands.shape)
        shape[axis] -= 1
        located[name] = np.full(shape, np.nan)
    failed = 0
    for i, (axis, index) in enumerate(edges):
        result = outcome.results.get(i, {})
        if "parameter" in result:
            located[axes[axis][0]][index] = float(result["parameter"])
        else:
            failed += 1
    return located, {"edges": len(edges), "located": len(edges) - failed, "failed": failed}


# ---------------------------------------------------------------- sweep of a case
def _fast_field(payload: Mapping[str, Any], values: Mapping[str, float]):
    """Field of the payload's expression at ``values``.

    A polynomial V is rebuilt from its coefficients (``Field.from_coefficients``),
    which skips the symbolic derivatives ``Field.from_expression`` computes;
    the coefficients come from the same parser, so the field is the same.
    """
    from equilibrium import Field
    from equilibrium.expression import parse_expression

    expression = parse_expression(payload["expression"], dict(values))
    coefficients = expression.polynomial_coefficients()
    if coefficients is not None:
        return Field.from_coefficients(coefficients)
    return Field.from_expression(payload["expression"], parameters=dict(values))


#: per worker process: the last measure computed, a warm start for the next grid point.
#: ``solve(..., guess=...)`` returns the same answer with or without it (it only saves time).
_WARM_START: dict[str, Any] = {}


def equilibrium_point_fast(payload: Mapping[str, Any], params: Mapping[str, float]) -> dict[str, Any]:
    """:func:`equilibrium_point` with the field built by :func:`_fast_field` and a warm start."""
    from equilibrium import solve, solve_signed

    values = dict(payload["parameters"])
    values.update(params)
    field_ = _fast_field(payload, values)
    on = _interval_set(tuple(tuple(p) for p in payload["intervals"]))
    if payload["signed"]:
        mu = solve_signed(field_, on=on, on_failure="mark")
    else:
        key = json.dumps([payload["expression"], payload["intervals"]], default=str)
        mu = solve(field_, on=on, guess=_WARM_START.get(key), on_failure="mark")
        _WARM_START.clear()
        _WARM_START[key] = mu
    return _measure_summary(mu)


#: what a sweep records of each point's measure: these keys of :meth:`EquilibriumMeasure.to_dict`
POINT_KEYS = ("bands", "support", "omega", "masses", "lagrange", "energy", "verified", "regular", "positive")


def _measure_summary(mu) -> dict[str, Any]:
    data = mu.to_dict()
    return {key: data[key] for key in POINT_KEYS}


@dataclass(frozen=True)
class CaseSweep:
    """Files and counts of :func:`sweep_case`."""

    path: Path | None
    journal: Path
    outcome: SweepOutcome
    figures: Mapping[str, list[Path]]
    shape: tuple[int, ...]


def _refuse_field_refused_at_every_corner(case, axes) -> None:
    """InputError when the field is refused at every corner of the grid (a wrong case).

    A field refused at only some points (a non-confining corner of a phase
    diagram) is not an error of the case: those points are recorded as failed.
    The check costs a few thousand evaluations of V per corner.
    """
    import itertools

    from equilibrium.search import check_field

    on = case.build_set()
    names = [name for name, _ in axes]
    first = None
    for corner in dict.fromkeys(itertools.product(*[(v[0], v[-1]) for _, v in axes])):
        values = {name: float(v) for name, v in zip(names, corner)}
        try:
            check_field(case.build_field(values), on)
            return
        except InputError as exc:
            first = first or (values, exc)
    if first is not None:
        values, exc = first
        where = ", ".join(f"{k} = {v:g}" for k, v in values.items())
        raise InputError(f"{case.source} [field] on [set]: refused at every corner of the [sweep] grid "
                         f"(e.g. {where}): {exc}")


def sweep_case(case, out: str | os.PathLike[str] | None = None, *, workers: int | None = None,
               scheduler: str | None = None, budget: int | None = None, retries: int = 2,
               progress: bool = True, draw: bool | None = None,
               function: PointFunction | None = None) -> CaseSweep:
    """Run the ``[sweep]`` grid of ``case``: journal, then ``sweep.h5`` and the phase diagram.

    The HDF5 file is written (atomically) only when every point has a result.
    """
    from workbench.hdf5 import check_output_directory, make_output_directory
    from workbench.results import Group, provenance, remove_stale_temporaries, write_group_file

    if case.sweep is None:
        raise InputError(f"{case.source} has no [sweep] table; add one with [[sweep.axis]] "
                         f"tables (name, start, stop, num) or use 'workbench run'")
    directory = Path(case.output_directory(out))
    check_output_directory(directory)
    axes = [(axis.name, axis.values()) for axis in case.sweep.axes]
    if function is None:
        _refuse_field_refused_at_every_corner(case, axes)
    make_output_directory(directory)
    remove_stale_temporaries(directory)
    points = grid_points(axes)
    custom_function = function is not None
    if function is None:
        function = functools.partial(equilibrium_point_fast, field_payload(case))
    journal = Journal(directory / "points.jsonl", case.digest, valid=valid_point_result)
    outcome = run_points(points, function, journal, workers=workers, scheduler=scheduler,
                         budget=budget, retries=retries, progress=progress,
                         description=f"{case.name}: sweep")
    if not outcome.complete:
        return CaseSweep(None, journal.path, outcome, {}, case.sweep.shape)

    grids = assemble(outcome.results, case.sweep.shape)
    tree = Group()
    tree.attrs.update(provenance(case.text, case.source, case.parameters(),
                                 {"sweep": outcome.seconds}, kind="sweep"))
    tree.attrs.update({"format": "workbench-sweep", "format_version": 1, "case_name": case.name,
                       "axes": ",".join(a.name for a in case.sweep.axes),
                       "points": len(points), "failed_points": outcome.failed,
                       "executor": scheduler or f"process pool ({workers or os.cpu_count()} workers)"})
    grid = tree.group("grid")
    grid.attrs["description"] = ("equilibrium measure over the parameter grid (first axis slowest); "
                                 "-1 / NaN where a point failed (see 'errors')")
    for name, values in axes:
        grid.add(f"axis_{name}", values, f"grid values of the parameter {name}")
    grid.add("bands", grids["bands"], "number of bands of mu_V (-1: failed)")
    wanted = set(case.sweep.quantities)
    described = {
        "lagrange": "equilibrium constant ell",
        "energy": "energy I_V(mu_V)",
        "omega": "Omega_j = mu([a_{j+1}, b_k]) (last axis j; NaN: no such gap)",
        "support": "bands [a_j, b_j] (axis -2: j, axis -1: a/b; NaN: none)",
    }
    for key, text in described.items():
        if key in wanted:
            grid.add(key, grids[key], text)
    grid.add("verified", grids["verified"], "checks within tolerance")
    grid.add("regular", grids["regular"], "measure regular (no singular point)")
    grid.add("positive", grids["positive"], "density >= 0 on every band (false: a signed measure "
                                            "negative somewhere, no model of orthogonal polynomials)")
    grid.add("errors", grids["errors"], "error message of a failed point ('' when fine)")
    if not case.set.signed and not custom_function:
        # the band count changes between grid points: locate each change on its grid edge, so
        # the phase diagram draws the transition curves through located points, not the grid
        t = time.perf_counter()
        located, counts = locate_transitions(case, axes, grids["bands"], directory, workers=workers,
                                             scheduler=scheduler, retries=retries, progress=progress)
        for name, values in located.items():
            grid.add(f"transition_{name}", values,
                     f"parameter {name} where the number of bands changes between neighbouring grid "
                     f"points along axis {name} (equilibrium.transitions.locate_transition; "
                     "NaN: no change there, or not located)")
        grid.attrs.update({"transition_edges": counts["edges"], "transitions_located": counts["located"],
                           "transitions_failed": counts["failed"]})
        tree.attrs["timings_s"] = json.dumps({"sweep": round(outcome.seconds, 4),
                                              "transitions": round(time.perf_counter() - t, 4)})
    # the grid axes are the dimension scales of every grid quantity (workbench.results)
    axis_names = tuple(f"axis_{a.name}" for a in case.sweep.axes)
    for key, item in grid.datasets.items():
        if key not in axis_names:
            item.dims = axis_names
    draw = case.figures.enabled if draw is None else draw
    figure_files: dict[str, list[Path]] = {}
    if draw:
        from workbench.figures import draw_all

        figure_files = draw_all(tree, directory / "figures", formats=case.figures.formats,
                                dpi=case.figures.dpi)
    tree.group("figures").attrs.update({"description": "figures drawn from this file",
                                        "drawn": sorted(figure_files) or "none"})
    path = directory / "sweep.h5"
    write_group_file(path, tree)
    return CaseSweep(path, journal.path, outcome, figure_files, case.sweep.shape)
