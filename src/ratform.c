/* ratform.c - the rational normal form of an expression.
 *
 * The mathematics.  Sums, products and integer powers make an expression an
 * element of the field Q(w_1, ..., w_n) of rational functions of its atoms.
 * Every element of that field is p/q with polynomials p, q, gcd(p, q) = 1 and
 * q monic (leading coefficient 1 in the lexicographic order of the atoms),
 * and that pair is unique (Geddes, Czapor, Labahn, Algorithms for Computer
 * Algebra, 1992, ch. 2, from memory).  Equal rational functions of the same
 * atoms therefore get the same p/q, hence the same node.
 *
 * The atoms come in groups, one per base x and coefficient-free exponent m:
 *   x^(c0 + c_1 m_1 + ...) = x^c0 * prod_i x^(c_i m_i)   (c rational)
 *   exp(c0 + c_1 m_1 + ...) = exp(1)^c0 * prod_i exp(m_i)^c_i
 * The group (x, m) with coefficients c_1, c_2, ... gets the atom
 * w = x^(u m), u the positive gcd of the c_j, so x^(c m) = w^(c/u) with an
 * integer c/u: (x^(u m))^k = x^(k u m) for integer k wherever the left side
 * is defined (real roots of odd index are a group homomorphism; even ones are
 * undefined for x < 0).  A symbol or a function application x is itself
 * w^(1/u), so Q(w) holds every rational function of x and its roots.
 * When the base b is a number, a sum or a product kept whole, with fraction
 * P/Q in the lower atoms, and m = 1, then u = 1/L and w^L = P/Q is a
 * relation: after each step, when w^k with k >= L occurs, numerator and
 * denominator are multiplied by Q^M (M the largest k div L) and w^k becomes
 * w^(k mod L) P^(k div L) Q^(M - k div L).  Relations apply from the atom
 * with the tallest base down, so a rewrite never brings back a taller atom.
 * abs(u) has the relation abs(u)^2 = u^2.  Denominators are not
 * rationalised: 1/(1 + sqrt(a+b)) stays as it is.  Any other power (a
 * symbolic exponent, a root index over MAX_ROOT) is a free atom.  Each
 * rewrite holds wherever both sides are defined.
 *
 * An exponent that is a fraction, e = N/Q (in lowest terms, with square
 * roots cleared out of Q by their conjugates), is split as e = S + R/Q by
 * dividing N by Q in the lex order: the remainder by one polynomial is
 * unique, so exp(e + v) = exp(e) exp(v) for a polynomial v gives the atoms
 * of exp(e) and exp(v), and x^(e + 1) those of x^e and x.
 *
 * At the end every atom's exponents are divided by their gcd (w^2 -> w with
 * u doubled), so the form does not depend on which roots the input showed,
 * the denominator is made monic and factored over Q, and the result is
 * num * c^-1 * prod f_i^-e_i built with the canonical constructors.
 */
#include "ratform.h"

#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <flint/fmpq_mpoly_factor.h>

#include "rat.h"
#include "ratform-internal.h"
#include "xalloc.h"

/* Memo tags (negative: never one of expr_memo_new_tag's): e -> normal(e);
 * an exponent u -> the parts S, F and c of its split u = S + c F. */
enum { RATFORM_TAG = -13, SPLIT_POLY_TAG = -14, SPLIT_FRACTION_TAG = -15, SPLIT_SCALE_TAG = -16 };

enum {
	MAX_ROOT = 1000,        /* largest L of a relation w^L = b */
	MAX_RATIO = 10000,      /* largest c/u in one group before it splits into atoms */
	MAX_FACTOR_TERMS = 2000 /* a larger denominator is kept whole (not factored) */
};

/* ------------------------------------------------------------------ pair map */

static size_t pair_find(const ratform_pair_slot *slots, size_t capacity, const void *a, const void *b)
{
	uintptr_t h = (uintptr_t)a * 0x9e3779b97f4a7c15u ^ (uintptr_t)b * 0xc2b2ae3d27d4eb4fu;
	h ^= h >> 29;
	size_t slot = (size_t)h & (capacity - 1);
	while (slots[slot].value && !(slots[slot].a == a && slots[slot].b == b))
		slot = (slot + 1) & (capacity - 1);
	return slot;
}

size_t ratform_pair_get(const ratform_pair_map *map, const void *a, const void *b)
{
	return map->capacity ? map->slots[pair_find(map->slots, map->capacity, a, b)].value : 0;
}

