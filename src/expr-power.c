/* expr-power.c - powers, and the rules applied when one is made.
 *
 * Real powers follow the one convention of expr.h (x^(p/q), q odd: the real
 * root; q even: x >= 0; x^s, s symbolic: x > 0).  A rule fires only where it is
 * valid: wherever its left side is defined, the two sides agree.  The rules
 * (identity; assumption; source), each stated again where it is applied:
 *   x^0 = 1, x^1 = x                      none                   common practice
 *   q^e for rationals q > 0, e: exact root when there is one, (a/b)^e =
 *     a^e*b^-e, (k^r*m)^(a/r) = k^a*m^(a/r), q^(k+f) = q^k*q^f
 *                                         q > 0                  common practice
 *   (a+b)^n expanded                      n a positive integer   binomial theorem
 *   (g*u)^e = g^e*u^e, g the content of a sum u
 *                                         g > 0 (or e integer)   common practice
 *   (c*prod x_i^a_i)^n = c^n*prod x_i^(a_i*n)
 *                                         n an integer           common practice
 *   (c*prod x_i^a_i)^e = c^e*prod X_i^(a_i*e), e a fraction, X_i = abs(x_i) for
 *     an even numerator a_i (or symbolic a_i) and x_i of unknown sign, else x_i
 *                                         c > 0; at most one x_i of unknown sign
 *                                         whose power keeps its sign, and for an
 *                                         even root of e > 0 no other factor that
 *                                         may vanish                   common practice
 *   (c*prod x_i^a_i)^s = c^s*prod X_i^(a_i*s), s symbolic
 *                                         the product > 0 (expr_positive_bases)
 *                                                              common practice
 *   exp(u)^e = exp(e*u)                   none                   DLMF 4.2.26, from memory
 *   abs(x)^(2k) = x^(2k)                  none                   common practice
 *   1^s = 1                               none                   common practice
 * tests/check_rules.c checks each in ball arithmetic on its domain.
 */
#include "expr-internal.h"

#include <stdlib.h>

#include "rat.h"
#include "xalloc.h"

static bool exponent_too_large(expr_ctx *ctx, const expr *exponent)
{
	if (exponent->kind != EXPR_NUM)
		return false;
	const __mpq_struct *q = exponent->u.num;
	if (mpz_cmpabs_ui(mpq_numref(q), (unsigned long)ctx->limits.max_exponent) > 0 ||
	    mpz_cmp_ui(mpq_denref(q), (unsigned long)ctx->limits.max_exponent) > 0) {
		expr_fail(ctx, EXPR_ERR_EXPONENT, "exponent too large");
		return true;
	}
	return false;
}

static const expr *num_pow(expr_ctx *ctx, const __mpq_struct *q, const __mpq_struct *e);

/* Is x^inner >= 0 wherever it is defined, whatever the sign of x?  An even
 * numerator (x^(2k/q) = abs(x)^(2k/q)), an even denominator (defined for x >= 0
 * only) or a symbolic exponent (defined for x > 0 only). */
static bool nonnegative_power(const expr *inner)
{
	if (inner->kind != EXPR_NUM)
		return true;
	return mpz_even_p(mpq_numref(inner->u.num)) || mpz_even_p(mpq_denref(inner->u.num));
}

/* For an integer n > 1 and e = a/r: n = k^r * m with k > 1 found by trial
 * division by small primes gives n^e = k^a * m^e.  Returns false if no k. */
static bool extract_perfect_power(expr_ctx *ctx, const __mpq_struct *n, const __mpq_struct *e,
                                  const expr **result)
{
	unsigned long root = mpz_get_ui(mpq_denref(e));
	if (root >= mpz_sizeinbase(mpq_numref(n), 2))
		return false;
	mpz_t rest, k, prime_power;
	mpz_init_set(rest, mpq_numref(n));
	mpz_init_set_ui(k, 1);
	mpz_init(prime_power);
	for (unsigned long prime = 2; prime < 2000; prime += prime == 2 ? 1 : 2) {
		mpz_ui_pow_ui(prime_power, prime, root);
		if (mpz_cmp(prime_power, rest) > 0)
			break;
		while (mpz_divisible_p(rest, prime_power)) {
			mpz_divexact(rest, rest, prime_power);
			mpz_mul_ui(k, k, prime);
		}
	}
	bool found = mpz_cmp_ui(k, 1) > 0;
	if (found) {
		mpq_t kq, restq, integer_exponent;
		mpq_init(kq);
		mpq_init(restq);
		mpq_init(integer_exponent);
		mpq_set_z(kq, k);
		mpq_set_z(restq, rest);
		mpq_set_z(integer_exponent, mpq_numref(e));
		*result = expr_mul(ctx, num_pow(ctx, kq, integer_exponent), num_pow(ctx, restq, e));
		mpq_clear(kq);
		mpq_clear(restq);
		mpq_clear(integer_exponent);
	}
	mpz_clear(rest);
	mpz_clear(k);
	mpz_clear(prime_power);
	return found;
}

