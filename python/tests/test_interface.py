"""The Python interface itself: progress events, the GIL released while
training, pickling, the model card as a dict, units and notes."""

from __future__ import annotations

import pickle
import threading

import numpy as np
import pandas as pd

import mettle
from conftest import ROOT, SMALL, fixture_frame


def test_progress_events_reach_a_callable():
    events = []
    mettle.Model.train(fixture_frame(60, 3), targets="y", progress=events.append, **SMALL)
    kinds = [e["event"] for e in events]
    assert kinds[0] == "search_started" and kinds[-1] == "target_done"
    done = [e for e in events if e["event"] == "candidate_done"]
    assert done and done[-1]["done"] == done[-1]["total"]


def test_printed_progress_goes_to_stderr(capsys):
    mettle.Model.train(fixture_frame(60, 3), targets="y", progress=True, **SMALL)
    err = capsys.readouterr().err
    assert "y: training" in err and "committee of" in err


def test_the_gil_is_released_while_training():
    # another Python thread keeps running while the model trains: with the
    # GIL held by training it could not count at all until training ended
    ticks = []
    result = {}

    def work():
        result["m"] = mettle.Model.train(fixture_frame(200, 3), targets="y", progress=False, hidden="2..3", restarts=2)

    t = threading.Thread(target=work)
    t.start()
    while t.is_alive():
        ticks.append(1)
        t.join(0.001)
    counted_during = len(ticks)
    assert "m" in result
    assert counted_during > 10, counted_during


def test_pickle_and_equality():
    m = mettle.Model.train(fixture_frame(60, 3), targets="y", progress=False, **SMALL)
    m2 = pickle.loads(pickle.dumps(m))
    assert m2 == m and m2.to_json() == m.to_json()
    new = fixture_frame(5, 9)
    assert m2.predict(new).equals(m.predict(new))


def test_model_card_units_and_caution():
    m = mettle.Model.load(ROOT / "models" / "fellhaven_welds.json")
    card = m.explain()
    assert [t["name"] for t in card["targets"]] == m.targets
    assert m.units()["uts_mpa"] == "MPa"
    est = m.predict(pd.read_csv(ROOT / "datasets" / "fellhaven_new_welds.csv"))
    assert est.attrs["caution"] == mettle.CAUTION and "not test results" in mettle.CAUTION
    assert set(m.required_columns) <= set(pd.read_csv(ROOT / "datasets" / "fellhaven_new_welds.csv").columns)


def test_numpy_dict_and_text_inputs_predict_alike():
    m = mettle.Model.train(fixture_frame(60, 3), targets="y", progress=False, **SMALL)
    new = fixture_frame(8, 9)[["x1", "x2"]]
    a = m.predict(new)
    b = m.predict(new.to_numpy(), columns=["x1", "x2"])
    c = m.predict({"x1": new.x1.tolist(), "x2": new.x2.tolist()})
    d = m.predict(new.astype(str))  # text cells, parsed as the CLI parses a CSV cell
    for other in (b, c, d):
        assert np.array_equal(a["y_mean"].to_numpy(), other["y_mean"].to_numpy())


def test_the_documented_examples_are_valid_python():
    # the README's four lines and the notebook session of docs/python.md
    # (run end to end by hand: about two minutes of training, too long here)
    import re

    for doc in (ROOT / "README.md", ROOT / "docs" / "python.md"):
        blocks = re.findall(r"```python\n(.*?)```", doc.read_text(), re.S)
        assert blocks, doc
        for k, code in enumerate(blocks):
            compile(code, f"{doc.name} block {k + 1}", "exec")
