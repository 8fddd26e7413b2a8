"""The ctypes binding of libloadstack (include/loadstack/loadstack.h) and the
Python classes over it.  Every structure here mirrors the header field for
field; tests/python checks the numbers against the program's JSON."""
from __future__ import annotations

import ctypes
import ctypes.util
import math
import os
from dataclasses import dataclass, field
from typing import Dict, List, Optional, Sequence, Union

try:  # numpy is optional: sweeps and Monte Carlo values are lists without it
    import numpy as _np
except ImportError:  # pragma: no cover - depends on the machine
    _np = None

Number = Union[int, float]

# ---- the library ------------------------------------------------------------------------------

_SONAME = "libloadstack.so.0"


def _load_library() -> ctypes.CDLL:
    """The C library: LOADSTACK_LIBRARY when set, else the installed soname."""
    path = os.environ.get("LOADSTACK_LIBRARY")
    try:
        return ctypes.CDLL(path or _SONAME)
    except OSError as e:
        raise ImportError(
            f"loadstack: cannot load the C library {path or _SONAME!r} ({e}); install libloadstack0, "
            "or point LOADSTACK_LIBRARY at build/src/libloadstack.so in a build tree") from None


_lib = _load_library()
_c_double_p = ctypes.POINTER(ctypes.c_double)


class _Diag(ctypes.Structure):
    _fields_ = [("level", ctypes.c_int), ("file", ctypes.c_char_p), ("line", ctypes.c_int),
                ("column", ctypes.c_int), ("code", ctypes.c_char_p), ("message", ctypes.c_char_p)]


class _SolveOptions(ctypes.Structure):
    _fields_ = [("backend", ctypes.c_int), ("min_ratio", ctypes.c_double), ("derate", ctypes.c_double)]


class _SolveInfo(ctypes.Structure):
    _fields_ = [("method", ctypes.c_char_p), ("unknowns", ctypes.c_int), ("rcond", ctypes.c_double),
                ("residual", ctypes.c_double), ("iterations", ctypes.c_int),
                ("refinement_steps", ctypes.c_int)]


class _PartInfo(ctypes.Structure):
    _fields_ = [("name", ctypes.c_char_p), ("kind", ctypes.c_char_p), ("value", ctypes.c_double),
                ("current", ctypes.c_double), ("voltage", ctypes.c_double), ("power", ctypes.c_double),
                ("limited", ctypes.c_char_p)]


class _PortInfo(ctypes.Structure):
    _fields_ = [("name", ctypes.c_char_p), ("from_", ctypes.c_char_p), ("to", ctypes.c_char_p),
                ("current_mode", ctypes.c_int), ("open", ctypes.c_double), ("loaded", ctypes.c_double),
                ("sag", ctypes.c_double), ("sag_rel", ctypes.c_double), ("zout", ctypes.c_double),
                ("zin", ctypes.c_double), ("ratio", ctypes.c_double), ("current", ctypes.c_double),
                ("verdict", ctypes.c_int), ("note", ctypes.c_char_p), ("budget", ctypes.c_double),
                ("by_budget", ctypes.c_int), ("load_held", ctypes.c_int)]


class _SagShare(ctypes.Structure):
    _fields_ = [("port", ctypes.c_char_p), ("current", ctypes.c_double), ("transfer", ctypes.c_double),
                ("share", ctypes.c_double), ("share_rel", ctypes.c_double)]


class _SagInfo(ctypes.Structure):
    _fields_ = [("voltage", ctypes.c_double), ("alone", ctypes.c_double), ("sag", ctypes.c_double),
                ("interaction", ctypes.c_double), ("shapley", ctypes.c_int), ("culprit", ctypes.c_char_p)]


class _TheveninInfo(ctypes.Structure):
    _fields_ = [("vth", ctypes.c_double), ("rth", ctypes.c_double), ("norton", ctypes.c_double)]


class _TheveninSide(ctypes.Structure):
    _fields_ = [("node", ctypes.c_char_p), ("vth", ctypes.c_double), ("rth", ctypes.c_double),
                ("norton", ctypes.c_double), ("why", ctypes.c_char_p)]


class _InfluenceEntry(ctypes.Structure):
    _fields_ = [("part", ctypes.c_char_p), ("part_value", ctypes.c_double), ("per_unit", ctypes.c_double),
                ("percent_per_percent", ctypes.c_double)]


class _TolOptions(ctypes.Structure):
    _fields_ = [("trials", ctypes.c_long), ("seed", ctypes.c_ulonglong), ("law", ctypes.c_int),
                ("threads", ctypes.c_int)]


