"""Bad input from Python raises the typed exception with the CLI's message,
and leaves nothing half-written on disk.

Each case builds the same bad table twice: as a DataFrame for Python and as a
CSV file for the CLI (named as the Python call names its source), and checks
the exception class and that its message is the CLI's `mettle: error:` line.
"""

from __future__ import annotations

import os

import numpy as np
import pandas as pd
import polars as pl
import pytest

import mettle
from conftest import ROOT, SMALL, SMALL_CLI, cli_error, fixture_frame, run_cli, write_csv


def _train_both(tmp_path, mettle_bin, df, py_kw, cli_args, name="bad.csv"):
    """Train on df in Python (expecting an error) and through the CLI; return
    (exception, CLI message, CLI exit code)."""
    df.to_csv(tmp_path / name, index=False)
    out = tmp_path / "out" / "model.json"
    out.parent.mkdir(exist_ok=True)
    kw = dict(SMALL, progress=False, source=name, out=out)
    kw.update(py_kw)
    with pytest.raises(mettle.MettleError) as info:
        mettle.Model.train(df, **kw)
    p = run_cli(mettle_bin, ["train", "--data", name, *cli_args, "--quiet", "--out", "cli_model.json"], tmp_path)
    # nothing half-written: neither the model nor a temporary file
    assert os.listdir(out.parent) == []
    assert not (tmp_path / "cli_model.json").exists()
    return info.value, cli_error(p), p.returncode


def test_nan_in_an_input_is_the_cli_empty_cell_error(tmp_path, mettle_bin):
    df = fixture_frame(40, 1)
    df.loc[6, "x2"] = np.nan
    e, cli, code = _train_both(tmp_path, mettle_bin, df, {"targets": "y"}, ["--target", "y", *SMALL_CLI])
    assert isinstance(e, mettle.DataError) and isinstance(e, ValueError)
    assert str(e) == cli and code == 2
    assert "row 7" in cli and "'x2'" in cli


def test_a_missing_column_names_the_columns_there_are(tmp_path, mettle_bin):
    df = fixture_frame(40, 1)
    e, cli, _ = _train_both(tmp_path, mettle_bin, df, {"targets": "uts"}, ["--target", "uts", *SMALL_CLI])
    assert isinstance(e, mettle.DataError)
    assert str(e) == cli and "no column named 'uts'" in cli


def test_text_in_a_numeric_column_is_named_with_its_row(tmp_path, mettle_bin):
    df = fixture_frame(40, 1)
    df["x1"] = df["x1"].map(repr).astype(object)
    df.loc[2, "x1"] = "abc"
    e, cli, _ = _train_both(tmp_path, mettle_bin, df, {"targets": "y", "inputs": ["x1", "x2"]},
                            ["--target", "y", "--inputs", "x1,x2", *SMALL_CLI])
    assert isinstance(e, mettle.DataError)
    assert str(e) == cli and "'abc' is not a number" in cli


def test_an_empty_frame_is_the_cli_header_only_error(tmp_path, mettle_bin):
    df = fixture_frame(40, 1).iloc[:0]
    e, cli, _ = _train_both(tmp_path, mettle_bin, df, {"targets": "y"}, ["--target", "y", *SMALL_CLI])
    assert isinstance(e, mettle.DataError)
    assert str(e) == cli and "no data rows" in cli


def test_too_few_rows(tmp_path, mettle_bin):
    df = fixture_frame(12, 1)
    e, cli, _ = _train_both(tmp_path, mettle_bin, df, {"targets": "y"}, ["--target", "y", *SMALL_CLI])
    assert isinstance(e, mettle.DataError) and str(e) == cli


def test_a_bad_setting_is_the_library_message(tmp_path, mettle_bin):
    df = fixture_frame(40, 1)
    e, cli, _ = _train_both(tmp_path, mettle_bin, df, {"targets": "y", "restarts": 0},
                            ["--target", "y", "--hidden", "1..2", "--restarts", "0"])
    assert isinstance(e, mettle.SettingsError)
    assert str(e) == cli and "between 1 and 100" in cli
    with pytest.raises(mettle.SettingsError, match="noise"):
        mettle.Model.train(df, targets="y", noise="loud", progress=False)
    with pytest.raises(mettle.SettingsError, match="hidden"):
        mettle.Model.train(df, targets="y", hidden="one..two", progress=False)
    with pytest.raises(mettle.SettingsError):
        mettle.Model.train(df, progress=False)  # neither targets nor schema


