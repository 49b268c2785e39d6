#!/usr/bin/python3
"""Independent cross-check of `swashtune-cli stability SCENARIO --json`.

    check_stability.py STABILITY.json [--rel-tol 1e-3]

From "linear_model" (the open loop x' = A x + B u, y = C x, in SI units;
interfaces.md "Stability v2": u replaces the swash angle in the pump's
tangent law, y is the swash angle) this recomputes, with numpy/scipy only
and by other methods than the C++ code's frequency grid:

- the eigenvalues of the closed system A + B C, the dominant pair, `stable`,
  and the numbers of unstable poles of A and of A + B C (numpy eigvals);
- every gain crossover |L(jw)| = 1 of L(s) = -C (sI - A)^-1 B as the
  imaginary-axis eigenvalues of the Hamiltonian [[A, B B^T], [-C^T C, -A^T]]
  (S. Boyd, V. Balakrishnan, P. Kabamba, "A bisection method for computing
  the H-infinity norm of a transfer matrix", Math. Control Signals Systems
  2, 1989; N. A. Bruinsma, M. Steinbuch, Systems & Control Letters 14,
  1990), each polished by Brent's method;
- every phase crossover (L(jw) on the negative real axis) as an
  imaginary-axis transmission zero of G(s) - G(-s) (G(jw) - G(-jw) =
  2j Im G(jw)): generalised eigenvalues of its Rosenbrock system pencil
  (H. H. Rosenbrock, State-Space and Multivariable Theory, 1970; scipy's
  QZ), polished by Brent's method;
- the modulus margin min |1 + L(jw)| on 0.1 Hz..100 kHz (a numpy grid of
  4000 points a decade, then scipy's bounded Brent minimisation);
- the Nyquist criterion (H. Nyquist, "Regeneration theory", Bell Syst. Tech.
  J. 11, 1932): clockwise encirclements of -1 by L(jw) over the whole
  imaginary axis, counted by the argument principle on a dense grid, must
  equal closed-loop minus open-loop unstable poles;

and compares them with what the file reports, including the rules of
`applies` (false whenever the opened loop has unstable poles or the loop is
inactive).

Tolerances: eigenvalues (paired one to one, nearest first) within rel-tol of
their magnitude; gain/phase margins within 0.05 dB / 0.05 deg or rel-tol;
frequencies and the modulus margin within rel-tol; damping ratio within
rel-tol (absolute, it is already a ratio); a null must be matched by a null;
pole counts and crossing counts exactly.

Exit status: 0 pass, 1 mismatch, 2 bad input.
"""

import argparse
import json
import math
import sys

import numpy as np
from scipy import linalg, optimize

PASS, FAIL, BAD_INPUT = 0, 1, 2
F_LO, F_HI = 0.1, 1.0e5        # Hz: crossings outside this band give null
PER_DECADE = 4000              # grid points per decade; each step is 0.06 %
                               # in frequency, so even a lightly damped
                               # resonance turns the phase < 180 deg per step
MARGIN_ABS = {"gain_margin_dB": 0.05, "phase_margin_deg": 0.05}
FREQUENCIES = ("crossover_frequency_Hz", "phase_crossover_frequency_Hz")
SUMMARY_KEYS = ("gain_margin_dB", "phase_margin_deg") + FREQUENCIES + (
    "modulus_margin", "modulus_margin_frequency_Hz")
# interfaces.md, "Stability v2": exactly these keys in "loop"
LOOP_KEYS = ("break",) + SUMMARY_KEYS + (
    "gain_crossovers", "phase_crossovers", "open_loop_unstable_poles",
    "closed_loop_unstable_poles", "applies", "note")


class InputError(Exception):
    """The file cannot be checked (unreadable, not the expected shape)."""


# ---------------------------------------------------------------- input

def _number(x, what, allow_null=False):
    if x is None and allow_null:
        return None
    if isinstance(x, bool) or not isinstance(x, (int, float)) \
            or not math.isfinite(x):
        raise InputError(f"{what} must be a finite number"
                         + (" or null" if allow_null else "")
                         + f", got {x!r}")
    return float(x)


def _array(x, what, shape):
    try:
        a = np.array(x, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"{what} is not an array of numbers") from None
    if a.shape != shape:
        raise InputError(f"{what} has shape {a.shape}, expected {shape}")
    if not np.all(np.isfinite(a)):
        raise InputError(f"{what} holds a non-finite value")
    return a


