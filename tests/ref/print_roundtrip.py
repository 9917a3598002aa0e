#!/usr/bin/python3
# print_roundtrip.py - every output format of every differential, against Itô's
# formula assembled by hand in SymPy (a property test over generated expressions).
#
# A fixed-seed generator writes expressions over a model of three correlated
# positive states (X, Y, V, three noises W, B, Z with symbolic correlations) whose
# drifts and diffusions contain negated sums, -(a + b)*X, -(k + m)*(V - c).  The
# expressions are built from negated sums as factors, discount factors
# exp(-(r + h)*t), quotients, integer and rational powers, Phi(...), products of
# states and exp/log/sqrt of positive things; each is asked as `d EXPR` (and some as
# `d EXPR under Q`) in one script that itox runs once per output format.
#
# The oracle (independent of itox): SymPy's own partial derivatives of its own copy
# of each expression, put together numerically at each sample point as
#   drift = f_t + sum_i mu_i f_i + 1/2 sum_ij (sigma rho sigma^T)_ij f_ij,
#   diffusion_k = sum_i sigma_ik f_i
# (the multi-dimensional Itô formula: Øksendal, Stochastic Differential Equations,
# 6th ed., Theorem 4.2.1, from memory; with correlated noises dW_k dW_l = rho_kl dt:
# Shreve, Stochastic Calculus for Finance II, sec. 4.6, from memory).
#
# For every result, in every format (the source of each assertion in brackets):
#   text   `d(EXPR) = A*dt + B*dW + ...`: the right side must be a sum of terms, each
#          one coefficient times one increment (linear in dt, dW, ...); each
#          coefficient must equal the oracle in 40-digit arithmetic at three random
#          points (relative 1e-12) and the left side must be the expression asked
#          about [Itô's formula as above].  The text is read by Python's own
#          expression parser (ast; `^` written `**`, the same precedence: LANGUAGE.md
#          "Expressions"), because SymPy's parse_expr costs 25-60 ms a line; on every
#          40th line SymPy's parse_expr reads it too and the two readings must agree
#          [common practice, no source].
#   round trip  the printed right side, fed back to itox as an expression statement,
#          must give JSON drift and diffusion strings equal, character for
#          character, to those of the original result [LANGUAGE.md: "every printed
#          expression must parse back to the same expression"].
#   json   drift, each diffusion and "expr" compared with the oracle as for text;
#          "line" and "statement", where given, are the result's own [common
#          practice, no source].
#   latex  read by a small reader of the LaTeX that itox writes (in this file,
#          independent of itox) and compared with the oracle as for text; every
#          noise increment of a Stratonovich SDE carries the circle (\circ\mathrm{d}W,
#          Kloeden and Platen, 1992, sec. 4.9, from memory) and no other does; no
#          fraction stacked in an exponent (v^{3/2}, not v^{\tfrac{3}{2}}) [common
#          practice of typesetting, no source]; 60 lines of the main script and all
#          SDE lines compiled by pdflatex in \[ ... \] with amsmath [LANGUAGE.md
#          "Output formats"] (skipped without pdflatex).
#   c      the translation unit compiled with cc -std=c99 -Wall -Werror -c [LANGUAGE.md
#          "Output formats": one C99 translation unit, only <math.h>], linked to a
#          generated driver that calls every function at the sample points (given
#          exactly: dyadic rationals as hexadecimal literals; argument names read
#          from each function's own signature); each output must be set and equal
#          the oracle within relative 1e-9 (points where the value overflows a
#          double are skipped; C must not give a finite number there) [Itô's formula].
# The SDE display (`sde X`, `sde X stratonovich`) is checked the same way on the
# model above and on 24 generated models with Itô and Stratonovich declarations,
# the Stratonovich drift computed here as mu_S = mu_I - 1/2 sum_j sum_kl sigma_jk rho_kl d sigma_il / d x_j (Kloeden
# and Platen, Numerical Solution of SDEs, 1992, sec. 4.9, from memory, with
# correlated noises); `save FILE` then `load FILE` in a fresh itox must give the
# same `sde` results in JSON [LANGUAGE.md, session statements].  Under
# `measure Q: dW = dWQ - lam*dt` the drift gains -lam * sum_k rho_kW g_k (g_k the
# diffusion on noise k; a noise correlated with W is shifted by rho*lam: Shreve,
# Stochastic Calculus for Finance II, sec. 5.4, multi-dimensional Girsanov, from
# memory; LANGUAGE.md `measure`).  Results under Q are read back under Q, where dB
# (B a noise Q keeps by name) is the increment of B's Q-Brownian motion.
# Each result names its measure where it must: text ends in `# under Q` exactly
# when the result is under Q and shows no dWQ, LaTeX ends in `(under $Q$)` exactly
# when it is under Q, JSON has "measure" (LANGUAGE.md `measure`).
#
# Scenario, names and values are invented for this test.  ROUNDTRIP_SHOW=N shows N
# failures of each kind (default 4).
import ast
import json
import os
import random
import re
import shutil
import subprocess
import sys
import tempfile
import time
from concurrent.futures import ThreadPoolExecutor

try:
	import mpmath
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


load_lib()  # Parser, Phi_sympy, phi_sympy, ITOX, _limit_memory

SEED = 31415
N_EXPRESSIONS = 2000  # `d EXPR`, fixed probes included
N_UNDER_Q = 300       # of those, also asked `under Q`
N_MODELS = 24         # generated models for the SDE display (plus the main model)
POINTS = 3            # sample points per result
RTOL = mpmath.mpf("1e-12")   # exact rationals read back, evaluated in 40 digits
ATOL = mpmath.mpf("1e-28")   # a true zero evaluated in 40 digits
C_RTOL = 1e-9
C_ATOL = 1e-12
LATEX_SAMPLE = 60
SYMPY_EVERY = 40      # text read by SymPy's parse_expr too, for every 40th result
SHOW = int(os.environ.get("ROUNDTRIP_SHOW", "4"))  # failures shown per kind of check
R = sympy.Rational
HALF = R(1, 2)

# ------------------------------------------------------------------ the model

POS_PARAMS = ["a", "b", "k", "m", "c", "q", "r", "h", "sx", "sy", "sz", "L"]
STATES = ["X", "Y", "V"]
NOISES = ["W", "B", "Z"]
CORR = {("W", "B"): "rho1", ("W", "Z"): "rho2", ("B", "Z"): "rho3"}
SYM = {n: sympy.Symbol(n, positive=True) for n in POS_PARAMS + STATES}
SYM.update({n: sympy.Symbol(n, real=True) for n in ["lam", "rho1", "rho2", "rho3", "t"]})
NOISE_SYM = {n: sympy.Symbol(n, real=True) for n in NOISES + ["WQ"]}
INCR = {n: sympy.Symbol("d" + n, real=True) for n in ["t"] + NOISES + ["WQ"]}
PARSER = Parser(dict(list(SYM.items()) + list(NOISE_SYM.items()) +
                     [("d" + k, v) for k, v in INCR.items()]))
S = SYM

PRELUDE = """\
param a, b, k, m, c, q, r, h, sx, sy, sz, L > 0
param lam
param rho1 in [-1, 1]
param rho2 in [-1, 1]
param rho3 in [-1, 1]
assume X > 0, Y > 0, V > 0
noise W, B, Z
corr(W, B) = rho1
corr(W, Z) = rho2
corr(B, Z) = rho3
"""
MEASURE = "measure Q: dW = dWQ - lam*dt\n"


def rho(k, l):
	if k == l:
		return sympy.Integer(1)
	name = CORR.get((k, l)) or CORR.get((l, k))
	return S[name] if name else sympy.Integer(0)


class Model:
	"""States with SDEs, written by hand twice: itox text and SymPy.
	decl[X] = (convention, drift text, {noise: coefficient text}); mu_ito,
	mu_strat and sigma are SymPy expressions."""

	def __init__(self, name):
		self.name = name
		self.decl = {}
		self.mu_decl = {}
		self.convention = {}
		self.sigma = {}

	def sde(self, state, convention, drift, diffusion):
		"""drift, diffusion: (text, sympy) pairs; diffusion a dict by noise."""
		self.decl[state] = (convention, drift[0], {k: v[0] for k, v in diffusion.items()})
		self.convention[state] = convention
		self.mu_decl[state] = drift[1]
		self.sigma[state] = {k: v[1] for k, v in diffusion.items()}

	def correction(self, i):
		"""1/2 sum_j sum_kl sigma_jk rho_kl d sigma_il / d x_j (Kloeden-Platen 4.9)."""
		total = sympy.Integer(0)
		for j in self.sigma:
			xj = S[j]
			for k, sjk in self.sigma[j].items():
				for l, sil in self.sigma[i].items():
					total += sjk * rho(k, l) * sympy.diff(sil, xj)
		return HALF * total

	def mu_ito(self, i):
		if self.convention[i] == "ito":
			return self.mu_decl[i]
		return self.mu_decl[i] + self.correction(i)

	def mu_strat(self, i):
		if self.convention[i] == "stratonovich":
			return self.mu_decl[i]
		return self.mu_decl[i] - self.correction(i)

	def script(self):
		lines = []
		for state, (conv, drift, dif) in self.decl.items():
			rhs = join_terms([(drift, "dt")] + [(v, "d" + k) for k, v in dif.items()])
			lines.append("%sd%s = %s" % ("stratonovich " if conv == "stratonovich" else "",
			                              state, rhs))
		return PRELUDE + "\n".join(lines) + "\n"


def is_sum(text):
	"""Has text a + or - outside parentheses (after its first character)?"""
	depth = 0
	for i, ch in enumerate(text):
		if ch == "(":
			depth += 1
		elif ch == ")":
			depth -= 1
		elif depth == 0 and i > 0 and ch in "+-" and text[i - 1] == " ":
			return True
	return False


