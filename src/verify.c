/* verify.c - claims (verify.h).
 *
 * Each part of a claim (an expression, or the dt part and each noise's part
 * of a differential) is decided on its own; the claim holds when every part
 * holds, fails when one part fails, and is undecided otherwise.
 */
#include "verify.h"

#include <stdlib.h>
#include <string.h>

#include <arb.h>

#include "ball.h"
#include "domain.h"
#include "ratform.h"
#include "expr-internal.h"
#include "xalloc.h"

/* The atoms of e: its symbols, also those in the arguments of generic
 * applications, which are evaluated as functions of their arguments
 * (ball_generic), so that a counterexample is a point of the model's
 * variables and applications at equal arguments agree. */
static void collect_atoms(const expr *e, expr_map *seen, expr_vec *out)
{
	if (expr_map_get(seen, e))
		return;
	expr_map_put(seen, e, e);
	switch (expr_kind_of(e)) {
	case EXPR_NUM:
		return;
	case EXPR_SYM:
		expr_vec_push(out, e);
		return;
	case EXPR_MUL:
		for (size_t i = 0; i < expr_nops(e); i++) {
			collect_atoms(expr_mul_base(e, i), seen, out);
			collect_atoms(expr_mul_exponent(e, i), seen, out);
		}
		return;
	default:
		for (size_t i = 0; i < expr_nops(e); i++)
			collect_atoms(expr_op(e, i), seen, out);
		return;
	}
}

/* The generic functions of e, one application for each distinct function
 * symbol and derivative counts. */
static void collect_functions(const expr *e, expr_map *seen, expr_vec *out)
{
	if (expr_map_get(seen, e))
		return;
	expr_map_put(seen, e, e);
	if (expr_kind_of(e) == EXPR_FAPP) {
		bool known = false;
		for (size_t i = 0; i < out->n && !known; i++)
			known = expr_fapp_func(out->items[i]) == expr_fapp_func(e) &&
			        memcmp(expr_fapp_counts(out->items[i]), expr_fapp_counts(e), expr_nops(e)) ==
			                0;
		if (!known)
			expr_vec_push(out, e);
	}
	if (expr_kind_of(e) == EXPR_MUL) {
		for (size_t i = 0; i < expr_nops(e); i++) {
			collect_functions(expr_mul_base(e, i), seen, out);
			collect_functions(expr_mul_exponent(e, i), seen, out);
		}
		return;
	}
	if (expr_kind_of(e) != EXPR_NUM && expr_kind_of(e) != EXPR_SYM)
		for (size_t i = 0; i < expr_nops(e); i++)
			collect_functions(expr_op(e, i), seen, out);
}

/* A symbol no statement can name (its name is not an identifier): the offset
 * or the scale of a generic function at each point. */
static const expr *private_symbol(expr_ctx *ctx, const expr *fapp, const char *what)
{
	xbuf name = {0};
	xbuf_printf(&name, "%s(", expr_sym_name(expr_fapp_func(fapp)));
	for (size_t i = 0; i < expr_nops(fapp); i++)
		xbuf_printf(&name, "%s%u", i ? "," : "", (unsigned)expr_fapp_counts(fapp)[i]);
	xbuf_printf(&name, ") %s", what);
	char *text = xbuf_take(&name);
	const expr *sym = expr_sym(ctx, text);
	free(text);
	return sym;
}

/* Does a generic application have only symbols and numbers as arguments?  Two
 * such applications of one function with the same counts are the same node
 * exactly when their arguments are the same, and their values are free of
 * each other on a domain with interior; at other arguments, equal values may
 * be written differently: h(sin(x)^2 + cos(x)^2) = h(1). */
static bool plain_arguments(const expr *e)
{
	for (size_t i = 0; i < expr_nops(e); i++) {
		expr_kind kind = expr_kind_of(expr_op(e, i));
		if (kind != EXPR_SYM && kind != EXPR_NUM)
			return false;
	}
	return true;
}

/* Is e a rational function of its atoms: symbols and generic partials at
 * symbols and numbers (plain_arguments), with integer powers only (no function
 * application, which identities such as sin^2 + cos^2 = 1 could tie, and no
 * root, which relations tie)?  In the rational normal form such an e is zero
 * only if it is 0. */
