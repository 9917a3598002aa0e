/* write-latex.c - results as LaTeX.
 *
 * Each result is display-math content for \[ ... \] or an amsmath align
 * (claims and checks, which are sentences, become % comments).  With
 * --standalone the writer keeps every result and writes, at the end, one
 * document: the model (SDEs, correlations, assumptions), then each result in
 * order with its place, claims and checks as sentences with their verdicts.
 */
#include <stdlib.h>
#include <string.h>

#include "writer.h"

typedef struct latex_state {
	xbuf body; /* the results section of a standalone document */
} latex_state;

/* Text for \texttt{...}: LaTeX's special characters spelled out. */
static void put_escaped(xbuf *buf, const char *text)
{
	for (const char *c = text; *c; c++) {
		switch (*c) {
		case '\\':
			xbuf_put(buf, "\\textbackslash{}");
			break;
		case '{':
		case '}':
		case '$':
		case '&':
		case '#':
		case '_':
		case '%':
			xbuf_putc(buf, '\\');
			xbuf_putc(buf, *c);
			break;
		case '^':
			xbuf_put(buf, "\\^{}");
			break;
		case '~':
			xbuf_put(buf, "\\~{}");
			break;
		case '\n':
			xbuf_putc(buf, ' ');
			break;
		default:
			xbuf_putc(buf, *c);
		}
	}
}

static void sde_line(writer *w, const stmt_result *r, xbuf *buf)
{
	char *name = prn_latex_name(r->name, true);
	char *body = writer_diff(r, w->ctx, PRN_LATEX);
	xbuf_printf(buf, "\\mathrm{d}%s = %s", name, body);
	free(name);
	free(body);
}

/* ------------------------------------------------------------------ long lines */

/* The width of a line of display math on an article page, in units of about
 * one letter of 10pt math (5.5pt: 345pt of text width is about 62), with room
 * to spare because the measure below is rough. */
enum { LINE_UNITS = 54 };

/* The end of the group at s (a '{' ... '}' block, or one character or
 * control word). */
static const char *group_end(const char *s, const char *end)
{
	if (s >= end)
		return end;
	if (*s == '{') {
		int depth = 0;
		for (const char *c = s; c < end; c++) {
			depth += *c == '{';
			depth -= *c == '}';
			if (depth == 0)
				return c + 1;
		}
		return end;
	}
	if (*s == '\\') {
		const char *c = s + 1;
		while (c < end && ((*c >= 'a' && *c <= 'z') || (*c >= 'A' && *c <= 'Z')))
			c++;
		return c == s + 1 && c < end ? c + 1 : c;
	}
	return s + 1;
}

static double width_of(const char *s, const char *end);

/* The width of a group (its braces not counted). */
static double group_width(const char *s, const char *stop)
{
	if (s < stop && *s == '{')
		return width_of(s + 1, stop - 1);
	return width_of(s, stop);
}

/* A rough width of LaTeX math: a letter or digit 1, an operator with its
 * spacing 2, a script 0.7 of its content, a fraction its wider part. */
