/* expr-sign.c - the sign oracle: what signs a node may take, given the
 * assumptions on its symbols (EXPR_SIGN_* flags), and whether it is written
 * with a negative leading coefficient.
 */
#include "expr-internal.h"

#include <math.h>

#include "rat.h"

/* Sign of a product of two quantities given their possible-sign flags. */
static int sign_product(int a, int b)
{
	int result = 0;
	if ((a & EXPR_SIGN_ZERO) || (b & EXPR_SIGN_ZERO))
		result |= EXPR_SIGN_ZERO;
	if (((a & EXPR_SIGN_POS) && (b & EXPR_SIGN_POS)) || ((a & EXPR_SIGN_NEG) && (b & EXPR_SIGN_NEG)))
		result |= EXPR_SIGN_POS;
	if (((a & EXPR_SIGN_POS) && (b & EXPR_SIGN_NEG)) || ((a & EXPR_SIGN_NEG) && (b & EXPR_SIGN_POS)))
		result |= EXPR_SIGN_NEG;
	return result;
}

static int sign_of_power(expr_ctx *ctx, const expr *base, const expr *exponent)
{
	int b = expr_sign(ctx, base);
	if (exponent->kind != EXPR_NUM)
		return b == EXPR_SIGN_POS ? EXPR_SIGN_POS : EXPR_SIGN_UNKNOWN;
	const __mpq_struct *e = exponent->u.num;
	if (rat_is_integer(e)) {
		bool even = mpz_even_p(mpq_numref(e));
		bool negative = mpq_sgn(e) < 0;
		int result =
		        even ? ((b & EXPR_SIGN_ZERO) && !negative ? EXPR_SIGN_NONNEG : EXPR_SIGN_POS) : b;
		if (negative)
			result &= ~EXPR_SIGN_ZERO;
		return result ? result : EXPR_SIGN_POS;
	}
	/* x^(p/q) with q odd is the real root (the convention of expr.h): the sign
	 * of x for odd p, >= 0 for even p; with q even it is real only for x >= 0 */
	bool odd_root = mpz_odd_p(mpq_denref(e));
	if (odd_root && mpz_odd_p(mpq_numref(e)))
		return mpq_sgn(e) < 0 ? (b & ~EXPR_SIGN_ZERO) ? (b & ~EXPR_SIGN_ZERO) : EXPR_SIGN_POS : b;
	if (odd_root && (b & EXPR_SIGN_NEG) && !(b & EXPR_SIGN_ZERO) && mpq_sgn(e) > 0)
		return EXPR_SIGN_POS;
	if (mpq_sgn(e) < 0 || !(b & EXPR_SIGN_ZERO))
		return EXPR_SIGN_POS;
	return EXPR_SIGN_NONNEG;
}

/* An interval [lo, hi] with open or closed ends, for sums of bounded terms. */
typedef struct bounds {
	double lo, hi;
	bool lo_open, hi_open;
} bounds;

/* The values a function of one argument can take (false when unbounded in
 * a way the sign flags already say). */
static bool function_bounds(expr_builtin fn, bounds *b)
{
	switch (fn) {
	case EXPR_F_NCDF: /* Phi: (0, 1) */
		*b = (bounds){0, 1, true, true};
		return true;
	case EXPR_F_NPDF: /* phi: (0, 1/sqrt(2 pi)], 1/sqrt(2 pi) < 0.4 */
		*b = (bounds){0, 0.4, true, false};
		return true;
	case EXPR_F_ERF:
	case EXPR_F_TANH: /* (-1, 1) */
		*b = (bounds){-1, 1, true, true};
		return true;
	case EXPR_F_SIN:
	case EXPR_F_COS: /* [-1, 1] */
		*b = (bounds){-1, 1, false, false};
		return true;
	default:
		return false;
	}
}

/* Bounds of a term c*f(u)^k (f bounded, k = 1 or 2) or of a term whose
 * sign is known; false otherwise. */
