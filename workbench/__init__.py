"""Orthogonal polynomials at large degree: the workbench (I/O, command line, comparisons)."""

import os as _os

# The numerical work is many small dense problems; multi-threaded BLAS only adds
# contention (measured: a solve 3-4x slower when another process holds a core).
# The user's own settings win.
for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    _os.environ.setdefault(_name, "1")

__version__ = "0.1.0"
