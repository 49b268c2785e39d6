#!/usr/bin/python3
"""Independent Python reference of Swashtune's dynamic model (v1 and v2).

Implements, from the text alone (no C++ consulted), the equations of
shared/design/model.md (v1), the section "Model v2: elements and their
equations" of DEVELOPERS.md (oil temperature and viscosity, cavitation and
air release, control orifice and port volume, relief valve, swash friction
and pressure moment, flow ripple, moving stops) and the fault conditions of
resources/faults.md, and integrates them with scipy's Radau method at tight
tolerances, with event-located hard end stops.  The C++ test-suite uses it
as an oracle through compare_traces.py.

Input: the JSON written by `swashtune-cli check SCENARIO --json`
(scenario, solver, parameters, initial_state, events); parameters that are
"none" come as null.
Output: a CSV with the SI trace columns of interfaces.md, followed by the
optional states present (port_pressure_Pa, released_air_line,
released_air_chamber, released_air_port, shaft_angle_rad).

    /usr/bin/python3 tests/python/reference_model.py PARAMS.json --out ref.csv

Exit status: 0 done, 2 bad input, 3 the solver failed.
"""

import argparse
import bisect
import csv
import functools
import json
import math
import os
import sys
import time

import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq, root

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import astm_d2270  # noqa: E402

P_ATM = 101325.0          # Pa, the air model's atmosphere (model.md)
P_ABS_FLOOR = 1000.0      # Pa, floor of the absolute pressure (model.md)
JET_ANGLE = math.radians(69.0)
VISCOSITY_OF_COEFFICIENTS = 46.0   # mm^2/s: leakage and damping are given for it
CAVITY_WIDTH = 2000.0     # Pa, smoothing of the vapour-pressure floor
RELEASE_WIDTH = 0.01      # smoothing of the saturation knee (fraction of p_sat)
SWASH_FRICTION_SPEED = 1e-3   # rad/s, tanh width of the cradle friction
STRIBECK_SPEED = 2e-3     # m/s, faults.md: v_st
SPOOL_FRICTION_SPEED = 1e-4   # m/s, faults.md: v_eps
MAX_AIR_FRACTION = 0.5    # entrained air is at most this (DEVELOPERS.md)

# Parameter keys -> default (SI, except pump.speed in rev/min, viscosities in
# mm^2/s and temperature in degC, as the check JSON gives them).  None: "none".
DEFAULTS = {
    "fluid.density": 870.0,
    "fluid.bulk_modulus": 1.6e9,
    "fluid.air_fraction": 0.0,
    "fluid.polytropic_index": 1.4,
    "fluid.cavitation": False,
    "fluid.vapour_pressure": 1000.0,
    "fluid.dissolved_air": 0.09,
    "fluid.saturation_pressure": 101325.0,
    "fluid.air_release_time": 0.05,
    "fluid.air_absorption_time": 2.0,
    "fluid.viscosity_grade": 46.0,
    "fluid.viscosity_index": 100.0,
    "fluid.viscosity_at_100C": 0.0,
    "fluid.temperature": 40.0,
    "fluid.thermal_expansion": 0.0007,
    "pump.displacement": 45e-6,
    "pump.speed": 1800.0,
    "pump.max_swash_angle": 0.29671,
    "pump.leakage_coefficient": 1.29e-12,
    "pump.swash_inertia": 0.003,
    "pump.swash_damping": 1.0,
    "pump.pressure_moment": 0.0,
    "pump.swash_friction": 0.0,
    "pump.pistons": 9.0,
    "pump.flow_ripple": False,
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
    "compensator.control_orifice": None,
    "compensator.orifice_discharge_coefficient": 0.7,
    "compensator.port_volume": 5e-6,
    "relief.setting": None,
    "relief.override": 1.5e6,
    "relief.rated_flow": 100e-3 / 60.0,      # 100 L/min
    "line.volume": 1.0e-3,
    "line.tank_pressure": 0.0,
    "load.valve_area": 56.9e-6,
    "load.discharge_coefficient": 0.7,
    "load.opening": 1.0,
    "solver.transition_pressure": 1e4,
    "faults.leakage_factor": 1.0,
    "faults.entrained_air": 0.0,
    "faults.bleed_area_factor": 1.0,
    "faults.bias_spring_strength": 1.0,
    "faults.spool_friction": 0.0,
    "faults.spool_stiction_ratio": 1.5,
    "faults.setting_drift": 0.0,
    "faults.line_volume_factor": 1.0,
    "faults.case_pressure": 0.0,
}
BOOL_KEYS = {"compensator.flow_forces", "fluid.cavitation", "pump.flow_ripple"}
NULLABLE_KEYS = {"compensator.control_orifice", "relief.setting"}
INTEGER_KEYS = {"pump.pistons"}

