"""Options shared by the commands that take a field: --potential, --on, --param, --factor, --json, --out.

``add_field_options(parser)`` adds them; ``field_and_set_from_args(args)``
turns them into an :class:`equilibrium.Field` and an
:class:`equilibrium.IntervalSet`.  Text is parsed by the packages' own parsers
(never evaluated as code); every problem raises
:class:`equilibrium.errors.InputError` with one line.
"""

from __future__ import annotations

import argparse
import math
import re
from typing import Sequence

from equilibrium.errors import InputError
from equilibrium.field import Field
from equilibrium.sets import IntervalSet

_NAME = re.compile(r"^[A-Za-z_][A-Za-z_0-9]*$")
# ASCII digits only (\d would take full-width and other Unicode digits, which the expressions refuse)
_NUMBER = re.compile(r"^[+-]?([0-9]+(\.[0-9]*)?|\.[0-9]+)([eE][+-]?[0-9]+)?$")
_INTEGER = re.compile(r"^[+-]?[0-9]+$")


def add_field_options(parser: argparse.ArgumentParser, *, factor: bool = True, output: bool = False) -> None:
    """Add --potential, --on, --param (repeatable), --factor; with ``output=True`` also --json and --out.

    (--json/--out are separate, :func:`add_output_options`, because some commands
    define their own --json.)
    """
    parser.add_argument("--potential", metavar="EXPR",
                        help="external field V(x), e.g. 'x**4/4 - t*x**2/2' (may be omitted when --on is compact: V = 0)")
    parser.add_argument("--on", metavar="SET", help="the set Σ as a:b,c:d (empty end = infinity; default: the real line); write --on=-1:1")
    parser.add_argument("--param", metavar="NAME=VALUE", action="append", default=[],
                        help="value of a parameter in the expressions (repeatable)")
    if factor:
        parser.add_argument("--factor", metavar="EXPR",
                            help="n-independent factor h(x), e.g. '(1-x)^0.5*(1+x)^-0.5' or 'abs(x-0.2)^0.6'")
    if output:
        add_output_options(parser)


def add_output_options(parser: argparse.ArgumentParser) -> None:
    """Add --json (exactly one JSON object on stdout) and --out FILE.h5."""
    parser.add_argument("--json", action="store_true", help="print exactly one JSON object on stdout")
    parser.add_argument("--out", metavar="FILE.h5", help="also write the result to an HDF5 file")


def parse_parameters(items: Sequence[str]) -> dict[str, float]:
    """``["t=3", "c=-0.5"]`` → ``{"t": 3.0, "c": -0.5}``."""
    values: dict[str, float] = {}
    for item in items or ():
        if item.count("=") != 1:
            raise InputError(f"--param {item!r} must look like NAME=VALUE (e.g. --param t=3)")
        name, text = (s.strip() for s in item.split("="))
        if not _NAME.match(name):
            raise InputError(f"--param name {name!r} must be a name (letters, digits, _), e.g. t")
        if not _NUMBER.match(text):
            raise InputError(f"--param {name}: {text!r} is not a number in ASCII digits (e.g. --param {name}=1.5)")
        value = float(text)
        if not math.isfinite(value):
            raise InputError(f"--param {name}: {text!r} is not finite")
        if value == 0 and any(c in "123456789" for c in text.lower().partition("e")[0]):
            raise InputError(f"--param {name}: {text!r} underflows to 0 in double precision; "
                             "use numbers above 2.3e-308 in magnitude")
        if name in values:
            raise InputError(f"--param {name} is given twice")
        values[name] = value
    return values


def field_and_set_from_args(args: argparse.Namespace) -> tuple[Field, IntervalSet]:
    """The field and the set named on the command line (every --param must be used)."""
    parameters = parse_parameters(getattr(args, "param", []))
    text_on = getattr(args, "on", None)
    # an empty --on= is a mistake, not a request for the real line (IntervalSet.parse refuses it)
    on = IntervalSet.real_line() if text_on is None else IntervalSet.parse(text_on)
    from workbench.limits import check_intervals

    check_intervals(len(on.intervals), "--on")
    text = getattr(args, "potential", None)
    check_parameters_used(parameters, {"--potential": text, "--factor": getattr(args, "factor", None)})
    if text is None or not text.strip():
        if not on.is_compact:
            raise InputError("--potential is required unless --on names a compact set (then V = 0)")
        return Field.zero(), on
    from workbench.limits import check_expression

    check_expression(text, parameters, "--potential")
    return Field.from_expression(text, parameters=parameters), on


def factors_from_args(args: argparse.Namespace, on: IntervalSet) -> tuple:
    """The factor objects of ``--factor`` on ``on`` (``()`` when the option is not given).

    The text goes through the one factor grammar (:func:`equilibrium.weight.parse_factor`);
    an empty ``--factor=`` is refused like an empty ``--on=``, not read as h = 1.
    """
    text = args.factor
    if text is None:
        return ()
    from equilibrium.weight import parse_factor

    return parse_factor(text, parse_parameters(args.param), on)


def check_parameters_used(parameters: dict[str, float], texts: dict[str, str | None]) -> None:
    """Refuse a --param that no expression uses (a misspelt name would otherwise be ignored).

    ``texts`` maps the option name to its expression text (None: option not given).
    """
    if not parameters:
        return
    from equilibrium.expression import parse_expression

    used: set[str] = set()
    for text in texts.values():
        if text is not None and text.strip():
            used |= parse_expression(text, parameters).parameter_names
    unused = [name for name in parameters if name not in used]
    if unused:
        options = " or ".join(option for option, text in texts.items() if text is not None and text.strip())
        known = f"the names used are {', '.join(sorted(used))}" if used else "no parameter is used"
        raise InputError(f"--param {', '.join(unused)}: not used by {options or 'any expression'} ({known}); "
                         "remove it or correct its name")


def check_output(args: argparse.Namespace) -> None:
    """Refuse an unwritable --out FILE.h5 before anything is computed (InputError)."""
    if getattr(args, "out", None):
        from workbench.hdf5 import check_output_file

        check_output_file(args.out)


def positive_integer(text, name: str, minimum: int = 1) -> int:
    """An integer ≥ ``minimum`` from command-line text."""
    if text is None:
        raise InputError(f"{name} is required")
    token = str(text).strip()
    if not _INTEGER.match(token):
        raise InputError(f"{name} must be an integer, got {token!r}")
    value = int(token)
    if value < minimum:
        raise InputError(f"{name} = {value} must be >= {minimum}")
    from workbench.limits import check_degree

    check_degree(value, name)
    return value


def check_parallel_options(args: argparse.Namespace) -> None:
    """``--workers`` and ``--scheduler`` of run and sweep, checked before any work.

    At least one worker and at most the usable cores (:func:`workbench.limits.check_workers`;
    more processes than cores only contend), and a scheduler address of the form
    ``tcp://host:port`` (:func:`workbench.sweep.parse_scheduler_address`).
    """
    if args.workers is not None and args.workers < 1:
        raise InputError(f"--workers {args.workers} must be >= 1")
    if args.scheduler is not None:
        from workbench.sweep import parse_scheduler_address

        parse_scheduler_address(args.scheduler)
    elif args.workers is not None:
        from workbench.limits import check_workers, usable_cores

        check_workers(args.workers, usable_cores())
