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
        rates = rm.Model(prm, rm.Layout(prm)).rhs(y, held) / rm.state_scales(prm)
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
        bounds = self._write("bounds.toml", "[x]\n" + "".join(
            "%s = 1e-6\n" % c for c in rm.TRACE_COLUMNS[1:]))
        r = self._run("compare_traces.py", case_path, ref, "--bounds", bounds,
                      "--case", "x")                       # runs the model
        self.assertEqual(r.returncode, 0, r.stdout + r.stderr)

        cols = ct.read_trace(ref, rm.TRACE_COLUMNS)
        loose = {c: 0.03 for c in rm.TRACE_COLUMNS[1:]}
        tight = dict(loose, discharge_pressure_Pa=0.01)
        self.assertTrue(ct.compare(ct.read_trace(ref), cols, tight)["passed"])
        cols["discharge_pressure_Pa"][3] *= 1.02           # 2 % off at one sample
        self.assertFalse(ct.compare(ct.read_trace(ref), cols, tight)["passed"])
        self.assertTrue(ct.compare(ct.read_trace(ref), cols, loose)["passed"])
        # a column without a bound, or missing from the C++ trace, fails
        del loose["spool_velocity_m_s"]
        self.assertFalse(ct.compare(ct.read_trace(ref), cols, loose)["passed"])
        fewer = dict(cols)
        del fewer["leakage_flow_m3_s"]
        self.assertFalse(ct.compare(ct.read_trace(ref), fewer,
                                    dict(loose, spool_velocity_m_s=0.03))["passed"])
        header = ",".join(c for c in rm.TRACE_COLUMNS if c != "swash_angle_rad")
        rows = [",".join(str(cols[c][i]) for c in rm.TRACE_COLUMNS
                         if c != "swash_angle_rad")
                for i in range(len(cols["time_s"]))]
        bad = self._write("nocol.csv", "\n".join([header] + rows) + "\n")
        r = self._run("compare_traces.py", case_path, bad, "--reference", ref,
                      "--bounds", bounds, "--case", "x")
        self.assertEqual(r.returncode, 2)
        self.assertIn("swash_angle_rad", r.stderr)
        self.assertNotIn("Traceback", r.stderr)


if __name__ == "__main__":
    unittest.main()


# ---------------------------------------------------------------------------
# v2 elements (DEVELOPERS.md "Model v2"), each against an outside law

import astm_d2270 as astm  # noqa: E402


