"""mettle from Python: the same engine as the ``mettle`` command, on DataFrames.

Train committees of Bayesian-regularised neural networks on test records,
estimate mechanical properties of steels and weld metals with error bars and a
graded domain verdict, read the model card, screen candidates against
requirements. Model files are those of the command line: a model trained here
predicts identically with ``mettle predict`` and the other way round.

    import mettle, pandas as pd
    df = pd.read_csv("datasets/fellhaven_welds.csv")
    model = mettle.Model.train(df, schema="datasets/fellhaven_welds.toml", seed=1)
    est = model.predict(pd.read_csv("datasets/fellhaven_new_welds.csv"))

Estimates are not test results: qualification testing per the applicable code
decides; local codes and licensed engineers have the final word.
"""

from __future__ import annotations

import json
import os
import sys
from typing import Any, Callable, Iterable

import numpy as np

from . import _mettle
from ._frames import source_args
from .errors import (
    CostsError,
    DataError,
    FileReadError,
    FileWriteError,
    MettleError,
    ModelError,
    RequirementError,
    SchemaError,
    SettingsError,
    TrainingError,
)

__version__ = _mettle.VERSION

#: The caution shown wherever an estimate could feed a structural decision.
CAUTION: str = _mettle.CAUTION

__all__ = [
    "CAUTION",
    "Model",
    "screen",
    "MettleError",
    "DataError",
    "FileReadError",
    "FileWriteError",
    "SchemaError",
    "SettingsError",
    "TrainingError",
    "ModelError",
    "RequirementError",
    "CostsError",
]

_ESTIMATE_FIELDS = ("mean", "median", "sd", "lo95", "hi95", "noise_sd", "model_sd")


class _Printer:
    """Training progress as lines on stderr (a notebook shows them under the
    cell): the start of each target's search, each quarter of its candidates,
    the committee chosen."""

    def __init__(self, stream=None):
        self.stream = stream
        self.quarter: dict[str, int] = {}

    def __call__(self, ev: dict) -> None:
        out = self.stream or sys.stderr
        kind, target = ev.get("event"), ev.get("target")
        if kind == "search_started":
            self.quarter[target] = 0
            print(f"{target}: training {ev['total']} candidate networks", file=out, flush=True)
        elif kind == "range_widened":
            self.quarter[target] = 4 * ev.get("done", 0) // max(ev["total"], 1)
            print(
                f"{target}: hidden-unit range widened to {ev['max_hidden']} ({ev['total']} candidates)",
                file=out,
                flush=True,
            )
        elif kind == "candidate_done":
            q = 4 * ev["done"] // max(ev["total"], 1)
            if q > self.quarter.get(target, 0):
                self.quarter[target] = q
                best = ev.get("best_nlpd")
                best = "" if best is None else f", best held-out NLPD {best:.4f}"
                print(f"{target}: {ev['done']}/{ev['total']} candidates{best}", file=out, flush=True)
        elif kind == "noise_models":
            print(f"{target}: fitting noise that varies with the inputs ({ev['total']} candidates)", file=out, flush=True)
        elif kind == "kriging":
            print(f"{target}: kriging the residuals over {ev['n_rows']} rows", file=out, flush=True)
        elif kind == "partition_started":
            print(f"{target}: partition {ev['partition']} of {ev['n_partitions']} (a whole training)", file=out, flush=True)
        elif kind == "refitting":
            print(f"{target}: refitting {ev['n_members']} members on all rows", file=out, flush=True)
        elif kind == "target_done":
            print(
                f"{target}: committee of {ev['n_members']}, held-out NLPD {ev['heldout_nlpd']:.4f}",
                file=out,
                flush=True,
            )


def _switch(name: str, v: Any) -> bool:
    if isinstance(v, (bool, np.bool_)):
        return bool(v)
    if v in ("on", "off"):
        return v == "on"
    raise SettingsError(f"invalid {name} = {v!r}: on, off, True or False")


