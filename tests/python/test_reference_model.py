"""Self-test of the Python reference model against outside facts.

Run from /work/main:
    /usr/bin/python3 -m unittest discover -s tests/python -p 'test_*.py'
"""

import json
import math
import os
import subprocess
import sys
import tempfile
import unittest

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
import compare_traces as ct  # noqa: E402
import reference_model as rm  # noqa: E402

A_MAX = rm.DEFAULTS["pump.max_swash_angle"]
X_MAX = rm.DEFAULTS["compensator.spool_travel"]


def make_case(overrides=None, events=(), initial_state=None,
              duration=0.01, dt=5e-4):
    prm = dict(rm.DEFAULTS)
    prm.update(overrides or {})
    doc = {"scenario": {"name": "selftest", "duration_s": duration,
                        "sample_interval_s": dt},
           "solver": {"rtol": 1e-6, "atol": 1e-6},
           "parameters": prm, "initial_state": initial_state,
           "events": [dict(e) for e in events]}
    return rm.parse_case(doc)


def closed_line(overrides):
    """Swash at full stroke, load closed, compensator made inactive (a
    setting far above any pressure reached keeps the spool on its
    control-to-case stop, so no flow leaves the discharge line)."""
    prm = {"load.opening": 0.0, "compensator.setting": 1e10}
    prm.update(overrides)
    return make_case(prm, initial_state=[0.0, 0.0, A_MAX, 0.0, -X_MAX, 0.0],
                     duration=0.01)


class CapacitanceTest(unittest.TestCase):
    """(a) Hydraulic capacitance: (V / beta) dp/dt = net flow into the
    volume (Merritt, Hydraulic Control Systems, 1967)."""

    def test_pressure_build_up_rate(self):
        case = closed_line({"pump.leakage_coefficient": 0.0})
        c = rm.simulate(case)["columns"]
        prm = case["parameters"]
        # pump flow = displacement x shaft speed at full stroke (common practice)
        q = prm["pump.displacement"] * prm["pump.speed"] / 60.0
        expected = prm["fluid.bulk_modulus"] * q / prm["line.volume"]
        rate = np.diff(c["discharge_pressure_Pa"]) / np.diff(c["time_s"])
        self.assertTrue(np.all(np.abs(rate / expected - 1.0) < 0.005),
                        "dp/dt %.4g..%.4g Pa/s, expected %.4g Pa/s"
                        % (rate.min(), rate.max(), expected))
        # the swash really stayed on its full-stroke stop
        self.assertTrue(np.all(c["swash_angle_rad"] == A_MAX))

    def test_build_up_with_leakage(self):
        # With leakage Q_leak = K p the same law gives a first-order rise:
        # p(t) = (Q/K) (1 - exp(-beta K t / V)) (Merritt 1967).
        k = 2e-10   # large, so that the curvature is well visible in 10 ms
        case = closed_line({"pump.leakage_coefficient": k})
        c = rm.simulate(case)["columns"]
        prm = case["parameters"]
        q = prm["pump.displacement"] * prm["pump.speed"] / 60.0
        tau = prm["line.volume"] / (prm["fluid.bulk_modulus"] * k)
        t = c["time_s"]
        expected = q / k * (1.0 - np.exp(-t / tau))
        p = c["discharge_pressure_Pa"]
        self.assertGreater(t[-1] / tau, 0.5)   # the leakage matters here
        self.assertTrue(np.all(np.abs(p[1:] / expected[1:] - 1.0) < 0.005),
                        "max rel. error %.3g"
                        % np.max(np.abs(p[1:] / expected[1:] - 1.0)))


