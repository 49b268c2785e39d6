#!/usr/bin/python3
"""Independent Python reference of Swashtune's v1 dynamic model.

Implements the equations of shared/design/model.md from the text alone
(no C++ consulted) and integrates them with scipy's Radau method at tight
tolerances, with event-located hard end stops.  The C++ test-suite uses it
as an oracle through compare_traces.py.

Input: the JSON written by `swashtune-cli check SCENARIO --json`
(scenario, solver, parameters, initial_state, events).
Output: a CSV with the SI trace columns of interfaces.md.

    /usr/bin/python3 tests/python/reference_model.py PARAMS.json --out ref.csv

Exit status: 0 done, 2 bad input, 3 the solver failed.
"""

import argparse
import bisect
import csv
import json
import math
import os
import sys
import time

import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

P_ATM = 101325.0          # Pa, the air model's atmosphere (model.md)
P_ABS_FLOOR = 1000.0      # Pa, floor of the absolute pressure (model.md)
JET_ANGLE = math.radians(69.0)

# model.md's parameter table: key -> default (SI, except pump.speed in rev/min)
DEFAULTS = {
    "fluid.density": 870.0,
    "fluid.bulk_modulus": 1.6e9,
    "fluid.air_fraction": 0.0,
    "fluid.polytropic_index": 1.4,
    "pump.displacement": 45e-6,
    "pump.speed": 1800.0,
    "pump.max_swash_angle": 0.29671,
    "pump.leakage_coefficient": 1.29e-12,
    "pump.swash_inertia": 0.003,
    "pump.swash_damping": 1.0,
    "pump.pressure_moment": 0.0,
    "bias_spring.rate": 20e3,
    "bias_spring.force_at_full_stroke": 400.0,
    "bias_spring.arm": 0.05,
    "control_piston.diameter": 0.018,
    "control_piston.arm": 0.05,
    "control_piston.dead_volume": 20e-6,
    "compensator.setting": 210e5,
    "compensator.spool_diameter": 0.006,
    "compensator.spring_rate": 50e3,
    "compensator.spool_mass": 0.01,
    "compensator.spool_damping": 20.0,
    "compensator.spool_travel": 1.0e-3,
    "compensator.port_width": 0.006,
    "compensator.underlap": 1.0e-5,
    "compensator.discharge_coefficient": 0.7,
    "compensator.flow_forces": True,
    "compensator.bleed_orifice": 0.4e-3,
    "line.volume": 1.0e-3,
    "line.tank_pressure": 0.0,
    "load.valve_area": 56.9e-6,
    "load.discharge_coefficient": 0.7,
    "load.opening": 1.0,
    "solver.transition_pressure": 1e4,
}
BOOL_KEYS = {"compensator.flow_forces"}

# Keys that must stay strictly positive / non-negative for the equations to
# make sense (a zero volume or mass would divide by zero).
POSITIVE_KEYS = {
    "fluid.density", "fluid.bulk_modulus", "fluid.polytropic_index",
    "pump.max_swash_angle", "pump.swash_inertia", "control_piston.arm",
    "compensator.spool_diameter", "compensator.spool_mass",
    "compensator.spool_travel", "line.volume", "solver.transition_pressure",
}
NON_NEGATIVE_KEYS = {
    "fluid.air_fraction", "pump.displacement", "pump.speed",
    "pump.leakage_coefficient", "pump.swash_damping", "bias_spring.rate",
    "control_piston.diameter", "control_piston.dead_volume",
    "compensator.spring_rate", "compensator.spool_damping",
    "compensator.port_width", "compensator.discharge_coefficient",
    "compensator.bleed_orifice", "load.valve_area",
    "load.discharge_coefficient",
}

STATE_NAMES = ["p_d", "p_c", "a", "w", "x_s", "v_s"]
TRACE_COLUMNS = [
    "time_s", "discharge_pressure_Pa", "control_pressure_Pa",
    "swash_angle_rad", "swash_velocity_rad_s", "spool_position_m",
    "spool_velocity_m_s", "pump_flow_m3_s", "load_flow_m3_s",
    "leakage_flow_m3_s", "control_flow_m3_s", "load_opening",
]

# Held-coordinate modes: FREE, or held at the LOWER / UPPER stop.
FREE, LOWER, UPPER = 0, -1, 1


class InputError(Exception):
    """Bad input: reported as a message, exit status 2."""


class SolverError(Exception):
    """Integration failed: reported as a message, exit status 3."""


# ---------------------------------------------------------------------------
# Constitutive laws

