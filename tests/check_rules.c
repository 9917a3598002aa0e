/* check_rules.c - every rewrite rule of the canonical constructors, checked in
 * ball arithmetic on its stated domain (issue 13, item 6).
 *
 * Each row of the table below is one rule: the identity lhs = rhs, the
 * assumption it needs, the source of the identity, and both sides written in
 * a small postfix notation.  For each row the test
 *   1. declares the assumption on fresh symbols, builds both sides through the
 *      engine's constructors and requires the same node: the rule fired and
 *      produced the stated right side;
 *   2. at 200 random points of the stated domain (dyadic numbers whose
 *      magnitudes spread from 2^-64 to 2^24), evaluates the unrewritten left
 *      side and the right side directly with Arb calls written here (not the
 *      engine's evaluator of src/ball.c), and the engine's result with
 *      ball_eval(); the balls of lhs - rhs and of lhs - engine must contain 0
 *      and be small (radius below 2^-100 * max(1, |lhs|) at 256 bits);
 *   3. as a negative control, where the rule needs an assumption: without it
 *      the engine must not produce the right side, at points outside the
 *      domain the two sides must really differ (one defined and not the other,
 *      or two values whose difference excludes 0: firing there would be
 *      wrong), and whatever the engine made instead must still equal the left
 *      side wherever that is defined.
 *
 * Real powers follow the convention of src/expr.h: x^(p/q) with q odd is the
 * real root for x < 0, with q even undefined there; x^s with a symbolic s is
 * defined for x > 0 only.  The direct evaluator below applies it by itself.
 *
 * Postfix notation: names x, y, z, s are symbols; 3, -2, 2/3 are rationals;
 * + - * / ^ are binary, neg is unary minus; exp log abs sin cos tan sinh cosh
 * tanh erf Phi phi apply built-in functions.
 */

#include <arb.h>
#include <arb_hypgeom.h>
#include <check.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "ball.h"
#include "check_suites.h"
#include "expr.h"
#include "print.h"

enum { POINTS = 200, PREC = 256, MAX_STACK = 16 };

typedef struct rule {
	const char *identity, *assumption, *source;
	const char *vars;       /* the symbols, in order: letters of "xyzs" */
	const char *lhs, *rhs;  /* postfix */
	const char *signs;      /* declared per symbol: ? any, + > 0, - < 0, 0 >= 0, N <= 0 */
	const char *sample;     /* drawn per symbol: ? either sign, + > 0, - < 0, Z exactly 0 */
	const char *out_signs;  /* the assumption absent (NULL: the rule needs none) */
	const char *out_sample; /* points outside the domain */
} rule;

/* clang-format off: the table reads as one rule a row */
#define NONE       "none: valid wherever the left side is defined"
#define PRACTICE   "common practice, no source"
#define CONVENTION "the convention for real powers of src/expr.h"

