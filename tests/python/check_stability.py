#!/usr/bin/python3
"""Independent cross-check of `swashtune-cli stability SCENARIO --json`.

    check_stability.py STABILITY.json [--rel-tol 1e-3]

From "linear_model" (the open loop x' = A x + B u, y = C x, in SI units) this
recomputes, with numpy/scipy only, the eigenvalues of the closed system
A + B C, the dominant pair, `stable`, and the margins and crossover
frequencies of the loop transfer L(s) = -C (sI - A)^-1 B, with the definitions
of /work/shared/design/interfaces.md ("stability"), and compares them with
what the file reports.

Tolerances: eigenvalues (paired one to one, nearest first) within rel-tol of
their magnitude; gain/phase margin within 0.05 dB / 0.05 deg or rel-tol;
frequencies within rel-tol; damping ratio within rel-tol (absolute, it is
already a ratio); a null must be matched by a null.

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
    out["loop"] = {}
    for key in ("gain_margin_dB", "phase_margin_deg",
                "crossover_frequency_Hz", "phase_crossover_frequency_Hz"):
        if key in loop:
            out["loop"][key] = _number(loop[key], f"loop.{key}", True)
        elif key != "phase_crossover_frequency_Hz":   # optional, see above
            raise InputError(f"loop has no '{key}'")

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


def _first_crossing(v, level, downward_only):
    above = v > level
    hits = above[:-1] != above[1:]
    if downward_only:
        hits &= above[:-1]
    idx = np.flatnonzero(hits)
    return int(idx[0]) if idx.size else None


def _root(fun, f0, f1):
    a, b = fun(f0), fun(f1)
    if a == 0.0:
        return f0
    if b == 0.0:
        return f1
    return optimize.brentq(fun, f0, f1, xtol=1e-14, rtol=1e-13)


def loop_margins(A, B, C):
    """Gain/phase margins and crossover frequencies of L = -G, with None
    for a crossing that does not happen in F_LO..F_HI."""
    Ab, Bb, Cb = balance(A, B, C)
    f = np.logspace(math.log10(F_LO), math.log10(F_HI),
                    int(round(PER_DECADE * math.log10(F_HI / F_LO))) + 1)
    L = loop_response(Ab, Bb, Cb, f)
    with np.errstate(divide="ignore"):          # L = 0 on a dead loop
        log_mag = np.log(np.abs(L))
    # unwrapped continuously from the phase at F_LO (~0 deg for a positive
    # DC loop gain)
    phase = np.degrees(np.unwrap(np.angle(L)))

    def L_at(x):
        return loop_response(Ab, Bb, Cb, x)[0]

    def phase_at(x, i):
        # continuous with the grid's unwrapped phase at f[i]; valid inside a
        # grid step because the phase turns less than 180 deg per step
        d = math.degrees(np.angle(L_at(x))) - phase[i]
        return phase[i] + (d + 180.0) % 360.0 - 180.0

    out = dict.fromkeys(("gain_margin_dB", "phase_margin_deg")
                        + FREQUENCIES)
    i = _first_crossing(phase, -180.0, downward_only=False)
    if i is not None:
        f180 = _root(lambda x: phase_at(x, i) + 180.0, f[i], f[i + 1])
        out["phase_crossover_frequency_Hz"] = f180
        out["gain_margin_dB"] = -20.0 * math.log10(abs(L_at(f180)))
    i = _first_crossing(log_mag, 0.0, downward_only=True)
    if i is not None:
        fc = _root(lambda x: math.log(abs(L_at(x))), f[i], f[i + 1])
        out["crossover_frequency_Hz"] = fc
        out["phase_margin_deg"] = 180.0 + phase_at(fc, i)
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


def analyse(A, B, C):
    """Everything the check recomputes, in the shape of the CLI's JSON."""
    eigs = closed_loop_eigenvalues(A, B, C)
    pairs = oscillatory_pairs(eigs)
    return {"eigenvalues": eigs,
            "dominant": mode_summary(pairs[0][0]) if pairs else None,
            "loop": loop_margins(A, B, C),
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

    for key, value in rep["loop"].items():
        row(f"loop.{key}", value, mine["loop"][key],
            close(value, mine["loop"][key], MARGIN_ABS.get(key, 0.0)))
    row("stable", rep["stable"], mine["stable"],
        rep["stable"] == mine["stable"])
    if isinstance(doc.get("loop"), dict) and "active" in doc["loop"]:
        lines.append(f"(loop.active reported {doc['loop']['active']})")
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
