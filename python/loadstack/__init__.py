"""DC operating point and loading analysis of analog signal chains.

A thin layer over the loadstack C library (libloadstack.so.0) through ctypes,
the standard library's foreign-function module: nothing is compiled when the
module is installed, and the same files work with every Python 3 the library
is installed beside.

    >>> import loadstack
    >>> c = loadstack.Circuit.from_file("circuits/demo.stack")
    >>> op = c.solve()
    >>> op.nodes["adc_in"]                  # volts
    >>> op.ports                            # the loading report, one Port per port
    >>> c.sag("adc_in").culprit
    >>> c.tol("adc_in", trials=10000, seed=1).yield_
    >>> c.sweep("moisture_r", 1e3, 100e3, ["adc_in"], log=True)
    >>> print(c.formula("adc_in", symbols=["r_top", "r_bot"]))
    >>> loadstack.Circuit.from_file("circuits/level_shifter.stack").fit().chosen

Numbers are SI floats without prefix (volts, amperes, ohms, watts).  A value
with no finite answer is nan when undefined (0/0) and +-inf when unbounded
(an ideal input, a node with no DC path).  Errors in a circuit raise
CircuitError, which carries every diagnostic with its file, line and column.

The library is found by LOADSTACK_LIBRARY (a path), else by its soname
libloadstack.so.0.  In a build tree:

    LOADSTACK_LIBRARY=build/src/libloadstack.so PYTHONPATH=python python3 ...
"""
from ._api import (Circuit, CircuitError, Diagnostic, FitCandidate, FitResult, Formula, InfluenceRow, LoadstackError, OperatingPoint,
                   Part, Port, PortThevenin, SagReport, SagShare, SolverUnavailable, SweepResult, Thevenin, ToleranceReport,
                   library_version)

__all__ = ["Circuit", "CircuitError", "Diagnostic", "FitCandidate", "FitResult", "Formula", "InfluenceRow", "LoadstackError", "OperatingPoint",
           "Part", "Port", "PortThevenin", "SagReport", "SagShare", "SolverUnavailable", "SweepResult", "Thevenin", "ToleranceReport",
           "library_version"]
