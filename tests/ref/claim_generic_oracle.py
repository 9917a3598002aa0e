#!/usr/bin/python3
# claim_generic_oracle.py - a generated oracle for `claim` about unknown functions
# (`func`) at arguments that are not plain symbols: the Itô differential of
# F = c1*h(A) + g(t, B) + k(A, C)*D, with h, g, k unknown and A, B, C, D concrete
# functions of the states and t, half of the claims true and half false.
#
# The model (scenario and names invented for this test): a positive asset S and a
# mean-reverting state X of unknown sign, driven by independent noises W and Z,
#   dS = mu*S*dt + sig*S*dW,   dX = -lam*(X - m)*dt + eta*dZ,   S > 0,
# with mu, sig, lam, eta > 0 and m of any sign.
#
# The oracle, independent of itox: SymPy differentiates F, with h, g, k as SymPy's
# undefined functions (its chain rule gives the partials of h, g, k at A, B, C), and
# the differential is assembled here by Itô's formula
#   drift = F_t + mu*S*F_S - lam*(X - m)*F_X + 1/2*sig^2*S^2*F_SS + 1/2*eta^2*F_XX,
#   dW part = sig*S*F_S,   dZ part = eta*F_X
# (Øksendal, Stochastic Differential Equations, 6th ed., Theorem 4.2.1, from memory;
# independent noises, so no cross term).  Each partial of h, g, k is printed in
# itox's syntax (h_u(A), g_ty(t, B), k_ab(A, C)) at its argument written in another
# form that is equal to it: the argument times sin(t)^2 + cos(t)^2, or plus
# sin(X)^2 + cos(X)^2 - 1, or times (1 + X^2)/(1 + X^2) (common practice, no source), so
# that itox's canonical form cannot tell the two sides equal and the numeric test,
# which evaluates each unknown function as a function of its arguments' values,
# has to.  A false claim changes one part by a relative 1/1000 (times 1001/1000),
# or moves the argument of one partial by 1/1000 (a partial at another point;
# false for almost every h wherever its coefficient is not identically zero; only
# partials whose coefficient is certainly not identically zero are moved).
#
# Expected [LANGUAGE.md "claim", issue 13 item 5]: no true claim `fails`, no false
# claim `holds`, no itox error, at most 1% `undecided`.
import os
import random
import sys

try:
	import sympy
except ImportError:
	print("sympy missing: skipped")
	sys.exit(77)


def load_lib():
	srcdir = os.environ.get("ITOX_SRCDIR") or os.path.join(
		os.path.dirname(os.path.abspath(__file__)), "..", "..")
	path = os.path.join(srcdir, "tests", "ref", "itoxref_lib.txt")
	with open(path) as src:
		exec(compile(src.read(), path, "exec"), globals())


load_lib()  # run_itox

SEED = 20261204
N_CLAIMS = int(os.environ.get("CLAIM_GENERIC_ORACLE_N", "160"))

S, X, t = sympy.symbols("S X t")
mu, sig, lam, eta, m = sympy.symbols("mu sig lam eta m")
u, y, a, b = sympy.symbols("u y a b")
_GENERIC = {}


def generic(name, counts):
	"""The SymPy function for the partial of `name` with these derivative counts: its
	derivative in argument i is the partial with count i raised by one (the chain
	rule is SymPy's; partials in different orders are one function, as for any
	smooth function)."""
	key = (name, tuple(counts))
	if key not in _GENERIC:
		def fdiff(self, argindex=1, name=name, counts=tuple(counts)):
			raised = list(counts)
			raised[argindex - 1] += 1
			return generic(name, raised)(*self.args)
		# the plain function prints as its name (the left side of a claim)
		cls_name = name if not any(counts) else "%s_%s" % (name, "".join(map(str, counts)))
		cls = type(cls_name, (sympy.Function,),
		           {"nargs": len(counts), "fdiff": fdiff, "generic_key": key})
		_GENERIC[key] = cls
	return _GENERIC[key]


h, g, k = generic("h", (0,)), generic("g", (0, 0)), generic("k", (0, 0))
ARGS = {"h": (u,), "g": (t, y), "k": (a, b)}
PRELUDE = [
	"param mu, sig, lam, eta > 0", "param m", "noise W, Z", "assume S > 0",
	"dS = mu*S*dt + sig*S*dW", "dX = -lam*(X - m)*dt + eta*dZ",
	"func h(u)", "func g(t, y)", "func k(a, b)",
]

# concrete inner functions, smooth wherever S > 0, X real, t >= 0
INNER = [
	X, S, X**2, X*S, sympy.exp(X / 2), sympy.sin(X), sympy.log(S), sympy.sqrt(S),
	S**2 + X, 1 / (1 + X**2), X + t, S*sympy.exp(-t), sympy.cos(X)*S, X**3 - X,
	sympy.log(1 + X**2), S/(1 + S),
]


def inner(rng):
	first = rng.choice(INNER)
	if rng.random() < 0.4:
		return first * rng.choice([2, sympy.Rational(1, 2), -3]) + rng.choice(INNER)
	return first


def ito(F):
	drift = (sympy.diff(F, t) + mu*S*sympy.diff(F, S) - lam*(X - m)*sympy.diff(F, X)
	         + sig**2*S**2/2*sympy.diff(F, S, 2) + eta**2/2*sympy.diff(F, X, 2))
	return drift, sig*S*sympy.diff(F, S), eta*sympy.diff(F, X)


