/* ito.c - Itô's formula in n dimensions with correlated noises.
 *
 * For f(t, X_1..X_n) with dX_i = mu_i dt + sum_k b_ik dW_k and
 * dW_k dW_l = rho_kl dt (Shreve, Stochastic Calculus for Finance II, 4.6):
 *   df = (f_t + sum_i mu_i f_i + 1/2 sum_ij C_ij f_ij) dt + sum_k (sum_i b_ik f_i) dW_k,
 *   C_ij = sum_kl b_ik b_jl rho_kl.
 * Stratonovich to Itô (Kloeden and Platen, 4.9, with correlated noises):
 *   mu_i = a_i + 1/2 sum_k sum_j (d b_ik / d X_j) sum_l b_jl rho_lk.
 */
#include "ito.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "diff.h"
#include "expr-internal.h"
#include "rat.h"
#include "ratform.h"
#include "xalloc.h"

void ito_diff_zero(ito_diff *d, const model *m)
{
	d->n = m->nnoises;
	d->dt = expr_int(m->ctx, 0);
	d->dw = xcalloc(d->n ? d->n : 1, sizeof *d->dw);
	for (size_t k = 0; k < d->n; k++)
		d->dw[k] = d->dt;
}

void ito_diff_free(ito_diff *d)
{
	free(d->dw);
	d->dw = NULL;
	d->n = 0;
}

bool ito_diff_failed(const ito_diff *d)
{
	if (!d->dt)
		return true;
	for (size_t k = 0; k < d->n; k++)
		if (!d->dw[k])
			return true;
	return false;
}

static const expr *coef(const ito_diff *d, size_t k, const model *m)
{
	return k < d->n ? d->dw[k] : expr_int(m->ctx, 0);
}

void ito_diff_add(const model *m, const ito_diff *a, const ito_diff *b, ito_diff *out)
{
	ito_diff r;
	ito_diff_zero(&r, m);
	r.dt = expr_add(m->ctx, a->dt, b->dt);
	for (size_t k = 0; k < r.n; k++)
		r.dw[k] = expr_add(m->ctx, coef(a, k, m), coef(b, k, m));
	*out = r;
}

void ito_diff_scale(const model *m, const ito_diff *a, const expr *factor, ito_diff *out)
{
	ito_diff r;
	ito_diff_zero(&r, m);
	r.dt = expr_mul(m->ctx, a->dt, factor);
	for (size_t k = 0; k < r.n; k++)
		r.dw[k] = expr_mul(m->ctx, coef(a, k, m), factor);
	*out = r;
}

/* The indices of the nonzero noise coefficients of d (a NULL one counts: the
 * product with it fails as it should).  indices holds m->nnoises entries. */
static size_t noise_support(const model *m, const ito_diff *d, size_t *indices)
{
	size_t count = 0;
	for (size_t k = 0; k < m->nnoises; k++) {
		const expr *c = coef(d, k, m);
		if (!c || !expr_is_zero(c))
			indices[count++] = k;
	}
	return count;
}

const expr *ito_covariation(model *m, const ito_diff *a, const ito_diff *b)
{
	expr_ctx *ctx = m->ctx;
	size_t n = m->nnoises;
	/* only the noises both sides load on meet: O(support_a * support_b) */
	size_t *support = xmalloc((2 * n + 1) * sizeof *support);
	size_t na = noise_support(m, a, support), nb = noise_support(m, b, support + na);
	const expr **terms = xmalloc((na * nb + 1) * sizeof *terms);
	size_t nterms = 0;
	for (size_t x = 0; x < na; x++) {
		size_t k = support[x];
		for (size_t y = 0; y < nb; y++) {
			size_t l = support[na + y];
			const expr *rho = model_corr(m, k, l);
			if (expr_is_zero(rho))
				continue;
			terms[nterms++] = expr_mul_n(ctx, 3, (const expr *[]){coef(a, k, m), coef(b, l, m), rho});
		}
	}
	const expr *result = expr_add_n(ctx, nterms, terms);
	free(terms);
	free(support);
	return result;
}

void ito_mul(model *m, const ito_diff *a, const ito_diff *b, ito_diff *out)
{
	/* dt*dt = 0, dt*dW = 0: only the noise parts meet */
	ito_diff r;
	ito_diff_zero(&r, m);
	r.dt = ito_covariation(m, a, b);
	*out = r;
}

