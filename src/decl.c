/* decl.c - declarations: param, assume, noise, corr, func, let and SDEs
 * (measure and state: decl-change.c).
 *
 * Each declaration checks its names, evaluates its expressions and then
 * changes the model; one that fails leaves the model as it was.  The
 * mathematics of a change of measure and of a change of state is in
 * measure.c and chstate.c.
 */
#include "session-internal.h"

#include <stdlib.h>
#include <string.h>

#include "chstate.h"
#include "measure.h"
#include "print.h"
#include "rat.h"
#include "sim.h"
#include "xalloc.h"

/* Is name (or name without its leading d) a noise that replaces another
 * under a measure?  Results under that measure are written in it, so a
 * parameter, state or noise of the same name would read as that noise.
 * True after a message. */
static bool measure_noise_clash(session *s, const ast_loc *loc, const char *name)
{
	const model *m = &s->model;
	for (size_t i = 0; i < m->nmeasures; i++) {
		const model_measure *q = &m->measures[i];
		for (size_t k = 0; k < q->nnoises; k++) {
			if (q->names[k] == m->noises[k])
				continue; /* a noise not listed keeps its name */
			const char *noise = expr_sym_name(q->names[k]);
			bool differential = name[0] == 'd' && strcmp(name + 1, noise) == 0;
			if (strcmp(name, noise) != 0 && !differential)
				continue;
			if (differential)
				report(s, SESSION_INPUT, loc,
				       "'%s' would be ambiguous: it is the differential of %s, the "
				       "noise that replaces %s under the measure %s",
				       name, noise, expr_sym_name(m->noises[k]), q->name);
			else
				report(s, SESSION_INPUT, loc,
				       "'%s' is already the noise that replaces %s under the measure %s; "
				       "choose another name",
				       name, expr_sym_name(m->noises[k]), q->name);
			return true;
		}
	}
	return false;
}

bool check_new_name(session *s, const ast_loc *loc, const char *name, bool allow_arg)
{
	if (strcmp(name, "t") == 0 || strcmp(name, "dt") == 0) {
		report(s, SESSION_INPUT, loc, "'%s' is reserved (time and its differential)", name);
		return false;
	}
	if (expr_is_function_spelling(name)) {
		/* a user's phi would silently become the normal density in results,
		 * and a user's sqrt would never be called */
		report(s, SESSION_INPUT, loc, "'%s' is a built-in function; choose another name (such as '%s1')",
		       name, name);
		return false;
	}
	model_entry *entry = model_lookup(&s->model, name);
	if (entry && !(allow_arg && entry->kind == MODEL_ARG)) {
		report(s, SESSION_INPUT, loc, "'%s' is already declared as a %s", name,
		       model_kind_name(entry->kind));
		return false;
	}
	/* dW beside a noise W (or a state W) would be ambiguous */
	if (name[0] == 'd' && name[1]) {
		model_entry *base = model_lookup(&s->model, name + 1);
		if (base && (base->kind == MODEL_NOISE || base->kind == MODEL_STATE)) {
			report(s, SESSION_INPUT, loc,
			       "'%s' would be ambiguous: it is the differential of the %s '%s'", name,
			       model_kind_name(base->kind), name + 1);
			return false;
		}
	}
	char *dname = xasprintf("d%s", name);
	model_entry *clash = model_lookup(&s->model, dname);
	free(dname);
	if (clash) {
		report(s, SESSION_INPUT, loc, "'%s' would make the name 'd%s' (a %s) ambiguous", name, name,
		       model_kind_name(clash->kind));
		return false;
	}
	return !measure_noise_clash(s, loc, name);
}

/* May name be declared as a kind (a let or a measure)?  A new name may; so
 * may one of that kind (declared again: a let redefined, load after save),
 * and a function's argument name may become a let. */
bool may_declare(session *s, const ast_loc *loc, const char *name, model_kind kind)
{
	model_entry *entry = model_lookup(&s->model, name);
	if (!entry)
		return check_new_name(s, loc, name, false);
	if (entry->kind == kind || (kind == MODEL_LET && entry->kind == MODEL_ARG && !entry->pending_state))
		return true;
	report(s, SESSION_INPUT, loc, "'%s' is already declared as a %s", name, model_kind_name(entry->kind));
	return false;
}

