/* check_ratform.c - unit tests of the rational normal form (src/ratform.c):
 * cancellation by the gcd, one denominator, fractional powers and their
 * relations, atoms inside functions, limits; and a property test on random
 * rational expressions (values at random points, idempotence, canonicity). */

#include <check.h>
#include <math.h>
#include <signal.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "check_suites.h"
#include "diff.h"
#include "eval.h"
#include "expr.h"
#include "print.h"
#include "ratform.h"

static expr_ctx *ctx;
static const expr *a, *b, *g, *t, *x;

static void setup(void)
{
	ctx = expr_ctx_new();
	a = expr_sym(ctx, "a");
	b = expr_sym(ctx, "b");
	g = expr_sym(ctx, "g");
	t = expr_sym(ctx, "t");
	x = expr_sym(ctx, "x");
}

static void teardown(void)
{
	expr_ctx_free(ctx);
	ctx = NULL;
}

#include "check_build.h"

#define NORMAL(e) ratform_normal(ctx, e)

/* The normal form of e is want, e is zero exactly when want is, and the
 * normal form is a fixed point. */
#define NORMALISES(e, want)                                                                                  \
	do {                                                                                                 \
		const expr *input_ = (e), *normal_ = (want);                                                 \
		SAME(NORMAL(input_), normal_);                                                               \
		SAME(NORMAL(NORMAL(input_)), normal_);                                                       \
		ck_assert_int_eq(ratform_is_zero(ctx, input_), expr_is_zero(normal_));                       \
	} while (0)

/* Cancellation and one denominator (Geddes, Czapor, Labahn, Algorithms for
 * Computer Algebra, 1992, ch. 2: the normal form of rational functions, from
 * memory; the identities themselves are common practice, no source). */
START_TEST(test_cancellation)
{
	const expr *x1 = ADD(x, N(1));
	/* 1/(x+1)^4 - (x+1)^(-4) = 0: the first is expanded, the second kept */
	NORMALISES(SUB(DIV(N(1), POW(x1, N(4))), POW(x1, N(-4))), N(0));
	/* a/(a+b) + b/(a+b) = 1 */
	NORMALISES(ADD(DIV(a, ADD(a, b)), DIV(b, ADD(a, b))), N(1));
	/* (a^2 - b^2)/(a - b) = a + b */
	NORMALISES(DIV(SUB(POW(a, N(2)), POW(b, N(2))), SUB(a, b)), ADD(a, b));
	/* beta/(beta - 1) - 1/(beta - 1) = 1 */
	const expr *beta = expr_sym(ctx, "beta");
	NORMALISES(SUB(DIV(beta, SUB(beta, N(1))), DIV(N(1), SUB(beta, N(1)))), N(1));
	/* (x + 10000)^3 - (x^3 + 30000 x^2 + 300000001 x + 10^12) = -x, not 0 */
	const expr *near = ADD(ADD(POW(x, N(3)), MUL(N(30000), POW(x, N(2)))),
	                       ADD(MUL(N(300000001), x), POW(N(10), N(12))));
	NORMALISES(SUB(POW(ADD(x, N(10000)), N(3)), near), NEG(x));
	/* 1 - (1 + 10^-10) = -10^-10, a nonzero number */
	const expr *tiny = POW(N(10), N(-10));
	NORMALISES(SUB(N(1), ADD(N(1), tiny)), NEG(tiny));
	/* 1/(x^2 + x) - 1/(x+1) = (1 - x) x^-1 (x+1)^-1: the denominator is factored */
	const expr *mixed = SUB(DIV(N(1), MUL(x, x1)), DIV(N(1), x1));
	NORMALISES(mixed, MUL(SUB(N(1), x), MUL(POW(x, N(-1)), POW(x1, N(-1)))));
	/* 2/(2a + 2b) = 1/(a + b); the denominator's content is taken out */
	NORMALISES(DIV(N(2), ADD(MUL(N(2), a), MUL(N(2), b))), DIV(N(1), ADD(a, b)));
	/* 1/(a b - a) + 1/a = b/(a b - a): lowest terms over the lcm of denominators */
	NORMALISES(ADD(DIV(N(1), SUB(MUL(a, b), a)), DIV(N(1), a)),
	           MUL(b, MUL(POW(a, N(-1)), POW(SUB(b, N(1)), N(-1)))));
}
END_TEST

