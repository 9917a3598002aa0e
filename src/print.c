/* print.c - display trees and the text, LaTeX and C writers.
 *
 * build() turns a canonical node into a display tree: a sum's terms are
 * grouped by their state part (the factors that involve time, a state, a noise
 * or a generic function), and a factor common to every term is pulled out, so
 * kappa*theta - kappa*v prints as kappa*(theta - v).  The writers then only
 * decide spelling and parentheses.  Grouping never changes the value, so the
 * text form parses back to the same canonical node.
 */
#include "print.h"

#include <ctype.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "expr-internal.h"
#include "rat.h"
#include "simp.h"
#include "xalloc.h"

typedef enum dkind { D_NUM, D_SYM, D_FUN, D_FAPP, D_SUM, D_PROD, D_NEG } dkind;

typedef struct dnode dnode;
typedef struct dfactor {
	dnode *base;
	const expr *base_expr; /* the canonical base, when known */
	const expr *exponent; /* a NUM, or a symbolic exponent */
	dnode *exp_display;   /* display of a symbolic exponent */
	int rank;	      /* sort key for display order */
} dfactor;

struct dnode {
	dkind kind;
	mpq_t num;	   /* D_NUM value (>= 0); D_PROD coefficient (> 0) */
	const expr *e;	   /* D_SYM, D_FUN, D_FAPP: the node */
	dnode *child;	   /* D_FUN argument; D_NEG operand */
	dnode **items;	   /* D_SUM terms; D_FAPP arguments */
	size_t n;
	dfactor *factors;  /* D_PROD */
	size_t nfactors;
	size_t order;	   /* in a collected sum: position of its first term in the node order */
	bool declared;	   /* D_FAPP at its declared arguments (written without them) */
};

typedef struct printer {
	expr_ctx *ctx;
	prn_format format;
	dnode **blocks;	    /* every node made: blocks of 8, 16, 32, ... nodes */
	size_t nblocks, block_used, block_size;
	expr_map rank_memo; /* node -> NUM holding its max symbol rank */
	bool frac_part;	    /* LaTeX: writing the only factor of a \\frac part */
	const prn_abbrev *abbrev;
	bool top;	    /* building the top-level node (never abbreviated) */
	int depth;	    /* nesting of build_add: collection stops past a bound */
	bool plain_states;  /* LaTeX: S rather than S_t */
	const expr *const *sum_terms; /* the terms of the sum being collected */
	size_t nsum_terms;
	expr_map order_map; /* term -> NUM position + 1, for the sum being collected */
	prn_c_calls *calls; /* C: the generic partials called, or NULL */
	bool in_exponent;   /* LaTeX: writing an exponent (no stacked fractions there) */
	bool followed;	    /* LaTeX: the factor being written has another after it */
} printer;

/* A zeroed node; only numbers and products carry (and initialise) num.
 * Blocks are not cleared when made: a node is, when it is handed out. */
static dnode *dnew(printer *p, dkind kind)
{
	if (p->block_used == p->block_size) {
		p->block_size = p->block_size ? 2 * p->block_size : 8;
		p->blocks = xreallocarray(p->blocks, p->nblocks + 1, sizeof *p->blocks);
		p->blocks[p->nblocks++] = xreallocarray(NULL, p->block_size, sizeof(dnode));
		p->block_used = 0;
	}
	dnode *d = &p->blocks[p->nblocks - 1][p->block_used++];
	memset(d, 0, sizeof *d);
	d->kind = kind;
	if (kind == D_NUM || kind == D_PROD)
		mpq_init(d->num);
	return d;
}

static void printer_free(printer *p)
{
	for (size_t b = 0, size = 8; b < p->nblocks; b++, size *= 2) {
		size_t used = b + 1 == p->nblocks ? p->block_used : size;
		for (size_t i = 0; i < used; i++) {
			dnode *d = &p->blocks[b][i];
			if (d->kind == D_NUM || d->kind == D_PROD)
				mpq_clear(d->num);
			free(d->items);
			free(d->factors);
		}
		free(p->blocks[b]);
	}
	free(p->blocks);
	expr_map_free(&p->rank_memo);
}

/* ------------------------------------------------------------------ ranks */

/* The highest display rank of a symbol in e; generic functions count as states. */
static int max_rank(printer *p, const expr *e)
{
	switch (e->kind) {
	case EXPR_NUM:
		return 0;
	case EXPR_SYM:
		return e->u.sym.rank;
	case EXPR_FAPP:
		return PRN_RANK_STATE;
	default:
		break;
	}
	const expr *known = expr_map_get(&p->rank_memo, e);
	if (known)
		return (int)mpz_get_si(mpq_numref(known->u.num));
	int best = 0;
	if (e->kind == EXPR_ADD) {
		for (size_t i = 0; i < e->nops; i++) {
			int r = max_rank(p, e->u.add.terms[i]);
			best = r > best ? r : best;
		}
	} else if (e->kind == EXPR_MUL) {
		for (size_t i = 0; i < e->nops; i++) {
			int r = max_rank(p, e->u.mul.bases[i]);
			int s = max_rank(p, e->u.mul.exps[i]);
			best = r > best ? r : best;
			best = s > best ? s : best;
		}
	} else if (e->kind == EXPR_FUN) {
		best = max_rank(p, e->u.fun.arg);
	}
	expr_map_put(&p->rank_memo, e, expr_int(p->ctx, best));
	return best;
}

/* Display order key of a factor base: parameters, sums of parameters, time,
 * states, noises; functions after symbols of their rank. */
static int factor_rank(printer *p, const expr *base)
{
	int r = max_rank(p, base) * 4;
	if (base->kind == EXPR_FUN || base->kind == EXPR_FAPP)
		r += 2;
	if (base->kind == EXPR_ADD)
		r += r == 0 ? 1 : 3;
	return r;
}

/* ------------------------------------------------------------------ building */

static dnode *build(printer *p, const expr *e);
static bool at_declared_args(const expr *e);

static int compare_dfactors(const void *x, const void *y)
{
	const dfactor *a = x, *b = y;
	if (a->rank != b->rank)
		return a->rank < b->rank ? -1 : 1;
	return 0;
}

static dnode *build_mul(printer *p, const expr *e)
{
	dnode *d = dnew(p, D_PROD);
	mpq_abs(d->num, e->u.mul.coef);
	d->factors = xcalloc(e->nops, sizeof *d->factors);
	d->nfactors = e->nops;
	for (size_t i = 0; i < e->nops; i++) {
		dfactor *f = &d->factors[i];
		f->base = build(p, e->u.mul.bases[i]);
		f->base_expr = e->u.mul.bases[i];
		f->exponent = e->u.mul.exps[i];
		f->exp_display = f->exponent->kind == EXPR_NUM ? NULL : build(p, f->exponent);
		f->rank = factor_rank(p, e->u.mul.bases[i]);
	}
	/* stable sort keeps the canonical order within a rank */
	for (size_t i = 1; i < d->nfactors; i++)
		for (size_t j = i; j > 0 && compare_dfactors(&d->factors[j - 1], &d->factors[j]) > 0; j--) {
			dfactor t = d->factors[j - 1];
			d->factors[j - 1] = d->factors[j];
			d->factors[j] = t;
		}
	if (mpq_sgn(e->u.mul.coef) < 0) {
		dnode *neg = dnew(p, D_NEG);
		neg->child = d;
		return neg;
	}
	return d;
}

typedef struct factor_count {
	const expr *base;
	int sign, rank;
	size_t count;
	const expr *exponent; /* the exponent in the first term that has the base */
	bool uniform;	      /* the same exponent in every term that has the base */
} factor_count;

