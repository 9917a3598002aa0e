/* diag.c - the session's messages.
 *
 * Every error of a statement is reported here: file:line:column, the line of
 * the source and a caret under the span, a suggestion for a misspelt name,
 * and in JSON also an error record on the output.  The status of the run is
 * raised with each report.
 */
#include "session-internal.h"

#include <stdarg.h>
#include <stdlib.h>
#include <stdio.h>
#include <string.h>

#include "print.h"
#include "xalloc.h"

source_frame enter_source(session *s, const char *source, size_t length, const char *origin, int fixed_line)
{
	source_frame outer = {s->source, s->length, s->origin, s->fixed_line};
	s->source = source;
	s->length = length;
	s->origin = origin;
	s->fixed_line = fixed_line;
	return outer;
}

void leave_source(session *s, source_frame outer)
{
	s->source = outer.source;
	s->length = outer.length;
	s->origin = outer.origin;
	s->fixed_line = outer.fixed_line;
}

/* ------------------------------------------------------------------ errors */

void raise_status(session *s, int status)
{
	static const int rank[] = {0, 1, 2, 3};
	if (rank[status] > rank[s->status])
		s->status = status;
}

void source_line(const session *s, int line, const char **start, size_t *length)
{
	const char *p = s->source, *end = s->source + s->length;
	for (int l = 1; l < line && p < end; l++) {
		const char *nl = memchr(p, '\n', (size_t)(end - p));
		p = nl ? nl + 1 : end;
	}
	const char *nl = memchr(p, '\n', (size_t)(end - p));
	*start = p;
	*length = (size_t)((nl ? nl : end) - p);
}

void report(session *s, int status, const ast_loc *loc, const char *format, ...)
{
	va_list args;
	va_start(args, format);
	char message[1024];
	vsnprintf(message, sizeof message, format, args);
	va_end(args);
	raise_status(s, status);
	s->reports++;
	int line = loc ? loc->first_line : 1, column = loc ? loc->first_column : 1;
	if (s->fixed_line)
		fprintf(s->opt.err, "%s:%d:%d: error: %s\n", s->origin, s->fixed_line, column, message);
	else
		fprintf(s->opt.err, "%s:%d:%d: error: %s\n", s->origin, line, column, message);
	if (s->source && loc) {
		const char *text;
		size_t length;
		source_line(s, line, &text, &length);
		if (length > 200)
			length = 200;
		fprintf(s->opt.err, "  %.*s\n  ", (int)length, text);
		for (int c = 1; c < column && (size_t)c <= length; c++)
			fputc(text[c - 1] == '\t' ? '\t' : ' ', s->opt.err);
		int width = 1;
		if (loc->last_line == loc->first_line && loc->last_column > loc->first_column)
			width = loc->last_column - loc->first_column + 1; /* last_column is inclusive */
		for (int i = 0; i < width && i < 200; i++)
			fputc(i == 0 ? '^' : '~', s->opt.err);
		fputc('\n', s->opt.err);
	}
	if (s->format == FORMAT_JSON) {
		xbuf buf = {0};
		xbuf_printf(&buf, "{\"kind\":\"error\",\"line\":%d,\"column\":%d,\"status\":%d,\"message\":",
		            s->fixed_line ? s->fixed_line : line, column, status);
		prn_json_string(&buf, message);
		xbuf_put(&buf, "}\n");
		fputs(buf.data, s->opt.out);
		xbuf_free(&buf);
	}
}

void note(session *s, const ast_loc *loc, const char *format, ...)
{
	va_list args;
	va_start(args, format);
	char message[1024];
	vsnprintf(message, sizeof message, format, args);
	va_end(args);
	int line = s->fixed_line ? s->fixed_line : loc ? loc->first_line : 1;
	fprintf(s->opt.err, "%s:%d:%d: note: %s\n", s->origin, line, loc ? loc->first_column : 1, message);
}

