/* check.c - the numerical cross-check of a differential (see crosscheck.h).
 *
 * Claim under test: df = a dt + sum_k b_k dW_k, with dW_k dW_l = rho_kl dt.
 *
 * The plan (check-plan.c) finds what f and the claim need and compiles
 * their programs; the finite differences (check-fd.c) test every partial
 * derivative that Itô's formula uses; the paths (sim-paths.c) give the
 * realised quadratic variation, the martingale residual and the covariation
 * with each noise, each a mean that is zero when the claim is right.  Here
 * they become a check_result: each mean against its tolerance (standard
 * errors, the discretisation bias estimated from three grids, rounding) and
 * the verdict: consistent, inconsistent, or undecided when the experiment
 * cannot judge (paths left the domain or overflowed, too few usable paths or
 * steps, a finite difference that cannot be formed, f not representable in
 * double precision).  The writers (write-check.c, write-json.c) write the
 * result in each output format.
 */
#include <config.h>

#include "crosscheck.h"

#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "check-internal.h"
#include "xalloc.h"

static const double check_z_tolerance = 4;
static const double check_default_work = 2e8;
/* Refinement stops at this much work (steps*paths), that of a check at the
 * default settings, or at the work asked for when that is more. */
static const double check_refine_work = 2e7;
enum { CHECK_CONV_PATHS = 1000, CHECK_MIN_PATHS = 100 };

/* The estimate of the bias of R(h): of the grid differences D1 and D2, the
 * one with the larger |mean| + z_tol se; its |mean| and its se. */
static void bias_estimate(const sim_stat *d1, const sim_stat *d2, double *bias, double *se)
{
	double se1 = sim_stat_se(d1), se2 = sim_stat_se(d2);
	bool first = fabs(d1->mean) + check_z_tolerance * se1 >= fabs(d2->mean) + check_z_tolerance * se2;
	*bias = fabs(first ? d1->mean : d2->mean);
	*se = first ? se1 : se2;
}

/* The share of a statistic's sum of squared deviations above which one path
 * is said to dominate it: 10%, or for few paths ten times 2 log(n)/n, about
 * what the largest of n normal values holds (so light tails pass at any n).
 * One path with share s moves the mean by about sqrt(s) standard errors and
 * makes the standard error itself a matter of chance: under Euler's scheme
 * the drift 1/v of d log(v) for a square-root v on 50 steps had one path
 * holding over 90% of the residual's spread, and a missing Itô term passed. */
static double heavy_share(double n)
{
	return n > 1 ? fmax(0.1, 20 * log(n) / n) : 1;
}

/* Whether a mean within its tolerance is so only by the bias allowance: a
 * mean that sampling and rounding do not explain, as large as the bias
 * estimate itself.  The extrapolation has not converged, and a wrong drift
 * would look the same (a missing Itô term of d log(v) for a square-root v on
 * 50 steps once passed that way). */
static bool only_by_bias(double mean, double se, double bias, double rounding)
{
	return fabs(mean) > check_z_tolerance * se + rounding && fabs(mean) > 0.5 * bias;
}

/* The tolerance z_tol sqrt(se^2 + se_bias^2) + |bias| + rounding. */
static double tolerance_of(double se, double bias_se, double bias, double rounding)
{
	return check_z_tolerance * hypot(se, bias_se) + bias + rounding;
}

/* The allowance for rounding, 8 eps N m, with m the mean size of the terms
 * summed along a path (each of the N steps' terms is computed with a
 * relative error of a few eps, and the sums accumulate at most N of them). */
static double rounding_of(const sim_stat *mag, long steps)
{
	return 8 * DBL_EPSILON * (double)steps * fabs(mag->mean);
}

/* The largest share of the sum of squared deviations one path holds in
 * R(h) or in either grid difference. */
static double top_share_of(const sim_stat *ext, const sim_stat *d1, const sim_stat *d2)
{
	return fmax(sim_stat_top_share(ext), fmax(sim_stat_top_share(d1), sim_stat_top_share(d2)));
}

