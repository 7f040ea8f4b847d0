"""``workbench show FILE.h5``: a summary table of a run or sweep file (read only)."""

from __future__ import annotations

import argparse
import contextlib
import json
import math
import re
from pathlib import Path

import numpy as np

from equilibrium.errors import InputError


def text_list(value) -> list[str]:
    """:func:`workbench.results.text_list`, imported on first use (h5py costs ~50 ms of every
    command's start-up: the CLI registers this module for every command)."""
    from workbench.results import text_list as convert

    return convert(value)


def register(subparsers) -> None:
    parser = subparsers.add_parser(
        "show", help="print a summary table of a run or sweep file",
        description="Print what a workbench HDF5 file holds: the case, the equilibrium measure, "
                    "direct against predicted quantities at every n, and the fitted rates.")
    parser.add_argument("file", metavar="FILE.h5",
                        help="file written by 'workbench run', 'sweep' or 'equilibrium/recurrence/zeros --out'")
    parser.add_argument("--json", action="store_true",
                        help="print one JSON object: the summary, the fitted rates and the formulas")
    parser.set_defaults(handler=run)


def run(args: argparse.Namespace) -> int:
    from workbench.results import read_run

    path = Path(args.file)
    if not path.exists():
        raise InputError(f"{path} not found; give a file written by 'workbench run' or 'sweep'")
    tree = read_run(path)
    with malformed_file(path):
        if args.json:
            # json.dumps escapes control characters itself (ensure_ascii)
            print(json.dumps(summary_json(tree, str(path)), allow_nan=False))
            return 0
        lines = summary_lines(tree, str(path))
    print("\n".join(printable(line) for line in lines))
    return 0


@contextlib.contextmanager
def malformed_file(path):
    """Turn what a crafted file makes the readers raise (a text where an array belongs, bad JSON
    in an attribute, missing groups) into one line and exit code 2."""
    from workbench.results import READ_ERRORS

    try:
        yield
    except (*READ_ERRORS, IndexError, AttributeError) as exc:
        reason = " ".join(str(exc).split())[:160]
        raise InputError(f"{path} is not a well-formed workbench file ({type(exc).__name__}: {reason}); "
                         "give a file written by 'workbench run' or 'sweep'") from None


_CONTROL = re.compile(r"[\x00-\x08\x0b-\x1f\x7f-\x9f]")


def printable(text: str) -> str:
    """``text`` with control characters (terminal escape sequences among them) written as \\xNN."""
    return _CONTROL.sub(lambda m: f"\\x{ord(m.group()):02x}", text)


def _number(value):
    """A JSON number, or null for NaN and infinities (JSON has none)."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        return value
    if isinstance(value, (bool, np.bool_)):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    return v if math.isfinite(v) else None


def _numbers(values) -> list:
    return [_number(v) for v in np.asarray(values).ravel().tolist()]


def formula_entries(tree) -> dict:
    """``{name: {"n", "error", "slope", ...}}`` of the file's ``/comparison/formulas`` (empty when none)."""
    comp = tree.groups.get("comparison")
    node = comp.groups.get("formulas") if comp is not None else None
    if node is None:
        return {}
    n = _numbers(comp.get("n"))
    order = text_list(node.attrs.get("names")) or sorted(node.groups)
    out = {}
    for name in order:
        entry = node.groups[name]
        out[name] = {"n": n, "error": _numbers(entry.get("error")), "slope": _number(entry.attrs.get("slope")),
                     "stderr": _number(entry.attrs.get("stderr")), "quantity": entry.attrs.get("quantity"),
                     "target": entry.attrs.get("target"), "expression": entry.attrs.get("expression"),
                     "value": _numbers(entry.get("value")), "direct": _numbers(entry.get("direct")),
                     "verdict": entry.attrs.get("verdict"), "floor": _number(entry.attrs.get("floor")),
                     "expected_slope": _number(entry.attrs.get("expected_slope"))}
    return out