static const rule rules[] = {
	/* ---- exp and log (src/expr-fun.c) ---- */
	{"exp(log x) = x", "x > 0", PRACTICE, "x", "x log exp", "x", "+", "+", "?", "-"},
	{"exp(s*log(x) + y) = x^s*exp(y)", "x > 0", "DLMF 4.2.26 (a^z = exp(z ln a)), from memory", "xys",
	 "s x log * y + exp", "x s ^ y exp *", "+??", "+??", "???", NULL},
	{"exp(0) = 1", NONE, "DLMF 4.2, from memory", "", "0 exp", "1", "", "", NULL, NULL},
	{"log(exp u) = u", NONE, "DLMF 4.2, real u, from memory", "xy", "x y * exp log", "x y *", "??", "??",
	 NULL, NULL},
	{"log 1 = 0", NONE, PRACTICE, "", "1 log", "0", "", "", NULL, NULL},
	{"log(3*x*y) = log 3 + log x + log y", "x > 0 and y > 0", "DLMF 4.8.2 (real case), from memory", "xy",
	 "3 x * y * log", "3 log x log + y log +", "++", "++", "??", "--"},
	{"log(x^2) = 2*log(abs(x))", NONE " (x != 0)", PRACTICE, "x", "x 2 ^ log", "x abs log 2 *", "?", "?",
	 NULL, NULL},
	{"log(x^3*y) = 3*log(x) + log(y)", "y > 0 (then x^3*y > 0 forces x > 0)", PRACTICE, "xy",
	 "x 3 ^ y * log", "x log 3 * y log +", "?+", "++", "??", "--"},
	{"log(x^(2/3)) = 2/3*log(abs(x))", NONE " (x != 0; " CONVENTION ")", PRACTICE, "x", "x 2/3 ^ log",
	 "x abs log 2/3 *", "?", "?", NULL, NULL},
	{"log(x^(1/3)*y^(1/3)) = 1/3*log(x) + 1/3*log(y)", "y > 0 (" CONVENTION ": x^(1/3) < 0 for x < 0)",
	 PRACTICE, "xy", "x 1/3 ^ y 1/3 ^ * log", "x log 1/3 * y log 1/3 * +", "?+", "++", "??", "--"},
	{"log(x^(1/2)) = 1/2*log(x)", NONE " (x > 0)", PRACTICE, "x", "x 1/2 ^ log", "x log 1/2 *", "?", "+",
	 NULL, NULL},
	{"log(x^s) = s*log(x)", NONE " (x > 0: x^s with a symbolic s)", PRACTICE, "xs", "x s ^ log",
	 "x log s *", "??", "+?", NULL, NULL},

	/* ---- abs and parity (src/expr-fun.c) ---- */
	{"abs(x) = x", "x >= 0", PRACTICE, "x", "x abs", "x", "0", "+", "?", "-"},
	{"abs(x) = -x", "x <= 0", PRACTICE, "x", "x abs", "x neg", "N", "-", "?", "+"},
	{"abs(-x) = abs(x)", NONE, PRACTICE, "x", "x neg abs", "x abs", "?", "?", NULL, NULL},
	{"sin(-x) = -sin(x)", NONE, "DLMF 4.21.2, from memory", "x", "x neg sin", "x sin neg", "?", "?", NULL,
	 NULL},
	{"tan(-x) = -tan(x)", NONE, "DLMF 4.21.4, from memory", "x", "x neg tan", "x tan neg", "?", "?", NULL,
	 NULL},
	{"sinh(-x) = -sinh(x)", NONE, "DLMF 4.35.5, from memory", "x", "x neg sinh", "x sinh neg", "?", "?",
	 NULL, NULL},
	{"tanh(-x) = -tanh(x)", NONE, "DLMF 4.35.7, from memory", "x", "x neg tanh", "x tanh neg", "?", "?",
	 NULL, NULL},
	{"erf(-x) = -erf(x)", NONE, "Abramowitz and Stegun 7.1.9, from memory", "x", "x neg erf", "x erf neg",
	 "?", "?", NULL, NULL},
	{"cos(-x) = cos(x)", NONE, "DLMF 4.21.3, from memory", "x", "x neg cos", "x cos", "?", "?", NULL,
	 NULL},
	{"cosh(-x) = cosh(x)", NONE, "DLMF 4.35.6, from memory", "x", "x neg cosh", "x cosh", "?", "?", NULL,
	 NULL},
	{"phi(-x) = phi(x)", NONE, "Abramowitz and Stegun 26.2.1 (phi is even), from memory", "x",
	 "x neg phi", "x phi", "?", "?", NULL, NULL},
	{"Phi(-x) = 1 - Phi(x)", NONE, "Abramowitz and Stegun 26.2.5, from memory", "x", "x neg Phi",
	 "1 x Phi -", "?", "?", NULL, NULL},
	{"sin 0 = 0, tan 0 = 0, sinh 0 = 0, tanh 0 = 0, erf 0 = 0", NONE, PRACTICE, "",
	 "0 sin 0 tan + 0 sinh + 0 tanh + 0 erf +", "0", "", "", NULL, NULL},
	{"cos 0 = 1, cosh 0 = 1, Phi(0) = 1/2", NONE, PRACTICE, "", "0 cos 0 cosh + 0 Phi +", "5/2", "", "",
	 NULL, NULL},

	/* ---- powers with a numeric exponent (src/expr-power.c) ---- */
	{"(x*y)^(1/2) = x^(1/2)*y^(1/2)", "y > 0 (then x >= 0 where the left side is defined)", PRACTICE,
	 "xy", "x y * 1/2 ^", "x 1/2 ^ y 1/2 ^ *", "?+", "++", "??", "--"},
	{"(x^2*y)^(1/2) = abs(x)*y^(1/2)",
	 "y > 0 (with y of unknown sign, x = 0 and y < 0 is a point of the left side only)", PRACTICE, "xy",
	 "x 2 ^ y * 1/2 ^", "x abs y 1/2 ^ *", "?+", "?+", "??", "Z-"},
	{"(x^3)^(1/3) = x", NONE " (" CONVENTION ")", CONVENTION, "x", "x 3 ^ 1/3 ^", "x", "?", "?", NULL,
	 NULL},
	{"(x^(2/3))^(3/2) = abs(x)", NONE " (" CONVENTION ")", CONVENTION, "x", "x 2/3 ^ 3/2 ^", "x abs", "?",
	 "?", NULL, NULL},
	{"(x^3)^(1/2) = x^(3/2)", NONE " (x >= 0)", PRACTICE, "x", "x 3 ^ 1/2 ^", "x 3/2 ^", "?", "+", NULL,
	 NULL},
	{"(x^(1/3))^(2/5) = x^(2/15)", NONE " (" CONVENTION ")", CONVENTION, "x", "x 1/3 ^ 2/5 ^", "x 2/15 ^",
	 "?", "?", NULL, NULL},
	{"sqrt(x^(2*s)) = abs(x)^s", NONE " (x > 0: x^(2*s) with a symbolic s)", PRACTICE, "xs",
	 "x 2 s * ^ 1/2 ^", "x abs s ^", "??", "+?", NULL, NULL},
	{"sqrt(x^(2*s)) = x^s", "x > 0", PRACTICE, "xs", "x 2 s * ^ 1/2 ^", "x s ^", "+?", "+?", "??", NULL},
	{"(2*x^(1/2))^2 = 4*x", NONE " (x >= 0)", PRACTICE, "x", "2 x 1/2 ^ * 2 ^", "4 x *", "?", "+", NULL,
	 NULL},
	{"(3*x^s)^(-2) = 1/9*x^(-2*s)", NONE " (x > 0)", PRACTICE, "xs", "3 x s ^ * -2 ^", "x -2 s * ^ 1/9 *",
	 "??", "+?", NULL, NULL},
	{"(x + y)^3 = x^3 + 3*x^2*y + 3*x*y^2 + y^3", NONE, "binomial theorem, DLMF 1.2.2, from memory", "xy",
	 "x y + 3 ^", "x 3 ^ 3 x 2 ^ y * * + 3 x y 2 ^ * * + y 3 ^ +", "??", "??", NULL, NULL},
	{"(2*x + 2*y)^(1/2) = 2^(1/2)*(x + y)^(1/2)", NONE " (x + y >= 0)", PRACTICE, "xy",
	 "2 x * 2 y * + 1/2 ^", "2 1/2 ^ x y + 1/2 ^ *", "??", "++", NULL, NULL},
	{"(-2*x - 2*y)^(-1) = -1/2*(x + y)^(-1)", NONE " (x + y != 0)", PRACTICE, "xy", "-2 x * 2 y * - -1 ^",
	 "-1/2 x y + -1 ^ *", "??", "??", NULL, NULL},
	{"12^(3/2) = 24*3^(1/2); (4/9)^(1/2) = 2/3; (2/3)^(1/2) = 2^(1/2)*3^(-1/2)", NONE, PRACTICE, "",
	 "12 3/2 ^ 4/9 1/2 ^ + 2/3 1/2 ^ +", "24 3 1/2 ^ * 2/3 + 2 1/2 ^ 3 -1/2 ^ * +", "", "", NULL, NULL},
	{"exp(x)^s = exp(s*x)", NONE, "DLMF 4.2.26, from memory", "xs", "x exp s ^", "s x * exp", "??", "??",
	 NULL, NULL},
	{"exp(x)^(1/2) = exp(x/2)", NONE, PRACTICE, "x", "x exp 1/2 ^", "x 1/2 * exp", "?", "?", NULL, NULL},
	{"abs(x)^2 = x^2; abs(x)^(-4) = x^(-4)", NONE, PRACTICE, "x", "x abs 2 ^ x abs -4 ^ +",
	 "x 2 ^ x -4 ^ +", "?", "?", NULL, NULL},

	/* ---- powers with a symbolic exponent (src/expr-power.c) ---- */
	{"(x^(2/3))^s = abs(x)^(2/3*s)", NONE " (x != 0; " CONVENTION ")", PRACTICE, "xs", "x 2/3 ^ s ^",
	 "x abs 2/3 s * ^", "??", "??", NULL, NULL},
	{"(x^3)^s = x^(3*s)", NONE " (x > 0: x^3 > 0 there)", PRACTICE, "xs", "x 3 ^ s ^", "x 3 s * ^", "??",
	 "+?", NULL, NULL},
	{"(x*y)^s = x^s*y^s", "y > 0 (then x*y > 0 forces x > 0)", "DLMF 4.2.29 (real case), from memory",
	 "xys", "x y * s ^", "x s ^ y s ^ *", "?+?", "++?", "???", "--?"},
	{"(2*x)^s = 2^s*x^s", NONE " (2*x > 0 forces x > 0)", PRACTICE, "xs", "2 x * s ^", "2 s ^ x s ^ *",
	 "??", "+?", NULL, NULL},
	{"1^s = 1", NONE, PRACTICE, "s", "1 s ^", "1", "?", "?", NULL, NULL},

	/* ---- products (src/expr-product.c) ---- */
	{"x^(1/3)*x^(2/3) = x", NONE " (" CONVENTION ")", CONVENTION, "x", "x 1/3 ^ x 2/3 ^ *", "x", "?", "?",
	 NULL, NULL},
	{"x^(2/3)*x^(-1/3) = x^(1/3)", NONE " (x != 0; " CONVENTION ")", CONVENTION, "x",
	 "x 2/3 ^ x -1/3 ^ *", "x 1/3 ^", "?", "?", NULL, NULL},
	{"x^(1/2)*x^(1/3) = x^(5/6)", NONE " (x >= 0)", PRACTICE, "x", "x 1/2 ^ x 1/3 ^ *", "x 5/6 ^", "?",
	 "+", NULL, NULL},
	{"x^s*x^(1/3) = x^(s + 1/3)", NONE " (x > 0)", PRACTICE, "xs", "x s ^ x 1/3 ^ *", "x s 1/3 + ^", "??",
	 "+?", NULL, NULL},
	{"x^2*x^(-1) = x", NONE " (x != 0)", PRACTICE, "x", "x 2 ^ x -1 ^ *", "x", "?", "?", NULL, NULL},
	{"exp(x)*exp(y) = exp(x + y)", NONE, "DLMF 4.2.28, from memory", "xy", "x exp y exp *", "x y + exp",
	 "??", "??", NULL, NULL},
	{"2^(1/2)*3^(1/2) = 6^(1/2)", NONE, PRACTICE, "", "2 1/2 ^ 3 1/2 ^ *", "6 1/2 ^", "", "", NULL, NULL},
	{"(x + y)*z = x*z + y*z", NONE, PRACTICE, "xyz", "x y + z *", "x z * y z * +", "???", "???", NULL,
	 NULL},
	{"(x + y)*(x + y)^(-1) = 1", NONE " (x + y != 0)", PRACTICE, "xy", "x y + x y + -1 ^ *", "1", "??",
	 "++", NULL, NULL},

	/* ---- sums (src/expr-sum.c) ---- */
	{"2*x + 3*x = 5*x; x*y - y*x = 0", NONE, PRACTICE, "xy", "2 x * 3 x * + x y * y x * - +", "5 x *",
	 "??", "??", NULL, NULL},
};

