#!/usr/bin/python3
"""Independent reference of a laminar-flow liquid line (pump -> load valve).

Written from the published methods alone, for checking the C++ distributed
discharge-line model:

- frequency domain: the exact dissipative transfer functions of a
  laminar-flow liquid line, F. T. Brown, "The transient response of fluid
  lines", J. Basic Eng. 84 (1962), and W. A. D'Souza, R. Oldenburger,
  "Dynamic response of fluid lines", J. Basic Eng. 86 (1964);
- time domain: the method of characteristics on a fixed grid (E. B. Wylie,
  V. L. Streeter, Fluid Transients in Systems, Prentice Hall 1993)
  with laminar friction, steady (Hagen-Poiseuille) plus W. Zielke's
  unsteady term, "Frequency-dependent friction in transient pipe flow",
  J. Basic Eng. 90 (1968): the full convolution of the flow's
  rate of change with Zielke's exact weighting function (his short-time
  series and his exponential series), not an exponential-sum fit of it.

Sign convention (all SI: Pa, m^3/s, Pa s/m^3):
    Q0 = volume flow INTO the line at x = 0 (pump end),
    QL = volume flow OUT of the line at x = L (valve end),
    P0 = Z11 Q0 + Z12 QL,   PL = Z21 Q0 + Z22 QL,
    Z11 = Zc coth(Gamma),  Z21 = Zc csch(Gamma),  Z12 = -Z21,  Z22 = -Z11,
with, for s = j w, A = pi r^2 and k = j sqrt(s r^2 / nu) (k^2 = -s r^2/nu),
    B(s) = 1 - 2 J1(k) / (k J0(k)),
    Gamma(s) = (s L / c) / sqrt(B),   Zc(s) = (rho c / A) / sqrt(B).
(P, Q are the amplitudes of the departures from a steady flow.  The line
with laminar friction is linear, so its end values obey these relations in
the time domain too, whatever the end conditions; the MOC solver below
converges to them, see test_line_reference.py.)  The Bessel functions are
taken as the ratio of scipy's exponentially scaled jve, which never
overflows (J0 itself would pass 1e308 at Im k ~ 710, here about 75 kHz).

Run `/usr/bin/python3 tests/python/line_reference.py` to rewrite the data
files in tests/data/line/ (about 20 s on one core).
"""

import argparse
import math
import os
import sys
import time

import numpy as np
from scipy.optimize import minimize_scalar
from scipy.special import jn_zeros, jve

# --------------------------------------------------------------------------
# The line of the data files (an invented discharge line).
LINE = dict(length=3.2, radius=0.010, wave_speed=1300.0, density=870.0,
            kin_viscosity=46e-6)
Q_RATED = 1.35e-3          # m^3/s, the steady flow of both transient cases
P_RESERVOIR = 100e5        # Pa, pump-end pressure of the "reservoir" case
P_VALVE_SOURCE = 50e5      # Pa, steady valve-end pressure of the "source" case
SAMPLE_DT = 0.05e-3        # s, output interval of the MOC files


# ==========================================================================
# Frequency domain: Brown (1962), D'Souza & Oldenburger (1964).
# ==========================================================================

def viscous_factor_b(s, radius, kin_viscosity):
    """Brown's (1962) B(s) = 1 - 2 J1(k) / (k J0(k)), k = j sqrt(s r^2/nu).

    Computed as B = -J2(k)/J0(k), the same quantity by the Bessel
    recurrence J0 + J2 = (2/k) J1 (Abramowitz & Stegun 9.1.27, from
    memory), which avoids
    the cancellation of 1 - (1 + k^2/8 + ...) at low frequency.  The ratio
    is taken of the exponentially scaled functions scipy.special.jve
    (J_n(k) exp(-|Im k|), the same factor in both), so nothing overflows:
    for s = j w, Im k = sqrt(w r^2 / (2 nu)), which passes 700 (where J0
    itself would overflow a double) at w r^2/nu ~ 1e6.  B is even in k,
    so the branch of the square root does not matter.
    """
    s = np.asarray(s, dtype=complex)
    k = 1j * np.sqrt(s * radius**2 / kin_viscosity)
    return -jve(2, k) / jve(0, k)