/* A heavy statistic within its tolerance is judged again without the paths
 * that dominate it: R(h), D1, D2 and the sizes of the terms (for rounding)
 * each without their farthest paths (at most 7) until no path holds over the
 * dominance share, the standard errors, the bias estimate and the rounding
 * allowance recomputed from those.  The trimmed mean estimates the mean of
 * the bulk of the paths, not of all of them, so both must be within the
 * trimmed tolerance: the untrimmed mean too, which bounds what the paths set
 * aside may contribute.  A wrong drift hidden by one path's inflated spread
 * shows there; a right one whose terms are lognormal (the quadratic variation
 * of GBM's S^3 sums terms like S^6 dt, and at the default settings one path
 * held over 10% of its spread on 14.5% of seeds) stays within. */
static void judge_trimmed(const sim_paths_totals *total, size_t i, long steps, check_zstat *z)
{
	double share = heavy_share(total->ext[i].n);
	int k_ext, k_d1, k_d2, k_mag;
	sim_stat ext = sim_stat_tame(&total->ext[i], share, &k_ext);
	sim_stat d1 = sim_stat_tame(&total->d1[i], share, &k_d1);
	sim_stat d2 = sim_stat_tame(&total->d2[i], share, &k_d2);
	sim_stat mag = sim_stat_tame(&total->mag, share, &k_mag);
	double bias, bias_se, se = sim_stat_se(&ext), rounding = rounding_of(&mag, steps);
	bias_estimate(&d1, &d2, &bias, &bias_se);
	z->trimmed = k_ext;
	z->trimmed_grid = k_d1 > k_d2 ? k_d1 : k_d2;
	z->trimmed_mean = ext.mean;
	double tolerance = z->trimmed_tolerance = tolerance_of(se, bias_se, bias, rounding);
	if (top_share_of(&ext, &d1, &d2) > share)
		z->trimmed_is = CHECK_TRIM_DOMINATED;
	else if (!isfinite(ext.mean) || !(fabs(ext.mean) <= tolerance && fabs(z->mean) <= tolerance))
		z->trimmed_is = CHECK_TRIM_OUTSIDE;
	else if (only_by_bias(ext.mean, se, bias, rounding))
		z->trimmed_is = CHECK_TRIM_BY_BIAS;
	else
		z->trimmed_is = CHECK_TRIM_WITHIN;
}

/* A heavy statistic makes the verdict undecided unless, within its
 * tolerance, it is also within without the paths that dominate it. */
static bool heavy_undecides(const check_zstat *z)
{
	return z->heavy && !(z->ok && z->trimmed_is == CHECK_TRIM_WITHIN);
}

/* A statistic against its tolerance z_tol sqrt(se^2 + se_bias^2) + |bias| +
 * rounding: its own sampling error and that of the bias estimate, the bias
 * estimate, and the rounding allowance.  Without randomness (se = 0) only the
 * bias and the rounding remain. */
static check_zstat zstat_of(const sim_paths_totals *total, size_t i, long steps)
{
	const sim_stat *ext = &total->ext[i];
	check_zstat z = {.n = ext->n, .mean = ext->mean, .se = sim_stat_se(ext), .fine = total->fine[i].mean};
	z.z = z.se > 0 ? z.mean / z.se : NAN;
	bias_estimate(&total->d1[i], &total->d2[i], &z.bias, &z.bias_se);
	z.rounding = rounding_of(&total->mag, steps);
	z.tolerance = tolerance_of(z.se, z.bias_se, z.bias, z.rounding);
	z.ok = ext->n > 1 && isfinite(z.mean) && isfinite(z.tolerance) && fabs(z.mean) <= z.tolerance;
	z.grid_decides = z.ok && only_by_bias(z.mean, z.se, z.bias, z.rounding);
	z.top_share = top_share_of(ext, &total->d1[i], &total->d2[i]);
	z.heavy = z.top_share > heavy_share(ext->n);
	/* A statistic dominated by one path is evidence only if it stays far off
	 * without that path: its mean and standard error recomputed, against
	 * twice the tolerance (a wrong d log(v) for a square-root v at 800 steps
	 * has z = -340 with one path holding 13% of the spread). */
	z.off = !z.ok && ext->n > 1;
	if (z.off && z.heavy) {
		sim_stat rest = sim_stat_without_extreme(ext);
		double tolerance = tolerance_of(sim_stat_se(&rest), z.bias_se, z.bias, z.rounding);
		z.off = isfinite(rest.mean) && fabs(rest.mean) > 2 * tolerance;
	}
	if (z.heavy && z.ok && i != SIM_PATHS_TERMINAL) /* the terminal value is reported, not tested */
		judge_trimmed(total, i, steps, &z);
	return z;
}

