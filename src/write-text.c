/* write-text.c - results as plain text, the form that parses back.
 *
 * d(log(S)) = (mu - 1/2*sigma^2)*dt + sigma*dW; drift(S^2) = ...;
 * qv(log(S), v) = ...; dS*dv = rho*xi*S*v*dt; model.itox:12: claim holds (exact).
 */
#include <stdlib.h>
#include <string.h>

#include "writer.h"

/* "name(of) = value" or "name(of, of2) = value" */
static void labelled_value(writer *w, const stmt_result *r, const char *name, xbuf *buf)
{
	char *of = writer_expr(r, w->ctx, r->of, PRN_TEXT);
	xbuf_printf(buf, "%s(%s", name, of);
	free(of);
	if (r->of2) {
		char *of2 = writer_expr(r, w->ctx, r->of2, PRN_TEXT);
		xbuf_printf(buf, ", %s", of2);
		free(of2);
	}
	char *value = writer_expr(r, w->ctx, r->value, PRN_TEXT);
	xbuf_printf(buf, ") = %s", value);
	free(value);
}

/* PLACE: check d(f) at ..., the table, PLACE: check VERDICT */
static void check_lines(writer *w, const stmt_result *r, xbuf *buf)
{
	char *place = result_place(r);
	char *verdict = writer_check_verdict(r->check);
	xbuf_printf(buf, "%s: ", place);
	writer_check_table(w->ctx, r->check, buf);
	xbuf_printf(buf, "%s: check %s", place, verdict);
	free(verdict);
	free(place);
}

/* "r^2: COEFFICIENT" or "m1' = ...", "m1 = ..." lines */
static void rows(writer *w, const stmt_result *r, xbuf *buf)
{
	char **labels, **values;
	size_t n = writer_rows(r, w->ctx, PRN_TEXT, &labels, &values);
	const char *between = r->kind == RESULT_COEFFICIENTS ? ":" : " =";
	for (size_t i = 0; i < n; i++)
		xbuf_printf(buf, "%s%s%s %s", i ? "\n" : "", labels[i], between, values[i]);
	writer_rows_free(n, labels, values);
	char *none = writer_no_solution(r, w->ctx);
	if (none)
		xbuf_printf(buf, "\n%s", none);
	free(none);
}

/* A result under a measure whose text does not show it (no renamed noise)
 * says so in a comment at the end of its first line: "... # under Q". */
static void note_measure(const stmt_result *r, xbuf *buf)
{
	const char *end = strchr(buf->data, '\n');
	size_t first = end ? (size_t)(end - buf->data) : buf->length;
	xbuf out = {0};
	xbuf_printf(&out, "%.*s  # under %s%s", (int)first, buf->data, r->measure, buf->data + first);
	xbuf_free(buf);
	*buf = out;
}

static bool text_write(writer *w, const stmt_result *r, char **error)
{
	(void)error;
	xbuf buf = {0};
	char *text;
	switch (r->kind) {
	case RESULT_VALUE:
		text = writer_expr(r, w->ctx, r->value, PRN_TEXT);
		xbuf_put(&buf, text);
		free(text);
		break;
	case RESULT_DIFFERENTIAL:
	case RESULT_DIFFUSION:
	case RESULT_PRODUCT: {
		if (r->kind == RESULT_DIFFUSION) {
			char *of = writer_expr(r, w->ctx, r->of, PRN_TEXT);
			xbuf_printf(&buf, "diffusion(%s) = ", of);
			free(of);
		} else if (r->of) {
			char *label = writer_diff_label(w, r, PRN_TEXT);
			xbuf_printf(&buf, "%s = ", label);
			free(label);
		} else {
			xbuf_printf(&buf, "%s = ", r->statement);
		}
		text = writer_diff(r, w->ctx, PRN_TEXT); /* a product: its dt part alone */
		xbuf_put(&buf, text);
		free(text);
		break;
	}
	case RESULT_DRIFT:
		labelled_value(w, r, "drift", &buf);
		break;
	case RESULT_GENERATOR:
		labelled_value(w, r, "generator", &buf);
		break;
	case RESULT_QV:
		labelled_value(w, r, "qv", &buf);
		break;
	case RESULT_PDE:
		text = writer_expr(r, w->ctx, r->value, PRN_TEXT);
		xbuf_printf(&buf, "%s = 0", text);
		free(text);
		break;
	case RESULT_FORWARD: {
		char *left = writer_expr(r, w->ctx, r->of, PRN_TEXT);
		text = writer_expr(r, w->ctx, r->value, PRN_TEXT);
		xbuf_printf(&buf, "%s = %s", left, text);
		free(left);
		free(text);
		break;
	}
	case RESULT_COEFFICIENTS:
	case RESULT_MOMENTS:
		rows(w, r, &buf);
		break;
	case RESULT_SDE:
		text = writer_diff(r, w->ctx, PRN_TEXT);
		xbuf_printf(&buf, "%sd%s = %s", r->diff.stratonovich ? "stratonovich " : "", r->name, text);
		free(text);
		break;
	case RESULT_MODEL:
		xbuf_put(&buf, r->script ? r->script : "");
		while (buf.length && buf.data[buf.length - 1] == '\n')
			buf.data[--buf.length] = '\0';
		if (!buf.length) {
			xbuf_free(&buf);
			return true;
		}
		break;
	case RESULT_CLAIM: {
		char *place = result_place(r);
		char *detail = writer_claim_detail(r, w->ctx);
		xbuf_printf(&buf, "%s: claim %s%s", place, result_claim_verdict(r), detail);
		free(place);
		free(detail);
		break;
	}
	case RESULT_CHECK:
		check_lines(w, r, &buf);
		break;
	}
	if (r->measure && !writer_shows_measure(w, r) && buf.data)
		note_measure(r, &buf);
	writer_line(w, buf.data ? buf.data : "");
	xbuf_free(&buf);
	return true;
}

const writer_class writer_text = {.name = "text", .write = text_write};
