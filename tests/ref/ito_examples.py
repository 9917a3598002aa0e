#!/usr/bin/python3
# ito_examples.py - worked examples of Itô calculus from published sources, three ways.
#
# For each example: (a) itox's result (--format=json), (b) an independent
# hand-assembly of Itô's formula in SymPy (SymPy's own partial derivatives, assembled
# here as f_t + sum mu_i f_i + 1/2 sum_ij f_ij sum_kl b_ik b_jl rho_kl, with the
# Stratonovich correction, Girsanov shift and change of state written out below) and
# (c) where the source gives one, its closed form, must agree.  Agreement is
# sympy.simplify(a - b) == 0 or, failing that, equality in 40-digit arithmetic at
# random points of the domain (relative tolerance 1e-8).  Generic functions
# (func f(t, x)) are compared symbolically first and then with a concrete smooth
# function put in their place on both sides.
#
# Sources (see the project's shared REFERENCES.md); "from memory" means the author of this
# test did not hold a copy, and the closed form was also re-derived by hand.
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
HALF = R(1, 2)
diff = sympy.diff
exp, log, sqrt, sin, cos = sympy.exp, sympy.log, sympy.sqrt, sympy.sin, sympy.cos

# ------------------------------------------------------------------ names

class Names:
	"""The SymPy symbols of one model, with the sampling domain of each."""

	def __init__(self):
		self.sym = {}
		self.domain = {}
		self.funcs = {}
		self.concrete = {}
		self.add("t", (0.1, 0.9), positive=True)

	def add(self, names, interval, **assumptions):
		made = []
		for name in names.split():
			s = sympy.Symbol(name, real=True, **assumptions)
			self.sym[name] = s
			self.domain[s] = interval
			made.append(s)
		return made[0] if len(made) == 1 else made

	def pos(self, names):
		return self.add(names, (0.3, 1.7), positive=True)

	def real(self, names):
		return self.add(names, (-1.5, 1.5))

	def corr(self, names):
		return self.add(names, (-0.9, 0.9))

	def func(self, name, args, concrete):
		"""A generic function f(args) and the concrete smooth stand-in used for the
		numeric comparison (a Python function of the argument expressions)."""
		f = sympy.Function(name, real=True)
		self.funcs[name] = (f, tuple(args))
		self.concrete[f] = concrete
		return f

	def parser(self):
		return Parser(self.sym, self.funcs)

	def make_concrete(self, expr):
		"""expr with every generic function replaced by its stand-in, evaluated."""
		for f, body in self.concrete.items():
			expr = expr.replace(f, lambda *a, body=body: body(*a))
		return expr.doit()

# ------------------------------------------------------------------ Itô by hand

class Model:
	"""SDEs dX = drift dt + sum_k b_k dW_k with correlations rho_kl, assembled by hand."""

	def __init__(self, names, noises, corr=None):
		self.names = names
		self.noises = list(noises)
		self.rho = dict(corr or {})
		self.states = []  # (Symbol, drift, {noise: coefficient})
		for k in self.noises:
			if k not in names.sym:
				names.real(k)

	def c(self, k, l):
		if k == l:
			return 1
		return self.rho.get((k, l), self.rho.get((l, k), 0))

	def sde(self, X, drift, diffusion):
		self.states.append((X, sympy.sympify(drift), dict(diffusion)))
		return self

	def processes(self):
		"""The states and the Brownian motions themselves (dW = 0 dt + 1 dW)."""
		out = list(self.states)
		for k in self.noises:
			out.append((self.names.sym[k], sympy.Integer(0), {k: sympy.Integer(1)}))
		return out

	def cov(self, b1, b2):
		"""The dt coefficient of (sum_k b1_k dW_k)(sum_l b2_l dW_l)."""
		return sum((b1.get(k, 0) * b2.get(l, 0) * self.c(k, l)
		            for k in self.noises for l in self.noises), sympy.Integer(0))

	def ito(self, f):
		"""Itô's formula: (drift, {noise: coefficient}) of d f(t, X)."""
		procs = self.processes()
		drift = diff(f, self.names.sym["t"])
		for X, mu, _ in procs:
			drift += mu * diff(f, X)
		for X, _, bX in procs:
			for Y, _, bY in procs:
				drift += HALF * diff(f, X, Y) * self.cov(bX, bY)
		dif = {}
		for k in self.noises:
			dif[k] = sum((b.get(k, 0) * diff(f, X) for X, _, b in procs), sympy.Integer(0))
		return drift, dif

	def qv(self, f, g):
		return self.cov(self.ito(f)[1], self.ito(g)[1])

	def pde(self, V, rate):
		"""The backward equation: generator of V minus rate*V."""
		return self.ito(V)[0] - rate * V

	def stratonovich_sde(self, X, drift, diffusion):
		"""Declare X by a Stratonovich SDE: the Itô drift adds
		1/2 sum_kl rho_kl sum_j b_jl d b_k / d x_j over the states x_j (Kloeden and
		Platen, Sec. 4.9, from memory, with correlated noises)."""
		self.states.append((X, sympy.sympify(drift), dict(diffusion)))
		correction = sympy.Integer(0)
		for k in self.noises:
			for l in self.noises:
				for Y, _, bY in self.states:
					correction += self.c(k, l) * bY.get(l, 0) * diff(diffusion.get(k, 0), Y)
		self.states[-1] = (X, self.states[-1][1] + HALF * correction, dict(diffusion))
		return self

	def girsanov(self, shifts):
		"""The model under Q where dW = dZ - lambda dt for each listed W: {W: (Z, lambda)}.
		A noise correlated with a listed one but not listed itself is shifted by
		sum_W rho * lambda (the minimal change) and keeps its name."""
		renamed = {k: shifts[k][0] if k in shifts else k for k in self.noises}
		lam = {}
		for k in self.noises:
			if k in shifts:
				lam[k] = shifts[k][1]
			else:
				lam[k] = sum((self.c(k, j) * shifts[j][1] for j in shifts), sympy.Integer(0))
		q = Model(self.names, [renamed[k] for k in self.noises],
		          {(renamed[a], renamed[b]): v for (a, b), v in self.rho.items()})
		for X, mu, b in self.states:
			new_mu = mu - sum((b.get(k, 0) * lam[k] for k in self.noises), sympy.Integer(0))
			q.states.append((X, new_mu, {renamed[k]: v for k, v in b.items()}))
		return q

