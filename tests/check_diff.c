/* check_diff.c - unit tests of partial derivatives: every built-in against the
 * textbook formula built with the constructors (and, independently, against
 * the formula evaluated with the C library), the power rule for rational and
 * symbolic exponents, the sum/product/chain rules, generic functions with
 * symbolic partials, and memoization. */

#include <check.h>
#include <math.h>
#include <signal.h>
#include <stdlib.h>
#include <string.h>

#include "check_suites.h"
#include "diff.h"
#include "eval.h"
#include "expr.h"
#include "print.h"

static expr_ctx *ctx;
static const expr *a, *t, *x, *y, *S;

static void setup(void)
{
	ctx = expr_ctx_new();
	a = expr_sym(ctx, "a");
	t = expr_sym(ctx, "t");
	x = expr_sym(ctx, "x");
	y = expr_sym(ctx, "y");
	S = expr_sym(ctx, "S");
}

static void teardown(void)
{
	expr_ctx_free(ctx);
	ctx = NULL;
}

#include "check_build.h"

#define D(e, v) diff(ctx, e, v)

/* The inner function of the chain-rule tests: u(x) = a x^2 + x, u' = 2 a x + 1. */
static const expr *inner(void)
{
	return ADD(MUL(a, POW(x, N(2))), x);
}

static const expr *inner_prime(void)
{
	return ADD(MUL(N(2), MUL(a, x)), N(1));
}

/* One built-in: its derivative at u (the textbook formula, with the
 * constructors) and the same formula in doubles. */
typedef struct builtin_rule {
	expr_builtin fn;
	const char *name;
	const expr *(*formula)(const expr *u);
	double (*value)(double u); /* f(u) */
	double (*slope)(double u); /* f'(u), from libm */
} builtin_rule;

/* exp' = exp; log' = 1/x; sin' = cos; cos' = -sin; tan' = 1 + tan^2 = sec^2;
 * sinh' = cosh; cosh' = sinh; tanh' = 1 - tanh^2 = sech^2 (any calculus text;
 * common practice, no source). */
static const expr *d_exp(const expr *u) { return FN(EXP, u); }
static const expr *d_log(const expr *u) { return POW(u, N(-1)); }
static const expr *d_sin(const expr *u) { return FN(COS, u); }
static const expr *d_cos(const expr *u) { return NEG(FN(SIN, u)); }
static const expr *d_tan(const expr *u) { return ADD(N(1), POW(FN(TAN, u), N(2))); }
static const expr *d_sinh(const expr *u) { return FN(COSH, u); }
static const expr *d_cosh(const expr *u) { return FN(SINH, u); }
static const expr *d_tanh(const expr *u) { return SUB(N(1), POW(FN(TANH, u), N(2))); }
/* erf'(x) = 2/sqrt(pi) exp(-x^2) (Abramowitz and Stegun 7.1.19, from memory).
 * With phi(z) = exp(-z^2/2)/sqrt(2 pi) (A&S 26.2.1, from memory),
 * phi(sqrt(2) x) = exp(-x^2)/sqrt(2 pi), so erf'(x) = 2 sqrt(2) phi(sqrt(2) x):
 * the form without pi that the constructors can build. */
static const expr *d_erf(const expr *u)
{
	return MUL(MUL(N(2), SQRT(N(2))), FN(NPDF, MUL(SQRT(N(2)), u)));
}
/* Phi' = phi (the density is the derivative of the distribution function);
 * phi'(x) = -x phi(x) (A&S 26.2.1 differentiated, from memory) */
static const expr *d_ncdf(const expr *u) { return FN(NPDF, u); }
static const expr *d_npdf(const expr *u) { return NEG(MUL(u, FN(NPDF, u))); }
/* |x|' = sign(x) = |x|/x for x != 0 (common practice, no source) */
static const expr *d_abs(const expr *u) { return DIV(FN(ABS, u), u); }