static int sign_from_bound(const expr *bound, ast_rel op)
{
	if (!expr_is_num(bound))
		return EXPR_SIGN_UNKNOWN;
	int sgn = mpq_sgn(expr_num_value(bound));
	switch (op) {
	case REL_GT:
		return sgn >= 0 ? EXPR_SIGN_POS : EXPR_SIGN_UNKNOWN;
	case REL_GE:
		return sgn > 0 ? EXPR_SIGN_POS : sgn == 0 ? EXPR_SIGN_NONNEG : EXPR_SIGN_UNKNOWN;
	case REL_LT:
		return sgn <= 0 ? EXPR_SIGN_NEG : EXPR_SIGN_UNKNOWN;
	case REL_LE:
		return sgn < 0 ? EXPR_SIGN_NEG : sgn == 0 ? EXPR_SIGN_NONPOS : EXPR_SIGN_UNKNOWN;
	default:
		return EXPR_SIGN_UNKNOWN;
	}
}

static bool add_relation(session *s, const ast_node *written, const expr *lhs, ast_rel op,
                         const expr *rhs);

/* Narrow one side of the entry's range to bound (strict: > or <; upper: the
 * upper side).  Of two numeric bounds the tighter stays; a bound that cannot
 * be compared with the one already there becomes a relation on the name, so
 * both constraints are kept. */
static bool narrow_side(session *s, model_entry *entry, const ast_node *cond, const expr *bound,
                        bool strict, bool upper)
{
	const expr **side = upper ? &entry->hi : &entry->lo;
	bool *side_strict = upper ? &entry->hi_strict : &entry->lo_strict;
	if (*side && *side != bound) {
		if (!expr_is_num(*side) || !expr_is_num(bound)) {
			ast_rel op = upper ? (strict ? REL_LT : REL_LE) : (strict ? REL_GT : REL_GE);
			return add_relation(s, cond, entry->sym, op, bound);
		}
		int cmp = mpq_cmp(expr_num_value(bound), expr_num_value(*side));
		if (upper ? cmp > 0 : cmp < 0)
			return true; /* the bound there already is the tighter */
	}
	if (*side == bound) /* nodes are hash-consed: an equal number is the same node */
		strict |= *side_strict; /* the same bound: strict if either is */
	*side = bound;
	*side_strict = strict;
	return true;
}

/* Apply a COND (x > 0, x in [a, b]) to the entry's range and the symbol's
 * sign.  The domain only narrows: a condition that leaves no value (param a
 * > 3 then assume a < 1, or a > 0 then a < 0) is an error, never a silent
 * change of sign under which what was simplified before would be wrong. */
static bool apply_condition(session *s, model_entry *entry, const ast_node *cond)
{
	if (cond->op == REL_NONE)
		return true;
	const expr *lo = NULL, *hi = NULL;
	int sign = EXPR_SIGN_UNKNOWN;
	bool ok;
	if (cond->op == REL_IN) {
		if (!eval_scalar(s, cond->a->a, &lo) || !eval_scalar(s, cond->a->b, &hi))
			return false;
		if (expr_is_num(lo) && expr_is_num(hi) &&
		    mpq_cmp(expr_num_value(lo), expr_num_value(hi)) > 0) {
			report(s, SESSION_INPUT, &cond->a->loc,
			       "empty range: the lower bound is above the upper bound");
			return false;
		}
		sign = sign_from_bound(lo, REL_GE) & sign_from_bound(hi, REL_LE);
		ok = narrow_side(s, entry, cond, lo, false, false) &&
		     narrow_side(s, entry, cond, hi, false, true);
	} else {
		const expr *bound;
		if (!eval_scalar(s, cond->a, &bound))
			return false;
		sign = sign_from_bound(bound, cond->op);
		bool upper = cond->op == REL_LT || cond->op == REL_LE;
		ok = narrow_side(s, entry, cond, bound, cond->op == REL_GT || cond->op == REL_LT, upper);
	}
	if (!ok)
		return false;
	int combined = expr_sym_sign(entry->sym) & sign;
	bool empty = combined == 0;
	if (entry->lo && entry->hi && expr_is_num(entry->lo) && expr_is_num(entry->hi)) {
		int cmp = mpq_cmp(expr_num_value(entry->lo), expr_num_value(entry->hi));
		empty |= cmp > 0 || (cmp == 0 && (entry->lo_strict || entry->hi_strict));
	}
	if (empty) {
		report(s, SESSION_INPUT, &cond->loc,
		       "this leaves no value for '%s': it contradicts what is already assumed of it "
		       "(show %s lists it)",
		       entry->name, entry->name);
		return false;
	}
	if (combined != expr_sym_sign(entry->sym))
		expr_sym_set_sign(s->ctx, entry->sym, combined);
	return true;
}

