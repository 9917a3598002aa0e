/* verify.c - claims: exact first, then randomized identity testing.
 *
 * Two expressions whose canonical forms differ may still be equal (identities
 * the simplifier does not know, such as sin^2 + cos^2 = 1).  They are then
 * compared at random points inside the declared ranges and assumptions.  The
 * difference at a point is judged relative to the magnitude of the terms
 * (the sum of the absolute values of the terms of both sides), so that the
 * cancellation of large terms cannot hide a real difference or fake one.
 */
#include "verify.h"

#include <float.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "eval.h"
#include "expr-internal.h"
#include "rat.h"
#include "sim.h"
#include "xalloc.h"

/* A number for a message: "undefined" for a NaN, which "-nan" would hide. */
static void show_value(char *out, size_t size, double value)
{
	if (isnan(value))
		snprintf(out, size, "undefined");
	else
		snprintf(out, size, "%.10g", value);
}

/* Record a point where the sides differ: "S=1.2, mu=0.3: left side 1.5, right side 1.4". */
static void refute(verify_result *out, int part, const expr *difference, const expr_vec *symbols, size_t nsym,
		   const double *values, double left, double right)
{
	out->holds = false;
	out->verdict = VERIFY_FAILS;
	out->part = part;
	out->difference = difference;
	xbuf text = {0};
	for (size_t i = 0; i < nsym; i++)
		xbuf_printf(&text, "%s%s=%.6g", i ? ", " : "", expr_sym_name(symbols->items[i]), values[i]);
	if (!nsym)
		xbuf_put(&text, "every point (no symbols)");
	char lt[32], rt[32];
	show_value(lt, sizeof lt, left);
	show_value(rt, sizeof rt, right);
	xbuf_printf(&text, ": left side %s, right side %s", lt, rt);
	out->point_text = xbuf_take(&text);
}

/* A value for a symbol inside its declared domain. */
static double sample(sim_rng *rng, const model_entry *entry, int sign, bool force_positive)
{
	double lo = -2.0, hi = 2.0;
	if (entry && entry->lo && expr_is_num(entry->lo))
		lo = rat_to_double(expr_num_value(entry->lo));
	if (entry && entry->hi && expr_is_num(entry->hi))
		hi = rat_to_double(expr_num_value(entry->hi));
	if (entry && entry->lo && !entry->hi)
		hi = lo + 3.0;
	if (entry && entry->hi && !entry->lo)
		lo = hi - 3.0;
	if (sign == EXPR_SIGN_POS || sign == EXPR_SIGN_NONNEG || force_positive) {
		if (lo < 0.05)
			lo = 0.05;
		if (hi <= lo)
			hi = lo + 3.0;
	}
	if (sign == EXPR_SIGN_NEG || sign == EXPR_SIGN_NONPOS) {
		if (hi > -0.05)
			hi = -0.05;
		if (lo >= hi)
			lo = hi - 3.0;
	}
	double u = sim_uniform(rng);
	double x = lo + (hi - lo) * (0.02 + 0.96 * u);
	if ((entry && entry->lo_strict && x <= lo) || (entry && entry->hi_strict && x >= hi))
		x = 0.5 * (lo + hi);
	return x;
}

static bool has_generic(const expr *e)
{
	switch (expr_kind_of(e)) {
	case EXPR_FAPP:
		return true;
	case EXPR_NUM:
	case EXPR_SYM:
		return false;
	case EXPR_MUL:
		for (size_t i = 0; i < expr_nops(e); i++)
			if (has_generic(expr_mul_base(e, i)) || has_generic(expr_mul_exponent(e, i)))
				return true;
		return false;
	default:
		for (size_t i = 0; i < expr_nops(e); i++)
			if (has_generic(expr_op(e, i)))
				return true;
		return false;
	}
}

static model_entry *entry_of(model *m, const expr *sym)
{
	for (size_t i = 0; i < m->nentries; i++)
		if (m->entries[i].sym == sym)
			return &m->entries[i];
	return NULL;
}

/* Sum of |terms| of both sides, as outputs to evaluate. */
static void push_terms(expr_ctx *ctx, const expr *e, expr_vec *out)
{
	if (expr_kind_of(e) == EXPR_ADD)
		for (size_t i = 0; i < expr_nops(e); i++)
			expr_vec_push(out, expr_op(e, i));
	else
		expr_vec_push(out, e);
	(void)ctx;
}