/* Report an engine error (limit, interrupt, division by zero) if one is set. */
bool engine_failed(session *s, const ast_loc *loc)
{
	expr_error_kind kind = expr_error(s->ctx);
	if (!kind)
		return false;
	int status = kind == EXPR_ERR_DIVISION || kind == EXPR_ERR_DOMAIN ? SESSION_INPUT : SESSION_LIMIT;
	const expr *a, *b;
	if (kind == EXPR_ERR_INTERRUPTED && s->opt.interrupt && *s->opt.interrupt == 2)
		report(s, SESSION_LIMIT, loc, "time limit exceeded (%g s per statement; see --time-limit)",
		       s->opt.time_limit);
	else if (kind == EXPR_ERR_INTERRUPTED)
		report(s, SESSION_LIMIT, loc, "interrupted");
	else if (kind == EXPR_ERR_MEMORY)
		report(s, SESSION_LIMIT, loc,
		       "memory budget exceeded (%zu MiB for expressions; raise it with --memory-limit=MIB)",
		       expr_ctx_limits(s->ctx)->max_bytes >> 20);
	else if (expr_error_nodes(s->ctx, &a, &b)) {
		/* the message names nodes: print them (the library does not) */
		char *ta = prn_expr(s->ctx, a, PRN_TEXT), *tb = prn_expr(s->ctx, b, PRN_TEXT);
		char message[1024];
		snprintf(message, sizeof message, expr_error_message(s->ctx), ta, tb);
		report(s, status, loc, "%s", message);
		free(ta);
		free(tb);
	} else
		report(s, status, loc, "%s", expr_error_message(s->ctx));
	expr_clear_error(s->ctx);
	return true;
}

const expr *declared_symbol(session *s, const char *name, const ast_loc *loc)
{
	const expr *sym = expr_sym(s->ctx, name);
	if (!sym && !engine_failed(s, loc))
		report(s, SESSION_LIMIT, loc, "no room for the name '%s'", name);
	return sym;
}

bool differential_failed(session *s, ito_diff *d, const ast_loc *loc)
{
	if (engine_failed(s, loc)) {
		ito_diff_free(d);
		return true;
	}
	if (!ito_diff_failed(d))
		return false;
	/* every failure of the engine leaves its error in the context; say so
	 * rather than stop silently if one ever does not */
	report(s, SESSION_LIMIT, loc, "the differential could not be computed");
	ito_diff_free(d);
	return true;
}

/* ------------------------------------------------------------------ suggestions */

static size_t edit_distance(const char *a, const char *b)
{
	size_t la = strlen(a), lb = strlen(b);
	if (la > 64 || lb > 64)
		return 99;
	size_t row[65];
	for (size_t j = 0; j <= lb; j++)
		row[j] = j;
	for (size_t i = 1; i <= la; i++) {
		size_t diag = row[0];
		row[0] = i;
		for (size_t j = 1; j <= lb; j++) {
			size_t up = row[j];
			size_t cost = a[i - 1] == b[j - 1] ? 0 : 1;
			size_t best = diag + cost;
			if (row[j] + 1 < best)
				best = row[j] + 1;
			if (row[j - 1] + 1 < best)
				best = row[j - 1] + 1;
			row[j] = best;
			diag = up;
		}
	}
	return row[lb];
}

static void consider(const char *candidate, const char *name, const char **best, size_t *distance)
{
	size_t d = edit_distance(name, candidate);
	if (d < *distance) {
		*distance = d;
		*best = candidate;
	}
}

/* The closest known name, or NULL when nothing is close. */
const char *suggest(session *s, const char *name)
{
	const char *best = NULL;
	size_t distance = (size_t)-1;
	for (size_t i = 0; i < s->model.nentries; i++)
		consider(s->model.entries[i].name, name, &best, &distance);
	for (size_t f = 0; expr_function_spelling(f); f++)
		consider(expr_function_spelling(f), name, &best, &distance);
	consider("t", name, &best, &distance);
	size_t length = strlen(name);
	size_t limit = length <= 2 ? 0 : length <= 4 ? 1 : 2;
	return distance <= limit ? best : NULL;
}

char *noise_list(const session *s, const model_measure *q, const char *prefix)
{
	const expr *const *names = q ? q->names : s->model.noises;
	xbuf list = {0};
	for (size_t k = 0; k < s->model.nnoises; k++)
		xbuf_printf(&list, "%s%s%s", k ? ", " : "", prefix, expr_sym_name(names[k]));
	return list.data ? list.data : xstrdup("");
}

/* The noise name closest to name (with the prefix "d" or ""), among the
 * current measure's noises and the model's: a new string, NULL when none
 * is close. */
static char *closest_noise(session *s, const char *name, const char *prefix)
{
	char *best = NULL;
	size_t distance = (size_t)-1;
	for (int pass = 0; pass < 2; pass++) {
		const expr *const *names = pass == 0 || !s->measure ? s->model.noises : s->measure->names;
		for (size_t k = 0; k < s->model.nnoises; k++) {
			char *candidate = xasprintf("%s%s", prefix, expr_sym_name(names[k]));
			const char *chosen = NULL;
			consider(candidate, name, &chosen, &distance);
			if (chosen) {
				free(best);
				best = candidate;
			} else {
				free(candidate);
			}
		}
	}
	size_t length = strlen(name);
	size_t limit = length <= 2 ? 0 : length <= 4 ? 1 : 2;
	if (best && distance <= limit)
		return best;
	free(best);
	return NULL;
}

