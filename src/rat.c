/* rat.c - exact rationals.  Decimal literals are exact: 0.05 is 1/20. */
#include "rat.h"

#include <ctype.h>
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "xalloc.h"

bool rat_parse_decimal(mpq_t value, const char *text)
{
	const char *p = text;
	xbuf digits = {0};
	long fraction_digits = 0;
	bool any_digit = false;

	while (isdigit((unsigned char)*p)) {
		xbuf_putc(&digits, *p++);
		any_digit = true;
	}
	if (*p == '.') {
		p++;
		while (isdigit((unsigned char)*p)) {
			xbuf_putc(&digits, *p++);
			fraction_digits++;
			any_digit = true;
		}
	}
	if (!any_digit) {
		xbuf_free(&digits);
		return false;
	}
	long exponent = 0;
	if (*p == 'e' || *p == 'E') {
		p++;
		int sign = 1;
		if (*p == '+' || *p == '-')
			sign = (*p++ == '-') ? -1 : 1;
		if (!isdigit((unsigned char)*p)) {
			xbuf_free(&digits);
			return false;
		}
		while (isdigit((unsigned char)*p)) {
			if (exponent > RAT_MAX_DECIMAL_EXPONENT * 10L)
				break;
			exponent = exponent * 10 + (*p++ - '0');
		}
		while (isdigit((unsigned char)*p))
			p++;
		exponent *= sign;
	}
	if (*p != '\0') {
		xbuf_free(&digits);
		return false;
	}
	exponent -= fraction_digits;
	if (labs(exponent) > RAT_MAX_DECIMAL_EXPONENT + fraction_digits) {
		xbuf_free(&digits);
		return false;
	}
	mpz_t numerator, power;
	mpz_init_set_str(numerator, digits.data, 10);
	xbuf_free(&digits);
	mpz_init(power);
	mpz_ui_pow_ui(power, 10, (unsigned long)labs(exponent));
	if (exponent >= 0) {
		mpz_mul(numerator, numerator, power);
		mpq_set_z(value, numerator);
	} else {
		mpq_set_num(value, numerator);
		mpq_set_den(value, power);
		mpq_canonicalize(value);
	}
	mpz_clear(numerator);
	mpz_clear(power);
	return true;
}

unsigned long rat_bits(mpq_srcptr value)
{
	size_t num = mpz_sizeinbase(mpq_numref(value), 2);
	size_t den = mpz_sizeinbase(mpq_denref(value), 2);
	return (unsigned long)(num > den ? num : den);
}

bool rat_pow_int(mpq_t value, mpq_srcptr base, long exponent, unsigned long max_bits)
{
	if (mpq_sgn(base) == 0) {
		if (exponent < 0)
			return false;
		mpq_set_ui(value, exponent == 0 ? 1 : 0, 1);
		return true;
	}
	unsigned long magnitude = exponent < 0 ? 0UL - (unsigned long)exponent : (unsigned long)exponent;
	/* bits of the result: magnitude * log2 of the larger of numerator and denominator */
	long num_exp, den_exp;
	double num_mant = fabs(mpz_get_d_2exp(&num_exp, mpq_numref(base)));
	double den_mant = mpz_get_d_2exp(&den_exp, mpq_denref(base));
	double log_num = num_exp + log2(num_mant), log_den = den_exp + log2(den_mant);
	double log_size = log_num > log_den ? log_num : log_den;
	if (magnitude > 0 && (double)magnitude * log_size + 1 > (double)max_bits)
		return false;
	mpz_t num, den;
	mpz_init(num);
	mpz_init(den);
	mpz_pow_ui(num, mpq_numref(base), magnitude);
	mpz_pow_ui(den, mpq_denref(base), magnitude);
	if (exponent < 0)
		mpz_swap(num, den);
	if (mpz_sgn(den) < 0) {
		mpz_neg(den, den);
		mpz_neg(num, num);
	}
	mpq_set_num(value, num);
	mpq_set_den(value, den);
	mpq_canonicalize(value);
	mpz_clear(num);
	mpz_clear(den);
	return true;
}

bool rat_root_exact(mpq_t result, mpq_srcptr value, unsigned long root)
{
	if (mpq_sgn(value) < 0 && root % 2 == 0)
		return false;
	mpz_t num, den;
	mpz_init(num);
	mpz_init(den);
	bool exact = mpz_root(num, mpq_numref(value), root) && mpz_root(den, mpq_denref(value), root);
	if (exact) {
		mpq_set_num(result, num);
		mpq_set_den(result, den);
		mpq_canonicalize(result);
	}
	mpz_clear(num);
	mpz_clear(den);
	return exact;
}

bool rat_is_integer(mpq_srcptr value)
{
	return mpz_cmp_ui(mpq_denref(value), 1) == 0;
}

bool rat_fits_long(mpq_srcptr value)
{
	return rat_is_integer(value) && mpz_fits_slong_p(mpq_numref(value));
}

