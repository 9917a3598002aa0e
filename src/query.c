/* query.c - queries, claims and checks, and their results.
 *
 * d, drift, diffusion, generator, qv, pde, sde and bare expressions call the
 * engine under the current measure; claim and check call verify and the
 * numerical check.  Each makes a result value (result.h) and hands it to the
 * writer of the current format.
 */
#include "session-internal.h"

#include "expr-internal.h"
#include "ratform.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "crosscheck.h"
#include "print.h"
#include "verify.h"
#include "xalloc.h"

/* ------------------------------------------------------------------ results */

/* Every result goes to the writer of the current format (writer.h) as a
 * result value; the format is decided there and nowhere else. */

static writer *current_writer(session *s)
{
	static const writer_class *const classes[] = {&writer_text, &writer_latex, &writer_c, &writer_json};
	if (!s->writers[s->format])
		s->writers[s->format] = writer_new(classes[s->format], s->opt.out, s->ctx, &s->model,
		                                   s->opt.standalone && s->format == FORMAT_LATEX);
	return s->writers[s->format];
}

/* Plain text of an expression, every let spelled out (show, save, messages). */
char *text_expr(session *s, const expr *e)
{
	size_t budget = session_output_limit(s);
	if (prn_length_estimate(e, NULL, budget + 1) > budget) {
		s->text_too_long = true; /* show and save refuse; a message shows the mark */
		return xstrdup("(too long to write out)");
	}
	return prn_expr(s->ctx, e, PRN_TEXT);
}

/* The error of a result over the output budget. */
void report_output_budget(session *s, const ast_node *st, const char *what)
{
	report(s, SESSION_LIMIT, &st->loc,
	       "%s too long to print (written out term by term it is over the output budget of "
	       "%zu bytes; raise it with --output-limit=BYTES)",
	       what, session_output_limit(s));
}

/* The source text of a node, for C comments. */
static char *node_text(session *s, const ast_node *n)
{
	if (!s->source || n->loc.first_line != n->loc.last_line)
		return xstrdup("query");
	const char *line;
	size_t length;
	source_line(s, n->loc.first_line, &line, &length);
	size_t from = (size_t)(n->loc.first_column - 1), to = (size_t)n->loc.last_column;
	if (to > length)
		to = length;
	if (from >= to)
		return xstrdup("query");
	char *text = xstrndup(line + from, to - from);
	for (char *c = text; *c; c++)
		if (*c == '*' && c[1] == '/')
			c[1] = ' ';
	return text;
}

void result_start(session *s, pending *p, result_kind kind, const ast_node *st)
{
	memset(p, 0, sizeof *p);
	model *m = &s->model;
	p->r.kind = kind;
	p->r.origin = s->origin;
	p->r.line = s->fixed_line ? s->fixed_line : st->loc.first_line;
	p->statement = node_text(s, st);
	p->r.statement = p->statement;
	p->r.measure = s->measure ? s->measure->name : NULL;
	p->r.diff.noises = s->measure ? s->measure->names : m->noises;
	if (!s->abbreviate || m->nentries == 0)
		return;
	p->nodes = xmalloc(m->nentries * sizeof *p->nodes);
	p->names = xmalloc(m->nentries * sizeof *p->names);
	p->used = xcalloc(m->nentries, sizeof *p->used);
	size_t n = 0;
	for (size_t i = 0; i < m->nentries; i++) {
		model_entry *entry = &m->entries[i];
		if (entry->kind != MODEL_LET || !entry->value)
			continue;
		expr_kind kind_of = expr_kind_of(entry->value);
		if (kind_of == EXPR_NUM || kind_of == EXPR_SYM)
			continue;
		p->nodes[n] = entry->value;
		p->names[n] = entry->name;
		n++;
	}
	p->abbrev = (prn_abbrev){.n = n, .nodes = p->nodes, .names = p->names, .used = p->used};
	if (n)
		p->r.abbrev = &p->abbrev;
}

static void result_set_diff(pending *p, const ito_diff *d)
{
	p->r.diff.dt = d->dt;
	p->r.diff.dw = d->dw;
	p->r.diff.n = d->n;
}

/* Is e a polynomial in its atoms (every power a nonnegative integer, function
 * arguments not looked into)?  Products over sums are expanded, so such an e
 * is zero only if it is 0 already: the normal form has nothing to find. */