# ------------------------------------------------------------------ comparing results

def read(obj, parser, text):
	"""An expression of a JSON result; names abbreviating `let` definitions (listed in
	the object's "let") are expanded."""
	lets = obj.get("let") or {}
	if not lets:
		return parser.parse(text)
	sub = Parser(dict(parser.symbols), parser.funcs)
	for name in lets:
		sub.symbols[name] = sympy.Symbol("let_" + name, real=True)
	expr = sub.parse(text)
	for _ in range(len(lets) + 1):  # definitions may use one another
		expr = expr.subs({sub.symbols[k]: sub.parse(v) for k, v in lets.items()})
	return expr


def as_differential(obj, parser):
	"""(drift, {noise: coefficient}) from a JSON differential or SDE."""
	drift = read(obj, parser, obj["drift"])
	dif = {k: read(obj, parser, v) for k, v in obj.get("diffusion", {}).items()}
	return drift, dif


def as_value(obj, parser):
	key = "equation" if obj.get("kind") == "pde" else "value"
	return read(obj, parser, obj[key])


def agree(names, a, b):
	"""None when a = b (symbolically, or numerically with stand-ins for generic
	functions), else why not."""
	why = same(a, b, names.domain)
	if why is None:
		return None
	if names.concrete:
		ca, cb = names.make_concrete(sympy.sympify(a)), names.make_concrete(sympy.sympify(b))
		why2 = same(ca, cb, names.domain)
		if why2 is None:
			return None
		return why2
	return why


def compare(names, got, want):
	"""got, want: expressions or (drift, {noise: coefficient}) pairs."""
	if isinstance(want, tuple):
		drift_g, dif_g = got
		drift_w, dif_w = want
		why = agree(names, drift_g, drift_w)
		if why is not None:
			return "drift differs: %s" % why
		for k in sorted(set(dif_g) | set(dif_w)):
			why = agree(names, dif_g.get(k, 0), dif_w.get(k, 0))
			if why is not None:
				return "d%s coefficient differs: %s" % (k, why)
		return None
	return agree(names, got, want)


def show(x):
	if isinstance(x, tuple):
		return "drift %s; diffusion %s" % (x[0], x[1])
	return str(x)


class Example:
	def __init__(self, source, query, hand, closed=None, kind=None):
		self.source = source
		self.query = query
		self.hand = hand      # a function of nothing: the hand-assembled result
		self.closed = closed  # the book's closed form, or None
		self.kind = kind      # expected JSON kind


def run_group(tally, title, names, prelude, examples):
	results = run_itox(prelude, [ex.query for ex in examples], timeout=20)
	parser = names.parser()
	for ex, obj in zip(examples, results):
		label = "%s: `%s` [%s]" % (title, ex.query, ex.source)
		if obj is None or obj.get("kind") in ("error", "unparsable-output", None):
			tally.fail(label, "itox gave %r" % (obj,))
			continue
		if ex.kind is not None and obj.get("kind") != ex.kind:
			tally.fail(label, "JSON kind %r, expected %r: %r" % (obj.get("kind"), ex.kind, obj))
			continue
		measure = ex.query.split(" under ")[1].strip() if " under " in ex.query else "P"
		if "measure" in obj and obj["measure"] != measure:
			tally.fail(label, "JSON measure %r, expected %r" % (obj["measure"], measure))
			continue
		try:
			hand = ex.hand()
			got = as_differential(obj, parser) if isinstance(hand, tuple) else as_value(obj, parser)
		except Exception as exc:  # noqa: BLE001 - report any failure to read the result
			tally.fail(label, "cannot read itox result %r: %s" % (obj, exc))
			continue
		why = compare(names, got, hand)
		if why is not None:
			tally.fail(label, "itox %s\n     vs hand-assembly %s\n     %s" % (show(got), show(hand), why))
			continue
		if ex.closed is not None:
			why = compare(names, got, ex.closed)
			if why is None:
				why = compare(names, hand, ex.closed)
			if why is not None:
				tally.fail(label, "itox %s\n     vs closed form %s\n     %s" %
				           (show(got), show(ex.closed), why))
				continue
		tally.ok(label)

# ------------------------------------------------------------------ the examples

SHREVE = "Shreve, Stochastic Calculus for Finance II"
OKSENDAL = "Oksendal, Stochastic Differential Equations, 6th ed."
KS = "Karatzas-Shreve, Brownian Motion and Stochastic Calculus, 2nd ed."
KP = "Kloeden-Platen, Numerical Solution of SDEs"