static size_t factor_slot(const factor_count *table, size_t capacity, const expr *base, int sign)
{
	size_t slot = ((uintptr_t)base * 0x9e3779b97f4a7c15u + (unsigned)(sign + 1)) >> 7;
	slot &= capacity - 1;
	while (table[slot].base && !(table[slot].base == base && table[slot].sign == sign))
		slot = (slot + 1) & (capacity - 1);
	return slot;
}

/* The entry of (base, sign), new and zeroed if absent; the table grows so it
 * stays at most half full (it is sized by distinct bases, not by terms). */
static factor_count *factor_entry(factor_count **table, size_t *capacity, size_t *used, const expr *base,
				  int sign)
{
	size_t slot = factor_slot(*table, *capacity, base, sign);
	if ((*table)[slot].base)
		return &(*table)[slot];
	if (2 * (*used + 1) > *capacity) {
		size_t grown = 2 * *capacity;
		factor_count *bigger = xcalloc(grown, sizeof *bigger);
		for (size_t i = 0; i < *capacity; i++)
			if ((*table)[i].base)
				bigger[factor_slot(bigger, grown, (*table)[i].base, (*table)[i].sign)] = (*table)[i];
		free(*table);
		*table = bigger;
		*capacity = grown;
		slot = factor_slot(*table, *capacity, base, sign);
	}
	(*used)++;
	return &(*table)[slot];
}

/* The factor common to all terms of a sum: the symbolic bases present in every
 * term with numeric exponents of one sign (the smaller power), and an integer
 * content > 1 when every coefficient is an integer.  Returns 1 when none. */
static const expr *common_factor(printer *p, const expr *sum)
{
	expr_ctx *ctx = p->ctx;
	const expr *first = sum->u.add.terms[0];
	if (first->kind == EXPR_NUM)
		return expr_int(ctx, 1);
	mpz_t content;
	mpz_init(content);
	bool integers = true;
	for (size_t i = 0; i < sum->nops; i++) {
		const expr *t = sum->u.add.terms[i];
		const __mpq_struct *c = t->kind == EXPR_MUL ? t->u.mul.coef : NULL;
		if (c && !rat_is_integer(c))
			integers = false;
		if (c)
			mpz_gcd(content, content, mpq_numref(c));
		else
			mpz_set_ui(content, 1);
	}
	const expr *result = expr_int(ctx, 1);
	/* a fraction common to all terms in absolute value: 1/2*T - 1/2*t = 1/2*(T - t) */
	bool same_fraction = !integers;
	const __mpq_struct *first_coef = first->kind == EXPR_MUL ? first->u.mul.coef : NULL;
	for (size_t i = 0; i < sum->nops && same_fraction; i++) {
		const expr *t = sum->u.add.terms[i];
		const __mpq_struct *c = t->kind == EXPR_MUL ? t->u.mul.coef : NULL;
		same_fraction = c && first_coef && mpz_cmpabs(mpq_numref(c), mpq_numref(first_coef)) == 0 &&
				mpz_cmp(mpq_denref(c), mpq_denref(first_coef)) == 0;
	}
	if (same_fraction) {
		mpq_t q;
		mpq_init(q);
		mpq_abs(q, first_coef);
		result = expr_num(ctx, q);
		mpq_clear(q);
	}
	if (integers && mpz_cmp_ui(content, 1) > 0) {
		mpq_t q;
		mpq_init(q);
		mpq_set_z(q, content);
		result = expr_num(ctx, q);
		mpq_clear(q);
	}
	mpz_clear(content);
	size_t nbases = first->kind == EXPR_MUL ? first->nops : 1;
	for (size_t b = 0; b < nbases; b++) {
		const expr *base = first->kind == EXPR_MUL ? first->u.mul.bases[b] : first;
		const expr *exponent = first->kind == EXPR_MUL ? first->u.mul.exps[b] : expr_int(ctx, 1);
		if (exponent->kind != EXPR_NUM) {
			/* a symbolic power (S^n) is common when every term has the very same one */
			bool everywhere = true;
			for (size_t i = 1; i < sum->nops && everywhere; i++) {
				const expr *t = sum->u.add.terms[i];
				bool found = false;
				if (t->kind == EXPR_MUL)
					for (size_t j = 0; j < t->nops; j++)
						found |= t->u.mul.bases[j] == base && t->u.mul.exps[j] == exponent;
				everywhere = found;
			}
			if (everywhere)
				result = expr_mul(ctx, result, expr_pow(ctx, base, exponent));
			continue;
		}
		const expr *best = exponent;
		bool everywhere = true;
		for (size_t i = 1; i < sum->nops && everywhere; i++) {
			const expr *t = sum->u.add.terms[i];
			const expr *found = NULL;
			if (t == base)
				found = expr_int(ctx, 1);
			else if (t->kind == EXPR_MUL)
				for (size_t j = 0; j < t->nops; j++)
					if (t->u.mul.bases[j] == base)
						found = t->u.mul.exps[j];
			if (!found || found->kind != EXPR_NUM ||
			    mpq_sgn(found->u.num) != mpq_sgn(best->u.num)) {
				everywhere = false;
				break;
			}
			if (found != best && (mpq_sgn(best->u.num) > 0 ? rat_cmp(found->u.num, best->u.num) < 0
								: rat_cmp(found->u.num, best->u.num) > 0))
				best = found;
		}
		if (everywhere)
			result = expr_mul(ctx, result, expr_pow(ctx, base, best));
	}
	return result;
}

/* Does a monomial have a sum as a base?  Only then can dividing by it and
 * multiplying back give something else ((a+b)^-1 * (a + b) = 1). */
static bool has_sum_base(const expr *m)
{
	if (m->kind == EXPR_ADD)
		return true;
	if (m->kind != EXPR_MUL)
		return false;
	for (size_t i = 0; i < m->nops; i++)
		if (m->u.mul.bases[i]->kind == EXPR_ADD)
			return true;
	return false;
}

static void sort_factors(dnode *d)
{
	/* stable insertion sort: canonical order is kept within a rank */
	for (size_t i = 1; i < d->nfactors; i++)
		for (size_t j = i; j > 0 && compare_dfactors(&d->factors[j - 1], &d->factors[j]) > 0; j--) {
			dfactor t = d->factors[j - 1];
			d->factors[j - 1] = d->factors[j];
			d->factors[j] = t;
		}
}

/* Append the display of e to the factors of product d (flattening products). */
static void absorb(printer *p, dnode *d, const expr *e, int sum_rank)
{
	dnode *part = build(p, e);
	bool negative = part->kind == D_NEG;
	if (negative) {
		/* keep the sign in the coefficient: -(x)*y reads -x*y */
		mpq_neg(d->num, d->num);
		part = part->child;
	}
	if (part->kind == D_PROD) {
		mpq_mul(d->num, d->num, part->num);
		d->factors = xreallocarray(d->factors, d->nfactors + part->nfactors, sizeof *d->factors);
		memcpy(d->factors + d->nfactors, part->factors, part->nfactors * sizeof *d->factors);
		d->nfactors += part->nfactors;
		return;
	}
	if (part->kind == D_NUM) {
		mpq_mul(d->num, d->num, part->num);
		return;
	}
	d->factors = xreallocarray(d->factors, d->nfactors + 1, sizeof *d->factors);
	int rank = part->kind == D_SUM ? sum_rank : factor_rank(p, e);
	d->factors[d->nfactors++] = (dfactor){part, e, expr_int(p->ctx, 1), NULL, rank};
}

/* The display of factor * inner, with inner (usually a sum) kept together:
 * kappa*(theta - v), (mu - 1/2*sigma^2)*S, (...)*V_v. */
