/* session.c - statements in, results out: the statement table and the run loop.
 *
 * The parser gives a syntax tree with positions; each statement runs through
 * one row of the statement table (declarations in decl.c, queries in
 * query.c, show/save/load in persist.c), which lowers its expressions
 * (lower.c), calls the engine and hands the result to the writer of the
 * session's format.  Every error is reported with its position (diag.c) and
 * leaves the session as it was before the statement.
 */
#include "session-internal.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "help.h"
#include "print.h"
#include "xalloc.h"

enum { MAX_NESTING = 1000, MAX_LINE = 1 << 20 };

/* ------------------------------------------------------------------ statements */

static bool run_statement(session *s, const ast_node *st);

/* under Q: STATEMENT, a query under the measure Q (P: the model's own) */
static bool run_under(session *s, const ast_node *st)
{
	model_measure *q = model_measure_find(&s->model, st->text);
	if (!q) {
		model_entry *entry = model_lookup(&s->model, st->text);
		if (entry)
			report(s, SESSION_INPUT, &st->loc, "'%s' is a %s, not a measure", st->text,
			       model_kind_name(entry->kind));
		else if (strcmp(st->text, "P") == 0)
			return run_statement(s, st->a);
		else
			report(s, SESSION_INPUT, &st->loc,
			       "unknown measure '%s' (declare it with: measure %s: dW = dZ - lambda*dt)",
			       st->text, st->text);
		return false;
	}
	const model_measure *keep = s->measure;
	s->measure = q;
	bool ok = run_statement(s, st->a);
	s->measure = keep;
	return ok;
}

/* help [TOPIC] */
static bool run_help(session *s, const ast_node *st)
{
	const char *text = help_text(st->text);
	if (!text) {
		report(s, SESSION_INPUT, &st->loc, "no help on '%s'; try 'help' for the list of topics",
		       st->text);
		return false;
	}
	fputs(text, s->opt.out);
	fflush(s->opt.out);
	return true;
}

/* quit */
static bool run_quit(session *s, const ast_node *st)
{
	(void)st;
	s->quit = true;
	return true;
}

/* Queries need every state that an SDE uses to have its own SDE. */
static bool model_complete(session *s, const ast_node *st)
{
	model *m = &s->model;
	for (size_t i = 0; i < m->nentries; i++) {
		model_entry *e = &m->entries[i];
		if (e->kind != MODEL_ARG || !e->pending_state)
			continue;
		for (size_t j = 0; j < m->nsdes; j++) {
			model_sde *sde = &m->sdes[j];
			bool uses = expr_has(s->ctx, sde->drift, e->sym);
			for (size_t k = 0; k < sde->ndiffusion && !uses; k++)
				uses = expr_has(s->ctx, sde->diffusion[k], e->sym);
			if (uses) {
				report(s, SESSION_INPUT, &st->loc,
				       "the SDE of '%s' uses '%s', which has no SDE yet (declare d%s = ... "
				       "or param %s)",
				       expr_sym_name(sde->state), e->name, e->name, e->name);
				return false;
			}
		}
	}
	return true;
}

/* The statement table: one row per statement kind, its handler and whether
 * it needs a complete model (model_complete) before it runs. */
typedef struct statement_row {
	bool (*run)(session *s, const ast_node *st);
	bool needs_complete_model;
} statement_row;

static const statement_row statements[AST_KIND_COUNT] = {
        [AST_S_EXPR] = {run_expr_statement, true},
        [AST_S_D] = {run_part, true},
        [AST_S_DRIFT] = {run_part, true},
        [AST_S_DIFFUSION] = {run_part, true},
        [AST_S_GENERATOR] = {run_part, true},
        [AST_S_QV] = {run_qv, true},
        [AST_S_PDE] = {run_pde, true},
        [AST_S_FORWARD] = {run_forward, true},
        [AST_S_COEFFICIENTS] = {run_coefficients, true},
        [AST_S_MOMENTS] = {run_moments, true},
        [AST_S_SDE_ITO] = {run_sde_display, true},
        [AST_S_SDE_STRAT] = {run_sde_display, true},
        [AST_S_PARAM] = {run_param, false},
        [AST_S_ASSUME] = {run_assume, false},
        [AST_S_NOISE] = {run_noise, false},
        [AST_S_CORR] = {run_corr, false},
        [AST_S_FUNC] = {run_func, false},
        [AST_S_SDE] = {run_sde, false},
        [AST_S_STRAT_SDE] = {run_sde, false},
        [AST_S_LET] = {run_let, false},
        [AST_S_MEASURE] = {run_measure, true},
        [AST_S_UNDER] = {run_under, false}, /* the statement it runs is checked */
        [AST_S_STATE] = {run_state, true},
        [AST_S_CLAIM] = {run_claim, true},
        [AST_S_CHECK] = {run_check, true},
        [AST_S_SHOW] = {run_show, false},
        [AST_S_SAVE] = {run_save, false},
        [AST_S_LOAD] = {run_load, false},
        [AST_S_FORGET] = {run_forget, false},
        [AST_S_FORMAT] = {run_format, false},
        [AST_S_HELP] = {run_help, false},
        [AST_S_QUIT] = {run_quit, false},
};

