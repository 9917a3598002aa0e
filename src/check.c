/* check.c - the numerical cross-check of a differential (see check.h).
 *
 * Claim under test: df = a dt + sum_k b_k dW_k, with dW_k dW_l = rho_kl dt.
 *
 * Finite differences.  Every partial derivative that Itô's formula uses (f_t,
 * f_x for each process x of f, f_xy for each pair with nonzero covariation)
 * is compared with a central difference: first derivatives with step
 * h = eps^(1/3) s, second ones with h = eps^(1/4) s, the steps that balance
 * truncation (h^2) against rounding (eps/h, eps/h^2), where s is the scale of
 * the variable (fd_scale).  The tolerance is 1e-5 relative to max(1, |value|)
 * plus ten times the rounding error eps |f| / h^k of the quotient.
 *
 * Simulation.  Euler-Maruyama (or Milstein) paths of the processes f needs,
 * from the point, over [t0, t0 + T] with N steps of size h.  Along each path:
 *   QV - I  = sum (f(X_k+1) - f(X_k))^2 - sum g(X_k)^2 h,   g^2 = sum_kl b_k b_l rho_kl
 *   M       = f(X_N) - f(X_0) - sum a(X_k) h - sum_k b_k(X_k) dW_k
 *   C_k     = sum (f(X_k+1) - f(X_k)) dW_k - sum (sum_l rho_kl b_l(X_k)) h
 * Each has mean zero when the claim is right, up to the discretisation.  The
 * term sum b dW in M has mean zero whatever b is (dW_k is independent of X_k),
 * so it is a control variate (Glasserman, Monte Carlo Methods in Financial
 * Engineering, 4.1, from memory): it leaves the mean alone and, when b is
 * right, removes the martingale part from the variance, so a wrong drift shows
 * clearly.  C_k tests each coefficient with its sign, which QV cannot see.
 *
 * Discretisation bias.  Conditionally on X_k one step of the scheme gives
 * E[(df)^2] - g^2 h = O(h^2) and E[df] - a h = O(h^2), so all statistics have
 * a bias c*h + O(h^2).  Every path is run on two grids driven by the same
 * Brownian increments, N steps and N/2 steps (pairs of increments summed), and
 * the statistic used is the Richardson combination 2 S(h) - S(2h), whose bias
 * is O(h^2) (Talay and Tubaro's expansion of the weak error, from memory).
 *
 * Domain.  States assumed positive or nonnegative get full truncation: the
 * coefficients of the SDEs, and those of the claim, see max(x, 0) (Lord,
 * Koekkoek and van Dijk, Quantitative Finance 2010); f itself is evaluated at
 * the state as simulated.  Paths whose statistics are not finite are counted, left out
 * and reported; over 1% of them make the verdict inconsistent.
 *
 * Threads.  Paths run in blocks of CHECK_BLOCK; block j draws from SIM_LANES
 * streams side by side, the seed's stream jumped j SIM_LANES + k times for
 * lane k (xoshiro256++ jump, sim.h), and block results are merged in block
 * order, so the result does not depend on the number of threads.
 * Blocks run in rounds of CHECK_ROUND, so memory does not grow with paths.
 */
#include <config.h>

#include "crosscheck.h"

#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "diff.h"
#include "eval.h"
#include "print.h"
#include "sim.h"
#include "vector.h"
#include "xalloc.h"

enum { CHECK_BLOCK = 256, CHECK_ROUND = 32 };
static const double check_z_tolerance = 4;
static const double check_fd_tolerance = 1e-5;
static const double check_bad_fraction = 0.01;
static const double check_default_work = 2e8;
static const long check_conv_steps[] = {10, 100, 1000, 10000};
enum { CHECK_NCONV = 4, CHECK_CONV_PATHS = 1000 };

/* ------------------------------------------------------------------ the plan */

typedef struct plan {
	expr_ctx *ctx;
	model *m;
	const check_input *in;
	/* program variables: processes (states and noises), then t, then parameters */
	size_t nproc, nparam, nvars;
	const expr **vars;
	double *point;	/* nvars values at the start */
	bool *truncate; /* nproc: full truncation at 0 */
	ito_diff *dyn;	/* nproc: Itô dynamics under the measure */
	size_t nnoise;	/* the noises that play a part, in model order */
	size_t *noise;	/* model index of each */
	double *rho;	/* nnoise x nnoise */
	double *chol;	/* its lower Cholesky factor */
	bool milstein;
	long *mil_noise; /* nproc: the one noise driving the state, or -1 */
	eval_prog *coef; /* drift_i, then b_ia (i major), then Milstein 1/2 b b_x */
	eval_prog *fprog; /* f */
	eval_prog *cprog; /* the claimed drift and b_a, at the truncated point like the SDE's */
	size_t ncoef, nclaim;
	char *note;
} plan;

static bool vec_has(const expr_vec *vec, const expr *e)
{
	for (size_t i = 0; i < vec->n; i++)
		if (vec->items[i] == e)
			return true;
	return false;
}

static void push_symbols(expr_ctx *ctx, const expr *e, expr_vec *todo)
{
	if (!e)
		return;
	expr_vec syms = {0};
	expr_free_symbols(ctx, e, &syms);
	for (size_t i = 0; i < syms.n; i++)
		if (!vec_has(todo, syms.items[i]))
			expr_vec_push(todo, syms.items[i]);
	expr_vec_free(&syms);
}

static bool given_value(const check_input *in, const expr *sym, double *out)
{
	for (size_t i = 0; i < in->nvalues; i++)
		if (in->symbols[i] == sym) {
			*out = in->values[i];
			return true;
		}
	return false;
}

static void plan_free(plan *p)
{
	for (size_t i = 0; i < p->nproc; i++)
		ito_diff_free(&p->dyn[i]);
	free(p->dyn);
	free(p->vars);
	free(p->point);
	free(p->truncate);
	free(p->noise);
	free(p->rho);
	free(p->chol);
	free(p->mil_noise);
	if (p->coef)
		eval_free(p->coef);
	if (p->fprog)
		eval_free(p->fprog);
	if (p->cprog)
		eval_free(p->cprog);
	free(p->note);
}

static char *cannot_evaluate(expr_ctx *ctx, const expr *bad)
{
	char *text = bad ? prn_expr(ctx, bad, PRN_TEXT) : xstrdup("?");
	char *message = xasprintf("check cannot evaluate '%s' numerically", text);
	free(text);
	return message;
}

/* Find the processes (states and noises, with the states their SDEs use), the
 * parameters and the active noises; the closure of f and of the claim. */