static bool same_range(const model_entry *a, const model_entry *b)
{
	return a->lo == b->lo && a->hi == b->hi && (!a->lo || a->lo_strict == b->lo_strict) &&
	       (!a->hi || a->hi_strict == b->hi_strict);
}

/* param NAME COND for a declared parameter.  A script may declare it again
 * with the same domain (load after save), or give a domain to one that has
 * none; the REPL replaces the domain.  (A failure is undone by run_whole.) */
static bool param_again(session *s, model_entry *entry, const ast_node *cond)
{
	model_entry old = *entry;
	int old_sign = expr_sym_sign(entry->sym);
	bool had_range = old.lo || old.hi;
	if (replaces(s)) {
		entry->lo = entry->hi = NULL;
		expr_sym_set_sign(s->ctx, entry->sym, EXPR_SIGN_UNKNOWN);
	}
	if (!apply_condition(s, entry, cond))
		return false;
	if (same_range(entry, &old) || !had_range)
		return true;
	if (replaces(s) && (expr_sym_sign(entry->sym) & ~old_sign)) {
		/* a weaker sign: what the model keeps was simplified under the
		 * old one (sqrt(a^2) kept as a for a > 0) and would be wrong now */
		size_t count;
		char *users = declaration_users(s, entry, &count);
		if (users) {
			report(s, SESSION_INPUT, &cond->loc,
			       "cannot widen the domain of '%s': %s %s simplified under the old one; "
			       "forget what uses it first",
			       entry->name, users, count == 1 ? "was" : "were");
			free(users);
			return false;
		}
	}
	if (replaces(s)) {
		replaced(s, "replaced the domain of %s", entry->name);
		return true;
	}
	report(s, SESSION_INPUT, &cond->loc,
	       "the parameter '%s' already has a domain; a script cannot redefine it (only the REPL "
	       "replaces a declaration)",
	       entry->name);
	return false;
}

bool run_param(session *s, const ast_node *st)
{
	for (size_t i = 0; i < st->nitems; i++) {
		model_entry *entry = model_lookup(&s->model, st->items[i]->text);
		if (entry && entry->kind == MODEL_PARAM)
			continue;
		if (!check_new_name(s, &st->items[i]->loc, st->items[i]->text, true))
			return false;
	}
	for (size_t i = 0; i < st->nitems; i++) {
		const ast_node *cond = st->items[i];
		model_entry *entry = model_lookup(&s->model, cond->text);
		if (entry && entry->kind == MODEL_PARAM) {
			if (!param_again(s, entry, cond))
				return false;
			continue;
		}
		const expr *sym = declared_symbol(s, cond->text, &cond->loc);
		if (!sym)
			return false;
		entry = model_add(&s->model, cond->text, MODEL_PARAM, sym);
		entry->pending_state = false;
		expr_sym_set_rank(s->ctx, sym, PRN_RANK_PARAM);
		if (!apply_condition(s, entry, cond))
			return false;
	}
	return true;
}

/* ------------------------------------------------------------------ relations */

static model_rel model_rel_of(ast_rel op)
{
	switch (op) {
	case REL_GE:
		return MODEL_REL_GE;
	case REL_LT:
		return MODEL_REL_LT;
	case REL_LE:
		return MODEL_REL_LE;
	default:
		return MODEL_REL_GT;
	}
}

/* The first node of the tree n that names name (as a NAME or a call), for
 * the caret of a message; n itself when none does. */
static const ast_node *name_node(const ast_node *n, const char *name)
{
	const ast_node *stack[256];
	size_t top = 0;
	stack[top++] = n;
	while (top) {
		const ast_node *node = stack[--top];
		if (!node)
			continue;
		if ((node->kind == AST_NAME || node->kind == AST_CALL) && strcmp(node->text, name) == 0)
			return node;
		if (top + 3 + node->nitems < 256) {
			for (size_t i = node->nitems; i-- > 0;)
				stack[top++] = node->items[i];
			stack[top++] = node->c;
			stack[top++] = node->b;
			stack[top++] = node->a;
		}
	}
	return n;
}