/* Fractional powers become atoms with their relations (common practice, no
 * source: y = x^(1/q) with y^q = x). */
START_TEST(test_fractional_powers)
{
	/* sqrt(x)^2 - x = 0, and x^(3/2)/sqrt(x) = x */
	NORMALISES(SUB(POW(SQRT(x), N(2)), x), N(0));
	NORMALISES(DIV(POW(x, Q(3, 2)), SQRT(x)), x);
	/* (x - 1)/(sqrt(x) - 1) = sqrt(x) + 1: x is y^2 for the atom y = sqrt(x) */
	NORMALISES(DIV(SUB(x, N(1)), SUB(SQRT(x), N(1))), ADD(SQRT(x), N(1)));
	/* (x - 1)/(x^(1/3) - 1) = x^(2/3) + x^(1/3) + 1 */
	const expr *cube = POW(x, Q(1, 3));
	NORMALISES(DIV(SUB(x, N(1)), SUB(cube, N(1))), ADD(ADD(POW(x, Q(2, 3)), cube), N(1)));
	/* (x^(5/6) + x^(1/2))/(x^(1/3) + 1) = x^(1/2): the atom x^(1/6) is needed
	 * on the way only, and the result does not show it */
	NORMALISES(DIV(ADD(POW(x, Q(5, 6)), SQRT(x)), ADD(cube, N(1))), SQRT(x));
	/* a sum under the root: r = sqrt(a+b) with r^2 = a + b;
	 * (r^3 + r)/(a + b + 1) = r (a + b + 1)/(a + b + 1) = r */
	const expr *r = SQRT(ADD(a, b));
	NORMALISES(DIV(ADD(POW(r, N(3)), r), ADD(ADD(a, b), N(1))), r);
	/* (r + 1)(r - 1)/(a + b - 1) = 1, written so the product is not expanded first */
	const expr *prod = MUL(DIV(ADD(r, N(1)), ADD(ADD(a, b), N(-1))), SUB(r, N(1)));
	NORMALISES(prod, N(1));
	/* sqrt(2)^3 = 2 sqrt(2), and 1/sqrt(2) + sqrt(2)/2 = sqrt(2) */
	NORMALISES(ADD(DIV(N(1), SQRT(N(2))), DIV(SQRT(N(2)), N(2))), SQRT(N(2)));
	/* abs(u)^2 = u^2 for a polynomial u: (abs(a-b)^3 - abs(a-b) (a-b)^2) = 0 */
	const expr *u = SUB(a, b);
	const expr *au = FN(ABS, u);
	NORMALISES(DIV(SUB(POW(au, N(3)), MUL(au, POW(u, N(2)))), ADD(a, N(1))), N(0));
	/* symbolic exponents: x^(c+1) = x * x^c, so (x^(c+1) + x^c)/(x + 1) = x^c */
	const expr *c = expr_sym(ctx, "c");
	const expr *xc = POW(x, c);
	NORMALISES(DIV(ADD(POW(x, ADD(c, N(1))), xc), ADD(x, N(1))), xc);
	/* the exponent itself is normalised: x^(beta/(beta-1) - 1/(beta-1)) = x */
	const expr *beta = expr_sym(ctx, "beta");
	const expr *one = SUB(DIV(beta, SUB(beta, N(1))), DIV(N(1), SUB(beta, N(1))));
	NORMALISES(POW(x, one), x);
}
END_TEST

/* Function applications are atoms with normalised arguments (common
 * practice, no source). */