class _TolInfo(ctypes.Structure):
    _fields_ = [("nominal", ctypes.c_double), ("wc_min", ctypes.c_double), ("wc_max", ctypes.c_double),
                ("corners", ctypes.c_int), ("rss", ctypes.c_double), ("varying", ctypes.c_int),
                ("trials", ctypes.c_long), ("finite", ctypes.c_long), ("mean", ctypes.c_double),
                ("std", ctypes.c_double), ("min", ctypes.c_double), ("max", ctypes.c_double),
                ("pct", ctypes.c_double * 5), ("yield_", ctypes.c_double)]


class _FitOptions(ctypes.Structure):
    _fields_ = [("series", ctypes.c_char_p), ("aim", ctypes.c_int), ("top", ctypes.c_int), ("trials", ctypes.c_long),
                ("seed", ctypes.c_ulonglong), ("law", ctypes.c_int)]


class _FitCandidate(ctypes.Structure):
    _fields_ = [("meets", ctypes.c_int), ("failed", ctypes.c_int), ("margin", ctypes.c_double),
                ("yield_", ctypes.c_double), ("current", ctypes.c_double)]


def _proto(name: str, restype, *argtypes) -> None:
    fn = getattr(_lib, name)
    fn.restype = restype
    fn.argtypes = list(argtypes)


_P = ctypes.c_void_p
_I = ctypes.c_int
_proto("ls_status_str", ctypes.c_char_p, _I)
_proto("ls_version", ctypes.c_char_p)
_proto("ls_free", None, _P)
_proto("ls_circuit_parse_file", _I, ctypes.c_char_p, ctypes.POINTER(ctypes.c_char_p), _I, ctypes.POINTER(_P))
_proto("ls_circuit_parse_string", _I, ctypes.c_char_p, ctypes.c_char_p, ctypes.c_size_t,
       ctypes.POINTER(ctypes.c_char_p), _I, ctypes.POINTER(_P))
_proto("ls_circuit_free", None, ctypes.POINTER(_P))
_proto("ls_circuit_diag_count", _I, _P)
_proto("ls_circuit_diag", _I, _P, _I, ctypes.POINTER(_Diag))
_proto("ls_circuit_title", ctypes.c_char_p, _P)
_proto("ls_circuit_solve", _I, _P, ctypes.POINTER(_SolveOptions))
_proto("ls_circuit_solve_info", _I, _P, ctypes.POINTER(_SolveInfo))
_proto("ls_circuit_node_count", _I, _P)
_proto("ls_circuit_node_name", ctypes.c_char_p, _P, _I)
_proto("ls_circuit_voltage", _I, _P, ctypes.c_char_p, _c_double_p)
_proto("ls_circuit_part_count", _I, _P)
_proto("ls_circuit_part_index", _I, _P, ctypes.c_char_p)
_proto("ls_circuit_part", _I, _P, _I, ctypes.POINTER(_PartInfo))
_proto("ls_circuit_port_count", _I, _P)
_proto("ls_circuit_port", _I, _P, _I, ctypes.POINTER(_PortInfo))
_proto("ls_circuit_port_by_name", _I, _P, ctypes.c_char_p, ctypes.POINTER(_PortInfo))
_proto("ls_circuit_eval", _I, _P, ctypes.c_char_p, _c_double_p)
_proto("ls_circuit_sag_ports", _I, _P, ctypes.c_char_p, ctypes.POINTER(_SagInfo),
       ctypes.POINTER(ctypes.POINTER(_SagShare)), ctypes.POINTER(_I))
_proto("ls_circuit_thevenin", _I, _P, ctypes.c_char_p, ctypes.POINTER(_TheveninInfo))
_proto("ls_circuit_thevenin_port", _I, _P, ctypes.c_char_p, ctypes.POINTER(_TheveninSide),
       ctypes.POINTER(_TheveninSide))
_proto("ls_circuit_influence", _I, _P, ctypes.c_char_p, _c_double_p,
       ctypes.POINTER(ctypes.POINTER(_InfluenceEntry)), ctypes.POINTER(_I))
_proto("ls_circuit_set_value", _I, _P, ctypes.c_char_p, ctypes.c_double)
_proto("ls_circuit_tol", _I, _P, ctypes.c_char_p, ctypes.POINTER(_TolOptions), ctypes.POINTER(_TolInfo),
       ctypes.POINTER(_c_double_p))
_proto("ls_circuit_sweep", _I, _P, ctypes.c_char_p, ctypes.c_double, ctypes.c_double, _I, _I,
       ctypes.POINTER(ctypes.c_char_p), _I, ctypes.POINTER(_c_double_p), ctypes.POINTER(_c_double_p),
       ctypes.POINTER(_I))

