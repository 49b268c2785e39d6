"""Swashtune for scripts and notebooks.

Simulates the control loop of a pressure-compensated piston pump with the
same core as ``swashtune-cli``, and returns what the CLI writes: the trace's
columns (named as in trace.csv) as numpy arrays, and ``summary.json``,
``stability --json``, ``steady --json``, ``field --json`` and ``fit --json``
as dicts. Errors are exceptions carrying the CLI's messages (file, line,
key). Values are in the registry's stored units (SI, pump speed in rev/min)
unless a string gives a unit: ``scenario["compensator.setting"] = "180 bar"``.

    import swashtune
    s = swashtune.Scenario("scenarios/valve-slam.toml")
    s["line.volume"] = "2 L"
    run = s.run()
    run.trace["discharge_pressure_bar"].max(), run.summary["events"][0]["settling_time_s"]

Caution: simulated figures only; see ``swashtune.safety_notice``.
"""

from __future__ import annotations

import csv
import io
import json
import math
import os
import re
import tomllib
import warnings as _warnings
from typing import Any, Iterable, Mapping

import numpy as np

from . import _swashtune as _core
from ._swashtune import (  # noqa: F401  (re-exported)
    Error,
    FieldTraceError,
    FileError,
    ScenarioError,
    SolverError,
    SweepError,
    UnitError,
    safety_notice,
    safety_notice_short,
)

__all__ = [
    "Scenario",
    "Run",
    "parameters",
    "read_field_trace",
    "field",
    "analyse_oscillation",
    "convert",
    "Error",
    "ScenarioError",
    "SolverError",
    "FieldTraceError",
    "SweepError",
    "FileError",
    "UnitError",
    "ScenarioWarning",
    "safety_notice",
    "safety_notice_short",
]


class ScenarioWarning(UserWarning):
    """Something the loader accepted but that was probably not meant (the CLI's "warning: ...")."""


def _loaded(core):
    for text in core.warnings:
        _warnings.warn(text, ScenarioWarning, stacklevel=3)
    return core


def parameters() -> list[dict]:
    """Every parameter and run setting: key, unit, default, range, meaning (the registry)."""
    return _core.parameters()


def convert(value: float, from_unit: str, to_unit: str) -> float:
    """Converts a value between two units of the same dimension, e.g. convert(210, "bar", "psi")."""
    return _core.convert(value, from_unit, to_unit)


# ---- scenarios as dicts ----------------------------------------------------


def _toml_value(value: Any, where: str) -> str:
    if isinstance(value, (bool, np.bool_)):
        return "true" if value else "false"
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    if isinstance(value, (float, np.floating)):
        v = float(value)
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False).replace("\x7f", "\\u007f")
    raise TypeError(f"{where}: expected a number, a string or True/False, got {type(value).__name__}")


def _toml_key(name: Any) -> str:
    name = str(name)
    return name if re.fullmatch(r"[A-Za-z0-9_-]+", name) else json.dumps(name, ensure_ascii=False)


def _to_toml(d: Mapping[str, Any]) -> str:
    """The scenario file a dict stands for: {section: {key: value}, "events": [{at, set, to, ramp}]}."""
    top, tables, events = [], [], None
    for section, body in d.items():
        section = str(section)
        if section == "events" and isinstance(body, (list, tuple)) and all(isinstance(e, Mapping) for e in body):
            events = body
        elif isinstance(body, Mapping):
            tables.append(f"\n[{_toml_key(section)}]")
            tables += [f"{_toml_key(name)} = {_toml_value(v, f'{section}.{name}')}" for name, v in body.items()]
        else:  # the loader says what is wrong with it
            top.append(f"{_toml_key(section)} = {_toml_value(body, section)}")
    lines = top + tables
    for i, event in enumerate(events or []):
        lines.append("\n[[events]]")
        lines += [f"{_toml_key(name)} = {_toml_value(v, f'events[{i}].{name}')}" for name, v in event.items()]
    return "\n".join(lines) + "\n"


def _parse_generated(d: Mapping[str, Any], source: str):
    """Reads a dict through the scenario loader. Its messages are the loader's, with the
    line of the generated text left out: the user wrote no such line."""
    try:
        return _core.parse_scenario(_to_toml(d), source)
    except ScenarioError as e:
        raise ScenarioError(re.sub(r"^" + re.escape(source) + r":\d+(:\d+)?: ", source + ": ", str(e))) from None