/* clang-format on */

enum { NRULES = sizeof rules / sizeof *rules };

/* ------------------------------------------------------------------ engine side */

static int sign_flags(char code)
{
	switch (code) {
	case '+':
		return EXPR_SIGN_POS;
	case '-':
		return EXPR_SIGN_NEG;
	case '0':
		return EXPR_SIGN_NONNEG;
	case 'N':
		return EXPR_SIGN_NONPOS;
	default:
		return EXPR_SIGN_UNKNOWN;
	}
}

static bool is_rational_literal(const char *token)
{
	const char *p = token + (token[0] == '-' && token[1] != '\0');
	return *p >= '0' && *p <= '9';
}

/* The postfix text built through the engine's constructors. */
static const expr *build(expr_ctx *ctx, const char *text)
{
	const expr *stack[MAX_STACK];
	size_t n = 0;
	char *copy = strdup(text), *save = NULL;
	for (char *token = strtok_r(copy, " ", &save); token; token = strtok_r(NULL, " ", &save)) {
		expr_builtin fn;
		if (is_rational_literal(token)) {
			long num = strtol(token, NULL, 10), den = 1;
			const char *bar = strchr(token, '/');
			if (bar)
				den = strtol(bar + 1, NULL, 10);
			stack[n++] = expr_rat(ctx, num, den);
		} else if (strlen(token) == 1 && strchr("xyzs", token[0])) {
			stack[n++] = expr_sym(ctx, token);
		} else if (strcmp(token, "neg") == 0) {
			stack[n - 1] = expr_neg(ctx, stack[n - 1]);
		} else if (expr_builtin_lookup(token, &fn)) {
			stack[n - 1] = expr_fun(ctx, fn, stack[n - 1]);
		} else {
			const expr *a = stack[n - 2], *b = stack[n - 1];
			n--;
			switch (token[0]) {
			case '+':
				stack[n - 1] = expr_add(ctx, a, b);
				break;
			case '-':
				stack[n - 1] = expr_sub(ctx, a, b);
				break;
			case '*':
				stack[n - 1] = expr_mul(ctx, a, b);
				break;
			case '/':
				stack[n - 1] = expr_div(ctx, a, b);
				break;
			default:
				stack[n - 1] = expr_pow(ctx, a, b);
			}
		}
		ck_assert_msg(n > 0 && n < MAX_STACK, "bad postfix text %s", text);
	}
	free(copy);
	ck_assert_msg(n == 1, "bad postfix text %s", text);
	return stack[0];
}

