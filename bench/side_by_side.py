"""Time one solve of the same problems in Tussock, scipy and R's deSolve,
in one run on one machine, and print a markdown table of ratios.

Problems (defined once in core/src/bench_problems.rs):
- the standard non-stiff test problem dx/dt = 1.5x - xy, dy/dt = -3y + xy,
  x(0) = y(0) = 1, t in [0, 10], rtol = atol = 1e-8, output every 0.1;
- Rosenzweig-MacArthur (r=1, K=500, a=0.02, h=0.5, e=0.4, m=0.3) from
  (100, 10) over 1000 days, daily output, rtol = atol = 1e-8.

References: scipy.integrate.solve_ivp(method="RK45") (Virtanen et al. 2020)
and deSolve::ode(method="ode45") (Soetaert, Petzoldt & Setzer 2010, J. Stat.
Softw. 33(9)), both Dormand-Prince 5(4) like Tussock's.

Outcome map (core/src/bench_problems.rs, rosenzweig_macarthur_map): the
200 x 200 Rosenzweig-MacArthur map to t = 2000. Tussock classifies from
theory first and simulates only undecided cells; scipy has no such theory, so
the simplest fair loop simulates each cell once (solve_ivp RK45, rtol 1e-8,
atol 1e-10 as Tussock's long runs, from the scenario's start) and reads the
last quarter: both below 1e-6 -> extinct, a relative prey range above 1e-3
-> cycle, else the survivors at equilibrium. It is timed on a 4 x 4
subsample of cells and scaled to the 40 000; Tussock's every-cell-simulated
mode (three starts a cell) is timed on the same cells.
Fit (defined once in core/src/bench_problems.rs, printed with its data and
starts by core/examples/time_fits.rs): six Rosenzweig-MacArthur parameters
from 40 counts by least squares on ln(count + 1), from the same 8 starts in
both: Tussock's Levenberg-Marquardt against scipy.optimize.least_squares
(trust-region reflective with bounds, x_scale="jac") on solve_ivp RK45 at
the same tolerances (rtol 1e-9).

Usage: scripts/bench (installs what is missing), or
python3 bench/side_by_side.py with scipy importable and Rscript on PATH.
"""

import json
import os
import shutil
import subprocess
import sys
import timeit

import numpy as np
from scipy.integrate import solve_ivp

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def run_json(cmd):
    out = subprocess.run(cmd, cwd=ROOT, check=True, capture_output=True, text=True).stdout
    return json.loads(out)


def tussock(example):
    return run_json(["cargo", "run", "--quiet", "--release", "-p", "tussock-core", "--example", example])


def tussock_solves():
    """Seconds per solve, from bench/wasm-solve's native timer (also used for wasm vs native)."""
    return run_json(["cargo", "run", "--quiet", "--release", "-p", "tussock-wasm-bench", "--bin",
                     "time_native", "standard", "rosenzweig_macarthur", "library_alone"])


def time_scipy_fit(problem):
    """Seconds for scipy's least_squares from every start of the problem."""
    from scipy.optimize import least_squares
    times = np.array(problem["times"])
    counts = np.array(problem["counts"], dtype=float)
    names = problem["names"]
    fixed = dict(problem["truth"])
    atol = 1e-9 * max(1.0, counts.max()) * 1e-3

    def residuals(theta):
        p = dict(fixed)
        p.update(zip(names, theta))
        def f(_t, x):
            n, q = x
            g = p["a"] * n / (1 + p["a"] * p["h"] * n)
            return [p["r"] * n * (1 - n / p["K"]) - g * q, p["e"] * g * q - p["m"] * q]
        sol = solve_ivp(f, (0.0, times[-1]), problem["initial"], method="RK45", t_eval=times,
                        rtol=1e-9, atol=atol)
        if not sol.success or sol.y.shape[1] != len(times):
            return np.full(counts.size, 1e10)
        return (np.log1p(counts) - np.log1p(np.maximum(sol.y, 0))).ravel()

    best = np.inf
    start = timeit.default_timer()
    for x0 in problem["starts"]:
        fit = least_squares(residuals, x0, bounds=(problem["lower"], problem["upper"]), method="trf",
                            x_scale="jac")
        best = min(best, 2 * fit.cost)
    return timeit.default_timer() - start, best