def test_complex_and_object_columns_are_refused_by_name():
    df = fixture_frame(40, 1)
    df["x1"] = df["x1"].astype(complex)
    with pytest.raises(mettle.DataError, match="column 'x1' has type complex128"):
        mettle.Model.train(df, targets="y", progress=False)
    df = fixture_frame(40, 1)
    df["x1"] = pd.Series([{"a": 1}] + df["x1"].tolist()[1:], dtype=object)
    with pytest.raises(mettle.DataError, match="column 'x1'"):
        mettle.Model.train(df, targets="y", progress=False)


@pytest.fixture(scope="module")
def small_model(tmp_path_factory):
    d = tmp_path_factory.mktemp("m")
    m = mettle.Model.train(fixture_frame(60, 3), targets="y", progress=False, source="tiny.csv", **SMALL)
    m.save(d / "m.json")
    return d / "m.json", m


def test_predict_errors_are_the_cli_messages(tmp_path, mettle_bin, small_model):
    path, m = small_model
    cases = {
        "nan": fixture_frame(10, 2).assign(x1=lambda f: f.x1.where(f.index != 4)),
        "missing": fixture_frame(10, 2).drop(columns="x2"),
        "empty": fixture_frame(10, 2).iloc[:0],
    }
    for name, df in cases.items():
        src = f"{name}.csv"
        df.to_csv(tmp_path / src, index=False)
        with pytest.raises(mettle.DataError) as info:
            m.predict(df, source=src)
        p = run_cli(mettle_bin, ["predict", "--model", str(path), "--input", src, "--format", "csv"], tmp_path)
        cli = cli_error(p)
        # the CLI prefixes the model it was estimating with
        assert cli == str(info.value) or cli.endswith(": " + str(info.value)), (cli, str(info.value))
        assert p.returncode == 2
    with pytest.raises(mettle.DataError, match="no column named 'x2'"):
        m.predict(pl.from_pandas(cases["missing"]))


def test_requirement_errors(small_model):
    _, m = small_model
    with pytest.raises(mettle.RequirementError, match="no comparison operator"):
        m.predict(fixture_frame(5, 2), require="y 3")
    with pytest.raises(mettle.RequirementError, match="no model estimates 'uts'"):
        m.predict(fixture_frame(5, 2), require="uts>=3")


def test_damaged_model_file_is_the_cli_message(tmp_path, mettle_bin, small_model):
    path, _ = small_model
    bad = tmp_path / "cut.json"
    bad.write_bytes(path.read_bytes()[:500])
    with pytest.raises(mettle.ModelError) as info:
        mettle.Model.load(bad)
    p = run_cli(mettle_bin, ["explain", "--model", str(bad)], tmp_path)
    assert cli_error(p) == str(info.value)
    with pytest.raises(mettle.FileReadError) as info:
        mettle.Model.load(tmp_path / "none.json")
    assert isinstance(info.value, OSError)
    p = run_cli(mettle_bin, ["explain", "--model", str(tmp_path / "none.json")], tmp_path)
    assert cli_error(p) == str(info.value)


def test_a_failed_save_leaves_nothing_and_keeps_the_older_file(tmp_path, small_model):
    path, m = small_model
    with pytest.raises(mettle.FileWriteError):
        m.save(tmp_path / "no_such_dir" / "m.json")
    assert os.listdir(tmp_path) == []
    # a directory in the way: the rename fails after the temporary file was
    # written, and the temporary file must be gone
    blocked = tmp_path / "model.json"
    blocked.mkdir()
    (blocked / "keep").write_bytes(b"older")
    with pytest.raises(mettle.FileWriteError):
        m.save(blocked)
    assert os.listdir(tmp_path) == ["model.json"]
    assert (blocked / "keep").read_bytes() == b"older"