START_TEST(test_function_atoms)
{
	/* exp(a)/(exp(a) + 1) + 1/(exp(a) + 1) = 1 */
	const expr *ea = FN(EXP, a);
	NORMALISES(ADD(DIV(ea, ADD(ea, N(1))), DIV(N(1), ADD(ea, N(1)))), N(1));
	/* exp(a/(a+b) + b/(a+b)) = exp(1) */
	NORMALISES(FN(EXP, ADD(DIV(a, ADD(a, b)), DIV(b, ADD(a, b)))), FN(EXP, N(1)));
	/* exp(a + b) = exp(a) exp(b): (exp(a+b) + exp(a))/(exp(b) + 1) = exp(a) */
	NORMALISES(DIV(ADD(FN(EXP, ADD(a, b)), ea), ADD(FN(EXP, b), N(1))), ea);
	/* exp(2a) = exp(a)^2: (exp(2a) - 1)/(exp(a) - 1) = exp(a) + 1 */
	NORMALISES(DIV(SUB(FN(EXP, MUL(N(2), a)), N(1)), SUB(ea, N(1))), ADD(ea, N(1)));
	/* exp(a/2) = sqrt(exp(a)): (exp(a) - 1)/(exp(a/2) + 1) = exp(a/2) - 1 */
	const expr *half = FN(EXP, MUL(Q(1, 2), a));
	NORMALISES(DIV(SUB(ea, N(1)), ADD(half, N(1))), SUB(half, N(1)));
	/* log(x)^2/log(x) = log(x); sin(x) stays an atom: (sin^2 - 1)/(sin - 1) = sin + 1 */
	const expr *sx = FN(SIN, x);
	NORMALISES(DIV(SUB(POW(sx, N(2)), N(1)), SUB(sx, N(1))), ADD(sx, N(1)));
	/* (f_x(t,x) g + f_x(t,x))/(g + 1) = f_x(t,x) for a generic f */
	const expr *f = expr_sym(ctx, "f");
	const char *names[] = {"t", "x"};
	ck_assert(expr_func_declare(ctx, f, 2, names));
	const unsigned char dx[] = {0, 1};
	const expr *args[] = {t, x};
	const expr *fx = expr_fapp(ctx, f, dx, args);
	NORMALISES(DIV(ADD(MUL(fx, g), fx), ADD(g, N(1))), fx);
	/* arguments of generic functions are normalised too */
	const expr *args2[] = {t, DIV(SUB(POW(x, N(2)), N(1)), ADD(x, N(1)))};
	const expr *args3[] = {t, SUB(x, N(1))};
	NORMALISES(expr_fapp(ctx, f, NULL, args2), expr_fapp(ctx, f, NULL, args3));
}
END_TEST

/* Exponents that are fractions are split as polynomial + remainder, so
 * exp(u + a) = exp(u) exp(a) and x^(u + 1) = x^u x (common practice, no
 * source: exp and powers turn sums into products). */
START_TEST(test_exponent_split)
{
	/* (exp(u + a) + exp(u))/(exp(a) + 1) = exp(u) for u = b/(1 + a) */
	const expr *u = DIV(b, ADD(a, N(1)));
	NORMALISES(DIV(ADD(FN(EXP, ADD(u, a)), FN(EXP, u)), ADD(FN(EXP, a), N(1))), FN(EXP, u));
	/* the same with a square root in u's denominator: u = b/(1 + sqrt(a + b)) */
	const expr *v = DIV(b, ADD(SQRT(ADD(a, b)), N(1)));
	const expr *ev = FN(EXP, v);
	ck_assert(ratform_is_zero(ctx, SUB(DIV(ADD(FN(EXP, ADD(v, a)), ev), ADD(FN(EXP, a), N(1))), ev)));
	/* x^(u + 1) = x x^u: (x^(u+1) - x^u)/(x - 1) = x^u */
	const expr *xu = POW(x, u);
	NORMALISES(DIV(SUB(POW(x, ADD(u, N(1))), xu), SUB(x, N(1))), xu);
}
END_TEST