static bool polynomial_in_atoms(const expr *e, expr_map *seen)
{
	if (expr_map_get(seen, e))
		return true;
	expr_map_put(seen, e, e);
	switch (expr_kind_of(e)) {
	case EXPR_ADD:
		for (size_t i = 0; i < expr_nops(e); i++)
			if (!polynomial_in_atoms(expr_op(e, i), seen))
				return false;
		return true;
	case EXPR_MUL:
		for (size_t i = 0; i < expr_nops(e); i++) {
			const expr *x = expr_mul_exponent(e, i);
			if (!expr_is_integer(x) || mpq_sgn(expr_num_value(x)) < 0 ||
			    !polynomial_in_atoms(expr_mul_base(e, i), seen))
				return false;
		}
		return true;
	default:
		return true;
	}
}

/* A coefficient goes through the rational normal form: one that is
 * identically zero as a rational function of its atoms becomes 0, and the
 * normal form replaces the coefficient where it is smaller (common
 * denominators cancelled, 1/(2 + sin(X))^4 kept factored); otherwise the
 * coefficient keeps its own form, which is usually the shorter.  A normal
 * form over the size limit leaves the coefficient as it is. */
static const expr *settle(session *s, const expr *e)
{
	/* a bound on the work: a large result is left in its own form (the
	 * normal form of a 50,000-term sum would take longer than the query) */
	enum { SETTLE_MAX_SIZE = 20000 };
	if (!e || (expr_kind_of(e) != EXPR_ADD && expr_kind_of(e) != EXPR_MUL))
		return e;
	expr_map seen = {0};
	bool polynomial = polynomial_in_atoms(e, &seen);
	expr_map_free(&seen);
	if (polynomial || expr_size(e) > SETTLE_MAX_SIZE)
		return e;
	const expr *r = ratform_normal(s->ctx, e);
	if (!r) {
		if (expr_error(s->ctx) == EXPR_ERR_TOO_LARGE)
			expr_clear_error(s->ctx);
		return e;
	}
	return expr_size(r) < expr_size(e) ? r : e;
}

/* Is the result short enough to print?  The estimate of its length written
 * out is taken before any printing: a derivative of a deeply nested
 * expression can be a small graph of shared nodes that writes out to
 * hundreds of megabytes, and building its display would take gigabytes. */
static bool within_output_budget(session *s, const stmt_result *r, const ast_node *st)
{
	size_t budget = session_output_limit(s), length = 0;
	const expr *parts[] = {r->of, r->of2, r->value, r->diff.dt, r->claim ? r->claim->difference : NULL};
	for (size_t i = 0; i < sizeof parts / sizeof *parts; i++)
		length += prn_length_estimate(parts[i], r->abbrev, budget + 1);
	for (size_t k = 0; r->diff.dw && k < r->diff.n && length <= budget; k++)
		length += prn_length_estimate(r->diff.dw[k], r->abbrev, budget + 1);
	if (length <= budget)
		return true;
	report_output_budget(s, st, "result");
	return false;
}

/* Hand the result to the writer; a format that cannot write it is an error
 * of the statement. */
bool result_emit(session *s, pending *p, const ast_node *st)
{
	p->r.value = settle(s, p->r.value);
	const expr **dw = NULL;
	if (p->r.diff.dw) {
		p->r.diff.dt = settle(s, p->r.diff.dt);
		dw = xcalloc(p->r.diff.n + 1, sizeof *dw);
		for (size_t k = 0; k < p->r.diff.n; k++)
			dw[k] = settle(s, p->r.diff.dw[k]);
		p->r.diff.dw = dw;
	}
	char *error = NULL;
	/* the time limit or an interrupt while settling: the result is not
	 * printed half settled */
	bool ok = !engine_failed(s, &st->loc) && within_output_budget(s, &p->r, st);
	if (ok)
		ok = writer_write(current_writer(s), &p->r, &error);
	if (!ok && error) {
		report(s, SESSION_INPUT, &st->loc, "%s", error);
		free(error);
	}
	free(dw);
	free(p->nodes);
	free(p->names);
	free(p->used);
	free(p->statement);
	return ok;
}

