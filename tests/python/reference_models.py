"""The models' equations written out independently of the Rust code, from
their published forms, for the cross-checks against scipy; and a helper that
runs the real `tussock run --json` on a scenario."""

import json
import os
import subprocess
import tempfile

import numpy as np


def lotka_volterra(p):
    r, a, e, m = p["r"], p["a"], p["e"], p["m"]
    k = p.get("K", np.inf)

    def f(_t, x):
        n, q = x
        return [r * n * (1 - n / k) - a * n * q, e * a * n * q - m * q]

    return f


def rosenzweig_macarthur(p, response):
    r, k, a, h, e, m, c = p["r"], p["K"], p["a"], p["h"], p["e"], p["m"], p.get("c", 0.0)

    def fr(n, q):
        if response == "holling_i":
            return a * n
        if response == "holling_iii":
            return a * n * n / (1 + a * h * n * n)
        if response == "beddington_deangelis":
            return a * n / (1 + a * h * n + c * q)
        return a * n / (1 + a * h * n)

    def f(_t, x):
        n, q = x
        g = fr(n, q)
        return [r * n * (1 - n / k) - g * q, e * g * q - m * q]

    return f


def competition(p):
    r1, r2, k1, k2, a12, a21 = (p[s] for s in ["r1", "r2", "K1", "K2", "alpha12", "alpha21"])

    def f(_t, x):
        n1, n2 = x
        return [r1 * n1 * (1 - (n1 + a12 * n2) / k1), r2 * n2 * (1 - (n2 + a21 * n1) / k2)]

    return f


def logistic(p):
    r = p["b"] - p["d"]
    k, imm, emi, allee = p["K"], p.get("immigration", 0.0), p.get("emigration", 0.0), p.get("A", 0.0)

    def f(_t, x):
        n = x[0]
        phi = n / allee - 1 if allee > 0 else 1.0
        return [r * n * (1 - n / k) * phi - emi * n + imm]

    return f


def exponential(p):
    rho = p["b"] - p["d"] - p.get("emigration", 0.0)
    imm = p.get("immigration", 0.0)
    return lambda _t, x: [rho * x[0] + imm]


def with_harvest(f, harvest):
    if harvest is None:
        return f
    return lambda t, x: [fi - hi for fi, hi in zip(f(t, x), harvest)]


def reference_rhs(model, p, extra):
    if model == "lotka_volterra":
        f = lotka_volterra(p)
    elif model == "rosenzweig_macarthur":
        f = rosenzweig_macarthur(p, extra.get("functional_response", "holling_ii"))
    elif model == "competition":
        f = competition(p)
    elif model == "logistic":
        f = logistic(p)
    else:
        f = exponential(p)
    return with_harvest(f, extra.get("harvest"))



def run_cli(scenario, args):
    """The real `tussock` on a scenario written to a temporary file:
    `tussock ARGS[0] FILE ARGS[1:]`; the parsed JSON of its output."""
    binary = os.environ.get("TUSSOCK_BIN")
    assert binary, "set TUSSOCK_BIN to the tussock binary (scripts/test does)"
    with tempfile.NamedTemporaryFile("w", suffix=".json", delete=False) as f:
        json.dump(scenario, f)
        path = f.name
    try:
        done = subprocess.run([binary, args[0], path, *args[1:]], capture_output=True, text=True, check=False)
    finally:
        os.unlink(path)
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout)


def run_tussock(scenario):
    return run_cli(scenario, ["run", "--json"])


def run_tussock_sweep(scenario, args):
    """`tussock sweep FILE ARGS... --json` on a scenario; the parsed JSON."""
    return run_cli(scenario, ["sweep", *args, "--json"])
def run_tussock_fit(scenario, csv_text, args):
    """Run the real `tussock fit SCENARIO DATA --json ARGS…`; returns the JSON."""
    binary = os.environ.get("TUSSOCK_BIN")
    assert binary, "set TUSSOCK_BIN to the tussock binary (scripts/test does)"
    with tempfile.TemporaryDirectory() as d:
        s_path, d_path = os.path.join(d, "s.json"), os.path.join(d, "d.csv")
        with open(s_path, "w") as f:
            json.dump(scenario, f)
        with open(d_path, "w") as f:
            f.write(csv_text)
        done = subprocess.run([binary, "fit", s_path, d_path, "--json", *args],
                              capture_output=True, text=True, check=False)
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout)
