/* persist.c - the model as statements: show, save and load; format.
 *
 * dump_model() writes the declarations back as a script that runs to the
 * same model (show prints it, save writes it to a file, load runs a file).
 */
#include "session-internal.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "print.h"
#include "xalloc.h"

/* The names of the output formats, indexed by session_format. */
static const char *const format_names[] = {"text", "latex", "c", "json"};

/* "assume x > 0", "assume x in [a, b]" for an entry that has a range. */
static void dump_assumption(session *s, xbuf *out, const model_entry *e)
{
	char *text;
	if (e->lo && e->hi && !e->lo_strict && !e->hi_strict) {
		char *lo = text_expr(s, e->lo), *hi = text_expr(s, e->hi);
		xbuf_printf(out, "assume %s in [%s, %s]\n", e->name, lo, hi);
		free(lo);
		free(hi);
		return;
	}
	if (e->lo) {
		text = text_expr(s, e->lo);
		xbuf_printf(out, "assume %s %s %s\n", e->name, e->lo_strict ? ">" : ">=", text);
		free(text);
	}
	if (e->hi) {
		text = text_expr(s, e->hi);
		xbuf_printf(out, "assume %s %s %s\n", e->name, e->hi_strict ? "<" : "<=", text);
		free(text);
	}
}

/* Does a bound use a name?  A script declares a name before it uses it, so
 * such a bound is written after every declaration (param a > b, param U > S
 * with S a state); the bounds that give signs (numbers) stay in front. */
static bool uses_names(session *s, const expr *bound)
{
	expr_vec names = {0};
	expr_free_symbols(s->ctx, bound, &names);
	bool named = names.n > 0;
	expr_vec_free(&names);
	return named;
}

/* The entry with only the bounds that use names (named) or only the others. */
static model_entry range_part(session *s, const model_entry *e, bool named)
{
	model_entry part = *e;
	if (part.lo && uses_names(s, part.lo) != named)
		part.lo = NULL;
	if (part.hi && uses_names(s, part.hi) != named)
		part.hi = NULL;
	return part;
}

/* The ranges of states (in the order of their SDEs, so the text does not
 * depend on which declaration first named them), then of names announced
 * for later: only their bounds that use names (named) or only the others. */
static void dump_state_ranges(session *s, xbuf *out, const char *only, bool named)
{
	model *m = &s->model;
	for (size_t i = 0; i < m->nsdes; i++) {
		model_entry *e = model_lookup(m, expr_sym_name(m->sdes[i].state));
		if (e && (!only || strcmp(e->name, only) == 0)) {
			model_entry part = range_part(s, e, named);
			dump_assumption(s, out, &part);
		}
	}
	for (size_t i = 0; i < m->nentries; i++) {
		model_entry *e = &m->entries[i];
		if (e->kind == MODEL_ARG && (!only || strcmp(e->name, only) == 0)) {
			model_entry part = range_part(s, e, named);
			dump_assumption(s, out, &part);
		}
	}
}

/* "assume 2*kappa*theta > xi^2": a relation as it was declared. */
static void dump_relation(session *s, xbuf *out, const model_relation *r)
{
	char *lhs = text_expr(s, r->lhs), *rhs = text_expr(s, r->rhs);
	xbuf_printf(out, "assume %s %s %s\n", lhs, model_rel_text(r->op), rhs);
	free(lhs);
	free(rhs);
}

/* Does the relation use the name (show NAME lists the relations on it)? */
static bool relation_uses(session *s, const model_relation *r, const char *name)
{
	expr_vec names = {0};
	expr_free_symbols(s->ctx, r->difference, &names);
	bool found = false;
	for (size_t i = 0; i < names.n && !found; i++)
		found = strcmp(expr_sym_name(names.items[i]), name) == 0;
	expr_vec_free(&names);
	return found;
}

