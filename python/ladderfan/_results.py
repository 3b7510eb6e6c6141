"""Result objects: the library's records (``ladderfan::records``) as numpy columns.

Every class keeps the full record in ``.record`` (a dict, the same keys as the command line's
``--json``) and exposes its numbers as numpy arrays. ``to_pandas()`` builds a DataFrame whose
column names follow the CSV convention of the command line: ``<quantity>_<unit>`` with unit
spellings such as ``energy_meV``, ``field_T``, ``kz_invnm``, ``energy_mc2``, ``field_Bc``.
pandas is optional: it is imported only by ``to_pandas()``.
"""

from __future__ import annotations

from typing import Any, Dict, List, Optional

import numpy as np

_UNIT_SPELLING = {
    "meV": "meV",
    "m c^2": "mc2",
    "T": "T",
    "B_c": "Bc",
    "1/nm": "invnm",
    "m c/hbar": "mc",
    "nm": "nm",
    "hbar/(m c)": "hbar_mc",
}


def _spell(unit: str) -> str:
    """A unit as it appears in a column name (survives numpy's name sanitising)."""
    return _UNIT_SPELLING.get(unit, "".join(ch if ch.isalnum() else "_" for ch in unit))


def _pandas():
    try:
        import pandas as pd
    except ImportError:  # pragma: no cover - depends on the environment
        from ._native import LadderfanError

        raise LadderfanError(
            "to_pandas: pandas is not installed; pip install pandas (the numpy columns need "
            "no pandas)"
        ) from None
    return pd


def _floats(values: List[Optional[float]]) -> np.ndarray:
    """A float64 array with NaN where the record has null."""
    return np.array([np.nan if v is None else v for v in values], dtype=np.float64)


class Spectrum:
    """The levels at one (field, kz), ascending in energy (model energy unit, relative to
    ``reference_energy``).

    Columns (numpy arrays, one entry per level): ``energy``, ``bound`` (the deciding certified
    error bound), ``residual_bound``, ``kato_temple_bound`` (NaN where not certified),
    ``converged`` (bool), ``state`` (``converged`` / ``not_converged`` / ``cutoff_artefact``),
    ``landau_index`` (int64, the trade's n; -1 where unlabelled), ``branch`` (``upper_k``,
    ``lower_k``, ``unpaired``: the Landau branch counted from the gap), ``root`` (int8:
    Klein-Gordon root +1/-1, else 0), ``label`` (``+2``, ``-2``, ``0``, ``?``), ``sector``
    (``class:J``), ``sector_class``, ``sector_label``, ``rank``, ``orbital``, ``component``
    (dominant component index), and ``weights`` (levels x components, each row sums to 1).
    """

    def __init__(self, record: Dict[str, Any]):
        self.record = record
        units = record["units"]
        self.energy_unit: str = units["energy"]
        self.field: float = record["field"]
        self.kz: float = record["kz"]
        self.cutoff: int = record["cutoff"]
        self.reference_energy: float = record["reference_energy"]
        self.magnetic_length: float = record["magnetic_length"]
        self.symmetry: str = record["symmetry"]["description"]
        self.warnings: List[str] = list(record["warnings"])
        levels = record["levels"]
        self.energy = np.array([lv["energy"] for lv in levels], dtype=np.float64)
        self.bound = np.array([lv["bound"] for lv in levels], dtype=np.float64)
        self.residual_bound = np.array([lv["residual_bound"] for lv in levels], dtype=np.float64)
        self.kato_temple_bound = _floats([lv.get("kato_temple_bound") for lv in levels])
        self.converged = np.array([lv["converged"] for lv in levels], dtype=bool)
        self.state = np.array([lv["state"] for lv in levels], dtype=object)
        n = [lv["landau_n"] for lv in levels]
        self.landau_index = np.array([-1 if x is None else x for x in n], dtype=np.int64)
        self.branch = np.array([_branch_text(lv["landau_branch"]) for lv in levels], dtype=object)
        self.root = np.array([lv["branch"] for lv in levels], dtype=np.int8)
        self.label = np.array([lv["label"] for lv in levels], dtype=object)
        self.sector = np.array([lv["sector"] for lv in levels], dtype=object)
        self.sector_class = np.array([lv["sector_class"] for lv in levels], dtype=np.int64)
        self.sector_label = np.array([lv["sector_label"] for lv in levels], dtype=np.int64)
        self.rank = np.array([lv["rank"] for lv in levels], dtype=np.int64)
        self.orbital = np.array([lv["orbital"] for lv in levels], dtype=np.int64)
        self.component = np.array([lv["component"] for lv in levels], dtype=np.int64)
        dim = record["model"]["components"]
        self.weights = np.array([lv["weights"] for lv in levels], dtype=np.float64).reshape(
            len(levels), dim
        )
        names = sorted({(lv["component"], lv["component_name"]) for lv in levels})
        known = dict(names)
        self.components: List[str] = [known.get(a, str(a)) or str(a) for a in range(dim)]

    def __len__(self) -> int:
        return len(self.energy)

    def __repr__(self) -> str:
        return (
            f"<ladderfan.Spectrum {len(self)} levels ({int(self.converged.sum())} converged) at "
            f"field {self.field}, kz {self.kz}, cutoff {self.cutoff}; energies in "
            f"{self.energy_unit}>"
        )

    def to_pandas(self):
        """One row per level; energy columns carry the unit (``energy_meV``), weights are
        ``weight_<component>``."""
        pd = _pandas()
        u = _spell(self.energy_unit)
        cols = {
            "sector": self.sector,
            "label": self.label,
            "landau_index": self.landau_index,
            "branch": self.branch,
            "root": self.root,
            "rank": self.rank,
            "orbital": self.orbital,
            "component": self.component,
            f"energy_{u}": self.energy,
            f"bound_{u}": self.bound,
            "state": self.state,
            "converged": self.converged,
        }
        for a, name in enumerate(self.components):
            cols[f"weight_{name}"] = self.weights[:, a]
        return pd.DataFrame(cols)


