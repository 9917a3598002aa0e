/* print-build.c - display trees: grouping for people.
 *
 * prn_build() turns a canonical node into a display tree: a sum's terms are
 * grouped by their state part (the factors that involve time, a state, a noise
 * or a generic function), and a factor common to every term is pulled out, so
 * kappa*theta - kappa*v prints as kappa*(theta - v).  The writers (print.c)
 * then only decide spelling and parentheses.  Grouping never changes the
 * value, so the text form parses back to the same canonical node.
 */
#include "print-internal.h"

#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "rat.h"
#include "simp.h"
#include "xalloc.h"

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

/* The display of -d. */
static dnode *negated(printer *p, dnode *d)
{
	dnode *neg = dnew(p, D_NEG);
	neg->child = d;
	return neg;
}

void prn_printer_free(printer *p)
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

static int compare_dfactors(const void *x, const void *y)
{
	const dfactor *a = x, *b = y;
	if (a->rank != b->rank)
		return a->rank < b->rank ? -1 : 1;
	return 0;
}

/* Stable insertion sort by rank: canonical order is kept within a rank.
 * Inline: every product built passes here. */
static inline void sort_factors(dnode *d)
{
	for (size_t i = 1; i < d->nfactors; i++)
		for (size_t j = i; j > 0 && compare_dfactors(&d->factors[j - 1], &d->factors[j]) > 0; j--) {
			dfactor t = d->factors[j - 1];
			d->factors[j - 1] = d->factors[j];
			d->factors[j] = t;
		}
}

static dnode *build_mul(printer *p, const expr *e)
{
	dnode *d = dnew(p, D_PROD);
	mpq_abs(d->num, e->u.mul.coef);
	d->factors = xcalloc(e->nops, sizeof *d->factors);
	d->nfactors = e->nops;
	for (size_t i = 0; i < e->nops; i++) {
		dfactor *f = &d->factors[i];
		f->base = prn_build(p, e->u.mul.bases[i]);
		f->base_expr = e->u.mul.bases[i];
		f->exponent = e->u.mul.exps[i];
		f->exp_display = f->exponent->kind == EXPR_NUM ? NULL : prn_build(p, f->exponent);
		f->rank = factor_rank(p, e->u.mul.bases[i]);
	}
	sort_factors(d);
	return mpq_sgn(e->u.mul.coef) < 0 ? negated(p, d) : d;
}

