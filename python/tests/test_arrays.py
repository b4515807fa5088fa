"""Node arrays: the grid's shape and coordinates, and the values the command writes."""

from __future__ import annotations

import csv

import numpy as np

import fieldgrid as fg
from conftest import GEOMETRIES


def test_arrays_have_the_grids_shape_and_values(tmp_path):
    design = fg.Design.from_file(GEOMETRIES / "mems_plate.toml")
    grid = fg.check(design)["grid"]
    r = fg.solve(design, error_estimate=False)
    nx, ny = grid["nx"], grid["ny"]
    assert r.shape == (ny, nx)
    assert r.x.shape == (nx,) and r.y.shape == (ny,)
    assert np.all(np.diff(r.x) > 0) and np.all(np.diff(r.y) > 0)
    for a in (r.potential, r.field_magnitude, r.permittivity, r.conductor_index):
        assert a.shape == (ny, nx)
    assert r.field.shape == (2, ny, nx)
    assert r.conductor_index.dtype == np.int32
    # Nodes inside a conductor hold its potential and have no field.
    for k, c in enumerate(r.conductors):
        inside = r.conductor_index == k
        assert inside.any()
        assert np.all(r.potential[inside] == c.potential)
        assert np.all(np.isnan(r.field_magnitude[inside]))
    # The same numbers as field.csv, node by node (x fastest).
    out = r.write(tmp_path / "out", field_table=True)
    with open(out / "field.csv", newline="") as f:
        rows = list(csv.reader(f))[1:]
    table = np.array([[float(v) if v else np.nan for v in row] for row in rows])
    assert table.shape == (nx * ny, 6)
    np.testing.assert_array_equal(table[:, 0], np.tile(r.x, ny))
    np.testing.assert_array_equal(table[:, 1], np.repeat(r.y, nx))
    np.testing.assert_array_equal(table[:, 2], r.potential.ravel())
    np.testing.assert_array_equal(table[:, 3], r.field[0].ravel())
    np.testing.assert_array_equal(table[:, 4], r.field[1].ravel())


def test_result_values_match_the_summary():
    r = fg.solve(GEOMETRIES / "hv_electrode.toml")
    s = r.summary
    assert r.names == s["capacitance"]["names"]
    assert r.capacitance.shape == (len(r.names), len(r.names))
    assert r.energy == s["energy"]
    assert [c.charge for c in r.conductors] == [c["charge"] for c in s["conductors"]]
    assert [h.magnitude for h in r.hotspots] == [h["magnitude"] for h in s["hotspots"]]
    assert [w.code for w in r.warnings] == [w["code"] for w in s["warning_details"]]
    assert r.units["capacitance"] == s["capacitance"]["unit"]
    if s.get("worst_margin"):
        assert r.worst_margin is not None and r.worst_margin.margin == s["worst_margin"]["margin"]
