"""Python and the CLI give the same model files and the same estimates.

The reference is the `mettle` binary built from the same library (the CLI the
project ships): same data, settings and seed must give byte-identical model
files, and a model predicts the same numbers through either door.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import polars as pl
import pytest

import mettle
from conftest import ROOT, SMALL, SMALL_CLI, fixture_frame, run_cli, write_csv

BUNDLED_MODEL = ROOT / "models" / "fellhaven_welds.json"
NEW_WELDS = ROOT / "datasets" / "fellhaven_new_welds.csv"


@pytest.fixture(scope="module")
def tiny(tmp_path_factory, mettle_bin):
    """A tiny model trained by the CLI on a fixture file, and the frame."""
    d = tmp_path_factory.mktemp("tiny")
    df = fixture_frame(60, seed=3)
    write_csv(df, d / "tiny.csv")
    p = run_cli(mettle_bin, ["train", "--data", "tiny.csv", "--target", "y", *SMALL_CLI, "--quiet", "--out", "cli.json"], d)
    assert p.returncode == 0, p.stderr
    return d, df


def test_model_file_is_byte_identical_to_the_cli(tiny):
    d, df = tiny
    m = mettle.Model.train(df, targets="y", progress=False, source="tiny.csv", out=d / "py.json", **SMALL)
    cli = (d / "cli.json").read_bytes()
    assert (d / "py.json").read_bytes() == cli
    assert m.to_json() == cli
    # from the file itself, as the CLI reads it
    m2 = mettle.Model.train(d / "tiny.csv", targets=["y"], progress=False, **SMALL)
    assert m2.to_json() == cli


def test_early_stop_off_is_the_clis_no_early_stop(tiny, mettle_bin):
    # twelve candidates (hidden 1..6, two restarts): more than the search keeps
    # past its first rung, so stopping early changes which ones finish
    d, df = tiny
    wide = ["--hidden", "1..6", "--restarts", "2", "--seed", "5"]
    p = run_cli(mettle_bin, ["train", "--data", "tiny.csv", "--target", "y", *wide, "--no-early-stop", "--quiet", "--out", "cli_full.json"], d)
    assert p.returncode == 0, p.stderr
    settings = {"hidden": "1..6", "restarts": 2, "seed": 5}
    full = mettle.Model.train(df, targets="y", progress=False, source="tiny.csv", early_stop=False, **settings)
    assert full.to_json() == (d / "cli_full.json").read_bytes()
    halved = mettle.Model.train(df, targets="y", progress=False, source="tiny.csv", **settings)
    assert halved.to_json() != full.to_json()


def test_partitions_are_the_clis_partitions(tiny, mettle_bin):
    # a second held-out partition pools its own committee into the model:
    # the package passes the setting through to the same engine, so the model
    # file is the CLI's byte for byte, and differs from one partition's
    d, df = tiny
    p = run_cli(mettle_bin, ["train", "--data", "tiny.csv", "--target", "y", *SMALL_CLI, "--partitions", "2", "--quiet", "--out", "cli_pool.json"], d)
    assert p.returncode == 0, p.stderr
    pooled = mettle.Model.train(df, targets="y", progress=False, source="tiny.csv", partitions=2, **SMALL)
    assert pooled.to_json() == (d / "cli_pool.json").read_bytes()
    assert pooled.to_json() != (d / "cli.json").read_bytes()
    with pytest.raises(mettle.errors.SettingsError):
        mettle.Model.train(df, targets="y", progress=False, partitions=-1, **SMALL)


def test_polars_and_numpy_inputs_train_the_same_model(tiny):
    d, df = tiny
    cli = (d / "cli.json").read_bytes()
    m = mettle.Model.train(pl.from_pandas(df), targets="y", progress=False, source="tiny.csv", **SMALL)
    assert m.to_json() == cli
    m = mettle.Model.train(df.to_numpy(), targets="y", columns=["x1", "x2", "y"], progress=False, source="tiny.csv", **SMALL)
    assert m.to_json() == cli


def _cli_estimates(mettle_bin, model: Path, data: Path, cwd: Path, extra=()) -> pd.DataFrame:
    # --exact: Python's predict takes the exact path, as `mettle serve` does;
    # the CLI's default fast path agrees with it within its stated bound
    # (tests/fast_predict.rs), not to the last digit
    p = run_cli(
        mettle_bin,
        ["predict", "--exact", "--model", str(model), "--input", str(data), "--format", "csv", *extra],
        cwd,
    )
    assert p.returncode == 0, p.stderr
    (cwd / "est.csv").write_text(p.stdout)
    return pd.read_csv(cwd / "est.csv", keep_default_na=False, dtype=str)


def _half_unit(text: str) -> float:
    """Half a unit in the last place the CLI printed (0 for a number printed
    in full: then the values must be equal)."""
    mant, _, exp = text.lower().partition("e")
    decimals = len(mant.partition(".")[2])
    return 0.5 * 10.0 ** (-decimals + (int(exp) if exp else 0))


def _assert_same_estimates(py: pd.DataFrame, cli: pd.DataFrame, targets):
    # the CLI prints each number in its shortest exact form, which reads back
    # to the same float; should it round, the Python value must round to the
    # printed one (within half a unit of the last printed digit)
    for t in targets:
        for f in ("mean", "median", "sd", "lo95", "hi95", "noise_sd", "model_sd"):
            c = f"{t}_{f}"
            for v, text in zip(py[c].to_numpy(), cli[c]):
                exact = float(text) == v
                assert exact or (len(text.replace("-", "").replace(".", "")) < 15
                                 and abs(v - float(text)) <= _half_unit(text) * (1 + 1e-12)), (c, v, text)
    assert list(py["in_domain"]) == [str(v).lower() == "true" for v in cli["in_domain"]]
    assert list(py["domain"]) == list(cli["domain"])
    assert list(py["notes"]) == list(cli["notes"])


def test_a_python_model_predicts_identically_in_the_cli(tiny, mettle_bin):
    d, df = tiny
    m = mettle.Model.train(df, targets="y", progress=False, source="tiny.csv", **SMALL)
    new = fixture_frame(25, seed=11)
    new.loc[3, "x1"] = 2.5  # outside the training range: an 'outside' verdict
    write_csv(new, d / "new.csv")
    m.save(d / "py_model.json")
    cli = _cli_estimates(mettle_bin, d / "py_model.json", d / "new.csv", d)
    py = m.predict(new)
    _assert_same_estimates(py, cli, ["y"])
    assert not py["in_domain"][3] and py["domain"][3] == "outside"
    assert list(py.index) == list(new.index)


def test_the_bundled_cli_model_predicts_identically_in_python(tmp_path, mettle_bin):
    # models/fellhaven_welds.json: trained by the CLI through the schema of the
    # invented Fellhaven archive (four targets, units, derived inputs)
    m = mettle.Model.load(BUNDLED_MODEL)
    for units, extra in (("internal", []), ("declared", ["--units", "declared"])):
        cli = _cli_estimates(mettle_bin, BUNDLED_MODEL, NEW_WELDS, tmp_path, extra)
        py = m.predict(pd.read_csv(NEW_WELDS), units=units)
        _assert_same_estimates(py, cli, m.targets)
        for t in m.targets:
            assert py.attrs["units"][t] == (cli[f"{t}_unit"][0] or None)
    pyl = m.predict(pl.read_csv(NEW_WELDS))
    assert isinstance(pyl, pl.DataFrame)
    assert np.array_equal(pyl["uts_mpa_mean"].to_numpy(), py["uts_mpa_mean"].to_numpy())


def test_explain_is_the_cli_model_card(mettle_bin, tmp_path):
    p = run_cli(mettle_bin, ["explain", "--model", str(BUNDLED_MODEL), "--format", "json"], tmp_path)
    assert p.returncode == 0, p.stderr
    assert mettle.Model.load(BUNDLED_MODEL).explain() == json.loads(p.stdout)


def test_screening_matches_the_cli(mettle_bin, tmp_path):
    cands = ROOT / "datasets" / "fellhaven_candidates.csv"
    costs = ROOT / "datasets" / "fellhaven_costs.toml"
    req = ["uts_mpa>=620", "charpy_j>=47@test_temp_c=-40"]
    args = ["screen", "--model", str(BUNDLED_MODEL), "--input", str(cands), "--costs", str(costs), "--format", "json"]
    for r in req:
        args += ["--require", r]
    p = run_cli(mettle_bin, args, tmp_path)
    assert p.returncode == 0, p.stderr
    cli = json.loads(p.stdout)["candidates"]
    py = mettle.screen(mettle.Model.load(BUNDLED_MODEL), pd.read_csv(cands), req, costs=costs)
    assert len(cli) == len(py)
    for k, c in enumerate(cli):
        row = py.iloc[k]
        assert row["row"] + 1 == c["row"]
        assert row["P(all)"] == c["joint_probability"]
        for given, r in zip(req, c["requirements"]):
            assert row[f"P({given})"] == r["probability"]
        assert row["cost_per_tonne"] == c["cost_per_tonne"]
        assert row["domain"] == c["domain"]


def test_requirement_probabilities_in_predict_match_screening():
    m = mettle.Model.load(BUNDLED_MODEL)
    new = pd.read_csv(NEW_WELDS)
    req = ["uts_mpa>=620", "charpy_j>=47@test_temp_c=-40"]
    est = m.predict(new, require=req)
    scr = mettle.screen(m, new, req).sort_values("row")
    for r in req:
        assert np.array_equal(est[f"P({r})"].to_numpy(), scr[f"P({r})"].to_numpy())
    # the joint probability is screening's (correlated targets: not the product)
    assert np.array_equal(est["P(all)"].to_numpy(), scr["P(all)"].to_numpy())