static dnode *product_display(printer *p, const expr *factor, const expr *inner)
{
	dnode *d = dnew(p, D_PROD);
	mpq_set_ui(d->num, 1, 1);
	int inner_rank = max_rank(p, inner) == 0 ? 1 : 4 * max_rank(p, inner) - 1;
	/* a sum of negative terms reads better negated: -(kappa + lambda*xi)*v */
	bool all_negative = inner->kind == EXPR_ADD;
	for (size_t i = 0; all_negative && i < inner->nops; i++)
		all_negative = simp_negative_form(inner->u.add.terms[i]);
	if (all_negative) {
		inner = expr_neg(p->ctx, inner);
		mpq_neg(d->num, d->num);
	}
	absorb(p, d, factor, 0);
	absorb(p, d, inner, inner_rank);
	sort_factors(d);
	if (mpq_sgn(d->num) < 0) {
		mpq_neg(d->num, d->num);
		dnode *neg = dnew(p, D_NEG);
		neg->child = d;
		return neg;
	}
	return d;
}

static bool is_generic_factor(const expr *base)
{
	return base->kind == EXPR_FAPP;
}

/* Split a term into its generic-function part (f_x, V_SS) and the rest. */
static const expr *function_part(printer *p, const expr *term, const expr **rest)
{
	expr_ctx *ctx = p->ctx;
	if (term->kind == EXPR_FAPP) {
		*rest = expr_int(ctx, 1);
		return term;
	}
	if (term->kind != EXPR_MUL) {
		*rest = term;
		return expr_int(ctx, 1);
	}
	expr_vec keys = {0}, others = {0};
	expr_vec_push(&others, expr_num(ctx, term->u.mul.coef));
	for (size_t i = 0; i < term->nops; i++) {
		const expr *f = expr_pow_pair(ctx, term->u.mul.bases[i], term->u.mul.exps[i]);
		expr_vec_push(is_generic_factor(term->u.mul.bases[i]) ? &keys : &others, f);
	}
	*rest = expr_mul_n(ctx, others.n, others.items);
	const expr *key = expr_mul_n(ctx, keys.n, keys.items);
	expr_vec_free(&keys);
	expr_vec_free(&others);
	return key;
}

/* Sort key of a generic-function group: time derivatives first, then by
 * order, the function itself last (V_t + ... V_S ... V_SS ... - r*V). */
static int derivative_rank(const expr *key)
{
	const expr *f = key;
	if (key->kind == EXPR_MUL && key->nops > 0)
		f = key->u.mul.bases[0];
	if (f->kind != EXPR_FAPP)
		return 1000;
	int total = 0, time = 0;
	for (size_t i = 0; i < f->nops; i++) {
		total += f->u.fapp.counts[i];
		if (strcmp(expr_func_arg_name(f->u.fapp.func, i), "t") == 0)
			time += f->u.fapp.counts[i];
	}
	if (total == 0)
		return 999;
	return time ? total : 100 + total;
}

static void push_sum_item(dnode *sum, dnode *item)
{
	sum->items = xreallocarray(sum->items, sum->n + 1, sizeof *sum->items);
	sum->items[sum->n++] = item;
}

static void build_terms(printer *p, dnode *sum, size_t n, const expr *const *terms);

/* The position of a term in the sum being collected (for the display order). */
static size_t term_order(const printer *p, const expr *term)
{
	const expr *position = expr_map_get(&p->order_map, term);
	return position ? (size_t)mpz_get_ui(mpq_numref(position->u.num)) - 1 : p->nsum_terms;
}

static dnode *ordered(dnode *d, size_t order)
{
	d->order = order;
	return d;
}

/* Terms that contain generic functions: grouped by the function part. */
typedef struct group_member {
	const expr *key;
	size_t index, place; /* the term's index, and its place in the rank order */
} group_member;

typedef struct group_run {
	size_t start, length, place; /* place: the first member's, in the rank order */
} group_run;

static int compare_members(const void *x, const void *y)
{
	const group_member *a = x, *b = y;
	uintptr_t ka = (uintptr_t)a->key, kb = (uintptr_t)b->key;
	if (ka != kb)
		return ka < kb ? -1 : 1;
	return (a->index > b->index) - (a->index < b->index);
}

static int compare_runs(const void *x, const void *y)
{
	const group_run *a = x, *b = y;
	return (a->place > b->place) - (a->place < b->place);
}

static void build_function_groups(printer *p, dnode *sum, size_t n, const expr *const *terms)
{
	expr_ctx *ctx = p->ctx;
	const expr **keys = xmalloc(n * sizeof *keys);
	const expr **rests = xmalloc(n * sizeof *rests);
	size_t *order = xmalloc(n * sizeof *order);
	int *rank = xmalloc(n * sizeof *rank);
	for (size_t i = 0; i < n; i++) {
		keys[i] = function_part(p, terms[i], &rests[i]);
		rank[i] = derivative_rank(keys[i]);
	}
	/* order by derivative rank, stable (a counting pass per distinct rank
	 * would do as well; ranks are few and n is the number of terms) */
	for (size_t i = 0; i < n; i++) {
		size_t j = i;
		for (; j > 0 && rank[order[j - 1]] > rank[i]; j--)
			order[j] = order[j - 1];
		order[j] = i;
	}
	free(rank);
	/* Groups of equal keys, members in term order, groups in the order of
	 * their first member in `order`: sort the terms by (key, index), so each
	 * group is a run, then the runs by their first place in `order`. */
	group_member *members = xmalloc(n * sizeof *members);
	for (size_t oi = 0; oi < n; oi++)
		members[order[oi]] = (group_member){.key = keys[order[oi]], .index = order[oi], .place = oi};
	qsort(members, n, sizeof *members, compare_members);
	group_run *runs = xmalloc(n * sizeof *runs);
	size_t nruns = 0;
	for (size_t i = 0; i < n; i++) {
		if (i == 0 || members[i].key != members[i - 1].key)
			runs[nruns++] = (group_run){.start = i, .place = members[i].place};
		runs[nruns - 1].length++;
		if (members[i].place < runs[nruns - 1].place)
			runs[nruns - 1].place = members[i].place;
	}
	qsort(runs, nruns, sizeof *runs, compare_runs);
	const expr **group = xmalloc(n * sizeof *group);
	for (size_t r = 0; r < nruns; r++) {
		size_t ng = runs[r].length;
		const expr *key = members[runs[r].start].key;
		for (size_t k = 0; k < ng; k++)
			group[k] = rests[members[runs[r].start + k].index];
		if (expr_is_one(key)) {
			build_terms(p, sum, ng, group);
			continue;
		}
		const expr *coefficient = expr_add_n(ctx, ng, group);
		if (ng == 1 || !coefficient || coefficient->kind != EXPR_ADD)
			push_sum_item(sum, build(p, expr_mul(ctx, coefficient, key)));
		else
			push_sum_item(sum, product_display(p, key, coefficient));
	}
	free(keys);
	free(rests);
	free(order);
	free(members);
	free(runs);
	free(group);
}

/* The factor base^e of term (e numeric), or NULL. */
static const expr *exponent_in(const expr *term, const expr *base)
{
	if (term == base)
		return NULL;
	if (term->kind != EXPR_MUL)
		return NULL;
	for (size_t i = 0; i < term->nops; i++)
		if (term->u.mul.bases[i] == base && term->u.mul.exps[i]->kind == EXPR_NUM)
			return term->u.mul.exps[i];
	return NULL;
}

static bool term_has(const expr *term, const expr *base, int sign)
{
	if (term == base)
		return sign > 0;
	const expr *e = exponent_in(term, base);
	return e && mpq_sgn(e->u.num) == sign;
}

/* Greedy collection: pull the factor shared by the most terms out of those
 * terms (states before parameters on ties), then collect the rest. */