/* Stratonovich correction 1/2 sum_k sum_j (d b_ik/d X_j) d<X_j, W_k>/dt. */
static const expr *stratonovich_correction(model *m, const model_sde *sde)
{
	expr_ctx *ctx = m->ctx;
	expr_vec terms = {0};
	for (size_t k = 0; k < sde->ndiffusion && k < m->nnoises; k++) {
		const expr *b = sde->diffusion[k];
		if (!b || expr_is_zero(b))
			continue;
		expr_vec symbols = {0};
		expr_free_symbols(ctx, b, &symbols);
		for (size_t s = 0; s < symbols.n; s++) {
			const expr *x = symbols.items[s];
			const model_sde *other = model_sde_of(m, x);
			long noise = model_noise_index(m, x);
			const expr *db = diff(ctx, b, x);
			if (!db || expr_is_zero(db))
				continue;
			/* d<X_j, W_k>/dt = sum_l b_jl rho_lk */
			const expr *cross;
			if (other) {
				expr_vec parts = {0};
				for (size_t l = 0; l < other->ndiffusion && l < m->nnoises; l++)
					expr_vec_push(&parts, expr_mul(ctx, other->diffusion[l], model_corr(m, l, k)));
				cross = expr_add_n(ctx, parts.n, parts.items);
				expr_vec_free(&parts);
			} else if (noise >= 0) {
				cross = model_corr(m, (size_t)noise, k);
			} else {
				continue;
			}
			expr_vec_push(&terms, expr_mul(ctx, db, cross));
		}
		expr_vec_free(&symbols);
	}
	const expr *sum = expr_add_n(ctx, terms.n, terms.items);
	expr_vec_free(&terms);
	return expr_mul(ctx, expr_rat(ctx, 1, 2), sum);
}

const expr *ito_state_ito_drift(model *m, const model_sde *sde)
{
	if (!sde->stratonovich)
		return sde->drift;
	return expr_add(m->ctx, sde->drift, stratonovich_correction(m, sde));
}

const expr *ito_state_stratonovich_drift(model *m, const model_sde *sde)
{
	if (sde->stratonovich)
		return sde->drift;
	return expr_sub(m->ctx, sde->drift, stratonovich_correction(m, sde));
}

bool ito_dynamics(model *m, const model_measure *q, const expr *sym, ito_diff *out)
{
	expr_ctx *ctx = m->ctx;
	ito_diff_zero(out, m);
	if (sym == m->time) {
		out->dt = expr_int(ctx, 1);
		return true;
	}
	long noise = model_noise_index(m, sym);
	if (noise >= 0) {
		out->dw[noise] = expr_int(ctx, 1);
		if (q)
			out->dt = q->shift[noise];
		return true;
	}
	const model_sde *sde = model_sde_of(m, sym);
	if (!sde)
		return false;
	out->dt = ito_state_ito_drift(m, sde);
	for (size_t k = 0; k < out->n && k < sde->ndiffusion; k++)
		out->dw[k] = sde->diffusion[k];
	if (q) {
		/* b dW = b dZ + b*shift dt */
		for (size_t k = 0; k < out->n && k < q->nnoises; k++)
			if (!expr_is_zero(q->shift[k]))
				out->dt = expr_add(ctx, out->dt, expr_mul(ctx, out->dw[k], q->shift[k]));
	}
	return true;
}

/* Does u move with a state or a noise (so a process can bring it to 0)? */
static bool moves(model *m, const expr *u)
{
	expr_vec names = {0};
	expr_free_symbols(m->ctx, u, &names);
	bool found = false;
	for (size_t i = 0; i < names.n && !found; i++)
		found = model_sde_of(m, names.items[i]) || model_noise_index(m, names.items[i]) >= 0;
	expr_vec_free(&names);
	return found;
}

/* An interval of values that contains every value of an expression on the
 * declared domain: exact rational ends, each possibly infinite or open.
 * Interval arithmetic only widens, so a sign read from it is certain. */
typedef struct span {
	mpq_t lo, hi;
	bool lo_inf, hi_inf, lo_open, hi_open;
} span;

static void span_init(span *s)
{
	mpq_init(s->lo);
	mpq_init(s->hi);
	s->lo_inf = s->hi_inf = true;
	s->lo_open = s->hi_open = true;
}

static void span_clear(span *s)
{
	mpq_clear(s->lo);
	mpq_clear(s->hi);
}

/* exact powers of range ends: larger ones are not worth deciding by */
enum { SPAN_MAX_BITS = 4096, SPAN_MAX_EXPONENT = 64 };

/* The range of a symbol: its declared numeric bounds, else its sign. */
static void span_of_symbol(model *m, const expr *sym, span *out)
{
	out->lo_inf = out->hi_inf = out->lo_open = out->hi_open = true;
	model_entry *entry = model_lookup(m, expr_sym_name(sym));
	if (entry && entry->lo && expr_is_num(entry->lo)) {
		mpq_set(out->lo, expr_num_value(entry->lo));
		out->lo_inf = false;
		out->lo_open = entry->lo_strict;
	}
	if (entry && entry->hi && expr_is_num(entry->hi)) {
		mpq_set(out->hi, expr_num_value(entry->hi));
		out->hi_inf = false;
		out->hi_open = entry->hi_strict;
	}
	int sign = expr_sym_sign(sym);
	if (!(sign & EXPR_SIGN_NEG) && (out->lo_inf || mpq_sgn(out->lo) < 0)) {
		mpq_set_ui(out->lo, 0, 1);
		out->lo_inf = false;
		out->lo_open = !(sign & EXPR_SIGN_ZERO);
	}
	if (!(sign & EXPR_SIGN_POS) && (out->hi_inf || mpq_sgn(out->hi) > 0)) {
		mpq_set_ui(out->hi, 0, 1);
		out->hi_inf = false;
		out->hi_open = !(sign & EXPR_SIGN_ZERO);
	}
}

