"""Solves release the GIL; the progress callback sees the stages and iterations."""

from __future__ import annotations

import sys
import threading

import pytest

import fieldgrid as fg
from conftest import GEOMETRIES


def test_a_second_thread_runs_during_a_solve():
    # With a long switch interval a thread waiting for the GIL cannot take it from a thread
    # that holds it; it runs only while the GIL is released. The helper is let go at the
    # first stage of the solve, so it can only have run by the time the solve returns if
    # the solve released the GIL (nothing else in between releases it).
    go, ran = threading.Event(), threading.Event()

    def helper():
        go.wait()
        ran.set()

    def progress(p: fg.Progress):
        go.set()

    old = sys.getswitchinterval()
    sys.setswitchinterval(100.0)
    t = threading.Thread(target=helper)
    try:
        t.start()
        fg.solve(GEOMETRIES / "sensor_pad.toml", progress=progress)
        released = ran.is_set()
    finally:
        sys.setswitchinterval(old)
        go.set()
        t.join()
    assert released


def test_progress_reports_stages_and_iterations():
    seen: list[fg.Progress] = []
    fg.solve(GEOMETRIES / "hv_tip.toml", progress=seen.append)
    stages = [p.stage for p in seen if p.iteration is None]
    assert stages[0] == "error_estimate" and "solves" in stages and "hot_spots" in stages
    iterations = [p for p in seen if p.iteration is not None]
    assert iterations and all(p.relative_residual >= 0 for p in iterations)


def test_an_exception_in_the_callback_is_raised():
    calls = []

    def progress(p):
        calls.append(p)
        raise RuntimeError("stop")

    with pytest.raises(RuntimeError, match="stop"):
        fg.solve(GEOMETRIES / "hv_tip.toml", progress=progress)
    assert len(calls) == 1


def test_results_do_not_depend_on_threads():
    one = fg.solve(GEOMETRIES / "round_touch_pad.toml", threads=1, error_estimate=False)
    two = fg.solve(GEOMETRIES / "round_touch_pad.toml", threads=2, error_estimate=False)
    assert one.capacitance.tolist() == two.capacitance.tolist()
    assert one.potential.tobytes() == two.potential.tobytes()