typedef struct factor_count {
	const expr *base;
	int sign, rank;
	size_t count;
	const expr *exponent; /* the exponent in the first term that has the base */
	bool uniform;         /* the same exponent in every term that has the base */
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
				bigger[factor_slot(bigger, grown, (*table)[i].base, (*table)[i].sign)] =
				        (*table)[i];
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
						found |= t->u.mul.bases[j] == base &&
						         t->u.mul.exps[j] == exponent;
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
			if (found != best &&
			    (mpq_sgn(best->u.num) > 0 ? rat_cmp(found->u.num, best->u.num) < 0
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

/* Append the display of e to the factors of product d (flattening products). */
static void absorb(printer *p, dnode *d, const expr *e, int sum_rank)
{
	dnode *part = prn_build(p, e);
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
	const expr *negative = all_negative ? expr_neg(p->ctx, inner) : NULL;
	if (negative) {
		inner = negative;
		mpq_neg(d->num, d->num);
	}
	absorb(p, d, factor, 0);
	absorb(p, d, inner, inner_rank);
	sort_factors(d);
	if (mpq_sgn(d->num) < 0) {
		mpq_neg(d->num, d->num);
		return negated(p, d);
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
	/* capacity doubles at each power of two: a sum of 50,000 terms must not
	 * copy its items 50,000 times (quadratic under AddressSanitizer, whose
	 * realloc always moves) */
	if ((sum->n & (sum->n - 1)) == 0)
		sum->items = xreallocarray(sum->items, sum->n ? 2 * sum->n : 1, sizeof *sum->items);
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
			push_sum_item(sum, prn_build(p, expr_mul(ctx, coefficient, key)));
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
		push_sum_item(sum, ordered(prn_build(p, terms[0]), term_order(p, terms[0])));
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
			push_sum_item(sum, ordered(prn_build(p, terms[i]), term_order(p, terms[i])));
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
			push_sum_item(sum, ordered(prn_build(p, terms[i]), term_order(p, terms[i])));
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
	bool again = false;
	for (size_t i = 0; i < p->nbuilding && !again; i++)
		again = p->building[i] == e;
	if (again || p->depth >= 64 || p->nbuilding == 64) {
		/* grouping can hand a sum back to a grouping of another (two sums
		 * whose collected coefficients contain each other): past the bound
		 * the terms stand as they are, which prints the same value */
		for (size_t i = 0; i < e->nops; i++)
			push_sum_item(sum, prn_build(p, e->u.add.terms[i]));
	} else if (sum_has_generic(e)) {
		p->depth++;
		p->building[p->nbuilding++] = e;
		build_function_groups(p, sum, e->nops, (const expr *const *)e->u.add.terms);
		p->nbuilding--;
		p->depth--;
	} else {
		p->depth++;
		p->building[p->nbuilding++] = e;
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
		p->nbuilding--;
		p->depth--;
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

dnode *prn_build(printer *p, const expr *e)
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
		return mpq_sgn(e->u.num) < 0 ? negated(p, d) : d;
	case EXPR_SYM:
		d = dnew(p, D_SYM);
		d->e = e;
		return d;
	case EXPR_FUN:
		d = dnew(p, D_FUN);
		d->e = e;
		d->child = prn_build(p, e->u.fun.arg);
		return d;
	case EXPR_FAPP:
		d = dnew(p, D_FAPP);
		d->e = e;
		d->declared = prn_fapp_declared(e);
		if (p->format != PRN_C && d->declared)
			return d; /* written without its arguments (emit_fapp) */
		d->items = xmalloc(e->nops * sizeof *d->items);
		d->n = e->nops;
		for (size_t i = 0; i < e->nops; i++)
			d->items[i] = prn_build(p, e->u.fapp.args[i]);
		return d;
	case EXPR_MUL:
		return build_mul(p, e);
	case EXPR_ADD:
		return build_add(p, e);
	}
	return dnew(p, D_NUM);
}

/* ------------------------------------------------------------------ C tails */

/* A term k*F(u) of a sum, F Phi or erf not yet rewritten: F's node, and the
 * signed k in k; else NULL. */
static dnode *tail_term(dnode *term, mpq_t k)
{
	bool negative = term->kind == D_NEG;
	if (negative)
		term = term->child;
	dnode *fun = NULL;
	if (term->kind == D_FUN) {
		mpq_set_ui(k, 1, 1);
		fun = term;
	} else if (term->kind == D_PROD && term->nfactors == 1 && !term->factors[0].exp_display &&
	           mpq_cmp_ui(term->factors[0].exponent->u.num, 1, 1) == 0 &&
	           term->factors[0].base->kind == D_FUN) {
		mpq_set(k, term->num);
		fun = term->factors[0].base;
	}
	if (!fun || fun->c_tail || (fun->e->u.fun.fn != EXPR_F_NCDF && fun->e->u.fun.fn != EXPR_F_ERF))
		return NULL;
	if (negative)
		mpq_neg(k, k);
	return fun;
}

/* The display of the number q (of either sign). */
static dnode *number_display(printer *p, const mpq_t q)
{
	dnode *d = dnew(p, D_NUM);
	mpq_abs(d->num, q);
	return mpq_sgn(q) < 0 ? negated(p, d) : d;
}

static void c_tails_sum(printer *p, dnode *sum)
{
	size_t at = sum->n; /* the constant term: canonical sums have at most one */
	for (size_t i = 0; i < sum->n && at == sum->n; i++) {
		const dnode *item = sum->items[i];
		if (item->kind == D_NEG)
			item = item->child;
		if (item->kind == D_NUM)
			at = i;
	}
	if (at == sum->n)
		return;
	mpq_t c, k, m;
	mpq_inits(c, k, m, NULL);
	dnode *constant = sum->items[at];
	mpq_set(c, constant->kind == D_NEG ? constant->child->num : constant->num);
	if (constant->kind == D_NEG)
		mpq_neg(c, c);
	bool changed = false;
	/* the terms that match the constant exactly first (1/2 - 1/2*Phi(c) -
	 * 1/3*erf(a) pairs 1/2 with Phi), then the parts of it (2 - Phi(a) -
	 * Phi(b)); Phi before erf in each */
	for (int pass = 0; pass < 4; pass++)
		for (size_t i = 0; i < sum->n && mpq_sgn(c); i++) {
			dnode *fun = i == at ? NULL : tail_term(sum->items[i], k);
			if (!fun)
				continue;
			mpq_abs(m, k);
			mpq_t size;
			mpq_init(size);
			mpq_abs(size, c);
			int fit = mpq_cmp(size, m);
			mpq_clear(size);
			bool opposite = mpq_sgn(c) != mpq_sgn(k);
			bool phi = fun->e->u.fun.fn == EXPR_F_NCDF;
			if (fit < 0 || (pass < 2 && fit != 0) || (pass % 2 == 0) != phi ||
			    (phi && !opposite))
				continue; /* c + k*Phi(u) with c, k > 0 has no cancellation */
			dnode *tail = dnew(p, D_FUN);
			tail->e = fun->e;
			tail->child = fun->child;
			tail->c_tail = phi        ? PRN_TAIL_PHI_REFLECTED
			               : opposite ? PRN_TAIL_ERFC
			                          : PRN_TAIL_ERFC_REFLECTED;
			/* the new coefficient m and the constant left */
			if (opposite) {
				mpq_neg(m, k);
				mpq_add(c, c, k);
			} else {
				mpq_set(m, k);
				mpq_sub(c, c, k);
			}
			dnode *term = tail;
			if (mpq_cmp_ui(m, 1, 1) != 0 && mpq_cmp_si(m, -1, 1) != 0) {
				term = dnew(p, D_PROD);
				mpq_abs(term->num, m);
				term->factors = xcalloc(1, sizeof *term->factors);
				term->nfactors = 1;
				term->factors[0] = (dfactor){tail, fun->e, expr_int(p->ctx, 1), NULL, 0};
			}
			sum->items[i] = mpq_sgn(m) < 0 ? negated(p, term) : term;
			changed = true;
		}
	if (changed) {
		if (mpq_sgn(c)) {
			sum->items[at] = number_display(p, c);
		} else {
			memmove(sum->items + at, sum->items + at + 1, (sum->n - at - 1) * sizeof *sum->items);
			sum->n--;
		}
	}
	mpq_clears(c, k, m, NULL);
}

void prn_c_tails(printer *p, dnode *d)
{
	switch (d->kind) {
	case D_FUN:
	case D_NEG:
		prn_c_tails(p, d->child);
		return;
	case D_FAPP:
		for (size_t i = 0; i < d->n; i++)
			prn_c_tails(p, d->items[i]);
		return;
	case D_PROD:
		for (size_t i = 0; i < d->nfactors; i++) {
			prn_c_tails(p, d->factors[i].base);
			if (d->factors[i].exp_display)
				prn_c_tails(p, d->factors[i].exp_display);
		}
		return;
	case D_SUM:
		for (size_t i = 0; i < d->n; i++)
			prn_c_tails(p, d->items[i]);
		c_tails_sum(p, d);
		return;
	default:
		return;
	}
}