def text(e):
	return sympy.sstr(e).replace("**", "^")


def rewrite(arg, rng):
	"""The argument written in another form that is equal to it."""
	choice = rng.randrange(3)
	if choice == 0:
		return "(%s)*(sin(t)^2 + cos(t)^2)" % text(arg)
	if choice == 1:
		return "%s + sin(X)^2 + cos(X)^2 - 1" % text(arg)
	return "(%s)*(1 + X^2)/(1 + X^2) + (S - S)" % text(arg)


class Partials:
	"""Replaces every partial of h, g, k in a SymPy expression by a placeholder
	symbol and keeps its itox text (name with derivative letters, argument texts)."""

	def __init__(self, rng):
		self.rng = rng
		self.items = {}  # placeholder -> (function name, counts, argument values)

	def _place(self, name, counts, point):
		key = (name, tuple(counts), tuple(point))
		for sym, item in self.items.items():
			if item == key:
				return sym
		sym = sympy.Symbol("PARTIAL%d" % len(self.items))
		self.items[sym] = key
		return sym

	def hide(self, e):
		key = getattr(e.func, "generic_key", None)
		if key is not None:
			return self._place(key[0], key[1], e.args)
		if not e.args:
			return e
		return e.func(*[self.hide(arg) for arg in e.args])

	def itox(self, sym, moved=False):
		name, counts, point = self.items[sym]
		letters = "".join(str(v) * n for v, n in zip(ARGS[name], counts))
		head = name + ("_" + letters if letters else "")
		parts = []
		for value in point:
			if value.is_Symbol and not moved:
				parts.append(text(value))
			else:
				parts.append(rewrite(value, self.rng))
		if moved:
			parts[-1] = "%s + 1/1000" % parts[-1]
		return "%s(%s)" % (head, ", ".join(parts))


def part_text(e, partials, moved=None):
	"""An itox text of e with its placeholders written out."""
	body = text(e)
	# longest names first: PARTIAL12 before PARTIAL1
	for sym in sorted(partials.items, key=lambda s: -len(s.name)):
		body = body.replace(sym.name, "(%s)" % partials.itox(sym, moved is sym))
	return body


def make_claim(rng, false):
	A, B, C, D = inner(rng), inner(rng), inner(rng), inner(rng)
	c1 = rng.choice([1, 2, sympy.Rational(-1, 2)])
	F = c1*h(A) + g(t, B) + k(A, C)*D
	parts = list(ito(F))
	partials = Partials(rng)
	hidden = [sympy.expand(partials.hide(p)) for p in parts]
	moved = None
	if false:
		which = rng.randrange(3)
		if hidden[which] == 0:
			which = 0
		if rng.random() < 0.5:
			hidden[which] = hidden[which] * sympy.Rational(1001, 1000)
		else:
			# move the argument of a partial whose coefficient is not identically 0
			candidates = [sym for sym in partials.items
			              if sympy.expand(sympy.diff(hidden[which], sym)) != 0]
			moved = rng.choice(candidates)
			texts = [part_text(p, partials, moved if i == which else None)
			         for i, p in enumerate(hidden)]
			return F, texts
	return F, [part_text(p, partials) for p in hidden]


def main():
	rng = random.Random(SEED)
	claims = []
	for index in range(N_CLAIMS):
		false = index % 2 == 1
		F, (drift, dw, dz) = make_claim(rng, false)
		statement = "claim d %s = (%s)*dt + (%s)*dW + (%s)*dZ" % (text(F), drift, dw, dz)
		claims.append((false, statement))
	results = run_itox(PRELUDE, [s for _, s in claims], timeout=60, chunk=5)
	counts = {(f, v): 0 for f in (False, True) for v in ("holds", "fails", "undecided", "error")}
	methods = {"exact": 0, "numeric": 0}
	bad = []
	for (false, statement), obj in zip(claims, results):
		if obj is None or obj.get("kind") != "claim":
			verdict = "error"
		else:
			verdict = obj.get("verdict")
			if verdict == "holds":
				methods[obj.get("method", "exact")] += 1
		counts[(false, verdict)] += 1
		wrong = (verdict == "fails" and not false) or (verdict == "holds" and false)
		if wrong or verdict == "error":
			bad.append((false, verdict, statement, obj))
	n_true = sum(1 for f, _ in claims if not f)
	n_false = len(claims) - n_true
	print("claim_generic_oracle: %d true (%d holds: %d exact, %d numeric; %d fails, %d undecided, "
	      "%d errors), %d false (%d fails, %d holds, %d undecided, %d errors)" %
	      (n_true, counts[(False, "holds")], methods["exact"], methods["numeric"],
	       counts[(False, "fails")], counts[(False, "undecided")], counts[(False, "error")],
	       n_false, counts[(True, "fails")], counts[(True, "holds")],
	       counts[(True, "undecided")], counts[(True, "error")]))
	for false, verdict, statement, obj in bad[:10]:
		print("WRONG (%s claim, %s): %s\n    %s" % ("false" if false else "true", verdict, statement, obj))
	undecided = counts[(False, "undecided")] + counts[(True, "undecided")]
	ok = not bad and undecided <= len(claims) // 100
	print("%s tests/ref/claim_generic_oracle.py" % ("PASS" if ok else "FAIL"))
	sys.exit(0 if ok else 1)


if __name__ == "__main__":
	main()
