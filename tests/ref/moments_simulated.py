#!/usr/bin/python3
# moments_simulated.py - itox's moment solutions against simulated moments.
#
# For an Ornstein-Uhlenbeck and a square-root process, `moments X, 2` gives
# E[X_T] and E[X_T^2] in closed form; `check X at ...` and `check X^2 at ...`
# simulate the same model (Euler-Maruyama, 1000 steps, fixed seeds; full
# truncation for the square root) and report the mean of f(X_T) with its
# standard error.  The closed form must lie within 4 standard errors of the
# simulated mean (a z-test, common practice, no source; the discretisation
# bias of 1000 steps is far below the standard error here).  The closed forms
# themselves are checked against SymPy and the published formulas in
# forward_moments.py.
import os
import sys

try:
	import sympy
except ImportError:
	sys.exit(77)


def load_lib():
	srcdir = os.environ.get("ITOX_SRCDIR") or os.path.join(
		os.path.dirname(os.path.abspath(__file__)), "..", "..")
	path = os.path.join(srcdir, "tests", "ref", "itoxref_lib.txt")
	with open(path) as src:
		exec(compile(src.read(), path, "exec"), globals())


load_lib()
tally = Tally("moments_simulated")

# (label, declarations, the point, seed): invented parameter values
CASES = [
	("Ornstein-Uhlenbeck", ["param kappa, theta, s > 0", "noise W",
	                        "dX = kappa*(theta - X)*dt + s*dW"],
	 {"X": 0.2, "kappa": 1.5, "theta": 0.6, "s": 0.4}, 11),
	("square root", ["param kappa, theta, eta > 0", "noise W",
	                 "dX = kappa*(theta - X)*dt + eta*sqrt(X)*dW", "assume X > 0"],
	 {"X": 0.04, "kappa": 2.0, "theta": 0.09, "eta": 0.3}, 23),
]

for label, prelude, point, seed in CASES:
	at = ", ".join("%s=%s" % (k, v) for k, v in point.items())
	over = "over T=1, paths=40000, seed=%d" % seed
	moments, first, second = run_itox(prelude, ["moments X, 2", "check X at %s %s" % (at, over),
	                                            "check X^2 at %s %s" % (at, over)], timeout=60)
	if moments.get("kind") != "moments" or not moments.get("solution"):
		tally.fail(label, "itox moments: %s" % moments.get("message"))
		continue
	names = {k: sympy.Symbol(k, real=True) for k in point}
	names["t"] = sympy.Symbol("t", real=True)
	parser = Parser(names)
	values = {names[k]: v for k, v in point.items()}
	values[names["t"]] = 1
	for k, sim in ((1, first), (2, second)):
		if sim.get("kind") != "check":
			tally.fail("%s: m%d" % (label, k), "itox check: %s" % sim.get("message"))
			continue
		exact = float(parser.parse(moments["solution"][str(k)]).subs(values))
		mean, se = sim["terminal"]["mean"], sim["terminal"]["se"]
		z = (mean - exact) / se
		why = None if abs(z) < 4 else "simulated %.6g (se %.3g), closed form %.6g: z = %.2f" % (
			mean, se, exact, z)
		tally.record("%s: E[X_T^%d]" % (label, k), why)
		print("%s: E[X_T^%d] closed form %.6g, simulated %.6g (se %.2g, z = %.2f)" % (
			label, k, exact, mean, se, z))

tally.finish()
