/* check.c - the numerical cross-check of a differential (see crosscheck.h).
 *
 * Claim under test: df = a dt + sum_k b_k dW_k, with dW_k dW_l = rho_kl dt.
 *
 * The plan (check-plan.c) finds what f and the claim need and compiles
 * their programs; the finite differences (check-fd.c) test every partial
 * derivative that Itô's formula uses.
 *
 * Simulation (sim-paths.c): along paths of the processes f needs, the
 * realised quadratic variation, the martingale residual and the covariation
 * with each noise, each a mean that is zero when the claim is right.  Paths
 * whose statistics are not finite are counted, left out and reported; over
 * 1% of them make the verdict inconsistent.
 */
#include <config.h>

#include "crosscheck.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "check-internal.h"
#include "print.h"
#include "xalloc.h"

static const double check_z_tolerance = 4;
static const double check_bad_fraction = 0.01;
static const double check_default_work = 2e8;
enum { CHECK_CONV_PATHS = 1000 };

/* ------------------------------------------------------------------ the report */

/* f_S, f_SS for one-letter names; f_{S1}, f_{S1,S2} otherwise. */
static char *fd_name(const check_fd_row *row)
{
	const char *a = expr_sym_name(row->first);
	const char *b = row->second ? expr_sym_name(row->second) : "";
	bool short_names = strlen(a) == 1 && strlen(b) <= 1;
	return short_names ? xasprintf("f_%s%s", a, b) : *b ? xasprintf("f_{%s,%s}", a, b) : xasprintf("f_{%s}", a);
}

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
static const char *noise_name(const check_plan *p, size_t a)
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

static void header(const check_plan *p, xbuf *text, const char *scheme_name)
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

static void report_fd(const check_plan *p, const check_fd_row *rows, size_t n, xbuf *text, xbuf *json, xbuf *reasons)
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
			    CHECK_FD_TOLERANCE, "partial", "engine", "difference", "rel. error");
	for (size_t r = 0; r < n; r++) {
		char *name = fd_name(&rows[r]);
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

static void report_sim(const check_plan *p, const sim_paths_totals *r, xbuf *text, xbuf *json, xbuf *reasons)
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
	check_plan p = {.ctx = ctx, .m = in->m, .in = in};
	char *error = check_plan_make(&p);
	if (error) {
		out->error = error;
		check_plan_free(&p);
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
	check_fd_row *rows = NULL;
	size_t nrows = in->hand_derived ? 0 : check_fd_table(&p, &rows);
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
			    total.ext[0].n, total.bad, total.below, check_z_tolerance, CHECK_FD_TOLERANCE);
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
	check_plan_free(&p);
}

void check_result_free(check_result *result)
{
	free(result->text);
	free(result->json);
	free(result->error);
	memset(result, 0, sizeof *result);
}
