/* domain.c - sampling the declared domain (domain.h).
 *
 * Values are drawn as doubles and kept as the exact rationals those doubles
 * are, so the evaluators receive exact points.  Each atom's range comes from
 * its declared bounds (evaluated at the values of the names they use, which
 * are drawn first) and its sign; a point that breaks a bound after all (two
 * bounds that refer to each other) is drawn again.
 *
 * The model's relations between expressions (2*kappa*theta > xi^2) that use
 * any of the atoms apply too: their names become atoms, and a point is kept
 * only when ball arithmetic certifies, at the exact rational point, that it
 * keeps every one of them (a point it cannot certify is drawn again).
 */
#include "domain.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "ball.h"
#include "eval.h"
#include "sim.h"
#include "xalloc.h"

enum { DOMAIN_TRIES = 200 };

typedef struct atom {
	const expr *e;
	model_entry *entry; /* its declaration, or NULL (t, generic partials) */
	bool pinned;	    /* a range [c, c]: always c */
	bool drawn;	    /* drawn in the current point */
} atom;

struct domain {
	expr_ctx *ctx;
	model *m;
	atom *atoms;
	size_t n, cap;
	double *values; /* the current point as doubles, for bounds */
	const model_relation **relations; /* the model's relations on these atoms */
	size_t nrelations;
	ball_prog *relation_prog; /* their differences over the atoms */
	arb_ptr balls;            /* the point, and the differences at it */
	arb_ptr differences;
	ball_status *statuses;
	sim_rng rng;
	unsigned long draws; /* points drawn so far: the first ones stay near 1 */
};

static model_entry *entry_of(model *m, const expr *e)
{
	if (expr_kind_of(e) != EXPR_SYM)
		return NULL;
	model_entry *entry = model_lookup(m, expr_sym_name(e));
	return entry && entry->sym == e ? entry : NULL;
}

static size_t add_atom(domain *d, const expr *e)
{
	for (size_t i = 0; i < d->n; i++)
		if (d->atoms[i].e == e)
			return i;
	if (d->n == d->cap) {
		d->cap = d->cap ? 2 * d->cap : 8;
		d->atoms = xreallocarray(d->atoms, d->cap, sizeof *d->atoms);
	}
	model_entry *entry = entry_of(d->m, e);
	bool pinned = entry && entry->lo && entry->hi && expr_is_num(entry->lo) && entry->lo == entry->hi;
	d->atoms[d->n] = (atom){.e = e, .entry = entry, .pinned = pinned};
	return d->n++;
}

/* The names a bound uses become atoms too (recursively, once each). */
static void add_bound_names(domain *d, const expr *bound)
{
	if (!bound)
		return;
	expr_vec names = {0};
	expr_free_symbols(d->ctx, bound, &names);
	for (size_t i = 0; i < names.n; i++) {
		size_t before = d->n;
		size_t k = add_atom(d, names.items[i]);
		if (k == before && d->atoms[k].entry) {
			add_bound_names(d, d->atoms[k].entry->lo);
			add_bound_names(d, d->atoms[k].entry->hi);
		}
	}
	expr_vec_free(&names);
}

static bool has_atom(const domain *d, const expr *e)
{
	for (size_t i = 0; i < d->n; i++)
		if (d->atoms[i].e == e)
			return true;
	return false;
}

/* The relations that use an atom apply; their names become atoms, which may
 * bring in further relations (until none is left). */
static void add_relations(domain *d)
{
	model *m = d->m;
	bool *applies = xcalloc(m->nrelations + 1, sizeof *applies);
	bool more = true;
	while (more) {
		more = false;
		for (size_t r = 0; r < m->nrelations; r++) {
			if (applies[r])
				continue;
			expr_vec names = {0};
			expr_free_symbols(d->ctx, m->relations[r].difference, &names);
			for (size_t i = 0; i < names.n && !applies[r]; i++)
				applies[r] = has_atom(d, names.items[i]);
			if (applies[r]) {
				add_bound_names(d, m->relations[r].difference);
				more = true;
			}
			expr_vec_free(&names);
		}
	}
	d->relations = xcalloc(m->nrelations + 1, sizeof *d->relations);
	for (size_t r = 0; r < m->nrelations; r++)
		if (applies[r])
			d->relations[d->nrelations++] = &m->relations[r];
	free(applies);
}