def propagation(freq_hz, length, radius, wave_speed, density, kin_viscosity):
    """Gamma(s) and Zc(s) of Brown (1962) at s = j 2 pi f."""
    f = np.asarray(freq_hz, dtype=float)
    if np.any(f <= 0.0):
        raise ValueError("frequencies must be > 0")
    s = 2j * np.pi * f
    area = math.pi * radius**2
    rb = np.sqrt(viscous_factor_b(s, radius, kin_viscosity))
    gamma = (s * length / wave_speed) / rb
    zc = (density * wave_speed / area) / rb
    return gamma, zc


def _coth_csch(g):
    """coth g and csch g for Re g > 0, through exp(-2g) (no overflow for a
    long or lossy line; expm1 keeps the small-g end accurate)."""
    e2 = np.exp(-2.0 * g)
    den = -np.expm1(-2.0 * g)            # 1 - exp(-2g)
    return (1.0 + e2) / den, 2.0 * np.exp(-g) / den


def laminar_line_impedance(freq_hz, length, radius, wave_speed, density,
                           kin_viscosity):
    """(Z11, Z21) of a laminar-flow line (Brown 1962; D'Souza & Oldenburger
    1964), complex arrays over freq_hz (Hz, > 0), Pa s/m^3.  Convention in
    the module docstring; Z12 = -Z21, Z22 = -Z11."""
    gamma, zc = propagation(freq_hz, length, radius, wave_speed, density,
                            kin_viscosity)
    coth, csch = _coth_csch(gamma)
    return zc * coth, zc * csch


def open_end_impedance(freq_hz, length, radius, wave_speed, density,
                       kin_viscosity):
    """Input impedance at x = 0 with the valve end at constant pressure
    (PL = 0): P0/Q0 = Z11 - Z12 Z21 / Z22 = Zc tanh(Gamma)."""
    gamma, zc = propagation(freq_hz, length, radius, wave_speed, density,
                            kin_viscosity)
    coth, _ = _coth_csch(gamma)
    return zc / coth


def peak_frequencies(length, radius, wave_speed, density, kin_viscosity,
                     n_modes=5, rel_tol=1e-7):
    """First n_modes resonance peaks of |Z11| (valve end blocked, QL = 0,
    half-wave modes near m c/(2L)) and of |Zc tanh Gamma| (valve end at
    constant pressure, quarter-wave modes near (2m-1) c/(4L)).

    Each peak: scipy's bounded Brent minimisation of -|Z| over the nominal
    lossless frequency +- 0.3 of the mode spacing c/(2L) (between the
    neighbouring anti-resonances, where |Z| has one maximum), to rel_tol
    in frequency.  Returns {"blocked": [(f, |Z|), ...], "open": [...]}.
    """
    args = (length, radius, wave_speed, density, kin_viscosity)
    spacing = wave_speed / (2.0 * length)
    out = {}
    for end, func, nominal in (
            ("blocked", lambda f: laminar_line_impedance(f, *args)[0],
             lambda m: m * spacing),
            ("open", lambda f: open_end_impedance(f, *args),
             lambda m: (m - 0.5) * spacing)):
        peaks = []
        for m in range(1, n_modes + 1):
            f0 = nominal(m)
            res = minimize_scalar(lambda f: -abs(func(f)),
                                  bounds=(f0 - 0.3 * spacing,
                                          f0 + 0.3 * spacing),
                                  method="bounded",
                                  options={"xatol": rel_tol * f0,
                                           "maxiter": 500})
            if not res.success:
                raise RuntimeError("peak search failed: %s" % res.message)
            peaks.append((float(res.x), float(-res.fun)))
        out[end] = peaks
    return out


