"""Results from Python equal the command line's bit for bit (same library, same options)."""

from __future__ import annotations

import pytest

import fieldgrid as fg
from conftest import DEMOS, GEOMETRIES, ROOT, without_seconds


@pytest.mark.parametrize("demo", DEMOS)
def test_every_demo_summary_equals_the_commands(demo, run_cli):
    cli = run_cli("solve", f"geometries/{demo}")
    result = fg.solve(GEOMETRIES / demo)
    assert result.capacitance.tolist() == cli["capacitance"]["matrix"]
    # summary.json whole (its design_hash is of the same text whatever the path).
    assert without_seconds(result.summary) == without_seconds(cli)


def test_parameters_replaced_from_python_equal_set(run_cli):
    cli = run_cli("solve", "geometries/sensor_pad.toml", "--set", "gap=0.7", "--set", "overlay=3")
    design = fg.Design.from_file(GEOMETRIES / "sensor_pad.toml")
    result = fg.solve(design.with_parameters(gap=0.7).with_parameters({"overlay": 3}))
    assert without_seconds(result.summary) == without_seconds(cli)
    assert result.summary["parameters"][3] == {"name": "gap", "value": 0.7}
    # The replacement moved the result (the check above is not of an unchanged design).
    assert result.capacitance.tolist() != fg.solve(design).capacitance.tolist()


def test_options_equal_the_commands(run_cli):
    cli = run_cli("solve", "geometries/hv_tip.toml", "--solver", "cg", "--tol", "1e-9",
                  "--no-error-estimate", "--threads", "1")
    result = fg.solve(GEOMETRIES / "hv_tip.toml", solver="cg", tol=1e-9,
                      error_estimate=False, threads=1)
    assert result.capacitance_error is None
    assert without_seconds(result.summary) == without_seconds(cli)


@pytest.mark.parametrize(
    "demo, signals", [("microstrip.toml", ["trace"]), ("coupled_stripline.toml", ["p", "n"])]
)
def test_impedance_equals_the_commands(demo, signals, run_cli):
    cli = run_cli("impedance", f"geometries/{demo}", "--signal", ",".join(signals))
    result = fg.impedance(GEOMETRIES / demo, signals)
    assert without_seconds(result.summary) == without_seconds(cli)
    assert result.line is not None and result.line.signals == signals
    assert result.line.z.shape == (len(signals), len(signals))
    assert result.line.scalars["z0" if len(signals) == 1 else "z_diff"] > 0


def test_written_files_equal_the_commands(run_cli, tmp_path, monkeypatch):
    cli = run_cli("solve", "geometries/mems_plate.toml", "--field-table", "--vtk", files=True)
    # The design named as the command names it (capacitance.cir quotes it).
    monkeypatch.chdir(ROOT)
    result = fg.solve("geometries/mems_plate.toml")
    out = result.write(tmp_path / "out", field_table=True, vtk=True)
    names = sorted(p.name for p in cli.iterdir())
    assert sorted(p.name for p in out.iterdir()) == names
    for name in names:
        if name == "summary.json":
            continue
        assert (out / name).read_bytes() == (cli / name).read_bytes(), name


def test_dict_design_equals_its_file():
    import tomllib

    path = GEOMETRIES / "touch_pad_rev_a.toml"
    from_file = fg.solve(path)
    as_dict = fg.Design.from_dict(tomllib.loads(path.read_text()))
    from_dict = fg.solve(as_dict)
    assert from_dict.capacitance.tolist() == from_file.capacitance.tolist()
    assert from_dict.summary["parameters"] == from_file.summary["parameters"]


def test_check_equals_the_commands(run_cli):
    import json

    out = run_cli("check", "geometries/sensor_pad.toml", files=True)
    assert fg.check(GEOMETRIES / "sensor_pad.toml") == json.loads((out / "check.json").read_text())