def read_json(path):
    try:
        with open(path, encoding="utf-8") as fh:
            doc = json.load(fh)
    except OSError as e:
        raise InputError(f"cannot read {path}: {e.strerror}") from None
    except ValueError as e:     # JSONDecodeError and UnicodeDecodeError
        raise InputError(f"{path} is not valid JSON: {e}") from None
    if not isinstance(doc, dict):
        raise InputError(f"{path}: top level is not a JSON object")
    return doc


def linear_model(doc):
    """(A, B, C) as float arrays from doc["linear_model"]."""
    lm = doc.get("linear_model")
    if not isinstance(lm, dict):
        raise InputError("no 'linear_model' object")
    for key in ("A", "B", "C"):
        if key not in lm:
            raise InputError(f"linear_model has no '{key}'")
    rows = lm["A"]
    n = len(rows) if isinstance(rows, list) else 0
    if n < 1:
        raise InputError("linear_model.A must be a non-empty list of rows")
    A = _array(rows, "linear_model.A", (n, n))
    B = _array(lm["B"], "linear_model.B", (n,))
    C = _array(lm["C"], "linear_model.C", (n,))
    states = lm.get("states")
    if states is not None and (not isinstance(states, list)
                               or len(states) != n):
        raise InputError(f"linear_model.states must list {n} names")
    return A, B, C


def reported(doc):
    """The reported results, validated, in the shape analyse() returns."""
    out = {}
    eig = doc.get("eigenvalues")
    if not isinstance(eig, list):
        raise InputError("'eigenvalues' must be a list")
    try:
        out["eigenvalues"] = np.array(
            [complex(_number(e["re"], "eigenvalue re"),
                     _number(e["im"], "eigenvalue im")) for e in eig])
    except (TypeError, KeyError):
        raise InputError("each eigenvalue must be {\"re\": .., \"im\": ..}") \
            from None

    if "dominant" not in doc:
        raise InputError("no 'dominant' (it may be null)")
    dom = doc["dominant"]
    if dom is not None:
        if not isinstance(dom, dict):
            raise InputError("'dominant' must be an object or null")
        for key in ("frequency_Hz", "damping_ratio"):
            if key not in dom:
                raise InputError(f"dominant has no '{key}'")
        # natural_frequency_Hz is not in every version of the interface
        dom = {k: _number(v, f"dominant.{k}") for k, v in dom.items()
               if k in ("frequency_Hz", "damping_ratio",
                        "natural_frequency_Hz")}
    out["dominant"] = dom

    loop = doc.get("loop")
    if not isinstance(loop, dict):
        raise InputError("no 'loop' object")
    missing = [k for k in LOOP_KEYS if k not in loop]
    if missing:
        raise InputError(f"loop has no {', '.join(repr(k) for k in missing)}")
    extra = sorted(set(loop) - set(LOOP_KEYS))
    if extra:
        raise InputError(f"loop has keys interfaces.md does not define: "
                         f"{', '.join(extra)}")
    out["loop"] = {k: _number(loop[k], f"loop.{k}", True)
                   for k in SUMMARY_KEYS}
    for key, margin in (("gain_crossovers", "phase_margin_deg"),
                        ("phase_crossovers", "gain_margin_dB")):
        items = loop[key]
        if not isinstance(items, list):
            raise InputError(f"loop.{key} must be a list")
        try:
            out["loop"][key] = [
                (_number(c["frequency_Hz"], f"loop.{key} frequency_Hz"),
                 _number(c[margin], f"loop.{key} {margin}")) for c in items]
        except (TypeError, KeyError):
            raise InputError(f"each of loop.{key} must be "
                             f"{{\"frequency_Hz\": .., \"{margin}\": ..}}") \
                from None
    for key in ("open_loop_unstable_poles", "closed_loop_unstable_poles"):
        v = loop[key]
        if isinstance(v, bool) or not isinstance(v, int) or v < 0:
            raise InputError(f"loop.{key} must be a whole number >= 0")
        out["loop"][key] = v
    if not isinstance(loop["applies"], bool):
        raise InputError("loop.applies must be true or false")
    if not isinstance(loop["note"], str):
        raise InputError("loop.note must be a string")
    out["loop"]["applies"] = loop["applies"]
    out["loop"]["note"] = loop["note"]

    if not isinstance(doc.get("stable"), bool):
        raise InputError("'stable' must be true or false")
    out["stable"] = doc["stable"]
    return out


