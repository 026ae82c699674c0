#!/usr/bin/env python3
"""Reference estimates for `furrow fit`, computed with statsmodels and numpy.

Usage: python3 tests/reference/fit_reference.py DATA.csv [--extended] > reference.json
Needs: pip install -r tests/reference/requirements.txt  (numpy 2.4.6, statsmodels 0.15.0)

For each case below (the same cases as tests/fit_reference.rs) it fits
  demand  Q_t = a + b P_t + demand shifters            (seasons 1..n)
  supply  Q_t = c + d P_{t-1} + supply shifters        (seasons 2..n)
with `log` taking natural logs of P and Q (shifters as they are).
OLS: statsmodels.api.OLS; classical standard errors `bse`, robust `HC1_se`
(MacKinnon and White 1985), R^2 `rsquared`, residual sd sqrt(`scale`),
Durbin-Watson statsmodels.stats.stattools.durbin_watson.
2SLS (demand): statsmodels.sandbox.regression.gmm.IV2SLS for coefficients and
classical standard errors, and an explicit two-step numpy computation
(lstsq first stage, lstsq second stage, structural residuals y - X b) for the
same coefficients, R^2, Durbin-Watson and the HC1 sandwich
(Xh'Xh)^-1 Xh' diag(e^2) Xh (Xh'Xh)^-1 * n/(n-k).

With --extended it fits EXTENDED_CASES instead: balance-sheet columns (demand on
`use`, supply on `production` or `area`) and the partial-adjustment supply
  Q_t = c + d P_{t-1} + theta Q_{t-1} + supply shifters   (seasons 2..n)
(Nerlove 1958), with the short-run elasticity d * mean(P_{t-1}) / mean(Q_t) and
the long-run elasticity short / (1 - theta) computed here from the statsmodels
coefficients.
"""
import csv
import json
import sys

import numpy as np
import statsmodels
import statsmodels.api as sm
from statsmodels.sandbox.regression.gmm import IV2SLS
from statsmodels.stats.stattools import durbin_watson

CASES = [
    {"name": "linear_ols", "form": "linear", "method": "ols", "both": [],
     "demand_only": ["trend"], "supply_only": ["rainfall", "fertiliser_price"]},
    {"name": "linear_2sls", "form": "linear", "method": "2sls", "both": [],
     "demand_only": ["trend"], "supply_only": ["rainfall", "fertiliser_price"]},
    {"name": "log_ols", "form": "log", "method": "ols", "both": [],
     "demand_only": ["trend"], "supply_only": ["rainfall", "fertiliser_price"]},
    {"name": "log_2sls", "form": "log", "method": "2sls", "both": [],
     "demand_only": ["trend"], "supply_only": ["rainfall", "fertiliser_price"]},
    {"name": "shared_trend_ols", "form": "linear", "method": "ols", "both": ["trend"],
     "demand_only": [], "supply_only": ["rainfall"]},
    {"name": "just_identified_2sls", "form": "linear", "method": "2sls", "both": [],
     "demand_only": [], "supply_only": ["rainfall"]},
]

EXTENDED_CASES = [
    {"name": "balance_2sls", "form": "linear", "method": "2sls", "both": [],
     "demand_only": ["trend"], "supply_only": ["rainfall", "fertiliser_price"],
     "demand_q": "use", "supply_q": "production", "supply_model": "lagged-price"},
    {"name": "partial_adjustment_ols", "form": "linear", "method": "ols", "both": [],
     "demand_only": ["trend"], "supply_only": ["rainfall", "fertiliser_price"],
     "demand_q": "use", "supply_q": "production", "supply_model": "partial-adjustment"},
    {"name": "partial_adjustment_area", "form": "linear", "method": "2sls", "both": [],
     "demand_only": ["trend"], "supply_only": ["fertiliser_price", "rainfall"],
     "demand_q": "use", "supply_q": "area", "supply_model": "partial-adjustment"},
    {"name": "partial_adjustment_log", "form": "log", "method": "ols", "both": [],
     "demand_only": ["trend"], "supply_only": ["rainfall"],
     "demand_q": "quantity", "supply_q": "quantity", "supply_model": "partial-adjustment"},
]


