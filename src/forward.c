/* forward.c - the forward equation and the moment equations.
 *
 * Forward (Fokker-Planck) equation of the transition density p(t, x) of
 * dX_i = mu_i dt + sum_k b_ik dW_k with C_ij = sum_kl b_ik b_jl rho_kl:
 *   p_t = -sum_i d/dx_i (mu_i p) + 1/2 sum_ij d^2/dx_i dx_j (C_ij p)
 * (Risken, The Fokker-Planck Equation, 2nd ed., 1989, ch. 4; Karatzas and
 * Shreve, 5.7; both from memory).
 *
 * Moments.  For dX = (a0 + a1 X) dt + b dW with b^2 = c0 + c1 X + c2 X^2
 * (coefficients free of X and of every other process), the generator on X^k is
 *   L X^k = k X^(k-1) (a0 + a1 X) + k(k-1)/2 X^(k-2) (c0 + c1 X + c2 X^2),
 * so m_k(t) = E[X_t^k | X_0 = X] solves the closed triangular system
 *   m_k' = lambda_k m_k + beta_k m_(k-1) + gamma_k m_(k-2),   m_0 = 1,
 *   lambda_k = k a1 + k(k-1)/2 c2, beta_k = k a0 + k(k-1)/2 c1, gamma_k = k(k-1)/2 c0
 * (Dynkin's formula, common practice, no source; it presumes the moments
 * are finite).  With coefficients free of t, by variation of constants
 *   m_k(t) = X^k e^(lambda_k t) + int_0^t e^(lambda_k (t-s)) f_k(s) ds,
 * each m_j a sum of c t^p e^(mu t), and
 *   int_0^t s^p e^(a s) ds = e^(a t) sum_j (-1)^j p!/(p-j)! t^(p-j)/a^(j+1) - (-1)^p p!/a^(p+1)
 * for a != 0 (t^(p+1)/(p+1) for a = 0).  An a that is neither 0 in its
 * canonical form nor known to be nonzero from every fact the model has (the
 * signs and ranges of its names, and its assumed relations: see
 * certainly_nonzero) leaves the system unsolved.
 */
#include "forward.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "diff.h"
#include "polycoef.h"
#include "xalloc.h"

const expr *forward_rhs(model *m, const model_measure *q, const expr *p)
{
	expr_ctx *ctx = m->ctx;
	size_t nargs = expr_nops(p);
	const expr **xs = xcalloc(nargs + 1, sizeof *xs);
	ito_diff *dyn = xcalloc(nargs + 1, sizeof *dyn);
	size_t n = 0;
	for (size_t i = 0; i < nargs; i++) {
		const expr *x = expr_op(p, i);
		if (x == m->time || expr_kind_of(x) != EXPR_SYM)
			continue;
		if (!ito_dynamics(m, q, x, &dyn[n])) {
			ito_diff_free(&dyn[n]);
			continue;
		}
		xs[n++] = x;
	}
	expr_vec terms = {0};
	for (size_t i = 0; i < n; i++) {
		const expr *flux = diff(ctx, expr_mul(ctx, dyn[i].dt, p), xs[i]);
		expr_vec_push(&terms, expr_neg(ctx, flux));
		for (size_t j = i; j < n; j++) {
			/* C_ij = C_ji: the pair i < j counts twice, with weight 1/2 each */
			const expr *c = ito_covariation(m, &dyn[i], &dyn[j]);
			if (!c || expr_is_zero(c))
				continue;
			const expr *second = diff(ctx, diff(ctx, expr_mul(ctx, c, p), xs[i]), xs[j]);
			const expr *weight = i == j ? expr_rat(ctx, 1, 2) : expr_int(ctx, 1);
			expr_vec_push(&terms, expr_mul(ctx, weight, second));
		}
	}
	bool failed = false;
	for (size_t i = 0; i < terms.n; i++)
		failed |= terms.items[i] == NULL;
	const expr *rhs = failed || expr_error(ctx) ? NULL : expr_add_n(ctx, terms.n, terms.items);
	expr_vec_free(&terms);
	for (size_t i = 0; i < n; i++)
		ito_diff_free(&dyn[i]);
	free(dyn);
	free(xs);
	return rhs;
}