# Keys that must stay strictly positive / non-negative for the equations to
# make sense (a zero volume or mass would divide by zero).
POSITIVE_KEYS = {
    "fluid.density", "fluid.bulk_modulus", "fluid.polytropic_index",
    "fluid.vapour_pressure", "fluid.saturation_pressure",
    "fluid.air_release_time", "fluid.air_absorption_time",
    "fluid.viscosity_grade",
    "pump.max_swash_angle", "pump.swash_inertia", "pump.pistons",
    "control_piston.arm", "control_piston.dead_volume",
    "compensator.spool_diameter", "compensator.spool_mass",
    "compensator.spool_travel", "compensator.orifice_discharge_coefficient",
    "compensator.port_volume", "compensator.control_orifice",
    "relief.setting", "relief.override", "relief.rated_flow",
    "line.volume", "solver.transition_pressure",
    "faults.line_volume_factor", "faults.spool_stiction_ratio",
}
NON_NEGATIVE_KEYS = {
    "fluid.air_fraction", "fluid.dissolved_air", "fluid.viscosity_at_100C",
    "fluid.thermal_expansion",
    "pump.displacement", "pump.speed", "pump.leakage_coefficient",
    "pump.swash_damping", "pump.swash_friction", "bias_spring.rate",
    "bias_spring.force_at_full_stroke",
    "control_piston.diameter",
    "compensator.spring_rate", "compensator.spool_damping",
    "compensator.port_width", "compensator.discharge_coefficient",
    "compensator.bleed_orifice", "load.valve_area",
    "load.discharge_coefficient", "line.tank_pressure",
    "faults.leakage_factor", "faults.entrained_air",
    "faults.bleed_area_factor", "faults.bias_spring_strength",
    "faults.spool_friction", "faults.case_pressure",
}

TRACE_COLUMNS = [
    "time_s", "discharge_pressure_Pa", "control_pressure_Pa",
    "swash_angle_rad", "swash_velocity_rad_s", "spool_position_m",
    "spool_velocity_m_s", "pump_flow_m3_s", "load_flow_m3_s",
    "leakage_flow_m3_s", "control_flow_m3_s", "load_opening",
    "compensator_setting_Pa",
]
# Optional states, in the documented order, and their trace columns.
OPTIONAL_COLUMNS = {
    "p_k": "port_pressure_Pa", "r_d": "released_air_line",
    "r_c": "released_air_chamber", "r_k": "released_air_port",
    "theta": "shaft_angle_rad",
}

# Held-coordinate modes: FREE, or held at the LOWER / UPPER stop.
FREE, LOWER, UPPER = 0, -1, 1
SWASH, SPOOL = 0, 1
POS_VEL = ((2, 3), (4, 5))


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


def smooth_positive(z, width):
    """sp(z, w) = w ln(1 + e^(z/w)), z above z/w = 40, 0 below -40
    (DEVELOPERS.md, v2)."""
    u = z / width
    if u > 40.0:
        return z
    if u < -40.0:
        return 0.0
    return width * math.log1p(math.exp(u))


def logistic(g):
    """s = 1 / (1 + e^-g), 1 above g = 40 and 0 below -40."""
    if g > 40.0:
        return 1.0
    if g < -40.0:
        return 0.0
    return 1.0 / (1.0 + math.exp(-g))


def bulk_modulus(p, beta_oil, x_a, n, with_air_law=False):
    """Effective bulk modulus with an air fraction x_a at atmosphere
    (model.md), p gauge.  x_a = 0 gives beta_oil unless the law is asked for
    (with cavitation the law is evaluated even at x = 0)."""
    if x_a <= 0.0 and not with_air_law:
        return beta_oil
    p_abs = max(p + P_ATM, P_ABS_FLOOR)
    v_a = x_a * (P_ATM / p_abs) ** (1.0 / n)
    inv = ((1.0 - x_a) / beta_oil + v_a / (n * p_abs)) / ((1.0 - x_a) + v_a)
    return 1.0 / inv


def ripple_factor(theta, z):
    """(pi/z) sum_j max(0, sin(theta + 2 pi j / z)): the kinematic flow of z
    pistons on a swashplate over its mean (DEVELOPERS.md, v2)."""
    total = 0.0
    for j in range(z):
        s = math.sin(theta + 2.0 * math.pi * j / z)
        if s > 0.0:
            total += s
    return math.pi / z * total


# ---------------------------------------------------------------------------
# Oil at its temperature

@functools.lru_cache(maxsize=256)
def nu100_from_index(nu40, vi):
    try:
        return astm_d2270.nu100_from_index(nu40, vi)
    except ValueError as exc:
        raise InputError("fluid.viscosity_index: %s" % exc)


