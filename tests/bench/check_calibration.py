#!/usr/bin/env python3
"""check_calibration.py - how often `check` cries wolf, and how often it
catches a wrong differential (issue 15).

For each model and quantity below, the engine's own differential (right) is
checked from many seeds at the default settings and at coarse ones; each
wrong differential (a missing Itô term, the diffusion times 1.2, a missing
correlation term, a wrong sign) is checked from as many seeds.  The table
gives the share of `consistent`, `inconsistent` and `undecided` verdicts.

Each right differential below was derived by hand (Itô's formula; Shreve,
Stochastic Calculus for Finance II, 4.4 and 4.6, from memory); with
--by-hand it is also given typed by hand to the check, so the engine's result
is not the only witness.  The scenarios are invented.

Usage: check_calibration.py [--itox ./itox] [--seeds 200] [--jobs 2]
       [--only NAME] [--by-hand] [--quick]   (--quick: the make-check subset)
Prints the Markdown tables on standard output; the exit status is 1 when a
right differential is inconsistent on more than 1% of the seeds or a wrong
one is not inconsistent on every seed.
"""
import argparse
import json
import os
import subprocess
import sys
import tempfile
from concurrent.futures import ThreadPoolExecutor

MODELS = {
    "gbm": ["param mu, sigma > 0", "noise W", "dS = mu*S*dt + sigma*S*dW", "assume S > 0"],
    "ou": ["param lam, m, eta > 0", "noise V", "dx = lam*(m - x)*dt + eta*dV"],
    "cir": ["param kappa, theta, xi > 0", "noise B", "dv = kappa*(theta - v)*dt + xi*sqrt(v)*dB",
            "assume v > 0"],
    "heston": ["param mu, kappa, theta, xi > 0", "param rho in [-1, 1]", "noise W, B",
               "corr(W, B) = rho", "dS = mu*S*dt + sqrt(v)*S*dW",
               "dv = kappa*(theta - v)*dt + xi*sqrt(v)*dB", "assume S > 0, v > 0"],
    "rotor": ["param a > 0", "noise W", "stratonovich dx = -y*dt + a*y*dW",
              "stratonovich dy = x*dt - a*x*dW"],
    "discount": ["param r > 0"],
}
POINTS = {
    "gbm": "S=100, mu=0.05, sigma=0.2",
    "ou": "x=0.5, lam=1.5, m=1, eta=0.3",
    # Feller: 2 kappa theta = 0.16 > xi^2 = 0.04
    "cir": "v=0.04, kappa=2, theta=0.04, xi=0.2",
    # Feller: 0.16 > 0.09
    "heston": "S=100, v=0.04, mu=0.05, kappa=2, theta=0.04, xi=0.3, rho=-0.7",
    "rotor": "x=1, y=0, a=0.5",
    "discount": "r=0.05",
}
# (model, quantity, right by hand, {wrong name: wrong differential}, extra over-settings)
# Hand derivations (Itô's formula, from memory; each confirmed by the engine's
# own differential being consistent and by SymPy in tests/ref/derivatives.py style):
#   GBM:  d log S = (mu - sigma^2/2) dt + sigma dW;  d S^3 = (3 mu + 3 sigma^2) S^3 dt + 3 sigma S^3 dW
#   OU:   d x^2 = (2 lam (m - x) x + eta^2) dt + 2 eta x dV
#   CIR:  d sqrt v = ((kappa theta/2 - xi^2/8)/sqrt v - kappa sqrt v/2) dt + xi/2 dB
#         d log v = ((kappa theta - xi^2/2)/v - kappa) dt + xi/sqrt v dB
#   Heston: d log S = (mu - v/2) dt + sqrt v dW
#         d (S v) = (kappa (theta - v) + mu v + rho xi v) S dt + v^(3/2) S dW + xi sqrt v S dB
#   rotor (Stratonovich; Itô drift -a^2/2 (x, y)): d (x^2 + y^2) = 0; without the
#         Itô correction of the drift one would get -a^2 (x^2 + y^2) dt
#   discount: d exp(-r t) = -r exp(-r t) dt
CASES = [
    ("gbm", "log(S)", "(mu - sigma^2/2)*dt + sigma*dW",
     {"missing Itô term": "mu*dt + sigma*dW",
      "diffusion x1.2": "(mu - sigma^2/2)*dt + 1.2*sigma*dW",
      "wrong sign": "(mu - sigma^2/2)*dt - sigma*dW"}, ""),
    ("gbm", "S^3", "(3*mu + 3*sigma^2)*S^3*dt + 3*sigma*S^3*dW",
     {"missing Itô term": "3*mu*S^3*dt + 3*sigma*S^3*dW",
      "diffusion x1.2": "(3*mu + 3*sigma^2)*S^3*dt + 3.6*sigma*S^3*dW",
      "wrong sign": "(3*mu + 3*sigma^2)*S^3*dt - 3*sigma*S^3*dW"}, ""),
    ("ou", "x^2", "(2*lam*(m - x)*x + eta^2)*dt + 2*eta*x*dV",
     {"missing Itô term": "2*lam*(m - x)*x*dt + 2*eta*x*dV",
      "diffusion x1.2": "(2*lam*(m - x)*x + eta^2)*dt + 2.4*eta*x*dV",
      "wrong sign": "(2*lam*(m - x)*x + eta^2)*dt - 2*eta*x*dV"}, ""),
    ("cir", "sqrt(v)", "((kappa*theta/2 - xi^2/8)/sqrt(v) - kappa*sqrt(v)/2)*dt + xi/2*dB",
     {"missing Itô term": "kappa*(theta - v)/(2*sqrt(v))*dt + xi/2*dB",
      "diffusion x1.2": "((kappa*theta/2 - xi^2/8)/sqrt(v) - kappa*sqrt(v)/2)*dt + 0.6*xi*dB",
      "wrong sign": "((kappa*theta/2 - xi^2/8)/sqrt(v) - kappa*sqrt(v)/2)*dt - xi/2*dB"}, ""),
    ("cir", "log(v)", "((kappa*theta - xi^2/2)/v - kappa)*dt + xi/sqrt(v)*dB",
     {"missing Itô term": "(kappa*theta/v - kappa)*dt + xi/sqrt(v)*dB",
      "diffusion x1.2": "((kappa*theta - xi^2/2)/v - kappa)*dt + 1.2*xi/sqrt(v)*dB",
      "wrong sign": "((kappa*theta - xi^2/2)/v - kappa)*dt - xi/sqrt(v)*dB"}, ""),
    ("heston", "log(S)", "(mu - v/2)*dt + sqrt(v)*dW",
     {"missing Itô term": "mu*dt + sqrt(v)*dW",
      "diffusion x1.2": "(mu - v/2)*dt + 1.2*sqrt(v)*dW",
      "wrong sign": "(mu - v/2)*dt - sqrt(v)*dW"}, ""),
    ("heston", "S*v", "(kappa*(theta - v) + mu*v + rho*xi*v)*S*dt + v*sqrt(v)*S*dW + xi*sqrt(v)*S*dB",
     {"missing correlation term": "(kappa*(theta - v) + mu*v)*S*dt + v*sqrt(v)*S*dW + xi*sqrt(v)*S*dB",
      "diffusion x1.2": "(kappa*(theta - v) + mu*v + rho*xi*v)*S*dt + v*sqrt(v)*S*dW + 1.2*xi*sqrt(v)*S*dB",
      "wrong sign": "(kappa*(theta - v) + mu*v + rho*xi*v)*S*dt - v*sqrt(v)*S*dW + xi*sqrt(v)*S*dB"}, ""),
    ("rotor", "x^2 + y^2", "0*dt",
     {"missing Itô term": "-a^2*(x^2 + y^2)*dt",
      "wrong sign": "a^2*(x^2 + y^2)*dt"}, ""),
    ("discount", "exp(-r*t)", "-r*exp(-r*t)*dt",
     {"drift x1.2": "-1.2*r*exp(-r*t)*dt",
      "wrong sign": "r*exp(-r*t)*dt"}, "T=30"),
]
SETTINGS = [("default (1000 steps, 20000 paths)", ""),
            ("coarse (50 steps, 20000 paths)", "steps=50"),
            ("coarse (50 steps, 100000 paths)", "steps=50, paths=100000")]