void ratform_pair_put(ratform_pair_map *map, const void *a, const void *b, size_t value)
{
	if ((map->count + 1) * 2 >= map->capacity) {
		size_t capacity = map->capacity ? map->capacity * 2 : 64;
		ratform_pair_slot *slots = xcalloc(capacity, sizeof *slots);
		for (size_t i = 0; i < map->capacity; i++)
			if (map->slots[i].value)
				slots[pair_find(slots, capacity, map->slots[i].a, map->slots[i].b)] =
				        map->slots[i];
		free(map->slots);
		map->slots = slots;
		map->capacity = capacity;
	}
	size_t slot = pair_find(map->slots, map->capacity, a, b);
	if (!map->slots[slot].value)
		map->count++;
	map->slots[slot] = (ratform_pair_slot){a, b, value};
}

/* ------------------------------------------------------------------ pieces */

static void exponent_split(expr_ctx *ctx, const expr *u, const expr **poly, const expr **fraction,
                           mpq_t scale);

static void push_piece(ratform_job *j, const expr *base, const expr *monomial, mpq_srcptr power)
{
	if (j->npieces == j->piece_cap) {
		size_t cap = j->piece_cap ? 2 * j->piece_cap : 16;
		j->pieces = xreallocarray(j->pieces, cap, sizeof *j->pieces);
		for (size_t i = j->piece_cap; i < cap; i++)
			mpq_init(j->pieces[i].power);
		j->piece_cap = cap;
	}
	ratform_piece *p = &j->pieces[j->npieces++];
	p->base = base;
	p->monomial = monomial;
	mpq_set(p->power, power);
}

/* The terms c_i m_i of a sum (or the one term of anything else) as pieces
 * (base, m_i, scale c_i); a number term is c * 1.  With numbers_apart,
 * b^(number term) goes through numeric_power_pieces instead. */
static void numeric_power_pieces(ratform_job *j, const expr *b, mpq_srcptr c);

static void term_pieces(ratform_job *j, const expr *base, const expr *u, mpq_srcptr scale, bool numbers_apart)
{
	size_t n = u->kind == EXPR_ADD ? u->nops : 1;
	mpq_t c;
	mpq_init(c);
	for (size_t i = 0; i < n; i++) {
		const expr *term = u->kind == EXPR_ADD ? u->u.add.terms[i] : u;
		const expr *m = expr_split_coef(j->ctx, term, c);
		mpq_mul(c, c, scale);
		if (numbers_apart && m == j->ctx->one)
			numeric_power_pieces(j, base, c);
		else if (mpq_sgn(c))
			push_piece(j, base, m, c);
	}
	mpq_clear(c);
}

/* base^(scale u) (base NULL: exp) for u = S + c F split canonically. */
static void exponent_pieces(ratform_job *j, const expr *base, const expr *u, mpq_srcptr scale)
{
	const expr *poly, *fraction;
	mpq_t c;
	mpq_init(c);
	exponent_split(j->ctx, u, &poly, &fraction, c);
	term_pieces(j, base, poly, scale, base != NULL);
	if (fraction) {
		mpq_mul(c, c, scale);
		push_piece(j, base, fraction, c);
	}
	mpq_clear(c);
}

/* b^c for a rational c.  An integer power of a sum, a product or a number
 * is a polynomial power; exp(u)^c = exp(c u). */
static void numeric_power_pieces(ratform_job *j, const expr *b, mpq_srcptr c)
{
	if (expr_is_fun(b, EXPR_F_EXP))
		exponent_pieces(j, NULL, b->u.fun.arg, c);
	else if (rat_is_integer(c) && (b->kind == EXPR_ADD || b->kind == EXPR_MUL || b->kind == EXPR_NUM))
		push_piece(j, b, NULL, c);
	else
		push_piece(j, b, j->ctx->one, c);
}

/* b^x = b^c0 * prod (b^(m_i))^(c_i) for x = c0 + sum c_i m_i. */
static void power_pieces(ratform_job *j, const expr *b, const expr *x)
{
	if (x->kind == EXPR_NUM) {
		numeric_power_pieces(j, b, x->u.num);
		return;
	}
	mpq_t one;
	mpq_init(one);
	mpq_set_ui(one, 1, 1);
	exponent_pieces(j, b, x, one);
	mpq_clear(one);
}