# ==========================================================================
# Zielke's (1968) weighting function.
# ==========================================================================
# Dimensionless time tau = nu t / r^2.  The exact W has the Laplace
# transform (in tau) W^(S) = (I0(x)/I2(x) - 1)/4 - 2/S, x = sqrt(S), which
# follows from Brown's B (tests/python/test_line_reference.py checks the
# two branches below against it).  Zielke gives it as two series:
#   tau <= 0.02: W = sum_{j=1..6} m_j tau^((j-2)/2),
#   tau >  0.02: W = sum_{i=1..5} exp(-n_i tau),
# where n_i are the squares of the zeros of J2 (the coefficients of the
# exponentials are all 1: the residues of W^ at S = -j_{2,i}^2).
ZIELKE_SWITCH = 0.02      # Zielke's switch point (from memory)
# Short-time coefficients as printed by Zielke (1968) (from memory; the
# test derives them from the large-argument expansion of I0/I2).
ZIELKE_M = (0.282095, -1.25, 1.057855, 0.9375, 0.396696, -0.351563)
# Zielke's printed exponents (from memory); only used by the tests, which
# compare them with the squares of the zeros of J2 used below.
ZIELKE_N_PRINTED = (26.3744, 70.8493, 135.0198, 218.9216, 322.5544)


def zielke_exponents(n_terms=5):
    """n_i = j_{2,i}^2, squares of the zeros of J2 (scipy's jn_zeros)."""
    return jn_zeros(2, n_terms) ** 2


def zielke_w(tau, n_terms=5):
    """Zielke's (1968) weighting function W(tau), tau = nu t / r^2 > 0."""
    tau = np.asarray(tau, dtype=float)
    out = np.empty_like(tau)
    short = tau <= ZIELKE_SWITCH
    ts = tau[short]
    out[short] = sum(m * ts ** ((j - 2) / 2.0)
                     for j, m in enumerate(ZIELKE_M, start=1))
    tl = tau[~short]
    out[~short] = sum(np.exp(-n * tl) for n in zielke_exponents(n_terms))
    return out


def zielke_w_integral(tau, n_terms=5):
    """S(tau) = integral of W from 0 to tau (termwise, exact for the two
    series; the long-time part starts from S(0.02) of the short series)."""
    tau = np.asarray(tau, dtype=float)

    def short_int(t):
        # integral of m_j t^((j-2)/2) is m_j t^(j/2) / (j/2)
        return sum(m * t ** (j / 2.0) / (j / 2.0)
                   for j, m in enumerate(ZIELKE_M, start=1))

    out = np.empty_like(tau)
    short = tau <= ZIELKE_SWITCH
    out[short] = short_int(tau[short])
    tl = tau[~short]
    s_switch = short_int(ZIELKE_SWITCH)
    acc = np.full_like(tl, s_switch)
    for n in zielke_exponents(n_terms):
        acc += (np.exp(-n * ZIELKE_SWITCH) - np.exp(-n * tl)) / n
    out[~short] = acc
    return out


# ==========================================================================
# Method of characteristics (Wylie & Streeter 1993) with Zielke friction.
# ==========================================================================

def ramp(t, t_start, t_end, v_start, v_end):
    """Piecewise-linear valve opening: v_start until t_start, linear to
    v_end at t_end, then v_end."""
    if t <= t_start:
        return v_start
    if t >= t_end:
        return v_end
    return v_start + (v_end - v_start) * (t - t_start) / (t_end - t_start)