def orifice_flow(cd_area, dp, rho, dp_tr):
    """Regularised turbulent orifice law of model.md and its slope dQ/d(dp).

    Q = Cd A sqrt(2/rho) dp / (dp^2 + dp_tr^2)^(1/4); for |dp| >> dp_tr this
    is Q = Cd A sqrt(2 |dp| / rho) sign(dp) (Merritt, Hydraulic Control
    Systems, 1967).
    """
    k = cd_area * math.sqrt(2.0 / rho)
    r = dp * dp + dp_tr * dp_tr
    r4 = math.sqrt(math.sqrt(r))          # r^(1/4)
    q = k * dp / r4
    dq = k * (0.5 * dp * dp + dp_tr * dp_tr) / (r * r4)
    return q, dq


def bulk_modulus(p, beta_oil, x_a, n):
    """Effective bulk modulus with entrained air (model.md), p gauge."""
    if x_a <= 0.0:
        return beta_oil
    p_abs = max(p + P_ATM, P_ABS_FLOOR)
    v_a = x_a * (P_ATM / p_abs) ** (1.0 / n)
    inv = ((1.0 - x_a) / beta_oil + v_a / (n * p_abs)) / ((1.0 - x_a) + v_a)
    return 1.0 / inv


def bulk_modulus_slope(p, beta_oil, x_a, n):
    """d(beta_e)/dp by central difference (only needed with air)."""
    if x_a <= 0.0:
        return 0.0
    h = 1e-6 * max(abs(p + P_ATM), 1e5)
    return (bulk_modulus(p + h, beta_oil, x_a, n)
            - bulk_modulus(p - h, beta_oil, x_a, n)) / (2.0 * h)


# ---------------------------------------------------------------------------
# The model at one set of parameter values

