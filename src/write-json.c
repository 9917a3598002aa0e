/* write-json.c - one JSON object per result, on its own line.
 *
 * Expression strings use the text syntax, spelled out with let names where
 * the result abbreviates (the object then carries "let" with the definitions
 * it used).  Every object ends with "line" and "statement", its place.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "writer.h"

static void field(xbuf *buf, const char *key, const char *text)
{
	xbuf_printf(buf, ",\"%s\":", key);
	prn_json_string(buf, text);
}

static void expr_field(xbuf *buf, const stmt_result *r, expr_ctx *ctx, const char *key, const expr *e)
{
	char *text = writer_expr(r, ctx, e, PRN_TEXT);
	field(buf, key, text);
	free(text);
}

static void diffusion_field(xbuf *buf, const stmt_result *r, expr_ctx *ctx)
{
	xbuf_put(buf, ",\"diffusion\":{");
	bool first = true;
	for (size_t k = 0; k < r->diff.n; k++) {
		if (expr_is_zero(r->diff.dw[k]))
			continue;
		if (!first)
			xbuf_putc(buf, ',');
		prn_json_string(buf, expr_sym_name(r->diff.noises[k]));
		xbuf_putc(buf, ':');
		char *text = writer_expr(r, ctx, r->diff.dw[k], PRN_TEXT);
		prn_json_string(buf, text);
		free(text);
		first = false;
	}
	xbuf_putc(buf, '}');
}

/* ,"let":{...} with the definitions the object's strings abbreviated */
static void lets_field(xbuf *buf, const stmt_result *r, expr_ctx *ctx)
{
	const prn_abbrev *a = r->abbrev;
	if (!a || !a->used)
		return;
	bool any = false;
	for (size_t i = 0; i < a->n; i++) {
		if (!a->used[i])
			continue;
		xbuf_put(buf, any ? "," : ",\"let\":{");
		prn_json_string(buf, a->names[i]);
		xbuf_putc(buf, ':');
		char *text = prn_expr(ctx, a->nodes[i], PRN_TEXT);
		prn_json_string(buf, text);
		free(text);
		any = true;
	}
	if (any)
		xbuf_putc(buf, '}');
}

static const char *kind_name(const stmt_result *r)
{
	switch (r->kind) {
	case RESULT_VALUE:
		return "value";
	case RESULT_DIFFERENTIAL:
		return "differential";
	case RESULT_PRODUCT:
		return "product";
	case RESULT_DRIFT:
		return "drift";
	case RESULT_GENERATOR:
		return "generator";
	case RESULT_DIFFUSION:
		return "diffusion";
	case RESULT_QV:
		return "qv";
	case RESULT_PDE:
		return "pde";
	case RESULT_FORWARD:
		return "forward";
	case RESULT_COEFFICIENTS:
		return "coefficients";
	case RESULT_MOMENTS:
		return "moments";
	case RESULT_SDE:
		return "sde";
	case RESULT_MODEL:
		return "model";
	case RESULT_CLAIM:
		return "claim";
	case RESULT_CHECK:
		return "check";
	}
	return "value";
}

/* ------------------------------------------------------------------ check */

/* A number, or null for NaN and infinities (JSON has neither). */
static void put_num(xbuf *out, double x)
{
	if (isfinite(x))
		xbuf_printf(out, "%.10g", x);
	else
		xbuf_put(out, "null");
}

/* ,"key":number for each of the n keys and values. */
static void put_fields(xbuf *out, size_t n, const char *const *keys, const double *values)
{
	for (size_t i = 0; i < n; i++) {
		xbuf_printf(out, ",\"%s\":", keys[i]);
		put_num(out, values[i]);
	}
}

#define TRIM_VALUE(name, text, json) json,
static const char *const trim_values[CHECK_TRIM_COUNT] = {CHECK_TRIM_LIST(TRIM_VALUE)};
#undef TRIM_VALUE

