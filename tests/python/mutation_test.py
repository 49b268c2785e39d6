#!/usr/bin/python3
"""Mutation test of the trace cross-check: it must catch a 1 % change of any
parameter that influences the trace.

    mutation_test.py PARAMS.json CPP_TRACE.csv --bounds BOUNDS.toml --case NAME
                     [--jobs 2] [--only KEY ...]

For every numeric parameter of the case, the reference is run with that one
parameter changed by +1 % (on one side only: the C++ trace is left as it is;
pump.pistons, a whole number, by +1) and compared with the C++ trace sample
by sample against the case's bounds (compare_traces.py).  The run stops at
the first sample out of bounds: the mutation is detected.  A parameter that
is zero or "none" here cannot be changed by 1 %; a parameter the case cannot
detect must be listed with its reason in the table [mutation-exempt.NAME]
of the bounds file, and a listed one that is detected after all fails too,
so that the list stays true.

Exit status: 0 every mutation judged as expected, 1 otherwise, 2 bad input.
"""

import argparse
import multiprocessing
import os
import sys
import time
import tomllib

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import compare_traces as ct  # noqa: E402
import reference_model as rm  # noqa: E402


def perturbed(key, value):
    """The +1 % value of a parameter (pistons: one more), or None."""
    if value is None or isinstance(value, bool) or key in rm.BOOL_KEYS:
        return None
    if key in rm.INTEGER_KEYS:
        return value + 1.0
    if value == 0.0:
        return None
    return value * 1.01


class Checker:
    """Compares each finished reference sample with the C++ row."""

    def __init__(self, cpp, bounds):
        self.cpp = cpp
        self.bounds = bounds
        self.columns = None
        self.scales = None

    def bind(self, columns):
        self.columns = [(j, c) for j, c in enumerate(columns)
                        if c != "time_s" and c in self.cpp and c in self.bounds]
        # the unchanged trace's own peak sizes (the reference's are not
        # known until it has finished)
        self.scales = ct.column_scales(self.cpp, [c for _, c in self.columns])

    def __call__(self, i, row):
        for j, c in self.columns:
            err = abs(row[j] - self.cpp[c][i]) / self.scales[c]
            if not err <= self.bounds[c]:
                raise Found(c, float(row[0]), err / self.bounds[c])


class Found(rm.Diverged):
    def __init__(self, column, t, ratio):
        super().__init__(column)
        self.column, self.t, self.ratio = column, t, ratio


def run_one(job):
    key, case, cpp, bounds = job
    base = case["parameters"][key]
    value = perturbed(key, base)
    if value is None:
        return key, base, None, "cannot change by 1 %", None
    mutated = dict(case, parameters=dict(case["parameters"], **{key: value}))
    checker = Checker(cpp, bounds)
    checker.bind(rm.TRACE_COLUMNS + rm.Layout(mutated["parameters"]).optional_columns)
    wall = time.perf_counter()
    try:
        rm.simulate(mutated, rtol=1e-9, sample_check=checker)
    except Found as hit:
        return key, base, value, "detected", (hit.column, hit.t, hit.ratio,
                                              time.perf_counter() - wall)
    except rm.SolverError as exc:
        return key, base, value, "solver failed: %s" % exc, None
    return key, base, value, "not detected", None


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("params")
    ap.add_argument("cpp_trace")
    ap.add_argument("--bounds", required=True)
    ap.add_argument("--case", required=True)
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--only", nargs="*", help="these parameters only")
    args = ap.parse_args(argv)
    try:
        case = rm.load_case(args.params)
        bounds = ct.load_bounds(args.bounds, args.case)
        cpp = ct.read_trace(args.cpp_trace)
        with open(args.bounds, "rb") as fh:
            exempt = tomllib.load(fh).get("mutation-exempt", {}).get(args.case, {})
    except rm.InputError as exc:
        print("mutation_test: error: %s" % exc, file=sys.stderr)
        return 2
    keys = [k for k in rm.DEFAULTS if k not in rm.BOOL_KEYS]
    if args.only:
        keys = [k for k in keys if k in args.only]
    jobs = [(k, case, cpp, bounds) for k in keys]
    with multiprocessing.Pool(max(1, args.jobs)) as pool:
        results = pool.map(run_one, jobs, chunksize=1)
    ok = True
    print("mutation_test: %s: each parameter +1 %% in the reference only"
          % args.case)
    print("%-44s %12s  %-13s %s" % ("parameter", "value", "result", "first sample out of bounds"))
    for key, base, value, verdict, hit in results:
        where = ""
        if hit:
            where = "%s at t = %.4g s (%.3g x its bound; %.1f s)" % hit
        expected_undetected = key in exempt
        if verdict == "detected":
            good = not expected_undetected
            if expected_undetected:
                where += "  <- listed as undetectable: update the list"
        else:
            good = expected_undetected
            where = exempt.get(key, "NOT EXEMPT: the cross-check misses this change")
        ok = ok and good
        print("%-44s %12.6g  %-13s %s%s" % (key, base if base is not None else float("nan"),
                                             verdict, where, "" if good else "  FAIL"))
    for key in exempt:
        if key not in rm.DEFAULTS:
            print("mutation_test: exempt key %s is not a parameter  FAIL" % key)
            ok = False
    print("mutation_test: %s" % ("PASS" if ok else "FAIL"))
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
