#!/usr/bin/python3
"""Makes the demo recordings (scenarios/field/) and the recordings the fit
tests use (tests/data/fit/) with the independent scipy reference
(reference_model.py), not with the C++ model, and spoils them the way a
machine and its logger do:

- sensor noise: Gaussian, a stated standard deviation;
- piston ripple: added to the signal at the pumping frequency z N / 60 and
  its second harmonic, its size following the pump's delivery (the
  reference's pump_flow column over the full-stroke flow), with a floor
  for the pistons' compression ripple at no delivery (common practice:
  ripple grows with delivery and pressure; the sizes are invented);
- the logger: a zero offset and an ADC's quantisation (a stated number of
  bits over a stated span);
- the layout: preambles, separators, decimal marks, time-of-day stamps and
  absolute (bar(a)) columns as loggers write them, in the forms
  core/src/field_trace.cpp reads.

Some fit-test recordings also carry a model difference the C++ model
cannot reproduce: the load valve's flow follows dp^0.45 instead of the
square-root law (a valve partly in laminar flow), matched at 5 bar.

    /usr/bin/python3 tests/python/make_field_demos.py --cli build/app/swashtune-cli

Every number here is invented demo data; the seeds are fixed so the files
are remade byte for byte.
"""

import argparse
import json
import math
import os
import subprocess
import sys

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
sys.path.insert(0, HERE)
import reference_model as rm  # noqa: E402

BAR = 1e5
PSI = 6894.757293168  # Pa (NIST SP 811)


# ---------------------------------------------------------------------------
# The model difference: a load valve off the square-root law

ORIFICE_EXPONENT = 0.45   # instead of 0.5
ORIFICE_MATCH_DP = 5e5  # Pa: both laws give the same flow here (the full-flow pressure)


def with_other_orifice_law(run):
    """Runs run() with the reference's load-valve flow scaled by
    (dp / dp_match)^(exponent - 0.5), smoothed near dp = 0."""
    original = rm.Model.evaluate

    def evaluate(self, y):
        e = original(self, y)
        dp = abs(e["p_d"] - self.p_t)
        factor = ((dp + 1e5) / (ORIFICE_MATCH_DP + 1e5)) ** (ORIFICE_EXPONENT - 0.5)
        e["q_load"] *= factor
        return e

    rm.Model.evaluate = evaluate
    try:
        return run()
    finally:
        rm.Model.evaluate = original


# ---------------------------------------------------------------------------
# The reference run

def reference_run(cli, scenario, overrides=None, duration=None, dt=None, other_orifice_law=False):
    """The scipy reference's trace of SCENARIO (with parameter overrides in
    SI, as the check JSON holds them)."""
    out = subprocess.run([cli, "check", os.path.join(ROOT, scenario), "--json"],
                         check=True, capture_output=True, text=True).stdout
    doc = json.loads(out)
    doc["parameters"].update(overrides or {})
    if duration is not None:
        doc["scenario"]["duration_s"] = duration
    if dt is not None:
        doc["scenario"]["sample_interval_s"] = dt
    case = rm.parse_case(doc, scenario)

    def run():
        return rm.simulate(case, rtol=1e-8)

    result = with_other_orifice_law(run) if other_orifice_law else run()
    prm = case["parameters"]
    q_full = prm["pump.displacement"] * prm["pump.speed"] / 60.0
    ripple_hz = prm["pump.pistons"] * prm["pump.speed"] / 60.0
    return result["columns"], q_full, ripple_hz


def spoil(columns, q_full, ripple_hz, seed, noise, ripple_pp, offset, quantum, ripple_floor=0.1):
    """Pressure (Pa, gauge) as a transducer and logger would give it."""
    rng = np.random.default_rng(seed)
    t = columns["time_s"]
    p = columns["discharge_pressure_Pa"].copy()
    if ripple_pp > 0.0:
        delivery = np.clip(columns["pump_flow_m3_s"] / q_full, 0.0, 1.0)
        size = ripple_pp / 2.0 * (ripple_floor + (1.0 - ripple_floor) * delivery)
        phase = rng.uniform(0.0, 2.0 * math.pi)
        w = 2.0 * math.pi * ripple_hz
        p += size * (np.sin(w * t + phase) + 0.3 * np.sin(2.0 * w * t + 2.0 * phase + 0.7))
    p += rng.normal(0.0, noise, size=p.shape) if noise > 0.0 else 0.0
    p += offset
    if quantum > 0.0:
        p = np.round(p / quantum) * quantum
    return t, p