/* q^e for rational q and rational e: an exact number where possible, otherwise
 * q^k * q^f with k = floor(e) and 0 < f < 1 (a surd, kept as a factor). */
static const expr *num_pow(expr_ctx *ctx, const __mpq_struct *q, const __mpq_struct *e)
{
	if (rat_is_integer(e)) {
		if (!mpz_fits_slong_p(mpq_numref(e)))
			return expr_fail(ctx, EXPR_ERR_EXPONENT, "exponent too large");
		mpq_t value;
		mpq_init(value);
		const expr *result = NULL;
		if (mpq_sgn(q) == 0 && mpz_sgn(mpq_numref(e)) < 0)
			expr_fail(ctx, EXPR_ERR_DIVISION, "division by zero");
		else if (!rat_pow_int(value, q, mpz_get_si(mpq_numref(e)), ctx->limits.max_bits))
			expr_fail(ctx, EXPR_ERR_EXPONENT, "number too large (power of a number)");
		else
			result = expr_num(ctx, value);
		mpq_clear(value);
		return result;
	}
	if (mpq_sgn(q) == 0)
		return mpq_sgn(e) > 0 ? ctx->zero : expr_fail(ctx, EXPR_ERR_DIVISION, "division by zero");
	if (mpq_cmp_ui(q, 1, 1) == 0)
		return ctx->one;
	if (!mpz_fits_ulong_p(mpq_denref(e)))
		return expr_fail(ctx, EXPR_ERR_EXPONENT, "exponent too large");
	mpq_t root;
	mpq_init(root);
	const expr *result;
	if (mpq_sgn(q) > 0 && rat_root_exact(root, q, mpz_get_ui(mpq_denref(e)))) {
		mpq_t integer_exponent;
		mpq_init(integer_exponent);
		mpq_set_z(integer_exponent, mpq_numref(e));
		result = num_pow(ctx, root, integer_exponent);
		mpq_clear(integer_exponent);
	} else if (mpq_sgn(q) < 0) {
		result = expr_pow_pair(ctx, expr_num(ctx, q), expr_num(ctx, e));
	} else if (!rat_is_integer(q)) {
		/* (a/b)^e = a^e * b^-e for a, b > 0, so each surd has an integer base */
		mpq_t part, minus_e;
		mpq_init(part);
		mpq_init(minus_e);
		mpq_neg(minus_e, e);
		mpq_set_z(part, mpq_numref(q));
		const expr *top = num_pow(ctx, part, e);
		mpq_set_z(part, mpq_denref(q));
		const expr *bottom = num_pow(ctx, part, minus_e);
		result = expr_mul(ctx, top, bottom);
		mpq_clear(part);
		mpq_clear(minus_e);
	} else if (extract_perfect_power(ctx, q, e, &result)) {
		/* done: (k^r*m)^(a/r) = k^a*m^(a/r) for k, m > 0: sqrt(8) = 2*sqrt(2) */
	} else {
		/* q^(k+f) = q^k * q^f for q > 0, k = floor(e) */
		mpz_t k;
		mpz_init(k);
		mpz_fdiv_q(k, mpq_numref(e), mpq_denref(e));
		mpq_t integer_part, fraction;
		mpq_init(integer_part);
		mpq_init(fraction);
		mpq_set_z(integer_part, k);
		mpq_sub(fraction, e, integer_part);
		const expr *whole = num_pow(ctx, q, integer_part);
		const expr *surd = expr_pow_pair(ctx, expr_num(ctx, q), expr_num(ctx, fraction));
		result = expr_mul(ctx, whole, surd);
		mpq_clear(integer_part);
		mpq_clear(fraction);
		mpz_clear(k);
	}
	mpq_clear(root);
	return result;
}

/* The positive rational content g of a sum (gcd of numerators over lcm of
 * denominators), negated when flip_sign and the leading term is negative. */
static void sum_content(const expr *sum, bool flip_sign, mpq_t g)
{
	mpz_t num, den;
	mpz_init(num);
	mpz_init_set_ui(den, 1);
	mpq_t c;
	mpq_init(c);
	for (size_t i = 0; i < sum->nops; i++) {
		const expr *term = sum->u.add.terms[i];
		if (term->kind == EXPR_NUM)
			mpq_set(c, term->u.num);
		else if (term->kind == EXPR_MUL)
			mpq_set(c, term->u.mul.coef);
		else
			mpq_set_ui(c, 1, 1);
		mpz_gcd(num, num, mpq_numref(c));
		mpz_lcm(den, den, mpq_denref(c));
	}
	mpq_set_num(g, num);
	mpq_set_den(g, den);
	mpq_canonicalize(g);
	if (flip_sign && expr_negative_form(sum))
		mpq_neg(g, g);
	mpq_clear(c);
	mpz_clear(num);
	mpz_clear(den);
}