class Model:
    """Right-hand side, Jacobian and stop forces for one parameter set."""

    def __init__(self, prm):
        g = prm.get
        self.rho = g("fluid.density")
        self.beta_oil = g("fluid.bulk_modulus")
        self.x_a = g("fluid.air_fraction")
        self.n = g("fluid.polytropic_index")
        self.a_max = g("pump.max_swash_angle")
        self.q_max = g("pump.displacement") * g("pump.speed") / 60.0
        self.tan_a_max = math.tan(self.a_max)
        self.k_leak = g("pump.leakage_coefficient")
        self.J = g("pump.swash_inertia")
        self.c_a = g("pump.swash_damping")
        self.k_carry = g("pump.pressure_moment")
        self.k_b = g("bias_spring.rate")
        self.f_b = g("bias_spring.force_at_full_stroke")
        self.r_b = g("bias_spring.arm")
        self.A_c = math.pi / 4.0 * g("control_piston.diameter") ** 2
        self.r_c = g("control_piston.arm")
        self.V_c0 = g("control_piston.dead_volume")
        self.p_set = g("compensator.setting")
        self.A_s = math.pi / 4.0 * g("compensator.spool_diameter") ** 2
        self.k_s = g("compensator.spring_rate")
        self.m_s = g("compensator.spool_mass")
        self.b_s = g("compensator.spool_damping")
        self.x_max = g("compensator.spool_travel")
        self.w_port = g("compensator.port_width")
        self.u = g("compensator.underlap")
        self.cd = g("compensator.discharge_coefficient")
        self.k_flow = (2.0 * self.cd * math.cos(JET_ANGLE)
                       if g("compensator.flow_forces") else 0.0)
        self.A_b = math.pi / 4.0 * g("compensator.bleed_orifice") ** 2
        self.V_d = g("line.volume")
        self.p_t = g("line.tank_pressure")
        self.A_v = g("load.valve_area")
        self.cd_v = g("load.discharge_coefficient")
        self.s = g("load.opening")
        self.dp_tr = g("solver.transition_pressure")
        self.Arc = self.A_c * self.r_c   # control piston volume per radian

    # -- pieces shared by rhs, jac and the flow outputs ----------------------

    def flows(self, y):
        """Flows of model.md: (Q_g, Q_leak, Q_pc, Q_ct, Q_b, Q_load)."""
        p_d, p_c, a, _, x_s, _ = y
        rho, tr = self.rho, self.dp_tr
        q_g = self.q_max * math.tan(a) / self.tan_a_max
        q_leak = self.k_leak * p_d
        a_pc = self.w_port * max(0.0, self.u + x_s)
        a_ct = self.w_port * max(0.0, self.u - x_s)
        q_pc = orifice_flow(self.cd * a_pc, p_d - p_c, rho, tr)[0]
        q_ct = orifice_flow(self.cd * a_ct, p_c - self.p_t, rho, tr)[0]
        q_b = orifice_flow(self.cd * self.A_b, p_c - self.p_t, rho, tr)[0]
        q_load = orifice_flow(self.cd_v * self.s * self.A_v, p_d - self.p_t,
                              rho, tr)[0]
        return q_g, q_leak, q_pc, q_ct, q_b, q_load

    def swash_torque(self, y, w=None):
        """Net torque on the swash without stop reaction (w=None: use y)."""
        p_d, p_c, a, w_y = y[0], y[1], y[2], y[3]
        w = w_y if w is None else w
        f_bias = self.f_b + self.k_b * self.r_b * (self.a_max - a)
        return (self.r_b * f_bias - self.r_c * self.A_c * p_c
                - self.c_a * w - self.k_carry * p_d)

    def spool_force(self, y, v=None):
        """Net force on the spool without stop reaction (v=None: use y)."""
        p_d, p_c, x_s, v_y = y[0], y[1], y[4], y[5]
        v = v_y if v is None else v
        a_pc = self.w_port * max(0.0, self.u + x_s)
        a_ct = self.w_port * max(0.0, self.u - x_s)
        f_flow = self.k_flow * (-a_pc * (p_d - p_c) + a_ct * (p_c - self.p_t))
        return (self.A_s * (p_d - self.p_set) - self.k_s * x_s
                - self.b_s * v + f_flow)

    # -- the ODE --------------------------------------------------------------

    def rhs(self, y, held):
        """dy/dt; held = (swash mode, spool mode), a held pair stays fixed."""
        p_d, p_c, a, w, x_s, v_s = y
        q_g, q_leak, q_pc, q_ct, q_b, q_load = self.flows(y)
        be_d = bulk_modulus(p_d, self.beta_oil, self.x_a, self.n)
        be_c = bulk_modulus(p_c, self.beta_oil, self.x_a, self.n)
        v_c = self.V_c0 + self.Arc * (self.a_max - a)
        dp_d = be_d / self.V_d * (q_g - q_leak - q_pc - q_load)
        dp_c = be_c / v_c * (q_pc - q_ct - q_b + self.Arc * w)
        if held[0] == FREE:
            da, dw = w, self.swash_torque(y) / self.J
        else:
            da = dw = 0.0
        if held[1] == FREE:
            dx, dv = v_s, self.spool_force(y) / self.m_s
        else:
            dx = dv = 0.0
        return np.array([dp_d, dp_c, da, dw, dx, dv])

    def jac(self, y, held):
        """Analytic Jacobian d(rhs)/dy of rhs() (same held modes)."""
        p_d, p_c, a, w, x_s, v_s = y
        rho, tr, cd, pt = self.rho, self.dp_tr, self.cd, self.p_t
        # metering areas and their slopes (kinks at x_s = -u and x_s = +u)
        a_pc = self.w_port * max(0.0, self.u + x_s)
        a_ct = self.w_port * max(0.0, self.u - x_s)
        da_pc = self.w_port if self.u + x_s > 0.0 else 0.0
        da_ct = -self.w_port if self.u - x_s > 0.0 else 0.0
        # per-unit-area orifice flows give the d/dx_s terms
        q1_pc, g1_pc = orifice_flow(cd, p_d - p_c, rho, tr)
        q1_ct, g1_ct = orifice_flow(cd, p_c - pt, rho, tr)
        q_pc, g_pc = a_pc * q1_pc, a_pc * g1_pc
        q_ct, g_ct = a_ct * q1_ct, a_ct * g1_ct
        q_b, g_b = orifice_flow(cd * self.A_b, p_c - pt, rho, tr)
        q_load, g_load = orifice_flow(self.cd_v * self.s * self.A_v, p_d - pt,
                                      rho, tr)
        q_g = self.q_max * math.tan(a) / self.tan_a_max
        dq_g = self.q_max / (math.cos(a) ** 2 * self.tan_a_max)
        be_d = bulk_modulus(p_d, self.beta_oil, self.x_a, self.n)
        be_c = bulk_modulus(p_c, self.beta_oil, self.x_a, self.n)
        dbe_d = bulk_modulus_slope(p_d, self.beta_oil, self.x_a, self.n)
        dbe_c = bulk_modulus_slope(p_c, self.beta_oil, self.x_a, self.n)
        v_c = self.V_c0 + self.Arc * (self.a_max - a)
        e_d, e_c = be_d / self.V_d, be_c / v_c
        sum_d = q_g - self.k_leak * p_d - q_pc - q_load
        sum_c = q_pc - q_ct - q_b + self.Arc * w

        jm = np.zeros((6, 6))
        jm[0, 0] = dbe_d / self.V_d * sum_d + e_d * (-self.k_leak - g_pc - g_load)
        jm[0, 1] = e_d * g_pc
        jm[0, 2] = e_d * dq_g
        jm[0, 4] = -e_d * da_pc * q1_pc
        jm[1, 0] = e_c * g_pc
        jm[1, 1] = dbe_c / v_c * sum_c + e_c * (-g_pc - g_ct - g_b)
        jm[1, 2] = be_c * sum_c * self.Arc / v_c ** 2   # chamber shrinks as a grows
        jm[1, 3] = e_c * self.Arc
        jm[1, 4] = e_c * (da_pc * q1_pc - da_ct * q1_ct)
        if held[0] == FREE:
            jm[2, 3] = 1.0
            jm[3, 0] = -self.k_carry / self.J
            jm[3, 1] = -self.r_c * self.A_c / self.J
            jm[3, 2] = -self.k_b * self.r_b ** 2 / self.J
            jm[3, 3] = -self.c_a / self.J
        if held[1] == FREE:
            kf = self.k_flow
            jm[4, 5] = 1.0
            jm[5, 0] = (self.A_s - kf * a_pc) / self.m_s
            jm[5, 1] = kf * (a_pc + a_ct) / self.m_s
            jm[5, 4] = (-self.k_s + kf * (-da_pc * (p_d - p_c)
                                          + da_ct * (p_c - pt))) / self.m_s
            jm[5, 5] = -self.b_s / self.m_s
        return jm

    def outputs(self, y):
        """Trace flows: pump (Q_g - Q_leak), load, leakage, control (Q_pc)."""
        q_g, q_leak, q_pc, _, _, q_load = self.flows(y)
        return q_g - q_leak, q_load, q_leak, q_pc

    def full_flow_pressure(self):
        """Pressure at which the full-stroke flow less leakage passes the
        load valve; the setting when the valve is closed."""
        cda = self.cd_v * self.s * self.A_v
        if cda <= 0.0 or self.q_max <= 0.0:
            return self.p_set

        def excess(p):
            q = orifice_flow(cda, p - self.p_t, self.rho, self.dp_tr)[0]
            return self.q_max - self.k_leak * p - q

        lo, hi = self.p_t, self.p_t + 1e5
        while excess(hi) > 0.0:
            hi = self.p_t + 2.0 * (hi - self.p_t)
            if hi > 1e12:
                return self.p_set
        if excess(lo) <= 0.0:
            return lo
        return brentq(excess, lo, hi, xtol=1e-9, rtol=1e-14)


