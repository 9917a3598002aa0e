/* check-fd.c - the finite differences of `check` (see check-internal.h).
 *
 * Every partial derivative that Itô's formula uses (f_t, f_x for each
 * process x of f, f_xy for each pair with nonzero covariation) is compared
 * with a central difference.  Both are computed in ball arithmetic (Arb,
 * ball.h) at FD_PREC bits, so the comparison is sound at every scale: a
 * point such as S = 1e-300 or S = 1e200, a value such as exp(-1000) or a
 * second derivative of 1e600, none of which a double holds.  The steps are
 * powers of 2 relative to the scale s of the variable (fd_scale): h = s/2^60
 * for first derivatives and s/2^40 for second ones, so the truncation
 * errors, h^2 f'''/6 and h^2 f''''/12, are about 2^-120 and 2^-80 of the
 * natural size of the partial, and the working precision leaves well over
 * 100 bits after the cancellation; the balls' radii bound the rounding.
 *
 * The relative error is |engine - difference| / max(|engine|, |difference|);
 * it may be 1e-5 plus four times the change of the difference when its step
 * is doubled (a bound on its truncation error, which matters when the
 * partial is 0 at the point: x^3 at 0) plus the radii of the balls, both
 * relative to the same size.  A row that cannot be
 * formed (f undefined at a shifted point, a value that is not finite, a ball
 * too wide) makes the verdict undecided (check.c).
 */
#include <config.h>

#include "check-internal.h"

#include <float.h>
#include <flint/flint.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "ball.h"
#include "diff.h"
#include "xalloc.h"

enum { FD_PREC = 320, FD_FIRST_BITS = 60, FD_SECOND_BITS = 40 };

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

/* What the rows share: f compiled in ball arithmetic and the point as balls. */
typedef struct fd_state {
	check_plan *p;
	ball_prog *f;
	arb_ptr x;   /* nvars: the point (a working copy) */
	arb_t value; /* scratch: f at a point */
	arb_t f0;    /* f at the point */
	bool f0_ok;
} fd_state;

/* f at the point with variable i moved by di and j by dj (balls); false when undefined. */
static bool fd_f(fd_state *st, size_t i, const arb_t di, size_t j, const arb_t dj, arb_t out)
{
	arb_t xi, xj;
	arb_init(xi);
	arb_init(xj);
	arb_set(xi, st->x + i);
	arb_set(xj, st->x + j);
	arb_add(st->x + i, st->x + i, di, FD_PREC);
	arb_add(st->x + j, st->x + j, dj, FD_PREC);
	ball_status status = BALL_FAILED;
	bool ran = ball_run(st->f, st->x, FD_PREC, out, &status) == BALL_OK;
	arb_set(st->x + i, xi);
	arb_set(st->x + j, xj);
	arb_clear(xi);
	arb_clear(xj);
	return ran && status == BALL_OK && arb_is_finite(out);
}

/* h := 2^(floor(log2 s) - bits), exactly. */
static void fd_step(arb_t h, double s, int bits)
{
	int e;
	frexp(s, &e);
	arb_one(h);
	arb_mul_2exp_si(h, h, e - 1 - bits);
}

/* The central difference of row (i, j) into d, with steps 2^wider times the
 * usual ones; j == (size_t)-1 for a first derivative. */
