/* expr-sign.c - the sign oracle: what signs a node may take, given the
 * assumptions on its symbols (EXPR_SIGN_* flags), and whether it is written
 * with a negative leading coefficient.
 */
#include "expr-internal.h"

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
	/* x^f for non-integer f is real only for x >= 0 */
	if (mpq_sgn(e) < 0 || !(b & EXPR_SIGN_ZERO))
		return EXPR_SIGN_POS;
	return EXPR_SIGN_NONNEG;
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
		return EXPR_SIGN_UNKNOWN;
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
