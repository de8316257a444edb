"""Cross-check Tussock's fits against scipy.optimize.least_squares.

Reference: SciPy's `scipy.optimize.least_squares` (trust-region
reflective, Branch, Coleman & Li 1999) on the same data, the same model
(written again in reference_models.py, integrated by `solve_ivp` DOP853 at
rtol = atol = 1e-12) and the same objective:
- log least squares: r = ln(y + 1) - ln(mu + 1);
- Poisson: signed deviance residuals (McCullagh & Nelder 1989, §2.4),
  built here from scipy.stats.poisson.logpmf;
- negative binomial: r = sqrt(2[ln Pois(y; y) - ln NB(y; mu, k)]) with
  scipy.stats.nbinom.logpmf(y, k, k/(k+mu)), k estimated with the model.
scipy starts where Tussock's first start is (the scenario's values).
Estimates must agree to 1e-4 relative.

The counts are generated here from seeded numpy generators.
Needs TUSSOCK_BIN (path to the built `tussock`).
"""

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import least_squares
from scipy.stats import nbinom, poisson

from reference_models import reference_rhs, run_tussock_fit

RTOL = 1e-4


def predictions(model, params, x0, times, extra):
    sol = solve_ivp(reference_rhs(model, params, extra), (0.0, times[-1]), x0, method="DOP853",
                    t_eval=times, rtol=1e-12, atol=1e-12)
    assert sol.success
    return sol.y


def residuals(objective, y, mu, k=None):
    mu = np.maximum(mu, 1e-10)
    if objective == "log-ls":
        return np.log1p(y) - np.log1p(mu)
    if objective == "poisson":
        d = 2 * (poisson.logpmf(y, y) - poisson.logpmf(y, mu))
        return np.sign(y - mu) * np.sqrt(np.maximum(d, 0))
    d = 2 * (poisson.logpmf(y, y) - nbinom.logpmf(y, k, k / (k + mu)))
    return np.sqrt(np.maximum(d, 0))


CASES = [
    # model, all params (truth), x0, times, estimated with bounds, objective, noise
    ("logistic", {"b": 0.6, "d": 0.0, "K": 800.0}, [12.0], np.arange(0.0, 21.0),
     {"b": (0.01, 5.0), "K": (10.0, 1e5)}, "log-ls", ("lognormal", 0.1)),
    ("lotka_volterra", {"r": 0.5, "a": 0.02, "e": 0.3, "m": 0.4}, [40.0, 8.0], np.arange(1.0, 31.0),
     {"r": (0.05, 5.0), "a": (0.002, 0.2), "e": (0.03, 3.0), "m": (0.04, 4.0)}, "poisson", ("poisson",)),
    ("rosenzweig_macarthur", {"r": 1.0, "K": 500.0, "a": 0.02, "h": 0.5, "e": 0.4, "m": 0.3}, [100.0, 10.0],
     np.arange(2.0, 61.0, 2.0),
     {"r": (0.1, 10.0), "a": (0.002, 0.2), "e": (0.04, 4.0), "m": (0.03, 3.0)}, "log-ls", ("lognormal", 0.05)),
    ("competition", {"r1": 0.8, "r2": 0.5, "K1": 600.0, "K2": 400.0, "alpha12": 0.6, "alpha21": 0.5}, [20.0, 20.0],
     np.arange(1.0, 41.0),
     {"r1": (0.08, 8.0), "r2": (0.05, 5.0), "alpha12": (0.06, 6.0), "alpha21": (0.05, 5.0)}, "negbin",
     ("negbin", 100.0)),
]


@pytest.mark.parametrize("case", CASES, ids=[c[0] for c in CASES])
def test_estimates_agree_with_scipy_least_squares(case):
    model, truth, x0, times, estimated, objective, noise = case
    rng = np.random.default_rng(20260417)
    means = predictions(model, truth, x0, times, {})
    if noise[0] == "lognormal":
        counts = np.maximum((means + 1) * np.exp(rng.normal(0, noise[1], means.shape)) - 1, 0)
    elif noise[0] == "poisson":
        counts = rng.poisson(means).astype(float)
    else:
        k = noise[1]
        counts = rng.poisson(rng.gamma(k, means / k)).astype(float)
    names = {"logistic": ["population"], "competition": ["species 1", "species 2"]}.get(model, ["prey", "predator"])
    lines = ["time," + ",".join(names)]
    for i, t in enumerate(times):
        lines.append(f"{t:g}," + ",".join(repr(float(c)) for c in counts[:, i]))
    start = {k: (1.3 * v if k in estimated else v) for k, v in truth.items()}
    scenario = {"model": model, "params": start, "initial": x0, "t_end": float(times[-1])}
    args = ["--estimate", ",".join(estimated), "--objective", objective, "--starts", "4", "--no-profiles",
            "--bounds", ",".join(f"{k}={lo}:{hi}" for k, (lo, hi) in estimated.items())]
    ours = run_tussock_fit(scenario, "\n".join(lines) + "\n", args)

    keys = list(estimated)
    def fun(theta):
        p = dict(truth)
        p.update(zip(keys, theta[:len(keys)]))
        mu = predictions(model, p, x0, times, {})
        k = np.exp(theta[-1]) if objective == "negbin" else None
        return residuals(objective, counts, mu, k).ravel()

    x_start = [start[k] for k in keys]
    lower = [estimated[k][0] for k in keys]
    upper = [estimated[k][1] for k in keys]
    if objective == "negbin":
        x_start.append(np.log(10.0))
        lower.append(np.log(1e-3))
        upper.append(np.log(1e6))
    ref = least_squares(fun, x_start, bounds=(lower, upper), method="trf", x_scale="jac",
                        ftol=1e-14, xtol=1e-14, gtol=1e-14, max_nfev=2000)
    for i, k in enumerate(keys):
        got = ours["estimates"][k]["value"]
        want = ref.x[i]
        assert abs(got - want) <= RTOL * abs(want), f"{model} {k}: tussock {got}, scipy {want}"
    if objective == "negbin":
        got = ours["dispersion"]["value"]
        assert abs(got - np.exp(ref.x[-1])) <= RTOL * np.exp(ref.x[-1]), f"k: {got} vs {np.exp(ref.x[-1])}"
    # The same objective value (sum of squared residuals).
    assert abs(ours["objective"] - 2 * ref.cost) <= 1e-6 * max(1.0, 2 * ref.cost)