class ViscosityStandardsTest(unittest.TestCase):
    """ASTM D2270 and D341, against values the standards themselves give."""

    def test_d2270_table_against_the_standards_values(self):
        # Procedure A, ASTM D2270: Y = 8.86 -> L = 119.94, H = 69.48, VI = 92.
        big_l, big_h = astm.table_l_h(8.86)
        self.assertAlmostEqual(big_l, 119.94, places=2)
        self.assertAlmostEqual(big_h, 69.48, places=2)
        self.assertEqual(round(astm.viscosity_index(73.30, 8.86)), 92)
        # Procedure B, ASTM D2270: Y = 5.05 -> H = 28.97, VI = 156.
        self.assertAlmostEqual(astm.table_l_h(5.05)[1], 28.97, delta=0.006)
        self.assertEqual(round(astm.viscosity_index(22.83, 5.05)), 156)
        # Above 70 mm^2/s the standard's equations continue the table.
        self.assertAlmostEqual(astm.table_l_h(70.0)[0], 4905.0, delta=0.6)
        self.assertAlmostEqual(astm.table_l_h(70.0)[1], 1558.0, delta=0.6)

    def test_index_inverted(self):
        for u, vi in ((46.0, 100.0), (32.0, 150.0), (68.0, 95.0), (22.83, 156.0)):
            y = astm.nu100_from_index(u, vi)
            self.assertAlmostEqual(astm.viscosity_index(u, y), vi, places=8)
        # VG 46 at VI 100 is about 6.8 mm^2/s at 100 degC (from memory).
        self.assertAlmostEqual(astm.nu100_from_index(46.0, 100.0), 6.8, delta=0.1)

    def test_d341_walther_through_two_viscosities(self):
        # ASTM D341: 32 cSt at 40 C, 5.4 cSt at 100 C, T = t + 273: A = 9.5259,
        # B = 3.7449, nu(80 C) = 8.5 cSt.
        a, b = astm.walther_coefficients(40.0, 32.0, 100.0, 5.4, 273.0)
        self.assertAlmostEqual(a, 9.5259, places=3)
        self.assertAlmostEqual(b, 3.7449, places=3)
        self.assertAlmostEqual(astm.walther_viscosity(a, b, 80.0, 273.0), 8.5, delta=0.05)
        # computed with T = t + 273.15: VG 46, 6.8 at 100 C
        a, b = astm.walther_coefficients(40.0, 46.0, 100.0, 6.8)
        for t, nu in ((20.0, 133.8), (50.0, 29.97), (80.0, 11.10)):
            self.assertAlmostEqual(astm.walther_viscosity(a, b, t), nu, delta=0.006 * nu)

    def test_coefficients_follow_the_oil(self):
        # Laminar leakage goes as 1/dynamic viscosity (Hagen-Poiseuille) and
        # viscous damping as viscosity: the closed-line build-up with leakage
        # of the capacitance test then has tau = V / (beta K_eff).
        prm = dict(rm.DEFAULTS)
        self.assertEqual(rm.oil_state(prm)[3], 1.0)       # 40 degC, VG 46: v1
        prm.update({"fluid.temperature": 70.0, "fluid.viscosity_at_100C": 6.8})
        rho, nu, _, ratio = rm.oil_state(prm)
        a, b = astm.walther_coefficients(40.0, 46.0, 100.0, 6.8)
        self.assertAlmostEqual(nu, astm.walther_viscosity(a, b, 70.0), places=12)
        self.assertAlmostEqual(rho, 870.0 / (1.0 + 0.0007 * 30.0), places=9)
        k = 2e-10
        case = closed_line({"pump.leakage_coefficient": k, "fluid.temperature": 70.0,
                            "fluid.viscosity_at_100C": 6.8})
        c = rm.simulate(case)["columns"]
        q = 45e-6 * 1800.0 / 60.0
        k_eff = k / (nu * rho / (46.0 * 870.0))
        t = c["time_s"]
        expected = q / k_eff * (1.0 - np.exp(-t * 1.6e9 * k_eff / 1e-3))
        p = c["discharge_pressure_Pa"]
        self.assertTrue(np.all(np.abs(p[1:] / expected[1:] - 1.0) < 0.005))