static char *plan_symbols(plan *p)
{
	expr_ctx *ctx = p->ctx;
	model *m = p->m;
	const check_input *in = p->in;
	expr_vec todo = {0}, procs = {0}, params = {0};
	bool *active = xcalloc(m->nnoises + 1, sizeof *active);
	ito_diff *dyn = xcalloc(1, sizeof *dyn);
	size_t capdyn = 1;
	push_symbols(ctx, in->f, &todo);
	push_symbols(ctx, in->d->dt, &todo);
	for (size_t k = 0; k < in->d->n && k < m->nnoises; k++) {
		push_symbols(ctx, in->d->dw[k], &todo);
		if (in->d->dw[k] && !expr_is_zero(in->d->dw[k]))
			active[k] = true;
	}
	for (size_t i = 0; i < todo.n; i++) {
		const expr *sym = todo.items[i];
		if (sym == m->time)
			continue;
		ito_diff d;
		if (!ito_dynamics(m, in->q, sym, &d)) {
			ito_diff_free(&d);
			expr_vec_push(&params, sym);
			continue;
		}
		if (procs.n == capdyn) {
			capdyn *= 2;
			dyn = xreallocarray(dyn, capdyn, sizeof *dyn);
		}
		dyn[procs.n] = d;
		expr_vec_push(&procs, sym);
		push_symbols(ctx, d.dt, &todo);
		for (size_t k = 0; k < d.n; k++) {
			push_symbols(ctx, d.dw[k], &todo);
			if (!expr_is_zero(d.dw[k]))
				active[k] = true;
		}
	}
	p->noise = xcalloc(m->nnoises + 1, sizeof *p->noise);
	for (size_t k = 0; k < m->nnoises; k++)
		if (active[k])
			p->noise[p->nnoise++] = k;
	free(active);
	char *error = NULL;
	/* correlations among the active noises: parameters only */
	for (size_t a = 0; a < p->nnoise && !error; a++)
		for (size_t b = 0; b < a && !error; b++) {
			expr_vec syms = {0};
			expr_free_symbols(ctx, model_corr(m, p->noise[a], p->noise[b]), &syms);
			for (size_t i = 0; i < syms.n; i++) {
				const expr *sym = syms.items[i];
				if (vec_has(&procs, sym) || sym == m->time || model_sde_of(m, sym) ||
				    model_noise_index(m, sym) >= 0)
					error = xasprintf("check needs constant correlations ('%s' varies)",
							  expr_sym_name(sym));
				else if (!vec_has(&params, sym))
					expr_vec_push(&params, sym);
			}
			expr_vec_free(&syms);
		}
	p->nproc = procs.n;
	p->nparam = params.n;
	p->nvars = procs.n + 1 + params.n;
	p->dyn = dyn;
	p->vars = xcalloc(p->nvars, sizeof *p->vars);
	p->point = xcalloc(p->nvars, sizeof *p->point);
	for (size_t i = 0; i < procs.n; i++)
		p->vars[i] = procs.items[i];
	p->vars[procs.n] = m->time;
	for (size_t i = 0; i < params.n; i++)
		p->vars[procs.n + 1 + i] = params.items[i];
	for (size_t v = 0; v < p->nvars && !error; v++) {
		if (p->vars[v] == m->time) {
			if (!given_value(in, m->time, &p->point[v]))
				p->point[v] = 0;
		} else if (!given_value(in, p->vars[v], &p->point[v])) {
			error = xasprintf("check needs a value for '%s' (at %s=...)", expr_sym_name(p->vars[v]),
					  expr_sym_name(p->vars[v]));
		}
	}
	expr_vec_free(&todo);
	expr_vec_free(&procs);
	expr_vec_free(&params);
	return error;
}

/* The point must satisfy the declared signs and ranges (plan_domain), and f
 * must be finite there (plan_finite). */
static char *plan_domain(plan *p)
{
	for (size_t v = 0; v < p->nvars; v++) {
		if (v == p->nproc)
			continue;
		double x = p->point[v];
		int sign = expr_sym_sign(p->vars[v]);
		int have = x > 0 ? EXPR_SIGN_POS : x < 0 ? EXPR_SIGN_NEG : EXPR_SIGN_ZERO;
		const char *name = expr_sym_name(p->vars[v]);
		if (!(sign & have))
			return xasprintf("the point has %s=%g, outside the assumption %s %s 0", name, x, name,
					 sign & EXPR_SIGN_ZERO ? (sign & EXPR_SIGN_POS ? ">=" : "<=")
							       : (sign & EXPR_SIGN_POS ? ">" : "<"));
		model_entry *entry = model_lookup(p->m, name);
		bool ok = true;
		double lo = entry && entry->lo ? eval_at(p->ctx, entry->lo, 0, NULL, NULL, &ok) : -INFINITY;
		double hi = entry && entry->hi ? eval_at(p->ctx, entry->hi, 0, NULL, NULL, &ok) : INFINITY;
		if (ok && (x < lo || x > hi || (entry->lo_strict && x == lo) || (entry->hi_strict && x == hi)))
			return xasprintf("the point has %s=%g, outside its declared range", name, x);
	}
	return NULL;
}

static char *plan_finite(plan *p)
{
	bool ok = true;
	double f = eval_at(p->ctx, p->in->f, p->nvars, p->vars, p->point, &ok);
	if (!ok || !isfinite(f))
		return xstrdup("the expression is not finite at the point");
	return NULL;
}

static char *plan_correlations(plan *p)
{
	size_t n = p->nnoise;
	p->rho = xcalloc(n * n + 1, sizeof *p->rho);
	p->chol = xcalloc(n * n + 1, sizeof *p->chol);
	for (size_t a = 0; a < n; a++)
		for (size_t b = 0; b < n; b++) {
			bool ok = true;
			double value = a == b ? 1
					      : eval_at(p->ctx, model_corr(p->m, p->noise[a], p->noise[b]), p->nvars,
							p->vars, p->point, &ok);
			if (!ok || !isfinite(value))
				return xstrdup("check cannot evaluate the correlations at this point");
			p->rho[a * n + b] = value;
		}
	if (!sim_cholesky(n, p->rho, p->chol))
		return xstrdup("the correlation matrix is not positive semi-definite at this point");
	return NULL;
}

/* Milstein applies when each state is driven by one noise through a
 * coefficient b(t, x) of that state alone: then the only double Itô integral
 * is int int dW_k dW_k = (dW_k^2 - h)/2, also when the noises are correlated
 * (dW_k is still a standard Brownian increment), and the correction is
 * 1/2 b b_x (dW_k^2 - h) (Kloeden and Platen, 10.3, from memory). */
static bool plan_milstein(plan *p, const expr **terms)
{
	p->mil_noise = xcalloc(p->nproc + 1, sizeof *p->mil_noise);
	for (size_t i = 0; i < p->nproc; i++) {
		p->mil_noise[i] = -1;
		terms[i] = expr_int(p->ctx, 0);
	}
	if (!p->in->milstein)
		return false;
	for (size_t i = 0; i < p->nproc; i++) {
		long driver = -1;
		for (size_t a = 0; a < p->nnoise; a++) {
			const expr *b = p->dyn[i].dw[p->noise[a]];
			if (expr_is_zero(b))
				continue;
			if (driver >= 0)
				return false;
			driver = (long)a;
			for (size_t j = 0; j < p->nproc; j++)
				if (j != i && expr_has(p->ctx, b, p->vars[j]))
					return false;
		}
		if (driver < 0)
			continue;
		const expr *b = p->dyn[i].dw[p->noise[driver]];
		const expr *bx = diff(p->ctx, b, p->vars[i]);
		if (!bx)
			return false;
		p->mil_noise[i] = driver;
		terms[i] = expr_mul_n(p->ctx, 3, (const expr *[]){expr_rat(p->ctx, 1, 2), b, bx});
	}
	return true;
}