def _branch_text(b: Any) -> str:
    """The Landau branch of a record (``"unpaired"`` or ``{"upper": k}``) as ``upper_k``."""
    if isinstance(b, dict):
        (side, k), = b.items()
        return f"{side}_{k}"
    return str(b)


class Sweep:
    """Levels tracked over a sweep of the field (``swept == "field"``) or of kz.

    ``values``: the swept coordinate (model field unit or wave-number unit); ``fixed``: the
    other one. Per tracked level (rows): ``label``, ``landau_index`` (-1 unlabelled),
    ``branch``, ``family``, ``track`` (integer identity ``family:n:branch:copy``); per level and
    point: ``energy`` and ``bound`` (tracks x points, NaN where not converged), model energy
    unit relative to ``reference_energy``.
    """

    def __init__(self, record: Dict[str, Any], units: Dict[str, str]):
        self.record = record
        self.units = units
        self.swept: str = record["swept"]
        self.values = np.array(record["values"], dtype=np.float64)
        self.fixed: float = record["fixed"]
        self.cutoff: int = record["cutoff"]
        self.reference_energy: float = record["reference_energy"]
        tracks = record["tracks"]
        npts = len(self.values)
        self.track = np.array([t["track"] for t in tracks], dtype=object)
        self.label = np.array([t["label"] for t in tracks], dtype=object)
        self.landau_index = np.array(
            [-1 if t["n"] is None else t["n"] for t in tracks], dtype=np.int64
        )
        self.branch = np.array([_branch_text(t["branch"]) for t in tracks], dtype=object)
        self.family = np.array([t["family"] for t in tracks], dtype=np.int64)
        self.energy = np.array([_floats(t["energies"]) for t in tracks], dtype=np.float64)
        self.bound = np.array([_floats(t["bounds"]) for t in tracks], dtype=np.float64)
        self.energy = self.energy.reshape(len(tracks), npts)
        self.bound = self.bound.reshape(len(tracks), npts)

    def __len__(self) -> int:
        return len(self.track)

    def __repr__(self) -> str:
        return f"<ladderfan.Sweep over {self.swept}: {len(self)} tracks x {len(self.values)} points>"

    def to_pandas(self):
        """Long format: one row per (track, point) where the level converged, with
        ``field_<unit>`` / ``kz_<unit>`` and ``energy_<unit>`` columns."""
        pd = _pandas()
        u = _spell(self.units["energy"])
        x = (
            f"field_{_spell(self.units['field'])}"
            if self.swept == "field"
            else f"kz_{_spell(self.units['wavenumber'])}"
        )
        t_idx, p_idx = np.nonzero(~np.isnan(self.energy))
        return pd.DataFrame(
            {
                x: self.values[p_idx],
                "track": self.track[t_idx],
                "label": self.label[t_idx],
                "landau_index": self.landau_index[t_idx],
                "branch": self.branch[t_idx],
                f"energy_{u}": self.energy[t_idx, p_idx],
                f"bound_{u}": self.bound[t_idx, p_idx],
            }
        )