class CavitationTest(unittest.TestCase):
    """Vapour-pressure floor and air release (DEVELOPERS.md, Henry's law)."""

    def setUp(self):
        prm = dict(rm.DEFAULTS, **{"fluid.cavitation": True})
        self.prm = prm
        self.m = rm.Model(prm, rm.Layout(prm))

    def test_no_absolute_pressure_below_vapour_pressure(self):
        p_v = self.prm["fluid.vapour_pressure"]
        for psi in (-1e9, -1e7, -1e5, -99e3, 0.0, 1e5, 1e7):
            p = self.m.pressure(psi)
            self.assertGreaterEqual(p + rm.P_ATM, p_v)
        # far above vapour pressure the state is the pressure
        self.assertEqual(self.m.pressure(0.0), 0.0)
        self.assertEqual(self.m.pressure(2e7), 2e7)

    def test_henrys_law_at_rest(self):
        # Henry's law: the air the oil holds is proportional to the absolute
        # pressure, so below the saturation pressure p_sat the released air
        # at rest is alpha (1 - p_abs / p_sat) (as volume at atmosphere).
        alpha, p_sat = self.prm["fluid.dissolved_air"], self.prm["fluid.saturation_pressure"]
        for p_abs in (10e3, 40e3, 80e3):
            self.assertAlmostEqual(self.m.equilibrium_air(p_abs - rm.P_ATM),
                                   alpha * (1.0 - p_abs / p_sat), delta=1e-6 * alpha)
        self.assertEqual(self.m.equilibrium_air(5e5), 0.0)   # above: none

    def test_first_order_release_and_absorption(self):
        # dr/dt = (r_eq - r) / tau: r(t) = r_eq + (r0 - r_eq) e^(-t/tau),
        # tau_release while air comes out, tau_absorption while it dissolves.
        p = 50e3 - rm.P_ATM
        r_eq = self.m.equilibrium_air(p)
        for r0, tau in ((0.0, self.prm["fluid.air_release_time"]),
                        (2.0 * r_eq, self.prm["fluid.air_absorption_time"])):
            from scipy.integrate import solve_ivp
            t_end = 0.5 * tau
            sol = solve_ivp(lambda t, r: [self.m.released_air_rate(r[0], p)],
                            (0.0, t_end), [r0], rtol=1e-10, atol=1e-14)
            exact = r_eq + (r0 - r_eq) * math.exp(-t_end / tau)
            self.assertAlmostEqual(sol.y[0, -1], exact, delta=1e-4 * r_eq)

    def test_slam_on_a_small_line_stays_above_vapour_pressure(self):
        events = [{"at_s": 0.01, "target": "load.opening", "to": 0.0, "ramp_s": 0.005},
                  {"at_s": 0.06, "target": "load.opening", "to": 1.0, "ramp_s": 0.005}]
        case = make_case({"fluid.cavitation": True, "line.volume": 50e-6}, events=events,
                         duration=0.1, dt=2e-4)
        c = rm.simulate(case)["columns"]
        p_v = case["parameters"]["fluid.vapour_pressure"]
        for col in ("discharge_pressure_Pa", "control_pressure_Pa"):
            self.assertGreater(c[col].min() + rm.P_ATM, p_v)
        # the chamber does cavitate here (within 5 kPa of p_v) and releases air
        self.assertLess(c["control_pressure_Pa"].min() + rm.P_ATM, p_v + 5e3)
        self.assertGreater(c["released_air_chamber"].max(), 1e-3)


class ReliefValveTest(unittest.TestCase):
    """A relief valve's pressure-flow line: cracking pressure plus the
    override in proportion to the flow it passes (common practice)."""

    def test_deadhead_holds_at_the_relief(self):
        prm = dict(rm.DEFAULTS, **{"relief.setting": 180e5, "load.opening": 0.0})
        y, held, _ = rm.steady_state(prm)
        m = rm.Model(prm, rm.Layout(prm))
        q = m.q_max - m.k_leak * y[0]           # the swash stays on full stroke
        self.assertEqual(held[0], rm.UPPER)
        expected = 180e5 + prm["relief.override"] * q / prm["relief.rated_flow"]
        self.assertAlmostEqual(y[0] / expected, 1.0, delta=1e-6)


class ControlOrificeTest(unittest.TestCase):
    """In steady state the control orifice passes the bleed's flow, so its
    drop is rho/2 (Q_b / (Cd_o A_o))^2 (orifice law and continuity, Merritt)."""

    def test_steady_drop_across_the_orifice(self):
        prm = dict(rm.DEFAULTS, **{"compensator.control_orifice": 0.8e-3, "load.opening": 0.0})
        y, held, _ = rm.steady_state(prm)
        lay = rm.Layout(prm)
        e = rm.Model(prm, lay).evaluate(y)
        cda_o = 0.7 * math.pi / 4.0 * 0.8e-3 ** 2
        cda_b = 0.7 * math.pi / 4.0 * 0.4e-3 ** 2
        q_b = cda_b * math.sqrt(2.0 * e["p_c"] / 870.0)
        self.assertAlmostEqual(e["p_k"] - e["p_c"], 870.0 / 2.0 * (q_b / cda_o) ** 2,
                               delta=2e-3 * (e["p_k"] - e["p_c"]) + 50.0)