def load(path):
    with open(path, newline="") as f:
        rows = list(csv.DictReader(f))
    cols = {k: np.array([float(r[k]) for r in rows]) for k in rows[0]}
    return cols


def design(columns):
    return np.column_stack([np.ones(len(columns[0]))] + list(columns))


def ols_summary(y, X):
    res = sm.OLS(y, X).fit()
    return {
        "params": res.params.tolist(),
        "bse": res.bse.tolist(),
        "hc1_se": res.HC1_se.tolist(),
        "r_squared": float(res.rsquared),
        "residual_sd": float(np.sqrt(res.scale)),
        "durbin_watson": float(durbin_watson(res.resid)),
        "nobs": int(res.nobs),
    }


def tsls_summary(y, X, Z):
    n, k = X.shape
    res = IV2SLS(y, X, Z).fit()
    # explicit two-step computation
    pi, *_ = np.linalg.lstsq(Z, X, rcond=None)
    Xh = Z @ pi
    b, *_ = np.linalg.lstsq(Xh, y, rcond=None)
    e = y - X @ b
    ssr = float(e @ e)
    s2 = ssr / (n - k)
    inv = np.linalg.inv(Xh.T @ Xh)
    se = np.sqrt(np.diag(s2 * inv))
    meat = (Xh * (e ** 2)[:, None]).T @ Xh
    hc1 = inv @ meat @ inv * n / (n - k)
    return {
        "params": res.params.tolist(),
        "bse": res.bse.tolist(),
        "numpy_params": b.tolist(),
        "numpy_bse": se.tolist(),
        "hc1_se": np.sqrt(np.diag(hc1)).tolist(),
        "r_squared": 1.0 - ssr / float(((y - y.mean()) ** 2).sum()),
        "residual_sd": float(np.sqrt(s2)),
        "durbin_watson": float(np.sum(np.diff(e) ** 2) / ssr),
        "nobs": n,
    }


def run_case(cols, case):
    p = cols["price"]
    q = cols[case.get("demand_q", "quantity")]
    qs = cols[case.get("supply_q", "quantity")]
    pa = case.get("supply_model") == "partial-adjustment"
    tr = np.log if case["form"] == "log" else (lambda v: v)
    dsh = [cols[c] for c in case["both"] + case["demand_only"]]
    ssh = [cols[c] for c in case["both"] + case["supply_only"]]
    out = {k: case[k] for k in case}
    Xd = design([tr(p)] + dsh)
    yd = tr(q)
    if case["method"] == "2sls":
        Z = design(dsh + [cols[c] for c in case["supply_only"]])
        out["demand"] = tsls_summary(yd, Xd, Z)
    else:
        out["demand"] = ols_summary(yd, Xd)
    out["demand"]["elasticity_at_means"] = (
        out["demand"]["params"][1] * p.mean() / q.mean() if case["form"] == "linear"
        else out["demand"]["params"][1])
    lagged = [tr(p[:-1])] + ([tr(qs[:-1])] if pa else [])
    Xs = design(lagged + [s[1:] for s in ssh])
    out["supply"] = ols_summary(tr(qs[1:]), Xs)
    short = (out["supply"]["params"][1] * p[:-1].mean() / qs[1:].mean()
             if case["form"] == "linear" else out["supply"]["params"][1])
    out["supply"]["elasticity_at_means"] = short
    if pa:
        theta = out["supply"]["params"][2]
        out["supply"]["long_run_elasticity"] = short / (1.0 - theta)
    return out


def main():
    cols = load(sys.argv[1])
    json.dump({
        "statsmodels": statsmodels.__version__,
        "numpy": np.__version__,
        "cases": [run_case(cols, c) for c in
                  (EXTENDED_CASES if "--extended" in sys.argv[2:] else CASES)],
    }, sys.stdout, indent=1)
    sys.stdout.write("\n")


if __name__ == "__main__":
    main()