class Convergence:
    """A convergence study: ``cutoffs`` and, per followed level (rows) and cutoff (columns),
    ``energy``, ``bound``, ``change`` (from the previous cutoff), ``actual_error`` (against
    the closed form or the largest cutoff), ``converged``; per level ``needed_cutoff`` (the
    cutoff observed or predicted to meet the tolerance, -1 when unknown). Energies in the
    model's energy unit."""

    def __init__(self, record: Dict[str, Any]):
        self.record = record
        self.cutoffs = np.array(record["cutoffs"], dtype=np.int64)
        self.tolerance: float = record["tolerance"]
        self.energy_unit: str = record["energy_unit"]
        levels = record["levels"]
        ncut = len(self.cutoffs)

        def grid(key: str) -> np.ndarray:
            return np.array(
                [_floats([e[key] for e in lv["entries"]]) for lv in levels], dtype=np.float64
            ).reshape(len(levels), ncut)

        self.energy = grid("energy")
        self.bound = grid("bound")
        self.change = grid("change")
        self.actual_error = grid("actual_error")
        self.converged = np.array(
            [[bool(e["converged"]) for e in lv["entries"]] for lv in levels], dtype=bool
        ).reshape(len(levels), ncut)
        self.reference_value = np.array([lv["reference_value"] for lv in levels], dtype=np.float64)
        self.needed_cutoff = np.array(
            [_needed(lv["needed_cutoff"]) for lv in levels], dtype=np.int64
        )

    def __repr__(self) -> str:
        return f"<ladderfan.Convergence {len(self.reference_value)} levels x cutoffs {list(self.cutoffs)}>"

    def to_pandas(self):
        """Long format: one row per (level, cutoff)."""
        pd = _pandas()
        u = _spell(self.energy_unit)
        nlev, ncut = self.energy.shape
        lev = np.repeat(np.arange(nlev), ncut)
        cut = np.tile(self.cutoffs, nlev)
        return pd.DataFrame(
            {
                "level": lev,
                "cutoff": cut,
                f"energy_{u}": self.energy.ravel(),
                f"bound_{u}": self.bound.ravel(),
                f"change_{u}": self.change.ravel(),
                f"actual_error_{u}": self.actual_error.ravel(),
                "converged": self.converged.ravel(),
            }
        )


def _needed(v: Any) -> int:
    """The cutoff of a `needed_cutoff` record (`{"observed": N}`, `{"predicted": N}`), else -1."""
    if isinstance(v, dict):
        for x in v.values():
            if isinstance(x, int):
                return x
    return -1


class Verdict:
    """A level-by-level check: ``passed``, ``outcome`` (``pass`` / ``fail`` /
    ``inconclusive``), ``line`` (the verdict line), and per matched pair: ``expected_energy``,
    ``numerical_energy``, ``deviation``, ``allowed``, ``n``, ``s``, ``agreement``. Energies in
    the model's energy unit, relative to ``reference_energy``."""

    def __init__(self, record: Dict[str, Any]):
        self.record = record
        v = record["verdict"]
        self.outcome: str = v["outcome"]
        self.passed: bool = self.outcome == "pass"
        self.line: str = record["verdict_line"]
        self.energy_unit: str = record["units"]["energy"]
        self.reference_energy: float = v["reference_energy"]
        pairs = v["pairs"]
        self.n = np.array([p["expected"]["n"] for p in pairs], dtype=np.int64)
        self.s = np.array([p["expected"]["s"] for p in pairs], dtype=np.int64)
        self.expected_energy = np.array([p["expected"]["energy"] for p in pairs], dtype=np.float64)
        self.numerical_energy = np.array(
            [p["numerical"]["energy"] for p in pairs], dtype=np.float64
        )
        self.deviation = np.array([p["deviation"] for p in pairs], dtype=np.float64)
        self.allowed = np.array([p["allowed"] for p in pairs], dtype=np.float64)
        self.agreement = np.array([p["agreement"] for p in pairs], dtype=object)
        self.worst_deviation: float = v["worst_deviation"]

    def __bool__(self) -> bool:
        return self.passed

    def __repr__(self) -> str:
        return f"<ladderfan.Verdict {self.line}>"

    def to_pandas(self):
        """One row per compared pair."""
        pd = _pandas()
        u = _spell(self.energy_unit)
        return pd.DataFrame(
            {
                "n": self.n,
                "s": self.s,
                f"expected_{u}": self.expected_energy,
                f"energy_{u}": self.numerical_energy,
                f"deviation_{u}": self.deviation,
                f"allowed_{u}": self.allowed,
                "agreement": self.agreement,
            }
        )


