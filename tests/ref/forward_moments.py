#!/usr/bin/python3
# forward_moments.py - the forward equation and the moment equations of itox
# against SymPy.
#
# Forward: for each model, SymPy assembles p_t = -sum_i d_i(mu_i p) +
# 1/2 sum_ij d_i d_j(C_ij p) with its own derivatives of a generic p(t, x, ...)
# (Risken, The Fokker-Planck Equation, 2nd ed., ch. 4; Karatzas and Shreve,
# 5.7; from memory) and compares it with itox's "rhs"; "equation" must be
# p_t - rhs.
#
# Moments: SymPy applies the generator to x^k, L x^k = mu k x^(k-1) +
# 1/2 C k(k-1) x^(k-2), replaces x^j by m_j, and checks that itox's equations
# are that system and that itox's solutions solve it (d/dt m_k(t) = the right
# side at the solutions, m_k(0) = X^k).  The mean and variance are then
# compared with their published forms: Ornstein-Uhlenbeck (Karatzas and
# Shreve, 5.6; from memory), the square-root process (Cox, Ingersoll and Ross,
# Econometrica 1985, eq. 19; from memory), geometric Brownian motion (Shreve,
# Stochastic Calculus for Finance II, 4.4; from memory).
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

R = sympy.Rational
exp, sqrt = sympy.exp, sympy.sqrt
tally = Tally("forward_moments")


def symbols(names, **assumptions):
	return [sympy.Symbol(n, real=True, **assumptions) for n in names.split()]


t = sympy.Symbol("t", real=True, positive=True)

# ------------------------------------------------------------------ forward

# (label, declarations, state names, {state: drift}, covariance {(i, j): C_ij} in SymPy)
kappa, theta, eta, mu, sigma, m, s, a, b, lam = symbols(
	"kappa theta eta mu sigma m s a b lam", positive=True)
rho, = symbols("rho")
x, y, S, v, r = symbols("x y S v r", positive=True)
syms = {str(z): z for z in (t, kappa, theta, eta, mu, sigma, m, s, a, b, lam, rho, x, y, S, v, r)}
domain = {z: (0.3, 1.7) for z in syms.values()}
domain[rho] = (-0.9, 0.9)

FORWARD = [
	("Brownian motion with drift",
	 ["param m, s > 0", "noise W", "dx = m*dt + s*dW"], [x], {x: m}, {(x, x): s**2}),
	("Ornstein-Uhlenbeck",
	 ["param kappa, theta, s > 0", "noise W", "dx = kappa*(theta - x)*dt + s*dW"],
	 [x], {x: kappa * (theta - x)}, {(x, x): s**2}),
	("geometric Brownian motion",
	 ["param mu, sigma > 0", "noise W", "dS = mu*S*dt + sigma*S*dW", "assume S > 0"],
	 [S], {S: mu * S}, {(S, S): sigma**2 * S**2}),
	("square root",
	 ["param kappa, theta, eta > 0", "noise W", "dr = kappa*(theta - r)*dt + eta*sqrt(r)*dW",
	  "assume r > 0"], [r], {r: kappa * (theta - r)}, {(r, r): eta**2 * r}),
	("stochastic variance, correlated",
	 ["param mu, kappa, theta, eta > 0", "param rho in [-1, 1]", "noise W, B",
	  "corr(W, B) = rho", "dv = kappa*(theta - v)*dt + eta*sqrt(v)*dB",
	  "dS = mu*S*dt + sqrt(v)*S*dW", "assume S > 0, v > 0"],
	 [S, v], {S: mu * S, v: kappa * (theta - v)},
	 {(S, S): v * S**2, (v, v): eta**2 * v, (S, v): rho * eta * v * S, (v, S): rho * eta * v * S}),
	("OU and its integral, one noise",
	 ["param kappa, theta, s > 0", "noise W", "dx = kappa*(theta - x)*dt + s*dW",
	  "dy = x*dt + s*dW"],
	 [x, y], {x: kappa * (theta - x), y: x},
	 {(x, x): s**2, (y, y): s**2, (x, y): s**2, (y, x): s**2}),
	("geometric Brownian motion under a measure",
	 ["param mu, sigma, lam > 0", "noise W", "dS = mu*S*dt + sigma*S*dW", "assume S > 0",
	  "measure Q: dW = dZ - (mu - lam)/sigma*dt"],
	 [S], {S: lam * S}, {(S, S): sigma**2 * S**2}),
]