static double width_of(const char *s, const char *end)
{
	double w = 0;
	while (s < end) {
		if (*s == '\\') {
			const char *name = s + 1, *after = group_end(s, end);
			size_t n = (size_t)(after - name);
			if ((n == 4 && strncmp(name, "frac", 4) == 0) ||
			    (n == 5 && strncmp(name, "tfrac", 5) == 0)) {
				const char *a_end = group_end(after, end), *b_end = group_end(a_end, end);
				double a = group_width(after, a_end), b = group_width(a_end, b_end);
				w += (a > b ? a : b) * (name[0] == 't' ? 0.7 : 1.0);
				s = b_end;
				continue;
			}
			if ((n == 4 && strncmp(name, "left", 4) == 0) ||
			    (n == 5 && strncmp(name, "right", 5) == 0))
				w += 0;
			else if (n == 4 && strncmp(name, "quad", 4) == 0)
				w += 2;
			else if (n == 5 && strncmp(name, "qquad", 5) == 0)
				w += 4;
			else if (n == 1 && (*name == ',' || *name == ';' || *name == ':' || *name == '!'))
				w += 0.3;
			else if ((n == 6 && strncmp(name, "mathrm", 6) == 0) ||
			         (n == 6 && strncmp(name, "mathit", 6) == 0) ||
			         (n == 4 && strncmp(name, "text", 4) == 0))
				w += 0; /* its group follows */
			else if (n == 3 && (strncmp(name, "log", 3) == 0 || strncmp(name, "exp", 3) == 0 ||
			                    strncmp(name, "sin", 3) == 0 || strncmp(name, "cos", 3) == 0 ||
			                    strncmp(name, "tan", 3) == 0 || strncmp(name, "erf", 3) == 0))
				w += 3;
			else if (n == 4 && (strncmp(name, "sinh", 4) == 0 || strncmp(name, "cosh", 4) == 0 ||
			                    strncmp(name, "tanh", 4) == 0))
				w += 4;
			else
				w += 1.2; /* a Greek letter, \partial, \sqrt's sign, \Phi */
			s = after;
			continue;
		}
		if (*s == '^' || *s == '_') {
			const char *stop = group_end(s + 1, end);
			w += 0.7 * group_width(s + 1, stop);
			s = stop;
			continue;
		}
		if (*s == '+' || *s == '-' || *s == '=')
			w += 2;
		else if (*s == '(' || *s == ')' || *s == '[' || *s == ']')
			w += 0.8;
		else if (*s != '{' && *s != '}' && *s != ' ')
			w += 1;
		s++;
	}
	return w;
}

static double latex_width(const char *s)
{
	return width_of(s, s + strlen(s));
}

/* The places of the top-level separators " + ", " - " (sep "+-") or " = "
 * (sep "="): outside braces and \left ... \right.  Returns the count. */
static size_t top_level(const char *s, const char *seps, const char **at, size_t most)
{
	size_t n = 0;
	int braces = 0, pairs = 0;
	for (const char *c = s; *c; c++) {
		if (*c == '\\' && strncmp(c, "\\left", 5) == 0 && !(c[5] >= 'a' && c[5] <= 'z'))
			pairs++;
		else if (*c == '\\' && strncmp(c, "\\right", 6) == 0 && !(c[6] >= 'a' && c[6] <= 'z'))
			pairs--;
		else if (*c == '\\' && c[1])
			c++; /* \{ and \} are not braces */
		else if (*c == '{')
			braces++;
		else if (*c == '}')
			braces--;
		else if (braces == 0 && pairs == 0 && c > s && c[-1] == ' ' && c[1] == ' ' &&
		         strchr(seps, *c) && n < most)
			at[n++] = c - 1;
	}
	return n;
}

static char *break_sum(const char *text, double first, double next, const char *join);

/* A term too wide for its line whose sum sits in "\left( ... \right)" (the
 * drift of a long differential, "\left(a + b + ...\right)\mathrm{d}t"): the
 * sum broken in lines inside \Bigl( ... \Bigr), since \left ... \right
 * cannot span lines; the first line at most first units wide, the others at
 * most next.  A new string; NULL when the term has no such pair or its sum
 * cannot be broken. */
static char *break_inside(const char *term, double first, double next, const char *join)
{
	const char *open = NULL, *close = NULL;
	int braces = 0, pairs = 0;
	for (const char *c = term; *c && !close; c++) {
		if (*c == '\\' && strncmp(c, "\\left", 5) == 0 && !(c[5] >= 'a' && c[5] <= 'z')) {
			if (pairs++ == 0 && braces == 0 && !open && c[5] == '(')
				open = c;
			c += 4;
		} else if (*c == '\\' && strncmp(c, "\\right", 6) == 0 && !(c[6] >= 'a' && c[6] <= 'z')) {
			if (--pairs == 0 && open)
				close = c;
			c += 5;
		} else if (*c == '\\' && c[1]) {
			c++; /* \{ and \} are not braces */
		} else if (*c == '{') {
			braces++;
		} else if (*c == '}') {
			braces--;
		}
	}
	if (!open || !close || close[6] != ')')
		return NULL;
	const char *inner = open + strlen("\\left("), *rest = close + strlen("\\right)");
	char *inside = xasprintf("%.*s", (int)(close - inner), inner);
	double before = width_of(term, open) + 1;
	char *lines = break_sum(inside, first - before, next - 1, join);
	free(inside);
	if (!lines)
		return NULL;
	char *out = xasprintf("%.*s\\Bigl(%s\\Bigr)%s", (int)(open - term), term, lines, rest);
	free(lines);
	return out;
}