/* ------------------------------------------------------------------ moments */

/* A sum of c * t^p * exp(rate * t). */
typedef struct wave {
	const expr *c, *rate;
	unsigned long p;
} wave;

typedef struct waves {
	wave *items;
	size_t n, cap;
} waves;

static void wave_add(expr_ctx *ctx, waves *w, const expr *c, unsigned long p, const expr *rate)
{
	if (!c || expr_is_zero(c))
		return; /* NULL after a limit: the caller sees expr_error */
	for (size_t i = 0; i < w->n; i++)
		if (w->items[i].p == p && w->items[i].rate == rate) {
			w->items[i].c = expr_add(ctx, w->items[i].c, c);
			return;
		}
	if (w->n == w->cap) {
		w->cap = w->cap ? 2 * w->cap : 8;
		w->items = xreallocarray(w->items, w->cap, sizeof *w->items);
	}
	w->items[w->n++] = (wave){.c = c, .rate = rate, .p = p};
}

static const expr *wave_expr(expr_ctx *ctx, const waves *w, const expr *t)
{
	const expr **terms = xcalloc(w->n + 1, sizeof *terms);
	for (size_t i = 0; i < w->n; i++) {
		const expr *term =
		        expr_mul(ctx, w->items[i].c, expr_pow(ctx, t, expr_int(ctx, (long)w->items[i].p)));
		if (!expr_is_zero(w->items[i].rate))
			term = expr_mul(ctx, term,
			                expr_fun(ctx, EXPR_F_EXP, expr_mul(ctx, w->items[i].rate, t)));
		terms[i] = term;
	}
	const expr *sum = expr_add_n(ctx, w->n, terms);
	free(terms);
	return sum;
}

/* Can a = 0 be ruled out?  By its sign (declared signs and ranges), or by
 * contradiction with an assumed relation D op 0: when a = c1*x + c0 for a
 * symbol x with c1 of known nonzero sign, a = 0 forces x = -c0/c1, and if
 * D with that x certainly breaks op, a = 0 is impossible.  (2*kappa*theta >
 * xi^2 with kappa = 0 would give -xi^2 > 0: so kappa != 0.) */
static bool certainly_nonzero(model *m, const expr *a)
{
	expr_ctx *ctx = m->ctx;
	if (!(expr_sign(ctx, a) & EXPR_SIGN_ZERO))
		return true;
	expr_vec names = {0};
	expr_free_symbols(ctx, a, &names);
	bool nonzero = false;
	for (size_t i = 0; i < names.n && !nonzero && !expr_error(ctx); i++) {
		const expr *x = names.items[i];
		polycoef p;
		if (!polycoef_split(ctx, a, 1, &x, &p))
			continue;
		unsigned long one = 1, zero = 0;
		const expr *c1 = polycoef_degree(&p) == 1 ? polycoef_get(ctx, &p, &one) : NULL;
		const expr *c0 = c1 ? polycoef_get(ctx, &p, &zero) : NULL;
		polycoef_free(&p);
		if (!c1 || !c0 || (expr_sign(ctx, c1) & EXPR_SIGN_ZERO))
			continue;
		const expr *root = expr_neg(ctx, expr_div(ctx, c0, c1));
		for (size_t r = 0; r < m->nrelations && root && !nonzero; r++) {
			const expr *at = expr_subst(ctx, m->relations[r].difference, 1, &x, &root);
			nonzero = at && model_rel_impossible(m->relations[r].op, expr_sign(ctx, at));
		}
	}
	expr_vec_free(&names);
	return nonzero && !expr_error(ctx);
}

/* out += factor * int_0^t e^(lambda (t-s)) g(s) ds for g = sum c s^p e^(mu s);
 * false with *unknown = a when a = mu - lambda is not known to be nonzero. */
