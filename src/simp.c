/* simp.c - rules for built-in functions, and the sign oracle they rely on.
 *
 * Each rule states its identity and the assumption it needs.  "Valid on the
 * domain" means: wherever the left side is defined (as a real number), the two
 * sides agree, so the rule needs no assumption beyond the expression itself.
 */
#include <stdlib.h>

#include "expr-internal.h"
#include "rat.h"
#include "simp.h"
#include "xalloc.h"

/* ------------------------------------------------------------------ signs */

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
		int result = even ? ((b & EXPR_SIGN_ZERO) && !negative ? EXPR_SIGN_NONNEG : EXPR_SIGN_POS)
				  : b;
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

bool simp_negative_form(const expr *e)
{
	switch (e->kind) {
	case EXPR_NUM:
		return mpq_sgn(e->u.num) < 0;
	case EXPR_MUL:
		return mpq_sgn(e->u.mul.coef) < 0;
	case EXPR_ADD:
		return simp_negative_form(e->u.add.terms[e->nops - 1]);
	default:
		return false;
	}
}

/* ------------------------------------------------------------------ exp */

/* If term is c*r*log(x) with r free of log (r may be 1), return x and set
 * *power = c*r. */
static const expr *log_factor(expr_ctx *ctx, const expr *term, const expr **power)
{
	if (term->kind == EXPR_FUN && term->u.fun.fn == EXPR_F_LOG) {
		*power = expr_int(ctx, 1);
		return term->u.fun.arg;
	}
	if (term->kind != EXPR_MUL)
		return NULL;
	size_t found = term->nops;
	for (size_t i = 0; i < term->nops; i++) {
		const expr *base = term->u.mul.bases[i];
		if (base->kind == EXPR_FUN && base->u.fun.fn == EXPR_F_LOG) {
			if (found != term->nops || !expr_is_one(term->u.mul.exps[i]))
				return NULL;
			found = i;
		}
	}
	if (found == term->nops)
		return NULL;
	const expr **rest = xmalloc((term->nops + 1) * sizeof *rest);
	size_t n = 0;
	rest[n++] = expr_num(ctx, term->u.mul.coef);
	for (size_t i = 0; i < term->nops; i++)
		if (i != found)
			rest[n++] = expr_pow_pair(ctx, term->u.mul.bases[i], term->u.mul.exps[i]);
	*power = expr_mul_n(ctx, n, rest);
	free(rest);
	return term->u.mul.bases[found]->u.fun.arg;
}

/* exp(log x) = x; exp(c*log(x) + r) = x^c * exp(r): valid on the domain (x > 0). */
static const expr *simp_exp(expr_ctx *ctx, const expr *arg)
{
	if (expr_is_zero(arg))
		return expr_int(ctx, 1);
	size_t n = arg->kind == EXPR_ADD ? arg->nops : 1;
	const expr **powers = xmalloc((n + 1) * sizeof *powers);
	const expr **remaining = xmalloc((n + 1) * sizeof *remaining);
	size_t npowers = 0, nremaining = 0;
	for (size_t i = 0; i < n; i++) {
		const expr *term = arg->kind == EXPR_ADD ? arg->u.add.terms[i] : arg;
		const expr *power = NULL;
		const expr *x = log_factor(ctx, term, &power);
		if (x)
			powers[npowers++] = expr_pow(ctx, x, power);
		else
			remaining[nremaining++] = term;
	}
	const expr *result;
	if (npowers == 0) {
		result = expr_fun_raw(ctx, EXPR_F_EXP, arg);
	} else {
		const expr *rest = expr_add_n(ctx, nremaining, remaining);
		powers[npowers++] = rest && !expr_is_zero(rest) ? expr_fun_raw(ctx, EXPR_F_EXP, rest)
							   : expr_int(ctx, 1);
		result = expr_mul_n(ctx, npowers, powers);
	}
	free(powers);
	free(remaining);
	return result;
}

/* ------------------------------------------------------------------ log */

/* log(c * prod b_i^e_i) = log c + sum e_i*log(b_i) when c > 0 and each b_i is
 * known positive, except at most one b_i with an odd integer exponent (then
 * b_i > 0 follows from the argument being positive); factors with even
 * exponents become e_i*log(abs(b_i)).  log(exp(u)) = u.  Valid on the domain. */
