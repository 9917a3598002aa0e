#!/usr/bin/python3
# derivatives.py - itox's partial derivatives against SymPy's, on generated expressions.
#
# A fixed-seed generator builds expressions over the built-ins exp log sqrt sin cos
# tan sinh cosh tanh erf Phi phi abs, rational powers, sums, products and quotients,
# writing each one both as itox input text and as a SymPy expression.  itox evaluates
# EXPR (its canonical form must keep the value) and partial(EXPR, x) (and partial in y
# where y occurs); SymPy differentiates its own copy independently, with
# Phi(z) = (1 + erf(z/sqrt(2)))/2 and phi(z) = exp(-z^2/2)/sqrt(2*pi).  The two are
# compared in 40-digit arithmetic at random points of the domain (relative tolerance
# 1e-8 times max(1, |a|, |b|)).
#
# Two domains: "positive" declares x, y > 0 (so the engine may use log(x*y) = log x +
# log y, sqrt(x^2) = x, ...), "real" declares nothing, so those rules must not fire and
# logs, roots and rational powers are only taken of quantities positive for every
# real x, y (1 + u^2, exp(u), cosh(u), Phi(u), 2 + sin(u), ...) or of u^2 and abs(u).
import os
import random
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

# ------------------------------------------------------------------ the generator

class Gen:
	"""Random expressions as pairs (itox text, SymPy expression)."""

	def __init__(self, rng, positive, syms):
		self.rng = rng
		self.positive = positive  # x, y declared > 0
		self.x, self.y, self.a, self.b = syms

	def pick(self, weighted):
		total = sum(w for w, _ in weighted)
		roll = self.rng.uniform(0, total)
		for w, item in weighted:
			roll -= w
			if roll <= 0:
				return item
		return weighted[-1][1]

	def const(self):
		p, q = self.rng.choice([(2, 1), (3, 1), (1, 2), (3, 2), (-1, 3), (5, 4), (-2, 1), (7, 3)])
		val = R(p, q)
		text = str(p) if q == 1 else "%d/%d" % (p, q)
		return ("(%s)" % text if p < 0 or q != 1 else text), val

	def leaf(self):
		kind = self.pick([(5, "x"), (2, "y"), (1.5, "a"), (1, "b"), (1.5, "c")])
		if kind == "c":
			return self.const()
		return kind, getattr(self, kind)

	def expr(self, depth):
		if depth <= 0:
			return self.leaf()
		kind = self.pick([(3, "add"), (1.5, "sub"), (3, "mul"), (2, "div"), (2, "pow"),
		                  (6, "fun"), (1, "leaf"), (1, "neg")])
		if kind == "leaf":
			return self.leaf()
		if kind == "neg":
			t, e = self.expr(depth - 1)
			return "(-%s)" % t, -e
		if kind in ("add", "sub", "mul"):
			t1, e1 = self.expr(depth - 1)
			t2, e2 = self.expr(depth - 1)
			op = {"add": "+", "sub": "-", "mul": "*"}[kind]
			e = {"add": e1 + e2, "sub": e1 - e2, "mul": e1 * e2}[kind]
			return "(%s %s %s)" % (t1, op, t2), e
		if kind == "div":
			t1, e1 = self.expr(depth - 1)
			t2, e2 = self.pos(depth - 1)
			return "(%s/%s)" % (t1, t2), e1 / e2
		if kind == "pow":
			p, q = self.rng.choice([(1, 2), (3, 2), (-1, 2), (1, 3), (2, 3), (-3, 4), (5, 2)])
			t, e = self.pos(depth - 1)
			return "(%s)^(%d/%d)" % (t, p, q), e ** R(p, q)
		return self.fun(depth)

	def fun(self, depth):
		name = self.rng.choice(["exp", "log", "sqrt", "sin", "cos", "tan", "sinh",
		                        "cosh", "tanh", "erf", "Phi", "phi", "abs"])
		if name in ("log", "sqrt"):
			t, e = self.pos(depth - 1)
		else:
			t, e = self.expr(depth - 1)
			if name in ("exp", "sinh", "cosh", "tan"):
				# keep values moderate: exp of exp of exp overflows nothing in 40
				# digits, but shrink the argument to keep tan away from its poles
				t, e = "(%s)/3" % t, e / 3
		return "%s(%s)" % (name, t), BUILTINS[name](e)

	def pos(self, depth):
		"""An expression positive at every point of the domain."""
		choices = [(2, "sq1"), (1.5, "exp"), (1, "cosh"), (1, "Phi"), (1, "phi"),
		           (1, "sin2"), (1, "abs")]
		if self.positive:
			choices += [(4, "x"), (2, "y"), (1.5, "xy"), (1, "x+y"), (1, "sqrt")]
		kind = self.pick(choices)
		if kind == "x":
			return "x", self.x
		if kind == "y":
			return "y", self.y
		if kind == "xy":
			return "(x*y)", self.x * self.y
		if kind == "x+y":
			return "(x + y)", self.x + self.y
		if depth <= 0:
			return "(1 + x^2)", 1 + self.x ** 2
		t, e = self.expr(depth - 1)
		if kind == "sq1":
			return "(1 + (%s)^2)" % t, 1 + e ** 2
		if kind == "exp":
			return "exp((%s)/3)" % t, sympy.exp(e / 3)
		if kind == "cosh":
			return "cosh((%s)/3)" % t, sympy.cosh(e / 3)
		if kind == "Phi":
			return "Phi(%s)" % t, Phi_sympy(e)
		if kind == "phi":
			return "phi(%s)" % t, phi_sympy(e)
		if kind == "sin2":
			return "(2 + sin(%s))" % t, 2 + sympy.sin(e)
		if kind == "abs":
			return "(1/2 + abs(%s))" % t, R(1, 2) + sympy.Abs(e)
		t, e = self.pos(depth - 1)
		return "sqrt(%s)" % t, sympy.sqrt(e)