static char *plan_programs(plan *p)
{
	size_t np = p->nproc, nn = p->nnoise;
	p->ncoef = np + np * nn + np;
	const expr **out = xcalloc(p->ncoef + 1, sizeof *out);
	for (size_t i = 0; i < np; i++) {
		out[i] = p->dyn[i].dt;
		for (size_t a = 0; a < nn; a++)
			out[np + i * nn + a] = p->dyn[i].dw[p->noise[a]];
	}
	p->milstein = plan_milstein(p, out + np + np * nn);
	if (p->in->milstein && !p->milstein) {
		for (size_t i = 0; i < np; i++) {
			p->mil_noise[i] = -1;
			out[np + np * nn + i] = expr_int(p->ctx, 0);
		}
		p->note = xstrdup("Milstein needs each state driven by one noise through a coefficient of that "
				  "state alone; Euler-Maruyama used instead");
	}
	const expr *bad = NULL;
	for (size_t i = 0; i < p->ncoef; i++)
		if (!out[i]) {
			free(out);
			return xstrdup("check could not form the coefficients");
		}
	p->coef = eval_compile(p->ctx, p->ncoef, out, p->nvars, p->vars, &bad);
	free(out);
	if (!p->coef)
		return cannot_evaluate(p->ctx, bad);
	p->fprog = eval_compile(p->ctx, 1, &p->in->f, p->nvars, p->vars, &bad);
	if (!p->fprog)
		return cannot_evaluate(p->ctx, bad);
	p->nclaim = 1 + nn;
	const expr **claim = xcalloc(p->nclaim, sizeof *claim);
	claim[0] = p->in->d->dt;
	for (size_t a = 0; a < nn; a++)
		claim[1 + a] = p->noise[a] < p->in->d->n ? p->in->d->dw[p->noise[a]] : expr_int(p->ctx, 0);
	p->cprog = eval_compile(p->ctx, p->nclaim, claim, p->nvars, p->vars, &bad);
	free(claim);
	if (!p->cprog)
		return cannot_evaluate(p->ctx, bad);
	/* in every block call the paths share t and the parameters */
	eval_set_uniform(p->coef, np);
	eval_set_uniform(p->fprog, np);
	eval_set_uniform(p->cprog, np);
	return NULL;
}

static char *plan_make(plan *p)
{
	char *error = plan_symbols(p);
	if (!error)
		error = plan_domain(p);
	if (!error)
		error = plan_correlations(p);
	if (!error) {
		p->truncate = xcalloc(p->nproc + 1, sizeof *p->truncate);
		for (size_t i = 0; i < p->nproc; i++)
			p->truncate[i] = model_sde_of(p->m, p->vars[i]) && !(expr_sym_sign(p->vars[i]) & EXPR_SIGN_NEG);
		error = plan_programs(p);
	}
	if (!error)
		error = plan_finite(p);
	return error;
}

/* ------------------------------------------------------------------ finite differences */

typedef struct fd_row {
	size_t i, j; /* variables; j == (size_t)-1 for a first derivative */
	double engine, difference, error, tolerance;
	bool ok;
} fd_row;

static double eval_point(const eval_prog *prog, const double *point)
{
	double value;
	eval_run(prog, 1, point, &value);
	return value;
}

/* f at the point with x_i and x_j moved by si*hi and sj*hj. */
static double shifted(const eval_prog *prog, double *point, size_t i, double di, size_t j, double dj)
{
	double xi = point[i], xj = point[j];
	point[i] += di;
	if (j != i)
		point[j] += dj;
	else
		point[i] += dj;
	double value = eval_point(prog, point);
	point[i] = xi;
	point[j] = xj;
	return value;
}

/* The scale of variable v for its difference step: max(|x|, |a| T, |b| sqrt(T))
 * with a, b its drift and diffusion at the point (T for t), so that a state
 * of size 0.001 is not differenced with a step fit for size 1; 1 when all
 * these vanish (a Brownian motion at 0 has |b| sqrt(T) = sqrt(T)). */
static double fd_scale(plan *p, size_t v)
{
	double T = p->in->horizon, scale = fabs(p->point[v]);
	if (v == p->nproc)
		return fmax(scale, T);
	if (v < p->nproc) {
		bool ok = true;
		double a = eval_at(p->ctx, p->dyn[v].dt, p->nvars, p->vars, p->point, &ok);
		if (ok && isfinite(a))
			scale = fmax(scale, fabs(a) * T);
		const expr *c = ito_covariation(p->m, &p->dyn[v], &p->dyn[v]);
		double b2 = c ? eval_at(p->ctx, c, p->nvars, p->vars, p->point, &ok) : 0;
		if (ok && isfinite(b2) && b2 > 0)
			scale = fmax(scale, sqrt(b2 * T));
	}
	return scale > 0 && isfinite(scale) ? scale : 1;
}

static void fd_compute(plan *p, const eval_prog *fonly, fd_row *row)
{
	double *x = xmalloc(p->nvars * sizeof *x);
	memcpy(x, p->point, p->nvars * sizeof *x);
	size_t i = row->i, j = row->j;
	const expr *partial = diff(p->ctx, p->in->f, p->vars[i]);
	double f0 = eval_point(fonly, x);
	if (j == (size_t)-1) {
		/* (f(x+h) - f(x-h)) / 2h, error h^2 f'''/6 + eps f/h */
		double h = cbrt(DBL_EPSILON) * fd_scale(p, i);
		row->difference = (shifted(fonly, x, i, h, i, 0) - shifted(fonly, x, i, -h, i, 0)) / (2 * h);
		row->tolerance = 10 * DBL_EPSILON * fabs(f0) / h;
	} else {
		partial = diff(p->ctx, partial, p->vars[j]);
		double hi = pow(DBL_EPSILON, 0.25) * fd_scale(p, i);
		double hj = pow(DBL_EPSILON, 0.25) * fd_scale(p, j);
		if (i == j)
			/* (f(x+h) - 2 f(x) + f(x-h)) / h^2 */
			row->difference = (shifted(fonly, x, i, hi, i, 0) - 2 * f0 + shifted(fonly, x, i, -hi, i, 0)) / (hi * hi);
		else
			/* (f(++) - f(+-) - f(-+) + f(--)) / 4 hi hj */
			row->difference = (shifted(fonly, x, i, hi, j, hj) - shifted(fonly, x, i, hi, j, -hj) -
					   shifted(fonly, x, i, -hi, j, hj) + shifted(fonly, x, i, -hi, j, -hj)) /
					  (4 * hi * hj);
		row->tolerance = 10 * DBL_EPSILON * fabs(f0) / (hi * hj);
	}
	bool ok = partial != NULL;
	row->engine = ok ? eval_at(p->ctx, partial, p->nvars, p->vars, x, &ok) : NAN;
	if (!ok)
		row->engine = NAN;
	double scale = fmax(1, fabs(row->engine));
	row->error = fabs(row->engine - row->difference) / scale;
	row->tolerance = check_fd_tolerance + row->tolerance / scale;
	row->ok = isfinite(row->error) && row->error <= row->tolerance;
	free(x);
}

