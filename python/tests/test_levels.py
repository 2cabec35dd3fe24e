"""Inputs declared as codes (schema ``kind = "levels"``) from Python.

The table is INVENTED (not measured data), the one of tests/levels.rs drawn
here with numpy: y = x + a level effect that is not monotone in the code
(none 0, argon +1, carbon dioxide -0.5) + N(0, 0.02^2). The schema declares a
fourth level, helium, that no row holds. A model trained on it predicts from a
DataFrame holding the code by level name, by integer or as a pandas
categorical, refuses the unseen level with the package's DataError naming the
source, row and column (the CLI's message word for word), and gives the
relevance per column of the table (a code's indicators summed).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import mettle
from conftest import SMALL, cli_error, run_cli

SCHEMA = """
mettle_schema = 1
[[column]]
name = "x"
role = "input"
unit = "1"
[[column]]
name = "gas"
role = "input"
kind = "levels"
levels = { 0 = "none", 1 = "argon", 2 = "carbon_dioxide", 3 = "helium" }
[[column]]
name = "y"
role = "target"
unit = "1"
"""

NAMES = ["none", "argon", "carbon_dioxide"]
#: The invented level effects (the generator's truth).
EFFECT = {"none": 0.0, "argon": 1.0, "carbon_dioxide": -0.5}


def invented(n: int, seed: int) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    gas = [NAMES[i % 3] for i in range(n)]
    x = rng.uniform(0.0, 1.0, n)
    y = x + np.array([EFFECT[g] for g in gas]) + rng.normal(0.0, 0.02, n)
    return pd.DataFrame({"x": x, "gas": gas, "y": y})


@pytest.fixture(scope="module")
def coded(tmp_path_factory):
    d = tmp_path_factory.mktemp("levels")
    (d / "s.toml").write_text(SCHEMA)
    df = invented(90, seed=7)
    model = mettle.Model.train(df, schema=d / "s.toml", progress=False, source="invented.csv", **SMALL)
    model.save(d / "m.json")
    return d, model


def test_the_model_records_the_code_and_its_levels(coded):
    _, m = coded
    assert m.inputs == ["x", "gas=none", "gas=argon", "gas=carbon_dioxide"]
    assert m.required_columns == ["x", "gas"]
    assert m.codes == {"gas": {0: "none", 1: "argon", 2: "carbon_dioxide", 3: "helium"}}
    lv = m.code_levels()
    assert list(lv["training_rows"]) == [30, 30, 30, 0]
    assert list(lv["indicator"]) == ["gas=none", "gas=argon", "gas=carbon_dioxide", "gas=helium"]


def test_predict_by_level_name_by_integer_and_as_categorical(coded):
    _, m = coded
    by_name = pd.DataFrame({"x": [0.5, 0.5, 0.5], "gas": NAMES})
    by_code = pd.DataFrame({"x": [0.5, 0.5, 0.5], "gas": np.array([0, 1, 2], dtype=np.int64)})
    categorical = by_name.assign(gas=pd.Categorical(NAMES, categories=["argon", "carbon_dioxide", "none"]))
    mixed = pd.DataFrame({"x": [0.5, 0.5, 0.5], "gas": pd.Series(["none", 1, "carbon_dioxide"], dtype=object)})
    est = [m.predict(f) for f in (by_name, by_code, categorical, mixed)]
    for e in est[1:]:
        pd.testing.assert_frame_equal(e, est[0])
    # the level effects of the generator come back (at x = 0.5: 0.5, 1.5, 0.0)
    truth = [0.5 + EFFECT[g] for g in NAMES]
    assert np.all(np.abs(est[0]["y_mean"].to_numpy() - truth) < 0.15), est[0]["y_mean"].tolist()
    assert list(est[0]["domain"]) != ["outside"] * 3
    assert est[0]["in_domain"].all()


def test_the_same_estimates_and_verdicts_as_the_cli(coded, mettle_bin):
    from test_cli_parity import _assert_same_estimates, _cli_estimates

    d, m = coded
    # by name, by code as text, and x beyond the range: an 'outside' verdict
    q = pd.DataFrame({"x": [0.2, 0.8, 0.5, 1.6], "gas": ["argon", "2", "none", "argon"]})
    q.to_csv(d / "q.csv", index=False)
    cli = _cli_estimates(mettle_bin, d / "m.json", d / "q.csv", d)
    py = m.predict(q)
    _assert_same_estimates(py, cli, ["y"])
    assert py["domain"][3] == "outside" and py["in_domain"][:3].all()


def test_an_unseen_level_is_refused_with_source_row_and_column(coded, mettle_bin):
    d, m = coded
    q = pd.DataFrame({"x": [0.5, 0.5], "gas": ["none", "helium"]})
    with pytest.raises(mettle.DataError) as info:
        m.predict(q, source="q_unseen.csv")
    msg = str(info.value)
    assert isinstance(info.value, ValueError)
    for part in ("q_unseen.csv", "row 2", "'gas'", "3 = helium", "0 = none, 1 = argon, 2 = carbon_dioxide"):
        assert part in msg, msg
    # the CLI's message for the same rows in a file of that name
    q.to_csv(d / "q_unseen.csv", index=False)
    p = run_cli(mettle_bin, ["predict", "--model", "m.json", "--input", "q_unseen.csv"], d)
    assert cli_error(p) == f"estimating with model m.json: {msg}"
    # by integer too
    with pytest.raises(mettle.DataError, match="3 = helium"):
        m.predict(pd.DataFrame({"x": [0.5], "gas": [3]}))


def test_an_undeclared_level_is_refused_naming_the_known_levels(coded):
    _, m = coded
    for bad in (["neon"], [7]):
        with pytest.raises(mettle.DataError) as info:
            m.predict(pd.DataFrame({"x": [0.5], "gas": bad}))
        msg = str(info.value)
        assert "dataframe" in msg and "row 1" in msg and "'gas'" in msg, msg
        assert "is not a declared level of this code" in msg and "3 = helium" in msg, msg


def test_relevance_by_column_sums_a_codes_indicators(coded):
    _, m = coded
    card = m.explain()["targets"][0]
    per_input = card["relevance"]
    by_col = m.relevance()
    assert list(by_col.index) == ["x", "gas"]
    assert by_col.loc["gas", "y"] == pytest.approx(
        sum(v for k, v in per_input.items() if k.startswith("gas=")), rel=1e-12
    )
    assert by_col.loc["gas", "y"] == card["relevance_by_column"]["gas"]
    # the generator's level effects (range 1.5) dwarf nothing: the code is used
    assert by_col.loc["gas", "y"] > 0.1
    by_input = m.relevance(by="input")
    assert list(by_input.index) == m.inputs
    with pytest.raises(mettle.SettingsError):
        m.relevance(by="level")


def test_a_model_without_codes_has_none(tmp_path):
    from conftest import fixture_frame

    m = mettle.Model.train(fixture_frame(40, 1), targets="y", progress=False, **SMALL)
    assert m.codes == {}
    assert len(m.code_levels()) == 0
    pd.testing.assert_frame_equal(m.relevance(), m.relevance(by="input"))