/* The parts of one factor of a product, or of an atom on its own. */
void ratform_factor_pieces(ratform_job *j, const expr *e, size_t i)
{
	if (e->kind == EXPR_MUL)
		power_pieces(j, e->u.mul.bases[i], e->u.mul.exps[i]);
	else
		power_pieces(j, e, j->ctx->one);
}

/* ------------------------------------------------------------------ normalised insides */

/* e with the arguments of its functions, the exponents of its symbolic
 * powers and the bases of its fractional powers in normal form:
 * f(u) = f(normal(u)) wherever u is defined. */
static const expr *prepare(ratform_job *j, const expr *e)
{
	if (e->kind == EXPR_NUM || e->kind == EXPR_SYM)
		return e;
	const expr *known = expr_map_get(&j->prepared, e);
	if (known)
		return known;
	expr_ctx *ctx = j->ctx;
	const expr *result = e;
	if (e->kind == EXPR_FUN) {
		const expr *arg = ratform_normal(ctx, e->u.fun.arg);
		if (arg != e->u.fun.arg)
			result = expr_fun(ctx, e->u.fun.fn, arg);
	} else if (e->kind == EXPR_FAPP) {
		const expr **args = xmalloc(e->nops * sizeof *args);
		bool changed = false;
		for (size_t i = 0; i < e->nops; i++) {
			args[i] = ratform_normal(ctx, e->u.fapp.args[i]);
			changed |= args[i] != e->u.fapp.args[i];
		}
		if (changed)
			result = expr_fapp(ctx, e->u.fapp.func, e->u.fapp.counts, args);
		free(args);
	} else {
		bool sum = e->kind == EXPR_ADD;
		const expr **parts = xmalloc((e->nops + 1) * sizeof *parts);
		bool changed = false;
		for (size_t i = 0; i < e->nops; i++) {
			if (sum) {
				parts[i] = prepare(j, e->u.add.terms[i]);
				changed |= parts[i] != e->u.add.terms[i];
				continue;
			}
			const expr *b = e->u.mul.bases[i], *x = e->u.mul.exps[i];
			const expr *new_x = x->kind == EXPR_NUM ? x : ratform_normal(ctx, x);
			const expr *new_b =
			        (expr_is_integer(x) || (b->kind != EXPR_ADD && b->kind != EXPR_MUL))
			                ? prepare(j, b)
			                : ratform_normal(ctx, b);
			if (!new_b || !new_x) {
				free(parts);
				return NULL;
			}
			bool same = new_b == b && new_x == x;
			parts[i] = same ? expr_pow_pair(ctx, b, x) : expr_pow(ctx, new_b, new_x);
			changed |= !same;
		}
		if (changed && sum)
			result = expr_add_n(ctx, e->nops, parts);
		else if (changed) {
			parts[e->nops] = expr_num(ctx, e->u.mul.coef);
			result = expr_mul_n(ctx, e->nops + 1, parts);
		}
		free(parts);
	}
	if (result)
		expr_map_put(&j->prepared, e, result);
	return result;
}

/* ------------------------------------------------------------------ atoms */

static void add_coef(ratform_group *g, mpq_srcptr c)
{
	for (size_t i = 0; i < g->ncoefs; i++)
		if (mpq_equal(g->coefs[i], c))
			return;
	g->coefs = xreallocarray(g->coefs, g->ncoefs + 1, sizeof *g->coefs);
	mpq_init(g->coefs[g->ncoefs]);
	mpq_set(g->coefs[g->ncoefs++], c);
}

static void collect(ratform_job *j, const expr *e);

/* Note the atom of a piece; the base of a polynomial power or of a
 * relation has its own atoms collected too. */
static void note_piece(ratform_job *j, size_t index)
{
	const ratform_piece *p = &j->pieces[index];
	const expr *base = p->base;
	if (!p->monomial) {
		collect(j, base);
		return;
	}
	size_t known = ratform_pair_get(&j->group_of, base, p->monomial);
	if (!known) {
		if (j->ngroups == j->group_cap) {
			j->group_cap = j->group_cap ? 2 * j->group_cap : 16;
			j->groups = xreallocarray(j->groups, j->group_cap, sizeof *j->groups);
		}
		ratform_group *g = &j->groups[j->ngroups];
		memset(g, 0, sizeof *g);
		g->base = base;
		g->monomial = p->monomial;
		mpq_init(g->unit);
		known = ++j->ngroups;
		ratform_pair_put(&j->group_of, base, p->monomial, known);
	}
	add_coef(&j->groups[known - 1], p->power);
	if (base && p->monomial == j->ctx->one && (base->kind == EXPR_ADD || base->kind == EXPR_MUL))
		collect(j, base);
	else if (base && p->monomial == j->ctx->one && expr_is_fun(base, EXPR_F_ABS))
		collect(j, base->u.fun.arg);
}