/* The first application of a generic function in e, or NULL. */
static const expr *function_application(const expr *e)
{
	switch (expr_kind_of(e)) {
	case EXPR_FAPP:
		return e;
	case EXPR_MUL:
		for (size_t i = 0; i < expr_nops(e); i++) {
			const expr *found = function_application(expr_mul_base(e, i));
			if (!found)
				found = function_application(expr_mul_exponent(e, i));
			if (found)
				return found;
		}
		return NULL;
	case EXPR_ADD:
	case EXPR_FUN:
		for (size_t i = 0; i < expr_nops(e); i++) {
			const expr *found = function_application(expr_op(e, i));
			if (found)
				return found;
		}
		return NULL;
	default:
		return NULL;
	}
}

/* A relation constrains the points where claims are tested, so it may use
 * only names that take values there: parameters, states, function arguments
 * and t (lets are spelled out by then).  A noise takes every real value and
 * the values of a generic function are not drawn. */
static bool relation_names_ok(session *s, const ast_node *written, const expr *difference)
{
	expr_vec names = {0};
	expr_free_symbols(s->ctx, difference, &names);
	bool ok = true;
	for (size_t i = 0; i < names.n && ok; i++) {
		if (model_noise_index(&s->model, names.items[i]) < 0)
			continue;
		const char *name = expr_sym_name(names.items[i]);
		report(s, SESSION_INPUT, &name_node(written, name)->loc,
		       "a relation cannot constrain the noise '%s': a Brownian motion takes every real value",
		       name);
		ok = false;
	}
	expr_vec_free(&names);
	const expr *application = ok ? function_application(difference) : NULL;
	if (application) {
		const char *name = expr_sym_name(expr_fapp_func(application));
		report(s, SESSION_INPUT, &name_node(written, name)->loc,
		       "a relation cannot use the function '%s': its values are not drawn where claims "
		       "are tested",
		       name);
		ok = false;
	}
	return ok;
}

/* Keep lhs op rhs as a relation of the model; written: its source, for
 * messages.  A relation that cannot hold under the declared assumptions is
 * an error; one that holds whatever the names are (1 > 0) is not kept. */
static bool add_relation(session *s, const ast_node *written, const expr *lhs, ast_rel op, const expr *rhs)
{
	model_rel rel = model_rel_of(op);
	const expr *difference = expr_sub(s->ctx, lhs, rhs);
	if (engine_failed(s, &written->loc))
		return false;
	if (!relation_names_ok(s, written, difference))
		return false;
	int sign = expr_sign(s->ctx, difference);
	if (model_rel_impossible(rel, sign)) {
		char *left = text_expr(s, lhs), *right = text_expr(s, rhs);
		report(s, SESSION_INPUT, &written->loc, "%s %s %s never holds%s", left, model_rel_text(rel),
		       right, expr_is_num(difference) ? "" : " under the declared assumptions");
		free(left);
		free(right);
		return false;
	}
	if (!expr_is_num(difference))
		model_add_relation(&s->model, lhs, rhs, difference, rel);
	return true;
}

/* lhs op bound, or lhs in [lo, hi] (two relations), for a left side already
 * evaluated; bound: the COND's bound or the RELATION's right side. */
static bool relation_with_bound(session *s, const ast_node *written, const expr *lhs, ast_rel op,
                                const ast_node *bound)
{
	const expr *lo, *hi;
	if (op != REL_IN)
		return eval_scalar(s, bound, &hi) && add_relation(s, written, lhs, op, hi);
	if (!eval_scalar(s, bound->a, &lo) || !eval_scalar(s, bound->b, &hi))
		return false;
	if (expr_is_num(lo) && expr_is_num(hi) && mpq_cmp(expr_num_value(lo), expr_num_value(hi)) > 0) {
		report(s, SESSION_INPUT, &bound->loc,
		       "empty range: the lower bound is above the upper bound");
		return false;
	}
	return add_relation(s, written, lhs, REL_GE, lo) && add_relation(s, written, lhs, REL_LE, hi);
}