/* out := the values of x^k for x in a finite span (closed: a wider span). */
static bool span_pow(span *out, const span *x, long k)
{
	if (x->lo_inf || x->hi_inf)
		return false;
	mpq_t a, b;
	mpq_inits(a, b, NULL);
	bool ok = rat_pow_int(a, x->lo, k, SPAN_MAX_BITS) && rat_pow_int(b, x->hi, k, SPAN_MAX_BITS);
	if (ok) {
		bool even = k % 2 == 0;
		if (!even || mpq_sgn(x->lo) >= 0) {
			mpq_set(out->lo, a);
			mpq_set(out->hi, b);
		} else if (mpq_sgn(x->hi) <= 0) {
			mpq_set(out->lo, b);
			mpq_set(out->hi, a);
		} else {
			mpq_set_ui(out->lo, 0, 1);
			mpq_set(out->hi, mpq_cmp(a, b) > 0 ? a : b);
		}
		out->lo_inf = out->hi_inf = out->lo_open = out->hi_open = false;
	}
	mpq_clears(a, b, NULL);
	return ok;
}

/* out := x*y for finite spans (closed: the corners bound the products). */
static void span_mul(span *out, const span *x, const span *y)
{
	mpq_t p[4];
	for (int i = 0; i < 4; i++)
		mpq_init(p[i]);
	mpq_mul(p[0], x->lo, y->lo);
	mpq_mul(p[1], x->lo, y->hi);
	mpq_mul(p[2], x->hi, y->lo);
	mpq_mul(p[3], x->hi, y->hi);
	int lo = 0, hi = 0;
	for (int i = 1; i < 4; i++) {
		if (mpq_cmp(p[i], p[lo]) < 0)
			lo = i;
		if (mpq_cmp(p[i], p[hi]) > 0)
			hi = i;
	}
	mpq_set(out->lo, p[lo]);
	mpq_set(out->hi, p[hi]);
	out->lo_inf = out->hi_inf = out->lo_open = out->hi_open = false;
	for (int i = 0; i < 4; i++)
		mpq_clear(p[i]);
}

/* out := c*x for a rational c (ends swap when c < 0; infinite ends stay). */
static void span_scale(span *out, const span *x, const __mpq_struct *c)
{
	bool flip = mpq_sgn(c) < 0;
	mpq_t lo, hi;
	mpq_inits(lo, hi, NULL);
	mpq_mul(lo, x->lo, c);
	mpq_mul(hi, x->hi, c);
	mpq_set(out->lo, flip ? hi : lo);
	mpq_set(out->hi, flip ? lo : hi);
	bool lo_inf = flip ? x->hi_inf : x->lo_inf, hi_inf = flip ? x->lo_inf : x->hi_inf;
	bool lo_open = flip ? x->hi_open : x->lo_open, hi_open = flip ? x->lo_open : x->hi_open;
	out->lo_inf = lo_inf;
	out->hi_inf = hi_inf;
	out->lo_open = lo_open;
	out->hi_open = hi_open;
	mpq_clears(lo, hi, NULL);
}

/* A span of the values of e on the declared domain, for sums of rational
 * multiples of products of symbols to positive integer powers; false for
 * anything else (functions, roots, unbounded products). */
static bool span_of(model *m, const expr *e, span *out, int depth)
{
	if (depth > 8)
		return false;
	switch (expr_kind_of(e)) {
	case EXPR_NUM:
		mpq_set(out->lo, expr_num_value(e));
		mpq_set(out->hi, expr_num_value(e));
		out->lo_inf = out->hi_inf = out->lo_open = out->hi_open = false;
		return true;
	case EXPR_SYM:
		span_of_symbol(m, e, out);
		return true;
	case EXPR_ADD: {
		span term;
		span_init(&term);
		bool ok = true;
		mpq_set_ui(out->lo, 0, 1);
		mpq_set_ui(out->hi, 0, 1);
		out->lo_inf = out->hi_inf = out->lo_open = out->hi_open = false;
		for (size_t i = 0; i < expr_nops(e) && ok; i++) {
			ok = span_of(m, expr_op(e, i), &term, depth + 1);
			if (!ok)
				break;
			out->lo_inf |= term.lo_inf;
			out->hi_inf |= term.hi_inf;
			out->lo_open |= term.lo_open;
			out->hi_open |= term.hi_open;
			if (!out->lo_inf)
				mpq_add(out->lo, out->lo, term.lo);
			if (!out->hi_inf)
				mpq_add(out->hi, out->hi, term.hi);
		}
		span_clear(&term);
		return ok;
	}
	case EXPR_MUL: {
		size_t n = expr_nops(e);
		for (size_t i = 0; i < n; i++) {
			const expr *k = expr_mul_exponent(e, i);
			if (!expr_is_integer(k) || mpq_sgn(expr_num_value(k)) <= 0 ||
			    mpz_cmp_ui(mpq_numref(expr_num_value(k)), SPAN_MAX_EXPONENT) > 0)
				return false;
		}
		long first = mpz_get_si(mpq_numref(expr_num_value(expr_mul_exponent(e, 0))));
		span factor, power, product;
		span_init(&factor);
		bool ok = span_of(m, expr_mul_base(e, 0), &factor, depth + 1);
		if (n == 1 && first == 1) {
			/* c*x: also for a half-bounded x */
			if (ok)
				span_scale(out, &factor, expr_mul_coef(e));
			span_clear(&factor);
			return ok;
		}
		span_init(&power);
		span_init(&product);
		ok = ok && span_pow(&product, &factor, first);
		for (size_t i = 1; i < n && ok; i++) {
			long k = mpz_get_si(mpq_numref(expr_num_value(expr_mul_exponent(e, i))));
			ok = span_of(m, expr_mul_base(e, i), &factor, depth + 1) &&
			     span_pow(&power, &factor, k);
			if (ok)
				span_mul(&product, &product, &power);
		}
		if (ok)
			span_scale(out, &product, expr_mul_coef(e));
		span_clear(&factor);
		span_clear(&power);
		span_clear(&product);
		return ok;
	}
	default:
		return false;
	}
}

