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

/* The first place where f is not twice continuously differentiable on the
 * values its processes can take: abs(u), log(u), u^(p/q) with p/q < 2 not an
 * integer, and u^-n, each at u = 0, where u moves with a process and its
 * sign is not known to keep it away from 0.  Itô's formula needs f in C^2
 * (Karatzas and Shreve, Theorem 3.3.6); at such a point a local-time term
 * would be needed (Tanaka's formula for abs(W), Karatzas and Shreve §3.6,
 * from memory).  NULL when there is none. */
/* Is u of one strict sign on the domain?  The sign oracle first; for a sum it
 * cannot bound (an expanded square such as 4 + 4*sin(X) + sin(X)^2), the
 * factors of u over Q, each of which must have a strict sign.  A failure of
 * the factorisation (a limit) leaves no error behind and answers no. */
static bool away_from_zero(expr_ctx *ctx, const expr *u)
{
	int sign = expr_sign(ctx, u);
	if (sign == EXPR_SIGN_POS || sign == EXPR_SIGN_NEG)
		return true;
	if (expr_kind_of(u) != EXPR_ADD || expr_error(ctx) != EXPR_OK)
		return false;
	const expr *inv = ratform_normal(ctx, expr_pow(ctx, u, expr_int(ctx, -1)));
	if (!inv) {
		if (expr_error(ctx) == EXPR_ERR_TOO_LARGE)
			expr_clear_error(ctx);
		return false;
	}
	size_t n = expr_kind_of(inv) == EXPR_MUL ? expr_nops(inv) : 1;
	for (size_t i = 0; i < n; i++) {
		const expr *base = expr_kind_of(inv) == EXPR_MUL ? expr_mul_base(inv, i) : inv;
		if (expr_is_num(base))
			continue;
		sign = expr_sign(ctx, base);
		if (sign != EXPR_SIGN_POS && sign != EXPR_SIGN_NEG)
			return false;
	}
	return true;
}

static const expr *rough_point(model *m, const expr *f, expr_map *seen)
{
	if (expr_map_get(seen, f))
		return NULL;
	expr_map_put(seen, f, f);
	expr_ctx *ctx = m->ctx;
	switch (expr_kind_of(f)) {
	case EXPR_NUM:
	case EXPR_SYM:
		return NULL;
	case EXPR_FUN: {
		const expr *u = expr_op(f, 0);
		expr_builtin fn = f->u.fun.fn;
		int sign = expr_sign(ctx, u);
		bool away = sign == EXPR_SIGN_POS || (fn == EXPR_F_ABS && sign == EXPR_SIGN_NEG);
		if ((fn == EXPR_F_ABS || fn == EXPR_F_LOG) && !away && moves(m, u)) {
			return f;
		}
		return rough_point(m, u, seen);
	}
	case EXPR_MUL:
		for (size_t i = 0; i < expr_nops(f); i++) {
			const expr *base = expr_mul_base(f, i), *e = expr_mul_exponent(f, i);
			if (expr_is_num(e)) {
				const __mpq_struct *q = expr_num_value(e);
				bool integer = mpz_cmp_ui(mpq_denref(q), 1) == 0;
				bool smooth = integer ? mpq_sgn(q) > 0 : mpq_cmp_ui(q, 2, 1) > 0 &&
										mpz_even_p(mpq_denref(q)) == 0;
				if (!smooth && moves(m, base) && !away_from_zero(ctx, base)) {
					return expr_pow(ctx, base, e);
				}
			} else {
				const expr *inner = rough_point(m, e, seen);
				if (inner)
					return inner;
			}
			const expr *inner = rough_point(m, base, seen);
			if (inner)
				return inner;
		}
		return NULL;
	default: /* sums; generic functions are smooth by declaration */
		for (size_t i = 0; i < expr_nops(f); i++) {
			const expr *inner = rough_point(m, expr_op(f, i), seen);
			if (inner)
				return inner;
		}
		return NULL;
	}
}

void ito_d(model *m, const model_measure *q, const expr *f, ito_diff *out)
{
	expr_ctx *ctx = m->ctx;
	ito_diff_zero(out, m);
	if (!f) {
		out->dt = NULL;
		return;
	}
	expr_map seen = {0};
	const expr *rough = rough_point(m, f, &seen);
	expr_map_free(&seen);
	if (rough) {
		const expr *u = expr_kind_of(rough) == EXPR_FUN ? expr_op(rough, 0) : expr_mul_base(rough, 0);
		for (size_t k = 0; k < out->n; k++)
			out->dw[k] = NULL;
		expr_fail_at(ctx, EXPR_ERR_DOMAIN,
			     "Itô's formula needs a function twice differentiable where the processes can "
			     "go, and %s is not where %s = 0 (a local-time term would be needed); assume "
			     "a sign that keeps it away from 0 if the model does",
			     rough, u);
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
