/* check-plan.c - what a check runs on (see check-internal.h): the processes
 * and parameters that f and the claimed differential need, the point and
 * its domain, the correlations of the noises that play a part, and the
 * programs of the coefficients.
 */
#include <config.h>

#include "check-internal.h"

#include <math.h>
#include <stdlib.h>

#include "diff.h"
#include "print.h"
#include "xalloc.h"

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

void check_plan_free(check_plan *p)
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
	bool generic = bad && (expr_kind_of(bad) == EXPR_FAPP ||
	                       (expr_kind_of(bad) == EXPR_SYM && expr_func_arity(bad) > 0));
	char *message = xasprintf("check cannot evaluate '%s' numerically%s", text,
	                          generic ? " (give the function a concrete form: check ... where "
	                                    "NAME(ARGS) = EXPR)"
	                                  : "");
	free(text);
	return message;
}

/* Find the processes (states and noises, with the states their SDEs use), the
 * parameters and the active noises; the closure of f and of the claim. */
static char *plan_symbols(check_plan *p)
{
	expr_ctx *ctx = p->ctx;
	model *m = p->m;
	const check_input *in = p->in;
	expr_vec todo = {0}, procs = {0}, params = {0};
	bool *active = xcalloc(m->nnoises + 1, sizeof *active);
	ito_diff *dyn = xcalloc(1, sizeof *dyn);
	size_t capdyn = 1;
	push_symbols(ctx, check_plan_concrete(p, in->f), &todo);
	push_symbols(ctx, check_plan_concrete(p, in->d->dt), &todo);
	for (size_t k = 0; k < in->d->n && k < m->nnoises; k++) {
		push_symbols(ctx, check_plan_concrete(p, in->d->dw[k]), &todo);
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
		/* the SDE's coefficients with the concrete forms put in */
		d.dt = check_plan_concrete(p, d.dt);
		for (size_t k = 0; k < d.n; k++)
			d.dw[k] = check_plan_concrete(p, d.dw[k]);
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
			error = xasprintf("check needs a value for '%s' (at %s=...)",
			                  expr_sym_name(p->vars[v]), expr_sym_name(p->vars[v]));
		}
	}
	expr_vec_free(&todo);
	expr_vec_free(&procs);
	expr_vec_free(&params);
	return error;
}

/* The point must satisfy the declared signs and ranges (plan_domain), and f
 * must be finite there (plan_finite). */
static char *plan_domain(check_plan *p)
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
		if (ok &&
		    (x < lo || x > hi || (entry->lo_strict && x == lo) || (entry->hi_strict && x == hi)))
			return xasprintf("the point has %s=%g, outside its declared range", name, x);
	}
	return NULL;
}

static char *plan_finite(check_plan *p)
{
	bool ok = true;
	double f = eval_at(p->ctx, check_plan_concrete(p, p->in->f), p->nvars, p->vars, p->point, &ok);
	if (!ok || !isfinite(f))
		return xstrdup("the expression is not finite at the point");
	return NULL;
}

