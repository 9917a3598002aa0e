/* verify.c - claims (verify.h).
 *
 * Each part of a claim (an expression, or the dt part and each noise's part
 * of a differential) is decided on its own; the claim holds when every part
 * holds, fails when one part fails, and is undecided otherwise.
 */
#include "verify.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <arb.h>

#include "ball.h"
#include "diff.h"
#include "domain.h"
#include "rat.h"
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

/* The rational numbers of e (numbers and coefficients, not exponents) as
 * marks of the domain: where a claim such as abs(y - 10^9) = 10^9 - y turns,
 * random points may never go. */
typedef struct mark_walk {
	expr_map seen;
	domain *dom;
	bool any;
	/* about log2 of the largest |number| and of the finest step a number
	 * shows (1/d for n/d: 1 + 10^-2000 differs from 1 at 2^-6644) */
	long least, most;
} mark_walk;

static void add_mark(mark_walk *w, mpq_srcptr q)
{
	domain_add_mark(w->dom, q);
	if (mpq_sgn(q) == 0)
		return;
	long step = -(long)mpz_sizeinbase(mpq_denref(q), 2);
	long size = (long)mpz_sizeinbase(mpq_numref(q), 2) + step;
	w->least = w->any && w->least < step ? w->least : step;
	w->most = w->any && w->most > size ? w->most : size;
	w->any = true;
}

static void collect_marks(const expr *e, mark_walk *w)
{
	if (!e || expr_map_get(&w->seen, e))
		return;
	expr_map_put(&w->seen, e, e);
	switch (expr_kind_of(e)) {
	case EXPR_NUM:
		add_mark(w, expr_num_value(e));
		return;
	case EXPR_SYM:
		return;
	case EXPR_MUL:
		add_mark(w, expr_mul_coef(e));
		for (size_t i = 0; i < expr_nops(e); i++)
			collect_marks(expr_mul_base(e, i), w);
		return;
	default:
		for (size_t i = 0; i < expr_nops(e); i++)
			collect_marks(expr_op(e, i), w);
		return;
	}
}

static bool mentions(expr_ctx *ctx, const expr *e, const expr *name)
{
	expr_vec names = {0};
	expr_free_symbols(ctx, e, &names);
	bool found = false;
	for (size_t i = 0; i < names.n && !found; i++)
		found = names.items[i] == name;
	expr_vec_free(&names);
	return found;
}

/* The sign of g at x (0 when not certain or not defined there). */
static int scanned_sign(ball_prog *prog, double x, arb_t at, arb_t value)
{
	ball_status status;
	arb_set_d(at, x); /* exact: a double is a dyadic */
	if (ball_run(prog, at, 64, value, &status) != BALL_OK || status != BALL_OK)
		return 0;
	return arb_is_positive(value) ? 1 : arb_is_negative(value) ? -1 : 0;
}

enum { SCAN_DECADES = 30, SCAN_STEPS = 4, SCAN_ROOTS = 8 };

/* Where g, an argument of abs, log or a root, is a function of one symbol x
 * but not linear in it, its sign changes are searched for: g at 0 and at
 * +-10^(k/4) for |k| <= 120, in 64-bit balls; between two neighbours of
 * opposite certain signs, bisection to the precision of a double, and the
 * point reached is a mark of x.  abs(log(abs(y) + 1) - 30) turns at
 * y = e^30 - 1, about 1.07*10^13, which neither a number of the claim nor a
 * random magnitude (mostly below 10^12) comes near.  A sign change that comes
 * back between two neighbours of the grid is missed: numeric evidence stays
 * evidence, not proof. */
static void scan_roots(expr_ctx *ctx, const expr *g, const expr *x, domain *dom)
{
	ball_prog *prog = ball_compile(ctx, 1, &g, 1, &x, NULL);
	if (!prog)
		return; /* an unknown function in g, or a limit */
	arb_t at, value;
	arb_init(at);
	arb_init(value);
	enum { SIDE = 2 * SCAN_DECADES * SCAN_STEPS + 1 }; /* grid points on each side of 0 */
	double last = 0;
	int last_sign = 0, found = 0;
	for (int i = -SIDE; i <= SIDE && found < SCAN_ROOTS; i++) {
		/* ascending: -10^30 .. -10^-30, 0, 10^-30 .. 10^30 */
		int k = (i < 0 ? -i : i) - 1 - SCAN_DECADES * SCAN_STEPS;
		double x_i = i == 0 ? 0 : (i < 0 ? -1 : 1) * pow(10.0, (double)k / SCAN_STEPS);
		int sign = scanned_sign(prog, x_i, at, value);
		if (sign == 0)
			continue;
		if (last_sign != 0 && sign != last_sign) {
			double lo = last, hi = x_i;
			for (int step = 0; step < 1100; step++) {
				double mid = lo + (hi - lo) / 2;
				if (!(mid > lo && mid < hi))
					break;
				int s_mid = scanned_sign(prog, mid, at, value);
				if (s_mid == 0) {
					lo = hi = mid;
					break;
				}
				if (s_mid == last_sign)
					lo = mid;
				else
					hi = mid;
			}
			mpq_t mark;
			mpq_init(mark);
			rat_set_double_short(mark, hi);
			domain_add_mark(dom, mark);
			mpq_clear(mark);
			found++;
		}
		last = x_i;
		last_sign = sign;
	}
	arb_clear(at);
	arb_clear(value);
	ball_free(prog);
}