/* A differential result: d EXPR (of), a differential written out or a product. */
static bool output_differential(session *s, const ast_node *st, result_kind kind, const expr *of,
                                const ito_diff *d)
{
	pending p;
	result_start(s, &p, kind, st);
	p.r.of = of;
	p.r.value = d->dt;
	result_set_diff(&p, d);
	return result_emit(s, &p, st);
}

/* A single expression result: value, drift, generator, qv. */
static bool output_scalar(session *s, const ast_node *st, result_kind kind, const expr *of, const expr *of2,
                          const expr *e)
{
	pending p;
	result_start(s, &p, kind, st);
	p.r.of = of;
	p.r.of2 = of2;
	p.r.value = e;
	return result_emit(s, &p, st);
}

/* ------------------------------------------------------------------ queries */

/* The expression of a query (st->a) and its differential under the current
 * measure; false after reporting. */
static bool query_differential(session *s, const ast_node *st, const expr **e, ito_diff *d)
{
	if (!eval_process(s, st->a, e))
		return false;
	ito_d(&s->model, s->measure, *e, d);
	return !differential_failed(s, d, &st->loc);
}

bool run_part(session *s, const ast_node *st)
{
	const expr *e;
	ito_diff d;
	if (!query_differential(s, st, &e, &d))
		return false;
	bool ok;
	if (st->kind == AST_S_D) {
		ok = output_differential(s, st, RESULT_DIFFERENTIAL, e, &d);
	} else if (st->kind == AST_S_DIFFUSION) {
		ito_diff only = d;
		only.dt = expr_int(s->ctx, 0);
		ok = output_differential(s, st, RESULT_DIFFUSION, e, &only);
	} else {
		ok = output_scalar(s, st, st->kind == AST_S_DRIFT ? RESULT_DRIFT : RESULT_GENERATOR, e, NULL,
		                   d.dt);
	}
	ito_diff_free(&d);
	return ok;
}

bool run_qv(session *s, const ast_node *st)
{
	const expr *a, *b = NULL;
	if (!eval_process(s, st->a, &a))
		return false;
	if (st->b && !eval_process(s, st->b, &b))
		return false;
	ito_diff da, db;
	ito_d(&s->model, s->measure, a, &da);
	if (differential_failed(s, &da, &st->a->loc))
		return false;
	if (b) {
		ito_d(&s->model, s->measure, b, &db);
		if (differential_failed(s, &db, &st->b->loc)) {
			ito_diff_free(&da);
			return false;
		}
	}
	const expr *rate = ito_covariation(&s->model, &da, b ? &db : &da);
	ito_diff_free(&da);
	if (b)
		ito_diff_free(&db);
	if (!rate) {
		engine_failed(s, &st->loc);
		return false;
	}
	return output_scalar(s, st, RESULT_QV, a, b, rate);
}

/* Is the argument name a variable of the equation: a state (forward, pde)
 * or a noise (pde: a function of a Brownian motion has a backward equation)? */
static bool equation_variable(const model_entry *arg, bool noises)
{
	if (!arg || arg->pending_state)
		return false;
	return arg->kind == MODEL_STATE || (noises && arg->kind == MODEL_NOISE);
}

/* The model's states, "X, Y", for a message. New string. */
static char *state_names(const model *m)
{
	xbuf names = {0};
	for (size_t i = 0; i < m->nsdes; i++)
		xbuf_printf(&names, "%s%s", i ? ", " : "", expr_sym_name(m->sdes[i].state));
	return names.data ? names.data : xstrdup("");
}

/* The arguments of pde or forward are t and states (and, for pde, noises),
 * each once, and forward names at least one state: false after a message. */