def summary_json(tree, name: str = "") -> dict:
    """The summary of a run (or sweep) file as one JSON-ready object.

    Keys: ``file``, ``format``, ``case``, ``parameters``, ``verified``, ``notes``, ``messages``,
    ``equilibrium`` (support, masses, omega, ell, energy, verified), ``comparison`` (every
    one-dimensional dataset of /comparison against ``n``), ``rates`` ({quantity: slope,
    stderr, intercept, points, note}) and ``formulas`` ({name: n, error, slope, ...}).
    NaN is written as null.
    """
    attrs = tree.attrs
    out = {"file": name, "format": attrs.get("format"), "command": attrs.get("command"),
           "case": attrs.get("case_name"),
           "title": attrs.get("case_title"), "workbench_version": attrs.get("workbench_version"),
           "created_utc": attrs.get("created_utc"),
           "parameters": json.loads(attrs.get("parameters", "{}") or "{}"),
           "verified": _number(attrs.get("verified")), "notes": text_list(attrs.get("notes")),
           "messages": text_list(attrs.get("messages"))}
    eq = tree.groups.get("equilibrium")
    if eq is not None:
        out["equilibrium"] = {"kind": eq.attrs.get("kind"),
                              "support": np.asarray(eq.get("support"), dtype=float).reshape(-1, 2).tolist(),
                              "masses": _numbers(eq.get("masses")), "omega": _numbers(eq.get("omega")),
                              "ell": _number(eq.attrs.get("lagrange")), "energy": _number(eq.attrs.get("energy")),
                              "verified": _number(eq.attrs.get("verified"))}
    comp = tree.groups.get("comparison")
    out["comparison"], out["rates"] = {}, {}
    if comp is not None and comp.has("n"):
        size = np.asarray(comp.get("n")).size
        out["comparison"] = {key: _numbers(item.data) for key, item in comp.datasets.items()
                             if np.asarray(item.data).ndim == 1 and np.asarray(item.data).size == size
                             and np.asarray(item.data).dtype.kind in "biuf"}
        rates = comp.groups.get("rates")
        for key, fit in (rates.groups.items() if rates is not None else ()):
            out["rates"][key] = {k: _number(fit.attrs[k]) for k in
                                 ("slope", "stderr", "intercept", "points", "max_n_times_error") if k in fit.attrs}
            if "note" in fit.attrs:
                out["rates"][key]["note"] = fit.attrs["note"]
    out["formulas"] = formula_entries(tree)
    return out


def _fmt(value, width: int = 11) -> str:
    try:
        v = float(value)
    except (TypeError, ValueError):
        return f"{str(value):>{width}}"
    if math.isnan(v):
        return f"{'-':>{width}}"
    if v != 0 and (abs(v) < 1e-3 or abs(v) >= 1e5):
        return f"{v:>{width}.3e}"
    return f"{v:>{width}.6f}"


def summary_lines(tree, name: str = "") -> list[str]:
    """Text summary of a run (or sweep) tree read back from a file."""
    from workbench.results import COMMAND_FORMATS

    attrs = tree.attrs
    origin = (f"written by '{attrs.get('command', '?')}'" if attrs.get("format") in COMMAND_FORMATS
              else f"of case '{attrs.get('case_name', '?')}'")
    lines = [f"{name}: {attrs.get('format', '?')} {origin} "
             f"(workbench {attrs.get('workbench_version', '?')}, {attrs.get('created_utc', '?')}"
             + (f", commit {str(attrs['git_commit'])[:10]}" if "git_commit" in attrs else "") + ")"]
    params = json.loads(attrs.get("parameters", "{}") or "{}")
    if params:
        lines.append(f"  {params.get('field', '')} on {params.get('set', '')}; {params.get('factor', '')}"
                     + ("  [reduced size]" if params.get("reduced") else ""))
    if attrs.get("format") == "workbench-sweep":
        return lines + _sweep_lines(tree)
    eq = tree.groups.get("equilibrium")
    if eq is not None:
        support = np.asarray(eq.get("support")).reshape(-1, 2)
        bands = ", ".join(f"[{a:.6f}, {b:.6f}]" for a, b in support)
        lines.append(f"  equilibrium ({eq.attrs.get('kind')}): {support.shape[0]} band(s) {bands}")
        lines.append(f"    masses {np.array2string(np.asarray(eq.get('masses')), precision=6)}"
                     f"  Omega {np.array2string(np.asarray(eq.get('omega')), precision=6)}"
                     f"  ell = {eq.attrs.get('lagrange'):.10g}  energy = {eq.attrs.get('energy'):.10g}"
                     f"  verified = {eq.attrs.get('verified')}")
    lines += _command_lines(tree)
    comp = tree.groups.get("comparison")
    if comp is not None:
        columns = [("n", "n"), ("a_direct", "a_n direct"), ("a_model", "a_n model"),
                   ("err_a", "|err a_n|"), ("err_b", "|err b_n|"), ("err_values", "err p_n"),
                   ("err_zeros_bulk", "err bulk"), ("err_zeros_edge", "err edge"),
                   ("err_zeros_gap", "err gap"), ("band_count_mismatch", "count miss"),
                   ("small_norm", "small-norm"), ("err_log_hankel", "err log Dn")]
        columns = [(k, t) for k, t in columns if comp.has(k)]
        lines.append("  " + "".join(f"{t:>11}" for _, t in columns))
        data = [np.asarray(comp.get(k)) for k, _ in columns]
        for i in range(data[0].size):
            # counts (n, zeros missed) are integers and print as such
            row = [f"{int(d[i]):>11d}" if np.issubdtype(d.dtype, np.integer) else _fmt(d[i]) for d in data]
            lines.append("  " + "".join(row))
        if comp.has("band_counts_direct"):
            last = np.asarray(comp.get("band_counts_direct"))[-1]
            model = (np.asarray(comp.get("band_counts_model"))[-1] if comp.has("band_counts_model")
                     else None)
            lines.append(f"  zeros per band at n = {int(data[0][-1])}: direct {last.tolist()}"
                         + (f", predicted {model.tolist()}" if model is not None else ""))
        rates = comp.groups.get("rates")
        if rates is not None and rates.groups:
            lines.append("  fitted rates (error ~ C n^slope, least squares in log-log):")
            width = max(16, *(len(key) for key in rates.groups))
            for key, fit in rates.groups.items():
                s, se = fit.attrs.get("slope"), fit.attrs.get("stderr")
                note = f"  ({fit.attrs['note']})" if "note" in fit.attrs else ""
                bound = fit.attrs.get("max_n_times_error")
                bound_text = f"  max n*err {_fmt(bound, 8)}" if bound is not None else ""
                lines.append(f"    {key:<{width}} slope {_fmt(s, 8)} +- {_fmt(se, 8)}  "
                             f"({fit.attrs.get('points')} points){bound_text}{note}")
        lines += _formula_lines(comp)
    for note in text_list(attrs.get("notes")):
        lines.append(f"  note: {note}")
    for message in text_list(attrs.get("messages")):
        lines.append(f"  not verified: {message}")
    figures = tree.groups.get("figures")
    if figures is not None and figures.attrs.get("files"):
        files = figures.attrs["files"]
        if isinstance(files, str):  # lists of text are stored as JSON
            files = json.loads(files) if files.startswith("[") else [files]
        lines.append(f"  figures: {', '.join(files)}")
    timings = json.loads(attrs.get("timings_s", "{}") or "{}")
    if timings:
        lines.append("  timings (s): " + ", ".join(f"{k} {v:.2f}" for k, v in timings.items()))
    return lines