for label, prelude, states, drift, cov, in FORWARD:
	args = ", ".join(["t"] + [str(z) for z in states])
	query = "forward p(%s)" % args + (" under Q" if "measure" in label else "")
	obj = run_itox(prelude, [query])[0]
	if obj.get("kind") != "forward":
		tally.fail(label, "itox: %s" % obj.get("message"))
		continue
	p = sympy.Function("p", real=True)
	P = p(t, *states)
	want = -sum(sympy.diff(drift[z] * P, z) for z in states)
	want += R(1, 2) * sum(sympy.diff(cov[(i, j)] * P, i, j)
	                      for i in states for j in states if (i, j) in cov)
	parser = Parser(syms, {"p": (p, (t, *states))})
	got = parser.parse(obj["rhs"])
	tally.record(label + ": right side", same(got, want, domain))
	equation = parser.parse(obj["equation"])
	tally.record(label + ": equation", same(equation, sympy.diff(P, t) - want, domain))

# ------------------------------------------------------------------ moments

X = sympy.Symbol("X", real=True, positive=True)
# mean and variance of the square-root process dX = kappa*(theta - X)*dt +
# eta*sqrt(X)*dW given X_0 = X (Cox, Ingersoll and Ross 1985, eq. 19, from memory)
SQRT_MEAN = theta + (X - theta) * exp(-kappa * t)
SQRT_VARIANCE = (X * eta**2 / kappa * (exp(-kappa * t) - exp(-2 * kappa * t))
                 + theta * eta**2 / (2 * kappa) * (1 - exp(-kappa * t))**2)