static void build_terms(printer *p, dnode *sum, size_t n, const expr *const *terms)
{
	expr_ctx *ctx = p->ctx;
	if (n == 0)
		return;
	if (n == 1) {
		push_sum_item(sum, ordered(build(p, terms[0]), term_order(p, terms[0])));
		return;
	}
	/* count, in one pass, the terms that hold each base with each exponent sign */
	size_t capacity = 64, used = 0;
	factor_count *table = xcalloc(capacity, sizeof *table);
	const expr *best = NULL;
	int best_sign = 0;
	size_t best_count = 1;
	int best_rank = -1;
	for (size_t i = 0; i < n; i++) {
		const expr *t = terms[i];
		size_t nb = t->kind == EXPR_MUL ? t->nops : 1;
		for (size_t b = 0; b < nb; b++) {
			const expr *base = t->kind == EXPR_MUL ? t->u.mul.bases[b] : t;
			const expr *ex = t->kind == EXPR_MUL ? t->u.mul.exps[b] : NULL;
			if (base->kind == EXPR_NUM || (ex && ex->kind != EXPR_NUM))
				continue;
			int sign = ex ? mpq_sgn(ex->u.num) : 1;
			factor_count *entry = factor_entry(&table, &capacity, &used, base, sign);
			const expr *exponent = ex ? ex : expr_int(ctx, 1);
			if (!entry->base) {
				entry->base = base;
				entry->sign = sign;
				entry->rank = max_rank(p, base);
				entry->exponent = exponent;
				entry->uniform = true;
			}
			entry->count++;
			entry->uniform &= entry->exponent == exponent;
		}
	}
	/* the factor in most terms, states first on ties; only a factor with the
	 * same power in all of them, so the sum it leaves is free of it
	 * (x^2 + 2*x*y + y^2 stays expanded, kappa*theta - kappa*v is kappa*(theta - v)) */
	for (size_t slot = 0; slot < capacity; slot++) {
		const factor_count *entry = &table[slot];
		if (!entry->base || !entry->uniform || entry->count < 2)
			continue;
		if (entry->count > best_count || (entry->count == best_count && entry->rank > best_rank) ||
		    (entry->count == best_count && entry->rank == best_rank && best &&
		     expr_compare(entry->base, best) < 0)) {
			best = entry->base;
			best_sign = entry->sign;
			best_count = entry->count;
			best_rank = entry->rank;
		}
	}
	free(table);
	if (!best || best_count < 2) {
		for (size_t i = 0; i < n; i++)
			push_sum_item(sum, ordered(build(p, terms[i]), term_order(p, terms[i])));
		return;
	}
	expr_vec with = {0}, without = {0};
	for (size_t i = 0; i < n; i++)
		expr_vec_push(term_has(terms[i], best, best_sign) ? &with : &without, terms[i]);
	const expr *subset = expr_add_n(ctx, with.n, with.items);
	const expr *common = subset && subset->kind == EXPR_ADD ? common_factor(p, subset) : NULL;
	const expr *inner = common ? expr_div_terms(ctx, subset, common) : NULL;
	if (!inner || inner->kind != EXPR_ADD || expr_is_one(common) ||
	    (has_sum_base(common) && expr_mul(ctx, common, inner) != subset)) {
		for (size_t i = 0; i < n; i++)
			push_sum_item(sum, ordered(build(p, terms[i]), term_order(p, terms[i])));
	} else {
		size_t first = p->nsum_terms;
		for (size_t i = 0; i < with.n; i++) {
			size_t o = term_order(p, with.items[i]);
			first = o < first ? o : first;
		}
		push_sum_item(sum, ordered(product_display(p, common, inner), first));
		build_terms(p, sum, without.n, without.items);
	}
	expr_vec_free(&with);
	expr_vec_free(&without);
}

static bool sum_has_generic(const expr *e)
{
	for (size_t i = 0; i < e->nops; i++) {
		const expr *t = e->u.add.terms[i];
		if (t->kind == EXPR_FAPP)
			return true;
		if (t->kind == EXPR_MUL)
			for (size_t j = 0; j < t->nops; j++)
				if (t->u.mul.bases[j]->kind == EXPR_FAPP)
					return true;
	}
	return false;
}

static dnode *build_add(printer *p, const expr *e)
{
	expr_ctx *ctx = p->ctx;
	/* pulling a factor out must leave a smaller problem; the bound is a
	 * safety net against a division that re-expands into the same shape */
	const expr *common = p->depth < 64 ? common_factor(p, e) : NULL;
	if (common && !expr_is_one(common)) {
		const expr *inner = expr_div_terms(ctx, e, common);
		/* only a factoring that multiplies back to e: (a+b)^-1*(a + b) would not */
		if (inner && inner->kind == EXPR_ADD && inner->nops <= e->nops &&
		    (!has_sum_base(common) || expr_mul(ctx, common, inner) == e)) {
			p->depth++;
			dnode *d = product_display(p, common, inner);
			p->depth--;
			return d;
		}
	}
	dnode *sum = dnew(p, D_SUM);
	if (sum_has_generic(e)) {
		build_function_groups(p, sum, e->nops, (const expr *const *)e->u.add.terms);
	} else {
		const expr *const *keep_terms = p->sum_terms;
		size_t keep_n = p->nsum_terms;
		expr_map keep_map = p->order_map;
		p->sum_terms = (const expr *const *)e->u.add.terms;
		p->nsum_terms = e->nops;
		memset(&p->order_map, 0, sizeof p->order_map);
		for (size_t i = 0; i < e->nops; i++)
			expr_map_put(&p->order_map, e->u.add.terms[i], expr_int(ctx, (long)i + 1));
		build_terms(p, sum, e->nops, (const expr *const *)e->u.add.terms);
		/* groups stand where their first term stands in the node order: mu + 1/2*sigma^2*(n - 1) */
		for (size_t i = 1; i < sum->n; i++)
			for (size_t j = i; j > 0 && sum->items[j - 1]->order > sum->items[j]->order; j--) {
				dnode *t = sum->items[j - 1];
				sum->items[j - 1] = sum->items[j];
				sum->items[j] = t;
			}
		expr_map_free(&p->order_map);
		p->order_map = keep_map;
		p->sum_terms = keep_terms;
		p->nsum_terms = keep_n;
	}
	/* flatten nested sums and start with a positive term: mu - 1/2*sigma^2 */
	dnode *flat = dnew(p, D_SUM);
	for (size_t i = 0; i < sum->n; i++) {
		dnode *item = sum->items[i];
		if (item->kind == D_SUM)
			for (size_t j = 0; j < item->n; j++)
				push_sum_item(flat, item->items[j]);
		else
			push_sum_item(flat, item);
	}
	if (flat->n > 1 && flat->items[0]->kind == D_NEG) {
		for (size_t i = 1; i < flat->n; i++)
			if (flat->items[i]->kind != D_NEG) {
				dnode *positive = flat->items[i];
				memmove(flat->items + 1, flat->items, i * sizeof *flat->items);
				flat->items[0] = positive;
				break;
			}
	}
	return flat;
}

static dnode *build(printer *p, const expr *e)
{
	dnode *d;
	bool top = p->top;
	p->top = false;
	if (p->abbrev && !top && e->kind != EXPR_NUM && e->kind != EXPR_SYM) {
		for (size_t i = 0; i < p->abbrev->n; i++)
			if (p->abbrev->nodes[i] == e) {
				if (p->abbrev->used)
					p->abbrev->used[i] = true;
				d = dnew(p, D_SYM);
				d->e = expr_sym(p->ctx, p->abbrev->names[i]);
				return d;
			}
	}
	switch (e->kind) {
	case EXPR_NUM:
		d = dnew(p, D_NUM);
		mpq_abs(d->num, e->u.num);
		if (mpq_sgn(e->u.num) < 0) {
			dnode *neg = dnew(p, D_NEG);
			neg->child = d;
			return neg;
		}
		return d;
	case EXPR_SYM:
		d = dnew(p, D_SYM);
		d->e = e;
		return d;
	case EXPR_FUN:
		d = dnew(p, D_FUN);
		d->e = e;
		d->child = build(p, e->u.fun.arg);
		return d;
	case EXPR_FAPP:
		d = dnew(p, D_FAPP);
		d->e = e;
		d->declared = at_declared_args(e);
		if (p->format != PRN_C && d->declared)
			return d; /* written without its arguments (emit_fapp) */
		d->items = xmalloc(e->nops * sizeof *d->items);
		d->n = e->nops;
		for (size_t i = 0; i < e->nops; i++)
			d->items[i] = build(p, e->u.fapp.args[i]);
		return d;
	case EXPR_MUL:
		return build_mul(p, e);
	case EXPR_ADD:
		return build_add(p, e);
	}
	return dnew(p, D_NUM);
}