static bool equation_arguments(session *s, const ast_node *st, const char *what)
{
	model *m = &s->model;
	bool forward = strcmp(what, "forward") == 0;
	size_t nstates = 0;
	for (size_t i = 0; i < st->nitems; i++) {
		const ast_node *arg = st->items[i];
		if (arg->kind != AST_NAME) {
			report(s, SESSION_INPUT, &arg->loc, "the arguments of %s are names (t and states)",
			       what);
			return false;
		}
		for (size_t j = 0; j < i; j++)
			if (strcmp(st->items[j]->text, arg->text) == 0) {
				report(s, SESSION_INPUT, &arg->loc, "argument '%s' is repeated", arg->text);
				return false;
			}
		if (strcmp(arg->text, "t") == 0)
			continue;
		model_entry *entry = model_lookup(m, arg->text);
		if (!entry) {
			unknown_name(s, &arg->loc, arg->text);
			return false;
		}
		if (!equation_variable(entry, !forward)) {
			char *states = state_names(m);
			report(s, SESSION_INPUT, &arg->loc,
			       "'%s' is a %s, not a state: the arguments of %s %s(...) are t and %s (the "
			       "model's states: %s)",
			       arg->text,
			       entry->pending_state ? "state without its SDE yet"
			                            : model_kind_name(entry->kind),
			       what, st->text,
			       forward ? "the states whose density it is" : "states or noises",
			       *states ? states : "none");
			free(states);
			return false;
		}
		nstates += entry->kind == MODEL_STATE;
	}
	if (forward && nstates == 0) {
		char *states = state_names(m);
		xbuf call = {0};
		for (size_t i = 0; i < st->nitems; i++)
			xbuf_printf(&call, "%s%s", i ? ", " : "", st->items[i]->text);
		report(s, SESSION_INPUT, &st->loc,
		       "forward %s(%s) names no state: list t and the states whose density %s is "
		       "(the model's states: %s)",
		       st->text, call.data, st->text, *states ? states : "none");
		xbuf_free(&call);
		free(states);
		return false;
	}
	return true;
}

/* An unknown function declared by an earlier pde with other arguments, and
 * used by nothing, is declared again (a query does not fix a name's arity
 * for the rest of the session). */
static bool redeclarable(session *s, model_entry *entry, size_t nargs, ast_node *const *args)
{
	if (!entry->implicit)
		return false;
	bool same = expr_func_arity(entry->sym) == nargs;
	for (size_t i = 0; same && i < nargs; i++)
		same = strcmp(expr_func_arg_name(entry->sym, i), args[i]->text) == 0;
	if (same)
		return false;
	size_t count;
	char *users = declaration_users(s, entry, &count);
	free(users);
	return count == 0;
}

/* Its arguments are t and declared names, and the equation must close in
 * them (ito_unclosed). */
const expr *equation_unknown(session *s, const ast_node *st, const char *what, const expr *discount)
{
	model *m = &s->model;
	model_entry *entry = model_lookup(m, st->text);
	if (entry && entry->kind != MODEL_FUNC) {
		report(s, SESSION_INPUT, &st->loc, "'%s' is a %s; %s needs an unknown function", st->text,
		       model_kind_name(entry->kind), what);
		return NULL;
	}
	if (!equation_arguments(s, st, what))
		return NULL;
	const expr *args[EXPR_MAX_FUNC_ARGS];
	for (size_t i = 0; i < st->nitems; i++) {
		const ast_node *arg = st->items[i];
		if (i >= EXPR_MAX_FUNC_ARGS) {
			report(s, SESSION_INPUT, &arg->loc, "a function takes at most %d arguments",
			       EXPR_MAX_FUNC_ARGS);
			return NULL;
		}
		value v;
		if (!eval_node(s, arg, &v))
			return NULL;
		if (v.is_diff) {
			value_free(&v);
			report(s, SESSION_INPUT, &arg->loc, "the arguments of %s are names (t and states)",
			       what);
			return NULL;
		}
		args[i] = v.e;
	}
	const expr *driven;
	const expr *missing = ito_unclosed(m, s->measure, st->nitems, args, discount, &driven);
	if (missing) {
		const char *kind = model_sde_of(m, missing) ? "state" : "noise";
		xbuf call = {0};
		for (size_t i = 0; i < st->nitems; i++)
			xbuf_printf(&call, "%s%s", i ? ", " : "", st->items[i]->text);
		char *because =
		        driven ? xasprintf("the SDE of %s", expr_sym_name(driven)) : xstrdup("the discount");
		report(s, SESSION_INPUT, &st->loc,
		       "%s %s(%s) does not close: %s depends on the %s %s, which is not an argument of "
		       "%s; write %s(%s, %s)",
		       what, st->text, call.data, because, kind, expr_sym_name(missing), st->text, st->text,
		       call.data, expr_sym_name(missing));
		free(because);
		xbuf_free(&call);
		return NULL;
	}
	if (entry && redeclarable(s, entry, st->nitems, st->items)) {
		const expr *sym = entry->sym;
		model_forget(m, entry);
		expr_func_declare(s->ctx, sym, 0, NULL);
		entry = NULL;
	}
	if (!entry) {
		if (!declare_function(s, &st->loc, st->text, st->nitems, st->items))
			return NULL;
		entry = model_lookup(m, st->text);
		entry->implicit = true;
	} else if (expr_func_arity(entry->sym) != st->nitems) {
		xbuf declared = {0};
		for (size_t i = 0; i < expr_func_arity(entry->sym); i++)
			xbuf_printf(&declared, "%s%s", i ? ", " : "", expr_func_arg_name(entry->sym, i));
		size_t count = 0;
		char *users = entry->implicit ? declaration_users(s, entry, &count) : NULL;
		char *because = users ? xasprintf(" (by an earlier pde; %s %s it)", users,
		                                  count == 1 ? "uses" : "use")
		                      : xstrdup("");
		report(s, SESSION_INPUT, &st->loc,
		       "%s was declared as %s(%s)%s, with %zu argument%s; %s needs a new name for a "
		       "function of %zu argument%s",
		       st->text, st->text, declared.data ? declared.data : "", because,
		       expr_func_arity(entry->sym), expr_func_arity(entry->sym) == 1 ? "" : "s", what,
		       st->nitems, st->nitems == 1 ? "" : "s");
		free(users);
		free(because);
		xbuf_free(&declared);
		return NULL;
	}
	return expr_fapp(s->ctx, entry->sym, NULL, args);
}