MOMENTS = [
	("Ornstein-Uhlenbeck", ["param kappa, theta, s > 0", "noise W",
	                        "dX = kappa*(theta - X)*dt + s*dW"],
	 kappa * (theta - X), s**2,
	 theta + (X - theta) * exp(-kappa * t), s**2 / (2 * kappa) * (1 - exp(-2 * kappa * t))),
	("square root", ["param kappa, theta, eta > 0", "noise W",
	                 "dX = kappa*(theta - X)*dt + eta*sqrt(X)*dW", "assume X > 0"],
	 kappa * (theta - X), eta**2 * X, SQRT_MEAN, SQRT_VARIANCE),
	# the same process with kappa's sign left to the assumptions: the closed
	# form needs kappa != 0, which the Feller condition 2*kappa*theta > eta^2
	# implies (kappa = 0 would make it -eta^2 > 0), as does a range or kappa - 1 > 0
	("square root, Feller condition only", ["param kappa, theta, eta", "noise W",
	                 "assume 2*kappa*theta > eta^2",
	                 "dX = kappa*(theta - X)*dt + eta*sqrt(X)*dW", "assume X > 0"],
	 kappa * (theta - X), eta**2 * X, SQRT_MEAN, SQRT_VARIANCE),
	("square root, kappa ranged", ["param kappa in [1/2, 2]", "param theta, eta", "noise W",
	                 "dX = kappa*(theta - X)*dt + eta*sqrt(X)*dW", "assume X > 0"],
	 kappa * (theta - X), eta**2 * X, SQRT_MEAN, SQRT_VARIANCE),
	("square root, kappa - 1 > 0", ["param kappa, theta, eta", "noise W", "assume kappa - 1 > 0",
	                 "dX = kappa*(theta - X)*dt + eta*sqrt(X)*dW", "assume X > 0"],
	 kappa * (theta - X), eta**2 * X, SQRT_MEAN, SQRT_VARIANCE),
	("geometric Brownian motion", ["param mu, sigma > 0", "noise W",
	                               "dX = mu*X*dt + sigma*X*dW", "assume X > 0"],
	 mu * X, sigma**2 * X**2,
	 X * exp(mu * t), X**2 * exp(2 * mu * t) * (exp(sigma**2 * t) - 1)),
	("Jacobi-type", ["param kappa, theta, s > 0", "noise W",
	                 "dX = kappa*(theta - X)*dt + s*sqrt(X*(1 - X))*dW", "assume X in [0, 1]"],
	 kappa * (theta - X), s**2 * X * (1 - X), None, None),
]
syms["X"] = X
domain[X] = (0.3, 0.7)
K = 3
for label, prelude, drift, square, mean, variance in MOMENTS:
	obj = run_itox(prelude, ["moments X, %d" % K])[0]
	if obj.get("kind") != "moments":
		tally.fail(label, "itox: %s" % obj.get("message"))
		continue
	ms = [sympy.Symbol("m%d" % k, real=True) for k in range(1, K + 1)]
	parser = Parser(dict(syms, **{str(z): z for z in ms}))
	xs = sympy.Symbol("xs", real=True)
	for k in range(1, K + 1):
		gen = sympy.expand(drift.subs(X, xs) * k * xs**(k - 1)
		                   + R(1, 2) * square.subs(X, xs) * k * (k - 1) * xs**(k - 2))
		poly = sympy.Poly(gen, xs)
		want = sum(c * (ms[j - 1] if j else 1) for (j,), c in poly.terms())
		got = parser.parse(obj["equations"][str(k)])
		tally.record("%s: m%d'" % (label, k), same(got, want, domain))
	sol = obj.get("solution")
	if sol is None:
		tally.fail(label, "no solution: %s" % obj.get("no_solution"))
		continue
	sols = [parser.parse(sol[str(k)]) for k in range(1, K + 1)]
	for k in range(1, K + 1):
		eq = parser.parse(obj["equations"][str(k)]).subs(dict(zip(ms, sols)))
		tally.record("%s: m%d(t) solves its equation" % (label, k),
		             same(sympy.diff(sols[k - 1], t), eq, domain))
		tally.record("%s: m%d(0) = X^%d" % (label, k, k),
		             same(sols[k - 1].subs(t, 0), X**k, domain))
	if mean is not None:
		tally.record(label + ": mean (published)", same(sols[0], mean, domain))
		tally.record(label + ": variance (published)", same(sols[1] - sols[0]**2, variance, domain))

# The first moment needs only an affine drift: with a bounded, non-polynomial
# diffusion the mean is still the Ornstein-Uhlenbeck one (Karatzas and Shreve,
# 5.6; from memory), and the second moment is refused.
prelude = ["param kappa, theta, s > 0", "noise W", "dX = kappa*(theta - X)*dt + s*cos(X)*dW"]
obj = run_itox(prelude, ["moments X, 1"])[0]
if obj.get("kind") != "moments":
	tally.fail("first moment, cos diffusion", "itox: %s" % obj.get("message"))
else:
	m1 = sympy.Symbol("m1", real=True)
	parser = Parser(dict(syms, m1=m1))
	tally.record("first moment, cos diffusion: m1'",
	             same(parser.parse(obj["equations"]["1"]), kappa * (theta - m1), domain))
	tally.record("first moment, cos diffusion: mean (published)",
	             same(parser.parse(obj["solution"]["1"]), theta + (X - theta) * exp(-kappa * t), domain))
obj = run_itox(prelude, ["moments X, 2"])[0]
tally.record("second moment, cos diffusion: refused",
             None if obj.get("kind") == "error" else "itox answered %s" % obj)

tally.finish()