/* ------------------------------------------------------------------ direct Arb side */

/* A value of the direct evaluation: a ball, or undefined; a literal keeps its
 * rational so a power knows its exponent exactly. */
typedef struct value {
	arb_t ball;
	bool defined;
	bool literal;
	fmpq_t q;
} value;

/* x^(p/q) by the convention of expr.h, computed from Arb's root and power. */
static bool real_power(arb_t out, const arb_t x, const fmpq_t e)
{
	const fmpz *p = fmpq_numref(e), *q = fmpq_denref(e);
	bool zero = arb_is_zero(x);
	if (zero)
		return fmpz_sgn(p) > 0 ? (arb_zero(out), true) : false;
	ck_assert_msg(!arb_contains_zero(x), "a power's base straddles 0");
	bool negative = arb_is_negative(x);
	if (negative && fmpz_is_even(q))
		return false;
	arb_t root;
	arb_init(root);
	arb_abs(root, x);
	arb_root_ui(root, root, fmpz_get_ui(q), PREC);
	if (negative)
		arb_neg(root, root);
	arb_pow_fmpz(out, root, p, PREC);
	arb_clear(root);
	return true;
}

static bool apply_function(const char *name, arb_t v)
{
	arb_t t;
	arb_init(t);
	bool defined = true;
	if (strcmp(name, "exp") == 0)
		arb_exp(v, v, PREC);
	else if (strcmp(name, "log") == 0) {
		defined = arb_is_positive(v);
		ck_assert_msg(defined || arb_is_nonpositive(v), "log of a ball that straddles 0");
		if (defined)
			arb_log(v, v, PREC);
	} else if (strcmp(name, "abs") == 0)
		arb_abs(v, v);
	else if (strcmp(name, "sin") == 0)
		arb_sin(v, v, PREC);
	else if (strcmp(name, "cos") == 0)
		arb_cos(v, v, PREC);
	else if (strcmp(name, "tan") == 0)
		arb_tan(v, v, PREC);
	else if (strcmp(name, "sinh") == 0)
		arb_sinh(v, v, PREC);
	else if (strcmp(name, "cosh") == 0)
		arb_cosh(v, v, PREC);
	else if (strcmp(name, "tanh") == 0)
		arb_tanh(v, v, PREC);
	else if (strcmp(name, "erf") == 0)
		arb_hypgeom_erf(v, v, PREC);
	else if (strcmp(name, "Phi") == 0) {
		/* Phi(x) = (1 + erf(x/sqrt 2))/2 (Abramowitz and Stegun 26.2.29, from memory) */
		arb_sqrt_ui(t, 2, PREC);
		arb_div(v, v, t, PREC);
		arb_hypgeom_erf(v, v, PREC);
		arb_add_ui(v, v, 1, PREC);
		arb_mul_2exp_si(v, v, -1);
	} else if (strcmp(name, "phi") == 0) {
		/* phi(x) = exp(-x^2/2)/(sqrt(2)*sqrt(pi)) (Abramowitz and Stegun 26.2.1,
		 * from memory) */
		arb_mul(v, v, v, PREC);
		arb_div_si(v, v, -2, PREC);
		arb_exp(v, v, PREC);
		arb_const_sqrt_pi(t, PREC);
		arb_div(v, v, t, PREC);
		arb_sqrt_ui(t, 2, PREC);
		arb_div(v, v, t, PREC);
	} else
		ck_abort_msg("unknown function %s", name);
	arb_clear(t);
	return defined;
}