# ---------------------------------------------------------------- analysis

def balance(A, B, C):
    """Balance [[A, B], [C, 0]] by a diagonal similarity (powers of 2, so
    exact).  Pressures ~1e7 Pa next to positions ~1e-3 m give entries over
    twenty decades apart; balancing evens them so the complex solves below
    lose no accuracy.  G(s) and the eigenvalues are unchanged by it."""
    n = len(A)
    M = np.zeros((n + 1, n + 1))
    M[:n, :n], M[:n, n], M[n, :n] = A, B, C
    _, (d, _) = linalg.matrix_balance(M, permute=False, separate=True)
    t, su = d[:n], d[n]
    return A * t / t[:, None], B * su / t, C * t / su


def closed_loop_eigenvalues(A, B, C):
    """Eigenvalues of A + B C (u = y closes the loop, hence the plus)."""
    M, _ = linalg.matrix_balance(A + np.outer(B, C))
    return np.linalg.eigvals(M)


def loop_response(A, B, C, f_hz):
    """L(j 2 pi f) = -C (j w I - A)^-1 B at each frequency (a solve per
    frequency, never an inverse).  Pass a balanced realisation."""
    w = 2.0 * np.pi * np.atleast_1d(np.asarray(f_hz, dtype=float))
    n = len(A)
    M = 1j * w[:, None, None] * np.eye(n) - A
    rhs = np.broadcast_to(B.astype(complex), (len(w), n))[..., None]
    return -(np.linalg.solve(M, rhs)[..., 0] @ C)


def _root(fun, f0, f1):
    a, b = fun(f0), fun(f1)
    if a == 0.0:
        return f0
    if b == 0.0:
        return f1
    return optimize.brentq(fun, f0, f1, xtol=1e-14, rtol=1e-13)


def _polish(fun, f):
    """Brent's method on fun around a candidate frequency f: the smallest
    bracket f (1 -+ d) with a sign change, d from 1e-7 up to 2 %; None when
    fun keeps its sign (a touch, not a crossing)."""
    d = 1e-7
    while d <= 0.02:
        lo, hi = f * (1 - d), f * (1 + d)
        if (fun(lo) < 0) != (fun(hi) < 0):
            return _root(fun, lo, hi)
        d *= 4
    return None


def _axis_points(eigs, lo_hz, hi_hz):
    """Frequencies (Hz) of the eigenvalues on the positive imaginary axis
    (|Re| tiny against |lambda|) within [lo_hz, hi_hz], a little widened."""
    out = []
    for l in eigs:
        if not np.isfinite(l) or l.imag <= 0:
            continue
        if abs(l.real) <= 1e-6 * abs(l):
            f = l.imag / (2 * math.pi)
            if lo_hz * 0.999 <= f <= hi_hz * 1.001:
                out.append(f)
    return sorted(out)


def _dedupe(freqs):
    out = []
    for f in sorted(freqs):
        if not out or f > out[-1] * (1 + 1e-9):
            out.append(f)
    return out


def gain_crossovers(Ab, Bb, Cb):
    """Every f in F_LO..F_HI with |L(j 2 pi f)| = 1: jw is then an
    eigenvalue of the Hamiltonian [[A, B B^T], [-C^T C, -A^T]] (Boyd,
    Balakrishnan & Kabamba 1989, with D = 0 and gamma = 1)."""
    H = np.block([[Ab, np.outer(Bb, Bb)], [-np.outer(Cb, Cb), -Ab.T]])
    M, _ = linalg.matrix_balance(H)
    def g(x):
        return math.log(abs(loop_response(Ab, Bb, Cb, x)[0]))
    found = [_polish(g, f) for f in _axis_points(np.linalg.eigvals(M),
                                                  F_LO, F_HI)]
    return _dedupe(f for f in found if f is not None and F_LO <= f <= F_HI)


