/* check_rat.c - unit tests of the exact rationals: decimal literals read
 * exactly, malformed or oversized literals refused, integer powers and exact
 * roots with their limits; the machine-word fast paths of rat_mul, rat_add,
 * rat_div and rat_cmp agree with GMP's mpq_mul, mpq_add, mpq_div and mpq_cmp
 * (the reference) on operands around every overflow boundary.
 *
 * Every expected value below is plain arithmetic (a decimal fraction is an
 * integer over a power of ten; common practice, no source), worked by hand. */

#include <check.h>
#include <float.h>
#include <gmp.h>
#include <limits.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "check_suites.h"
#include "rat.h"

/* Is text parsed to exactly num/den? */
static void expect_decimal(const char *text, const char *expected)
{
	mpq_t value, want;
	mpq_inits(value, want, NULL);
	ck_assert_msg(rat_parse_decimal(value, text), "'%s' was refused", text);
	ck_assert_int_eq(mpq_set_str(want, expected, 10), 0);
	mpq_canonicalize(want);
	char *got = rat_to_string(value);
	ck_assert_msg(mpq_equal(value, want), "'%s' parsed to %s, expected %s", text, got, expected);
	free(got);
	mpq_clears(value, want, NULL);
}

/* text must be refused and value left as it was. */
static void expect_refused(const char *text)
{
	mpq_t value;
	mpq_init(value);
	mpq_set_si(value, 7, 3);
	ck_assert_msg(!rat_parse_decimal(value, text), "'%s' was accepted", text);
	ck_assert_msg(mpq_cmp_si(value, 7, 3) == 0, "'%s' changed the value on failure", text);
	mpq_clear(value);
}

START_TEST(test_decimal_exact)
{
	/* 0.05 = 5/100 = 1/20: the decimal is read exactly, not through a double */
	expect_decimal("0.05", "1/20");
	expect_decimal("1e-3", "1/1000");
	expect_decimal("2.5E+4", "25000");
	expect_decimal(".5", "1/2");
	expect_decimal("12", "12");
	expect_decimal("0", "0");
	expect_decimal("007", "7");
	expect_decimal("0.1", "1/10");
	expect_decimal("3.14159", "314159/100000");
	expect_decimal("1.25e-1", "1/8");
	expect_decimal("2.5e1", "25");
	expect_decimal("1E2", "100");
	expect_decimal("0.000", "0");
	/* 0.1 + 0.2 is exactly 3/10, unlike the doubles (common practice, no source) */
	mpq_t a, b, sum, want;
	mpq_inits(a, b, sum, want, NULL);
	ck_assert(rat_parse_decimal(a, "0.1"));
	ck_assert(rat_parse_decimal(b, "0.2"));
	mpq_add(sum, a, b);
	mpq_set_si(want, 3, 10);
	ck_assert(mpq_equal(sum, want));
	mpq_clears(a, b, sum, want, NULL);
}
END_TEST

START_TEST(test_decimal_large_exponents)
{
	mpq_t value, want;
	mpq_inits(value, want, NULL);
	/* "1e400" is fine: exactly 10^400 */
	ck_assert(rat_parse_decimal(value, "1e400"));
	mpz_ui_pow_ui(mpq_numref(want), 10, 400);
	ck_assert(mpq_equal(value, want));
	/* the limit itself is accepted, one past it refused */
	ck_assert(rat_parse_decimal(value, "1e10000"));
	ck_assert(rat_parse_decimal(value, "1e-10000"));
	mpq_clears(value, want, NULL);
	expect_refused("1e10001");
	expect_refused("1e-10001");
	expect_refused("1e100000");
	expect_refused("1e-100000");
	/* an exponent that overflows a long must not wrap around */
	expect_refused("1e99999999999999999999999999");
	expect_refused("1e-99999999999999999999999999");
	expect_refused("1e18446744073709551626");
}
END_TEST

START_TEST(test_decimal_malformed)
{
	const char *bad[] = {"", ".", "e5", "E5", "1e", "1e+", "1e-", "1.2.3", "abc", "1x",
			     "-1", "+1", " 1", "1 ", "0x10", "1e5.5", "1e5e5", "..5", "1,5",
			     "1/2", "١"};
	for (size_t i = 0; i < sizeof bad / sizeof *bad; i++)
		expect_refused(bad[i]);
}
END_TEST