static bool fd_difference(fd_state *st, size_t i, size_t j, double si, double sj, int wider, arb_t d)
{
	arb_t hi, hj, neg, zero, a, b;
	arb_init(hi);
	arb_init(hj);
	arb_init(neg);
	arb_init(zero);
	arb_init(a);
	arb_init(b);
	bool ok;
	if (j == (size_t)-1) {
		/* (f(x+h) - f(x-h)) / 2h */
		fd_step(hi, si, FD_FIRST_BITS - wider);
		arb_neg(neg, hi);
		ok = fd_f(st, i, hi, i, zero, a) && fd_f(st, i, neg, i, zero, b);
		arb_sub(d, a, b, FD_PREC);
		arb_div(d, d, hi, FD_PREC);
		arb_mul_2exp_si(d, d, -1);
	} else if (i == j) {
		/* (f(x+h) - 2 f(x) + f(x-h)) / h^2 */
		fd_step(hi, si, FD_SECOND_BITS - wider);
		arb_neg(neg, hi);
		ok = st->f0_ok && fd_f(st, i, hi, i, zero, a) && fd_f(st, i, neg, i, zero, b);
		arb_add(d, a, b, FD_PREC);
		arb_submul_ui(d, st->f0, 2, FD_PREC);
		arb_div(d, d, hi, FD_PREC);
		arb_div(d, d, hi, FD_PREC);
	} else {
		/* (f(++) - f(+-) - f(-+) + f(--)) / 4 hi hj */
		fd_step(hi, si, FD_SECOND_BITS - wider);
		fd_step(hj, sj, FD_SECOND_BITS - wider);
		arb_zero(d);
		ok = true;
		for (int k = 0; k < 4 && ok; k++) {
			arb_set(neg, hi);
			if (k & 2)
				arb_neg(neg, neg);
			arb_set(b, hj);
			if (k & 1)
				arb_neg(b, b);
			ok = fd_f(st, i, neg, j, b, a);
			if ((k == 0) | (k == 3))
				arb_add(d, d, a, FD_PREC);
			else
				arb_sub(d, d, a, FD_PREC);
		}
		arb_div(d, d, hi, FD_PREC);
		arb_div(d, d, hj, FD_PREC);
		arb_mul_2exp_si(d, d, -2);
	}
	arb_clear(hi);
	arb_clear(hj);
	arb_clear(neg);
	arb_clear(zero);
	arb_clear(a);
	arb_clear(b);
	return ok && arb_is_finite(d);
}

/* The value of a ball to 10 digits (also beyond the range of a double). */
static void fd_text(const arb_t x, bool ok, char *out, size_t size)
{
	if (!ok) {
		snprintf(out, size, "-");
		return;
	}
	double d = arf_get_d(arb_midref(x), ARF_RND_NEAR);
	if (d != 0 && isfinite(d) && fabs(d) > 1e-300 && fabs(d) < 1e300) {
		snprintf(out, size, "%.10g", d);
		return;
	}
	if (arf_is_zero(arb_midref(x))) {
		snprintf(out, size, "0");
		return;
	}
	/* m * 10^e from the exponent of 2 and the mantissa */
	fmpz_t e2;
	fmpz_init(e2);
	arf_t mant;
	arf_init(mant);
	arf_frexp(mant, e2, arb_midref(x));
	double m = arf_get_d(mant, ARF_RND_NEAR);
	double l10 = (double)fmpz_get_si(e2) * log10(2.0) + log10(fabs(m));
	double e10 = floor(l10);
	snprintf(out, size, "%s%.9fe%+.0f", m < 0 ? "-" : "", pow(10, l10 - e10), e10);
	arf_clear(mant);
	fmpz_clear(e2);
}