def moc_run(length, radius, wave_speed, density, kin_viscosity, n_reaches,
            t_end, upstream, downstream, q_steady, p_pump_steady,
            frictionless=False, unsteady=True, n_terms=5):
    """Fixed-grid method of characteristics for one uniform line.

    Grid: N = n_reaches reaches, dx = L/N, dt = dx/c (Courant number 1, no
    interpolation; Wylie & Streeter 1993).  Along C+ / C-
    (dx/dt = +-c), in pressure p and volume flow Q:
        dp +- (rho c / A) dQ +- rho c F dt = 0,
    with the friction term per unit mass (Zielke 1968)
        F = 8 nu Q / (A r^2) + (4 nu / (A r^2)) int_0^t dQ/du W(tau(t-u)) du.
    Both friction terms are linear in Q, so they are taken as the average of
    the two ends of each characteristic (the second-order, trapezoidal
    form of the friction integral along a characteristic, as Wylie &
    Streeter 1993 discuss for friction) and solved implicitly, exactly.
    The convolution assumes Q piecewise linear in time at each node:
        Y_i^n = sum_{m=1..n} (Q_i^m - Q_i^{m-1}) wbar_{n-m},
        wbar_j = (S((j+1) dtau) - S(j dtau)) / dtau,
    the mean of W over each step (S its integral), which handles the
    tau^(-1/2) singularity of W exactly.  The full history is kept (no
    exponential-sum approximation).

    Accuracy: exact (to rounding) when frictionless; with friction the
    change on doubling N falls about 2^1.5 per doubling at the wave fronts
    (tests) provided the corners of the valve motion fall on grid times:
    2 ms and 3 ms do for N = 160 and 320 (steps 260 and 390 at N = 320),
    not for N = 40 or 80.  A corner between grid times breaks the
    piecewise-linear Q of the last step, whose weight wbar_0 grows as
    dt^(-1/2), and gives a local O(dt^(1/2)) error.

    upstream:   ("pressure", p) or ("flow", q) at x = 0 (constant).
    downstream: ("valve", cda, tau_of_t) for Q = cda tau sign(p) sqrt(2|p|/rho)
                into a tank at 0 Pa gauge, or ("flow", q_of_t).
    The run starts from the exact steady state: uniform q_steady, linear
    laminar pressure drop from p_pump_steady, zero friction history.
    frictionless: no friction at all; unsteady=False: steady term only.

    Returns a dict of arrays at every step: t, p_pump, p_valve, q_pump,
    q_valve, and the grid's dx and dt.
    """
    n = int(n_reaches)
    area = math.pi * radius**2
    mu = density * kin_viscosity
    dx = length / n
    dt = dx / wave_speed
    n_steps = int(math.ceil(t_end / dt - 1e-9))
    b = density * wave_speed / area                 # line impedance
    r_steady = 8.0 * mu / (math.pi * radius**4)     # Pa s/m^4 (Hagen-Poiseuille)
    r_unsteady = 4.0 * mu / (math.pi * radius**4)
    alpha = 0.0 if frictionless else 0.5 * r_steady * dx
    use_conv = (not frictionless) and unsteady
    beta = 0.5 * r_unsteady * dx if use_conv else 0.0

    x = np.linspace(0.0, length, n + 1)
    p = p_pump_steady - (0.0 if frictionless else r_steady) * q_steady * x
    q = np.full(n + 1, float(q_steady))
    y = np.zeros(n + 1)                              # convolution, current step

    if use_conv:
        dtau = kin_viscosity * dt / radius**2
        s_int = zielke_w_integral(np.arange(n_steps + 1) * dtau, n_terms)
        wbar = np.diff(s_int) / dtau                 # wbar_0 .. wbar_{n_steps-1}
        w0 = wbar[0]
        wrev = wbar[::-1].copy()                     # wrev[K-1-j] = wbar_j
        kk = len(wrev)
        hist = np.zeros((n_steps + 1, n + 1))       # hist[m] = Q^m - Q^(m-1)
    else:
        w0 = 0.0
    bt = b + alpha + beta * w0

    out = np.empty((n_steps + 1, 5))
    out[0] = (0.0, p[0], p[n], q[0], q[n])
    up_kind, up_val = upstream
    down_kind = downstream[0]
    for step in range(1, n_steps + 1):
        t = step * dt
        if use_conv:
            if step > 1:
                yh = wrev[kk - step:kk - 1] @ hist[1:step]
            else:
                yh = np.zeros(n + 1)
            h = yh - w0 * q                          # Y_new = h + w0 Q_new
        else:
            h = np.zeros(n + 1)
        # C+ from node i-1, C- from node i+1 (values of the previous step)
        cp = p[:-1] + (b - alpha) * q[:-1] - beta * y[:-1] - beta * h[1:]
        cm = p[1:] - (b - alpha) * q[1:] + beta * y[1:] + beta * h[:-1]
        p_new = np.empty(n + 1)
        q_new = np.empty(n + 1)
        p_new[1:-1] = 0.5 * (cp[:-1] + cm[1:])
        q_new[1:-1] = (cp[:-1] - cm[1:]) / (2.0 * bt)
        # x = 0: C- only
        if up_kind == "pressure":
            p_new[0] = up_val
            q_new[0] = (up_val - cm[0]) / bt
        elif up_kind == "flow":
            q_new[0] = up_val
            p_new[0] = cm[0] + bt * up_val
        else:
            raise ValueError("upstream kind %r" % up_kind)
        # x = L: C+ only, p = CP - bt Q
        c_plus = cp[-1]
        if down_kind == "valve":
            _, cda, tau_of_t = downstream
            kv = cda * tau_of_t(t) * math.sqrt(2.0 / density)
            if kv <= 0.0:
                ql = 0.0
            else:
                # Q = kv sign(p) sqrt|p| with p = CP - bt Q: the root of
                # Q^2 + kv^2 bt Q - kv^2 CP = 0 of the sign of CP, in the
                # form without cancellation.
                ql = math.copysign(
                    2.0 * abs(c_plus)
                    / (bt + math.sqrt(bt * bt + 4.0 * abs(c_plus) / kv**2)),
                    c_plus)
        elif down_kind == "flow":
            ql = downstream[1](t)
        else:
            raise ValueError("downstream kind %r" % down_kind)
        q_new[-1] = ql
        p_new[-1] = c_plus - bt * ql
        if use_conv:
            hist[step] = q_new - q
            y = h + w0 * q_new
        p, q = p_new, q_new
        out[step] = (t, p[0], p[n], q[0], q[n])
    return dict(t=out[:, 0], p_pump=out[:, 1], p_valve=out[:, 2],
                q_pump=out[:, 3], q_valve=out[:, 4], dx=dx, dt=dt)