def group_brownian(tally):
	n = Names()
	sigma = n.pos("sigma")
	n.real("n")  # the prelude's param n, used by no example since W^n became W^7
	W = n.real("W")
	t = n.sym["t"]
	m = Model(n, ["W"])
	pre = ["param sigma > 0", "param n", "noise W"]
	E = exp(sigma * W - sigma**2 * t / 2)
	ex = [
		Example(OKSENDAL + ", ch. 4, Example 4.1.2: d(W^2) = dt + 2W dW (from memory)",
		        "d W^2", lambda: m.ito(W**2), (1, {"W": 2 * W}), "differential"),
		# the formula for W^n holds for integer n; a symbolic exponent is refused (the
		# language declares no integer parameters, and W^n for n = 1/2 is undefined
		# for W < 0), so n is taken as 7 here (tests/sh/ito-refusals.sh: d W^n)
		Example(OKSENDAL + ", ch. 4, Ito formula for W^n, n = 7 (from memory)",
		        "d W^7", lambda: m.ito(W**7),
		        (R(7 * 6, 2) * W**5, {"W": 7 * W**6}), "differential"),
		Example(OKSENDAL + ", ch. 4, Exercise on W^3 (from memory)",
		        "d W^3", lambda: m.ito(W**3), (3 * W, {"W": 3 * W**2}), "differential"),
		Example(OKSENDAL + ", ch. 4: exp(sigma W - sigma^2 t/2) is a martingale (from memory)",
		        "d exp(sigma*W - sigma^2*t/2)", lambda: m.ito(E),
		        (0, {"W": sigma * E}), "differential"),
		Example(KS + ", Sec. 3.3: W^2 - t is a martingale (from memory)",
		        "drift W^2 - t", lambda: m.ito(W**2 - t)[0], 0, "drift"),
		Example(OKSENDAL + ", ch. 4, Example 4.1.? d(tW) = W dt + t dW (from memory)",
		        "d t*W", lambda: m.ito(t * W), (W, {"W": t}), "differential"),
		Example(KS + ", Sec. 3.3: <W>_t = t (from memory)",
		        "qv W", lambda: m.qv(W, W), 1, "qv"),
	]
	run_group(tally, "Brownian motion", n, pre, ex)


def group_gbm(tally):
	n = Names()
	mu, sigma, r = n.pos("mu sigma r")
	lam, k = n.real("lambda n")
	S = n.pos("S")
	t = n.sym["t"]
	x = n.real("x")
	f = n.func("f", (t, x), lambda a, b: exp(a * b / 2) + b**3 * a + sin(b))
	V = n.func("V", (t, S), lambda a, b: b**3 * exp(-a) + log(b) * a**2)
	m = Model(n, ["W"]).sde(S, mu * S, {"W": sigma * S})
	q = m.girsanov({"W": ("Z", lam)})
	q2 = m.girsanov({"W": ("Z2", (mu - r) / sigma)})
	pre = ["param mu, sigma, r > 0", "param lambda, n", "noise W",
	       "dS = mu*S*dt + sigma*S*dW", "assume S > 0", "func f(t, x)",
	       "measure Q: dW = dZ - lambda*dt", "measure Q2: dW = dZ2 - (mu - r)/sigma*dt"]
	D = sympy.Derivative
	at_log = (D(f(t, x), t) + (mu - sigma**2 / 2) * D(f(t, x), x)
	          + sigma**2 / 2 * D(f(t, x), x, 2)).subs(x, log(S))
	ex = [
		Example(SHREVE + ", Sec. 4.4, geometric Brownian motion (from memory)",
		        "d log(S)", lambda: m.ito(log(S)), (mu - sigma**2 / 2, {"W": sigma}),
		        "differential"),
		Example(OKSENDAL + ", ch. 5, GBM powers (from memory; common practice)",
		        "d S^n", lambda: m.ito(S**k),
		        (k * (mu + (k - 1) * sigma**2 / 2) * S**k, {"W": k * sigma * S**k}),
		        "differential"),
		Example("common practice, no source: d sqrt(S) of GBM",
		        "d sqrt(S)", lambda: m.ito(sqrt(S)),
		        ((mu / 2 - sigma**2 / 8) * sqrt(S), {"W": sigma / 2 * sqrt(S)}), "differential"),
		Example(OKSENDAL + ", ch. 7, generator of an Ito diffusion (from memory)",
		        "generator S^2", lambda: m.ito(S**2)[0], (2 * mu + sigma**2) * S**2,
		        "generator"),
		Example(KS + ", Sec. 3.2-3.3, quadratic variation (from memory)",
		        "qv S", lambda: m.qv(S, S), sigma**2 * S**2, "qv"),
		Example(KS + ", Sec. 3.2-3.3, covariation (from memory)",
		        "qv S, log(S)", lambda: m.qv(S, log(S)), sigma**2 * S, "qv"),
		Example("multiplication table dS*dS (common practice, no source)",
		        "dS*dS", lambda: m.qv(S, S), sigma**2 * S**2, "product"),
		Example(SHREVE + ", Sec. 4.4, Ito-Doeblin formula, Thm 4.4.6 (from memory)",
		        "d f(t, S)", lambda: m.ito(f(t, S)),
		        (sympy.Derivative(f(t, S), t) + mu * S * sympy.Derivative(f(t, S), S)
		         + sigma**2 * S**2 / 2 * sympy.Derivative(f(t, S), S, 2),
		         {"W": sigma * S * sympy.Derivative(f(t, S), S)}), "differential"),
		Example(SHREVE + ", Sec. 4.4, Ito-Doeblin formula for f(t, log S) (from memory)",
		        "d f(t, log(S))", lambda: m.ito(f(t, log(S))),
		        (at_log, {"W": sigma * D(f(t, x), x).subs(x, log(S))}), "differential"),
		Example(SHREVE + ", Sec. 5.2.1, Girsanov: dW = dZ - lambda dt (from memory)",
		        "d S under Q", lambda: q.ito(S),
		        ((mu - lam * sigma) * S, {"Z": sigma * S}), "differential"),
		Example(SHREVE + ", Sec. 5.2.2: discounted stock is a Q-martingale (from memory)",
		        "d exp(-r*t)*S under Q2", lambda: q2.ito(exp(-r * t) * S),
		        (0, {"Z2": sigma * exp(-r * t) * S}), "differential"),
		Example(SHREVE + ", Sec. 4.5 / Black-Scholes 1973: the PDE under the risk-neutral "
		        "measure (from memory)",
		        "pde V(t, S) discount r under Q2", lambda: q2.pde(V(t, S), r),
		        sympy.Derivative(V(t, S), t) + r * S * sympy.Derivative(V(t, S), S)
		        + sigma**2 * S**2 / 2 * sympy.Derivative(V(t, S), S, 2) - r * V(t, S), "pde"),
		Example(KP + ", Sec. 4.9, Ito to Stratonovich (from memory)",
		        "sde S stratonovich", lambda: (mu * S - HALF * sigma * S * diff(sigma * S, S),
		                                   {"W": sigma * S}),
		        ((mu - sigma**2 / 2) * S, {"W": sigma * S}), "sde"),
	]
	run_group(tally, "geometric Brownian motion", n, pre, ex)