static void fd_push(plan *p, const eval_prog *fonly, fd_row **rows, size_t *n, size_t *cap, size_t i, size_t j)
{
	if (*n == *cap) {
		*cap *= 2;
		*rows = xreallocarray(*rows, *cap, sizeof **rows);
	}
	(*rows)[*n] = (fd_row){.i = i, .j = j};
	fd_compute(p, fonly, &(*rows)[*n]);
	(*n)++;
}

/* The partials Itô's formula uses: f_x for the processes of f and f_t, and
 * f_xy for pairs of processes with nonzero covariation. */
static size_t fd_table(plan *p, fd_row **rows)
{
	size_t n = 0, cap = 4;
	*rows = xcalloc(cap, sizeof **rows);
	const expr *fonly_out[1] = {p->in->f};
	const expr *bad;
	eval_prog *fonly = eval_compile(p->ctx, 1, fonly_out, p->nvars, p->vars, &bad);
	if (!fonly)
		return 0;
	for (size_t i = 0; i <= p->nproc; i++)
		if (expr_has(p->ctx, p->in->f, p->vars[i]))
			fd_push(p, fonly, rows, &n, &cap, i, (size_t)-1);
	for (size_t i = 0; i < p->nproc; i++)
		for (size_t j = i; j < p->nproc; j++) {
			if (!expr_has(p->ctx, p->in->f, p->vars[i]) || !expr_has(p->ctx, p->in->f, p->vars[j]))
				continue;
			const expr *c = ito_covariation(p->m, &p->dyn[i], &p->dyn[j]);
			if (c && !expr_is_zero(c))
				fd_push(p, fonly, rows, &n, &cap, i, j);
		}
	eval_free(fonly);
	return n;
}

static char *fd_name(const plan *p, const fd_row *row)
{
	const char *a = expr_sym_name(p->vars[row->i]);
	const char *b = row->j == (size_t)-1 ? "" : expr_sym_name(p->vars[row->j]);
	bool short_names = strlen(a) == 1 && strlen(b) <= 1;
	return short_names ? xasprintf("f_%s%s", a, b) : *b ? xasprintf("f_{%s,%s}", a, b) : xasprintf("f_{%s}", a);
}

/* ------------------------------------------------------------------ paths */

/* One discretisation of a block of paths; it steps every `ratio` fine steps
 * with the sum of their Brownian increments. */
typedef struct scheme {
	long ratio, pending;
	double t;
	double *x, *vars, *cout, *claim, *fcur, *fnext, *dw; /* x: nvars rows, as vars */
	double *qv, *integ, *resid, *fv, *cov, *mag;
	double *work; /* 5 B: step_stats' per-path scratch */
	unsigned char *below;
} scheme;

/* f at the states as simulated: s->x has the layout of the program's
 * variables (states, t, parameters), so only the time row changes. */
static void scheme_eval_f(const plan *p, scheme *s, size_t B, double *out)
{
	for (size_t q = 0; q < B; q++)
		s->x[p->nproc * B + q] = s->t;
	eval_run(p->fprog, B, s->x, out);
}

static void scheme_init(const plan *p, scheme *s, size_t B, long ratio)
{
	size_t np = p->nproc, nn = p->nnoise;
	s->ratio = ratio;
	s->pending = 0;
	s->t = p->point[np];
	s->x = xmalloc(p->nvars * B * sizeof *s->x);
	s->vars = xmalloc(p->nvars * B * sizeof *s->vars);
	s->cout = xmalloc((p->ncoef + 1) * B * sizeof *s->cout);
	s->claim = xmalloc(p->nclaim * B * sizeof *s->claim);
	s->fcur = xmalloc(B * sizeof *s->fcur);
	s->fnext = xmalloc(B * sizeof *s->fnext);
	s->dw = xcalloc((nn + 1) * B, sizeof *s->dw);
	s->qv = xcalloc(B, sizeof *s->qv);
	s->integ = xcalloc(B, sizeof *s->integ);
	s->resid = xcalloc(B, sizeof *s->resid);
	s->fv = xcalloc(B, sizeof *s->fv);
	s->mag = xcalloc(B, sizeof *s->mag);
	s->cov = xcalloc((nn + 1) * B, sizeof *s->cov);
	s->below = xcalloc(B, sizeof *s->below);
	s->work = xmalloc(5 * B * sizeof *s->work);
	for (size_t i = 0; i < np; i++)
		for (size_t q = 0; q < B; q++)
			s->x[i * B + q] = p->point[i];
	for (size_t v = np + 1; v < p->nvars; v++)
		for (size_t q = 0; q < B; q++)
			s->vars[v * B + q] = s->x[v * B + q] = p->point[v];
	scheme_eval_f(p, s, B, s->fcur);
}

static void scheme_free(scheme *s)
{
	free(s->x);
	free(s->vars);
	free(s->cout);
	free(s->claim);
	free(s->fcur);
	free(s->fnext);
	free(s->dw);
	free(s->qv);
	free(s->integ);
	free(s->resid);
	free(s->fv);
	free(s->mag);
	free(s->cov);
	free(s->below);
	free(s->work);
}

/* The per-path sums of one step: df = f(X_next) - f(X), the realised QV
 * against the integral of g'Rg, the martingale residual, the covariation
 * with each noise, the first variation and the rounding magnitude.  Written
 * as passes over the block (one per noise), each a plain loop the compiler
 * vectorises. */
ITOX_VECTOR static void step_stats(const plan *p, scheme *s, size_t B, double h)
{
	size_t nn = p->nnoise;
	const double *restrict f0 = s->fcur, *restrict f1 = s->fnext, *restrict drift = s->claim;
	double *restrict df = s->work, *restrict g2 = df + B, *restrict bdw = g2 + B, *restrict mag = bdw + B;
	double *restrict ca = mag + B;
	ITOX_INDEPENDENT
	for (size_t q = 0; q < B; q++) {
		df[q] = f1[q] - f0[q];
		g2[q] = bdw[q] = mag[q] = 0;
	}
	for (size_t a = 0; a < nn; a++) {
		const double *restrict ba = s->claim + (1 + a) * B, *restrict dwa = s->dw + a * B;
		double *restrict cov = s->cov + a * B;
		ITOX_INDEPENDENT
		for (size_t q = 0; q < B; q++)
			ca[q] = 0;
		for (size_t b = 0; b < nn; b++) {
			const double rho = p->rho[a * nn + b], *restrict bb = s->claim + (1 + b) * B;
			ITOX_INDEPENDENT
			for (size_t q = 0; q < B; q++)
				ca[q] += rho * bb[q];
		}
		ITOX_INDEPENDENT
		for (size_t q = 0; q < B; q++) {
			g2[q] += ba[q] * ca[q];
			bdw[q] += ba[q] * dwa[q];
			cov[q] += df[q] * dwa[q] - ca[q] * h;
			mag[q] += fabs(df[q] * dwa[q]) + fabs(ca[q]) * h;
		}
	}
	double *restrict qv = s->qv, *restrict integ = s->integ, *restrict resid = s->resid;
	double *restrict fv = s->fv, *restrict magsum = s->mag;
	ITOX_INDEPENDENT
	for (size_t q = 0; q < B; q++) {
		double d = df[q];
		qv[q] += d * d;
		integ[q] += g2[q] * h;
		resid[q] += d - drift[q] * h - bdw[q];
		fv[q] += fabs(d);
		magsum[q] += mag[q] + d * d + fabs(g2[q]) * h + fabs(d) + fabs(drift[q]) * h + fabs(bdw[q]);
	}
}