/* ------------------------------------------------------------------ assume */

/* One item of assume: a range on a name (COND) or a relation. */
static bool assume_one(session *s, const ast_node *cond)
{
	if (cond->kind == AST_RELATION) {
		const expr *lhs;
		return eval_scalar(s, cond->a, &lhs) && relation_with_bound(s, cond, lhs, cond->op, cond->b);
	}
	/* t > 0 or tau > 0 (a let): a relation on time or on the definition */
	if (strcmp(cond->text, "t") == 0)
		return relation_with_bound(s, cond, s->model.time, cond->op, cond->a);
	model_entry *entry = model_lookup(&s->model, cond->text);
	if (entry && entry->kind == MODEL_LET)
		return relation_with_bound(s, cond, entry->value, cond->op, cond->a);
	if (entry && entry->kind != MODEL_PARAM && entry->kind != MODEL_STATE && entry->kind != MODEL_ARG) {
		report(s, SESSION_INPUT, &cond->loc, "cannot assume anything about the %s '%s'",
		       model_kind_name(entry->kind), cond->text);
		return false;
	}
	if (!entry) {
		/* an assumption about a state declared later in the same input:
		 * keep it as an argument-like name until its SDE comes */
		if (!declared_later(s, cond->text)) {
			ast_loc name = cond->loc;
			name.last_line = name.first_line;
			name.last_column = name.first_column + (int)strlen(cond->text) - 1;
			undeclared_name(s, &name, cond->text);
			return false;
		}
		if (!check_new_name(s, &cond->loc, cond->text, false))
			return false;
		const expr *sym = declared_symbol(s, cond->text, &cond->loc);
		if (!sym)
			return false;
		entry = model_add(&s->model, cond->text, MODEL_ARG, sym);
		entry->pending_state = true;
	}
	return apply_condition(s, entry, cond);
}

bool run_assume(session *s, const ast_node *st)
{
	bool ok = true;
	for (size_t i = 0; i < st->nitems && ok; i++)
		ok = assume_one(s, st->items[i]);
	return ok;
}

bool run_noise(session *s, const ast_node *st)
{
	for (size_t i = 0; i < st->nitems; i++) {
		model_entry *entry = model_lookup(&s->model, st->items[i]->text);
		if (entry && entry->kind == MODEL_NOISE)
			continue; /* the same noise again: nothing to do */
		if (!check_new_name(s, &st->items[i]->loc, st->items[i]->text, false))
			return false;
	}
	for (size_t i = 0; i < st->nitems; i++) {
		model_entry *entry = model_lookup(&s->model, st->items[i]->text);
		if (entry && entry->kind == MODEL_NOISE)
			continue;
		const expr *sym = declared_symbol(s, st->items[i]->text, &st->items[i]->loc);
		if (!sym)
			return false;
		model_add(&s->model, st->items[i]->text, MODEL_NOISE, sym);
		expr_sym_set_rank(s->ctx, sym, PRN_RANK_NOISE);
		model_add_noise(&s->model, sym);
	}
	return true;
}

/* ------------------------------------------------------------------ correlations */

/* Is the numeric correlation matrix positive semi-definite (a Cholesky factor exists)? */
static bool numeric_psd(const model *m)
{
	size_t n = m->nnoises;
	for (size_t i = 0; i < n * n; i++)
		if (m->corr[i] && !expr_is_num(m->corr[i]))
			return true; /* symbolic entries: decided later, at sampled points */
	double *c = xcalloc(n * n + 1, sizeof *c);
	double *l = xcalloc(n * n + 1, sizeof *l);
	for (size_t i = 0; i < n; i++)
		for (size_t j = 0; j < n; j++)
			c[i * n + j] = rat_to_double(expr_num_value(model_corr(m, i, j)));
	bool ok = sim_cholesky(n, c, l);
	free(c);
	free(l);
	return ok;
}

