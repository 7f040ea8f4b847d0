"""Orthogonal polynomials at large degree: the workbench (I/O, command line, comparisons).

Importing the workbench (or any of its modules) changes nothing in the environment;
the command line limits the BLAS threads of its own process (:func:`workbench.cli.main`).
"""

__version__ = "0.1.0"
