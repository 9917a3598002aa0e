/* expr-product.c - products and quotients: flatten, multiply coefficients,
 * sort bases, add exponents of equal bases, fold exponentials, expand over sums.
 *
 * The rules (identity; assumption; source), each valid wherever its left side
 * is defined under the convention for real powers of expr.h:
 *   x^a*x^b = x^(a+b)        none: for rational a = p/q, b = r/s with q, s odd,
 *                            x^a*x^b = sign(x)^(p+r)*abs(x)^(a+b), and a+b in
 *                            lowest terms has an odd denominator and a numerator
 *                            of the parity of p+r; with an even denominator or a
 *                            symbolic exponent the left side needs x >= 0 or
 *                            x > 0, where it is the law of exponents (DLMF
 *                            4.2.27, from memory)
 *   exp(a)*exp(b) = exp(a+b), exp(u)^e = exp(e*u)
 *                            none (DLMF 4.2.28, from memory)
 *   p^f*q^f = (p*q)^f        rationals p, q > 0 (common practice, no source)
 *   (a+b)*c = a*c + b*c      none (common practice, no source)
 *   u*u^-1 = 1 for a sum u   none: the left side needs u != 0
 * tests/check_rules.c checks each in ball arithmetic on its domain.
 */
#include "expr-internal.h"

#include <stdlib.h>
#include <string.h>

#include "rat.h"
#include "xalloc.h"

typedef struct factor {
	const expr *base, *exponent;
} factor;

/* Factors, in the list's own storage until they outgrow it: start a list
 * with factor_list_init and end it with factor_list_free. */
typedef struct factor_list {
	factor *items;
	size_t n, cap;
	factor inline_items[24];
} factor_list;

/* Not an initializer: that would clear the inline storage on every call. */
static void factor_list_init(factor_list *list)
{
	list->items = list->inline_items;
	list->n = 0;
	list->cap = sizeof list->inline_items / sizeof *list->inline_items;
}

static void factor_push(factor_list *list, const expr *base, const expr *exponent)
{
	list->items =
	        expr_grow_items(list->items, list->inline_items, list->n, &list->cap, sizeof *list->items);
	list->items[list->n++] = (factor){base, exponent};
}

static void factor_list_free(factor_list *list)
{
	if (list->items != list->inline_items)
		free(list->items);
}

static int compare_factors(const void *x, const void *y)
{
	return expr_compare(((const factor *)x)->base, ((const factor *)y)->base);
}

/* Intern the MUL c * prod factors (factors sorted, bases distinct, no zero exponents). */
static const expr *make_mul(expr_ctx *ctx, mpq_srcptr c, const factor_list *factors)
{
	if (mpq_sgn(c) == 0)
		return ctx->zero;
	if (factors->n == 0)
		return expr_num(ctx, c);
	if (factors->n == 1 && mpq_cmp_ui(c, 1, 1) == 0 && expr_is_one(factors->items[0].exponent))
		return factors->items[0].base;
	const expr *local[2 * 24];
	const expr **bases = factors->n <= 24 ? local : xmalloc(2 * factors->n * sizeof *bases);
	const expr **exps = bases + factors->n;
	for (size_t i = 0; i < factors->n; i++) {
		bases[i] = factors->items[i].base;
		exps[i] = factors->items[i].exponent;
	}
	expr candidate = {.kind = EXPR_MUL, .nops = factors->n};
	memcpy(candidate.u.mul.coef, c, sizeof(mpq_t));
	candidate.u.mul.bases = bases;
	candidate.u.mul.exps = exps;
	const expr *result = expr_intern(ctx, &candidate);
	if (bases != local)
		free(bases);
	return result;
}

const expr *expr_pow_pair(expr_ctx *ctx, const expr *base, const expr *exponent)
{
	if (!base || !exponent)
		return NULL;
	if (expr_is_zero(exponent))
		return ctx->one;
	if (expr_is_one(exponent))
		return base;
	factor_list list;
	factor_list_init(&list);
	factor_push(&list, base, exponent);
	const expr *result = make_mul(ctx, ctx->one->u.num, &list);
	factor_list_free(&list);
	return result;
}

static bool has_base(const expr *term, const expr *base)
{
	if (term->kind != EXPR_MUL)
		return false;
	for (size_t i = 0; i < term->nops; i++)
		if (term->u.mul.bases[i] == base)
			return true;
	return false;
}