static bool add_convolution(model *m, waves *out, const expr *factor, const waves *g, const expr *lambda,
                            const expr **unknown)
{
	expr_ctx *ctx = m->ctx;
	if (expr_error(ctx))
		return false; /* a limit: moments_compute reports it */
	if (expr_is_zero(factor))
		return true;
	for (size_t i = 0; i < g->n; i++) {
		const wave *w = &g->items[i];
		const expr *c = expr_mul(ctx, factor, w->c);
		const expr *a = expr_sub(ctx, w->rate, lambda);
		if (!c || !a)
			return false;
		if (expr_is_zero(a)) {
			wave_add(ctx, out, expr_div(ctx, c, expr_int(ctx, (long)w->p + 1)), w->p + 1, lambda);
			continue;
		}
		if (!certainly_nonzero(m, a)) {
			*unknown = a;
			return false;
		}
		/* e^(lambda t) int_0^t s^p e^(a s) ds, a != 0 */
		const expr *falling = expr_int(ctx, 1); /* p!/(p-j)! */
		for (unsigned long j = 0; j <= w->p; j++) {
			if (j)
				falling = expr_mul(ctx, falling, expr_int(ctx, (long)(w->p - j + 1)));
			const expr *k = expr_div(ctx, falling, expr_pow(ctx, a, expr_int(ctx, (long)j + 1)));
			wave_add(ctx, out, expr_mul(ctx, j % 2 ? expr_neg(ctx, c) : c, k), w->p - j, w->rate);
		}
		const expr *last = expr_div(ctx, falling, expr_pow(ctx, a, expr_int(ctx, (long)w->p + 1)));
		wave_add(ctx, out, expr_mul(ctx, w->p % 2 ? c : expr_neg(ctx, c), last), 0, lambda);
	}
	return true;
}

/* The coefficients c[0..most] of e as a polynomial in X; a status otherwise. */
static moments_status poly_in(model *m, const expr *e, const expr *X, unsigned long most,
                              moments_status too_high, const expr **c, const expr **culprit)
{
	expr_ctx *ctx = m->ctx;
	polycoef p;
	if (!polycoef_split(ctx, e, 1, &X, &p)) {
		*culprit = p.bad;
		return p.bad ? MOMENTS_NOT_POLYNOMIAL : MOMENTS_ENGINE;
	}
	moments_status status = MOMENTS_OK;
	if (polycoef_degree(&p) > most) {
		*culprit = e;
		status = too_high;
	}
	for (unsigned long k = 0; k <= most && status == MOMENTS_OK; k++) {
		c[k] = polycoef_get(ctx, &p, &k);
		expr_vec names = {0};
		expr_free_symbols(ctx, c[k], &names);
		for (size_t i = 0; i < names.n && status == MOMENTS_OK; i++)
			if (model_sde_of(m, names.items[i]) || model_noise_index(m, names.items[i]) >= 0) {
				*culprit = names.items[i];
				status = MOMENTS_OTHER_PROCESS;
			}
		expr_vec_free(&names);
	}
	polycoef_free(&p);
	return status;
}

static void solve(model *md, moments *mo, const expr *X, const expr *t, const expr *const *lambda,
                  const expr *const *beta, const expr *const *gamma)
{
	expr_ctx *ctx = md->ctx;
	size_t K = mo->order;
	waves *m = xcalloc(K + 1, sizeof *m);
	wave_add(ctx, &m[0], expr_int(ctx, 1), 0, expr_int(ctx, 0));
	bool ok = true;
	for (size_t k = 1; k <= K && ok; k++) {
		wave_add(ctx, &m[k], expr_pow(ctx, X, expr_int(ctx, (long)k)), 0, lambda[k]);
		ok = add_convolution(md, &m[k], beta[k], &m[k - 1], lambda[k], &mo->no_solution);
		if (ok && k >= 2)
			ok = add_convolution(md, &m[k], gamma[k], &m[k - 2], lambda[k], &mo->no_solution);
	}
	if (ok && !expr_error(ctx)) {
		mo->solutions = xcalloc(K, sizeof *mo->solutions);
		for (size_t k = 1; k <= K; k++)
			mo->solutions[k - 1] = wave_expr(ctx, &m[k], t);
	}
	for (size_t k = 0; k <= K; k++)
		free(m[k].items);
	free(m);
}