static void collect(ratform_job *j, const expr *e)
{
	if (e->kind == EXPR_NUM || expr_map_get(&j->visited, e))
		return;
	expr_map_put(&j->visited, e, e);
	if (e->kind == EXPR_ADD) {
		for (size_t i = 0; i < e->nops; i++)
			collect(j, e->u.add.terms[i]);
		return;
	}
	size_t n = e->kind == EXPR_MUL ? e->nops : 1;
	for (size_t i = 0; i < n; i++) {
		size_t mark = j->npieces;
		ratform_factor_pieces(j, e, i);
		size_t end = j->npieces;
		for (size_t k = mark; k < end; k++)
			note_piece(j, k);
		j->npieces = mark;
	}
}

/* The order of groups: by base (exp last), then by monomial. */
static int compare_groups(const void *x, const void *y)
{
	const ratform_group *g = x, *h = y;
	if (!g->base || !h->base) {
		if (g->base || h->base)
			return g->base ? -1 : 1;
	} else if (g->base != h->base) {
		return expr_compare(g->base, h->base);
	}
	return expr_compare(g->monomial, h->monomial);
}

static int compare_mpq(const void *x, const void *y)
{
	return mpq_cmp(*(const mpq_t *)x, *(const mpq_t *)y);
}

/* Can the group have the relation w^L = b (or abs(u)^2 = u^2)?  Sets unit. */
static bool relation_candidate(ratform_job *j, ratform_group *g)
{
	if (!g->base || g->monomial != j->ctx->one)
		return false;
	bool abs_base = expr_is_fun(g->base, EXPR_F_ABS);
	if (!abs_base && g->base->kind != EXPR_NUM && g->base->kind != EXPR_ADD && g->base->kind != EXPR_MUL)
		return false;
	mpz_t lcm;
	mpz_init_set_ui(lcm, 1);
	for (size_t i = 0; i < g->ncoefs; i++)
		mpz_lcm(lcm, lcm, mpq_denref(g->coefs[i]));
	bool ok = mpz_cmp_ui(lcm, abs_base ? 1 : MAX_ROOT) <= 0;
	if (ok) {
		g->degree = abs_base ? 2 : mpz_get_ui(lcm);
		mpq_set_ui(g->unit, 1, abs_base ? 1 : g->degree);
	}
	mpz_clear(lcm);
	return ok;
}

/* u = the positive gcd of the group's coefficients (gcd of numerators over
 * lcm of denominators); the group splits when some c/u is too large. */
static void set_free_unit(ratform_group *g)
{
	mpz_t num, den;
	mpz_init_set_ui(num, 0);
	mpz_init_set_ui(den, 1);
	for (size_t i = 0; i < g->ncoefs; i++) {
		mpz_gcd(num, num, mpq_numref(g->coefs[i]));
		mpz_lcm(den, den, mpq_denref(g->coefs[i]));
	}
	if (mpz_sgn(num) == 0)
		mpz_set_ui(num, 1); /* every coefficient 0: any unit will do (it divided by 0) */
	mpq_set_num(g->unit, num);
	mpq_set_den(g->unit, den);
	mpq_canonicalize(g->unit);
	mpq_t ratio;
	mpq_init(ratio);
	for (size_t i = 0; i < g->ncoefs && !g->split; i++) {
		mpq_div(ratio, g->coefs[i], g->unit);
		g->split = mpz_cmpabs_ui(mpq_numref(ratio), MAX_RATIO) > 0;
	}
	mpq_clear(ratio);
	mpz_clear(num);
	mpz_clear(den);
}

static void add_var(ratform_job *j, size_t group_index, mpq_srcptr unit)
{
	j->vars = xreallocarray(j->vars, (size_t)j->nvars + 1, sizeof *j->vars);
	j->vars[j->nvars].group = group_index;
	mpq_init(j->vars[j->nvars].unit);
	mpq_set(j->vars[j->nvars].unit, unit);
	j->nvars++;
}

