#!/usr/bin/python3
"""SymPy reference for the Itô benchmarks b and c of tests/bench/bench_core.c.

Itô's formula is assembled by hand (Shreve, Stochastic Calculus for Finance II,
section 4.6, the multidimensional Itô-Doeblin formula, from memory):
    df = (f_t + sum_i m_i f_i + 1/2 sum_ij C_ij f_ij) dt + sum_i s_i f_i dW_i,
    C_ii = s_i^2, C_ij = rho_ij s_i s_j (dW_i dW_j = rho_ij dt),
with the same symbol names as bench_core (--script prints the itox model).

  ito_sympy.py time CASE N [REPS [TIMEOUT]]
      median seconds of differentiating, assembling and sympy.expand, with the
      SymPy cache cleared before each repetition; prints "SECONDS TERMS" or
      "timeout".
  ito_sympy.py check CASE N SEED < JSON
      each input line is an itox result ({"drift": ..., "diffusion": {...}});
      prints "agree" when its drift and diffusions equal SymPy's at a random
      rational point (40 significant digits), otherwise "DISAGREE" and why.
"""
import json
import random
import re
import signal
import sys
import time

import sympy
from sympy.core.cache import clear_cache


class Model:
    """The symbols of case b or c with n states."""

    def __init__(self, case, n):
        self.case, self.n = case, n
        sym = sympy.Symbol
        self.t = sym("t")
        self.X = [sym("X%d" % i) for i in range(1, n + 1)]
        self.sig = [sym("sig%d" % i) for i in range(1, n + 1)]
        self.rho = {}
        for i in range(n):
            for j in range(i + 1, n):
                self.rho[i, j] = self.rho[j, i] = sym("rho_%d_%d" % (i + 1, j + 1))
        if case == "b":
            self.mu = [sym("mu%d" % i) for i in range(1, n + 1)]
            self.drifts = self.mu
            self.f = sympy.Function("f")(self.t, *self.X)
        else:
            self.kap = [sym("kap%d" % i) for i in range(1, n + 1)]
            self.th = [sym("th%d" % i) for i in range(1, n + 1)]
            self.a = [sym("a%d" % i) for i in range(1, n + 1)]
            self.drifts = [k * (th - x) for k, th, x in zip(self.kap, self.th, self.X)]
            self.f = sympy.exp(sum(a * x for a, x in zip(self.a, self.X))) * sympy.Mul(*self.X)

    def covariance(self, i, j):
        if i == j:
            return self.sig[i] ** 2
        return self.rho[i, j] * self.sig[i] * self.sig[j]

    def ito(self):
        """(drift, [diffusion per noise]), expanded."""
        f, n = self.f, self.n
        first = [sympy.diff(f, x) for x in self.X]
        drift = [sympy.diff(f, self.t)]
        drift += [m * fi for m, fi in zip(self.drifts, first)]
        for i in range(n):
            for j in range(i, n):
                weight = sympy.Rational(1, 2) if i == j else 1
                drift.append(weight * self.covariance(i, j) * sympy.diff(first[i], self.X[j]))
        drift = sympy.expand(sympy.Add(*drift))
        diffusion = [sympy.expand(s * fi) for s, fi in zip(self.sig, first)]
        return drift, diffusion


class Timeout(Exception):
    pass


def on_alarm(signum, frame):
    raise Timeout()


