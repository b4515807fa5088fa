"""Designs: read from a file, TOML text or a dict, with parameters replaced.

A :class:`Design` is read and validated when it is made, by the same reader as the command
line's, so a bad design raises :class:`fieldgrid.DesignError` at once, naming file, line and
key. Replacing parameters (:meth:`Design.with_parameters`) reads the text again, exactly as
``--set NAME=VALUE`` does.
"""

from __future__ import annotations

import os
from typing import Any, Mapping, Union

from . import _fieldgrid

__all__ = ["Design", "DesignLike"]


def _overrides(parameters: Mapping[str, float] | None) -> list[tuple[str, float]]:
    if not parameters:
        return []
    out = []
    for name, value in parameters.items():
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            try:
                value = float(value)  # numpy scalars
            except (TypeError, ValueError):
                raise TypeError(f"parameter {name}: {value!r} is not a number") from None
        out.append((str(name), float(value)))
    return out


class Design:
    """A validated design (immutable).

    Make one with :meth:`from_file`, :meth:`from_toml` or :meth:`from_dict`; each takes
    ``parameters``, a mapping of parameter name to value (in the design's own units) that
    replaces the values in ``[parameters]``, as ``--set`` does.
    """

    __slots__ = ("_native",)

    def __init__(self, native: _fieldgrid.NativeDesign) -> None:
        self._native = native

    @classmethod
    def from_file(
        cls, path: str | os.PathLike[str], parameters: Mapping[str, float] | None = None
    ) -> "Design":
        """Reads the design file at ``path`` (TOML). Raises OSError when it cannot be read."""
        return cls(_fieldgrid.NativeDesign.from_file(os.fspath(path), _overrides(parameters)))

    @classmethod
    def from_toml(
        cls,
        text: str,
        parameters: Mapping[str, float] | None = None,
        *,
        name: str = "design.toml",
    ) -> "Design":
        """Reads TOML text. ``name`` stands for the file in messages, names the subcircuit in
        ``capacitance.cir`` and is the base of relative SVG paths."""
        return cls(_fieldgrid.NativeDesign.from_text(text, name, _overrides(parameters)))

    @classmethod
    def from_dict(
        cls,
        design: Mapping[str, Any],
        parameters: Mapping[str, float] | None = None,
        *,
        name: str = "<dict>",
    ) -> "Design":
        """Reads a dict shaped like the design file: tables as dicts, arrays of tables
        (``[[conductor]]``) as lists of dicts, values as str, bool, int or float (numpy
        scalars too). Keys keep their order. Errors name the dotted key; their line is that
        of :attr:`text`, the TOML made from the dict."""
        return cls(_fieldgrid.NativeDesign.from_dict(design, name, _overrides(parameters)))

    def with_parameters(self, parameters: Mapping[str, float] | None = None, /, **values: float) -> "Design":
        """The same design with parameter values replaced (keywords or a mapping), on top of
        the ones replaced before. ``d.with_parameters(gap=0.5)`` is ``--set gap=0.5``."""
        merged = dict(self._native.overrides)
        merged.update(parameters or {})
        merged.update(values)
        return Design(self._native.with_overrides(_overrides(merged)))

    @property
    def file(self) -> str:
        """The file name as given (the ``name`` of a text or dict design)."""
        return self._native.file

    @property
    def text(self) -> str:
        """The TOML text read (for a dict, the text made from it)."""
        return self._native.text

    @property
    def parameters(self) -> dict[str, float]:
        """The parameters as used (replacements applied), in file order, in the design's
        units."""
        return dict(self._native.parameters)

    @property
    def mode(self) -> str:
        """``"planar"`` or ``"axisymmetric"``."""
        return self._native.mode

    @property
    def unit(self) -> str:
        """The design file's length unit."""
        return self._native.unit

    @property
    def conductors(self) -> list[str]:
        """Conductor names, in design order (the capacitance matrix's order)."""
        return self._native.conductors

    @property
    def dielectrics(self) -> list[str]:
        """Dielectric names, in design order."""
        return self._native.dielectrics

    def __repr__(self) -> str:
        return f"Design({self.file!r}, mode={self.mode!r}, parameters={self.parameters!r})"


DesignLike = Union[Design, str, "os.PathLike[str]"]


def as_design(design: DesignLike) -> Design:
    """A Design, or the design file at a path."""
    if isinstance(design, Design):
        return design
    if isinstance(design, (str, os.PathLike)):
        return Design.from_file(design)
    raise TypeError(f"expected a Design or a path, got {type(design).__name__}")