# the wrong differentials: on the coarse grid, where the bias allowance is
# largest (so the power is least)
POWER = [("50 steps, 20000 paths", "steps=50")]


def over(*parts):
    parts = [p for p in parts if p]
    return " over " + ", ".join(parts) if parts else ""


def run(itox, model, lines):
    """Run one script (the model, then lines); the list of verdicts."""
    with tempfile.NamedTemporaryFile("w", suffix=".itox", delete=False) as f:
        f.write("\n".join(MODELS[model] + lines) + "\n")
        path = f.name
    try:
        env = dict(os.environ, OMP_NUM_THREADS="1")
        out = subprocess.run([itox, "--format=json", path], capture_output=True, text=True, env=env)
    finally:
        os.unlink(path)
    verdicts = []
    for line in out.stdout.splitlines():
        obj = json.loads(line)
        if obj.get("kind") == "check":
            verdicts.append(obj["verdict"])
    if len(verdicts) != len(lines):
        sys.stderr.write(out.stderr)
        raise SystemExit("itox gave %d verdicts for %d checks" % (len(verdicts), len(lines)))
    return verdicts


def batch(model, statement, settings, seeds, chunk=25):
    """The verdict counts of `statement over settings, seed=s` for the seeds."""
    jobs = []
    for first in range(0, len(seeds), chunk):
        lines = ["%s%s" % (statement, over(settings, "seed=%d" % s)) for s in seeds[first:first + chunk]]
        jobs.append((model, lines))
    return jobs


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--itox", default="./itox")
    ap.add_argument("--seeds", type=int, default=200)
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--only", help="one model")
    ap.add_argument("--quantity", help="one f of the model, as in CASES")
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--by-hand", action="store_true", help="also the right differentials typed by hand")
    ap.add_argument("--settings", default="0,1,2", help="which SETTINGS for the right differentials")
    ap.add_argument("--no-right", action="store_true")
    ap.add_argument("--no-wrong", action="store_true")
    ap.add_argument("--power", help="over-settings of the wrong differentials instead of the coarse grid")
    args = ap.parse_args()
    seeds = list(range(1001, 1001 + args.seeds))
    settings = [SETTINGS[int(i)] for i in args.settings.split(",") if i != ""]
    power = [(args.power, args.power)] if args.power else POWER
    if args.quick:
        settings = [SETTINGS[1]]
    rows = []  # (kind, model, quantity, what, setting, jobs)
    for model, f, hand, wrongs, extra in CASES:
        if (args.only and args.only != model) or (args.quantity and args.quantity != f):
            continue
        at = " at " + POINTS[model]
        for name, s in settings if not args.no_right else []:
            for what, stmt in (("engine", "check d %s%s" % (f, at)),
                               ("by hand", "check d %s = %s%s" % (f, hand, at))):
                if what == "by hand" and not args.by_hand:
                    continue
                rows.append(("right", model, f, what, name,
                             batch(model, stmt, ", ".join(p for p in (extra, s) if p), seeds)))
        for what, wrong in wrongs.items() if not args.no_wrong else []:
            for name, s in power:
                stmt = "check d %s = %s%s" % (f, wrong, at)
                rows.append(("wrong", model, f, what, name,
                             batch(model, stmt, ", ".join(p for p in (extra, s) if p), seeds)))
    failed = False
    header = "| model | f | differential | setting | seeds | consistent | inconsistent | undecided |"
    titles = {"right": "Right differentials: share of verdicts (at most 1% inconsistent)",
              "wrong": "Wrong differentials: share of verdicts (every seed inconsistent)"}
    last = None
    with ThreadPoolExecutor(args.jobs) as pool:
        # one row at a time, its chunks in parallel; each row printed when done
        for kind, model, f, what, name, jobs in rows:
            if kind != last:
                print("\n### %s\n\n%s\n|---|---|---|---|---|---|---|---|" % (titles[kind], header), flush=True)
                last = kind
            c = dict(consistent=0, inconsistent=0, undecided=0)
            for verdicts in pool.map(lambda j: run(args.itox, *j), jobs):
                for v in verdicts:
                    c[v] += 1
            n = sum(c.values())
            print("| %s | `%s` | %s | %s | %d | %.1f%% | %.1f%% | %.1f%% |" % (
                model, f, what, name, n, 100.0 * c["consistent"] / n, 100.0 * c["inconsistent"] / n,
                100.0 * c["undecided"] / n), flush=True)
            if kind == "right" and c["inconsistent"] > 0.01 * n:
                failed = True
            if kind == "wrong" and c["inconsistent"] != n:
                failed = True
    sys.exit(1 if failed else 0)


if __name__ == "__main__":
    main()