/* The sum text in lines: the first at most first units wide, the others at
 * most next, joined by join (the next line starts with its sign); a term
 * wider than a line is broken inside its parentheses (break_inside).  A new
 * string; NULL when it fits on the first line. */
static char *break_sum(const char *text, double first, double next, const char *join)
{
	if (latex_width(text) <= first)
		return NULL;
	enum { MOST_TERMS = 512 };
	const char *cut[MOST_TERMS];
	size_t n = top_level(text, "+-", cut, MOST_TERMS);
	if (n == 0)
		return NULL; /* one term: nothing to break at */
	xbuf out = {0};
	const char *start = text;
	double room = first;
	size_t line_start = 0; /* the out position where the current line began */
	for (size_t i = 0; i <= n; i++) {
		const char *stop = i < n ? cut[i] : text + strlen(text);
		xbuf term = {0};
		xbuf_printf(&term, "%.*s", (int)(stop - start), start);
		double have = width_of(out.data ? out.data + line_start : "",
		                       out.data ? out.data + out.length : "");
		double more = latex_width(term.data);
		const char *piece = term.data;
		if (out.length > line_start && have + more > room) {
			xbuf_put(&out, join);
			line_start = out.length;
			room = next;
			have = 0;
			/* the term begins " + " or " - ": the line starts with its sign */
			if (piece[0] == ' ')
				piece++;
		}
		char *split = more > room - have ? break_inside(piece, room - have, next, join) : NULL;
		xbuf_put(&out, split ? split : piece);
		if (split) {
			/* the lines go on from the last line of the broken term */
			for (const char *j = strstr(out.data + line_start, join); j; j = strstr(j + 1, join))
				line_start = (size_t)(j - out.data) + strlen(join);
			room = next;
			free(split);
		}
		xbuf_free(&term);
		start = stop;
	}
	return xbuf_take(&out);
}

/* One equation or expression broken into aligned lines when it is wider than
 * the page less reserve units: "LHS &= a + b \\ &\quad + c" inside aligned;
 * a pde's "... = 0" breaks on its left side.  buf is replaced. */
static void wrap_equation(xbuf *buf, double reserve)
{
	if (!buf->data || latex_width(buf->data) <= LINE_UNITS - reserve)
		return;
	const double line = LINE_UNITS - reserve;
	const char *join = " \\\\ &\\quad ";
	const char *equals[2];
	size_t found = top_level(buf->data, "=", equals, 2);
	xbuf out = {0};
	char *lines = NULL;
	if (found == 1 && strcmp(equals[0], " = 0") == 0) {
		char *left = xasprintf("%.*s", (int)(equals[0] - buf->data), buf->data);
		lines = break_sum(left, line, line - 2, join);
		if (lines)
			xbuf_printf(&out, "\\begin{aligned} & %s = 0 \\end{aligned}", lines);
		free(left);
	} else if (found == 1) {
		char *left = xasprintf("%.*s", (int)(equals[0] - buf->data), buf->data);
		const char *right = equals[0] + 3;
		double lw = latex_width(left) + 2;
		if (lw <= 0.4 * line) {
			lines = break_sum(right, line - lw, line - lw - 2, join);
			if (lines)
				xbuf_printf(&out, "\\begin{aligned} %s &= %s \\end{aligned}", left, lines);
		} else {
			lines = break_sum(right, line - 4, line - 2, join);
			if (lines)
				xbuf_printf(&out, "\\begin{aligned} & %s \\\\ &\\quad = %s \\end{aligned}",
				            left, lines);
		}
		free(left);
	} else if (found == 0) {
		lines = break_sum(buf->data, line, line - 2, join);
		if (lines)
			xbuf_printf(&out, "\\begin{aligned} & %s \\end{aligned}", lines);
	}
	free(lines);
	if (out.data) {
		xbuf_free(buf);
		*buf = out;
	}
}

