"""Results of a study as Python values and numpy arrays.

Units are SI. In a planar design every extensive quantity is per metre of depth
(capacitance F/m, charge C/m, force N/m, energy J/m); in an axisymmetric one it is for the
whole body (F, C, N along the axis, J), x standing for r and y for z. ``Solution.units``
says which.

Node arrays have shape ``(ny, nx)``: ``a[j, i]`` is the value at ``(x[i], y[j])``.
"""

from __future__ import annotations

import json
import os
import warnings as _warnings
from dataclasses import dataclass
from functools import cached_property
from pathlib import Path
from typing import Any, Optional

import numpy as np

from . import _fieldgrid
from .errors import NotConvergedWarning

__all__ = [
    "Solution",
    "Conductor",
    "HotSpot",
    "WorstMargin",
    "Probe",
    "SolveWarning",
    "LineParameters",
]


@dataclass(frozen=True)
class Conductor:
    """One conductor at the operating point."""

    name: str
    #: Potential, V (solved for a floating conductor).
    potential: float
    #: Net charge, C/m (planar) or C.
    charge: float
    #: Estimated discretisation error of the charge (None without an error estimate).
    charge_error: Optional[float]
    #: Force (Fx, Fy), N/m (planar) or (0, Fz) N (axisymmetric).
    force: tuple[float, float]
    #: Estimated error of each force component (None without an error estimate).
    force_error: Optional[tuple[float, float]]
    floating: bool


@dataclass(frozen=True)
class HotSpot:
    """A local field maximum (also the peak field)."""

    #: |E|, V/m.
    magnitude: float
    #: Position, m.
    x: float
    y: float
    material: str
    #: Breakdown strength, V/m, when the material gives one.
    strength: Optional[float]
    #: strength / (magnitude + error estimate), when the strength is known.
    margin: Optional[float]
    #: At a sharp corner or thin edge: the value grows as the cell shrinks.
    singular: bool
    #: On a rounding too narrow for the cell: the value reads low (the estimate covers it).
    under_resolved: bool
    #: Estimated discretisation error of the magnitude, V/m.
    error_estimate: Optional[float]


@dataclass(frozen=True)
class WorstMargin:
    """The point of lowest margin over every material with a strength.

    A margin is an estimate from a discretised field; clearances and creepage distances
    follow the applicable standards and licensed engineering practice."""

    x: float
    y: float
    material: str
    #: |E| there, V/m.
    field: float
    #: Breakdown strength of the material, V/m.
    strength: float
    #: strength / (field + error estimate).
    margin: float
    singular: bool
    error_estimate: Optional[float]


@dataclass(frozen=True)
class Probe:
    """A probe reading."""

    name: str
    x: float
    y: float
    #: Potential, V.
    potential: float
    #: (Ex, Ey), V/m; None inside a conductor.
    field: Optional[tuple[float, float]]


@dataclass(frozen=True)
class SolveWarning:
    """A warning: its stable ``code`` (never renamed) and its sentence."""

    code: str
    message: str

    def __str__(self) -> str:
        return self.message


@dataclass(frozen=True)
class LineParameters:
    """Transmission-line parameters (``impedance``): matrices over the signals, per metre."""

    signals: list[str]
    #: Capacitance matrix C, F/m (signals x signals).
    c: np.ndarray
    #: Capacitance matrix with every permittivity 1, F/m.
    c0: np.ndarray
    #: Inductance matrix L, H/m.
    l: np.ndarray
    #: Characteristic impedance matrix Z, ohm.
    z: np.ndarray
    #: The scalar parameters by key (``z0``, ``eps_eff``, ``z_odd``, ``z_diff``, ...).
    scalars: dict[str, float]
    #: Their estimated discretisation errors, by the same keys (empty without estimate).
    error_estimate: dict[str, float]
    #: The whole ``line`` entry of summary.json.
    raw: dict[str, Any]


def _hotspot(h: dict[str, Any]) -> HotSpot:
    return HotSpot(
        magnitude=h["magnitude"],
        x=h["x"],
        y=h["y"],
        material=h["material"],
        strength=h.get("strength"),
        margin=h.get("margin"),
        singular=h.get("singular", False),
        under_resolved=h.get("under_resolved", False),
        error_estimate=h.get("error_estimate"),
    )


