/* writer.c - the writer interface and what the four writers share. */
#include "writer.h"

#include <stdlib.h>
#include <string.h>

writer *writer_new(const writer_class *cls, FILE *out, expr_ctx *ctx, const model *m, bool standalone)
{
	writer *w = xcalloc(1, sizeof *w);
	w->cls = cls;
	w->out = out;
	w->ctx = ctx;
	w->model = m;
	w->standalone = standalone;
	return w;
}

bool writer_write(writer *w, const stmt_result *r, char **error)
{
	*error = NULL;
	bool ok = w->cls->write(w, r, error);
	if (ok)
		w->started = true; /* a refused result wrote nothing */
	return ok;
}

void writer_finish(writer *w)
{
	if (w && w->cls->finish)
		w->cls->finish(w);
}

void writer_free(writer *w)
{
	if (!w)
		return;
	if (w->cls->free_state)
		w->cls->free_state(w);
	free(w);
}

void writer_line(writer *w, const char *text)
{
	fputs(text, w->out);
	fputc('\n', w->out);
	fflush(w->out);
}

char *writer_expr(const stmt_result *r, expr_ctx *ctx, const expr *e, prn_format format)
{
	return prn_expr_abbrev(ctx, e, format, format == PRN_C ? NULL : r->abbrev);
}

char *writer_diff(const stmt_result *r, expr_ctx *ctx, prn_format format)
{
	return prn_differential(ctx, &r->diff, format, r->abbrev);
}

bool writer_shows_measure(const writer *w, const stmt_result *r)
{
	if (!r->measure || !w->model)
		return false;
	if (r->kind != RESULT_DIFFERENTIAL && r->kind != RESULT_DIFFUSION && r->kind != RESULT_SDE)
		return false;
	for (size_t k = 0; k < r->diff.n && k < w->model->nnoises; k++)
		if (r->diff.dw && r->diff.dw[k] && !expr_is_zero(r->diff.dw[k]) && r->diff.noises &&
		    r->diff.noises[k] != w->model->noises[k])
			return true;
	return false;
}

char *result_place(const stmt_result *r)
{
	return xasprintf("%s:%d", r->origin ? r->origin : "<input>", r->line);
}

const char *result_claim_verdict(const stmt_result *r)
{
	switch (r->claim->verdict) {
	case VERIFY_HOLDS:
		return "holds";
	case VERIFY_FAILS:
		return "fails";
	default:
		return "undecided";
	}
}

char *writer_claim_point(const stmt_result *r, expr_ctx *ctx)
{
	const verify_result *c = r->claim;
	if (!c->atoms && !c->left)
		return NULL;
	xbuf buf = {0};
	for (size_t i = 0; i < c->natoms; i++) {
		char *name = prn_expr(ctx, c->atoms[i], PRN_TEXT);
		xbuf_printf(&buf, "%s%s=%s", i ? ", " : "", name, c->values[i]);
		free(name);
	}
	if (!c->natoms)
		xbuf_put(&buf, c->functions ? "a draw of the unknown functions (no symbols)"
					    : "every point (no symbols)");
	if (c->left && c->right)
		xbuf_printf(&buf, ": left side %s, right side %s", c->left, c->right);
	if (c->left && c->right && c->gap)
		xbuf_printf(&buf, ", left minus right %s", c->gap);
	return xbuf_take(&buf);
}

char *writer_claim_part(const stmt_result *r)
{
	const verify_result *c = r->claim;
	if (c->part < 0)
		return NULL;
	if (!r->diff.noises)
		return xstrdup("the two sides differ");
	if (c->part == 0)
		return xstrdup("the dt part differs");
	return xasprintf("the d%s part differs", expr_sym_name(r->diff.noises[c->part - 1]));
}

char *writer_claim_detail(const stmt_result *r, expr_ctx *ctx)
{
	const verify_result *c = r->claim;
	if (c->holds && c->method == VERIFY_EXACT)
		return xstrdup(" (exact)");
	if (c->holds)
		return xasprintf(" (numeric: %zu points, %ld bits)", c->points, c->bits);
	xbuf buf = {0};
	char *named = writer_claim_part(r);
	const char *part = named ? named : "the two sides differ";
	char *difference = c->difference ? prn_expr(ctx, c->difference, PRN_TEXT) : xstrdup("?");
	if (c->verdict == VERIFY_UNDECIDED)
		xbuf_printf(&buf, ": %s (%s in form by %s)", c->reason, part, difference);
	else
		xbuf_printf(&buf, ": %s by %s", part, difference);
	char *point = writer_claim_point(r, ctx);
	if (point)
		xbuf_printf(&buf, "; at %s", point);
	free(point);
	free(difference);
	free(named);
	return xbuf_take(&buf);
}

