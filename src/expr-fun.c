/* expr-fun.c - built-in functions and generic function applications, and the
 * rules a built-in function obeys when it is made.
 *
 * Each rule states its identity and the assumption it needs.  "Valid on the
 * domain" means: wherever the left side is defined (as a real number), the two
 * sides agree, so the rule needs no assumption beyond the expression itself.
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

/* exp(log x) = x; exp(c*log(x) + r) = x^c * exp(r): valid on the domain (x > 0). */
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

/* log(c * prod b_i^e_i) = log c + sum e_i*log(b_i) when c > 0 and each b_i is
 * known positive, except at most one b_i with an odd integer exponent (then
 * b_i > 0 follows from the argument being positive); factors with even
 * exponents become e_i*log(abs(b_i)).  log(exp(u)) = u.  Valid on the domain. */
static const expr *log_rules(expr_ctx *ctx, const expr *arg)
{
	if (expr_is_one(arg))
		return expr_int(ctx, 0);
	if (arg->kind == EXPR_FUN && arg->u.fun.fn == EXPR_F_EXP)
		return arg->u.fun.arg;
	if (arg->kind != EXPR_MUL)
		return expr_fun_raw(ctx, EXPR_F_LOG, arg);
	if (mpq_sgn(arg->u.mul.coef) < 0)
		return expr_fun_raw(ctx, EXPR_F_LOG, arg);
	size_t odd_unknown = 0;
	for (size_t i = 0; i < arg->nops; i++) {
		const expr *base = arg->u.mul.bases[i], *e = arg->u.mul.exps[i];
		if (expr_sign(ctx, base) == EXPR_SIGN_POS)
			continue;
		if (e->kind == EXPR_NUM && !rat_is_integer(e->u.num))
			continue; /* x^f real only for x >= 0, and the log needs x > 0 */
		if (!expr_is_integer(e))
			return expr_fun_raw(ctx, EXPR_F_LOG, arg);
		if (mpz_odd_p(mpq_numref(e->u.num)))
			odd_unknown++;
	}
	if (odd_unknown > 1)
		return expr_fun_raw(ctx, EXPR_F_LOG, arg);
	const expr **terms = xmalloc((arg->nops + 1) * sizeof *terms);
	size_t n = 0;
	if (mpq_cmp_ui(arg->u.mul.coef, 1, 1) != 0)
		terms[n++] = expr_fun_raw(ctx, EXPR_F_LOG, expr_num(ctx, arg->u.mul.coef));
	for (size_t i = 0; i < arg->nops; i++) {
		const expr *base = arg->u.mul.bases[i], *e = arg->u.mul.exps[i];
		if (expr_is_integer(e) && mpz_even_p(mpq_numref(e->u.num)) &&
		    expr_sign(ctx, base) != EXPR_SIGN_POS)
			base = expr_fun(ctx, EXPR_F_ABS, base);
		terms[n++] = expr_mul(ctx, e, expr_fun(ctx, EXPR_F_LOG, base));
	}
	const expr *result = expr_add_n(ctx, n, terms);
	free(terms);
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
		/* abs(x) = x for x >= 0, -x for x <= 0; abs(-x) = abs(x) */
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
		/* odd functions: f(0) = 0, f(-x) = -f(x) */
		if (is_num_zero(arg))
			return arg;
		if (plainly_negative(arg))
			return expr_neg(ctx, expr_fun_raw(ctx, fn, expr_neg(ctx, arg)));
		return expr_fun_raw(ctx, fn, arg);
	case EXPR_F_COS:
	case EXPR_F_COSH:
		/* even functions: f(0) = 1, f(-x) = f(x) */
		if (is_num_zero(arg))
			return expr_int(ctx, 1);
		/* fall through */
	case EXPR_F_NPDF:
		if (plainly_negative(arg))
			return expr_fun_raw(ctx, fn, expr_neg(ctx, arg));
		return expr_fun_raw(ctx, fn, arg);
	case EXPR_F_NCDF:
		/* Phi(0) = 1/2; Phi(-x) = 1 - Phi(x) */
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