class Scenario:
    """A study: parameters, run settings and events, as a scenario file holds them.

    ``Scenario(path)`` reads a scenario file, ``Scenario(dict)`` takes the same
    content as a dict ({"compensator": {"setting": "210 bar"}, "events": [...]};
    messages then name "<dict>" and the key), ``Scenario()`` is the defaults.
    """

    def __init__(self, source: str | os.PathLike | Mapping | "Scenario" | None = None):
        if source is None:
            self._core = _core.parse_scenario("", "<defaults>")
        elif isinstance(source, Scenario):
            self._core = source._core
        elif isinstance(source, Mapping):
            self._core = _parse_generated(source, "<dict>")
        else:
            self._core = _loaded(_core.load_scenario(os.fspath(source)))

    @classmethod
    def from_toml(cls, text: str, source: str = "<text>") -> "Scenario":
        """A scenario from TOML text; messages name `source`."""
        return cls._wrap(_loaded(_core.parse_scenario(text, source)))

    @classmethod
    def _wrap(cls, core) -> "Scenario":
        s = cls.__new__(cls)
        s._core = core
        return s

    @property
    def name(self) -> str:
        return self._core.name

    @property
    def description(self) -> str:
        return self._core.description

    @property
    def warnings(self) -> list[str]:
        """What the loader warned about when it read the scenario (also issued as ScenarioWarning)."""
        return list(self._core.warnings)

    @property
    def events(self) -> list[dict]:
        """The events, sorted by time: at (s), set (key), to (stored unit), ramp (s)."""
        return self._core.events()

    def __getitem__(self, key: str):
        """A parameter or setting in its stored unit, e.g. s["compensator.setting"] in Pa."""
        return self._core.value(key)

    def __setitem__(self, key: str, value) -> None:
        self.update({key: value})

    def update(self, changes: Mapping[str, Any]) -> "Scenario":
        """Sets parameters or settings: {"line.volume": "2 L", "solver.rtol": 1e-7}.

        Checked as the loader checks a file (unit, range, consistency, events within
        the duration); on an error the scenario is left as it was.
        """
        d = self.to_dict()
        for key, value in changes.items():
            section, dot, name = str(key).partition(".")
            if not dot:
                raise ScenarioError(f'{key}: expected a key "section.name", e.g. "line.volume"')
            d.setdefault(section, {})[name] = value
        self._core = _parse_generated(d, "<update>")
        return self

    def add_event(self, at, set: str, to, ramp=0.0) -> "Scenario":
        """Adds an event: at time `at` move parameter `set` to `to` over `ramp` (values may carry units)."""
        d = self.to_dict()
        d.setdefault("events", []).append({"at": at, "set": set, "to": to, "ramp": ramp})
        self._core = _parse_generated(d, "<update>")
        return self

    def copy(self) -> "Scenario":
        return Scenario._wrap(self._core)  # the core object is never changed in place

    def to_toml(self) -> str:
        """The scenario file text (what `fit --out` writes); Scenario.from_toml reads it back exactly."""
        return self._core.to_toml()

    def to_dict(self) -> dict:
        """The scenario as a dict in stored units (what to_toml writes)."""
        return tomllib.loads(self._core.to_toml())

    def to_json(self) -> dict:
        """The resolved scenario (`swashtune-cli check --json`): every parameter in its stored unit."""
        return json.loads(self._core.to_json())

    def __repr__(self) -> str:
        return f"<swashtune.Scenario {self.name!r}, {self['scenario.duration']:g} s, {len(self.events)} events>"

    # ---- studies ------------------------------------------------------------

    def run(self, units: str = "metric", trace: bool = True) -> "Run":
        """Simulates every event, as `swashtune-cli run --units UNITS` does."""
        names, arrays, summary = _core.run(self._core, units, trace)
        return Run(dict(zip(names, arrays)) if trace else {}, json.loads(summary))

    def _at_opening(self, opening) -> "Scenario":
        return self if opening is None else self.copy().update({"load.opening": opening})

    def stability(self, opening=None) -> dict:
        """Modes and loop margins at the steady operating point (`stability --json`)."""
        return json.loads(_core.stability(self._at_opening(opening)._core))

    def bode(self, opening=None, points: int = 601) -> dict:
        """The loop transfer L(jw) from 0.1 Hz to 100 kHz (the columns of `stability --bode`)."""
        header, arrays = _core.bode(self._at_opening(opening)._core, points)
        return dict(zip(header.split(","), arrays))

    def stability_map(self, x: str, y: str, opening=None) -> dict:
        """Margins over a grid of two parameters, "KEY=FROM:TO:N" each (`stability --map --json`)."""
        return json.loads(_core.stability_map(self._at_opening(opening)._core, x, y))

    def steady(self, points: int = 21) -> dict:
        """The steady pressure-flow characteristic, deadhead and cut-in (`steady --json`)."""
        return json.loads(_core.steady(self._core, points))

    def sweep(
        self,
        vary: str | Iterable[str],
        samples: int | None = None,
        seed: int = 1,
        jobs: int = 1,
        shard: str | None = None,
    ) -> dict:
        """Runs the scenario over a grid or a Latin hypercube on `jobs` threads.

        `vary` as for `swashtune-cli sweep --vary`: "KEY=FROM:TO:N" (grid), or
        "KEY=FROM:TO" with `samples`. Returns the table the CLI writes, column
        by column: numbers as float arrays (nan where the CLI leaves a field
        empty), `index` as integers, text as object arrays, `stable` as
        True/False/None.
        """
        if isinstance(vary, str):
            vary = [vary]
        text = _core.sweep(self._core, list(vary), samples, seed, jobs, shard or "")
        return _columns(text)

    def fit(self, trace: str | os.PathLike, free: str | Iterable[str], max_iterations: int = 40, **trace_options) -> dict:
        """Fits parameters so the simulated pressure follows a recording (`fit --json`).

        `free`: keys to estimate; `trace_options` as for read_field_trace. The
        result also holds "scenario": the scenario with the fitted values.
        """
        if isinstance(free, str):
            free = free.split(",")
        text, fitted = _core.fit(self._core, os.fspath(trace), trace_options, list(free), max_iterations)
        result = json.loads(text)
        result["scenario"] = Scenario._wrap(fitted)
        return result


