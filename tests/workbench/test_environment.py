"""Nothing changes the environment on import; the command line limits BLAS threads for its own process."""

from __future__ import annotations

import json
import os
import subprocess
import sys

import pytest

PACKAGES = ["equilibrium", "gfunction", "workbench", "workbench.polynomials", "workbench.cli",
            "workbench.pipeline", "workbench.case", "workbench.sweep", "workbench.figures"]

_PROBE = """
import json, os, sys
before = dict(os.environ)
import importlib
importlib.import_module(sys.argv[1])
after = dict(os.environ)
print(json.dumps({"added": sorted(set(after) - set(before)), "removed": sorted(set(before) - set(after)),
                  "changed": sorted(k for k in before if k in after and before[k] != after[k])}))
"""

THREADS = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")


def _clean_environment() -> dict[str, str]:
    return {k: v for k, v in os.environ.items() if k not in THREADS}


@pytest.mark.parametrize("package", PACKAGES)
def test_import_leaves_the_environment_unchanged(package):
    out = subprocess.run([sys.executable, "-c", _PROBE, package], capture_output=True, text=True,
                         env=_clean_environment(), timeout=120, check=True).stdout
    assert json.loads(out.strip().splitlines()[-1]) == {"added": [], "removed": [], "changed": []}


_CLI_PROBE = """
import os, sys
from workbench.cli import _single_threaded_blas
with _single_threaded_blas():
    import numpy
    print(",".join(os.environ.get(name, "-") for name in sys.argv[1:]))
"""


def test_the_command_line_limits_its_own_threads_before_numpy_loads():
    names = list(THREADS)
    run = lambda env: subprocess.run([sys.executable, "-c", _CLI_PROBE, *names], capture_output=True,
                                     text=True, env=env, timeout=120, check=True).stdout.strip()
    assert run(_clean_environment()) == "1,1,1"
    # the user's own setting wins
    assert run(dict(_clean_environment(), OPENBLAS_NUM_THREADS="2")) == "2,1,1"


def test_an_in_process_call_with_numpy_loaded_leaves_the_environment_alone():
    import numpy  # noqa: F401  (loaded, as in a notebook)

    from workbench.cli import _single_threaded_blas

    before = dict(os.environ)
    with _single_threaded_blas():
        assert dict(os.environ) == before
    assert dict(os.environ) == before
