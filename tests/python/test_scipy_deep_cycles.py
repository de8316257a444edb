"""Cross-check the long-run range of strongly enriched predator-prey
cycles, whose troughs lie far below any absolute tolerance.

Sources:
- Rosenzweig 1971, Paradox of enrichment: destabilization of exploitation
  ecosystems in ecological time, Science 171:385-387: above the Hopf
  threshold K_H the Rosenzweig-MacArthur model cycles, with both species
  present (the positive quadrant is invariant, so no density reaches zero).
- The reference numbers: SciPy's `scipy.integrate.solve_ivp` with LSODA
  (Hindmarsh 1983, ODEPACK; Petzold 1983, SIAM J. Sci. Stat. Comput.
  4:136) at rtol = 1e-10, atol = 1e-14, in log coordinates u = ln N,
  v = ln P (Virtanen et al. 2020, SciPy 1.0, Nature Methods 17:261).

The greenhouse example (examples/greenhouse-mites.json) at K = 500 and
1000 (3.7 and 7.5 times K_H = 133.6): the real `tussock sweep --json`
must report a limit cycle with both species, and its long-run minima of
prey and predator (about 1e-44 and 3e-18 at K = 500) must agree with the
minima over the settled cycle from scipy to 1e-3 relative; its maxima to
2e-2 (they are read from output points 1.25 days apart, and the
predator's peak at K = 1000 is sharp: 1.5% lower there).
"""

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import minimize_scalar

from reference_models import run_tussock_sweep

PARAMS = {"r": 0.25, "K": 150, "a": 0.08, "h": 0.1, "e": 0.3, "m": 0.1}
INITIAL = [20, 1]
HORIZON = 20000  # the window read is the last quarter: cycles long settled


def settled_range(k):
    """Minimum and maximum of N and P over the cycle from scipy: the last
    quarter of the horizon, on a fine grid refined by Brent's method."""
    p = dict(PARAMS, K=k)

    def f(_t, w):
        n, q = np.exp(w)
        g = p["a"] / (1 + p["a"] * p["h"] * n)
        return [p["r"] * (1 - n / k) - g * q, p["e"] * g * n - p["m"]]

    opts = dict(method="LSODA", rtol=1e-10, atol=1e-14)
    start = 0.75 * HORIZON
    to_window = solve_ivp(f, (0, start), np.log(INITIAL), **opts)
    window = solve_ivp(f, (start, HORIZON), to_window.y[:, -1], dense_output=True, **opts)
    t = np.linspace(start, HORIZON, 200001)
    w = window.sol(t)
    lo, hi = [], []
    for i in range(2):
        for sign, out in ((1, lo), (-1, hi)):
            k_best = int(np.argmin(sign * w[i]))
            k_best = min(max(k_best, 1), len(t) - 2)
            best = minimize_scalar(lambda s: sign * window.sol(s)[i],
                                   bracket=(t[k_best - 1], t[k_best], t[k_best + 1]))
            out.append(float(np.exp(sign * best.fun)))
    return lo, hi


def test_enriched_cycles_keep_both_species_with_scipy_minima():
    scenario = {"format": 2, "model": "rosenzweig_macarthur", "functional_response": "holling_ii",
                "params": PARAMS, "initial": INITIAL, "t_end": 120}
    result = run_tussock_sweep(scenario, ["--param", "K", "--from", "500", "--to", "1000",
                                          "--steps", "2", "--horizon", str(HORIZON)])
    assert [p["value"] for p in result["points"]] == [500, 1000]
    for point in result["points"]:
        run = point["long_run"]
        assert run["kind"] == "cycle", run
        assert run["extinct"] == [False, False], run
        lo, hi = settled_range(point["value"])
        for i in range(2):
            assert run["min"][i] > 0, run
            assert run["min"][i] == pytest.approx(lo[i], rel=1e-3), (point["value"], i, run["min"], lo)
            assert run["max"][i] == pytest.approx(hi[i], rel=2e-2), (point["value"], i, run["max"], hi)