def decimal_comma(value, decimals):
    return ("%.*f" % (decimals, value)).replace(".", ",")


def time_of_day(seconds):
    h = int(seconds // 3600)
    m = int((seconds - 3600 * h) // 60)
    s = seconds - 3600 * h - 60 * m
    return "%02d:%02d:%08.5f" % (h, m, s)


def write(path, lines):
    tmp = path + ".tmp"
    with open(tmp, "w", encoding="utf-8", newline="\n") as fh:
        fh.write("\n".join(lines) + "\n")
    os.replace(tmp, path)
    print("make_field_demos: wrote %s (%d lines)" % (os.path.relpath(path, ROOT), len(lines)))


def write_bar_trace(path, comments, t, p):
    """The fit tests' layout: comment lines, then seconds and bar (gauge)."""
    lines = ["# " + c for c in comments] + ["time_s,pressure_bar"]
    lines += ["%.6f,%.4f" % (ti, pi / BAR) for ti, pi in zip(t, p)]
    write(path, lines)


# ---------------------------------------------------------------------------
# The demos

def log_turner_slam(cli):
    """The aerated-oil plant's valve slam, logged at 2 kHz by a logger that
    writes semicolons, decimal commas and absolute pressure."""
    cols, q_full, f_r = reference_run(cli, "scenarios/aerated-oil.toml", duration=0.4, dt=0.5e-3)
    atmosphere = 0.987 * BAR  # the site's barometer, stated in the file
    quantum = 600 * BAR / 4096  # 12 bits over 0..600 bar(a)
    t, p = spoil(cols, q_full, f_r, seed=20240611, noise=0.8 * BAR, ripple_pp=3.0 * BAR, offset=0.3 * BAR,
                 quantum=quantum)
    p_abs = np.round((p + atmosphere) / quantum) * quantum
    lines = ["# Invented recording: Ashgrove sawmill (fictional), log turner supply, pump outlet gauge port.",
             "# Logger export: semicolon separated, decimal comma, absolute pressure. "
             "The valve shuts at about 100 ms.",
             "Barometer;0,987;bar",
             "t [ms];p [bar(a)]"]
    lines += ["%s;%s" % (decimal_comma(ti * 1e3, 1), decimal_comma(pi / BAR, 2)) for ti, pi in zip(t, p_abs)]
    write(os.path.join(ROOT, "scenarios/field/log-turner-slam.csv"), lines)


def line2_pusher_hunting(cli):
    """The oversized-damping-orifice plant hunting at no flow, logged at
    20 kHz with time-of-day stamps in psi."""
    cols, q_full, f_r = reference_run(cli, "scenarios/hunting-oversized-damping-orifice.toml")
    t, p = spoil(cols, q_full, f_r, seed=20240612, noise=2.5 * PSI, ripple_pp=40.0 * PSI, offset=-3.0 * PSI,
                 quantum=5000 * PSI / 65536)  # 16 bits over 0..5000 psi
    keep = t >= 0.1 - 1e-12
    start = 14 * 3600 + 2 * 60 + 7.0  # 14:02:07 on the logger's clock
    lines = ["# Invented recording: Kettlebrook extrusion works (fictional), line 2 pusher, "
             "pump outlet transducer at 20 kHz.",
             "# Logger clock stamps; the compensator setting was nudged up about 50 ms before the first row.",
             "Time,Outlet pressure [psi]"]
    lines += ["%s,%.2f" % (time_of_day(start + ti - 0.1), pi / PSI) for ti, pi in zip(t[keep], p[keep])]
    write(os.path.join(ROOT, "scenarios/field/line2-pusher-hunting.csv"), lines)


# ---------------------------------------------------------------------------
# The fit tests' recordings (tests/data/fit/slam.toml is the C++ side)

FIT_TRUTH = {"line.volume": 1.5e-3, "compensator.spool_damping": 12.0}


def fit_recordings(cli):
    folder = os.path.join(ROOT, "tests/data/fit")
    scenario = "tests/data/fit/slam.toml"
    # Exact (the tests add the noise, one seed per repetition).
    cols, q_full, f_r = reference_run(cli, scenario, FIT_TRUTH)
    lines = ["# Made by tests/python/make_field_demos.py: the scipy reference of tests/data/fit/slam.toml",
             "# with line.volume 1.5 L and compensator.spool_damping 12 N*s/m; no noise.",
             "time_s,pressure_Pa"]
    lines += ["%.6f,%.9g" % (ti, pi) for ti, pi in zip(cols["time_s"], cols["discharge_pressure_Pa"])]
    write(os.path.join(folder, "slam-reference.csv"), lines)

    # The same machine with a load valve off the square-root law, ripple,
    # noise and a logger's quantisation.
    cols, q_full, f_r = reference_run(cli, scenario, FIT_TRUTH, other_orifice_law=True)
    t, p = spoil(cols, q_full, f_r, seed=7, noise=0.5 * BAR, ripple_pp=2.0 * BAR, offset=0.0,
                 quantum=600 * BAR / 4096)
    write_bar_trace(os.path.join(folder, "slam-other-orifice-law.csv"),
                    ["Made by tests/python/make_field_demos.py: the scipy reference of tests/data/fit/slam.toml",
                     "with line.volume 1.5 L and compensator.spool_damping 12 N*s/m, the load valve's flow",
                     "following dp^0.45 (matched at 5 bar), 2 bar p-p ripple at full delivery, 0.5 bar noise,",
                     "12-bit quantisation over 600 bar."], t, p)

    # Another machine: a compensator set 30 bar higher and a far stiffer
    # bias spring, recorded as the same slam.
    other = dict(FIT_TRUTH)
    other.update({"compensator.setting": 240e5, "bias_spring.rate": 60e3})
    cols, q_full, f_r = reference_run(cli, scenario, other)
    t, p = spoil(cols, q_full, f_r, seed=11, noise=0.5 * BAR, ripple_pp=0.0, offset=0.0, quantum=0.0)
    write_bar_trace(os.path.join(folder, "slam-other-machine.csv"),
                    ["Made by tests/python/make_field_demos.py: the scipy reference of tests/data/fit/slam.toml",
                     "on another machine (compensator.setting 240 bar, bias_spring.rate 60 N/mm), 0.5 bar noise."], t, p)


def hunting_recording(cli):
    """The oversized-damping-orifice plant's first 0.1 s (hunting at about
    470 Hz from the setting's nudge at 50 ms), 10 kHz, 0.05 bar noise: a
    fit of the line volume to it has local minima (one per cycle slipped)."""
    cols, q_full, f_r = reference_run(cli, "scenarios/hunting-oversized-damping-orifice.toml", duration=0.1,
                                      dt=0.1e-3)
    t, p = spoil(cols, q_full, f_r, seed=13, noise=0.05 * BAR, ripple_pp=0.0, offset=0.0, quantum=0.0)
    write_bar_trace(os.path.join(ROOT, "tests/data/fit/hunting-reference.csv"),
                    ["Made by tests/python/make_field_demos.py: the scipy reference of",
                     "scenarios/hunting-oversized-damping-orifice.toml (line.volume 0.25 L), 0 to 0.1 s, 0.05 bar noise."], t, p)


def main(argv=None):
    ap = argparse.ArgumentParser(description="Make the demo and fit-test recordings with the scipy reference.")
    ap.add_argument("--cli", default=os.path.join(ROOT, "build/app/swashtune-cli"),
                    help="swashtune-cli, for `check --json` (default: build/app/swashtune-cli)")
    ap.add_argument("--only", choices=["demos", "fit"], help="make only these")
    args = ap.parse_args(argv)
    if args.only in (None, "demos"):
        log_turner_slam(args.cli)
        line2_pusher_hunting(args.cli)
    if args.only in (None, "fit"):
        fit_recordings(args.cli)
        hunting_recording(args.cli)
    return 0


if __name__ == "__main__":
    sys.exit(main())