def oil_state(prm):
    """(rho(T), nu(T), nu_100, ratio) of DEVELOPERS.md's oil element.

    ratio = nu(T) rho(T) / (46 mm^2/s rho_40) scales laminar leakage (1/ratio)
    and viscous damping (ratio)."""
    nu40 = prm["fluid.viscosity_grade"]
    nu100 = prm["fluid.viscosity_at_100C"]
    if not nu100 > 0.0:                      # 0: from the viscosity index
        nu100 = nu100_from_index(nu40, prm["fluid.viscosity_index"])
    t = prm["fluid.temperature"]
    a, b = astm_d2270.walther_coefficients(40.0, nu40, 100.0, nu100)
    # the line passes through its two points (exactly, not to round-off)
    nu = {40.0: nu40, 100.0: nu100}.get(t) or astm_d2270.walther_viscosity(a, b, t)
    rho40 = prm["fluid.density"]
    rho = rho40 / (1.0 + prm["fluid.thermal_expansion"] * (t - 40.0))
    ratio = nu * rho / (VISCOSITY_OF_COEFFICIENTS * rho40)
    return rho, nu, nu100, ratio


# ---------------------------------------------------------------------------
# State layout

class Layout:
    """States 0-5 (p_d, p_c, a, w, x_s, v_s), then p_k (control orifice
    present), r_d, r_c, r_k (cavitation; r_k with the port), theta (ripple)."""

    def __init__(self, prm):
        self.port = prm["compensator.control_orifice"] is not None
        self.cavitation = bool(prm["fluid.cavitation"])
        self.ripple = bool(prm["pump.flow_ripple"])
        names = ["p_d", "p_c", "a", "w", "x_s", "v_s"]
        if self.port:
            names.append("p_k")
        if self.cavitation:
            names += ["r_d", "r_c"] + (["r_k"] if self.port else [])
        if self.ripple:
            names.append("theta")
        self.names = names
        self.n = len(names)
        ix = {nm: i for i, nm in enumerate(names)}
        self.k = ix.get("p_k")
        self.r_d, self.r_c, self.r_k = ix.get("r_d"), ix.get("r_c"), ix.get("r_k")
        self.theta = ix.get("theta")
        self.optional_columns = [OPTIONAL_COLUMNS[nm] for nm in names[6:]]
        self.pressures = [i for i in (0, 1, self.k) if i is not None]
        self.airs = [i for i in (self.r_d, self.r_c, self.r_k) if i is not None]


# ---------------------------------------------------------------------------
# The model at one set of parameter values