def group_black_scholes(tally):
	n = Names()
	r, sigma, K = n.pos("r sigma K")
	T = n.add("T", (1.2, 2.0), positive=True)
	S = n.pos("S")
	t = n.sym["t"]
	V = n.func("V", (t, S), lambda a, b: b**2 * exp(a) + b * sin(a))
	m = Model(n, ["W"]).sde(S, r * S, {"W": sigma * S})
	tau = T - t
	d1 = (log(S / K) + (r + sigma**2 / 2) * tau) / (sigma * sqrt(tau))
	d2 = d1 - sigma * sqrt(tau)
	call = S * Phi_sympy(d1) - K * exp(-r * tau) * Phi_sympy(d2)
	pre = ["param r, sigma, K, T > 0", "noise W", "dS = r*S*dt + sigma*S*dW", "assume S > 0",
	       "let d1 = (log(S/K) + (r + sigma^2/2)*(T - t))/(sigma*sqrt(T - t))"]
	ex = [
		Example("Black-Scholes 1973; " + SHREVE + ", Sec. 4.5.3, the BSM PDE (from memory)",
		        "pde V(t, S) discount r", lambda: m.pde(V(t, S), r),
		        sympy.Derivative(V(t, S), t) + r * S * sympy.Derivative(V(t, S), S)
		        + sigma**2 * S**2 / 2 * sympy.Derivative(V(t, S), S, 2) - r * V(t, S), "pde"),
		Example(SHREVE + ", Sec. 4.5.4: the discounted call price is a martingale and its "
		        "delta is Phi(d1) (from memory)",
		        "d exp(-r*t)*(S*Phi(d1) - K*exp(-r*(T - t))*Phi(d1 - sigma*sqrt(T - t)))",
		        lambda: m.ito(exp(-r * t) * call),
		        (0, {"W": exp(-r * t) * sigma * S * Phi_sympy(d1)}), "differential"),
	]
	run_group(tally, "Black-Scholes", n, pre, ex)


def group_ou(tally):
	n = Names()
	theta, sigma, kappa = n.pos("theta sigma kappa")
	mbar = n.real("m")
	X, Y = n.real("X Y")
	t = n.sym["t"]
	m = Model(n, ["W", "B"]).sde(X, -theta * X, {"W": sigma}).sde(
		Y, kappa * (mbar - Y), {"B": sigma})
	pre = ["param theta, sigma, kappa > 0", "param m", "noise W, B",
	       "dX = -theta*X*dt + sigma*dW", "dY = kappa*(m - Y)*dt + sigma*dB"]
	ex = [
		Example(OKSENDAL + ", ch. 5, the Ornstein-Uhlenbeck / Langevin equation (from memory)",
		        "d exp(theta*t)*X", lambda: m.ito(exp(theta * t) * X),
		        (0, {"W": sigma * exp(theta * t)}), "differential"),
		Example(OKSENDAL + ", ch. 5, mean-reverting OU (from memory)",
		        "d exp(kappa*t)*Y", lambda: m.ito(exp(kappa * t) * Y),
		        (kappa * mbar * exp(kappa * t), {"B": sigma * exp(kappa * t)}), "differential"),
		Example("common practice, no source: d X^2 of OU",
		        "d X^2", lambda: m.ito(X**2),
		        (sigma**2 - 2 * theta * X**2, {"W": 2 * sigma * X}), "differential"),
	]
	run_group(tally, "Ornstein-Uhlenbeck", n, pre, ex)