/* Sort the groups (so the variables' order depends on the atoms only), give
 * each its unit and its variables: one, or for a split group one per
 * distinct |c| in increasing order (atom x^(|c| m)). */
static void number_atoms(ratform_job *j)
{
	if (j->ngroups > 1) /* (qsort's array may not be NULL, even when empty) */
		qsort(j->groups, j->ngroups, sizeof *j->groups, compare_groups);
	for (size_t k = 0; k < j->ngroups; k++) {
		ratform_group *g = &j->groups[k];
		ratform_pair_put(&j->group_of, g->base, g->monomial, k + 1);
		qsort(g->coefs, g->ncoefs, sizeof *g->coefs, compare_mpq);
		g->var = j->nvars;
		g->candidate = relation_candidate(j, g);
		if (!g->candidate)
			set_free_unit(g);
		if (!g->split) {
			add_var(j, k, g->unit);
			continue;
		}
		mpq_t *units = xmalloc(g->ncoefs * sizeof *units);
		size_t n = 0;
		for (size_t i = 0; i < g->ncoefs; i++) {
			mpq_init(units[n]);
			mpq_abs(units[n], g->coefs[i]);
			bool seen = false;
			for (size_t h = 0; h < n && !seen; h++)
				seen = mpq_equal(units[h], units[n]);
			if (seen)
				mpq_clear(units[n]);
			else
				n++;
		}
		qsort(units, n, sizeof *units, compare_mpq);
		for (size_t i = 0; i < n; i++) {
			add_var(j, k, units[i]);
			mpq_clear(units[i]);
		}
		free(units);
	}
}

/* The variable and exponent of group (base, monomial)^c; -1 (and an error)
 * if the atom was not collected, which the two passes over the same nodes
 * rule out. */
slong ratform_piece_var(ratform_job *j, const ratform_piece *p, slong *exponent)
{
	size_t index = ratform_pair_get(&j->group_of, p->base, p->monomial);
	if (!index) {
		expr_fail(j->ctx, EXPR_ERR_TOO_LARGE, "rational normal form: an atom was missed (a bug)");
		return -1;
	}
	const ratform_group *g = &j->groups[index - 1];
	mpq_t ratio;
	mpq_init(ratio);
	slong var = g->var;
	if (g->split) {
		mpq_abs(ratio, p->power);
		while (var < j->nvars && j->vars[var].group == index - 1 &&
		       !mpq_equal(j->vars[var].unit, ratio))
			var++;
		*exponent = mpq_sgn(p->power);
		if (var == j->nvars || j->vars[var].group != index - 1) {
			expr_fail(j->ctx, EXPR_ERR_TOO_LARGE,
			          "rational normal form: an atom was missed (a bug)");
			var = -1;
		}
	} else {
		mpq_div(ratio, p->power, g->unit);
		*exponent = mpz_get_si(mpq_numref(ratio)); /* |c/u| <= MAX_RATIO or < MAX_ROOT */
	}
	mpq_clear(ratio);
	return var;
}

/* ------------------------------------------------------------------ the result */

/* Divide each variable's exponents by their gcd d (and multiply its unit by
 * d): w^(d k) = (x^(d u m))^k, so the form does not depend on the roots the
 * input happened to show. */
static void deflate(ratform_job *j, ratform_frac *f)
{
	ulong *d = xcalloc((size_t)j->nvars + 1, sizeof *d);
	ulong *exps = xmalloc(((size_t)j->nvars + 1) * sizeof *exps);
	fmpq_mpoly_struct *polys[2] = {f->num, f->den};
	for (int p = 0; p < 2; p++)
		for (slong i = 0; i < fmpq_mpoly_length(polys[p], j->ring); i++) {
			fmpq_mpoly_get_term_exp_ui(exps, polys[p], i, j->ring);
			for (slong v = 0; v < j->nvars; v++)
				d[v] = n_gcd(d[v], exps[v]);
		}
	bool any = false;
	for (slong v = 0; v < j->nvars; v++) {
		if (d[v] < 2) {
			d[v] = 1;
			continue;
		}
		any = true;
		mpq_t factor;
		mpq_init(factor);
		mpq_set_ui(factor, d[v], 1);
		mpq_mul(j->vars[v].unit, j->vars[v].unit, factor);
		mpq_clear(factor);
	}
	fmpq_t c;
	fmpq_init(c);
	fmpq_mpoly_t out;
	fmpq_mpoly_init(out, j->ring);
	for (int p = 0; p < 2 && any; p++) {
		fmpq_mpoly_zero(out, j->ring);
		for (slong i = 0; i < fmpq_mpoly_length(polys[p], j->ring); i++) {
			fmpq_mpoly_get_term_exp_ui(exps, polys[p], i, j->ring);
			fmpq_mpoly_get_term_coeff_fmpq(c, polys[p], i, j->ring);
			for (slong v = 0; v < j->nvars; v++)
				exps[v] /= d[v];
			fmpq_mpoly_push_term_fmpq_ui(out, c, exps, j->ring);
		}
		fmpq_mpoly_sort_terms(out, j->ring);
		fmpq_mpoly_swap(out, polys[p], j->ring);
	}
	fmpq_mpoly_clear(out, j->ring);
	fmpq_clear(c);
	free(exps);
	free(d);
}