double rat_to_double(mpq_srcptr value)
{
	/* correctly rounded (to nearest, ties to even): mpq_get_d truncates */
	if (mpq_sgn(value) == 0)
		return 0.0;
	mpz_t num, den, q, r;
	mpz_init(num);
	mpz_init_set(den, mpq_denref(value));
	mpz_init(q);
	mpz_init(r);
	mpz_abs(num, mpq_numref(value));
	/* scale so the quotient has 55 or 56 bits: 53 kept, a guard bit, a sticky bit */
	long shift = 55 - ((long)mpz_sizeinbase(num, 2) - (long)mpz_sizeinbase(den, 2));
	if (shift > 0)
		mpz_mul_2exp(num, num, (unsigned long)shift);
	else if (shift < 0)
		mpz_mul_2exp(den, den, (unsigned long)-shift);
	mpz_tdiv_qr(q, r, num, den);
	long extra = (long)mpz_sizeinbase(q, 2) - 53;
	mpz_t low;
	mpz_init(low);
	mpz_tdiv_r_2exp(low, q, (unsigned long)extra);
	mpz_tdiv_q_2exp(q, q, (unsigned long)extra);
	/* round: compare the dropped bits (and the remainder) with half a unit */
	mpz_t half;
	mpz_init_set_ui(half, 1);
	mpz_mul_2exp(half, half, (unsigned long)(extra - 1));
	int cmp = mpz_cmp(low, half);
	if (cmp == 0 && mpz_sgn(r) != 0)
		cmp = 1;
	if (cmp > 0 || (cmp == 0 && mpz_odd_p(q)))
		mpz_add_ui(q, q, 1);
	double mantissa = mpz_get_d(q); /* at most 54 bits, a power of two if 54: exact */
	double result = ldexp(mantissa, (int)(extra - shift));
	if (mpq_sgn(value) < 0)
		result = -result;
	mpz_clear(num);
	mpz_clear(den);
	mpz_clear(q);
	mpz_clear(r);
	mpz_clear(low);
	mpz_clear(half);
	return result;
}

char *rat_to_string(mpq_srcptr value)
{
	char *gmp_text = mpq_get_str(NULL, 10, value);
	char *text = xstrdup(gmp_text);
	void (*release)(void *, size_t);
	mp_get_memory_functions(NULL, NULL, &release);
	release(gmp_text, strlen(gmp_text) + 1);
	return text;
}

void rat_set_double(mpq_t value, double number)
{
	mpq_set_d(value, number);
}

/* The shortest decimal that reads back as the double x (at most 17 significant
 * digits: IEEE 754-2008, sec. 5.12.2, from memory). */
void rat_set_double_short(mpq_t value, double x)
{
	char text[40];
	for (int digits = 1; digits <= 17; digits++) {
		snprintf(text, sizeof text, "%.*e", digits - 1, x);
		if (strtod(text, NULL) == x)
			break;
	}
	const char *body = text[0] == '-' ? text + 1 : text;
	if (!rat_parse_decimal(value, body)) {
		mpq_set_d(value, x);
		return;
	}
	if (text[0] == '-')
		mpq_neg(value, value);
}

char *rat_to_decimal(mpq_srcptr value)
{
	/* n / (2^a 5^b) is the integer n 10^k / (2^a 5^b) times 10^-k, k = max(a, b) */
	mpz_t rest, five, scaled;
	mpz_inits(rest, five, scaled, NULL);
	mpz_set(rest, mpq_denref(value));
	mpz_set_ui(five, 5);
	unsigned long twos = mpz_scan1(rest, 0);
	mpz_tdiv_q_2exp(rest, rest, twos);
	unsigned long fives = mpz_remove(rest, rest, five);
	bool terminates = mpz_cmp_ui(rest, 1) == 0;
	long shift = (long)(twos > fives ? twos : fives);
	if (terminates) {
		mpz_ui_pow_ui(scaled, 10, (unsigned long)shift);
		mpz_mul(scaled, scaled, mpq_numref(value));
		mpz_divexact(scaled, scaled, mpq_denref(value));
		mpz_abs(scaled, scaled);
	}
	char *digits = terminates ? mpz_get_str(NULL, 10, scaled) : NULL;
	mpz_clears(rest, five, scaled, NULL);
	if (!digits)
		return rat_to_string(value);
	/* value = digits * 10^-shift, without trailing zeros */
	size_t len = strlen(digits);
	while (len > 1 && digits[len - 1] == '0') {
		digits[--len] = '\0';
		shift--;
	}
	long exponent = (long)len - 1 - shift; /* of the leading digit */
	xbuf out = {0};
	if (mpq_sgn(value) < 0)
		xbuf_putc(&out, '-');
	if (exponent < -6 || exponent >= 21) {
		xbuf_putc(&out, digits[0]);
		if (len > 1)
			xbuf_printf(&out, ".%s", digits + 1);
		xbuf_printf(&out, "e%c%ld", exponent < 0 ? '-' : '+', labs(exponent));
	} else if (shift <= 0) {
		xbuf_put(&out, digits);
		for (long i = 0; i < -shift; i++)
			xbuf_putc(&out, '0');
	} else if ((size_t)shift < len) {
		xbuf_printf(&out, "%.*s.%s", (int)(len - (size_t)shift), digits,
		            digits + len - (size_t)shift);
	} else {
		xbuf_put(&out, "0.");
		for (size_t i = len; i < (size_t)shift; i++)
			xbuf_putc(&out, '0');
		xbuf_put(&out, digits);
	}
	void (*release)(void *, size_t);
	mp_get_memory_functions(NULL, NULL, &release);
	release(digits, strlen(digits) + 1);
	return xbuf_take(&out);
}