/* step_stats for one noise: the same operations in the same order (so the
 * same bits) in one pass. */
ITOX_VECTOR static void step_stats_one_noise(const plan *p, scheme *s, size_t B, double h)
{
	const double *restrict f0 = s->fcur, *restrict drift = s->claim, *restrict f1 = s->fnext;
	const double *restrict b0 = s->claim + B, *restrict dw0 = s->dw;
	double *restrict cov = s->cov, *restrict qv = s->qv, *restrict integ = s->integ;
	double *restrict resid = s->resid, *restrict fv = s->fv, *restrict magsum = s->mag;
	const double rho = p->rho[0];
	ITOX_INDEPENDENT
	for (size_t q = 0; q < B; q++) {
		double df = f1[q] - f0[q], ba = b0[q], dwa = dw0[q];
		double ca = 0 + rho * ba;
		double g2 = 0 + ba * ca, bdw = 0 + ba * dwa;
		cov[q] += df * dwa - ca * h;
		double mag = 0 + (fabs(df * dwa) + fabs(ca) * h);
		qv[q] += df * df;
		integ[q] += g2 * h;
		resid[q] += df - drift[q] * h - bdw;
		fv[q] += fabs(df);
		magsum[q] += mag + df * df + fabs(g2) * h + fabs(df) + fabs(drift[q]) * h + fabs(bdw);
	}
}

/* One step of size h with the increments s->dw: X += a h + b dW (+ Milstein),
 * the coefficients at max(X, 0) for truncated states; then the sums. */
ITOX_VECTOR static void scheme_step(const plan *p, scheme *s, size_t B, double h)
{
	size_t np = p->nproc, nn = p->nnoise;
	for (size_t i = 0; i < np; i++) {
		const double *restrict x = s->x + i * B;
		double *restrict v = s->vars + i * B;
		if (p->truncate[i])
			ITOX_INDEPENDENT
			for (size_t q = 0; q < B; q++)
				v[q] = x[q] < 0 ? 0 : x[q];
		else
			memcpy(v, x, B * sizeof *v);
	}
	double *restrict tv = s->vars + np * B;
	ITOX_INDEPENDENT
	for (size_t q = 0; q < B; q++)
		tv[q] = s->t;
	eval_run(p->coef, B, s->vars, s->cout);
	eval_run(p->cprog, B, s->vars, s->claim);
	for (size_t i = 0; i < np; i++) {
		double *restrict x = s->x + i * B;
		const double *restrict drift = s->cout + i * B;
		/* ((x + a h) + b_1 dW_1) + b_2 dW_2 ..., the first two terms in one pass */
		const double *restrict b0 = s->cout + (np + i * nn) * B, *restrict dw0 = s->dw;
		if (nn == 0) {
			ITOX_INDEPENDENT
			for (size_t q = 0; q < B; q++)
				x[q] += drift[q] * h;
		} else {
			ITOX_INDEPENDENT
			for (size_t q = 0; q < B; q++)
				x[q] = (x[q] + drift[q] * h) + b0[q] * dw0[q];
		}
		for (size_t a = 1; a < nn; a++) {
			const double *restrict b = s->cout + (np + i * nn + a) * B, *restrict dw = s->dw + a * B;
			ITOX_INDEPENDENT
			for (size_t q = 0; q < B; q++)
				x[q] += b[q] * dw[q];
		}
		if (p->mil_noise[i] >= 0) {
			const double *restrict c = s->cout + (np + np * nn + i) * B;
			const double *restrict dw = s->dw + (size_t)p->mil_noise[i] * B;
			ITOX_INDEPENDENT
			for (size_t q = 0; q < B; q++)
				x[q] += c[q] * (dw[q] * dw[q] - h);
		}
		if (p->truncate[i]) {
			unsigned char *restrict below = s->below;
			ITOX_INDEPENDENT
			for (size_t q = 0; q < B; q++)
				below[q] |= x[q] < 0;
		}
	}
	s->t += h;
	scheme_eval_f(p, s, B, s->fnext);
	if (nn == 1)
		step_stats_one_noise(p, s, B, h);
	else
		step_stats(p, s, B, h);
	double *swap = s->fcur;
	s->fcur = s->fnext;
	s->fnext = swap;
}

/* Run B paths over nsteps fine steps of size dt for all schemes at once:
 * dW = sqrt(dt) L Z with Z independent standard normals. */
ITOX_VECTOR static void block_paths(const plan *p, volatile sig_atomic_t *interrupt, sim_lanes *rng, size_t B, long nsteps,
			double dt, size_t nschemes, scheme *schemes)
{
	size_t nn = p->nnoise;
	double *z = xmalloc((nn + 1) * B * sizeof *z);
	double root = sqrt(dt);
	for (long k = 0; k < nsteps; k++) {
		if (interrupt && k % 64 == 0 && *interrupt)
			break; /* the result is dropped: run_blocks reports the interrupt */
		sim_lanes_normals(rng, nn * B, z);
		for (size_t si = 0; si < nschemes; si++) {
			scheme *s = &schemes[si];
			for (size_t a = 0; a < nn; a++) {
				double *restrict dw = s->dw + a * B;
				bool fresh = s->pending == 0; /* the first increment of a step is stored, not added */
				for (size_t c = 0; c <= a; c++) {
					double l = p->chol[a * nn + c] * root;
					const double *restrict zc = z + c * B;
					if (l == 0)
						continue;
					if (fresh) {
						ITOX_INDEPENDENT
						for (size_t q = 0; q < B; q++)
							dw[q] = l * zc[q];
					} else {
						ITOX_INDEPENDENT
						for (size_t q = 0; q < B; q++)
							dw[q] += l * zc[q];
					}
					fresh = false;
				}
				if (fresh)
					memset(dw, 0, B * sizeof *dw);
			}
			if (++s->pending == s->ratio || k == nsteps - 1) {
				scheme_step(p, s, B, (double)s->pending * dt);
				s->pending = 0;
			}
		}
	}
	free(z);
}

/* ------------------------------------------------------------------ the main statistics */

enum { STAT_QV, STAT_RESID, STAT_TERMINAL, STAT_COV };

typedef struct block_result {
	long bad, below;
	sim_stat *ext, *fine; /* nstat each: extrapolated and fine-grid */
	sim_stat qv, integ, mag;
} block_result;

typedef struct job {
	const plan *p;
	volatile sig_atomic_t *interrupt; /* read (never written) by the threads */
	long steps;
	double dt;
	size_t nstat;
} job;

static void block_result_init(block_result *r, size_t nstat)
{
	memset(r, 0, sizeof *r);
	r->ext = xcalloc(nstat, sizeof *r->ext);
	r->fine = xcalloc(nstat, sizeof *r->fine);
}

static void block_result_merge(block_result *into, const block_result *b, size_t nstat)
{
	into->bad += b->bad;
	into->below += b->below;
	for (size_t i = 0; i < nstat; i++) {
		sim_stat_merge(&into->ext[i], &b->ext[i]);
		sim_stat_merge(&into->fine[i], &b->fine[i]);
	}
	sim_stat_merge(&into->qv, &b->qv);
	sim_stat_merge(&into->integ, &b->integ);
	sim_stat_merge(&into->mag, &b->mag);
}