/* x^(k u m) (or exp(k u m)) for variable v to the power k. */
static const expr *var_power(ratform_job *j, slong v, ulong k)
{
	const ratform_group *g = &j->groups[j->vars[v].group];
	mpq_t q;
	mpq_init(q);
	mpq_set_ui(q, k, 1);
	mpq_mul(q, q, j->vars[v].unit);
	const expr *x = expr_mul(j->ctx, g->monomial, expr_num(j->ctx, q));
	mpq_clear(q);
	return g->base ? expr_pow(j->ctx, g->base, x) : expr_fun(j->ctx, EXPR_F_EXP, x);
}

static const expr *poly_expr(ratform_job *j, const fmpq_mpoly_t p)
{
	slong n = fmpq_mpoly_length(p, j->ring);
	const expr **terms = xmalloc(((size_t)n + 1) * sizeof *terms);
	const expr **factors = xmalloc(((size_t)j->nvars + 1) * sizeof *factors);
	ulong *exps = xmalloc(((size_t)j->nvars + 1) * sizeof *exps);
	fmpq_t c;
	fmpq_init(c);
	mpq_t q;
	mpq_init(q);
	const expr *result = NULL;
	for (slong i = 0; i < n; i++) {
		if ((i & 255) == 0 && expr_poll_interrupt(j->ctx))
			goto done;
		fmpq_mpoly_get_term_coeff_fmpq(c, p, i, j->ring);
		fmpq_get_mpq(q, c);
		fmpq_mpoly_get_term_exp_ui(exps, p, i, j->ring);
		size_t nf = 0;
		factors[nf++] = expr_num(j->ctx, q);
		for (slong v = 0; v < j->nvars; v++)
			if (exps[v])
				factors[nf++] = var_power(j, v, exps[v]);
		terms[i] = expr_mul_n(j->ctx, nf, factors);
	}
	result = expr_add_n(j->ctx, (size_t)n, terms);
done:
	mpq_clear(q);
	fmpq_clear(c);
	free(exps);
	free(factors);
	free(terms);
	return result;
}

/* num * den^-1 with den factored: num * c^-1 * prod f_i^-e_i. */
static const expr *build(ratform_job *j, const ratform_frac *f)
{
	const expr *num = poly_expr(j, f->num);
	if (!num || fmpq_mpoly_is_one(f->den, j->ring))
		return num;
	fmpq_mpoly_factor_t factors;
	fmpq_mpoly_factor_init(factors, j->ring);
	bool factored = fmpq_mpoly_length(f->den, j->ring) <= MAX_FACTOR_TERMS &&
	                fmpq_mpoly_factor(factors, f->den, j->ring);
	size_t n = factored ? (size_t)factors->num : 1;
	const expr **parts = xmalloc((n + 2) * sizeof *parts);
	parts[0] = num;
	if (factored) {
		mpq_t c;
		mpq_init(c);
		fmpq_get_mpq(c, factors->constant);
		mpq_inv(c, c);
		parts[1] = expr_num(j->ctx, c);
		mpq_clear(c);
		for (size_t i = 0; i < n; i++)
			parts[i + 2] = expr_pow(j->ctx, poly_expr(j, factors->poly + i),
			                        expr_int(j->ctx, -fmpz_get_si(factors->exp + i)));
	} else {
		parts[1] = j->ctx->one;
		parts[2] = expr_pow(j->ctx, poly_expr(j, f->den), j->ctx->minus_one);
	}
	const expr *result = expr_mul_n(j->ctx, n + 2, parts);
	free(parts);
	fmpq_mpoly_factor_clear(factors, j->ring);
	return result;
}