static double ncdf(double u) { return 0.5 * erfc(-u / sqrt(2.0)); }
static double npdf(double u) { return exp(-0.5 * u * u) / sqrt(2.0 * M_PI); }
static double s_exp(double u) { return exp(u); }
static double s_log(double u) { return 1.0 / u; }
static double s_sin(double u) { return cos(u); }
static double s_cos(double u) { return -sin(u); }
static double s_tan(double u) { return 1.0 / (cos(u) * cos(u)); }
static double s_sinh(double u) { return cosh(u); }
static double s_cosh(double u) { return sinh(u); }
static double s_tanh(double u) { return 1.0 / (cosh(u) * cosh(u)); }
static double s_erf(double u) { return 2.0 / sqrt(M_PI) * exp(-u * u); }
static double s_ncdf(double u) { return npdf(u); }
static double s_npdf(double u) { return -u * npdf(u); }
static double s_abs(double u) { return u > 0 ? 1.0 : -1.0; }

static const builtin_rule rules[] = {
	{EXPR_F_EXP, "exp", d_exp, exp, s_exp},
	{EXPR_F_LOG, "log", d_log, log, s_log},
	{EXPR_F_SIN, "sin", d_sin, sin, s_sin},
	{EXPR_F_COS, "cos", d_cos, cos, s_cos},
	{EXPR_F_TAN, "tan", d_tan, tan, s_tan},
	{EXPR_F_SINH, "sinh", d_sinh, sinh, s_sinh},
	{EXPR_F_COSH, "cosh", d_cosh, cosh, s_cosh},
	{EXPR_F_TANH, "tanh", d_tanh, tanh, s_tanh},
	{EXPR_F_ERF, "erf", d_erf, erf, s_erf},
	{EXPR_F_NCDF, "Phi", d_ncdf, ncdf, s_ncdf},
	{EXPR_F_NPDF, "phi", d_npdf, npdf, s_npdf},
	{EXPR_F_ABS, "abs", d_abs, fabs, s_abs},
};
#define NRULES (sizeof rules / sizeof *rules)

START_TEST(test_builtins_symbolic)
{
	ck_assert_uint_eq(NRULES, EXPR_F_COUNT); /* every built-in has a rule here */
	for (size_t i = 0; i < NRULES; i++) {
		/* at the symbol: d f(x)/dx = f'(x) */
		const expr *got = D(expr_fun(ctx, rules[i].fn, x), x);
		const expr *want = rules[i].formula(x);
		ck_assert_msg(got == want, "d %s(x)/dx wrong", rules[i].name);
		/* chain rule: d f(u(x))/dx = f'(u) u'(x) */
		const expr *u = inner();
		got = D(expr_fun(ctx, rules[i].fn, u), x);
		want = MUL(rules[i].formula(u), inner_prime());
		if (got != want) {
			char *g = prn_expr(ctx, got, PRN_TEXT), *w = prn_expr(ctx, want, PRN_TEXT);
			ck_assert_msg(0, "d %s(a*x^2 + x)/dx: got %s, expected %s", rules[i].name, g, w);
		}
		/* a symbol the argument does not contain: 0 */
		SAME(D(expr_fun(ctx, rules[i].fn, u), y), N(0));
	}
}
END_TEST

/* The engine's derivative evaluated against the textbook formula computed
 * with libm at several points (independent of the constructors). */
START_TEST(test_builtins_numeric)
{
	const expr *vars[] = {a, x};
	const double points[] = {0.3, 0.7, 1.1, 1.9};
	const double a_value = -0.4;
	for (size_t i = 0; i < NRULES; i++) {
		const expr *derivative = D(expr_fun(ctx, rules[i].fn, inner()), x);
		ck_assert_ptr_nonnull(derivative);
		for (size_t k = 0; k < sizeof points / sizeof *points; k++) {
			double xv = points[k], u = a_value * xv * xv + xv;
			double du = 2 * a_value * xv + 1;
			double want = rules[i].slope(u) * du;
			bool ok = false;
			double got = eval_at(ctx, derivative, 2, vars, (double[]){a_value, xv}, &ok);
			ck_assert(ok);
			ck_assert_msg(fabs(got - want) <= 1e-12 * fmax(1.0, fabs(want)),
				      "d %s(u)/dx at x=%g: %.17g, expected %.17g", rules[i].name, xv,
				      got, want);
			/* and the function itself evaluates to libm's value */
			double f = eval_at(ctx, expr_fun(ctx, rules[i].fn, inner()), 2, vars,
					   (double[]){a_value, xv}, &ok);
			ck_assert_msg(fabs(f - rules[i].value(u)) <= 1e-13 * fmax(1.0, fabs(f)),
				      "%s(u) at x=%g: %.17g", rules[i].name, xv, f);
		}
	}
}
END_TEST