# ---------------------------------------------------------------------------
# Parameter schedule (events)

class Schedule:
    """Piecewise-linear parameter values in time built from the events.

    Each key has pieces (t0, v0, t1, v1): linear on [t0, t1), then v1 until
    the next piece.  An event takes over from the key's value at its start,
    cutting any ramp still in progress.  Steps are right-continuous.
    """

    def __init__(self, base, events):
        self.base = dict(base)
        self.pieces = {}
        order = sorted(range(len(events)), key=lambda i: events[i]["at_s"])
        for i in order:
            ev = events[i]
            key, ts, ramp = ev["target"], ev["at_s"], ev["ramp_s"]
            pcs = self.pieces.setdefault(key, [])
            v_start = self._eval(key, ts)
            while pcs and pcs[-1][0] >= ts:      # superseded at the same instant
                pcs.pop()
            if pcs and pcs[-1][2] > ts:          # cut a ramp in progress
                t0, v0, _, _ = pcs[-1]
                pcs[-1] = (t0, v0, ts, v_start)
            pcs.append((ts, v_start, ts + ramp, ev["to"]))

    def _eval(self, key, t):
        pcs = self.pieces.get(key)
        if not pcs:
            return self.base[key]
        starts = [pc[0] for pc in pcs]
        i = bisect.bisect_right(starts, t) - 1
        if i < 0:
            return self.base[key]
        t0, v0, t1, v1 = pcs[i]
        if t < t1:
            return v0 + (v1 - v0) * (t - t0) / (t1 - t0)
        return v1

    def corners(self):
        """Every time at which some parameter's slope or value changes."""
        out = set()
        for pcs in self.pieces.values():
            for t0, _, t1, _ in pcs:
                out.add(t0)
                out.add(t1)
        return sorted(out)

    def segment(self, t_a, t_b):
        """Values at t_a (from the right) and slopes valid on [t_a, t_b]."""
        mid = 0.5 * (t_a + t_b)
        values, slopes = dict(self.base), {}
        for key, pcs in self.pieces.items():
            starts = [pc[0] for pc in pcs]
            i = bisect.bisect_right(starts, mid) - 1
            if i < 0:
                continue
            t0, v0, t1, v1 = pcs[i]
            if mid < t1:
                slope = (v1 - v0) / (t1 - t0)
                values[key] = v0 + slope * (t_a - t0)
                slopes[key] = slope
            else:
                values[key] = v1
        return Segment(t_a, values, slopes)