static char *plan_correlations(check_plan *p)
{
	size_t n = p->nnoise;
	p->rho = xcalloc(n * n + 1, sizeof *p->rho);
	p->chol = xcalloc(n * n + 1, sizeof *p->chol);
	for (size_t a = 0; a < n; a++)
		for (size_t b = 0; b < n; b++) {
			bool ok = true;
			double value = a == b ? 1
			                      : eval_at(p->ctx, model_corr(p->m, p->noise[a], p->noise[b]),
			                                p->nvars, p->vars, p->point, &ok);
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
static bool plan_milstein(check_plan *p, const expr **terms)
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

/* A generic function applied (with partial-derivative counts) to args:
 * the concrete body differentiated by the formals as the counts say, then
 * the formals replaced by the args (all at once).  NULL: no concrete form. */
static const expr *concrete_fapp(expr_ctx *ctx, const expr *fapp, const expr *const *args, void *data)
{
	const check_input *in = data;
	const expr *func = expr_fapp_func(fapp);
	const unsigned char *counts = expr_fapp_counts(fapp);
	for (size_t i = 0; i < in->nconcrete; i++) {
		const check_concrete *c = &in->concrete[i];
		if (c->func != func || c->nargs != expr_nops(fapp))
			continue;
		const expr *body = c->body;
		for (size_t a = 0; a < c->nargs && counts; a++)
			for (unsigned k = 0; k < counts[a] && body; k++)
				body = diff(ctx, body, c->formals[a]);
		return expr_subst(ctx, body, c->nargs, c->formals, args);
	}
	return NULL;
}

const expr *check_plan_concrete(check_plan *p, const expr *e)
{
	if (!e || p->in->nconcrete == 0)
		return e;
	return expr_rebuild_fapp(p->ctx, e, concrete_fapp, (void *)p->in);
}

/* The statistics are of f / 2^e, with 2^e near the size of f and of its
 * increments when that is beyond 2^+-60, so that squares and sums of them
 * neither overflow nor underflow (S = 1e200: (dS)^2 is 1e398); the scaling
 * by a power of 2 is exact.  NULL: no scaling. */
static const expr *plan_scale(check_plan *p, double size)
{
	p->scale = 1;
	if (!(size > 0) || !isfinite(size) || (size > 0x1p-60 && size < 0x1p60))
		return NULL;
	int e;
	frexp(size, &e);
	p->scale = ldexp(1, e);
	return expr_pow(p->ctx, expr_int(p->ctx, 2), expr_int(p->ctx, -e));
}

static const expr *scaled(check_plan *p, const expr *by, const expr *e)
{
	return by && e ? expr_mul(p->ctx, by, e) : e;
}

static char *plan_programs(check_plan *p)
{
	double size = 0;
	p->unrepresentable = !check_fd_point(p, &size);
	const expr *by = plan_scale(p, size);
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
		p->note = xstrdup("Milstein needs each state driven by one noise through a coefficient "
		                  "of that state alone; Euler-Maruyama used instead");
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
	const expr *f = scaled(p, by, check_plan_concrete(p, p->in->f));
	if (!f)
		return xstrdup("check could not form f");
	p->fprog = eval_compile(p->ctx, 1, &f, p->nvars, p->vars, &bad);
	if (!p->fprog)
		return cannot_evaluate(p->ctx, bad);
	p->nclaim = 1 + nn;
	const expr **claim = xcalloc(p->nclaim, sizeof *claim);
	claim[0] = scaled(p, by, check_plan_concrete(p, p->in->d->dt));
	for (size_t a = 0; a < nn; a++)
		claim[1 + a] =
		        scaled(p, by,
		               check_plan_concrete(p, p->noise[a] < p->in->d->n ? p->in->d->dw[p->noise[a]]
		                                                                : expr_int(p->ctx, 0)));
	for (size_t i = 0; i < p->nclaim; i++)
		if (!claim[i]) {
			free(claim);
			return xstrdup("check could not form the tested coefficients");
		}
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

char *check_plan_make(check_plan *p)
{
	char *error = plan_symbols(p);
	if (!error)
		error = plan_domain(p);
	if (!error)
		error = plan_correlations(p);
	if (!error) {
		p->truncate = xcalloc(p->nproc + 1, sizeof *p->truncate);
		for (size_t i = 0; i < p->nproc; i++) {
			int sign = expr_sym_sign(p->vars[i]);
			if (!model_sde_of(p->m, p->vars[i]) || (sign & EXPR_SIGN_NEG))
				p->truncate[i] = SIM_PATHS_FREE;
			else
				p->truncate[i] =
				        sign & EXPR_SIGN_ZERO ? SIM_PATHS_TRUNCATE : SIM_PATHS_REFLECT;
		}
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
		                             .seed = p->in->seed,
		                             .progress = p->in->progress,
		                             .progress_data = p->in->progress_data};
	return error;
}