static const expr *simp_log(expr_ctx *ctx, const expr *arg)
{
	if (expr_is_one(arg))
		return expr_int(ctx, 0);
	if (arg->kind == EXPR_FUN && arg->u.fun.fn == EXPR_F_EXP)
		return arg->u.fun.arg;
	if (arg->kind != EXPR_MUL)
		return expr_fun_raw(ctx, EXPR_F_LOG, arg);
	if (mpq_sgn(arg->u.mul.coef) < 0)
		return expr_fun_raw(ctx, EXPR_F_LOG, arg);
	size_t odd_unknown = 0;
	for (size_t i = 0; i < arg->nops; i++) {
		const expr *base = arg->u.mul.bases[i], *e = arg->u.mul.exps[i];
		if (expr_sign(ctx, base) == EXPR_SIGN_POS)
			continue;
		if (e->kind == EXPR_NUM && !rat_is_integer(e->u.num))
			continue; /* x^f real only for x >= 0, and the log needs x > 0 */
		if (!expr_is_integer(e))
			return expr_fun_raw(ctx, EXPR_F_LOG, arg);
		if (mpz_odd_p(mpq_numref(e->u.num)))
			odd_unknown++;
	}
	if (odd_unknown > 1)
		return expr_fun_raw(ctx, EXPR_F_LOG, arg);
	const expr **terms = xmalloc((arg->nops + 1) * sizeof *terms);
	size_t n = 0;
	if (mpq_cmp_ui(arg->u.mul.coef, 1, 1) != 0)
		terms[n++] = expr_fun_raw(ctx, EXPR_F_LOG, expr_num(ctx, arg->u.mul.coef));
	for (size_t i = 0; i < arg->nops; i++) {
		const expr *base = arg->u.mul.bases[i], *e = arg->u.mul.exps[i];
		if (expr_is_integer(e) && mpz_even_p(mpq_numref(e->u.num)) &&
		    expr_sign(ctx, base) != EXPR_SIGN_POS)
			base = expr_fun(ctx, EXPR_F_ABS, base);
		terms[n++] = expr_mul(ctx, e, expr_fun(ctx, EXPR_F_LOG, base));
	}
	const expr *result = expr_add_n(ctx, n, terms);
	free(terms);
	return result;
}

/* ------------------------------------------------------------------ the rest */

/* A plainly negated argument (-x, -2*x*y): the parity rules fire only on those,
 * since the sign of a sum's leading term depends on the node order, not on
 * anything a reader sees (Phi(d2) must not turn into 1 - Phi(-d2)). */
static bool plainly_negative(const expr *e)
{
	return expr_kind_of(e) != EXPR_ADD && simp_negative_form(e);
}

static bool is_num_zero(const expr *e)
{
	return expr_is_zero(e);
}

const expr *simp_fun(expr_ctx *ctx, expr_builtin fn, const expr *arg)
{
	switch (fn) {
	case EXPR_F_EXP:
		return simp_exp(ctx, arg);
	case EXPR_F_LOG:
		return simp_log(ctx, arg);
	case EXPR_F_ABS: {
		/* abs(x) = x for x >= 0, -x for x <= 0; abs(-x) = abs(x) */
		int s = expr_sign(ctx, arg);
		if (!(s & EXPR_SIGN_NEG))
			return arg;
		if (!(s & EXPR_SIGN_POS))
			return expr_neg(ctx, arg);
		if (plainly_negative(arg))
			return expr_fun_raw(ctx, fn, expr_neg(ctx, arg));
		return expr_fun_raw(ctx, fn, arg);
	}
	case EXPR_F_SIN:
	case EXPR_F_TAN:
	case EXPR_F_SINH:
	case EXPR_F_TANH:
	case EXPR_F_ERF:
		/* odd functions: f(0) = 0, f(-x) = -f(x) */
		if (is_num_zero(arg))
			return arg;
		if (plainly_negative(arg))
			return expr_neg(ctx, expr_fun_raw(ctx, fn, expr_neg(ctx, arg)));
		return expr_fun_raw(ctx, fn, arg);
	case EXPR_F_COS:
	case EXPR_F_COSH:
		/* even functions: f(0) = 1, f(-x) = f(x) */
		if (is_num_zero(arg))
			return expr_int(ctx, 1);
		/* fall through */
	case EXPR_F_NPDF:
		if (plainly_negative(arg))
			return expr_fun_raw(ctx, fn, expr_neg(ctx, arg));
		return expr_fun_raw(ctx, fn, arg);
	case EXPR_F_NCDF:
		/* Phi(0) = 1/2; Phi(-x) = 1 - Phi(x) */
		if (is_num_zero(arg))
			return expr_rat(ctx, 1, 2);
		if (plainly_negative(arg))
			return expr_sub(ctx, expr_int(ctx, 1), expr_fun_raw(ctx, fn, expr_neg(ctx, arg)));
		return expr_fun_raw(ctx, fn, arg);
	default:
		return expr_fun_raw(ctx, fn, arg);
	}
}

/* Rebuild e through the constructors, so rules that depend on assumptions
 * declared after e was made can fire. */
const expr *simp_refresh(expr_ctx *ctx, const expr *e)
{
	return expr_rebuild(ctx, e, NULL, NULL);
}
