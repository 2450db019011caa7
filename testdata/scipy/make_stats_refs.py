#!/usr/bin/python3
"""Reference values for the statistics of package report.

Run once with Debian's python3-scipy:  /usr/bin/python3 make_stats_refs.py
It writes stats_refs.json beside this script. The Go tests (report/
stats_refs_test.go) read that file; they never run Python.

What is in the file:
- "t_quantiles": scipy.stats.t.ppf(p, dof).
- "welch": for pairs of samples a, b: scipy.stats.ttest_ind(b, a,
  equal_var=False) statistic and two-sided p-value; the Welch-Satterthwaite
  degrees of freedom and the 95 % interval of mean(b) - mean(a) computed
  here from their textbook definitions with scipy.stats.t.ppf (scipy 1.10's
  ttest_ind returns neither).
- "mann_kendall": for series x at times t (days): Kendall's S, its variance
  with the tie correction, Z with the continuity correction and the
  two-sided normal p-value, all from the textbook definition (scipy has no
  Mann-Kendall function). Cross-checked here: without ties, the p-value of
  the uncorrected Z must equal scipy.stats.kendalltau(t, x,
  method='asymptotic').pvalue, and S must equal tau * n (n - 1) / 2 of
  kendalltau with ties in x only (the script stops if not). Also Sen's
  slope = scipy.stats.theilslopes(x, t).slope and the least-squares line of
  scipy.stats.linregress(t, x) with the 95 % interval of its slope (slope
  -+ t.ppf(0.975, n - 2) * stderr).
"""
import json
import math
import os

import numpy as np
import scipy
from scipy import stats


def welch_case(name, a, b):
    a = np.asarray(a, float)
    b = np.asarray(b, float)
    res = stats.ttest_ind(b, a, equal_var=False)
    qa = a.var(ddof=1) / len(a)
    qb = b.var(ddof=1) / len(b)
    dof = (qa + qb) ** 2 / (qa ** 2 / (len(a) - 1) + qb ** 2 / (len(b) - 1))
    diff = b.mean() - a.mean()
    h = stats.t.ppf(0.975, dof) * math.sqrt(qa + qb)
    return {"name": name, "a": a.tolist(), "b": b.tolist(), "t": float(res.statistic),
            "p": float(res.pvalue), "dof": float(dof), "diff": float(diff),
            "ci95": [float(diff - h), float(diff + h)]}


def mann_kendall(x):
    x = np.asarray(x, float)
    n = len(x)
    s = 0
    for i in range(n):
        for j in range(i + 1, n):
            s += np.sign(x[j] - x[i])
    _, counts = np.unique(x, return_counts=True)
    ties = sum(t * (t - 1) * (2 * t + 5) for t in counts if t > 1)
    var = (n * (n - 1) * (2 * n + 5) - ties) / 18.0
    if s > 0:
        z = (s - 1) / math.sqrt(var)
    elif s < 0:
        z = (s + 1) / math.sqrt(var)
    else:
        z = 0.0
    p = 2 * stats.norm.sf(abs(z))
    return float(s), float(var), float(z), float(p)


def trend_case(name, t, x):
    t = np.asarray(t, float)
    x = np.asarray(x, float)
    n = len(x)
    s, var, z, p = mann_kendall(x)
    tau = stats.kendalltau(t, x, method="asymptotic")
    # t has no ties here, so S = tau_b * n(n-1)/2 only when x has no ties
    # either; the p-value of the uncorrected Z equals kendalltau's then.
    if len(np.unique(x)) == n:
        assert abs(tau.statistic * n * (n - 1) / 2 - s) < 1e-9, (name, tau, s)
        p_unc = 2 * stats.norm.sf(abs(s) / math.sqrt(var))
        assert abs(p_unc - tau.pvalue) < 1e-12 * max(1, tau.pvalue) + 1e-15, (name, p_unc, tau.pvalue)
    sen = stats.theilslopes(x, t)
    lr = stats.linregress(t, x)
    h = stats.t.ppf(0.975, n - 2) * lr.stderr
    return {"name": name, "t": t.tolist(), "x": x.tolist(),
            "mk_s": s, "mk_var": var, "mk_z": z, "mk_p": p,
            "kendalltau_p": float(tau.pvalue),
            "sen_slope": float(sen.slope),
            "lr_slope": float(lr.slope), "lr_intercept": float(lr.intercept), "lr_stderr": float(lr.stderr),
            "lr_slope_ci95": [float(lr.slope - h), float(lr.slope + h)]}


def main():
    rng = np.random.RandomState(20240917)
    out = {"scipy": scipy.__version__, "numpy": np.__version__}
    out["t_quantiles"] = [{"p": p, "dof": d, "q": float(stats.t.ppf(p, d))}
                          for p, d in [(0.975, 1), (0.975, 4), (0.975, 8), (0.975, 13.7), (0.95, 20), (0.995, 30)]]

    welch = []
    # Log damping ratios of two invented revisions of a bracket.
    za = [0.0210, 0.0192, 0.0238, 0.0221, 0.0204, 0.0229, 0.0215, 0.0199]
    zb = [0.0262, 0.0251, 0.0293, 0.0244, 0.0270, 0.0281]
    welch.append(welch_case("log_damping_shift", np.log(za), np.log(zb)))
    welch.append(welch_case("unequal_variance",
                            rng.normal(10.0, 0.5, 12), rng.normal(10.4, 2.0, 7)))
    welch.append(welch_case("no_difference",
                            rng.normal(0.0, 1.0, 6), rng.normal(0.0, 1.0, 5)))
    welch.append(welch_case("frequency_hz", [171.2, 170.8, 171.9, 171.4, 170.6],
                            [168.9, 169.4, 168.2, 169.8, 169.1, 168.7, 169.0]))
    out["welch"] = welch

    trends = []
    t1 = np.cumsum(rng.uniform(0.2, 1.5, 14))
    trends.append(trend_case("rising_no_ties", t1, 0.020 + 0.0006 * t1 + rng.normal(0, 0.0012, 14)))
    t2 = np.cumsum(rng.uniform(0.1, 2.0, 16))
    x2 = np.round(0.015 - 0.0003 * t2 + rng.normal(0, 0.0008, 16), 3)  # rounded: ties
    trends.append(trend_case("falling_with_ties", t2, x2))
    t3 = np.cumsum(rng.uniform(0.5, 1.0, 20))
    trends.append(trend_case("no_trend", t3, 120.0 + rng.normal(0, 0.4, 20)))
    out["trends"] = trends

    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "stats_refs.json")
    with open(path, "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
