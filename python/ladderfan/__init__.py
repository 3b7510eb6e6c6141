"""ladderfan from Python: Landau-level spectra by exact diagonalization in a truncated
ladder-operator basis, with a rigorous error bound on every level.

Every number comes from the Rust library (the native module ``ladderfan._native``); this layer
only turns the library's records into numpy arrays. The native side hands over the records as
JSON text with shortest round-trip floats, which Python reads back to the same bits: the
arrays equal the Rust results bit for bit.

Units: the model's own. Lab models: energies in meV, fields in T, kz in 1/nm, lengths in nm.
Natural-unit models: energies in m c^2, fields in B_c, kz in m c/hbar. ``Model.units`` says
which. Energies are relative to the spectrum's reference energy unless stated otherwise.

Errors of every kind raise :class:`LadderfanError` whose message is the one line the command
line prints after ``ladderfan: error:``.
"""

from __future__ import annotations

import json
import os
from typing import Any, Callable, Iterable, Mapping, Optional, Sequence, Tuple, Union

import numpy as np

from . import _native
from ._native import LadderfanError, Model
from ._results import Convergence, Dos, Optics, Spectrum, Sweep, Verdict

__all__ = [
    "LadderfanError",
    "Model",
    "Spectrum",
    "Sweep",
    "Convergence",
    "Verdict",
    "Dos",
    "Optics",
    "load",
    "load_toml",
    "builtin",
    "builtin_names",
    "spectrum",
    "fan",
    "dispersion",
    "converge",
    "verify",
    "dos",
    "optics",
    "export",
    "export_with_states",
    "__version__",
]

__version__: str = _native.version()

Number = Union[int, float]


def _overrides(values: Mapping[str, Union[Number, str]]) -> list:
    """Overrides as (name, expression) pairs: numbers in their round-trip repr, strings as
    expressions of the model-file language (``"2*mu_B"``)."""
    out = []
    for k, v in values.items():
        if isinstance(v, bool):
            raise LadderfanError(f"{k}: {v!r} is not a number; give a number or an expression")
        if isinstance(v, (int, float, np.integer, np.floating)):
            out.append((k, repr(float(v))))
        elif isinstance(v, str):
            out.append((k, v))
        else:
            raise LadderfanError(
                f"{k}: {type(v).__name__} is not a number; give a number or an expression"
            )
    return out


def load(path: Union[str, os.PathLike], **overrides: Union[Number, str]) -> Model:
    """Load a TOML model file (README, section Model files).

    Keyword overrides replace ``[set]`` entries of a built-in file or ``[parameters]`` entries
    of a term file, in the file's units, as ``ladderfan --model FILE --set k=v`` does. Errors
    name the file and the line: ``PATH:LINE:COLUMN: ...``.
    """
    shown = os.fspath(path)
    try:
        with open(shown, "rb") as f:
            raw = f.read()
    except OSError as e:
        raise LadderfanError(
            f"model: cannot read model file {shown}: {e.strerror}; "
            "give the path of a readable TOML model file"
        ) from None
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as e:
        raise LadderfanError(
            f"model: {shown} is not a text file (byte {e.start} is not UTF-8); "
            "give a TOML model file (see the README, section Model files)"
        ) from None
    return _native.load_toml(shown, text, _overrides(overrides), f"file {shown}")


def load_toml(text: str, name: str = "<string>", **overrides: Union[Number, str]) -> Model:
    """Parse a TOML model from a string; ``name`` locates its errors (``NAME:LINE:COLUMN``).
    Overrides as in :func:`load`."""
    return _native.load_toml(name, text, _overrides(overrides), f"string {name}")


def builtin(name: str, **overrides: Union[Number, str]) -> Model:
    """A built-in model (:func:`builtin_names`) with parameter overrides in the model's units,
    e.g. ``builtin("pauli", mass_ratio=0.067, g_factor=-0.44)``. A value may be an expression
    string of the model-file language."""
    return _native.load_builtin(name, _overrides(overrides))


def builtin_names() -> list:
    """The names of the built-in models."""
    return list(_native.builtin_names())


def spectrum(
    model: Model,
    field: Optional[float] = None,
    kz: Optional[float] = None,
    cutoff: Optional[int] = None,
    *,
    memory_limit_mib: Optional[int] = None,
) -> Spectrum:
    """All levels at one field (model field unit: T or B_c) and kz (1/nm or m c/hbar) with the
    orbital cutoff N (orbitals n = 0..N-1 per component). Defaults: the model file's
    ``[defaults]``, else 5 T (0.1 B_c), kz = 0 and the library's default cutoff.

    Returns a :class:`Spectrum` whose columns are numpy arrays, ascending in energy; cutoff
    artefacts are included and marked (``state == "cutoff_artefact"``). The GIL is released
    during the solve."""
    return Spectrum(json.loads(_native.spectrum_json(model, field, kz, cutoff, memory_limit_mib)))