def join_terms(terms):
	"""coefficient*increment terms joined into one right side."""
	out = ""
	for coef, inc in terms:
		if is_sum(coef):
			coef = "(%s)" % coef
		term = "%s*%s" % (coef, inc)
		if not out:
			out = term
		elif term.startswith("-"):
			out += " - " + term[1:]
		else:
			out += " + " + term
	return out


def main_model():
	m = Model("main")
	X, Y, V = S["X"], S["Y"], S["V"]
	a, b, k, mm, c, q, sx, sy, sz = (S[n] for n in ["a", "b", "k", "m", "c", "q", "sx", "sy", "sz"])
	m.sde("X", "ito", ("-(a + b)*X", -(a + b) * X), {"W": ("sx*sqrt(V)*X", sx * sympy.sqrt(V) * X)})
	m.sde("Y", "ito", ("q - (k + m)*Y", q - (k + mm) * Y),
	      {"B": ("-(sy + sz)*Y", -(sy + sz) * Y), "Z": ("sx*Y", sx * Y)})
	m.sde("V", "ito", ("-(k + m)*(V - c)", -(k + mm) * (V - c)),
	      {"Z": ("sz*sqrt(V)", sz * sympy.sqrt(V)), "W": ("-(sx + sy)*V", -(sx + sy) * V)})
	return m

# ------------------------------------------------------------------ the generator

class Gen:
	"""Random expressions as (itox text, SymPy expression, precedence); precedence
	1 sum, 2 negation, 3 product or quotient, 4 power, 5 atom (name, call, integer)."""

	PARAM_POOL = ["a", "b", "k", "m", "c", "q", "r", "h", "sx", "sy", "sz"]

	def __init__(self, rng):
		self.rng = rng

	def pick(self, weighted):
		total = sum(w for w, _ in weighted)
		roll = self.rng.uniform(0, total)
		for w, item in weighted:
			roll -= w
			if roll <= 0:
				return item
		return weighted[-1][1]

	@staticmethod
	def wrap(node, least):
		text, e, prec = node
		return ("(%s)" % text if prec < least else text), e

	def psum(self):
		"""A sum of two or three distinct positive parameters, (a + b)."""
		names = self.rng.sample(self.PARAM_POOL, self.rng.choice([2, 2, 2, 3]))
		return "(" + " + ".join(names) + ")", sum((S[n] for n in names), sympy.Integer(0))

	def state(self):
		n = self.pick([(5, "X"), (4, "Y"), (4, "V")])
		return (n, S[n], 5)

	def discount(self):
		t, e = self.psum()
		return ("exp(-%s*t)" % t, sympy.exp(-e * S["t"]), 5)

	def const(self):
		p, q = self.rng.choice([(2, 1), (3, 1), (1, 2), (3, 2), (5, 4), (2, 3)])
		if q == 1:
			return (str(p), sympy.Integer(p), 5)
		return ("%d/%d" % (p, q), R(p, q), 3)

	def pos(self, depth):
		"""An expression positive wherever the states and parameters are."""
		if depth <= 0:
			return self.pick([(6, self.state), (1, self._param), (1, self.discount)])()
		kind = self.pick([(4, "state"), (2, "prod"), (2, "quot"), (2, "rpow"), (1.5, "ipow"),
		                  (2, "disc"), (1.5, "exp"), (1, "sqrt"), (1.5, "Phi"), (1, "plus"),
		                  (0.5, "phi"), (1.5, "fracexp")])
		if kind == "state":
			return self.state()
		if kind == "disc":
			if self.rng.random() < 0.5:
				return self.discount()
			d, de = self.wrap(self.discount(), 3)
			p, pe = self.wrap(self.pos(depth - 1), 3)
			return ("%s*%s" % (d, p), de * pe, 3)
		if kind == "prod":
			p1, e1 = self.wrap(self.pos(depth - 1), 3)
			p2, e2 = self.wrap(self.pos(depth - 1), 3)
			return ("%s*%s" % (p1, p2), e1 * e2, 3)
		if kind == "quot":
			p1, e1 = self.wrap(self.pos(depth - 1), 3)
			p2, e2 = self.wrap(self.pos(depth - 1), 4)
			return ("%s/%s" % (p1, p2), e1 / e2, 3)
		if kind == "rpow":
			p, q = self.rng.choice([(1, 2), (3, 2), (-1, 2), (1, 3), (2, 3), (-1, 3), (5, 4), (-3, 2)])
			base, e = self.wrap(self.pos(depth - 1), 5)
			return ("%s^(%d/%d)" % (base, p, q), e ** R(p, q), 4)
		if kind == "ipow":
			n = self.rng.choice([2, 3, -1, -2])
			base, e = self.wrap(self.pos(depth - 1), 5)
			ex = str(n) if n > 0 else "(%d)" % n
			return ("%s^%s" % (base, ex), e ** n, 4)
		if kind == "exp":
			if self.rng.random() < 0.5:
				t, e = self.psum()
				st = self.state()
				return ("exp(-%s*%s)" % (t, st[0]), sympy.exp(-e * st[1]), 5)
			t, e, _ = self.expr(depth - 1)
			return ("exp((%s)/4)" % t, sympy.exp(e / 4), 5)
		if kind == "fracexp":
			return self.fraction_exponent(depth)
		if kind == "sqrt":
			t, e, _ = self.pos(depth - 1)
			return ("sqrt(%s)" % t, sympy.sqrt(e), 5)
		if kind == "Phi":
			t, e, _ = self.expr(depth - 1)
			return ("Phi(%s)" % t, Phi_sympy(e), 5)
		if kind == "phi":
			t, e, _ = self.expr(depth - 1)
			return ("phi(%s)" % t, phi_sympy(e), 5)
		# plus: a sum of positives
		p1, e1 = self.wrap(self.pos(depth - 1), 1)
		p2, e2 = self.wrap(self.pos(depth - 1), 2)
		return ("%s + %s" % (p1, p2), e1 + e2, 1)

	def fraction_exponent(self, depth):
		"""Exponents that are quotients (written inline in LaTeX, v^{3/2}, so a sum
		above the bar needs its brackets): exp(-(a + b)*t/2), exp((X - Y)/4),
		X^(a/(a + b)), V^((a - b)/3)."""
		kind = self.rng.randrange(4)
		if kind == 0:
			t, e = self.psum()
			n = self.rng.choice([2, 3, 4])
			return ("exp(-%s*t/%d)" % (t, n), sympy.exp(-e * S["t"] / n), 5)
		if kind == 1:
			t1, e1 = self.wrap(self.expr(max(0, depth - 2)), 1)
			t2, e2 = self.wrap(self.expr(max(0, depth - 2)), 3)
			op = self.rng.choice(["+", "-"])
			n = self.rng.choice([2, 3, 4])
			num = e1 + e2 if op == "+" else e1 - e2
			return ("exp((%s %s %s)/%d)" % (t1, op, t2, n), sympy.exp(num / n), 5)
		st = self.state()
		if kind == 2:
			p = self._param()
			t, e = self.psum()
			return ("%s^(%s/%s)" % (st[0], p[0], t), st[1] ** (p[1] / e), 4)
		p1, p2 = self.rng.sample(self.PARAM_POOL, 2)
		n = self.rng.choice([2, 3])
		return ("%s^((%s - %s)/%d)" % (st[0], p1, p2, n), st[1] ** ((S[p1] - S[p2]) / n), 4)

	def _param(self):
		n = self.rng.choice(self.PARAM_POOL + ["L"])
		return (n, S[n], 5)

	def expr(self, depth):
		if depth <= 0:
			return self.pick([(5, self.state), (1, self._param), (1, self.discount)])()
		kind = self.pick([(3, "pos"), (4, "negsum"), (2, "sum"), (1.5, "diff"), (2, "prod"),
		                  (2, "quot"), (2, "log"), (1, "ipow"), (1, "Phi"), (1, "neg"),
		                  (1, "scale"), (1, "shift")])
		if kind == "pos":
			return self.pos(depth - 1)
		if kind == "negsum":
			t, e = self.psum()
			p, pe = self.wrap(self.pos(depth - 1), 3)
			return ("-%s*%s" % (t, p), -e * pe, 2)
		if kind == "shift":
			# -(k + m)*(V - c): a negated sum times a difference
			t, e = self.psum()
			st = self.state()
			par = self._param()
			return ("-%s*(%s - %s)" % (t, st[0], par[0]), -e * (st[1] - par[1]), 2)
		if kind in ("sum", "diff"):
			t1, e1 = self.wrap(self.expr(depth - 1), 1)
			t2, e2 = self.wrap(self.expr(depth - 1), 3)
			if kind == "sum":
				return ("%s + %s" % (t1, t2), e1 + e2, 1)
			return ("%s - %s" % (t1, t2), e1 - e2, 1)
		if kind == "prod":
			t1, e1 = self.wrap(self.expr(depth - 1), 2)
			t2, e2 = self.wrap(self.expr(depth - 1), 3)
			return ("%s*%s" % (t1, t2), e1 * e2, 3 if not t1.startswith("-") else 2)
		if kind == "quot":
			t1, e1 = self.wrap(self.expr(depth - 1), 2)
			t2, e2 = self.wrap(self.pos(depth - 1), 4)
			return ("%s/%s" % (t1, t2), e1 / e2, 3 if not t1.startswith("-") else 2)
		if kind == "log":
			t, e, _ = self.pos(depth - 1)
			return ("log(%s)" % t, sympy.log(e), 5)
		if kind == "ipow":
			n = self.rng.choice([2, 3])
			base, e = self.wrap(self.expr(depth - 1), 5)
			return ("%s^%d" % (base, n), e ** n, 4)
		if kind == "Phi":
			t, e, _ = self.expr(depth - 1)
			return ("Phi(%s)" % t, Phi_sympy(e), 5)
		if kind == "neg":
			t, e = self.wrap(self.expr(depth - 1), 3)
			return ("-%s" % t, -e, 2)
		# scale: 2*X, 3/2*(...)
		ct, ce, _ = self.const()
		t, e = self.wrap(self.expr(depth - 1), 3)
		return ("%s*%s" % (ct, t), ce * e, 3)


