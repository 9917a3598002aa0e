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
#include "rat.h"
#include "sim.h"
#include "xalloc.h"

enum { DOMAIN_TRIES = 200, DOMAIN_MARKS = 48 };

typedef struct atom {
	const expr *e;
	model_entry *entry; /* its declaration, or NULL (t, generic partials) */
	bool pinned;	    /* a range [c, c]: always c */
	bool drawn;	    /* drawn in the current point */
	bool marked;        /* at a mark in the current point: its value is exact */
	mpq_t exact;        /* that value */
} atom;

struct domain {
	expr_ctx *ctx;
	model *m;
	atom *atoms;
	size_t n, cap;
	double *values; /* the current point as doubles, for bounds */
	const model_relation **relations; /* the model's relations on these atoms */
	size_t nrelations;
	/* the constraints a point must keep, certified at the exact point: the
	 * relations, then each atom's bounds and sign (root op 0) */
	const expr **roots;
	model_rel *ops;
	size_t nconstraints;
	ball_prog *constraint_prog; /* their roots over the atoms */
	arb_ptr balls;              /* the point, and the roots at it */
	arb_ptr differences;
	ball_status *statuses;
	mpq_t *marks; /* the marks (domain_add_mark), each with its negative */
	size_t nmarks;
	struct root_mark {
		size_t atom;
		const expr *at;
	} * roots_at; /* marks of one atom that depend on the others (domain_add_root) */
	size_t nroots_at;
	size_t next_candidate; /* the next marked point to try (see marked_draw) */
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
	mpq_init(d->atoms[d->n].exact);
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

static void add_constraint(domain *d, const expr *root, model_rel op)
{
	if (!root)
		return;
	d->roots = xreallocarray(d->roots, d->nconstraints + 1, sizeof *d->roots);
	d->ops = xreallocarray(d->ops, d->nconstraints + 1, sizeof *d->ops);
	d->roots[d->nconstraints] = root;
	d->ops[d->nconstraints++] = op;
}

/* The constraints over the final atoms: the relations, x - lo > 0 (or >= 0),
 * hi - x > 0, the sign (x > 0, x >= 0, ...) and t >= 0; compiled to one program. */
static void compile_constraints(domain *d)
{
	bool formed = expr_error(d->ctx) == EXPR_OK; /* a pending error is not ours to clear */
	for (size_t r = 0; r < d->nrelations; r++)
		add_constraint(d, d->relations[r]->difference, d->relations[r]->op);
	size_t relations = d->nconstraints;
	for (size_t i = 0; i < d->n; i++) {
		const atom *a = &d->atoms[i];
		model_entry *e = a->entry;
		if (a->pinned || !formed)
			continue;
		if (e && e->lo)
			add_constraint(d, expr_sub(d->ctx, a->e, e->lo),
			               e->lo_strict ? MODEL_REL_GT : MODEL_REL_GE);
		if (e && e->hi)
			add_constraint(d, expr_sub(d->ctx, e->hi, a->e),
			               e->hi_strict ? MODEL_REL_GT : MODEL_REL_GE);
		int sign = expr_kind_of(a->e) == EXPR_SYM ? expr_sym_sign(a->e) : EXPR_SIGN_UNKNOWN;
		if (a->e == d->m->time && !(e && e->lo))
			add_constraint(d, a->e, MODEL_REL_GE);
		else if (!(sign & EXPR_SIGN_NEG))
			add_constraint(d, a->e, sign & EXPR_SIGN_ZERO ? MODEL_REL_GE : MODEL_REL_GT);
		else if (!(sign & EXPR_SIGN_POS))
			add_constraint(d, a->e, sign & EXPR_SIGN_ZERO ? MODEL_REL_LE : MODEL_REL_LT);
	}
	if (expr_error(d->ctx) != EXPR_OK) {
		/* a bound too large to form: the bounds are kept in doubles only */
		expr_clear_recoverable(d->ctx);
		d->nconstraints = relations;
	}
	if (d->nconstraints == 0)
		return;
	const expr **atoms = xcalloc(d->n + 1, sizeof *atoms);
	for (size_t i = 0; i < d->n; i++)
		atoms[i] = d->atoms[i].e;
	d->constraint_prog = ball_compile(d->ctx, d->nconstraints, d->roots, d->n, atoms, NULL);
	free(atoms);
	d->balls = _arb_vec_init((slong)d->n + 1);
	d->differences = _arb_vec_init((slong)d->nconstraints);
	d->statuses = xcalloc(d->nconstraints, sizeof *d->statuses);
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
	compile_constraints(d);
	d->values = xcalloc(d->n + 1, sizeof *d->values);
	sim_rng_seed(&d->rng, seed);
	return d;
}

void domain_free(domain *d)
{
	if (!d)
		return;
	if (d->nconstraints) {
		ball_free(d->constraint_prog);
		_arb_vec_clear(d->balls, (slong)d->n + 1);
		_arb_vec_clear(d->differences, (slong)d->nconstraints);
		free(d->statuses);
	}
	free(d->roots);
	free(d->ops);
	for (size_t i = 0; i < d->nmarks; i++)
		mpq_clear(d->marks[i]);
	free(d->marks);
	free(d->roots_at);
	for (size_t i = 0; i < d->n; i++)
		mpq_clear(d->atoms[i].exact);
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
		if (d->atoms[i].marked)
			continue; /* certified at the exact point (constraints_kept) */
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

/* Does the exact point values keep every constraint (relations, bounds,
 * signs)?  Certified in ball arithmetic, with more precision when a ball
 * touches 0; a point that no precision certifies (or where a relation is
 * undefined) is not kept. */
static bool constraints_kept(domain *d, mpq_t *values)
{
	if (d->nconstraints == 0)
		return true;
	if (!d->constraint_prog)
		return false; /* not compiled (cannot happen: every name is an atom) */
	static const slong precisions[] = {64, 256, 4096};
	bool *kept = xcalloc(d->nconstraints, sizeof *kept);
	size_t left = d->nconstraints;
	for (size_t p = 0; p < sizeof precisions / sizeof precisions[0] && left; p++) {
		for (size_t i = 0; i < d->n; i++)
			ball_set_mpq(d->balls + i, values[i], precisions[p]);
		if (ball_run(d->constraint_prog, d->balls, precisions[p], d->differences, d->statuses) !=
		    BALL_OK)
			break;
		for (size_t r = 0; r < d->nconstraints; r++)
			if (!kept[r] && d->statuses[r] == BALL_OK &&
			    relation_kept(d->ops[r], d->differences + r)) {
				kept[r] = true;
				left--;
			}
	}
	free(kept);
	return left == 0;
}

void domain_add_mark(domain *d, mpq_srcptr q)
{
	for (int negated = 0; negated < 2; negated++) {
		if (d->nmarks >= DOMAIN_MARKS)
			return;
		mpq_t value;
		mpq_init(value);
		if (negated)
			mpq_neg(value, q);
		else
			mpq_set(value, q);
		bool seen = false;
		for (size_t i = 0; i < d->nmarks && !seen; i++)
			seen = mpq_equal(d->marks[i], value);
		if (seen) {
			mpq_clear(value);
			continue;
		}
		d->marks = xreallocarray(d->marks, d->nmarks + 1, sizeof *d->marks);
		mpq_init(d->marks[d->nmarks]);
		mpq_swap(d->marks[d->nmarks++], value);
		mpq_clear(value);
	}
}

void domain_add_root(domain *d, const expr *name, const expr *at)
{
	if (d->nroots_at >= DOMAIN_MARKS)
		return;
	for (size_t i = 0; i < d->n; i++)
		if (d->atoms[i].e == name) {
			d->roots_at = xreallocarray(d->roots_at, d->nroots_at + 1, sizeof *d->roots_at);
			d->roots_at[d->nroots_at++] = (struct root_mark){.atom = i, .at = at};
			return;
		}
}

/* The value of root mark k at the point values (the other atoms drawn), as
 * the shortest decimal of its double; false when it cannot be evaluated. */
static bool root_mark(domain *d, size_t k, mpq_t *values, mpq_t out)
{
	const expr **atoms = xcalloc(d->n + 1, sizeof *atoms);
	for (size_t i = 0; i < d->n; i++)
		atoms[i] = d->atoms[i].e;
	arb_t value;
	arb_init(value);
	bool ok = ball_eval(d->ctx, d->roots_at[k].at, d->n, atoms, (const mpq_t *)values, 128, value) ==
	          BALL_OK;
	double x = ok ? arf_get_d(arb_midref(value), ARF_RND_NEAR) : NAN;
	arb_clear(value);
	free(atoms);
	if (!isfinite(x))
		return false;
	rat_set_double_short(out, x);
	return true;
}

/* The perturbations of a mark m: m itself, then m (1 + 10^-k), m (1 - 10^-k),
 * m + 10^-k and m - 10^-k for each k of marked_steps: a point on each side of a
 * sign change at m (abs(y - m)), however far out m is and however close to it
 * the change is.  Their number (37) is prime, see marked_draw. */
static const unsigned marked_steps[] = {1, 2, 3, 6, 9, 12, 15, 20, 30};
enum { MARKED_PERTURBATIONS = 1 + 4 * (int)(sizeof marked_steps / sizeof marked_steps[0]) };

static void perturb(mpq_t x, mpq_srcptr mark, unsigned p)
{
	mpq_set(x, mark);
	if (p == 0)
		return;
	unsigned kind = (p - 1) % 4, k = marked_steps[(p - 1) / 4];
	mpq_t step;
	mpq_init(step);
	mpz_ui_pow_ui(mpq_denref(step), 10, k);
	mpz_set_ui(mpq_numref(step), 1); /* 10^-k, canonical */
	if (kind < 2) {
		mpq_mul(step, step, mark);
	}
	if (kind % 2 == 0)
		mpq_add(x, x, step);
	else
		mpq_sub(x, x, step);
	mpq_clear(step);
}

/* The value of a bound of atom i as a mark (its names drawn first): exact for
 * a number, else the shortest decimal of its double; false when it has none. */
static bool bound_mark(domain *d, size_t i, bool upper, mpq_t out)
{
	model_entry *e = d->atoms[i].entry;
	const expr *bound = e ? (upper ? e->hi : e->lo) : NULL;
	if (!bound)
		return false;
	if (expr_is_num(bound)) {
		mpq_set(out, expr_num_value(bound));
		return true;
	}
	double v = bound_value(d, bound);
	if (!isfinite(v))
		return false;
	rat_set_double_short(out, v);
	return true;
}

/* Fill values from the drawn doubles (the shortest decimals) and the exact
 * values of marked and pinned atoms. */
static void take_point(domain *d, mpq_t *values)
{
	for (size_t i = 0; i < d->n; i++) {
		atom *a = &d->atoms[i];
		if (a->pinned)
			mpq_set(values[i], expr_num_value(a->entry->lo));
		else if (a->marked)
			mpq_set(values[i], a->exact);
		else
			rat_set_double_short(values[i], d->values[i]);
	}
}

/* A point with one atom at or near a mark: candidate c gives perturbation
 * c mod 37 (perturb) and slot c mod (slots * atoms), slot s < nmarks the mark s,
 * then the atom's lower and upper bound, then the root marks (of their own
 * atom only, at the point the other atoms were drawn to).  When 37 and slots * atoms are coprime,
 * the first candidates go round every atom and mark with changing
 * perturbations (the Chinese remainder theorem), so each mark is soon tried
 * from both sides, the same way on every seed.  The other atoms are drawn as
 * usual.  False when no candidate is left (or none of a few is in the domain). */
static bool marked_draw(domain *d, mpq_t *values)
{
	size_t slots = d->nmarks + 2 + d->nroots_at;
	if ((slots * d->n) % MARKED_PERTURBATIONS == 0)
		slots++; /* an empty slot keeps the two counts coprime */
	size_t total = MARKED_PERTURBATIONS * slots * d->n;
	mpq_t mark;
	mpq_init(mark);
	bool found = false;
	for (int tries = 0; tries < 64 && !found && d->next_candidate < total; tries++) {
		size_t c = d->next_candidate++;
		unsigned p = (unsigned)(c % MARKED_PERTURBATIONS);
		size_t s = c % (slots * d->n), slot = s / d->n, i = s % d->n;
		atom *a = &d->atoms[i];
		if (a->pinned)
			continue;
		for (size_t j = 0; j < d->n; j++)
			d->atoms[j].drawn = d->atoms[j].marked = false;
		a->drawn = true; /* a bound that refers back to it reads 0 */
		d->values[i] = 0;
		size_t root = slot - d->nmarks - 2; /* a root mark when < nroots_at */
		if (slot < d->nmarks) {
			mpq_set(mark, d->marks[slot]);
		} else if (slot < d->nmarks + 2) {
			if (!bound_mark(d, i, slot - d->nmarks == 1, mark))
				continue;
		} else if (root >= d->nroots_at || d->roots_at[root].atom != i) {
			continue;
		} else {
			for (size_t j = 0; j < d->n; j++)
				draw_atom(d, j);
			take_point(d, values);
			if (!root_mark(d, root, values, mark))
				continue;
		}
		perturb(a->exact, mark, p);
		a->marked = true;
		d->values[i] = mpq_get_d(a->exact);
		for (size_t j = 0; j < d->n; j++)
			draw_atom(d, j);
		if (!inside(d))
			continue;
		take_point(d, values);
		found = constraints_kept(d, values);
	}
	mpq_clear(mark);
	if (!found)
		for (size_t j = 0; j < d->n; j++)
			d->atoms[j].marked = false;
	return found;
}

bool domain_draw(domain *d, mpq_t *values)
{
	d->draws++;
	/* every second point at or near a mark, while candidates are left */
	if (d->draws % 2 == 0 && marked_draw(d, values))
		return true;
	for (int attempt = 0; attempt < DOMAIN_TRIES; attempt++) {
		for (size_t i = 0; i < d->n; i++)
			d->atoms[i].drawn = d->atoms[i].marked = false;
		for (size_t i = 0; i < d->n; i++)
			draw_atom(d, i);
		if (!inside(d))
			continue;
		take_point(d, values);
		if (constraints_kept(d, values))
			return true;
	}
	return false;
}