static bool run_statement(session *s, const ast_node *st)
{
	const statement_row *row = &statements[st->kind];
	if (!row->run) {
		report(s, SESSION_INPUT, &st->loc, "not a statement");
		return false;
	}
	if (row->needs_complete_model && !model_complete(s, st))
		return false;
	unsigned long reports = s->reports;
	bool ok = row->run(s, st);
	/* a handler that leaves an engine error (a limit, an interrupt) in the
	 * context has failed, whatever it returned; one that fails must say why */
	if (engine_failed(s, &st->loc))
		ok = false;
	else if (!ok && s->reports == reports)
		report(s, SESSION_LIMIT, &st->loc, "the statement failed without a reason (please report this)");
	return ok;
}

/* Run one statement whole or not at all: one that reports an error (bad
 * input, a limit, an interrupt) leaves the model, its symbols and the
 * format exactly as they were before it. */
static bool run_whole(session *s, const ast_node *st)
{
	expr_clear_error(s->ctx);
	if (st->kind != AST_S_CORR && !close_corr_block(s))
		return false; /* the run of corr statements was undone as a whole */
	model_snapshot before;
	model_snapshot_take(&s->model, &before);
	session_format format = s->format;
	int status = s->status;
	s->status = SESSION_OK;
	bool ok = run_statement(s, st);
	if (s->status >= SESSION_INPUT) {
		model_snapshot_restore(&s->model, &before);
		s->format = format;
	} else {
		model_snapshot_drop(&s->model, &before);
	}
	raise_status(s, status);
	return ok;
}

/* ------------------------------------------------------------------ running */

session *session_new(const session_options *options)
{
	session *s = xcalloc(1, sizeof *s);
	s->opt = *options;
	if (!s->opt.out)
		s->opt.out = stdout;
	if (!s->opt.err)
		s->opt.err = stderr;
	s->format = options->format;
	s->abbreviate = true;
	xalloc_use_for_gmp();
	s->ctx = expr_ctx_new();
	expr_ctx_limits(s->ctx)->interrupt = options->interrupt;
	expr_ctx_limits(s->ctx)->max_bytes = options->memory_limit ? options->memory_limit : SESSION_MEMORY_LIMIT;
	model_init(&s->model, s->ctx);
	expr_sym_set_rank(s->ctx, s->model.time, PRN_RANK_TIME);
	return s;
}

void session_free(session *s)
{
	if (!s)
		return;
	model_free(&s->model);
	expr_ctx_free(s->ctx);
	for (int i = 0; i < 4; i++)
		writer_free(s->writers[i]);
	free(s->corr_before);
	free(s->corr_text);
	free(s->corr_origin);
	free(s);
}

int session_finish(session *s)
{
	close_corr_block(s);
	for (int i = 0; i < 4; i++)
		writer_finish(s->writers[i]);
	return s->status;
}

void session_set_interactive(session *s, bool interactive)
{
	s->interactive = interactive;
}

int session_status(const session *s)
{
	return s->status;
}

bool session_quit_requested(const session *s)
{
	return s->quit;
}

void session_each_name(const session *s, void (*fn)(const char *name, void *data), void *data)
{
	for (size_t i = 0; i < s->model.nentries; i++)
		fn(s->model.entries[i].name, data);
}

bool session_incomplete(const char *source, size_t length)
{
	ast_list list;
	ast_parse(source, length, MAX_NESTING, &list);
	bool incomplete = list.error.present && list.error.incomplete;
	ast_list_free(&list);
	return incomplete;
}

/* The first line longer than MAX_LINE: its number, and its length in bytes. */
static bool find_long_line(const char *source, size_t length, int *line, size_t *bytes)
{
	size_t start = 0;
	int number = 1;
	for (size_t i = 0; i <= length; i++) {
		if (i < length && source[i] != '\n')
			continue;
		if (i - start > MAX_LINE) {
			*line = number;
			*bytes = i - start;
			return true;
		}
		start = i + 1;
		number++;
	}
	return false;
}