# Expressions aimed at the assumption-dependent rewrite rules (the simp module):
# each must keep its value, and its derivative must be right, in its domain.
PROBES_POSITIVE = [
	"log(x*y)", "log(x/y)", "log(x^a)", "log(x^(3/2)*y)", "sqrt(x^2)", "(x^2)^(3/2)",
	"(x^(1/3))^3", "(x^a)^b", "exp(a*log(x) + y)", "exp(log(x) + log(y))", "log(exp(x))",
	"exp(log(x))", "x^a*x^b", "x^a/x", "sqrt(x*y)*sqrt(x/y)", "abs(x)", "abs(x*y)",
	"abs(-x)", "log(sqrt(x))", "exp(2*log(x))*exp(-log(y))", "sqrt(x)^3", "x^(1/2)*x^(1/3)",
	"log(x)^2", "exp(x)*exp(y)", "Phi(-x) + Phi(x)", "phi(-x)", "erf(-x)", "tanh(log(x))",
	"x^x", "x^y", "(x*y)^a",
]
PROBES_REAL = [
	"sqrt(x^2)", "(x^2)^(1/2)", "(x^2)^(3/2)", "abs(x)^2", "abs(x*y)", "abs(-x)",
	"log(exp(x))", "exp(log(1 + x^2))", "log(x^2 + 1)", "sqrt(x^2 + y^2 + 1)",
	"exp(x)*exp(-x)", "abs(x)^(1/2)", "(x^4)^(1/4)",
	"log(abs(x) + 1)", "Phi(x) + Phi(-x)", "sin(x)^2 + cos(x)^2", "exp(a*log(1 + x^2))",
	"abs(sin(x))", "x*abs(x)", "sqrt(exp(x))", "(exp(x))^a",
]


def probe_sympy(text, x, y, a, b):
	"""SymPy's reading of a probe written in itox syntax (its own parser, not itox)."""
	local = dict(BUILTINS, x=x, y=y, a=a, b=b)
	from sympy.parsing.sympy_parser import convert_xor, parse_expr, standard_transformations
	return parse_expr(text, local_dict=local,
	                  transformations=standard_transformations + (convert_xor,))


def cases(domain_name, count, seed):
	positive = domain_name == "positive"
	if positive:
		x, y = sympy.symbols("x y", positive=True)
	else:
		x, y = sympy.symbols("x y", real=True)
	a, b = sympy.symbols("a b", real=True)
	gen = Gen(random.Random(seed), positive, (x, y, a, b))
	out = []
	seen = set()
	while len(out) < count:
		text, e = gen.expr(gen.rng.choice([2, 3, 3, 4]))
		if x not in e.free_symbols or text in seen or len(text) > 220:
			continue
		seen.add(text)
		out.append((text, e))
	probes = PROBES_POSITIVE if positive else PROBES_REAL
	# probes read by SymPy's own parser: x^(1/3) of the real domain would be complex
	# for x < 0 in SymPy, so "(x^3)^(1/3)" etc. are only sampled where they are real
	for text in probes:
		out.append((text, probe_sympy(text, x, y, a, b)))
	return out, (x, y, a, b)


def run_domain(tally, domain_name, count, seed):
	exprs, (x, y, a, b) = cases(domain_name, count, seed)
	if domain_name == "positive":
		prelude = ["param a, b", "param x, y > 0"]
		domain = {x: (0.2, 2.5), y: (0.2, 2.5), a: (-1.5, 1.5), b: (-1.5, 1.5)}
	else:
		prelude = ["param a, b, x, y"]
		domain = {x: (-2.0, 2.0), y: (-2.0, 2.0), a: (-1.5, 1.5), b: (-1.5, 1.5)}
	parser = Parser({"x": x, "y": y, "a": a, "b": b})
	queries, checks = [], []
	for text, e in exprs:
		queries.append(text)
		checks.append(("value", text, e))
		queries.append("partial(%s, x)" % text)
		checks.append(("d/dx", text, sympy.diff(e, x)))
		if y in e.free_symbols:
			queries.append("partial(%s, y)" % text)
			checks.append(("d/dy", text, sympy.diff(e, y)))
	results = run_itox(prelude, queries)
	for i, (what, text, expected) in enumerate(checks):
		label = "[%s] %s of %s" % (domain_name, what, text)
		obj = results[i]
		if obj is None or obj.get("kind") != "value":
			tally.fail(label, "itox gave %r" % (obj,))
			continue
		try:
			got = parser.parse(obj["value"])
		except Exception as exc:  # noqa: BLE001 - any parse failure is a failure
			tally.fail(label, "cannot parse itox output %r: %s" % (obj["value"], exc))
			continue
		why = numeric_diff(got, expected, domain, points=4, seed=len(text) + i)
		if why is not None:
			why = "itox: %s\n     sympy: %s\n     %s" % (obj["value"], expected, why)
		tally.record(label, why)
	return len(exprs)


def main():
	tally = Tally("derivatives")
	n = run_domain(tally, "positive", 150, 20240611)
	n += run_domain(tally, "real", 90, 977)
	print("%d expressions" % n)
	tally.finish()


if __name__ == "__main__":
	main()