/* Where g, an argument of abs, log or a root, is A x + B in a symbol x with
 * A and B free of x, its sign turns at x = -B/A: a mark of x (a number, or an
 * expression of the other names evaluated at each point).  abs(y/3 - 10^9)
 * turns at 3*10^9, which no number of the claim is near. */
static void add_roots(expr_ctx *ctx, const expr *g, domain *dom)
{
	expr_vec names = {0};
	expr_free_symbols(ctx, g, &names);
	for (size_t i = 0; i < names.n; i++) {
		const expr *x = names.items[i];
		const expr *slope = diff(ctx, g, x);
		if (!slope || expr_is_zero(slope) || mentions(ctx, slope, x))
			continue;
		const expr *rest = expr_sub(ctx, g, expr_mul(ctx, slope, x));
		if (!rest || mentions(ctx, rest, x))
			continue;
		const expr *root = expr_neg(ctx, expr_div(ctx, rest, slope));
		if (!root)
			continue;
		if (expr_is_num(root))
			domain_add_mark(dom, expr_num_value(root));
		else
			domain_add_root(dom, x, root);
	}
	if (names.n == 1 && !expr_is_zero(g)) {
		const expr *slope = diff(ctx, g, names.items[0]);
		if (slope && mentions(ctx, slope, names.items[0]))
			scan_roots(ctx, g, names.items[0], dom);
	}
	expr_vec_free(&names);
}

static void collect_roots(expr_ctx *ctx, const expr *e, expr_map *seen, domain *dom)
{
	if (!e || expr_map_get(seen, e))
		return;
	expr_map_put(seen, e, e);
	switch (expr_kind_of(e)) {
	case EXPR_NUM:
	case EXPR_SYM:
		return;
	case EXPR_FUN:
		if (expr_fun_id(e) == EXPR_F_ABS || expr_fun_id(e) == EXPR_F_LOG)
			add_roots(ctx, expr_op(e, 0), dom);
		collect_roots(ctx, expr_op(e, 0), seen, dom);
		return;
	case EXPR_MUL:
		for (size_t i = 0; i < expr_nops(e); i++) {
			if (!expr_is_integer(expr_mul_exponent(e, i)))
				add_roots(ctx, expr_mul_base(e, i), dom);
			collect_roots(ctx, expr_mul_base(e, i), seen, dom);
		}
		return;
	default:
		for (size_t i = 0; i < expr_nops(e); i++)
			collect_roots(ctx, expr_op(e, i), seen, dom);
		return;
	}
}

/* The least precision of a point: a zero's bound (2^-(prec/4) of the scale,
 * ball.h) must lie below the finest step of a number of the claim next to
 * its largest number, with 64 bits to spare, so that sin(x)^2 + cos(x)^2 =
 * 1 + 10^-2000 fails (its difference, 10^-2000, is within the bound of 1024
 * bits, 2^-256, not of 32768).  0 when no precision is enough (1 + 10^-5000):
 * a zero is then no evidence. */
static slong least_precision(const mark_walk *w)
{
	long spread = w->any ? w->most - w->least : 0;
	long needed = 4 * (spread + 2 + 64);
	if (needed > BALL_MAX_PRECISION)
		return 0;
	slong least = VERIFY_LEAST_BITS;
	while (least < needed)
		least *= 4; /* 1024, 4096, 16384: the precisions ball.c tries */
	return least < BALL_MAX_PRECISION ? least : BALL_MAX_PRECISION;
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

/* Record the point (exact: the rational tried, as a terminating decimal or
 * p/q) and the two sides there, in place of an earlier one. */
static void record_point(verify_result *out, part_run *r, ball_verdict *v)
{
	verify_result_free(out);
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
		out->values[out->natoms++] = rat_to_decimal(r->values[i]);
	}
	if (v) {
		out->left = v->lhs_text ? xstrdup(v->lhs_text) : NULL;
		out->right = v->rhs_text ? xstrdup(v->rhs_text) : NULL;
		out->gap = v->shortened && v->difference_text ? xstrdup(v->difference_text) : NULL;
	}
}

