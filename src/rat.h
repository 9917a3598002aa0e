/* rat.h - exact rationals on GMP mpq_t: decimal parsing, printing, limits. */
#ifndef ITOX_RAT_H
#define ITOX_RAT_H

#include <gmp.h>
#include <stdbool.h>

/* Largest decimal exponent accepted in a literal ("1e400" is fine, "1e100000" is not). */
#define RAT_MAX_DECIMAL_EXPONENT 10000

/* Parse a decimal literal ("12", "0.05", ".5", "1e-3", "2.5E+4") exactly into value.
 * Returns false (value untouched) when the text is not a literal or its exponent
 * exceeds RAT_MAX_DECIMAL_EXPONENT. */
bool rat_parse_decimal(mpq_t value, const char *text);

/* value := base^exponent for an integer exponent, refusing results larger than
 * max_bits bits in numerator or denominator.  Returns false when refused or when
 * base is 0 and exponent negative. */
bool rat_pow_int(mpq_t value, mpq_srcptr base, long exponent, unsigned long max_bits);

/* If value is a perfect root'th power (root >= 2), set result to its root and return true. */
bool rat_root_exact(mpq_t result, mpq_srcptr value, unsigned long root);

bool rat_is_integer(mpq_srcptr value);
bool rat_fits_long(mpq_srcptr value); /* an integer that fits in long */
double rat_to_double(mpq_srcptr value);
unsigned long rat_bits(mpq_srcptr value); /* bits of the larger of numerator and denominator */

/* Text of value: "3", "-1/2" (a new string to free). */
char *rat_to_string(mpq_srcptr value);

/* Text of value as an exact decimal ("0.125", "1.5e+300") when its
 * denominator divides a power of 10, else as rat_to_string ("1/3"). */
char *rat_to_decimal(mpq_srcptr value);

/* Set value to the shortest decimal that reads back as the finite double x
 * (0.1, not the double's own 0.1000000000000000055...). */
void rat_set_double_short(mpq_t value, double x);

/* Set value to the exact rational of a finite double. */
void rat_set_double(mpq_t value, double number);

/* Small operands (numerator and denominator within a long) are the common
 * case for coefficients; these helpers do them in machine words and fall
 * back to GMP on anything larger or on overflow.  Same results as
 * mpq_mul / mpq_add / mpq_div (canonical), aliasing allowed. */
void rat_mul(mpq_ptr result, mpq_srcptr a, mpq_srcptr b);
void rat_add(mpq_ptr result, mpq_srcptr a, mpq_srcptr b);
void rat_div(mpq_ptr result, mpq_srcptr a, mpq_srcptr b);
int rat_cmp(mpq_srcptr a, mpq_srcptr b); /* the sign of a - b, as mpq_cmp */

#endif