PROBES = [
	("2*X", 2 * S["X"]),
	("-(a + b)*X", -(S["a"] + S["b"]) * S["X"]),
	("exp(-(r + h)*t)", sympy.exp(-(S["r"] + S["h"]) * S["t"])),
	("exp(-(r + h)*t)*Y", sympy.exp(-(S["r"] + S["h"]) * S["t"]) * S["Y"]),
	("-(k + m)*(V - c)", -(S["k"] + S["m"]) * (S["V"] - S["c"])),
	("-X", -S["X"]),
	("-(sx + sy)*Y/V", -(S["sx"] + S["sy"]) * S["Y"] / S["V"]),
	("X*Y*V", S["X"] * S["Y"] * S["V"]),
	("log(X)", sympy.log(S["X"])),
	("sqrt(V)", sympy.sqrt(S["V"])),
	("V^(3/2)", S["V"] ** R(3, 2)),
	("1/X", 1 / S["X"]),
	("Phi(log(X/L)/sqrt(V))", Phi_sympy(sympy.log(S["X"] / S["L"]) / sympy.sqrt(S["V"]))),
	("-(a + b)*exp(-(r + h)*t)*Y^2", -(S["a"] + S["b"]) * sympy.exp(-(S["r"] + S["h"]) * S["t"]) * S["Y"] ** 2),
	("exp(-(r + h)*t)*Phi(-(a + b)*X)", sympy.exp(-(S["r"] + S["h"]) * S["t"]) *
	 Phi_sympy(-(S["a"] + S["b"]) * S["X"])),
	("exp((X - Y)/4)", sympy.exp((S["X"] - S["Y"]) / 4)),
	("exp(-(a + b)*t/2)*X", sympy.exp(-(S["a"] + S["b"]) * S["t"] / 2) * S["X"]),
	("X^(a/(a + b))", S["X"] ** (S["a"] / (S["a"] + S["b"]))),
	("V^((k - m)/3)", S["V"] ** ((S["k"] - S["m"]) / 3)),
]


def expressions(count, seed):
	rng = random.Random(seed)
	gen = Gen(rng)
	out = list(PROBES)
	seen = {t for t, _ in out}
	states = {S[n] for n in STATES}
	while len(out) < count:
		text, e, _ = gen.expr(rng.choice([1, 2, 2, 3, 3]))
		if text in seen or len(text) > 90 or text.startswith("(") or not (e.free_symbols & states):
			continue
		seen.add(text)
		out.append((text, e))
	return out

# ------------------------------------------------------------------ numbers

def dyadic(rng, lo, hi):
	"""A random multiple of 1/1024 in [lo, hi]: exact as a double and in mpmath."""
	n = rng.randint(int(lo * 1024), int(hi * 1024))
	return n / 1024.0


def random_point(rng):
	point = {}
	for n in POS_PARAMS:
		point[n] = dyadic(rng, 0.25, 1.75)
	for n in STATES:
		point[n] = dyadic(rng, 0.3, 2.2)
	for n in ["rho1", "rho2", "rho3"]:
		point[n] = dyadic(rng, -0.45, 0.45)  # a positive definite correlation matrix
	point["lam"] = dyadic(rng, -1.0, 1.0)
	point["t"] = dyadic(rng, 0.0, 1.5)
	for n in NOISES + ["WQ"]:
		point[n] = dyadic(rng, -1.0, 1.0)  # the Brownian motions themselves
	return point


def env_of(point):
	"""Name -> mpf."""
	return {n: mpmath.mpf(v) for n, v in point.items()}


class Domain(Exception):
	"""A value outside the real domain (complex, infinite, division by zero)."""


_MP_FUN = {
	sympy.exp: mpmath.exp, sympy.log: mpmath.log, sympy.sin: mpmath.sin, sympy.cos: mpmath.cos,
	sympy.tan: mpmath.tan, sympy.sinh: mpmath.sinh, sympy.cosh: mpmath.cosh,
	sympy.tanh: mpmath.tanh, sympy.erf: mpmath.erf, sympy.Abs: abs,
}


def closure(e):
	"""A function env -> mpf evaluating the SymPy expression e (a plain tree walk:
	much cheaper than lambdify for expressions evaluated at a few points)."""
	if e.is_Symbol:
		return lambda env, s=e.name: env[s]
	if e.is_Integer:
		v = mpmath.mpf(int(e))
		return lambda env: v
	if e.is_Rational:
		v = mpmath.mpf(e.p) / e.q
		return lambda env: v
	if e.is_Float:
		v = mpmath.mpf(str(e))
		return lambda env: v
	if e is sympy.pi:
		return lambda env: +mpmath.pi
	if e is sympy.E:
		return lambda env: mpmath.e
	if e.is_Add:
		parts = [closure(a) for a in e.args]
		return lambda env: mpmath.fsum(p(env) for p in parts)
	if e.is_Mul:
		parts = [closure(a) for a in e.args]
		return lambda env: mpmath.fprod(p(env) for p in parts)
	if e.is_Pow:
		base = closure(e.args[0])
		ex = e.args[1]
		if ex.is_Integer:
			n = int(ex)
			return lambda env: base(env) ** n
		if ex == HALF:
			return lambda env: mpmath.sqrt(base(env))
		exc = closure(ex)
		return lambda env: mpmath.power(base(env), exc(env))
	fn = _MP_FUN.get(e.func)
	if fn is not None and len(e.args) == 1:
		arg = closure(e.args[0])
		return lambda env: fn(arg(env))
	raise ValueError("cannot evaluate %s (%s)" % (e, type(e).__name__))


def real(value):
	if isinstance(value, mpmath.mpc):
		if abs(value.imag) > ATOL * max(1, abs(value.real)):
			raise Domain("complex")
		value = value.real
	if not mpmath.isfinite(value):
		raise Domain("not finite")
	return value


def evaluate(fn, env):
	try:
		return real(fn(env))
	except (ZeroDivisionError, OverflowError, ValueError):
		raise Domain("undefined")


def close(x, y):
	return abs(x - y) <= RTOL * max(abs(x), abs(y)) + ATOL


def fmt(v):
	return mpmath.nstr(v, 17)

# ------------------------------------------------------------------ the oracle

class Item:
	"""One result: a `d EXPR` (kind "d") or an `sde` display (kind "sde")."""

	def __init__(self, kind, text, model, measure="P", expr=None, state=None, convention="ito"):
		self.kind, self.text, self.model, self.measure = kind, text, model, measure
		self.expr, self.state, self.convention = expr, state, convention
		self.line = None      # line of the statement in the script
		self.statement = None

	def noises(self):
		return ["WQ", "B", "Z"] if self.measure == "Q" else list(NOISES)

	def oracle(self):
		"""A function env -> {component: value}: "lhs", "drift" and "d<noise>" for every
		noise of the measure.  SymPy differentiates its own copy of the expression; the
		pieces are put together here, numerically, by Itô's formula."""
		m = self.model
		if self.kind == "sde":
			X = self.state
			drift = m.mu_ito(X) if self.convention == "ito" else m.mu_strat(X)
			pieces = {"lhs": closure(S[X]), "drift": closure(drift)}
			for k, v in m.sigma[X].items():
				pieces["d" + k] = closure(v)

			def values(env):
				out = {k: evaluate(fn, env) for k, fn in pieces.items()}
				for k in NOISES:
					out.setdefault("d" + k, mpmath.mpf(0))
				return self.under_measure(out, env)
			return values
		f = self.expr
		present = [i for i in STATES if S[i] in f.free_symbols]
		grads = {i: sympy.diff(f, S[i]) for i in present}
		hess = {(i, j): sympy.diff(grads[i], S[j])
		        for n, i in enumerate(present) for j in present[n:]}
		c_f, c_t = closure(f), closure(sympy.diff(f, S["t"]))
		c_grad = {i: closure(g) for i, g in grads.items()}
		c_hess = {ij: closure(h) for ij, h in hess.items()}
		c_mu = {i: closure(m.mu_ito(i)) for i in present}
		c_sig = {(i, k): closure(v) for i in present for k, v in m.sigma[i].items()}

		def values(env):
			corr = {(k, l): (mpmath.mpf(1) if k == l else env[str(rho(k, l))])
			        for k in NOISES for l in NOISES}
			sig = {ik: evaluate(fn, env) for ik, fn in c_sig.items()}
			grad = {i: evaluate(fn, env) for i, fn in c_grad.items()}
			drift = evaluate(c_t, env)
			for i in present:
				drift += evaluate(c_mu[i], env) * grad[i]
			for (i, j), fn in c_hess.items():
				# (sigma rho sigma^T)_ij; f_ij = f_ji counts twice off the diagonal
				cij = mpmath.fsum(sig.get((i, k), 0) * corr[(k, l)] * sig.get((j, l), 0)
				                  for k in NOISES for l in NOISES)
				weight = mpmath.mpf(1) / 2 if i == j else 1
				drift += weight * cij * evaluate(fn, env)
			out = {"lhs": evaluate(c_f, env), "drift": drift}
			for k in NOISES:
				out["d" + k] = mpmath.fsum(sig.get((i, k), 0) * grad[i] for i in present)
			return self.under_measure(out, env)
		return values

	def under_measure(self, out, env):
		"""Under Q (dW = dWQ - lam dt): the drift gains -lam sum_k rho_kW g_k (Girsanov;
		a noise correlated with W shifts by rho*lam), and W is written WQ."""
		if self.measure != "Q":
			return out
		shift = out["dW"] + mpmath.fsum(out["d" + k] * env[str(rho(k, "W"))] for k in ("B", "Z"))
		out["drift"] -= env["lam"] * shift
		out["dWQ"] = out.pop("dW")
		return out