def _hidden(v: Any) -> str:
    if isinstance(v, (int, np.integer)) and not isinstance(v, bool):
        return str(int(v))
    if isinstance(v, (tuple, list)) and len(v) == 2:
        return f"{int(v[0])}..{int(v[1])}"
    if isinstance(v, range):
        return f"{v.start}..{v.stop - 1}"
    return str(v)


def _count(name: str, v: Any) -> int:
    if isinstance(v, bool) or not isinstance(v, (int, np.integer)) or v < 0:
        raise SettingsError(f"invalid {name} = {v!r}: a whole number")
    return int(v)


def _frame(columns: dict, index, kind: str, attrs: dict):
    if kind == "polars":
        import polars as pl

        return pl.DataFrame(columns)
    if kind == "dict":
        return columns
    import pandas as pd

    df = pd.DataFrame(columns, index=index)
    df.attrs.update(attrs)
    return df


def _out_kind(data: Any, frame: str | None) -> str:
    if frame is not None:
        if frame not in ("pandas", "polars", "dict"):
            raise SettingsError(f"invalid frame = {frame!r}: one of pandas, polars, dict")
        return frame
    return "polars" if type(data).__module__.split(".")[0] == "polars" else "pandas"


def _index(data: Any):
    return data.index if type(data).__module__.split(".")[0] == "pandas" and hasattr(data, "index") else None


