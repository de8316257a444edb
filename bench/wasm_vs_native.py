"""The same core code compiled natively and to WebAssembly, timed in one
run: two single solves, the integrator library alone, and 1,000 exact stochastic runs (the problems of
core/src/bench_problems.rs, exported by bench/wasm-solve). WebAssembly runs
in node, whose V8 is the engine of Chromium; the app's worker runs the same
code. Also times the command line's ensemble, which spreads the runs over
every core (the result does not depend on the number of threads).

Usage: scripts/bench (builds the WebAssembly first), or
python3 bench/wasm_vs_native.py path/to/tussock_wasm_bench.wasm
"""

import json
import os
import subprocess
import sys
import tempfile
import time

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))

# The case of rosenzweig_macarthur_365_days() in core/src/bench_problems.rs.
ENSEMBLE_CASE = {
    "model": "rosenzweig_macarthur",
    "params": {"r": 0.2, "K": 1000, "a": 0.001, "h": 0.5, "e": 0.2, "m": 0.1},
    "initial": [800, 100],
    "t_end": 365,
    "output_step": 1,
}


def run(cmd):
    return subprocess.run(cmd, cwd=ROOT, check=True, capture_output=True, text=True).stdout


def cli_ensemble_seconds():
    """Wall time of `tussock ensemble` (1,000 exact runs, seed 1, all cores), best of 3."""
    run(["cargo", "build", "--quiet", "--release", "-p", "tussock-cli"])
    binary = os.path.join(ROOT, "target", "release", "tussock")
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "case.json")
        with open(path, "w") as f:
            json.dump(ENSEMBLE_CASE, f)
        best = float("inf")
        for _ in range(3):
            start = time.perf_counter()
            run([binary, "ensemble", path, "--runs", "1000", "--seed", "1", "--method", "exact", "--json"])
            best = min(best, time.perf_counter() - start)
    return best


def main():
    wasm = sys.argv[1]
    native = json.loads(run(["cargo", "run", "--quiet", "--release", "-p", "tussock-wasm-bench",
                             "--bin", "time_native"]).strip().splitlines()[-1])
    web = json.loads(run(["node", os.path.join(ROOT, "bench", "wasm_solve.mjs"), wasm]).strip().splitlines()[-1])
    rows = [("standard non-stiff problem, one solve", "standard", 1e6, "µs"),
            ("Rosenzweig–MacArthur 1000 days, one solve", "rosenzweig_macarthur", 1e3, "ms"),
            ("standard problem on `ode_solvers` alone", "library_alone", 1e6, "µs"),
            ("1,000 exact stochastic runs, RM ~1,000 individuals, 365 days, one thread", "ensemble", 1.0, "s")]
    print("| same code, one thread | native | WebAssembly (node/V8) | WebAssembly vs native | same answer |")
    print("| --- | --- | --- | --- | --- |")
    for label, key, scale, unit in rows:
        n, w = native[key], web[key]
        same = "yes" if n["answer"] == w["answer"] else f"NO ({n['answer']} vs {w['answer']})"
        print(f"| {label} | {n['seconds'] * scale:.3g} {unit} | {w['seconds'] * scale:.3g} {unit} | "
              f"{w['seconds'] / n['seconds']:.2f}× the time | {same} |")
    cli = cli_ensemble_seconds()
    print(f"\n1,000 exact runs from the command line on all {os.cpu_count()} cores (`tussock ensemble "
          f"--method exact`, whole process, best of 3): {cli:.2f} s; the one-thread WebAssembly run takes "
          f"{web['ensemble']['seconds'] / cli:.2f}× that.")


if __name__ == "__main__":
    main()