bool run_pde(session *s, const ast_node *st)
{
	const expr *discount = NULL;
	if (st->a && !eval_scalar(s, st->a, &discount))
		return false;
	const expr *V = equation_unknown(s, st, "pde", discount);
	if (!V)
		return false;
	const expr *lhs = ito_pde(&s->model, s->measure, V, discount);
	if (!lhs || engine_failed(s, &st->loc))
		return false;
	pending p;
	result_start(s, &p, RESULT_PDE, st);
	p.r.name = st->text;
	p.r.value = lhs;
	return result_emit(s, &p, st);
}

/* The SDE of a state in either convention, under the current measure. */
bool state_sde(session *s, const ast_node *st, model_entry *entry, bool stratonovich, ito_diff *d)
{
	model *m = &s->model;
	model_sde *sde = model_sde_of(m, entry->sym);
	ito_dynamics(m, s->measure, entry->sym, d);
	if (stratonovich && !ito_diff_failed(d)) {
		/* the Stratonovich drift under the measure: shift applies to both conventions alike */
		const expr *shift = expr_sub(s->ctx, d->dt, ito_state_ito_drift(m, sde));
		d->dt = expr_add(s->ctx, ito_state_stratonovich_drift(m, sde), shift);
	}
	if (differential_failed(s, d, &st->loc))
		return false;
	return true;
}

/* sde X [stratonovich]: a state's SDE under the current measure. */
bool run_sde_display(session *s, const ast_node *st)
{
	bool stratonovich = st->kind == AST_S_SDE_STRAT;
	model_entry *entry = lookup_kind(s, &st->loc, st->text, MODEL_STATE);
	if (!entry)
		return false;
	ito_diff d;
	if (!state_sde(s, st, entry, stratonovich, &d))
		return false;
	pending p;
	result_start(s, &p, RESULT_SDE, st);
	p.r.name = st->text;
	result_set_diff(&p, &d);
	p.r.diff.stratonovich = stratonovich;
	bool ok = result_emit(s, &p, st);
	ito_diff_free(&d);
	return ok;
}

bool run_expr_statement(session *s, const ast_node *st)
{
	value v;
	if (!eval_node(s, st->a, &v))
		return false;
	if (engine_failed(s, &st->loc)) {
		value_free(&v);
		return false;
	}
	bool ok;
	if (!v.is_diff) {
		ok = output_scalar(s, st, RESULT_VALUE, NULL, NULL, v.e);
	} else {
		bool product = true;
		for (size_t k = 0; k < v.d.n; k++)
			product &= expr_is_zero(v.d.dw[k]);
		ok = output_differential(s, st, product ? RESULT_PRODUCT : RESULT_DIFFERENTIAL, NULL, &v.d);
	}
	value_free(&v);
	return ok;
}