static void block_result_free(block_result *r)
{
	free(r->ext);
	free(r->fine);
}

static void path_values(const plan *p, const scheme *s, size_t B, size_t q, double *v)
{
	v[STAT_QV] = s->qv[q] - s->integ[q];
	v[STAT_RESID] = s->resid[q];
	v[STAT_TERMINAL] = s->fcur[q];
	for (size_t a = 0; a < p->nnoise; a++)
		v[STAT_COV + a] = s->cov[a * B + q];
}

static void main_block(const job *jb, sim_lanes *rng, size_t B, block_result *r)
{
	const plan *p = jb->p;
	size_t nschemes = jb->steps >= 2 ? 2 : 1;
	scheme s[2];
	for (size_t i = 0; i < nschemes; i++)
		scheme_init(p, &s[i], B, (long)i + 1);
	block_paths(p, jb->interrupt, rng, B, jb->steps, jb->dt, nschemes, s);
	double *fine = xmalloc(jb->nstat * sizeof *fine), *coarse = xmalloc(jb->nstat * sizeof *coarse);
	for (size_t q = 0; q < B; q++) {
		path_values(p, &s[0], B, q, fine);
		if (nschemes == 2)
			path_values(p, &s[1], B, q, coarse);
		bool good = isfinite(s[0].qv[q] + s[0].integ[q] + s[0].mag[q]);
		for (size_t i = 0; i < jb->nstat; i++) {
			if (nschemes == 2)
				coarse[i] = 2 * fine[i] - coarse[i];
			else
				coarse[i] = fine[i];
			good = good && isfinite(fine[i]) && isfinite(coarse[i]);
		}
		if (s[0].below[q] || (nschemes == 2 && s[1].below[q]))
			r->below++;
		if (!good) {
			r->bad++;
			continue;
		}
		for (size_t i = 0; i < jb->nstat; i++) {
			sim_stat_add(&r->ext[i], coarse[i]);
			sim_stat_add(&r->fine[i], fine[i]);
		}
		sim_stat_add(&r->qv, s[0].qv[q]);
		sim_stat_add(&r->integ, s[0].integ[q]);
		sim_stat_add(&r->mag, s[0].mag[q]);
	}
	free(fine);
	free(coarse);
	for (size_t i = 0; i < nschemes; i++)
		scheme_free(&s[i]);
}

/* The convergence table: one set of paths on 10, 100, 1000, 10000 steps. */
typedef struct conv_result {
	long bad;
	sim_stat qv[CHECK_NCONV], integ[CHECK_NCONV], gap[CHECK_NCONV], fv[CHECK_NCONV];
} conv_result;

static void conv_block(const job *jb, sim_lanes *rng, size_t B, conv_result *r)
{
	const plan *p = jb->p;
	long finest = check_conv_steps[CHECK_NCONV - 1];
	scheme s[CHECK_NCONV];
	for (size_t i = 0; i < CHECK_NCONV; i++)
		scheme_init(p, &s[i], B, finest / check_conv_steps[i]);
	block_paths(p, jb->interrupt, rng, B, finest, p->in->horizon / (double)finest, CHECK_NCONV, s);
	for (size_t q = 0; q < B; q++) {
		bool good = true;
		for (size_t i = 0; i < CHECK_NCONV; i++)
			good = good && isfinite(s[i].qv[q] + s[i].integ[q] + s[i].fv[q]);
		if (!good) {
			r->bad++;
			continue;
		}
		for (size_t i = 0; i < CHECK_NCONV; i++) {
			sim_stat_add(&r->qv[i], s[i].qv[q]);
			sim_stat_add(&r->integ[i], s[i].integ[q]);
			sim_stat_add(&r->gap[i], s[i].qv[q] - s[i].integ[q]);
			sim_stat_add(&r->fv[i], s[i].fv[q]);
		}
	}
	for (size_t i = 0; i < CHECK_NCONV; i++)
		scheme_free(&s[i]);
}

static void conv_merge(conv_result *into, const conv_result *b)
{
	into->bad += b->bad;
	for (size_t i = 0; i < CHECK_NCONV; i++) {
		sim_stat_merge(&into->qv[i], &b->qv[i]);
		sim_stat_merge(&into->integ[i], &b->integ[i]);
		sim_stat_merge(&into->gap[i], &b->gap[i]);
		sim_stat_merge(&into->fv[i], &b->fv[i]);
	}
}

/* Run npaths in blocks; block j uses the stream of the seed jumped j times.
 * Returns false when interrupted. */
static bool run_blocks(expr_ctx *ctx, const job *jb, size_t npaths, bool conv, block_result *total,
		       conv_result *conv_total)
{
	size_t nblocks = (npaths + CHECK_BLOCK - 1) / CHECK_BLOCK;
	sim_rng stream;
	sim_rng_seed(&stream, jb->p->in->seed);
	sim_lanes rngs[CHECK_ROUND];
	block_result results[CHECK_ROUND];
	conv_result *convs = conv ? xcalloc(CHECK_ROUND, sizeof *convs) : NULL;
	bool interrupted = false;
	for (size_t first = 0; first < nblocks && !interrupted; first += CHECK_ROUND) {
		size_t count = nblocks - first < CHECK_ROUND ? nblocks - first : CHECK_ROUND;
		for (size_t i = 0; i < count; i++) {
			sim_lanes_take(&rngs[i], &stream);
			if (conv)
				memset(&convs[i], 0, sizeof convs[i]);
			else
				block_result_init(&results[i], jb->nstat);
		}
#ifdef _OPENMP
#pragma omp parallel for schedule(dynamic, 1)
#endif
		for (long i = 0; i < (long)count; i++) {
			size_t block = first + (size_t)i;
			size_t B = npaths - block * CHECK_BLOCK < CHECK_BLOCK ? npaths - block * CHECK_BLOCK : CHECK_BLOCK;
			if (conv)
				conv_block(jb, &rngs[i], B, &convs[i]);
			else
				main_block(jb, &rngs[i], B, &results[i]);
		}
		for (size_t i = 0; i < count; i++) {
			if (conv) {
				conv_merge(conv_total, &convs[i]);
			} else {
				block_result_merge(total, &results[i], jb->nstat);
				block_result_free(&results[i]);
			}
		}
		interrupted = expr_poll_interrupt(ctx);
	}
	free(convs);
	return !interrupted;
}

/* ------------------------------------------------------------------ the report */

typedef struct zstat {
	double n, mean, se, z, fine;
	bool ok;
} zstat;

/* z = mean / se, with a rounding floor on se of 1e-9 times the size of the
 * terms summed, so that an exact deterministic identity gives z = 0. */
static zstat zstat_of(const sim_stat *ext, const sim_stat *fine, double magnitude)
{
	zstat z = {.n = ext->n, .mean = ext->mean, .se = sim_stat_se(ext), .fine = fine->mean};
	double se = fmax(z.se, 1e-9 * fabs(magnitude));
	z.z = se > 0 ? z.mean / se : (z.mean == 0 ? 0 : copysign(INFINITY, z.mean));
	z.ok = ext->n > 1 && isfinite(z.z) && fabs(z.z) < check_z_tolerance;
	return z;
}