class Segment:
    """Parameters on one stretch between corners: value(t) = v + slope (t - t_a)."""

    def __init__(self, t_a, values, slopes):
        self.t_a, self.values, self.slopes = t_a, values, slopes
        self.fixed = None if slopes else Model(values)

    def params(self, t):
        if not self.slopes:
            return self.values
        prm = dict(self.values)
        for key, slope in self.slopes.items():
            prm[key] = self.values[key] + slope * (t - self.t_a)
        return prm

    def model(self, t):
        if self.fixed is not None:
            return self.fixed
        # A ramp between two checked values stays valid (every limit is an
        # interval), so no check is needed here.
        return Model(self.params(t))

    def stop_rates(self, held):
        """Rate at which each held coordinate's stop moves (a ramp of
        pump.max_swash_angle or compensator.spool_travel), so that a held
        coordinate stays on its stop."""
        r = np.zeros(6)
        if held[0] == UPPER:
            r[2] = self.slopes.get("pump.max_swash_angle", 0.0)
        if held[1] != FREE:
            r[4] = held[1] * self.slopes.get("compensator.spool_travel", 0.0)
        return r


# ---------------------------------------------------------------------------
# Input

def _number(value, where):
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError("%s: expected a number, got %r" % (where, value))
    if not math.isfinite(value):
        raise InputError("%s: expected a finite number, got %r" % (where, value))
    return float(value)


def check_values(prm, where):
    """Reject parameter values the equations cannot use."""
    for key in POSITIVE_KEYS:
        if not prm[key] > 0.0:
            raise InputError("parameter %s %s: must be > 0, got %r"
                             % (key, where, prm[key]))
    for key in NON_NEGATIVE_KEYS:
        if not prm[key] >= 0.0:
            raise InputError("parameter %s %s: must be >= 0, got %r"
                             % (key, where, prm[key]))
    if not prm["pump.max_swash_angle"] < math.pi / 2:
        raise InputError("parameter pump.max_swash_angle %s: must be below "
                         "pi/2 rad, got %r" % (where, prm["pump.max_swash_angle"]))
    if not prm["fluid.air_fraction"] < 1.0:
        raise InputError("parameter fluid.air_fraction %s: must be below 1, "
                         "got %r" % (where, prm["fluid.air_fraction"]))


def parse_case(doc, source="input"):
    """Validate the JSON document; return a case dict with plain floats.
    Every error message starts with the source's name."""
    try:
        return _parse_case(doc, source)
    except InputError as exc:
        msg = str(exc)
        raise InputError(msg if msg.startswith(source + ":")
                         else "%s: %s" % (source, msg))


def _parse_case(doc, source):
    if not isinstance(doc, dict):
        raise InputError("%s: expected a JSON object at the top level" % source)
    for section in ("scenario", "parameters"):
        if not isinstance(doc.get(section), dict):
            raise InputError("%s: missing or non-object section '%s'"
                             % (source, section))
    sc = doc["scenario"]
    duration = _number(sc.get("duration_s"), "scenario.duration_s")
    dt = _number(sc.get("sample_interval_s"), "scenario.sample_interval_s")
    if duration <= 0.0 or dt <= 0.0:
        raise InputError("%s: scenario.duration_s and sample_interval_s must "
                         "be > 0, got %r and %r" % (source, duration, dt))
    if duration / dt > 1e7:
        raise InputError("%s: more than 1e7 samples requested" % source)

    raw = doc["parameters"]
    prm = {}
    for key, default in DEFAULTS.items():
        if key not in raw:
            # The check JSON should hold every key; a missing one is not fatal.
            print("reference_model: note: parameter %s missing, using default %r"
                  % (key, default), file=sys.stderr)
            prm[key] = default
        elif key in BOOL_KEYS:
            if not isinstance(raw[key], bool):
                raise InputError("%s: parameter %s: expected true or false, "
                                 "got %r" % (source, key, raw[key]))
            prm[key] = raw[key]
        else:
            prm[key] = _number(raw[key], "parameter " + key)
    check_values(prm, "(initial)")

    events = []
    raw_events = doc.get("events") or []
    if not isinstance(raw_events, list):
        raise InputError("%s: 'events' must be a list" % source)
    for i, ev in enumerate(raw_events):
        where = "events[%d]" % i
        if not isinstance(ev, dict):
            raise InputError("%s: %s: expected an object" % (source, where))
        target = ev.get("target")
        if target not in DEFAULTS:
            raise InputError("%s: %s.target: %r is not a parameter key of "
                             "model.md" % (source, where, target))
        if target in BOOL_KEYS:
            raise InputError("%s: %s.target: %s is not numeric"
                             % (source, where, target))
        at = _number(ev.get("at_s"), where + ".at_s")
        ramp = _number(ev.get("ramp_s", 0.0), where + ".ramp_s")
        to = _number(ev.get("to"), where + ".to")
        if at < 0.0 or ramp < 0.0:
            raise InputError("%s: %s: at_s and ramp_s must be >= 0"
                             % (source, where))
        trial = dict(prm)
        trial[target] = to
        check_values(trial, "(%s.to)" % where)
        events.append({"target": target, "at_s": at, "ramp_s": ramp, "to": to})

    y0 = doc.get("initial_state")
    if y0 is not None:
        if not isinstance(y0, list) or len(y0) != 6:
            raise InputError("%s: initial_state must be null or a list of six "
                             "numbers %s" % (source, STATE_NAMES))
        y0 = [_number(v, "initial_state[%d]" % i) for i, v in enumerate(y0)]

    return {"name": str(sc.get("name", "")), "duration": duration, "dt": dt,
            "parameters": prm, "events": events, "initial_state": y0}