char *writer_diff_label(const writer *w, const stmt_result *r, prn_format format)
{
	expr_ctx *ctx = w->ctx;
	const expr *of = r->of;
	bool latex = format == PRN_LATEX;
	char *body = prn_expr(ctx, of, format);
	if (prn_fapp_declared(of)) {
		/* d(g(t, S, v)), not d(g): name the arguments on the left of a differential */
		xbuf named = {0};
		xbuf_put(&named, body);
		xbuf_put(&named, latex ? "\\left(" : "(");
		for (size_t i = 0; i < expr_nops(of); i++) {
			char *arg = prn_expr(ctx, expr_op(of, i), format);
			xbuf_printf(&named, "%s%s", i ? ", " : "", arg);
			free(arg);
		}
		xbuf_put(&named, latex ? "\\right)" : ")");
		free(body);
		body = xbuf_take(&named);
	}
	char *label;
	bool symbol = expr_kind_of(of) == EXPR_SYM && !(r->measure && model_noise_index(w->model, of) >= 0);
	if (latex) {
		bool plain = symbol || expr_kind_of(of) == EXPR_FUN;
		label = xasprintf(plain ? "\\mathrm{d}%s" : "\\mathrm{d}\\left(%s\\right)", body);
	} else {
		label = xasprintf(symbol ? "d%s" : "d(%s)", body);
	}
	free(body);
	return label;
}

size_t writer_rows(const stmt_result *r, expr_ctx *ctx, prn_format format, char ***labels, char ***values)
{
	bool moments = r->kind == RESULT_MOMENTS;
	size_t n = r->nrows * (moments && r->solutions ? 2 : 1);
	*labels = xcalloc(n + 1, sizeof **labels);
	*values = xcalloc(n + 1, sizeof **values);
	for (size_t i = 0; i < n; i++) {
		size_t k = i % r->nrows;
		bool solution = i >= r->nrows;
		if (!moments) {
			(*labels)[i] = writer_expr(r, ctx, r->labels[k], format);
		} else {
			char *name = writer_expr(r, ctx, r->vars[k], format);
			bool latex = format != PRN_TEXT && format != PRN_C;
			(*labels)[i] = xasprintf("%s%s", name, solution ? (latex ? "(t)" : "") : "'");
			free(name);
		}
		(*values)[i] = writer_expr(r, ctx, solution ? r->solutions[k] : r->values[k], format);
	}
	return n;
}

void writer_rows_free(size_t n, char **labels, char **values)
{
	for (size_t i = 0; i < n; i++) {
		free(labels[i]);
		free(values[i]);
	}
	free(labels);
	free(values);
}

char *writer_no_solution(const stmt_result *r, expr_ctx *ctx)
{
	if (r->kind != RESULT_MOMENTS || r->solutions)
		return NULL;
	/* the time symbol: the coefficients move with t; any other expression
	 * (kappa too) is a rate difference not known to be nonzero */
	if (!r->no_solution ||
	    (expr_kind_of(r->no_solution) == EXPR_SYM && strcmp(expr_sym_name(r->no_solution), "t") == 0))
		return xstrdup("no closed form: the coefficients depend on t");
	char *needed = prn_expr(ctx, r->no_solution, PRN_TEXT);
	char *text = xasprintf("no closed form: it needs %s != 0, which the assumptions do not give", needed);
	free(needed);
	return text;
}

char *writer_forward_equation(const stmt_result *r, expr_ctx *ctx)
{
	/* p_t - rhs with p_t first: the terms of -rhs follow with their signs
	 * (a leading '-' of the printed -rhs is the sign of its first term) */
	char *left = writer_expr(r, ctx, r->of, PRN_TEXT);
	if (expr_is_zero(r->value))
		return left;
	char *rest = writer_expr(r, ctx, expr_neg(ctx, r->value), PRN_TEXT);
	char *text = rest[0] == '-' ? xasprintf("%s - %s", left, rest + 1) : xasprintf("%s + %s", left, rest);
	free(left);
	free(rest);
	return text;
}
