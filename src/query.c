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
	return prn_expr(s->ctx, e, PRN_TEXT);
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

/* A coefficient that is identically zero as a rational function of its atoms
 * is 0 (the rational normal form decides; the result keeps its own form
 * otherwise, which is usually the shorter).  A normal form over the size
 * limit leaves the coefficient as it is. */
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

static const expr *settle_zero(session *s, const expr *e)
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
	if (ratform_is_zero(s->ctx, e))
		return expr_int(s->ctx, 0);
	if (expr_error(s->ctx) == EXPR_ERR_TOO_LARGE)
		expr_clear_error(s->ctx);
	return e;
}

/* Hand the result to the writer; a format that cannot write it is an error
 * of the statement. */
bool result_emit(session *s, pending *p, const ast_node *st)
{
	p->r.value = settle_zero(s, p->r.value);
	const expr **dw = NULL;
	if (p->r.diff.dw) {
		p->r.diff.dt = settle_zero(s, p->r.diff.dt);
		dw = xcalloc(p->r.diff.n + 1, sizeof *dw);
		for (size_t k = 0; k < p->r.diff.n; k++)
			dw[k] = settle_zero(s, p->r.diff.dw[k]);
		p->r.diff.dw = dw;
	}
	char *error = NULL;
	bool ok = writer_write(current_writer(s), &p->r, &error);
	if (!ok) {
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
	if (!eval_scalar(s, st->a, e))
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
	if (!eval_scalar(s, st->a, &a))
		return false;
	if (st->b && !eval_scalar(s, st->b, &b))
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

bool run_pde(session *s, const ast_node *st)
{
	model *m = &s->model;
	model_entry *entry = model_lookup(m, st->text);
	if (entry && entry->kind != MODEL_FUNC) {
		report(s, SESSION_INPUT, &st->loc, "'%s' is a %s; pde needs an unknown function", st->text,
		       model_kind_name(entry->kind));
		return false;
	}
	for (size_t i = 0; i < st->nitems; i++) {
		const ast_node *arg = st->items[i];
		if (arg->kind != AST_NAME) {
			report(s, SESSION_INPUT, &arg->loc, "the arguments of pde are names (t and states)");
			return false;
		}
		if (strcmp(arg->text, "t") == 0)
			continue;
		model_entry *a = model_lookup(m, arg->text);
		if (!a) {
			unknown_name(s, &arg->loc, arg->text);
			return false;
		}
	}
	if (!entry) {
		if (!declare_function(s, &st->loc, st->text, st->nitems, st->items))
			return false;
		entry = model_lookup(m, st->text);
	} else if (expr_func_arity(entry->sym) != st->nitems) {
		report(s, SESSION_INPUT, &st->loc, "%s was declared with %zu arguments", st->text,
		       expr_func_arity(entry->sym));
		return false;
	}
	const expr *args[EXPR_MAX_FUNC_ARGS];
	for (size_t i = 0; i < st->nitems; i++) {
		value v;
		if (!eval_node(s, st->items[i], &v) || v.is_diff) {
			value_free(&v);
			return false;
		}
		args[i] = v.e;
	}
	const expr *V = expr_fapp(s->ctx, entry->sym, NULL, args);
	const expr *discount = NULL;
	if (st->a && !eval_scalar(s, st->a, &discount))
		return false;
	const expr *lhs = ito_pde(m, s->measure, V, discount);
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
	verify_claim_input in = {0};
	const ast_node *lhs = st->a;
	value left = {0}, right = {0};
	bool ok = true;
	if (lhs->kind == AST_S_D || lhs->kind == AST_S_DRIFT || lhs->kind == AST_S_DIFFUSION ||
	    lhs->kind == AST_S_GENERATOR || lhs->kind == AST_S_QV) {
		const expr *e;
		if (!eval_scalar(s, lhs->a, &e))
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
				if (!eval_scalar(s, lhs->b, &b)) {
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

/* The progress line of a long check: shown on the session's error stream
 * when the session asks for it (the command line does when standard error is
 * a terminal) and the check has run for over a second; erased at the end. */
typedef struct check_progress {
	FILE *err;
	struct timespec start;
	bool shown;
} check_progress;

static double seconds_since(const struct timespec *start)
{
	struct timespec now;
	clock_gettime(CLOCK_MONOTONIC, &now);
	return (double)(now.tv_sec - start->tv_sec) + 1e-9 * (double)(now.tv_nsec - start->tv_nsec);
}

static void show_progress(void *data, double done)
{
	check_progress *pr = data;
	double elapsed = seconds_since(&pr->start);
	if (elapsed < 1)
		return;
	fprintf(pr->err, "\rcheck: %3.0f%% of the paths simulated (%.0f s)", 100 * done, elapsed);
	fflush(pr->err);
	pr->shown = true;
}

static void end_progress(check_progress *pr)
{
	if (pr->shown)
		fprintf(pr->err, "\r%50s\r", "");
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
			report(s, SESSION_INPUT, &c->loc, "'%s' takes %zu argument%s, not %zu", c->text, arity,
			       arity == 1 ? "" : "s", c->nitems);
			return false;
		}
		for (size_t k = 0; k < i; k++)
			if (out[k].func == entry->sym) {
				report(s, SESSION_INPUT, &c->loc, "'%s' is given two concrete forms", c->text);
				return false;
			}
		out[i] = (check_concrete){.func = entry->sym, .nargs = arity, .formals = formals + used};
		for (size_t j = 0; j < arity; j++) {
			const expr *sym = variable_symbol(s, c->items[j], "cannot use", " as an argument here");
			if (!sym)
				return false;
			for (size_t k = 0; k < j; k++)
				if (formals[used + k] == sym) {
					report(s, SESSION_INPUT, &c->items[j]->loc, "the argument '%s' is repeated",
					       c->items[j]->text);
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
	if (!eval_scalar(s, st->a, &f))
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
		if (!numeric_value(s, as->a, &v)) {
			ok = false;
			break;
		}
		if (strcmp(as->text, "T") == 0 && v > 0)
			in.horizon = v;
		else if (strcmp(as->text, "steps") == 0 && v >= 1 && v == (long)v)
			in.steps = (long)v;
		else if (strcmp(as->text, "paths") == 0 && v >= 2 && v == (long)v)
			in.paths = (long)v;
		else if (strcmp(as->text, "seed") == 0 && v >= 0 && v == (unsigned long)v)
			in.seed = (unsigned long)v;
		else {
			report(s, SESSION_INPUT, &as->loc,
			       "over takes T > 0, steps >= 1, paths >= 2 (integers), seed and "
			       "scheme=euler|milstein");
			ok = false;
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
