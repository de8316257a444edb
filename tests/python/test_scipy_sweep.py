"""Cross-check `tussock sweep` equilibria, eigenvalues and bifurcation
values against general-purpose numerics.

References: scipy.optimize.fsolve (MINPACK's hybrd, More, Garbow &
Hillstrom 1980) for the roots of the right-hand side, numpy.linalg.eigvals
(LAPACK geev) on a central-difference Jacobian of the model equations
written out independently in reference_models.py (Virtanen et al. 2020,
SciPy 1.0; Harris et al. 2020, Array programming with NumPy).

Checks, for every point of a sweep run through the real CLI:
- each reported equilibrium is a root (fsolve from it stays within 1e-8
  relative) and its eigenvalues match numpy's within 1e-5 relative to the
  Jacobian's size;
- every non-negative root fsolve finds from a grid of starts is reported;
- the Hopf value agrees with a bisection done here on the sign of the
  trace of numpy's Jacobian at fsolve's interior root, to 1e-6.
"""

import numpy as np
import pytest
from scipy.optimize import fsolve

from reference_models import reference_rhs, run_tussock_sweep

CASES = [
    ("competition", {"r1": 0.8, "r2": 0.5, "K1": 600, "K2": 400, "alpha12": 1.3, "alpha21": 1.1}, [20, 20], "K1", 200, 900),
    ("competition", {"r1": 1.2, "r2": 0.4, "K1": 300, "K2": 500, "alpha12": 0.5, "alpha21": 0.7}, [20, 20], "alpha21", 0.1, 2.0),
    ("rosenzweig_macarthur", {"r": 1, "K": 300, "a": 0.02, "h": 0.5, "e": 0.4, "m": 0.3}, [100, 10], "K", 30, 500),
    ("rosenzweig_macarthur", {"r": 0.5, "K": 300, "a": 0.1, "h": 0.2, "e": 0.6, "m": 0.5}, [10, 2], "K", 5, 120),
]


def jacobian(f, x):
    x = np.asarray(x, dtype=float)
    j = np.zeros((len(x), len(x)))
    for k in range(len(x)):
        step = 1e-6 * max(1.0, abs(x[k]))
        up, down = x.copy(), x.copy()
        up[k] += step
        down[k] -= step
        j[:, k] = (np.array(f(0, up)) - np.array(f(0, down))) / (2 * step)
    return j


def roots_from_grid(f, scale):
    found = []
    for u in np.linspace(0, 2, 9):
        for v in np.linspace(0, 2, 9):
            x, info, ier, _ = fsolve(lambda y: f(0, y), [u * scale[0], v * scale[1]], full_output=True, xtol=1e-12)
            if ier == 1 and np.all(x >= -1e-9 * max(scale)) and np.linalg.norm(f(0, x)) < 1e-8 * max(scale):
                if not any(np.linalg.norm(x - y) < 1e-6 * (1 + np.linalg.norm(x)) for y in found):
                    found.append(x)
    return found


@pytest.mark.parametrize("model,params,initial,param,lo,hi", CASES, ids=[f"{c[0]}-{c[3]}" for c in CASES])
def test_sweep_equilibria_and_eigenvalues_match_scipy(model, params, initial, param, lo, hi):
    scenario = {"format": 1, "model": model, "params": params, "initial": initial, "t_end": 100}
    result = run_tussock_sweep(scenario, ["--param", param, "--from", str(lo), "--to", str(hi), "--steps", "15", "--horizon", "200"])
    assert len(result["points"]) == 15
    for point in result["points"]:
        p = dict(params, **{param: point["value"]})
        f = reference_rhs(model, p, {})
        states = [np.array(e["state"]) for e in point["equilibria"]]
        for e, x in zip(point["equilibria"], states):
            again = fsolve(lambda y: f(0, y), x, xtol=1e-13)
            assert np.linalg.norm(again - x) <= 1e-8 * (1 + np.linalg.norm(x)), (point["value"], x, again)
            j = jacobian(f, x)
            key = lambda z: (round(z.real, 9), z.imag)
            ours = sorted((complex(re, im) for re, im in e["eigenvalues"]), key=key)
            theirs = sorted(np.linalg.eigvals(j), key=key)
            size = max(1.0, np.abs(j).max())
            for a, b in zip(ours, theirs):
                assert abs(a - b) <= 1e-5 * size, (point["value"], x, ours, theirs)
        scale = [max([1.0, initial[0]] + [abs(s[0]) for s in states]), max([1.0, initial[1]] + [abs(s[1]) for s in states])]
        for root in roots_from_grid(f, scale):
            assert any(np.linalg.norm(root - x) <= 1e-6 * (1 + np.linalg.norm(root)) for x in states), (
                point["value"], root, states)


def hopf_by_bisection(params, lo, hi):
    """K where the trace of numpy's Jacobian at fsolve's interior root changes sign."""
    def trace(k):
        p = dict(params, K=k)
        f = reference_rhs("rosenzweig_macarthur", p, {})
        n_star = p["m"] / (p["a"] * (p["e"] - p["m"] * p["h"]))
        guess = [n_star, p["r"] / p["a"] * (1 - n_star / k) * (1 + p["a"] * p["h"] * n_star)]
        x = fsolve(lambda y: f(0, y), guess, xtol=1e-13)
        return np.trace(jacobian(f, x))
    t_lo = trace(lo)
    for _ in range(80):
        mid = 0.5 * (lo + hi)
        if (trace(mid) < 0) == (t_lo < 0):
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


@pytest.mark.parametrize("model,params,initial,param,lo,hi", [c for c in CASES if c[0] == "rosenzweig_macarthur"])
def test_hopf_value_matches_a_scipy_bisection(model, params, initial, param, lo, hi):
    scenario = {"format": 1, "model": model, "params": params, "initial": initial, "t_end": 100}
    result = run_tussock_sweep(scenario, ["--param", param, "--from", str(lo), "--to", str(hi), "--steps", "21", "--horizon", "200"])
    hopf = [b for b in result["bifurcations"] if b["kind"] == "hopf"]
    assert len(hopf) == 1, result["bifurcations"]
    b = hopf[0]
    pts = result["points"]
    theirs = hopf_by_bisection(params, pts[b["between"][0]]["value"], pts[b["between"][1]]["value"])
    assert abs(b["value"] - theirs) <= 1e-6 * theirs, (b["value"], theirs)