/* The declarations of the model (only: those of one name) as statements. */
static void dump_model_body(session *s, xbuf *out, const char *only)
{
	model *m = &s->model;
	char *text;
	for (size_t i = 0; i < m->nentries; i++) {
		model_entry *e = &m->entries[i];
		if (only && strcmp(e->name, only) != 0)
			continue;
		switch (e->kind) {
		case MODEL_PARAM: {
			model_entry fixed = range_part(s, e, false);
			e = &fixed;
			xbuf_printf(out, "param %s", e->name);
			if (e->lo && e->hi && !e->lo_strict && !e->hi_strict) {
				char *lo = text_expr(s, e->lo), *hi = text_expr(s, e->hi);
				xbuf_printf(out, " in [%s, %s]", lo, hi);
				free(lo);
				free(hi);
			} else if (e->lo && !e->hi) {
				text = text_expr(s, e->lo);
				xbuf_printf(out, " %s %s", e->lo_strict ? ">" : ">=", text);
				free(text);
			} else if (e->hi && !e->lo) {
				text = text_expr(s, e->hi);
				xbuf_printf(out, " %s %s", e->hi_strict ? "<" : "<=", text);
				free(text);
			} else if (e->lo && e->hi) {
				char *lo = text_expr(s, e->lo), *hi = text_expr(s, e->hi);
				xbuf_printf(out, "\nassume %s %s %s, %s %s %s", e->name,
				            e->lo_strict ? ">" : ">=", lo, e->name,
				            e->hi_strict ? "<" : "<=", hi);
				free(lo);
				free(hi);
			}
			xbuf_putc(out, '\n');
			break;
		}
		case MODEL_NOISE:
			xbuf_printf(out, "noise %s\n", e->name);
			break;
		case MODEL_FUNC: {
			xbuf_printf(out, "func %s(", e->name);
			for (size_t k = 0; k < expr_func_arity(e->sym); k++)
				xbuf_printf(out, "%s%s", k ? ", " : "", expr_func_arg_name(e->sym, k));
			xbuf_put(out, ")\n");
			break;
		}
		default:
			break;
		}
	}
	if (!only)
		for (size_t i = 0; i < m->nnoises; i++)
			for (size_t j = i + 1; j < m->nnoises; j++) {
				const expr *rho = model_corr(m, i, j);
				if (expr_is_zero(rho))
					continue;
				text = text_expr(s, rho);
				xbuf_printf(out, "corr(%s, %s) = %s\n", expr_sym_name(m->noises[i]),
				            expr_sym_name(m->noises[j]), text);
				free(text);
			}
	dump_state_ranges(s, out, only, false);
	const model_measure *keep_measure = s->measure;
	s->measure = NULL;
	for (size_t i = 0; i < m->nsdes; i++) {
		model_sde *sde = &m->sdes[i];
		if (only && strcmp(expr_sym_name(sde->state), only) != 0)
			continue;
		prn_diff d = {
		        .dt = sde->drift, .dw = sde->diffusion, .noises = m->noises, .n = sde->ndiffusion};
		char *body = prn_differential(s->ctx, &d, PRN_TEXT, NULL);
		xbuf_printf(out, "%sd%s = %s\n", sde->stratonovich ? "stratonovich " : "",
		            expr_sym_name(sde->state), body);
		free(body);
	}
	s->measure = keep_measure;
	/* bounds that use names and relations after the SDEs: they may use
	 * states, which a script must declare first */
	for (size_t i = 0; i < m->nentries; i++) {
		model_entry *e = &m->entries[i];
		if (e->kind == MODEL_PARAM && (!only || strcmp(e->name, only) == 0)) {
			model_entry part = range_part(s, e, true);
			dump_assumption(s, out, &part);
		}
	}
	dump_state_ranges(s, out, only, true);
	for (size_t i = 0; i < m->nrelations; i++)
		if (!only || relation_uses(s, &m->relations[i], only))
			dump_relation(s, out, &m->relations[i]);
	for (size_t i = 0; i < m->nentries; i++) {
		model_entry *e = &m->entries[i];
		if (e->kind != MODEL_LET || (only && strcmp(e->name, only) != 0))
			continue;
		text = text_expr(s, e->value);
		xbuf_printf(out, "let %s = %s\n", e->name, text);
		free(text);
	}
	for (size_t i = 0; i < m->nmeasures; i++) {
		model_measure *q = &m->measures[i];
		if (only && strcmp(q->name, only) != 0)
			continue;
		xbuf_printf(out, "measure %s:", q->name);
		bool first = true;
		for (size_t k = 0; k < q->nnoises; k++) {
			if (q->names[k] == m->noises[k])
				continue; /* implied by the correlations */
			text = text_expr(s, q->shift[k]);
			xbuf_printf(out, "%s d%s = d%s + (%s)*dt", first ? "" : ",",
			            expr_sym_name(m->noises[k]), expr_sym_name(q->names[k]), text);
			free(text);
			first = false;
		}
		xbuf_putc(out, '\n');
	}
}

/* The same, every let spelled out: the script must not depend on the lets.
 * False after reporting when an expression is over the output budget (a
 * chain of let can spell out to gigabytes). */
static bool dump_model(session *s, xbuf *out, const char *only, const ast_node *st)
{
	bool keep_abbreviate = s->abbreviate;
	s->abbreviate = false;
	s->text_too_long = false;
	dump_model_body(s, out, only);
	s->abbreviate = keep_abbreviate;
	if (!s->text_too_long)
		return true;
	report_output_budget(s, st, "the model is");
	return false;
}

