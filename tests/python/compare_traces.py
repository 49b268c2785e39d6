#!/usr/bin/python3
"""Compare a Swashtune C++ trace with the independent Python reference.

    compare_traces.py PARAMS.json CPP_TRACE.csv --bounds BOUNDS.toml --case NAME
                      [--reference REF.csv] [--save-reference REF.csv]
    compare_traces.py PARAMS.json CPP_TRACE.csv --measure

PARAMS.json is the output of `swashtune-cli check SCENARIO --json`; the
reference is run on it unless --reference gives a trace it already wrote.
CPP_TRACE.csv is a trace.csv written with `--units si`.

Every column of the reference trace (each state of the model, the flows and
the scheduled inputs) must be in the C++ trace, on the same time column, and
agree at every sample:

    max_t |c_cpp(t) - c_ref(t)| / scale(c) <= bound(c)

scale(c) = max(max_t |c_ref(t)|, floor(c)): the column's peak magnitude in
the reference, floored by a small physical size (FLOORS) so that a column
that stays near zero is not judged by its round-off.  The bounds per case and
column live in a TOML file (tests/data/cross_check_bounds.toml) beside the
error achieved when they were set.  --measure prints the achieved errors as a
table to paste there, each with a suggested bound 5 x above it.

Exit status: 0 pass, 1 fail, 2 bad input, 3 the reference solver failed.
"""

import argparse
import csv
import math
import os
import sys
import tomllib

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import reference_model as rm  # noqa: E402

PASS, FAIL, BAD_INPUT, SOLVER_FAILED = 0, 1, 2, 3

# Smallest scale of a column (SI): a column whose peak stays below this is
# measured against this size instead.
FLOORS = {
    "discharge_pressure_Pa": 1e5, "control_pressure_Pa": 1e5,
    "port_pressure_Pa": 1e5, "compensator_setting_Pa": 1e5,
    "swash_angle_rad": 1e-3, "swash_velocity_rad_s": 1e-2,
    "spool_position_m": 1e-6, "spool_velocity_m_s": 1e-4,
    "pump_flow_m3_s": 1e-6, "load_flow_m3_s": 1e-6,
    "leakage_flow_m3_s": 1e-8, "control_flow_m3_s": 1e-7,
    "load_opening": 1.0, "released_air_line": 1e-5,
    "released_air_chamber": 1e-5, "released_air_port": 1e-5,
    "shaft_angle_rad": 2.0 * math.pi,
}


def read_trace(path, needed=("time_s",)):
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


def load_bounds(path, case):
    """{column: bound} of one case of a bounds TOML file."""
    try:
        with open(path, "rb") as fh:
            doc = tomllib.load(fh)
    except FileNotFoundError:
        raise rm.InputError("%s: no such file" % path)
    except (OSError, tomllib.TOMLDecodeError) as exc:
        raise rm.InputError("%s: cannot read: %s" % (path, exc))
    if case not in doc or not isinstance(doc[case], dict):
        raise rm.InputError("%s: no table [%s] (cases: %s)"
                            % (path, case, ", ".join(sorted(doc))))
    bounds = {}
    for col, value in doc[case].items():
        if isinstance(value, bool) or not isinstance(value, (int, float)) \
                or not value > 0.0:
            raise rm.InputError("%s: [%s] %s: expected a positive number, got "
                                "%r" % (path, case, col, value))
        bounds[col] = float(value)
    return bounds


def column_scales(ref, columns):
    return {c: max(float(np.max(np.abs(ref[c]))), FLOORS.get(c, 0.0), 1e-300)
            for c in columns}


def check_time(ref, cpp):
    """None when the time columns agree, else a message."""
    t_ref, t_cpp = ref["time_s"], cpp["time_s"]
    if len(t_ref) != len(t_cpp):
        return ("time columns differ: reference has %d samples (%.9g..%.9g s), "
                "C++ has %d (%.9g..%.9g s)" % (len(t_ref), t_ref[0], t_ref[-1],
                                               len(t_cpp), t_cpp[0], t_cpp[-1]))
    dt = float(np.median(np.diff(t_ref))) if len(t_ref) > 1 else 1.0
    t_tol = 1e-3 * dt   # allows for printed digits, not for a shifted sample
    dt_err = np.abs(t_cpp - t_ref)
    if not (dt_err <= t_tol).all():
        i = int(np.argmax(np.where(np.isfinite(dt_err), dt_err, np.inf)))
        return ("time columns differ: row %d has t = %.9g s in the C++ trace "
                "and %.9g s in the reference (tolerance %.3g s)"
                % (i + 2, t_cpp[i], t_ref[i], t_tol))
    return None