class SwashFrictionTest(unittest.TestCase):
    """Statics of a held swash with Coulomb friction M_f: it leaves its stop
    only when the moment away from the stop exceeds M_f."""

    def test_breakaway_moment(self):
        prm = dict(rm.DEFAULTS, **{"pump.swash_friction": 2.0})
        lay = rm.Layout(prm)
        m = rm.Model(prm, lay)
        integ = rm.Integrator(lay, atol_scale=rm.state_scales(prm, lay))
        # at full stroke the bias spring's moment r_b F_full is balanced by
        # the control piston at p_c = (r_b F_full + M) / (r_c A_c)
        arc = m.r_c * m.A_c
        for extra, released in ((1.9, False), (2.1, True)):
            p_c = (m.r_b * m.f_b + extra) / arc
            y = np.array([0.0, p_c, m.a_max, 0.0, 0.0, 0.0])
            held = integ.release_now(m, y, (rm.UPPER, rm.FREE))
            self.assertEqual(held[0] == rm.FREE, released, extra)


class FlowRippleTest(unittest.TestCase):
    """Kinematic flow ripple of z pistons (Ivantysyn & Ivantysynova,
    Hydrostatic Pumps and Motors, 2001; from memory): non-uniformity
    (Q_max - Q_min) / Q_mean = pi/(2z) tan(pi/(4z)) for odd z at 2 z n, and
    pi/z tan(pi/(2z)) for even z at z n (n shaft speed in rev/s)."""

    def test_amplitude_and_mean(self):
        theta = np.linspace(0.0, 2.0 * math.pi, 20001)
        for z in (7, 8, 9, 10, 11):
            f = np.array([rm.ripple_factor(t, z) for t in theta])
            expected = (math.pi / (2 * z) * math.tan(math.pi / (4 * z)) if z % 2
                        else math.pi / z * math.tan(math.pi / (2 * z)))
            self.assertAlmostEqual(f.max() - f.min(), expected, delta=1e-6)
            self.assertAlmostEqual(np.trapz(f, theta) / (2.0 * math.pi), 1.0, places=6)

    def test_frequency_in_a_run(self):
        for z in (8, 9):
            case = make_case({"pump.flow_ripple": True, "pump.pistons": float(z)},
                             duration=0.05, dt=2e-5)
            c = rm.simulate(case)["columns"]
            q = c["pump_flow_m3_s"] - c["pump_flow_m3_s"].mean()
            spec = np.abs(np.fft.rfft(q * np.hanning(len(q))))
            freq = np.fft.rfftfreq(len(q), 2e-5)
            expected = (2 * z if z % 2 else z) * 1800.0 / 60.0
            self.assertAlmostEqual(freq[int(np.argmax(spec))], expected, delta=1.0 / 0.05)


class MovingStopTest(unittest.TestCase):
    """A coordinate held on a moving stop moves with it: a = a_max(t) and
    w = d a_max / dt through a ramp (kinematic constraint)."""

    def test_swash_follows_a_ramped_full_stroke_stop(self):
        a0, a1 = A_MAX, math.radians(10.0)
        events = [{"at_s": 0.0101, "target": "pump.max_swash_angle", "to": a1, "ramp_s": 0.02}]
        case = make_case(events=events, duration=0.04, dt=2e-4)
        c = rm.simulate(case)["columns"]
        t = c["time_s"]
        ramp = (t > 0.0101) & (t < 0.0301)
        expected = a0 + (a1 - a0) * (t[ramp] - 0.0101) / 0.02
        self.assertTrue(np.allclose(c["swash_angle_rad"][ramp], expected, rtol=0, atol=1e-12))
        self.assertTrue(np.allclose(c["swash_velocity_rad_s"][ramp], (a1 - a0) / 0.02, rtol=1e-12))
        self.assertTrue(np.all(c["swash_angle_rad"][t > 0.0301] == a1))
        # full stroke stays full flow: Q_g = D N tan(a) / tan(a_max)
        q = 45e-6 * 1800.0 / 60.0
        leak = c["leakage_flow_m3_s"]
        self.assertTrue(np.allclose(c["pump_flow_m3_s"] + leak, q, rtol=1e-12))

    def test_a_step_puts_the_swash_on_the_new_stop(self):
        events = [{"at_s": 0.0101, "target": "pump.max_swash_angle", "to": math.radians(12.0),
                   "ramp_s": 0.0}]
        case = make_case(events=events, duration=0.02, dt=2e-4)
        c = rm.simulate(case)["columns"]
        after = c["time_s"] > 0.0101
        self.assertTrue(np.all(c["swash_angle_rad"][after] == math.radians(12.0)))
