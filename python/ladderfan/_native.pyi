"""Type stubs of the native module ladderfan._native (Rust, pyo3). Use the functions of the
package ``ladderfan``; these return the library's records as JSON text."""

from typing import Any, Callable, List, Optional, Sequence, Tuple

class LadderfanError(Exception):
    """Every error of ladderfan; the message is the command line's one line."""

class Model:
    """A loaded model (library model, file defaults, origin)."""
    @property
    def name(self) -> str: ...
    @property
    def origin(self) -> str: ...
    @property
    def components(self) -> List[str]: ...
    @property
    def dim(self) -> int: ...
    @property
    def charge(self) -> float: ...
    def units_json(self) -> str: ...
    def record_json(self) -> str: ...

def load_toml(name: str, text: str, overrides: Sequence[Tuple[str, str]], origin: str) -> Model: ...
def load_builtin(name: str, overrides: Sequence[Tuple[str, str]]) -> Model: ...
def builtin_names() -> List[str]: ...
def version() -> str: ...
def spectrum_json(
    model: Model,
    field: Optional[float] = ...,
    kz: Optional[float] = ...,
    cutoff: Optional[int] = ...,
    memory_limit_mib: Optional[int] = ...,
) -> str: ...
def sweep_json(
    model: Model,
    swept: str,
    values: Sequence[float],
    fixed: Optional[float] = ...,
    cutoff: Optional[int] = ...,
    memory_limit_mib: Optional[int] = ...,
) -> str: ...
def converge_json(
    model: Model,
    cutoffs: Sequence[int],
    field: Optional[float] = ...,
    kz: Optional[float] = ...,
    target: float = ...,
    count: int = ...,
    memory_limit_mib: Optional[int] = ...,
) -> str: ...
def matrix_entries(
    model: Model,
    field: Optional[float] = ...,
    kz: Optional[float] = ...,
    cutoff: Optional[int] = ...,
    sector: Optional[Tuple[int, int]] = ...,
    memory_limit_mib: Optional[int] = ...,
) -> Tuple[int, List[int], List[int], List[float], List[float], List[Tuple[int, int]]]: ...
def verify_json(
    model: Model,
    ns: Sequence[int],
    ss: Sequence[int],
    formula: Optional[str] = ...,
    function: Optional[Callable[[int, int], Optional[float]]] = ...,
    multiplicity: Optional[str] = ...,
    field: Optional[float] = ...,
    kz: Optional[float] = ...,
    cutoff: Optional[int] = ...,
    tolerance: Optional[float] = ...,
    relative: bool = ...,
    memory_limit_mib: Optional[int] = ...,
) -> str: ...
def dos_json(
    model: Model,
    field: Optional[float] = ...,
    kz: Optional[float] = ...,
    cutoff: Optional[int] = ...,
    width: Optional[float] = ...,
    shape: str = ...,
    emin: Optional[float] = ...,
    emax: Optional[float] = ...,
    points: int = ...,
    density_cm2: Optional[float] = ...,
    filling: Optional[float] = ...,
    temperature: float = ...,
    memory_limit_mib: Optional[int] = ...,
) -> str: ...
def optics_json(
    model: Model,
    fields: Sequence[float],
    kz: Optional[float] = ...,
    cutoff: Optional[int] = ...,
    density_cm2: Optional[float] = ...,
    filling: Optional[float] = ...,
    width: Optional[float] = ...,
    temperature: float = ...,
    max_energy: Optional[float] = ...,
    min_strength: float = ...,
    memory_limit_mib: Optional[int] = ...,
) -> str: ...