def oracle_values(item, rng):
	"""[(point, {component: mpf})] at POINTS points where the oracle is real."""
	values = item.oracle()
	good = []
	for _ in range(POINTS * 4):
		point = random_point(rng)
		try:
			vals = values(env_of(point))
		except Domain:
			continue
		good.append((point, vals))
		if len(good) == POINTS:
			break
	return good

# ------------------------------------------------------------------ reading text and JSON

def split_increments(expr):
	"""{increment name ("t", "W", ...): coefficient} of a SymPy expression that must be
	linear in the increments dt, dW, ...; raises ValueError otherwise."""
	incs = {v: k for k, v in INCR.items()}
	coefs = {}
	for term in sympy.Add.make_args(expr):
		present = term.free_symbols & set(incs)
		if len(present) != 1:
			if term == 0:
				continue
			raise ValueError("term %s has %d increments" % (term, len(present)))
		inc = present.pop()
		coef, rest = term.as_independent(inc, as_Add=False)
		if rest != inc:
			raise ValueError("term %s is not linear in %s" % (term, inc))
		coefs[incs[inc]] = coefs.get(incs[inc], sympy.Integer(0)) + coef
	return coefs


def check_values(item, samples, got, fmt_name, shown, failures, who="itox",
                 truth="Itô's formula"):
	"""Compare {component: function env -> value} with the oracle at the samples;
	returns True when all agree."""
	for point, want in samples:
		env = env_of(point)
		for comp, value in want.items():
			if comp not in got:
				continue
			try:
				have = evaluate(got[comp], env)
			except Domain as exc:
				failures.append((item, fmt_name, "%s: itox's value is %s at %s" % (
					comp_name(comp), exc, where(point)), shown))
				return False
			if not close(have, value):
				failures.append((item, fmt_name, "%s: %s %s, %s %s at %s" % (
					comp_name(comp), who, fmt(have), truth, fmt(value), where(point)), shown))
				return False
	return True


def comp_name(comp):
	if comp == "lhs":
		return "left side"
	if comp == "drift":
		return "dt coefficient"
	return "%s coefficient" % comp


def where(point):
	keys = ["t"] + STATES + POS_PARAMS + ["rho1", "rho2", "rho3", "lam"]
	return ", ".join("%s=%s" % (k, point[k]) for k in keys)


TEXT_FUN = {"exp": mpmath.exp, "log": mpmath.log, "sqrt": mpmath.sqrt, "sin": mpmath.sin,
            "cos": mpmath.cos, "tan": mpmath.tan, "sinh": mpmath.sinh, "cosh": mpmath.cosh,
            "tanh": mpmath.tanh, "erf": mpmath.erf, "abs": abs, "Phi": mpmath.ncdf,
            "phi": mpmath.npdf}
INCR_NAMES = {"d" + k: k for k in INCR}
TEXT_NAMES = set(SYM) | set(NOISE_SYM)


def text_tree(text):
	"""Python's own expression parser reads itox's text syntax once ^ is written **:
	the same operators and precedence (^ right-associative and tighter than unary
	minus: -x^2 is -(x^2), LANGUAGE.md "Expressions")."""
	if "**" in text:
		raise ValueError("'**' in itox text")
	return ast.parse(text.replace("^", "**"), mode="eval").body


def text_closure(node):
	"""A function env -> value of an expression tree; names must be the model's."""
	if isinstance(node, ast.BinOp):
		left, right = text_closure(node.left), text_closure(node.right)
		op = type(node.op)
		if op is ast.Add:
			return lambda env: left(env) + right(env)
		if op is ast.Sub:
			return lambda env: left(env) - right(env)
		if op is ast.Mult:
			return lambda env: left(env) * right(env)
		if op is ast.Div:
			return lambda env: left(env) / right(env)
		if op is ast.Pow:
			if isinstance(node.right, ast.Constant) and isinstance(node.right.value, int):
				n = node.right.value
				return lambda env: left(env) ** n
			return lambda env: mpmath.power(left(env), right(env))
		raise ValueError("operator %s" % op.__name__)
	if isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.USub, ast.UAdd)):
		inner = text_closure(node.operand)
		if isinstance(node.op, ast.UAdd):
			return inner
		return lambda env: -inner(env)
	if isinstance(node, ast.Call):
		if not isinstance(node.func, ast.Name) or node.func.id not in TEXT_FUN or \
		   len(node.args) != 1 or node.keywords:
			raise ValueError("call %s" % ast.unparse(node))
		fn, arg = TEXT_FUN[node.func.id], text_closure(node.args[0])
		return lambda env: fn(arg(env))
	if isinstance(node, ast.Name):
		if node.id not in TEXT_NAMES:
			raise ValueError("unknown name %r" % node.id)
		return lambda env, n=node.id: env[n]
	if isinstance(node, ast.Constant) and isinstance(node.value, (int, float)) and \
	   not isinstance(node.value, bool):
		v = mpmath.mpf(node.value) if isinstance(node.value, int) else mpmath.mpf(repr(node.value))
		return lambda env: v
	raise ValueError("cannot read %s" % ast.unparse(node))


def text_increments(node):
	return [n.id for n in ast.walk(node) if isinstance(n, ast.Name) and n.id in INCR_NAMES]


def text_terms(node, sign=1):
	"""The signed terms of a sum."""
	if isinstance(node, ast.BinOp) and isinstance(node.op, (ast.Add, ast.Sub)):
		right = -sign if isinstance(node.op, ast.Sub) else sign
		return text_terms(node.left, sign) + text_terms(node.right, right)
	if isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub):
		return text_terms(node.operand, -sign)
	return [(sign, node)]


def text_factors(node, power=1):
	"""The factors of a product or quotient, with exponent +1 or -1."""
	if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Mult):
		return text_factors(node.left, power) + text_factors(node.right, power)
	if isinstance(node, ast.BinOp) and isinstance(node.op, ast.Div):
		return text_factors(node.left, power) + text_factors(node.right, -power)
	if isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub):
		return [(1, ast.Constant(-1))] + text_factors(node.operand, power)
	return [(power, node)]


def text_split(text):
	"""{increment ("t", "W", ...): coefficient function} of a right side, which must
	be a sum of terms each with exactly one increment as a factor (so linear)."""
	parts = {}
	for sign, term in text_terms(text_tree(text)):
		factors = text_factors(term)
		incs = [(p, f) for p, f in factors if isinstance(f, ast.Name) and f.id in INCR_NAMES]
		if len(incs) != 1 or incs[0][0] != 1 or len(text_increments(term)) != 1:
			if not text_increments(term) and isinstance(term, ast.Constant) and term.value == 0:
				continue
			raise ValueError("the term %s is not one coefficient times one increment" %
			                 ast.unparse(term))
		rest = [(p, text_closure(f)) for p, f in factors if f is not incs[0][1]]

		def coef(env, rest=rest, sign=sign):
			out = mpmath.mpf(sign)
			for p, fn in rest:
				out = out * fn(env) if p > 0 else out / fn(env)
			return out
		inc = INCR_NAMES[incs[0][1].id]
		if inc in parts:
			prev = parts[inc]
			parts[inc] = lambda env, a=prev, b=coef: a(env) + b(env)
		else:
			parts[inc] = coef
	return parts


def text_value(text):
	"""A function env -> value of an expression without increments."""
	tree = text_tree(text)
	if text_increments(tree):
		raise ValueError("an increment in %r" % text)
	return text_closure(tree)


ZERO = lambda env: mpmath.mpf(0)  # noqa: E731 - a constant function


def text_components(item, line):
	"""{component: function} from a text line, or raise ValueError with the reason."""
	if " = " not in line:
		raise ValueError("no ' = '")
	lhs, rhs = line.split(" = ", 1)
	got = {}
	if item.kind == "sde":
		want = ("stratonovich d%s" if item.convention == "stratonovich" else "d%s") % item.state
		if lhs != want:
			raise ValueError("left side %r, expected %r" % (lhs, want))
	elif lhs.startswith("d(") and lhs.endswith(")"):
		got["lhs"] = text_value(lhs[2:-1])
	elif lhs[1:] in STATES and lhs[0] == "d":
		got["lhs"] = text_value(lhs[1:])
	else:
		raise ValueError("left side %r is not d(EXPR)" % lhs)
	for inc, coef in text_split(rhs).items():
		if inc != "t" and inc not in item.noises():
			raise ValueError("increment d%s is not a noise under %s" % (inc, item.measure))
		got["drift" if inc == "t" else "d" + inc] = coef
	for k in ["drift"] + ["d" + n for n in item.noises()]:
		got.setdefault(k, ZERO)
	return got, rhs


def sympy_components(item, rhs):
	"""The same right side read by SymPy's parse_expr (a cross-check of text_split on
	a sample: it costs 25-60 ms a line)."""
	got = {}
	for inc, coef in split_increments(PARSER.parse(rhs)).items():
		got["drift" if inc == "t" else "d" + inc] = closure(coef)
	for k in ["drift"] + ["d" + n for n in item.noises()]:
		got.setdefault(k, closure(sympy.Integer(0)))
	return got