START_TEST(test_powers)
{
	/* d x^n = n x^(n-1) for rational n (common practice, no source) */
	SAME(D(POW(x, N(3)), x), MUL(N(3), POW(x, N(2))));
	SAME(D(POW(x, N(-1)), x), NEG(POW(x, N(-2))));
	SAME(D(POW(x, N(-2)), x), MUL(N(-2), POW(x, N(-3))));
	SAME(D(POW(x, Q(3, 2)), x), MUL(Q(3, 2), SQRT(x)));
	/* d sqrt(x) = 1/(2 sqrt(x)) */
	SAME(D(SQRT(x), x), DIV(Q(1, 2), SQRT(x)));
	SAME(D(POW(x, Q(-1, 2)), x), MUL(Q(-1, 2), POW(x, Q(-3, 2))));
	/* sqrt of an inner function: d sqrt(u) = u'/(2 sqrt(u)) */
	SAME(D(SQRT(inner()), x), DIV(inner_prime(), MUL(N(2), SQRT(inner()))));
	/* symbolic exponent: d x^y/dx = y x^(y-1); d x^y/dy = x^y log(x) */
	SAME(D(POW(x, y), x), MUL(y, POW(x, SUB(y, N(1)))));
	SAME(D(POW(x, y), y), MUL(POW(x, y), FN(LOG, x)));
	/* d a^x/dx = a^x log(a) for a constant base */
	SAME(D(POW(a, x), x), MUL(POW(a, x), FN(LOG, a)));
	/* d x^x = x^x (log x + 1) */
	SAME(D(POW(x, x), x), MUL(POW(x, x), ADD(FN(LOG, x), N(1))));
	/* numbers and unrelated symbols: 0; the variable: 1 */
	SAME(D(N(7), x), N(0));
	SAME(D(y, x), N(0));
	SAME(D(x, x), N(1));
}
END_TEST

START_TEST(test_rules)
{
	/* linearity: d(3x^2 + a x) = 6x + a */
	SAME(D(ADD(MUL(N(3), POW(x, N(2))), MUL(a, x)), x), ADD(MUL(N(6), x), a));
	/* product rule: d(x sin x) = sin x + x cos x */
	SAME(D(MUL(x, FN(SIN, x)), x), ADD(FN(SIN, x), MUL(x, FN(COS, x))));
	/* quotient: d(sin x / x) = cos x / x - sin x / x^2 */
	SAME(D(DIV(FN(SIN, x), x), x), SUB(DIV(FN(COS, x), x), DIV(FN(SIN, x), POW(x, N(2)))));
	/* d log(S)/dS = 1/S and d^2 log(S)/dS^2 = -1/S^2 (the two terms of Ito's
	 * formula for log S; Shreve, Stochastic Calculus for Finance II, 4.4, from memory) */
	SAME(D(FN(LOG, S), S), POW(S, N(-1)));
	SAME(diff_n(ctx, FN(LOG, S), 2, (const expr *[]){S, S}), NEG(POW(S, N(-2))));
	/* d exp(-a t) S / dt = -a exp(-a t) S (the discount factor) */
	const expr *discounted = MUL(FN(EXP, NEG(MUL(a, t))), S);
	SAME(D(discounted, t), NEG(MUL(a, discounted)));
	/* mixed partials of an ordinary expression agree (Schwarz) */
	const expr *e = MUL(FN(SIN, MUL(x, y)), POW(x, N(3)));
	SAME(D(D(e, x), y), D(D(e, y), x));
}
END_TEST

