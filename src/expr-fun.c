/* expr-fun.c - built-in functions and generic function applications, and the
 * rules a built-in function obeys when it is made.
 *
 * Each rule states its identity and the assumption it needs.  "Valid on the
 * domain" means: wherever the left side is defined (as a real number), the two
 * sides agree, so the rule needs no assumption beyond the expression itself.
 * The rules (identity; assumption; source):
 *   exp(0) = 1, log(1) = 0, f(0) = 0 for the odd f below, cos(0) = cosh(0) = 1,
 *   Phi(0) = 1/2                          none                  common practice
 *   exp(log x) = x, exp(c*log(x) + r) = x^c*exp(r)
 *                                         x > 0 known           DLMF 4.2.26, from memory
 *   log(exp u) = u                        none (real u)         DLMF 4.2, from memory
 *   log(c*prod b_i^e_i) = log c + sum e_i*log(B_i), B_i = b_i or abs(b_i)
 *                                         c > 0, the product > 0 forces each B_i > 0
 *                                         (expr_positive_bases)  DLMF 4.8.2, from memory
 *   abs(x) = x, abs(x) = -x               x >= 0, x <= 0        common practice
 *   abs(-x) = abs(x)                      none                  common practice
 *   f(-x) = -f(x), f = sin tan sinh tanh erf
 *                                         none                  DLMF 4.21.2, 4.21.4,
 *                                                               4.35.5, 4.35.7; A&S 7.1.9
 *   f(-x) = f(x), f = cos cosh phi        none                  DLMF 4.21.3, 4.35.6; A&S 26.2.1
 *   Phi(-x) = 1 - Phi(x)                  none                  A&S 26.2.5
 * (DLMF: NIST Digital Library of Mathematical Functions; A&S: Abramowitz and
 * Stegun, Handbook of Mathematical Functions, 1964; all from memory.)
 * tests/check_rules.c checks each in ball arithmetic on its domain.
 */
#include "expr-internal.h"

#include <stdlib.h>

#include "rat.h"
#include "xalloc.h"

/* ------------------------------------------------------------------ exp */

/* If term is c*r*log(x) with r free of log (r may be 1), return x and set
 * *power = c*r. */
static const expr *log_factor(expr_ctx *ctx, const expr *term, const expr **power)
{
	if (term->kind == EXPR_FUN && term->u.fun.fn == EXPR_F_LOG) {
		*power = expr_int(ctx, 1);
		return term->u.fun.arg;
	}
	if (term->kind != EXPR_MUL)
		return NULL;
	size_t found = term->nops;
	for (size_t i = 0; i < term->nops; i++) {
		const expr *base = term->u.mul.bases[i];
		if (base->kind == EXPR_FUN && base->u.fun.fn == EXPR_F_LOG) {
			if (found != term->nops || !expr_is_one(term->u.mul.exps[i]))
				return NULL;
			found = i;
		}
	}
	if (found == term->nops)
		return NULL;
	const expr **rest = xmalloc((term->nops + 1) * sizeof *rest);
	size_t n = 0;
	rest[n++] = expr_num(ctx, term->u.mul.coef);
	for (size_t i = 0; i < term->nops; i++)
		if (i != found)
			rest[n++] = expr_pow_pair(ctx, term->u.mul.bases[i], term->u.mul.exps[i]);
	*power = expr_mul_n(ctx, n, rest);
	free(rest);
	return term->u.mul.bases[found]->u.fun.arg;
}

/* exp(log x) = x; exp(c*log(x) + r) = x^c * exp(r), for x > 0 known: where x
 * may be <= 0 the left side is undefined and the right side may not be, so a
 * claim exp(log(a)) = a must not hold exactly for an a of unknown sign. */
static const expr *exp_rules(expr_ctx *ctx, const expr *arg)
{
	if (expr_is_zero(arg))
		return expr_int(ctx, 1);
	size_t n = arg->kind == EXPR_ADD ? arg->nops : 1;
	const expr **powers = xmalloc((n + 1) * sizeof *powers);
	const expr **remaining = xmalloc((n + 1) * sizeof *remaining);
	size_t npowers = 0, nremaining = 0;
	for (size_t i = 0; i < n; i++) {
		const expr *term = arg->kind == EXPR_ADD ? arg->u.add.terms[i] : arg;
		const expr *power = NULL;
		const expr *x = log_factor(ctx, term, &power);
		if (x && expr_sign(ctx, x) != EXPR_SIGN_POS)
			x = NULL;
		if (x)
			powers[npowers++] = expr_pow(ctx, x, power);
		else
			remaining[nremaining++] = term;
	}
	const expr *result;
	if (npowers == 0) {
		result = expr_fun_raw(ctx, EXPR_F_EXP, arg);
	} else {
		const expr *rest = expr_add_n(ctx, nremaining, remaining);
		powers[npowers++] =
		        rest && !expr_is_zero(rest) ? expr_fun_raw(ctx, EXPR_F_EXP, rest) : expr_int(ctx, 1);
		result = expr_mul_n(ctx, npowers, powers);
	}
	free(powers);
	free(remaining);
	return result;
}

/* ------------------------------------------------------------------ log */

/* log(exp(u)) = u, valid for every real u.
 * log(c * prod b_i^e_i) = log c + sum e_i*log(B_i) where the argument is
 * positive (the domain of the left side), with B_i = b_i or abs(b_i) as
 * expr_positive_bases() infers B_i > 0 and b_i^e_i = B_i^e_i there: so
 * log(x^2) = 2*log(abs(x)), log(x^3) = 3*log(x) (x^3 > 0 forces x > 0),
 * log(x^(2/3)) = 2/3*log(abs(x)), but log(x*y) stays whole for x, y of unknown
 * sign.  Needs c > 0 and at most one factor whose sign follows an unknown
 * base.  Common practice, no source (log(ab) = log a + log b for a, b > 0). */