/* The row of the partial in variables i and j; j == (size_t)-1 for a first derivative. */
static void fd_compute(fd_state *st, ball_prog *partial_prog, size_t i, size_t j, check_fd_row *row)
{
	check_plan *p = st->p;
	row->first = p->vars[i];
	row->second = j == (size_t)-1 ? NULL : p->vars[j];
	double si = fd_scale(p, i), sj = j == (size_t)-1 ? si : fd_scale(p, j);
	arb_t engine, d, d2;
	arb_init(engine);
	arb_init(d);
	arb_init(d2);
	ball_status status = BALL_FAILED;
	bool engine_ok = partial_prog && ball_run(partial_prog, st->x, FD_PREC, engine, &status) == BALL_OK &&
	                 status == BALL_OK && arb_is_finite(engine);
	bool diff_ok = fd_difference(st, i, j, si, sj, 0, d) && fd_difference(st, i, j, si, sj, 1, d2);
	row->engine = engine_ok ? arf_get_d(arb_midref(engine), ARF_RND_NEAR) : NAN;
	row->difference = diff_ok ? arf_get_d(arb_midref(d), ARF_RND_NEAR) : NAN;
	fd_text(engine, engine_ok, row->engine_text, sizeof row->engine_text);
	fd_text(d, diff_ok, row->difference_text, sizeof row->difference_text);
	row->formed = engine_ok && diff_ok;
	row->error = NAN;
	row->tolerance = CHECK_FD_TOLERANCE;
	if (row->formed) {
		/* error = |engine - d| / size, size = max(|engine|, |d|); allowed:
		 * the relative tolerance, plus 4 |d(h) - d(2h)| (the truncation error
		 * of d(h) is a quarter of that change) and the balls' radii, relative
		 * to the same size, so a partial that is 0 at the point is judged
		 * against the truncation of its difference */
		arb_t diff, size, slack;
		arb_init(diff);
		arb_init(size);
		arb_init(slack);
		arb_sub(diff, engine, d, FD_PREC);
		arb_abs(diff, diff);
		arb_abs(size, engine);
		arb_abs(slack, d);
		arb_max(size, size, slack, FD_PREC);
		arb_sub(slack, d, d2, FD_PREC);
		arb_abs(slack, slack);
		arb_mul_ui(slack, slack, 4, FD_PREC);
		if (arb_is_positive(size)) {
			arb_div(diff, diff, size, FD_PREC);
			arb_div(slack, slack, size, FD_PREC);
			row->error = arf_get_d(arb_midref(diff), ARF_RND_UP);
			double radius = mag_get_d(arb_radref(diff));
			row->tolerance += arf_get_d(arb_midref(slack), ARF_RND_UP) +
			                  mag_get_d(arb_radref(slack)) + radius;
			row->formed = radius < 1e-3 && isfinite(row->tolerance);
		} else {
			row->error = 0; /* both are 0 */
		}
		arb_clear(diff);
		arb_clear(size);
		arb_clear(slack);
	}
	row->ok = row->formed && isfinite(row->error) && row->error <= row->tolerance;
	arb_clear(engine);
	arb_clear(d);
	arb_clear(d2);
}

static void fd_push(fd_state *st, check_fd_row **rows, size_t *n, size_t *cap, size_t i, size_t j)
{
	check_plan *p = st->p;
	if (*n == *cap) {
		*cap *= 2;
		*rows = xreallocarray(*rows, *cap, sizeof **rows);
	}
	const expr *partial = check_plan_concrete(p, diff(p->ctx, p->in->f, p->vars[i]));
	if (partial && j != (size_t)-1)
		partial =
		        check_plan_concrete(p, diff(p->ctx, diff(p->ctx, p->in->f, p->vars[i]), p->vars[j]));
	ball_prog *prog = partial ? ball_compile(p->ctx, 1, &partial, p->nvars, p->vars, NULL) : NULL;
	memset(&(*rows)[*n], 0, sizeof **rows);
	fd_compute(st, prog, i, j, &(*rows)[*n]);
	if (prog)
		ball_free(prog);
	(*n)++;
}

/* The partials Itô's formula uses: f_x for the processes of f and f_t, and
 * f_xy for pairs of processes with nonzero covariation. */