/* Each generic function of the part (each function symbol and derivative
 * counts) is offset + scale*H at a point, with H its fixed function
 * (ball_generic) and offset and scale drawn with the point like any other
 * atom: a claim is about every smooth function, of any size and value, and
 * h(1) is then as free as it should be (abs(h(1)) = h(1) fails), while
 * applications at equal arguments still agree at every point.  False when the
 * private symbols of the offsets and scales cannot be made (a limit, left
 * pending): H alone would make h(1) a known number, and abs(h(1)) = h(1)
 * could hold, so the claim is not tested. */
static bool add_function_atoms(part_run *r)
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
		if (!offset || !scale)
			break;
		r->affine[n++] = (ball_generic_affine){.func = expr_fapp_func(functions.items[i]),
		                                       .counts = expr_fapp_counts(functions.items[i]),
		                                       .offset = offset,
		                                       .scale = scale};
		expr_vec_push(&r->atoms, offset);
		expr_vec_push(&r->atoms, scale);
	}
	r->generic.naffine = n;
	r->generic.affine = r->affine;
	bool whole = n == functions.n;
	expr_vec_free(&functions);
	return whole;
}

/* Is the side e defined at the point (only certainly undefined counts; more
 * precision while the ball straddles a boundary: at y = 1/3 - 10^-30,
 * log(y - 1/3) is certainly undefined only from about 128 bits on)? */