START_TEST(test_pow_int)
{
	mpq_t base, value, want;
	mpq_inits(base, value, want, NULL);
	/* 2^10 = 1024; (2/3)^-3 = 27/8; (-2)^3 = -8; (-1/2)^-2 = 4 */
	struct {
		const char *base;
		long exponent;
		const char *want;
	} cases[] = {{"2", 10, "1024"},	  {"2/3", -3, "27/8"}, {"-2", 3, "-8"},
		     {"-1/2", -2, "4"},	  {"-1/2", -3, "-8"},  {"5", 0, "1"},
		     {"0", 0, "1"}, /* 0^0 = 1, the usual convention (common practice, no source) */
		     {"0", 5, "0"},	  {"7/5", 1, "7/5"},   {"-3", -1, "-1/3"}};
	for (size_t i = 0; i < sizeof cases / sizeof *cases; i++) {
		ck_assert_int_eq(mpq_set_str(base, cases[i].base, 10), 0);
		ck_assert_int_eq(mpq_set_str(want, cases[i].want, 10), 0);
		ck_assert_msg(rat_pow_int(value, base, cases[i].exponent, 64), "%s^%ld refused",
			      cases[i].base, cases[i].exponent);
		ck_assert_msg(mpq_equal(value, want), "%s^%ld wrong", cases[i].base, cases[i].exponent);
		/* the denominator stays positive and the fraction reduced */
		ck_assert_int_gt(mpz_sgn(mpq_denref(value)), 0);
	}
	/* 0^-1 is a division by zero */
	mpq_set_ui(base, 0, 1);
	ck_assert(!rat_pow_int(value, base, -1, 64));
	mpq_clears(base, value, want, NULL);
}
END_TEST

START_TEST(test_pow_int_limits)
{
	mpq_t base, value;
	mpq_inits(base, value, NULL);
	/* 2^100 has 101 bits: refused under a 64-bit limit, accepted under 128 */
	mpq_set_ui(base, 2, 1);
	ck_assert(!rat_pow_int(value, base, 100, 64));
	ck_assert(!rat_pow_int(value, base, -100, 64));
	ck_assert(rat_pow_int(value, base, 100, 128));
	ck_assert_uint_eq(rat_bits(value), 101);
	/* 2^62 has 63 bits: within 64 */
	ck_assert(rat_pow_int(value, base, 62, 64));
	/* a huge exponent is refused at once, not computed (the test's timeout guards) */
	ck_assert(!rat_pow_int(value, base, LONG_MAX, 1u << 20));
	ck_assert(!rat_pow_int(value, base, LONG_MIN, 1u << 20));
	mpq_set_si(base, 3, 7);
	ck_assert(!rat_pow_int(value, base, 1L << 40, 1u << 20));
	/* 3^1000 has 1585 bits (1000*log2(3) = 1584.96): a 1000-bit limit refuses it */
	mpq_set_ui(base, 3, 1);
	ck_assert_msg(!rat_pow_int(value, base, 1000, 1000),
		      "3^1000 (1585 bits) accepted under a 1000-bit limit");
	/* whatever is accepted respects the limit: sweep small bases and exponents */
	for (long b = 2; b <= 40; b++)
		for (long e = 1; e <= 200; e++) {
			mpq_set_si(base, b, 1);
			if (rat_pow_int(value, base, e, 256))
				ck_assert_msg(rat_bits(value) <= 256, "%ld^%ld has %lu bits > 256", b,
					      e, rat_bits(value));
		}
	mpq_clears(base, value, NULL);
}
END_TEST