def phase_crossovers(Ab, Bb, Cb):
    """Every f in F_LO..F_HI with L(j 2 pi f) real and negative: jw is then
    a transmission zero of G(s) - G(-s) = [C C] (sI - diag(A, -A))^-1 [B; B]
    (since G(-s) = -C (sI + A)^-1 B), i.e. a finite generalised eigenvalue
    of the pencil ([[Ae, Be], [Ce, 0]], [[I, 0], [0, 0]])."""
    n = len(Ab)
    Ae = np.block([[Ab, np.zeros((n, n))], [np.zeros((n, n)), -Ab]])
    Be = np.concatenate([Bb, Bb])
    Ce = np.concatenate([Cb, Cb])
    P = np.zeros((2 * n + 1, 2 * n + 1))
    P[:2 * n, :2 * n], P[:2 * n, 2 * n], P[2 * n, :2 * n] = Ae, Be, Ce
    E = np.zeros_like(P)
    E[:2 * n, :2 * n] = np.eye(2 * n)
    zeros = linalg.eig(P, E, right=False)
    def im(x):
        return loop_response(Ab, Bb, Cb, x)[0].imag
    out = []
    for f in _axis_points(zeros, F_LO, F_HI):
        r = _polish(im, f)
        if r is not None and F_LO <= r <= F_HI and \
                loop_response(Ab, Bb, Cb, r)[0].real < 0:
            out.append(r)
    return _dedupe(out)


def modulus_margin(Ab, Bb, Cb):
    """min |1 + L(jw)| over F_LO..F_HI and where: a 4000-a-decade grid, then
    scipy's bounded Brent minimisation in log frequency between the grid
    neighbours of the smallest value."""
    f = np.logspace(math.log10(F_LO), math.log10(F_HI),
                    int(round(PER_DECADE * math.log10(F_HI / F_LO))) + 1)
    d = np.abs(1.0 + loop_response(Ab, Bb, Cb, f))
    i = int(np.argmin(d))
    lo, hi = math.log(f[max(i - 1, 0)]), math.log(f[min(i + 1, len(f) - 1)])
    res = optimize.minimize_scalar(
        lambda x: abs(1.0 + loop_response(Ab, Bb, Cb, math.exp(x))[0]),
        bounds=(lo, hi), method="bounded", options={"xatol": 1e-12})
    if res.fun < d[i]:
        return float(res.fun), math.exp(res.x)
    return float(d[i]), float(f[i])


def nyquist_encirclements(Ab, Bb, Cb, eig_scale):
    """Clockwise encirclements of -1 by L(jw), w over the whole imaginary
    axis (argument principle; L strictly proper, so the large arc adds
    nothing): the change of arg(1 + L) along a grid from far below to far
    above every pole (eig_scale = (smallest, largest) |pole|), doubled for
    the mirror half L(-jw) = conj L(jw).  None when a grid step turns more
    than 90 deg or 1 + L comes too near 0 to count."""
    lo, hi = eig_scale
    w = np.concatenate([[0.0], np.logspace(math.log10(1e-4 * lo),
                                           math.log10(1e5 * hi),
                                           int(4000 * math.log10(1e9 * hi
                                                                 / lo)))])
    z = 1.0 + loop_response(Ab, Bb, Cb, w / (2 * math.pi))
    steps = np.angle(z[1:] / z[:-1])
    if np.max(np.abs(steps)) > math.pi / 2 or np.min(np.abs(z)) < 1e-9:
        return None
    total = 2.0 * np.sum(steps) + np.angle(np.conj(z[-1]) / z[-1])
    turns = total / (2 * math.pi)
    if abs(turns - round(turns)) > 0.05:
        return None
    return -int(round(turns))