def json_components(item, obj):
	kind = "sde" if item.kind == "sde" else "differential"
	if obj.get("kind") != kind:
		raise ValueError("kind %r, expected %r" % (obj.get("kind"), kind))
	if obj.get("measure") != item.measure:
		raise ValueError("measure %r, expected %r" % (obj.get("measure"), item.measure))
	# where a result says it came from, it must be its own statement (common practice)
	if "line" in obj and obj["line"] != item.line:
		raise ValueError("line %r, the statement is on line %d" % (obj["line"], item.line))
	# (the echo of `d EXPR under Q` may leave out its `under Q`: "measure" says it)
	if "statement" in obj and obj["statement"] not in (item.statement,
	                                                  item.statement.replace(" under Q", "")):
		raise ValueError("statement %r, expected %r" % (obj["statement"], item.statement))
	got = {"drift": text_value(obj["drift"])}
	if item.kind == "sde":
		if obj.get("state") != item.state or obj.get("convention") != item.convention:
			raise ValueError("state/convention %r/%r" % (obj.get("state"), obj.get("convention")))
	else:
		got["lhs"] = text_value(obj["expr"])
	for k, v in obj.get("diffusion", {}).items():
		if k not in item.noises():
			raise ValueError("diffusion on %r, not a noise under %s" % (k, item.measure))
		got["d" + k] = text_value(v)
	for k in item.noises():
		got.setdefault("d" + k, ZERO)
	return got

# ------------------------------------------------------------------ reading LaTeX

GREEK = ("alpha beta gamma delta epsilon varepsilon zeta eta theta vartheta iota kappa lambda "
         "mu nu xi pi rho sigma tau upsilon chi psi omega Gamma Delta Theta Lambda Xi Pi "
         "Sigma Upsilon Psi Omega").split()
LATEX_FUN = {"log": mpmath.log, "ln": mpmath.log, "exp": mpmath.exp, "sin": mpmath.sin,
             "cos": mpmath.cos, "tan": mpmath.tan, "sinh": mpmath.sinh, "cosh": mpmath.cosh,
             "tanh": mpmath.tanh, "erf": mpmath.erf, "Phi": mpmath.ncdf,
             "varphi": mpmath.npdf, "phi": mpmath.npdf}
_LTOK = re.compile(r"""\s+|\\[,;:!\ ]|\\(?:left|right)\s*(?:[()\[\]|.]|\\[{}|])
	|\\(?:mathrm|mathit|operatorname|text)\s*\{[^{}]*\}|\\[A-Za-z]+|\d+(?:\.\d+)?|[A-Za-z]
	|[{}^_+\-=(),/|\[\]]|.""", re.X)


class LatexReader:
	"""A reader of display math as itox writes it (products by juxtaposition,
	\\frac, \\tfrac, \\sqrt, e^{...}, \\left( \\right), \\log x, \\Phi\\left(...\\right),
	names with subscripts x_{1}, X_{t}, \\mathit{word}, \\mathrm{d}t, \\circ\\mathrm{d}W_{t}).
	It builds tuples evaluated by lx_eval; written for this test, independent of itox."""

	def __init__(self, text, names, timed):
		self.toks = [m.group(0) for m in _LTOK.finditer(text)]
		self.toks = [t for t in self.toks if not t.isspace() and not re.fullmatch(r"\\[,;:!\ ]", t)]
		self.toks = [re.sub(r"\s+", "", t) if t.startswith(("\\left", "\\right")) else t
		             for t in self.toks]
		self.pos = 0
		self.names = names      # itox names that may occur
		self.timed = timed      # names written with the time subscript t

	def peek(self, offset=0):
		i = self.pos + offset
		return self.toks[i] if i < len(self.toks) else None

	def next(self):
		tok = self.peek()
		if tok is None:
			raise ValueError("unexpected end")
		self.pos += 1
		return tok

	def expect(self, tok):
		got = self.next()
		if got != tok:
			raise ValueError("expected %r, got %r at token %d" % (tok, got, self.pos))

	def parse_all(self):
		node = self.sum()
		if self.peek() is not None:
			raise ValueError("unexpected %r at token %d" % (self.peek(), self.pos))
		return node

	def sum(self):
		terms = []
		sign = 1
		if self.peek() in ("+", "-"):
			sign = -1 if self.next() == "-" else 1
		terms.append((sign, self.product()))
		while self.peek() in ("+", "-"):
			sign = -1 if self.next() == "-" else 1
			terms.append((sign, self.product()))
		return ("sum", terms)

	def starts_primary(self, tok):
		if tok is None:
			return False
		if tok in ("+", "-", "=", "}", ")", ",", "/", "^", "_", "]") or tok.startswith("\\right"):
			return False
		return True

	def product(self):
		factors = [(1, self.power())]
		while True:
			tok = self.peek()
			if tok == "/":
				self.next()
				factors.append((-1, self.power()))
			elif tok in ("\\cdot", "\\times"):
				self.next()
			elif self.starts_primary(tok):
				factors.append((1, self.power()))
			else:
				break
		return ("prod", factors)

	def power(self):
		base = self.primary()
		while self.peek() == "^":
			self.next()
			base = ("pow", base, self.group())
		return base

	def group(self):
		if self.peek() == "{":
			self.next()
			node = self.sum()
			self.expect("}")
			return node
		tok = self.next()
		if re.fullmatch(r"\d", tok):
			return ("num", mpmath.mpf(int(tok)))
		return self.name_from(tok)

	def subscript(self):
		"""The parts of a _{...} subscript (split at commas), or []."""
		if self.peek() != "_":
			return []
		self.next()
		if self.peek() != "{":
			return [self.next()]
		self.next()
		parts, cur, depth = [], "", 0
		while True:
			tok = self.next()
			if tok == "}" and depth == 0:
				break
			if tok == "{":
				depth += 1
			elif tok == "}":
				depth -= 1
			if tok == "," and depth == 0:
				parts.append(cur)
				cur = ""
			else:
				cur += tok
		parts.append(cur)
		return parts

	def name_from(self, tok):
		if tok.startswith("\\mathit") or tok.startswith("\\mathrm"):
			stem = tok[tok.index("{") + 1:-1]
		elif tok.startswith("\\") and tok[1:] in GREEK:
			stem = tok[1:]
			if stem == "varepsilon":
				stem = "epsilon"
		elif re.fullmatch(r"[A-Za-z]", tok):
			stem = tok
		else:
			raise ValueError("unexpected %r at token %d" % (tok, self.pos))
		parts = self.subscript()
		candidates = []
		if parts and parts[-1] == "t":
			candidates.append((stem + "".join(parts[:-1]), True))
		candidates.append((stem + "".join(parts), False))
		for name, timed in candidates:
			if name in self.names and timed == (name in self.timed):
				return ("name", name)
		raise ValueError("unknown name %r%s" % (stem, "_{%s}" % ",".join(parts) if parts else ""))

	def primary(self):
		tok = self.next()
		if tok in ("\\left(", "(", "\\left["):
			node = self.sum()
			self.expect({"\\left(": "\\right)", "(": ")", "\\left[": "\\right]"}[tok])
			return node
		if tok == "\\left|":
			node = self.sum()
			self.expect("\\right|")
			return ("fun", abs, node)
		if tok == "{":
			node = self.sum()
			self.expect("}")
			return node
		if re.fullmatch(r"\d+(\.\d+)?", tok):
			return ("num", mpmath.mpf(tok))
		if tok in ("\\frac", "\\tfrac", "\\dfrac"):
			top = self.group()
			bottom = self.group()
			return ("prod", [(1, top), (-1, bottom)])
		if tok == "\\sqrt":
			if self.peek() == "[":
				raise ValueError("\\sqrt[n] not expected")
			return ("pow", self.group(), ("num", mpmath.mpf(1) / 2))
		if tok == "\\mathrm{e}" and self.peek() == "^":  # exp: an upright e
			self.next()
			return ("fun", mpmath.exp, self.group())
		word = None
		if tok.startswith("\\") and tok[1:] in LATEX_FUN:
			word = tok[1:]
		elif re.fullmatch(r"\\(mathrm|operatorname)\{(\w+)\}", tok) and \
		                 tok[tok.index("{") + 1:-1] in LATEX_FUN:
			word = tok[tok.index("{") + 1:-1]
		if word is not None:
			if self.peek() in ("\\left(", "("):
				arg = self.primary()
			else:
				arg = self.power()
			return ("fun", LATEX_FUN[word], arg)
		if tok == "\\circ":
			if self.peek() != "\\mathrm{d}":
				raise ValueError("\\circ not before \\mathrm{d}")
			self.next()
			return self.increment(True)
		if tok == "\\mathrm{d}":
			return self.increment(False)
		return self.name_from(tok)

	def increment(self, circ):
		tok = self.next()
		if tok == "t" and self.peek() != "_":
			return ("inc", "t", circ)
		node = self.name_from(tok)
		return ("inc", node[1], circ)


def lx_eval(node, env):
	kind = node[0]
	if kind == "num":
		return node[1]
	if kind == "name":
		return env[node[1]]
	if kind == "inc":
		return env["d" + node[1]]
	if kind == "sum":
		return mpmath.fsum(s * lx_eval(n, env) for s, n in node[1])
	if kind == "prod":
		out = mpmath.mpf(1)
		for s, n in node[1]:
			v = lx_eval(n, env)
			out = out * v if s > 0 else out / v
		return out
	if kind == "pow":
		b, x = lx_eval(node[1], env), lx_eval(node[2], env)
		if x == int(x):
			return b ** int(x)
		return mpmath.power(b, x)
	if kind == "fun":
		return node[1](lx_eval(node[2], env))
	raise ValueError(kind)


def lx_increments(node):
	"""The increment nodes inside node."""
	if node[0] == "inc":
		return [node]
	if node[0] in ("sum", "prod"):
		return [i for _, n in node[1] for i in lx_increments(n)]
	if node[0] == "pow":
		return lx_increments(node[1]) + lx_increments(node[2])
	if node[0] == "fun":
		return lx_increments(node[2])
	return []