/* Expand the products of the sums in `sums` with `rest` (a non-sum product). */
static const expr *expand_product(expr_ctx *ctx, const expr *rest, const expr **sums, size_t nsums)
{
	size_t nterms = 1;
	const expr **terms = xmalloc(sizeof *terms);
	terms[0] = rest;
	for (size_t s = 0; s < nsums; s++) {
		const expr *sum = sums[s];
		size_t width = sum->kind == EXPR_ADD ? sum->nops : 1;
		if (ctx->limits.max_terms && nterms * width > ctx->limits.max_terms) {
			free(terms);
			return expr_fail(ctx, EXPR_ERR_TOO_LARGE,
			                 "expression too large (expansion exceeds the term limit)");
		}
		const expr **next = xmalloc(nterms * width * sizeof *next);
		size_t k = 0;
		for (size_t i = 0; i < nterms; i++) {
			if (expr_poll_interrupt(ctx)) {
				free(next);
				free(terms);
				return NULL;
			}
			if (has_base(terms[i], sum)) {
				/* t*(a+b)^-1 times (a+b): merge the powers, do not distribute */
				next[k++] = expr_mul(ctx, terms[i], sum);
				continue;
			}
			for (size_t j = 0; j < width; j++)
				next[k++] = expr_mul(ctx, terms[i],
				                     sum->kind == EXPR_ADD ? sum->u.add.terms[j] : sum);
		}
		free(terms);
		terms = next;
		/* re-collect so later sums multiply merged terms */
		const expr *collected = expr_add_n(ctx, k, terms);
		if (!collected) {
			free(terms);
			return NULL;
		}
		if (collected->kind == EXPR_ADD) {
			nterms = collected->nops;
			terms = xreallocarray(terms, nterms, sizeof *terms);
			memcpy(terms, collected->u.add.terms, nterms * sizeof *terms);
		} else {
			nterms = 1;
			terms[0] = collected;
		}
	}
	const expr *result = expr_add_n(ctx, nterms, terms);
	free(terms);
	return result;
}