static bool binary(char op, value *a, const value *b)
{
	if (!a->defined || !b->defined)
		return false;
	switch (op) {
	case '+':
		arb_add(a->ball, a->ball, b->ball, PREC);
		return true;
	case '-':
		arb_sub(a->ball, a->ball, b->ball, PREC);
		return true;
	case '*':
		arb_mul(a->ball, a->ball, b->ball, PREC);
		return true;
	case '/':
		if (arb_is_zero(b->ball))
			return false;
		arb_div(a->ball, a->ball, b->ball, PREC);
		return true;
	default:
		if (b->literal)
			return real_power(a->ball, a->ball, b->q);
		/* a^b = exp(b log a) for a > 0 only */
		if (!arb_is_positive(a->ball))
			return false;
		arb_log(a->ball, a->ball, PREC);
		arb_mul(a->ball, a->ball, b->ball, PREC);
		arb_exp(a->ball, a->ball, PREC);
		return true;
	}
}

/* The postfix text at the point (symbol vars[i] = point[i]); false when undefined there. */
static bool direct(const char *text, const char *vars, const fmpq *point, arb_t out)
{
	value stack[MAX_STACK];
	for (size_t i = 0; i < MAX_STACK; i++) {
		arb_init(stack[i].ball);
		fmpq_init(stack[i].q);
	}
	size_t n = 0;
	char *copy = strdup(text), *save = NULL;
	for (char *token = strtok_r(copy, " ", &save); token; token = strtok_r(NULL, " ", &save)) {
		if (is_rational_literal(token)) {
			value *v = &stack[n++];
			long num = strtol(token, NULL, 10), den = 1;
			const char *bar = strchr(token, '/');
			if (bar)
				den = strtol(bar + 1, NULL, 10);
			fmpq_set_si(v->q, num, (ulong)den);
			arb_set_fmpq(v->ball, v->q, PREC);
			v->defined = v->literal = true;
		} else if (strlen(token) == 1 && strchr("xyzs", token[0])) {
			value *v = &stack[n++];
			arb_set_fmpq(v->ball, point + (strchr(vars, token[0]) - vars), PREC);
			v->defined = true;
			v->literal = false;
		} else if (strcmp(token, "neg") == 0) {
			arb_neg(stack[n - 1].ball, stack[n - 1].ball);
			stack[n - 1].literal = false;
		} else if (strlen(token) > 1) {
			value *v = &stack[n - 1];
			v->defined = v->defined && apply_function(token, v->ball);
			v->literal = false;
		} else {
			n--;
			stack[n - 1].defined = binary(token[0], &stack[n - 1], &stack[n]);
			stack[n - 1].literal = false;
		}
	}
	free(copy);
	bool defined = stack[0].defined;
	arb_set(out, stack[0].ball);
	for (size_t i = 0; i < MAX_STACK; i++) {
		arb_clear(stack[i].ball);
		fmpq_clear(stack[i].q);
	}
	return defined;
}