static void json_zstat(xbuf *out, const char *key, const check_zstat *z, bool first)
{
	xbuf_printf(out, "%s\"%s\":{\"mean\":", first ? "" : ",", key);
	put_num(out, z->mean);
	put_fields(out, 8,
	           (const char *[]){"se", "z", "fine_grid_mean", "bias", "bias_se", "rounding", "tolerance",
	                            "top_share"},
	           (double[]){z->se, z->z, z->fine, z->bias, z->bias_se, z->rounding, z->tolerance,
	                      z->top_share});
	xbuf_printf(out, ",\"ok\":%s,\"off\":%s", z->ok ? "true" : "false", z->off ? "true" : "false");
	if (z->heavy && z->ok) {
		xbuf_printf(out, ",\"trimmed\":{\"paths\":%d,\"grid_paths\":%d,\"mean\":", z->trimmed,
		            z->trimmed_grid);
		put_num(out, z->trimmed_mean);
		xbuf_put(out, ",\"tolerance\":");
		put_num(out, z->trimmed_tolerance);
		xbuf_printf(out, ",\"is\":\"%s\"}", trim_values[z->trimmed_is]);
	}
	xbuf_put(out, "}");
}

static void json_setup(expr_ctx *ctx, const check_result *r, xbuf *out)
{
	const check_setup *s = &r->setup;
	char *f = prn_expr(ctx, s->f, PRN_TEXT);
	xbuf_put(out, ",\"expr\":");
	prn_json_string(out, f);
	free(f);
	xbuf_printf(out, ",\"hand_derived\":%s,\"scheme\":\"%s\",\"T\":", s->hand_derived ? "true" : "false",
	            s->milstein ? "milstein" : "euler");
	put_num(out, s->horizon);
	xbuf_printf(out, ",\"steps\":%ld,\"steps_asked\":%ld,\"paths\":%ld,\"seed\":%lu", s->steps,
	            s->steps_asked, s->paths, s->seed);
	if (s->nconcrete) {
		xbuf_put(out, ",\"where\":[");
		for (size_t i = 0; i < s->nconcrete; i++) {
			char *text = writer_check_concrete(ctx, &s->concrete[i]);
			if (i)
				xbuf_put(out, ",");
			prn_json_string(out, text);
			free(text);
		}
		xbuf_put(out, "]");
	}
}

static void json_fd(const check_result *r, xbuf *out)
{
	if (r->setup.hand_derived)
		return;
	xbuf_put(out, ",\"fd\":[");
	for (size_t i = 0; i < r->nfd; i++) {
		const check_fd_row *row = &r->fd[i];
		char *name = writer_check_fd_name(row);
		xbuf_printf(out, "%s{\"partial\":", i ? "," : "");
		prn_json_string(out, name);
		free(name);
		put_fields(out, 4, (const char *[]){"engine", "difference", "error", "tolerance"},
		           (double[]){row->engine, row->difference, row->error, row->tolerance});
		xbuf_printf(out, ",\"formed\":%s,\"ok\":%s}", row->formed ? "true" : "false",
		            row->ok ? "true" : "false");
	}
	xbuf_put(out, "]");
}

static void json_sim(const check_result *r, xbuf *out)
{
	const check_simulation *sim = &r->sim;
	json_zstat(out, "qv", &sim->qv, false);
	put_fields(out, 2, (const char *[]){"qv_realised", "qv_predicted"},
	           (double[]){sim->qv_realised, sim->qv_predicted});
	json_zstat(out, "residual", &sim->residual, false);
	xbuf_put(out, ",\"covariation\":{");
	for (size_t a = 0; a < r->nnoise; a++)
		json_zstat(out, expr_sym_name(r->noises[a].name), &r->noises[a].covariation, a == 0);
	xbuf_put(out, "}");
	xbuf_put(out, ",\"terminal\":{\"mean\":");
	put_num(out, sim->terminal.mean);
	put_fields(out, 1, (const char *[]){"se"}, &sim->terminal.se);
	xbuf_put(out, "}");
}