/* ------------------------------------------------------------------ small fast paths */

/* The value of z when it fits in a long (one limb, at most LONG_MAX in magnitude). */
static bool small_part(mpz_srcptr z, long *value)
{
	size_t size = mpz_size(z);
	if (size == 0) {
		*value = 0;
		return true;
	}
	mp_limb_t limb = mpz_getlimbn(z, 0);
	if (size > 1 || limb > (mp_limb_t)LONG_MAX)
		return false;
	*value = mpz_sgn(z) < 0 ? -(long)limb : (long)limb;
	return true;
}

static bool small_rat(mpq_srcptr q, long *num, long *den)
{
	return small_part(mpq_numref(q), num) && small_part(mpq_denref(q), den);
}

static unsigned long gcd_ul(unsigned long a, unsigned long b)
{
	while (b) {
		unsigned long t = a % b;
		a = b;
		b = t;
	}
	return a;
}

static unsigned long abs_ul(long v)
{
	return v < 0 ? -(unsigned long)v : (unsigned long)v;
}

static void set_small(mpq_ptr result, long num, long den)
{
	mpz_set_si(mpq_numref(result), num);
	mpz_set_ui(mpq_denref(result), (unsigned long)den);
}

/* (an/ad) * (bn/bd) with den > 0, cross-reduced so the result is canonical. */
static bool small_mul(mpq_ptr result, long an, long ad, long bn, long bd)
{
	if (an == 0 || bn == 0) {
		set_small(result, 0, 1);
		return true;
	}
	long g1 = ad == 1 && bd == 1 ? 1 : (long)gcd_ul(abs_ul(an), (unsigned long)bd);
	long g2 = ad == 1 && bd == 1 ? 1 : (long)gcd_ul(abs_ul(bn), (unsigned long)ad);
	long num, den;
	if (__builtin_mul_overflow(an / g1, bn / g2, &num) || __builtin_mul_overflow(ad / g2, bd / g1, &den) ||
	    num == LONG_MIN)
		return false;
	set_small(result, num, den);
	return true;
}

void rat_mul(mpq_ptr result, mpq_srcptr a, mpq_srcptr b)
{
	long an, ad, bn, bd;
	if (small_rat(a, &an, &ad) && small_rat(b, &bn, &bd) && small_mul(result, an, ad, bn, bd))
		return;
	mpq_mul(result, a, b);
}

void rat_div(mpq_ptr result, mpq_srcptr a, mpq_srcptr b)
{
	long an, ad, bn, bd;
	if (small_rat(a, &an, &ad) && small_rat(b, &bn, &bd) && bn != 0 &&
	    small_mul(result, an, ad, bn < 0 ? -bd : bd, bn < 0 ? -bn : bn))
		return;
	mpq_div(result, a, b);
}

void rat_add(mpq_ptr result, mpq_srcptr a, mpq_srcptr b)
{
	long an, ad, bn, bd;
	if (small_rat(a, &an, &ad) && small_rat(b, &bn, &bd)) {
		long x, y, num, den;
		if (ad == 1 && bd == 1) {
			if (!__builtin_add_overflow(an, bn, &num) && num != LONG_MIN) {
				set_small(result, num, 1);
				return;
			}
		} else if (!__builtin_mul_overflow(an, bd, &x) && !__builtin_mul_overflow(bn, ad, &y) &&
			   !__builtin_add_overflow(x, y, &num) && num != LONG_MIN &&
			   !__builtin_mul_overflow(ad, bd, &den)) {
			long g = num == 0 ? den : (long)gcd_ul(abs_ul(num), (unsigned long)den);
			set_small(result, num / g, den / g);
			return;
		}
	}
	mpq_add(result, a, b);
}

int rat_cmp(mpq_srcptr a, mpq_srcptr b)
{
	long an, ad, bn, bd, x, y;
	if (small_rat(a, &an, &ad) && small_rat(b, &bn, &bd) && !__builtin_mul_overflow(an, bd, &x) &&
	    !__builtin_mul_overflow(bn, ad, &y))
		return (x > y) - (x < y);
	return mpq_cmp(a, b);
}
