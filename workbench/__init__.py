"""Orthogonal polynomials at large degree: the workbench (I/O, command line, comparisons)."""

__version__ = "0.1.0"