/* ------------------------------------------------------------------ points */

static uint64_t rng_state = 0x2545f4914f6cdd1dULL;

static uint64_t next_random(void)
{
	/* xorshift64* (Vigna 2016): deterministic points, the same in every run */
	rng_state ^= rng_state >> 12;
	rng_state ^= rng_state << 25;
	rng_state ^= rng_state >> 27;
	return rng_state * 0x2545f4914f6cdd1dULL;
}

/* A dyadic m * 2^k with 0 < m < 2^24 and k in [-64, 0]: magnitudes from
 * 2^-64 to 2^24, exact in every ball and in the engine's rationals. */
static void draw(fmpq_t out, char code)
{
	if (code == 'Z') {
		fmpq_zero(out);
		return;
	}
	uint64_t r = next_random();
	slong m = (slong)(r & 0xffffff) | 1;
	slong k = -(slong)((r >> 24) % 65);
	bool negative = code == '-' || (code == '?' && (r >> 40) & 1);
	fmpz_set_si(fmpq_numref(out), negative ? -m : m);
	fmpz_one(fmpq_denref(out));
	if (k < 0)
		fmpz_mul_2exp(fmpq_denref(out), fmpq_denref(out), (ulong)-k);
	fmpq_canonicalise(out);
}

/* ------------------------------------------------------------------ checks */

