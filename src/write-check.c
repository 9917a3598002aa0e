/* write-check.c - what the writers share of a check's report: its table for
 * people (the text writer prints it, the LaTeX and C writers as comments),
 * the names of its partials and the phrases of its reasons.  It reads only
 * the check_result (crosscheck.h); nothing here decides anything.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "writer.h"

/* f_S, f_SS for one-letter names; f_{S1}, f_{S1,S2} otherwise. */
char *writer_check_fd_name(const check_fd_row *row)
{
	const char *a = expr_sym_name(row->first);
	const char *b = row->second ? expr_sym_name(row->second) : "";
	bool short_names = strlen(a) == 1 && strlen(b) <= 1;
	return short_names ? xasprintf("f_%s%s", a, b)
	       : *b        ? xasprintf("f_{%s,%s}", a, b)
	                   : xasprintf("f_{%s}", a);
}

static const char *noise_name(const check_result *r, size_t a)
{
	return expr_sym_name(r->noises[a].name);
}

#define TRIM_WORDS(name, text, json) text,
static const char *const trim_words[CHECK_TRIM_COUNT] = {CHECK_TRIM_LIST(TRIM_WORDS)};
#undef TRIM_WORDS

/* One reason of an inconsistent or undecided verdict, as a phrase. */
static void put_reason(const check_result *r, const check_reason *why, xbuf *out)
{
	switch (why->kind) {
	case CHECK_REASON_FD:
	case CHECK_REASON_FD_SCALE: {
		char *name = writer_check_fd_name(&r->fd[why->index]);
		xbuf_printf(out,
		            why->kind == CHECK_REASON_FD
		                    ? "the finite difference of %s disagrees"
		                    : "the finite difference of %s cannot be formed at this point "
		                      "(outside the domain or beyond the range of numbers)",
		            name);
		free(name);
		break;
	}
	case CHECK_REASON_QV:
		xbuf_put(out, "the quadratic variation disagrees with the diffusion");
		break;
	case CHECK_REASON_RESIDUAL:
		xbuf_put(out, "the martingale residual is not zero (the drift)");
		break;
	case CHECK_REASON_COVARIATION: {
		const char *name = noise_name(r, why->index);
		xbuf_printf(out, "the covariation with %s disagrees with the d%s coefficient", name, name);
		break;
	}
	case CHECK_REASON_BAD_PATHS:
		xbuf_printf(out,
		            "%ld of %ld paths left the domain of f or of its coefficients, or overflowed "
		            "(NaN or Inf)",
		            r->sim.bad_paths, r->setup.paths);
		break;
	case CHECK_REASON_FEW_PATHS:
		xbuf_printf(out, "too few usable paths (%ld; %ld needed)", r->sim.paths_used,
		            r->sim.min_paths);
		break;
	case CHECK_REASON_FEW_STEPS:
		xbuf_put(out, "under 4 steps: the discretisation bias cannot be estimated");
		break;
	case CHECK_REASON_COARSE_GRID:
		if (why->index >= 2)
			xbuf_printf(out, "the time grid is too coarse to judge the covariation with %s",
			            noise_name(r, why->index - 2));
		else
			xbuf_printf(out, "the time grid is too coarse to judge %s",
			            why->index == 0 ? "the quadratic variation" : "the martingale residual");
		xbuf_put(out, ": only the discretisation bias allowance covers its mean (use more steps)");
		break;
	case CHECK_REASON_HEAVY_TAILS: {
		const check_zstat *z = why->index == 0   ? &r->sim.qv
		                       : why->index == 1 ? &r->sim.residual
		                                         : &r->noises[why->index - 2].covariation;
		xbuf_printf(out, "one path holds %.0f%% of the spread of ", 100 * z->top_share);
		if (why->index >= 2)
			xbuf_printf(out, "the covariation with %s", noise_name(r, why->index - 2));
		else
			xbuf_put(out, why->index == 0 ? "the quadratic variation" : "the martingale residual");
		xbuf_put(out, " (heavy tails: its standard error cannot be trusted");
		if (z->trimmed_is != CHECK_TRIM_NONE)
			xbuf_printf(out, "; trimmed of the paths that dominate it, %s", trim_words[z->trimmed_is]);
		xbuf_put(out, "; more steps help when paths come near a boundary)");
		break;
	}
	case CHECK_REASON_UNREPRESENTABLE:
		xbuf_put(out, "f or a coefficient at the point is beyond the range of double precision "
		              "(underflow or overflow)");
		break;
	}
}

/* The reasons for the verdict joined by "; " (the caller frees): for an
 * undecided verdict those that make it undecided, otherwise the others. */