/* The zero-coupon bond price of the square-root short rate
 * dr = kappa (theta - r) dt + sigma sqrt(r) dW,
 *   P = A exp(-B r), B = 2 (e^(g tau) - 1)/D, D = (g + kappa)(e^(g tau) - 1) + 2 g,
 *   A = (2 g e^((kappa + g) tau/2)/D)^(2 kappa theta/sigma^2), g = sqrt(kappa^2 + 2 sigma^2),
 * solves P_t + kappa (theta - r) P_r + 1/2 sigma^2 r P_rr - r P = 0 (Cox, Ingersoll,
 * Ross, Econometrica 1985; D. Brigo, F. Mercurio, Interest Rate Models, 2nd ed.,
 * sec. 3.2.3, from memory).  The residual, built with the diff module, is 0. */
START_TEST(test_square_root_bond)
{
	const expr *kappa = expr_sym(ctx, "kappa"), *theta = expr_sym(ctx, "theta");
	const expr *sigma = expr_sym(ctx, "sigma"), *T = expr_sym(ctx, "T"), *r = expr_sym(ctx, "r");
	for (int assumed = 0; assumed < 2; assumed++) {
		if (assumed) {
			const expr *positive[] = {kappa, theta, sigma, T, r};
			for (int i = 0; i < 5; i++)
				expr_sym_set_sign(ctx, positive[i], EXPR_SIGN_POS);
		}
		const expr *gamma = SQRT(ADD(POW(kappa, N(2)), MUL(N(2), POW(sigma, N(2)))));
		const expr *tau = SUB(T, t);
		const expr *E1 = SUB(FN(EXP, MUL(gamma, tau)), N(1));
		const expr *D = ADD(MUL(ADD(gamma, kappa), E1), MUL(N(2), gamma));
		const expr *B = DIV(MUL(N(2), E1), D);
		const expr *inside =
		        DIV(MUL(MUL(N(2), gamma), FN(EXP, DIV(MUL(ADD(kappa, gamma), tau), N(2)))), D);
		const expr *A = MUL(DIV(MUL(MUL(N(2), kappa), theta), POW(sigma, N(2))), FN(LOG, inside));
		const expr *P = FN(EXP, SUB(A, MUL(B, r)));
		const expr *Pr = diff(ctx, P, r);
		const expr *L = ADD(diff(ctx, P, t), MUL(MUL(kappa, SUB(theta, r)), Pr));
		L = ADD(L, MUL(MUL(Q(1, 2), MUL(POW(sigma, N(2)), r)), diff(ctx, Pr, r)));
		L = SUB(L, MUL(r, P));
		ck_assert_ptr_nonnull(L);
		ck_assert(!expr_is_zero(L));
		NORMALISES(L, N(0));
	}
}
END_TEST

/* d/dt 8/(3t/2 + 1)^3 = -36/(3t/2 + 1)^4 (the power rule and the chain rule,
 * common practice, no source), compared after the normal form. */
START_TEST(test_derivative)
{
	const expr *inner = ADD(MUL(Q(3, 2), t), N(1));
	const expr *derivative = diff(ctx, DIV(N(8), POW(inner, N(3))), t);
	const expr *claimed = DIV(N(-36), POW(inner, N(4)));
	ck_assert_ptr_nonnull(derivative);
	NORMALISES(SUB(derivative, claimed), N(0));
	SAME(NORMAL(derivative), NORMAL(claimed));
}
END_TEST