typedef struct session {
	expr_ctx *ctx;
	const expr *atoms[4];
	const expr *lhs, *rhs;
} session;

static void open_session(session *s, const rule *r, const char *signs)
{
	s->ctx = expr_ctx_new();
	for (size_t i = 0; r->vars[i]; i++) {
		char name[2] = {r->vars[i], '\0'};
		s->atoms[i] = expr_sym(s->ctx, name);
		expr_sym_set_sign(s->ctx, s->atoms[i], sign_flags(signs[i]));
	}
	s->lhs = build(s->ctx, r->lhs);
	s->rhs = build(s->ctx, r->rhs);
	ck_assert_msg(s->lhs && s->rhs, "%s: %s", r->identity, expr_error_message(s->ctx));
}

static void close_session(session *s)
{
	expr_ctx_free(s->ctx);
}

/* The engine's lhs at the point, in ball arithmetic (src/ball.c). */
static ball_status engine_value(session *s, const rule *r, const fmpq *point, arb_t out)
{
	size_t n = strlen(r->vars);
	mpq_t values[4];
	for (size_t i = 0; i < n; i++) {
		mpq_init(values[i]);
		fmpq_get_mpq(values[i], point + i);
	}
	ball_status status = ball_eval(s->ctx, s->lhs, n, s->atoms, (const mpq_t *)values, PREC, out);
	for (size_t i = 0; i < n; i++)
		mpq_clear(values[i]);
	return status;
}

/* |a - b| contains 0 with a radius below 2^-100 * max(1, |a|). */
static bool agree(const arb_t a, const arb_t b)
{
	arb_t d;
	arb_init(d);
	arb_sub(d, a, b, PREC);
	mag_t bound, size;
	mag_init(bound);
	mag_init(size);
	arb_get_mag(size, a);
	mag_one(bound);
	if (mag_cmp(size, bound) > 0)
		mag_set(bound, size);
	mag_mul_2exp_si(bound, bound, -100);
	bool result = arb_contains_zero(d) && mag_cmp(arb_radref(d), bound) <= 0;
	mag_clear(bound);
	mag_clear(size);
	arb_clear(d);
	return result;
}

static char *point_text(const rule *r, const fmpq *point)
{
	size_t cap = 256;
	char *text = calloc(cap, 1);
	for (size_t i = 0; r->vars[i]; i++) {
		char *q = fmpq_get_str(NULL, 10, point + i);
		size_t used = strlen(text);
		snprintf(text + used, cap - used, "%s%c = %.60s", i ? ", " : "", r->vars[i], q);
		flint_free(q);
	}
	return text;
}

static void fail_at(const rule *r, const fmpq *point, const char *what)
{
	char *where = point_text(r, point);
	ck_abort_msg("%s [%s; %s]: %s at %s", r->identity, r->assumption, r->source, what, where);
	free(where);
}

/* A point and the three values at it. */
typedef struct probe {
	fmpq point[4];
	arb_t lhs, rhs, engine;
} probe;

static void probe_init(probe *p)
{
	for (size_t i = 0; i < 4; i++)
		fmpq_init(p->point + i);
	arb_init(p->lhs);
	arb_init(p->rhs);
	arb_init(p->engine);
}

static void probe_clear(probe *p)
{
	for (size_t i = 0; i < 4; i++)
		fmpq_clear(p->point + i);
	arb_clear(p->lhs);
	arb_clear(p->rhs);
	arb_clear(p->engine);
}

/* The rule fires under its assumption, and agrees with the unrewritten left
 * side at random points of its domain. */