START_TEST(test_pow_int_units)
{
	/* 1^n = 1 and (-1)^n = (-1)^(n mod 2) for any n, without computing anything
	 * large (common practice, no source) */
	mpq_t base, value;
	mpq_inits(base, value, NULL);
	mpq_set_si(base, 1, 1);
	ck_assert(rat_pow_int(value, base, LONG_MAX, 64));
	ck_assert_int_eq(mpq_cmp_si(value, 1, 1), 0);
	mpq_set_si(base, -1, 1);
	ck_assert(rat_pow_int(value, base, LONG_MAX, 64));
	ck_assert_int_eq(mpq_cmp_si(value, -1, 1), 0);
	ck_assert(rat_pow_int(value, base, -(LONG_MAX - 1), 64));
	ck_assert_int_eq(mpq_cmp_si(value, 1, 1), 0);
	mpq_clears(base, value, NULL);
}
END_TEST

/* Is value^(1/root) exactly expected (or refused when expected is NULL)? */
static void expect_root(const char *value_text, unsigned long root, const char *expected)
{
	mpq_t value, result, want;
	mpq_inits(value, result, want, NULL);
	ck_assert_int_eq(mpq_set_str(value, value_text, 10), 0);
	mpq_canonicalize(value);
	bool exact = rat_root_exact(result, value, root);
	if (!expected) {
		ck_assert_msg(!exact, "root %lu of %s claimed exact", root, value_text);
	} else {
		ck_assert_msg(exact, "root %lu of %s not found", root, value_text);
		ck_assert_int_eq(mpq_set_str(want, expected, 10), 0);
		ck_assert_msg(mpq_equal(result, want), "root %lu of %s wrong", root, value_text);
	}
	mpq_clears(value, result, want, NULL);
}

START_TEST(test_root_exact)
{
	/* (2/3)^4 = 16/81; 3^3 = 27; (-2)^3 = -8; 0 and 1 are their own roots */
	expect_root("16/81", 4, "2/3");
	expect_root("27", 3, "3");
	expect_root("-8", 3, "-2");
	expect_root("-1/27", 3, "-1/3");
	expect_root("0", 2, "0");
	expect_root("1", 7, "1");
	expect_root("1/4", 2, "1/2");
	expect_root("1024", 10, "2");
	/* not perfect powers, or an even root of a negative number */
	expect_root("2", 2, NULL);
	expect_root("8/3", 3, NULL);
	expect_root("3/4", 2, NULL);
	expect_root("-4", 2, NULL);
	expect_root("-1", 4, NULL);
	expect_root("1000001", 3, NULL);
}
END_TEST

START_TEST(test_conversions)
{
	mpq_t value;
	mpq_init(value);
	/* text form: "3", "-1/2" */
	mpq_set_si(value, -2, 4);
	mpq_canonicalize(value);
	char *text = rat_to_string(value);
	ck_assert_str_eq(text, "-1/2");
	free(text);
	mpq_set_si(value, 3, 1);
	text = rat_to_string(value);
	ck_assert_str_eq(text, "3");
	free(text);
	/* every finite double is a dyadic rational: 0.1 is 3602879701896397/2^55
	 * (IEEE 754 binary64; common practice, no source) */
	rat_set_double(value, 0.1);
	text = rat_to_string(value);
	ck_assert_str_eq(text, "3602879701896397/36028797018963968");
	free(text);
	ck_assert(rat_to_double(value) == 0.1);
	/* integer tests */
	mpq_set_si(value, 6, 3);
	mpq_canonicalize(value);
	ck_assert(rat_is_integer(value));
	ck_assert(rat_fits_long(value));
	mpq_set_si(value, 1, 3);
	ck_assert(!rat_is_integer(value));
	ck_assert(!rat_fits_long(value));
	ck_assert(rat_parse_decimal(value, "1e30"));
	ck_assert(rat_is_integer(value));
	ck_assert(!rat_fits_long(value));
	/* huge and tiny values keep their magnitude: 10^400 overflows to inf,
	 * 10^-400 is below the smallest subnormal (4.9e-324) and rounds to 0, and
	 * 10^300 / 10^-300 are within range */
	ck_assert(rat_parse_decimal(value, "1e300"));
	ck_assert_double_eq_tol(rat_to_double(value) / 1e300, 1.0, 1e-15);
	ck_assert(rat_parse_decimal(value, "1e-300"));
	ck_assert_double_eq_tol(rat_to_double(value) / 1e-300, 1.0, 1e-15);
	ck_assert(rat_parse_decimal(value, "1e400"));
	ck_assert(isinf(rat_to_double(value)));
	ck_assert(rat_parse_decimal(value, "1e-400"));
	ck_assert(rat_to_double(value) == 0.0);
	mpq_clear(value);
}
END_TEST