char *writer_check_reasons(const check_result *r)
{
	xbuf text = {0};
	bool undecided = r->verdict == CHECK_UNDECIDED, first = true;
	for (size_t i = 0; i < r->nreasons; i++) {
		if (CHECK_REASON_UNDECIDES(r->reasons[i].kind) != undecided)
			continue;
		if (!first)
			xbuf_put(&text, "; ");
		first = false;
		put_reason(r, &r->reasons[i], &text);
	}
	return xbuf_take(&text);
}

/* "g(x, y) = body" (the caller frees). */
char *writer_check_concrete(expr_ctx *ctx, const check_concrete *c)
{
	xbuf text = {0};
	xbuf_printf(&text, "%s(", expr_sym_name(c->func));
	for (size_t j = 0; j < c->nargs; j++)
		xbuf_printf(&text, "%s%s", j ? ", " : "", expr_sym_name(c->formals[j]));
	char *body = prn_expr(ctx, c->body, PRN_TEXT);
	xbuf_printf(&text, ") = %s", body);
	free(body);
	return xbuf_take(&text);
}

/* ------------------------------------------------------------------ the table */

static void text_zstat(xbuf *out, const check_zstat *z)
{
	if (z->n < 2) {
		xbuf_put(out, "n/a (too few valid paths)\n");
		return;
	}
	xbuf_printf(out, "%.6g (se %.3g, ", z->mean, z->se);
	if (isnan(z->z))
		xbuf_put(out, "no randomness");
	else
		xbuf_printf(out, "z = %.2f", z->z);
	xbuf_printf(out, "; tolerance %.3g: bias %.3g (se %.3g), rounding %.3g)%s", z->tolerance, z->bias,
	            z->bias_se, z->rounding, z->off ? "  <-- off" : z->ok ? "" : "  <-- outside");
	if (z->heavy)
		xbuf_printf(out, "  <-- heavy tails (%.0f%% in one path)", 100 * z->top_share);
	if (z->heavy && z->ok)
		xbuf_printf(out, "; trimmed (paths set aside: %d from the mean, %d from the bias estimate): %.6g, "
		                 "tolerance %.3g, %s",
		            z->trimmed, z->trimmed_grid, z->trimmed_mean, z->trimmed_tolerance,
		            trim_words[z->trimmed_is]);
	xbuf_putc(out, '\n');
}

static void text_header(expr_ctx *ctx, const check_result *r, xbuf *out)
{
	const check_setup *s = &r->setup;
	char *f = prn_expr(ctx, s->f, PRN_TEXT);
	xbuf_printf(out, "check d(%s) at ", f);
	free(f);
	for (size_t i = 0; i < s->nvalues; i++)
		xbuf_printf(out, "%s%s=%.10g", i ? ", " : "", expr_sym_name(s->symbols[i]), s->values[i]);
	xbuf_printf(out, " (%s, T=%g, %ld steps", s->milstein ? "Milstein" : "Euler-Maruyama", s->horizon,
	            s->steps);
	if (s->steps != s->steps_asked)
		xbuf_printf(out, " (%ld asked, refined)", s->steps_asked);
	xbuf_printf(out, ", %ld paths, seed %lu)\n", s->paths, s->seed);
	if (s->hand_derived) {
		char *drift = prn_expr(ctx, s->drift, PRN_TEXT);
		xbuf_printf(out, "  differential tested (by hand): drift %s", drift);
		free(drift);
		for (size_t a = 0; a < r->nnoise; a++) {
			const expr *coefficient = r->noises[a].coefficient;
			if (!coefficient || expr_is_zero(coefficient))
				continue;
			char *b = prn_expr(ctx, coefficient, PRN_TEXT);
			xbuf_printf(out, "; d%s: %s", noise_name(r, a), b);
			free(b);
		}
		xbuf_put(out, "\n");
	}
	for (size_t i = 0; i < s->nconcrete; i++) {
		char *text = writer_check_concrete(ctx, &s->concrete[i]);
		xbuf_printf(out, "  where %s\n", text);
		free(text);
	}
	if (s->note)
		xbuf_printf(out, "  note: %s\n", s->note);
}

static void text_fd(const check_result *r, xbuf *out)
{
	if (r->setup.hand_derived) {
		xbuf_put(out, "  finite differences: skipped (differential derived by hand)\n");
		return;
	}
	if (r->nfd == 0)
		xbuf_put(out, "  finite differences: none (f has no partial derivatives to check)\n");
	else
		xbuf_printf(out,
		            "  finite differences (central, in ball arithmetic; tolerance %g relative to the "
		            "size of the partial):\n"
		            "    %-12s %-16s %-16s %s\n",
		            r->setup.fd_tolerance, "partial", "engine", "difference", "rel. error");
	for (size_t i = 0; i < r->nfd; i++) {
		const check_fd_row *row = &r->fd[i];
		char *name = writer_check_fd_name(row);
		if (row->formed)
			xbuf_printf(out, "    %-12s %-16s %-16s %.2g%s\n", name, row->engine_text,
			            row->difference_text, row->error, row->ok ? "" : "  <-- off");
		else
			xbuf_printf(out, "    %-12s %-16s %-16s cannot be formed\n", name, row->engine_text,
			            row->difference_text);
		free(name);
	}
}

