"""Cross-check Tussock's integrator against scipy's solve_ivp.

Reference: SciPy's `scipy.integrate.solve_ivp` with method DOP853
(Hairer, Norsett & Wanner 1993, Solving Ordinary Differential Equations I,
the 8th-order Dormand-Prince pair) at rtol = atol = 1e-12 (Virtanen et al.
2020, SciPy 1.0, Nature Methods 17:261).

The model equations are written out here a second time, independently of
the Rust code, from their published forms. Parameter sets are drawn from a
seeded generator over every model (and every functional response); each is
run through the real `tussock run --json` and compared at the output times.
Agreement required: 1e-6 relative (with an absolute floor of 1e-6 times the
series' largest value, for densities passing near zero).

Run by scripts/test; needs TUSSOCK_BIN (path to the built `tussock`).
"""

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from reference_models import reference_rhs, run_tussock

SEED = 20261202
CASES_PER_MODEL = 5
RTOL = 1e-6


def draw(rng, model):
    """Parameters, initial state, horizon and extras for one case."""
    u = lambda lo, hi: float(np.exp(rng.uniform(np.log(lo), np.log(hi))))
    extra = {}
    if model == "lotka_volterra":
        p = {"r": u(0.1, 2), "a": u(0.005, 0.05), "e": u(0.1, 0.6), "m": u(0.05, 0.5)}
        if rng.random() < 0.5:
            p["K"] = u(100, 2000)
        x0 = [u(5, 100), u(1, 20)]
    elif model == "rosenzweig_macarthur":
        p = {"r": u(0.2, 2), "K": u(100, 2000), "a": u(0.005, 0.05), "h": u(0.05, 1), "e": u(0.2, 0.8), "m": u(0.05, 0.4)}
        extra["functional_response"] = ["holling_i", "holling_ii", "holling_iii", "beddington_deangelis"][int(rng.integers(4))]
        if extra["functional_response"] == "beddington_deangelis":
            p["c"] = u(0.01, 0.2)
        x0 = [u(20, 200), u(1, 20)]
    elif model == "competition":
        p = {"r1": u(0.1, 2), "r2": u(0.1, 2), "K1": u(100, 1000), "K2": u(100, 1000), "alpha12": u(0.2, 2), "alpha21": u(0.2, 2)}
        x0 = [u(5, 100), u(5, 100)]
    elif model == "logistic":
        p = {"b": u(0.3, 2), "d": u(0.01, 0.2), "K": u(100, 5000), "immigration": u(0.1, 5), "emigration": u(0.01, 0.1)}
        if rng.random() < 0.5:
            p["A"] = u(5, 50)
        x0 = [u(60, 500)]
    else:
        p = {"b": u(0.1, 0.5), "d": u(0.05, 0.5), "immigration": u(0.1, 10), "emigration": u(0.01, 0.1)}
        x0 = [u(1, 100)]
    n = len(x0)
    if rng.random() < 0.4:
        extra["harvest"] = [u(0.01, 0.5) for _ in range(n)]
    return p, x0, float(rng.uniform(20, 80)), extra


def cases():
    rng = np.random.default_rng(SEED)
    out = []
    for model in ["lotka_volterra", "rosenzweig_macarthur", "competition", "logistic", "exponential"]:
        made = 0
        while made < CASES_PER_MODEL:
            p, x0, t_end, extra = draw(rng, model)
            times = np.linspace(0, t_end, 101)
            sol = solve_ivp(reference_rhs(model, p, extra), (0, t_end), x0, method="DOP853",
                            t_eval=times, rtol=1e-12, atol=1e-12)
            # Keep cases that stay clear of zero and of blow-up, where
            # Tussock's non-negativity rule would (rightly) differ.
            if not sol.success or sol.y.min() < 1e-2 or sol.y.max() > 1e8:
                continue
            out.append(pytest.param(model, p, x0, t_end, extra, sol.y, id=f"{model}-{made}"))
            made += 1
    return out


def run_case(model, p, x0, t_end, extra):
    return run_tussock({"format": 1, "model": model, "params": p, "initial": x0, "t_end": t_end,
                        "output_step": t_end / 100, "rtol": 1e-11, "atol": 1e-11, **extra})


@pytest.mark.parametrize("model,p,x0,t_end,extra,expected", cases())
def test_agrees_with_scipy_dop853(model, p, x0, t_end, extra, expected):
    result = run_case(model, p, x0, t_end, extra)
    assert result["stop"]["kind"] == "finished"
    got = np.array(result["states"]).T
    assert got.shape == expected.shape
    for i in range(expected.shape[0]):
        floor = 1e-6 * np.abs(expected[i]).max()
        err = np.abs(got[i] - expected[i])
        allowed = RTOL * np.abs(expected[i]) + floor
        worst = int(np.argmax(err / allowed))
        assert (err <= allowed).all(), (
            f"species {i} at t = {t_end * worst / 100}: tussock {got[i][worst]}, scipy {expected[i][worst]}, "
            f"relative error {err[worst] / abs(expected[i][worst]):.3e}"
        )