def hagen_poiseuille_resistance(length, radius, density, kin_viscosity):
    """8 mu L / (pi r^4), Pa s/m^3."""
    return 8.0 * density * kin_viscosity * length / (math.pi * radius**4)


def valve_cda(q, p_valve, density):
    """CdA of the valve that passes q at p_valve (gauge, to 0 Pa)."""
    return q / math.sqrt(2.0 * p_valve / density)


def reservoir_case(n_reaches, t_end=40e-3, frictionless=False, unsteady=True,
                   line=None, n_terms=5):
    """x = 0 at 100e5 Pa, valve at x = L closing from 2 ms to 3 ms; CdA set
    for 1.35e-3 m^3/s with the steady laminar drop (none if frictionless).
    Returns (run dict, inputs dict)."""
    ln = dict(LINE if line is None else line)
    drop = 0.0 if frictionless else hagen_poiseuille_resistance(
        ln["length"], ln["radius"], ln["density"], ln["kin_viscosity"]) * Q_RATED
    cda = valve_cda(Q_RATED, P_RESERVOIR - drop, ln["density"])
    run = moc_run(n_reaches=n_reaches, t_end=t_end,
                  upstream=("pressure", P_RESERVOIR),
                  downstream=("valve", cda,
                              lambda t: ramp(t, 2e-3, 3e-3, 1.0, 0.0)),
                  q_steady=Q_RATED, p_pump_steady=P_RESERVOIR,
                  frictionless=frictionless, unsteady=unsteady,
                  n_terms=n_terms, **ln)
    inputs = dict(ln, n_reaches=n_reaches, t_end=t_end, cda=cda,
                  q_steady=Q_RATED, p_pump_steady=P_RESERVOIR,
                  p_valve_steady=P_RESERVOIR - drop)
    return run, inputs