class Model:
    """Right-hand side and stop forces for one parameter set."""

    def __init__(self, prm, layout, ripple=True):
        g = prm.get
        self.layout = layout
        self.rho, self.nu, self.nu100, self.visc_ratio = oil_state(prm)
        self.beta_oil = g("fluid.bulk_modulus")
        self.x_a = min(g("fluid.air_fraction") + g("faults.entrained_air"),
                       MAX_AIR_FRACTION)
        self.n = g("fluid.polytropic_index")
        self.p_vg = g("fluid.vapour_pressure") - P_ATM
        self.alpha = g("fluid.dissolved_air")
        self.p_sat = g("fluid.saturation_pressure")
        self.k_r = 1.0 / g("fluid.air_release_time")
        self.k_ab = 1.0 / g("fluid.air_absorption_time")
        self.a_max = g("pump.max_swash_angle")
        self.speed = g("pump.speed")
        self.q_max = g("pump.displacement") * self.speed / 60.0
        self.tan_a_max = math.tan(self.a_max)
        self.k_leak = (g("pump.leakage_coefficient") * g("faults.leakage_factor")
                       / self.visc_ratio)
        self.J = g("pump.swash_inertia")
        self.c_a = g("pump.swash_damping") * self.visc_ratio
        self.k_carry = g("pump.pressure_moment")
        self.m_f = g("pump.swash_friction")
        self.pistons = int(round(g("pump.pistons")))
        self.ripple = layout.ripple and ripple
        f_k = g("faults.bias_spring_strength")
        self.k_b = g("bias_spring.rate") * f_k
        self.f_b = g("bias_spring.force_at_full_stroke") * f_k
        self.r_b = g("bias_spring.arm")
        self.A_c = math.pi / 4.0 * g("control_piston.diameter") ** 2
        self.r_c = g("control_piston.arm")
        self.V_c0 = g("control_piston.dead_volume")
        self.p_set = g("compensator.setting")
        self.A_s = math.pi / 4.0 * g("compensator.spool_diameter") ** 2
        self.preload = self.A_s * self.p_set * (1.0 - g("faults.setting_drift"))
        self.k_s = g("compensator.spring_rate")
        self.m_s = g("compensator.spool_mass")
        self.b_s = g("compensator.spool_damping") * self.visc_ratio
        self.x_max = g("compensator.spool_travel")
        self.w_port = g("compensator.port_width")
        self.u = g("compensator.underlap")
        self.cd = g("compensator.discharge_coefficient")
        self.k_flow = (2.0 * self.cd * math.cos(JET_ANGLE)
                       if g("compensator.flow_forces") else 0.0)
        self.A_b = (g("faults.bleed_area_factor") * math.pi / 4.0
                    * g("compensator.bleed_orifice") ** 2)
        d_o = g("compensator.control_orifice")
        self.cdA_o = (g("compensator.orifice_discharge_coefficient") * math.pi
                      / 4.0 * d_o ** 2) if d_o is not None else None
        self.V_k = g("compensator.port_volume")
        p_r = g("relief.setting")
        self.relief = p_r is not None
        self.p_crack = p_r if self.relief else math.inf
        self.dp_override = g("relief.override")
        self.q_rated = g("relief.rated_flow")
        self.V_d = g("line.volume") * g("faults.line_volume_factor")
        self.p_t = g("line.tank_pressure")
        self.p_case = self.p_t + g("faults.case_pressure")
        self.A_v = g("load.valve_area")
        self.cd_v = g("load.discharge_coefficient")
        self.s = g("load.opening")
        self.dp_tr = g("solver.transition_pressure")
        self.f_c = g("faults.spool_friction")
        self.f_s = g("faults.spool_stiction_ratio") * self.f_c
        self.Arc = self.A_c * self.r_c   # control piston volume per radian
        p_scale = max(abs(self.p_set), 1e5)
        # A held coordinate is released when the static force points away
        # from its stop by more than these (DEVELOPERS.md; faults.md F_s).
        self.release_threshold = (1e-8 * self.Arc * p_scale + self.m_f,
                                  1e-8 * self.A_s * p_scale + self.f_s)

    # -- pieces -----------------------------------------------------------------

    def pressure(self, psi):
        """The pressure the flows see for a volume's pressure state psi."""
        if not self.layout.cavitation:
            return psi
        return self.p_vg + smooth_positive(psi - self.p_vg, CAVITY_WIDTH)

    def released_air_rate(self, r, p):
        """dr/dt: towards r_eq(p) = alpha sp(1 - p_abs/p_sat, 0.01), at the
        release rate when r is below it, the absorption rate above."""
        r_eq = self.alpha * smooth_positive(1.0 - (p + P_ATM) / self.p_sat,
                                            RELEASE_WIDTH)
        d = r_eq - r
        s = logistic(d / (1e-7 * self.alpha + 1e-15))
        return d * (self.k_ab + (self.k_r - self.k_ab) * s)

    def air_volume_flow(self, volume, dr, p):
        """R = V dr/dt (p_atm / p_abs)^(1/n): released air's volume rate."""
        p_abs = max(p + P_ATM, P_ABS_FLOOR)
        return volume * dr * (P_ATM / p_abs) ** (1.0 / self.n)

    def stop_positions(self):
        return (0.0, self.a_max), (-self.x_max, self.x_max)

    def evaluate(self, y):
        """Every flow and pressure of the v2 equations at state y."""
        L = self.layout
        a, w, x_s = y[2], y[3], y[4]
        p_d, p_c = self.pressure(y[0]), self.pressure(y[1])
        p_k = self.pressure(y[L.k]) if L.port else p_c
        rho, tr = self.rho, self.dp_tr
        q_g = self.q_max * math.tan(a) / self.tan_a_max
        if self.ripple:
            q_g *= ripple_factor(y[L.theta], self.pistons)
        q_leak = self.k_leak * p_d
        a_pc = self.w_port * max(0.0, self.u + x_s)
        a_ct = self.w_port * max(0.0, self.u - x_s)
        q_pc = orifice_flow(self.cd * a_pc, p_d - p_k, rho, tr)[0]
        q_ct = orifice_flow(self.cd * a_ct, p_k - self.p_case, rho, tr)[0]
        q_b = orifice_flow(self.cd * self.A_b, p_c - self.p_case, rho, tr)[0]
        q_o = (orifice_flow(self.cdA_o, p_k - p_c, rho, tr)[0] if L.port
               else q_pc - q_ct)
        q_load = orifice_flow(self.cd_v * self.s * self.A_v, p_d - self.p_t,
                              rho, tr)[0]
        q_r = (self.q_rated / self.dp_override
               * smooth_positive(p_d - (self.p_crack + self.p_t),
                                 0.02 * self.dp_override)) if self.relief else 0.0
        return {"p_d": p_d, "p_c": p_c, "p_k": p_k, "q_g": q_g,
                "q_leak": q_leak, "a_pc": a_pc, "a_ct": a_ct, "q_pc": q_pc,
                "q_ct": q_ct, "q_b": q_b, "q_o": q_o, "q_load": q_load,
                "q_r": q_r, "w": w}

    def swash_torque(self, y, e=None, w=None, friction=True):
        """Net moment on the swash without stop reaction (w=None: use y)."""
        e = e or self.evaluate(y)
        w = y[3] if w is None else w
        f_bias = self.f_b + self.k_b * self.r_b * (self.a_max - y[2])
        m = (self.r_b * f_bias - self.r_c * self.A_c * e["p_c"]
             - self.k_carry * e["p_d"] - self.c_a * w)
        if friction and self.m_f > 0.0:
            m -= self.m_f * math.tanh(w / SWASH_FRICTION_SPEED)
        return m

    def spool_force(self, y, e=None, v=None, friction=True):
        """Net force on the spool without stop reaction (v=None: use y)."""
        e = e or self.evaluate(y)
        v = y[5] if v is None else v
        f_flow = self.k_flow * (-e["a_pc"] * (e["p_d"] - e["p_k"])
                                + e["a_ct"] * (e["p_k"] - self.p_case))
        f = (self.A_s * e["p_d"] - self.preload - self.k_s * y[4]
             - self.b_s * v + f_flow)
        if friction and self.f_c > 0.0:
            f -= ((self.f_c + (self.f_s - self.f_c)
                   * math.exp(-(v / STRIBECK_SPEED) ** 2))
                  * math.tanh(v / SPOOL_FRICTION_SPEED))
        return f

    def static_forces(self, y):
        """Swash moment and spool force at zero velocity, friction left out."""
        e = self.evaluate(y)
        return (self.swash_torque(y, e, w=0.0, friction=False),
                self.spool_force(y, e, v=0.0, friction=False))

    # -- the ODE --------------------------------------------------------------

    def rhs(self, y, held, stop_rates=(0.0, 0.0)):
        """dy/dt.  A held coordinate moves with its stop: position rate = the
        stop's rate, velocity constant (it is pinned to that rate)."""
        L = self.layout
        e = self.evaluate(y)
        dy = np.zeros(L.n)
        x_d = x_c = x_k = self.x_a
        law = L.cavitation
        v_c = self.V_c0 + self.Arc * (self.a_max - y[2])
        air_d = air_c = air_k = 0.0
        if L.cavitation:
            dr_d = self.released_air_rate(y[L.r_d], e["p_d"])
            dr_c = self.released_air_rate(y[L.r_c], e["p_c"])
            dy[L.r_d], dy[L.r_c] = dr_d, dr_c
            x_d, x_c = self.x_a + y[L.r_d], self.x_a + y[L.r_c]
            air_d = self.air_volume_flow(self.V_d, dr_d, e["p_d"])
            air_c = self.air_volume_flow(v_c, dr_c, e["p_c"])
            if L.port:
                dr_k = self.released_air_rate(y[L.r_k], e["p_k"])
                dy[L.r_k] = dr_k
                x_k = self.x_a + y[L.r_k]
                air_k = self.air_volume_flow(self.V_k, dr_k, e["p_k"])
        be_d = bulk_modulus(e["p_d"], self.beta_oil, x_d, self.n, law)
        be_c = bulk_modulus(e["p_c"], self.beta_oil, x_c, self.n, law)
        dy[0] = be_d / self.V_d * (e["q_g"] - e["q_leak"] - e["q_pc"]
                                   - e["q_load"] - e["q_r"] + air_d)
        dy[1] = be_c / v_c * (e["q_o"] - e["q_b"] + self.Arc * y[3] + air_c)
        if L.port:
            be_k = bulk_modulus(e["p_k"], self.beta_oil, x_k, self.n, law)
            dy[L.k] = be_k / self.V_k * (e["q_pc"] - e["q_ct"] - e["q_o"]
                                         + air_k)
        if held[SWASH] == FREE:
            dy[2], dy[3] = y[3], self.swash_torque(y, e) / self.J
        else:
            dy[2], dy[3] = stop_rates[SWASH], 0.0
        if held[SPOOL] == FREE:
            dy[4], dy[5] = y[5], self.spool_force(y, e) / self.m_s
        else:
            dy[4], dy[5] = stop_rates[SPOOL], 0.0
        if L.ripple:
            dy[L.theta] = 2.0 * math.pi * self.speed / 60.0
        return dy

    def outputs(self, y):
        """Trace flows: pump (Q_g - Q_leak), load, leakage, control (Q_pc),
        and the pressures the flows see."""
        e = self.evaluate(y)
        return e

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

    def equilibrium_air(self, p):
        """r_eq(p), the released air at rest."""
        return self.alpha * smooth_positive(1.0 - (p + P_ATM) / self.p_sat,
                                            RELEASE_WIDTH)


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

    def segment(self, t_a, t_b, layout):
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
        return Segment(t_a, values, slopes, layout)


