#!/usr/bin/python3
"""SymPy reference for the scalar benchmark cases of tests/bench/run.

Geometric Brownian motion dS = mu*S*dt + sigma*S*dW, S > 0, and
    log    f = log(S)
    cube   f = S^3
    power  f = S^p          (p symbolic)
    discount  f = exp(-r*t)*S   (the discounted price)
Itô's formula by hand (Shreve, Stochastic Calculus for Finance II, 4.4, the
Itô-Doeblin formula, from memory):
    df = (f_t + mu S f_S + 1/2 sigma^2 S^2 f_SS) dt + sigma S f_S dW,
then sympy.expand.  The same formula in closed form, for the reader: log(S)
has drift mu - sigma^2/2 and diffusion sigma; S^p has drift
(p mu + p (p - 1) sigma^2 / 2) S^p and diffusion p sigma S^p; exp(-r t) S
has drift (mu - r) exp(-r t) S (common practice, no source).

  ito_scalar.py time CASE [REPS [TIMEOUT]]
      median seconds of differentiating, assembling and expanding (SymPy's
      cache cleared before each repetition); prints "SECONDS TERMS".
  ito_scalar.py check CASE SEED < JSON
      each input line is a result {"drift": ..., "diffusion": {"W": ...}}
      (itox --format=json, ito_ginac json); prints "agree" for each line
      whose drift and diffusion equal SymPy's at a random rational point
      (40 digits), otherwise "DISAGREE" and which part differs.
"""
import json
import random
import sys
import time

import sympy
from sympy.core.cache import clear_cache

CASES = ("log", "cube", "power", "discount")
NAMES = ("S", "mu", "sigma", "t", "p", "r")


def ito(case):
    S, mu, sigma, t, p, r = sympy.symbols(" ".join(NAMES))
    f = {"log": sympy.log(S), "cube": S**3, "power": S**p,
         "discount": sympy.exp(-r * t) * S}[case]
    fs = sympy.diff(f, S)
    drift = sympy.diff(f, t) + mu * S * fs + sympy.Rational(1, 2) * sigma**2 * S**2 * sympy.diff(fs, S)
    return sympy.expand(drift), sympy.expand(sigma * S * fs)


def median(values):
    values = sorted(values)
    k = len(values)
    return values[k // 2] if k % 2 else 0.5 * (values[k // 2 - 1] + values[k // 2])


def time_case(case, reps, timeout):
    times = []
    drift = 0
    for _ in range(reps):
        clear_cache()
        start = time.perf_counter()
        drift, _ = ito(case)
        times.append(time.perf_counter() - start)
        if sum(times) > timeout / 4:
            break
    print("%.6g %d" % (median(times), len(sympy.Add.make_args(drift))))


def close(x, y):
    x, y = sympy.N(x, 40), sympy.N(y, 40)
    scale = max(abs(x), abs(y), 1)
    return abs(x - y) <= sympy.Float("1e-30", 40) * scale


def check_case(case, seed):
    ours = ito(case)
    symbols = {name: sympy.Symbol(name) for name in NAMES}
    rng = random.Random(seed)
    # S > 0 (log S must be real); the others anywhere in a small box
    point = {symbols[name]: sympy.Rational(rng.randint(-150, 150), rng.randint(50, 120)) for name in NAMES}
    point[symbols["S"]] = sympy.Rational(rng.randint(10, 300), rng.randint(50, 120))
    status = 0
    for number, line in enumerate((l for l in sys.stdin.read().splitlines() if l.strip()), 1):
        result = json.loads(line)
        theirs = [sympy.sympify(text.replace("^", "**"), locals=symbols)
                  for text in (result["drift"], result["diffusion"].get("W", "0"))]
        bad = [label for label, a, b in zip(("drift", "diffusion W"), theirs, ours)
               if not close(a.xreplace(point), b.xreplace(point))]
        if bad:
            status = 1
            print("DISAGREE (result %d: %s)" % (number, ", ".join(bad)))
        else:
            print("agree")
    return status


def main(argv):
    if len(argv) < 3 or argv[1] not in ("time", "check") or argv[2] not in CASES:
        sys.stderr.write(__doc__)
        return 2
    if argv[1] == "time":
        reps = int(argv[3]) if len(argv) > 3 else 5
        timeout = int(argv[4]) if len(argv) > 4 else 60
        time_case(argv[2], reps, timeout)
        return 0
    return check_case(argv[2], int(argv[3]) if len(argv) > 3 else 1)


if __name__ == "__main__":
    sys.exit(main(sys.argv))