const expr *expr_mul_n(expr_ctx *ctx, size_t n, const expr *const *inputs)
{
	for (size_t i = 0; i < n; i++)
		if (!inputs[i])
			return NULL;
	if (n == 0)
		return ctx->one;
	if (n == 1)
		return inputs[0];
	if (expr_poll_interrupt(ctx))
		return NULL;

	size_t mark = ctx->scratch_top;
	mpq_ptr coef = expr_scratch_take(ctx);
	mpq_set_ui(coef, 1, 1);
	factor_list factors;
	factor_list_init(&factors);
	const expr *sums_local[8];
	const expr **sums = sums_local;
	size_t nsums = 0;
	const expr **extras_early = NULL;
	size_t nearly = 0;
	for (size_t i = 0; i < n; i++) {
		const expr *f = inputs[i];
		switch (f->kind) {
		case EXPR_NUM:
			rat_mul(coef, coef, f->u.num);
			break;
		case EXPR_MUL:
			rat_mul(coef, coef, f->u.mul.coef);
			for (size_t j = 0; j < f->nops; j++)
				factor_push(&factors, f->u.mul.bases[j], f->u.mul.exps[j]);
			break;
		case EXPR_ADD:
			if (nsums == 8 && sums == sums_local) {
				sums = xreallocarray(NULL, n, sizeof *sums);
				memcpy(sums, sums_local, sizeof sums_local);
			}
			sums[nsums++] = f;
			break;
		default:
			factor_push(&factors, f, ctx->one);
		}
	}
	const expr *result = NULL;
	if (mpq_sgn(coef) == 0) {
		result = ctx->zero;
		goto done;
	}
	/* a sum that is also the base of a factor merges with it before any
	 * expansion: (a+b)*(a+b)^-1 = 1, not a/(a+b) + b/(a+b) */
	for (size_t k = 0; k < nsums;) {
		size_t j = 0;
		while (j < factors.n && factors.items[j].base != sums[k])
			j++;
		if (j == factors.n) {
			k++;
			continue;
		}
		factors.items[j].exponent = expr_add(ctx, factors.items[j].exponent, ctx->one);
		sums[k] = sums[--nsums];
	}
	if (nsums > 0) {
		const expr *rest;
		if (factors.n == 0)
			rest = expr_num(ctx, coef);
		else {
			const expr **plain = xmalloc((factors.n + 1) * sizeof *plain);
			plain[0] = expr_num(ctx, coef);
			for (size_t i = 0; i < factors.n; i++)
				plain[i + 1] =
				        expr_pow_pair(ctx, factors.items[i].base, factors.items[i].exponent);
			rest = expr_mul_n(ctx, factors.n + 1, plain);
			free(plain);
		}
		result = rest ? expand_product(ctx, rest, sums, nsums) : NULL;
		goto done;
	}

	/* surds with one exponent share a base: p^f*q^f = (p*q)^f for p, q > 0,
	 * sqrt(2)*sqrt(3) = sqrt(6) */
	for (size_t i = 0; i < factors.n; i++) {
		factor *f = &factors.items[i];
		if (f->base->kind != EXPR_NUM || mpq_sgn(f->base->u.num) <= 0 ||
		    f->exponent->kind != EXPR_NUM)
			continue;
		for (size_t j = i + 1; j < factors.n; j++) {
			factor *g = &factors.items[j];
			if (g->base->kind != EXPR_NUM || mpq_sgn(g->base->u.num) <= 0 ||
			    g->exponent != f->exponent || g->base == f->base)
				continue;
			mpq_t product;
			mpq_init(product);
			mpq_mul(product, f->base->u.num, g->base->u.num);
			const expr *merged = expr_pow(ctx, expr_num(ctx, product), f->exponent);
			mpq_clear(product);
			/* the merged power comes back through the product as one factor */
			factors.items[j] = factors.items[--factors.n];
			f->base = ctx->one;
			extras_early = xreallocarray(extras_early, nearly + 1, sizeof *extras_early);
			extras_early[nearly++] = merged;
			break;
		}
	}
	if (nearly > 0) {
		/* drop the factors whose base became 1 and multiply the merged surds in */
		size_t kept = 0;
		for (size_t i = 0; i < factors.n; i++)
			if (factors.items[i].base != ctx->one)
				factors.items[kept++] = factors.items[i];
		factors.n = kept;
		const expr **parts = xmalloc((factors.n + nearly + 1) * sizeof *parts);
		size_t np = 0;
		parts[np++] = expr_num(ctx, coef);
		for (size_t i = 0; i < factors.n; i++)
			parts[np++] = expr_pow_pair(ctx, factors.items[i].base, factors.items[i].exponent);
		for (size_t i = 0; i < nearly; i++)
			parts[np++] = extras_early[i];
		result = expr_mul_n(ctx, np, parts);
		free(parts);
		free(extras_early);
		goto done;
	}

	/* merge equal bases, x^a*x^b = x^(a+b) (see the top of the file); fold exp
	 * factors into one exp */
	expr_run_sort(factors.items, factors.n, sizeof *factors.items, compare_factors);
	factor_list merged;
	factor_list_init(&merged);
	const expr **exp_args = NULL;
	size_t nexp = 0;
	const expr **extras = NULL;
	size_t nextras = 0;
	for (size_t i = 0; i < factors.n; i++) {
		const expr *base = factors.items[i].base;
		const expr *exponent = factors.items[i].exponent;
		bool was_merged = false;
		while (i + 1 < factors.n && factors.items[i + 1].base == base) {
			exponent = expr_add(ctx, exponent, factors.items[++i].exponent);
			was_merged = true;
		}
		if (!exponent) {
			factor_list_free(&merged);
			free(exp_args);
			free(extras);
			goto done;
		}
		if (expr_is_zero(exponent))
			continue;
		if (expr_is_fun(base, EXPR_F_EXP)) {
			/* exp(u)^e = exp(e*u); exp(a)*exp(b) = exp(a+b) */
			exp_args = xreallocarray(exp_args, nexp + 1, sizeof *exp_args);
			exp_args[nexp++] = expr_mul(ctx, exponent, base->u.fun.arg);
			continue;
		}
		/* a surd q^f with q > 0, 0 < f < 1 is already in final form */
		bool stable_surd = base->kind == EXPR_NUM && !was_merged && mpq_sgn(base->u.num) > 0 &&
		                   exponent->kind == EXPR_NUM && mpq_sgn(exponent->u.num) > 0 &&
		                   mpq_cmp_ui(exponent->u.num, 1, 1) < 0;
		bool negative_surd = base->kind == EXPR_NUM && !was_merged && mpq_sgn(base->u.num) < 0 &&
		                     !expr_is_integer(exponent);
		/* q^x with a symbolic x stays a factor: only numeric powers of numbers fold */
		bool rewrite = (base->kind == EXPR_NUM && exponent->kind == EXPR_NUM && !stable_surd &&
		                !negative_surd) ||
		               (base->kind == EXPR_ADD && expr_is_positive_integer(exponent)) ||
		               (expr_is_fun(base, EXPR_F_ABS) && expr_is_even_integer(exponent)) ||
		               (base->kind == EXPR_MUL && was_merged);
		if (rewrite) {
			extras = xreallocarray(extras, nextras + 1, sizeof *extras);
			extras[nextras++] = expr_pow(ctx, base, exponent);
			continue;
		}
		factor_push(&merged, base, exponent);
	}
	if (nexp > 0) {
		const expr *exp_factor = expr_fun(ctx, EXPR_F_EXP, expr_add_n(ctx, nexp, exp_args));
		if (exp_factor && expr_is_fun(exp_factor, EXPR_F_EXP)) {
			factor_push(&merged, exp_factor, ctx->one);
			expr_run_sort(merged.items, merged.n, sizeof *merged.items, compare_factors);
		} else {
			extras = xreallocarray(extras, nextras + 1, sizeof *extras);
			extras[nextras++] = exp_factor;
		}
	}
	free(exp_args);
	result = make_mul(ctx, coef, &merged);
	factor_list_free(&merged);
	if (nextras > 0 && result) {
		extras = xreallocarray(extras, nextras + 1, sizeof *extras);
		extras[nextras++] = result;
		result = expr_mul_n(ctx, nextras, extras);
	}
	free(extras);
done:
	ctx->scratch_top = mark;
	factor_list_free(&factors);
	if (sums != sums_local)
		free(sums);
	return result;
}