/* Limits are errors, never aborts (DESIGN.md, "Canonical form"). */
START_TEST(test_limits)
{
	/* sum of 1/(x + k), k = 1..40: a common denominator of degree 40 over
	 * a 30-term limit is refused */
	expr_ctx_limits(ctx)->max_terms = 30;
	const expr *sum = N(0);
	for (int k = 1; k <= 40; k++)
		sum = ADD(sum, DIV(N(1), ADD(x, N(k))));
	ck_assert_ptr_nonnull(sum);
	ck_assert_ptr_null(NORMAL(sum));
	ck_assert_int_eq(expr_error(ctx), EXPR_ERR_TOO_LARGE);
	ck_assert(!ratform_is_zero(ctx, sum));
	expr_clear_error(ctx);
	expr_ctx_limits(ctx)->max_terms = 200000;
	/* a raised interrupt flag stops the computation */
	const expr *quotient = DIV(N(1), ADD(a, b));
	volatile sig_atomic_t flag = 1;
	expr_ctx_limits(ctx)->interrupt = &flag;
	ck_assert_ptr_null(NORMAL(quotient));
	ck_assert_int_eq(expr_error(ctx), EXPR_ERR_INTERRUPTED);
	expr_ctx_limits(ctx)->interrupt = NULL;
	expr_clear_error(ctx);
	/* and the context works again afterwards */
	NORMALISES(ADD(DIV(a, ADD(a, b)), DIV(b, ADD(a, b))), N(1));
}
END_TEST

/* ------------------------------------------------------------------ random expressions */

/* splitmix64 (Steele, Lea, Flood, OOPSLA 2014, from memory): test-case generation only. */
static uint64_t rng_state;

static uint64_t rng_next(void)
{
	uint64_t z = (rng_state += 0x9e3779b97f4a7c15ULL);
	z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
	z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
	return z ^ (z >> 31);
}

static int rng_below(int n)
{
	return (int)(rng_next() % (uint64_t)n);
}

enum { R_SYM, R_NUM, R_ADD, R_SUB, R_MUL, R_DIV, R_POW };
#define NSYM 4
static const char *rsym_names[NSYM] = {"p", "q", "r", "s"};

typedef struct rnode {
	int kind;
	int sym;       /* R_SYM */
	long num, den; /* R_NUM value, R_POW exponent */
	struct rnode *kid[2];
} rnode;

static rnode rpool[512];
static int rpool_used;

static rnode *rnew(int kind)
{
	rnode *n = &rpool[rpool_used++];
	memset(n, 0, sizeof *n);
	n->kind = kind;
	return n;
}

/* Set by rgen when a half-integer power of a sum was made. */
static bool rroot_of_sum;

/* A random rational expression: + - * /, integer powers -3..3 and
 * half-integer powers +-1/2, +-3/2 of a symbol or of a sum that is
 * positive at positive points (s + u^2). */
static rnode *rgen(int depth)
{
	if (depth == 0 || rng_below(6) == 0) {
		if (rng_below(4) == 0) {
			rnode *n = rnew(R_NUM);
			n->num = rng_below(7) - 3;
			n->den = rng_below(3) + 1;
			return n;
		}
		rnode *n = rnew(R_SYM);
		n->sym = rng_below(NSYM);
		return n;
	}
	static const int kinds[] = {R_ADD, R_SUB, R_MUL, R_DIV, R_DIV, R_POW};
	int kind = kinds[rng_below(6)];
	rnode *n = rnew(kind);
	if (kind != R_POW) {
		n->kid[0] = rgen(depth - 1);
		n->kid[1] = rgen(depth - 1);
		return n;
	}
	static const long half[] = {1, -1, 3, -3};
	int choice = rng_below(6);
	if (choice >= 2) {
		n->kid[0] = rgen(depth - 1);
		n->num = rng_below(7) - 3;
		n->den = 1;
		return n;
	}
	n->num = half[rng_below(4)];
	n->den = 2;
	rnode *base = rnew(R_SYM);
	base->sym = rng_below(NSYM);
	if (choice == 1) {
		rnode *square = rnew(R_POW);
		square->kid[0] = rgen(depth - 1);
		square->num = 2;
		square->den = 1;
		rnode *sum = rnew(R_ADD);
		sum->kid[0] = base;
		sum->kid[1] = square;
		base = sum;
		rroot_of_sum = true;
	}
	n->kid[0] = base;
	return n;
}