/* ------------------------------------------------------------------ names */

static const char *const greek[] = {
	"alpha", "beta", "gamma", "delta", "epsilon", "zeta", "eta", "theta", "iota", "kappa",
	"lambda", "mu", "nu", "xi", "pi", "rho", "sigma", "tau", "upsilon", "phi", "chi", "psi",
	"omega", "Gamma", "Delta", "Theta", "Lambda", "Xi", "Pi", "Sigma", "Upsilon", "Phi", "Psi",
	"Omega", NULL};

static bool is_greek(const char *word, size_t length)
{
	for (size_t i = 0; greek[i]; i++)
		if (strlen(greek[i]) == length && strncmp(greek[i], word, length) == 0)
			return true;
	return false;
}

char *prn_latex_name(const char *name, bool time_subscript)
{
	/* split into a stem and a subscript: sigma1 -> sigma_{1}, v_0 -> v_{0} */
	size_t length = strlen(name);
	size_t stem = 0;
	while (stem < length && isalpha((unsigned char)name[stem]))
		stem++;
	const char *sub = name + stem;
	if (*sub == '_')
		sub++;
	xbuf buf = {0};
	if (is_greek(name, stem)) {
		xbuf_putc(&buf, '\\');
		if (strncmp(name, "epsilon", stem) == 0 && stem == 7)
			xbuf_put(&buf, "varepsilon");
		else
			xbuf_putn(&buf, name, stem);
	} else if (stem == 1) {
		xbuf_putn(&buf, name, 1);
	} else {
		/* a longer stem: a Greek prefix (sigmaS) or an upright word */
		bool done = false;
		for (size_t i = 0; greek[i] && !done; i++) {
			size_t g = strlen(greek[i]);
			if (g < stem && strncmp(name, greek[i], g) == 0) {
				xbuf_printf(&buf, "\\%s", greek[i]);
				sub = name + g;
				done = true;
			}
		}
		if (!done)
			xbuf_printf(&buf, "\\mathit{%.*s}", (int)stem, name);
	}
	if (*sub || time_subscript) {
		xbuf_put(&buf, "_{");
		for (const char *c = sub; *c; c++) {
			if (*c == '_')
				xbuf_putc(&buf, ',');
			else
				xbuf_putc(&buf, *c);
		}
		if (time_subscript)
			xbuf_put(&buf, *sub ? ",t" : "t");
		xbuf_putc(&buf, '}');
	}
	return xbuf_take(&buf);
}

static bool all_single_letters(const expr *func)
{
	for (size_t i = 0; i < expr_func_arity(func); i++)
		if (strlen(expr_func_arg_name(func, i)) != 1)
			return false;
	return true;
}

char *prn_fapp_name(const expr *e)
{
	if (e->kind != EXPR_FAPP)
		return NULL;
	const expr *func = e->u.fapp.func;
	xbuf buf = {0};
	xbuf_put(&buf, func->u.sym.name);
	size_t total = 0;
	for (size_t i = 0; i < e->nops; i++)
		total += e->u.fapp.counts[i];
	if (total > 0) {
		bool single = all_single_letters(func);
		xbuf_put(&buf, single ? "_" : "_{");
		bool first = true;
		for (size_t i = 0; i < e->nops; i++)
			for (unsigned k = 0; k < e->u.fapp.counts[i]; k++) {
				if (!single && !first)
					xbuf_putc(&buf, ',');
				xbuf_put(&buf, expr_func_arg_name(func, i));
				first = false;
			}
		if (!single)
			xbuf_putc(&buf, '}');
	}
	return xbuf_take(&buf);
}

bool prn_fapp_declared(const expr *e)
{
	return e->kind == EXPR_FAPP && at_declared_args(e);
}

/* Are the arguments exactly the declared argument symbols? */
static bool at_declared_args(const expr *e)
{
	const expr *func = e->u.fapp.func;
	for (size_t i = 0; i < e->nops; i++) {
		const expr *a = e->u.fapp.args[i];
		if (a->kind != EXPR_SYM || strcmp(a->u.sym.name, expr_func_arg_name(func, i)) != 0)
			return false;
	}
	return true;
}

/* ------------------------------------------------------------------ writing */

enum { P_SUM = 1, P_NEG = 2, P_PROD = 3, P_POW = 4, P_ATOM = 5 };

static int precedence(const dnode *d)
{
	switch (d->kind) {
	case D_SUM:
		return d->n > 1 ? P_SUM : precedence(d->items[0]);
	case D_NEG:
		return P_NEG;
	case D_PROD: {
		if (d->nfactors == 1 && mpq_cmp_ui(d->num, 1, 1) == 0 && d->factors[0].exponent->kind == EXPR_NUM &&
		    mpq_cmp_ui(d->factors[0].exponent->u.num, 1, 1) == 0)
			return precedence(d->factors[0].base); /* a lone factor reads as its base */
		if (d->nfactors == 1 && mpq_cmp_ui(d->num, 1, 1) == 0 &&
		    d->factors[0].exponent->kind == EXPR_NUM && mpq_sgn(d->factors[0].exponent->u.num) > 0)
			return P_POW;
		return P_PROD;
	}
	case D_NUM:
		return rat_is_integer(d->num) ? P_ATOM : P_PROD;
	default:
		return P_ATOM;
	}
}

static void emit(printer *p, xbuf *out, const dnode *d);

static void emit_paren(printer *p, xbuf *out, const dnode *d, bool paren)
{
	if (paren)
		xbuf_put(out, p->format == PRN_LATEX ? "\\left(" : "(");
	emit(p, out, d);
	if (paren)
		xbuf_put(out, p->format == PRN_LATEX ? "\\right)" : ")");
}

static void emit_number(printer *p, xbuf *out, const mpq_t q)
{
	if (p->format == PRN_C) {
		if (rat_is_integer(q)) {
			char *s = rat_to_string(q);
			xbuf_put(out, s);
			free(s);
			return;
		}
		double value = rat_to_double(q);
		char text[64];
		snprintf(text, sizeof text, "%.17g", value);
		mpq_t back;
		mpq_init(back);
		rat_set_double(back, value);
		bool exact = mpq_equal(back, q) && strlen(text) < 12;
		mpq_clear(back);
		if (exact) {
			xbuf_put(out, text);
		} else {
			char *num = mpz_get_str(NULL, 10, mpq_numref(q));
			char *den = mpz_get_str(NULL, 10, mpq_denref(q));
			xbuf_printf(out, "(%s.0/%s.0)", num, den);
			void (*release)(void *, size_t);
			mp_get_memory_functions(NULL, NULL, &release);
			release(num, strlen(num) + 1);
			release(den, strlen(den) + 1);
		}
		return;
	}
	if (p->format == PRN_LATEX && !rat_is_integer(q) && !p->in_exponent) {
		char *num = rat_to_string(q);
		char *slash = strchr(num, '/');
		*slash = '\0';
		xbuf_printf(out, "\\tfrac{%s}{%s}", num, slash + 1);
		free(num);
		return;
	}
	char *s = rat_to_string(q);
	xbuf_put(out, s);
	free(s);
}

