#!/usr/bin/python3
"""Compare a Swashtune C++ trace with the independent Python reference.

    compare_traces.py PARAMS.json CPP_TRACE.csv [--tolerance-fraction 0.01]
                      [--reference REF.csv] [--save-reference REF.csv]

PARAMS.json is the output of `swashtune-cli check SCENARIO --json`; the
reference is run on it unless --reference gives a trace it already wrote
(then PARAMS.json is not read).  CPP_TRACE.csv is a trace.csv written with
`--units si`.

Pass: the time columns match and at every sample
|p_d,cpp - p_d,ref| <= tolerance_fraction * max(p_d,ref).
The largest control-pressure and swash-angle errors are reported relative
to their ranges in the reference (for information; they do not fail).

Exit status: 0 pass, 1 fail, 2 bad input, 3 the reference solver failed.
"""

import argparse
import csv
import math
import os
import sys

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import reference_model as rm  # noqa: E402

PASS, FAIL, BAD_INPUT, SOLVER_FAILED = 0, 1, 2, 3
NEEDED = ["time_s", "discharge_pressure_Pa", "control_pressure_Pa",
          "swash_angle_rad"]


def read_trace(path, needed=NEEDED):
    """Read a trace CSV (header row) into {column: float array}.

    Raises rm.InputError with a clear message on a missing file, a missing
    column or a value that is not a number."""
    try:
        with open(path, "r", newline="", encoding="utf-8") as fh:
            rows = list(csv.reader(fh))
    except FileNotFoundError:
        raise rm.InputError("%s: no such file" % path)
    except (OSError, UnicodeDecodeError) as exc:
        raise rm.InputError("%s: cannot read: %s" % (path, exc))
    rows = [r for r in rows if r and any(c.strip() for c in r)]
    if not rows:
        raise rm.InputError("%s: empty file, expected a header row" % path)
    header = [h.strip() for h in rows[0]]
    missing = [c for c in needed if c not in header]
    if missing:
        raise rm.InputError("%s: column(s) missing: %s (found: %s)"
                            % (path, ", ".join(missing), ", ".join(header)))
    if len(rows) < 2:
        raise rm.InputError("%s: no data rows after the header" % path)
    data = {h: [] for h in header}
    for lineno, row in enumerate(rows[1:], start=2):
        if len(row) != len(header):
            raise rm.InputError("%s:%d: expected %d fields, found %d"
                                % (path, lineno, len(header), len(row)))
        for h, cell in zip(header, row):
            try:
                data[h].append(float(cell))
            except ValueError:
                raise rm.InputError("%s:%d: column %s: expected a number, got "
                                    "%r" % (path, lineno, h, cell))
    return {h: np.array(v) for h, v in data.items()}


def _relative_error(ref, other):
    """Max |other - ref| divided by the reference's range (or its size when
    it does not move), with the time index of the maximum."""
    err = np.abs(other - ref)
    span = float(ref.max() - ref.min())
    if span <= 0.0:
        span = max(float(np.abs(ref).max()), 1e-30)
    i = int(np.nanargmax(err)) if np.isfinite(err).any() else 0
    return float(err[i]) / span, i