/* Conversion to double rounds to nearest: 1/10 and 1/3 give the doubles that
 * the C compiler gives for the literals 0.1 and 1.0/3 (IEEE 754 round to
 * nearest; common practice, no source). */
START_TEST(test_to_double_rounding)
{
	mpq_t value;
	mpq_init(value);
	const char *texts[] = {"0.1", "0.05", "0.3", "2.675", "1e-5"};
	const double doubles[] = {0.1, 0.05, 0.3, 2.675, 1e-5};
	for (size_t i = 0; i < sizeof texts / sizeof *texts; i++) {
		ck_assert(rat_parse_decimal(value, texts[i]));
		ck_assert_msg(rat_to_double(value) == doubles[i], "%s converts to %.17g, not %.17g",
			      texts[i], rat_to_double(value), doubles[i]);
	}
	mpq_set_si(value, 1, 3);
	ck_assert_msg(rat_to_double(value) == 1.0 / 3, "1/3 converts to %.17g", rat_to_double(value));
	mpq_clear(value);
}
END_TEST

/* Operands for the fast paths: small values, values at and past the edges of a
 * long (where the machine-word path must hand over to GMP), fractions whose
 * cross-reduction matters, zero and signs. */
static void fill_operands(mpq_t *ops, size_t *n)
{
	static const char *const texts[] = {
		"0", "1", "-1", "2", "-3", "1/2", "-1/2", "2/3", "-5/7", "6/35", "35/6",
		"9223372036854775807", "-9223372036854775807", "9223372036854775808",
		"-9223372036854775808", "1/9223372036854775807", "-3/9223372036854775807",
		"4294967296", "-4294967296", "4294967297/2", "3037000499", "3037000500",
		"-3037000500", "1/3037000500", "123456789/987654321", "18446744073709551617",
		"1/18446744073709551617", "9223372036854775806/9223372036854775807",
	};
	*n = 0;
	for (size_t i = 0; i < sizeof texts / sizeof *texts; i++) {
		mpq_init(ops[*n]);
		ck_assert_int_eq(mpq_set_str(ops[*n], texts[i], 10), 0);
		mpq_canonicalize(ops[*n]);
		(*n)++;
	}
}

START_TEST(test_fast_paths_match_gmp)
{
	mpq_t ops[32], got, want;
	size_t n;
	fill_operands(ops, &n);
	mpq_inits(got, want, NULL);
	size_t compared = 0;
	for (size_t i = 0; i < n; i++)
		for (size_t j = 0; j < n; j++) {
			rat_mul(got, ops[i], ops[j]);
			mpq_mul(want, ops[i], ops[j]);
			ck_assert_msg(mpq_equal(got, want), "rat_mul differs from mpq_mul at %zu, %zu", i, j);
			rat_add(got, ops[i], ops[j]);
			mpq_add(want, ops[i], ops[j]);
			ck_assert_msg(mpq_equal(got, want), "rat_add differs from mpq_add at %zu, %zu", i, j);
			if (mpq_sgn(ops[j]) != 0) {
				rat_div(got, ops[i], ops[j]);
				mpq_div(want, ops[i], ops[j]);
				ck_assert_msg(mpq_equal(got, want), "rat_div differs from mpq_div at %zu, %zu", i, j);
			}
			int c = rat_cmp(ops[i], ops[j]), w = mpq_cmp(ops[i], ops[j]);
			ck_assert_msg((c > 0) == (w > 0) && (c < 0) == (w < 0), "rat_cmp differs at %zu, %zu", i, j);
			/* the result may be an operand (the constructors accumulate in place) */
			mpq_set(got, ops[i]);
			rat_mul(got, got, ops[j]);
			mpq_mul(want, ops[i], ops[j]);
			ck_assert_msg(mpq_equal(got, want), "rat_mul in place differs at %zu, %zu", i, j);
			mpq_set(got, ops[i]);
			rat_add(got, got, ops[j]);
			mpq_add(want, ops[i], ops[j]);
			ck_assert_msg(mpq_equal(got, want), "rat_add in place differs at %zu, %zu", i, j);
			compared++;
		}
	ck_assert_uint_eq(compared, n * n);
	/* results stay canonical: a product that cancels to an integer has denominator 1 */
	mpq_set_str(got, "2/3", 10);
	mpq_set_str(want, "3/2", 10);
	rat_mul(got, got, want);
	ck_assert(mpq_cmp_ui(got, 1, 1) == 0 && mpz_cmp_ui(mpq_denref(got), 1) == 0);
	for (size_t i = 0; i < n; i++)
		mpq_clear(ops[i]);
	mpq_clears(got, want, NULL);
}
END_TEST

