"""The ``workbench`` command line.

Each subcommand lives in its own module under :mod:`workbench.commands`
and exposes ``register(subparsers)`` and ``run(args) -> int``.  This file
only dispatches and turns the packages' exceptions into exit codes:

====  ==========================================================
0     success (and every check within tolerance)
1     an unexpected internal error (a bug: please report it)
2     bad input: one line on stderr naming the problem
3     the computation ran but could not certify its answer
130   interrupted (Ctrl-C); nothing half-written is left behind
141   the reader of standard output went away (``| head``): the
      command stops quietly, as tools killed by SIGPIPE do (128 + 13)
====  ==========================================================
"""

from __future__ import annotations

import argparse
import contextlib
import importlib
import os
import sys
import warnings
from typing import Sequence

# Only the standard library at module level: main() limits the BLAS threads before numpy
# is loaded (the console script and ``python -m workbench`` import this module first).

#: subcommand name -> module; a module that is absent is simply not offered.
COMMAND_MODULES = {
    "equilibrium": "workbench.commands.equilibrium",
    "recurrence": "workbench.commands.recurrence",
    "zeros": "workbench.commands.zeros",
    "predict": "workbench.commands.predict",
    "hankel": "workbench.commands.hankel",
    "run": "workbench.commands.run",
    "sweep": "workbench.commands.sweep",
    "plot": "workbench.commands.plot",
    "show": "workbench.commands.show",
    "demo": "workbench.commands.demo",
}


class _Parser(argparse.ArgumentParser):
    """argparse that reports usage errors as one line and exit code 2."""

    def error(self, message: str) -> None:  # pragma: no cover - exercised via CLI tests
        hint = "see 'workbench --help'"
        if "expected one argument" in message:
            hint = "a value that starts with '-' must be attached with '=', e.g. --potential=-x^3+x^4 or --on=-1:1"
        self.exit(2, f"workbench: error: {message} ({hint})\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="workbench",
        description="Large-degree asymptotics of orthogonal polynomials: "
        "equilibrium measures, g-functions, model problems and direct polynomials.",
    )
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    sub.required = True
    for name, module_name in COMMAND_MODULES.items():
        try:
            module = importlib.import_module(module_name)
        except ModuleNotFoundError as exc:
            if exc.name == module_name:
                continue
            raise
        module.register(sub)
    return parser


def _one_line(exc: BaseException) -> str:
    """The message of ``exc`` on one line (the promise of exit codes 2 and 3)."""
    return " ".join(str(exc).split())


#: exit status when standard output is closed by its reader (128 + SIGPIPE, as the shell reports)
EXIT_BROKEN_PIPE = 141
#: exit status after SIGTERM (128 + SIGTERM, as the shell reports)
EXIT_TERMINATED = 143


def _silence_stdout() -> None:
    """Point the standard-output descriptor at /dev/null.

    After a broken pipe, Python would try once more to flush ``sys.stdout`` at
    exit and print "Exception ignored ... BrokenPipeError" (the recipe of the
    Python documentation, "Note on SIGPIPE", in the ``signal`` module).
    """
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)
    except (OSError, ValueError):  # stdout without a descriptor (embedded use): nothing to flush
        pass


def command_line_hint(exc: InputError) -> str:
    """How the input an InputError is about is written on the command line ('' when it names none).

    The numerical packages speak of the set and the parameters, not of options
    (``equilibrium.errors``); the command line adds its spelling here.
    """
    about = getattr(exc, "about", None)
    if about == "set":
        return " (the set is given as --on=a:b,c:d, e.g. --on=-1:1)"
    if about == "parameter":
        name = getattr(exc, "name", None) or "NAME"
        return f" (on the command line: --param {name}=VALUE)"
    return ""


#: BLAS/OpenMP thread variables the command sets for its own process (unless the user set them)
THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")


def _single_threaded_blas() -> contextlib.AbstractContextManager:
    """One BLAS thread for this process.

    The numerical work is many small dense problems; multi-threaded BLAS only adds
    contention (measured: a solve 3-4 times slower when another process holds a core).
    The thread pools read their variables when numpy is loaded, so they are set only
    when it is not loaded yet: then they hold for this process and the workers it
    starts, and the user's own settings win.  Called from Python with numpy already
    loaded (tests, a notebook), the environment is left alone; if threadpoolctl is
    installed the limit then applies for the duration of the command only.
    """
    if "numpy" not in sys.modules:
        for name in THREAD_VARIABLES:
            os.environ.setdefault(name, "1")
        return contextlib.nullcontext()
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:
        return contextlib.nullcontext()
    return threadpool_limits(limits=1, user_api="blas")


class Terminated(KeyboardInterrupt):
    """SIGTERM, raised where the process is, so it unwinds as Ctrl-C does.

    A KeyboardInterrupt subclass on purpose: every clean-up written for Ctrl-C
    (temporaries removed, the worker pool of a sweep shut down and its workers
    ended) runs for SIGTERM too, and no worker is left orphaned.
    """


def _raise_terminated(signum, frame):  # pragma: no cover - exercised through a subprocess
    raise Terminated()


@contextlib.contextmanager
def _sigterm_as_interrupt():
    """Handle SIGTERM like SIGINT for the duration of one command (main thread only)."""
    import signal
    import threading

    if threading.current_thread() is not threading.main_thread():
        yield
        return
    previous = signal.signal(signal.SIGTERM, _raise_terminated)
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)


def main(argv: Sequence[str] | None = None) -> int:
    with _single_threaded_blas(), _sigterm_as_interrupt():
        try:
            return _main(argv)
        except BrokenPipeError:
            # `workbench ... | head`: the reader has what it wanted; stop without a traceback.
            # Files are written atomically before anything is printed, so nothing is half-written.
            _silence_stdout()
            return EXIT_BROKEN_PIPE


def _main(argv: Sequence[str] | None) -> int:
    import numpy as np

    from equilibrium.errors import InputError, NumericalFailure

    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit:
        sys.stdout.flush()  # `workbench --help | head`: a broken pipe is handled by main
        raise
    try:
        with warnings.catch_warnings():
            # numpy reports floating-point overflow/invalid values as RuntimeWarnings on
            # stderr; every result carries its own checks (and is marked
            # unverified when they fail), so these reports would only break the
            # one-line contract of the exit codes
            warnings.filterwarnings("ignore", message=r".* encountered in ", category=RuntimeWarning)
            status = int(args.handler(args) or 0)
            sys.stdout.flush()  # a broken pipe shows here, inside main, not at interpreter exit
            return status
    except InputError as exc:
        print(f"workbench {args.command}: error: {_one_line(exc)}{command_line_hint(exc)}", file=sys.stderr)
        return 2
    except NumericalFailure as exc:
        print(f"workbench {args.command}: numerical failure: {_one_line(exc)}", file=sys.stderr)
        return 3
    except np.linalg.LinAlgError as exc:
        # a singular or non-convergent linear-algebra kernel: the answer cannot be certified
        print(f"workbench {args.command}: numerical failure: linear algebra failed "
              f"({_one_line(exc)}); the system is singular or too ill-conditioned", file=sys.stderr)
        return 3
    except Terminated:
        print(f"workbench {args.command}: terminated (SIGTERM)", file=sys.stderr)
        return EXIT_TERMINATED
    except KeyboardInterrupt:
        print(f"workbench {args.command}: interrupted", file=sys.stderr)
        return 130
    except MemoryError:
        print(f"workbench {args.command}: error: out of memory; try a smaller size", file=sys.stderr)
        return 2


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