static void add_reason(check_result *out, check_reason_kind kind, size_t index)
{
	out->reasons = xreallocarray(out->reasons, out->nreasons + 1, sizeof *out->reasons);
	out->reasons[out->nreasons++] = (check_reason){.kind = kind, .index = index};
}

/* What was checked: the input as given, the plan's choices and the steps of
 * the grid used (more than asked when refined). */
static void record_setup(check_plan *p, long steps, check_result *out)
{
	const check_input *in = p->in;
	check_setup *s = &out->setup;
	s->f = in->f;
	s->nvalues = in->nvalues;
	s->symbols = xcalloc(in->nvalues + 1, sizeof *s->symbols);
	s->values = xcalloc(in->nvalues + 1, sizeof *s->values);
	for (size_t i = 0; i < in->nvalues; i++) {
		s->symbols[i] = in->symbols[i];
		s->values[i] = in->values[i];
	}
	s->milstein = p->milstein;
	s->horizon = in->horizon;
	s->steps = steps;
	s->steps_asked = in->steps;
	s->paths = in->paths;
	s->seed = in->seed;
	s->hand_derived = in->hand_derived;
	s->nconcrete = in->nconcrete;
	s->concrete = xcalloc(in->nconcrete + 1, sizeof *s->concrete);
	for (size_t i = 0; i < in->nconcrete; i++) {
		const expr **formals = xcalloc(in->concrete[i].nargs + 1, sizeof *formals);
		for (size_t j = 0; j < in->concrete[i].nargs; j++)
			formals[j] = in->concrete[i].formals[j];
		s->concrete[i] = in->concrete[i];
		s->concrete[i].formals = formals;
	}
	s->drift = in->d->dt;
	s->note = p->note;
	p->note = NULL;
	s->z_tolerance = check_z_tolerance;
	s->fd_tolerance = CHECK_FD_TOLERANCE;
}

static void record_fd(check_result *out, check_fd_row *rows, size_t nrows)
{
	out->fd = rows;
	out->nfd = nrows;
	for (size_t i = 0; i < nrows; i++)
		if (!rows[i].formed)
			add_reason(out, CHECK_REASON_FD_SCALE, i);
		else if (!rows[i].ok)
			add_reason(out, CHECK_REASON_FD, i);
}

/* The statistics of the paths and the reasons they give, in the order of the
 * report.  Paths left out (not finite) or too few paths make the experiment
 * unable to judge: the verdict is then undecided, never inconsistent. */