static const expr *log_rules(expr_ctx *ctx, const expr *arg)
{
	if (expr_is_one(arg))
		return expr_int(ctx, 0);
	if (arg->kind == EXPR_FUN && arg->u.fun.fn == EXPR_F_EXP)
		return arg->u.fun.arg;
	if (arg->kind != EXPR_MUL)
		return expr_fun_raw(ctx, EXPR_F_LOG, arg);
	const expr **bases = xmalloc(arg->nops * sizeof *bases);
	if (!expr_positive_bases(ctx, arg, bases)) {
		free(bases);
		return expr_fun_raw(ctx, EXPR_F_LOG, arg);
	}
	const expr **terms = xmalloc((arg->nops + 1) * sizeof *terms);
	size_t n = 0;
	if (mpq_cmp_ui(arg->u.mul.coef, 1, 1) != 0)
		terms[n++] = expr_fun_raw(ctx, EXPR_F_LOG, expr_num(ctx, arg->u.mul.coef));
	for (size_t i = 0; i < arg->nops; i++)
		terms[n++] = expr_mul(ctx, arg->u.mul.exps[i], expr_fun(ctx, EXPR_F_LOG, bases[i]));
	const expr *result = expr_add_n(ctx, n, terms);
	free(terms);
	free(bases);
	return result;
}

/* ------------------------------------------------------------------ parity, abs */

/* A plainly negated argument (-x, -2*x*y): the parity rules fire only on those,
 * since the sign of a sum's leading term depends on the node order, not on
 * anything a reader sees (Phi(d2) must not turn into 1 - Phi(-d2)). */
static bool plainly_negative(const expr *e)
{
	return expr_kind_of(e) != EXPR_ADD && expr_negative_form(e);
}

static bool is_num_zero(const expr *e)
{
	return expr_is_zero(e);
}

/* The rules of the built-in functions, applied whenever one is made. */
static const expr *fun_rules(expr_ctx *ctx, expr_builtin fn, const expr *arg)
{
	switch (fn) {
	case EXPR_F_EXP:
		return exp_rules(ctx, arg);
	case EXPR_F_LOG:
		return log_rules(ctx, arg);
	case EXPR_F_ABS: {
		/* abs(x) = x for x >= 0 known, -x for x <= 0 known; abs(-x) = abs(x)
		 * for every real x */
		int s = expr_sign(ctx, arg);
		if (!(s & EXPR_SIGN_NEG))
			return arg;
		if (!(s & EXPR_SIGN_POS))
			return expr_neg(ctx, arg);
		if (plainly_negative(arg))
			return expr_fun_raw(ctx, fn, expr_neg(ctx, arg));
		return expr_fun_raw(ctx, fn, arg);
	}
	case EXPR_F_SIN:
	case EXPR_F_TAN:
	case EXPR_F_SINH:
	case EXPR_F_TANH:
	case EXPR_F_ERF:
		/* odd functions: f(0) = 0, f(-x) = -f(x), every real x (tan: where defined) */
		if (is_num_zero(arg))
			return arg;
		if (plainly_negative(arg))
			return expr_neg(ctx, expr_fun_raw(ctx, fn, expr_neg(ctx, arg)));
		return expr_fun_raw(ctx, fn, arg);
	case EXPR_F_COS:
	case EXPR_F_COSH:
		/* even functions: f(0) = 1, f(-x) = f(x), every real x */
		if (is_num_zero(arg))
			return expr_int(ctx, 1);
		/* fall through */
	case EXPR_F_NPDF:
		if (plainly_negative(arg))
			return expr_fun_raw(ctx, fn, expr_neg(ctx, arg));
		return expr_fun_raw(ctx, fn, arg);
	case EXPR_F_NCDF:
		/* Phi(0) = 1/2; Phi(-x) = 1 - Phi(x), every real x */
		if (is_num_zero(arg))
			return expr_rat(ctx, 1, 2);
		if (plainly_negative(arg))
			return expr_sub(ctx, expr_int(ctx, 1), expr_fun_raw(ctx, fn, expr_neg(ctx, arg)));
		return expr_fun_raw(ctx, fn, arg);
	default:
		return expr_fun_raw(ctx, fn, arg);
	}
}

/* ------------------------------------------------------------------ constructors */

const expr *expr_fun_raw(expr_ctx *ctx, expr_builtin fn, const expr *arg)
{
	if (!arg)
		return NULL;
	expr candidate = {.kind = EXPR_FUN, .nops = 1};
	candidate.u.fun.fn = fn;
	candidate.u.fun.arg = arg;
	return expr_intern(ctx, &candidate);
}

const expr *expr_fun(expr_ctx *ctx, expr_builtin fn, const expr *arg)
{
	if (!arg)
		return NULL;
	return fun_rules(ctx, fn, arg);
}

const expr *expr_fapp(expr_ctx *ctx, const expr *func, const unsigned char *counts, const expr *const *args)
{
	size_t nargs = expr_func_arity(func);
	if (!func || nargs == 0)
		return NULL;
	for (size_t i = 0; i < nargs; i++)
		if (!args[i])
			return NULL;
	unsigned char zeros[EXPR_MAX_FUNC_ARGS] = {0};
	expr candidate = {.kind = EXPR_FAPP, .nops = nargs};
	candidate.u.fapp.func = func;
	candidate.u.fapp.counts = (unsigned char *)(counts ? counts : zeros);
	candidate.u.fapp.args = (const expr **)args;
	return expr_intern(ctx, &candidate);
}