/* ------------------------------------------------------------------ claim and check */

bool run_claim(session *s, const ast_node *st)
{
	verify_claim_input in = {.points = s->opt.claim_points};
	const ast_node *lhs = st->a;
	value left = {0}, right = {0};
	bool ok = true;
	if (lhs->kind == AST_S_D || lhs->kind == AST_S_DRIFT || lhs->kind == AST_S_DIFFUSION ||
	    lhs->kind == AST_S_GENERATOR || lhs->kind == AST_S_QV) {
		const expr *e;
		if (!eval_process(s, lhs->a, &e))
			return false;
		ito_diff d;
		ito_d(&s->model, s->measure, e, &d);
		if (differential_failed(s, &d, &lhs->loc))
			return false;
		if (lhs->kind == AST_S_D || lhs->kind == AST_S_DIFFUSION) {
			if (lhs->kind == AST_S_DIFFUSION)
				d.dt = expr_int(s->ctx, 0);
			left.is_diff = true;
			left.d = d;
		} else if (lhs->kind == AST_S_QV) {
			const expr *rate = ito_covariation(&s->model, &d, &d);
			if (lhs->b) {
				const expr *b;
				ito_diff db;
				if (!eval_process(s, lhs->b, &b)) {
					ito_diff_free(&d);
					return false;
				}
				ito_d(&s->model, s->measure, b, &db);
				if (differential_failed(s, &db, &lhs->b->loc)) {
					ito_diff_free(&d);
					return false;
				}
				rate = ito_covariation(&s->model, &d, &db);
				ito_diff_free(&db);
			}
			left.e = rate;
			ito_diff_free(&d);
		} else {
			left.e = d.dt;
			ito_diff_free(&d);
		}
	} else if (!eval_node(s, lhs, &left)) {
		return false;
	}
	if (!eval_node(s, st->b, &right)) {
		value_free(&left);
		return false;
	}
	if (left.is_diff != right.is_diff) {
		report(s, SESSION_INPUT, &st->b->loc,
		       left.is_diff ? "the left side is a differential, the right side is not"
		                    : "the right side is a differential, the left side is not");
		ok = false;
	}
	if (ok && engine_failed(s, &st->loc))
		ok = false;
	if (ok) {
		in.is_diff = left.is_diff;
		if (left.is_diff) {
			in.nparts = left.d.n + 1;
			in.lhs = xcalloc(in.nparts, sizeof *in.lhs);
			in.rhs = xcalloc(in.nparts, sizeof *in.rhs);
			in.lhs[0] = left.d.dt;
			in.rhs[0] = right.d.dt;
			for (size_t k = 0; k < left.d.n; k++) {
				in.lhs[k + 1] = left.d.dw[k];
				in.rhs[k + 1] = k < right.d.n ? right.d.dw[k] : expr_int(s->ctx, 0);
			}
		} else {
			in.nparts = 1;
			in.lhs = xcalloc(1, sizeof *in.lhs);
			in.rhs = xcalloc(1, sizeof *in.rhs);
			in.lhs[0] = left.e;
			in.rhs[0] = right.e;
		}
		verify_result result;
		verify_claim(s->ctx, &s->model, &in, s->opt.seed + s->claim_count++, &result);
		pending p;
		result_start(s, &p, RESULT_CLAIM, st);
		p.r.claim = &result;
		if (!in.is_diff)
			p.r.diff.noises = NULL; /* a claim of expressions has no parts to name */
		else
			p.r.diff.n = left.d.n;
		ok = result_emit(s, &p, st);
		if (!result.holds)
			raise_status(s, SESSION_FAILED);
		verify_result_free(&result);
		free(in.lhs);
		free(in.rhs);
	}
	value_free(&left);
	value_free(&right);
	return ok;
}

/* One numeric option of check (T, steps, paths, seed), range-checked before
 * it is converted: a double out of range of the integer type is undefined
 * behaviour (C11 6.3.1.4).  A count or a seed is a whole number a double
 * holds exactly (at most 2^53); a count that is too much work is the
 * simulation's limit (steps*paths, exit status 3), not an error here. */