def _opt_pair(v: Any) -> Optional[tuple[float, float]]:
    return None if v is None else (v[0], v[1])


class Solution:
    """The result of :func:`fieldgrid.solve` or :func:`fieldgrid.impedance`.

    Everything summary.json holds is here as Python values (and whole as :attr:`summary`);
    node arrays are numpy arrays of shape ``(ny, nx)``, read-only, made on first use.
    """

    def __init__(self, native: _fieldgrid.NativeResult) -> None:
        self._native = native
        self.summary: dict[str, Any] = json.loads(native.summary_json())
        """summary.json as a dict (the same keys and values; ``solver.seconds`` is this
        study's own wall time)."""
        if not self.converged:
            _warnings.warn(
                "a linear solve did not converge: "
                f"{self.summary['solver'].get('failure') or 'tolerance not met'}",
                NotConvergedWarning,
                stacklevel=3,
            )

    # Scalars and tables -------------------------------------------------------------

    @property
    def converged(self) -> bool:
        """True when every linear solve met the tolerance (the command exits 3 otherwise)."""
        return bool(self.summary["solver"]["converged"])

    @property
    def mode(self) -> str:
        """``"planar"`` or ``"axisymmetric"``."""
        return self.summary["mode"]

    @property
    def units(self) -> dict[str, str]:
        """Units of the extensive results: per metre of depth in a planar design."""
        if self.summary["per_length"]:
            return {"capacitance": "F/m", "charge": "C/m", "force": "N/m", "energy": "J/m"}
        return {"capacitance": "F", "charge": "C", "force": "N", "energy": "J"}

    @property
    def names(self) -> list[str]:
        """Conductor names in the capacitance matrix's order."""
        return list(self.summary["capacitance"]["names"])

    @cached_property
    def capacitance(self) -> np.ndarray:
        """The Maxwell capacitance matrix (n x n), F/m (planar) or F: entry (i, j) is the
        charge on i with j at 1 V and every other fixed conductor at 0 V."""
        return np.array(self.summary["capacitance"]["matrix"], dtype=float).reshape(
            len(self.names), len(self.names)
        )

    @cached_property
    def capacitance_error(self) -> Optional[np.ndarray]:
        """Estimated discretisation error of each entry (None with ``error_estimate=False``)."""
        e = self.summary["capacitance"].get("error_estimate")
        return None if e is None else np.array(e, dtype=float).reshape(self.capacitance.shape)

    @cached_property
    def conductors(self) -> list[Conductor]:
        """Every conductor: potential, charge, force."""
        return [
            Conductor(
                name=c["name"],
                potential=c["potential"],
                charge=c["charge"],
                charge_error=c.get("charge_error"),
                force=(c["force"][0], c["force"][1]),
                force_error=_opt_pair(c.get("force_error_estimate")),
                floating=c.get("floating", False),
            )
            for c in self.summary["conductors"]
        ]

    @property
    def energy(self) -> float:
        """Stored energy, J/m (planar) or J."""
        return self.summary["energy"]

    @cached_property
    def peak_field(self) -> Optional[HotSpot]:
        """The largest field outside conductors (strength and margin not filled in)."""
        p = self.summary.get("peak_field")
        return None if p is None else _hotspot(p)

    @cached_property
    def hotspots(self) -> list[HotSpot]:
        """Ranked hot spots: lowest margin first when a material has a strength, else the
        largest field first."""
        return [_hotspot(h) for h in self.summary["hotspots"]]

    @cached_property
    def worst_margin(self) -> Optional[WorstMargin]:
        """The lowest margin anywhere in a material with a strength (None without strengths).
        An estimate: clearances follow the applicable standards."""
        w = self.summary.get("worst_margin")
        return None if w is None else WorstMargin(**w)

    @cached_property
    def probes(self) -> list[Probe]:
        """Probe readings."""
        out = []
        for p in self.summary["probes"]:
            f = p["field"]
            field = None if f[0] is None or f[1] is None else (f[0], f[1])
            out.append(Probe(name=p["name"], x=p["x"], y=p["y"], potential=p["potential"], field=field))
        return out

    @cached_property
    def warnings(self) -> list[SolveWarning]:
        """Warnings with their stable codes, in order."""
        return [SolveWarning(w["code"], w["message"]) for w in self.summary["warning_details"]]

    @cached_property
    def line(self) -> Optional[LineParameters]:
        """Line parameters (:func:`fieldgrid.impedance` only)."""
        ln = self.summary.get("line")
        if ln is None:
            return None
        matrices = {"c", "c0", "l", "z", "signals", "unfolded_across", "eps_eff_modes", "units", "error_estimate", "symmetric"}
        scalars = {k: v for k, v in ln.items() if k not in matrices and isinstance(v, (int, float))}
        return LineParameters(
            signals=list(ln["signals"]),
            c=np.array(ln["c"], dtype=float),
            c0=np.array(ln["c0"], dtype=float),
            l=np.array(ln["l"], dtype=float),
            z=np.array(ln["z"], dtype=float),
            scalars=scalars,
            error_estimate=dict(ln.get("error_estimate", {})),
            raw=ln,
        )

    # Node arrays ---------------------------------------------------------------------

    @property
    def shape(self) -> tuple[int, int]:
        """Shape of the node arrays, ``(ny, nx)``."""
        nx, ny = self._native.shape
        return (ny, nx)

    def _grid_array(self, raw: bytes, dtype: type = np.float64) -> np.ndarray:
        return np.frombuffer(raw, dtype=dtype).reshape(self.shape)

    @cached_property
    def x(self) -> np.ndarray:
        """Node x coordinates (r in axisymmetric mode), m, shape ``(nx,)``."""
        return np.frombuffer(self._native.xs(), dtype=np.float64)

    @cached_property
    def y(self) -> np.ndarray:
        """Node y coordinates (z in axisymmetric mode), m, shape ``(ny,)``."""
        return np.frombuffer(self._native.ys(), dtype=np.float64)

    @cached_property
    def potential(self) -> np.ndarray:
        """Potential at every node, V, shape ``(ny, nx)`` (nodes in conductors hold their
        conductor's potential)."""
        return self._grid_array(self._native.potential())

    @cached_property
    def field(self) -> np.ndarray:
        """Electric field, V/m, shape ``(2, ny, nx)``: ``field[0]`` is Ex (Er), ``field[1]``
        Ey (Ez). NaN inside conductors and at fixed nodes. The same values as field.csv."""
        ex, ey = self._native.field()
        return np.stack([self._grid_array(ex), self._grid_array(ey)])

    @cached_property
    def field_magnitude(self) -> np.ndarray:
        """|E| at every node, V/m, shape ``(ny, nx)``; NaN inside conductors."""
        return self._grid_array(self._native.field_magnitude())

    @cached_property
    def permittivity(self) -> np.ndarray:
        """Relative permittivity at every node, shape ``(ny, nx)``."""
        return self._grid_array(self._native.permittivity())

    @cached_property
    def conductor_index(self) -> np.ndarray:
        """Index (design order) of the conductor holding each node, -1 for none; int32,
        shape ``(ny, nx)``."""
        return self._grid_array(self._native.conductor_index(), np.int32)

    # Files ---------------------------------------------------------------------------

    def write(
        self,
        out: str | os.PathLike[str],
        *,
        field_table: bool = False,
        vtk: bool = False,
        log_field: bool = False,
        picture_width: int = 1200,
    ) -> Path:
        """Writes the files the command line writes into directory ``out`` (summary.json,
        capacitance.csv, hotspots.csv, surface_charge.csv, potential.png, field.png,
        capacitance.cir when it can; line.csv for a line study), replacing an earlier set
        there as one whole. ``field_table``, ``vtk``, ``log_field`` and ``picture_width``
        are the options ``--field-table``, ``--vtk``, ``--log-field`` and
        ``--picture-width`` of ``fieldgrid solve``."""
        return Path(
            self._native.write(
                os.fspath(out),
                field_table=field_table,
                vtk=vtk,
                log_field=log_field,
                picture_width=picture_width,
            )
        )

    def __repr__(self) -> str:
        ny, nx = self.shape
        return f"Solution({self.mode}, {nx} x {ny} nodes, conductors={self.names!r})"
