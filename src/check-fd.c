/* check-fd.c - the finite differences of `check` (see check-internal.h).
 *
 * Every partial derivative that Itô's formula uses (f_t, f_x for each
 * process x of f, f_xy for each pair with nonzero covariation) is compared
 * with a central difference: first derivatives with step h = eps^(1/3) s,
 * second ones with h = eps^(1/4) s, the steps that balance truncation (h^2)
 * against rounding (eps/h, eps/h^2), where s is the scale of the variable
 * (fd_scale).  The tolerance is 1e-5 relative to max(1, |value|) plus ten
 * times the rounding error eps |f| / h^k of the quotient.
 */
#include <config.h>

#include "check-internal.h"

#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "diff.h"
#include "xalloc.h"

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
static double fd_scale(check_plan *p, size_t v)
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

/* The row of the partial in variables i and j; j == (size_t)-1 for a first derivative. */
static void fd_compute(check_plan *p, const eval_prog *fonly, size_t i, size_t j, check_fd_row *row)
{
	double *x = xmalloc(p->nvars * sizeof *x);
	memcpy(x, p->point, p->nvars * sizeof *x);
	row->first = p->vars[i];
	row->second = j == (size_t)-1 ? NULL : p->vars[j];
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
			row->difference =
			        (shifted(fonly, x, i, hi, i, 0) - 2 * f0 + shifted(fonly, x, i, -hi, i, 0)) /
			        (hi * hi);
		else
			/* (f(++) - f(+-) - f(-+) + f(--)) / 4 hi hj */
			row->difference =
			        (shifted(fonly, x, i, hi, j, hj) - shifted(fonly, x, i, hi, j, -hj) -
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
	row->tolerance = CHECK_FD_TOLERANCE + row->tolerance / scale;
	row->ok = isfinite(row->error) && row->error <= row->tolerance;
	free(x);
}

static void fd_push(check_plan *p, const eval_prog *fonly, check_fd_row **rows, size_t *n, size_t *cap,
                    size_t i, size_t j)
{
	if (*n == *cap) {
		*cap *= 2;
		*rows = xreallocarray(*rows, *cap, sizeof **rows);
	}
	fd_compute(p, fonly, i, j, &(*rows)[*n]);
	(*n)++;
}

/* The partials Itô's formula uses: f_x for the processes of f and f_t, and
 * f_xy for pairs of processes with nonzero covariation. */
size_t check_fd_table(check_plan *p, check_fd_row **rows)
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
			if (!expr_has(p->ctx, p->in->f, p->vars[i]) ||
			    !expr_has(p->ctx, p->in->f, p->vars[j]))
				continue;
			const expr *c = ito_covariation(p->m, &p->dyn[i], &p->dyn[j]);
			if (c && !expr_is_zero(c))
				fd_push(p, fonly, rows, &n, &cap, i, j);
		}
	eval_free(fonly);
	return n;
}
