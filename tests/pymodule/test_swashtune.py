"""The Python module against the CLI: same figures, same files, same messages.

Run by CTest with /usr/bin/python3 -m pytest; the environment names the
build (PYTHONPATH holds build/python) and the CLI to compare with.
"""

import csv
import glob
import json
import math
import os
import subprocess
import sys
import tomllib

import numpy as np
import pytest

import swashtune

SOURCE = os.environ["SWASHTUNE_SOURCE_DIR"]
CLI = os.environ["SWASHTUNE_CLI"]
DEMO = os.path.join(SOURCE, "scenarios", "valve-slam.toml")
FIELD = os.path.join(SOURCE, "scenarios", "field")


def cli(*args, expect=0):
    done = subprocess.run([CLI, *map(str, args)], capture_output=True, text=True)
    assert done.returncode == expect, done.stderr
    return done


def read_csv(path):
    with open(path, newline="") as f:
        rows = list(csv.reader(f))
    return rows[0], rows[1:]


def without_wall_time(summary):
    summary = json.loads(json.dumps(summary))
    summary["solver"].pop("wall_time_s")
    return summary


# ---- scenarios --------------------------------------------------------------


def test_a_dict_with_a_files_content_is_that_scenario():
    with open(DEMO, "rb") as f:
        content = tomllib.load(f)
    assert swashtune.Scenario(content).to_toml() == swashtune.Scenario(DEMO).to_toml()


def test_values_come_in_stored_units_and_changes_take_units():
    s = swashtune.Scenario(DEMO)
    assert s["compensator.setting"] == 210e5  # "210 bar" in the file
    assert s["pump.speed"] == 1800.0  # rev/min, the registry's stored unit
    s["compensator.setting"] = "3000 psi"
    # NIST SP 811: 1 psi = 6894.757 Pa (6.894757e3)
    assert s["compensator.setting"] == pytest.approx(3000 * 6894.757293168, rel=1e-12)
    s.update({"line.volume": "2 L", "solver.rtol": 1e-7})
    assert s["line.volume"] == pytest.approx(2e-3, rel=1e-15) and s["solver.rtol"] == 1e-7
    s.add_event("0.8 s", "load.opening", 0.5, "10 ms")
    assert s.events[-1] == {"at": 0.8, "set": "load.opening", "to": 0.5, "ramp": pytest.approx(0.01)}


def test_a_bad_change_is_refused_and_leaves_the_scenario_alone():
    s = swashtune.Scenario(DEMO)
    with pytest.raises(swashtune.ScenarioError, match=r'^<update>: compensator.setting: .*"210 kg"'):
        s["compensator.setting"] = "210 kg"
    with pytest.raises(swashtune.ScenarioError, match=r'line.volum: unknown key; did you mean "line.volume"'):
        s["line.volum"] = 1e-3
    assert s["compensator.setting"] == 210e5


# ---- the same figures as the CLI ----------------------------------------------


@pytest.mark.parametrize("units", ["si", "metric", "us"])
def test_a_run_gives_the_clis_trace_and_summary(tmp_path, units):
    cli("run", DEMO, "--out", tmp_path, "--units", units)
    header, rows = read_csv(tmp_path / "trace.csv")
    run = swashtune.Scenario(DEMO).run(units=units)
    assert list(run.trace) == header
    written = np.array(rows, dtype=float)
    for i, name in enumerate(header):
        # trace.csv holds 10 significant digits; the arrays hold the doubles.
        np.testing.assert_allclose(run.trace[name], written[:, i], rtol=6e-10, atol=1e-300, err_msg=name)
    with open(tmp_path / "summary.json") as f:
        assert without_wall_time(run.summary) == without_wall_time(json.load(f))


def test_a_changed_scenario_runs_as_its_file_runs(tmp_path):
    s = swashtune.Scenario(DEMO)
    s.update({"line.volume": "2.5 L", "compensator.setting": "180 bar"})
    (tmp_path / "changed.toml").write_text(s.to_toml())
    cli("run", tmp_path / "changed.toml", "--out", tmp_path / "out")
    with open(tmp_path / "out" / "summary.json") as f:
        assert without_wall_time(s.run(trace=False).summary) == without_wall_time(json.load(f))


@pytest.mark.parametrize("opening", [0.0, 0.1, 0.5])
def test_stability_is_the_clis(opening):
    expected = json.loads(cli("stability", DEMO, "--opening", opening, "--json").stdout)
    assert swashtune.Scenario(DEMO).stability(opening=opening) == expected


def test_the_bode_data_is_the_clis(tmp_path):
    cli("stability", DEMO, "--opening", 0.1, "--bode", tmp_path / "bode.csv")
    header, rows = read_csv(tmp_path / "bode.csv")
    bode = swashtune.Scenario(DEMO).bode(opening=0.1)
    assert list(bode) == header
    written = np.array(rows, dtype=float)
    for i, name in enumerate(header):  # the CSV holds 8 significant digits
        np.testing.assert_allclose(bode[name], written[:, i], rtol=1e-7, atol=1e-12, err_msg=name)