moments_status moments_compute(model *m, const model_measure *q, const expr *X, size_t K, moments *out)
{
	expr_ctx *ctx = m->ctx;
	memset(out, 0, sizeof *out);
	out->order = K;
	ito_diff d;
	ito_dynamics(m, q, X, &d);
	/* the first moment needs only an affine drift: k(k-1)/2 = 0 for k = 1,
	 * so the diffusion enters from m2 on */
	const expr *square = K >= 2 ? ito_covariation(m, &d, &d) : NULL;
	const expr *a[2], *c[3] = {expr_int(ctx, 0), expr_int(ctx, 0), expr_int(ctx, 0)};
	moments_status status = d.dt && (square || K < 2) ? MOMENTS_OK : MOMENTS_ENGINE;
	if (status == MOMENTS_OK)
		status = poly_in(m, d.dt, X, 1, MOMENTS_DRIFT_DEGREE, a, &out->culprit);
	if (status == MOMENTS_OK && K >= 2)
		status = poly_in(m, square, X, 2, MOMENTS_SQUARE_DEGREE, c, &out->culprit);
	ito_diff_free(&d);
	if (status != MOMENTS_OK)
		return status;
	const expr **lambda = xcalloc(K + 1, sizeof *lambda), **beta = xcalloc(K + 1, sizeof *beta),
	           **gamma = xcalloc(K + 1, sizeof *gamma);
	out->symbols = xcalloc(K, sizeof *out->symbols);
	out->equations = xcalloc(K, sizeof *out->equations);
	for (size_t k = 1; k <= K; k++) {
		char name[32];
		snprintf(name, sizeof name, "m%zu", k);
		out->symbols[k - 1] = expr_sym(ctx, name);
	}
	for (size_t k = 1; k <= K; k++) {
		const expr *kk = expr_int(ctx, (long)k), *pairs = expr_rat(ctx, (long)(k * (k - 1)), 2);
		lambda[k] = expr_add(ctx, expr_mul(ctx, kk, a[1]), expr_mul(ctx, pairs, c[2]));
		beta[k] = expr_add(ctx, expr_mul(ctx, kk, a[0]), expr_mul(ctx, pairs, c[1]));
		gamma[k] = expr_mul(ctx, pairs, c[0]);
		const expr *below = k >= 2 ? out->symbols[k - 2] : expr_int(ctx, 1);
		const expr *two_below = k >= 3 ? out->symbols[k - 3] : expr_int(ctx, 1);
		out->equations[k - 1] = expr_add_n(
		        ctx, 3,
		        (const expr *[]){expr_mul(ctx, lambda[k], out->symbols[k - 1]),
		                         expr_mul(ctx, beta[k], below),
		                         k >= 2 ? expr_mul(ctx, gamma[k], two_below) : expr_int(ctx, 0)});
	}
	bool timed = false;
	for (int i = 0; i < 2; i++)
		timed |= expr_has(ctx, a[i], m->time);
	for (int i = 0; i < 3; i++)
		timed |= expr_has(ctx, c[i], m->time);
	if (timed)
		out->no_solution = m->time;
	else
		solve(m, out, X, m->time, lambda, beta, gamma);
	free(lambda);
	free(beta);
	free(gamma);
	if (expr_error(ctx)) {
		moments_free(out);
		return MOMENTS_ENGINE;
	}
	return MOMENTS_OK;
}

void moments_free(moments *mo)
{
	free(mo->symbols);
	free(mo->equations);
	free(mo->solutions);
	memset(mo, 0, sizeof *mo);
}