_proto("ls_circuit_fit", _I, _P, ctypes.POINTER(_FitOptions), ctypes.POINTER(ctypes.POINTER(_FitCandidate)),
       ctypes.POINTER(_I), ctypes.POINTER(_c_double_p), ctypes.POINTER(_I),
       ctypes.POINTER(ctypes.POINTER(ctypes.c_char_p)))
_proto("ls_circuit_formula", _I, _P, ctypes.c_char_p, ctypes.c_char_p, _I, ctypes.POINTER(ctypes.c_void_p),
       _c_double_p)

_LS_E_CIRCUIT, _LS_E_NOT_FOUND = -4, -6
_BACKENDS = {"auto": 0, "dense": 1, "sparse": 2}
_VERDICTS = ("ok", "marginal", "loading")
_LEVELS = ("note", "warning", "error")


def library_version() -> str:
    """The version of the loaded C library, "MAJOR.MINOR.PATCH"."""
    return _lib.ls_version().decode()


def _s(b: Optional[bytes]) -> Optional[str]:
    return None if b is None else b.decode("utf-8", "replace")


def _array(values: List[float]):
    """A numpy array when numpy is installed, else the list itself."""
    return _np.array(values, dtype=float) if _np is not None else values


def _eng(v: float, unit: str) -> str:
    """A number with an SI prefix and 4 significant digits, for the printed reports."""
    if v is None or math.isnan(v):
        return "undefined"
    if math.isinf(v):
        return ("-" if v < 0 else "") + "unbounded"
    if v == 0:
        return f"0 {unit}"
    e = int(math.floor(math.log10(abs(v)) / 3))
    e = max(-5, min(4, e))
    prefix = {-5: "f", -4: "p", -3: "n", -2: "u", -1: "m", 0: "", 1: "k", 2: "M", 3: "G", 4: "T"}[e]
    return f"{v / 10 ** (3 * e):.4g} {prefix}{unit}"


# ---- results ----------------------------------------------------------------------------------

@dataclass(frozen=True)
class Diagnostic:
    """One message about the circuit: level "note", "warning" or "error", where
    it points (file, 1-based line and column; None and 0 when it has no place),
    the warning code (or None) and one sentence."""
    level: str
    file: Optional[str]
    line: int
    column: int
    code: Optional[str]
    message: str

    def __str__(self) -> str:
        where = f"{self.file}:{self.line}:{self.column}: " if self.file else "loadstack: "
        return f"{where}{self.level}: {self.message}"


class LoadstackError(Exception):
    """A failure of the library: `status` is the C status code and `diagnostics`
    every message collected (the first error's place is also in file, line,
    column and message)."""

    def __init__(self, status: int, diagnostics: Sequence[Diagnostic] = ()):
        self.status = status
        self.diagnostics = list(diagnostics)
        first = next((d for d in self.diagnostics if d.level == "error"), None)
        self.file = first.file if first else None
        self.line = first.line if first else 0
        self.column = first.column if first else 0
        self.message = first.message if first else _lib.ls_status_str(status).decode()
        super().__init__(str(first) if first else self.message)


class CircuitError(LoadstackError):
    """Errors in the circuit text, a quantity or a setting, with file:line:col."""


@dataclass(frozen=True)
class Part:
    """One part's operating point: main value (in the part's unit; nan when the
    kind has none), current FROM -> TO (A), voltage (V: the drop of passive
    parts, the rise of sources) and power absorbed (W, negative when
    delivering); an op-amp's output limit in force ("none", "rail-high", ...)."""
    name: str
    kind: str
    value: float
    current: float
    voltage: float
    power: float
    limited: Optional[str] = None