def source_case(n_reaches, t_end=60e-3, frictionless=False, unsteady=True,
                line=None, n_terms=5):
    """Constant flow 1.35e-3 m^3/s into x = 0; valve at x = L, CdA for a
    steady 50e5 Pa, closing to half from 2 ms to 3 ms."""
    ln = dict(LINE if line is None else line)
    drop = 0.0 if frictionless else hagen_poiseuille_resistance(
        ln["length"], ln["radius"], ln["density"], ln["kin_viscosity"]) * Q_RATED
    cda = valve_cda(Q_RATED, P_VALVE_SOURCE, ln["density"])
    run = moc_run(n_reaches=n_reaches, t_end=t_end,
                  upstream=("flow", Q_RATED),
                  downstream=("valve", cda,
                              lambda t: ramp(t, 2e-3, 3e-3, 1.0, 0.5)),
                  q_steady=Q_RATED, p_pump_steady=P_VALVE_SOURCE + drop,
                  frictionless=frictionless, unsteady=unsteady,
                  n_terms=n_terms, **ln)
    inputs = dict(ln, n_reaches=n_reaches, t_end=t_end, cda=cda,
                  q_steady=Q_RATED, p_pump_steady=P_VALVE_SOURCE + drop,
                  p_valve_steady=P_VALVE_SOURCE)
    return run, inputs


def resample(run, t_end, sample_dt=SAMPLE_DT):
    """Linear interpolation of the run's end values onto 0, dt, ..., t_end
    (dt = dx/c is not a divisor of the output interval)."""
    n_out = int(round(t_end / sample_dt))
    ts = np.arange(n_out + 1) * sample_dt
    cols = [ts] + [np.interp(ts, run["t"], run[k])
                   for k in ("p_pump", "p_valve", "q_pump", "q_valve")]
    return np.column_stack(cols)


# ==========================================================================
# Data files.
# ==========================================================================

def _default_out_dir():
    return os.path.join(os.path.dirname(os.path.abspath(__file__)),
                        os.pardir, "data", "line")


def _write_atomic(path, text):
    tmp = path + ".tmp"
    with open(tmp, "w", encoding="ascii", newline="\n") as fh:
        fh.write(text)
    os.replace(tmp, path)


def _line_comment(ln):
    return ("# line: L = %g m, r = %g m, c = %g m/s, rho = %g kg/m^3, "
            "nu = %g m^2/s (laminar)\n"
            % (ln["length"], ln["radius"], ln["wave_speed"], ln["density"],
               ln["kin_viscosity"]))


SCRIPT = "tests/python/line_reference.py"


def write_impedance(out_dir):
    freqs = np.logspace(math.log10(5.0), math.log10(1300.0), 600)
    z11, z21 = laminar_line_impedance(freqs, **LINE)
    lines = ["# Brown (1962) / D'Souza & Oldenburger (1964) exact laminar "
             "line transfer functions\n",
             _line_comment(LINE),
             "# P0 = Z11 Q0 + Z12 QL, PL = Z21 Q0 + Z22 QL; Q0 into the line "
             "at the pump end, QL out at the valve end;\n",
             "# Z11 = Zc coth G, Z21 = Zc csch G, Z12 = -Z21, Z22 = -Z11; "
             "SI units (Pa s/m^3)\n",
             "# written by %s\n" % SCRIPT,
             "f_Hz,Z11_re,Z11_im,Z21_re,Z21_im\n"]
    for f, a, c in zip(freqs, z11, z21):
        lines.append("%.17g,%.17g,%.17g,%.17g,%.17g\n"
                     % (f, a.real, a.imag, c.real, c.imag))
    _write_atomic(os.path.join(out_dir, "brown-impedance.csv"), "".join(lines))


def write_peaks(out_dir):
    peaks = peak_frequencies(**LINE)
    lines = ["# resonance peaks of |Z11| (blocked: valve end closed, QL = 0) "
             "and |Zc tanh G| (open: valve end at constant pressure)\n",
             _line_comment(LINE),
             "# Brown (1962) impedance; bounded Brent search, 1e-7 relative "
             "in frequency; magnitude in Pa s/m^3\n",
             "# written by %s\n" % SCRIPT,
             "end,mode,f_Hz,magnitude\n"]
    for end in ("blocked", "open"):
        for m, (f, mag) in enumerate(peaks[end], start=1):
            lines.append("%s,%d,%.17g,%.17g\n" % (end, m, f, mag))
    _write_atomic(os.path.join(out_dir, "brown-peaks.csv"), "".join(lines))
    return peaks