static void job_free(ratform_job *j)
{
	for (size_t i = 0; i < j->nfracs; i++) {
		fmpq_mpoly_clear(j->fracs[i]->num, j->ring);
		fmpq_mpoly_clear(j->fracs[i]->den, j->ring);
		free(j->fracs[i]);
	}
	free(j->fracs);
	for (size_t k = 0; k < j->ngroups; k++) {
		ratform_group *g = &j->groups[k];
		for (size_t i = 0; i < g->ncoefs; i++)
			mpq_clear(g->coefs[i]);
		free(g->coefs);
		mpq_clear(g->unit);
		if (g->has_relation) {
			fmpq_mpoly_clear(g->relation, j->ring);
			fmpq_mpoly_clear(g->relation_den, j->ring);
		}
	}
	free(j->groups);
	for (slong v = 0; v < j->nvars; v++)
		mpq_clear(j->vars[v].unit);
	free(j->vars);
	free(j->relations);
	for (size_t i = 0; i < j->piece_cap; i++)
		mpq_clear(j->pieces[i].power);
	free(j->pieces);
	if (j->ring_ready)
		fmpq_mpoly_ctx_clear(j->ring);
	expr_map_free(&j->prepared);
	expr_map_free(&j->visited);
	free(j->group_of.slots);
	free(j->frac_of.slots);
}

/* Start a job on e: its atoms, their ring and relations, and the fraction
 * of e (NULL on error; the job is freed by the caller either way). */
static const ratform_frac *run_job(ratform_job *j, expr_ctx *ctx, const expr *e)
{
	memset(j, 0, sizeof *j);
	j->ctx = ctx;
	j->max_terms = ctx->limits.max_terms;
	const expr *prepared = prepare(j, e);
	if (!prepared)
		return NULL;
	collect(j, prepared);
	number_atoms(j);
	/* each term of a polynomial stores an exponent for every atom: 900
	 * nested sin made 1,800 atoms and took 23 GB outside the memory budget */
	enum { RATFORM_MAX_ATOMS = 200 };
	if (j->nvars > RATFORM_MAX_ATOMS) {
		expr_fail(ctx, EXPR_ERR_TOO_LARGE, "expression too large (over 200 atoms for a normal form)");
		return NULL;
	}
	fmpq_mpoly_ctx_init(j->ring, j->nvars > 0 ? j->nvars : 1, ORD_LEX);
	j->ring_ready = true;
	if (!ratform_set_relations(j))
		return NULL;
	return ratform_fraction(j, prepared);
}

/* The normal form of e: *zero tells whether its numerator is 0; the node is
 * built only when asked.  NULL on error (or when not built). */
static const expr *normal_form(expr_ctx *ctx, const expr *e, bool *zero, bool want_node)
{
	ratform_job j;
	const expr *result = NULL;
	const ratform_frac *top = run_job(&j, ctx, e);
	if (top) {
		*zero = fmpq_mpoly_is_zero(top->num, j.ring);
		if (want_node) {
			ratform_frac f;
			fmpq_mpoly_init(f.num, j.ring);
			fmpq_mpoly_init(f.den, j.ring);
			fmpq_mpoly_set(f.num, top->num, j.ring);
			fmpq_mpoly_set(f.den, top->den, j.ring);
			deflate(&j, &f);
			result = build(&j, &f);
			fmpq_mpoly_clear(f.num, j.ring);
			fmpq_mpoly_clear(f.den, j.ring);
		}
	}
	job_free(&j);
	return result;
}

/* Is u a polynomial in its atoms as written (no negative or symbolic exponent)? */
static bool polynomial_form(const expr *u)
{
	size_t n = u->kind == EXPR_ADD ? u->nops : 1;
	for (size_t i = 0; i < n; i++) {
		const expr *term = u->kind == EXPR_ADD ? u->u.add.terms[i] : u;
		if (term->kind != EXPR_MUL)
			continue;
		for (size_t k = 0; k < term->nops; k++)
			if (term->u.mul.exps[k]->kind != EXPR_NUM || mpq_sgn(term->u.mul.exps[k]->u.num) < 0)
				return false;
	}
	return true;
}

/* An exponent u = N/Q (exp's argument, a symbolic power) split as
 * u = S + c F with N = S Q + R the division of N by Q in the lex order,
 * F = R/(c Q), c the leading coefficient of R: the remainder by a single
 * polynomial is unique, so equal u give equal S and F, and
 * exp(u + v) = exp(u) exp(v) for a polynomial v gives the same atoms as
 * exp(u) and exp(v).  *fraction is NULL when R = 0. */