def load_case(path):
    try:
        with open(path, "r", encoding="utf-8") as fh:
            doc = json.load(fh)
    except FileNotFoundError:
        raise InputError("%s: no such file" % path)
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError("%s: cannot read: %s" % (path, exc))
    except json.JSONDecodeError as exc:
        raise InputError("%s:%d: bad JSON: %s" % (path, exc.lineno, exc.msg))
    return parse_case(doc, path)


# ---------------------------------------------------------------------------
# Integration with hard end stops

def state_scales(prm):
    """Typical magnitude of each state, for per-state absolute tolerances."""
    p = max(abs(prm["compensator.setting"]), 1e5)
    a = prm["pump.max_swash_angle"]
    x = prm["compensator.spool_travel"]
    t_ref = 1e-3   # s: the fast motions take about a millisecond
    return np.array([p, p, a, a / t_ref, x, x / t_ref])


class Integrator:
    """Piecewise Radau integration with event-located hard stops.

    A free coordinate that reaches a stop ends the solve at that instant
    (terminal event); its velocity is zeroed (inelastic impact) and it is
    held.  A held coordinate is released when the net force on it at zero
    velocity points away from the stop (another terminal event).
    """

    MAX_STUCK = 200   # switches in a row without time advancing

    def __init__(self, rtol=1e-9, atol_scale=None, max_step=np.inf):
        self.rtol = rtol
        self.atol_scale = atol_scale
        self.max_step = max_step
        self.steps = 0
        self.rhs_calls = 0
        self.switches = 0

    # -- mode logic -------------------------------------------------------------

    @staticmethod
    def _stop_positions(m):
        return (0.0, m.a_max), (-m.x_max, m.x_max)

    def clamp_initial(self, m, y):
        """Put a start state inside the stops; one at a stop and not moving
        away from it starts held."""
        y = np.array(y, dtype=float)
        held = [FREE, FREE]
        for k, (pos, vel) in enumerate(((2, 3), (4, 5))):
            lo, hi = self._stop_positions(m)[k]
            if y[pos] <= lo and y[vel] <= 0.0:
                y[pos], y[vel], held[k] = lo, 0.0, LOWER
            elif y[pos] >= hi and y[vel] >= 0.0:
                y[pos], y[vel], held[k] = hi, 0.0, UPPER
            else:
                y[pos] = min(max(y[pos], lo), hi)
        return y, tuple(held)

    @staticmethod
    def _forces(m, y):
        """Swash torque and spool force at zero velocity."""
        return m.swash_torque(y, w=0.0), m.spool_force(y, v=0.0)

    def snap_held(self, m, y, held):
        """Put held coordinates exactly on their stops, at rest."""
        y = y.copy()
        for k, (pos, vel) in enumerate(((2, 3), (4, 5))):
            if held[k] != FREE:
                lo, hi = self._stop_positions(m)[k]
                y[pos], y[vel] = (lo if held[k] == LOWER else hi), 0.0
        return y

    def release_now(self, m, y, held):
        """Release a held coordinate whose force already points away."""
        forces = self._forces(m, y)
        out = list(held)
        for k in range(2):
            if held[k] != FREE and forces[k] * held[k] < 0.0:
                out[k] = FREE
        return tuple(out)

    def _events(self, seg, held):
        """Terminal event functions for the current modes."""
        events, meaning = [], []

        def add(fn, direction, k, action):
            fn.terminal = True
            fn.direction = direction
            events.append(fn)
            meaning.append((k, action))

        for k, (pos, idx_f) in enumerate(((2, 0), (4, 1))):
            if held[k] == FREE:
                if k == 0:
                    add(lambda t, y: y[2], -1, 0, LOWER)
                    add(lambda t, y: y[2] - seg.model(t).a_max, 1, 0, UPPER)
                else:
                    add(lambda t, y: y[4] + seg.model(t).x_max, -1, 1, LOWER)
                    add(lambda t, y: y[4] - seg.model(t).x_max, 1, 1, UPPER)
            else:
                # force at zero velocity crosses zero away from the stop
                sign = held[k]
                add(lambda t, y, i=idx_f: self._forces(seg.model(t), y)[i],
                    -sign, k, FREE)
        return events, meaning

    # -- main loop ---------------------------------------------------------------

    def run(self, seg_source, t_start, t_end, y, held, sample_times=None,
            record=None, segment_ends=None):
        """Integrate from t_start to t_end.

        seg_source(t_a, t_b) gives the Segment for [t_a, t_b]; segment_ends
        are the corner times inside (t_start, t_end).  record(times, ys,
        seg) receives the dense-output samples.  Returns (y, held).
        """
        corners = [c for c in (segment_ends or []) if t_start < c < t_end]
        bounds = [t_start] + corners + [t_end]
        samples = np.asarray(sample_times if sample_times is not None else [])
        t, y = t_start, np.array(y, dtype=float)
        for t_a, t_b in zip(bounds[:-1], bounds[1:]):
            seg = seg_source(t_a, t_b)
            last_segment = t_b == t_end
            stuck = 0
            while t < t_b:
                m = seg.model(t)
                y = self.snap_held(m, y, held)
                held = self.release_now(m, y, held)
                h = held
                events, meaning = self._events(seg, held)
                sol = self._solve(seg, t, t_b, y, h, events)
                t_new = float(sol.t[-1])
                y_new = sol.y[:, -1].copy()
                if record is not None and samples.size:
                    if last_segment and sol.status == 0:
                        sel = (samples >= t) & (samples <= t_b)
                    else:
                        sel = (samples >= t) & (samples < t_new)
                    ts = samples[sel]
                    if ts.size:
                        record(ts, sol.sol(ts), seg, h)
                if sol.status == 1:
                    held, y_new = self._switch(seg, sol, meaning, held, y_new,
                                               t_new)
                    self.switches += 1
                    stuck = stuck + 1 if t_new <= t else 0
                    if stuck > self.MAX_STUCK:
                        raise SolverError("stuck switching at an end stop at "
                                          "t = %.9g s" % t_new)
                t, y = (t_b if sol.status == 0 else t_new), y_new
        return y, held

    def _solve(self, seg, t0, t1, y0, held, events):
        scale = self.atol_scale
        rates = seg.stop_rates(held)

        def fun(t, y):
            self.rhs_calls += 1
            return seg.model(t).rhs(y, held) + rates

        def jac(t, y):
            return seg.model(t).jac(y, held)

        try:
            sol = solve_ivp(fun, (t0, t1), y0, method="Radau", jac=jac,
                            rtol=self.rtol, atol=self.rtol * scale,
                            events=events, dense_output=True,
                            max_step=self.max_step)
        except (ValueError, ArithmeticError, np.linalg.LinAlgError) as exc:
            raise SolverError("Radau failed between t = %.9g s and %.9g s: %s"
                              % (t0, t1, exc))
        if sol.status < 0:
            raise SolverError("Radau failed at t = %.9g s: %s"
                              % (sol.t[-1], sol.message))
        self.steps += max(len(sol.t) - 1, 0)
        return sol

    def _switch(self, seg, sol, meaning, held, y, t_new):
        """Apply every event that fired at the stopping instant."""
        m = seg.model(t_new)
        stops = self._stop_positions(m)
        held = list(held)
        tol = 1e-12 * max(1.0, abs(t_new))
        for (k, action), t_ev in zip(meaning, sol.t_events):
            if t_ev.size == 0 or abs(t_ev[-1] - t_new) > tol:
                continue
            pos, vel = (2, 3) if k == 0 else (4, 5)
            if action == FREE:
                held[k] = FREE
            else:
                held[k] = action
                y[pos] = stops[k][0] if action == LOWER else stops[k][1]
                y[vel] = 0.0     # inelastic impact
        return tuple(held), y