static void emit_symbol(printer *p, xbuf *out, const expr *sym)
{
	if (p->format == PRN_LATEX) {
		int rank = sym->u.sym.rank;
		char *name = prn_latex_name(sym->u.sym.name,
					    !p->plain_states && (rank == PRN_RANK_STATE || rank == PRN_RANK_NOISE));
		xbuf_put(out, name);
		free(name);
		return;
	}
	xbuf_put(out, sym->u.sym.name);
}

static bool is_atomic(const dnode *d)
{
	return precedence(d) == P_ATOM;
}

static void emit_fun(printer *p, xbuf *out, const dnode *d)
{
	expr_builtin fn = d->e->u.fun.fn;
	if (p->format == PRN_C) {
		if (fn == EXPR_F_NCDF) {
			/* Phi(x) = erfc(-x/sqrt(2))/2, with 1/sqrt(2) spelled out: C99 has no M_SQRT1_2 */
			xbuf_put(out, "(0.5*erfc(-0.70710678118654752*(");
			emit(p, out, d->child);
			xbuf_put(out, ")))");
			return;
		}
		if (fn == EXPR_F_NPDF) {
			xbuf_put(out, "(0.3989422804014327*exp(-0.5*(");
			emit(p, out, d->child);
			xbuf_put(out, ")*(");
			emit(p, out, d->child);
			xbuf_put(out, ")))");
			return;
		}
		xbuf_printf(out, "%s(", expr_builtin_c_name(fn));
		emit(p, out, d->child);
		xbuf_putc(out, ')');
		return;
	}
	if (p->format == PRN_LATEX) {
		if (fn == EXPR_F_ABS) {
			xbuf_put(out, "\\left|");
			emit(p, out, d->child);
			xbuf_put(out, "\\right|");
			return;
		}
		if (fn == EXPR_F_EXP) {
			bool outer = p->in_exponent;
			p->in_exponent = true;
			p->followed = false;
			xbuf_put(out, "e^{");
			emit(p, out, d->child);
			xbuf_putc(out, '}');
			p->in_exponent = outer;
			return;
		}
		xbuf_put(out, expr_builtin_latex(fn));
		/* \log v without brackets only where nothing follows: \log v S would
		 * read as the log of v S */
		bool plain = (fn == EXPR_F_LOG || fn == EXPR_F_SIN || fn == EXPR_F_COS) && !p->followed;
		p->followed = false;
		if (plain && d->child->kind == D_SYM) {
			xbuf_putc(out, ' ');
			emit(p, out, d->child);
		} else {
			emit_paren(p, out, d->child, true);
		}
		return;
	}
	xbuf_printf(out, "%s(", expr_builtin_name(fn));
	emit(p, out, d->child);
	xbuf_putc(out, ')');
}

/* Remember a generic partial called from C (once per name). */
static void note_call(prn_c_calls *calls, const char *name, size_t nargs)
{
	for (size_t i = 0; i < calls->n; i++)
		if (strcmp(calls->names[i], name) == 0)
			return;
	calls->names = xreallocarray(calls->names, calls->n + 1, sizeof *calls->names);
	calls->nargs = xreallocarray(calls->nargs, calls->n + 1, sizeof *calls->nargs);
	calls->names[calls->n] = xstrdup(name);
	calls->nargs[calls->n++] = nargs;
}

void prn_c_calls_free(prn_c_calls *calls)
{
	for (size_t i = 0; i < calls->n; i++)
		free(calls->names[i]);
	free(calls->names);
	free(calls->nargs);
	*calls = (prn_c_calls){0};
}

static void emit_fapp(printer *p, xbuf *out, const dnode *d)
{
	char *name = prn_fapp_name(d->e);
	bool declared = d->declared;
	if (p->format == PRN_C) {
		for (char *c = name; *c; c++)
			if (*c == '{' || *c == '}' || *c == ',')
				*c = '_';
		/* drop doubled underscores from f_{x,y} -> f__x_y_ */
		xbuf clean = {0};
		for (char *c = name; *c; c++)
			if (!(*c == '_' && (c[1] == '_' || c[1] == '\0')))
				xbuf_putc(&clean, *c);
		xbuf_put(out, clean.data);
		if (p->calls)
			note_call(p->calls, clean.data, d->n);
		xbuf_free(&clean);
		declared = false; /* C always names the arguments */
	} else if (p->format == PRN_LATEX) {
		/* partials in Leibniz notation: \frac{\partial^{2} V}{\partial S \partial v} */
		const expr *func = d->e->u.fapp.func;
		char *stem = prn_latex_name(func->u.sym.name, false);
		size_t total = 0;
		for (size_t i = 0; i < d->e->nops; i++)
			total += d->e->u.fapp.counts[i];
		if (total == 0) {
			xbuf_put(out, stem);
		} else {
			if (total == 1)
				xbuf_printf(out, "\\frac{\\partial %s}{", stem);
			else
				xbuf_printf(out, "\\frac{\\partial^{%zu} %s}{", total, stem);
			bool first = true;
			for (size_t i = 0; i < d->e->nops; i++) {
				unsigned k = d->e->u.fapp.counts[i];
				if (!k)
					continue;
				char *arg = prn_latex_name(expr_func_arg_name(func, i), false);
				xbuf_printf(out, first ? "\\partial %s" : " \\partial %s", arg);
				if (k > 1)
					xbuf_printf(out, "^{%u}", k);
				free(arg);
				first = false;
			}
			xbuf_putc(out, '}');
		}
		free(stem);
	} else {
		xbuf_put(out, name);
	}
	free(name);
	if (declared)
		return;
	xbuf_put(out, p->format == PRN_LATEX ? "\\left(" : "(");
	for (size_t i = 0; i < d->n; i++) {
		if (i)
			xbuf_put(out, ", ");
		emit(p, out, d->items[i]);
	}
	xbuf_put(out, p->format == PRN_LATEX ? "\\right)" : ")");
}

/* base^exponent with |exponent| (the sign is handled by the caller). */
static void emit_power(printer *p, xbuf *out, const dfactor *f, bool absolute)
{
	const dnode *base = f->base;
	bool bare = p->frac_part; /* only this factor may drop its parentheses */
	p->frac_part = false;
	if (f->exp_display) {
		const dnode *ex = f->exp_display;
		if (absolute && ex->kind == D_NEG)
			ex = ex->child;
		if (p->format == PRN_C) {
			xbuf_put(out, "pow(");
			emit(p, out, base);
			xbuf_put(out, ", ");
			emit(p, out, ex);
			xbuf_putc(out, ')');
			return;
		}
		emit_paren(p, out, base, !is_atomic(base));
		if (p->format == PRN_LATEX) {
			bool outer = p->in_exponent;
			p->in_exponent = true;
			p->followed = false;
			xbuf_put(out, "^{");
			emit(p, out, ex);
			xbuf_putc(out, '}');
			p->in_exponent = outer;
		} else {
			xbuf_putc(out, '^');
			emit_paren(p, out, ex, !is_atomic(ex));
		}
		return;
	}
	mpq_t e;
	mpq_init(e);
	mpq_set(e, f->exponent->u.num);
	if (absolute)
		mpq_abs(e, e);
	if (mpq_cmp_ui(e, 1, 1) == 0) {
		bool paren = precedence(base) < P_PROD + (p->format == PRN_LATEX ? 0 : 1) && base->kind != D_FUN;
		emit_paren(p, out, base, paren && !bare);
	} else if (mpq_cmp_ui(e, 1, 2) == 0) {
		if (p->format == PRN_LATEX) {
			xbuf_put(out, "\\sqrt{");
			emit(p, out, base);
			xbuf_putc(out, '}');
		} else {
			xbuf_put(out, "sqrt(");
			emit(p, out, base);
			xbuf_putc(out, ')');
		}
	} else if (p->format == PRN_C) {
		if (rat_is_integer(e) && mpz_cmp_ui(mpq_numref(e), 4) <= 0 && mpq_sgn(e) > 0 && is_atomic(base)) {
			unsigned long n = mpz_get_ui(mpq_numref(e));
			for (unsigned long i = 0; i < n; i++) {
				if (i)
					xbuf_putc(out, '*');
				emit(p, out, base);
			}
		} else {
			xbuf_put(out, "pow(");
			emit(p, out, base);
			xbuf_put(out, ", ");
			emit_number(p, out, e);
			xbuf_putc(out, ')');
		}
	} else {
		bool base_paren = !is_atomic(base) || (base->kind == D_FUN && p->format == PRN_LATEX &&
						      base->e->u.fun.fn != EXPR_F_ABS);
		emit_paren(p, out, base, base_paren);
		if (p->format == PRN_LATEX) {
			/* v^{3/2}: an exponent holds no stacked fraction */
			char *s = rat_to_string(e);
			xbuf_printf(out, "^{%s}", s);
			free(s);
		} else {
			char *s = rat_to_string(e);
			if (rat_is_integer(e) && mpq_sgn(e) > 0)
				xbuf_printf(out, "^%s", s);
			else
				xbuf_printf(out, "^(%s)", s);
			free(s);
		}
	}
	mpq_clear(e);
}