static bool is_rational(const expr *e, expr_map *seen)
{
	if (expr_map_get(seen, e))
		return true;
	expr_map_put(seen, e, e);
	switch (expr_kind_of(e)) {
	case EXPR_NUM:
	case EXPR_SYM:
		return true;
	case EXPR_FAPP:
		return plain_arguments(e);
	case EXPR_FUN:
		return false;
	case EXPR_MUL:
		for (size_t i = 0; i < expr_nops(e); i++) {
			const expr *x = expr_mul_exponent(e, i);
			if (!expr_is_integer(x) || !is_rational(expr_mul_base(e, i), seen))
				return false;
		}
		return true;
	default:
		for (size_t i = 0; i < expr_nops(e); i++)
			if (!is_rational(expr_op(e, i), seen))
				return false;
		return true;
	}
}

/* The state of deciding one part. */
typedef struct part_run {
	expr_ctx *ctx;
	model *m;
	const expr *lhs, *rhs, *difference;
	ball_generic generic;        /* generic applications as fixed functions */
	ball_generic_affine *affine; /* their offsets and scales, generic.naffine */
	expr_vec atoms;
	domain *dom;
	mpq_t *values;
	size_t nvalues;
} part_run;

static void record_point(verify_result *out, part_run *r, ball_verdict *v)
{
	size_t n = domain_size(r->dom);
	out->natoms = 0;
	out->functions = r->generic.naffine > 0;
	out->atoms = xcalloc(n + 1, sizeof *out->atoms);
	out->values = xcalloc(n + 1, sizeof *out->values);
	for (size_t i = 0; i < n; i++) {
		const expr *atom = domain_atom(r->dom, i);
		bool hidden = false; /* the offsets and scales are not the model's */
		for (size_t k = 0; k < r->generic.naffine && !hidden; k++)
			hidden = atom == r->affine[k].offset || atom == r->affine[k].scale;
		if (hidden)
			continue;
		out->atoms[out->natoms] = atom;
		out->values[out->natoms++] = mpq_get_d(r->values[i]);
	}
	if (v) {
		out->left = v->lhs_text ? xstrdup(v->lhs_text) : NULL;
		out->right = v->rhs_text ? xstrdup(v->rhs_text) : NULL;
	}
}

/* Each generic function of the part (each function symbol and derivative
 * counts) is offset + scale*H at a point, with H its fixed function
 * (ball_generic) and offset and scale drawn with the point like any other
 * atom: a claim is about every smooth function, of any size and value, and
 * h(1) is then as free as it should be (abs(h(1)) = h(1) fails), while
 * applications at equal arguments still agree at every point. */
static void add_function_atoms(part_run *r)
{
	expr_vec functions = {0};
	expr_map seen = {0};
	collect_functions(r->lhs, &seen, &functions);
	collect_functions(r->rhs, &seen, &functions);
	expr_map_free(&seen);
	r->affine = xcalloc(functions.n + 1, sizeof *r->affine);
	size_t n = 0;
	for (size_t i = 0; i < functions.n; i++) {
		const expr *offset = private_symbol(r->ctx, functions.items[i], "offset");
		const expr *scale = private_symbol(r->ctx, functions.items[i], "scale");
		if (!offset || !scale) {
			expr_clear_error(r->ctx); /* no room: H alone, still a smooth function */
			continue;
		}
		r->affine[n++] = (ball_generic_affine){.func = expr_fapp_func(functions.items[i]),
		                                       .counts = expr_fapp_counts(functions.items[i]),
		                                       .offset = offset,
		                                       .scale = scale};
		expr_vec_push(&r->atoms, offset);
		expr_vec_push(&r->atoms, scale);
	}
	r->generic.naffine = n;
	r->generic.affine = r->affine;
	expr_vec_free(&functions);
}

/* Is the side e defined at the point (at 64 bits: only certainly undefined counts)? */
static bool defined_at(part_run *r, const expr *e)
{
	size_t n = domain_size(r->dom);
	const expr **atoms = xcalloc(n + 1, sizeof *atoms);
	for (size_t i = 0; i < n; i++)
		atoms[i] = domain_atom(r->dom, i);
	arb_t value;
	arb_init(value);
	ball_status status =
	        ball_eval_generic(r->ctx, e, n, atoms, (const mpq_t *)r->values, &r->generic, 64, value);
	arb_clear(value);
	free(atoms);
	return status != BALL_UNDEFINED;
}