bool run_show(session *s, const ast_node *st)
{
	model *m = &s->model;
	if (st->text && !model_lookup(m, st->text)) {
		unknown_name(s, &st->loc, st->text);
		return false;
	}
	xbuf script = {0};
	if (!dump_model(s, &script, st->text, st)) {
		xbuf_free(&script);
		return false;
	}
	/* the states' SDEs as they were declared, for the formats that list them */
	stmt_result *sdes = xcalloc(m->nsdes + 1, sizeof *sdes);
	ito_diff *diffs = xcalloc(m->nsdes + 1, sizeof *diffs);
	size_t n = 0;
	bool ok = true;
	for (size_t i = 0; i < m->nsdes && ok; i++) {
		model_sde *sde = &m->sdes[i];
		if (st->text && strcmp(expr_sym_name(sde->state), st->text) != 0)
			continue;
		model_entry *entry = model_lookup(m, expr_sym_name(sde->state));
		if (!state_sde(s, st, entry, sde->stratonovich, &diffs[n])) {
			ok = false;
			break;
		}
		stmt_result *r = &sdes[n];
		r->kind = RESULT_SDE;
		r->origin = s->origin;
		r->line = s->fixed_line ? s->fixed_line : st->loc.first_line;
		r->name = entry->name;
		r->diff = (prn_diff){.dt = diffs[n].dt,
		                     .dw = diffs[n].dw,
		                     .n = diffs[n].n,
		                     .noises = s->measure ? s->measure->names : m->noises,
		                     .stratonovich = sde->stratonovich};
		r->measure = s->measure ? s->measure->name : NULL;
		n++;
	}
	if (ok) {
		pending p;
		result_start(s, &p, RESULT_MODEL, st);
		p.r.script = script.data;
		p.r.sdes = sdes;
		p.r.nsdes = n;
		for (size_t i = 0; i < n; i++)
			sdes[i].statement = p.r.statement;
		ok = result_emit(s, &p, st);
	}
	for (size_t i = 0; i < n; i++)
		ito_diff_free(&diffs[i]);
	free(diffs);
	free(sdes);
	xbuf_free(&script);
	return ok;
}

bool run_save(session *s, const ast_node *st)
{
	if (s->opt.no_files) {
		report(s, SESSION_INPUT, &st->loc, "save is disabled in this session");
		return false;
	}
	xbuf buf = {0};
	if (!dump_model(s, &buf, NULL, st)) {
		xbuf_free(&buf);
		return false;
	}
	errno = 0;
	FILE *file = fopen(st->text, "w");
	if (!file) {
		int error_number = errno ? errno : EIO;
		xbuf_free(&buf);
		report(s, SESSION_INPUT, &st->loc, "cannot write '%s': %s", st->text, strerror(error_number));
		return false;
	}
	fprintf(file, "# itox session saved as a script\n%s", buf.data ? buf.data : "");
	if (s->format != FORMAT_TEXT)
		fprintf(file, "format %s\n", format_names[s->format]);
	errno = 0;
	int error_number = ferror(file) ? (errno ? errno : EIO) : 0;
	if (fclose(file) != 0 && !error_number)
		error_number = errno ? errno : EIO;
	xbuf_free(&buf);
	if (error_number)
		report(s, SESSION_INPUT, &st->loc, "cannot write '%s': %s", st->text, strerror(error_number));
	return !error_number;
}

bool run_load(session *s, const ast_node *st)
{
	if (s->opt.no_files) {
		report(s, SESSION_INPUT, &st->loc, "load is disabled in this session");
		return false;
	}
	if (s->load_depth > 16) {
		report(s, SESSION_LIMIT, &st->loc, "load nested too deeply");
		return false;
	}
	/* a file that cannot be read is an error of this statement, at it */
	xbuf source = {0};
	int error_number = read_source_file(st->text, &source);
	if (error_number) {
		xbuf_free(&source);
		report(s, SESSION_INPUT, &st->loc, "cannot read '%s': %s", st->text, strerror(error_number));
		return false;
	}
	s->load_depth++;
	int before = s->status;
	s->status = SESSION_OK;
	int status = session_run(s, source.data ? source.data : "", source.length, st->text);
	xbuf_free(&source);
	s->load_depth--;
	if (status >= SESSION_INPUT && s->load_depth == 0)
		/* the session puts the model back as it was (run_whole) */
		note(s, &st->loc, "nothing of '%s' was loaded: the model is as it was before", st->text);
	raise_status(s, before);
	return status < SESSION_INPUT;
}

bool run_format(session *s, const ast_node *st)
{
	for (int i = 0; i < 4; i++)
		if (strcmp(st->text, format_names[i]) == 0) {
			if (s->format == FORMAT_C && i != FORMAT_C && s->writers[FORMAT_C]) {
				/* a C unit ends where the script leaves C: the list of
				 * functions its caller supplies comes here, not after the
				 * results of other formats, and C written later is a unit
				 * of its own, with its own prelude */
				writer_finish(s->writers[FORMAT_C]);
				writer_free(s->writers[FORMAT_C]);
				s->writers[FORMAT_C] = NULL;
			}
			s->format = (session_format)i;
			return true;
		}
	report(s, SESSION_INPUT, &st->loc, "unknown format '%s' (text, latex, c or json)", st->text);
	return false;
}