/* The strict sign of a span (EXPR_SIGN_POS or _NEG), else EXPR_SIGN_UNKNOWN. */
static int span_sign(const span *s)
{
	if (!s->lo_inf && (mpq_sgn(s->lo) > 0 || (mpq_sgn(s->lo) == 0 && s->lo_open)))
		return EXPR_SIGN_POS;
	if (!s->hi_inf && (mpq_sgn(s->hi) < 0 || (mpq_sgn(s->hi) == 0 && s->hi_open)))
		return EXPR_SIGN_NEG;
	return EXPR_SIGN_UNKNOWN;
}

/* The sign of u from the model's relations (assume X > a keeps X - a > 0)
 * and from bounds that are expressions (assume X in [a, b]). */
static int sign_by_relations(model *m, const expr *u)
{
	expr_ctx *ctx = m->ctx;
	const expr *minus_u = expr_neg(ctx, u);
	for (size_t i = 0; i < m->nrelations && minus_u; i++) {
		const model_relation *rel = &m->relations[i];
		bool same = rel->difference == u, opposite = rel->difference == minus_u;
		if (!same && !opposite)
			continue;
		if (rel->op == MODEL_REL_GT)
			return same ? EXPR_SIGN_POS : EXPR_SIGN_NEG;
		if (rel->op == MODEL_REL_LT)
			return same ? EXPR_SIGN_NEG : EXPR_SIGN_POS;
	}
	for (size_t i = 0; i < m->nentries && minus_u; i++) {
		const model_entry *entry = &m->entries[i];
		if (entry->kind != MODEL_STATE && entry->kind != MODEL_PARAM)
			continue;
		/* x > lo: x - lo > 0; x < hi: hi - x > 0 */
		if (entry->lo && entry->lo_strict && !expr_is_num(entry->lo)) {
			const expr *gap = expr_sub(ctx, entry->sym, entry->lo);
			if (gap == u || gap == minus_u)
				return gap == u ? EXPR_SIGN_POS : EXPR_SIGN_NEG;
		}
		if (entry->hi && entry->hi_strict && !expr_is_num(entry->hi)) {
			const expr *gap = expr_sub(ctx, entry->hi, entry->sym);
			if (gap == u || gap == minus_u)
				return gap == u ? EXPR_SIGN_POS : EXPR_SIGN_NEG;
		}
	}
	return EXPR_SIGN_UNKNOWN;
}

/* The strict sign of u on the domain: EXPR_SIGN_POS, EXPR_SIGN_NEG, or
 * EXPR_SIGN_UNKNOWN when it cannot be shown.  The sign oracle first; then
 * the model's relations; then interval arithmetic over the declared ranges
 * (a polynomial in ranged states); for a sum none of these bounds (an
 * expanded square such as 4 + 4*sin(X) + sin(X)^2), the factors of u over
 * Q, each of which must have a strict sign.  A failure of the factorisation
 * (a limit) leaves no error behind and answers unknown. */
