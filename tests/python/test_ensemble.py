"""Ensemble summaries of `tussock ensemble` and `tussock founders` against
numpy and scipy, through the real CLI.

References:
- fan-chart and time-to-extinction quantiles: numpy.quantile with method
  "linear" and scipy.stats.mstats.mquantiles(alphap=1, betap=1), both
  definition 7 of Hyndman & Fan (1996, Amer. Statist. 50:361);
- the time-to-extinction histogram: numpy.histogram on the same edges;
- every 95% interval: scipy.stats.binomtest(k, n).proportion_ci(
  method="wilson") (Wilson 1927, J. Amer. Statist. Assoc. 22:209);
- the distribution of a pure-death process at time t, Binomial(n0, e^{-dt})
  (Bailey 1964, The Elements of Stochastic Processes, sec. 8.5): a chi-square
  goodness-of-fit test (scipy.stats.chisquare) against scipy.stats.binom,
  which must not reject at the 0.1% level at the fixed seed.

Every run is kept (--keep equal to --runs), so the statistics can be
recomputed here from the individual runs. Needs TUSSOCK_BIN.
"""

import json
import os
import subprocess
import tempfile

import numpy as np
import pytest
from scipy import stats
from scipy.stats import mstats

LEVELS = [0.05, 0.25, 0.5, 0.75, 0.95]


def run_cli(subcommand, scenario, *args):
    binary = os.environ.get("TUSSOCK_BIN")
    assert binary, "set TUSSOCK_BIN to the tussock binary (scripts/test does)"
    with tempfile.NamedTemporaryFile("w", suffix=".json", delete=False) as f:
        json.dump(scenario, f)
        path = f.name
    try:
        done = subprocess.run([binary, subcommand, path, "--json", *map(str, args)],
                              capture_output=True, text=True, check=False)
    finally:
        os.unlink(path)
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout)


def wilson(k, n):
    ci = stats.binomtest(k, n).proportion_ci(confidence_level=0.95, method="wilson")
    return ci.low, ci.high


def assert_interval(ci, k, n, what):
    lo, hi = wilson(k, n)
    assert ci[0] == pytest.approx(lo, abs=1e-12) and ci[1] == pytest.approx(hi, abs=1e-12), (
        f"{what}: tussock {ci}, scipy {[lo, hi]} for {k}/{n}")


PREDATOR_PREY = {
    "format": 1, "model": "rosenzweig_macarthur",
    "species": ["spider mite", "predatory mite"],
    "params": {"r": 0.3, "K": 120, "a": 0.05, "h": 0.2, "e": 0.35, "m": 0.15},
    "initial": [30, 3], "t_end": 60, "output_step": 1,
    "thresholds": {"economic_threshold": 40, "quasi_extinction": [5, 2]},
}


