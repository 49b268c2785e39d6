#!/usr/bin/python3
"""Makes the data-sheet figures the data-sheet fit tests use
(tests/data/fit/datasheet-*.csv: the parameters set on the demo
scenario, then the figures, each as `kind,name,value` in SI units) with the independent scipy reference
(reference_model.py), not with the C++ model.

The test is the one core/include/swashtune/datasheet.hpp defines, by its
words, not its code: the pump runs steady at the scenario's load opening,
the valve closes over 5 ms at 20 ms, stays shut for 0.5 s and reopens over
5 ms; off-stroke is the time from the start of the closure until the swash
is below 10 % of full stroke, on-stroke from the start of the reopening
until it is above 90 % (each interpolated between the 0.1 ms samples).
Deadhead is the steady pressure with the valve shut; cut-in the steady
pressure where the pump's delivery is 5 % below its full-stroke delivery
less leakage at that pressure (found here by scipy's brentq over the
opening); droop = (deadhead - cut-in) / setting. The peak is the highest
sampled pressure between the closure and the reopening.

    /usr/bin/python3 tests/python/make_datasheet_figures.py --cli build/app/swashtune-cli

The machines are invented demo plants; the figures are what the reference
computes for them.
"""

import argparse
import json
import os
import subprocess
import sys

import numpy as np
from scipy.optimize import brentq

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
sys.path.insert(0, HERE)
import reference_model as rm  # noqa: E402

CLOSING_AT, VALVE_TIME, HOLD, RECOVER, DT = 0.02, 5e-3, 0.5, 1.0, 0.1e-3

# The plants: the valve-slam demo with internal parameters changed, as a
# data sheet would describe a pump whose insides the user does not know.
PLANTS = {
    "datasheet-truth": {"compensator.control_orifice": 2.0e-3, "bias_spring.force_at_full_stroke": 200.0},
}


def case_of(cli, scenario, overrides):
    out = subprocess.run([cli, "check", os.path.join(ROOT, scenario), "--json"],
                         check=True, capture_output=True, text=True).stdout
    doc = json.loads(out)
    doc["parameters"].update(overrides)
    return doc


def first_crossing(t, f, level, after, until, falling):
    for i in range(1, len(t)):
        if t[i] <= after or t[i] > until:
            continue
        if (f[i] < level) if falling else (f[i] > level):
            tc = t[i - 1] + (level - f[i - 1]) / (f[i] - f[i - 1]) * (t[i] - t[i - 1])
            return max(tc, after) - after
    return None


def transient_figures(doc):
    d = json.loads(json.dumps(doc))
    opening = d["parameters"]["load.opening"]
    reopen = CLOSING_AT + HOLD
    d["events"] = [{"at_s": CLOSING_AT, "target": "load.opening", "to": 0.0, "ramp_s": VALVE_TIME},
                   {"at_s": reopen, "target": "load.opening", "to": opening, "ramp_s": VALVE_TIME}]
    d["scenario"]["duration_s"] = reopen + RECOVER
    d["scenario"]["sample_interval_s"] = DT
    result = rm.simulate(rm.parse_case(d, "datasheet test"), rtol=1e-9)
    cols = result["columns"]
    t = cols["time_s"]
    f = cols["swash_angle_rad"] / d["parameters"]["pump.max_swash_angle"]
    p = cols["discharge_pressure_Pa"]
    window = (t >= CLOSING_AT) & (t <= reopen)
    return {
        "off_stroke_s": first_crossing(t, f, 0.1, CLOSING_AT, reopen, True),
        "on_stroke_s": first_crossing(t, f, 0.9, reopen, t[-1], False),
        "peak_Pa": float(np.max(p[window])),
        "start_stroke": float(f[0]),
    }


def steady_outputs(prm, opening):
    q = dict(prm)
    q["load.opening"] = opening
    # Near cut-in the spool creeps to rest over seconds: allow a minute of
    # model time, checked every 0.5 s.
    y, held, _ = rm.steady_state(q, rtol=1e-10, max_time=60.0, chunk=0.5)
    m = rm.Model(q, rm.Layout(q), ripple=False)
    e = m.outputs(y)
    return e["p_d"], e["q_g"] - e["q_leak"], m


def steady_figures(doc):
    prm = rm.parse_case(doc, "datasheet test")["parameters"]
    deadhead, _, _ = steady_outputs(prm, 0.0)

    def shortfall(opening):
        p, q, m = steady_outputs(prm, opening)
        return q - 0.95 * (m.q_max - m.k_leak * p)

    # Open the valve in steps of 5 % until the pump reaches 95 % of full
    # flow, then find the opening where it does by brentq.
    cut_in = None
    a, fa = 0.0, shortfall(0.0)
    for b in np.linspace(0.05, 1.0, 20):
        fb = shortfall(b)
        if (fa < 0) != (fb < 0):
            s = brentq(shortfall, a, b, xtol=1e-9)
            cut_in = steady_outputs(prm, s)[0]
            break
        a, fa = b, fb
    setting = prm["compensator.setting"]
    return {
        "deadhead_Pa": deadhead,
        "cut_in_Pa": cut_in,
        "droop": None if cut_in is None else (deadhead - cut_in) / setting,
    }


def main(argv=None):
    ap = argparse.ArgumentParser(description="Data-sheet figures of demo plants, by the scipy reference.")
    ap.add_argument("--cli", default=os.path.join(ROOT, "build/app/swashtune-cli"),
                    help="swashtune-cli, for `check --json` (default: build/app/swashtune-cli)")
    args = ap.parse_args(argv)
    for name, overrides in PLANTS.items():
        doc = case_of(args.cli, "scenarios/valve-slam.toml", overrides)
        figures = {"scenario": "scenarios/valve-slam.toml", "overrides": overrides,
                   "made_by": "tests/python/make_datasheet_figures.py, scipy at rtol 1e-9",
                   "test": {"closing_at_s": CLOSING_AT, "valve_time_s": VALVE_TIME, "hold_s": HOLD,
                            "recover_s": RECOVER, "sample_interval_s": DT}}
        figures.update(transient_figures(doc))
        figures.update(steady_figures(doc))
        path = os.path.join(ROOT, "tests/data/fit", name + ".csv")
        with open(path + ".tmp", "w", encoding="utf-8") as fh:
            fh.write("# Data-sheet figures of an invented demo pump, computed by the scipy\n")
            fh.write("# reference (%s): %s with the parameters below;\n" % (figures["made_by"], figures["scenario"]))
            fh.write("# test %s\n" % json.dumps(figures["test"], sort_keys=True))
            fh.write("kind,name,value\n")
            for key, value in sorted(overrides.items()):
                fh.write("set,%s,%.17g\n" % (key, value))
            for key in ("off_stroke_s", "on_stroke_s", "peak_Pa", "deadhead_Pa", "cut_in_Pa", "droop"):
                fh.write("figure,%s,%.17g\n" % (key, figures[key]))
        os.replace(path + ".tmp", path)
        print(path, json.dumps(figures, sort_keys=True))
    return 0


if __name__ == "__main__":
    sys.exit(main())