static bool term_bounds(expr_ctx *ctx, const expr *t, bounds *b)
{
	if (t->kind == EXPR_NUM) {
		double v = mpq_get_d(t->u.num);
		*b = (bounds){v, v, false, false};
		return true;
	}
	const expr *f = t;
	double c = 1;
	long k = 1;
	if (t->kind == EXPR_MUL && t->nops == 1 && t->u.mul.exps[0]->kind == EXPR_NUM &&
	    (mpq_cmp_ui(t->u.mul.exps[0]->u.num, 1, 1) == 0 || mpq_cmp_ui(t->u.mul.exps[0]->u.num, 2, 1) == 0)) {
		c = mpq_get_d(t->u.mul.coef);
		k = mpz_get_si(mpq_numref(t->u.mul.exps[0]->u.num));
		f = t->u.mul.bases[0];
	}
	bounds fb;
	if (f->kind == EXPR_FUN && function_bounds(f->u.fun.fn, &fb)) {
		if (k == 2) { /* f^2 in [0, max(lo^2, hi^2)] */
			double top = fmax(fb.lo * fb.lo, fb.hi * fb.hi);
			bool top_open = fb.lo * fb.lo > fb.hi * fb.hi ? fb.lo_open : fb.hi_open;
			fb = (bounds){0, top, fb.lo < 0 && fb.hi > 0 ? false : fb.lo_open, top_open};
		}
		*b = c > 0 ? (bounds){c * fb.lo, c * fb.hi, fb.lo_open, fb.hi_open}
			   : (bounds){c * fb.hi, c * fb.lo, fb.hi_open, fb.lo_open};
		return true;
	}
	int s = expr_sign(ctx, t);
	if (s == EXPR_SIGN_POS)
		*b = (bounds){0, INFINITY, true, true};
	else if (s == EXPR_SIGN_NONNEG)
		*b = (bounds){0, INFINITY, false, true};
	else if (s == EXPR_SIGN_NEG)
		*b = (bounds){-INFINITY, 0, true, true};
	else if (s == EXPR_SIGN_NONPOS)
		*b = (bounds){-INFINITY, 0, true, false};
	else
		return false;
	return true;
}

/* The sign of a sum from bounds of its terms: 1 - Phi(x) > 0, 2 + sin(x) > 0.
 * The bounds are doubles: a margin keeps rounding from deciding a sign. */
static int sum_sign_by_bounds(expr_ctx *ctx, const expr *e)
{
	bounds total = {0, 0, false, false};
	for (size_t i = 0; i < e->nops; i++) {
		bounds b;
		if (!term_bounds(ctx, e->u.add.terms[i], &b))
			return EXPR_SIGN_UNKNOWN;
		total.lo += b.lo;
		total.hi += b.hi;
		total.lo_open |= b.lo_open;
		total.hi_open |= b.hi_open;
	}
	double margin = 1e-12 * ((isfinite(total.lo) ? fabs(total.lo) : 0) +
				 (isfinite(total.hi) ? fabs(total.hi) : 0) + 1);
	if (total.lo > margin || (total.lo == 0 && total.lo_open && isfinite(total.lo)))
		return EXPR_SIGN_POS;
	if (total.hi < -margin || (total.hi == 0 && total.hi_open && isfinite(total.hi)))
		return EXPR_SIGN_NEG;
	return EXPR_SIGN_UNKNOWN;
}

/* The sign of a sum whose terms share a positive factor: 2*a + a*sin(x) is
 * a*(2 + sin(x)), positive for a > 0.  The factor is the product of the
 * positive bases of the first term that every term has, each to its least
 * exponent. */
static int sum_sign_by_factor(expr_ctx *ctx, const expr *e)
{
	const expr *first = e->u.add.terms[0];
	if (first->kind != EXPR_MUL)
		return EXPR_SIGN_UNKNOWN;
	const expr *common = ctx->one;
	for (size_t i = 0; i < first->nops; i++) {
		const expr *base = first->u.mul.bases[i], *least = first->u.mul.exps[i];
		if (least->kind != EXPR_NUM || expr_sign(ctx, base) != EXPR_SIGN_POS)
			continue;
		bool everywhere = true;
		for (size_t t = 1; t < e->nops && everywhere; t++) {
			const expr *term = e->u.add.terms[t];
			everywhere = false;
			for (size_t j = 0; term->kind == EXPR_MUL && j < term->nops; j++)
				if (term->u.mul.bases[j] == base && term->u.mul.exps[j]->kind == EXPR_NUM) {
					everywhere = true;
					if (mpq_cmp(term->u.mul.exps[j]->u.num, least->u.num) < 0)
						least = term->u.mul.exps[j];
				}
		}
		if (everywhere)
			common = expr_mul(ctx, common, expr_pow(ctx, base, least));
	}
	if (!common || common == ctx->one)
		return EXPR_SIGN_UNKNOWN;
	const expr *rest = expr_div_terms(ctx, e, common);
	if (!rest || rest->kind != EXPR_ADD || rest == e)
		return EXPR_SIGN_UNKNOWN;
	return sum_sign_by_bounds(ctx, rest);
}