/* Aligned rows: "[r^{2}] &= COEFFICIENT" (the coefficient of r^2) or
 * "m_{1}' &= ..." and "m_{1}(t) &= ..."; inside aligned unless the
 * standalone document's align* holds them. */
static void rows(writer *w, const stmt_result *r, xbuf *buf)
{
	char **labels, **values;
	size_t n = writer_rows(r, w->ctx, PRN_LATEX_PLAIN, &labels, &values);
	bool coefficients = r->kind == RESULT_COEFFICIENTS;
	/* one line per result outside a document, as for every other result */
	const char *between = w->standalone ? " \\\\\n" : " \\\\ ";
	if (!w->standalone)
		xbuf_put(buf, "\\begin{aligned} ");
	for (size_t i = 0; i < n; i++) {
		/* a long row goes on in lines aligned after its '=' */
		double label = latex_width(labels[i]) + (coefficients ? 1.6 : 0) + 2;
		char *lines =
		        break_sum(values[i], LINE_UNITS - label, LINE_UNITS - label - 2, " \\\\ &\\quad ");
		xbuf_printf(buf, "%s%s%s%s &= %s", i ? between : "", coefficients ? "[" : "", labels[i],
		            coefficients ? "]" : "", lines ? lines : values[i]);
		free(lines);
	}
	writer_rows_free(n, labels, values);
	char *none = writer_no_solution(r, w->ctx);
	if (none) {
		xbuf_printf(buf, "%s&\\text{", between);
		put_escaped(buf, none);
		xbuf_put(buf, "}");
	}
	free(none);
	if (!w->standalone)
		xbuf_put(buf, " \\end{aligned}");
}

/* The display-math form of a result that has one; false for sentences. */
static bool math(writer *w, const stmt_result *r, xbuf *buf)
{
	char *text;
	switch (r->kind) {
	case RESULT_VALUE:
	case RESULT_DRIFT:
	case RESULT_GENERATOR:
	case RESULT_QV:
		text = writer_expr(r, w->ctx, r->value, PRN_LATEX);
		xbuf_put(buf, text);
		free(text);
		return true;
	case RESULT_DIFFERENTIAL:
	case RESULT_DIFFUSION:
	case RESULT_PRODUCT:
		if (r->kind == RESULT_DIFFERENTIAL && r->of) {
			char *label = writer_diff_label(w, r, PRN_LATEX);
			xbuf_printf(buf, "%s = ", label);
			free(label);
		}
		text = writer_diff(r, w->ctx, PRN_LATEX);
		xbuf_put(buf, text);
		free(text);
		return true;
	case RESULT_PDE:
		/* a PDE is in the variables S, v, not in the processes S_t, v_t */
		text = writer_expr(r, w->ctx, r->value, PRN_LATEX_PLAIN);
		xbuf_printf(buf, "%s = 0", text);
		free(text);
		return true;
	case RESULT_FORWARD:
		text = writer_expr(r, w->ctx, r->of, PRN_LATEX_PLAIN);
		xbuf_printf(buf, "%s = ", text);
		free(text);
		text = writer_expr(r, w->ctx, r->value, PRN_LATEX_PLAIN);
		xbuf_put(buf, text);
		free(text);
		return true;
	case RESULT_COEFFICIENTS:
	case RESULT_MOMENTS:
		rows(w, r, buf);
		return true;
	case RESULT_SDE:
		sde_line(w, r, buf);
		return true;
	case RESULT_MODEL:
		if (r->nsdes == 0) {
			/* show of a name without an SDE: its declaration, as a comment */
			for (const char *line = r->script; line && *line;) {
				const char *end = strchr(line, '\n');
				size_t length = end ? (size_t)(end - line) : strlen(line);
				xbuf_printf(buf, "%s%% %.*s", buf->length ? "\n" : "", (int)length, line);
				line += length + (end != NULL);
			}
			return true;
		}
		for (size_t i = 0; i < r->nsdes; i++) {
			if (i)
				xbuf_put(buf, w->standalone ? " \\\\\n" : "\n");
			sde_line(w, &r->sdes[i], buf);
		}
		return true;
	case RESULT_CLAIM:
	case RESULT_CHECK:
		return false;
	}
	return false;
}