def measure(ref, cpp):
    """{column: (error fraction of scale, time of the largest error, scale)}
    for every reference column except time."""
    columns = [c for c in ref if c != "time_s"]
    scales = column_scales(ref, columns)
    out = {}
    for c in columns:
        if c not in cpp:
            out[c] = (math.inf, math.nan, scales[c])
            continue
        err = np.abs(cpp[c] - ref[c])
        err = np.where(np.isfinite(err), err, np.inf)
        i = int(np.argmax(err))
        out[c] = (float(err[i]) / scales[c], float(ref["time_s"][i]), scales[c])
    return out


def compare(ref, cpp, bounds):
    """Compare two traces given as {column: array} against per-column
    bounds; returns a dict with 'passed', 'messages' and 'errors'."""
    msg = check_time(ref, cpp)
    if msg:
        return {"passed": False, "messages": [msg], "errors": {}}
    errors = measure(ref, cpp)
    msgs = ["samples: %d, %.6g..%.6g s" % (len(ref["time_s"]), ref["time_s"][0],
                                            ref["time_s"][-1])]
    passed = True
    for c, (frac, t, scale) in errors.items():
        if c not in cpp:
            msgs.append("%s: missing from the C++ trace: FAIL" % c)
            passed = False
            continue
        bound = bounds.get(c)
        if bound is None:
            msgs.append("%s: no bound given for this column: FAIL" % c)
            passed = False
            continue
        ok = frac <= bound
        passed = passed and ok
        msgs.append("%-24s max error %.3g of scale %.6g at t = %.6g s "
                    "(bound %.3g, %s)" % (c, frac, scale, t, bound,
                                          "ok" if ok else "FAIL"))
    for c in bounds:
        if c not in ref:
            msgs.append("%s: bound given but the reference has no such "
                        "column: FAIL" % c)
            passed = False
    return {"passed": passed, "messages": msgs, "errors": errors}


def suggested_bound(achieved, factor=5.0):
    """factor x achieved, rounded up to 1, 2 or 5 times a power of ten."""
    target = max(achieved * factor, 1e-12)
    e = math.floor(math.log10(target))
    for m in (1.0, 2.0, 5.0, 10.0):
        if m * 10.0 ** e >= target * (1 - 1e-12):
            return m * 10.0 ** e
    return 10.0 ** (e + 1)


def main(argv=None):
    ap = argparse.ArgumentParser(
        description="Compare a C++ trace (SI columns) with the Python reference.")
    ap.add_argument("params", help="JSON from `swashtune-cli check --json`")
    ap.add_argument("cpp_trace", help="trace.csv written with --units si")
    ap.add_argument("--bounds", help="TOML file of per-column bounds")
    ap.add_argument("--case", help="table of the bounds file to use")
    ap.add_argument("--measure", action="store_true",
                    help="print the achieved errors (and suggested bounds) "
                         "instead of judging them")
    ap.add_argument("--reference", help="use this reference trace instead of "
                                        "running the reference model")
    ap.add_argument("--save-reference", help="also write the reference trace here")
    ap.add_argument("--rtol", type=float, default=1e-9,
                    help="relative tolerance of the reference run")
    args = ap.parse_args(argv)
    try:
        if not args.measure and not (args.bounds and args.case):
            raise rm.InputError("give --bounds FILE --case NAME, or --measure")
        bounds = load_bounds(args.bounds, args.case) if not args.measure else {}
        cpp = read_trace(args.cpp_trace)
        if args.reference:
            ref = read_trace(args.reference)
        else:
            case = rm.load_case(args.params)
            result = rm.simulate(case, rtol=args.rtol)
            ref = result["columns"]
            if args.save_reference:
                rm.write_csv(result, args.save_reference)
        missing = [c for c in ref if c not in cpp]
        if missing:
            raise rm.InputError("%s: column(s) missing: %s (found: %s)"
                                % (args.cpp_trace, ", ".join(missing),
                                   ", ".join(cpp)))
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
    if args.measure:
        msg = check_time(ref, cpp)
        if msg:
            print("compare_traces: " + msg)
            return FAIL
        for c, (frac, t, scale) in measure(ref, cpp).items():
            print("%s = %.0e   # achieved %.2g (at %.6g s, scale %.6g)"
                  % (c, suggested_bound(frac), frac, t, scale))
        return PASS
    report = compare(ref, cpp, bounds)
    for line in report["messages"]:
        print("compare_traces: " + line)
    print("compare_traces: %s" % ("PASS" if report["passed"] else "FAIL"))
    return PASS if report["passed"] else FAIL


if __name__ == "__main__":
    sys.exit(main())