# ---------------------------------------------------------------------------
# Steady state and full runs

def steady_state(prm, rtol=1e-9, max_time=2.0, chunk=0.05, rest_tol=1e-7):
    """Integrate to rest from full stroke at constant parameters.

    Start: a = a_max, w = 0, p_c = 0, x_s = 0, v_s = 0 and p_d the pressure
    at which the full-stroke flow less leakage passes the load valve (the
    setting with the valve closed).  Stops at max_time or once every
    derivative, relative to its state's scale, is below rest_tol per second.
    Returns (y, held, t_used).
    """
    m = Model(prm)
    scale = state_scales(prm)
    integ = Integrator(rtol=rtol, atol_scale=scale)
    y, held = integ.clamp_initial(m, [m.full_flow_pressure(), 0.0, m.a_max,
                                      0.0, 0.0, 0.0])
    seg = Segment(0.0, prm, {})
    t = 0.0
    while t < max_time:
        t_next = min(t + chunk, max_time)
        y, held = integ.run(lambda a, b: seg, t, t_next, y, held)
        t = t_next
        held = integ.release_now(m, y, held)
        if np.max(np.abs(m.rhs(y, held)) / scale) < rest_tol:
            break
    return y, held, t


def simulate(case, rtol=1e-9, max_step=None):
    """Run a parsed case; returns dict with 'columns' (name -> array) and
    solver statistics."""
    wall0 = time.perf_counter()
    prm0 = case["parameters"]
    duration, dt = case["duration"], case["dt"]
    n = int(math.floor(duration / dt + 1e-9)) + 1
    samples = np.arange(n) * dt
    t_end = max(duration, samples[-1])

    schedule = Schedule(prm0, case["events"])
    scale = state_scales(prm0)
    if max_step is None:
        max_step = max(10.0 * dt, 1e-3)   # keeps event detection honest
    integ = Integrator(rtol=rtol, atol_scale=scale, max_step=max_step)

    steady_time = None
    if case["initial_state"] is None:
        y0, _, steady_time = steady_state(prm0, rtol=rtol)
    else:
        y0 = np.array(case["initial_state"], dtype=float)
    m0 = Model(prm0)
    y0, held = integ.clamp_initial(m0, y0)

    out = np.empty((n, len(TRACE_COLUMNS)))
    filled = np.zeros(n, dtype=bool)

    def record(ts, ys, seg, held_modes):
        idx = np.searchsorted(samples, ts)
        for j, (i, t) in enumerate(zip(idx, ts)):
            m = seg.model(t)
            # a held coordinate sits exactly on its stop (the dense output
            # can be off by round-off)
            y = integ.snap_held(m, ys[:, j], held_modes)
            q_pump, q_load, q_leak, q_pc = m.outputs(y)
            out[i] = [t, y[0], y[1], y[2], y[3], y[4], y[5],
                      q_pump, q_load, q_leak, q_pc, m.s]
            filled[i] = True

    integ.run(lambda a, b: schedule.segment(a, b), 0.0, t_end, y0, held,
              sample_times=samples, record=record,
              segment_ends=schedule.corners())
    if not filled.all():
        raise SolverError("internal: %d samples not written"
                          % int((~filled).sum()))
    out[:, 0] = samples
    return {
        "columns": {name: out[:, j] for j, name in enumerate(TRACE_COLUMNS)},
        "initial_state": y0,
        "steady_time_s": steady_time,
        "steps": integ.steps,
        "rhs_evaluations": integ.rhs_calls,
        "stop_switches": integ.switches,
        "wall_time_s": time.perf_counter() - wall0,
    }


