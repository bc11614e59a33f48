#!/usr/bin/env python3
"""Writes src/analysis/selftest/reference.json: the compact reference data that
`concord selftest` carries inside the binary.

Nothing here is computed anew: every value is taken from a stored table in this folder,
each made by its own script with mpmath or SciPy (the versions are in those tables and
are copied beside each group):

- normal_cdf.csv          (normal_mpmath.py, mpmath 1.3.0, 50 digits): CDF and upper tail
- bivariate_orthant.csv   (bivariate_mpmath.py, mpmath 1.3.0): lower orthant probabilities
- polytope_scipy.json     (polytope_scipy.py): mpmath one-factor reductions, 40 digits
- quadrature_mpmath.csv   (quadrature_mpmath.py, mpmath 1.3.0): definite integrals
- analysis_reference.json (analysis_reference.py, SciPy 1.17.1, mpmath 1.3.0): whole analyses

The selection is fixed (listed below), so the output is reproducible. Run from the
repository root:

    python3 tests/reference/selftest_reference.py

A test (tests/cli_selftest.rs) checks that the compiled data still equals the stored
tables, so the two cannot drift apart.
"""

import csv
import json
import os
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
OUT = os.path.join(ROOT, "src", "analysis", "selftest", "reference.json")

# Points of the normal table: both tails down to the smallest normal doubles, the centre.
NORMAL_X = [-37.5, -30.0, -20.0, -12.0, -8.0, -5.0, -3.0, -1.5, -0.5, 0.0, 0.5, 1.5, 3.0,
            5.0, 8.0, 12.0, 20.0, 30.0, 37.5]
# Correlations and limits of the bivariate table (each switch of the method, both signs,
# near-singular correlations).
BIVARIATE_RHO = [-0.9999999999, -0.926, -0.5, -0.1, 0.3, 0.76, 0.924, 0.9999999999]
BIVARIATE_HK = [(-3.0, -1.7), (-0.6, 0.35), (1.0, 2.2), (-8.0, -5.0), (0.0, 0.0)]
# Polytope cases: mpmath one-factor reductions up to six dimensions (fast in the engine).
POLYTOPE_CASES = ["onefactor_rect_n3", "onefactor_rect_n4", "onefactor_rect_n6",
                  "onefactor_tail_n3_h3.6", "onefactor_tail_n4_h3.5",
                  "onefactor_tail_n4_h3.3", "onefactor_lowerbox_n5"]
# Quadrature cases that the selftest can define in Rust (integrand written in
# src/analysis/selftest/engine.rs under the same name).
QUADRATURE_CASES = ["exp_sin50_0_pi", "exp_over_1px2_0_inf", "kink_times_exp"]


def read_csv(name):
    with open(os.path.join(HERE, name), newline="") as f:
        return list(csv.DictReader(f))


def normal():
    rows = read_csv("normal_cdf.csv")
    by_x = {float(r["x"]): r for r in rows}
    out = []
    for x in NORMAL_X:
        r = by_x[x]
        out.append({"x": x, "cdf": float(r["cdf"]), "sf": float(r["sf"])})
    return out


def bivariate():
    rows = read_csv("bivariate_orthant.csv")
    index = {(float(r["h"]), float(r["k"]), float(r["rho"])): r for r in rows}
    out = []
    for rho in BIVARIATE_RHO:
        for h, k in BIVARIATE_HK:
            r = index.get((h, k, rho))
            if r is None:
                sys.exit(f"no row h={h} k={k} rho={rho} in bivariate_orthant.csv")
            out.append({"h": h, "k": k, "rho": rho, "lower_orthant": float(r["lower_orthant"])})
    return out


def polytope():
    with open(os.path.join(HERE, "polytope_scipy.json")) as f:
        table = json.load(f)
    cases = {c["name"]: c for c in table["cases"]}
    return [{k: cases[n][k] for k in ("name", "source", "mean", "cov", "lower", "upper",
                                       "value", "tol", "rel")} for n in POLYTOPE_CASES]


def quadrature():
    rows = {r["name"]: float(r["value"]) for r in read_csv("quadrature_mpmath.csv")}
    return [{"name": n, "value": rows[n]} for n in QUADRATURE_CASES]


def analysis():
    with open(os.path.join(HERE, "analysis_reference.json")) as f:
        table = json.load(f)
    out = []
    for c in table["cases"]:
        results = []
        for r in c["results"]:
            results.append({"site": r["site"], **{
                fig: {"value": r[fig]["value"], "tol": r[fig]["tol"]}
                for fig in ("p_vd", "p_vu", "p_sd", "p_sq")}})
        out.append({"name": c["name"], "toml": c["toml"], "results": results})
    return out, table["versions"]


def main():
    cases, versions = analysis()
    doc = {
        "generator": "tests/reference/selftest_reference.py",
        "sources": {
            "normal": "tests/reference/normal_cdf.csv: mpmath 1.3.0, 50 digits",
            "bivariate": "tests/reference/bivariate_orthant.csv: mpmath 1.3.0",
            "polytope": "tests/reference/polytope_scipy.json: mpmath 1.3.0 one-factor "
                        "reduction, 40 digits",
            "quadrature": "tests/reference/quadrature_mpmath.csv: mpmath 1.3.0",
            "analysis": "tests/reference/analysis_reference.json: SciPy %s, mpmath %s, "
                        "two independent integrations" % (versions["scipy"],
                                                           versions["mpmath"]),
        },
        "normal": normal(),
        "bivariate": bivariate(),
        "polytope": polytope(),
        "quadrature": quadrature(),
        "analysis": cases,
    }
    with open(OUT, "w") as f:
        json.dump(doc, f, indent=1)
        f.write("\n")
    print(f"wrote {OUT}")


if __name__ == "__main__":
    main()