bool run_corr(session *s, const ast_node *st)
{
	model *m = &s->model;
	long idx[2];
	const ast_node *names[2] = {st->a, st->b};
	for (int i = 0; i < 2; i++) {
		model_entry *entry = lookup_kind(s, &names[i]->loc, names[i]->text, MODEL_NOISE);
		if (!entry)
			return false;
		idx[i] = model_noise_index(m, entry->sym);
	}
	if (idx[0] == idx[1]) {
		report(s, SESSION_INPUT, &st->loc,
		       "a noise is perfectly correlated with itself; name two different noises");
		return false;
	}
	const expr *rho;
	if (!eval_scalar(s, st->c, &rho))
		return false;
	if (expr_is_num(rho) &&
	    mpz_cmpabs(mpq_numref(expr_num_value(rho)), mpq_denref(expr_num_value(rho))) > 0) {
		report(s, SESSION_INPUT, &st->c->loc, "a correlation must lie in [-1, 1]");
		return false;
	}
	const expr *old = m->corr[(size_t)idx[0] * m->nnoises + (size_t)idx[1]];
	if (old && old != rho && !replaces(s)) {
		report(s, SESSION_INPUT, &st->loc,
		       "the correlation of %s and %s is already declared; a script cannot redefine it (only "
		       "the REPL replaces a declaration)",
		       st->a->text, st->b->text);
		return false;
	}
	if (old != rho && m->nmeasures > 0 && !(old == NULL && expr_is_zero(rho))) {
		/* a measure's implied shifts were worked out from the correlations
		 * as they were (measure_complete): refuse rather than leave them stale */
		report(s, SESSION_INPUT, &st->loc,
		       "the measure '%s' was declared with the correlations as they are; declare "
		       "correlations before measures (or forget %s first)",
		       m->measures[0].name, m->measures[0].name);
		return false;
	}
	if (old && old != rho)
		replaced(s, "replaced the correlation of %s and %s", st->a->text, st->b->text);
	/* a run of corr statements is judged as a whole, at its end: with three
	 * noises correlated 0.9 pairwise, the matrix after the second line (the
	 * third pair still 0) is not positive semi-definite, the final one is */
	if (!s->corr_block) {
		s->corr_block = true;
		size_t cells = m->nnoises * m->nnoises;
		free(s->corr_before);
		s->corr_before = xmalloc((cells ? cells : 1) * sizeof *s->corr_before);
		memcpy(s->corr_before, m->corr, cells * sizeof *s->corr_before);
		s->corr_before_n = m->nnoises;
	}
	/* keep the line, for a message given after this source is gone (REPL) */
	const char *line;
	size_t length;
	source_line(s, st->loc.first_line, &line, &length);
	free(s->corr_text);
	free(s->corr_origin);
	s->corr_text = xstrndup(line, length);
	s->corr_origin = xstrdup(s->origin);
	s->corr_fixed_line = s->fixed_line ? s->fixed_line : st->loc.first_line;
	s->corr_last = st->loc;
	s->corr_last.first_line = s->corr_last.last_line = 1;
	model_set_corr(m, (size_t)idx[0], (size_t)idx[1], rho);
	return true;
}

/* The end of a run of corr statements: the whole matrix must be positive
 * semi-definite (numeric entries); otherwise the run is undone. */
bool close_corr_block(session *s)
{
	if (!s->corr_block)
		return true;
	s->corr_block = false;
	model *m = &s->model;
	if (numeric_psd(m))
		return true;
	if (s->corr_before_n == m->nnoises)
		memcpy(m->corr, s->corr_before, m->nnoises * m->nnoises * sizeof *m->corr);
	source_frame outer =
	        enter_source(s, s->corr_text, strlen(s->corr_text), s->corr_origin, s->corr_fixed_line);
	report(s, SESSION_INPUT, &s->corr_last, "the correlation matrix would not be positive semi-definite");
	leave_source(s, outer);
	return false;
}

/* ------------------------------------------------------------------ functions and definitions */

static bool same_function(const model_entry *entry, size_t nargs, ast_node *const *args)
{
	if (!entry || entry->kind != MODEL_FUNC || expr_func_arity(entry->sym) != nargs)
		return false;
	for (size_t i = 0; i < nargs; i++)
		if (strcmp(expr_func_arg_name(entry->sym, i), args[i]->text) != 0)
			return false;
	return true;
}

/* Declare the generic function name(args) written at loc; args are NAME
 * nodes (each argument's name and place).  The same declaration again is
 * accepted. */