size_t check_fd_table(check_plan *p, check_fd_row **rows)
{
	size_t n = 0, cap = 4;
	*rows = xcalloc(cap, sizeof **rows);
	const expr *f = check_plan_concrete(p, p->in->f);
	fd_state st = {.p = p};
	st.f = f ? ball_compile(p->ctx, 1, &f, p->nvars, p->vars, NULL) : NULL;
	if (!st.f)
		return 0;
	st.x = _arb_vec_init((slong)p->nvars);
	for (size_t v = 0; v < p->nvars; v++)
		arb_set_d(st.x + v, p->point[v]);
	arb_init(st.value);
	arb_init(st.f0);
	ball_status status = BALL_FAILED;
	st.f0_ok = ball_run(st.f, st.x, FD_PREC, st.f0, &status) == BALL_OK && status == BALL_OK;
	for (size_t i = 0; i <= p->nproc; i++)
		if (expr_has(p->ctx, p->in->f, p->vars[i]))
			fd_push(&st, rows, &n, &cap, i, (size_t)-1);
	for (size_t i = 0; i < p->nproc; i++)
		for (size_t j = i; j < p->nproc; j++) {
			if (!expr_has(p->ctx, p->in->f, p->vars[i]) ||
			    !expr_has(p->ctx, p->in->f, p->vars[j]))
				continue;
			const expr *c = ito_covariation(p->m, &p->dyn[i], &p->dyn[j]);
			if (c && !expr_is_zero(c))
				fd_push(&st, rows, &n, &cap, i, j);
		}
	arb_clear(st.value);
	arb_clear(st.f0);
	_arb_vec_clear(st.x, (slong)p->nvars);
	ball_free(st.f);
	return n;
}

/* f and the tested drift and coefficients at the point, in ball arithmetic
 * and in double precision: whether every value is within the range of
 * doubles (f = exp(-1000) underflows to 0, and a differential of it tested in
 * double would be a test of zeros), and the size of f and of its increments,
 * max(|f|, |a| T, |b| sqrt(T)), for the scale of the statistics. */
bool check_fd_point(check_plan *p, double *size)
{
	const ito_diff *d = p->in->d;
	size_t n = 1 + 1 + d->n;
	const expr **roots = xcalloc(n, sizeof *roots);
	roots[0] = check_plan_concrete(p, p->in->f);
	roots[1] = check_plan_concrete(p, d->dt);
	for (size_t k = 0; k < d->n; k++)
		roots[2 + k] = check_plan_concrete(p, d->dw[k] ? d->dw[k] : expr_int(p->ctx, 0));
	bool representable = true;
	*size = 0;
	for (size_t r = 0; r < n; r++)
		if (!roots[r])
			representable = false;
	ball_prog *prog = representable ? ball_compile(p->ctx, n, roots, p->nvars, p->vars, NULL) : NULL;
	arb_ptr x = _arb_vec_init((slong)p->nvars), out = _arb_vec_init((slong)n);
	ball_status *status = xcalloc(n, sizeof *status);
	for (size_t v = 0; v < p->nvars; v++)
		arb_set_d(x + v, p->point[v]);
	if (prog && ball_run(prog, x, FD_PREC, out, status) == BALL_OK) {
		double T = p->in->horizon;
		for (size_t r = 0; r < n; r++) {
			if (status[r] != BALL_OK)
				continue; /* undefined at the point: plan_finite and the paths say so */
			bool ok = true;
			double value = eval_at(p->ctx, roots[r], p->nvars, p->vars, p->point, &ok);
			double exact = arf_get_d(arb_midref(out + r), ARF_RND_NEAR);
			bool zero = arb_is_zero(out + r) || (arf_is_zero(arb_midref(out + r)));
			/* beyond the range of doubles (a cancellation in double is not this) */
			if (!zero && (!ok || !isfinite(value) || !isfinite(exact) || exact == 0 ||
			              fabs(exact) < DBL_MIN || fabs(exact) > DBL_MAX))
				representable = false;
			double weight = r == 0 ? 1 : r == 1 ? T : sqrt(T);
			if (isfinite(exact))
				*size = fmax(*size, fabs(exact) * weight);
		}
	}
	free(status);
	_arb_vec_clear(out, (slong)n);
	_arb_vec_clear(x, (slong)p->nvars);
	if (prog)
		ball_free(prog);
	free(roots);
	return representable;
}