static void record_sim(const check_plan *p, const sim_paths_totals *total, long steps, check_result *out)
{
	const check_input *in = p->in;
	check_simulation *sim = &out->sim;
	sim->qv = zstat_of(total, SIM_PATHS_QV, steps);
	sim->residual = zstat_of(total, SIM_PATHS_RESID, steps);
	sim->terminal = zstat_of(total, SIM_PATHS_TERMINAL, steps);
	sim->qv_realised = total->qv.mean;
	sim->qv_predicted = total->integ.mean;
	sim->grids = sim_paths_grids(steps);
	sim->coarse_steps = sim->grids >= 2 ? (steps + 1) / 2 : 0;
	sim->paths_used = (long)total->ext[0].n;
	sim->bad_paths = total->bad;
	sim->truncated_paths = total->below;
	sim->scale = p->scale;
	sim->min_paths = CHECK_MIN_PATHS;
	if (sim->qv.off)
		add_reason(out, CHECK_REASON_QV, 0);
	if (sim->residual.off)
		add_reason(out, CHECK_REASON_RESIDUAL, 0);
	bool grids = sim->grids >= 3; /* else the bias was not estimated at all (FEW_STEPS) */
	if (grids && sim->qv.grid_decides)
		add_reason(out, CHECK_REASON_COARSE_GRID, 0);
	if (grids && sim->residual.grid_decides)
		add_reason(out, CHECK_REASON_COARSE_GRID, 1);
	if (heavy_undecides(&sim->qv))
		add_reason(out, CHECK_REASON_HEAVY_TAILS, 0);
	if (heavy_undecides(&sim->residual))
		add_reason(out, CHECK_REASON_HEAVY_TAILS, 1);
	out->nnoise = p->nnoise;
	out->noises = xcalloc(p->nnoise + 1, sizeof *out->noises);
	for (size_t a = 0; a < p->nnoise; a++) {
		/* under a measure Q, the noise's Q Brownian motion */
		size_t k = p->noise[a];
		bool renamed = in->q && k < in->q->nnoises && in->q->names[k];
		check_noise *noise = &out->noises[a];
		noise->name = renamed ? in->q->names[k] : p->m->noises[k];
		noise->coefficient = k < in->d->n ? in->d->dw[k] : NULL;
		noise->covariation = zstat_of(total, SIM_PATHS_COV + a, steps);
		if (noise->covariation.off)
			add_reason(out, CHECK_REASON_COVARIATION, a);
		if (grids && noise->covariation.grid_decides)
			add_reason(out, CHECK_REASON_COARSE_GRID, 2 + a);
		if (heavy_undecides(&noise->covariation))
			add_reason(out, CHECK_REASON_HEAVY_TAILS, 2 + a);
	}
	if (total->bad > 0)
		add_reason(out, CHECK_REASON_BAD_PATHS, 0);
	if (sim->paths_used < CHECK_MIN_PATHS)
		add_reason(out, CHECK_REASON_FEW_PATHS, 0);
	if (sim->grids < 3)
		add_reason(out, CHECK_REASON_FEW_STEPS, 0);
}

/* Whether the grid should be refined: no statistic under test is off (that
 * decides), and one is dominated by one path (heavy tails, which a finer
 * grid tames when they come from Euler steps near a boundary) or is within
 * its tolerance only by the bias allowance (the extrapolation has not
 * converged). */
static bool grid_too_coarse(const sim_paths_totals *total, size_t nstat, long steps)
{
	if (sim_paths_grids(steps) < 3)
		return false;
	bool coarse = false;
	for (size_t i = 0; i < nstat; i++) {
		if (i == SIM_PATHS_TERMINAL)
			continue; /* reported, not tested */
		check_zstat z = zstat_of(total, i, steps);
		if (z.off)
			return false; /* decided: inconsistent */
		coarse = coarse || z.heavy || z.grid_decides;
	}
	return coarse;
}

/* Inconsistent when a finite difference is off (those do not depend on the
 * paths), or when a statistic is off and nothing makes the paths unable to
 * judge; undecided when something does, or when no statistic is off but one
 * is within its tolerance only by the bias allowance (a grid too coarse) or
 * is dominated by one path and not within its tolerance without the paths
 * that dominate it (heavy tails; such a statistic is "off" only if it stays
 * far off without its farthest path); consistent without reasons. */
static check_verdict verdict_of(const check_result *out)
{
	bool fd_off = false, undecided = false, doubtful = false, off = false;
	for (size_t i = 0; i < out->nreasons; i++) {
		check_reason_kind kind = out->reasons[i].kind;
		bool soft = kind == CHECK_REASON_COARSE_GRID || kind == CHECK_REASON_HEAVY_TAILS;
		fd_off = fd_off || kind == CHECK_REASON_FD;
		doubtful = doubtful || soft;
		undecided = undecided || (CHECK_REASON_UNDECIDES(kind) && !soft);
		off = off || !CHECK_REASON_UNDECIDES(kind);
	}
	if (fd_off)
		return CHECK_INCONSISTENT;
	if (undecided)
		return CHECK_UNDECIDED;
	if (off)
		return CHECK_INCONSISTENT;
	return doubtful ? CHECK_UNDECIDED : CHECK_CONSISTENT;
}