int expr_sign(expr_ctx *ctx, const expr *e)
{
	switch (e->kind) {
	case EXPR_NUM: {
		int s = mpq_sgn(e->u.num);
		return s > 0 ? EXPR_SIGN_POS : s < 0 ? EXPR_SIGN_NEG : EXPR_SIGN_ZERO;
	}
	case EXPR_SYM:
		return e->u.sym.sign;
	case EXPR_FAPP:
		return EXPR_SIGN_UNKNOWN;
	case EXPR_FUN:
		switch (e->u.fun.fn) {
		case EXPR_F_EXP:
		case EXPR_F_COSH:
		case EXPR_F_NCDF:
		case EXPR_F_NPDF:
			return EXPR_SIGN_POS;
		case EXPR_F_ABS: {
			int a = expr_sign(ctx, e->u.fun.arg);
			return (a & EXPR_SIGN_ZERO) ? EXPR_SIGN_NONNEG : EXPR_SIGN_POS;
		}
		case EXPR_F_SINH:
		case EXPR_F_TANH:
		case EXPR_F_ERF:
			/* odd and increasing: the sign of the argument */
			return expr_sign(ctx, e->u.fun.arg);
		default:
			return EXPR_SIGN_UNKNOWN;
		}
	case EXPR_MUL: {
		int s = mpq_sgn(e->u.mul.coef) > 0 ? EXPR_SIGN_POS : EXPR_SIGN_NEG;
		for (size_t i = 0; i < e->nops && s; i++)
			s = sign_product(s, sign_of_power(ctx, e->u.mul.bases[i], e->u.mul.exps[i]));
		return s;
	}
	case EXPR_ADD: {
		bool all_nonneg = true, all_nonpos = true, some_pos = false, some_neg = false;
		for (size_t i = 0; i < e->nops; i++) {
			int s = expr_sign(ctx, e->u.add.terms[i]);
			all_nonneg &= !(s & EXPR_SIGN_NEG);
			all_nonpos &= !(s & EXPR_SIGN_POS);
			some_pos |= s == EXPR_SIGN_POS;
			some_neg |= s == EXPR_SIGN_NEG;
		}
		if (all_nonneg)
			return some_pos ? EXPR_SIGN_POS : EXPR_SIGN_NONNEG;
		if (all_nonpos)
			return some_neg ? EXPR_SIGN_NEG : EXPR_SIGN_NONPOS;
		int by_bounds = sum_sign_by_bounds(ctx, e);
		return by_bounds != EXPR_SIGN_UNKNOWN ? by_bounds : sum_sign_by_factor(ctx, e);
	}
	}
	return EXPR_SIGN_UNKNOWN;
}

bool expr_negative_form(const expr *e)
{
	switch (e->kind) {
	case EXPR_NUM:
		return mpq_sgn(e->u.num) < 0;
	case EXPR_MUL:
		return mpq_sgn(e->u.mul.coef) < 0;
	case EXPR_ADD:
		return expr_negative_form(e->u.add.terms[e->nops - 1]);
	default:
		return false;
	}
}

/* Given p = c * prod b_i^e_i > 0 at a point (the convention of expr.h):
 *   b_i known positive, or e_i symbolic (b^s is defined for b > 0 only): b_i;
 *   e_i = p/q with q even: b_i >= 0 where defined and b_i != 0 as p != 0: b_i;
 *   e_i = p/q, q odd, p even: b^e = abs(b)^e, and abs(b) > 0 as p != 0;
 *   e_i = p/q, q odd, p odd: b^e has the sign of b.  If b may be negative and
 *   every other factor is positive (all of the above), p > 0 forces b > 0; two
 *   such factors do not (x*y > 0 at x, y < 0).
 * Common practice, no source. */
bool expr_positive_bases(expr_ctx *ctx, const expr *product, const expr **bases)
{
	if (product->kind != EXPR_MUL || mpq_sgn(product->u.mul.coef) <= 0)
		return false;
	size_t odd_unknown = 0;
	for (size_t i = 0; i < product->nops; i++) {
		const expr *base = product->u.mul.bases[i], *e = product->u.mul.exps[i];
		bases[i] = base;
		if (e->kind != EXPR_NUM || !(expr_sign(ctx, base) & EXPR_SIGN_NEG))
			continue;
		if (mpz_even_p(mpq_denref(e->u.num)))
			continue;
		if (mpz_even_p(mpq_numref(e->u.num)))
			bases[i] = expr_fun(ctx, EXPR_F_ABS, base);
		else
			odd_unknown++;
	}
	return odd_unknown <= 1;
}
