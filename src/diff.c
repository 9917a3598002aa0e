/* diff.c - partial derivatives.
 *
 * The derivative of each node is memoized in the context's memo table under a
 * tag of this module, so Itô's formula over n states differentiates each shared
 * subexpression once per variable.
 */
#include "diff.h"

#include <stdlib.h>
#include <string.h>

#include "expr-internal.h"
#include "xalloc.h"

/* Fixed memo tag of this module (expr_memo_new_tag hands out positive ones). */
enum { DIFF_TAG = -2 };

/* Derivative of the built-in fn at its argument u (the outer factor of the chain rule). */
static const expr *builtin_derivative(expr_ctx *ctx, expr_builtin fn, const expr *u)
{
	switch (fn) {
	case EXPR_F_EXP: /* exp' = exp */
		return expr_fun(ctx, EXPR_F_EXP, u);
	case EXPR_F_LOG: /* log' x = 1/x */
		return expr_pow(ctx, u, expr_int(ctx, -1));
	case EXPR_F_SIN: /* sin' = cos */
		return expr_fun(ctx, EXPR_F_COS, u);
	case EXPR_F_COS: /* cos' = -sin */
		return expr_neg(ctx, expr_fun(ctx, EXPR_F_SIN, u));
	case EXPR_F_TAN: /* tan' = 1 + tan^2 */
		return expr_add(ctx, expr_int(ctx, 1), expr_pow(ctx, expr_fun(ctx, EXPR_F_TAN, u), expr_int(ctx, 2)));
	case EXPR_F_SINH: /* sinh' = cosh */
		return expr_fun(ctx, EXPR_F_COSH, u);
	case EXPR_F_COSH: /* cosh' = sinh */
		return expr_fun(ctx, EXPR_F_SINH, u);
	case EXPR_F_TANH: /* tanh' = 1 - tanh^2 */
		return expr_sub(ctx, expr_int(ctx, 1), expr_pow(ctx, expr_fun(ctx, EXPR_F_TANH, u), expr_int(ctx, 2)));
	case EXPR_F_ERF: {
		/* erf'(x) = 2/sqrt(pi) exp(-x^2) = 2*sqrt(2)*phi(sqrt(2)*x) */
		const expr *root2 = expr_pow_rat(ctx, expr_int(ctx, 2), 1, 2);
		return expr_mul(ctx, expr_mul(ctx, expr_int(ctx, 2), root2),
				expr_fun(ctx, EXPR_F_NPDF, expr_mul(ctx, root2, u)));
	}
	case EXPR_F_NCDF: /* Phi' = phi */
		return expr_fun(ctx, EXPR_F_NPDF, u);
	case EXPR_F_NPDF: /* phi'(x) = -x phi(x) */
		return expr_neg(ctx, expr_mul(ctx, u, expr_fun(ctx, EXPR_F_NPDF, u)));
	case EXPR_F_ABS: /* abs'(x) = abs(x)/x, for x != 0 */
		return expr_div(ctx, expr_fun(ctx, EXPR_F_ABS, u), u);
	case EXPR_F_COUNT:
		break;
	}
	return NULL;
}

/* d(b^e) = b^e * (e' log b + e b'/b); for a numeric e: e b^(e-1) b'. */
static const expr *power_derivative(expr_ctx *ctx, const expr *base, const expr *exponent,
				    const expr *var)
{
	const expr *db = diff(ctx, base, var);
	if (exponent->kind == EXPR_NUM) {
		if (!db || expr_is_zero(db))
			return db;
		return expr_mul_n(ctx, 3, (const expr *[]){exponent,
			expr_pow(ctx, base, expr_sub(ctx, exponent, expr_int(ctx, 1))), db});
	}
	const expr *de = diff(ctx, exponent, var);
	const expr *power = expr_pow(ctx, base, exponent);
	const expr *inner = expr_add(ctx, expr_mul(ctx, de, expr_fun(ctx, EXPR_F_LOG, base)),
				     expr_mul(ctx, exponent, expr_div(ctx, db, base)));
	return expr_mul(ctx, power, inner);
}