class Model:
    """A trained mettle model: one committee per target.

    Create one with :meth:`Model.train` or :meth:`Model.load`.
    """

    def __init__(self, raw: "_mettle.RawModel", notes: Iterable[str] = ()):
        self._raw = raw
        #: The notes and warnings of training (what the CLI prints on stderr).
        self.notes: list[str] = list(notes)

    # --- training -------------------------------------------------------
    @classmethod
    def train(
        cls,
        data: Any,
        targets: str | list[str] | None = None,
        inputs: list[str] | None = None,
        schema: str | os.PathLike | None = None,
        *,
        hidden: str | int | tuple = "1..10",
        restarts: int = 4,
        seed: int = 0,
        holdout: float = 0.2,
        max_members: int = 16,
        noise: str = "auto",
        kriging: str = "auto",
        gross_errors: bool | str = True,
        heavy_tails: bool | str = True,
        reweight_mean: bool = False,
        widen: bool = True,
        early_stop: bool = True,
        partitions: int = 1,
        partition_variance: str = "within",
        ard: bool = True,
        log_inputs: bool = True,
        drop_incomplete_rows: bool = False,
        record_time: bool = False,
        progress: bool | Callable[[dict], None] = True,
        out: str | os.PathLike | None = None,
        source: str | None = None,
        columns: list[str] | None = None,
    ) -> "Model":
        """Train a committee for each target, as ``mettle train`` does.

        ``data`` is a pandas or polars DataFrame, a numpy array (columns
        ``x0, x1, ...`` unless ``columns`` names them), a dict of columns, or
        the path of a CSV or Parquet file. Give ``targets`` (and optionally
        ``inputs``; default every other numeric column) or ``schema`` (a TOML
        file naming each column's role, unit, bounds and derived inputs).

        The settings and their defaults are those of ``mettle train``:
        ``hidden`` (``"MIN..MAX"``, a count, or a pair; 0 is the linear
        model), ``restarts``, ``seed``, ``holdout``, ``max_members``,
        ``noise`` (constant, varying, auto), ``kriging`` (on, off, auto),
        ``gross_errors``, ``heavy_tails``, ``reweight_mean``, ``partitions``
        (whole trainings averaged, partition p with seed ``seed + p``, 1 to 8),
        ``partition_variance`` (``within``: the partitions' mean variance;
        ``mixture``: plus the spread of their means; only with partitions > 1); ``widen=False``
        is ``--no-widen``, ``early_stop=False`` ``--no-early-stop``, ``ard=False`` ``--no-ard``, ``log_inputs=False``
        ``--no-log-inputs``. The same data, settings and seed give a model
        file byte-identical to the CLI's.

        ``progress``: True prints progress lines on stderr, False is silent,
        a callable receives one dict per event. ``out``: also write the model
        file there (atomically: a failure leaves nothing half-written).
        ``source``: the name messages and the model give the data (default
        ``dataframe``; the file name for a path).

        The GIL is released while training. Raises the classes of
        ``mettle.errors`` with the CLI's messages.
        """
        if isinstance(targets, str):
            targets = [t for t in targets.split(",") if t]
        elif targets is not None:
            targets = [str(t) for t in targets]
        if isinstance(inputs, str):
            inputs = [t for t in inputs.split(",") if t]
        elif inputs is not None:
            inputs = [str(t) for t in inputs]
        settings = {
            "hidden": _hidden(hidden),
            "restarts": _count("restarts", restarts),
            "seed": _count("seed", seed),
            "holdout": float(holdout),
            "max_members": _count("max_members", max_members),
            "noise": str(noise),
            "kriging": str(kriging),
            "gross_errors": _switch("gross_errors", gross_errors),
            "heavy_tails": _switch("heavy_tails", heavy_tails),
            "reweight_mean": bool(reweight_mean),
            "widen": bool(widen),
            "early_stop": bool(early_stop),
            "partitions": _count("partitions", partitions),
            "partition_variance": str(partition_variance),
            "ard": bool(ard),
            "log_inputs": bool(log_inputs),
        }
        callback = _Printer() if progress is True else (progress or None)
        raw, notes = _mettle.train(
            **source_args(data, source, columns),
            targets=targets,
            inputs=inputs,
            schema=os.fspath(schema) if schema is not None else None,
            settings=settings,
            drop_incomplete_rows=bool(drop_incomplete_rows),
            record_time=bool(record_time),
            progress=callback,
        )
        model = cls(raw, notes)
        if out is not None:
            model.save(out)
        if progress is True:
            for n in notes:
                print(n, file=sys.stderr)
        return model

    # --- files ----------------------------------------------------------
    @classmethod
    def load(cls, path: str | os.PathLike) -> "Model":
        """Read a model file written by ``mettle train`` or :meth:`save`."""
        return cls(_mettle.RawModel.load(os.fspath(path)))

    def save(self, path: str | os.PathLike) -> None:
        """Write the model file (the CLI's format), atomically."""
        self._raw.save(os.fspath(path))

    def to_json(self) -> bytes:
        """The bytes of the model file."""
        return self._raw.to_json()

    @classmethod
    def from_json(cls, data: bytes, name: str = "<bytes>") -> "Model":
        """A model from the bytes of a model file."""
        return cls(_mettle.RawModel.from_json(bytes(data), name))

    def __getstate__(self):
        return {"json": self.to_json(), "notes": self.notes}

    def __setstate__(self, state):
        self._raw = _mettle.RawModel.from_json(state["json"], "<pickle>")
        self.notes = list(state.get("notes", []))

    def __eq__(self, other):
        return isinstance(other, Model) and self.to_json() == other.to_json()

    __hash__ = None

    # --- what the model is ----------------------------------------------
    @property
    def targets(self) -> list[str]:
        """Target names."""
        return self._raw.targets

    @property
    def inputs(self) -> list[str]:
        """Inputs in network order (derived inputs included)."""
        return self._raw.inputs

    @property
    def required_columns(self) -> list[str]:
        """The columns a table given to :meth:`predict` must hold."""
        return self._raw.required_columns

    def units(self, declared: bool = False) -> dict[str, str | None]:
        """Unit of each target's estimates (internal or as declared)."""
        return dict(zip(self.targets, self._raw.target_units(declared)))

    @property
    def seed(self) -> int:
        return self._raw.seed

    def explain(self) -> dict:
        """The model card as a dict: the object ``mettle explain --format json`` prints."""
        return json.loads(self._raw.explain_json())

    @property
    def codes(self) -> dict[str, dict[int, str]]:
        """The inputs the schema declares as codes (``kind = "levels"``): per
        code column, its levels ``{code: name}`` in declared order, levels
        no training row held included (a row at one is refused by
        :meth:`predict`). Empty for a model without codes. The training row
        count of each level is :meth:`code_levels`."""
        return {c["name"]: {int(l["code"]): l["name"] for l in c["levels"]} for c in self._codes()}

    def code_levels(self, frame: str | None = None):
        """One row per declared level of every code: ``code`` (the column),
        ``level`` (the integer), ``name``, ``indicator`` (the model's input
        for it, ``COLUMN=LEVEL``) and ``training_rows`` (0: declared, never
        seen in training, refused at prediction). A pandas DataFrame, or as
        ``frame`` says (``polars``, ``dict``)."""
        cols: dict[str, list] = {"code": [], "level": [], "name": [], "indicator": [], "training_rows": []}
        for c in self._codes():
            for l in c["levels"]:
                cols["code"].append(c["name"])
                cols["level"].append(int(l["code"]))
                cols["name"].append(l["name"])
                cols["indicator"].append(l["column"])
                cols["training_rows"].append(int(l["training_rows"]))
        return _frame(cols, None, _out_kind(None, frame or "pandas"), {})

    def _codes(self) -> list:
        return json.loads(self._raw.codes_json())

    def relevance(self, by: str = "column", frame: str | None = None):
        """Each input's relevance per target (ARD: the most relevant input of
        a target is 1), as ``mettle explain`` shows it: one row per input,
        one column per target. ``by="column"`` (the default) gives one row
        per column of the table: a code's indicator relevances summed into
        one figure named by the code (the card's ``relevance_by_column``;
        for a model without codes the same as ``by="input"``).
        ``by="input"``: one row per network input (a code's indicators
        each). A target trained without ARD has no figures (NaN). A pandas
        DataFrame (index: the inputs), or as ``frame`` says."""
        if by not in ("column", "input"):
            raise SettingsError(f"invalid by = {by!r}: one of column, input")
        card = self.explain()
        per: dict[str, dict] = {}
        for t in card["targets"]:
            r = t.get("relevance") or {}
            if by == "column":
                r = t.get("relevance_by_column") or r
            per[t["name"]] = r
        names: list[str] = []
        for r in per.values():
            names.extend(n for n in r if n not in names)
        cols: dict[str, Any] = {"input": names}
        for t, r in per.items():
            cols[t] = np.array([r.get(n, np.nan) for n in names], dtype=float)
        kind = _out_kind(None, frame or "pandas")
        if kind == "pandas":
            import pandas as pd

            return pd.DataFrame({t: cols[t] for t in per}, index=pd.Index(names, name="input"))
        return _frame(cols, None, kind, {})

    def __repr__(self) -> str:
        return (
            f"<mettle.Model targets={self.targets} inputs={len(self.inputs)} "
            f"trained on {self._raw.data_file!r}, seed {self.seed}>"
        )

    # --- estimates ------------------------------------------------------
    def predict(
        self,
        data: Any,
        require: str | Iterable[str] | None = None,
        *,
        units: str = "internal",
        source: str | None = None,
        columns: list[str] | None = None,
        frame: str | None = None,
    ):
        """Estimate every target for every row, as ``mettle predict`` does.

        Returns a DataFrame (pandas; polars for a polars input, or as
        ``frame`` says) with, per target, the columns of the CLI's CSV
        estimate file: ``<target>_mean``, ``_median``, ``_sd`` (noise + model),
        ``_lo95``, ``_hi95``, ``_noise_sd``, ``_model_sd``; then ``in_domain``,
        ``domain`` (inside, thin, outside) and ``notes``. With ``require``
        (``"uts_mpa>=620"``, ``"charpy_j>=47@test_temp_c=-40"``), one column
        ``P(<requirement>)`` each and ``P(all)`` (from the targets' joint
        predictive distribution, as ``mettle screen`` computes it). ``units="declared"``: the units the schema declares.
        A pandas result carries ``attrs`` ``units``, ``interval_kind`` and
        ``caution``. The GIL is released while estimating.
        """
        if isinstance(require, str):
            require = [require]
        require = [str(r) for r in (require or [])]
        if units not in ("internal", "declared"):
            raise SettingsError(f"invalid units = {units!r}: one of internal, declared")
        kind = _out_kind(data, frame)
        raw = _mettle.predict(
            self._raw,
            **source_args(data, source, columns),
            require=require,
            declared_units=units == "declared",
        )
        cols: dict[str, Any] = {}
        unit_of, kind_of = {}, {}
        for t in raw["targets"]:
            for f in _ESTIMATE_FIELDS:
                cols[f"{t['name']}_{f}"] = np.frombuffer(t[f], dtype="<f8")
            unit_of[t["name"]] = t["unit"]
            kind_of[t["name"]] = t["interval_kind"]
        cols["in_domain"] = np.frombuffer(raw["in_domain"], dtype=np.uint8).astype(bool)
        cols["domain"] = raw["domain"]
        cols["notes"] = raw["notes"]
        # named as given, in the order given
        for given, (_, p) in zip(require, raw["requirements"]):
            cols[f"P({given})"] = np.frombuffer(p, dtype="<f8")
        if len(raw["requirements"]) > 1:
            cols["P(all)"] = np.frombuffer(raw["joint"], dtype="<f8")
        attrs = {"units": unit_of, "interval_kind": kind_of, "caution": CAUTION}
        return _frame(cols, _index(data), kind, attrs)

    def screen(self, data: Any, require, **kw):
        """:func:`mettle.screen` with this model alone."""
        return screen([self], data, require, **kw)