def group_vasicek(tally):
	n = Names()
	kappa, theta, sigma = n.pos("kappa theta sigma")
	T = n.add("T", (1.2, 2.0), positive=True)
	rr = n.real("r")
	t = n.sym["t"]
	A = n.func("A", (t,), lambda a: sin(a) + a**2)
	C = n.func("C", (t,), lambda a: exp(-a) + a)
	P = n.func("P", (t, rr), lambda a, b: exp(a * b) + b**2 * a)
	m = Model(n, ["W"]).sde(rr, kappa * (theta - rr), {"W": sigma})
	price = exp(A(t) - C(t) * rr)
	Cx = (1 - exp(-kappa * (T - t))) / kappa
	Ax = (theta - sigma**2 / (2 * kappa**2)) * (Cx - (T - t)) - sigma**2 * Cx**2 / (4 * kappa)
	Px = exp(Ax - Cx * rr)
	Dt = lambda g: sympy.Derivative(g, t)  # noqa: E731
	pre = ["param kappa, theta, sigma, T > 0", "noise W", "dr = kappa*(theta - r)*dt + sigma*dW",
	       "func A(t)", "func C(t)"]
	ex = [
		Example("Vasicek 1977; Brigo-Mercurio, Sec. 3.2.1 (from memory)",
		        "d exp(kappa*t)*r", lambda: m.ito(exp(kappa * t) * rr),
		        (kappa * theta * exp(kappa * t), {"W": sigma * exp(kappa * t)}), "differential"),
		Example(SHREVE + ", Sec. 6.5, affine bond price exp(A(t) - C(t) r) (from memory)",
		        "d exp(A(t) - C(t)*r)", lambda: m.ito(price),
		        ((Dt(A(t)) - Dt(C(t)) * rr - C(t) * kappa * (theta - rr)
		          + sigma**2 * C(t)**2 / 2) * price, {"W": -sigma * C(t) * price}),
		        "differential"),
		Example(SHREVE + ", Sec. 6.5, the bond-price PDE (from memory)",
		        "pde P(t, r) discount r", lambda: m.pde(P(t, rr), rr),
		        Dt(P(t, rr)) + kappa * (theta - rr) * sympy.Derivative(P(t, rr), rr)
		        + sigma**2 / 2 * sympy.Derivative(P(t, rr), rr, 2) - rr * P(t, rr), "pde"),
		Example("Vasicek 1977; Brigo-Mercurio eq. (3.8): the explicit bond price earns r "
		        "(from memory)",
		        "d exp((theta - sigma^2/(2*kappa^2))*((1 - exp(-kappa*(T - t)))/kappa - (T - t))"
		        " - sigma^2*((1 - exp(-kappa*(T - t)))/kappa)^2/(4*kappa)"
		        " - (1 - exp(-kappa*(T - t)))/kappa*r)",
		        lambda: m.ito(Px), (rr * Px, {"W": -sigma * Cx * Px}), "differential"),
	]
	run_group(tally, "Vasicek", n, pre, ex)


def group_cir(tally):
	n = Names()
	kappa, theta, sigma = n.pos("kappa theta sigma")
	rr = n.pos("r")
	y = n.pos("y")
	t = n.sym["t"]
	P = n.func("P", (t, rr), lambda a, b: exp(-a * b) + b**3)
	m = Model(n, ["W"]).sde(rr, kappa * (theta - rr), {"W": sigma * sqrt(rr)})
	sq = ((kappa * theta / 2 - sigma**2 / 8) / sqrt(rr) - kappa * sqrt(rr) / 2, {"W": sigma / 2})
	pre = ["param kappa, theta, sigma > 0", "noise W",
	       "dr = kappa*(theta - r)*dt + sigma*sqrt(r)*dW", "assume r > 0"]
	ex = [
		Example("Cox-Ingersoll-Ross 1985: d sqrt(r) of the square-root process (from memory)",
		        "d sqrt(r)", lambda: m.ito(sqrt(rr)), sq, "differential"),
		Example("Cox-Ingersoll-Ross 1985, the bond-price PDE (from memory)",
		        "pde P(t, r) discount r", lambda: m.pde(P(t, rr), rr),
		        sympy.Derivative(P(t, rr), t) + kappa * (theta - rr) * sympy.Derivative(P(t, rr), rr)
		        + sigma**2 * rr / 2 * sympy.Derivative(P(t, rr), rr, 2) - rr * P(t, rr), "pde"),
		Example("Cox-Ingersoll-Ross 1985: d<r> = sigma^2 r dt (from memory)",
		        "qv r", lambda: m.qv(rr, rr), sigma**2 * rr, "qv"),
	]
	# change of state y = sqrt(r) (a declaration: it prints nothing, so it goes into
	# the prelude of a second run): the SDE of d sqrt(r) above, written in y
	in_y = [
		Example("common practice, no source: `ito y` after state y = sqrt(r) where r = y^2",
		        "sde y", lambda: (sq[0].subs(rr, y**2), sq[1]),
		        ((kappa * theta / 2 - sigma**2 / 8) / y - kappa * y / 2, {"W": sigma / 2}), "sde"),
	]
	run_group(tally, "CIR", n, pre, ex)
	run_group(tally, "CIR in y = sqrt(r)", n, pre + ["state y = sqrt(r) where r = y^2"], in_y)


def heston_names():
	n = Names()
	r, kappa, theta, xi = n.pos("r kappa theta xi")
	rho = n.corr("rho")
	lam = n.real("lambda")
	S, v = n.pos("S v")
	return n, (r, kappa, theta, xi, rho, lam, S, v)


