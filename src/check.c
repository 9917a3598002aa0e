/* check.c - the numerical cross-check of a differential (see crosscheck.h).
 *
 * Claim under test: df = a dt + sum_k b_k dW_k, with dW_k dW_l = rho_kl dt.
 *
 * The plan (check-plan.c) finds what f and the claim need and compiles
 * their programs; the finite differences (check-fd.c) test every partial
 * derivative that Itô's formula uses; the paths (sim-paths.c) give the
 * realised quadratic variation, the martingale residual and the covariation
 * with each noise, each a mean that is zero when the claim is right.  Here
 * they become a check_result: each mean with its z-score, and the verdict.
 * Paths whose statistics are not finite are counted, left out and reported;
 * over 1% of them make the verdict inconsistent.  The writers (write-check.c,
 * write-json.c) write the result in each output format.
 */
#include <config.h>

#include "crosscheck.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "check-internal.h"
#include "xalloc.h"

static const double check_z_tolerance = 4;
static const double check_bad_fraction = 0.01;
static const double check_default_work = 2e8;
enum { CHECK_CONV_PATHS = 1000 };

/* z = mean / se, with a rounding floor on se of 1e-9 times the size of the
 * terms summed, so that an exact deterministic identity gives z = 0. */
static check_zstat zstat_of(const sim_stat *ext, const sim_stat *fine, double magnitude)
{
	check_zstat z = {.n = ext->n, .mean = ext->mean, .se = sim_stat_se(ext), .fine = fine->mean};
	double se = fmax(z.se, 1e-9 * fabs(magnitude));
	z.z = se > 0 ? z.mean / se : (z.mean == 0 ? 0 : copysign(INFINITY, z.mean));
	z.ok = ext->n > 1 && isfinite(z.z) && fabs(z.z) < check_z_tolerance;
	return z;
}

static void add_reason(check_result *out, check_reason_kind kind, size_t index)
{
	out->reasons = xreallocarray(out->reasons, out->nreasons + 1, sizeof *out->reasons);
	out->reasons[out->nreasons++] = (check_reason){.kind = kind, .index = index};
}

/* What was checked: the input as given and the plan's choices. */
static void record_setup(check_plan *p, check_result *out)
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
	s->steps = in->steps;
	s->paths = in->paths;
	s->seed = in->seed;
	s->hand_derived = in->hand_derived;
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
		if (!rows[i].ok)
			add_reason(out, CHECK_REASON_FD, i);
}

/* The statistics of the paths and the reasons they give, in the order of the report. */
static void record_sim(const check_plan *p, const sim_paths_totals *total, check_result *out)
{
	const check_input *in = p->in;
	check_simulation *sim = &out->sim;
	double mag = total->mag.mean;
	sim->qv = zstat_of(&total->ext[SIM_PATHS_QV], &total->fine[SIM_PATHS_QV], mag);
	sim->residual = zstat_of(&total->ext[SIM_PATHS_RESID], &total->fine[SIM_PATHS_RESID], mag);
	sim->terminal = zstat_of(&total->ext[SIM_PATHS_TERMINAL], &total->fine[SIM_PATHS_TERMINAL], 0);
	sim->qv_realised = total->qv.mean;
	sim->qv_predicted = total->integ.mean;
	sim->coarse_steps = in->steps >= 2 ? (in->steps + 1) / 2 : 0;
	sim->paths_used = (long)total->ext[0].n;
	sim->bad_paths = total->bad;
	sim->truncated_paths = total->below;
	if (!sim->qv.ok)
		add_reason(out, CHECK_REASON_QV, 0);
	if (!sim->residual.ok)
		add_reason(out, CHECK_REASON_RESIDUAL, 0);
	out->nnoise = p->nnoise;
	out->noises = xcalloc(p->nnoise + 1, sizeof *out->noises);
	for (size_t a = 0; a < p->nnoise; a++) {
		/* under a measure Q, the noise's Q Brownian motion */
		size_t k = p->noise[a];
		bool renamed = in->q && k < in->q->nnoises && in->q->names[k];
		check_noise *noise = &out->noises[a];
		noise->name = renamed ? in->q->names[k] : p->m->noises[k];
		noise->coefficient = k < in->d->n ? in->d->dw[k] : NULL;
		noise->covariation =
		        zstat_of(&total->ext[SIM_PATHS_COV + a], &total->fine[SIM_PATHS_COV + a], mag);
		if (!noise->covariation.ok)
			add_reason(out, CHECK_REASON_COVARIATION, a);
	}
	if ((double)total->bad > check_bad_fraction * (double)in->paths)
		add_reason(out, CHECK_REASON_BAD_PATHS, 0);
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

	sim_paths_totals total;
	bool finished = sim_paths_run(ctx, &p.paths, in->steps, (size_t)in->paths, &total);
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
		record_setup(&p, out);
		record_fd(out, rows, nrows);
		record_sim(&p, &total, out);
		if (in->verbose && conv_paths >= 2)
			record_conv(&conv, conv_paths, out);
		out->consistent = out->nreasons == 0;
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
	free(result->fd);
	free(result->noises);
	free(result->conv);
	free(result->reasons);
	memset(result, 0, sizeof *result);
}