/* A claim's or check's verdict: "holds (exact)", "consistent". New string. */
static char *verdict(writer *w, const stmt_result *r)
{
	if (r->kind == RESULT_CLAIM) {
		char *detail = writer_claim_detail(r, w->ctx);
		char *text = xasprintf("%s%s", result_claim_verdict(r), detail);
		free(detail);
		return text;
	}
	return writer_check_verdict(r->check);
}

/* Plain LaTeX output: the verdict as % comments (the check's table too). */
static void comment(writer *w, const stmt_result *r, xbuf *buf)
{
	char *place = result_place(r);
	char *text = verdict(w, r);
	xbuf_printf(buf, "%% %s: %s %s", place, r->kind == RESULT_CLAIM ? "claim" : "check", text);
	free(text);
	free(place);
	if (r->kind != RESULT_CHECK)
		return;
	xbuf table = {0};
	writer_check_table(w->ctx, r->check, &table);
	for (const char *line = table.data; line && *line;) {
		const char *end = strchr(line, '\n');
		size_t length = end ? (size_t)(end - line) : strlen(line);
		xbuf_printf(buf, "\n%% %.*s", (int)length, line);
		line += length + (end != NULL);
	}
	xbuf_free(&table);
}

/* A standalone document: "the claim \texttt{...} holds (exact)." */
static void sentence(writer *w, const stmt_result *r, xbuf *buf)
{
	char *text = verdict(w, r);
	xbuf_printf(buf, "the %s \\texttt{", r->kind == RESULT_CLAIM ? "claim" : "check");
	put_escaped(buf, r->statement ? r->statement : "");
	xbuf_put(buf, r->kind == RESULT_CLAIM ? "} " : "} is ");
	put_escaped(buf, text);
	xbuf_put(buf, ".\n");
	free(text);
}

/* A result of one equation or expression, which wrap_equation may break
 * (rows break in rows(); show's SDEs are short). */
static bool breakable(const stmt_result *r)
{
	return r->kind != RESULT_COEFFICIENTS && r->kind != RESULT_MOMENTS && r->kind != RESULT_MODEL &&
	       r->kind != RESULT_CLAIM && r->kind != RESULT_CHECK;
}

static bool latex_write(writer *w, const stmt_result *r, char **error)
{
	(void)error;
	xbuf buf = {0};
	char *under = r->measure ? prn_latex_name(r->measure, false) : NULL;
	if (!w->standalone) {
		/* the measure in the equation itself: a result under Q may show no
		 * noise of Q's at all (a drift, a pde, moments) */
		if (math(w, r, &buf)) {
			if (breakable(r))
				wrap_equation(&buf, under ? 14 : 0);
			if (under)
				xbuf_printf(&buf, " \\qquad \\text{(under $%s$)}", under);
		} else {
			comment(w, r, &buf);
			if (under)
				xbuf_printf(&buf, " (under %s)", r->measure);
		}
		free(under);
		if (buf.length)
			writer_line(w, buf.data);
		xbuf_free(&buf);
		return true;
	}
	latex_state *st = w->state;
	if (!st)
		st = w->state = xcalloc(1, sizeof *st);
	char *place = result_place(r);
	xbuf_put(&st->body, "\\noindent ");
	put_escaped(&st->body, place);
	free(place);
	if (math(w, r, &buf)) {
		if (breakable(r))
			wrap_equation(&buf, 0);
		xbuf_put(&st->body, ": \\texttt{");
		put_escaped(&st->body, r->statement ? r->statement : "");
		xbuf_put(&st->body, "}");
		if (under)
			xbuf_printf(&st->body, " under $%s$", under);
		xbuf_printf(&st->body, "\n\\begin{align*}\n%s\n\\end{align*}\n\n", buf.data);
	} else {
		xbuf_put(&st->body, ": ");
		if (under)
			xbuf_printf(&st->body, "under $%s$, ", under);
		sentence(w, r, &st->body);
		xbuf_putc(&st->body, '\n');
	}
	free(under);
	xbuf_free(&buf);
	return true;
}

