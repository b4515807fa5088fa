"""fieldgrid from Python: 2-D electrostatic fields around electrodes.

Read a design (:class:`Design`), solve it (:func:`solve`, :func:`impedance`) or check it
(:func:`check`), and get the capacitance matrix, conductors, energy, hot spots and margins,
probes, warnings, line parameters and the node arrays as numpy arrays (:class:`Solution`).
The numbers are those of the ``fieldgrid`` command for the same design and options, bit for
bit: the package runs the same library code. Solves release the GIL.

    >>> import fieldgrid
    >>> design = fieldgrid.Design.from_file("geometries/sensor_pad.toml")
    >>> result = fieldgrid.solve(design.with_parameters(overlay=3))
    >>> result.capacitance            # numpy array, F/m
    >>> result.write("out/pad")       # the files `fieldgrid solve` writes

Results are estimates from a discretised field (see their error estimates); margins to
breakdown and clearances follow the applicable standards and licensed engineering practice.
"""

from __future__ import annotations

import json
import os
from typing import Any, Callable, NamedTuple, Optional, Sequence

from . import _fieldgrid
from .design import Design, DesignLike, as_design
from .errors import DesignError, FieldgridError, NotConvergedWarning
from .results import (
    Conductor,
    HotSpot,
    LineParameters,
    Probe,
    Solution,
    SolveWarning,
    WorstMargin,
)

__version__: str = _fieldgrid.VERSION

__all__ = [
    "Design",
    "Solution",
    "Progress",
    "solve",
    "impedance",
    "check",
    "Conductor",
    "HotSpot",
    "WorstMargin",
    "Probe",
    "SolveWarning",
    "LineParameters",
    "FieldgridError",
    "DesignError",
    "NotConvergedWarning",
]


class Progress(NamedTuple):
    """What a progress callback is given: the study's current stage (``error_estimate``,
    ``raster``, ``assembly``, ``solver_setup``, ``solves``, ...), and within a linear solve
    the iteration and its relative residual (None as a stage starts)."""

    stage: str
    iteration: Optional[int]
    relative_residual: Optional[float]


ProgressCallback = Callable[[Progress], Any]


def _progress(callback: Optional[ProgressCallback]) -> Optional[Callable[[str, Optional[int], Optional[float]], Any]]:
    if callback is None:
        return None
    return lambda stage, it, rel: callback(Progress(stage, it, rel))


class _Options(NamedTuple):
    """The options :func:`solve` and :func:`impedance` share, as the native module takes
    them (one dict, every key given)."""

    solver: str
    tol: Optional[float]
    threads: Optional[int]
    max_iterations: Optional[int]
    error_estimate: bool
    max_memory: Optional[float]
    accuracy: Optional[float]


def solve(
    design: DesignLike,
    *,
    solver: str = "multigrid",
    tol: Optional[float] = None,
    threads: Optional[int] = None,
    max_iterations: Optional[int] = None,
    error_estimate: bool = True,
    max_memory: Optional[float] = None,
    accuracy: Optional[float] = None,
    progress: Optional[ProgressCallback] = None,
) -> Solution:
    """Solves a design as ``fieldgrid solve`` does.

    Args:
        design: a :class:`Design`, or the path of a design file.
        solver: ``"multigrid"`` (default), ``"cg"`` or ``"sor"`` (``--solver``).
        tol: relative residual at which a linear solve stops (``--tol``; default 1e-8, and
            with ``accuracy`` 1e-4 of it, never looser than ``tol`` when given).
        threads: worker threads (``--threads``; default every core). Results do not depend
            on it.
        max_iterations: stop a linear solve after this many iterations (``--max-iterations``).
        error_estimate: run the coarser-grid solves that estimate discretisation errors
            (``--no-error-estimate`` is ``False``).
        max_memory: refuse designs whose estimated memory exceeds this many MiB
            (``--max-memory``; default half the memory available).
        accuracy: refine the graded grid until every reported quantity's estimated relative
            error is below this (``--accuracy``; e.g. ``1e-3``); ``summary["accuracy"]``
            says whether it was met, the grid settled on and each quantity's estimate.
        progress: called as ``progress(Progress(stage, iteration, relative_residual))`` as
            stages start and at every iteration, with the GIL held; an exception it raises
            stops further calls and is raised when the study returns.

    Returns:
        the :class:`Solution`. When a linear solve did not converge it is still returned
        (``converged`` false) and a :class:`NotConvergedWarning` is issued.

    Raises:
        DesignError: a design too large for ``max_memory`` or refused by the study, placed
            at its key.
        FieldgridError: any other failure the command reports with exit code 2.
        ValueError: an option out of range.
    """
    options = _Options(solver, tol, threads, max_iterations, error_estimate, max_memory, accuracy)
    native = _fieldgrid.solve(as_design(design)._native, options._asdict(), _progress(progress))
    return Solution(native)


def impedance(
    design: DesignLike,
    signals: Sequence[str] | str,
    *,
    solver: str = "multigrid",
    tol: Optional[float] = None,
    threads: Optional[int] = None,
    max_iterations: Optional[int] = None,
    error_estimate: bool = True,
    max_memory: Optional[float] = None,
    accuracy: Optional[float] = None,
    progress: Optional[ProgressCallback] = None,
) -> Solution:
    """Line parameters of a planar cross-section, as ``fieldgrid impedance --signal``.

    ``signals`` names the signal conductors (a name or a list of names; every other
    conductor is grounded). The options are those of :func:`solve`. The result's
    :attr:`Solution.line` holds the matrices and impedances; the rest is the design's own
    study, as summary.json has it.
    """
    names = [signals] if isinstance(signals, str) else list(signals)
    options = _Options(solver, tol, threads, max_iterations, error_estimate, max_memory, accuracy)
    native = _fieldgrid.impedance(
        as_design(design)._native, names, options._asdict(), _progress(progress)
    )
    return Solution(native)


def check(
    design: DesignLike,
    *,
    out: Optional[str | os.PathLike[str]] = None,
    picture_width: int = 1200,
    grid_lines: bool = False,
) -> dict[str, Any]:
    """What ``fieldgrid check`` reports, as check.json's dict: the grid (``nx``, ``ny``,
    ``cell``, ``min_cell``, ``max_cell``, ``uniform``, the node lines ``x_lines`` and
    ``y_lines``), ``unknowns_at_most``, ``memory_mib``, conductor and dielectric names. With
    ``out``, writes preview.png (the node lines drawn with ``grid_lines``, as
    ``--grid-lines``) and check.json there."""
    d = as_design(design)
    text = _fieldgrid.check(
        d._native, None if out is None else os.fspath(out), picture_width, grid_lines
    )
    return json.loads(text)