class OrificeTest(unittest.TestCase):
    """(b) Orifice law Q = Cd A sqrt(2 dp / rho) (Merritt 1967)."""

    def test_regularised_law_far_from_zero(self):
        rho, tr = 870.0, 1e4
        for dp in (1e6, 5e6, 2e7):          # dp >= 100 dp_tr
            q, _ = rm.orifice_flow(0.7 * 1e-6, dp, rho, tr)
            classic = 0.7 * 1e-6 * math.sqrt(2.0 * dp / rho)
            self.assertAlmostEqual(q / classic, 1.0, delta=1e-4)
            q_neg, _ = rm.orifice_flow(0.7 * 1e-6, -dp, rho, tr)
            self.assertEqual(q_neg, -q)     # flow reverses with the drop

    def test_full_flow_operating_point(self):
        # At full stroke with no leakage all pump flow passes the load valve,
        # so the steady pressure is dp = rho/2 (Q / (Cd A))^2 by the same law.
        case = make_case({"pump.leakage_coefficient": 0.0}, duration=0.005)
        c = rm.simulate(case)["columns"]
        prm = case["parameters"]
        q = prm["pump.displacement"] * prm["pump.speed"] / 60.0
        cda = prm["load.discharge_coefficient"] * prm["load.valve_area"]
        expected = prm["fluid.density"] / 2.0 * (q / cda) ** 2
        p = c["discharge_pressure_Pa"]
        self.assertTrue(np.all(np.abs(p / expected - 1.0) < 0.005),
                        "p %.6g Pa, expected %.6g Pa" % (p[-1], expected))
        self.assertTrue(np.all(np.abs(c["load_flow_m3_s"] / q - 1.0) < 0.005))


class DeadheadTest(unittest.TestCase):
    """(c) With the load valve closed a pressure-compensated pump holds
    about its setting at near-zero stroke (common practice)."""

    def test_closure_settles_near_setting(self):
        events = [{"at_s": 0.02, "target": "load.opening", "to": 0.0,
                   "ramp_s": 0.005}]
        case = make_case(events=events, duration=0.25, dt=5e-4)
        c = rm.simulate(case)["columns"]
        p, a = c["discharge_pressure_Pa"], c["swash_angle_rad"]
        p_set = case["parameters"]["compensator.setting"]
        self.assertLess(p[0], 0.1 * p_set)            # started at full flow
        self.assertAlmostEqual(p[-1] / p_set, 1.0, delta=0.03)
        tail = p[c["time_s"] >= 0.2]
        self.assertLess(np.ptp(tail), 0.002 * p_set)  # it has settled
        self.assertLess(a[-1], 0.1 * A_MAX)           # near zero stroke
        # hard stops hold exactly (model.md allows 0.1 % penetration)
        self.assertTrue(np.all((a >= 0.0) & (a <= A_MAX)))
        x = c["spool_position_m"]
        self.assertTrue(np.all((x >= -X_MAX) & (x <= X_MAX)))

    def test_steady_state_finder_at_deadhead(self):
        prm = dict(rm.DEFAULTS)
        prm["load.opening"] = 0.0
        y, held, _ = rm.steady_state(prm)
        self.assertAlmostEqual(y[0] / prm["compensator.setting"], 1.0,
                               delta=0.03)
        # at rest: every derivative negligible against its state's scale
        rates = rm.Model(prm).rhs(y, held) / rm.state_scales(prm)
        self.assertLess(np.max(np.abs(rates)), 1e-5)


class ScheduleTest(unittest.TestCase):
    """Event semantics of the brief: linear ramps, a later event takes over
    from the value the key has when it starts."""

    def test_ramp_superseded_midway(self):
        events = [{"target": "load.opening", "at_s": 0.1, "ramp_s": 0.1, "to": 0.0},
                  {"target": "load.opening", "at_s": 0.15, "ramp_s": 0.1, "to": 1.0}]
        sch = rm.Schedule(rm.DEFAULTS, events)
        self.assertEqual(sch._eval("load.opening", 0.05), 1.0)
        self.assertAlmostEqual(sch._eval("load.opening", 0.125), 0.75)
        self.assertAlmostEqual(sch._eval("load.opening", 0.15), 0.5)
        self.assertAlmostEqual(sch._eval("load.opening", 0.2), 0.75)
        self.assertEqual(sch._eval("load.opening", 0.3), 1.0)
        self.assertEqual(sch.corners(), [0.1, 0.15, 0.25])

    def test_step_is_right_continuous(self):
        events = [{"target": "compensator.setting", "at_s": 0.1, "ramp_s": 0.0,
                   "to": 1e7}]
        sch = rm.Schedule(rm.DEFAULTS, events)
        self.assertEqual(sch._eval("compensator.setting", 0.0999), 210e5)
        self.assertEqual(sch._eval("compensator.setting", 0.1), 1e7)