/* "x > 0", "\rho \in [-1, 1]" */
static void assumption(writer *w, const model_entry *e, xbuf *buf)
{
	char *name = prn_latex_name(e->name, false);
	char *lo = e->lo ? prn_expr(w->ctx, e->lo, PRN_LATEX_PLAIN) : NULL;
	char *hi = e->hi ? prn_expr(w->ctx, e->hi, PRN_LATEX_PLAIN) : NULL;
	if (lo && hi && !e->lo_strict && !e->hi_strict)
		xbuf_printf(buf, "$%s \\in [%s, %s]$", name, lo, hi);
	else if (lo && hi)
		xbuf_printf(buf, "$%s %s %s %s %s$", lo, e->lo_strict ? "<" : "\\le", name,
		            e->hi_strict ? "<" : "\\le", hi);
	else if (lo)
		xbuf_printf(buf, "$%s %s %s$", name, e->lo_strict ? ">" : "\\ge", lo);
	else
		xbuf_printf(buf, "$%s %s %s$", name, e->hi_strict ? "<" : "\\le", hi);
	free(name);
	free(lo);
	free(hi);
}

/* Each measure the model declares, by the increments of its noises, dW_k =
 * dW_k(Q) + shift_k dt: "Under the measure $Q$: $\mathrm{d}W_t =
 * \mathrm{d}Z_t - \lambda\,\mathrm{d}t$"; a noise that keeps its name is
 * B^Q here, and results under Q write it B. */
static void measures(writer *w, xbuf *doc)
{
	const model *m = w->model;
	for (size_t i = 0; i < m->nmeasures; i++) {
		const model_measure *q = &m->measures[i];
		char *name = prn_latex_name(q->name, false);
		xbuf_printf(doc, "Under the measure $%s$: ", name);
		bool any = false;
		const char *kept = NULL; /* a noise that keeps its name */
		for (size_t k = 0; k < q->nnoises; k++) {
			bool renamed = q->names[k] != m->noises[k];
			if (!renamed && expr_is_zero(q->shift[k]))
				continue;
			char *noise = prn_latex_name(expr_sym_name(m->noises[k]), true);
			char *increment = renamed ? prn_latex_name(expr_sym_name(q->names[k]), true)
			                          : xasprintf("%s^{%s}", noise, name);
			xbuf_printf(doc, "%s$\\mathrm{d}%s = \\mathrm{d}%s", any ? ", " : "", noise,
			            increment);
			if (!expr_is_zero(q->shift[k])) {
				stmt_result r = {.kind = RESULT_DIFFERENTIAL, .diff = {.dt = q->shift[k]}};
				char *body = writer_diff(&r, w->ctx, PRN_LATEX);
				xbuf_printf(doc, body[0] == '-' ? " %s" : " + %s", body);
				free(body);
			}
			xbuf_putc(doc, '$');
			if (!renamed && !kept)
				kept = expr_sym_name(m->noises[k]);
			free(noise);
			free(increment);
			any = true;
		}
		if (!any)
			xbuf_put(doc, "every noise is as under the model's own measure");
		if (kept) {
			char *plain = prn_latex_name(kept, false);
			xbuf_printf(doc,
			            "; a result under $%s$ writes $%s^{%s}$ as $%s$ (and so for each noise "
			            "that keeps its name)",
			            name, plain, name, plain);
			free(plain);
		}
		xbuf_put(doc, ".\n\n");
		free(name);
	}
}