@dataclass(frozen=True)
class Port:
    """The loading report of one port: DRIVER voltage opened and loaded (V; A
    for a current-mode port), sag (V) and as a fraction of open, zout at the
    driver and zin at the load (ohm; inf for an ideal input), ratio zin/zout
    (zout/zin for current mode), current driver -> load (A), the verdict
    ("ok", "marginal", "loading") and, when a field is nan, why.  budget is
    the largest |sag| allowed (budget=, rule sag, or half an LSB of an ADC on
    the load; nan when none); by says what decided the verdict ("budget" or
    "ratio"); load_held is True when the load side floats once opened and was
    held at its loaded voltage."""
    name: str
    driver: str
    load: str
    mode: str
    open: float
    loaded: float
    sag: float
    sag_rel: float
    zout: float
    zin: float
    ratio: float
    current: float
    verdict: str
    note: Optional[str] = None
    budget: float = math.nan
    by: str = "ratio"
    load_held: bool = False

    def __str__(self) -> str:
        u = "A" if self.mode == "current" else "V"
        return (f"{self.name:<12} {self.driver} -> {self.load}: open {_eng(self.open, u)}, loaded "
                f"{_eng(self.loaded, u)}, sag {_eng(self.sag, u)}, zout {_eng(self.zout, 'ohm')}, zin "
                f"{_eng(self.zin, 'ohm')}, ratio {_eng(self.ratio, '')}".rstrip()
                + (f", budget {_eng(self.budget, u)}" if not math.isnan(self.budget) else "")
                + f"  {self.verdict} (by {self.by})"
                + (f"  ({self.note})" if self.note else ""))


class PortReport(list):
    """The ports in circuit order (a list of Port); printing it shows the
    loading report as a table, one port per line."""

    def __str__(self) -> str:
        if not self:
            return "no ports"
        return "\n".join(str(p) for p in self)

    def by_name(self, name: str) -> Port:
        """The port called name (KeyError when there is none)."""
        for p in self:
            if p.name == name:
                return p
        raise KeyError(name)


@dataclass
class OperatingPoint:
    """A solved circuit: node voltages (V, by name, ground included), parts (by
    name), the port report, the solver's facts and the warnings of the solve."""
    title: str
    nodes: Dict[str, float]
    parts: Dict[str, Part]
    ports: PortReport
    method: str
    unknowns: int
    rcond: float
    residual: float
    warnings: List[Diagnostic] = field(default_factory=list)
    iterations: int = 1            # linear solves of the operating-point iteration (1: linear)
    refinement_steps: int = 0      # extra-precise refinement steps of the last solve


@dataclass(frozen=True)
class SagShare:
    """One port's share of a node's sag: its current (A, driver -> load), the
    transfer resistance (ohm) and the share (V, and as a fraction of the sag);
    nan where undefined."""
    port: str
    current: float
    transfer: float
    share: float
    share_rel: float


@dataclass
class SagReport:
    """Sag by connection at a node: the voltage with everything connected and
    with every port opened (alone), their difference, the shares of the ports
    (largest first), the nonlinear remainder and the culprit port (or None)."""
    node: str
    voltage: float
    alone: float
    sag: float
    interaction: float
    shapley: bool
    culprit: Optional[str]
    shares: List[SagShare]


@dataclass(frozen=True)
class Thevenin:
    """The Thevenin/Norton equivalent at a node against ground: vth (V), rth
    (ohm; inf when nothing ties the node to ground) and the short-circuit
    current norton (A; nan where undefined, e.g. a port's load side); why
    says "unsolved" when a re-solve failed."""
    node: str
    vth: float
    rth: float
    norton: float
    why: Optional[str] = None


@dataclass(frozen=True)
class PortThevenin:
    """Each side of a port opened: the driver side (what the port delivers:
    vth the open voltage, rth the port's zout) and the load side (what it
    feeds: rth the port's zin)."""
    port: str
    driver: Thevenin
    load: Thevenin


@dataclass(frozen=True)
class InfluenceRow:
    """How much one part's main value moves a quantity: dQ/dp in Q's unit per
    the part's unit, and the % change of Q per 1 % of p (nan when Q = 0)."""
    part: str
    part_value: float
    per_unit: float
    percent_per_percent: float


@dataclass
class ToleranceReport:
    """A tolerance study of one quantity: nominal, worst case (every corner, or
    linear from the sensitivities with its root-sum-square half-width), the
    Monte Carlo statistics of the finite trials, percentiles keyed "0.1", "1",
    "50", "99", "99.9", the yield over the expects on the quantity (nan when it
    has none; `yield` is a Python keyword, hence yield_) and every trial's
    value (numpy array when numpy is installed)."""
    quantity: str
    nominal: float
    worst_min: float
    worst_max: float
    method: str
    rss: float
    varying: int
    trials: int
    seed: int
    finite: int
    mean: float
    std: float
    min: float
    max: float
    percentiles: Dict[str, float]
    yield_: float
    values: object = None


@dataclass(frozen=True)
class Formula:
    """A quantity as an exact formula of the parts' values (text in the
    language's expression syntax) and its value at the circuit's numbers."""
    quantity: str
    text: str
    value: float

    def __str__(self) -> str:
        return f"{self.quantity} = {self.text}"