def lx_split(rhs):
	"""{increment: (circ, coefficient closure)} of a right side that must be a sum of
	terms each with one increment as a factor of its top-level product."""
	out = {}
	for sign, term in rhs[1]:
		if term[0] != "prod":
			raise ValueError("term is not a product")
		incs = [(s, f) for s, f in term[1] if f[0] == "inc"]
		if len(incs) != 1 or incs[0][0] != 1 or len(lx_increments(term)) != 1:
			raise ValueError("a term without exactly one increment factor")
		inc = incs[0][1]
		rest = ("prod", [(s, f) for s, f in term[1] if f[0] != "inc"] or [(1, ("num", mpmath.mpf(1)))])
		prev = out.get(inc[1])
		coef = ("sum", [(sign, rest)])
		if prev is not None:
			coef = ("sum", prev[1][1] + coef[1])
		out[inc[1]] = (inc[2], coef)
	return out


def latex_exponent_fracs(line):
	"""Exponent groups ^{...} that hold a stacked fraction: an exponent is written
	inline, v^{3/2}, e^{-a t/2} (common practice of typesetting, no source)."""
	bad = []
	for m in re.finditer(r"\^\{", line):
		depth, i = 1, m.end()
		while i < len(line) and depth:
			depth += {"{": 1, "}": -1}.get(line[i], 0)
			i += 1
		if re.search(r"\\[dt]?frac", line[m.end():i - 1]):
			bad.append(line[max(0, m.start() - 12):i])
	return bad


def latex_components(item, line, names, timed):
	if " = " not in line:
		raise ValueError("no ' = '")
	lhs, rhs = line.split(" = ", 1)
	got = {}
	if not lhs.startswith("\\mathrm{d}"):
		raise ValueError("left side %r does not start with \\mathrm{d}" % lhs)
	lnode = LatexReader(lhs[len("\\mathrm{d}"):], names, timed).parse_all()
	got["lhs"] = lambda env, n=lnode: lx_eval(n, env)
	parts = lx_split(LatexReader(rhs, names, timed).parse_all())
	for inc, (circ, coef) in parts.items():
		if inc != "t" and inc not in item.noises():
			raise ValueError("increment d%s is not a noise under %s" % (inc, item.measure))
		if inc != "t" and circ != (item.convention == "stratonovich"):
			raise ValueError("d%s %s the Stratonovich circle" % (inc, "lacks" if not circ else "has"))
		if inc == "t" and circ:
			raise ValueError("a circle before dt")
		got["drift" if inc == "t" else "d" + inc] = (lambda env, n=coef: lx_eval(n, env))
	for k in ["drift"] + ["d" + n for n in item.noises()]:
		got.setdefault(k, ZERO)
	return got



# ------------------------------------------------------------------ running itox

def run(script_text, fmt_name, args=(), timeout=240):
	fd, path = tempfile.mkstemp(suffix=".itox", prefix="roundtrip-")
	with os.fdopen(fd, "w") as out:
		out.write(script_text)
	try:
		proc = subprocess.run([ITOX, "--format=" + fmt_name] + list(args) + [path],
		                      capture_output=True, text=True, timeout=timeout * SLOW,
		                      preexec_fn=_limit_memory)
		check_valgrind(proc)
		return proc.returncode, proc.stdout, proc.stderr, path
	finally:
		os.unlink(path)


def sde_statement(state, convention, measure):
	s = "sde %s%s" % (state, " stratonovich" if convention == "stratonovich" else "")
	return s + (" under Q" if measure == "Q" else "")

# ------------------------------------------------------------------ checking one session

class Checker:
	"""All checks of one itox session (a model, its statements, four formats)."""

	def __init__(self, model, items, prelude, label, c_unit):
		self.model, self.items, self.prelude, self.label = model, items, prelude, label
		self.c_unit = c_unit
		lines = prelude.count("\n")
		for i, item in enumerate(items):
			item.line = lines + i + 1
		self.script = prelude + "".join(it.statement + "\n" for it in items)
		self.outputs = {}
		self.errors = []

	def run_formats(self, pool):
		formats = ["text", "json", "latex"] + (["c"] if self.c_unit else [])
		results = list(pool.map(lambda f: (f, run(self.script, f)), formats))
		for f, (status, out, err, _) in results:
			if status != 0:
				self.errors.append("%s: itox --format=%s exit status %s: %s" % (
					self.label, f, status, err.strip()[:2000]))
			if f == "c":
				self.outputs[f] = out
			else:
				lines = [l for l in out.splitlines() if l.strip()]
				if len(lines) != len(self.items):
					self.errors.append("%s: --format=%s printed %d lines for %d results" % (
						self.label, f, len(lines), len(self.items)))
				self.outputs[f] = lines + [""] * (len(self.items) - len(lines))


CHECKERS = []  # the sessions, shared with the worker processes (fork)


def verify_items(args):
	"""In a worker process: the oracle, text, JSON and LaTeX checks of items
	[lo, hi) of a checker.  Returns (passed counts, failures, samples)."""
	which, lo, hi, seed = args
	checker = CHECKERS[which][0]
	names = set(SYM) | set(NOISES) | {"WQ"}
	timed = set(STATES) | set(NOISES) | {"WQ"}
	passed = {"text": 0, "text-sympy": 0, "json": 0, "latex": 0, "latex-exponent": 0, "latex-measure": 0,
	          "text-measure": 0}
	failures = []
	samples = {}
	for idx in range(lo, hi):
		item = checker.items[idx]
		rng = random.Random(seed * 100003 + idx)
		try:
			pts = oracle_values(item, rng)
		except Exception as exc:  # noqa: BLE001 - an oracle failure is this test's bug
			failures.append((item, "oracle", "SymPy oracle failed: %r" % exc, ""))
			continue
		if len(pts) < 2:
			failures.append((item, "oracle", "no sample point in the domain", ""))
			continue
		samples[idx] = pts
		line = checker.outputs["text"][idx]
		# a result under Q whose text shows none of Q's renamed noises says so
		# in a trailing comment, and LaTeX names the measure after the equation
		marked = line.endswith("  # under Q")
		if marked:
			line = line[:-len("  # under Q")]
		# the marker exactly where it is needed: under Q when dWQ is not in the
		# result (its dB and dZ read like P's), never under P (LANGUAGE.md `measure`)
		if marked != (item.measure == "Q" and "dWQ" not in line):
			failures.append((item, "text", "the marker '# under Q' is %s" %
			                 ("wrongly there" if marked else "missing"), line))
		else:
			passed["text-measure"] += 1
		try:
			got, rhs = text_components(item, line)
			if check_values(item, pts, got, "text", line, failures):
				passed["text"] += 1
			if idx % SYMPY_EVERY == 0:
				# the two readers of the text must agree (whatever itox printed)
				mine = [(p, {k: evaluate(got[k], env_of(p)) for k in want if k != "lhs"})
				        for p, want in pts]
				if check_values(item, mine, sympy_components(item, rhs), "text-sympy", line,
				                failures, "SymPy's parse_expr", "the ast reader"):
					passed["text-sympy"] += 1
		except Exception as exc:  # noqa: BLE001 - any reading failure is a failure
			failures.append((item, "text", "cannot read: %s" % exc, line))
		raw = checker.outputs["json"][idx]
		try:
			got = json_components(item, json.loads(raw))
			if check_values(item, pts, got, "json", raw, failures):
				passed["json"] += 1
		except Exception as exc:  # noqa: BLE001
			failures.append((item, "json", "cannot read: %s" % exc, raw))
		tex = checker.outputs["latex"][idx]
		note = " \\qquad \\text{(under $Q$)}"
		if item.measure == "Q":
			if tex.endswith(note):
				tex = tex[:-len(note)]
				passed["latex-measure"] += 1
			else:
				failures.append((item, "latex", "the measure Q is not named", tex))
		elif tex.endswith(note):
			failures.append((item, "latex", "a result under P names Q", tex))
		else:
			passed["latex-measure"] += 1
		# a long result is broken into aligned lines: read it as one line
		tex = re.sub(r"\\begin\{aligned\}|\\end\{aligned\}|\\\\|&|\\quad\b", " ", tex)
		# a sum broken inside parentheses has \Bigl( ... \Bigr) (\left cannot span lines)
		tex = tex.replace("\\Bigl(", "\\left(").replace("\\Bigr)", "\\right)")
		tex = re.sub(r" +", " ", tex).strip()
		bad = latex_exponent_fracs(tex)
		if bad:
			failures.append((item, "latex", "a fraction stacked in an exponent: %s" % bad[0], tex))
		else:
			passed["latex-exponent"] += 1
		try:
			got = latex_components(item, tex, names, timed)
			if check_values(item, pts, got, "latex", tex, failures):
				passed["latex"] += 1
		except Exception as exc:  # noqa: BLE001
			failures.append((item, "latex", "cannot read: %s" % exc, tex))
	return passed, [(describe(it), f, w, t) for it, f, w, t in failures], samples


