"""An accuracy asked from Python: the same loop, grid and estimates as ``--accuracy``."""

from __future__ import annotations

import fieldgrid as fg
from conftest import GEOMETRIES, without_seconds


def test_accuracy_equals_the_commands_and_reports_its_grid(run_cli):
    cli = run_cli("solve", "geometries/sensor_pad.toml", "--accuracy", "1e-2")
    result = fg.solve(GEOMETRIES / "sensor_pad.toml", accuracy=1e-2)
    assert without_seconds(result.summary) == without_seconds(cli)
    acc = result.summary["accuracy"]
    assert acc["target"] == 1e-2 and acc["met"] is True and acc["rounds"] >= 1
    assert acc["grid"]["nx"] == result.summary["grid"]["nx"]
    held = [q for q in acc["quantities"] if q["held"]]
    assert held and all(q["relative"] <= 1e-2 for q in held)
    # Forces and singular hot spots are estimated and listed, not held to the target.
    assert all(q["quantity"].startswith(("F[", "field at")) for q in acc["quantities"] if not q["held"])


def test_an_accuracy_outside_zero_to_one_is_refused():
    try:
        fg.solve(GEOMETRIES / "sensor_pad.toml", accuracy=2.0)
    except fg.FieldgridError as e:
        assert "accuracy" in str(e)
    else:
        raise AssertionError("accuracy 2 was taken")