bool declare_function(session *s, const ast_loc *loc, const char *name, size_t nargs, ast_node *const *args)
{
	if (same_function(model_lookup(&s->model, name), nargs, args))
		return true; /* the same declaration again */
	if (!check_new_name(s, loc, name, false))
		return false;
	if (nargs > EXPR_MAX_FUNC_ARGS) {
		report(s, SESSION_INPUT, loc, "a function may have at most %d arguments", EXPR_MAX_FUNC_ARGS);
		return false;
	}
	const char *names[EXPR_MAX_FUNC_ARGS];
	for (size_t i = 0; i < nargs; i++) {
		names[i] = args[i]->text;
		for (size_t j = 0; j < i; j++)
			if (strcmp(names[i], names[j]) == 0) {
				report(s, SESSION_INPUT, &args[i]->loc, "argument '%s' is repeated",
				       names[i]);
				return false;
			}
		if (expr_is_function_spelling(names[i])) {
			report(s, SESSION_INPUT, &args[i]->loc,
			       "'%s' is a built-in function; choose another argument name (such as '%s1')",
			       names[i], names[i]);
			return false;
		}
		model_entry *entry = model_lookup(&s->model, names[i]);
		if (entry &&
		    (entry->kind == MODEL_FUNC || entry->kind == MODEL_LET || entry->kind == MODEL_MEASURE)) {
			report(s, SESSION_INPUT, &args[i]->loc, "argument '%s' is already a %s", names[i],
			       model_kind_name(entry->kind));
			return false;
		}
	}
	const expr *sym = declared_symbol(s, name, loc);
	if (!sym)
		return false;
	expr_func_declare(s->ctx, sym, nargs, names);
	model_add(&s->model, name, MODEL_FUNC, sym);
	for (size_t i = 0; i < nargs; i++)
		if (strcmp(names[i], "t") != 0 && !model_lookup(&s->model, names[i])) {
			const expr *arg = declared_symbol(s, names[i], &args[i]->loc);
			if (!arg)
				return false;
			model_add(&s->model, names[i], MODEL_ARG, arg);
		}
	return true;
}

bool run_func(session *s, const ast_node *st)
{
	return declare_function(s, &st->loc, st->text, st->nitems, st->items);
}

bool run_let(session *s, const ast_node *st)
{
	if (!may_declare(s, &st->loc, st->text, MODEL_LET))
		return false;
	/* a let may not refer to itself */
	const char *name = st->text;
	const ast_node *stack[256];
	size_t top = 0;
	stack[top++] = st->a;
	while (top) {
		const ast_node *n = stack[--top];
		if (!n)
			continue;
		if ((n->kind == AST_NAME || n->kind == AST_CALL) && strcmp(n->text, name) == 0) {
			report(s, SESSION_INPUT, &n->loc, "circular definition: '%s' refers to itself", name);
			return false;
		}
		if (top + 3 + n->nitems < 256) {
			stack[top++] = n->a;
			stack[top++] = n->b;
			stack[top++] = n->c;
			for (size_t i = 0; i < n->nitems; i++)
				stack[top++] = n->items[i];
		}
	}
	const expr *value_expr;
	if (!eval_scalar(s, st->a, &value_expr))
		return false;
	model_entry *entry = model_lookup(&s->model, st->text);
	if (entry && entry->kind == MODEL_LET && entry->value != value_expr) {
		if (!replaces(s)) {
			report(s, SESSION_INPUT, &st->loc,
			       "'%s' is already defined; a script cannot redefine it (only the REPL "
			       "replaces a declaration)",
			       st->text);
			return false;
		}
		replaced(s, "replaced the definition of %s", st->text);
	}
	entry = model_add(&s->model, st->text, MODEL_LET, NULL);
	entry->value = value_expr;
	return true;
}

/* ------------------------------------------------------------------ SDEs */