def time_case(case, n, reps, timeout):
    model = Model(case, n)
    signal.signal(signal.SIGALRM, on_alarm)
    times = []
    terms = 0
    try:
        signal.alarm(timeout)
        for _ in range(reps):
            clear_cache()
            start = time.perf_counter()
            drift, _ = model.ito()
            times.append(time.perf_counter() - start)
            terms = len(sympy.Add.make_args(drift))
            if sum(times) > timeout / 4:
                break
        signal.alarm(0)
    except Timeout:
        print("timeout")
        return
    times.sort()
    k = len(times)
    middle = times[k // 2] if k % 2 else 0.5 * (times[k // 2 - 1] + times[k // 2])
    print("%.6g %d" % (middle, terms))


# itox prints generic partials as f_{t}, f_{X1,X2} (LANGUAGE.md); in SymPy they
# are Derivative(f(t, X1..Xn), ...).  Both become symbols D__t, D__X1__X2.
PARTIAL = re.compile(r"\bf_\{([^}]*)\}|\bf\b")


def partial_key(names, order):
    names = sorted(names, key=order.index)
    return "D__" + "__".join(names) if names else "D__"


def itox_to_sympy(text, model, symbols):
    order = ["t"] + [str(x) for x in model.X]

    def rename(match):
        names = match.group(1).split(",") if match.group(1) else []
        key = partial_key([name.strip() for name in names], order)
        symbols.setdefault(key, sympy.Symbol(key))
        return key

    text = PARTIAL.sub(rename, text).replace("^", "**")
    return sympy.sympify(text, locals=symbols)


def sympy_partials_to_symbols(e, model, symbols):
    order = ["t"] + [str(x) for x in model.X]
    replace = {}
    for d in e.atoms(sympy.Derivative):
        names = []
        for var, count in d.variable_count:
            names += [str(var)] * int(count)
        key = partial_key(names, order)
        replace[d] = symbols.setdefault(key, sympy.Symbol(key))
    e = e.xreplace(replace)
    if model.case == "b":
        e = e.xreplace({model.f: symbols.setdefault("D__", sympy.Symbol("D__"))})
    return e


def random_value(rng):
    return sympy.Rational(rng.randint(-150, 150), rng.randint(50, 120))


def close(x, y):
    x, y = sympy.N(x, 40), sympy.N(y, 40)
    scale = max(abs(x), abs(y), 1)
    return abs(x - y) <= sympy.Float("1e-30", 40) * scale


def check_case(case, n, seed):
    model = Model(case, n)
    drift, diffusion = model.ito()
    symbols = {}
    for s in set().union(drift.free_symbols, *[d.free_symbols for d in diffusion]):
        symbols[str(s)] = s
    drift = sympy_partials_to_symbols(drift, model, symbols)
    diffusion = [sympy_partials_to_symbols(d, model, symbols) for d in diffusion]
    lines = [line for line in sys.stdin.read().splitlines() if line.strip()]
    status = 0
    for number, line in enumerate(lines, 1):
        result = json.loads(line)
        theirs = [itox_to_sympy(result["drift"], model, symbols)]
        for k in range(n):
            theirs.append(itox_to_sympy(result["diffusion"].get("W%d" % (k + 1), "0"), model, symbols))
        ours = [drift] + diffusion
        free = set().union(*[e.free_symbols for e in theirs + ours])
        rng = random.Random(seed + number)
        point = {s: random_value(rng) for s in sorted(free, key=str)}
        labels = ["drift"] + ["diffusion W%d" % (k + 1) for k in range(n)]
        bad = [label for label, a, b in zip(labels, theirs, ours)
               if not close(a.xreplace(point), b.xreplace(point))]
        if bad:
            status = 1
            print("DISAGREE (result %d: %s)" % (number, ", ".join(bad)))
        else:
            print("agree")
    return status


def main(argv):
    if len(argv) < 4 or argv[1] not in ("time", "check") or argv[2] not in ("b", "c"):
        sys.stderr.write(__doc__)
        return 2
    case, n = argv[2], int(argv[3])
    if argv[1] == "time":
        reps = int(argv[4]) if len(argv) > 4 else 3
        timeout = int(argv[5]) if len(argv) > 5 else 60
        time_case(case, n, reps, timeout)
        return 0
    seed = int(argv[4]) if len(argv) > 4 else 1
    return check_case(case, n, seed)


if __name__ == "__main__":
    sys.exit(main(sys.argv))