@pytest.mark.parametrize("method", ["exact", "auto"])
def test_fan_chart_extinction_and_intervals_match_numpy_and_scipy(method):
    runs = 300
    s = run_cli("ensemble", PREDATOR_PREY, "--runs", runs, "--keep", runs, "--seed", 4,
                "--intervals", 20, "--method", method, "--pest-day", 30)
    assert s["runs"] == runs and len(s["kept_runs"]) == runs
    kept = s["kept_runs"]
    times = np.array(s["times"])
    horizon = s["horizon"]
    for i, name in enumerate(s["species"]):
        values = np.array([r["states"][i] for r in kept])  # runs x times
        fan = s["fan"][i]
        expected = np.quantile(values, LEVELS, axis=0, method="linear")
        also = mstats.mquantiles(values, prob=LEVELS, alphap=1, betap=1, axis=0)
        for j, key in enumerate(["p05", "p25", "median", "p75", "p95"]):
            np.testing.assert_allclose(fan[key], expected[j], rtol=1e-12, atol=1e-12, err_msg=f"{name} {key}")
            np.testing.assert_allclose(fan[key], also[j], rtol=1e-12, atol=1e-12, err_msg=f"{name} {key}")
        np.testing.assert_allclose(fan["mean"], values.mean(axis=0), rtol=1e-12)

        extinct_at = np.array([r["extinction_time"][i] for r in kept if r["extinction_time"][i] is not None])
        extinct_at = extinct_at[extinct_at <= horizon]
        e = s["extinction"][i]
        assert e["count"] == len(extinct_at)
        assert_interval(e["ci"], e["count"], runs, f"{name} extinction")
        curve = s["extinction_by_time"][i]
        for k, t in enumerate(times):
            count = int((extinct_at <= t).sum())
            assert curve["probability"][k] == pytest.approx(count / runs)
            assert_interval([curve["lower"][k], curve["upper"][k]], count, runs, f"{name} extinct by {t}")

        tte = s["time_to_extinction"]["species"][i]
        assert tte["extinct_runs"] == len(extinct_at)
        if len(extinct_at):
            np.testing.assert_allclose(tte["quantiles"], np.quantile(extinct_at, LEVELS, method="linear"), rtol=1e-12)
            counts, _ = np.histogram(extinct_at, bins=np.array(s["time_to_extinction"]["histogram_edges"]))
            assert tte["histogram"] == counts.tolist()

    for q in s["quasi_extinction"]:
        assert_interval(q["ci"], q["count"], runs, f"{q['species']} quasi-extinction")
    pest = s["pest_below_threshold"]
    k30 = int(np.argmin(np.abs(times - 30)))
    assert times[k30] == 30
    below = int(sum(1 for r in kept if r["states"][0][k30] < 40))
    assert pest["count"] == below
    assert_interval(pest["ci"], below, runs, "pest under its threshold")


@pytest.mark.parametrize("method", ["exact", "auto"])
def test_pure_death_is_binomial_by_chi_square(method):
    n0, d, t = 50, 0.1, 7.0
    scenario = {"format": 1, "model": "exponential", "params": {"b": 0, "d": d},
                "initial": [n0], "t_end": t, "output_step": t}
    runs = 1000
    s = run_cli("ensemble", scenario, "--runs", runs, "--keep", runs, "--seed", 12, "--method", method)
    final = np.array([r["states"][0][-1] for r in s["kept_runs"]], dtype=int)
    dist = stats.binom(n0, np.exp(-d * t))
    # Bins of single values, merged at both ends until each expects ≥ 5.
    ks = np.arange(n0 + 1)
    expected = dist.pmf(ks) * runs
    observed = np.bincount(final, minlength=n0 + 1).astype(float)
    lo, hi = 0, n0
    while expected[: lo + 1].sum() < 5:
        lo += 1
    while expected[hi:].sum() < 5:
        hi -= 1
    exp_bins = np.concatenate([[expected[: lo + 1].sum()], expected[lo + 1: hi], [expected[hi:].sum()]])
    obs_bins = np.concatenate([[observed[: lo + 1].sum()], observed[lo + 1: hi], [observed[hi:].sum()]])
    exp_bins *= obs_bins.sum() / exp_bins.sum()
    result = stats.chisquare(obs_bins, exp_bins)
    assert result.pvalue > 1e-3, f"chi-square p = {result.pvalue} ({method})"


def test_founder_rows_have_scipy_wilson_intervals():
    reserve = {"format": 1, "model": "rosenzweig_macarthur",
               "params": {"r": 1.2, "K": 2000, "a": 0.01, "h": 0.05, "e": 0.05, "m": 0.5},
               "initial": [1500, 12], "t_end": 10, "output_step": 0.5}
    runs = 200
    t = run_cli("founders", reserve, "--founders", "3,6,12", "--releases", "1,3", "--runs", runs, "--seed", 8)
    assert len(t["rows"]) == 6
    for row in t["rows"]:
        assert row["runs"] == runs
        assert row["probability"] == pytest.approx(row["established_runs"] / runs)
        assert_interval(row["ci"], row["established_runs"], runs, f"{row['founders']} in {row['release_sizes']}")
        assert sum(row["release_sizes"]) == row["founders"]