/* An SDE's right side must be a sum of coefficient*dt and coefficient*dNOISE. */
static bool check_sde_term(session *s, const ast_node *term)
{
	/* count the differential factors in a product */
	const ast_node *stack[512];
	size_t top = 0, found = 0;
	bool bad = false;
	const char *why = NULL;
	stack[top++] = term;
	while (top && !bad) {
		const ast_node *n = stack[--top];
		switch (n->kind) {
		case AST_MUL:
			if (top + 2 < 512) {
				stack[top++] = n->a;
				stack[top++] = n->b;
			}
			break;
		case AST_DIV:
			stack[top++] = n->a;
			if (n->b->kind == AST_NAME &&
			    (strcmp(n->b->text, "dt") == 0 || differential_of(s, n->b->text)))
				bad = true, why = "a differential cannot be a divisor";
			break;
		case AST_NEG:
			stack[top++] = n->a;
			break;
		case AST_NAME:
			if (strcmp(n->text, "dt") == 0) {
				found++;
			} else {
				const expr *p = differential_of(s, n->text);
				if (p) {
					if (model_noise_index(&s->model, p) < 0)
						bad = true, why = "a state differential cannot drive an SDE; "
						                  "use the noises";
					found++;
				}
			}
			break;
		case AST_POW:
			if (n->a->kind == AST_NAME &&
			    (strcmp(n->a->text, "dt") == 0 || differential_of(s, n->a->text)))
				bad = true,
				why = "powers of differentials vanish or are dt; write the dt term";
			break;
		case AST_DIFF:
			bad = true, why = "d(...) cannot appear in an SDE; use dt and the noises";
			break;
		case AST_QUERY:
			bad = true, why = "a query cannot appear in an SDE; name its value with let first";
			break;
		default:
			break;
		}
	}
	if (!bad && found != 1)
		why = found == 0 ? "this term has no dt or noise differential"
		                 : "this term multiplies two differentials";
	if (why) {
		report(s, SESSION_INPUT, &term->loc,
		       "the right side of an SDE must be a sum of coefficient*dt and coefficient*dNOISE "
		       "terms: %s",
		       why);
		return false;
	}
	return true;
}

static bool check_sde_terms(session *s, const ast_node *n)
{
	/* walk the left spine in a loop: an SDE may have many terms */
	while (n->kind == AST_ADD || n->kind == AST_SUB ||
	       (n->kind == AST_NEG && (n->a->kind == AST_ADD || n->a->kind == AST_SUB))) {
		if (n->kind == AST_NEG) {
			n = n->a;
			continue;
		}
		if (!check_sde_terms(s, n->b))
			return false;
		n = n->a;
	}
	return check_sde_term(s, n);
}

/* dX = ... or stratonovich dX = ...: a new state and its SDE. */
bool run_sde(session *s, const ast_node *st)
{
	bool stratonovich = st->kind == AST_S_STRAT_SDE;
	model *m = &s->model;
	const char *dname = st->text;
	if (dname[0] != 'd' || !dname[1] || !is_identifier(dname + 1)) {
		report(s, SESSION_INPUT, &st->loc,
		       "'%s = ...' is not a statement: an SDE is written dX = ...*dt + ...*dW, a definition "
		       "let %s = ...",
		       dname, dname);
		return false;
	}
	const char *name = dname + 1;
	model_entry *entry = model_lookup(m, name);
	if (entry && entry->kind != MODEL_ARG && entry->kind != MODEL_STATE) {
		report(s, SESSION_INPUT, &st->loc, "'%s' is a %s; an SDE declares a new state", name,
		       model_kind_name(entry->kind));
		return false;
	}
	if (!entry && !check_new_name(s, &st->loc, name, false))
		return false;
	if (!check_sde_terms(s, st->a))
		return false;
	if (entry && entry->kind == MODEL_STATE)
		return sde_again(s, st, entry, stratonovich);
	/* declare the state first so its own SDE may use it (a failure puts
	 * the model back as it was: run_whole) */
	const expr *sym = declared_symbol(s, name, &st->loc);
	if (!sym)
		return false;
	entry = model_add(m, name, MODEL_STATE, sym);
	entry->pending_state = false;
	expr_sym_set_rank(s->ctx, sym, PRN_RANK_STATE);
	value v;
	model_sde *sde = model_add_sde(m, sym);
	sde->stratonovich = stratonovich;
	s->in_sde = true;
	bool evaluated = eval_node(s, st->a, &v);
	s->in_sde = false;
	if (!evaluated || !v.is_diff) {
		if (evaluated)
			report(s, SESSION_INPUT, &st->a->loc,
			       "the right side of an SDE must contain dt or a noise differential");
		return false;
	}
	sde = model_sde_of(m, sym);
	sde->drift = v.d.dt;
	for (size_t k = 0; k < m->nnoises; k++)
		sde->diffusion[k] = v.d.dw[k];
	value_free(&v);
	return true;
}

/* ------------------------------------------------------------------ measures and states */
