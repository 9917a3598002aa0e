/* expr-sum.c - sums: flatten, split each term into c*m, sort by m, merge, drop
 * zeros.
 *
 * The one rule: c1*m + c2*m = (c1 + c2)*m for rationals c1, c2 (so u - u = 0);
 * no assumption (distributivity, common practice, no source).  Checked in
 * tests/check_rules.c.
 */
#include "expr-internal.h"

#include <stdlib.h>
#include <string.h>

#include "rat.h"
#include "xalloc.h"

typedef struct term_pair {
	mpq_ptr coef; /* a scratch rational of the context */
	const expr *rest;
} term_pair;

typedef struct term_list {
	term_pair *items;
	size_t n, cap;
	term_pair inline_items[32];
} term_list;

static int compare_term_pairs(const void *x, const void *y)
{
	return expr_compare(((const term_pair *)x)->rest, ((const term_pair *)y)->rest);
}

/* Make the MUL c*rest where rest is coefficient-free (1, an atom or a MUL). */
static const expr *scaled(expr_ctx *ctx, mpq_srcptr c, const expr *rest)
{
	if (mpq_sgn(c) == 0)
		return ctx->zero;
	if (rest == ctx->one)
		return expr_num(ctx, c);
	if (mpq_cmp_ui(c, 1, 1) == 0)
		return rest;
	expr candidate = {.kind = EXPR_MUL};
	memcpy(candidate.u.mul.coef, c, sizeof(mpq_t));
	const expr *one_exp = ctx->one;
	if (rest->kind == EXPR_MUL) {
		candidate.nops = rest->nops;
		candidate.u.mul.bases = rest->u.mul.bases;
		candidate.u.mul.exps = rest->u.mul.exps;
	} else {
		candidate.nops = 1;
		candidate.u.mul.bases = &rest;
		candidate.u.mul.exps = &one_exp;
	}
	const expr *result = expr_intern(ctx, &candidate);
	if (result && result->kind == EXPR_MUL && !result->u.mul.unit)
		((expr *)result)->u.mul.unit = rest;
	return result;
}

const expr *expr_split_coef(expr_ctx *ctx, const expr *term, mpq_t coef)
{
	if (term->kind == EXPR_NUM) {
		mpq_set(coef, term->u.num);
		return ctx->one;
	}
	if (term->kind != EXPR_MUL) {
		mpq_set_ui(coef, 1, 1);
		return term;
	}
	mpq_set(coef, term->u.mul.coef);
	if (mpq_cmp_ui(coef, 1, 1) == 0)
		return term;
	if (term->u.mul.unit)
		return term->u.mul.unit;
	const expr *rest;
	if (term->nops == 1 && expr_is_one(term->u.mul.exps[0]))
		rest = term->u.mul.bases[0];
	else {
		expr candidate = {.kind = EXPR_MUL, .nops = term->nops};
		memcpy(candidate.u.mul.coef, ctx->one->u.num, sizeof(mpq_t));
		candidate.u.mul.bases = term->u.mul.bases;
		candidate.u.mul.exps = term->u.mul.exps;
		rest = expr_intern(ctx, &candidate);
	}
	if (rest)
		((expr *)term)->u.mul.unit = rest;
	return rest;
}

static void collect_terms(expr_ctx *ctx, const expr *e, term_list *list)
{
	if (e->kind == EXPR_ADD) {
		for (size_t i = 0; i < e->nops; i++)
			collect_terms(ctx, e->u.add.terms[i], list);
		return;
	}
	list->items =
	        expr_grow_items(list->items, list->inline_items, list->n, &list->cap, sizeof *list->items);
	term_pair *pair = &list->items[list->n++];
	pair->coef = expr_scratch_take(ctx);
	pair->rest = expr_split_coef(ctx, e, pair->coef);
}

const expr *expr_add_n(expr_ctx *ctx, size_t n, const expr *const *terms)
{
	for (size_t i = 0; i < n; i++)
		if (!terms[i])
			return NULL;
	if (n == 0)
		return ctx->zero;
	if (n == 1)
		return terms[0];
	size_t mark = ctx->scratch_top;
	term_list list; /* not an initializer, which would clear the inline storage */
	list.items = list.inline_items;
	list.n = 0;
	list.cap = sizeof list.inline_items / sizeof *list.inline_items;
	for (size_t i = 0; i < n; i++)
		collect_terms(ctx, terms[i], &list);
	term_pair *pairs = list.items;
	size_t count = list.n;
	const expr *result = NULL;
	for (size_t i = 0; i < count; i++)
		if (!pairs[i].rest)
			goto out; /* splitting a term hit the node limit: the error is set */
	expr_run_sort(pairs, count, sizeof *pairs, compare_term_pairs);
	/* merge like terms */
	size_t kept = 0;
	for (size_t i = 0; i < count; i++) {
		if (kept > 0 && pairs[kept - 1].rest == pairs[i].rest) {
			rat_add(pairs[kept - 1].coef, pairs[kept - 1].coef, pairs[i].coef);
			continue;
		}
		if (kept != i) {
			mpq_ptr t = pairs[kept].coef;
			pairs[kept] = pairs[i];
			pairs[i].coef = t;
		}
		kept++;
	}
	/* the scaled terms go back into the pairs' rest fields */
	size_t nout = 0;
	bool failed = false;
	for (size_t i = 0; i < kept; i++) {
		if (mpq_sgn(pairs[i].coef) == 0)
			continue;
		const expr *t = scaled(ctx, pairs[i].coef, pairs[i].rest);
		failed |= t == NULL;
		pairs[nout++].rest = t;
	}
	if (failed)
		result = NULL;
	else if (nout == 0)
		result = ctx->zero;
	else if (nout == 1)
		result = pairs[0].rest;
	else {
		const expr *local[32];
		const expr **out = nout <= 32 ? local : xmalloc(nout * sizeof *out);
		for (size_t i = 0; i < nout; i++)
			out[i] = pairs[i].rest;
		expr candidate = {.kind = EXPR_ADD, .nops = nout};
		candidate.u.add.terms = out;
		result = expr_intern(ctx, &candidate);
		if (out != local)
			free(out);
	}
out:
	if (list.items != list.inline_items)
		free(list.items);
	ctx->scratch_top = mark;
	return result;
}

const expr *expr_add(expr_ctx *ctx, const expr *a, const expr *b)
{
	const expr *terms[2] = {a, b};
	return expr_add_n(ctx, 2, terms);
}

const expr *expr_scale(expr_ctx *ctx, const expr *a, mpq_srcptr factor)
{
	const expr *f = expr_num(ctx, factor);
	return expr_mul(ctx, a, f);
}

const expr *expr_neg(expr_ctx *ctx, const expr *a)
{
	return expr_mul(ctx, ctx->minus_one, a);
}

const expr *expr_sub(expr_ctx *ctx, const expr *a, const expr *b)
{
	return expr_add(ctx, a, expr_neg(ctx, b));
}