static int strict_sign(model *m, const expr *u, int depth)
{
	expr_ctx *ctx = m->ctx;
	int sign = expr_sign(ctx, u);
	if (sign == EXPR_SIGN_POS || sign == EXPR_SIGN_NEG)
		return sign;
	if (expr_error(ctx) != EXPR_OK)
		return EXPR_SIGN_UNKNOWN;
	sign = sign_by_relations(m, u);
	if (sign != EXPR_SIGN_UNKNOWN || expr_error(ctx) != EXPR_OK)
		return expr_error(ctx) != EXPR_OK ? EXPR_SIGN_UNKNOWN : sign;
	span values;
	span_init(&values);
	if (span_of(m, u, &values, 0))
		sign = span_sign(&values);
	span_clear(&values);
	if (sign != EXPR_SIGN_UNKNOWN || expr_kind_of(u) != EXPR_ADD || depth > 0)
		return sign;
	const expr *inv = ratform_normal(ctx, expr_pow(ctx, u, expr_int(ctx, -1)));
	if (!inv) {
		if (expr_error(ctx) == EXPR_ERR_TOO_LARGE)
			expr_clear_error(ctx);
		return EXPR_SIGN_UNKNOWN;
	}
	/* u^-1 = c * prod b_i^e_i: the sign of u is that of c times the signs
	 * of the bases to odd integer powers; a base under a root must be > 0 */
	bool negative = false;
	const __mpq_struct *coef = NULL;
	size_t n = expr_kind_of(inv) == EXPR_MUL ? expr_nops(inv) : 1;
	if (expr_kind_of(inv) == EXPR_MUL)
		coef = expr_mul_coef(inv);
	else if (expr_is_num(inv))
		coef = expr_num_value(inv);
	if (coef)
		negative = mpq_sgn(coef) < 0;
	for (size_t i = 0; i < n; i++) {
		const expr *base = expr_kind_of(inv) == EXPR_MUL ? expr_mul_base(inv, i) : inv;
		const expr *exponent =
		        expr_kind_of(inv) == EXPR_MUL ? expr_mul_exponent(inv, i) : expr_int(ctx, 1);
		if (expr_is_num(base))
			continue;
		sign = strict_sign(m, base, depth + 1);
		if (sign == EXPR_SIGN_UNKNOWN || !expr_is_num(exponent))
			return EXPR_SIGN_UNKNOWN;
		const __mpq_struct *k = expr_num_value(exponent);
		if (!rat_is_integer(k)) {
			if (sign != EXPR_SIGN_POS)
				return EXPR_SIGN_UNKNOWN;
			continue;
		}
		if (sign == EXPR_SIGN_NEG && mpz_odd_p(mpq_numref(k)))
			negative = !negative;
	}
	return negative ? EXPR_SIGN_NEG : EXPR_SIGN_POS;
}

/* Is u certain to stay inside (-pi/2, pi/2), where tan is smooth? */
static bool inside_tan_branch(model *m, const expr *u)
{
	/* 314159265/2e8 < pi/2 (pi = 3.14159265358...) */
	mpq_t half_pi_below;
	mpq_init(half_pi_below);
	mpq_set_ui(half_pi_below, 314159265, 200000000);
	mpq_canonicalize(half_pi_below);
	span values;
	span_init(&values);
	bool inside = span_of(m, u, &values, 0) && !values.lo_inf && !values.hi_inf;
	if (inside) {
		mpq_neg(half_pi_below, half_pi_below);
		inside = mpq_cmp(values.lo, half_pi_below) >= 0;
		mpq_neg(half_pi_below, half_pi_below);
		inside = inside && mpq_cmp(values.hi, half_pi_below) <= 0;
	}
	span_clear(&values);
	mpq_clear(half_pi_below);
	return inside;
}

/* Why f is not twice continuously differentiable where its processes can
 * go.  Itô's formula needs f in C^2 on an open set the processes stay in
 * (Karatzas and Shreve, Theorem 3.3.6, from memory); at a corner a
 * local-time term would be needed (Tanaka's formula for abs(W), Karatzas
 * and Shreve §3.6, from memory), and across a pole or outside the domain of
 * definition there is no formula at all. */
typedef enum rough_kind {
	ROUGH_NONE,
	ROUGH_CORNER,   /* abs(u), u^(p/q) with q odd, p/q < 2: not C^2 at u = 0 */
	ROUGH_POLE,     /* u^-n: unbounded at u = 0 */
	ROUGH_LOG,      /* log(u): defined for u > 0 only */
	ROUGH_ROOT,     /* u^(p/q) with q even: defined for u >= 0 only */
	ROUGH_POWER,    /* u^a with a symbolic: defined for u > 0 only */
	ROUGH_BASE,     /* c^X with c constant: defined for c > 0 only */
	ROUGH_TAN,      /* tan(u): poles at u = pi/2 + k*pi */
	ROUGH_QUOTIENT, /* in C^2, but the derivatives as written divide by u */
} rough_kind;

typedef struct rough {
	rough_kind kind;
	const expr *where; /* the function at fault, as written */
	const expr *at;    /* the argument that reaches the bad point */
	bool below_two;    /* ROUGH_ROOT: exponent under 2, not C^2 at 0 either */
	bool abs_power;    /* an abs(u)^n with odd n >= 3 was accepted */
} rough;

/* The argument a message names: u for abs(u). */
static const expr *point_of(const expr *base)
{
	return expr_kind_of(base) == EXPR_FUN && expr_fun_id(base) == EXPR_F_ABS ? expr_op(base, 0) : base;
}

static bool rough_point(model *m, const expr *f, expr_map *seen, rough *out);