static void check_on_domain(const rule *r)
{
	session s;
	open_session(&s, r, r->signs);
	if (s.lhs != s.rhs) {
		char *got = prn_expr_flat(s.ctx, s.lhs), *want = prn_expr_flat(s.ctx, s.rhs);
		ck_abort_msg("%s [%s]: the rule did not fire: got %s, expected %s", r->identity,
			     r->assumption, got, want);
		free(got);
		free(want);
	}
	size_t nvars = strlen(r->vars), npoints = nvars ? POINTS : 1;
	probe p;
	probe_init(&p);
	for (size_t k = 0; k < npoints; k++) {
		for (size_t i = 0; i < nvars; i++)
			draw(p.point + i, r->sample[i]);
		if (!direct(r->lhs, r->vars, p.point, p.lhs))
			fail_at(r, p.point, "the left side is undefined at a point of the stated domain");
		if (!direct(r->rhs, r->vars, p.point, p.rhs))
			fail_at(r, p.point, "the right side is undefined where the left side is defined");
		if (!agree(p.lhs, p.rhs))
			fail_at(r, p.point, "the identity is false (direct evaluation of both sides)");
		if (engine_value(&s, r, p.point, p.engine) != BALL_OK)
			fail_at(r, p.point, "the engine's result is not defined where the left side is");
		if (!agree(p.lhs, p.engine))
			fail_at(r, p.point, "the engine's result differs from the left side");
	}
	probe_clear(&p);
	close_session(&s);
}

/* Without the assumption the rule does not fire; outside the domain the two
 * sides differ (firing would be wrong); what the engine made instead still
 * equals the left side wherever that is defined. */
static void check_off_domain(const rule *r)
{
	session s;
	open_session(&s, r, r->out_signs);
	if (s.lhs == s.rhs)
		ck_abort_msg("%s: fired without its assumption %s", r->identity, r->assumption);
	if (!r->out_sample) {
		close_session(&s);
		return;
	}
	size_t nvars = strlen(r->vars);
	probe p;
	probe_init(&p);
	for (size_t k = 0; k < POINTS; k++) {
		for (size_t i = 0; i < nvars; i++)
			draw(p.point + i, r->out_sample[i]);
		bool lhs_defined = direct(r->lhs, r->vars, p.point, p.lhs);
		bool rhs_defined = direct(r->rhs, r->vars, p.point, p.rhs);
		if (lhs_defined == rhs_defined && (!lhs_defined || agree(p.lhs, p.rhs)))
			fail_at(r, p.point, "the negative control's point is not outside the domain");
		if (!lhs_defined)
			continue;
		if (engine_value(&s, r, p.point, p.engine) != BALL_OK || !agree(p.lhs, p.engine))
			fail_at(r, p.point,
				"without the assumption, the engine's result differs from the left side");
	}
	probe_clear(&p);
	close_session(&s);
}

START_TEST(rule_on_domain)
{
	check_on_domain(&rules[_i]);
}
END_TEST

START_TEST(rule_off_domain)
{
	if (rules[_i].out_signs)
		check_off_domain(&rules[_i]);
}
END_TEST

/* Every rule states an identity, an assumption and a source. */
START_TEST(rules_are_stated)
{
	for (size_t i = 0; i < NRULES; i++) {
		const rule *r = &rules[i];
		ck_assert(r->identity && *r->identity && r->assumption && *r->assumption && r->source &&
			  *r->source);
		ck_assert_uint_eq(strlen(r->signs), strlen(r->vars));
		ck_assert_uint_eq(strlen(r->sample), strlen(r->vars));
		ck_assert(!r->out_signs || strlen(r->out_signs) == strlen(r->vars));
		ck_assert(!r->out_sample || strlen(r->out_sample) == strlen(r->vars));
	}
}
END_TEST

static void teardown(void)
{
	flint_cleanup();
}

Suite *rules_suite(void)
{
	Suite *suite = suite_create("rules");
	TCase *tc = tcase_create("rules");
	tcase_add_checked_fixture(tc, NULL, teardown);
	tcase_set_timeout(tc, 120);
	tcase_add_test(tc, rules_are_stated);
	tcase_add_loop_test(tc, rule_on_domain, 0, NRULES);
	tcase_add_loop_test(tc, rule_off_domain, 0, NRULES);
	suite_add_tcase(suite, tc);
	return suite;
}