static void record_conv(const sim_paths_conv *conv, size_t npaths, check_result *out)
{
	out->conv_paths = npaths;
	out->conv_bad = conv->bad;
	out->nconv = SIM_PATHS_NCONV;
	out->conv = xcalloc(SIM_PATHS_NCONV, sizeof *out->conv);
	for (size_t i = 0; i < SIM_PATHS_NCONV; i++)
		out->conv[i] = (check_conv_row){.steps = sim_paths_conv_steps[i],
		                                .qv = conv->qv[i].mean,
		                                .qv_se = sim_stat_se(&conv->qv[i]),
		                                .predicted = conv->integ[i].mean,
		                                .gap_sd = sim_stat_sd(&conv->gap[i]),
		                                .first_variation = conv->fv[i].mean};
}

void check_run(expr_ctx *ctx, const check_input *in, check_result *out)
{
	memset(out, 0, sizeof *out);
	double max_work = in->max_work > 0 ? (double)in->max_work : check_default_work;
	double work = (double)in->steps * (double)in->paths;
	if (work > max_work) {
		out->limit_hit = true;
		out->error =
		        xasprintf("simulation too large (steps*paths = %.0f, limit %.0f)", work, max_work);
		return;
	}
	if (in->steps < 1 || in->paths < 2 || !(in->horizon > 0)) {
		out->error = xstrdup("check needs T > 0, steps >= 1 and paths >= 2");
		return;
	}
	check_plan p = {.ctx = ctx, .m = in->m, .in = in};
	char *error = check_plan_make(&p);
	if (error) {
		out->error = error;
		check_plan_free(&p);
		return;
	}
	check_fd_row *rows = NULL;
	size_t nrows = in->hand_derived ? 0 : check_fd_table(&p, &rows);

	/* The grid is doubled while it limits the test and the work stays within
	 * check_refine_work (or the work asked for, if more) and max_work. */
	sim_paths_totals total;
	long steps = in->steps;
	double refine_work = fmin(fmax(work, check_refine_work), max_work);
	size_t nstat = SIM_PATHS_COV + p.nnoise;
	bool finished = sim_paths_run(ctx, &p.paths, steps, (size_t)in->paths, &total);
	while (finished && 2 * (double)steps * (double)in->paths <= refine_work &&
	       grid_too_coarse(&total, nstat, steps)) {
		sim_paths_totals_free(&total);
		steps *= 2;
		finished = sim_paths_run(ctx, &p.paths, steps, (size_t)in->paths, &total);
	}
	sim_paths_conv conv;
	size_t conv_paths = 0;
	if (finished && in->verbose) {
		double finest = (double)sim_paths_conv_steps[SIM_PATHS_NCONV - 1];
		conv_paths =
		        (size_t)fmin(fmin((double)in->paths, CHECK_CONV_PATHS), floor(max_work / finest));
		if (conv_paths >= 2)
			finished = sim_paths_convergence(ctx, &p.paths, conv_paths, &conv);
	}
	if (!finished) {
		/* a stop from outside (Ctrl-C or the time limit): a limit, exit status 3;
		 * the context keeps EXPR_ERR_INTERRUPTED for the caller */
		out->limit_hit = true;
		out->error = xstrdup("interrupted");
		free(rows);
	} else {
		record_setup(&p, steps, out);
		record_fd(out, rows, nrows);
		if (p.unrepresentable)
			add_reason(out, CHECK_REASON_UNREPRESENTABLE, 0);
		record_sim(&p, &total, steps, out);
		if (in->verbose && conv_paths >= 2)
			record_conv(&conv, conv_paths, out);
		out->verdict = verdict_of(out);
		out->consistent = out->verdict == CHECK_CONSISTENT;
	}
	sim_paths_totals_free(&total);
	check_plan_free(&p);
}

void check_result_free(check_result *result)
{
	free(result->error);
	free(result->setup.symbols);
	free(result->setup.values);
	free(result->setup.note);
	for (size_t i = 0; i < result->setup.nconcrete; i++)
		free((void *)result->setup.concrete[i].formals);
	free(result->setup.concrete);
	free(result->fd);
	free(result->noises);
	free(result->conv);
	free(result->reasons);
	memset(result, 0, sizeof *result);
}
