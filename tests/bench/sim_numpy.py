#!/usr/bin/python3
"""A vectorised NumPy Euler loop doing the work of itox's `check` simulation.

For tests/bench/run: the simulation half of `check d log(S) at ... over T=1,
steps=N, paths=P` written by hand in NumPy, vectorised over the paths, one
Python loop over the steps, to set beside itox's throughput.  The same
statistics as check (LANGUAGE.md, `check`; src/check.c):
  - Euler-Maruyama paths of the states, dX = a dt + b dW, dW = sqrt(dt) L Z
    with L the Cholesky factor of the correlation matrix, coefficients of a
    state that must stay positive taken at max(X, 0);
  - along each path of f = log(S): the realised quadratic variation
    sum (df)^2 against the integral of g' R g dt (g: the diffusion of f),
    the martingale residual f(T) - f(0) - sum drift*h - sum g.dW, and the
    covariation with each noise, sum df*dW_a - sum (R g)_a h;
  - all of it on the fine grid (N steps) and on the coarse grid (N/2 steps,
    the same Brownian increments summed in pairs), extrapolated 2*fine -
    coarse, as check does to remove the O(dt) bias.
(itox also accumulates the first variation and a rounding scale per path;
that work is left out here, in NumPy's favour.)

The drift and diffusion of log(S) are written by hand, as a NumPy user would
(Itô's formula, Shreve, Stochastic Calculus for Finance II, 4.4, from memory):
  gbm  dS = mu S dt + sigma S dW:  d log S = (mu - sigma^2/2) dt + sigma dW;
  sv   dS = mu S dt + sqrt(v) S dW, dv = kappa (theta - v) dt + xi sqrt(v) dB,
       corr(W, B) = rho:  d log S = (mu - v/2) dt + sqrt(v) dW + 0 dB.

  sim_numpy.py MODEL STEPS PATHS [SEED [REPS]]
      prints "SECONDS PATH_STEPS_PER_SECOND" (the median of REPS runs, path
      steps = paths * fine steps) and then the statistics of the last run.
"""
import math
import sys
import time

import numpy as np

# The point and parameters (invented; the same as the itox statements in run).
GBM = dict(S=100.0, mu=0.05, sigma=0.2)
SV = dict(S=100.0, v=0.04, mu=0.05, kappa=2.0, theta=0.04, xi=0.3, rho=-0.7)


class Model:
    """States, their coefficients, f and its differential, for one model."""

    def __init__(self, name):
        self.name = name
        if name == "gbm":
            p = GBM
            self.x0 = [p["S"]]
            self.corr = np.eye(1)
        else:
            p = SV
            self.x0 = [p["S"], p["v"]]
            self.corr = np.array([[1.0, p["rho"]], [p["rho"], 1.0]])
        self.p = p
        self.chol = np.linalg.cholesky(self.corr)

    def coefficients(self, x):
        """([drift of each state], [[b of state i on noise a]])."""
        p = self.p
        if self.name == "gbm":
            S = x[0]
            return [p["mu"] * S], [[p["sigma"] * S]]
        S, v = x
        root = np.sqrt(np.maximum(v, 0.0))
        return ([p["mu"] * S, p["kappa"] * (p["theta"] - np.maximum(v, 0.0))],
                [[root * S, 0.0], [0.0, p["xi"] * root]])

    def f(self, x):
        return np.log(x[0])

    def differential(self, x):
        """(drift of f, [diffusion of f on noise a]) at the states x."""
        p = self.p
        if self.name == "gbm":
            return p["mu"] - 0.5 * p["sigma"] ** 2, [p["sigma"]]
        v = np.maximum(x[1], 0.0)
        return p["mu"] - 0.5 * v, [np.sqrt(v), 0.0]


class Scheme:
    """One grid: the states and the running sums of every path."""

    def __init__(self, model, paths):
        self.m = model
        self.x = [np.full(paths, x0) for x0 in model.x0]
        self.f = model.f(self.x)
        self.f0 = self.f.copy()
        nn = len(model.x0)
        self.qv = np.zeros(paths)
        self.integ = np.zeros(paths)
        self.resid = np.zeros(paths)
        self.cov = [np.zeros(paths) for _ in range(nn)]
        self.dw = [np.zeros(paths) for _ in range(nn)]

    def step(self, h):
        m, x, dw = self.m, self.x, self.dw
        drift, b = m.coefficients(x)
        fdrift, g = m.differential(x)
        nn = len(x)
        new = []
        for i in range(nn):
            xi = x[i] + drift[i] * h
            for a in range(nn):
                if not (np.isscalar(b[i][a]) and b[i][a] == 0.0):
                    xi = xi + b[i][a] * dw[a]
            new.append(xi)
        self.x = new
        fnext = m.f(new)
        df = fnext - self.f
        rg = [sum(m.corr[a, c] * g[c] for c in range(nn)) for a in range(nn)]
        g2 = sum(g[a] * rg[a] for a in range(nn))
        gdw = sum(g[a] * dw[a] for a in range(nn))
        self.qv += df * df
        self.integ += g2 * h
        self.resid += df - fdrift * h - gdw
        for a in range(nn):
            self.cov[a] += df * dw[a] - rg[a] * h
        self.f = fnext
        for a in range(nn):
            dw[a][:] = 0.0

    def values(self):
        return [self.qv - self.integ, self.resid] + self.cov


def simulate(model, steps, paths, seed):
    rng = np.random.default_rng(seed)
    dt = 1.0 / steps
    root = math.sqrt(dt)
    nn = len(model.x0)
    fine, coarse = Scheme(model, paths), Scheme(model, paths)
    for k in range(steps):
        z = rng.standard_normal((nn, paths))
        for a in range(nn):
            increment = root * sum(model.chol[a, c] * z[c] for c in range(a + 1) if model.chol[a, c] != 0)
            fine.dw[a] += increment
            coarse.dw[a] += increment
        fine.step(dt)
        if k % 2 == 1 or k == steps - 1:
            coarse.step(dt * (2 if k % 2 == 1 else 1))
    extrapolated = [2 * a - b for a, b in zip(fine.values(), coarse.values())]
    return fine, extrapolated


def report(fine, extrapolated):
    labels = ["QV - I", "residual"] + ["covariation %d" % (a + 1) for a in range(len(fine.cov))]
    for label, values in zip(labels, extrapolated):
        mean = float(np.mean(values))
        se = float(np.std(values, ddof=1) / math.sqrt(len(values)))
        z = mean / se if se > 0 else 0.0
        print("  numpy %s: mean %.6g (se %.3g, z = %.2f)" % (label, mean, se, z))
    print("  numpy mean QV = %.6g, predicted I = %.6g" % (float(np.mean(fine.qv)), float(np.mean(fine.integ))))


def main(argv):
    if len(argv) < 4 or argv[1] not in ("gbm", "sv"):
        sys.stderr.write(__doc__)
        return 2
    model = Model(argv[1])
    steps, paths = int(argv[2]), int(argv[3])
    seed = int(argv[4]) if len(argv) > 4 else 7
    reps = int(argv[5]) if len(argv) > 5 else 3
    times = []
    for r in range(reps):
        start = time.perf_counter()
        fine, extrapolated = simulate(model, steps, paths, seed + r)
        times.append(time.perf_counter() - start)
    times.sort()
    middle = times[len(times) // 2] if len(times) % 2 else 0.5 * (times[len(times) // 2 - 1] + times[len(times) // 2])
    print("%.6g %.6g" % (middle, steps * paths / middle))
    report(fine, extrapolated)
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