class Segment:
    """Parameters on one stretch between corners: value(t) = v + slope (t - t_a)."""

    def __init__(self, t_a, values, slopes, layout, ripple=True):
        self.t_a, self.values, self.slopes = t_a, values, slopes
        self.layout = layout
        self.ripple = ripple
        self.fixed = None if slopes else Model(values, layout, ripple)

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
        return Model(self.params(t), self.layout, self.ripple)

    def stop_rate(self, k, mode):
        """Rate of the stop a coordinate is held on (DEVELOPERS.md, moving
        stops): d a_max/dt for the swash's full-stroke stop, +-d x_max/dt for
        the spool's stops, 0 for the swash's zero stop and a free coordinate."""
        if mode == FREE:
            return 0.0
        if k == SWASH:
            return self.slopes.get("pump.max_swash_angle", 0.0) if mode == UPPER else 0.0
        return mode * self.slopes.get("compensator.spool_travel", 0.0)


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
        if prm[key] is None and key in NULLABLE_KEYS:
            continue
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
    if abs(prm["pump.pistons"] - round(prm["pump.pistons"])) > 1e-9:
        raise InputError("parameter pump.pistons %s: must be a whole number, "
                         "got %r" % (where, prm["pump.pistons"]))


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
        elif key in NULLABLE_KEYS and raw[key] is None:
            prm[key] = None
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
                             "the model" % (source, where, target))
        if target in BOOL_KEYS:
            raise InputError("%s: %s.target: %s is not numeric"
                             % (source, where, target))
        if target in NULLABLE_KEYS and prm[target] is None:
            raise InputError("%s: %s.target: %s is \"none\" in this scenario; "
                             "the reference cannot ramp it from none"
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

    layout = Layout(prm)
    y0 = doc.get("initial_state")
    if y0 is not None:
        if not isinstance(y0, list) or len(y0) != layout.n:
            raise InputError("%s: initial_state must be null or a list of %d "
                             "numbers %s" % (source, layout.n, layout.names))
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

def state_scales(prm, layout=None):
    """Typical magnitude of each state, for per-state absolute tolerances."""
    layout = layout or Layout(prm)
    p = max(abs(prm["compensator.setting"]), 1e5)
    a = prm["pump.max_swash_angle"]
    x = prm["compensator.spool_travel"]
    t_ref = 1e-3   # s: the fast motions take about a millisecond
    scale = np.empty(layout.n)
    scale[:6] = [p, p, a, a / t_ref, x, x / t_ref]
    if layout.port:
        scale[layout.k] = p
    for i in layout.airs:
        scale[i] = max(prm["fluid.dissolved_air"], 1e-3)
    if layout.ripple:
        scale[layout.theta] = 2.0 * math.pi
    return scale


class Integrator:
    """Piecewise Radau integration with event-located hard stops.

    A free coordinate that reaches a stop ends the solve at that instant
    (terminal event); it is put on the stop with the stop's velocity
    (inelastic impact) and held.  A held coordinate moves with its stop and
    is released when the static force on it points away from the stop by
    more than the release threshold (another terminal event).  At every
    corner of the schedule held coordinates are re-pinned to their stops and
    a free coordinate found beyond a stop is put on it.
    """

    MAX_STUCK = 200   # switches in a row without time advancing

    def __init__(self, layout, rtol=1e-9, atol_scale=None, max_step=np.inf):
        self.layout = layout
        self.rtol = rtol
        self.atol_scale = atol_scale
        self.max_step = max_step
        self.steps = 0
        self.rhs_calls = 0
        self.switches = 0

    # -- mode logic -------------------------------------------------------------

    @staticmethod
    def penetration_tolerance(m, k):
        """1e-9 of the coordinate's travel."""
        return 1e-9 * (m.a_max if k == SWASH else 2.0 * m.x_max)

    def pin(self, seg, t, y, held):
        """Put held coordinates on their stops at t, moving with them, and
        any free coordinate found beyond a stop onto it (held)."""
        m = seg.model(t)
        y = np.array(y, dtype=float)
        held = list(held)
        for k, (pos, vel) in enumerate(POS_VEL):
            lo, hi = m.stop_positions()[k]
            if held[k] == FREE:
                tol = self.penetration_tolerance(m, k)
                if y[pos] < lo - tol or (y[pos] <= lo and y[vel] < seg.stop_rate(k, LOWER)):
                    held[k] = LOWER
                elif y[pos] > hi + tol or (y[pos] >= hi and y[vel] > seg.stop_rate(k, UPPER)):
                    held[k] = UPPER
            if held[k] != FREE:
                y[pos] = lo if held[k] == LOWER else hi
                y[vel] = seg.stop_rate(k, held[k])
        return y, tuple(held)

    def release_now(self, m, y, held):
        """Release a held coordinate whose static force already points away
        from its stop by more than the threshold."""
        forces = m.static_forces(y)
        out = list(held)
        for k in range(2):
            if held[k] != FREE and held[k] * forces[k] + m.release_threshold[k] < 0.0:
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

        for k, (pos, _) in enumerate(POS_VEL):
            if held[k] == FREE:
                if k == SWASH:
                    add(lambda t, y: y[2], -1, k, LOWER)
                    add(lambda t, y: y[2] - seg.model(t).a_max, 1, k, UPPER)
                else:
                    add(lambda t, y: y[4] + seg.model(t).x_max, -1, k, LOWER)
                    add(lambda t, y: y[4] - seg.model(t).x_max, 1, k, UPPER)
            else:
                sign = held[k]

                def release(t, y, i=k, sign=sign):
                    m = seg.model(t)
                    return sign * m.static_forces(y)[i] + m.release_threshold[i]
                add(release, -1, k, FREE)
        return events, meaning

    # -- main loop ---------------------------------------------------------------

    def run(self, seg_source, t_start, t_end, y, held, sample_times=None,
            record=None, segment_ends=None):
        """Integrate from t_start to t_end.

        seg_source(t_a, t_b) gives the Segment for [t_a, t_b]; segment_ends
        are the corner times inside (t_start, t_end).  record(times, ys,
        seg, held) receives the dense-output samples.  Returns (y, held).
        """
        corners = [c for c in (segment_ends or []) if t_start < c < t_end]
        bounds = [t_start] + corners + [t_end]
        samples = np.asarray(sample_times if sample_times is not None else [])
        t, y = t_start, np.array(y, dtype=float)
        for t_a, t_b in zip(bounds[:-1], bounds[1:]):
            seg = seg_source(t_a, t_b)
            last_segment = t_b == t_end
            stuck = 0
            y, held = self.pin(seg, t, y, held)      # a corner: re-pin
            while t < t_b:
                m = seg.model(t)
                y, held = self.pin(seg, t, y, held)
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
        rates = (seg.stop_rate(SWASH, held[SWASH]),
                 seg.stop_rate(SPOOL, held[SPOOL]))

        def fun(t, y):
            self.rhs_calls += 1
            return seg.model(t).rhs(y, held, rates)

        try:
            sol = solve_ivp(fun, (t0, t1), y0, method="Radau",
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
        stops = m.stop_positions()
        held = list(held)
        tol = 1e-12 * max(1.0, abs(t_new))
        for (k, action), t_ev in zip(meaning, sol.t_events):
            if t_ev.size == 0 or abs(t_ev[-1] - t_new) > tol:
                continue
            pos, vel = POS_VEL[k]
            if action == FREE:
                held[k] = FREE
            else:
                held[k] = action
                y[pos] = stops[k][0] if action == LOWER else stops[k][1]
                y[vel] = seg.stop_rate(k, action)     # inelastic impact
        return tuple(held), y


# ---------------------------------------------------------------------------
# Steady state and full runs

def _initial_guess(m, layout):
    y = np.zeros(layout.n)
    y[0] = m.full_flow_pressure()
    y[2] = m.a_max
    if layout.cavitation:
        for i, p in ((layout.r_d, y[0]), (layout.r_c, 0.0), (layout.r_k, 0.0)):
            if i is not None:
                y[i] = m.equilibrium_air(p)
    return y


def _polish(m, y, held, scale, layout):
    """Newton (scipy's hybrid Powell method) on the free states of the rest
    problem, started from an integrated state that is nearly at rest."""
    fixed = set()
    for k, (pos, vel) in enumerate(POS_VEL):
        if held[k] != FREE:
            fixed.update((pos, vel))
    if layout.ripple:
        fixed.add(layout.theta)
    idx = [i for i in range(layout.n) if i not in fixed]

    def resid(z):
        yy = y.copy()
        yy[idx] = z * scale[idx]
        return m.rhs(yy, held)[idx] / scale[idx]

    sol = root(resid, y[idx] / scale[idx], method="hybr",
               options={"xtol": 1e-14})
    if not sol.success:
        return None
    out = y.copy()
    out[idx] = sol.x * scale[idx]
    if np.max(np.abs(resid(sol.x))) > 1e-9:
        return None
    # consistency: free coordinates inside their travel, held ones pressed on
    stops = m.stop_positions()
    forces = m.static_forces(out)
    for k, (pos, _) in enumerate(POS_VEL):
        lo, hi = stops[k]
        if held[k] == FREE and not (lo <= out[pos] <= hi):
            return None
        if held[k] != FREE and held[k] * forces[k] + m.release_threshold[k] < 0.0:
            return None
    return out


def steady_state(prm, rtol=1e-9, max_time=2.0, chunk=0.05, rest_tol=1e-7,
                 newton_after=0.2):
    """The operating point at constant parameters (mean pump flow: ripple off).

    Integrates to rest from full stroke (p_d at the full-flow pressure, every
    other pressure 0, released air at equilibrium) until every derivative,
    relative to its state's scale, is below rest_tol per second, then
    polishes the result by Newton on the free states.  A loop that does not
    come to rest (hunting) within newton_after seconds is given to Newton
    from where it is, with the stop modes it has and with both coordinates
    free: the equilibrium it hunts about, consistent with the stops.
    Returns (y, held, t_used).
    """
    layout = Layout(prm)
    m = Model(prm, layout, ripple=False)
    scale = state_scales(prm, layout)
    integ = Integrator(layout, rtol=rtol, atol_scale=scale)
    seg = Segment(0.0, prm, {}, layout, ripple=False)
    y, held = integ.pin(seg, 0.0, _initial_guess(m, layout), (FREE, FREE))
    t = 0.0
    at_rest = False
    while t < max_time:
        t_next = min(t + chunk, max_time)
        y, held = integ.run(lambda a, b: seg, t, t_next, y, held)
        t = t_next
        held = integ.release_now(m, y, held)
        rates = m.rhs(y, held) / scale
        if layout.ripple:
            rates[layout.theta] = 0.0
        if np.max(np.abs(rates)) < rest_tol:
            at_rest = True
            break
        if t >= newton_after - 1e-12:
            for modes in (held, (FREE, FREE)):
                yy = y.copy()
                for k, (pos, vel) in enumerate(POS_VEL):
                    if modes[k] == FREE:
                        yy[vel] = 0.0
                polished = _polish(m, yy, modes, scale, layout)
                if polished is not None:
                    y, held = polished, modes
                    if layout.ripple:
                        y[layout.theta] = 0.0
                    return y, held, t
    polished = _polish(m, y, held, scale, layout)
    if polished is not None:
        y = polished
    elif not at_rest:
        raise SolverError("no steady state: the loop did not come to rest in "
                          "%g s and Newton found no consistent equilibrium"
                          % max_time)
    if layout.ripple:
        y[layout.theta] = 0.0
    return y, held, t


class Diverged(Exception):
    """Raised by a sample check to stop a run early (mutation tests)."""


def simulate(case, rtol=1e-9, max_step=None, sample_check=None):
    """Run a parsed case; returns dict with 'columns' (name -> array) and
    solver statistics.  sample_check(i, row) may raise Diverged to stop."""
    wall0 = time.perf_counter()
    prm0 = case["parameters"]
    layout = Layout(prm0)
    duration, dt = case["duration"], case["dt"]
    n = int(math.floor(duration / dt + 1e-9)) + 1
    samples = np.arange(n) * dt
    t_end = max(duration, samples[-1])

    schedule = Schedule(prm0, case["events"])
    scale = state_scales(prm0, layout)
    if max_step is None:
        max_step = max(10.0 * dt, 1e-3)   # keeps event detection honest
    integ = Integrator(layout, rtol=rtol, atol_scale=scale, max_step=max_step)

    steady_time = None
    if case["initial_state"] is None:
        y0, held0, steady_time = steady_state(prm0, rtol=rtol)
    else:
        y0, held0 = np.array(case["initial_state"], dtype=float), (FREE, FREE)

    columns = TRACE_COLUMNS + layout.optional_columns
    out = np.empty((n, len(columns)))
    filled = np.zeros(n, dtype=bool)

    def record(ts, ys, seg, held_modes):
        idx = np.searchsorted(samples, ts)
        for j, (i, t) in enumerate(zip(idx, ts)):
            m = seg.model(t)
            # a held coordinate sits exactly on its stop (the dense output
            # can be off by round-off)
            y, _ = integ.pin(seg, t, ys[:, j], held_modes)
            e = m.outputs(y)
            row = [t, e["p_d"], e["p_c"], y[2], y[3], y[4], y[5],
                   e["q_g"] - e["q_leak"], e["q_load"], e["q_leak"],
                   e["q_pc"], m.s, m.p_set]
            for nm in layout.names[6:]:
                if nm == "p_k":
                    row.append(e["p_k"])
                else:
                    row.append(y[layout.names.index(nm)])
            out[i] = row
            filled[i] = True
            if sample_check is not None:
                sample_check(i, out[i])

    integ.run(lambda a, b: schedule.segment(a, b, layout), 0.0, t_end, y0,
              held0, sample_times=samples, record=record,
              segment_ends=schedule.corners())
    if not filled.all():
        raise SolverError("internal: %d samples not written"
                          % int((~filled).sum()))
    out[:, 0] = samples
    return {
        "columns": {name: out[:, j] for j, name in enumerate(columns)},
        "column_order": columns,
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
    order = result.get("column_order", list(cols))
    tmp = path + ".tmp"
    with open(tmp, "w", newline="", encoding="utf-8") as fh:
        wr = csv.writer(fh)
        wr.writerow(order)
        for i in range(len(cols["time_s"])):
            wr.writerow(["%.17g" % cols[c][i] for c in order])
    os.replace(tmp, path)


def main(argv=None):
    ap = argparse.ArgumentParser(
        description="Independent scipy reference of Swashtune's model.")
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