/* A name that is a noise (or its differential) of a measure other than the
 * current one: known only under that measure.  True after a message. */
static bool other_measure_noise(session *s, const ast_loc *loc, const char *name)
{
	const model *m = &s->model;
	const char *bare = name[0] == 'd' && name[1] ? name + 1 : NULL;
	for (size_t i = 0; i < m->nmeasures; i++) {
		const model_measure *q = &m->measures[i];
		if (q == s->measure)
			continue;
		for (size_t k = 0; k < q->nnoises; k++) {
			const char *noise = expr_sym_name(q->names[k]);
			bool differential = bare && strcmp(bare, noise) == 0;
			if (q->names[k] == m->noises[k] || (strcmp(name, noise) != 0 && !differential))
				continue;
			/* the same noise's name here */
			const char *here = expr_sym_name(s->measure ? s->measure->names[k] : m->noises[k]);
			report(s, SESSION_INPUT, loc,
			       "unknown name '%s': %s is the noise that replaces %s under the measure %s, "
			       "known "
			       "only there; add 'under %s' to the statement, or write %s%s here",
			       name, noise, expr_sym_name(m->noises[k]), q->name, q->name,
			       differential ? "d" : "", here);
			return true;
		}
	}
	return false;
}

void unknown_name(session *s, const ast_loc *loc, const char *name)
{
	if (expr_is_function_spelling(name)) {
		report(s, SESSION_INPUT, loc, "'%s' is a built-in function, not a variable (write %s(x))",
		       name, name);
		return;
	}
	if (other_measure_noise(s, loc, name))
		return;
	if (name[0] == 'd' && name[1] && s->model.nnoises) {
		/* a differential that is not one: name the noises' differentials here */
		char *close = closest_noise(s, name, "d");
		char *list = noise_list(s, s->measure, "d");
		if (close)
			report(s, SESSION_INPUT, loc,
			       "unknown name '%s'; did you mean '%s'? (the noises here: %s%s%s)", name, close,
			       list, s->measure ? " under " : "", s->measure ? s->measure->name : "");
		else if (!suggest(s, name))
			report(s, SESSION_INPUT, loc,
			       "unknown name '%s' (the noises' differentials here: %s%s%s)", name, list,
			       s->measure ? " under " : "", s->measure ? s->measure->name : "");
		else
			report(s, SESSION_INPUT, loc, "unknown name '%s'; did you mean '%s'?", name,
			       suggest(s, name));
		free(close);
		free(list);
		return;
	}
	const char *hint = suggest(s, name);
	if (hint)
		report(s, SESSION_INPUT, loc, "unknown name '%s'; did you mean '%s'?", name, hint);
	else
		report(s, SESSION_INPUT, loc, "unknown name '%s'", name);
}

void undeclared_name(session *s, const ast_loc *loc, const char *name)
{
	if (suggest(s, name))
		unknown_name(s, loc, name);
	else
		report(s, SESSION_INPUT, loc,
		       "unknown name '%s'; declare it first (param %s, or d%s = ... for a state)", name, name,
		       name);
}

bool declared_later(const session *s, const char *name)
{
	const ast_list *list = s->run_list;
	for (size_t i = s->run_index + 1; list && i < list->n; i++) {
		const ast_node *st = list->stmts[i];
		bool sde = st->kind == AST_S_SDE || st->kind == AST_S_STRAT_SDE;
		if (sde && st->text[0] == 'd' && strcmp(st->text + 1, name) == 0)
			return true;
		if (st->kind == AST_S_STATE && strcmp(st->text, name) == 0)
			return true;
	}
	return false;
}

/* The entry of a name that must be of one kind; NULL after a message (an
 * unknown name with a suggestion, or "'x' is a parameter, not a state"). */
model_entry *lookup_kind(session *s, const ast_loc *loc, const char *name, model_kind kind)
{
	model_entry *entry = model_lookup(&s->model, name);
	if (entry && entry->kind == kind)
		return entry;
	if (entry)
		report(s, SESSION_INPUT, loc, "'%s' is a %s, not a %s", name, model_kind_name(entry->kind),
		       model_kind_name(kind));
	else
		unknown_name(s, loc, name);
	return NULL;
}
