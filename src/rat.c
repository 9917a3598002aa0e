/* rat.c - exact rationals.  Decimal literals are exact: 0.05 is 1/20. */
#include "rat.h"

#include <ctype.h>
#include <math.h>
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
	bool unit = mpz_cmpabs_ui(mpq_numref(base), 1) == 0 && mpz_cmp_ui(mpq_denref(base), 1) == 0;
	if (!unit && magnitude > 0 && rat_bits(base) > 0 &&
	    (double)magnitude * (double)(rat_bits(base) - 1) > (double)max_bits)
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
	/* mpq_get_d truncates; for huge or tiny values it still gives the right magnitude. */
	if (rat_bits(value) < 1000)
		return mpq_get_d(value);
	long num_exp, den_exp;
	double num = mpz_get_d_2exp(&num_exp, mpq_numref(value));
	double den = mpz_get_d_2exp(&den_exp, mpq_denref(value));
	return ldexp(num / den, (int)(num_exp - den_exp));
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