def compare(ref, cpp, tolerance_fraction=0.01):
    """Compare two traces given as {column: array}; returns a dict with
    'passed', 'messages' (list of str) and the error figures."""
    msgs = []
    t_ref, t_cpp = ref["time_s"], cpp["time_s"]
    if len(t_ref) != len(t_cpp):
        return {"passed": False, "messages": [
            "time columns differ: reference has %d samples (%.9g..%.9g s), "
            "C++ has %d (%.9g..%.9g s)" % (len(t_ref), t_ref[0], t_ref[-1],
                                           len(t_cpp), t_cpp[0], t_cpp[-1])]}
    dt = float(np.median(np.diff(t_ref))) if len(t_ref) > 1 else 1.0
    t_tol = 1e-3 * dt   # allows for printed digits, not for a shifted sample
    dt_err = np.abs(t_cpp - t_ref)
    if not (dt_err <= t_tol).all():
        i = int(np.argmax(np.where(np.isfinite(dt_err), dt_err, np.inf)))
        return {"passed": False, "messages": [
            "time columns differ: row %d has t = %.9g s in the C++ trace and "
            "%.9g s in the reference (tolerance %.3g s)"
            % (i + 2, t_cpp[i], t_ref[i], t_tol)]}

    p_ref, p_cpp = ref["discharge_pressure_Pa"], cpp["discharge_pressure_Pa"]
    peak = float(p_ref.max())
    limit = tolerance_fraction * peak
    err = np.abs(p_cpp - p_ref)
    bad = ~(err <= limit)                    # NaN counts as bad
    i_max = int(np.argmax(np.where(np.isfinite(err), err, np.inf)))
    pc_rel, i_pc = _relative_error(ref["control_pressure_Pa"],
                                   cpp["control_pressure_Pa"])
    a_rel, i_a = _relative_error(ref["swash_angle_rad"], cpp["swash_angle_rad"])
    passed = not bad.any()
    msgs.append("samples: %d, %.6g..%.6g s" % (len(t_ref), t_ref[0], t_ref[-1]))
    msgs.append("discharge pressure: peak ref %.6g Pa, C++ %.6g Pa"
                % (peak, float(np.nanmax(p_cpp))))
    msgs.append("discharge pressure: max error %.6g Pa = %.4f %% of peak at "
                "t = %.6g s (limit %.4g %%)"
                % (err[i_max], 100.0 * err[i_max] / peak if peak else math.inf,
                   t_ref[i_max], 100.0 * tolerance_fraction))
    if bad.any():
        first = int(np.argmax(bad))
        msgs.append("discharge pressure: %d sample(s) out of tolerance, first "
                    "at t = %.6g s (ref %.6g Pa, C++ %.6g Pa)"
                    % (int(bad.sum()), t_ref[first], p_ref[first],
                       p_cpp[first]))
    msgs.append("control pressure: max error %.4f %% of its range at t = %.6g s"
                % (100.0 * pc_rel, t_ref[i_pc]))
    msgs.append("swash angle: max error %.4f %% of its range at t = %.6g s"
                % (100.0 * a_rel, t_ref[i_a]))
    return {"passed": passed, "messages": msgs,
            "max_pressure_error_Pa": float(err[i_max]),
            "max_pressure_error_fraction": float(err[i_max]) / peak if peak else math.inf,
            "control_pressure_error_fraction_of_range": pc_rel,
            "swash_angle_error_fraction_of_range": a_rel}


def main(argv=None):
    ap = argparse.ArgumentParser(
        description="Compare a C++ trace (SI columns) with the Python reference.")
    ap.add_argument("params", help="JSON from `swashtune-cli check --json`")
    ap.add_argument("cpp_trace", help="trace.csv written with --units si")
    ap.add_argument("--tolerance-fraction", type=float, default=0.01,
                    help="allowed |p_d error| as a fraction of peak p_d "
                         "(default 0.01)")
    ap.add_argument("--reference", help="use this reference trace instead of "
                                        "running the reference model")
    ap.add_argument("--save-reference", help="also write the reference trace here")
    ap.add_argument("--rtol", type=float, default=1e-9,
                    help="relative tolerance of the reference run")
    args = ap.parse_args(argv)
    try:
        if not args.tolerance_fraction > 0.0:
            raise rm.InputError("--tolerance-fraction must be > 0, got %r"
                                % args.tolerance_fraction)
        cpp = read_trace(args.cpp_trace)
        if args.reference:
            ref = read_trace(args.reference)
        else:
            case = rm.load_case(args.params)
            result = rm.simulate(case, rtol=args.rtol)
            ref = result["columns"]
            if args.save_reference:
                rm.write_csv(result, args.save_reference)
    except rm.InputError as exc:
        print("compare_traces: error: %s" % exc, file=sys.stderr)
        return BAD_INPUT
    except rm.SolverError as exc:
        print("compare_traces: reference solver failed: %s" % exc,
              file=sys.stderr)
        return SOLVER_FAILED
    except OSError as exc:
        print("compare_traces: error: %s" % exc, file=sys.stderr)
        return BAD_INPUT
    report = compare(ref, cpp, args.tolerance_fraction)
    for line in report["messages"]:
        print("compare_traces: " + line)
    print("compare_traces: %s" % ("PASS" if report["passed"] else "FAIL"))
    return PASS if report["passed"] else FAIL


if __name__ == "__main__":
    sys.exit(main())