def test_the_stability_map_is_the_clis():
    axes = ["line.volume=0.5 L:2 L:3", "compensator.setting=150 bar:250 bar:2"]
    expected = json.loads(cli("stability", DEMO, "--opening", 0.1, "--map", *axes, "--json").stdout)
    assert swashtune.Scenario(DEMO).stability_map(*axes, opening=0.1) == expected


def test_the_steady_characteristic_is_the_clis():
    expected = json.loads(cli("steady", DEMO, "--points", 6, "--json").stdout)
    assert swashtune.Scenario(DEMO).steady(points=6) == expected


def sweep_table_columns(path):
    header, rows = read_csv(path)
    return {name: [row[i] for row in rows] for i, name in enumerate(header)}


def same_field(text, value, name):
    """A CLI table field and the module's value for it: numbers exactly (the
    CLI writes the shortest text that reads back exactly), empty as nan/None."""
    if text == "":
        return value is None or (isinstance(value, float) and math.isnan(value))
    if text in ("true", "false"):  # stable, margins_apply
        return value is (text == "true")
    try:
        return float(text) == value
    except ValueError:
        return text == value


@pytest.mark.parametrize(
    "vary, extra",
    [
        (["line.volume=0.5L:4L:5", "compensator.setting=150bar:250bar:3"], {}),
        (["line.volume=0.5L:4L", "faults.entrained_air=0:0.02"], {"samples": 7, "seed": 3}),
    ],
)
def test_a_sweep_on_threads_is_the_clis_table(tmp_path, vary, extra):
    args = [a for v in vary for a in ("--vary", v)]
    for key, value in extra.items():
        args += [f"--{key}", value]
    cli("sweep", DEMO, *args, "--out", tmp_path / "sweep.csv")
    expected = sweep_table_columns(tmp_path / "sweep.csv")
    got = swashtune.Scenario(DEMO).sweep(vary, jobs=2, **extra)
    assert list(got) == list(expected)
    assert got["index"].dtype == np.int64
    for name, column in got.items():
        assert len(column) == len(expected[name])
        for row, (text, value) in enumerate(zip(expected[name], column)):
            assert same_field(text, value, name), (name, row, text, value)


def test_a_shard_holds_its_points():
    whole = swashtune.Scenario(DEMO).sweep("line.volume=0.5L:4L:7")
    part = swashtune.Scenario(DEMO).sweep("line.volume=0.5L:4L:7", shard="2/3", jobs=2)
    assert list(part["index"]) == [1, 4]
    np.testing.assert_array_equal(part["peak_discharge_pressure_Pa"], whole["peak_discharge_pressure_Pa"][[1, 4]])


def test_a_recording_reads_and_analyses_as_in_the_cli():
    path = os.path.join(FIELD, "line2-pusher-hunting.csv")
    expected = json.loads(cli("field", path, "--from", "150ms", "--json").stdout)
    assert swashtune.field(path, t_from=0.15) == expected
    assert expected["analysed"]["from_s"] >= 0.15
    with_pump = json.loads(cli("field", path, "--pistons", 9, "--speed", "1800rpm", "--json").stdout)
    assert swashtune.field(path, pistons=9, speed_rpm=1800) == with_pump
    trace = swashtune.read_field_trace(path)
    everything = json.loads(cli("field", path, "--json").stdout)
    assert trace["time_s"].shape == trace["pressure_Pa"].shape == (everything["reading"]["kept"],)
    assert trace["time_s"][0] == everything["reading"]["first_time_s"]


def test_a_fit_is_the_clis(tmp_path):
    path = os.path.join(FIELD, "log-turner-slam.csv")
    out = tmp_path / "fitted.toml"
    expected = json.loads(cli("fit", DEMO, "--trace", path, "--free", "faults.entrained_air", "--json", "--out", out).stdout)
    got = swashtune.Scenario(DEMO).fit(path, free="faults.entrained_air")
    fitted = got.pop("scenario")
    assert got == expected
    assert fitted.to_toml() == out.read_text()


def test_the_parameters_are_the_registrys():
    listed = [line.split()[0] for line in cli("parameters").stdout.splitlines() if line.strip()]
    assert [p["key"] for p in swashtune.parameters()] == listed


# ---- an outside check ------------------------------------------------------------