def _command_lines(tree) -> list[str]:
    """The /recurrence or /zeros group of a file written by ``recurrence`` or ``zeros --out``."""
    lines = []
    rec = tree.groups.get("recurrence")
    if rec is not None and rec.has("a"):
        a, b = np.asarray(rec.get("a")), np.asarray(rec.get("b"))
        lines.append(f"  recurrence coefficients k = 0..{a.size - 1} of {rec.attrs.get('method', '?')}")
        lines.append(f"    a_K = {a[-1]:.15g}  b_K = {b[-1]:.15g}  error estimate {_fmt(rec.attrs.get('error_estimate'), 1).strip()}"
                     f"  verified = {rec.attrs.get('verified')}")
    zeros = tree.groups.get("zeros")
    if zeros is not None and zeros.has("zeros"):
        x = np.asarray(zeros.get("zeros"))
        lines.append(f"  zeros of p_{zeros.attrs.get('degree', x.size)}: {x.size} in [{x[0]:.15g}, {x[-1]:.15g}]")
        lines.append(f"    recurrence error estimate {_fmt(zeros.attrs.get('error_estimate'), 1).strip()}"
                     f"  verified = {zeros.attrs.get('verified')}")
    return lines


def _formula_lines(comp) -> list[str]:
    """The case's own formulas: |direct - formula| at each n, then each verdict with its rate."""
    node = comp.groups.get("formulas")
    if node is None or not node.groups:
        return []
    names = text_list(node.attrs.get("names")) or sorted(node.groups)
    width = max(11, *(len(name) + 1 for name in names))
    lines = ["  formulas, |direct - formula|:", "  " + f"{'n':>11}" + "".join(f"{name:>{width}}" for name in names)]
    errors = [np.asarray(node.groups[name].get("error")) for name in names]
    for i, n in enumerate(np.asarray(comp.get("n"))):
        lines.append("  " + f"{int(n):>11d}" + "".join(_fmt(e[i], width) for e in errors))
    column = max(len(name) for name in names)
    for name in names:
        entry = node.groups[name]
        lines.append(f"    {name:<{column}} {entry.attrs.get('target')} = {entry.attrs.get('expression')}: "
                     f"{entry.attrs.get('summary')}")
    return lines


def _sweep_lines(tree) -> list[str]:
    grid = tree.groups["grid"]
    names = str(tree.attrs.get("axes", "")).split(",")
    bands = np.asarray(grid.get("bands"))
    lines = []
    for name in names:
        v = np.asarray(grid.get(f"axis_{name}"))
        lines.append(f"  axis {name}: {v.size} values from {v[0]:g} to {v[-1]:g}")
    values, counts = np.unique(bands, return_counts=True)
    parts = [f"{'failed' if v < 0 else f'{v} band(s)'}: {c}" for v, c in zip(values, counts)]
    lines.append(f"  {bands.size} points; " + ", ".join(parts))
    if "transition_edges" in grid.attrs:
        lines.append(f"  transitions located on {grid.attrs.get('transitions_located')} of "
                     f"{grid.attrs.get('transition_edges')} grid edges where the number of bands changes"
                     + (f" ({grid.attrs['transitions_failed']} not located: drawn midway)"
                        if grid.attrs.get("transitions_failed") else ""))
    timings = json.loads(tree.attrs.get("timings_s", "{}") or "{}")
    if timings:
        lines.append(f"  sweep time {timings.get('sweep', float('nan')):.1f} s "
                     f"({tree.attrs.get('executor', '')})"
                     + (f", transitions {timings['transitions']:.1f} s" if "transitions" in timings else ""))
    return lines