void verify_claim(expr_ctx *ctx, model *m, const verify_claim_input *in, unsigned long seed,
		  verify_result *out)
{
	memset(out, 0, sizeof *out);
	out->part = -1;
	out->holds = true;
	out->method = VERIFY_EXACT;
	const expr **difference = xcalloc(in->nparts, sizeof *difference);
	bool all_zero = true;
	for (size_t p = 0; p < in->nparts; p++) {
		difference[p] = expr_sub(ctx, in->lhs[p], in->rhs[p]);
		if (!difference[p] || !expr_is_zero(difference[p]))
			all_zero = false;
	}
	if (all_zero) {
		free(difference);
		return;
	}
	out->method = VERIFY_NUMERIC;
	for (size_t p = 0; p < in->nparts && out->holds; p++) {
		if (!difference[p] || expr_is_zero(difference[p]))
			continue;
		const expr *d = difference[p];
		if (has_generic(d)) {
			/* an unknown function cannot be evaluated: the forms differ, and that is all we know */
			out->holds = false;
			out->part = (int)p;
			out->difference = d;
			out->verdict = VERIFY_UNDECIDED;
			out->reason = "the difference involves an unknown function, so no point can be evaluated";
			break;
		}
		expr_vec symbols = {0};
		expr_free_symbols(ctx, in->lhs[p], &symbols);
		expr_free_symbols(ctx, in->rhs[p], &symbols);
		/* distinct symbols */
		size_t nsym = 0;
		for (size_t i = 0; i < symbols.n; i++) {
			bool seen = false;
			for (size_t j = 0; j < nsym && !seen; j++)
				seen = symbols.items[j] == symbols.items[i];
			if (!seen)
				symbols.items[nsym++] = symbols.items[i];
		}
		expr_vec outputs = {0};
		expr_vec_push(&outputs, in->lhs[p]);
		expr_vec_push(&outputs, in->rhs[p]);
		push_terms(ctx, in->lhs[p], &outputs);
		push_terms(ctx, in->rhs[p], &outputs);
		const expr *bad = NULL;
		eval_prog *prog = eval_compile(ctx, outputs.n, outputs.items, nsym, symbols.items, &bad);
		if (!prog) {
			out->holds = false;
			out->part = (int)p;
			out->difference = d;
			out->verdict = VERIFY_UNDECIDED;
			out->reason = "the difference cannot be evaluated numerically";
			expr_vec_free(&symbols);
			expr_vec_free(&outputs);
			break;
		}
		sim_rng rng;
		sim_rng_seed(&rng, seed * 1000003u + p);
		double *values = xcalloc(nsym ? nsym : 1, sizeof *values);
		double *results = xcalloc(outputs.n, sizeof *results);
		size_t tested = 0, attempts = 0;
		while (tested < VERIFY_POINTS && attempts < VERIFY_POINTS * 20) {
			bool force_positive = attempts >= VERIFY_POINTS * 2 && (attempts % 2);
			attempts++;
			for (size_t i = 0; i < nsym; i++) {
				model_entry *entry = entry_of(m, symbols.items[i]);
				values[i] = sample(&rng, entry, expr_sym_sign(symbols.items[i]), force_positive);
			}
			eval_run(prog, 1, values, results);
			double left = results[0], right = results[1];
			if (!isfinite(left) && !isfinite(right))
				continue; /* outside the domain of both sides: try another point */
			if (isfinite(left) != isfinite(right)) {
				/* defined on one side only: the identity fails there
				 * (log(x^2) = 2*log(x) for x < 0) */
				tested++;
				refute(out, (int)p, d, &symbols, nsym, values, left, right);
				break;
			}
			double scale = 0;
			for (size_t i = 2; i < outputs.n; i++)
				scale += fabs(results[i]);
			if (scale < 1e-300)
				scale = 1e-300;
			double relative = fabs(left - right) / scale;
			tested++;
			if (relative > out->max_relative)
				out->max_relative = relative;
			/* the sides may differ by rounding: a relative part for the values
			 * themselves, and a few hundred ulps of the largest terms for
			 * cancellation (1e12*(sin^2 + cos^2) - 1e12 + x = x + 1 must fail) */
			double tolerance = VERIFY_TOLERANCE * fmax(fabs(left), fabs(right)) + 256 * DBL_EPSILON * scale;
			if (fabs(left - right) > tolerance) {
				refute(out, (int)p, d, &symbols, nsym, values, left, right);
				break;
			}
		}
		out->points += tested;
		if (out->holds && tested == 0) {
			out->holds = false;
			out->part = (int)p;
			out->difference = d;
			out->verdict = VERIFY_UNDECIDED;
			out->reason = "no point where both sides are defined was found in the declared domains";
		}
		free(values);
		free(results);
		eval_free(prog);
		expr_vec_free(&symbols);
		expr_vec_free(&outputs);
	}
	free(difference);
}

void verify_result_free(verify_result *result)
{
	free(result->point_text);
	result->point_text = NULL;
}