START_TEST(test_generic_functions)
{
	const expr *f = expr_sym(ctx, "f");
	ck_assert(expr_func_declare(ctx, f, 2, (const char *[]){"t", "x"}));
	ck_assert_uint_eq(expr_func_arity(f), 2);
	ck_assert_str_eq(expr_func_arg_name(f, 1), "x");
	const expr *ftx = expr_fapp(ctx, f, NULL, (const expr *[]){t, x});
	/* the partials are new nodes f_t, f_x with the same arguments */
	const expr *ft = expr_fapp(ctx, f, (const unsigned char[]){1, 0}, (const expr *[]){t, x});
	const expr *fx = expr_fapp(ctx, f, (const unsigned char[]){0, 1}, (const expr *[]){t, x});
	SAME(D(ftx, t), ft);
	SAME(D(ftx, x), fx);
	/* mixed partials are equal whatever the order (Schwarz's theorem for a
	 * smooth f; common practice): f_tx = f_xt, and f_ttx in any order */
	SAME(D(D(ftx, t), x), D(D(ftx, x), t));
	const expr *ftx_mixed = expr_fapp(ctx, f, (const unsigned char[]){1, 1}, (const expr *[]){t, x});
	SAME(D(D(ftx, t), x), ftx_mixed);
	SAME(diff_n(ctx, ftx, 3, (const expr *[]){t, t, x}), diff_n(ctx, ftx, 3, (const expr *[]){x, t, t}));
	SAME(diff_n(ctx, ftx, 3, (const expr *[]){t, x, t}), diff_n(ctx, ftx, 3, (const expr *[]){x, t, t}));
	char *name = prn_fapp_name(D(D(ftx, x), t));
	ck_assert_str_eq(name, "f_tx");
	free(name);
	/* f does not depend on y */
	SAME(D(ftx, y), N(0));

	/* chain rule: d f(t, log S)/dS = f_x(t, log S) / S */
	const expr *args[] = {t, FN(LOG, S)};
	const expr *composed = expr_fapp(ctx, f, NULL, args);
	const expr *fx_at = expr_fapp(ctx, f, (const unsigned char[]){0, 1}, args);
	SAME(D(composed, S), DIV(fx_at, S));
	/* second derivative: (f_xx(t, log S) - f_x(t, log S)) / S^2, the term of
	 * Ito's formula for a function of log S */
	const expr *fxx_at = expr_fapp(ctx, f, (const unsigned char[]){0, 2}, args);
	SAME(D(D(composed, S), S), DIV(SUB(fxx_at, fx_at), POW(S, N(2))));
	/* two arguments depending on the variable: d f(x^2, x) = 2x f_t + f_x */
	const expr *both_args[] = {POW(x, N(2)), x};
	const expr *both = expr_fapp(ctx, f, NULL, both_args);
	SAME(D(both, x), ADD(MUL(MUL(N(2), x), expr_fapp(ctx, f, (const unsigned char[]){1, 0}, both_args)),
			    expr_fapp(ctx, f, (const unsigned char[]){0, 1}, both_args)));
	/* too many arguments are refused */
	const expr *g = expr_sym(ctx, "g");
	const char *names[EXPR_MAX_FUNC_ARGS + 1];
	for (size_t i = 0; i <= EXPR_MAX_FUNC_ARGS; i++)
		names[i] = "z";
	ck_assert(!expr_func_declare(ctx, g, EXPR_MAX_FUNC_ARGS + 1, names));
}
END_TEST

START_TEST(test_memoization)
{
	/* a derivative asked twice is the same node; the second time it comes
	 * from the memo: with the interrupt flag raised, diff() of a memoized
	 * node still answers, while a new derivative is interrupted */
	volatile sig_atomic_t flag = 0;
	expr_ctx_limits(ctx)->interrupt = &flag;
	const expr *e = FN(EXP, MUL(FN(SIN, MUL(a, x)), POW(ADD(x, y), N(-1))));
	const expr *first = D(e, x);
	ck_assert_ptr_nonnull(first);
	flag = 1;
	const expr *second = D(e, x);
	ck_assert_ptr_eq(first, second);
	ck_assert_int_eq(expr_error(ctx), EXPR_OK);
	ck_assert_ptr_null(D(e, y));
	ck_assert_int_eq(expr_error(ctx), EXPR_ERR_INTERRUPTED);
	flag = 0;
	expr_clear_error(ctx);
	ck_assert_ptr_nonnull(D(e, y));
	/* memoization is per variable: d/dx and d/dy differ */
	ck_assert_ptr_ne(D(e, x), D(e, y));
}
END_TEST

Suite *diff_suite(void)
{
	Suite *suite = suite_create("diff");
	TCase *tc = tcase_create("core");
	tcase_add_checked_fixture(tc, setup, teardown);
	tcase_set_timeout(tc, 20);
	tcase_add_test(tc, test_builtins_symbolic);
	tcase_add_test(tc, test_builtins_numeric);
	tcase_add_test(tc, test_powers);
	tcase_add_test(tc, test_rules);
	tcase_add_test(tc, test_generic_functions);
	tcase_add_test(tc, test_memoization);
	suite_add_tcase(suite, tc);
	return suite;
}
