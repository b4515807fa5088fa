"""Bad designs and options raise exceptions that carry the file, line, key and message."""

from __future__ import annotations

import pytest

import fieldgrid as fg
from conftest import GEOMETRIES

GOOD = """\
unit = "mm"

[grid]
x = [0, 10]
y = [0, 5]
cell = 0.1

[[conductor]]
name = "a"
potential = 1
rect = { x = [2, 4], y = [1, 2] }
"""


def test_bad_value_names_line_and_key():
    text = GOOD.replace("potential = 1", 'potential = "one"')
    with pytest.raises(fg.DesignError) as err:
        fg.Design.from_toml(text, name="pads.toml")
    e = err.value
    assert (e.file, e.line, e.key) == ("pads.toml", 10, "conductor.potential")
    assert e.source_line == 'potential = "one"'
    assert e.message and e.message in str(e)
    assert isinstance(e, ValueError)


def test_unknown_key_in_a_file(tmp_path):
    path = tmp_path / "bad.toml"
    path.write_text(GOOD.replace("cell = 0.1", "cell = 0.1\ncolour = 3"))
    with pytest.raises(fg.DesignError) as err:
        fg.Design.from_file(path)
    assert (err.value.file, err.value.line, err.value.key) == (str(path), 7, "grid.colour")


def test_unknown_parameter_has_no_line():
    with pytest.raises(fg.DesignError) as err:
        fg.Design.from_file(GEOMETRIES / "sensor_pad.toml", parameters={"width": 2})
    assert err.value.line == 0 and "width" in err.value.key


def test_dict_error_names_the_dotted_key():
    design = {"unit": "mm", "grid": {"x": [0, 10], "y": [0, 5], "cell": -1}}
    with pytest.raises(fg.DesignError) as err:
        fg.Design.from_dict(design)
    assert err.value.key == "grid.cell" and err.value.file == "<dict>"
    with pytest.raises(TypeError, match="grid.cell"):
        fg.Design.from_dict({"grid": {"cell": None}})


def test_missing_file_is_an_os_error(tmp_path):
    with pytest.raises(FileNotFoundError):
        fg.Design.from_file(tmp_path / "none.toml")


def test_options_out_of_range():
    design = fg.Design.from_toml(GOOD)
    with pytest.raises(fg.FieldgridError, match="--tol"):
        fg.solve(design, tol=2.0)
    with pytest.raises(ValueError, match="solver"):
        fg.solve(design, solver="fast")
    fine = fg.Design.from_toml(GOOD.replace("cell = 0.1", "cell = 0.01"))
    with pytest.raises(fg.DesignError) as err:
        fg.solve(fine, max_memory=1)
    assert err.value.key == "grid.cell" and err.value.line == 6


def test_impedance_of_an_unknown_signal():
    with pytest.raises(fg.FieldgridError, match="no conductor of that name"):
        fg.impedance(GEOMETRIES / "microstrip.toml", "nothing")