def loop_margins(A, B, C):
    """Every gain and phase crossover in F_LO..F_HI, the smallest of each
    (signed) with its frequency, and the modulus margin; None for what does
    not exist.  C = 0 (loop inactive) gives nulls and empty lists."""
    out = dict.fromkeys(SUMMARY_KEYS)
    out["gain_crossovers"], out["phase_crossovers"] = [], []
    if not np.any(C) or not np.any(B):
        return out
    Ab, Bb, Cb = balance(A, B, C)
    def L_at(x):
        return loop_response(Ab, Bb, Cb, x)[0]
    for fc in gain_crossovers(Ab, Bb, Cb):
        pm = 180.0 + math.degrees(np.angle(L_at(fc)))
        out["gain_crossovers"].append((fc, pm - 360.0 if pm > 180.0 else pm))
    for f180 in phase_crossovers(Ab, Bb, Cb):
        out["phase_crossovers"].append(
            (f180, -20.0 * math.log10(abs(L_at(f180)))))
    if out["gain_crossovers"]:
        fc, pm = min(out["gain_crossovers"], key=lambda c: c[1])
        out["crossover_frequency_Hz"], out["phase_margin_deg"] = fc, pm
    if out["phase_crossovers"]:
        f180, gm = min(out["phase_crossovers"], key=lambda c: c[1])
        out["phase_crossover_frequency_Hz"], out["gain_margin_dB"] = f180, gm
    out["modulus_margin"], out["modulus_margin_frequency_Hz"] = \
        modulus_margin(Ab, Bb, Cb)
    return out


def oscillatory_pairs(eigs):
    """One member (Im > 0) of each complex pair, least damped first, as
    (eigenvalue, zeta).  |Im| below 1e-9 |lambda| counts as real (round-off
    on a real eigenvalue)."""
    pairs = [(l, -l.real / abs(l)) for l in eigs
             if l.imag > 1e-9 * abs(l)]
    return sorted(pairs, key=lambda p: p[1])


def mode_summary(l):
    return {"frequency_Hz": abs(l.imag) / (2 * math.pi),
            "damping_ratio": -l.real / abs(l),
            "natural_frequency_Hz": abs(l) / (2 * math.pi)}


def unstable_count(eigs):
    return int(np.sum(eigs.real >= 0.0))


def analyse(A, B, C):
    """Everything the check recomputes, in the shape of the CLI's JSON."""
    eigs = closed_loop_eigenvalues(A, B, C)
    M, _ = linalg.matrix_balance(A)
    open_eigs = np.linalg.eigvals(M)
    pairs = oscillatory_pairs(eigs)
    loop = loop_margins(A, B, C)
    loop["open_loop_unstable_poles"] = unstable_count(open_eigs)
    loop["closed_loop_unstable_poles"] = unstable_count(eigs)
    sizes = np.abs(np.concatenate([eigs, open_eigs]))
    active = bool(np.any(C) and np.any(B))
    if not active:
        loop["nyquist_encirclements"] = 0
    elif np.min(sizes) == 0.0:
        loop["nyquist_encirclements"] = None
    else:
        Ab, Bb, Cb = balance(A, B, C)
        loop["nyquist_encirclements"] = nyquist_encirclements(
            Ab, Bb, Cb, (np.min(sizes), np.max(sizes)))
    loop["active"] = active
    return {"eigenvalues": eigs,
            "dominant": mode_summary(pairs[0][0]) if pairs else None,
            "loop": loop,
            "stable": bool(np.all(eigs.real < 0.0))}


# ---------------------------------------------------------------- compare

def _fmt(x):
    if x is None or isinstance(x, bool):
        return json.dumps(x)
    return f"{x:.6g}"