/* The name of active noise a: under a measure Q, its Q Brownian motion. */
static const char *noise_name(const plan *p, size_t a)
{
	size_t k = p->noise[a];
	if (p->in->q && k < p->in->q->nnoises && p->in->q->names[k])
		return expr_sym_name(p->in->q->names[k]);
	return expr_sym_name(p->m->noises[k]);
}

static void put_num(xbuf *buf, double x)
{
	if (isfinite(x))
		xbuf_printf(buf, "%.10g", x);
	else
		xbuf_put(buf, "null");
}

static void json_zstat(xbuf *buf, const char *key, const zstat *z, bool first)
{
	xbuf_printf(buf, "%s\"%s\":{\"mean\":", first ? "" : ",", key);
	put_num(buf, z->mean);
	xbuf_put(buf, ",\"se\":");
	put_num(buf, z->se);
	xbuf_put(buf, ",\"z\":");
	put_num(buf, z->z);
	xbuf_put(buf, ",\"fine_grid_mean\":");
	put_num(buf, z->fine);
	xbuf_put(buf, "}");
}

static void text_zstat(xbuf *buf, const zstat *z)
{
	if (z->n < 2) {
		xbuf_put(buf, "n/a (too few valid paths)  <-- off\n");
		return;
	}
	xbuf_printf(buf, "%.6g (se %.3g, z = %.2f)%s\n", z->mean, z->se, z->z, z->ok ? "" : "  <-- off");
}

static void add_reason(xbuf *reasons, const char *text)
{
	if (reasons->length)
		xbuf_put(reasons, "; ");
	xbuf_put(reasons, text);
}

static void header(const plan *p, xbuf *text, const char *scheme_name)
{
	const check_input *in = p->in;
	char *f = prn_expr(p->ctx, in->f, PRN_TEXT);
	xbuf_printf(text, "check d(%s) at ", f);
	free(f);
	for (size_t i = 0; i < in->nvalues; i++)
		xbuf_printf(text, "%s%s=%.10g", i ? ", " : "", expr_sym_name(in->symbols[i]), in->values[i]);
	xbuf_printf(text, " (%s, T=%g, %ld steps, %ld paths, seed %lu)\n", scheme_name, in->horizon, in->steps,
		    in->paths, in->seed);
	if (in->hand_derived) {
		char *drift = prn_expr(p->ctx, in->d->dt, PRN_TEXT);
		xbuf_printf(text, "  differential tested (by hand): drift %s", drift);
		free(drift);
		for (size_t a = 0; a < p->nnoise; a++) {
			size_t k = p->noise[a];
			if (k >= in->d->n || expr_is_zero(in->d->dw[k]))
				continue;
			char *b = prn_expr(p->ctx, in->d->dw[k], PRN_TEXT);
			xbuf_printf(text, "; d%s: %s", noise_name(p, a), b);
			free(b);
		}
		xbuf_put(text, "\n");
	}
	if (p->note)
		xbuf_printf(text, "  note: %s\n", p->note);
}

static void report_fd(const plan *p, const fd_row *rows, size_t n, xbuf *text, xbuf *json, xbuf *reasons)
{
	if (p->in->hand_derived) {
		xbuf_put(text, "  finite differences: skipped (differential derived by hand)\n");
		return;
	}
	xbuf_put(json, ",\"fd\":[");
	if (n == 0)
		xbuf_put(text, "  finite differences: none (f has no partial derivatives to check)\n");
	else
		xbuf_printf(text, "  finite differences (central; tolerance %g relative to max(1, |value|), plus rounding):\n"
				  "    %-12s %-16s %-16s %s\n",
			    check_fd_tolerance, "partial", "engine", "difference", "rel. error");
	for (size_t r = 0; r < n; r++) {
		char *name = fd_name(p, &rows[r]);
		xbuf_printf(text, "    %-12s %-16.10g %-16.10g %.2g%s\n", name, rows[r].engine, rows[r].difference,
			    rows[r].error, rows[r].ok ? "" : "  <-- off");
		xbuf_printf(json, "%s{\"partial\":", r ? "," : "");
		prn_json_string(json, name);
		xbuf_put(json, ",\"engine\":");
		put_num(json, rows[r].engine);
		xbuf_put(json, ",\"difference\":");
		put_num(json, rows[r].difference);
		xbuf_put(json, ",\"error\":");
		put_num(json, rows[r].error);
		xbuf_put(json, ",\"tolerance\":");
		put_num(json, rows[r].tolerance);
		xbuf_printf(json, ",\"ok\":%s}", rows[r].ok ? "true" : "false");
		if (!rows[r].ok) {
			char *why = xasprintf("the finite difference of %s disagrees", name);
			add_reason(reasons, why);
			free(why);
		}
		free(name);
	}
	xbuf_put(json, "]");
}

static void report_conv(const conv_result *c, size_t npaths, xbuf *text, xbuf *json)
{
	xbuf_printf(text,
		    "  convergence (%zu paths, one set of Brownian paths on every grid; QV -> I, first variation ~ sqrt(steps)):\n"
		    "    %-7s %-12s %-12s %-12s %-14s %s\n",
		    npaths, "steps", "mean QV", "mean I", "sd(QV - I)", "first var.", "first var./sqrt(steps)");
	xbuf_printf(json, ",\"convergence_paths\":%zu,\"convergence\":[", npaths);
	for (size_t i = 0; i < CHECK_NCONV; i++) {
		double n = (double)check_conv_steps[i];
		xbuf_printf(text, "    %-7ld %-12.6g %-12.6g %-12.4g %-14.6g %.4g\n", check_conv_steps[i], c->qv[i].mean,
			    c->integ[i].mean, sim_stat_sd(&c->gap[i]), c->fv[i].mean, c->fv[i].mean / sqrt(n));
		xbuf_printf(json, "%s{\"steps\":%ld,\"qv\":", i ? "," : "", check_conv_steps[i]);
		put_num(json, c->qv[i].mean);
		xbuf_put(json, ",\"qv_se\":");
		put_num(json, sim_stat_se(&c->qv[i]));
		xbuf_put(json, ",\"predicted\":");
		put_num(json, c->integ[i].mean);
		xbuf_put(json, ",\"sd\":");
		put_num(json, sim_stat_sd(&c->gap[i]));
		xbuf_put(json, ",\"first_variation\":");
		put_num(json, c->fv[i].mean);
		xbuf_put(json, "}");
	}
	xbuf_put(json, "]");
	if (c->bad)
		xbuf_printf(text, "    (%ld paths with NaN/Inf left out of the table)\n", c->bad);
}