/* A factor base^e of a product. */
static bool rough_factor(model *m, const expr *base, const expr *e, expr_map *seen, rough *out)
{
	expr_ctx *ctx = m->ctx;
	if (!expr_is_num(e)) {
		/* u^a = exp(a*log(u)): real for every a only where u > 0 */
		bool base_moves = moves(m, base);
		if ((base_moves || moves(m, e)) && !expr_is_num(base) &&
		    strict_sign(m, base, 0) != EXPR_SIGN_POS) {
			out->kind = base_moves ? ROUGH_POWER : ROUGH_BASE;
			out->where = expr_pow(ctx, base, e);
			out->at = base_moves ? point_of(base) : base;
			return true;
		}
		if (expr_is_num(base) && mpq_sgn(expr_num_value(base)) <= 0 && moves(m, e)) {
			out->kind = ROUGH_BASE;
			out->where = expr_pow(ctx, base, e);
			out->at = base;
			return true;
		}
		return rough_point(m, e, seen, out) || rough_point(m, base, seen, out);
	}
	const __mpq_struct *q = expr_num_value(e);
	bool integer = rat_is_integer(q);
	bool even_root = !integer && mpz_even_p(mpq_denref(q));
	bool is_abs = expr_kind_of(base) == EXPR_FUN && expr_fun_id(base) == EXPR_F_ABS;
	if (is_abs && mpq_cmp_ui(q, 2, 1) >= 0) {
		/* abs(u)^p, p >= 2: in C^2, the second derivative p(p-1)abs(u)^(p-2)
		 * being continuous (abs(u)^n = u^n for even n).  The derivatives
		 * the engine writes may divide by u: ito_d checks its result. */
		out->abs_power = true;
		return rough_point(m, expr_op(base, 0), seen, out);
	}
	bool smooth = integer ? mpq_sgn(q) > 0 : mpq_cmp_ui(q, 2, 1) > 0 && !even_root;
	if (!smooth && moves(m, base)) {
		int sign = strict_sign(m, base, 0);
		bool fine = even_root && !is_abs ? sign == EXPR_SIGN_POS : sign != EXPR_SIGN_UNKNOWN;
		if (!fine) {
			out->kind = even_root && !is_abs ? ROUGH_ROOT
			            : mpq_sgn(q) < 0     ? ROUGH_POLE
			                                 : ROUGH_CORNER;
			out->where = expr_pow(ctx, base, e);
			out->at = point_of(base);
			out->below_two = mpq_cmp_ui(q, 2, 1) < 0;
			return true;
		}
	}
	return rough_point(m, base, seen, out);
}

/* The first place where f is not twice continuously differentiable on the
 * values its processes can take (out->kind says why); false when there is
 * none.  Sums and generic functions are smooth by declaration; exp, sin,
 * cos, sinh, cosh, tanh, erf, Phi and phi are entire. */
static bool rough_point(model *m, const expr *f, expr_map *seen, rough *out)
{
	if (expr_map_get(seen, f))
		return false;
	expr_map_put(seen, f, f);
	switch (expr_kind_of(f)) {
	case EXPR_NUM:
	case EXPR_SYM:
		return false;
	case EXPR_FUN: {
		const expr *u = expr_op(f, 0);
		expr_builtin fn = expr_fun_id(f);
		if ((fn == EXPR_F_ABS || fn == EXPR_F_LOG || fn == EXPR_F_TAN) && moves(m, u)) {
			int sign = fn == EXPR_F_TAN ? EXPR_SIGN_UNKNOWN : strict_sign(m, u, 0);
			bool fine = fn == EXPR_F_TAN   ? inside_tan_branch(m, u)
			            : fn == EXPR_F_LOG ? sign == EXPR_SIGN_POS
			                               : sign != EXPR_SIGN_UNKNOWN;
			if (!fine) {
				out->kind = fn == EXPR_F_TAN   ? ROUGH_TAN
				            : fn == EXPR_F_LOG ? ROUGH_LOG
				                               : ROUGH_CORNER;
				out->where = f;
				out->at = u;
				if (fn == EXPR_F_LOG && point_of(u) != u) {
					/* log(abs(v)) is defined but for v = 0, a pole */
					out->kind = ROUGH_POLE;
					out->at = point_of(u);
				}
				return true;
			}
		}
		return rough_point(m, u, seen, out);
	}
	case EXPR_MUL:
		for (size_t i = 0; i < expr_nops(f); i++)
			if (rough_factor(m, expr_mul_base(f, i), expr_mul_exponent(f, i), seen, out))
				return true;
		return false;
	default:
		for (size_t i = 0; i < expr_nops(f); i++)
			if (rough_point(m, expr_op(f, i), seen, out))
				return true;
		return false;
	}
}

/* Does a result hold a negative power of something that can reach 0 (a
 * removable singularity the canonical form did not cancel)? */