static bool check_option(session *s, const ast_node *as, double v, check_input *in)
{
	const double max_whole = 9007199254740992.0; /* 2^53 */
	const char *name = as->text;
	bool whole = v == floor(v) && v <= max_whole;
	if (strcmp(name, "T") == 0 && v > 0) {
		in->horizon = v;
	} else if (strcmp(name, "steps") == 0 && whole && v >= 1) {
		in->steps = (long)v;
	} else if (strcmp(name, "paths") == 0 && whole && v >= 2) {
		in->paths = (long)v;
	} else if (strcmp(name, "seed") == 0 && whole && v >= 0) {
		in->seed = (unsigned long)v;
	} else if (strcmp(name, "T") == 0) {
		report(s, SESSION_INPUT, &as->a->loc, "T must be a positive number (got %.15g)", v);
		return false;
	} else if (strcmp(name, "steps") == 0 || strcmp(name, "paths") == 0 || strcmp(name, "seed") == 0) {
		int least = strcmp(name, "steps") == 0 ? 1 : strcmp(name, "paths") == 0 ? 2 : 0;
		report(s, SESSION_INPUT, &as->a->loc,
		       "%s must be a whole number from %d to 2^53 = 9007199254740992 (got %.15g)", name,
		       least, v);
		return false;
	} else {
		report(s, SESSION_INPUT, &as->loc,
		       "over takes T > 0, steps >= 1, paths >= 2 (integers), seed and "
		       "scheme=euler|milstein");
		return false;
	}
	return true;
}

/* The progress line of a long check: shown on the session's error stream
 * when the session asks for it (the command line does when standard error is
 * a terminal) and the check has run for over a second; erased at the end. */
typedef struct check_progress {
	FILE *err;
	struct timespec start;
	double last; /* seconds when the line was last written */
	bool shown;
} check_progress;

static double seconds_since(const struct timespec *start)
{
	struct timespec now;
	clock_gettime(CLOCK_MONOTONIC, &now);
	return (double)(now.tv_sec - start->tv_sec) + 1e-9 * (double)(now.tv_nsec - start->tv_nsec);
}

static void show_progress(void *data, double done, long steps)
{
	check_progress *pr = data;
	double elapsed = seconds_since(&pr->start);
	if (elapsed < 1 || (pr->shown && elapsed - pr->last < 0.25))
		return;
	pr->last = elapsed;
	fprintf(pr->err, "\rcheck: %3.0f%% of the paths simulated on %ld steps (%.0f s)", 100 * done, steps,
	        elapsed);
	fflush(pr->err);
	pr->shown = true;
}

static void end_progress(check_progress *pr)
{
	if (pr->shown)
		fprintf(pr->err, "\r%70s\r", "");
}

/* The concrete forms of `check ... where g(x, y) = body, ...` (formals in
 * one array, nargs apiece); false after a message. */
static bool lower_concretes(session *s, const ast_node *list, check_concrete *out, const expr **formals)
{
	size_t used = 0;
	for (size_t i = 0; list && i < list->nitems; i++) {
		const ast_node *c = list->items[i];
		model_entry *entry = lookup_kind(s, &c->loc, c->text, MODEL_FUNC);
		if (!entry)
			return false;
		size_t arity = expr_func_arity(entry->sym);
		if (c->nitems != arity) {
			report(s, SESSION_INPUT, &c->loc, "'%s' takes %zu argument%s, not %zu", c->text,
			       arity, arity == 1 ? "" : "s", c->nitems);
			return false;
		}
		for (size_t k = 0; k < i; k++)
			if (out[k].func == entry->sym) {
				report(s, SESSION_INPUT, &c->loc, "'%s' is given two concrete forms",
				       c->text);
				return false;
			}
		out[i] = (check_concrete){.func = entry->sym, .nargs = arity, .formals = formals + used};
		for (size_t j = 0; j < arity; j++) {
			const expr *sym =
			        variable_symbol(s, c->items[j], "cannot use", " as an argument here");
			if (!sym)
				return false;
			for (size_t k = 0; k < j; k++)
				if (formals[used + k] == sym) {
					report(s, SESSION_INPUT, &c->items[j]->loc,
					       "the argument '%s' is repeated", c->items[j]->text);
					return false;
				}
			formals[used + j] = sym;
		}
		used += arity;
		if (!eval_scalar(s, c->a, &out[i].body))
			return false;
	}
	return true;
}