static void text_sim(const check_result *r, xbuf *out)
{
	const check_simulation *sim = &r->sim;
	if (sim->bad_paths)
		xbuf_printf(
		        out,
		        "  warning: %ld of %ld paths gave NaN or Inf in f or its coefficients; left out\n",
		        sim->bad_paths, r->setup.paths);
	if (sim->truncated_paths)
		xbuf_printf(out,
		            "  note: on %ld paths a state assumed positive or nonnegative went below 0 "
		            "(reflected, or truncated, at 0)\n",
		            sim->truncated_paths);
	if (sim->scale != 1)
		xbuf_printf(out,
		            "  note: the statistics are of f/2^%d (f is far from 1 in size; exact scaling)\n",
		            ilogb(sim->scale));
	xbuf_printf(out, "  quadratic variation: mean QV = %.6g, predicted I = %.6g; mean(QV - I) = ",
	            sim->qv_realised, sim->qv_predicted);
	text_zstat(out, &sim->qv);
	xbuf_put(out, "  martingale residual: mean(f(T) - f(0) - sum drift*dt - sum b*dW) = ");
	text_zstat(out, &sim->residual);
	for (size_t a = 0; a < r->nnoise; a++) {
		const char *name = noise_name(r, a);
		xbuf_printf(out, "  covariation with %s: mean(sum df*d%s - sum (rho b)*dt) = ", name, name);
		text_zstat(out, &r->noises[a].covariation);
	}
	xbuf_printf(out, "  f at T: mean = %.8g (se %.3g)\n", sim->terminal.mean, sim->terminal.se);
	if (sim->grids >= 3)
		xbuf_printf(out,
		            "  discretisation: the same Brownian paths on %ld, %ld and %ld steps; tested "
		            "2*S(%ld) - S(%ld), its bias bounded by the changes between the grids; "
		            "fine-grid means: QV - I %.3g, residual %.3g\n",
		            r->setup.steps, sim->coarse_steps, (sim->coarse_steps + 1) / 2, r->setup.steps,
		            sim->coarse_steps, sim->qv.fine, sim->residual.fine);
	else
		xbuf_put(out, "  discretisation: under 4 steps, the bias cannot be estimated\n");
	if (r->setup.steps != r->setup.steps_asked)
		xbuf_printf(out,
		            "  grid refined from %ld to %ld steps: on each coarser grid a statistic was dominated "
		            "by one path or within its tolerance only by the bias allowance\n",
		            r->setup.steps_asked, r->setup.steps);
}

static void text_conv(const check_result *r, xbuf *out)
{
	xbuf_printf(out,
	            "  convergence (%zu paths, one set of Brownian paths on every grid; "
	            "QV -> I, first variation ~ sqrt(steps)):\n"
	            "    %-7s %-12s %-12s %-12s %-14s %s\n",
	            r->conv_paths, "steps", "mean QV", "mean I", "sd(QV - I)", "first var.",
	            "first var./sqrt(steps)");
	for (size_t i = 0; i < r->nconv; i++) {
		const check_conv_row *row = &r->conv[i];
		xbuf_printf(out, "    %-7ld %-12.6g %-12.6g %-12.4g %-14.6g %.4g\n", row->steps, row->qv,
		            row->predicted, row->gap_sd, row->first_variation,
		            row->first_variation / sqrt((double)row->steps));
	}
	if (r->conv_bad)
		xbuf_printf(out, "    (%ld paths with NaN/Inf left out of the table)\n", r->conv_bad);
}

void writer_check_table(expr_ctx *ctx, const check_result *r, xbuf *out)
{
	text_header(ctx, r, out);
	text_fd(r, out);
	text_sim(r, out);
	if (r->nconv)
		text_conv(r, out);
}

char *writer_check_verdict(const check_result *r)
{
	if (r->verdict == CHECK_CONSISTENT)
		return xasprintf("consistent (each mean within its tolerance: %g standard errors, the "
		                 "discretisation bias, rounding%s)",
		                 r->setup.z_tolerance,
		                 r->setup.hand_derived ? "" : "; finite differences within tolerance");
	char *reasons = writer_check_reasons(r);
	char *text =
	        xasprintf("%s: %s", r->verdict == CHECK_UNDECIDED ? "undecided" : "inconsistent", reasons);
	free(reasons);
	return text;
}