static const expr *pole_in(model *m, const expr *e, expr_map *seen)
{
	if (!e || expr_map_get(seen, e))
		return NULL;
	expr_map_put(seen, e, e);
	if (expr_kind_of(e) == EXPR_MUL)
		for (size_t i = 0; i < expr_nops(e); i++) {
			const expr *base = expr_mul_base(e, i), *k = expr_mul_exponent(e, i);
			if (expr_is_num(k) && mpq_sgn(expr_num_value(k)) < 0 && moves(m, base) &&
			    strict_sign(m, base, 0) == EXPR_SIGN_UNKNOWN)
				return base;
		}
	if (expr_kind_of(e) == EXPR_NUM || expr_kind_of(e) == EXPR_SYM)
		return NULL;
	size_t n = expr_nops(e);
	for (size_t i = 0; i < n; i++) {
		const expr *inner =
		        pole_in(m, expr_kind_of(e) == EXPR_MUL ? expr_mul_base(e, i) : expr_op(e, i), seen);
		if (inner)
			return inner;
	}
	return NULL;
}

/* The message for a refusal: a template whose %1$s is the function at fault
 * and %2$s the argument that reaches the bad point. */
static const char *rough_message(const rough *r)
{
	switch (r->kind) {
	case ROUGH_POLE:
		return "Itô's formula needs a function twice differentiable where the processes can go, "
		       "and %1$s has a pole where %2$s = 0 (the formula does not hold across it); assume "
		       "a sign that keeps %2$s away from 0 if the model does";
	case ROUGH_LOG:
		return "Itô's formula needs a function twice differentiable where the processes can go, "
		       "and %1$s is not defined where %2$s <= 0 (a pole at %2$s = 0); assume %2$s > 0 "
		       "if the model does";
	case ROUGH_ROOT:
		return r->below_two
		               ? "Itô's formula needs a function twice differentiable where the processes "
		                 "can go, and %1$s is not defined where %2$s < 0 nor twice differentiable "
		                 "where %2$s = 0 (a local-time term would be needed); assume %2$s > 0 if "
		                 "the model does"
		               : "Itô's formula needs a function twice differentiable where the processes "
		                 "can go, and %1$s is not defined where %2$s < 0; assume %2$s > 0 if the "
		                 "model does";
	case ROUGH_POWER:
		return "Itô's formula needs a function twice differentiable where the processes can go, "
		       "and %1$s, with a symbolic exponent, is not defined where %2$s < 0 nor, for some "
		       "exponents, twice differentiable where %2$s = 0 (a local-time term would be "
		       "needed); assume %2$s > 0 if the model does, or write an integer exponent as a "
		       "number";
	case ROUGH_BASE:
		return "Itô's formula needs a function twice differentiable where the processes can go, "
		       "and %1$s is not defined for every exponent where %2$s <= 0; assume %2$s > 0 if "
		       "the model does";
	case ROUGH_TAN:
		return "Itô's formula needs a function twice differentiable where the processes can go, "
		       "and %1$s has poles where %2$s = pi/2 + k*pi (the formula does not hold across "
		       "them); assume a range that keeps %2$s inside (-pi/2, pi/2) if the model does";
	case ROUGH_QUOTIENT:
		return "%1$s is twice differentiable, but its derivatives as written divide by %2$s, "
		       "which can be 0; assume a sign that keeps %2$s away from 0 if the model does";
	default:
		return "Itô's formula needs a function twice differentiable where the processes can go, "
		       "and %1$s is not where %2$s = 0 (a local-time term would be needed); assume a "
		       "sign that keeps %2$s away from 0 if the model does";
	}
}

/* rough_point over f from a fresh start, r its finding; the refusal as the
 * context's error when set_error. */
static bool refuse(model *m, const expr *f, rough *r, bool set_error)
{
	expr_map seen = {0};
	*r = (rough){ROUGH_NONE, NULL, NULL, false, false};
	bool refused = rough_point(m, f, &seen, r);
	expr_map_free(&seen);
	if (refused && set_error)
		expr_fail_at(m->ctx, EXPR_ERR_DOMAIN, rough_message(r), r->where, r->at);
	return refused;
}

bool ito_refuses(model *m, const expr *f, bool set_error)
{
	rough r;
	return refuse(m, f, &r, set_error);
}

