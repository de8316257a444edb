"""Pulse releases and removals against an independent integration of the
same piecewise problem: scipy's solve_ivp (DOP853, rtol = atol = 1e-12)
restarted at each pulse with the pulse applied to its result (the standard
treatment of impulsive systems; e.g. Bainov & Simeonov 1993, Impulsive
Differential Equations). Agreement required at every output time: 1e-6
relative, with an absolute floor of 1e-6 times the series' largest value.
"""

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from reference_models import reference_rhs, run_tussock

SEED = 5150


def expand(events, t_end):
    pulses = []
    for e in events:
        n = e.get("count", 1)
        for k in range(n):
            t = e["time"] + k * e.get("every", 0.0)
            if t <= t_end:
                pulses.append((t, e))
    return sorted(pulses, key=lambda p: p[0])


def apply(x, e):
    x = list(x)
    i = e["species"]
    if "add" in e:
        x[i] = x[i] + e["add"]
    else:
        x[i] = x[i] * (1 - e["remove_fraction"])
    return x


def reference(model, p, x0, t_end, events, extra, times):
    f = reference_rhs(model, p, extra)
    pulses = expand(events, t_end)
    out = np.zeros((len(x0), len(times)))
    t, x = 0.0, list(x0)
    k = 0
    for tp, e in pulses + [(np.inf, None)]:
        stop = min(tp, t_end)
        inside = [j for j, tt in enumerate(times) if t <= tt <= stop and (tt < tp or tp > t_end)]
        if stop > t:
            sol = solve_ivp(f, (t, stop), x, method="DOP853", rtol=1e-12, atol=1e-12, dense_output=True)
            assert sol.success
            for j in inside:
                out[:, j] = sol.sol(times[j])
            x = list(sol.y[:, -1])
        if e is None or tp > t_end:
            break
        x = apply(x, e)
        # An output time exactly at a pulse reports the state after it.
        for j, tt in enumerate(times):
            if abs(tt - tp) < 1e-12:
                out[:, j] = x
        t = tp
        k += 1
    return out


def cases():
    rng = np.random.default_rng(SEED)
    u = lambda lo, hi: float(np.exp(rng.uniform(np.log(lo), np.log(hi))))
    out = []
    for c in range(10):
        model = ["rosenzweig_macarthur", "lotka_volterra", "competition"][c % 3]
        if model == "rosenzweig_macarthur":
            p = {"r": u(0.2, 1), "K": u(100, 1000), "a": u(0.01, 0.05), "h": u(0.1, 0.5), "e": u(0.3, 0.6), "m": u(0.05, 0.3)}
        elif model == "lotka_volterra":
            p = {"r": u(0.1, 1), "a": u(0.01, 0.05), "e": u(0.2, 0.5), "m": u(0.05, 0.4), "K": u(200, 2000)}
        else:
            p = {"r1": u(0.2, 1), "r2": u(0.2, 1), "K1": u(100, 500), "K2": u(100, 500), "alpha12": u(0.3, 1.5), "alpha21": u(0.3, 1.5)}
        t_end = 60.0
        events = [
            # Releases on and off the output grid, repeated.
            {"time": float(round(rng.uniform(1, 10), 3)), "species": 1, "add": u(1, 20), "every": float(round(rng.uniform(3, 12), 2)), "count": int(rng.integers(1, 5))},
            {"time": float(rng.uniform(15, 45)), "species": 0, "remove_fraction": float(rng.uniform(0.1, 0.8))},
            # One exactly on an output time.
            {"time": 30.0, "species": 1, "add": u(1, 5)},
        ]
        x0 = [u(20, 80), u(1, 10)]
        out.append(pytest.param(model, p, x0, t_end, events, id=f"{model}-{c}"))
    return out


@pytest.mark.parametrize("model,p,x0,t_end,events", cases())
def test_pulses_agree_with_restarted_scipy(model, p, x0, t_end, events):
    scenario = {"format": 1, "model": model, "params": p, "initial": x0, "t_end": t_end,
                "output_step": 0.5, "rtol": 1e-11, "atol": 1e-11, "events": events}
    result = run_tussock(scenario)
    assert result["stop"]["kind"] == "finished"
    times = np.array(result["times"])
    got = np.array(result["states"]).T
    expected = reference(model, p, x0, t_end, events, {}, times)
    assert len(result["pulses"]) == len(expand(events, t_end))
    for i in range(expected.shape[0]):
        floor = 1e-6 * np.abs(expected[i]).max()
        err = np.abs(got[i] - expected[i])
        allowed = 1e-6 * np.abs(expected[i]) + floor
        worst = int(np.argmax(err / allowed))
        assert (err <= allowed).all(), (
            f"species {i} at t = {times[worst]}: tussock {got[i][worst]}, scipy {expected[i][worst]}"
        )