def screen(
    models: Model | Iterable[Model],
    data: Any,
    require: str | Iterable[str],
    *,
    costs: str | os.PathLike | None = None,
    allow_out_of_domain: bool = False,
    source: str | None = None,
    frame: str | None = None,
):
    """Rank candidate rows by their chance of meeting every requirement, as
    ``mettle screen`` does: one row per candidate, best first (eligible ones
    first: in domain and within the cost file's limits; then by the joint
    probability, assumed independent; then by cost). ``costs`` is a
    cost-and-limits TOML file (prices per kg, a carbon-equivalent limit).
    ``row`` is the candidate's 0-based position in ``data``.

    A probability is the model's belief, not a test result: qualification
    testing per the applicable code decides.
    """
    if isinstance(models, Model):
        models = [models]
    if isinstance(require, str):
        require = [require]
    require = [str(r) for r in require]
    kind = _out_kind(data, frame)
    ranked = _mettle.screen(
        [m._raw for m in models],
        **source_args(data, source),
        require=require,
        costs=os.fspath(costs) if costs is not None else None,
        allow_out_of_domain=bool(allow_out_of_domain),
    )
    cols: dict[str, list] = {"rank": [], "row": [], "eligible": [], "P(all)": []}
    for c in ranked:
        cols["rank"].append(c["rank"])
        cols["row"].append(c["row"])
        cols["eligible"].append(c["eligible"])
        cols["P(all)"].append(c["joint_probability"])
        for given, p in zip(require, c["probabilities"]):
            cols.setdefault(f"P({given})", []).append(p)
        for t, (mean, sd, lo, hi) in c["estimates"].items():
            for f, v in (("mean", mean), ("sd", sd), ("lo95", lo), ("hi95", hi)):
                cols.setdefault(f"{t}_{f}", []).append(v)
        for f in ("cost_per_tonne", "carbon_equivalent", "violations", "in_domain", "domain", "notes"):
            cols.setdefault(f, []).append(c[f])
    currency = ranked[0]["currency"] if ranked else None
    attrs = {"currency": currency, "caution": CAUTION}
    return _frame(cols, None, kind, attrs)