class Dos:
    """Density of states at one point: ``energy`` (model energy unit, relative to
    ``reference_energy``) and ``dos`` (states per energy unit per cm^2, both spin/valley
    copies the model holds counted), ``width`` (the broadening), ``landau_degeneracy_cm2``
    (|qB|/h per cm^2); ``fermi`` (dict: ``fermi_energy``, ``filling_factor``,
    ``density_cm2``, ...) when a density or filling was given, else None."""

    def __init__(self, record: Dict[str, Any]):
        self.record = record
        self.energy_unit: str = record["units"]["energy"]
        curve = np.array(record["dos"], dtype=np.float64).reshape(-1, 2)
        self.energy = curve[:, 0].copy()
        self.dos = curve[:, 1].copy()
        self.width: float = record["width"]
        self.reference_energy: float = record["reference_energy"]
        self.landau_degeneracy_cm2: float = record["landau_degeneracy_cm2"]
        self.fermi: Optional[Dict[str, Any]] = record["fermi"]

    def __repr__(self) -> str:
        return f"<ladderfan.Dos {len(self.energy)} energies, width {self.width} {self.energy_unit}>"

    def to_pandas(self):
        """Columns ``energy_<unit>`` and ``dos_per_<unit>_cm2``."""
        pd = _pandas()
        u = _spell(self.energy_unit)
        return pd.DataFrame({f"energy_{u}": self.energy, f"dos_per_{u}_cm2": self.dos})


class Optics:
    """Allowed magneto-optical transitions, one row per transition and field: ``field``,
    ``from_label``, ``to_label``, ``energy`` (transition energy, model energy unit),
    ``from_energy``, ``to_energy``, ``strength_plus``, ``strength_minus`` (sigma+/sigma-,
    velocity unit squared times the occupation difference), ``relative_strength`` (to the
    strongest), ``oscillator_strength_x``, ``polarisation``; ``fermi_energy`` per field."""

    def __init__(self, record: Dict[str, Any]):
        self.record = record
        self.energy_unit: str = record["units"]["energy"]
        self.field_unit: str = record["units"]["field"]
        rows = [(p["field"], t) for p in record["points"] for t in p["transitions"]]
        self.fields = np.array([p["field"] for p in record["points"]], dtype=np.float64)
        self.fermi_energy = np.array(
            [p["fermi"]["fermi_energy"] for p in record["points"]], dtype=np.float64
        )
        self.field = np.array([f for f, _ in rows], dtype=np.float64)
        self.from_label = np.array([t["from"] for _, t in rows], dtype=object)
        self.to_label = np.array([t["to"] for _, t in rows], dtype=object)
        for key in (
            "energy",
            "from_energy",
            "to_energy",
            "strength_plus",
            "strength_minus",
            "relative_strength",
            "oscillator_strength_x",
        ):
            setattr(self, key, np.array([t[key] for _, t in rows], dtype=np.float64))
        self.polarisation = np.array([t["polarisation"] for _, t in rows], dtype=object)

    def __len__(self) -> int:
        return len(self.field)

    def __repr__(self) -> str:
        return f"<ladderfan.Optics {len(self)} transitions at {len(self.fields)} field(s)>"

    def to_pandas(self):
        """One row per transition and field."""
        pd = _pandas()
        u = _spell(self.energy_unit)
        return pd.DataFrame(
            {
                f"field_{_spell(self.field_unit)}": self.field,
                "from_label": self.from_label,
                "to_label": self.to_label,
                f"energy_{u}": self.energy,  # type: ignore[attr-defined]
                "relative_strength": self.relative_strength,  # type: ignore[attr-defined]
                "polarisation": self.polarisation,
            }
        )