/* Compile the relations' differences over the final atoms. */
static void compile_relations(domain *d)
{
	if (d->nrelations == 0)
		return;
	const expr **roots = xcalloc(d->nrelations, sizeof *roots);
	const expr **atoms = xcalloc(d->n + 1, sizeof *atoms);
	for (size_t r = 0; r < d->nrelations; r++)
		roots[r] = d->relations[r]->difference;
	for (size_t i = 0; i < d->n; i++)
		atoms[i] = d->atoms[i].e;
	d->relation_prog = ball_compile(d->ctx, d->nrelations, roots, d->n, atoms, NULL);
	free(roots);
	free(atoms);
	d->balls = _arb_vec_init((slong)d->n + 1);
	d->differences = _arb_vec_init((slong)d->nrelations);
	d->statuses = xcalloc(d->nrelations, sizeof *d->statuses);
}

domain *domain_new(expr_ctx *ctx, model *m, size_t n, const expr *const *atoms, uint64_t seed)
{
	domain *d = xcalloc(1, sizeof *d);
	d->ctx = ctx;
	d->m = m;
	for (size_t i = 0; i < n; i++)
		add_atom(d, atoms[i]);
	for (size_t i = 0; i < n; i++)
		if (d->atoms[i].entry) {
			add_bound_names(d, d->atoms[i].entry->lo);
			add_bound_names(d, d->atoms[i].entry->hi);
		}
	add_relations(d);
	compile_relations(d);
	d->values = xcalloc(d->n + 1, sizeof *d->values);
	sim_rng_seed(&d->rng, seed);
	return d;
}

void domain_free(domain *d)
{
	if (!d)
		return;
	if (d->nrelations) {
		ball_free(d->relation_prog);
		_arb_vec_clear(d->balls, (slong)d->n + 1);
		_arb_vec_clear(d->differences, (slong)d->nrelations);
		free(d->statuses);
	}
	free(d->relations);
	free(d->atoms);
	free(d->values);
	free(d);
}

size_t domain_size(const domain *d)
{
	return d->n;
}

const expr *domain_atom(const domain *d, size_t i)
{
	return d->atoms[i].e;
}

bool domain_has_interior(const domain *d)
{
	for (size_t i = 0; i < d->n; i++)
		if (d->atoms[i].pinned)
			return false;
	return true;
}

static double draw_atom(domain *d, size_t i);

/* A bound's value at the current point (its names drawn first); NAN when it
 * cannot be evaluated. */
static double bound_value(domain *d, const expr *bound)
{
	if (expr_is_num(bound))
		return mpq_get_d(expr_num_value(bound));
	expr_vec names = {0};
	expr_free_symbols(d->ctx, bound, &names);
	double *values = xcalloc(names.n + 1, sizeof *values);
	for (size_t k = 0; k < names.n; k++) {
		size_t j = add_atom(d, names.items[k]);
		values[k] = draw_atom(d, j);
	}
	bool ok;
	double v = eval_at(d->ctx, bound, names.n, names.items, values, &ok);
	free(values);
	expr_vec_free(&names);
	return ok ? v : NAN;
}

/* 10^u for u uniform in [lo, hi]. */
static double scale(domain *d, double lo, double hi)
{
	return pow(10.0, lo + (hi - lo) * sim_uniform(&d->rng));
}

enum { DOMAIN_NEAR_ONE = 30 };

/* A magnitude: the first points within 0.1 .. 10 (a counterexample there reads
 * well), then mostly within 1e-4 .. 1e4 and sometimes far out. */
static double magnitude(domain *d)
{
	if (d->draws < DOMAIN_NEAR_ONE)
		return scale(d, -1, 1);
	return sim_uniform(&d->rng) < 0.85 ? scale(d, -4, 4) : scale(d, -12, 12);
}

/* A value above lo (strictly when strict): near it sometimes, on the
 * bound's own scale otherwise. */
static double above(domain *d, double lo, bool strict)
{
	double s = fmax(1.0, fabs(lo));
	double u = sim_uniform(&d->rng);
	if (!strict && u < 0.03)
		return lo;
	double offset = d->draws < DOMAIN_NEAR_ONE ? s * scale(d, -1, 1)
			: u < 0.2			   ? s * scale(d, -9, -3)
							   : s * scale(d, -4, 3);
	double x = lo + offset;
	return x > lo || !strict ? x : nextafter(lo, INFINITY);
}