@dataclass(frozen=True)
class FitCandidate:
    """One set of standard values for the free parts (part name -> value in
    its unit): whether it meets every expect, rule, port verdict and limit,
    how many checks it fails, its smallest normalised margin, its Monte Carlo
    yield (nan when not computed; `yield` is a Python keyword, hence yield_)
    and the current it draws from the supplies (A)."""
    values: Dict[str, float]
    meets: bool
    failed: int
    margin: float
    yield_: float
    current: float


@dataclass
class FitResult:
    """The candidates of `Circuit.fit`, best first, under its goal and
    series; `chosen` is the first when it meets everything, else None (then
    `candidates[0]` is the closest miss, as `loadstack fit` reports it)."""
    goal: str
    series: str
    candidates: List[FitCandidate]

    @property
    def chosen(self) -> Optional[FitCandidate]:
        return self.candidates[0] if self.candidates and self.candidates[0].meets else None


@dataclass
class SweepResult:
    """A sweep of a let: the let's values x and, per quantity, its values y[q]
    (numpy arrays when numpy is installed, else lists; nan where a point did
    not solve)."""
    let: str
    x: object
    y: Dict[str, object]
    solved: int


# ---- the circuit ------------------------------------------------------------------------------

def _sets_array(sets: Dict[str, str]):
    items = [f"{k}={v}".encode() for k, v in sets.items()]
    arr = (ctypes.c_char_p * max(1, len(items)))(*items)
    return arr, len(items)