def compare(doc, rel_tol=1e-3):
    """Check a parsed stability JSON.  Returns (ok, report lines); raises
    InputError when it is not the expected shape."""
    A, B, C = linear_model(doc)
    rep = reported(doc)
    mine = analyse(A, B, C)
    lines, ok = [], True

    def row(name, got, want, good):
        nonlocal ok
        ok &= bool(good)
        lines.append(f"  {'ok  ' if good else 'FAIL'} {name:34s} "
                     f"reported {_fmt(got):>13s}  "
                     f"recomputed {_fmt(want):>13s}")

    def close(got, want, abs_tol=0.0):
        if got is None or want is None:
            return got is None and want is None
        return abs(got - want) <= max(abs_tol, rel_tol * abs(want))

    op = doc.get("operating_point")
    if isinstance(op, dict):
        lines.append("operating point: " + ", ".join(
            f"{k}={v}" for k, v in op.items()))
    lines.append(f"n = {len(A)} states, rel-tol {rel_tol:g}")

    # eigenvalues: optimal one-to-one pairing by distance
    got, want = rep["eigenvalues"], mine["eigenvalues"]
    lines.append("closed-loop eigenvalues (A + B C):")
    if len(got) != len(want):
        ok = False
        lines.append(f"  FAIL reported {len(got)} eigenvalues, "
                     f"recomputed {len(want)}")
    else:
        r, c = optimize.linear_sum_assignment(
            np.abs(got[:, None] - want[None, :]))
        # floor so an eigenvalue near 0 is held to the system's scale
        floor = 1e-9 * max(np.max(np.abs(want)), 1e-300)
        for i, j in sorted(zip(r, c), key=lambda p: abs(want[p[1]])):
            good = abs(got[i] - want[j]) <= rel_tol * max(abs(want[j]), floor)
            ok &= bool(good)
            lines.append(f"  {'ok  ' if good else 'FAIL'} reported "
                         f"{got[i]:.6g}  recomputed {want[j]:.6g}")

    # dominant: ties within tolerance may legitimately pick either pair,
    # so compare with the near-least-damped pair closest to the report
    d_got = rep["dominant"]
    pairs = oscillatory_pairs(want)
    if d_got is None or not pairs:
        row("dominant", None if d_got is None else d_got["damping_ratio"],
            None if not pairs else pairs[0][1], d_got is None and not pairs)
    else:
        cands = [p[0] for p in pairs if p[1] <= pairs[0][1] + rel_tol]
        best = min(cands, key=lambda l: abs(abs(l.imag) / (2 * math.pi)
                                            - d_got["frequency_Hz"]))
        d_want = mode_summary(best)
        for key in d_got:
            abs_tol = rel_tol if key == "damping_ratio" else 0.0
            row(f"dominant.{key}", d_got[key], d_want[key],
                close(d_got[key], d_want[key], abs_tol))

    got_loop, want_loop = rep["loop"], mine["loop"]
    for key in SUMMARY_KEYS:
        row(f"loop.{key}", got_loop[key], want_loop[key],
            close(got_loop[key], want_loop[key], MARGIN_ABS.get(key, 0.0)))
    for key, margin, abs_tol in (("gain_crossovers", "phase margin", 0.05),
                                 ("phase_crossovers", "gain margin", 0.05)):
        g, w = got_loop[key], want_loop[key]
        row(f"loop.{key} (count)", len(g), len(w), len(g) == len(w))
        for k, ((fg, mg), (fw, mw)) in enumerate(zip(sorted(g), sorted(w))):
            row(f"  {key}[{k}] frequency_Hz", fg, fw, close(fg, fw))
            row(f"  {key}[{k}] {margin}", mg, mw, close(mg, mw, abs_tol))
    for key in ("open_loop_unstable_poles", "closed_loop_unstable_poles"):
        row(f"loop.{key}", got_loop[key], want_loop[key],
            got_loop[key] == want_loop[key])
    # Nyquist: encirclements of -1 = closed-loop minus open-loop unstable poles
    n = want_loop["nyquist_encirclements"]
    diff = got_loop["closed_loop_unstable_poles"] - \
        got_loop["open_loop_unstable_poles"]
    row("Nyquist encirclements = Z - P", diff, n, n is not None and n == diff)
    # applies: never true with an unstable opened loop or an inactive loop;
    # when false, the note says why
    may_apply = want_loop["open_loop_unstable_poles"] == 0 and \
        want_loop["active"]
    row("loop.applies allowed", got_loop["applies"], may_apply,
        may_apply or not got_loop["applies"])
    row("loop.note given when not applying", bool(got_loop["note"]),
        not got_loop["applies"],
        got_loop["applies"] or bool(got_loop["note"].strip()))
    row("stable", rep["stable"], mine["stable"],
        rep["stable"] == mine["stable"])
    return ok, lines


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("json", help="output of swashtune-cli stability --json")
    ap.add_argument("--rel-tol", type=float, default=1e-3)
    args = ap.parse_args(argv)
    if not (args.rel_tol > 0 and math.isfinite(args.rel_tol)):
        print("error: --rel-tol must be a positive number", file=sys.stderr)
        return BAD_INPUT
    try:
        ok, lines = compare(read_json(args.json), args.rel_tol)
    except InputError as e:
        print(f"error: {e}", file=sys.stderr)
        return BAD_INPUT
    print("\n".join(lines))
    print("PASS" if ok else "MISMATCH")
    return PASS if ok else FAIL


if __name__ == "__main__":
    sys.exit(main())