bool run_check(session *s, const ast_node *st)
{
	model *m = &s->model;
	const expr *f;
	if (!eval_process(s, st->a, &f))
		return false;
	check_input in = {.m = m,
	                  .q = s->measure,
	                  .f = f,
	                  .horizon = 1,
	                  .steps = 1000,
	                  .paths = 20000,
	                  .seed = s->opt.seed,
	                  .verbose = st->verbose,
	                  .max_work = s->opt.max_simulation};
	ito_diff engine;
	ito_d(m, s->measure, f, &engine);
	if (differential_failed(s, &engine, &st->loc))
		return false;
	value hand = {0};
	bool ok = true;
	if (ok && st->b) {
		ok = eval_node(s, st->b, &hand);
		if (ok && !hand.is_diff) {
			report(s, SESSION_INPUT, &st->b->loc,
			       "expected a differential (terms in dt and the noises)");
			ok = false;
		}
		in.hand_derived = true;
	}
	in.d = st->b ? &hand.d : &engine;
	const expr **symbols = xcalloc(st->nitems + 1, sizeof *symbols);
	double *values = xcalloc(st->nitems + 1, sizeof *values);
	for (size_t i = 0; i < st->nitems && ok; i++) {
		const ast_node *as = st->items[i];
		const expr *sym = variable_symbol(s, as, "cannot set", " at a point");
		if (!sym) {
			ok = false;
			break;
		}
		symbols[in.nvalues] = sym;
		ok = numeric_value(s, as->a, &values[in.nvalues]);
		in.nvalues++;
	}
	for (size_t i = 0; i < st->nextra && ok; i++) {
		const ast_node *as = st->extra[i];
		double v = 0;
		if (strcmp(as->text, "scheme") == 0) {
			if (as->a->kind == AST_NAME && strcmp(as->a->text, "milstein") == 0)
				in.milstein = true;
			else if (as->a->kind == AST_NAME && strcmp(as->a->text, "euler") == 0)
				in.milstein = false;
			else {
				report(s, SESSION_INPUT, &as->a->loc, "scheme is euler or milstein");
				ok = false;
			}
			continue;
		}
		if (!numeric_value(s, as->a, &v) || !check_option(s, as, v, &in)) {
			ok = false;
			break;
		}
	}
	in.symbols = symbols;
	in.values = values;
	size_t nconcrete = st->c ? st->c->nitems : 0, nformals = 0;
	for (size_t i = 0; i < nconcrete; i++)
		nformals += st->c->items[i]->nitems;
	check_concrete *concrete = xcalloc(nconcrete + 1, sizeof *concrete);
	const expr **formals = xcalloc(nformals + 1, sizeof *formals);
	ok = ok && lower_concretes(s, st->c, concrete, formals);
	in.nconcrete = nconcrete;
	in.concrete = concrete;
	if (ok) {
		check_result result;
		check_progress progress = {.err = s->opt.err};
		if (s->opt.progress && s->opt.err) {
			clock_gettime(CLOCK_MONOTONIC, &progress.start);
			in.progress = show_progress;
			in.progress_data = &progress;
		}
		check_run(s->ctx, &in, &result);
		end_progress(&progress);
		if (result.error && expr_error(s->ctx) == EXPR_ERR_INTERRUPTED) {
			engine_failed(s, &st->loc); /* says whether it was Ctrl-C or the time limit */
			ok = false;
		} else if (result.error) {
			report(s, result.limit_hit ? SESSION_LIMIT : SESSION_INPUT, &st->loc, "%s",
			       result.error);
			ok = false;
		} else {
			pending p;
			result_start(s, &p, RESULT_CHECK, st);
			p.r.check = &result;
			ok = result_emit(s, &p, st);
		}
		if (ok && !result.consistent)
			raise_status(s, SESSION_FAILED);
		check_result_free(&result);
	}
	free(symbols);
	free(values);
	free(concrete);
	free(formals);
	ito_diff_free(&engine);
	value_free(&hand);
	return ok;
}