static const expr *diff_uncached(expr_ctx *ctx, const expr *e, const expr *var)
{
	switch (expr_kind_of(e)) {
	case EXPR_NUM:
		return expr_int(ctx, 0);
	case EXPR_SYM:
		return expr_int(ctx, e == var ? 1 : 0);
	case EXPR_ADD: {
		const expr **terms = xmalloc(e->nops * sizeof *terms);
		for (size_t i = 0; i < e->nops; i++)
			terms[i] = diff(ctx, e->u.add.terms[i], var);
		const expr *result = expr_add_n(ctx, e->nops, terms);
		free(terms);
		return result;
	}
	case EXPR_MUL: {
		/* product rule: c * sum_i (prod_{j != i} f_j) * f_i' */
		const expr **terms = xmalloc(e->nops * sizeof *terms);
		const expr **others = xmalloc((e->nops + 1) * sizeof *others);
		size_t nterms = 0;
		for (size_t i = 0; i < e->nops; i++) {
			const expr *dfi = power_derivative(ctx, e->u.mul.bases[i], e->u.mul.exps[i], var);
			if (dfi && expr_is_zero(dfi))
				continue;
			size_t n = 0;
			others[n++] = expr_num(ctx, e->u.mul.coef);
			for (size_t j = 0; j < e->nops; j++)
				if (j != i)
					others[n++] = expr_pow_pair(ctx, e->u.mul.bases[j], e->u.mul.exps[j]);
			others[n++] = dfi;
			terms[nterms++] = expr_mul_n(ctx, n, others);
		}
		const expr *result = expr_add_n(ctx, nterms, terms);
		free(terms);
		free(others);
		return result;
	}
	case EXPR_FUN: {
		const expr *u = e->u.fun.arg;
		const expr *du = diff(ctx, u, var);
		if (!du || expr_is_zero(du))
			return du;
		return expr_mul(ctx, builtin_derivative(ctx, e->u.fun.fn, u), du);
	}
	case EXPR_FAPP: {
		/* chain rule: d f(a_1..a_n) = sum_j f_j(a) * d a_j; partials commute */
		const expr **terms = xmalloc(e->nops * sizeof *terms);
		size_t nterms = 0;
		unsigned char counts[EXPR_MAX_FUNC_ARGS];
		for (size_t j = 0; j < e->nops; j++) {
			const expr *da = diff(ctx, e->u.fapp.args[j], var);
			if (da && expr_is_zero(da))
				continue;
			memcpy(counts, e->u.fapp.counts, e->nops);
			if (counts[j] == 255) {
				free(terms);
				return expr_fail(ctx, EXPR_ERR_TOO_LARGE, "derivative order too high");
			}
			counts[j]++;
			const expr *partial = expr_fapp(ctx, e->u.fapp.func, counts, e->u.fapp.args);
			terms[nterms++] = expr_mul(ctx, partial, da);
		}
		const expr *result = expr_add_n(ctx, nterms, terms);
		free(terms);
		return result;
	}
	}
	return NULL;
}

const expr *diff(expr_ctx *ctx, const expr *e, const expr *var)
{
	if (!e || !var)
		return NULL;
	if (expr_kind_of(e) == EXPR_NUM)
		return expr_int(ctx, 0);
	if (!expr_has(ctx, e, var))
		return expr_int(ctx, 0);
	const expr *known = expr_memo_get(ctx, DIFF_TAG, e, var);
	if (known)
		return known;
	if (expr_poll_interrupt(ctx))
		return NULL;
	const expr *result = diff_uncached(ctx, e, var);
	expr_memo_put(ctx, DIFF_TAG, e, var, result);
	return result;
}

const expr *diff_n(expr_ctx *ctx, const expr *e, size_t n, const expr *const *vars)
{
	for (size_t i = 0; i < n && e; i++)
		e = diff(ctx, e, vars[i]);
	return e;
}