static void json_conv(const check_result *r, xbuf *out)
{
	xbuf_printf(out, ",\"convergence_paths\":%zu,\"convergence\":[", r->conv_paths);
	for (size_t i = 0; i < r->nconv; i++) {
		const check_conv_row *row = &r->conv[i];
		xbuf_printf(out, "%s{\"steps\":%ld,\"qv\":", i ? "," : "", row->steps);
		put_num(out, row->qv);
		put_fields(out, 4, (const char *[]){"qv_se", "predicted", "sd", "first_variation"},
		           (double[]){row->qv_se, row->predicted, row->gap_sd, row->first_variation});
		xbuf_put(out, "}");
	}
	xbuf_put(out, "]");
}

static void check_fields(xbuf *out, const stmt_result *result, expr_ctx *ctx)
{
	const check_result *r = result->check;
	static const char *const verdicts[] = {"consistent", "inconsistent", "undecided"};
	field(out, "verdict", verdicts[r->verdict]);
	xbuf_printf(out, ",\"consistent\":%s", r->consistent ? "true" : "false");
	json_setup(ctx, r, out);
	json_fd(r, out);
	json_sim(r, out);
	if (r->nconv)
		json_conv(r, out);
	xbuf_printf(out,
	            ",\"paths_used\":%ld,\"bad_paths\":%ld,\"truncated_paths\":%ld,\"grids\":%zu,"
	            "\"scale\":%.17g,\"tolerance\":%g,\"fd_tolerance\":%g",
	            r->sim.paths_used, r->sim.bad_paths, r->sim.truncated_paths, r->sim.grids, r->sim.scale,
	            r->setup.z_tolerance, r->setup.fd_tolerance);
	if (!r->consistent) {
		char *reasons = writer_check_reasons(r);
		field(out, "reason", reasons);
		free(reasons);
	}
}

static void claim_fields(xbuf *buf, const stmt_result *r, expr_ctx *ctx)
{
	const verify_result *c = r->claim;
	field(buf, "verdict", result_claim_verdict(r));
	xbuf_printf(buf, ",\"holds\":%s", c->holds ? "true" : "false");
	field(buf, "method", c->method == VERIFY_EXACT ? "exact" : "numeric");
	if (c->method == VERIFY_NUMERIC)
		xbuf_printf(buf, ",\"points\":%zu,\"bits\":%ld,\"skipped\":%zu", c->points, c->bits,
		            c->skipped);
	if (c->holds)
		return;
	char *part = writer_claim_part(r);
	field(buf, "part", part ? part : "");
	free(part);
	if (c->difference) {
		char *text = prn_expr(ctx, c->difference, PRN_TEXT);
		field(buf, "difference", text);
		free(text);
	}
	char *point = writer_claim_point(r, ctx);
	if (point)
		field(buf, "at", point);
	free(point);
	if (c->reason)
		field(buf, "reason", c->reason);
}

/* ,"in":["r"],"coefficients":{"1":"...","r":"..."} */
static void coefficients_fields(xbuf *buf, const stmt_result *r, expr_ctx *ctx)
{
	xbuf_put(buf, ",\"in\":[");
	for (size_t v = 0; v < r->nvars; v++) {
		if (v)
			xbuf_putc(buf, ',');
		prn_json_string(buf, expr_sym_name(r->vars[v]));
	}
	xbuf_put(buf, "]");
	if (r->measure)
		field(buf, "measure", r->measure);
	xbuf_put(buf, ",\"coefficients\":{");
	char **labels, **values;
	size_t n = writer_rows(r, ctx, PRN_TEXT, &labels, &values);
	for (size_t i = 0; i < n; i++) {
		if (i)
			xbuf_putc(buf, ',');
		prn_json_string(buf, labels[i]);
		xbuf_putc(buf, ':');
		prn_json_string(buf, values[i]);
	}
	writer_rows_free(n, labels, values);
	xbuf_put(buf, "}");
}

/* ,"key":{"1":"...","2":"..."}, one per order k */
static void orders_field(xbuf *buf, const stmt_result *r, expr_ctx *ctx, const char *key,
                         const expr *const *items)
{
	xbuf_printf(buf, ",\"%s\":{", key);
	for (size_t k = 0; k < r->nrows; k++) {
		char *text = writer_expr(r, ctx, items[k], PRN_TEXT);
		xbuf_printf(buf, "%s\"%zu\":", k ? "," : "", k + 1);
		prn_json_string(buf, text);
		free(text);
	}
	xbuf_put(buf, "}");
}