static bool defined_at(part_run *r, const expr *e)
{
	static const slong precisions[] = {64, 1024, BALL_MAX_PRECISION};
	size_t n = domain_size(r->dom);
	const expr **atoms = xcalloc(n + 1, sizeof *atoms);
	for (size_t i = 0; i < n; i++)
		atoms[i] = domain_atom(r->dom, i);
	arb_t value;
	arb_init(value);
	ball_status status = BALL_UNKNOWN;
	for (size_t k = 0; k < sizeof precisions / sizeof *precisions && status == BALL_UNKNOWN; k++)
		status = ball_eval_generic(r->ctx, e, n, atoms, (const mpq_t *)r->values, &r->generic,
		                           precisions[k], value);
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

/* The point decided on the sides with each symbol replaced by its exact
 * value and put in canonical form, which folds what balls cannot: at y = 1/3,
 * (y - 1/3)^2 is exactly 0 and so is its square root, where the ball of 1/3
 * makes a ball about 0 whose square root no precision decides.  For a point
 * that no precision decided (v on entry); *v is replaced when this decides it
 * (or finds a side undefined; *neither: both are).  Only for atoms that are
 * symbols. */
static ball_decision decide_exactly(part_run *r, ball_verdict *v, bool *neither)
{
	size_t n = domain_size(r->dom);
	/* unknown functions take their offsets and scales from the point's atoms,
	 * which the substitution removes: the balls alone decide there */
	if (expr_error(r->ctx) != EXPR_OK || r->generic.naffine > 0)
		return BALL_UNDECIDED;
	const expr **olds = xcalloc(n + 1, sizeof *olds), **news = xcalloc(n + 1, sizeof *news);
	bool symbols = true;
	for (size_t i = 0; i < n && symbols; i++) {
		olds[i] = domain_atom(r->dom, i);
		symbols = expr_kind_of(olds[i]) == EXPR_SYM;
		news[i] = symbols ? expr_num(r->ctx, r->values[i]) : NULL;
	}
	ball_decision decision = BALL_UNDECIDED;
	const expr *lhs = symbols ? expr_subst(r->ctx, r->lhs, n, olds, news) : NULL;
	const expr *rhs = symbols ? expr_subst(r->ctx, r->rhs, n, olds, news) : NULL;
	const expr *difference = symbols ? expr_subst(r->ctx, r->difference, n, olds, news) : NULL;
	if (expr_error(r->ctx) != EXPR_OK) {
		expr_clear_recoverable(r->ctx); /* a value too large, log(0), ...: as the balls said */
	} else if (lhs && rhs) {
		ball_verdict w = {0};
		decision = ball_compare_zero(r->ctx, difference, lhs, rhs, 0, NULL, NULL, NULL, &w);
		if (w.reason == BALL_REASON_UNDEFINED) {
			arb_t value;
			arb_init(value);
			*neither = ball_eval(r->ctx, lhs, 0, NULL, NULL, 64, value) == BALL_UNDEFINED &&
			           ball_eval(r->ctx, rhs, 0, NULL, NULL, 64, value) == BALL_UNDEFINED;
			arb_clear(value);
		}
		if (decision != BALL_UNDECIDED || w.reason == BALL_REASON_UNDEFINED) {
			w.bits = w.bits > v->bits ? w.bits : v->bits;
			ball_verdict_clear(v);
			*v = w;
		} else {
			ball_verdict_clear(&w);
		}
	}
	free(olds);
	free(news);
	return decision;
}

/* Decide one part numerically; returns its verdict and fills out on failure. */
static verify_verdict decide_numeric(part_run *r, verify_result *out, int part, size_t points, slong least,
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
	size_t tested = 0, deep = 0;
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
		/* every point at 1024 bits or more: a zero within 64-bit rounding must
		 * not hide a difference of 1/10^40 */
		ball_decision decision = ball_claim_decide_from(claim, (const mpq_t *)r->values,
		                                                least ? least : BALL_MAX_PRECISION, &v);
		bool neither = false; /* both sides certainly undefined at the exact point */
		if (decision == BALL_UNDECIDED &&
		    (v.reason == BALL_REASON_CANCELLATION || v.reason == BALL_REASON_UNKNOWN))
			decision = decide_exactly(r, &v, &neither);
		if (decision == BALL_ZERO_WITHIN_BOUND && least && deep < VERIFY_DEEP_POINTS &&
		    least < BALL_MAX_PRECISION) {
			/* zero at the least precision: again at the largest, where the
			 * bound is 2^-8192 of the scale, not 2^-256 (tanh(400 + x) = 1
			 * fails there, at 1024 bits it held) */
			deep++;
			ball_verdict_clear(&v);
			decision = ball_claim_decide_from(claim, (const mpq_t *)r->values, BALL_MAX_PRECISION,
			                                  &v);
		}
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
		if (decision == BALL_ZERO_WITHIN_BOUND && least) {
			tested++;
		} else if (decision == BALL_ZERO_WITHIN_BOUND) {
			tested++;
			if (verdict == VERIFY_HOLDS) {
				verdict = VERIFY_UNDECIDED;
				*reason = "a number of the claim is smaller, next to its largest one, than "
				          "the largest precision can tell from zero";
				out->part = part;
				out->difference = r->difference;
				record_point(out, r, NULL);
			}
		} else if (v.reason == BALL_REASON_UNDEFINED &&
		           (neither || (!defined_at(r, r->lhs) && !defined_at(r, r->rhs)))) {
			/* outside the domain of both sides: evidence neither way; another point */
		} else {
			/* one side undefined, or no decision at the largest precision
			 * (cancellation beyond it, a side at a domain boundary): the
			 * point is neither evidence for nor against, and a claim holds
			 * only when every point is decided, so the claim is undecided
			 * (the point named; later points may still refute it) */
			tested++;
			if (v.reason == BALL_REASON_CANCELLATION || v.reason == BALL_REASON_UNKNOWN)
				out->skipped++;
			if (verdict == VERIFY_HOLDS) {
				verdict = VERIFY_UNDECIDED;
				*reason = v.reason == BALL_REASON_UNDEFINED
				                  ? "one side is undefined on part of the domain where the "
				                    "other is defined"
				                  : ball_reason_message(v.reason);
				out->part = part;
				out->difference = r->difference;
				record_point(out, r, NULL);
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
				expr_clear_recoverable(ctx);
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
		if (!add_function_atoms(&r) || expr_error(ctx) != EXPR_OK) {
			/* a limit or an interrupt: the error stays pending, the
			 * statement reports it and prints no verdict */
			expr_vec_free(&r.atoms);
			free(r.affine);
			break;
		}
		r.dom = domain_new(ctx, m, r.atoms.n, r.atoms.items, seed * 1000003u + p);
		mark_walk marks = {.dom = r.dom};
		domain_add_mark(r.dom, expr_num_value(expr_int(ctx, 0)));
		collect_marks(r.lhs, &marks);
		collect_marks(r.rhs, &marks);
		collect_marks(r.difference, &marks);
		expr_map_free(&marks.seen);
		if (expr_error(ctx) == EXPR_OK) {
			expr_map root_seen = {0};
			collect_roots(ctx, r.lhs, &root_seen, r.dom);
			collect_roots(ctx, r.rhs, &root_seen, r.dom);
			expr_map_free(&root_seen);
			expr_clear_recoverable(ctx); /* a root that could not be formed: no mark */
		}
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
			verify_verdict v =
			        decide_numeric(&r, out, (int)p, in->points ? in->points : VERIFY_POINTS,
			                       least_precision(&marks), &reason);
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
	if (expr_error(ctx) != EXPR_OK && out->verdict != VERIFY_FAILS) {
		/* a limit or an interrupt left pending: nothing was decided */
		out->verdict = VERIFY_UNDECIDED;
		out->reason = "the claim could not be tested within the limits";
	}
	out->holds = out->verdict == VERIFY_HOLDS;
	free(difference);
}

void verify_result_free(verify_result *result)
{
	for (size_t i = 0; result->values && i < result->natoms; i++)
		free(result->values[i]);
	free(result->atoms);
	free(result->values);
	free(result->left);
	free(result->right);
	free(result->gap);
	result->atoms = NULL;
	result->values = NULL;
	result->left = result->right = result->gap = NULL;
}