def _grid(lo: float, hi: float, points: int, name: str) -> np.ndarray:
    if int(points) < 2:
        raise LadderfanError(f"points: {points} points; a sweep needs at least 2")
    return np.linspace(float(lo), float(hi), int(points))


def fan(
    model: Model,
    fields: Optional[Iterable[float]] = None,
    *,
    b_min: Optional[float] = None,
    b_max: Optional[float] = None,
    points: int = 60,
    kz: Optional[float] = None,
    cutoff: Optional[int] = None,
    memory_limit_mib: Optional[int] = None,
) -> Sweep:
    """A Landau fan: the levels over a sweep of the field (model field unit), tracked by their
    quantum numbers. Give ``fields`` (any sequence), or ``b_max`` (default 10 T or 0.2 B_c),
    ``b_min`` (default b_max/20) and ``points`` for a linear grid. The points are solved in
    parallel by the library (GIL released). Energies relative to the reference energy."""
    if fields is None:
        units = json.loads(model.units_json())
        top = b_max if b_max is not None else (10.0 if units["system"] == "lab" else 0.2)
        low = b_min if b_min is not None else top / 20.0
        fields = _grid(low, top, points, "fields")
    values = [float(x) for x in np.asarray(fields, dtype=float).ravel()]
    raw = _native.sweep_json(model, "field", values, kz, cutoff, memory_limit_mib)
    return Sweep(json.loads(raw), json.loads(model.units_json()))


def dispersion(
    model: Model,
    kz: Optional[Iterable[float]] = None,
    *,
    kz_min: Optional[float] = None,
    kz_max: float = 1.0,
    points: int = 61,
    field: Optional[float] = None,
    cutoff: Optional[int] = None,
    memory_limit_mib: Optional[int] = None,
) -> Sweep:
    """The levels over a sweep of kz (model wave-number unit) at one field, tracked by their
    quantum numbers. Give ``kz`` (any sequence), or ``kz_min`` (default -kz_max), ``kz_max``
    and ``points`` for a linear grid. Parallel, GIL released."""
    if kz is None:
        low = kz_min if kz_min is not None else -kz_max
        kz = _grid(low, kz_max, points, "kz")
    values = [float(x) for x in np.asarray(kz, dtype=float).ravel()]
    raw = _native.sweep_json(model, "kz", values, field, cutoff, memory_limit_mib)
    return Sweep(json.loads(raw), json.loads(model.units_json()))


def converge(
    model: Model,
    cutoffs: Sequence[int] = (25, 50, 100, 200),
    field: Optional[float] = None,
    kz: Optional[float] = None,
    *,
    target: float = 0.0,
    count: int = 10,
    memory_limit_mib: Optional[int] = None,
) -> Convergence:
    """A convergence study: the ``count`` genuine levels nearest ``target`` (model energy unit,
    relative to the reference energy) at the largest cutoff, followed over ``cutoffs``; the
    actual error is measured against the closed form when the model has one."""
    cuts = [int(c) for c in cutoffs]
    if any(c < 0 for c in cuts):
        raise LadderfanError("cutoffs: a negative cutoff; give positive orbital counts")
    raw = _native.converge_json(model, cuts, field, kz, float(target), int(count), memory_limit_mib)
    return Convergence(json.loads(raw))


def verify(
    model: Model,
    expected: Union[str, Callable[[int, int], Optional[float]]],
    n: Iterable[int] = range(0, 20),
    s: Iterable[int] = (0,),
    *,
    field: Optional[float] = None,
    kz: Optional[float] = None,
    cutoff: Optional[int] = None,
    tolerance: Optional[float] = None,
    relative: bool = False,
    multiplicity: Optional[str] = None,
    memory_limit_mib: Optional[int] = None,
) -> Verdict:
    """Check expected levels against the exact spectrum, level by level. ``expected`` is a
    formula string of the expression language (variables n, s, the model's parameters, ``B``,
    ``kz``, constants such as ``hbar``, ``mu_B``) or a Python callable ``E(n, s)`` returning
    the energy in the model's energy unit (or None for no level). Energies are absolute unless
    ``relative`` (then relative to the model's reference energy). Returns a :class:`Verdict`
    (``.passed``, ``.line``, matched levels as columns); it does not raise on a failed check."""
    ns = [int(x) for x in n]
    ss = [int(x) for x in s]
    if isinstance(expected, str):
        formula, function = expected, None
    elif callable(expected):
        formula, function = None, expected
    else:
        raise LadderfanError(
            "expected: give a formula string or a callable E(n, s)"
        )
    raw = _native.verify_json(
        model, ns, ss, formula, function, multiplicity, field, kz, cutoff, tolerance,
        relative, memory_limit_mib,
    )
    return Verdict(json.loads(raw))