static const expr *rsym(int i)
{
	return expr_sym(ctx, rsym_names[i]);
}

/* mode 0: the tree as written; mode 2: every quotient u/v written as
 * (u c)/(v c) with c = (symbol + k), k >= 1. */
static const expr *rbuild(const rnode *n, int mode)
{
	switch (n->kind) {
	case R_SYM:
		return rsym(n->sym);
	case R_NUM:
		return Q(n->num, n->den);
	case R_ADD:
		return ADD(rbuild(n->kid[0], mode), rbuild(n->kid[1], mode));
	case R_SUB:
		return SUB(rbuild(n->kid[0], mode), rbuild(n->kid[1], mode));
	case R_MUL:
		return MUL(rbuild(n->kid[0], mode), rbuild(n->kid[1], mode));
	case R_DIV: {
		const expr *u = rbuild(n->kid[0], mode), *v = rbuild(n->kid[1], mode);
		if (mode == 2) {
			const expr *c = ADD(rsym(rng_below(NSYM)), N(1 + rng_below(3)));
			u = MUL(u, c);
			v = MUL(v, c);
		}
		return DIV(u, v);
	}
	default:
		return POW(rbuild(n->kid[0], mode), Q(n->num, n->den));
	}
}

/* The tree as one fraction top/bottom, built without any cancellation:
 * u/v + w/z = (u z + w v)/(v z), (u/v)(w/z) = (u w)/(v z), (u/v)/(w/z) =
 * (u z)/(v w), (u/v)^k = u^k/v^k; a half-integer power is left whole. */
static void rfrac(const rnode *n, const expr **top, const expr **bottom)
{
	const expr *u, *v, *w, *z;
	switch (n->kind) {
	case R_ADD:
	case R_SUB:
	case R_MUL:
	case R_DIV:
		rfrac(n->kid[0], &u, &v);
		rfrac(n->kid[1], &w, &z);
		if (n->kind == R_MUL) {
			*top = MUL(u, w);
			*bottom = MUL(v, z);
		} else if (n->kind == R_DIV) {
			*top = MUL(u, z);
			*bottom = MUL(v, w);
		} else {
			const expr *right = MUL(w, v);
			*top = n->kind == R_ADD ? ADD(MUL(u, z), right) : SUB(MUL(u, z), right);
			*bottom = MUL(v, z);
		}
		return;
	case R_POW:
		if (n->den == 1) {
			rfrac(n->kid[0], &u, &v);
			long k = labs(n->num);
			*top = POW(n->num < 0 ? v : u, N(k));
			*bottom = POW(n->num < 0 ? u : v, N(k));
			return;
		}
		break;
	default:
		break;
	}
	*top = rbuild(n, 0);
	*bottom = N(1);
}

/* The tree's value in doubles (the C library, not the engine). */
static double reval(const rnode *n, const double *at)
{
	switch (n->kind) {
	case R_SYM:
		return at[n->sym];
	case R_NUM:
		return (double)n->num / (double)n->den;
	case R_ADD:
		return reval(n->kid[0], at) + reval(n->kid[1], at);
	case R_SUB:
		return reval(n->kid[0], at) - reval(n->kid[1], at);
	case R_MUL:
		return reval(n->kid[0], at) * reval(n->kid[1], at);
	case R_DIV:
		return reval(n->kid[0], at) / reval(n->kid[1], at);
	default:
		return pow(reval(n->kid[0], at), (double)n->num / (double)n->den);
	}
}

/* The size of the tree's terms at the point (|.| through + and -), the scale
 * of rounding errors for the comparison. */