class Circuit:
    """A circuit read from a .stack file or from text.

    Build one with Circuit.from_file(path) or Circuit.from_text(text), change
    lets or part values with set(), then solve() and run the analyses.  The C
    handle is released when the object is garbage-collected or close()d (also
    as a context manager).  One Circuit must not be used by two threads at
    once; distinct circuits may."""

    def __init__(self, *args, **kwargs):
        raise TypeError("make a Circuit with Circuit.from_file(path) or Circuit.from_text(text)")

    @classmethod
    def _wrap(cls, handle: ctypes.c_void_p, source: tuple, sets: Dict[str, str]) -> "Circuit":
        """A Circuit over a C handle (it owns the handle from now on)."""
        c = object.__new__(cls)
        c._h = handle
        c._source = source  # ("file", path) or ("text", text, name)
        c._sets = dict(sets)
        c._solved = False
        return c

    # -- construction --
    @classmethod
    def _parse(cls, source: tuple, sets: Dict[str, str]) -> "Circuit":
        h = ctypes.c_void_p()
        arr, n = _sets_array(sets)
        if source[0] == "file":
            st = _lib.ls_circuit_parse_file(os.fsencode(source[1]), arr, n, ctypes.byref(h))
        else:
            data = source[1].encode("utf-8") if isinstance(source[1], str) else bytes(source[1])
            st = _lib.ls_circuit_parse_string(source[2].encode(), data, len(data), arr, n, ctypes.byref(h))
        c = cls._wrap(h, source, sets)
        if st < 0:
            diags = c.diagnostics() if h.value else []
            c.close()
            raise (CircuitError if st in (_LS_E_CIRCUIT, -3) else LoadstackError)(st, diags)
        return c

    @classmethod
    def from_file(cls, path: Union[str, os.PathLike], sets: Optional[Dict[str, object]] = None) -> "Circuit":
        """Read the circuit file at path (includes resolve relative to it).
        sets overrides top-level lets, as --set does: {"vsupply": "3.3V"}.
        Raises CircuitError with file, line and column on bad input."""
        return cls._parse(("file", os.fspath(path)), {k: str(v) for k, v in (sets or {}).items()})

    @classmethod
    def from_text(cls, text: str, name: str = "<text>", sets: Optional[Dict[str, object]] = None) -> "Circuit":
        """Read circuit text; name is used in messages and as the base of
        relative includes."""
        return cls._parse(("text", text, name), {k: str(v) for k, v in (sets or {}).items()})

    def close(self) -> None:
        """Release the C handle now (the object is unusable afterwards)."""
        if getattr(self, "_h", None) is not None and self._h.value:
            _lib.ls_circuit_free(ctypes.byref(self._h))
        self._h = None

    def __del__(self):
        self.close()

    def __enter__(self) -> "Circuit":
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def __repr__(self) -> str:
        src = self._source[1] if self._source[0] == "file" else self._source[2]
        return f"<loadstack.Circuit {self.title!r} from {src}>"

    # -- helpers --
    def _handle(self) -> ctypes.c_void_p:
        if self._h is None:
            raise ValueError("the circuit is closed")
        return self._h

    def _check(self, st: int, since: int = 0) -> int:
        if st < 0:
            diags = self.diagnostics()[since:]
            raise (CircuitError if st == _LS_E_CIRCUIT else LoadstackError)(st, diags)
        return st

    def _need_solved(self) -> None:
        if not self._solved:
            self.solve()

    def diagnostics(self) -> List[Diagnostic]:
        """Every diagnostic collected so far (reading, solving, analyses)."""
        h = self._handle()
        out = []
        for i in range(_lib.ls_circuit_diag_count(h)):
            d = _Diag()
            _lib.ls_circuit_diag(h, i, ctypes.byref(d))
            out.append(Diagnostic(_LEVELS[d.level], _s(d.file), d.line, d.column, _s(d.code), _s(d.message)))
        return out

    @property
    def title(self) -> str:
        """The circuit's title, or ""."""
        return _s(_lib.ls_circuit_title(self._handle())) or ""

    # -- changing it --
    def set(self, name: str, value: Union[Number, str]) -> None:
        """Change a part's main value (a number in its SI unit: ohms, volts, ...)
        or a top-level let (a number or text such as "3.3V"; the circuit is
        read again with the new setting, as --set does).  The next result
        re-solves."""
        h = self._handle()
        if _lib.ls_circuit_part_index(h, name.encode()) >= 0:
            if not isinstance(value, (int, float)):
                raise TypeError(f"part {name}: the value is a number in SI units")
            self._need_solved()
            self._check(_lib.ls_circuit_set_value(h, name.encode(), float(value)))
            return
        sets = dict(self._sets)
        sets[name] = repr(float(value)) if isinstance(value, (int, float)) else str(value)
        new = Circuit._parse(self._source, sets)
        self.close()
        self._h, new._h = new._h, None
        self._sets = sets
        self._solved = False

    # -- solving and reading --
    def solve(self, solver: str = "auto", min_ratio: float = 0.0, derate: float = 1.0) -> OperatingPoint:
        """Solve the DC operating point and return it with the port report.
        solver is "auto", "dense" or "sparse"; min_ratio the minimum zin/zout
        for a port's verdict (0: the circuit's rule, else 10); derate
        multiplies the power ratings.  Raises LoadstackError when the circuit
        cannot be solved."""
        h = self._handle()
        n0 = len(self.diagnostics())
        opt = _SolveOptions(_BACKENDS[solver], min_ratio, derate)
        self._solved = False
        self._check(_lib.ls_circuit_solve(h, ctypes.byref(opt)), n0)
        self._solved = True
        info = _SolveInfo()
        self._check(_lib.ls_circuit_solve_info(h, ctypes.byref(info)))
        nodes = {}
        for i in range(_lib.ls_circuit_node_count(h)):
            name = _lib.ls_circuit_node_name(h, i)
            v = ctypes.c_double()
            _lib.ls_circuit_voltage(h, name, ctypes.byref(v))
            nodes[name.decode()] = v.value
        parts = {}
        for i in range(_lib.ls_circuit_part_count(h)):
            p = _PartInfo()
            _lib.ls_circuit_part(h, i, ctypes.byref(p))
            if _s(p.kind) == "port":
                continue
            parts[_s(p.name)] = Part(_s(p.name), _s(p.kind), p.value, p.current, p.voltage, p.power, _s(p.limited))
        warnings = [d for d in self.diagnostics()[n0:] if d.level == "warning"]
        return OperatingPoint(self.title, nodes, parts, self.ports, _s(info.method), info.unknowns, info.rcond,
                              info.residual, warnings, info.iterations, info.refinement_steps)

    @property
    def ports(self) -> PortReport:
        """The loading report of every port, in circuit order (solves first if needed)."""
        self._need_solved()
        h = self._handle()
        out = PortReport()
        for i in range(_lib.ls_circuit_port_count(h)):
            p = _PortInfo()
            self._check(_lib.ls_circuit_port(h, i, ctypes.byref(p)))
            out.append(Port(_s(p.name), _s(p.from_), _s(p.to), "current" if p.current_mode else "voltage",
                            p.open, p.loaded, p.sag, p.sag_rel, p.zout, p.zin, p.ratio, p.current,
                            _VERDICTS[p.verdict], _s(p.note), p.budget, "budget" if p.by_budget else "ratio",
                            bool(p.load_held)))
        return out

    def voltage(self, node: str) -> float:
        """The voltage of a node against ground, V."""
        self._need_solved()
        v = ctypes.c_double()
        st = _lib.ls_circuit_voltage(self._handle(), node.encode(), ctypes.byref(v))
        if st == _LS_E_NOT_FOUND:
            raise KeyError(node)
        self._check(st)
        return v.value

    def eval(self, quantity: str) -> float:
        """The value of a quantity written as in an expect: "adc_in",
        "r_top.power", "p_adc.ratio", "u1_out - ref"."""
        self._need_solved()
        v = ctypes.c_double()
        n0 = len(self.diagnostics())
        self._check(_lib.ls_circuit_eval(self._handle(), quantity.encode(), ctypes.byref(v)), n0)
        return v.value

    # -- analyses --
    def sag(self, node: str) -> SagReport:
        """Which connections (ports) make node sag, and by how much each."""
        self._need_solved()
        info = _SagInfo()
        arr = ctypes.POINTER(_SagShare)()
        n = ctypes.c_int()
        st = _lib.ls_circuit_sag_ports(self._handle(), node.encode(), ctypes.byref(info), ctypes.byref(arr),
                                       ctypes.byref(n))
        if st == _LS_E_NOT_FOUND:
            raise KeyError(node)
        self._check(st)
        try:
            shares = [SagShare(_s(arr[i].port), arr[i].current, arr[i].transfer, arr[i].share, arr[i].share_rel)
                      for i in range(n.value)]
        finally:
            _lib.ls_free(arr)
        return SagReport(node, info.voltage, info.alone, info.sag, info.interaction, bool(info.shapley),
                         _s(info.culprit), shares)

    def thevenin(self, node_or_port: str) -> Union[Thevenin, PortThevenin]:
        """The Thevenin/Norton equivalent at a node (a Thevenin), or at each
        side of a port opened (a PortThevenin), as `loadstack thevenin`."""
        self._need_solved()
        h = self._handle()
        d, ld = _TheveninSide(), _TheveninSide()
        st = _lib.ls_circuit_thevenin_port(h, node_or_port.encode(), ctypes.byref(d), ctypes.byref(ld))
        if st != _LS_E_NOT_FOUND:
            self._check(st)
            side = lambda x: Thevenin(_s(x.node), x.vth, x.rth, x.norton, _s(x.why))  # noqa: E731
            return PortThevenin(node_or_port, side(d), side(ld))
        t = _TheveninInfo()
        st = _lib.ls_circuit_thevenin(h, node_or_port.encode(), ctypes.byref(t))
        if st == _LS_E_NOT_FOUND:
            raise KeyError(node_or_port)
        self._check(st)
        return Thevenin(node_or_port, t.vth, t.rth, t.norton)

    def influence(self, quantity: str) -> List[InfluenceRow]:
        """How much each part's main value moves quantity (adjoint method),
        largest first."""
        self._need_solved()
        v = ctypes.c_double()
        arr = ctypes.POINTER(_InfluenceEntry)()
        n = ctypes.c_int()
        n0 = len(self.diagnostics())
        self._check(_lib.ls_circuit_influence(self._handle(), quantity.encode(), ctypes.byref(v), ctypes.byref(arr),
                                              ctypes.byref(n)), n0)
        try:
            return [InfluenceRow(_s(arr[i].part), arr[i].part_value, arr[i].per_unit, arr[i].percent_per_percent)
                    for i in range(n.value)]
        finally:
            _lib.ls_free(arr)

    def tol(self, quantity: str, trials: int = 10000, seed: int = 0, dist: str = "uniform",
            threads: int = 0) -> ToleranceReport:
        """Tolerance study of quantity from the parts' tol= options: worst
        case, Monte Carlo (trials, seed; dist "uniform" within +-tol or
        "normal" with tol = 3 sigma) and yield.  The same seed gives the same
        statistics as `loadstack tol --seed`, whatever the threads."""
        if dist not in ("uniform", "normal"):
            raise ValueError("dist is 'uniform' or 'normal'")
        if not 1 <= trials <= 10_000_000:
            raise ValueError("trials is a whole number from 1 to 10 000 000")
        self._need_solved()
        opt = _TolOptions(trials, seed, 1 if dist == "normal" else 0, threads)
        info = _TolInfo()
        vals = _c_double_p()
        n0 = len(self.diagnostics())
        self._check(_lib.ls_circuit_tol(self._handle(), quantity.encode(), ctypes.byref(opt), ctypes.byref(info),
                                        ctypes.byref(vals)), n0)
        try:
            values = _array(vals[:info.trials] if vals else [])
        finally:
            _lib.ls_free(vals)
        keys = ("0.1", "1", "50", "99", "99.9")
        return ToleranceReport(quantity, info.nominal, info.wc_min, info.wc_max,
                               "corners" if info.corners else "sensitivity", info.rss, info.varying, info.trials,
                               seed, info.finite, info.mean, info.std, info.min, info.max,
                               dict(zip(keys, list(info.pct))), info.yield_, values)

    def fit(self, goal: str = "margin", series: str = "E24", top: int = 5, trials: int = 2000, seed: int = 1,
            dist: str = "uniform") -> FitResult:
        """Standard values (IEC 60063) for the parts marked free=LO..HI that
        meet every expect, rule and port verdict, as `loadstack fit` chooses
        them: goal "margin" (the largest smallest margin), "yield" (Monte
        Carlo over the parts' tol=, trials and seed as tol) or "current" (the
        least supply current); series for a free part without snap=.  The
        circuit keeps its written values."""
        aims = {"margin": 0, "yield": 1, "current": 2}
        if goal not in aims:
            raise ValueError("goal is 'margin', 'yield' or 'current'")
        if dist not in ("uniform", "normal"):
            raise ValueError("dist is 'uniform' or 'normal'")
        self._need_solved()
        opt = _FitOptions(series.encode(), aims[goal], top, trials, seed, 1 if dist == "normal" else 0)
        cands = ctypes.POINTER(_FitCandidate)()
        ncands, nfree = ctypes.c_int(), ctypes.c_int()
        vals = _c_double_p()
        names = ctypes.POINTER(ctypes.c_char_p)()
        n0 = len(self.diagnostics())
        st = _lib.ls_circuit_fit(self._handle(), ctypes.byref(opt), ctypes.byref(cands), ctypes.byref(ncands),
                                 ctypes.byref(vals), ctypes.byref(nfree), ctypes.byref(names))
        if st == -1:
            raise ValueError("fit: a bad option, no part marked free=, or a free range without a series value")
        self._check(st, n0)
        try:
            free = [_s(names[j]) for j in range(nfree.value)]
            out = []
            for i in range(ncands.value):
                k = cands[i]
                out.append(FitCandidate({free[j]: vals[i * nfree.value + j] for j in range(nfree.value)},
                                        bool(k.meets), k.failed, k.margin, k.yield_, k.current))
        finally:
            _lib.ls_free(cands)
            _lib.ls_free(vals)
            _lib.ls_free(names)
        return FitResult(goal, series, out)

    def formula(self, quantity: str, symbols: Optional[Sequence[str]] = None, ideal: bool = False) -> Formula:
        """quantity as an exact formula of the parts' values, as `loadstack
        formula` prints it.  symbols keeps only those parts' values and lets
        as symbols (None: every part's main value and the lets used); ideal
        takes the limit as every finite op-amp gain goes to infinity.  The
        formula is checked against the solver's value every time."""
        self._need_solved()
        text = ctypes.c_void_p()
        v = ctypes.c_double()
        sym = ",".join(symbols).encode() if symbols is not None else None
        n0 = len(self.diagnostics())
        self._check(_lib.ls_circuit_formula(self._handle(), quantity.encode(), sym, int(bool(ideal)),
                                            ctypes.byref(text), ctypes.byref(v)), n0)
        try:
            out = ctypes.string_at(text.value).decode()
        finally:
            _lib.ls_free(text)
        return Formula(quantity, out, v.value)

    def sweep(self, let: str, start: float, stop: float, quantities: Union[str, Sequence[str]],
              steps: int = 51, log: bool = False) -> SweepResult:
        """Sweep the top-level let from start to stop (steps points, both
        ends included; log spaces them evenly on a log scale) and evaluate
        each quantity at every point."""
        if isinstance(quantities, str):
            quantities = [quantities]
        self._need_solved()
        qs = (ctypes.c_char_p * len(quantities))(*[q.encode() for q in quantities])
        x, y, solved = _c_double_p(), _c_double_p(), ctypes.c_int()
        n0 = len(self.diagnostics())
        st = _lib.ls_circuit_sweep(self._handle(), let.encode(), float(start), float(stop), steps, int(bool(log)),
                                   qs, len(quantities), ctypes.byref(x), ctypes.byref(y), ctypes.byref(solved))
        if st == -1:
            raise ValueError("sweep: steps 2..100000, finite ends (> 0 with log), 1..64 quantities")
        self._check(st, n0)
        try:
            xs = x[:steps]
            ys = y[:steps * len(quantities)]
        finally:
            _lib.ls_free(x)
            _lib.ls_free(y)
        nq = len(quantities)
        return SweepResult(let, _array(xs), {q: _array(ys[k::nq]) for k, q in enumerate(quantities)}, solved.value)