def dos(
    model: Model,
    field: Optional[float] = None,
    kz: Optional[float] = None,
    cutoff: Optional[int] = None,
    *,
    width: Optional[float] = None,
    shape: str = "gaussian",
    emin: Optional[float] = None,
    emax: Optional[float] = None,
    points: int = 2000,
    density_cm2: Optional[float] = None,
    filling: Optional[float] = None,
    temperature: float = 0.0,
    memory_limit_mib: Optional[int] = None,
) -> Dos:
    """The broadened density of states at one point, per energy unit and cm^2, on ``points``
    energies from ``emin`` to ``emax`` (model energy unit, relative to the reference energy;
    default: the converged window). ``width``: Gaussian standard deviation or Lorentzian half
    width (default 5 % of the level spacing). With ``density_cm2`` (cm^-2, negative for holes)
    or ``filling`` (filling factor), also the Fermi level at ``temperature`` K."""
    raw = _native.dos_json(
        model, field, kz, cutoff, width, shape, emin, emax, int(points), density_cm2,
        filling, float(temperature), memory_limit_mib,
    )
    return Dos(json.loads(raw))


def optics(
    model: Model,
    field: Union[float, Iterable[float], None] = None,
    kz: Optional[float] = None,
    cutoff: Optional[int] = None,
    *,
    density_cm2: Optional[float] = None,
    filling: Optional[float] = None,
    width: Optional[float] = None,
    temperature: float = 0.0,
    max_energy: Optional[float] = None,
    min_strength: float = 1e-8,
    memory_limit_mib: Optional[int] = None,
) -> Optics:
    """The allowed magneto-optical transitions at one field or several (a transition-energy
    fan; parallel, GIL released), for the carrier density ``density_cm2`` (cm^-2) or filling
    factor ``filling`` (default: neutral). Energies in the model's energy unit, strengths
    relative to the strongest; sigma+/sigma- weights of each line."""
    if field is None:
        units = json.loads(model.units_json())
        field = 5.0 if units["system"] == "lab" else 0.1
    fields = [float(x) for x in np.atleast_1d(np.asarray(field, dtype=float)).ravel()]
    raw = _native.optics_json(
        model, fields, kz, cutoff, density_cm2, filling, width, float(temperature),
        max_energy, float(min_strength), memory_limit_mib,
    )
    return Optics(json.loads(raw))


def export(
    model: Model,
    field: Optional[float] = None,
    kz: Optional[float] = None,
    cutoff: Optional[int] = None,
    *,
    sector: Union[str, Tuple[int, int], None] = None,
    memory_limit_mib: Optional[int] = None,
) -> Any:
    """The truncated Hamiltonian at one point as a ``scipy.sparse.csr_array`` (complex128, or
    float64 when every element is real), in absolute energies of the model's energy unit: the
    whole matrix (row n d + alpha, orbital-major) or one ``sector`` (``"class:J"`` or
    ``(class, J)``, its states in banded order). The elements are those of the infinite
    matrix (the truncated matrix is its principal submatrix), as ``ladderfan export`` writes
    them; :func:`export_with_states` also gives the basis state of each row."""
    return export_with_states(
        model, field, kz, cutoff, sector=sector, memory_limit_mib=memory_limit_mib
    )[0]


def export_with_states(
    model: Model,
    field: Optional[float] = None,
    kz: Optional[float] = None,
    cutoff: Optional[int] = None,
    *,
    sector: Union[str, Tuple[int, int], None] = None,
    memory_limit_mib: Optional[int] = None,
) -> Tuple[Any, np.ndarray]:
    """As :func:`export`, with the basis state of each row: an (rows, 2) int64 array of
    (orbital n, component alpha)."""
    try:
        import scipy.sparse as sp
    except ImportError:  # pragma: no cover - depends on the environment
        raise LadderfanError(
            "export: scipy is not installed; pip install scipy for sparse matrices"
        ) from None
    sec = None
    if isinstance(sector, str):
        try:
            cls, lab = sector.split(":")
            sec = (int(cls), int(lab))
        except ValueError:
            raise LadderfanError(
                f"sector: '{sector}' is not CLASS:J; write e.g. sector=\"0:3\""
            ) from None
    elif sector is not None:
        sec = (int(sector[0]), int(sector[1]))
    size, rows, cols, re, im, states = _native.matrix_entries(
        model, field, kz, cutoff, sec, memory_limit_mib
    )
    re = np.asarray(re, dtype=np.float64)
    im = np.asarray(im, dtype=np.float64)
    data = re if not im.any() else re + 1j * im
    m = sp.csr_array((data, (np.asarray(rows, dtype=np.int64), np.asarray(cols, dtype=np.int64))),
                     shape=(size, size))
    return m, np.asarray(states, dtype=np.int64).reshape(-1, 2)
