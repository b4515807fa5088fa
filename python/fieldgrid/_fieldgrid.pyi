"""Type stub of the native module `fieldgrid._fieldgrid` (use the package `fieldgrid`)."""

from typing import Any, Callable, Optional

VERSION: str

ProgressFn = Callable[[str, Optional[int], Optional[float]], Any]

class NativeDesign:
    @staticmethod
    def from_file(path: str, overrides: list[tuple[str, float]]) -> NativeDesign: ...
    @staticmethod
    def from_text(text: str, file: str, overrides: list[tuple[str, float]]) -> NativeDesign: ...
    @staticmethod
    def from_dict(design: Any, file: str, overrides: list[tuple[str, float]]) -> NativeDesign: ...
    def with_overrides(self, overrides: list[tuple[str, float]]) -> NativeDesign: ...
    @property
    def file(self) -> str: ...
    @property
    def text(self) -> str: ...
    @property
    def overrides(self) -> list[tuple[str, float]]: ...
    @property
    def parameters(self) -> list[tuple[str, float]]: ...
    @property
    def mode(self) -> str: ...
    @property
    def unit(self) -> str: ...
    @property
    def conductors(self) -> list[str]: ...
    @property
    def dielectrics(self) -> list[str]: ...
    @property
    def text_hash(self) -> str: ...

class NativeResult:
    def summary_json(self) -> str: ...
    @property
    def shape(self) -> tuple[int, int]:
        """(nx, ny)."""
    def xs(self) -> bytes: ...
    def ys(self) -> bytes: ...
    def potential(self) -> bytes: ...
    def field(self) -> tuple[bytes, bytes]: ...
    def field_magnitude(self) -> bytes: ...
    def permittivity(self) -> bytes: ...
    def conductor_index(self) -> bytes: ...
    def write(
        self,
        out: str,
        *,
        field_table: bool = ...,
        vtk: bool = ...,
        log_field: bool = ...,
        picture_width: int = ...,
    ) -> str: ...

def solve(
    design: NativeDesign,
    *,
    solver: str = ...,
    tol: float = ...,
    threads: Optional[int] = ...,
    max_iterations: Optional[int] = ...,
    error_estimate: bool = ...,
    max_memory: Optional[float] = ...,
    accuracy: Optional[float] = ...,
    progress: Optional[ProgressFn] = ...,
) -> NativeResult: ...
def impedance(
    design: NativeDesign,
    signals: list[str],
    *,
    solver: str = ...,
    tol: float = ...,
    threads: Optional[int] = ...,
    max_iterations: Optional[int] = ...,
    error_estimate: bool = ...,
    max_memory: Optional[float] = ...,
    accuracy: Optional[float] = ...,
    progress: Optional[ProgressFn] = ...,
) -> NativeResult: ...
def check(
    design: NativeDesign,
    out: Optional[str] = ...,
    picture_width: int = ...,
    grid_lines: bool = ...,
) -> str: ...