def standard(_t, x):
    return [1.5 * x[0] - x[0] * x[1], -3.0 * x[1] + x[0] * x[1]]


def rosenzweig_macarthur(_t, x):
    n, p = x
    f = 0.02 * n / (1 + 0.02 * 0.5 * n)
    return [n * (1 - n / 500.0) - f * p, 0.4 * f * p - 0.3 * p]


def time_scipy(fun, t_end, y0, step):
    t_eval = np.arange(0.0, t_end + step / 2, step)
    run = lambda: solve_ivp(fun, (0.0, t_end), y0, method="RK45", t_eval=t_eval, rtol=1e-8, atol=1e-8)
    run()  # warm-up
    reps = max(1, int(1.0 / (timeit.timeit(run, number=1) + 1e-9)))
    best = sorted(timeit.repeat(run, number=reps, repeat=5))
    return best[len(best) // 2] / reps


R_SCRIPT = r"""
suppressMessages(library(deSolve))
std <- function(t, y, p) list(c(1.5*y[1] - y[1]*y[2], -3*y[2] + y[1]*y[2]))
rm <- function(t, y, p) { f <- 0.02*y[1]/(1 + 0.02*0.5*y[1]); list(c(y[1]*(1 - y[1]/500) - f*y[2], 0.4*f*y[2] - 0.3*y[2])) }
per_solve <- function(fun, y0, times) {
  run <- function() ode(y0, times, fun, NULL, method = "ode45", rtol = 1e-8, atol = 1e-8)
  run()
  t1 <- system.time(run())[["elapsed"]]
  reps <- max(1, floor(1 / max(t1, 1e-4)))
  rounds <- sapply(1:5, function(i) system.time(for (k in 1:reps) run())[["elapsed"]] / reps)
  median(rounds)
}
cat(sprintf('{"standard": %.9g, "rosenzweig_macarthur": %.9g}\n',
  per_solve(std, c(1, 1), seq(0, 10, by = 0.1)),
  per_solve(rm, c(100, 10), seq(0, 1000, by = 1))))
"""


def scipy_cell(p, k, m):
    r, a, h, e = p["r"], p["a"], p["h"], p["e"]

    def f(_t, x):
        n, q = x
        g = a * n / (1 + a * h * n)
        return [r * n * (1 - n / k) - g * q, e * g * q - m * q]

    t_end = p["t_end"]
    t_eval = np.linspace(0.75 * t_end, t_end, 4001)
    sol = solve_ivp(f, (0.0, t_end), p["initial"], method="RK45", t_eval=t_eval, rtol=1e-8, atol=1e-10)
    if not sol.success:
        return "unresolved"
    tail = np.maximum(sol.y, 0.0)
    alive = tail.max(axis=1) >= 1e-6
    if not alive.any():
        return "extinct"
    prey = tail[0]
    if alive[0] and (prey.max() - prey.min()) / prey.max() > 1e-3:
        return "limit_cycle"
    return {(True, True): "coexistence", (True, False): "only_species_1", (False, True): "only_species_2"}[tuple(alive)]


def time_scipy_map(t):
    p = t["params"]
    start = timeit.default_timer()
    classes = [scipy_cell(p, c["K"], c["m"]) for c in t["subsample"]]
    per_cell = (timeit.default_timer() - start) / len(classes)
    return per_cell, classes


def map_table():
    t = tussock("time_sweep")
    per_cell, classes = time_scipy_map(t)
    cells = t["cells"]
    scipy_whole = per_cell * cells
    ours = t["map_seconds"]
    sim = t["simulated_seconds_per_cell"]
    agree = sum(a == c["class"] for a, c in zip(classes, t["subsample"]))
    print("\n| outcome map, Rosenzweig–MacArthur 200×200 to t = 2000 | Tussock | scipy RK45 loop | Tussock vs scipy |")
    print("| --- | --- | --- | --- |")
    print(f"| whole map (Tussock: theory first, {t['simulated_cells']} cells simulated; scipy: scaled from "
          f"{len(classes)} cells) | {ours:.3f} s | {scipy_whole:.0f} s | {scipy_whole / ours:.0f}× faster |")
    print(f"| one cell simulated (Tussock: {t['starts_per_simulated_cell']} starts; scipy: 1) | "
          f"{sim * 1e3:.2f} ms | {per_cell * 1e3:.1f} ms | {per_cell / sim:.0f}× faster "
          f"({per_cell * t['starts_per_simulated_cell'] / sim:.0f}× per run) |")
    print(f"\nClasses of the simulated subsample agree in {agree} of {len(classes)} cells "
          f"(Tussock every-cell mode vs the scipy loop).")


def time_desolve():
    if not shutil.which("Rscript"):
        return None
    out = subprocess.run(["Rscript", "-e", R_SCRIPT], check=True, capture_output=True, text=True).stdout
    return json.loads(out.strip().splitlines()[-1])


def main():
    t = tussock_solves()
    s = {
        "standard": time_scipy(standard, 10.0, [1.0, 1.0], 0.1),
        "rosenzweig_macarthur": time_scipy(rosenzweig_macarthur, 1000.0, [100.0, 10.0], 1.0),
    }
    r = time_desolve()
    rows = [("standard non-stiff problem (t = 0..10)", "standard"),
            ("Rosenzweig–MacArthur, 1000 days", "rosenzweig_macarthur")]
    print("| problem | Tussock per solve | scipy RK45 | deSolve ode45 | Tussock vs scipy | Tussock vs deSolve |")
    print("| --- | --- | --- | --- | --- | --- |")
    for label, key in rows:
        ours = t[key]["seconds"]
        theirs = s[key]
        rr = r[key] if r else None
        print(f"| {label} | {ours * 1e6:.1f} µs | {theirs * 1e3:.2f} ms | "
              f"{(f'{rr * 1e3:.2f} ms') if rr else 'not measured (no Rscript)'} | "
              f"{theirs / ours:.0f}× faster | {(f'{rr / ours:.0f}× faster') if rr else '–'} |")
    alone = t["library_alone"]["seconds"]
    rr = r["standard"] if r else None
    print(f"| standard problem on `ode_solvers` alone (plain closure, densities: the library's floor) | "
          f"{alone * 1e6:.1f} µs | {s['standard'] * 1e3:.2f} ms | "
          f"{(f'{rr * 1e3:.2f} ms') if rr else '–'} | {s['standard'] / alone:.0f}× faster | "
          f"{(f'{rr / alone:.0f}× faster') if rr else '–'} |")
    map_table()
    fit = tussock("time_fits")
    scipy_seconds, scipy_best = time_scipy_fit(fit)
    print("\n| fit | Tussock | scipy least_squares | Tussock vs scipy |")
    print("| --- | --- | --- | --- |")
    print(f"| Rosenzweig–MacArthur, 6 parameters, 40 counts, {len(fit['starts'])} starts | "
          f"{fit['seconds'] * 1e3:.0f} ms (objective {fit['objective']:.6f}) | "
          f"{scipy_seconds:.1f} s (objective {scipy_best:.6f}) | {scipy_seconds / fit['seconds']:.0f}× faster |")
    print(f"\nMeasured {os.popen('date -u +%Y-%m-%d').read().strip()} on {os.cpu_count()} cores; "
          f"Python {sys.version.split()[0]}, scipy {__import__('scipy').__version__}.")


if __name__ == "__main__":
    main()