def test_oscillation_of_a_damped_sine():
    # Exact solution: y = exp(-zeta w_n t) sin(w_d t), w_d = w_n sqrt(1 - zeta^2);
    # the logarithmic decrement is 2 pi zeta / sqrt(1 - zeta^2) (Thomson &
    # Dahleh, Theory of Vibration with Applications).
    zeta, f_d = 0.02, 50.0
    w_d = 2 * math.pi * f_d
    w_n = w_d / math.sqrt(1 - zeta**2)
    t = np.linspace(0.0, 0.5, 20001)
    y = 1e5 * np.exp(-zeta * w_n * t) * np.sin(w_d * t)
    report = swashtune.analyse_oscillation(t, y)
    assert report["kind"] == "decaying slowly"  # damping ratio below 0.05
    assert report["frequency_Hz"] == pytest.approx(f_d, rel=2e-3)
    assert report["damping_ratio"] == pytest.approx(zeta, rel=0.03)


# ---- the same messages as the CLI ---------------------------------------------------


@pytest.mark.parametrize("path", sorted(glob.glob(os.path.join(SOURCE, "scenarios", "bad", "*.toml"))))
def test_a_bad_scenario_file_raises_the_clis_message(path):
    message = cli("check", path, expect=2).stderr.strip()
    with pytest.raises(swashtune.ScenarioError) as raised:
        swashtune.Scenario(path)
    assert str(raised.value) == message
    assert isinstance(raised.value, ValueError) and isinstance(raised.value, swashtune.Error)


@pytest.mark.parametrize(
    "args, kwargs",
    [
        (["--vary", "line.volume=0.5L:4L:3", "--shard", "4/3"], {"vary": "line.volume=0.5L:4L:3", "shard": "4/3"}),
        (["--vary", "line.volume=0.5L:4L"], {"vary": "line.volume=0.5L:4L"}),
        (["--vary", "line.volume=0.5L:4L:3", "--samples", 4], {"vary": "line.volume=0.5L:4L:3", "samples": 4}),
        (["--vary", "pump.volume=1:2:3"], {"vary": "pump.volume=1:2:3"}),
    ],
)
def test_bad_sweep_input_raises_the_clis_message(tmp_path, args, kwargs):
    message = cli("sweep", DEMO, *args, "--out", tmp_path / "s.csv", expect=2).stderr.strip()
    with pytest.raises(swashtune.SweepError) as raised:
        swashtune.Scenario(DEMO).sweep(**kwargs)
    assert "swashtune-cli sweep: " + str(raised.value) == message


@pytest.mark.parametrize("name", ["bad_text_in_number.csv", "bad_time_order.csv"])
def test_a_bad_recording_raises_the_clis_message(name):
    path = os.path.join(SOURCE, "tests", "data", "field", name)
    message = cli("field", path, expect=2).stderr.strip()
    with pytest.raises(swashtune.FieldTraceError) as raised:
        swashtune.field(path)
    assert str(raised.value) == message


def test_a_warning_of_the_loader_is_the_clis(tmp_path):
    empty = tmp_path / "empty.toml"
    empty.write_text("")
    shown = [line for line in cli("check", empty).stderr.splitlines() if line.startswith("warning: ")]
    assert shown, "the CLI warns about an empty scenario file"
    with pytest.warns(swashtune.ScenarioWarning) as caught:
        s = swashtune.Scenario(empty)
    assert ["warning: " + str(w.message) for w in caught] == shown == ["warning: " + w for w in s.warnings]


def test_a_missing_file_names_the_path():
    message = cli("check", "/nonexistent/press.toml", expect=2).stderr.strip()
    with pytest.raises(swashtune.ScenarioError, match="/nonexistent/press.toml") as raised:
        swashtune.Scenario("/nonexistent/press.toml")
    assert str(raised.value) == message


# ---- installed as the README says ------------------------------------------------------


def test_the_install_rule_gives_an_importable_package(tmp_path):
    build = os.environ["SWASHTUNE_BUILD_DIR"]
    subprocess.run(
        [os.environ["CMAKE_COMMAND"], "--install", build, "--component", "python", "--prefix", tmp_path],
        check=True,
        capture_output=True,
    )
    found = glob.glob(str(tmp_path / "**" / "swashtune" / "__init__.py"), recursive=True)
    assert len(found) == 1, found
    site = os.path.dirname(os.path.dirname(found[0]))
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
    env["PYTHONPATH"] = site
    probe = "import swashtune; print(swashtune.__file__); print(swashtune.Scenario().steady(points=2)['deadhead_pressure_Pa'])"
    done = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, env=env, check=True)
    assert done.stdout.splitlines()[0].startswith(site)


def test_the_readme_example_runs(tmp_path):
    lines, state = [], 0
    with open(os.path.join(SOURCE, "README.md")) as f:
        for line in f:
            if state == 0 and line.strip() == "<!-- recipe: python-example -->":
                state = 1
            elif state == 1 and line.startswith("```"):
                state = 2
            elif state == 2 and line.startswith("```"):
                break
            elif state == 2:
                lines.append(line)
    assert lines, "README.md has no python-example block"
    (tmp_path / "example.py").write_text("".join(lines))
    done = subprocess.run([sys.executable, tmp_path / "example.py"], cwd=SOURCE, capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    assert "Caution" in done.stdout