/* Text only: a sum raised to an integer power cannot share a denominator
 * with other factors, nor be written (a + b)^2 under a bar, because reading
 * back would expand it: such factors are divided one by one (/(a + b)), and
 * higher powers stay in the numerator as (a + b)^(-2). */
static bool lone_sum(const printer *p, const dfactor *f)
{
	return p->format == PRN_TEXT && f->base_expr && f->base_expr->kind == EXPR_ADD && !f->exp_display &&
	       rat_is_integer(f->exponent->u.num) && mpq_sgn(f->exponent->u.num) < 0;
}

static bool is_minus_one(const dfactor *f)
{
	return !f->exp_display && mpq_cmp_si(f->exponent->u.num, -1, 1) == 0;
}

static bool in_denominator(const dfactor *f)
{
	if (f->exp_display)
		return f->exp_display->kind == D_NEG;
	return mpq_sgn(f->exponent->u.num) < 0;
}

/* Which side of the fraction bar a factor goes: 0 numerator, 1 the
 * denominator group, 2 a division of its own. */
static int side(const printer *p, const dfactor *f)
{
	if (!in_denominator(f))
		return 0;
	if (lone_sum(p, f))
		return is_minus_one(f) ? 2 : 0;
	return 1;
}

static void emit_factor_list(printer *p, xbuf *out, const dnode *d, bool denominator,
			     const char *coef_text, size_t *count)
{
	const char *times = p->format == PRN_LATEX ? " " : "*";
	if (coef_text) {
		xbuf_put(out, coef_text);
		(*count)++;
	}
	size_t last = d->nfactors;
	for (size_t i = 0; i < d->nfactors; i++)
		if (side(p, &d->factors[i]) == (denominator ? 1 : 0))
			last = i;
	for (size_t i = 0; i < d->nfactors; i++) {
		const dfactor *f = &d->factors[i];
		if (side(p, f) != (denominator ? 1 : 0))
			continue;
		if (*count)
			xbuf_put(out, times);
		p->followed = p->format == PRN_LATEX && i != last;
		emit_power(p, out, f, denominator);
		p->followed = false;
		(*count)++;
	}
}

static size_t count_side(const printer *p, const dnode *d, int which)
{
	size_t n = 0;
	for (size_t i = 0; i < d->nfactors; i++)
		n += side(p, &d->factors[i]) == which;
	return n;
}

/* Text: the divisions of their own, /(a + b) */
static void emit_lone_divisions(printer *p, xbuf *out, const dnode *d)
{
	for (size_t i = 0; i < d->nfactors; i++) {
		const dfactor *f = &d->factors[i];
		if (side(p, f) != 2)
			continue;
		xbuf_put(out, "/(");
		emit(p, out, f->base);
		xbuf_putc(out, ')');
	}
}

static char *number_text(printer *p, const mpz_t z)
{
	mpq_t q;
	mpq_init(q);
	mpq_set_z(q, z);
	xbuf buf = {0};
	emit_number(p, &buf, q);
	mpq_clear(q);
	return xbuf_take(&buf);
}

static void emit_prod(printer *p, xbuf *out, const dnode *d)
{
	size_t nnum = count_side(p, d, 0), nden = count_side(p, d, 1);
	bool integer = rat_is_integer(d->num);
	bool unit = mpq_cmp_ui(d->num, 1, 1) == 0;
	if (nden == 0 && !integer && count_side(p, d, 2) == 1 && p->format == PRN_TEXT) {
		/* x/(2*(a + b)) reads back the same: a sum's rational content is pulled out */
		char *top = mpz_cmp_ui(mpq_numref(d->num), 1) != 0 || nnum == 0
				    ? number_text(p, mpq_numref(d->num)) : NULL;
		size_t count = 0;
		emit_factor_list(p, out, d, false, top, &count);
		free(top);
		char *bottom = number_text(p, mpq_denref(d->num));
		for (size_t i = 0; i < d->nfactors; i++)
			if (side(p, &d->factors[i]) == 2) {
				xbuf_printf(out, "/(%s*(", bottom);
				emit(p, out, d->factors[i].base);
				xbuf_put(out, "))");
			}
		free(bottom);
		return;
	}
	bool inline_fraction = p->format == PRN_LATEX && p->in_exponent; /* e^{a/2}, not e^{\tfrac{1}{2} a} */
	if (nden == 0 && (integer || !inline_fraction)) {
		char *coef = NULL;
		if (!unit || nnum == 0) {
			xbuf buf = {0};
			emit_number(p, &buf, d->num);
			coef = xbuf_take(&buf);
		}
		size_t count = 0;
		emit_factor_list(p, out, d, false, coef, &count);
		free(coef);
		emit_lone_divisions(p, out, d);
		return;
	}
	/* a fraction: numerator (with the coefficient's numerator) over denominator */
	char *top = mpz_cmp_ui(mpq_numref(d->num), 1) != 0 || nnum == 0
			    ? number_text(p, mpq_numref(d->num)) : NULL;
	char *bottom = integer ? NULL : number_text(p, mpq_denref(d->num));
	xbuf num = {0}, den = {0};
	size_t count = 0;
	p->frac_part = p->format == PRN_LATEX && nnum + (top != NULL) == 1;
	emit_factor_list(p, &num, d, false, top, &count);
	size_t nnum_parts = count;
	count = 0;
	p->frac_part = p->format == PRN_LATEX && nden + (bottom != NULL) == 1;
	emit_factor_list(p, &den, d, true, bottom, &count);
	p->frac_part = false;
	size_t nden_parts = count;
	free(top);
	free(bottom);
	if (p->format == PRN_LATEX && !inline_fraction) {
		xbuf_printf(out, "\\frac{%s}{%s}", num.data, den.data);
	} else {
		bool num_paren = p->format == PRN_C && nnum_parts > 1;
		if (num_paren)
			xbuf_putc(out, '(');
		xbuf_put(out, num.data);
		if (num_paren)
			xbuf_putc(out, ')');
		xbuf_putc(out, '/');
		bool single = nden_parts == 1;
		if (single && nden == 1) {
			/* one factor: parenthesize only a product or sum at the top level
			 * (x/S^2 is x/(S^2) since ^ binds tighter) */
			int depth = 0;
			for (const char *c = den.data; *c && single; c++) {
				if (*c == '(')
					depth++;
				else if (*c == ')')
					depth--;
				else if (depth == 0 && (*c == '*' || *c == '/' || *c == ' '))
					single = false;
			}
		}
		if (!single)
			xbuf_putc(out, '(');
		xbuf_put(out, den.data);
		if (!single)
			xbuf_putc(out, ')');
		emit_lone_divisions(p, out, d);
	}
	xbuf_free(&num);
	xbuf_free(&den);
}