class Run:
    """A finished run: `trace` maps trace.csv's column names to arrays, `summary` is summary.json."""

    def __init__(self, trace: dict, summary: dict):
        self.trace = trace
        self.summary = summary

    def __repr__(self) -> str:
        samples = len(next(iter(self.trace.values()))) if self.trace else 0
        return f"<swashtune.Run {self.summary['scenario']!r}: {samples} samples, {len(self.summary['events'])} events>"


def _column(values: list[str]):
    present = [v for v in values if v != ""]
    try:
        return np.array([float(v) if v != "" else math.nan for v in values])
    except ValueError:
        pass
    if all(v in ("true", "false") for v in present):
        return np.array([None if v == "" else v == "true" for v in values], dtype=object)
    return np.array(values, dtype=object)


def _columns(csv_text: str) -> dict:
    rows = list(csv.reader(io.StringIO(csv_text)))
    header, body = rows[0], rows[1:]
    columns = {name: _column([row[i] for row in body]) for i, name in enumerate(header)}
    columns["index"] = np.array([int(row[0]) for row in body], dtype=np.int64)
    return columns


# ---- recordings -------------------------------------------------------------


def read_field_trace(path: str | os.PathLike, **options) -> dict:
    """Reads a recording (CSV) as `field` and `fit` do: time_s, pressure_Pa, flow_m3_s (or None).

    options: time_column, pressure_column, flow_column (header name or 1-based
    number, "none" for no flow), time_unit, pressure_unit, flow_unit.
    """
    return _core.read_field_trace(os.fspath(path), options)


def field(
    path: str | os.PathLike,
    t_from: float | None = None,
    t_to: float | None = None,
    pistons: float | None = None,
    speed_rpm: float | None = None,
    event_threshold: float | None = None,
    **options,
) -> dict:
    """The analysis of a recording (`swashtune-cli field --json`): the part analysed
    (t_from, t_to in s), the ripple (with pistons and speed_rpm), the events
    (event_threshold in Pa) and the verdict per stretch; `options` as for
    read_field_trace, also control_column, load_column, speed_column, rate and
    atmosphere (SI numbers, or strings with units such as "1kHz")."""
    return json.loads(_core.field(os.fspath(path), options, t_from, t_to, pistons, speed_rpm, event_threshold))


def analyse_oscillation(t, y, t_from: float | None = None, t_to: float | None = None) -> dict:
    """Settled, settling, decaying slowly or sustained, with frequency and decay, of y(t)."""
    return json.loads(
        _core.analyse_oscillation(np.asarray(t, dtype=float).tolist(), np.asarray(y, dtype=float).tolist(), t_from, t_to)
    )