static double rmag(const rnode *n, const double *at)
{
	switch (n->kind) {
	case R_ADD:
	case R_SUB:
		return rmag(n->kid[0], at) + rmag(n->kid[1], at);
	case R_MUL:
		return rmag(n->kid[0], at) * rmag(n->kid[1], at);
	case R_DIV:
		return rmag(n->kid[0], at) / fabs(reval(n->kid[1], at));
	case R_POW:
		if (n->num < 0)
			return fabs(reval(n, at));
		return pow(rmag(n->kid[0], at), (double)n->num / (double)n->den);
	default:
		return fabs(reval(n, at));
	}
}

/* For a few hundred random expressions e in p, q, r, s: normal(e) has e's
 * value at random positive points (the tree evaluated by the C library,
 * normal(e) by eval_at) and is a fixed point of the normal form; two other
 * ways of writing the same rational function (one fraction with no
 * cancellation; each quotient multiplied through by a random factor) differ
 * from e by an exact zero; and, when the only roots are of symbols (free
 * atoms), they have the same normal form as e.  (With a root of a sum in a
 * denominator, which is not rationalised, the fraction may differ: 1/(1 + w)
 * and (1 - w)/(1 - w^2).)  Field identities: common practice, no source. */
START_TEST(test_random_expressions)
{
	rng_state = 20240613;
	const expr *vars[NSYM];
	for (int i = 0; i < NSYM; i++)
		vars[i] = rsym(i);
	int tested = 0, canonical = 0, points = 0;
	for (int round = 0; round < 3000 && tested < 400; round++) {
		rpool_used = 0;
		rroot_of_sum = false;
		rnode *tree = rgen(5);
		expr_clear_error(ctx);
		const expr *e = rbuild(tree, 0);
		if (!e) /* a division by an expression that is zero */
			continue;
		const expr *top, *bottom;
		rfrac(tree, &top, &bottom);
		const expr *one_fraction = top && bottom ? DIV(top, bottom) : NULL;
		const expr *scaled = rbuild(tree, 2);
		if (!one_fraction || !scaled)
			continue;
		tested++;
		const expr *n = NORMAL(e);
		ck_assert_msg(n, "no normal form: %s", expr_error_message(ctx));
		SAME(NORMAL(n), n);
		ck_assert_int_eq(ratform_is_zero(ctx, e), expr_is_zero(n));
		ck_assert(ratform_is_zero(ctx, SUB(one_fraction, e)));
		ck_assert(ratform_is_zero(ctx, SUB(scaled, e)));
		if (!rroot_of_sum) {
			SAME(NORMAL(one_fraction), n);
			SAME(NORMAL(scaled), n);
			canonical++;
		}
		for (int k = 0; k < 4; k++) {
			double at[NSYM];
			for (int i = 0; i < NSYM; i++)
				at[i] = (double)(1 + rng_below(1000)) / (double)(1 + rng_below(100));
			double want = reval(tree, at), scale = rmag(tree, at);
			if (!isfinite(want) || !isfinite(scale) || scale > 1e12)
				continue;
			bool ok = false;
			double got = eval_at(ctx, n, NSYM, vars, at, &ok);
			ck_assert(ok);
			ck_assert_msg(fabs(got - want) <= 1e-9 * (1 + scale), "point %d: %.17g, want %.17g",
			              k, got, want);
			points++;
		}
	}
	ck_assert_int_ge(tested, 400);
	ck_assert_int_ge(canonical, 250);
	ck_assert_int_ge(points, 1000);
}
END_TEST

Suite *ratform_suite(void)
{
	Suite *suite = suite_create("ratform");
	TCase *tc = tcase_create("core");
	tcase_add_checked_fixture(tc, setup, teardown);
	tcase_set_timeout(tc, 60);
	tcase_add_test(tc, test_cancellation);
	tcase_add_test(tc, test_fractional_powers);
	tcase_add_test(tc, test_function_atoms);
	tcase_add_test(tc, test_exponent_split);
	tcase_add_test(tc, test_square_root_bond);
	tcase_add_test(tc, test_derivative);
	tcase_add_test(tc, test_limits);
	tcase_add_test(tc, test_random_expressions);
	suite_add_tcase(suite, tc);
	return suite;
}