def write_csv(result, path):
    """Write the trace; through a temporary file so a failure never leaves
    a partial file over an earlier good one."""
    cols = result["columns"]
    tmp = path + ".tmp"
    with open(tmp, "w", newline="", encoding="utf-8") as fh:
        wr = csv.writer(fh)
        wr.writerow(TRACE_COLUMNS)
        for i in range(len(cols["time_s"])):
            wr.writerow(["%.17g" % cols[c][i] for c in TRACE_COLUMNS])
    os.replace(tmp, path)


def main(argv=None):
    ap = argparse.ArgumentParser(
        description="Independent scipy reference of Swashtune's v1 model.")
    ap.add_argument("params", help="JSON from `swashtune-cli check --json`")
    ap.add_argument("--out", required=True, help="trace CSV to write (SI)")
    ap.add_argument("--rtol", type=float, default=1e-9,
                    help="relative tolerance of the reference (default 1e-9)")
    ap.add_argument("--max-step", type=float, default=None,
                    help="largest solver step, s (default max(10 dt, 1 ms))")
    args = ap.parse_args(argv)
    try:
        if not (0.0 < args.rtol < 1e-2):
            raise InputError("--rtol must be in (0, 0.01), got %r" % args.rtol)
        if args.max_step is not None and not args.max_step > 0.0:
            raise InputError("--max-step must be > 0, got %r" % args.max_step)
        case = load_case(args.params)
        result = simulate(case, rtol=args.rtol, max_step=args.max_step)
        write_csv(result, args.out)
    except InputError as exc:
        print("reference_model: error: %s" % exc, file=sys.stderr)
        return 2
    except SolverError as exc:
        print("reference_model: solver failed: %s" % exc, file=sys.stderr)
        return 3
    except OSError as exc:
        print("reference_model: error: cannot write %s: %s" % (args.out, exc),
              file=sys.stderr)
        return 2
    cols = result["columns"]
    print("reference_model: %s: %d samples, peak p_d %.6g Pa, %d steps, "
          "%d stop switches, %.2f s"
          % (case["name"] or args.params, len(cols["time_s"]),
             cols["discharge_pressure_Pa"].max(), result["steps"],
             result["stop_switches"], result["wall_time_s"]))
    return 0


if __name__ == "__main__":
    sys.exit(main())