/* (a+b)^n expanded for a positive integer n (the binomial theorem, DLMF 1.2.2,
 * from memory; every real a, b).  Otherwise (g*u)^e = g^e*u^e with g the
 * rational content of the sum: for g > 0 valid for every real u (the real root
 * of an odd q is multiplicative; with q even both sides need u >= 0); a
 * negative g only for an integer e ((-a-b)^-1 = -(a+b)^-1).  Common practice,
 * no source. */
static const expr *pow_sum(expr_ctx *ctx, const expr *sum, const expr *exponent)
{
	const __mpq_struct *e = exponent->u.num;
	if (expr_is_positive_integer(exponent)) {
		/* (a+b)^n expanded: refuse when the multinomial count is too large */
		unsigned long power = mpz_get_ui(mpq_numref(e));
		double count = 1;
		for (unsigned long k = 1; k < sum->nops && count <= 1e12; k++)
			count = count * (double)(power + k) / (double)k;
		if (ctx->limits.max_terms && count > (double)ctx->limits.max_terms)
			return expr_fail(
			        ctx, EXPR_ERR_TOO_LARGE,
			        "expression too large (expanding this power exceeds the term limit)");
		const expr *result = ctx->one, *square = sum;
		while (power > 0 && result) {
			if (power & 1)
				result = expr_mul(ctx, result, square);
			power >>= 1;
			if (power)
				square = expr_mul(ctx, square, square);
		}
		return result;
	}
	mpq_t g;
	mpq_init(g);
	sum_content(sum, rat_is_integer(e), g);
	const expr *result;
	if (mpq_cmp_ui(g, 1, 1) == 0) {
		result = expr_pow_pair(ctx, sum, exponent);
	} else {
		mpq_t inverse;
		mpq_init(inverse);
		mpq_inv(inverse, g);
		const expr *primitive = expr_scale(ctx, sum, inverse);
		result = expr_mul(ctx, num_pow(ctx, g, e), expr_pow_pair(ctx, primitive, exponent));
		mpq_clear(inverse);
	}
	mpq_clear(g);
	return result;
}

/* (c * prod b_i^e_i)^e for a rational e.  Integer e: c^e * prod b_i^(e_i*e),
 * valid wherever the left side is defined (common practice, no source).
 * Fractional e: the conditions below. */
static const expr *pow_mul(expr_ctx *ctx, const expr *product, const expr *exponent)
{
	const __mpq_struct *e = exponent->u.num;
	bool integer = rat_is_integer(e);
	const __mpq_struct *c = product->u.mul.coef;
	if (!integer && mpq_sgn(c) < 0) {
		/* (-x)^(1/2) cannot be split; keep it whole (after making the rest positive) */
		return expr_pow_pair(ctx, product, exponent);
	}
	if (!integer) {
		/* (x*y)^e = x^e*y^e for fractional e needs x, y >= 0 (for c > 0 too,
		 * checked above); one factor of unknown sign is fine (the others
		 * are >= 0, so the domain makes it >= 0 too), two are not:
		 * (a*b)^(1/2) is real for a, b < 0.  Common practice, no source. */
		size_t unknown = 0, odd = product->nops;
		for (size_t i = 0; i < product->nops; i++) {
			const expr *inner = product->u.mul.exps[i];
			if (nonnegative_power(inner))
				continue; /* x^(2k/q), x^(p/2k) or x^s: >= 0 wherever defined */
			if (expr_sign(ctx, product->u.mul.bases[i]) & EXPR_SIGN_NEG) {
				unknown++;
				odd = i;
			}
		}
		if (unknown > 1)
			return expr_pow_pair(ctx, product, exponent);
		/* ... and none of the others may vanish when the root is even and
		 * e > 0: (x*y^2)^(1/2) is 0 at y = 0, x < 0, where sqrt(x)*abs(y)
		 * is undefined (a symbolic power x^s never vanishes: x > 0) */
		if (unknown == 1 && mpz_even_p(mpq_denref(e)) && mpq_sgn(e) > 0)
			for (size_t i = 0; i < product->nops; i++)
				if (i != odd && product->u.mul.exps[i]->kind == EXPR_NUM &&
				    (expr_sign(ctx, product->u.mul.bases[i]) & EXPR_SIGN_ZERO))
					return expr_pow_pair(ctx, product, exponent);
	}
	const expr **parts = xmalloc((product->nops + 1) * sizeof *parts);
	parts[0] = num_pow(ctx, c, e);
	for (size_t i = 0; i < product->nops; i++) {
		const expr *base = product->u.mul.bases[i];
		const expr *inner = product->u.mul.exps[i];
		const expr *combined = expr_mul(ctx, inner, exponent);
		/* (x^(2k/q))^e = abs(x)^(2k/q*e) for fractional e unless x >= 0: the
		 * inner power is >= 0 for every real x, so x^(2k/q*e) could be
		 * negative or undefined where the left side is not ((x^(2/3))^(3/2)
		 * = abs(x)).  The same for a symbolic s: x^s is defined for x > 0
		 * only (the convention of expr.h), so (x^s)^e = abs(x)^(s*e) agrees
		 * wherever the left side is defined: sqrt(x^(2*a)) = abs(x)^a. */
		if (!integer && (expr_sign(ctx, base) & EXPR_SIGN_NEG) &&
		    (inner->kind != EXPR_NUM || mpz_even_p(mpq_numref(inner->u.num))))
			base = expr_fun(ctx, EXPR_F_ABS, base);
		parts[i + 1] = expr_pow(ctx, base, combined);
	}
	const expr *result = expr_mul_n(ctx, product->nops + 1, parts);
	free(parts);
	return result;
}

