/* query-algebra.c - the algebra of a model note: the forward equation,
 * coefficients of a polynomial, moment equations.
 *
 * forward p(t, X...) prints p_t = -sum d_i(mu_i p) + 1/2 sum d_i d_j(C_ij p)
 * (forward.c); coefficients E in x, y writes E as a polynomial in x, y
 * (polycoef.c), which turns an exponential-affine guess into its ODEs;
 * moments X, K the closed linear system for E[X_t^k | X_0 = X] and its
 * solution.  Each makes a result (result.h) for the writers.
 */
#include "session-internal.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "diff.h"
#include "forward.h"
#include "polycoef.h"
#include "xalloc.h"

/* Moments beyond this order have coefficients too large to read. */
enum { MOMENTS_MAX_ORDER = 12 };

bool run_forward(session *s, const ast_node *st)
{
	bool has_time = false;
	for (size_t i = 0; i < st->nitems; i++)
		has_time |= st->items[i]->kind == AST_NAME && strcmp(st->items[i]->text, "t") == 0;
	if (!has_time) {
		report(s, SESSION_INPUT, &st->loc,
		       "forward needs t among the arguments of the density (forward %s(t, ...))", st->text);
		return false;
	}
	/* the density is named for this statement only: a query declares
	 * nothing that outlives it (forward p(t, X) then p(t, X, Y) is fine) */
	model_snapshot before;
	model_snapshot_take(&s->model, &before);
	bool ok = false;
	const expr *p = equation_unknown(s, st, "forward", NULL);
	const expr *rhs = p ? forward_rhs(&s->model, s->measure, p) : NULL;
	if (rhs && !engine_failed(s, &st->loc)) {
		pending result;
		result_start(s, &result, RESULT_FORWARD, st);
		result.r.name = st->text;
		result.r.of = diff(s->ctx, p, s->model.time);
		result.r.value = rhs;
		ok = result_emit(s, &result, st);
	}
	model_snapshot_restore(&s->model, &before);
	return ok;
}

bool run_coefficients(session *s, const ast_node *st)
{
	const expr *e;
	if (!eval_scalar(s, st->a, &e))
		return false;
	if (st->nitems > EXPR_MAX_FUNC_ARGS) {
		report(s, SESSION_INPUT, &st->items[EXPR_MAX_FUNC_ARGS]->loc,
		       "coefficients takes at most %d variables", EXPR_MAX_FUNC_ARGS);
		return false;
	}
	const expr *vars[EXPR_MAX_FUNC_ARGS];
	for (size_t i = 0; i < st->nitems; i++) {
		vars[i] = variable_symbol(s, st->items[i], "cannot take coefficients in", "");
		if (!vars[i])
			return false;
		for (size_t j = 0; j < i; j++)
			if (vars[j] == vars[i]) {
				report(s, SESSION_INPUT, &st->items[i]->loc, "'%s' is listed twice",
				       st->items[i]->text);
				return false;
			}
	}
	polycoef poly;
	if (!polycoef_split(s->ctx, e, st->nitems, vars, &poly)) {
		if (!poly.bad) {
			if (!engine_failed(s, &st->loc))
				report(s, SESSION_INPUT, &st->a->loc,
				       "cannot write this expression as a polynomial");
			return false;
		}
		char *term = text_expr(s, poly.bad);
		xbuf names = {0};
		for (size_t i = 0; i < st->nitems; i++)
			xbuf_printf(&names, "%s%s", i ? ", " : "", st->items[i]->text);
		report(s, SESSION_INPUT, &st->a->loc,
		       "not a polynomial in %s: after the rational normal form the term %s is not a "
		       "coefficient free of %s times powers of %s",
		       names.data, term, names.data, names.data);
		free(term);
		xbuf_free(&names);
		return false;
	}
	pending result;
	result_start(s, &result, RESULT_COEFFICIENTS, st);
	result.r.of = e;
	result.r.vars = vars;
	result.r.nvars = st->nitems;
	result.r.labels = poly.monomials;
	result.r.values = poly.coefs;
	result.r.nrows = poly.n;
	bool ok = result_emit(s, &result, st);
	polycoef_free(&poly);
	return ok;
}

/* Why moments X, K does not close, as a message. */
static void moments_refused(session *s, const ast_node *st, moments_status status, const expr *culprit)
{
	if (status == MOMENTS_ENGINE) {
		if (!engine_failed(s, &st->loc))
			report(s, SESSION_INPUT, &st->loc, "cannot compute the moments of %s", st->text);
		return;
	}
	char *what = culprit ? text_expr(s, culprit) : xstrdup("");
	const char *x = st->text;
	char *why;
	if (status == MOMENTS_NOT_POLYNOMIAL)
		why = xasprintf("they need a drift and a squared diffusion polynomial in %s, and the "
		                "term %s is not",
		                x, what);
	else if (status == MOMENTS_OTHER_PROCESS)
		why = xasprintf("its dynamics depend on the process %s, so its moments are not a system "
		                "in %s alone",
		                what, x);
	else
		why = xasprintf("the %s %s has degree above %d in %s, so the equation of each moment "
		                "involves a higher one",
		                status == MOMENTS_DRIFT_DEGREE ? "drift" : "squared diffusion", what,
		                status == MOMENTS_DRIFT_DEGREE ? 1 : 2, x);
	report(s, SESSION_INPUT, &st->loc, "the moment equations of %s do not close: %s", x, why);
	free(why);
	free(what);
}

bool run_moments(session *s, const ast_node *st)
{
	model_entry *entry = lookup_kind(s, &st->loc, st->text, MODEL_STATE);
	if (!entry)
		return false;
	const expr *order = expr_decimal(s->ctx, st->a->text);
	if (!order || !expr_is_integer(order) || mpq_cmp_si(expr_num_value(order), 1, 1) < 0 ||
	    mpq_cmp_si(expr_num_value(order), MOMENTS_MAX_ORDER, 1) > 0) {
		report(s, SESSION_INPUT, &st->a->loc, "the order of moments is an integer from 1 to %d",
		       MOMENTS_MAX_ORDER);
		return false;
	}
	size_t K = (size_t)mpz_get_ui(mpq_numref(expr_num_value(order)));
	for (size_t k = 1; k <= K; k++) {
		char name[32];
		snprintf(name, sizeof name, "m%zu", k);
		model_entry *taken = model_lookup(&s->model, name);
		if (taken) {
			report(s, SESSION_INPUT, &st->loc,
			       "moments calls its unknowns m1..m%zu, and '%s' is a %s of the model; rename "
			       "it",
			       K, name, model_kind_name(taken->kind));
			return false;
		}
	}
	moments mo;
	moments_status status = moments_compute(&s->model, s->measure, entry->sym, K, &mo);
	if (status != MOMENTS_OK) {
		moments_refused(s, st, status, mo.culprit);
		return false;
	}
	if (engine_failed(s, &st->loc)) {
		moments_free(&mo);
		return false;
	}
	pending result;
	result_start(s, &result, RESULT_MOMENTS, st);
	result.r.name = st->text;
	result.r.vars = mo.symbols;
	result.r.nvars = K;
	result.r.values = mo.equations;
	result.r.solutions = mo.solutions;
	result.r.no_solution = mo.no_solution;
	result.r.nrows = K;
	bool ok = result_emit(s, &result, st);
	moments_free(&mo);
	return ok;
}