static double draw_atom(domain *d, size_t i)
{
	atom *a = &d->atoms[i];
	if (a->drawn)
		return d->values[i];
	a->drawn = true; /* a bound that refers back reads the value below */
	d->values[i] = 0;
	model_entry *e = a->entry;
	double x;
	if (a->pinned) {
		x = mpq_get_d(expr_num_value(e->lo));
	} else {
		double lo = -INFINITY, hi = INFINITY;
		bool lo_strict = false, hi_strict = false;
		if (e && e->lo) {
			lo = bound_value(d, e->lo);
			lo_strict = e->lo_strict;
		}
		if (e && e->hi) {
			hi = bound_value(d, e->hi);
			hi_strict = e->hi_strict;
		}
		int sign = expr_kind_of(a->e) == EXPR_SYM ? expr_sym_sign(a->e) : EXPR_SIGN_UNKNOWN;
		if (a->e == d->m->time && !(e && e->lo)) {
			lo = 0; /* time runs from 0 unless declared otherwise */
		} else if (!(sign & EXPR_SIGN_NEG) && !(lo >= 0)) {
			lo = 0;
			lo_strict = !(sign & EXPR_SIGN_ZERO);
		} else if (!(sign & EXPR_SIGN_POS) && !(hi <= 0)) {
			hi = 0;
			hi_strict = !(sign & EXPR_SIGN_ZERO);
		}
		if (isnan(lo) || isnan(hi)) {
			x = NAN;
		} else if (isfinite(lo) && isfinite(hi)) {
			double u = sim_uniform(&d->rng);
			if (u < 0.1)
				x = above(d, lo, lo_strict);
			else if (u < 0.2)
				x = -above(d, -hi, hi_strict);
			else
				x = lo + (hi - lo) * (0.001 + 0.998 * sim_uniform(&d->rng));
		} else if (isfinite(lo)) {
			x = above(d, lo, lo_strict);
		} else if (isfinite(hi)) {
			x = -above(d, -hi, hi_strict);
		} else {
			x = magnitude(d) * (sim_uniform(&d->rng) < 0.5 ? -1 : 1);
		}
	}
	d->values[i] = x;
	return x;
}

/* Does the point keep every declared bound of every atom? */
static bool inside(domain *d)
{
	for (size_t i = 0; i < d->n; i++) {
		model_entry *e = d->atoms[i].entry;
		double x = d->values[i];
		if (!isfinite(x))
			return false;
		if (!e || d->atoms[i].pinned)
			continue;
		if (e->lo) {
			double lo = bound_value(d, e->lo);
			if (!(e->lo_strict ? x > lo : x >= lo))
				return false;
		}
		if (e->hi) {
			double hi = bound_value(d, e->hi);
			if (!(e->hi_strict ? x < hi : x <= hi))
				return false;
		}
	}
	return true;
}

/* Is the relation certainly kept by the ball of its difference? */
static bool relation_kept(model_rel op, const arb_t difference)
{
	switch (op) {
	case MODEL_REL_GT:
		return arb_is_positive(difference);
	case MODEL_REL_GE:
		return arb_is_nonnegative(difference);
	case MODEL_REL_LT:
		return arb_is_negative(difference);
	case MODEL_REL_LE:
		return arb_is_nonpositive(difference);
	}
	return false;
}

/* Does the exact point values keep every relation?  Certified in ball
 * arithmetic, with more precision when a ball touches 0; a point that no
 * precision certifies (or where a relation is undefined) is not kept. */
static bool relations_kept(domain *d, mpq_t *values)
{
	if (d->nrelations == 0)
		return true;
	if (!d->relation_prog)
		return false; /* not compiled (cannot happen: every name is an atom) */
	static const slong precisions[] = {64, 256};
	bool *kept = xcalloc(d->nrelations, sizeof *kept);
	size_t left = d->nrelations;
	for (size_t p = 0; p < sizeof precisions / sizeof precisions[0] && left; p++) {
		for (size_t i = 0; i < d->n; i++)
			ball_set_mpq(d->balls + i, values[i], precisions[p]);
		if (ball_run(d->relation_prog, d->balls, precisions[p], d->differences, d->statuses) !=
		    BALL_OK)
			break;
		for (size_t r = 0; r < d->nrelations; r++)
			if (!kept[r] && d->statuses[r] == BALL_OK &&
			    relation_kept(d->relations[r]->op, d->differences + r)) {
				kept[r] = true;
				left--;
			}
	}
	free(kept);
	return left == 0;
}

bool domain_draw(domain *d, mpq_t *values)
{
	d->draws++;
	for (int attempt = 0; attempt < DOMAIN_TRIES; attempt++) {
		for (size_t i = 0; i < d->n; i++)
			d->atoms[i].drawn = false;
		for (size_t i = 0; i < d->n; i++)
			draw_atom(d, i);
		if (!inside(d))
			continue;
		for (size_t i = 0; i < d->n; i++) {
			atom *a = &d->atoms[i];
			if (a->pinned)
				mpq_set(values[i], expr_num_value(a->entry->lo));
			else
				mpq_set_d(values[i], d->values[i]);
		}
		if (relations_kept(d, values))
			return true;
	}
	return false;
}
