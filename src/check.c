/* check.c - the numerical cross-check of a differential (see crosscheck.h).
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
 * Simulation (sim-paths.c): along paths of the processes f needs, the
 * realised quadratic variation, the martingale residual and the covariation
 * with each noise, each a mean that is zero when the claim is right.  Paths
 * whose statistics are not finite are counted, left out and reported; over
 * 1% of them make the verdict inconsistent.
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
#include "sim-paths.h"
#include "xalloc.h"

static const double check_z_tolerance = 4;
static const double check_fd_tolerance = 1e-5;
static const double check_bad_fraction = 0.01;
static const double check_default_work = 2e8;
enum { CHECK_CONV_PATHS = 1000 };

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
	sim_paths_model paths; /* the plan as the path simulation reads it */
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
	if (!error)
		p->paths = (sim_paths_model){.nproc = p->nproc,
		                             .nvars = p->nvars,
		                             .nnoise = p->nnoise,
		                             .point = p->point,
		                             .truncate = p->truncate,
		                             .rho = p->rho,
		                             .chol = p->chol,
		                             .mil_noise = p->mil_noise,
		                             .coef = p->coef,
		                             .fprog = p->fprog,
		                             .cprog = p->cprog,
		                             .ncoef = p->ncoef,
		                             .nclaim = p->nclaim,
		                             .horizon = p->in->horizon,
		                             .seed = p->in->seed};
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

static void report_conv(const sim_paths_conv *c, size_t npaths, xbuf *text, xbuf *json)
{
	xbuf_printf(text,
		    "  convergence (%zu paths, one set of Brownian paths on every grid; QV -> I, first variation ~ sqrt(steps)):\n"
		    "    %-7s %-12s %-12s %-12s %-14s %s\n",
		    npaths, "steps", "mean QV", "mean I", "sd(QV - I)", "first var.", "first var./sqrt(steps)");
	xbuf_printf(json, ",\"convergence_paths\":%zu,\"convergence\":[", npaths);
	for (size_t i = 0; i < SIM_PATHS_NCONV; i++) {
		double n = (double)sim_paths_conv_steps[i];
		xbuf_printf(text, "    %-7ld %-12.6g %-12.6g %-12.4g %-14.6g %.4g\n", sim_paths_conv_steps[i], c->qv[i].mean,
			    c->integ[i].mean, sim_stat_sd(&c->gap[i]), c->fv[i].mean, c->fv[i].mean / sqrt(n));
		xbuf_printf(json, "%s{\"steps\":%ld,\"qv\":", i ? "," : "", sim_paths_conv_steps[i]);
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

static void report_sim(const plan *p, const sim_paths_totals *r, xbuf *text, xbuf *json, xbuf *reasons)
{
	const check_input *in = p->in;
	double mag = r->mag.mean;
	zstat qv = zstat_of(&r->ext[SIM_PATHS_QV], &r->fine[SIM_PATHS_QV], mag);
	zstat resid = zstat_of(&r->ext[SIM_PATHS_RESID], &r->fine[SIM_PATHS_RESID], mag);
	zstat term = zstat_of(&r->ext[SIM_PATHS_TERMINAL], &r->fine[SIM_PATHS_TERMINAL], 0);
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
		zstat cov = zstat_of(&r->ext[SIM_PATHS_COV + a], &r->fine[SIM_PATHS_COV + a], mag);
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

	sim_paths_totals total;
	bool finished = sim_paths_run(ctx, &p.paths, in->steps, (size_t)in->paths, &total);
	sim_paths_conv conv;
	size_t conv_paths = 0;
	if (finished && in->verbose) {
		double finest = (double)sim_paths_conv_steps[SIM_PATHS_NCONV - 1];
		conv_paths = (size_t)fmin(fmin((double)in->paths, CHECK_CONV_PATHS), floor(max_work / finest));
		if (conv_paths >= 2)
			finished = sim_paths_convergence(ctx, &p.paths, conv_paths, &conv);
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
	sim_paths_totals_free(&total);
	plan_free(&p);
}

void check_result_free(check_result *result)
{
	free(result->text);
	free(result->json);
	free(result->error);
	memset(result, 0, sizeof *result);
}