/* rat_to_decimal prints the rational itself: a terminating decimal when the
 * denominator divides a power of 10, p/q otherwise; reading the text back
 * gives the same rational (the printed point of a claim is the point tried). */
START_TEST(test_to_decimal_exact)
{
	static const struct {
		const char *rational, *text;
	} cases[] = {
	        {"0", "0"},
	        {"1000000000", "1000000000"},
	        {"1001000000", "1001000000"},
	        {"-7/2", "-3.5"},
	        {"1/8", "0.125"},
	        {"1/3", "1/3"},
	        {"-2/3", "-2/3"},
	        {"9/10000000000000", "9e-13"},
	        {"1/1000000", "0.000001"},
	        {"123456789/1000", "123456.789"},
	        {"1000000000000000000000", "1e+21"},
	        {"100000000000000000000", "100000000000000000000"},
	        {"5000000000000000099994999999999999999/1000000000000000000000000000000000000",
	         "5.000000000000000099994999999999999999"},
	};
	mpq_t value, back;
	mpq_inits(value, back, NULL);
	for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
		mpq_set_str(value, cases[i].rational, 10);
		mpq_canonicalize(value);
		char *text = rat_to_decimal(value);
		ck_assert_str_eq(text, cases[i].text);
		if (!strchr(text, '/')) {
			ck_assert(rat_parse_decimal(back, text[0] == '-' ? text + 1 : text));
			if (text[0] == '-')
				mpq_neg(back, back);
			ck_assert(mpq_equal(back, value));
		}
		free(text);
	}
	mpq_clears(value, back, NULL);
}
END_TEST

/* rat_set_double_short: the shortest decimal that reads back as the double
 * (0.1, not the binary 0.1000000000000000055...; IEEE 754-2008 sec. 5.12.2,
 * from memory), and it still reads back as that double. */
START_TEST(test_double_short)
{
	static const double numbers[] = {0.1, -2.5, 1e300, 5e-324, 1.1460262706446607, 123456789.0, -0.0};
	static const char *const texts[] = {"0.1",       "-2.5", "1e+300", "5e-324", "1.1460262706446607",
	                                    "123456789", "0"};
	mpq_t value;
	mpq_init(value);
	for (size_t i = 0; i < sizeof numbers / sizeof numbers[0]; i++) {
		rat_set_double_short(value, numbers[i]);
		char *text = rat_to_decimal(value);
		ck_assert_str_eq(text, texts[i]);
		ck_assert(strtod(text, NULL) == numbers[i]);
		free(text);
	}
	mpq_clear(value);
}
END_TEST

Suite *rat_suite(void)
{
	Suite *suite = suite_create("rat");
	TCase *tc = tcase_create("core");
	tcase_add_test(tc, test_decimal_exact);
	tcase_add_test(tc, test_decimal_large_exponents);
	tcase_add_test(tc, test_decimal_malformed);
	tcase_add_test(tc, test_pow_int);
	tcase_add_test(tc, test_pow_int_limits);
	tcase_add_test(tc, test_pow_int_units);
	tcase_add_test(tc, test_root_exact);
	tcase_add_test(tc, test_conversions);
	tcase_add_test(tc, test_to_double_rounding);
	tcase_add_test(tc, test_fast_paths_match_gmp);
	tcase_add_test(tc, test_to_decimal_exact);
	tcase_add_test(tc, test_double_short);
	suite_add_tcase(suite, tc);
	return suite;
}