def verify_parallel(which, seed, workers=2):
	"""Text, JSON and LaTeX of all items of a checker, in `workers` processes."""
	import multiprocessing
	checker = CHECKERS[which][0]
	n = len(checker.items)
	step = max(1, (n + 4 * workers - 1) // (4 * workers))
	jobs = [(which, lo, min(n, lo + step), seed) for lo in range(0, n, step)]
	if workers > 1 and n > 50:
		ctx = multiprocessing.get_context("fork")
		with ctx.Pool(workers) as pool:
			parts = pool.map(verify_items, jobs)
	else:
		parts = [verify_items(j) for j in jobs]
	passed, failures, samples = {}, [], {}
	for p, f, s in parts:
		for k, v in p.items():
			passed[k] = passed.get(k, 0) + v
		failures.extend(f)
		samples.update(s)
	return passed, failures, samples

# ------------------------------------------------------------------ round trip

def roundtrip(checker, prelude):
	"""Feed each printed right side (text) back as an expression statement; its JSON
	drift and diffusion must be the original result's, character for character.
	A result under Q is read back under Q: there dB, for a noise B that Q keeps by
	name, is the increment of B's Q-Brownian motion, as the result printed it
	(grammar/README.md)."""
	picked = list(range(len(checker.items)))
	rhs = []
	for i in picked:
		line = checker.outputs["text"][i]
		if line.endswith("  # under Q"):
			line = line[:-len("  # under Q")]
		side = line.split(" = ", 1)[1] if " = " in line else "0"
		rhs.append(side + (" under Q" if checker.items[i].measure == "Q" else ""))
	status, out, err, _ = run(prelude + "\n".join(rhs) + "\n", "json")
	objs = [json.loads(l) for l in out.splitlines() if l.strip()]
	failures, passed = [], 0
	if status != 0 or len(objs) != len(picked):
		failures.append((None, "round trip", "itox read %d of %d right sides back (status %s): %s" % (
			len(objs), len(picked), status, err.strip()[:1500]), ""))
	for n, i in enumerate(picked[:len(objs)]):
		item, back = checker.items[i], objs[n]
		orig = json.loads(checker.outputs["json"][i]) if checker.outputs["json"][i] else {}
		if back.get("kind") in ("product", "value"):
			back = {"drift": back.get("value"), "diffusion": {}}
		if back.get("measure", "P") != orig.get("measure", "P"):
			failures.append((item, "round trip", "read back under %r, not %r" % (
			                 back.get("measure"), orig.get("measure")), rhs[n]))
			continue
		want = (orig.get("drift"), orig.get("diffusion"))
		have = (back.get("drift"), back.get("diffusion"))
		if want != have:
			failures.append((item, "round trip", "read back: drift %r diffusion %r\n"
			                 "          original:  drift %r diffusion %r" % (
			                 have[0], have[1], want[0], want[1]), rhs[n]))
		else:
			passed += 1
	return passed, failures

# ------------------------------------------------------------------ C

_C_FUNC = re.compile(r"/\*\s*(?P<file>[^*]*?):(?P<line>\d+):\s*(?P<stmt>.*?)\s*\*/\s*"
                     r"(?P<ret>void|double)\s+(?P<name>\w+)\s*\((?P<args>[^)]*)\)\s*\{", re.S)
UNSET = -7777.25  # an output the function did not write


def c_compiler():
	return os.environ.get("CC") or shutil.which("cc") or shutil.which("gcc")


def c_compile_start(checker, workdir, tag):
	"""Start `cc -std=c99 -Wall -Werror -c` on the translation unit (in the
	background: the unit of 2,000 functions takes seconds)."""
	src = os.path.join(workdir, tag + "-unit.c")
	with open(src, "w") as out:
		out.write(checker.outputs.get("c", ""))
	return src, subprocess.Popen([c_compiler(), "-std=c99", "-Wall", "-Werror", "-c", src,
	                              "-o", src[:-2] + ".o"], stdout=subprocess.PIPE,
	                             stderr=subprocess.PIPE, text=True)


def c_signature(item, m, pts):
	"""(inputs, outputs, parameter list) of a function, or raise ValueError."""
	if m.group("ret") != "void":
		raise ValueError("a differential result must be a void function")
	params = [p.strip() for p in m.group("args").split(",")]
	ins, outs = [], []
	for p in params:
		mm = re.fullmatch(r"double\s*(\*?)\s*(\w+)", p)
		if not mm:
			raise ValueError("parameter %r is not a double" % p)
		(outs if mm.group(1) else ins).append(mm.group(2))
	want = ["drift"] + ["diffusion_" + n for n in item.noises()]
	if sorted(outs) != sorted(want):
		raise ValueError("outputs %s, expected %s" % (outs, want))
	if not ins or ins[0] != "t":
		raise ValueError("the first parameter is not t")
	unknown = [n for n in ins if n not in pts[0][0]]
	if unknown:
		raise ValueError("unknown parameter names %s" % unknown)
	return ins, outs, params


def c_driver(calls):
	"""A driver that makes every call from tables (one table per distinct parameter
	list; a main() of thousands of literal calls takes gcc longer than the unit)."""
	groups = {}
	for call in calls:
		groups.setdefault(tuple(call["params"]), []).append(call)
	out = ["#include <stdio.h>"]
	protos = {}
	for call in calls:
		protos[call["name"]] = "void %s(%s);" % (call["name"], ", ".join(call["params"]))
	out.extend(protos.values())
	body = []
	for g, (params, group) in enumerate(groups.items()):
		names = [re.fullmatch(r"double\s*(\*?)\s*(\w+)", p).groups() for p in params]
		n_in = sum(1 for star, _ in names if not star)
		n_out = len(names) - n_in
		out.append("typedef void (*sig%d)(%s);" % (g, ", ".join(
			"double *" if star else "double" for star, _ in names)))
		out.append("static const sig%d fn%d[] = {%s};" % (g, g, ", ".join(c["name"] for c in group)))
		out.append("static const int tag%d[][2] = {%s};" % (g, ", ".join(
			"{%d, %d}" % (c["item"], c["point"]) for c in group)))
		out.append("static const double in%d[][%d] = {\n%s};" % (g, n_in, ",\n".join(
			"{%s}" % ", ".join(float(v).hex() for v in c["inputs"]) for c in group)))
		args, i_in, i_out = [], 0, 0
		for star, _ in names:
			if star:
				args.append("&o[%d]" % i_out)
				i_out += 1
			else:
				args.append("in%d[c][%d]" % (g, i_in))
				i_in += 1
		body.append("\tfor (size_t c = 0; c < sizeof tag%d / sizeof tag%d[0]; c++) {\n"
		            "\t\tfor (int j = 0; j < %d; j++)\n\t\t\to[j] = %r;\n"
		            "\t\tfn%d[c](%s);\n\t\tprintf(\"%%d %%d\", tag%d[c][0], tag%d[c][1]);\n"
		            "\t\tfor (int j = 0; j < %d; j++)\n\t\t\tprintf(\" %%.17g\", o[j]);\n"
		            "\t\tputchar('\\n');\n\t}" % (g, g, n_out, UNSET, g, ", ".join(args), g, g, n_out))
	out.append("int main(void)\n{\n\tdouble o[16];\n%s\n\treturn 0;\n}\n" % "\n".join(body))
	return "\n".join(out)


def c_check(checker, samples, workdir, tag, started):
	"""Wait for the compilation, call every function at the sample points from a
	generated driver, compare with the oracle."""
	src, proc = started
	failures = []
	_, err = proc.communicate()
	if proc.returncode != 0:
		return 0, [(None, "c", "%s: cc -std=c99 -Wall -Werror -c failed:\n%s" % (tag, err[:3000]), "")]
	unit = checker.outputs.get("c", "")
	funcs = {int(m.group("line")): m for m in _C_FUNC.finditer(unit)}
	calls, outputs = [], {}
	for i, item in enumerate(checker.items):
		m = funcs.get(item.line)
		pts = samples.get(i)
		if not pts:
			continue
		if m is None:
			failures.append((item, "c", "no function with the comment /* FILE:%d: ... */" % item.line, ""))
			continue
		try:
			ins, outs, params = c_signature(item, m, pts)
		except ValueError as exc:
			failures.append((item, "c", str(exc), m.group(0)))
			continue
		outputs[i] = outs
		for p_index, (point, _) in enumerate(pts):
			calls.append({"name": m.group("name"), "params": params, "item": i, "point": p_index,
			              "inputs": [point[n] for n in ins]})
	driver = os.path.join(workdir, tag + "-driver.c")
	with open(driver, "w") as out:
		out.write(c_driver(calls))
	exe = os.path.join(workdir, tag + "-driver")
	proc = subprocess.run([c_compiler(), "-std=c99", "-Wall", "-Werror", driver, src[:-2] + ".o",
	                       "-lm", "-o", exe], capture_output=True, text=True)
	if proc.returncode != 0:
		return 0, failures + [(None, "c", "%s: the driver does not link:\n%s" % (tag, proc.stderr[:3000]), "")]
	proc = subprocess.run([exe], capture_output=True, text=True, timeout=120)
	rows = [l.split() for l in proc.stdout.splitlines()]
	if proc.returncode != 0 or len(rows) != len(calls):
		return 0, failures + [(None, "c", "%s: the driver printed %d of %d rows (status %s)" % (
			tag, len(rows), len(calls), proc.returncode), "")]
	verdict = {}
	for row in rows:
		i, p_index = int(row[0]), int(row[1])
		if verdict.get(i) is False:
			continue
		item = checker.items[i]
		point, want = samples[i][p_index]
		for name, text in zip(outputs[i], row[2:]):
			have = float(text)
			comp = "drift" if name == "drift" else "d" + name[len("diffusion_"):]
			exact = want[comp]
			why = None
			if have == UNSET:
				why = "%s was not set" % name
			elif abs(exact) > mpmath.mpf("1e300"):
				# the value overflows a double: C may give inf or nan, not a finite number
				if have == have and abs(have) < 1e300:
					why = "%s: %r where the value is %s" % (name, have, fmt(exact))
			else:
				e = float(exact)
				if not abs(have - e) <= C_RTOL * max(abs(have), abs(e)) + C_ATOL:
					why = "%s: C %r, Itô's formula %s at %s" % (name, have, fmt(exact), where(point))
			if why:
				failures.append((item, "c", why, ""))
				verdict[i] = False
				break
		verdict.setdefault(i, True)
	return sum(1 for v in verdict.values() if v), failures

# ------------------------------------------------------------------ LaTeX through pdflatex

def latex_compiles(lines, workdir):
	"""None when pdflatex is missing; otherwise (number of lines, error text or None)."""
	if not shutil.which("pdflatex"):
		return None
	doc = os.path.join(workdir, "sample.tex")
	with open(doc, "w") as out:
		out.write("\\documentclass{article}\n\\usepackage{amsmath}\n\\begin{document}\n")
		for line in lines:
			out.write("\\[ %s \\]\n" % line)
		out.write("\\end{document}\n")
	proc = subprocess.run(["pdflatex", "-interaction=nonstopmode", "-halt-on-error", "sample.tex"],
	                      cwd=workdir, capture_output=True, text=True, timeout=300)
	if proc.returncode == 0:
		return len(lines), None
	errors = [l for l in proc.stdout.splitlines() if l.startswith("!")]
	return len(lines), "\n".join(errors[:5]) or proc.stdout[-1500:]

# ------------------------------------------------------------------ generated models

def random_model(rng, index):
	"""Three states, drifts and diffusions with negated sums, some declared in
	Stratonovich form."""
	gen = Gen(rng)
	m = Model("model %d" % index)
	for st in STATES:
		x = S[st]
		other = S[rng.choice([s for s in STATES if s != st])]
		ps, pe = gen.psum()
		par = gen._param()
		kind = rng.randrange(4)
		if kind == 0:
			drift = ("-%s*%s" % (ps, st), -pe * x)
		elif kind == 1:
			drift = ("-%s*(%s - %s)" % (ps, st, par[0]), -pe * (x - par[1]))
		elif kind == 2:
			drift = ("%s - %s*%s" % (par[0], ps, st), par[1] - pe * x)
		else:
			drift = ("-%s*%s*%s" % (ps, st, str(other)), -pe * x * other)
		dif = {}
		for noise in rng.sample(NOISES, rng.choice([1, 2, 2, 3])):
			ps, pe = gen.psum()
			par = gen._param()
			kind = rng.randrange(5)
			if kind == 0:
				dif[noise] = ("-%s*%s" % (ps, st), -pe * x)
			elif kind == 1:
				dif[noise] = ("%s*sqrt(%s)" % (par[0], st), par[1] * sympy.sqrt(x))
			elif kind == 2:
				dif[noise] = ("-%s*sqrt(%s)*%s" % (ps, str(other), st), -pe * sympy.sqrt(other) * x)
			elif kind == 3:
				dif[noise] = ("%s*%s/(1 + %s)" % (par[0], st, str(other)), par[1] * x / (1 + other))
			else:
				dif[noise] = ("-%s*exp(-(r + h)*t)*%s" % (ps, st),
				              -pe * sympy.exp(-(S["r"] + S["h"]) * S["t"]) * x)
		m.sde(st, "stratonovich" if rng.random() < 0.35 else "ito", drift, dif)
	return m


def sde_items(model, with_q):
	items = []
	for st in STATES:
		for conv in ("ito", "stratonovich"):
			it = Item("sde", st, model, state=st, convention=conv)
			it.statement = sde_statement(st, conv, "P")
			items.append(it)
		if with_q:
			it = Item("sde", st, model, measure="Q", state=st, convention="ito")
			it.statement = sde_statement(st, "ito", "Q")
			items.append(it)
	return items


def save_load(model_script, items, workdir, tag):
	"""`save FILE` in one session, `load FILE` in a fresh one: the same sde results."""
	path = os.path.join(workdir, tag + "-saved.itox")
	queries = "".join(it.statement + "\n" for it in items)
	status1, first, err1, _ = run(model_script + queries + "save %s\n" % path, "json")
	if status1 != 0 or not os.path.exists(path):
		return False, "save failed (status %s): %s" % (status1, err1.strip()[:500])
	status2, second, err2, _ = run("load %s\n" % path + queries, "json")
	if status2 != 0:
		return False, "load failed (status %s): %s" % (status2, err2.strip()[:500])
	def results(text):
		"""The results without where their statements were (line, origin)."""
		out = []
		for l in text.splitlines():
			if l.strip():
				obj = json.loads(l)
				obj.pop("line", None)
				obj.pop("origin", None)
				out.append(json.dumps(obj, ensure_ascii=False))
		return out
	a, b = results(first), results(second)
	if a != b:
		for x, y in zip(a, b):
			if x != y:
				return False, "before save: %s\n          after load:  %s" % (x, y)
		return False, "%d results before save, %d after load" % (len(a), len(b))
	return True, None

# ------------------------------------------------------------------ main

def describe(item):
	if item is None:
		return "(whole run)"
	if isinstance(item, str):
		return item
	where_ = "line %s: " % item.line if item.line else ""
	return "%s%s [%s]" % (where_, item.statement, item.model.name)


def main():
	start = time.time()
	notes = []
	unit = bool(c_compiler())
	if not unit:
		notes.append("no C compiler: the C part is skipped")
	model = main_model()
	items = []
	for n, (text, e) in enumerate(expressions(N_EXPRESSIONS, SEED)):
		it = Item("d", text, model, expr=e)
		it.statement = "d " + text
		items.append(it)
	rng = random.Random(SEED + 1)
	for n in sorted(rng.sample(range(len(items)), N_UNDER_Q)):
		base = items[n]
		it = Item("d", base.text, model, measure="Q", expr=base.expr)
		it.statement = "d %s under Q" % base.text
		items.append(it)
	prelude = model.script() + MEASURE
	checkers = CHECKERS
	checkers.append((Checker(model, items, prelude, "main", unit), prelude))
	models = [model] + [random_model(random.Random(SEED * 7 + i), i + 1) for i in range(N_MODELS)]
	for i, mdl in enumerate(models):
		pre = mdl.script() + (MEASURE if i == 0 else "")
		checkers.append((Checker(mdl, sde_items(mdl, i == 0), pre, mdl.name + " sde", unit), pre))

	failures = []
	counts = {}
	stages = {}
	mark = [time.time()]

	def stage(name):
		now = time.time()
		stages[name] = stages.get(name, 0) + now - mark[0]
		mark[0] = now
	stage("generate")
	with ThreadPoolExecutor(max_workers=2) as pool:
		for ch, _ in checkers:
			ch.run_formats(pool)
	stage("itox")
	for ch, _ in checkers:
		failures.extend((None, "run", e, "") for e in ch.errors)

	workdir = tempfile.mkdtemp(prefix="roundtrip-")
	try:
		compiling = {}
		if unit:
			for n, (ch, _) in enumerate(checkers):
				compiling[n] = c_compile_start(ch, workdir, "s%d" % n)
		latex_lines = []
		for n, (ch, pre) in enumerate(checkers):
			passed, fails, samples = verify_parallel(n, SEED + n)
			for k, v in passed.items():
				counts[k] = counts.get(k, 0) + v
			failures.extend(fails)
			stage("text, json, latex")
			p, f = roundtrip(ch, pre)
			counts["round trip"] = counts.get("round trip", 0) + p
			failures.extend(f)
			stage("round trip")
			if unit:
				p, f = c_check(ch, samples, workdir, "s%d" % n, compiling[n])
				counts["c"] = counts.get("c", 0) + p
				failures.extend(f)
				stage("c")
			tex = ch.outputs.get("latex", [])
			if n == 0:
				step = max(1, len(tex) // LATEX_SAMPLE)
				latex_lines.extend(tex[::step][:LATEX_SAMPLE])
			else:
				latex_lines.extend(tex)
		for n, (ch, pre) in enumerate(checkers[1:]):
			ok, why = save_load(pre, ch.items, workdir, "m%d" % n)
			if ok:
				counts["save/load"] = counts.get("save/load", 0) + 1
			else:
				failures.append((None, "save/load", "%s: %s" % (ch.model.name, why), ""))
		stage("save/load")
		compiled = latex_compiles([l for l in latex_lines if l], workdir)
		stage("pdflatex")
		if compiled is None:
			notes.append("pdflatex not installed: the LaTeX compile step is skipped")
		elif compiled[1] is None:
			counts["pdflatex"] = 1
			notes.append("pdflatex compiled a sample of %d LaTeX lines" % compiled[0])
		else:
			failures.append((None, "latex", "pdflatex fails on the sample:\n%s" % compiled[1], ""))
	finally:
		shutil.rmtree(workdir, ignore_errors=True)

	for note in notes:
		print("note: " + note)
	if failures:
		print("%d failures; the first ones:" % len(failures))
		shown = {}
		for item, fmt_name, why, text in failures:
			if shown.get(fmt_name, 0) >= SHOW:
				continue
			shown[fmt_name] = shown.get(fmt_name, 0) + 1
			print("FAIL [%s] %s" % (fmt_name, describe(item)))
			print("     %s" % why)
			if text:
				print("     itox: %s" % (text if len(text) < 600 else text[:600] + " ..."))
		by_format = {}
		for _, fmt_name, _, _ in failures:
			by_format[fmt_name] = by_format.get(fmt_name, 0) + 1
		print("failures by check: " + ", ".join("%s %d" % kv for kv in sorted(by_format.items())))
	n_results = sum(len(ch.items) for ch, _ in checkers)
	total = sum(counts.values())
	print("checks passed: " + ", ".join("%s %d" % kv for kv in sorted(counts.items())))
	print("seconds: " + ", ".join("%s %.1f" % kv for kv in stages.items()))
	import resource
	cpu = sum(getattr(resource.getrusage(who), f) for who in (resource.RUSAGE_SELF,
	          resource.RUSAGE_CHILDREN) for f in ("ru_utime", "ru_stime"))
	print("print_roundtrip: %d expressions, %d results, %d format checks passed, %d failed "
	      "(%.0f s, %.0f s of CPU)" % (N_EXPRESSIONS, n_results, total, len(failures),
	                                  time.time() - start, cpu))
	sys.exit(1 if failures else 0)


if __name__ == "__main__":
	main()