def write_moc(out_dir, name, title, run, inputs, friction_text, closure_text,
              upstream_text):
    table = resample(run, inputs["t_end"])
    lines = ["# %s\n" % title,
             "# method of characteristics (Wylie & Streeter 1993), fixed grid "
             "N = %d reaches, dx = %.17g m, dt = dx/c = %.17g s\n"
             % (inputs["n_reaches"], run["dx"], run["dt"]),
             "# friction: %s\n" % friction_text,
             _line_comment(inputs),
             "# pump end (x = 0): %s\n" % upstream_text,
             "# valve end (x = L): Q = CdA tau(t) sign(p) sqrt(2 |p| / rho) to "
             "a tank at 0 Pa gauge, CdA = %.17g m^2; %s\n"
             % (inputs["cda"], closure_text),
             "# initial exact steady state: Q = %.17g m^3/s, p_pump = %.17g Pa, "
             "p_valve = %.17g Pa, zero friction history\n"
             % (inputs["q_steady"], inputs["p_pump_steady"],
                inputs["p_valve_steady"]),
             "# samples every %g s, linearly interpolated between grid steps; "
             "run to %g s\n" % (SAMPLE_DT, inputs["t_end"]),
             "# written by %s\n" % SCRIPT,
             "t_s,p_pump_Pa,p_valve_Pa,q_pump_m3s,q_valve_m3s\n"]
    for row in table:
        lines.append("%.17g,%.17g,%.17g,%.17g,%.17g\n" % tuple(row))
    _write_atomic(os.path.join(out_dir, name), "".join(lines))


ZIELKE_TEXT = ("steady Hagen-Poiseuille plus Zielke (1968) unsteady term, full "
               "convolution with his exact W (short-time series for "
               "tau <= 0.02, 5 exponentials exp(-j_{2,i}^2 tau) above)")


def main(argv=None):
    ap = argparse.ArgumentParser(description="Write tests/data/line/*.csv.")
    ap.add_argument("--out-dir", default=_default_out_dir())
    ap.add_argument("--reaches", type=int, default=320)
    args = ap.parse_args(argv)
    out_dir = os.path.normpath(args.out_dir)
    os.makedirs(out_dir, exist_ok=True)
    t0 = time.time()
    write_impedance(out_dir)
    peaks = write_peaks(out_dir)
    for end in ("blocked", "open"):
        for m, (f, mag) in enumerate(peaks[end], start=1):
            print("peak %-7s mode %d: %.6f Hz, |Z| = %.6g Pa s/m^3"
                  % (end, m, f, mag))
    print("impedance and peaks: %.1f s" % (time.time() - t0))

    res_close = "tau = 1 until 2 ms, linear to 0 at 3 ms, then 0"
    src_close = "tau = 1 until 2 ms, linear to 0.5 at 3 ms, then 0.5"
    for name, title, builder, kw, fr_text, close, up in (
            ("moc-reservoir.csv", "reservoir case, Zielke friction",
             reservoir_case, {}, ZIELKE_TEXT, res_close,
             "constant pressure %g Pa" % P_RESERVOIR),
            ("moc-reservoir-lossless.csv", "reservoir case, frictionless",
             reservoir_case, {"frictionless": True}, "none (frictionless)",
             res_close, "constant pressure %g Pa" % P_RESERVOIR),
            ("moc-source.csv", "source case, Zielke friction",
             source_case, {}, ZIELKE_TEXT, src_close,
             "constant flow %g m^3/s" % Q_RATED)):
        t1 = time.time()
        run, inputs = builder(args.reaches, **kw)
        write_moc(out_dir, name, title, run, inputs, fr_text, close, up)
        print("%s: CdA = %.10g m^2, %.1f s" % (name, inputs["cda"],
                                               time.time() - t1))
    print("total %.1f s" % (time.time() - t0))
    return 0


if __name__ == "__main__":
    sys.exit(main())