static void exponent_split(expr_ctx *ctx, const expr *u, const expr **poly, const expr **fraction,
                           mpq_t scale)
{
	*poly = u;
	*fraction = NULL;
	if (polynomial_form(u))
		return;
	const expr *known = expr_memo_get(ctx, SPLIT_POLY_TAG, u, NULL);
	if (!known) {
		ratform_job j;
		const ratform_frac *top = run_job(&j, ctx, u);
		const expr *quotient = NULL, *rest = NULL, *lead = ctx->zero;
		if (top && !fmpq_mpoly_is_fmpq(top->den, j.ring)) {
			ratform_frac f;
			fmpq_mpoly_init(f.num, j.ring);
			fmpq_mpoly_init(f.den, j.ring);
			fmpq_mpoly_set(f.num, top->num, j.ring);
			fmpq_mpoly_set(f.den, top->den, j.ring);
			fmpq_mpoly_t s;
			fmpq_mpoly_init(s, j.ring);
			if (ratform_rationalise(&j, &f)) {
				fmpq_mpoly_t remainder;
				fmpq_mpoly_init(remainder, j.ring);
				fmpq_mpoly_divrem(s, remainder, f.num, f.den, j.ring);
				fmpq_mpoly_swap(remainder, f.num, j.ring);
				fmpq_mpoly_clear(remainder, j.ring);
				quotient = poly_expr(&j, s);
			} else if (!expr_error(ctx)) {
				/* not split: u is one atom of its own */
				quotient = ctx->zero;
				rest = u;
				lead = ctx->one;
			}
			if (quotient && !rest && !fmpq_mpoly_is_zero(f.num, j.ring)) {
				fmpq_t c;
				fmpq_init(c);
				fmpq_mpoly_get_term_coeff_fmpq(c, f.num, 0, j.ring);
				fmpq_mpoly_scalar_div_fmpq(f.num, f.num, c, j.ring);
				mpq_t value;
				mpq_init(value);
				fmpq_get_mpq(value, c);
				lead = expr_num(ctx, value);
				mpq_clear(value);
				fmpq_clear(c);
				deflate(&j, &f);
				rest = build(&j, &f);
			}
			fmpq_mpoly_clear(s, j.ring);
			fmpq_mpoly_clear(f.num, j.ring);
			fmpq_mpoly_clear(f.den, j.ring);
		} else if (top) {
			quotient = u; /* a constant denominator */
		}
		if (quotient && !rest)
			rest = ctx->zero;
		job_free(&j);
		if (!quotient || !rest || !lead)
			return; /* the error is in the context: the caller stops */
		expr_memo_put(ctx, SPLIT_POLY_TAG, u, NULL, quotient);
		expr_memo_put(ctx, SPLIT_FRACTION_TAG, u, NULL, rest);
		expr_memo_put(ctx, SPLIT_SCALE_TAG, u, NULL, lead);
		known = quotient;
	}
	*poly = known;
	const expr *rest = expr_memo_get(ctx, SPLIT_FRACTION_TAG, u, NULL);
	if (!expr_is_zero(rest)) {
		*fraction = rest;
		mpq_set(scale, expr_memo_get(ctx, SPLIT_SCALE_TAG, u, NULL)->u.num);
	}
}

const expr *ratform_normal(expr_ctx *ctx, const expr *e)
{
	if (!e || expr_error(ctx))
		return NULL;
	if (e->kind == EXPR_NUM || e->kind == EXPR_SYM)
		return e;
	const expr *known = expr_memo_get(ctx, RATFORM_TAG, e, NULL);
	if (known)
		return known;
	bool zero = false;
	const expr *result = normal_form(ctx, e, &zero, true);
	if (result) {
		expr_memo_put(ctx, RATFORM_TAG, e, NULL, result);
		expr_memo_put(ctx, RATFORM_TAG, result, NULL, result);
	}
	return result;
}

bool ratform_is_zero(expr_ctx *ctx, const expr *e)
{
	if (!e || expr_error(ctx))
		return false;
	if (expr_is_num(e))
		return expr_is_zero(e);
	bool zero = false;
	normal_form(ctx, e, &zero, false);
	return zero && !expr_error(ctx);
}