const expr *expr_mul(expr_ctx *ctx, const expr *a, const expr *b)
{
	const expr *factors[2] = {a, b};
	return expr_mul_n(ctx, 2, factors);
}

/* term / m for a monomial m whose factors all occur in term: the exponents
 * are subtracted directly (the printer divides every term of a sum by a
 * common factor, and a full product would re-sort and re-merge each one).
 * NULL when the shortcut does not apply; then the caller divides normally. */
static const expr *divide_exactly(expr_ctx *ctx, const expr *term, const expr *m)
{
	const expr *one_exp = ctx->one;
	const expr *const *mb = m->kind == EXPR_MUL ? m->u.mul.bases : &m;
	const expr *const *me = m->kind == EXPR_MUL ? m->u.mul.exps : &one_exp;
	size_t mn = m->kind == EXPR_MUL ? m->nops : 1;
	const expr *const *tb = term->kind == EXPR_MUL ? term->u.mul.bases : &term;
	const expr *const *te = term->kind == EXPR_MUL ? term->u.mul.exps : &one_exp;
	size_t tn = term->kind == EXPR_MUL ? term->nops : 1;
	factor_list kept;
	factor_list_init(&kept);
	size_t j = 0;
	const expr *result = NULL;
	for (size_t i = 0; i < tn; i++) {
		const expr *exponent = te[i];
		if (j < mn && mb[j] == tb[i]) {
			if (exponent->kind != EXPR_NUM || me[j]->kind != EXPR_NUM)
				goto out;
			exponent = expr_sub(ctx, exponent, me[j]);
			j++;
			if (!exponent)
				goto out; /* a limit: the caller sees NULL */
			if (expr_is_zero(exponent))
				continue;
			/* a power left over on these bases may need the full rules */
			if (tb[i]->kind == EXPR_NUM || tb[i]->kind == EXPR_ADD ||
			    expr_is_fun(tb[i], EXPR_F_EXP) || expr_is_fun(tb[i], EXPR_F_ABS))
				goto out;
		}
		factor_push(&kept, tb[i], exponent);
	}
	if (j == mn) {
		size_t mark = ctx->scratch_top;
		mpq_ptr coef = expr_scratch_take(ctx);
		if (term->kind == EXPR_MUL)
			mpq_set(coef, term->u.mul.coef);
		else
			mpq_set_ui(coef, 1, 1);
		if (m->kind == EXPR_MUL)
			rat_div(coef, coef, m->u.mul.coef);
		result = make_mul(ctx, coef, &kept);
		ctx->scratch_top = mark;
	}
out:
	factor_list_free(&kept);
	return result;
}

const expr *expr_div_terms(expr_ctx *ctx, const expr *sum, const expr *m)
{
	if (!sum || !m || sum->kind != EXPR_ADD ||
	    (m->kind != EXPR_MUL && m->kind != EXPR_SYM && m->kind != EXPR_FUN && m->kind != EXPR_FAPP))
		return expr_div(ctx, sum, m);
	const expr **terms = xmalloc(sum->nops * sizeof *terms);
	for (size_t i = 0; i < sum->nops; i++) {
		terms[i] = divide_exactly(ctx, sum->u.add.terms[i], m);
		if (!terms[i]) {
			free(terms);
			return expr_div(ctx, sum, m);
		}
	}
	const expr *result = expr_add_n(ctx, sum->nops, terms);
	free(terms);
	return result;
}

const expr *expr_div(expr_ctx *ctx, const expr *a, const expr *b)
{
	if (!a || !b)
		return NULL;
	if (expr_is_zero(b))
		return expr_fail(ctx, EXPR_ERR_DIVISION, "division by zero");
	return expr_mul(ctx, a, expr_pow(ctx, b, ctx->minus_one));
}