/* A nonzero rational function fails on a domain with interior: find a point
 * of the domain where its value is certainly not zero, for the message. */
static bool rational_counterexample(part_run *r, verify_result *out, int part)
{
	size_t n = domain_size(r->dom);
	const expr **atoms = xcalloc(n + 1, sizeof *atoms);
	for (size_t i = 0; i < n; i++)
		atoms[i] = domain_atom(r->dom, i);
	bool found = false;
	for (int attempt = 0; attempt < 50 && !found && domain_draw(r->dom, r->values); attempt++) {
		ball_verdict v = {0};
		if (ball_compare_zero(r->ctx, r->difference, r->lhs, r->rhs, n, atoms, &r->generic,
		                      (const mpq_t *)r->values, &v) == BALL_NONZERO) {
			out->part = part;
			out->difference = r->difference;
			out->bits = v.bits;
			record_point(out, r, &v);
			found = true;
		}
		ball_verdict_clear(&v);
	}
	free(atoms);
	return found;
}

/* Decide one part numerically; returns its verdict and fills out on failure. */
static verify_verdict decide_numeric(part_run *r, verify_result *out, int part, size_t points,
                                     const char **reason)
{
	size_t n = domain_size(r->dom);
	const expr **atoms = xcalloc(n + 1, sizeof *atoms);
	for (size_t i = 0; i < n; i++)
		atoms[i] = domain_atom(r->dom, i);
	const expr *bad = NULL;
	ball_claim *claim =
	        ball_claim_new(r->ctx, r->difference, r->lhs, r->rhs, n, atoms, &r->generic, &bad);
	free(atoms);
	if (!claim) {
		*reason = "a side cannot be evaluated in ball arithmetic";
		return VERIFY_UNDECIDED;
	}
	verify_verdict verdict = VERIFY_HOLDS;
	size_t tested = 0;
	*reason = NULL;
	for (size_t attempt = 0; tested < points && attempt < 6 * points; attempt++) {
		if (expr_poll_interrupt(r->ctx)) {
			verdict = VERIFY_UNDECIDED;
			*reason = "interrupted";
			break;
		}
		if (!domain_draw(r->dom, r->values)) {
			if (!*reason)
				*reason = "no point of the declared domain could be drawn";
			verdict = VERIFY_UNDECIDED;
			break;
		}
		ball_verdict v = {0};
		/* the first points at 1024 bits: a zero within 64-bit rounding must
		 * not hide a difference of 1/10^40 at every point */
		slong least = attempt < VERIFY_CONFIRM ? 1024 : 64;
		ball_decision decision = ball_claim_decide_from(claim, (const mpq_t *)r->values, least, &v);
		if (v.bits > out->bits)
			out->bits = v.bits;
		if (decision == BALL_NONZERO) {
			out->part = part;
			out->difference = r->difference;
			record_point(out, r, &v);
			ball_verdict_clear(&v);
			verdict = VERIFY_FAILS;
			tested++;
			break;
		}
		if (decision == BALL_ZERO_WITHIN_BOUND) {
			tested++;
		} else if (v.reason == BALL_REASON_UNDEFINED && !defined_at(r, r->lhs) &&
		           !defined_at(r, r->rhs)) {
			/* outside the domain of both sides: evidence neither way; another point */
		} else if (v.reason == BALL_REASON_CANCELLATION || v.reason == BALL_REASON_UNKNOWN) {
			/* no precision decides this point (exp of a huge argument, a
			 * domain boundary): it is evidence neither way; another point */
			out->skipped++;
			if (out->skipped > points && verdict == VERIFY_HOLDS) {
				verdict = VERIFY_UNDECIDED;
				*reason = ball_reason_message(v.reason);
				out->part = part;
				out->difference = r->difference;
				ball_verdict_clear(&v);
				break;
			}
		} else {
			/* one side undefined, or no decision at the largest precision */
			tested++;
			if (verdict == VERIFY_HOLDS) {
				verdict = VERIFY_UNDECIDED;
				*reason = v.reason == BALL_REASON_UNDEFINED
				                  ? "one side is undefined on part of the domain where the "
				                    "other is defined"
				                  : ball_reason_message(v.reason);
				out->part = part;
				out->difference = r->difference;
			}
		}
		ball_verdict_clear(&v);
	}
	ball_claim_free(claim);
	out->points += tested;
	if (verdict == VERIFY_HOLDS && tested == 0) {
		verdict = VERIFY_UNDECIDED;
		*reason = "no point where both sides are defined was found in the declared domain";
	}
	return verdict;
}