/* Run the statements of one source (the status saved around it is the caller's). */
static void run_statements(session *s, const char *source, size_t length)
{
	/* a bound on line length keeps messages and the scanner's work in proportion */
	int line;
	size_t bytes;
	if (find_long_line(source, length, &line, &bytes)) {
		ast_loc loc = {line, 1, line, 1};
		s->source = NULL; /* do not echo a megabyte */
		report(s, SESSION_LIMIT, &loc, "line too long (%zu bytes; the limit is %d)", bytes, MAX_LINE);
		return;
	}
	ast_list list;
	ast_parse(source, length, MAX_NESTING, &list);
	/* a file being loaded is applied whole or not at all: none of it
	 * runs when it does not parse */
	size_t count = list.error.present && s->load_depth > 0 ? 0 : list.n;
	const ast_list *outer_list = s->run_list;
	size_t outer_index = s->run_index;
	s->run_list = &list;
	for (size_t i = 0; i < count && !s->quit; i++) {
		s->run_index = i;
		if (s->opt.before_statement)
			s->opt.before_statement(s->opt.hook_data);
		if (!run_whole(s, list.stmts[i]) && s->status >= SESSION_INPUT)
			break;
		if (s->opt.interrupt && *s->opt.interrupt) {
			/* the flag came up after the engine's last poll (while the
			 * result was printed): say so, never stop silently */
			if (*s->opt.interrupt == 2)
				report(s, SESSION_LIMIT, &list.stmts[i]->loc,
				       "time limit exceeded (%g s per statement; see --time-limit)",
				       s->opt.time_limit);
			else
				report(s, SESSION_LIMIT, &list.stmts[i]->loc, "interrupted");
			break;
		}
	}
	if (s->status >= SESSION_INPUT)
		s->corr_block = false; /* the run stopped: its corr statements are not judged */
	s->run_list = outer_list;
	s->run_index = outer_index;
	if (list.error.present && s->status < SESSION_INPUT && !s->quit)
		report(s, list.error.kind == AST_ERROR_NESTING ? SESSION_LIMIT : SESSION_INPUT,
		       &list.error.loc, "%s", list.error.message);
	ast_list_free(&list);
}

/* fixed_line: nonzero for an -e statement, whose messages say -e:N:COLUMN. */
static int run_source(session *s, const char *source, size_t length, const char *origin, int fixed_line)
{
	source_frame outer = enter_source(s, source, length, origin, fixed_line);
	int outer_status = s->status;
	s->status = SESSION_OK;
	run_statements(s, source, length);
	int status = s->status;
	leave_source(s, outer);
	s->status = outer_status;
	raise_status(s, status);
	return status;
}

int session_run(session *s, const char *source, size_t length, const char *origin)
{
	return run_source(s, source, length, origin, 0);
}

int session_run_argument(session *s, const char *statement, int index)
{
	return run_source(s, statement, strlen(statement), "-e", index);
}

int session_run_numbered(session *s, const char *source, size_t length, const char *origin, int index)
{
	return run_source(s, source, length, origin, index);
}

/* Read the whole file at PATH into BUF.  On failure returns the errno that
 * says why (a directory opens but cannot be read: EISDIR). */
int read_source_file(const char *path, xbuf *buf)
{
	errno = 0;
	FILE *file = fopen(path, "rb");
	if (!file)
		return errno ? errno : EIO;
	char chunk[65536];
	size_t n;
	while ((n = fread(chunk, 1, sizeof chunk, file)) > 0)
		xbuf_putn(buf, chunk, n);
	int error_number = ferror(file) ? (errno ? errno : EIO) : 0;
	fclose(file);
	return error_number;
}

int session_run_file(session *s, const char *path)
{
	xbuf buf = {0};
	int error_number = read_source_file(path, &buf);
	if (error_number) {
		xbuf_free(&buf);
		fprintf(s->opt.err, "%s: error: cannot read the file: %s\n", path, strerror(error_number));
		raise_status(s, SESSION_INPUT);
		return SESSION_INPUT;
	}
	int status = session_run(s, buf.data ? buf.data : "", buf.length, path);
	xbuf_free(&buf);
	return status;
}

const expr *session_expr(session *s, const char *text)
{
	source_frame outer = enter_source(s, text, strlen(text), "<expr>", 0);
	ast_list list;
	ast_parse(text, s->length, MAX_NESTING, &list);
	const expr *result = NULL;
	if (list.error.present)
		report(s, SESSION_INPUT, &list.error.loc, "%s", list.error.message);
	else if (list.n != 1 || list.stmts[0]->kind != AST_S_EXPR)
		report(s, SESSION_INPUT, NULL, "expected one expression");
	else if (!eval_scalar(s, list.stmts[0]->a, &result))
		result = NULL;
	ast_list_free(&list);
	leave_source(s, outer);
	return result;
}

expr_ctx *session_expr_ctx(session *s)
{
	return s->ctx;
}