void ito_d(model *m, const model_measure *q, const expr *f, ito_diff *out)
{
	expr_ctx *ctx = m->ctx;
	ito_diff_zero(out, m);
	if (!f) {
		out->dt = NULL;
		return;
	}
	rough r;
	if (refuse(m, f, &r, true)) {
		for (size_t k = 0; k < out->n; k++)
			out->dw[k] = NULL;
		out->dt = NULL;
		return;
	}
	/* the processes f depends on, with their dynamics */
	expr_vec symbols = {0};
	expr_free_symbols(ctx, f, &symbols);
	size_t nproc = 0;
	const expr **procs = xmalloc((symbols.n + 1) * sizeof *procs);
	ito_diff *dyn = xcalloc(symbols.n + 1, sizeof *dyn);
	const expr **first = xcalloc(symbols.n + 1, sizeof *first);
	for (size_t i = 0; i < symbols.n; i++) {
		if (!ito_dynamics(m, q, symbols.items[i], &dyn[nproc])) {
			ito_diff_free(&dyn[nproc]);
			continue;
		}
		procs[nproc] = symbols.items[i];
		first[nproc] = diff(ctx, f, procs[nproc]);
		nproc++;
		if (!first[nproc - 1])
			break; /* a limit or an interrupt: the error is in the context */
	}
	bool failed = false;
	for (size_t i = 0; i < nproc; i++)
		failed |= !first[i];
	expr_vec drift = {0};
	if (failed)
		nproc = 0; /* nothing more to build; out->dt becomes NULL below */
	for (size_t i = 0; i < nproc; i++) {
		if (expr_is_zero(first[i]))
			continue;
		expr_vec_push(&drift, expr_mul(ctx, dyn[i].dt, first[i]));
		for (size_t k = 0; k < out->n; k++)
			if (!expr_is_zero(dyn[i].dw[k]))
				out->dw[k] = expr_add(ctx, out->dw[k], expr_mul(ctx, dyn[i].dw[k], first[i]));
	}
	/* second-order terms: 1/2 C_ii f_ii + sum_{i<j} C_ij f_ij */
	for (size_t i = 0; i < nproc; i++) {
		if (expr_is_zero(first[i]) || expr_poll_interrupt(ctx))
			continue;
		for (size_t j = i; j < nproc; j++) {
			if (expr_is_zero(first[j]))
				continue;
			const expr *c = ito_covariation(m, &dyn[i], &dyn[j]);
			if (!c || expr_is_zero(c))
				continue;
			const expr *fij = diff(ctx, first[i], procs[j]);
			if (fij && expr_is_zero(fij))
				continue;
			const expr *weight = i == j ? expr_rat(ctx, 1, 2) : expr_int(ctx, 1);
			expr_vec_push(&drift, expr_mul_n(ctx, 3, (const expr *[]){weight, c, fij}));
		}
	}
	out->dt = failed || expr_error(ctx) ? NULL : expr_add_n(ctx, drift.n, drift.items);
	if (out->dt && r.abs_power) {
		/* the derivatives of abs(u)^n carry abs(u)/u; a result that keeps
		 * such a quotient is undefined at u = 0 as written: refused */
		expr_map poles = {0};
		const expr *pole = pole_in(m, out->dt, &poles);
		for (size_t k = 0; k < out->n && !pole; k++)
			pole = pole_in(m, out->dw[k], &poles);
		expr_map_free(&poles);
		if (pole) {
			r.kind = ROUGH_QUOTIENT;
			expr_fail_at(ctx, EXPR_ERR_DOMAIN, rough_message(&r), f, pole);
			out->dt = NULL;
		}
	}
	if (!out->dt)
		for (size_t k = 0; k < out->n; k++)
			out->dw[k] = NULL; /* a failed differential has no part to use */
	expr_vec_free(&drift);
	for (size_t i = 0; i < symbols.n; i++)
		ito_diff_free(&dyn[i]);
	free(dyn);
	free(procs);
	free(first);
	expr_vec_free(&symbols);
}

const expr *ito_pde(model *m, const model_measure *q, const expr *V, const expr *discount)
{
	ito_diff d;
	ito_d(m, q, V, &d);
	const expr *result = d.dt;
	if (discount)
		result = expr_sub(m->ctx, result, expr_mul(m->ctx, discount, V));
	ito_diff_free(&d);
	return result;
}

/* A process in e (a state or a noise) that is not among args; NULL if none. */
static const expr *outside(model *m, const expr *e, size_t nargs, const expr *const *args)
{
	if (!e)
		return NULL;
	expr_vec names = {0};
	expr_free_symbols(m->ctx, e, &names);
	const expr *found = NULL;
	for (size_t i = 0; i < names.n && !found; i++) {
		const expr *x = names.items[i];
		if (!model_sde_of(m, x) && model_noise_index(m, x) < 0)
			continue;
		bool listed = false;
		for (size_t j = 0; j < nargs && !listed; j++)
			listed = args[j] == x;
		if (!listed)
			found = x;
	}
	expr_vec_free(&names);
	return found;
}

/* An equation for u(t, x_1..x_n) closes when the dynamics of every listed
 * state depend on the listed states only: the generator (and its adjoint)
 * then map functions of (t, x) to functions of (t, x).  Otherwise the
 * missing state's partials belong in the equation (Karatzas and Shreve,
 * 5.7, from memory: the Kolmogorov equations are in all the states of a
 * Markov process). */
const expr *ito_unclosed(model *m, const model_measure *q, size_t nargs, const expr *const *args,
                         const expr *discount, const expr **driven)
{
	for (size_t i = 0; i < nargs; i++) {
		if (!model_sde_of(m, args[i]))
			continue;
		ito_diff d;
		ito_dynamics(m, q, args[i], &d);
		const expr *missing = outside(m, d.dt, nargs, args);
		for (size_t k = 0; k < d.n && !missing; k++)
			missing = outside(m, d.dw[k], nargs, args);
		ito_diff_free(&d);
		if (missing) {
			*driven = args[i];
			return missing;
		}
	}
	*driven = NULL;
	return outside(m, discount, nargs, args);
}