def group_heston(tally):
	n, (r, kappa, theta, xi, rho, lam, S, v) = heston_names()
	t = n.sym["t"]
	g = n.func("g", (t, S, v), lambda a, b, c: exp(a) * b**2 * c + log(b) * sqrt(c))
	V = n.func("V", (t, S, v), lambda a, b, c: b * c**2 * exp(-a) + b**3 * c)
	m = Model(n, ["W", "B"], {("W", "B"): rho}).sde(
		v, kappa * (theta - v), {"B": xi * sqrt(v)}).sde(S, r * S, {"W": sqrt(v) * S})
	q = m.girsanov({"W": ("Z", lam)})
	D = sympy.Derivative
	pre = ["param r, kappa, theta, xi > 0", "param rho in [-1, 1]", "param lambda",
	       "noise W, B", "corr(W, B) = rho", "dv = kappa*(theta - v)*dt + xi*sqrt(v)*dB",
	       "dS = r*S*dt + sqrt(v)*S*dW", "assume S > 0, v > 0", "func g(t, S, v)",
	       "measure Q: dW = dZ - lambda*dt"]
	ex = [
		Example("Heston 1993: the log-price, drift r - v/2 (from memory)",
		        "d log(S)", lambda: m.ito(log(S)), (r - v / 2, {"W": sqrt(v)}), "differential"),
		Example("Heston 1993: d sqrt(v), the volatility (from memory)",
		        "d sqrt(v)", lambda: m.ito(sqrt(v)),
		        ((kappa * theta / 2 - xi**2 / 8) / sqrt(v) - kappa * sqrt(v) / 2, {"B": xi / 2}),
		        "differential"),
		Example("Heston 1993: d log(S) d v = rho xi v dt (from memory)",
		        "d(log(S))*d(v)", lambda: m.qv(log(S), v), rho * xi * v, "product"),
		Example("Heston 1993, eq. (6) with zero price of volatility risk (from memory)",
		        "pde V(t, S, v) discount r", lambda: m.pde(V(t, S, v), r),
		        D(V(t, S, v), t) + v * S**2 / 2 * D(V(t, S, v), S, 2)
		        + rho * xi * v * S * D(V(t, S, v), S, v) + xi**2 * v / 2 * D(V(t, S, v), v, 2)
		        + r * S * D(V(t, S, v), S) + kappa * (theta - v) * D(V(t, S, v), v)
		        - r * V(t, S, v), "pde"),
		Example(KS + ", Thm 3.3.6, multidimensional Ito formula (from memory)",
		        "d g(t, S, v)", lambda: m.ito(g(t, S, v)),
		        (D(g(t, S, v), t) + r * S * D(g(t, S, v), S) + kappa * (theta - v) * D(g(t, S, v), v)
		         + v * S**2 / 2 * D(g(t, S, v), S, 2) + rho * xi * v * S * D(g(t, S, v), S, v)
		         + xi**2 * v / 2 * D(g(t, S, v), v, 2),
		         {"W": sqrt(v) * S * D(g(t, S, v), S), "B": xi * sqrt(v) * D(g(t, S, v), v)}),
		        "differential"),
		Example("common practice, no source: generator of S*v under Heston",
		        "generator S*v", lambda: m.ito(S * v)[0],
		        r * S * v + kappa * (theta - v) * S + rho * xi * v * S, "generator"),
		Example(KS + ", Sec. 3.5, Girsanov with correlated noises: dB = dB_Q - rho lambda dt "
		        "(from memory)",
		        "d v under Q", lambda: q.ito(v),
		        (kappa * (theta - v) - rho * lam * xi * sqrt(v), {"B": xi * sqrt(v)}),
		        "differential"),
		Example(KS + ", Sec. 3.5, Girsanov (from memory)",
		        "d S under Q", lambda: q.ito(S),
		        ((r - lam * sqrt(v)) * S, {"Z": sqrt(v) * S}), "differential"),
	]
	run_group(tally, "Heston", n, pre, ex)


def group_heston_spec_order(tally):
	"""The model exactly as LANGUAGE.md declares it: dS (using v) before dv."""
	n, (r, kappa, theta, xi, rho, lam, S, v) = heston_names()
	mu = n.pos("mu")
	m = Model(n, ["W", "B"], {("W", "B"): rho}).sde(
		S, mu * S, {"W": sqrt(v) * S}).sde(v, kappa * (theta - v), {"B": xi * sqrt(v)})
	pre = ["param mu, kappa, theta, xi > 0", "param rho in [-1, 1]", "noise W, B",
	       "corr(W, B) = rho", "dS = mu*S*dt + sqrt(v)*S*dW",
	       "dv = kappa*(theta - v)*dt + xi*sqrt(v)*dB", "assume S > 0, v > 0"]
	ex = [
		Example("Heston 1993, declared in the order of LANGUAGE.md (from memory)",
		        "d log(S)", lambda: m.ito(log(S)), (mu - v / 2, {"W": sqrt(v)}), "differential"),
		Example("Heston 1993: dS dv = rho xi S v dt (from memory)",
		        "dS*dv", lambda: m.qv(S, v), rho * xi * S * v, "product"),
	]
	run_group(tally, "Heston (LANGUAGE.md order)", n, pre, ex)


def group_lsv(tally):
	n, (r, kappa, theta, xi, rho, lam, S, v) = heston_names()
	t = n.sym["t"]
	L = n.func("L", (t, S), lambda a, b: 1 + a * b / 3)
	V = n.func("V", (t, S, v), lambda a, b, c: b**2 * c + exp(-a) * c**2 * b)
	D = sympy.Derivative
	m = Model(n, ["W", "B"], {("W", "B"): rho}).sde(
		v, kappa * (theta - v), {"B": xi * sqrt(v)}).sde(S, r * S, {"W": L(t, S) * sqrt(v) * S})
	pre = ["param r, kappa, theta, xi > 0", "param rho in [-1, 1]", "noise W, B",
	       "corr(W, B) = rho", "func L(t, S)", "dv = kappa*(theta - v)*dt + xi*sqrt(v)*dB",
	       "dS = r*S*dt + L(t, S)*sqrt(v)*S*dW", "assume S > 0, v > 0"]
	Lx = L(t, S)
	Vx = V(t, S, v)
	ex = [
		Example("local-vol times stochastic-vol, common practice, no source: d log(S)",
		        "d log(S)", lambda: m.ito(log(S)),
		        (r - Lx**2 * v / 2, {"W": Lx * sqrt(v)}), "differential"),
		Example("local-vol times stochastic-vol, common practice, no source: pricing PDE",
		        "pde V(t, S, v) discount r", lambda: m.pde(Vx, r),
		        D(Vx, t) + r * S * D(Vx, S) + Lx**2 * v * S**2 / 2 * D(Vx, S, 2)
		        + rho * xi * v * Lx * S * D(Vx, S, v) + kappa * (theta - v) * D(Vx, v)
		        + xi**2 * v / 2 * D(Vx, v, 2) - r * Vx, "pde"),
		Example("local-vol times stochastic-vol, common practice, no source: d<S, v>",
		        "qv S, v", lambda: m.qv(S, v), rho * xi * v * Lx * S, "qv"),
	]
	run_group(tally, "local-stochastic volatility", n, pre, ex)