static void emit(printer *p, xbuf *out, const dnode *d)
{
	switch (d->kind) {
	case D_NUM:
		emit_number(p, out, d->num);
		return;
	case D_SYM:
		emit_symbol(p, out, d->e);
		return;
	case D_FUN:
		emit_fun(p, out, d);
		return;
	case D_FAPP:
		emit_fapp(p, out, d);
		return;
	case D_NEG:
		xbuf_putc(out, '-');
		emit_paren(p, out, d->child, precedence(d->child) < P_PROD);
		return;
	case D_SUM:
		for (size_t i = 0; i < d->n; i++) {
			const dnode *term = d->items[i];
			if (term->kind == D_NEG) {
				xbuf_put(out, i ? " - " : "-");
				emit_paren(p, out, term->child, precedence(term->child) < P_PROD);
			} else {
				if (i)
					xbuf_put(out, " + ");
				emit(p, out, term);
			}
		}
		return;
	case D_PROD:
		emit_prod(p, out, d);
		return;
	}
}

char *prn_expr(expr_ctx *ctx, const expr *e, prn_format format)
{
	return prn_expr_abbrev(ctx, e, format, NULL);
}

char *prn_expr_abbrev(expr_ctx *ctx, const expr *e, prn_format format, const prn_abbrev *abbrev)
{
	return prn_expr_c(ctx, e, format, abbrev, NULL);
}

char *prn_expr_c(expr_ctx *ctx, const expr *e, prn_format format, const prn_abbrev *abbrev, prn_c_calls *calls)
{
	if (!e)
		return xstrdup("<error>");
	printer p = {.ctx = ctx, .format = format, .abbrev = abbrev, .top = true, .calls = calls};
	if (format == PRN_LATEX_PLAIN) {
		p.format = PRN_LATEX;
		p.plain_states = true;
	}
	dnode *d = build(&p, e);
	xbuf out = {0};
	emit(&p, &out, d);
	printer_free(&p);
	return xbuf_take(&out);
}

/* One term coefficient*increment of a differential.  The sign and the
 * parentheses come from the coefficient's display tree: a negated product
 * leads with a minus, a sum is bracketed, a sum of negative terms is written
 * -(a + b).  Nothing here reads printed text. */
static void emit_term(printer *p, xbuf *out, const expr *c, const char *increment, bool first)
{
	p->top = true;
	dnode *d = build(p, c);
	while (d->kind == D_SUM && d->n == 1)
		d = d->items[0];
	bool negative = false;
	if (d->kind == D_NEG) {
		negative = true;
		d = d->child;
	} else if (d->kind == D_SUM) {
		bool all_negative = true;
		for (size_t i = 0; i < d->n && all_negative; i++)
			all_negative = d->items[i]->kind == D_NEG;
		if (all_negative) {
			negative = true;
			p->top = true;
			d = build(p, expr_neg(p->ctx, c));
		}
	}
	xbuf_put(out, first ? (negative ? "-" : "") : (negative ? " - " : " + "));
	if (d->kind == D_NUM && mpq_cmp_ui(d->num, 1, 1) == 0) {
		xbuf_put(out, increment); /* dW, not 1*dW */
		return;
	}
	bool latex = p->format == PRN_LATEX;
	bool paren = precedence(d) < P_PROD;
	emit_paren(p, out, d, paren);
	xbuf_put(out, latex ? (paren ? "" : "\\,") : "*");
	xbuf_put(out, increment);
}

char *prn_differential(expr_ctx *ctx, const prn_diff *diff, prn_format format, const prn_abbrev *abbrev)
{
	printer p = {.ctx = ctx, .format = format, .abbrev = abbrev};
	if (format == PRN_LATEX_PLAIN) {
		p.format = PRN_LATEX;
		p.plain_states = true;
	}
	bool latex = p.format == PRN_LATEX;
	xbuf out = {0};
	bool first = true;
	if (diff->dt && !expr_is_zero(diff->dt)) {
		emit_term(&p, &out, diff->dt, latex ? "\\mathrm{d}t" : "dt", first);
		first = false;
	}
	for (size_t k = 0; k < diff->n; k++) {
		if (expr_is_zero(diff->dw[k]))
			continue;
		const char *name = expr_sym_name(diff->noises[k]);
		char *increment;
		if (latex) {
			char *l = prn_latex_name(name, true);
			increment = xasprintf(diff->stratonovich ? "\\circ\\mathrm{d}%s" : "\\mathrm{d}%s", l);
			free(l);
		} else {
			increment = xasprintf("d%s", name);
		}
		emit_term(&p, &out, diff->dw[k], increment, first);
		free(increment);
		first = false;
	}
	if (first)
		xbuf_put(&out, "0");
	printer_free(&p);
	return xbuf_take(&out);
}

/* ------------------------------------------------------------------ flat printer */

static void flat(expr_ctx *ctx, xbuf *out, const expr *e)
{
	switch (e->kind) {
	case EXPR_NUM: {
		char *s = rat_to_string(e->u.num);
		bool paren = mpq_sgn(e->u.num) < 0 || !rat_is_integer(e->u.num);
		xbuf_printf(out, paren ? "(%s)" : "%s", s);
		free(s);
		return;
	}
	case EXPR_SYM:
		xbuf_put(out, e->u.sym.name);
		return;
	case EXPR_FUN:
		xbuf_printf(out, "%s(", expr_builtin_name(e->u.fun.fn));
		flat(ctx, out, e->u.fun.arg);
		xbuf_putc(out, ')');
		return;
	case EXPR_FAPP: {
		char *name = prn_fapp_name(e);
		xbuf_printf(out, "%s(", name);
		free(name);
		for (size_t i = 0; i < e->nops; i++) {
			if (i)
				xbuf_put(out, ", ");
			flat(ctx, out, e->u.fapp.args[i]);
		}
		xbuf_putc(out, ')');
		return;
	}
	case EXPR_MUL: {
		char *s = rat_to_string(e->u.mul.coef);
		xbuf_printf(out, "(%s)", s);
		free(s);
		for (size_t i = 0; i < e->nops; i++) {
			xbuf_put(out, "*(");
			flat(ctx, out, e->u.mul.bases[i]);
			xbuf_put(out, ")^(");
			flat(ctx, out, e->u.mul.exps[i]);
			xbuf_putc(out, ')');
		}
		return;
	}
	case EXPR_ADD:
		xbuf_putc(out, '(');
		for (size_t i = 0; i < e->nops; i++) {
			if (i)
				xbuf_put(out, " + ");
			flat(ctx, out, e->u.add.terms[i]);
		}
		xbuf_putc(out, ')');
		return;
	}
}

char *prn_expr_flat(expr_ctx *ctx, const expr *e)
{
	if (!e)
		return xstrdup("<error>");
	xbuf out = {0};
	flat(ctx, &out, e);
	return xbuf_take(&out);
}

void prn_json_string(xbuf *buf, const char *text)
{
	xbuf_putc(buf, '"');
	for (const unsigned char *c = (const unsigned char *)text; *c; c++) {
		switch (*c) {
		case '"':
			xbuf_put(buf, "\\\"");
			break;
		case '\\':
			xbuf_put(buf, "\\\\");
			break;
		case '\n':
			xbuf_put(buf, "\\n");
			break;
		case '\t':
			xbuf_put(buf, "\\t");
			break;
		default:
			if (*c < 0x20)
				xbuf_printf(buf, "\\u%04x", *c);
			else
				xbuf_putc(buf, (char)*c);
		}
	}
	xbuf_putc(buf, '"');
}