static void model_section(writer *w, xbuf *doc)
{
	const model *m = w->model;
	xbuf_put(doc, "\\section*{Model}\n");
	if (m->nsdes) {
		xbuf_put(doc, "\\begin{align*}\n");
		for (size_t i = 0; i < m->nsdes; i++) {
			const model_sde *sde = &m->sdes[i];
			stmt_result r = {.kind = RESULT_SDE,
			                 .name = expr_sym_name(sde->state),
			                 .diff = {.dt = sde->drift,
			                          .dw = sde->diffusion,
			                          .noises = m->noises,
			                          .n = sde->ndiffusion,
			                          .stratonovich = sde->stratonovich}};
			xbuf line = {0};
			sde_line(w, &r, &line);
			wrap_equation(&line, 0); /* a long SDE in aligned lines */
			xbuf_put(doc, line.data);
			xbuf_free(&line);
			xbuf_put(doc, i + 1 < m->nsdes ? " \\\\\n" : "\n");
		}
		xbuf_put(doc, "\\end{align*}\n");
		bool strat = false;
		for (size_t i = 0; i < m->nsdes; i++)
			strat |= m->sdes[i].stratonovich;
		if (strat)
			xbuf_put(doc, "Increments written $\\circ\\,\\mathrm{d}W$ are in the Stratonovich "
			              "sense.\n\n");
	}
	measures(w, doc);
	bool any = false;
	for (size_t i = 0; i < m->nnoises; i++)
		for (size_t j = i + 1; j < m->nnoises; j++) {
			const expr *rho = model_corr(m, i, j);
			if (expr_is_zero(rho))
				continue;
			char *a = prn_latex_name(expr_sym_name(m->noises[i]), true);
			char *b = prn_latex_name(expr_sym_name(m->noises[j]), true);
			char *value = prn_expr(w->ctx, rho, PRN_LATEX_PLAIN);
			xbuf_printf(doc, "%s$\\mathrm{d}%s\\,\\mathrm{d}%s = %s\\,\\mathrm{d}t$",
			            any ? ", " : "Correlations: ", a, b, value);
			free(a);
			free(b);
			free(value);
			any = true;
		}
	if (any)
		xbuf_put(doc, ".\n\n");
	any = false;
	for (size_t i = 0; i < m->nentries; i++) {
		const model_entry *e = &m->entries[i];
		if (!e->lo && !e->hi)
			continue;
		xbuf_put(doc, any ? ", " : "Assumptions: ");
		assumption(w, e, doc);
		any = true;
	}
	static const char *const rel_latex[] = {
	        [MODEL_REL_GT] = ">", [MODEL_REL_GE] = "\\ge", [MODEL_REL_LT] = "<", [MODEL_REL_LE] = "\\le"};
	for (size_t i = 0; i < m->nrelations; i++) {
		const model_relation *r = &m->relations[i];
		char *lhs = prn_expr(w->ctx, r->lhs, PRN_LATEX_PLAIN);
		char *rhs = prn_expr(w->ctx, r->rhs, PRN_LATEX_PLAIN);
		xbuf_printf(doc, "%s$%s %s %s$", any ? ", " : "Assumptions: ", lhs, rel_latex[r->op], rhs);
		free(lhs);
		free(rhs);
		any = true;
	}
	if (any)
		xbuf_put(doc, ".\n\n");
}

static void latex_finish(writer *w)
{
	if (!w->standalone)
		return;
	latex_state *st = w->state;
	xbuf doc = {0};
	xbuf_put(&doc, "\\documentclass{article}\n\\usepackage{amsmath}\n\\usepackage[T1]{fontenc}\n"
	               "\\allowdisplaybreaks\n\\begin{document}\n");
	model_section(w, &doc);
	xbuf_put(&doc, "\\section*{Results}\n");
	if (st && st->body.length)
		xbuf_put(&doc, st->body.data);
	xbuf_put(&doc, "\\medskip\\noindent\\small These results are mathematics about the stated model, not "
	               "advice: its assumptions must be validated and the results reviewed under your own "
	               "model-risk policy before they are used to price or hedge anything.\n\\end{document}");
	writer_line(w, doc.data);
	xbuf_free(&doc);
}

static void latex_free(writer *w)
{
	latex_state *st = w->state;
	if (!st)
		return;
	xbuf_free(&st->body);
	free(st);
	w->state = NULL;
}

const writer_class writer_latex = {
        .name = "latex", .write = latex_write, .finish = latex_finish, .free_state = latex_free};