def group_two_assets(tally):
	n = Names()
	mu1, mu2, s1, s2 = n.pos("mu1 mu2 s1 s2")
	rho = n.corr("rho")
	S1, S2 = n.pos("S1 S2")
	m = Model(n, ["W1", "W2"], {("W1", "W2"): rho}).sde(S1, mu1 * S1, {"W1": s1 * S1}).sde(
		S2, mu2 * S2, {"W2": s2 * S2})
	pre = ["param mu1, mu2, s1, s2 > 0", "param rho in [-1, 1]", "noise W1, W2",
	       "corr(W1, W2) = rho", "dS1 = mu1*S1*dt + s1*S1*dW1", "dS2 = mu2*S2*dt + s2*S2*dW2",
	       "assume S1 > 0, S2 > 0"]
	P, Qt = S1 * S2, S1 / S2
	ex = [
		Example(SHREVE + ", Sec. 4.6, Ito product rule for correlated GBMs (from memory)",
		        "d S1*S2", lambda: m.ito(P),
		        ((mu1 + mu2 + rho * s1 * s2) * P, {"W1": s1 * P, "W2": s2 * P}), "differential"),
		Example(SHREVE + ", Sec. 4.6 / exchange options: the ratio S1/S2 (from memory)",
		        "d S1/S2", lambda: m.ito(Qt),
		        ((mu1 - mu2 + s2**2 - rho * s1 * s2) * Qt, {"W1": s1 * Qt, "W2": -s2 * Qt}),
		        "differential"),
		Example("common practice, no source: log of the ratio",
		        "d log(S1/S2)", lambda: m.ito(log(Qt)),
		        (mu1 - mu2 - s1**2 / 2 + s2**2 / 2, {"W1": s1, "W2": -s2}), "differential"),
		Example(KS + ", Sec. 3.2, covariation of correlated GBMs (from memory)",
		        "qv S1, S2", lambda: m.qv(S1, S2), rho * s1 * s2 * S1 * S2, "qv"),
		Example("multiplication table dW1 dW2 = rho dt (common practice, no source)",
		        "d(S1)*d(S2)", lambda: m.qv(S1, S2), rho * s1 * s2 * S1 * S2, "product"),
		Example("multiplication table (common practice, no source)",
		        "dW1*dW2", lambda: m.qv(n.sym["W1"], n.sym["W2"]), rho, "product"),
	]
	n.real("W1 W2")
	run_group(tally, "two correlated assets", n, pre, ex)


def group_stratonovich(tally):
	n = Names()
	a, b, c = n.real("a b c")
	rho = n.corr("rho")
	X = n.pos("X")
	Y = n.real("Y")
	U = n.pos("U")
	m1 = Model(n, ["W", "B"], {("W", "B"): rho}).stratonovich_sde(X, a * X, {"W": b * X})
	m2 = Model(n, ["W", "B"], {("W", "B"): rho}).stratonovich_sde(Y, a, {"W": b * sin(Y)})
	m3 = Model(n, ["W", "B"], {("W", "B"): rho}).stratonovich_sde(
		U, a * U, {"W": b * U, "B": c * U})
	pre = ["param a, b, c", "param rho in [-1, 1]", "noise W, B", "corr(W, B) = rho",
	       "stratonovich dX = a*X*dt + b*X*dW", "assume X > 0",
	       "stratonovich dY = a*dt + b*sin(Y)*dW",
	       "stratonovich dU = a*U*dt + b*U*dW + c*U*dB", "assume U > 0"]
	ex = [
		Example(KP + ", Sec. 4.9; " + OKSENDAL + ", ch. 5: Stratonovich to Ito (from memory)",
		        "sde X", lambda: m1.states[0][1:], ((a + b**2 / 2) * X, {"W": b * X}), "sde"),
		Example(OKSENDAL + ", ch. 5: the Stratonovich chain rule, d log X = a dt + b o dW "
		        "(from memory)",
		        "d log(X)", lambda: m1.ito(log(X)), (a, {"W": b}), "differential"),
		Example(KP + ", Sec. 4.9, non-linear Stratonovich correction (from memory)",
		        "sde Y", lambda: m2.states[0][1:],
		        (a + b**2 / 2 * sin(Y) * cos(Y), {"W": b * sin(Y)}), "sde"),
		Example(KP + ", Sec. 4.9, two correlated noises (from memory)",
		        "sde U", lambda: m3.states[0][1:],
		        ((a + (b**2 + c**2 + 2 * rho * b * c) / 2) * U, {"W": b * U, "B": c * U}), "sde"),
		Example(KP + ", Sec. 4.9: `stratonovich X` gives the declared form back",
		        "sde X stratonovich", lambda: (a * X, {"W": b * X}), None, "sde"),
	]
	run_group(tally, "Stratonovich", n, pre, ex)