static void report_sim(const plan *p, const block_result *r, xbuf *text, xbuf *json, xbuf *reasons)
{
	const check_input *in = p->in;
	double mag = r->mag.mean;
	zstat qv = zstat_of(&r->ext[STAT_QV], &r->fine[STAT_QV], mag);
	zstat resid = zstat_of(&r->ext[STAT_RESID], &r->fine[STAT_RESID], mag);
	zstat term = zstat_of(&r->ext[STAT_TERMINAL], &r->fine[STAT_TERMINAL], 0);
	xbuf_printf(text, "  quadratic variation: mean QV = %.6g, predicted I = %.6g; mean(QV - I) = ", r->qv.mean,
		    r->integ.mean);
	text_zstat(text, &qv);
	xbuf_put(text, "  martingale residual: mean(f(T) - f(0) - sum drift*dt - sum b*dW) = ");
	text_zstat(text, &resid);
	json_zstat(json, "qv", &qv, false);
	xbuf_put(json, ",\"qv_realised\":");
	put_num(json, r->qv.mean);
	xbuf_put(json, ",\"qv_predicted\":");
	put_num(json, r->integ.mean);
	json_zstat(json, "residual", &resid, false);
	if (!qv.ok)
		add_reason(reasons, "the quadratic variation disagrees with the diffusion");
	if (!resid.ok)
		add_reason(reasons, "the martingale residual is not zero (the drift)");
	xbuf_put(json, ",\"covariation\":{");
	for (size_t a = 0; a < p->nnoise; a++) {
		const char *name = noise_name(p, a);
		zstat cov = zstat_of(&r->ext[STAT_COV + a], &r->fine[STAT_COV + a], mag);
		xbuf_printf(text, "  covariation with %s: mean(sum df*d%s - sum (rho b)*dt) = ", name, name);
		text_zstat(text, &cov);
		json_zstat(json, name, &cov, a == 0);
		if (!cov.ok) {
			char *why = xasprintf("the covariation with %s disagrees with the d%s coefficient", name, name);
			add_reason(reasons, why);
			free(why);
		}
	}
	xbuf_put(json, "}");
	xbuf_printf(text, "  f at T: mean = %.8g (se %.3g)\n", term.mean, term.se);
	xbuf_put(json, ",\"terminal\":{\"mean\":");
	put_num(json, term.mean);
	xbuf_put(json, ",\"se\":");
	put_num(json, term.se);
	xbuf_put(json, "}");
	if (in->steps >= 2)
		xbuf_printf(text, "  discretisation: O(dt) bias removed by extrapolation 2*S(%ld steps) - S(%ld steps); "
				  "fine-grid means: QV - I %.3g, residual %.3g\n",
			    in->steps, (in->steps + 1) / 2, qv.fine, resid.fine);
	else
		xbuf_put(text, "  discretisation: one step, no extrapolation (bias of order dt remains)\n");
}

/* ------------------------------------------------------------------ check_run */

void check_run(expr_ctx *ctx, const check_input *in, check_result *out)
{
	memset(out, 0, sizeof *out);
	double max_work = in->max_work > 0 ? (double)in->max_work : check_default_work;
	double work = (double)in->steps * (double)in->paths;
	if (work > max_work) {
		out->limit_hit = true;
		out->error = xasprintf("simulation too large (steps*paths = %.0f, limit %.0f)", work, max_work);
		return;
	}
	if (in->steps < 1 || in->paths < 2 || !(in->horizon > 0)) {
		out->error = xstrdup("check needs T > 0, steps >= 1 and paths >= 2");
		return;
	}
	plan p = {.ctx = ctx, .m = in->m, .in = in};
	char *error = plan_make(&p);
	if (error) {
		out->error = error;
		plan_free(&p);
		return;
	}
	xbuf text = {0}, json = {0}, reasons = {0};
	const char *scheme_name = p.milstein ? "Milstein" : "Euler-Maruyama";
	header(&p, &text, scheme_name);
	char *f = prn_expr(ctx, in->f, PRN_TEXT);
	xbuf_put(&json, "\"expr\":");
	prn_json_string(&json, f);
	free(f);
	xbuf_printf(&json, ",\"hand_derived\":%s,\"scheme\":\"%s\",\"T\":", in->hand_derived ? "true" : "false",
		    p.milstein ? "milstein" : "euler");
	put_num(&json, in->horizon);
	xbuf_printf(&json, ",\"steps\":%ld,\"paths\":%ld,\"seed\":%lu", in->steps, in->paths, in->seed);
	fd_row *rows = NULL;
	size_t nrows = in->hand_derived ? 0 : fd_table(&p, &rows);
	report_fd(&p, rows, nrows, &text, &json, &reasons);
	free(rows);

	job jb = {.p = &p, .interrupt = expr_ctx_limits(ctx)->interrupt, .steps = in->steps, .dt = in->horizon / (double)in->steps, .nstat = STAT_COV + p.nnoise};
	block_result total;
	block_result_init(&total, jb.nstat);
	bool finished = run_blocks(ctx, &jb, (size_t)in->paths, false, &total, NULL);
	conv_result conv = {0};
	size_t conv_paths = 0;
	if (finished && in->verbose) {
		double finest = (double)check_conv_steps[CHECK_NCONV - 1];
		conv_paths = (size_t)fmin(fmin((double)in->paths, CHECK_CONV_PATHS), floor(max_work / finest));
		if (conv_paths >= 2)
			finished = run_blocks(ctx, &jb, conv_paths, true, NULL, &conv);
	}
	if (!finished) {
		/* a stop from outside (Ctrl-C or the time limit): a limit, exit status 3;
		 * the context keeps EXPR_ERR_INTERRUPTED for the caller */
		out->limit_hit = true;
		out->error = xstrdup("interrupted");
	} else {
		if (total.bad)
			xbuf_printf(&text, "  warning: %ld of %ld paths gave NaN or Inf in f or its coefficients; left out\n",
				    total.bad, in->paths);
		if (total.below)
			xbuf_printf(&text, "  note: full truncation used on %ld paths (a state assumed nonnegative went below 0)\n",
				    total.below);
		report_sim(&p, &total, &text, &json, &reasons);
		if ((double)total.bad > check_bad_fraction * (double)in->paths) {
			char *why = xasprintf("%ld of %ld paths (over 1%%) left the domain", total.bad, in->paths);
			add_reason(&reasons, why);
			free(why);
		}
		if (in->verbose && conv_paths >= 2)
			report_conv(&conv, conv_paths, &text, &json);
		xbuf_printf(&json, ",\"paths_used\":%.0f,\"bad_paths\":%ld,\"truncated_paths\":%ld,\"tolerance\":%g,"
				   "\"fd_tolerance\":%g",
			    total.ext[0].n, total.bad, total.below, check_z_tolerance, check_fd_tolerance);
		out->consistent = reasons.length == 0;
		if (out->consistent)
			xbuf_printf(&text, "  verdict: consistent (tolerance |z| < %g%s)\n", check_z_tolerance,
				    in->hand_derived ? "" : ", finite differences within tolerance");
		else
			xbuf_printf(&text, "  verdict: inconsistent: %s (tolerance |z| < %g)\n", reasons.data,
				    check_z_tolerance);
		if (!out->consistent) {
			xbuf_put(&json, ",\"reason\":");
			prn_json_string(&json, reasons.data);
		}
		out->text = xbuf_take(&text);
		out->json = xbuf_take(&json);
	}
	xbuf_free(&text);
	xbuf_free(&json);
	xbuf_free(&reasons);
	block_result_free(&total);
	plan_free(&p);
}

void check_result_free(check_result *result)
{
	free(result->text);
	free(result->json);
	free(result->error);
	memset(result, 0, sizeof *result);
}