/* ,"state":"X","equations":{...},"solution":{...} or null with "no_solution" */
static void moments_fields(xbuf *buf, const stmt_result *r, expr_ctx *ctx)
{
	field(buf, "state", r->name);
	field(buf, "measure", r->measure ? r->measure : "P");
	orders_field(buf, r, ctx, "equations", r->values);
	if (r->solutions) {
		orders_field(buf, r, ctx, "solution", r->solutions);
		return;
	}
	xbuf_put(buf, ",\"solution\":null");
	char *why = writer_no_solution(r, ctx);
	field(buf, "no_solution", why);
	free(why);
}

static void place_fields(xbuf *buf, const stmt_result *r)
{
	xbuf_printf(buf, ",\"line\":%d", r->line);
	if (r->origin)
		field(buf, "origin", r->origin);
	field(buf, "statement", r->statement ? r->statement : "");
}

static void object(writer *w, const stmt_result *r, xbuf *buf)
{
	expr_ctx *ctx = w->ctx;
	xbuf_printf(buf, "{\"kind\":\"%s\"", kind_name(r));
	switch (r->kind) {
	case RESULT_DIFFERENTIAL:
	case RESULT_DIFFUSION:
	case RESULT_SDE:
		if (r->kind == RESULT_SDE) {
			field(buf, "state", r->name);
			field(buf, "convention", r->diff.stratonovich ? "stratonovich" : "ito");
		} else if (r->of) {
			expr_field(buf, r, ctx, "expr", r->of);
		}
		field(buf, "measure", r->measure ? r->measure : "P");
		if (r->kind != RESULT_DIFFUSION)
			expr_field(buf, r, ctx, "drift", r->diff.dt);
		diffusion_field(buf, r, ctx);
		break;
	case RESULT_VALUE:
	case RESULT_PRODUCT:
	case RESULT_DRIFT:
	case RESULT_GENERATOR:
	case RESULT_QV:
		if (r->of)
			expr_field(buf, r, ctx, "expr", r->of);
		if (r->of2)
			expr_field(buf, r, ctx, "with", r->of2);
		if (r->measure)
			field(buf, "measure", r->measure);
		expr_field(buf, r, ctx, "value", r->value);
		break;
	case RESULT_PDE:
		field(buf, "function", r->name);
		field(buf, "measure", r->measure ? r->measure : "P");
		expr_field(buf, r, ctx, "equation", r->value);
		break;
	case RESULT_FORWARD: {
		field(buf, "function", r->name);
		field(buf, "measure", r->measure ? r->measure : "P");
		char *equation = writer_forward_equation(r, ctx);
		field(buf, "equation", equation);
		free(equation);
		expr_field(buf, r, ctx, "rhs", r->value);
		break;
	}
	case RESULT_COEFFICIENTS:
		coefficients_fields(buf, r, ctx);
		break;
	case RESULT_MOMENTS:
		moments_fields(buf, r, ctx);
		break;
	case RESULT_CLAIM:
		if (r->measure)
			field(buf, "measure", r->measure);
		claim_fields(buf, r, ctx);
		break;
	case RESULT_CHECK:
		if (r->measure)
			field(buf, "measure", r->measure);
		check_fields(buf, r, ctx);
		break;
	case RESULT_MODEL:
		break;
	}
	lets_field(buf, r, ctx);
	place_fields(buf, r);
	xbuf_putc(buf, '}');
}

static bool json_write(writer *w, const stmt_result *r, char **error)
{
	(void)error;
	if (r->kind == RESULT_MODEL) {
		/* show: one object per state */
		for (size_t i = 0; i < r->nsdes; i++)
			json_write(w, &r->sdes[i], error);
		return true;
	}
	xbuf buf = {0};
	object(w, r, &buf);
	writer_line(w, buf.data);
	xbuf_free(&buf);
	return true;
}

const writer_class writer_json = {.name = "json", .write = json_write};