void verify_claim(expr_ctx *ctx, model *m, const verify_claim_input *in, unsigned long seed,
                  verify_result *out)
{
	memset(out, 0, sizeof *out);
	out->part = -1;
	out->verdict = VERIFY_HOLDS;
	out->method = VERIFY_EXACT;
	const expr **difference = xcalloc(in->nparts + 1, sizeof *difference);
	bool all_zero = true;
	for (size_t p = 0; p < in->nparts; p++) {
		difference[p] = expr_sub(ctx, in->lhs[p], in->rhs[p]);
		/* the rational normal form: 1/(x+1)^4 - (x+1)^(-4), a/(a+b) + b/(a+b) - 1
		 * are 0 here; where it cannot be formed (a limit), the plain difference */
		if (difference[p] && !expr_is_zero(difference[p])) {
			const expr *normal = ratform_normal(ctx, difference[p]);
			if (normal)
				difference[p] = normal;
			else
				expr_clear_error(ctx);
		}
		if (!difference[p] || !expr_is_zero(difference[p]))
			all_zero = false;
	}
	const char *undecided_reason = NULL;
	int undecided_part = -1;
	for (size_t p = 0; p < in->nparts && !all_zero && out->verdict != VERIFY_FAILS; p++) {
		if (!difference[p] || expr_is_zero(difference[p]))
			continue;
		part_run r = {.ctx = ctx,
		              .m = m,
		              .lhs = in->lhs[p],
		              .rhs = in->rhs[p],
		              .difference = difference[p],
		              .generic = {.seed = seed}};
		expr_map seen = {0};
		collect_atoms(r.lhs, &seen, &r.atoms);
		collect_atoms(r.rhs, &seen, &r.atoms);
		expr_map_free(&seen);
		add_function_atoms(&r);
		r.dom = domain_new(ctx, m, r.atoms.n, r.atoms.items, seed * 1000003u + p);
		r.nvalues = domain_size(r.dom);
		r.values = xcalloc(r.nvalues + 1, sizeof *r.values);
		for (size_t i = 0; i < r.nvalues; i++)
			mpq_init(r.values[i]);
		expr_map rational_seen = {0};
		bool rational = is_rational(r.difference, &rational_seen);
		expr_map_free(&rational_seen);
		if (rational && domain_has_interior(r.dom) && rational_counterexample(&r, out, (int)p)) {
			/* a nonzero rational function in normal form: a certain failure
			 * (the point is for the message) */
			out->verdict = VERIFY_FAILS;
			out->method = VERIFY_EXACT;
		} else {
			out->method = VERIFY_NUMERIC;
			const char *reason = NULL;
			verify_verdict v = decide_numeric(&r, out, (int)p,
			                                  in->points ? in->points : VERIFY_POINTS, &reason);
			if (v == VERIFY_FAILS) {
				out->verdict = VERIFY_FAILS;
			} else if (v == VERIFY_UNDECIDED && undecided_part < 0) {
				undecided_part = (int)p;
				undecided_reason = reason;
			}
		}
		for (size_t i = 0; i < r.nvalues; i++)
			mpq_clear(r.values[i]);
		free(r.values);
		domain_free(r.dom);
		expr_vec_free(&r.atoms);
		free(r.affine);
	}
	if (out->verdict != VERIFY_FAILS && undecided_part >= 0) {
		out->verdict = VERIFY_UNDECIDED;
		out->reason = undecided_reason;
		out->part = undecided_part;
		out->difference = difference[undecided_part];
	}
	out->holds = out->verdict == VERIFY_HOLDS;
	free(difference);
}

void verify_result_free(verify_result *result)
{
	free(result->atoms);
	free(result->values);
	free(result->left);
	free(result->right);
	result->atoms = NULL;
	result->values = NULL;
	result->left = result->right = NULL;
}