class CommandLineTest(unittest.TestCase):
    """Bad input gives a clear message and exit status 2, never a traceback;
    compare_traces passes a trace against itself and fails a perturbed one."""

    def setUp(self):
        self.tmp = tempfile.TemporaryDirectory()
        self.dir = self.tmp.name

    def tearDown(self):
        self.tmp.cleanup()

    def _run(self, script, *args):
        return subprocess.run([sys.executable, os.path.join(HERE, script)]
                              + list(args), capture_output=True, text=True,
                              timeout=120)

    def _write(self, name, text):
        path = os.path.join(self.dir, name)
        with open(path, "w") as fh:
            fh.write(text)
        return path

    def test_bad_inputs(self):
        out = os.path.join(self.dir, "ref.csv")
        good = {"scenario": {"name": "x", "duration_s": 0.002,
                             "sample_interval_s": 5e-4},
                "parameters": rm.DEFAULTS, "initial_state": None, "events": []}
        cases = {
            "missing.json": None,
            "broken.json": '{"scenario": ',
            "badvalue.json": json.dumps(dict(good, parameters=dict(
                rm.DEFAULTS, **{"line.volume": "big"}))),
            "badtarget.json": json.dumps(dict(good, events=[
                {"at_s": 0.001, "target": "no.such", "to": 1, "ramp_s": 0}])),
        }
        for name, text in cases.items():
            path = (os.path.join(self.dir, name) if text is None
                    else self._write(name, text))
            r = self._run("reference_model.py", path, "--out", out)
            self.assertEqual(r.returncode, 2, name + ": " + r.stderr)
            self.assertIn(name, r.stderr)
            self.assertNotIn("Traceback", r.stderr)
            self.assertFalse(os.path.exists(out))

    def test_compare_pass_fail_and_missing_column(self):
        case_path = self._write("case.json", json.dumps({
            "scenario": {"name": "x", "duration_s": 0.003,
                         "sample_interval_s": 5e-4},
            "parameters": rm.DEFAULTS, "initial_state": None, "events": []}))
        ref = os.path.join(self.dir, "ref.csv")
        r = self._run("reference_model.py", case_path, "--out", ref)
        self.assertEqual(r.returncode, 0, r.stderr)
        r = self._run("compare_traces.py", case_path, ref)   # runs the model
        self.assertEqual(r.returncode, 0, r.stdout + r.stderr)

        cols = ct.read_trace(ref, rm.TRACE_COLUMNS)
        cols["discharge_pressure_Pa"][3] *= 1.02           # 2 % off at one sample
        self.assertFalse(ct.compare(ct.read_trace(ref), cols, 0.01)["passed"])
        self.assertTrue(ct.compare(ct.read_trace(ref), cols, 0.03)["passed"])
        header = ",".join(c for c in rm.TRACE_COLUMNS if c != "swash_angle_rad")
        rows = [",".join(str(cols[c][i]) for c in rm.TRACE_COLUMNS
                         if c != "swash_angle_rad")
                for i in range(len(cols["time_s"]))]
        bad = self._write("nocol.csv", "\n".join([header] + rows) + "\n")
        r = self._run("compare_traces.py", case_path, bad, "--reference", ref)
        self.assertEqual(r.returncode, 2)
        self.assertIn("swash_angle_rad", r.stderr)
        self.assertNotIn("Traceback", r.stderr)


if __name__ == "__main__":
    unittest.main()