const expr *expr_pow(expr_ctx *ctx, const expr *base, const expr *exponent)
{
	/* x^0 = 1 and x^1 = x (and NULL in, NULL out): as for the raw power */
	if (!base || !exponent || expr_is_zero(exponent) || expr_is_one(exponent))
		return expr_pow_pair(ctx, base, exponent);
	if (exponent_too_large(ctx, exponent))
		return NULL;
	if (exponent->kind == EXPR_NUM) {
		switch (base->kind) {
		case EXPR_NUM:
			return num_pow(ctx, base->u.num, exponent->u.num);
		case EXPR_ADD:
			return pow_sum(ctx, base, exponent);
		case EXPR_MUL:
			return pow_mul(ctx, base, exponent);
		case EXPR_FUN:
			if (base->u.fun.fn == EXPR_F_EXP)
				return expr_fun(ctx, EXPR_F_EXP, expr_mul(ctx, exponent, base->u.fun.arg));
			/* exp(u)^e = exp(e*u) above, for every real u and e; abs(x)^2k = x^2k,
			 * for every real x (x != 0 for k < 0) */
			if (base->u.fun.fn == EXPR_F_ABS && expr_is_even_integer(exponent))
				return expr_pow(ctx, base->u.fun.arg, exponent);
			return expr_pow_pair(ctx, base, exponent);
		default:
			return expr_pow_pair(ctx, base, exponent);
		}
	}
	/* symbolic exponent: 1^s = 1; exp(u)^s = exp(s*u), every real u, s */
	if (expr_is_one(base))
		return ctx->one;
	if (expr_is_fun(base, EXPR_F_EXP))
		return expr_fun(ctx, EXPR_F_EXP, expr_mul(ctx, exponent, base->u.fun.arg));
	if (base->kind == EXPR_MUL) {
		/* (c * prod x_i^a_i)^b = c^b * prod X_i^(a_i*b) for a symbolic b: the
		 * left side is defined where the product is positive (expr.h), and
		 * there X_i = x_i or abs(x_i) is positive with x_i^a_i = X_i^a_i
		 * (expr_positive_bases), so (x^a)^b = x^(a*b) for x > 0,
		 * (x^(2/3))^b = abs(x)^(2/3*b), (x*y)^b whole for x, y of unknown
		 * sign.  Common practice, no source ((xy)^b = x^b*y^b, (x^a)^b =
		 * x^(ab) for x, y > 0). */
		const expr **bases = xmalloc(base->nops * sizeof *bases);
		const expr *result = NULL;
		if (expr_positive_bases(ctx, base, bases)) {
			const expr **parts = xmalloc((base->nops + 1) * sizeof *parts);
			parts[0] = mpq_cmp_ui(base->u.mul.coef, 1, 1) == 0
			                   ? ctx->one
			                   : expr_pow_pair(ctx, expr_num(ctx, base->u.mul.coef), exponent);
			for (size_t i = 0; i < base->nops; i++)
				parts[i + 1] =
				        expr_pow(ctx, bases[i], expr_mul(ctx, base->u.mul.exps[i], exponent));
			result = expr_mul_n(ctx, base->nops + 1, parts);
			free(parts);
		}
		free(bases);
		if (result)
			return result;
	}
	return expr_pow_pair(ctx, base, exponent);
}

const expr *expr_pow_rat(expr_ctx *ctx, const expr *base, long num, long den)
{
	return expr_pow(ctx, base, expr_rat(ctx, num, den));
}