def group_change_of_state(tally):
	n = Names()
	mu, sigma = n.pos("mu sigma")
	x = n.real("x")
	S = n.pos("S")
	m = Model(n, ["W"]).sde(S, mu * S, {"W": sigma * S})
	dlog = m.ito(log(S))
	mx = Model(n, ["W"]).sde(x, dlog[0].subs(S, exp(x)), {"W": dlog[1]["W"].subs(S, exp(x))})
	pre = ["param mu, sigma > 0", "noise W", "dS = mu*S*dt + sigma*S*dW", "assume S > 0",
	       "state x = log(S) where S = exp(x)"]
	ex = [
		Example("common practice, no source: GBM in the log-price x = log(S)",
		        "sde x", lambda: mx.states[0][1:], (mu - sigma**2 / 2, {"W": sigma}), "sde"),
		Example("common practice, no source: exp(x) is the GBM again",
		        "d exp(x)", lambda: mx.ito(exp(x)),
		        (mu * exp(x), {"W": sigma * exp(x)}), "differential"),
	]
	run_group(tally, "change of state", n, pre, ex)


def group_sabr(tally):
	n = Names()
	nu = n.pos("nu")
	beta = n.add("beta", (0.2, 0.9), positive=True)
	rho = n.corr("rho")
	F, alpha = n.pos("F alpha")
	m = Model(n, ["W", "B"], {("W", "B"): rho}).sde(F, 0, {"W": alpha * F**beta}).sde(
		alpha, 0, {"B": nu * alpha})
	pre = ["param nu > 0", "param beta in [0, 1]", "param rho in [-1, 1]", "noise W, B",
	       "corr(W, B) = rho", "dalpha = nu*alpha*dB", "dF = alpha*F^beta*dW",
	       "assume F > 0, alpha > 0"]
	ex = [
		Example("Hagan-Kumar-Lesniewski-Woodward 2002, SABR volatility is lognormal "
		        "(from memory)",
		        "d log(alpha)", lambda: m.ito(log(alpha)), (-nu**2 / 2, {"B": nu}), "differential"),
		Example("Hagan-Kumar-Lesniewski-Woodward 2002, d<F, alpha> (from memory)",
		        "qv F, alpha", lambda: m.qv(F, alpha), rho * nu * alpha**2 * F**beta, "qv"),
		Example("common practice, no source: the SABR forward is driftless, its log is not",
		        "d log(F)", lambda: m.ito(log(F)),
		        (-alpha**2 * F**(2 * beta - 2) / 2, {"W": alpha * F**(beta - 1)}), "differential"),
	]
	run_group(tally, "SABR", n, pre, ex)


def group_domains(tally):
	"""Functions Itô's formula applies to only on part of the line, taken where the
	model's assumptions keep the state (the refusals elsewhere: tests/sh/ito-refusals.sh).
	abs(x)^n for n >= 2 is twice continuously differentiable (its second derivative
	n(n-1)abs(x)^(n-2) is continuous), so Itô's formula holds for it on the whole line
	(Karatzas and Shreve, Theorem 3.3.6, from memory: f in C^2 suffices)."""
	n = Names()
	a = n.add("a", (0.1, 0.5), positive=True)
	b = n.real("b")
	X = n.real("X")
	Y = n.add("Y", (-0.9, 0.9))
	Z = n.add("Z", (0.6, 1.5), positive=True)
	V = n.pos("V")
	m = Model(n, ["W"]).sde(X, 0, {"W": 1}).sde(Y, b, {"W": 1}).sde(Z, 0, {"W": Z}).sde(
		V, 0, {"W": V})
	pre = ["param a > 0", "param b", "noise W", "dX = dW", "dY = b*dt + dW", "dZ = Z*dW",
	       "dV = V*dW", "assume Y in [-1, 1]", "assume Z > a", "assume V > 0"]
	Abs = sympy.Abs
	ex = [
		Example("common practice, no source: abs(X)^3 is C^2, d of a Brownian X",
		        "d abs(X)^3", lambda: m.ito(Abs(X)**3),
		        (3 * Abs(X), {"W": 3 * X * Abs(X)}), "differential"),
		Example("common practice, no source: abs(X)^5 of a Brownian X",
		        "d abs(X)^5", lambda: m.ito(Abs(X)**5), None, "differential"),
		Example("common practice, no source: tan(Y) with Y kept in [-1, 1] (inside the "
		        "poles at -pi/2, pi/2)",
		        "d tan(Y)", lambda: m.ito(sympy.tan(Y)), None, "differential"),
		Example("common practice, no source: 1/(Y - 2) with Y in [-1, 1] (no pole)",
		        "d 1/(Y - 2)", lambda: m.ito(1 / (Y - 2)), None, "differential"),
		Example("common practice, no source: sqrt(2 + Y) with Y in [-1, 1]",
		        "d sqrt(2 + Y)", lambda: m.ito(sqrt(2 + Y)), None, "differential"),
		Example("common practice, no source: log(Z - a) with Z > a",
		        "d log(Z - a)", lambda: m.ito(log(Z - a)), None, "differential"),
		Example("common practice, no source: V^b with V > 0 and a symbolic exponent",
		        "d V^b", lambda: m.ito(V**b),
		        (b * (b - 1) / 2 * V**b, {"W": b * V**b}), "differential"),
	]
	run_group(tally, "domains of Itô's formula", n, pre, ex)


def main():
	tally = Tally("ito_examples")
	for group in (group_brownian, group_gbm, group_black_scholes, group_ou, group_vasicek,
	              group_cir, group_heston, group_heston_spec_order, group_lsv,
	              group_two_assets, group_stratonovich, group_change_of_state, group_sabr,
	              group_domains):
		group(tally)
	tally.finish()


if __name__ == "__main__":
	main()
